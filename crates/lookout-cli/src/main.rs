//! The `lookout` command (being built).
fn main() {}
