//! The lowered form against an independent reading of LANGUAGE.md, on random machines.
//!
//! `compiler/src/model/lower.rs` is the one definition of which rule fires; every back
//! end and analysis reads it. This test re-derives the lookup from the resolved model
//! in the plainest way (the groups' `preempt` rules outermost first; then the innermost
//! scope naming the event, or, when none does, the innermost scope with `_` rules; in
//! it, a rule whose guard holds, else its `else` rule), written here only as a test
//! oracle, and checks on random
//! specs (`detent_tests::gen`), every cell and random valuations, that:
//!
//! - the lowered form's choice (first test that holds, [`Lowered::choose`]) is the
//!   oracle's rule, with the oracle's target, Mealy outputs and actions;
//! - the choice's region holds the valuation and no other region of the cell does, and
//!   the cell's `unhandled` region holds it exactly when no rule fires (the regions
//!   partition the input space);
//! - the step reads each input at most once, reads only inputs some test of the cell
//!   mentions, and the reads are the same whatever values later reads would return.

use detent_compiler::driver::check_source;
use detent_compiler::model::lower::Sampler;
use detent_compiler::model::{
    ActionId, EventId, Guard, InputId, Machine, RuleId, Scope, StateId, Target,
};
use detent_tests::gen::{random_spec, GenConfig, Rng};

/// The rule LANGUAGE.md's lookup picks (no timeouts yet): the groups' `preempt` rules
/// naming the event, outermost group first; then the innermost scope naming the event;
/// only if none does, the innermost scope with `_` rules. In the scope used, a rule
/// whose guard holds fires, else its `else` rule.
fn oracle_rule(m: &Machine, s: StateId, e: EventId, inputs: &[bool]) -> Option<RuleId> {
    let holds = |r: &RuleId| {
        let rule = &m.rules[r.index()];
        !rule.otherwise
            && rule
                .guard_expr
                .as_ref()
                .is_none_or(|g| g.eval(&|i: InputId| inputs[i.index()]))
    };
    let pick = |rules: &[RuleId]| {
        rules
            .iter()
            .copied()
            .find(holds)
            .or_else(|| rules.iter().copied().find(|r| m.rules[r.index()].otherwise))
    };
    let mut chain = vec![Scope::State(s)];
    let mut g = m.states[s.index()].parent;
    while let Some(id) = g {
        chain.push(Scope::Group(id));
        g = m.groups[id.index()].parent;
    }
    let rules_of = |scope: Scope| match scope {
        Scope::State(s) => &m.states[s.index()].rules,
        Scope::Group(g) => &m.groups[g.index()].rules,
    };
    for &scope in chain.iter().rev() {
        if let Some((_, rules)) = rules_of(scope).preempt.iter().find(|(x, _)| *x == e) {
            if let Some(r) = rules.iter().copied().find(holds) {
                return Some(r);
            }
        }
    }
    for &scope in &chain {
        if let Some((_, rules)) = rules_of(scope).named.iter().find(|(x, _)| *x == e) {
            return pick(rules);
        }
    }
    for &scope in &chain {
        let rules = &rules_of(scope).wildcard;
        if !rules.is_empty() {
            return pick(rules);
        }
    }
    None
}

/// The actions of a rule firing in `from`, by LANGUAGE.md "Action order".
fn oracle_actions(m: &Machine, from: StateId, r: RuleId) -> Vec<ActionId> {
    detent_compiler::model::actions_of(&oracle_ops(m, from, r)).collect()
}

/// The operations (actions and counter operations) of a rule firing in `from`, by
/// LANGUAGE.md "Action order".
fn oracle_ops(m: &Machine, from: StateId, r: RuleId) -> Vec<detent_compiler::model::Op> {
    let rule = &m.rules[r.index()];
    let Target::To(to) = rule.target else {
        return rule.actions.clone();
    };
    let groups_of = |s: StateId| {
        let mut out = Vec::new();
        let mut g = m.states[s.index()].parent;
        while let Some(id) = g {
            out.push(id);
            g = m.groups[id.index()].parent;
        }
        out
    };
    let inside =
        |g: detent_compiler::model::GroupId, s: StateId| m.groups[g.index()].states.contains(&s);
    let mut out = m.states[from.index()].leave.clone();
    for g in groups_of(from) {
        if !inside(g, to) {
            out.extend_from_slice(&m.groups[g.index()].leave);
        }
    }
    out.extend_from_slice(&rule.actions);
    for g in groups_of(to).into_iter().rev() {
        if !inside(g, from) {
            out.extend_from_slice(&m.groups[g.index()].enter);
        }
    }
    out.extend_from_slice(&m.states[to.index()].enter);
    out
}

