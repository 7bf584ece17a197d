#[detent::machine_file(path = "tests/ui/specs/lamp.detent")]
mod lamp {}

fn main() {}
