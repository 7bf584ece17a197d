//! The hardware port of machines with timers (issue 19; DESIGN.md, "Hardware port"):
//! timer registers beside the state register, their due comparisons as variables of the
//! minimized equations, and the Verilog module under Icarus Verilog against the
//! interpreter.
//!
//! Differential: random machines with time bases and `after` rules (`GenConfig {
//! timeouts: true }`: nested groups, guarded timeouts, self-transitions, event-driven
//! and clocked) and random timed traces (`random_timed_trace`, the time base frequent),
//! the interpreter (`Machine::step_config`) against the Verilog module simulated by
//! `iverilog -g2005 -Wall` / `vvp`: state, every output, every action pulse and every
//! active timer register checked before each clock edge by the self-checking
//! testbench. Binary, gray and one-hot encodings and D, T, JK and SR flip-flops are
//! taken in turn, machine by machine. A wrong timer datapath (the due comparison off by
//! one, no saturation) is caught, so the check can fail.

use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::auto::auto_assign_with;
use detent_compiler::logic::equations::{synthesize, LogicSpec, Map, Role};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::search::SearchOptions;
use detent_compiler::logic::verilog::{generate_module, generate_testbench, TbStep};
use detent_compiler::model::{EventId, Machine};
use detent_compiler::report::logic::LogicReport;
use detent_tests::checked_machine as load;
use detent_tests::gen::{random_spec, random_timed_trace, GenConfig, Rng};
use detent_tests::icarus::{
    check_all_covers, port_and_simulate, port_choice, simulate, Simulation,
};
use detent_tests::scratch;

fn configs() -> Vec<GenConfig> {
    let d = GenConfig {
        timeouts: true,
        ..GenConfig::default()
    };
    vec![
        d.clone(),
        // Clocked: every cycle is a time-base cycle, no event bus.
        GenConfig {
            events: 0,
            ..d.clone()
        },
        GenConfig {
            groups: false,
            inputs: 3,
            ..d.clone()
        },
        GenConfig {
            events: 0,
            inputs: 0,
            outputs: 1,
            actions: 1,
            ..d.clone()
        },
        GenConfig {
            states: (4, 10),
            events: 4,
            inputs: 1,
            ..d.clone()
        },
        GenConfig {
            events: 1,
            ..d.clone()
        },
    ]
}

const SEEDS_PER_CONFIG: u64 = 10;
const TRACE_LEN: usize = 300;

/// Timer values, steps and timeouts of one interpreted trace (timeouts that fired).
fn timeouts_fired(m: &Machine, steps: &[TbStep]) -> usize {
    let mut c = m.start_config();
    let mut fired = 0;
    for s in steps {
        match s {
            TbStep::Reset => c = m.start_config(),
            TbStep::Step { event, inputs } => {
                let r = m.step_config(&mut c, EventId::from_index(*event), inputs);
                if let Some(rule) = r.rule() {
                    if matches!(
                        m.rules[rule.index()].trigger,
                        detent_compiler::model::Trigger::After(_)
                    ) {
                        fired += 1;
                    }
                }
            }
        }
    }
    fired
}

#[test]
fn random_timed_machines_simulate_like_the_interpreter() {
    let dir = scratch("logic-timed-random");
    let (mut machines, mut cycles, mut fired, mut timers) = (0usize, 0usize, 0usize, 0usize);
    let mut covered = std::collections::BTreeSet::new();
    for (ci, cfg) in configs().iter().enumerate() {
        for k in 0..SEEDS_PER_CONFIG {
            let seed = 0x71AE_D000 + ci as u64 * 100 + k;
            let text = random_spec(seed, cfg);
            let m = load(&format!("timed_{seed}.detent"), &text);
            if m.timers.is_empty() {
                continue;
            }
            let (encoding, ff) = port_choice(m.states.len(), machines);
            let mut rng = Rng::new(seed ^ 0x5EED);
            let n_events = m.events.len().max(1);
            let mut steps: Vec<TbStep> =
                random_timed_trace(&mut rng, n_events, m.inputs.len(), TRACE_LEN, 0.6)
                    .into_iter()
                    .map(|(event, inputs)| TbStep::Step { event, inputs })
                    .collect();
            steps.insert(TRACE_LEN / 2, TbStep::Reset);
            let p = port_and_simulate(&m, &encoding, ff, &steps, &dir)
                .unwrap_or_else(|e| panic!("seed {seed}: {e}\n{text}"));
            assert_eq!(p.design.timers.len(), m.timers.len());
            assert!(
                p.simulation.passed,
                "seed {seed} {:?} {ff:?}: simulation said:\n{}\n--- spec ---\n{text}\n\
                 --- module ---\n{}",
                encoding.kind, p.simulation.printed, p.module
            );
            machines += 1;
            cycles += steps.len() + 2;
            fired += timeouts_fired(&m, &steps);
            timers += m.timers.len();
            covered.insert((encoding.kind.name(), format!("{ff:?}")));
        }
    }
    eprintln!(
        "{machines} timed machines ({timers} timers), {cycles} cycles simulated, \
         {fired} timeouts fired, {} encoding/flip-flop pairs",
        covered.len()
    );
    assert!(machines >= 40, "only {machines} machines had timers");
    assert_eq!(covered.len(), 12, "every encoding with every flip-flop");
    // The traces do fire timeouts (a run that never fires one proves nothing).
    assert!(fired > 500, "only {fired} timeouts fired");
    let _ = std::fs::remove_dir_all(&dir);
}

