//! Time and counts in the spec (LANGUAGE.md, "Time and counts"): the interpreter,
//! which steps through the lowered form, against a direct reading of the timer and
//! counter rules written from LANGUAGE.md on the resolved model (no lowered form), on
//! random machines with timeouts and counters and long random traces; hand-checked
//! runs; and the errors a spec with time can get.

use detent_compiler::interp::{Config, Outcome};
use detent_compiler::model::{
    CounterOpKind, EventId, Guard, Machine, Op, RuleId, Scope, StateId, Target, TimerId,
};
use detent_tests::gen::{random_spec, random_timed_trace, GenConfig, Rng};
use detent_tests::resolved_machine as resolve;

fn errors(text: &str) -> Vec<String> {
    let report = detent_compiler::driver::check_source("t.detent", text);
    report
        .diagnostics()
        .filter(|d| d.is_error())
        .map(|d| d.message.clone())
        .collect()
}

/// The first rule of `rules` (an `else` rule last) whose guard holds, counters
/// compared as they are at the start of the step.
fn first_holding(
    m: &Machine,
    rules: &[RuleId],
    inputs: &[bool],
    counters: &[u16],
) -> Option<RuleId> {
    let (plain, otherwise): (Vec<RuleId>, Vec<RuleId>) =
        rules.iter().partition(|r| !m.rules[r.index()].otherwise);
    plain.into_iter().chain(otherwise).find(|r| {
        m.rules[r.index()]
            .guard_expr
            .as_ref()
            .is_none_or(|g: &Guard| {
                g.eval_with(&|i| inputs.get(i.index()).copied().unwrap_or(false), &|a| {
                    let atom = &m.atoms[a.index()];
                    let v = u64::from(counters[atom.counter.index()]);
                    let k = u64::from(atom.value);
                    match atom.cmp.symbol() {
                        "==" => v == k,
                        "!=" => v != k,
                        "<" => v < k,
                        "<=" => v <= k,
                        ">" => v > k,
                        _ => v >= k,
                    }
                })
            })
    })
}

/// Runs the counter operations of a list, in order: each stops at 0 and at its
/// counter's bound.
fn run_ops(m: &Machine, ops: &[Op], counters: &mut [u16]) {
    for op in ops {
        if let Op::Counter(c) = op {
            let max = i64::from(m.counters[c.counter.index()].max);
            let v = i64::from(counters[c.counter.index()]);
            let k = i64::from(c.value);
            let next = match c.kind {
                CounterOpKind::Add => v + k,
                CounterOpKind::Sub => v - k,
                CounterOpKind::Set => k,
            };
            counters[c.counter.index()] = next.clamp(0, max) as u16;
        }
    }
}