fn mentions(g: &Guard, out: &mut Vec<InputId>) {
    match g {
        Guard::Input(i) => out.push(*i),
        Guard::Const(_) | Guard::Atom(_) => {}
        Guard::Not(a) => mentions(a, out),
        Guard::And(a, b) | Guard::Or(a, b) => {
            mentions(a, out);
            mentions(b, out);
        }
    }
}

fn configs() -> Vec<GenConfig> {
    vec![
        GenConfig::default(),
        GenConfig {
            events: 0,
            inputs: 3,
            ..GenConfig::default()
        },
        GenConfig {
            states: (6, 14),
            events: 5,
            inputs: 5,
            outputs: 4,
            actions: 4,
            ..GenConfig::default()
        },
        GenConfig {
            inputs: 0,
            ..GenConfig::default()
        },
    ]
}

#[test]
fn the_lowered_form_is_the_lookup_of_the_language() {
    let (mut cells, mut valuations, mut fired, mut unhandled, mut reads) = (0, 0, 0, 0, 0);
    let mut machines = 0usize;
    let configs = configs();
    let per_config = detent_tests::per_config(100, configs.len());
    for (ci, cfg) in configs.iter().enumerate() {
        for k in 0..per_config {
            let seed = if k < 1_000 {
                7_000 + ci as u64 * 1_000 + k
            } else {
                detent_tests::machine_seed(7_000, ci, k)
            };
            let spec = random_spec(seed, cfg);
            let report = check_source("random.detent", &spec);
            assert!(!report.has_errors(), "generator made a bad spec:\n{spec}");
            let m = report
                .machines
                .into_iter()
                .find_map(|r| r.machine)
                .expect("one machine");
            machines += 1;
            let lowered = &m.lowered;
            let mut rng = Rng::new(seed);
            for si in 0..m.states.len() {
                let s = StateId::from_index(si);
                for ei in 0..m.events.len() {
                    let e = EventId::from_index(ei);
                    let cell = lowered.cell_of(s, e);
                    assert_eq!(cell.state, s);
                    cells += 1;
                    let mut mentioned = Vec::new();
                    for ch in &cell.choices {
                        if let Some(t) = &ch.test {
                            mentions(t, &mut mentioned);
                        }
                    }
                    for _ in 0..8 {
                        let inputs: Vec<bool> =
                            (0..m.inputs.len()).map(|_| rng.chance(0.5)).collect();
                        valuations += 1;
                        let want = oracle_rule(&m, s, e, &inputs);
                        // Reads with the trace's values.
                        let mut read = |i: InputId| inputs[i.index()];
                        let mut sample = Sampler::new(m.inputs.len(), &mut read);
                        let got = lowered.choose(cell, &mut sample);
                        let order = sample.read_order().to_vec();
                        let context =
                            || format!("state {si}, event {ei}, inputs {inputs:?}\n{spec}");
                        assert_eq!(got.map(|c| c.rule), want, "{}", context());
                        // Regions: exactly the chosen one holds, or `unhandled`.
                        let holds = |b| m.bdd.eval(b, |v| inputs[v as usize]);
                        for ch in &cell.choices {
                            assert_eq!(
                                holds(ch.region),
                                Some(ch.rule) == want,
                                "region of rule {:?}: {}",
                                ch.rule,
                                context()
                            );
                        }
                        assert_eq!(holds(cell.unhandled), want.is_none(), "{}", context());
                        match got {
                            Some(ch) => {
                                fired += 1;
                                let r = want.expect("same rule");
                                let rule = &m.rules[r.index()];
                                let target = match rule.target {
                                    Target::Stay => s,
                                    Target::To(t) => t,
                                };
                                assert_eq!(ch.target, target, "{}", context());
                                assert_eq!(ch.moves, rule.target != Target::Stay);
                                assert_eq!(lowered.outputs(ch.mealy), rule.mealy.as_slice());
                                assert_eq!(
                                    lowered.actions(ch.ops).collect::<Vec<_>>(),
                                    oracle_actions(&m, s, r),
                                    "{}",
                                    context()
                                );
                            }
                            None => unhandled += 1,
                        }
                        // Each input at most once, only inputs the tests mention.
                        for (k, i) in order.iter().enumerate() {
                            assert!(!order[..k].contains(i), "read twice: {}", context());
                            assert!(mentioned.contains(i), "read unmentioned: {}", context());
                        }
                        reads += order.len();
                        // A hostile source: later reads would see flipped values. The
                        // choice and the reads must not change, since nothing is read
                        // twice.
                        let mut calls = vec![0u32; m.inputs.len()];
                        let mut hostile = |i: InputId| {
                            calls[i.index()] += 1;
                            inputs[i.index()] ^ (calls[i.index()] % 2 == 0)
                        };
                        let mut sample = Sampler::new(m.inputs.len(), &mut hostile);
                        let again = lowered.choose(cell, &mut sample).map(|c| c.rule);
                        assert_eq!(again, want, "{}", context());
                        assert_eq!(sample.read_order(), order.as_slice());
                    }
                }
            }
        }
    }
    // The comparison means something only if the machines exercise it.
    assert!(cells > 5_000, "{cells} cells");
    assert!(
        fired > 10_000 && unhandled > 500,
        "{fired} fired, {unhandled} unhandled"
    );
    assert!(reads > 10_000, "{reads} inputs read");
    println!(
        "lowered form vs the language's lookup: {machines} machines, {cells} cells, {valuations} valuations, \
         {fired} fired, {unhandled} unhandled, {reads} reads"
    );
}