const BLINK: &str = "machine Blink {
    events Tick, Go, Stop;
    inputs hold;
    outputs lamp;
    actions beep;
    timebase Tick 1 ms;
    start Off;
    unhandled ignore;
    state Off { Go => On; }
    group Running {
        after 5 ms => Off, do beep;
        Stop => Off;
        state On emit lamp {
            after 2 ms if !hold => Dark;
            after 3 ms => stay;
        }
        state Dark { after 1 ms => On; }
    }
}";

#[test]
fn due_variables_are_named_and_impossible_combinations_are_dont_cares() {
    let m = load("blink.detent", BLINK);
    let spec = LogicSpec::from_machine(&m).unwrap();
    let due: Vec<&str> = spec.dues.iter().map(|d| d.name.as_str()).collect();
    // Timers in source order of the scopes: the group first, then On, then Dark.
    assert_eq!(due, ["due_Running_5", "due_On_2", "due_On_3", "due_Dark_1"]);
    let regs: Vec<(&str, usize, u32)> = spec
        .timers
        .iter()
        .map(|t| (t.register.as_str(), t.bits, t.max))
        .collect();
    assert_eq!(
        regs,
        [
            ("timer_Running", 3, 5),
            ("timer_On", 2, 3),
            ("timer_Dark", 1, 1)
        ]
    );
    let d = synthesize(&spec, &Encoding::binary(3), FlipFlop::D, false).unwrap();
    check_all_covers(&d);
    let f = &d.functions[0];
    assert_eq!(
        f.vars,
        [
            "q1",
            "q0",
            "ev1",
            "ev0",
            "hold",
            "due_Running_5",
            "due_On_2",
            "due_On_3",
            "due_Dark_1"
        ]
    );
    let (_, dc) = f.minterms.as_ref().unwrap();
    let minterm = |bits: &str| u64::from_str_radix(bits, 2).unwrap();
    // State On (01) on Tick (00): due_On_2 and due_On_3 together cannot happen.
    assert!(dc.contains(&minterm("010000110")));
    // Go (01) is not the time base: a due variable high then cannot happen.
    assert!(dc.contains(&minterm("010101000")));
    // On Tick with only due_On_2 high and hold low: a care point (On -> Dark).
    assert!(!dc.contains(&minterm("010000100")));
    // Every function and the clears are there; the report lists the timers.
    let clears: Vec<&str> = d
        .functions
        .iter()
        .filter(|f| matches!(f.role, Role::TimerClear(_)))
        .map(|f| f.name.as_str())
        .collect();
    assert_eq!(clears, ["clear_Running", "clear_On", "clear_Dark"]);
    let cost = d.cost(Map::Sop).unwrap();
    let report = LogicReport::new(&m, &d, &cost, Map::Sop, None, 0.0);
    let json = serde_json::to_value(&report).unwrap();
    assert_eq!(json["inputs"][3], "due_Running_5");
    assert_eq!(json["timers"][1]["register"], "timer_On");
    assert_eq!(json["timers"][1]["bits"], 2);
    assert_eq!(json["timers"][1]["due"][1], "due_On_3");
    assert_eq!(json["timers"][0]["clear"], "clear_Running");
    let text = report.lines().join("\n");
    assert!(
        text.contains(
            "timer On: register timer_On (2 bits), saturates at 3 ms, cleared by clear_On; \
             due: due_On_2 (after 2 ms), due_On_3 (after 3 ms)"
        ),
        "{text}"
    );
    assert!(text.contains("due_On_2"), "{text}");
}