/// One step, read directly off LANGUAGE.md: timers count first on the time base; then
/// preempt rules (outermost group first), due timeouts (innermost scope first), the
/// innermost scope naming the event, else the innermost `_`; a move sets the timers
/// of the scopes it enters to 0.
fn oracle_step(
    m: &Machine,
    state: &mut StateId,
    timers: &mut [u32],
    counters: &mut [u16],
    event: EventId,
    inputs: &[bool],
) -> Option<RuleId> {
    let at_start = counters.to_vec();
    let holding = |rules: &[RuleId]| first_holding(m, rules, inputs, &at_start);
    let chain = m.scope_chain(*state);
    let is_tb = m.timebase.as_ref().is_some_and(|t| t.event == event);
    let before = timers.to_vec();
    if is_tb {
        for sc in &chain {
            if let Some(t) = m.scope_rules(*sc).timer {
                let max = m.timers[t.index()].max();
                timers[t.index()] = (timers[t.index()] + 1).min(max);
            }
        }
    }
    let mut fired = None;
    for sc in chain.iter().rev() {
        if fired.is_some() {
            break;
        }
        if let Some((_, rules)) = m.scope_rules(*sc).preempt.iter().find(|(e, _)| *e == event) {
            fired = holding(rules);
        }
    }
    if fired.is_none() && is_tb {
        for sc in &chain {
            let rules = m.scope_rules(*sc);
            let Some(t) = rules.timer else { continue };
            for (d, list) in &rules.timeouts {
                if before[t.index()] + 1 == *d {
                    fired = fired.or_else(|| holding(list));
                }
            }
            if fired.is_some() {
                break;
            }
        }
    }
    if fired.is_none() {
        let named = chain.iter().find_map(|sc| {
            m.scope_rules(*sc)
                .named
                .iter()
                .find(|(e, _)| *e == event)
                .map(|(_, l)| l.clone())
        });
        fired = match named {
            Some(list) => holding(&list),
            None => chain
                .iter()
                .find(|sc| !m.scope_rules(**sc).wildcard.is_empty())
                .and_then(|sc| holding(&m.scope_rules(*sc).wildcard)),
        };
    }
    if let Some(r) = fired {
        let rule = &m.rules[r.index()];
        // Operations in the order of "Action order": leave lists of the source and of
        // its groups that do not hold the target (innermost first), the rule's, enter
        // lists of the target's groups that do not hold the source (outermost first),
        // the target's. `stay` runs only the rule's.
        match rule.target {
            Target::Stay => run_ops(m, &rule.actions, counters),
            Target::To(to) => {
                let from = *state;
                run_ops(m, &m.states[from.index()].leave, counters);
                for g in m.ancestors(from) {
                    if !m.group_contains(g, to) {
                        run_ops(m, &m.groups[g.index()].leave, counters);
                    }
                }
                run_ops(m, &rule.actions, counters);
                for g in m.ancestors(to).into_iter().rev() {
                    if !m.group_contains(g, from) {
                        run_ops(m, &m.groups[g.index()].enter, counters);
                    }
                }
                run_ops(m, &m.states[to.index()].enter, counters);
            }
        }
        if let Target::To(to) = m.rules[r.index()].target {
            let from = *state;
            // Entered: the target, and its groups that do not hold the source.
            let mut entered = vec![Scope::State(to)];
            for g in m.ancestors(to) {
                if !m.group_contains(g, from) {
                    entered.push(Scope::Group(g));
                }
            }
            for sc in entered {
                if let Some(t) = m.scope_rules(sc).timer {
                    timers[t.index()] = 0;
                }
            }
            *state = to;
            let active = m.chain_timers(to);
            for (i, v) in timers.iter_mut().enumerate() {
                if !active.contains(&TimerId::from_index(i)) {
                    *v = 0;
                }
            }
        }
    }
    fired
}

/// What [`against_the_oracle`] shows of each step: the machine, the configuration
/// before and after, and the rule fired.
type OnStep<'a> = dyn FnMut(&Machine, &Config, &Config, Option<RuleId>) + 'a;

/// Runs the interpreter against [`oracle_step`] on 40 random machines of each
/// configuration (seeds from `seed_base`), 3 random traces of 300 steps each with the
/// time base on a share `p_time` of the steps, and asserts at every step that both
/// fire the same rule and reach the same state, timers and counters. `seen` gets each
/// step: the machine, the configuration before and after, and the rule fired. Returns
/// the number of machines.
fn against_the_oracle(
    configs: &[GenConfig],
    seed_base: u64,
    p_time: f64,
    seen: &mut OnStep<'_>,
) -> usize {
    let mut machines = 0;
    for (k, cfg) in configs.iter().enumerate() {
        for seed in 0..40u64 {
            let seed = seed_base + k as u64 * 1_000 + seed;
            let text = random_spec(seed, cfg);
            let errs = errors(&text);
            assert!(errs.is_empty(), "seed {seed}: {errs:?}\n{text}");
            let m = resolve(&text);
            machines += 1;
            let mut rng = Rng::new(seed);
            for _ in 0..3 {
                let trace =
                    random_timed_trace(&mut rng, m.events.len(), m.inputs.len(), 300, p_time);
                let mut config: Config = m.start_config();
                let mut state = m.start;
                let mut timers = vec![0u32; m.timers.len()];
                let mut counters = vec![0u16; m.counters.len()];
                for (n, (e, ins)) in trace.iter().enumerate() {
                    let e = EventId::from_index(*e);
                    let before = config.clone();
                    let r = m.step_config(&mut config, e, ins);
                    let want = oracle_step(&m, &mut state, &mut timers, &mut counters, e, ins);
                    let got = match r.outcome {
                        Outcome::Fired(rule) => Some(rule),
                        _ => None,
                    };
                    assert_eq!(got, want, "seed {seed}, step {n}\n{text}");
                    assert_eq!(config.state, state, "seed {seed}, step {n}\n{text}");
                    assert_eq!(config.timers, timers, "seed {seed}, step {n}\n{text}");
                    assert_eq!(config.counters, counters, "seed {seed}, step {n}\n{text}");
                    seen(&m, &before, &config, got);
                }
            }
        }
    }
    machines
}

