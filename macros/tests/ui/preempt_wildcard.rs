detent::machine! {
    machine Pump {
        events Go, Trip;
        start Off;
        state Off { Go => On; Trip => stay; }
        group Running {
            preempt _ => Off;
            state On { Go | Trip => stay; }
        }
    }
}

fn main() {}
