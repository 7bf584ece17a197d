//! The hardware port of machines with counters (issue 20; DESIGN.md, "Hardware port"):
//! counter registers beside the state register, their comparisons as named variables
//! of the minimized equations, control functions that drive each counter's composite
//! effect, and the Verilog module under Icarus Verilog against the interpreter.
//!
//! Differential: random machines with one or two counters (`GenConfig { counters }`:
//! comparisons in guards, `+=`, `-=` and `=` in rules and in enter/leave lists, nested
//! groups, event-driven and clocked, with and without timers) and random traces, the
//! interpreter (`Machine::step_config`) against the Verilog module simulated by
//! `iverilog -g2005 -Wall` / `vvp`: state, every output, every action pulse, every
//! counter register (and active timer register) checked before each clock edge by the
//! self-checking testbench. Binary, gray and one-hot encodings and D, T, JK and SR
//! flip-flops are taken in turn, machine by machine. A wrong counter datapath (a
//! comparison off by one, an add that wraps instead of saturating) is caught, so the
//! check can fail.

use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::auto::auto_assign_with;
use detent_compiler::logic::equations::{synthesize, LogicSpec, Map, Role};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::search::SearchOptions;
use detent_compiler::logic::verilog::{
    generate_module, generate_testbench, testbench_steps, TbStep,
};
use detent_compiler::model::{EventId, Machine};
use detent_compiler::report::logic::LogicReport;
use detent_tests::checked_machine as load;
use detent_tests::gen::{random_spec, random_timed_trace, random_trace, GenConfig, Rng};
use detent_tests::icarus::{
    check_all_covers, port_and_simulate, port_choice, simulate, Simulation,
};
use detent_tests::scratch;

fn configs() -> Vec<GenConfig> {
    let d = GenConfig {
        counters: 1,
        ..GenConfig::default()
    };
    vec![
        d.clone(),
        GenConfig {
            counters: 2,
            ..d.clone()
        },
        // Clocked: one event, no event bus.
        GenConfig {
            events: 0,
            ..d.clone()
        },
        GenConfig {
            groups: false,
            inputs: 3,
            counters: 2,
            ..d.clone()
        },
        GenConfig {
            timeouts: true,
            ..d.clone()
        },
        GenConfig {
            timeouts: true,
            events: 0,
            counters: 2,
            ..d.clone()
        },
        GenConfig {
            states: (4, 10),
            events: 4,
            inputs: 1,
            ..d.clone()
        },
    ]
}

const SEEDS_PER_CONFIG: u64 = 10;
const TRACE_LEN: usize = 300;

/// What the interpreter does to the counters over a trace: steps whose operations
/// changed some counter, and per counter whether it reached its largest value.
fn counter_activity(m: &Machine, steps: &[TbStep]) -> (usize, usize) {
    let mut c = m.start_config();
    let (mut changed, mut topped) = (0, vec![false; m.counters.len()]);
    for s in steps {
        match s {
            TbStep::Reset => c = m.start_config(),
            TbStep::Step { event, inputs } => {
                let before = c.counters.clone();
                m.step_config(&mut c, EventId::from_index(*event), inputs);
                if before != c.counters {
                    changed += 1;
                }
                for (k, &v) in c.counters.iter().enumerate() {
                    topped[k] |= v == m.counters[k].max;
                }
            }
        }
    }
    (changed, topped.iter().filter(|&&t| t).count())
}

