#![deny(deprecated)]

detent::machine! {
    machine Pump {
        events Go, Stop;
        actions beep;
        start Off;
        state Off { Go => On, do beep; Stop => stay; }
        state On { enter do beep; Go => stay; Stop => Off; }
    }
}

fn main() {}
