//! The benchmark compares like with like: for every size, the hand-written baseline and
//! both generated styles agree step by step on random traces (state, outputs or
//! rejection, and the exact action sequence), and their out-of-line `step_entry`
//! functions, the ones the benchmark times, agree on the action checksum.

use detent_bench::{
    large, medium, random_events, run, small, Recorder, Variant, BENCH_EVENTS, BENCH_SEED,
};

/// One step's observation: state after, outputs (`None`: rejected), actions run.
type Observed = (usize, Option<u64>, Vec<u32>);

fn trace<V: Variant>(events: &[(usize, u32)]) -> Vec<Observed> {
    let mut machine = V::start();
    let mut rec = Recorder::default();
    let mut out = Vec::with_capacity(events.len());
    for &(e, levels) in events {
        rec.levels = levels;
        let o = V::step_recorded(&mut machine, V::event(e), &mut rec);
        out.push((V::state(&machine), o, std::mem::take(&mut rec.actions)));
    }
    out
}

fn checksum<V: Variant>(events: &[(usize, u32)]) -> u32 {
    run::<V>(&detent_bench::event_buffer::<V>(events))
}

fn agree<H: Variant, T: Variant, M: Variant>(
    size: &str,
    states: usize,
    n_events: usize,
    inputs: usize,
) {
    let mut visited = vec![false; states];
    let mut fired = 0usize;
    for seed in 0..8 {
        let events = random_events(seed, n_events, inputs, 5_000);
        let hand = trace::<H>(&events);
        for (form, other) in [
            ("table", trace::<T>(&events)),
            ("match", trace::<M>(&events)),
        ] {
            for (i, (h, g)) in hand.iter().zip(&other).enumerate() {
                assert_eq!(
                    h, g,
                    "{size}, seed {seed}, step {i} (event {:?}): hand-written vs {form}",
                    events[i]
                );
            }
        }
        for (state, _, actions) in &hand {
            visited[*state] = true;
            fired += usize::from(!actions.is_empty());
        }
        let sums = [
            checksum::<H>(&events),
            checksum::<T>(&events),
            checksum::<M>(&events),
        ];
        assert!(
            sums[0] == sums[1] && sums[1] == sums[2],
            "{size}, seed {seed}: step_entry checksums {sums:?}"
        );
    }
    // The traces exercise the machine, not one corner of it.
    let seen = visited.iter().filter(|v| **v).count();
    assert!(
        seen > states / 2,
        "{size}: {seen} of {states} states visited"
    );
    assert!(fired > 100, "{size}: only {fired} steps ran actions");

    // The benchmark's own buffer keeps the machine moving to the end: no sink it gets
    // stuck in, so the timed passes measure dispatch over the whole machine.
    let events = random_events(BENCH_SEED, n_events, inputs, BENCH_EVENTS);
    let hand = trace::<H>(&events);
    let mut late = vec![false; states];
    let mut moves = 0usize;
    for (i, (state, _, _)) in hand.iter().enumerate() {
        if i >= BENCH_EVENTS / 2 {
            late[*state] = true;
            moves += usize::from(*state != hand[i - 1].0);
        }
    }
    let late = late.iter().filter(|v| **v).count();
    assert!(
        late * 10 >= states * 9,
        "{size}: the second half of the benchmark buffer visits {late} of {states} states"
    );
    assert!(
        moves * 5 >= BENCH_EVENTS / 2,
        "{size}: only {moves} state changes in the second half of the benchmark buffer"
    );
}

#[test]
fn small_forms_agree() {
    agree::<small::hand::V, small::table::V, small::matched::V>(
        "small",
        small::STATES,
        small::EVENTS,
        small::INPUTS,
    );
}

#[test]
fn medium_forms_agree() {
    agree::<medium::hand::V, medium::table::V, medium::matched::V>(
        "medium",
        medium::STATES,
        medium::EVENTS,
        medium::INPUTS,
    );
}

#[test]
fn large_forms_agree() {
    agree::<large::hand::V, large::table::V, large::matched::V>(
        "large",
        large::STATES,
        large::EVENTS,
        large::INPUTS,
    );
}

#[test]
fn sizes_are_as_documented() {
    assert_eq!(small::STATES, 4);
    assert_eq!(medium::STATES, 50);
    assert_eq!(large::STATES, 1000);
}