#[test]
fn random_counter_machines_simulate_like_the_interpreter() {
    let dir = scratch("logic-counters-random");
    let (mut machines, mut cycles, mut changed, mut counters, mut topped) = (0, 0, 0, 0, 0);
    let (mut compares, mut controls, mut timed) = (0, 0, 0);
    let mut covered = std::collections::BTreeSet::new();
    for (ci, cfg) in configs().iter().enumerate() {
        for k in 0..SEEDS_PER_CONFIG {
            let seed = 0xC0_0000 + ci as u64 * 100 + k;
            let text = random_spec(seed, cfg);
            let m = load(&format!("counted_{seed}.detent"), &text);
            assert!(!m.counters.is_empty(), "seed {seed}: no counter\n{text}");
            let (encoding, ff) = port_choice(m.states.len(), machines);
            let mut rng = Rng::new(seed ^ 0x5EED);
            let n_events = m.events.len().max(1);
            let trace = if m.has_timers() {
                random_timed_trace(&mut rng, n_events, m.inputs.len(), TRACE_LEN, 0.6)
            } else {
                random_trace(&mut rng, n_events, m.inputs.len(), TRACE_LEN)
            };
            let mut steps: Vec<TbStep> = trace
                .into_iter()
                .map(|(event, inputs)| TbStep::Step { event, inputs })
                .collect();
            steps.insert(TRACE_LEN / 2, TbStep::Reset);
            let p = port_and_simulate(&m, &encoding, ff, &steps, &dir)
                .unwrap_or_else(|e| panic!("seed {seed}: {e}\n{text}"));
            let d = &p.design;
            assert_eq!(d.counters.len(), m.counters.len());
            assert_eq!(d.compares.len(), m.atoms.len());
            assert!(
                p.simulation.passed,
                "seed {seed} {:?} {ff:?}: simulation said:\n{}\n--- spec ---\n{text}\n\
                 --- module ---\n{}",
                encoding.kind, p.simulation.printed, p.module
            );
            machines += 1;
            cycles += steps.len() + 2;
            let (c, t) = counter_activity(&m, &steps);
            changed += c;
            topped += t;
            counters += m.counters.len();
            compares += d.compares.len();
            controls += d.controls.len();
            timed += usize::from(m.has_timers());
            covered.insert((encoding.kind.name(), format!("{ff:?}")));
        }
    }
    eprintln!(
        "{machines} machines with counters ({counters} counters, {compares} comparison \
         variables, {controls} control functions; {timed} also with timers), {cycles} cycles \
         simulated, {changed} steps changed a counter, {topped} counters reached their \
         largest value, {} encoding/flip-flop pairs",
        covered.len()
    );
    assert_eq!(machines, 70);
    assert_eq!(covered.len(), 12, "every encoding with every flip-flop");
    // The traces do move the counters, to their ends (a run that never changes one
    // proves nothing about the datapath).
    assert!(changed > 2000, "only {changed} steps changed a counter");
    assert!(
        topped * 3 > counters,
        "only {topped} of {counters} counters topped out"
    );
    assert!(compares > 70, "only {compares} comparison variables");
    assert!(timed >= 15, "only {timed} machines with timers");
    let _ = std::fs::remove_dir_all(&dir);
}

const KEYPAD: &str = "machine Keypad {
    events Digit, Wrong, Right, Reset;
    inputs tamper;
    outputs locked;
    actions alarm;
    counters strikes to 3;
    start Idle;
    unhandled ignore;
    state Idle {
        Wrong if strikes < 2 => Idle, do strikes += 1;
        Wrong if strikes == 2 => Locked, do strikes += 1, alarm;
        Right => Idle, do strikes = 0;
        Digit if tamper && strikes != 0 => stay, do strikes -= 1;
    }
    state Locked emit locked {
        enter do alarm;
        Reset if strikes == 3 => Idle, do strikes = 0;
        Wrong if strikes > 1 => stay, do strikes -= 2, strikes += 1;
    }
}";

