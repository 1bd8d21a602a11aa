//! The `nadir` command line (front end filled in by the CLI work).
fn main() {}
