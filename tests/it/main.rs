//! The integration tests: one binary, one module per topic.
#[path = "../common/mod.rs"]
mod common;
mod hd_height;
mod hd_height_cli;
mod hd_volume;
