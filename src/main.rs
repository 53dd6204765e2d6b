//! The spurline command: parse arguments, run the library, map the outcome to an exit code.
fn main() {}
