#[detent::machine_file(file = "tests/ui/specs/lamp.detent", dispatch = "fast")]
mod lamp {}

fn main() {}