#[test]
fn interpreter_matches_the_written_timer_rules_on_random_machines() {
    let d = GenConfig {
        timeouts: true,
        ..GenConfig::default()
    };
    let configs = [
        d.clone(),
        GenConfig {
            events: 0,
            ..d.clone()
        },
        GenConfig {
            groups: false,
            ..d.clone()
        },
        GenConfig {
            states: (6, 16),
            events: 4,
            inputs: 3,
            ..d.clone()
        },
        GenConfig {
            policy: Some("ignore"),
            ..d.clone()
        },
    ];
    let (mut timeouts_fired, mut steps) = (0usize, 0usize);
    let machines = against_the_oracle(&configs, 9_000, 0.7, &mut |m, _, _, fired| {
        if fired.is_some_and(|rule| {
            matches!(
                m.rules[rule.index()].trigger,
                detent_compiler::model::Trigger::After(_)
            )
        }) {
            timeouts_fired += 1;
        }
        steps += 1;
    });
    assert_eq!(machines, 200);
    // The traces do reach the timeouts (a test that never fires one proves nothing).
    assert!(
        timeouts_fired > 1_000,
        "{timeouts_fired} timeouts fired in {steps} steps"
    );
}

#[test]
fn interpreter_matches_the_written_counter_rules_on_random_machines() {
    let d = GenConfig {
        counters: 2,
        ..GenConfig::default()
    };
    let configs = [
        d.clone(),
        GenConfig {
            events: 0,
            ..d.clone()
        },
        GenConfig {
            timeouts: true,
            counters: 1,
            ..d.clone()
        },
        GenConfig {
            states: (6, 16),
            events: 4,
            inputs: 3,
            counters: 3,
            ..d.clone()
        },
        GenConfig {
            policy: Some("ignore"),
            ..d.clone()
        },
    ];
    let (mut steps, mut changes, mut at_bound, mut guarded_fired) = (0usize, 0, 0, 0);
    let machines = against_the_oracle(&configs, 19_000, 0.3, &mut |m, before, after, fired| {
        if before.counters != after.counters {
            changes += 1;
        }
        if after
            .counters
            .iter()
            .zip(&m.counters)
            .any(|(v, c)| *v == c.max && *v > 0)
        {
            at_bound += 1;
        }
        if fired.is_some_and(|rule| {
            m.rules[rule.index()]
                .guard_expr
                .as_ref()
                .is_some_and(|g| !g.atoms().is_empty())
        }) {
            guarded_fired += 1;
        }
        steps += 1;
    });
    assert_eq!(machines, 200);
    // The traces change counters, reach their bounds and fire rules whose guards
    // compare them (a test where none of that happens proves nothing).
    assert!(
        changes > 2_000,
        "{changes} counter changes in {steps} steps"
    );
    assert!(
        at_bound > 2_000,
        "{at_bound} steps at a bound in {steps} steps"
    );
    assert!(
        guarded_fired > 2_000,
        "{guarded_fired} comparing rules fired in {steps} steps"
    );
}