#[test]
fn comparisons_are_named_variables_and_effects_are_controls() {
    let m = load("keypad.detent", KEYPAD);
    let spec = LogicSpec::from_machine(&m).unwrap();
    let names: Vec<&str> = spec.compares.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "strikes_lt_2",
            "strikes_eq_2",
            "strikes_ne_0",
            "strikes_eq_3",
            "strikes_gt_1"
        ]
    );
    assert_eq!(spec.counters[0].register, "strikes");
    assert_eq!(spec.counters[0].bits, 2);
    let controls: Vec<&str> = spec.controls.iter().map(|c| c.name.as_str()).collect();
    // `-= 2, += 1` from 0..=3 is `clamp(v - 1, 1, 2)`: not a plain `-= 1`.
    assert_eq!(
        controls,
        [
            "strikes_sub_1",
            "strikes_add_1",
            "strikes_set_0",
            "strikes_sub_1_within_1_2"
        ]
    );
    let d = synthesize(&spec, &Encoding::binary(2), FlipFlop::D, false).unwrap();
    check_all_covers(&d);
    let f = &d.functions[0];
    assert_eq!(
        f.vars,
        [
            "q0",
            "ev1",
            "ev0",
            "tamper",
            "strikes_lt_2",
            "strikes_eq_2",
            "strikes_ne_0",
            "strikes_eq_3",
            "strikes_gt_1"
        ]
    );
    let (_, dc) = f.minterms.as_ref().unwrap();
    let minterm = |bits: &str| u64::from_str_radix(bits, 2).unwrap();
    // strikes < 2 and strikes == 3 together: no value gives that.
    assert!(dc.contains(&minterm("000010010")));
    // strikes == 2 (so != 0 and > 1, not < 2, not == 3): a care point.
    assert!(!dc.contains(&minterm("000001101")));
    let add = d
        .functions
        .iter()
        .find(|f| f.role == Role::CounterControl(1))
        .unwrap();
    // Idle (0), Wrong (01), strikes == 1: the add control is high.
    let (on, _) = add.minterms.as_ref().unwrap();
    assert!(on.contains(&minterm("001010100")));
    let cost = d.cost(Map::Sop).unwrap();
    let report = LogicReport::new(&m, &d, &cost, Map::Sop, None, 0.0);
    let json = serde_json::to_value(&report).unwrap();
    assert_eq!(json["inputs"][3], "strikes_lt_2");
    assert_eq!(json["counters"][0]["register"], "strikes");
    assert_eq!(json["counters"][0]["compares"][0]["text"], "strikes < 2");
    assert_eq!(
        json["counters"][0]["controls"][3]["effect"],
        "-= 1 within 1..=2"
    );
    assert!(json.get("timers").is_none());
    let text = report.lines().join("\n");
    assert!(
        text.contains("counter strikes: register strikes (2 bits), 0..=3, saturating; compares: strikes_lt_2 (strikes < 2)"),
        "{text}"
    );
    assert!(text.contains("strikes_set_0 ="), "{text}");
}

