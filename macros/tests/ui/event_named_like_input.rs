detent::machine! {
    machine Pump {
        events Go, Trip;
        inputs Trip;
        start Off;
        state Off { Go | Trip => stay; }
    }
}

fn main() {}