/// The lowered form's `resets` is the whole of what a step zeroes (the interpreter,
/// the configuration graph, the code generators and the hardware port read it and
/// derive nothing): for a move, every timer but those of the groups holding both the
/// state it fires in and the target, written here from the scopes; nothing for `stay`.
/// Before, `resets` listed only the entered scopes and each consumer added the scopes
/// left on its own.
#[test]
fn every_choice_lists_every_timer_its_step_zeroes() {
    let cfg = GenConfig {
        timeouts: true,
        states: (4, 12),
        ..GenConfig::default()
    };
    let (mut moves, mut leaving) = (0usize, 0usize);
    for seed in 0..60u64 {
        let text = random_spec(31_000 + seed, &cfg);
        let m = resolve(&text);
        for cell in m.lowered.cells() {
            let from = cell.state;
            for ch in &cell.choices {
                let want: Vec<TimerId> = if ch.moves {
                    let kept: Vec<TimerId> = m
                        .scope_chain(ch.target)
                        .into_iter()
                        .filter(|sc| match sc {
                            Scope::Group(g) => m.groups[g.index()].states.contains(&from),
                            Scope::State(_) => false,
                        })
                        .filter_map(|sc| m.scope_rules(sc).timer)
                        .collect();
                    moves += 1;
                    let active_after = m.chain_timers(ch.target);
                    if m.chain_timers(from)
                        .iter()
                        .any(|t| !active_after.contains(t))
                    {
                        leaving += 1;
                    }
                    (0..m.timers.len())
                        .map(TimerId::from_index)
                        .filter(|t| !kept.contains(t))
                        .collect()
                } else {
                    Vec::new()
                };
                assert_eq!(ch.resets, want, "seed {seed}, rule {:?}\n{text}", ch.rule);
            }
        }
    }
    // Moves that leave a scope with a timer are there (the case `resets` once missed).
    assert!(
        leaving > 50 && moves > leaving,
        "{moves} moves, {leaving} leave a timer"
    );
}

const BLINK: &str = "
machine Blink {
    events Tick, Press;
    outputs lamp;
    timebase Tick 1 ms;
    start Off;
    group Active {
        after 3 s => Off;
        Press => Off;
        Tick => stay;
        state On emit lamp { after 500 ms => Dark; }
        state Dark { after 500ms => On; }
    }
    state Off { Press => On; Tick => stay; }
}";

#[test]
fn a_blinking_lamp_keeps_its_times() {
    // Hand-checked: On for 500 ticks, Dark for 500, and the group's 3 s timeout is due
    // on the 3,000th tick after Press, the same tick Dark's own timeout is due: the
    // innermost scope's timeout fires first (LANGUAGE.md, lookup step 2), and the
    // group's, one-shot, never fires in that entry.
    let m = resolve(BLINK);
    let tick = m.event_id("Tick").unwrap();
    let press = m.event_id("Press").unwrap();
    let mut c = m.start_config();
    m.step_config(&mut c, press, &[]);
    assert_eq!(m.state_name(c.state), "On");
    assert_eq!(m.next_timeout(&c), Some(500));
    let mut states = Vec::new();
    for _ in 0..3_001 {
        let r = m.step_config(&mut c, tick, &[]);
        states.push(m.state_name(r.to).to_string());
    }
    assert_eq!(states[498], "On");
    assert_eq!(states[499], "Dark", "the 500th tick leaves On");
    assert_eq!(states[998], "Dark");
    assert_eq!(states[999], "On");
    assert_eq!(states[2_999], "On", "Dark's own timeout wins on tick 3,000");
    assert_eq!(m.next_timeout(&c), Some(499));
    // The group's timer stays saturated at 3,000 until the group is left.
    assert_eq!(c.timers.iter().copied().max(), Some(3_000));
    // Press leaves the group; entering it again restarts its timer.
    m.step_config(&mut c, press, &[]);
    assert_eq!(m.state_name(c.state), "Off");
    assert_eq!(c.timers, vec![0, 0, 0]);
    m.step_config(&mut c, press, &[]);
    for _ in 0..2_999 {
        m.step_config(&mut c, tick, &[]);
    }
    assert_eq!(m.state_name(c.state), "Dark");
    let r = m.step_config(&mut c, tick, &[]);
    assert_eq!(
        m.state_name(r.to),
        "On",
        "tick 3,000 again: Dark's timeout first"
    );
}

