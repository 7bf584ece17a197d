//! RAM per machine (BENCHMARKS.md, "RAM per machine"): `size_of::<Machine>()` of
//! generated Rust and `sizeof(struct ..._machine)` of generated C for a few shapes, from
//! no timers to a 30 s timeout at 10 us. The figures are asserted, so a change in the
//! layout shows up here; `cargo nextest run -p detent-tests --test ram --no-capture`
//! prints the table.

use detent_compiler::driver::check_source;
use detent_compiler::emit::c::generate_c;
use detent_tests::c_harness::{require_tool, STRICT_FLAGS};
use std::process::Command;

/// The shapes, as spec text: (name, spec).
const SHAPES: &[(&str, &str)] = &[
    ("no timers", NO_TIMERS),
    ("one u8 timer", ONE_U8),
    ("a u16 timer and a u8 group timer", U16_AND_GROUP_U8),
    ("30 s at 1 ms (u16)", THIRTY_S_1MS),
    ("30 s at 10 us (u32)", THIRTY_S_10US),
    ("one u8 counter", ONE_COUNTER),
    ("a u8 timer, a u16 and a u8 counter", MIXED),
];

macro_rules! shapes {
    ($($name:ident = $text:literal;)*) => {
        $(const $name: &str = $text;)*
    };
}

shapes! {
    NO_TIMERS = "machine NoTimers { events Go, Tick; start A; unhandled ignore; state A { Go => B; } state B { Go => A; } }";
    ONE_U8 = "machine OneU8 { events Go, Tick; timebase Tick 10 ms; start A; unhandled ignore; state A { Go => B; } state B { after 2 s => A; } }";
    U16_AND_GROUP_U8 = "machine Two { events Go, Tick; timebase Tick 1 ms; start A; unhandled ignore; state A { Go => B; } group G { after 200 ms => A; state B { after 1 s => C; } state C { Go => B; } } }";
    THIRTY_S_1MS = "machine Thirty { events Go, Tick; timebase Tick 1 ms; start A; unhandled ignore; state A { Go => B; } state B { after 30 s => A; } }";
    THIRTY_S_10US = "machine Fine { events Go, Tick; timebase Tick 10 us; start A; unhandled ignore; state A { Go => B; } state B { after 30 s => A; } }";
    ONE_COUNTER = "machine OneCounter { events Go, Tick; counters n to 3; start A; unhandled ignore; state A { Go if n < 3 => B, do n += 1; } state B { Go => A; } }";
    MIXED = "machine Mixed { events Go, Tick; timebase Tick 10 ms; counters big to 1000, small to 5; start A; unhandled ignore; state A { Go if big < 1000 && small < 5 => B, do big += 1, small += 1; } state B { after 2 s => A; Go => A, do small = 0; } }";
}

detent::machine! {
    #[allow(equivalent_states, unused_declaration)]
    machine NoTimers { events Go, Tick; start A; unhandled ignore; state A { Go => B; } state B { Go => A; } }
    #[allow(equivalent_states, unused_declaration)]
    machine OneU8 { events Go, Tick; timebase Tick 10 ms; start A; unhandled ignore; state A { Go => B; } state B { after 2 s => A; } }
    // Shaped for its widths only: B's 1 s timeout never fires inside the group's 200 ms
    // window (the checker says so), which does not change what the machine stores.
    #[allow(equivalent_states, unused_declaration, dead_rule, unreachable_state)]
    machine Two { events Go, Tick; timebase Tick 1 ms; start A; unhandled ignore; state A { Go => B; } group G { after 200 ms => A; state B { after 1 s => C; } state C { Go => B; } } }
    #[allow(equivalent_states, unused_declaration)]
    machine Thirty { events Go, Tick; timebase Tick 1 ms; start A; unhandled ignore; state A { Go => B; } state B { after 30 s => A; } }
    #[allow(equivalent_states, unused_declaration)]
    machine Fine { events Go, Tick; timebase Tick 10 us; start A; unhandled ignore; state A { Go => B; } state B { after 30 s => A; } }
    #[allow(equivalent_states, unused_declaration)]
    machine OneCounter { events Go, Tick; counters n to 3; start A; unhandled ignore; state A { Go if n < 3 => B, do n += 1; } state B { Go => A; } }
    #[allow(equivalent_states, unused_declaration)]
    machine Mixed { events Go, Tick; timebase Tick 10 ms; counters big to 1000, small to 5; start A; unhandled ignore; state A { Go if big < 1000 && small < 5 => B, do big += 1, small += 1; } state B { after 2 s => A; Go => A, do small = 0; } }
}

