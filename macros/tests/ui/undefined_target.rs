detent::machine! {
    machine Lamp {
        events On;
        start Dark;
        state Dark { On => Bright; }
    }
}

fn main() {}
