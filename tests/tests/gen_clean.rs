//! The random spec generator writes specs the checker accepts: the differential tests
//! rely on it.

use detent_compiler::driver::check_source;
use detent_tests::gen::{random_spec, GenConfig};

#[test]
fn random_specs_check_without_errors() {
    let configs = [
        GenConfig::default(),
        GenConfig {
            events: 0,
            ..GenConfig::default()
        },
        GenConfig {
            inputs: 0,
            groups: false,
            ..GenConfig::default()
        },
        GenConfig {
            states: (10, 30),
            events: 6,
            inputs: 4,
            ..GenConfig::default()
        },
        GenConfig {
            counters: 2,
            ..GenConfig::default()
        },
        GenConfig {
            counters: 1,
            timeouts: true,
            events: 0,
            ..GenConfig::default()
        },
    ];
    let mut checked = 0;
    for (ci, cfg) in configs.iter().enumerate() {
        for seed in 0..150u64 {
            let text = random_spec(seed * 10 + ci as u64, cfg);
            let report = check_source("random.detent", &text);
            let errors: Vec<_> = report.diagnostics().filter(|d| d.is_error()).collect();
            assert!(
                errors.is_empty(),
                "seed {seed} config {ci}:\n{text}\n{errors:#?}"
            );
            assert!(report.machines[0].machine.is_some());
            checked += 1;
        }
    }
    assert_eq!(checked, 900);
}

#[test]
fn generator_is_deterministic_and_varied() {
    let cfg = GenConfig::default();
    assert_eq!(random_spec(7, &cfg), random_spec(7, &cfg));
    assert_ne!(random_spec(7, &cfg), random_spec(8, &cfg));
    let all: String = (0..50).map(|s| random_spec(s, &cfg)).collect();
    for needle in [
        "group ",
        "enter do",
        "leave do",
        "_ ",
        " | ",
        "=> stay",
        "emit ",
        "unhandled reject",
        "unhandled ignore",
        "unhandled complete",
        "preempt ",
        " else =>",
        "_ else =>",
    ] {
        assert!(all.contains(needle), "no spec contains `{needle}`");
    }
}

#[test]
fn counter_specs_use_every_operation_and_comparison() {
    let cfg = GenConfig {
        counters: 2,
        ..GenConfig::default()
    };
    let all: String = (0..80).map(|s| random_spec(s, &cfg)).collect();
    for needle in [
        "counters c0 to ",
        " += 1",
        " -= 1",
        "enter do",
        " = 0",
        " < ",
        " >= ",
        " == 0",
        " > 0",
        " != ",
    ] {
        assert!(all.contains(needle), "no counter spec contains `{needle}`");
    }
}

/// The generator with its choices from bytes and its fuzz extras (the structured fuzz
/// target's use, `fuzz/src/lib.rs`): the only error a spec may have is a `property`
/// error, and only when it declares a property; the extras all occur; and bytes that
/// run out make the smallest machine.
#[test]
fn byte_driven_specs_with_extras_check_without_errors() {
    use detent_compiler::diag::Lint;
    use detent_tests::gen::{spec_from, Bytes, Rng};
    let mut rng = Rng::new(24);
    let mut all = String::new();
    let mut with_property = 0;
    for k in 0..400 {
        let data: Vec<u8> = (0..rng.range(0, 400))
            .map(|_| rng.next_u64() as u8)
            .collect();
        let cfg = GenConfig {
            states: (1, 10),
            events: k % 5,
            inputs: k % 4,
            timeouts: k % 3 == 0,
            counters: usize::from(k % 3 == 1),
            ..GenConfig::default()
        };
        let built = spec_from(Bytes::new(&data), "Fuzz", &cfg, true);
        let report = check_source("fuzz.detent", &built.text);
        let errors: Vec<_> = report
            .diagnostics()
            .filter(|d| d.is_error() && !(built.has_property && d.lint == Lint::Property))
            .collect();
        assert!(errors.is_empty(), "input {k}:\n{}\n{errors:#?}", built.text);
        with_property += usize::from(built.has_property);
        all.push_str(&built.text);
    }
    assert!(with_property > 20, "{with_property} specs with a property");
    for needle in [
        "never ",
        "recover to ",
        "#[dispatch(match)]",
        "#[minimize]",
        "/// A machine",
        "pub(crate) machine",
        " || true",
        "after ",
    ] {
        assert!(all.contains(needle), "no `{needle}` in 400 specs");
    }
    let smallest = GenConfig {
        states: (1, 10),
        ..GenConfig::default()
    };
    let empty = spec_from(Bytes::new(&[]), "Fuzz", &smallest, true);
    assert!(empty.text.contains("state S0"), "{}", empty.text);
    assert!(!empty.text.contains("state S1"), "{}", empty.text);
}
