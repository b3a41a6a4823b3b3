//! Documentation-only pages.

pub mod conventions;
