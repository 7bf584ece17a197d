//! `detent logic`: the JSON shape of DESIGN.md, text equations, gate forms, and the
//! Verilog files it writes (run under Icarus Verilog).

use detent_tests::icarus::simulate_files;
use std::path::PathBuf;
use std::process::Command;

fn detent() -> Command {
    Command::new(env!("CARGO_BIN_EXE_detent"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-logic-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn example(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../examples")
        .join(name)
}

#[test]
fn json_has_the_documented_keys_in_order() {
    let out = detent()
        .args(["logic", "--format", "json", "--flip-flop", "jk"])
        .arg(example("frame_parser.detent"))
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let keys: Vec<&str> = v.as_object().unwrap().keys().map(String::as_str).collect();
    assert_eq!(
        keys[..5],
        ["encoding", "state_bits", "inputs", "functions", "cost"]
    );
    assert_eq!(v["state_bits"], 2);
    assert_eq!(v["encoding"]["Hunt"], "00");
    assert_eq!(
        v["inputs"],
        serde_json::json!(["ev1", "ev0", "length_ok", "last_byte", "sum_ok"])
    );
    let f = &v["functions"][0];
    let fkeys: Vec<&str> = f.as_object().unwrap().keys().map(String::as_str).collect();
    assert_eq!(
        fkeys,
        ["name", "vars", "on", "dc", "cover", "literals", "method"]
    );
    assert_eq!(f["name"], "J1");
    assert_eq!(f["vars"][0], "q1");
    // Event code 3 of the 2-bit bus is unused (3 events): a don't-care.
    let dc: Vec<u64> = f["dc"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap())
        .collect();
    // Minterm (q1, q0, ev1, ev0, inputs): q=00, ev=11, inputs 000 -> 0b0011000 = 24.
    assert!(dc.contains(&24), "{dc:?}");
    let lits: u64 = v["functions"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["literals"].as_u64().unwrap())
        .sum();
    assert_eq!(v["cost"]["literals"].as_u64().unwrap(), lits);
    let ckeys: Vec<&str> = v["cost"]
        .as_object()
        .unwrap()
        .keys()
        .map(String::as_str)
        .collect();
    assert_eq!(ckeys, ["literals", "gates", "gate_inputs"]);
}

#[test]
fn text_nand_nor_and_auto_reports() {
    let run = |args: &[&str]| {
        let out = detent()
            .arg("logic")
            .arg(example("pattern_detector.detent"))
            .args(args)
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0));
        String::from_utf8(out.stdout).unwrap()
    };
    let text = run(&[]);
    assert!(
        text.contains("D2 = q1·q0·bit    [exact, 3 literals]"),
        "{text}"
    );
    assert!(text.contains("found = q2"), "{text}");
    assert!(run(&["--map", "nand"]).contains("NAND("));
    assert!(run(&["--map", "nor"]).contains("NOR("));
    let auto = run(&["--encoding", "auto"]);
    assert!(auto.contains("<- chosen"), "{auto}");
    assert!(auto.contains("140 assignments costed"), "{auto}");
    let json = run(&["--encoding", "auto", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["auto"]["table"].as_array().unwrap().len(), 4);
    assert_eq!(v["auto"]["exhaustive"], true);
}

fn charger() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../compiler/tests/fixtures/charger.detent")
}

/// `--budget-ms 0`: the search costs its first candidate only and says it was cut short
/// (the deadline has passed before the first check, whatever the machine's speed);
/// without a budget it runs to the end. `--budget-ms` needs `--encoding auto`.
#[test]
fn budget_cuts_the_search_short_and_says_so() {
    let run = |args: &[&str]| {
        let out = detent()
            .arg("logic")
            .arg(charger())
            .args(["--encoding", "auto"])
            .args(args)
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8(out.stdout).unwrap()
    };
    let v: serde_json::Value =
        serde_json::from_str(&run(&["--budget-ms", "0", "--format", "json"])).unwrap();
    assert_eq!(v["auto"]["cut_short"], true);
    assert_eq!(v["auto"]["evaluated"], 1);
    assert_eq!(v["auto"]["exhaustive"], false);
    let text = run(&["--budget-ms", "0"]);
    assert!(text.contains("1 assignments costed"), "{text}");
    assert!(text.contains("cut short by the time budget"), "{text}");
    let full: serde_json::Value = serde_json::from_str(&run(&["--format", "json"])).unwrap();
    assert_eq!(full["auto"]["cut_short"], false);
    assert!(full["auto"]["evaluated"].as_u64().unwrap() > 1);
    let auto_lits = |v: &serde_json::Value| {
        v["auto"]["table"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["encoding"] == "auto")
            .unwrap()["literals"]
            .as_u64()
            .unwrap()
    };
    assert!(auto_lits(&full) <= auto_lits(&v));
    let out = detent()
        .arg("logic")
        .arg(charger())
        .args(["--budget-ms", "10"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--encoding auto"));
}

#[test]
fn writes_verilog_that_passes_its_testbench_and_reports_bad_usage() {
    let dir = scratch("verilog");
    let (v, tb) = (dir.join("kiln.v"), dir.join("kiln_tb.v"));
    let out = detent()
        .arg("logic")
        .arg(example("kiln.detent"))
        .args(["--encoding", "onehot", "--flip-flop", "sr", "--verilog"])
        .arg(&v)
        .arg("--testbench")
        .arg(&tb)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let text = std::fs::read_to_string(&v).unwrap();
    assert!(text.contains("module kiln ("));
    assert!(text.contains("not a certified component"));
    assert!(text.contains("IEC 61508"));
    let sim = simulate_files(&v, &tb, &dir.join("kiln.vvp")).unwrap();
    assert!(sim.passed, "{}", sim.printed);
    let bad = detent()
        .arg("logic")
        .arg(example("kiln.detent"))
        .args(["--machine", "Nope"])
        .output()
        .unwrap();
    assert_eq!(bad.status.code(), Some(2));
    let _ = std::fs::remove_dir_all(&dir);
}

/// A machine with timers through every path of `logic`: JSON with the due variables
/// and the timer registers, NAND and NOR forms, the assignment search, and the Verilog
/// module with its testbench under Icarus Verilog (exit status 0 and `PASS`).
#[test]
fn timers_go_through_every_path() {
    let dir = scratch("timers");
    let spec = dir.join("blink.detent");
    std::fs::write(
        &spec,
        "machine Blink {
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
}
",
    )
    .unwrap();
    let run = |args: &[&str]| {
        let out = detent()
            .arg("logic")
            .arg(&spec)
            .args(args)
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8(out.stdout).unwrap()
    };
    let v: serde_json::Value = serde_json::from_str(&run(&["--format", "json"])).unwrap();
    assert_eq!(
        v["inputs"],
        serde_json::json!([
            "ev1",
            "ev0",
            "hold",
            "due_Running_5",
            "due_On_2",
            "due_On_3",
            "due_Dark_1"
        ])
    );
    let keys: Vec<&str> = v.as_object().unwrap().keys().map(String::as_str).collect();
    assert_eq!(
        keys[..6],
        [
            "encoding",
            "state_bits",
            "inputs",
            "functions",
            "cost",
            "timers"
        ]
    );
    assert_eq!(v["timers"][0]["register"], "timer_Running");
    assert_eq!(v["timers"][0]["bits"], 3);
    assert_eq!(v["timers"][0]["max"], 5);
    let names: Vec<&str> = v["functions"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["name"].as_str().unwrap())
        .collect();
    assert!(names.contains(&"clear_On"), "{names:?}");
    let text = run(&[]);
    assert!(
        text.contains("timer Dark: register timer_Dark (1 bit)"),
        "{text}"
    );
    for args in [
        &["--map", "nand"][..],
        &["--map", "nor"],
        &["--encoding", "auto"],
        &["--encoding", "auto", "--map", "nor", "--flip-flop", "t"],
    ] {
        let text = run(args);
        assert!(text.contains("due_On_3"), "{args:?}: {text}");
        assert!(text.contains("clear_Running ="), "{args:?}: {text}");
    }
    for (enc, ff) in [
        ("binary", "d"),
        ("gray", "jk"),
        ("onehot", "sr"),
        ("auto", "t"),
    ] {
        let (v, tb) = (dir.join("blink.v"), dir.join("blink_tb.v"));
        run(&["--encoding", enc, "--flip-flop", ff, "--verilog"]
            .iter()
            .copied()
            .chain([v.to_str().unwrap(), "--testbench", tb.to_str().unwrap()])
            .collect::<Vec<_>>());
        let module = std::fs::read_to_string(&v).unwrap();
        assert!(module.contains("reg [2:0] timer_Running;"), "{module}");
        assert!(module.contains("timer_Running <= 3'd0;"), "{module}");
        let sim = simulate_files(&v, &tb, &dir.join("blink.vvp")).unwrap();
        assert!(sim.passed, "{enc} {ff}: {}", sim.printed);
        // The testbench drives time: some cycle checks a timer past 0.
        let tb_text = std::fs::read_to_string(&tb).unwrap();
        assert!(tb_text.contains("check_timer_On("), "{tb_text}");
        assert!(tb_text.contains(", 2'd2);"), "{tb_text}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