#[test]
fn a_timeout_fires_once_per_entry_and_a_guard_that_fails_waits_for_the_next_entry() {
    let m = resolve(
        "machine Once { events Tick, Go; inputs ready; timebase Tick; start A;
            state A { after 2 ticks if ready => B; Tick => stay; Go => A; }
            state B { Tick => stay; Go => A; } }",
    );
    let tick = m.event_id("Tick").unwrap();
    let go = m.event_id("Go").unwrap();
    let mut c = m.start_config();
    m.step_config(&mut c, tick, &[false]);
    // Due on the second tick, but `ready` is low: not due again in this entry.
    let r = m.step_config(&mut c, tick, &[false]);
    assert_eq!(r.to, c.state);
    for _ in 0..10 {
        assert_eq!(m.state_name(m.step_config(&mut c, tick, &[true]).to), "A");
    }
    assert_eq!(m.next_timeout(&c), None);
    // `Go => A` is an external self-transition: the timer starts again.
    m.step_config(&mut c, go, &[]);
    assert_eq!(m.next_timeout(&c), Some(2));
    m.step_config(&mut c, tick, &[true]);
    assert_eq!(m.state_name(m.step_config(&mut c, tick, &[true]).to), "B");
}

#[test]
fn stay_keeps_the_timer_and_a_clocked_machine_counts_every_step() {
    let m = resolve(
        "machine Clk { inputs hold; timebase 10 us; start A;
            state A { after 50 us => B; if hold => stay; else => stay; }
            state B { else => A; } }",
    );
    let mut c = m.start_config();
    let mut path = Vec::new();
    for _ in 0..7 {
        path.push(
            m.state_name(m.step_config(&mut c, EventId(0), &[true]).to)
                .to_string(),
        );
    }
    assert_eq!(path, ["A", "A", "A", "A", "B", "A", "A"]);
}

#[test]
fn time_errors_say_what_is_wrong() {
    let cases: &[(&str, &str)] = &[
        (
            "machine M { events Tick; start A; state A { after 3 ticks => A; Tick => stay; } }",
            "a timeout needs a time base, and this machine declares none",
        ),
        (
            "machine M { events Tick; timebase Tick 1 ms; start A; state A { after 250 us => A; Tick => stay; } }",
            "`250 us` is not a whole number of time-base periods (1 ms)",
        ),
        (
            "machine M { events Tick; timebase Tick 1 ms; start A; state A { after 0 ms => A; Tick => stay; } }",
            "a timeout of zero: a duration is at least one time-base period",
        ),
        (
            "machine M { events Tick; timebase Tock 1 ms; start A; state A { Tick => stay; } }",
            "undefined event `Tock` as the time base",
        ),
        (
            "machine M { events Tick; timebase Tick; start A; state A { after 2 ms => A; Tick => stay; } }",
            "`2 ms`: the time base has no period, so durations are in `ticks`",
        ),
        (
            "machine M { events Tick; timebase 1 ms; start A; state A { Tick => stay; } }",
            "this time base names no event",
        ),
        (
            "machine M { timebase Tick 1 ticks; start A; state A { else => stay; } }",
            "the time base's period is a time",
        ),
        (
            "machine M { events Tick; timebase Tick; start A; state A { after 5000000000 ticks => A; Tick => stay; } }",
            "the limit is 4294967295 ticks",
        ),
    ];
    for (spec, want) in cases {
        let errs = errors(spec);
        assert!(
            errs.iter().any(|e| e.contains(want)),
            "{spec}\nwant: {want}\ngot: {errs:?}"
        );
    }
    // Parse errors.
    for (spec, want) in [
        ("machine M { events Tick; timebase Tick; start A; group G { preempt after 2 ticks => A; state A { Tick => stay; } } }", "`preempt after`"),
        ("machine M { events Tick; timebase Tick; start A; state A { after 2 => A; } }", "a duration needs its unit"),
        ("machine M { events Tick; timebase Tick; start A; state A { after 2 min => A; } }", "`min` is not a unit of time"),
        ("machine M { events Tick; timebase Tick 1 ms; start A; state A { after 1.5 ms => A; } }", "whole number"),
        ("machine M { events Tick; timebase Tick; start A; state A { after 2 ticks else => A; } }", "cannot be an `else` rule"),
    ] {
        let errs = errors(spec);
        assert!(errs.iter().any(|e| e.contains(want)), "{spec}\nwant: {want}\ngot: {errs:?}");
    }
}

