#[detent::machine_file(file = "tests/ui/specs/no_such.detent")]
mod lamp {}

fn main() {}