/// Every path of `logic` handles a machine with counters: NAND and NOR forms, the
/// assignment search, `--testbench`'s own steps, and the simulation of each design.
#[test]
fn every_logic_path_keeps_the_counters() {
    let m = load("keypad.detent", KEYPAD);
    let spec = LogicSpec::from_machine(&m).unwrap();
    let d = synthesize(&spec, &Encoding::one_hot(2).unwrap(), FlipFlop::JK, true).unwrap();
    for map in [Map::Sop, Map::Nand, Map::Nor] {
        let cost = d.cost(map).unwrap();
        let text = LogicReport::new(&m, &d, &cost, map, None, 0.0)
            .lines()
            .join("\n");
        assert!(text.contains("strikes_add_1"), "{map:?}: {text}");
    }
    let (auto, _) = auto_assign_with(
        &spec,
        FlipFlop::T,
        Map::Sop,
        &SearchOptions::default(),
        &mut |_, _| {},
    )
    .unwrap();
    assert!(auto.functions.iter().any(|f| f.name == "strikes_set_0"));
    let steps = testbench_steps(&m);
    let (changed, topped) = counter_activity(&m, &steps);
    assert!(changed > 20 && topped == 1, "{changed} changes, {topped}");
    let dir = scratch("logic-counters-auto");
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    for design in [&auto, &d] {
        let module = generate_module(&spec, design, &names, "keypad.detent").unwrap();
        let tb = generate_testbench(&m, &spec, design, &steps, "keypad.detent").unwrap();
        let Simulation {
            printed, passed, ..
        } = simulate(&dir, &module, &tb).unwrap();
        assert!(passed, "{printed}\n{module}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// A wrong counter datapath is caught by the testbench: a comparison off by one, an
/// add of the wrong amount, a composite effect taken as its plain part.
#[test]
fn a_wrong_counter_datapath_is_caught() {
    let m = load("keypad.detent", KEYPAD);
    let spec = LogicSpec::from_machine(&m).unwrap();
    let d = synthesize(&spec, &Encoding::binary(2), FlipFlop::D, false).unwrap();
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    let module = generate_module(&spec, &d, &names, "keypad.detent").unwrap();
    // The tour, then three wrong codes (locked at 3) and three more in Locked (3 -> 2
    // -> 1, the last one ignored).
    let mut steps = testbench_steps(&m);
    steps.push(TbStep::Reset);
    for _ in 0..6 {
        steps.push(TbStep::Step {
            event: 1,
            inputs: vec![false],
        });
    }
    let tb = generate_testbench(&m, &spec, &d, &steps, "keypad.detent").unwrap();
    let dir = scratch("logic-counters-wrong");
    let Simulation {
        printed, passed, ..
    } = simulate(&dir, &module, &tb).unwrap();
    assert!(passed, "{printed}\n{module}");
    for (from, to) in [
        ("(strikes == 2'd2)", "(strikes == 2'd1)"),
        ("(strikes == 2'd3)", "(strikes == 2'd2)"),
        ("? 2'd3 : strikes + 2'd1", "? 2'd3 : strikes + 2'd2"),
        (
            "(strikes < 2'd2) ? 2'd1 : strikes - 2'd1",
            "(strikes < 2'd2) ? 2'd1 : strikes - 2'd2",
        ),
    ] {
        let wrong = module.replace(from, to);
        assert_ne!(wrong, module, "{from}");
        let Simulation {
            printed, passed, ..
        } = simulate(&dir, &wrong, &tb).unwrap();
        assert!(!passed && printed.contains("MISMATCH"), "{from}: {printed}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// Saturation: the checker refuses a spec whose operations can leave a counter's
/// range (`counter_range`), so no valid machine saturates; the interpreter still
/// defines the step (each operation stops at the end of the range), and the datapath
/// does the same. On a refused spec, the module simulates like the interpreter, and
/// an add or subtract that wraps instead is caught.
#[test]
fn the_datapath_saturates_like_the_interpreter() {
    let text = "machine Sat {
        events Up, Down, Jump;
        outputs top;
        counters n to 2;
        start S;
        unhandled ignore;
        state S {
            Up if n == 2 => T, do n += 1;
            Up => stay, do n += 1;
            Down => stay, do n -= 1;
            Jump => stay, do n = 1, n += 3;
        }
        state T emit top {
            Down => S, do n -= 2, n -= 1;
            Up => stay, do n -= 1, n += 1;
        }
    }";
    let report = detent_compiler::driver::check_source("sat.detent", text);
    assert!(report
        .diagnostics()
        .any(|d| d.is_error() && d.lint.name() == "counter_range"));
    let m = report
        .machines
        .into_iter()
        .find_map(|m| m.machine)
        .expect("the machine resolves");
    let spec = LogicSpec::from_machine(&m).unwrap();
    let controls: Vec<&str> = spec.controls.iter().map(|c| c.name.as_str()).collect();
    // `= 1, += 3` on 0..=2 ends at 2 whatever the value; `-= 2, -= 1` at 0; `-= 1,
    // += 1` keeps 1 and 2 and takes 0 to 1.
    assert_eq!(
        controls,
        [
            "n_add_1",
            "n_sub_1",
            "n_set_2",
            "n_add_0_within_1_2",
            "n_set_0"
        ]
    );
    let d = synthesize(&spec, &Encoding::gray(2), FlipFlop::SR, false).unwrap();
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    let module = generate_module(&spec, &d, &names, "sat.detent").unwrap();
    let steps = testbench_steps(&m);
    let tb = generate_testbench(&m, &spec, &d, &steps, "sat.detent").unwrap();
    let dir = scratch("logic-counters-sat");
    let Simulation {
        printed, passed, ..
    } = simulate(&dir, &module, &tb).unwrap();
    assert!(passed, "{printed}\n{module}");
    for (from, to) in [
        ("(n > 2'd1) ? 2'd2 : n + 2'd1", "n + 2'd1"),
        ("(n < 2'd1) ? 2'd0 : n - 2'd1", "n - 2'd1"),
    ] {
        let wrong = module.replace(from, to);
        assert_ne!(wrong, module, "{from}");
        let Simulation {
            printed, passed, ..
        } = simulate(&dir, &wrong, &tb).unwrap();
        assert!(!passed && printed.contains("MISMATCH"), "{from}: {printed}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
