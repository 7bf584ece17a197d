detent::machine! {
    machine Pump {
        events Go, Trip;
        start Off;
        state Off { Go => On; Trip => stay; }
        state On { preempt Trip => Off; Go => stay; }
    }
}

fn main() {}
