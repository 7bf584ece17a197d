detent::machine! {
    machine Lamp {
        events On, Off;
        outputs light;
        start Dark;
        state Dark { On => Lit; }
        state Lit emit light { Off => Dark; On => stay; }
    }
}

fn main() {}
