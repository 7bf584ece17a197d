detent::machine! {
    machine Pump {
        events Go, Trip;
        inputs hot;
        start Off;
        state Off {
            Go if hot => stay;
            Go else => On;
            Go else => Off;
            Trip => stay;
        }
        state On { Go | Trip => Off; }
    }
}

fn main() {}
