#![deny(deprecated)]

detent::machine! {
    machine Fan {
        events Toggle;
        start Off;
        state Off { Toggle => On; }
        state On { Toggle => Off; }
        state Spare { Toggle => Off; }
    }
}

fn main() {}
