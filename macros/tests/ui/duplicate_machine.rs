detent::machine! {
    machine Lamp {
        events On;
        start Dark;
        state Dark { On => stay; }
    }
    machine Lamp {
        events Off;
        start Lit;
        state Lit { Off => stay; }
    }
}

fn main() {}
