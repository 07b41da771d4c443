//! The `biasjig` command line.
fn main() {}
