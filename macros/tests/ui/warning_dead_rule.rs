#![deny(deprecated)]

detent::machine! {
    machine Pump {
        events Go, Trip;
        outputs motor;
        start Off;
        state Off { Go => On; Trip => stay; }
        group Running emit motor {
            preempt Trip => Off;
            state On { Go => stay; Trip => stay; }
        }
    }
}

fn main() {}