/// Every path of `logic` handles a machine with timers: NAND and NOR forms (with
/// complements), the assignment search, and the simulation of what each produces.
#[test]
fn every_logic_path_keeps_the_timers() {
    let m = load("blink.detent", BLINK);
    let spec = LogicSpec::from_machine(&m).unwrap();
    let d = synthesize(&spec, &Encoding::gray(3), FlipFlop::JK, true).unwrap();
    for map in [Map::Sop, Map::Nand, Map::Nor] {
        let cost = d.cost(map).unwrap();
        assert!(cost.literals > 0);
        let report = LogicReport::new(&m, &d, &cost, map, None, 0.0);
        let text = report.lines().join("\n");
        assert!(text.contains("clear_On"), "{map:?}: {text}");
        assert!(text.contains("due_Dark_1"), "{map:?}: {text}");
    }
    let (auto, table) = auto_assign_with(
        &spec,
        FlipFlop::D,
        Map::Sop,
        &SearchOptions::default(),
        &mut |_, _| {},
    )
    .unwrap();
    assert_eq!(auto.timers.len(), 3);
    assert!(auto.functions.iter().any(|f| f.name == "clear_Dark"));
    assert!(table.rows.len() >= 3);
    // The searched design simulates like the interpreter on a timed trace.
    let dir = scratch("logic-timed-auto");
    let mut rng = Rng::new(7);
    let steps: Vec<TbStep> = random_timed_trace(&mut rng, 3, 1, 400, 0.7)
        .into_iter()
        .map(|(event, inputs)| TbStep::Step { event, inputs })
        .collect();
    let fired = timeouts_fired(&m, &steps);
    assert!(fired > 20, "{fired} timeouts fired");
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    for design in [&auto, &d] {
        let module = generate_module(&spec, design, &names, "blink.detent").unwrap();
        let tb = generate_testbench(&m, &spec, design, &steps, "blink.detent").unwrap();
        let Simulation {
            printed, passed, ..
        } = simulate(&dir, &module, &tb).unwrap();
        assert!(passed, "{printed}\n{module}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// A wrong timer datapath is caught by the testbench: the due comparison one tick late,
/// and a counter that does not saturate (it wraps).
#[test]
fn a_wrong_timer_datapath_is_caught() {
    let m = load("blink.detent", BLINK);
    let spec = LogicSpec::from_machine(&m).unwrap();
    let d = synthesize(&spec, &Encoding::binary(3), FlipFlop::D, false).unwrap();
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    let module = generate_module(&spec, &d, &names, "blink.detent").unwrap();
    // Go, then ticks with hold high: On stays past 3 ms and the group's 5 ms timeout
    // fires, so the On timer saturates at 3 before the group leaves.
    let mut steps = vec![TbStep::Step {
        event: 1,
        inputs: vec![true],
    }];
    for _ in 0..12 {
        steps.push(TbStep::Step {
            event: 0,
            inputs: vec![true],
        });
    }
    steps.push(TbStep::Step {
        event: 1,
        inputs: vec![true],
    });
    for _ in 0..4 {
        steps.push(TbStep::Step {
            event: 0,
            inputs: vec![false],
        });
    }
    let tb = generate_testbench(&m, &spec, &d, &steps, "blink.detent").unwrap();
    let dir = scratch("logic-timed-wrong");
    let Simulation {
        printed, passed, ..
    } = simulate(&dir, &module, &tb).unwrap();
    assert!(passed, "{printed}\n{module}");
    let late = module.replace("(timer_On == 2'd1)", "(timer_On == 2'd2)");
    assert_ne!(late, module);
    let Simulation {
        printed, passed, ..
    } = simulate(&dir, &late, &tb).unwrap();
    assert!(!passed && printed.contains("MISMATCH"), "{printed}");
    // On's timer stands at 3 for ticks 4 and 5 (the group leaves at 5): wrapping to 0
    // changes no output here, only the register, which the testbench also checks.
    let wraps = module.replace("timer_On != 2'd3", "1'b1");
    assert_ne!(wraps, module);
    let Simulation {
        printed, passed, ..
    } = simulate(&dir, &wraps, &tb).unwrap();
    assert!(!passed && printed.contains("MISMATCH"), "{printed}");
    let _ = std::fs::remove_dir_all(&dir);
}
