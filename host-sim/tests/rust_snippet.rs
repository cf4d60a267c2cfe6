//! The snippet `configfile::to_rust` wrote for `unusual()`, checked in as
//! tests/data/unusual_config.rs and compiled here: if the generator wrote
//! something that does not compile, this test fails to build. After a
//! change to `Config`'s fields the file is out of date and this target does
//! not build: regenerate the file with
//! `HUMSENSE_BLESS=1 cargo test -p humsim --test configfile`, which builds
//! without it.

#[path = "support/unusual.rs"]
mod support;

mod snippet {
    include!("data/unusual_config.rs");
    pub const fn get() -> humsense::Config {
        CONFIG
    }
}

#[test]
fn the_checked_in_rust_snippet_builds_the_config() {
    assert_eq!(snippet::get(), support::unusual());
}