/// The interpreter reads the inputs the lowered form's tests need, in order, and only
/// those: the frame parser's byte classes and the debouncer's pin.
#[test]
fn the_interpreter_reads_each_input_once_on_the_examples() {
    for name in ["debounce", "frame_parser", "kiln", "greenhouse", "locker"] {
        let path = detent_tests::workspace_root().join(format!("examples/{name}.detent"));
        let text = std::fs::read_to_string(&path).expect("example");
        let report = check_source(&format!("{name}.detent"), &text);
        let m = report.machines.into_iter().find_map(|r| r.machine).unwrap();
        let mut rng = Rng::new(name.len() as u64);
        let mut state = m.start;
        for _ in 0..500 {
            let e = EventId::from_index(rng.index(m.events.len()));
            let inputs: Vec<bool> = (0..m.inputs.len()).map(|_| rng.chance(0.5)).collect();
            let mut calls = vec![0u32; m.inputs.len()];
            let r = m.step_reading(state, e, &mut |i| {
                calls[i.index()] += 1;
                inputs[i.index()] ^ (calls[i.index()] > 1)
            });
            assert!(calls.iter().all(|&c| c <= 1), "{name}: an input read twice");
            assert_eq!(
                r.inputs_read.len(),
                calls.iter().filter(|&&c| c == 1).count()
            );
            let friendly = m.step(state, e, &inputs);
            assert_eq!(r, friendly, "{name}: a hostile source changed the step");
            state = r.to;
        }
    }
}

/// Timed machines (issue 19): on random machines with timeouts and traces where the
/// time base is most events, the interpreter reads each input at most once per step
/// through hostile hooks (each further call flips), and the step it takes, with the
/// timers after it, is the one friendly inputs give: due tests read nothing.
#[test]
fn the_interpreter_reads_each_input_once_on_timed_machines() {
    let mut steps = 0usize;
    let mut timeouts = 0usize;
    for seed in 0..80u64 {
        let cfg = detent_tests::gen::GenConfig {
            events: [0usize, 3, 4][seed as usize % 3],
            timeouts: true,
            ..detent_tests::gen::GenConfig::default()
        };
        let text = detent_tests::gen::random_spec(7000 + seed, &cfg);
        let report = check_source("timed.detent", &text);
        let Some(m) = report.machines.into_iter().find_map(|r| r.machine) else {
            continue;
        };
        let mut rng = Rng::new(seed);
        let trace = detent_tests::gen::random_timed_trace(
            &mut rng,
            m.events.len(),
            m.inputs.len(),
            300,
            0.7,
        );
        let mut hostile_config = m.start_config();
        let mut friendly_config = m.start_config();
        for (e, inputs) in &trace {
            let e = EventId::from_index(*e);
            let mut calls = vec![0u32; m.inputs.len()];
            let r = m.step_config_reading(&mut hostile_config, e, &mut |i| {
                calls[i.index()] += 1;
                inputs[i.index()] ^ (calls[i.index()] > 1)
            });
            assert!(calls.iter().all(|&c| c <= 1), "an input read twice\n{text}");
            let friendly = m.step_config(&mut friendly_config, e, inputs);
            assert_eq!(r, friendly, "a hostile source changed the step\n{text}");
            assert_eq!(hostile_config, friendly_config);
            steps += 1;
            timeouts += usize::from(r.rule().is_some_and(|rule| {
                matches!(
                    m.rules[rule.index()].trigger,
                    detent_compiler::model::Trigger::After(_)
                )
            }));
        }
    }
    assert!(
        timeouts * 20 > steps,
        "{timeouts} timeouts in {steps} steps"
    );
}