#[test]
fn repeated_trace_lines_expand_and_are_bounded() {
    let m = resolve(BLINK);
    let steps = detent_compiler::trace::parse_trace(
        &m,
        "Press\nTick *499\n{\"event\":\"Tick\",\"repeat\":2}\n",
    )
    .unwrap();
    assert_eq!(steps.len(), 502);
    let lines = detent_compiler::trace::run_json_lines(&m, &steps);
    assert!(
        lines[501].contains(r#""from":"On","event":"Tick","to":"Dark""#),
        "{}",
        lines[501]
    );
    for (bad, want) in [
        ("Tick *0", "N of at least 1"),
        ("Tick *x", "N a whole number"),
        ("*3", "follows a step"),
        ("reset *2", "not repeated"),
        ("Tick *99999999999", "the limit"),
        (
            "{\"event\":\"Tick\",\"repeat\":0}",
            "`repeat` must be a whole number",
        ),
    ] {
        let e = detent_compiler::trace::parse_trace(&m, bad).unwrap_err();
        assert!(e.message.contains(want), "{bad}: {}", e.message);
    }
}

#[test]
fn state_tables_show_timeouts_and_csv_round_trips_state_timers() {
    // Random timed machines without groups: the CSV rebuilds a machine that runs the
    // same on long random traces (state, outputs, actions, timers).
    let cfg = GenConfig {
        timeouts: true,
        groups: false,
        ..GenConfig::default()
    };
    let mut with_timeouts = 0;
    for seed in 0..40u64 {
        let text = random_spec(31_000 + seed, &cfg);
        let m = resolve(&text);
        let csv = detent_compiler::table::to_csv(&m);
        let file =
            detent_compiler::import::import_csv(&csv).unwrap_or_else(|e| panic!("{e:?}\n{csv}"));
        let printed = detent_compiler::syntax::print::print_file(&file);
        let back = resolve(&printed);
        if !m.timers.is_empty() {
            with_timeouts += 1;
            assert!(csv.contains(",after "), "{csv}");
        }
        let mut rng = Rng::new(seed);
        let trace = random_timed_trace(&mut rng, m.events.len(), m.inputs.len(), 400, 0.7);
        let (mut a, mut b) = (m.start_config(), back.start_config());
        for (n, (e, ins)) in trace.iter().enumerate() {
            let e = EventId::from_index(*e);
            let ra = m.step_config(&mut a, e, ins);
            let rb = back.step_config(&mut b, e, ins);
            assert_eq!(
                (ra.to, ra.outputs(), ra.handled(), ra.actions),
                (rb.to, rb.outputs(), rb.handled(), rb.actions),
                "seed {seed} step {n}\n{text}\n{printed}"
            );
            assert_eq!(a.timers, b.timers, "seed {seed} step {n}");
        }
    }
    assert!(with_timeouts >= 10, "{with_timeouts}");
    // A group's timer has no flat form: import says so, with the row.
    let csv = detent_compiler::table::to_csv(&resolve(BLINK));
    let e = detent_compiler::import::import_csv(&csv).unwrap_err();
    assert!(e.to_string().contains("timeout of group `Active`"), "{e}");
    let text = detent_compiler::table::to_text(&resolve(BLINK));
    assert!(text.contains("after 500 ms"), "{text}");
    assert!(text.contains("after 3 s in Active"), "{text}");
}
