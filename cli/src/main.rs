//! The `detent` command-line tool: a thin front end over detent-compiler.
fn main() {}
