//! The `spanfit` command-line program (in progress).
fn main() {}
