#[detent::machine_file(file = "tests/ui/specs/lamp.detent")]
fn lamp() {}

fn main() {}
