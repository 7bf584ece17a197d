#![deny(deprecated)]

detent::machine! {
    machine Fan {
        events Toggle;
        outputs spin;
        start Off;
        state Off { Toggle => On; }
        state On emit spin { Toggle => Off; }
        state Spare { Toggle => Off; }
    }
}

fn main() {}