/// `sizeof(struct <stem>_machine)` of the generated C, compiled by gcc for this host.
fn c_size(spec: &str) -> usize {
    let report = check_source("ram.detent", spec);
    assert!(!report.has_errors(), "{spec}");
    let m = report
        .machines
        .into_iter()
        .find_map(|m| m.machine)
        .expect("one machine");
    let files = generate_c(&m, "ram.detent");
    let dir = std::env::temp_dir()
        .join(format!("detent-ram-{}", std::process::id()))
        .join(&files.stem);
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join(format!("{}.h", files.stem)), &files.header).unwrap();
    std::fs::write(
        dir.join("size.c"),
        format!(
            "#include <stdio.h>\n#include \"{0}.h\"\nint main(void)\n{{\n    printf(\"%lu\\n\", (unsigned long)sizeof(struct {0}_machine));\n    return 0;\n}}\n",
            files.stem
        ),
    )
    .unwrap();
    let gcc = require_tool("gcc").unwrap_or_else(|e| panic!("{e}"));
    let exe = dir.join("size");
    let out = Command::new(gcc)
        .args(STRICT_FLAGS)
        .arg(dir.join("size.c"))
        .arg("-o")
        .arg(&exe)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = Command::new(&exe).output().unwrap();
    String::from_utf8_lossy(&out.stdout).trim().parse().unwrap()
}

#[test]
fn ram_per_machine() {
    let rust = [
        core::mem::size_of::<no_timers::Machine>(),
        core::mem::size_of::<one_u8::Machine>(),
        core::mem::size_of::<two::Machine>(),
        core::mem::size_of::<thirty::Machine>(),
        core::mem::size_of::<fine::Machine>(),
        core::mem::size_of::<one_counter::Machine>(),
        core::mem::size_of::<mixed::Machine>(),
    ];
    let c: Vec<usize> = SHAPES.iter().map(|(_, spec)| c_size(spec)).collect();
    eprintln!("| shape | Rust `size_of::<Machine>()` | C `sizeof(struct _machine)` |");
    eprintln!("| --- | --- | --- |");
    for (((name, _), r), c) in SHAPES.iter().zip(rust).zip(&c) {
        eprintln!("| {name} | {r} B | {c} B |");
    }
    // One byte of state, plus the timers (each in the narrowest type for its longest
    // timeout), rounded up to the alignment of the widest: the timers are fields of
    // `Machine` itself, which lets the compiler pack the state byte beside a `u8`
    // timer (a nested `Timers` struct would cost 6 bytes for the third shape).
    // Counters are fields too (`u8` up to 255, else `u16`): one byte of state and one
    // of counter; state, a `u8` timer, a `u16` and a `u8` counter in 6 (5 rounded up to
    // the `u16`'s alignment).
    assert_eq!(rust, [1, 2, 4, 4, 8, 2, 6]);
    assert_eq!(c, [1, 2, 4, 4, 8, 2, 6]);
    let k = mixed::Machine::new().counters();
    let _: (u16, u8) = (k.big, k.small);
    let _: u8 = one_counter::Machine::new().counters().n;
    // The timer types: u8 for 200 ticks, u16 for 1,000 and 30,000, u32 for 3,000,000.
    let t = two::Machine::new().timers();
    let _: (u16, u8) = (t.b, t.g);
    let _: u8 = one_u8::Machine::new().timers().b;
    let _: u16 = thirty::Machine::new().timers().b;
    let _: u32 = fine::Machine::new().timers().b;
}
