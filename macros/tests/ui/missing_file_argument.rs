#[detent::machine_file(dispatch = "match")]
mod lamp {}

fn main() {}
