detent::machine! {
    machine Valve {
        events Tick;
        inputs high, low;
        outputs flow;
        start Shut;
        state Shut {
            Tick if high => Open;
            Tick if high && low => stay;
            Tick if !high => stay;
        }
        state Open emit flow { Tick => Shut; }
    }
}

fn main() {}
