detent::machine! {
    machine Lamp {
        events On, Off;
        start Dark;
        state Dark { On => Lit; }
        state Lit { Off => Dark; On => stay; }
    }
}

fn main() {}
