//! humsense: mains-hum touch and field detection (work in progress).
#![no_std]
