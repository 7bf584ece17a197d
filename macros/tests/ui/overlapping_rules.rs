detent::machine! {
    machine Valve {
        events Tick;
        inputs high, low;
        start Shut;
        state Shut {
            Tick if high => Open;
            Tick if high && low => stay;
            Tick if !high => stay;
        }
        state Open { Tick => Shut; }
    }
}

fn main() {}
