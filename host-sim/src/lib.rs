//! humsim: coupled-mains signal simulator (work in progress).
