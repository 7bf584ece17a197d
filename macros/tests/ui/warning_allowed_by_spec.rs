#![deny(deprecated)]

// `#[allow(unreachable_state)]` in the spec silences the lint: the only error left
// is the deliberate one below, which shows the machine was generated.
detent::machine! {
    #[allow(unreachable_state, dead_end, equivalent_states)]
    machine Fan {
        events Toggle;
        start Off;
        state Off { Toggle => On; }
        state On { Toggle => Off; }
        state Spare { Toggle => Off; }
    }
}

fn main() {
    let _: () = fan::Machine::new();
}
