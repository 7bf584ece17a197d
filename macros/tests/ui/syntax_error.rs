detent::machine! {
    machine Lamp {
        events On;
        start Dark;
        state Dark { On => ; }
    }
}

fn main() {}
