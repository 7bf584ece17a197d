//! The SARIF writer against the SARIF 2.1.0 JSON schema (OASIS standard; the schema file
//! is vendored in `tests/data/`, see its README for where it comes from), plus the
//! properties code-scanning tools rely on, checked by hand.

use detent_compiler::check::{apply_options, Options};
use detent_compiler::driver::{check_source, FileReport};
use detent_compiler::report::sarif;

/// The SARIF log of the reports, as JSON.
fn sarif_log(reports: &[FileReport]) -> Value {
    serde_json::to_value(sarif::sarif_log(reports)).expect("SARIF serializes")
}
use detent_compiler::diag::Lint;
use serde_json::Value;
use std::path::Path;

fn schema() -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../tests/data/sarif-schema-2.1.0.json");
    let text = std::fs::read_to_string(&path).expect("the vendored SARIF schema is readable");
    serde_json::from_str(&text).expect("the SARIF schema is JSON")
}

fn fix_patterns(v: &mut Value) -> usize {
    const FLAWED: &str = "^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}]?$";
    match v {
        Value::Object(map) => {
            let mut n = 0;
            for (k, child) in map.iter_mut() {
                if k == "pattern" && child == FLAWED {
                    *child = Value::from("^[a-zA-Z]{2}(-[a-zA-Z]{2})?$");
                    n += 1;
                } else {
                    n += fix_patterns(child);
                }
            }
            n
        }
        Value::Array(items) => items.iter_mut().map(fix_patterns).sum(),
        _ => 0,
    }
}

fn validate(log: &Value) {
    let errors = schema_errors(log);
    assert!(
        errors.is_empty(),
        "SARIF log violates the 2.1.0 schema: {errors:#?}"
    );
}

fn schema_errors(log: &Value) -> Vec<String> {
    // The vendored schema's `language` patterns (on `run` and `toolComponent`:
    // `^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}]?$`) have a stray `]` that the draft-04
    // meta-schema's `regex` format check rejects, so the schema would not compile. detent
    // writes no `language`; the test replaces those patterns in memory by the language
    // tag they mean (two letters, optionally `-` and two more) and leaves the file as
    // published.
    let mut schema = schema();
    let fixed = fix_patterns(&mut schema);
    assert_eq!(
        fixed, 2,
        "the known flaw is in the two `language` properties"
    );
    let validator = jsonschema::draft4::new(&schema).expect("the SARIF schema compiles");
    validator
        .iter_errors(log)
        .map(|e| format!("{} at {}", e, e.instance_path()))
        .collect()
}

/// A spec with an overlap (witness + related location), an incomplete pair, an unused
/// input (warning) and a violated `never` (trace).
const BAD: &str = "machine Bad {
    events Go, Stop;
    inputs a, b, unused_in;
    outputs lamp;
    start Idle;
    never lamp;

    state Idle {
        Go if a => Busy;
        Go if a && b => stay;
    }
    state Busy emit lamp {
        Stop => Idle;
    }
}
";

fn reports() -> Vec<FileReport> {
    vec![
        check_source("specs/bad.detent", BAD),
        check_source(
            "specs/other dir/ok.detent",
            "machine Ok { events E; start S; state S { E => stay; } }",
        ),
        check_source("specs/broken.detent", "machine { oops"),
    ]
}

#[test]
fn log_validates_against_the_schema() {
    let log = sarif_log(&reports());
    validate(&log);
    // An empty check is a valid log too.
    validate(&sarif_log(&[]));
    // And the validator does reject what the standard forbids.
    let mut bad = log.clone();
    bad["runs"][0]["results"][0]["level"] = Value::from("fatal");
    assert!(
        !schema_errors(&bad).is_empty(),
        "an unknown level is rejected"
    );
    let mut bad = log.clone();
    bad["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["region"]["startLine"] =
        Value::from(0);
    assert!(!schema_errors(&bad).is_empty(), "line 0 is rejected");
}

#[test]
fn log_carries_rules_results_locations_and_witnesses() {
    let r = reports();
    let log = sarif_log(&r);
    assert_eq!(log["version"], "2.1.0");
    let runs = log["runs"].as_array().expect("runs");
    assert_eq!(runs.len(), 1, "many files give one run");
    let driver = &runs[0]["tool"]["driver"];
    assert_eq!(driver["name"], "detent");
    assert!(driver["version"].is_string());
    let rules = driver["rules"].as_array().expect("rules");
    assert_eq!(rules.len(), Lint::ALL.len());
    for (i, lint) in Lint::ALL.iter().enumerate() {
        assert_eq!(rules[i]["id"], lint.name());
        assert_eq!(rules[i]["shortDescription"]["text"], lint.summary());
        assert!(rules[i]["help"]["text"]
            .as_str()
            .is_some_and(|t| t.len() > 20));
        assert_eq!(
            rules[i]["defaultConfiguration"]["level"],
            lint.default_severity().name()
        );
    }
    let results = runs[0]["results"].as_array().expect("results");
    let n_diags: usize = r.iter().map(|f| f.diagnostics().count()).sum();
    assert_eq!(results.len(), n_diags, "one result per diagnostic");
    for res in results {
        let id = res["ruleId"].as_str().expect("ruleId");
        let idx = res["ruleIndex"].as_u64().expect("ruleIndex") as usize;
        assert_eq!(rules[idx]["id"], id, "ruleIndex points at the rule");
        assert!(matches!(res["level"].as_str(), Some("error" | "warning")));
        let loc = &res["locations"][0]["physicalLocation"];
        assert!(loc["artifactLocation"]["uri"]
            .as_str()
            .is_some_and(|u| u.starts_with("specs/")));
    }
    let find = |id: &str| {
        results
            .iter()
            .find(|r| r["ruleId"] == id)
            .unwrap_or_else(|| panic!("a `{id}` result"))
    };
    // Overlap at the second Go rule (line 10, column 9), the other rule related (line 9).
    let overlap = find("overlapping_rules");
    let region = &overlap["locations"][0]["physicalLocation"]["region"];
    assert_eq!(region["startLine"], 10);
    assert_eq!(region["startColumn"], 9);
    assert_eq!(
        overlap["relatedLocations"][0]["physicalLocation"]["region"]["startLine"],
        9
    );
    let text = overlap["message"]["text"].as_str().unwrap_or_default();
    assert!(
        text.contains("a = true, b = true"),
        "witness in the message: {text}"
    );
    assert_eq!(overlap["properties"]["witness"]["a"], true);
    // Incomplete: Idle on Stop, and Busy on Go.
    assert!(results
        .iter()
        .any(|r| r["ruleId"] == "incomplete" && r["properties"]["state"] == "Busy"));
    // The property's trace lines are in the message: Go a=1 reaches Busy (lamp high).
    let prop = find("property");
    let text = prop["message"]["text"].as_str().unwrap_or_default();
    assert!(
        text.contains("\n    Go a=1"),
        "trace in the message: {text}"
    );
    let unused = find("unused_declaration");
    assert_eq!(unused["level"], "warning");
    // The syntax error of the third file, and the path with a space percent-encoded.
    let syntax = find("syntax");
    assert_eq!(
        syntax["locations"][0]["physicalLocation"]["artifactLocation"]["uri"],
        "specs/broken.detent"
    );
    let artifacts = runs[0]["artifacts"].as_array().expect("artifacts");
    assert_eq!(
        artifacts[1]["location"]["uri"],
        "specs/other%20dir/ok.detent"
    );
}

#[test]
fn options_change_levels_in_the_log() {
    let mut r = reports();
    let opts = Options {
        allow: vec![Lint::UnusedDeclaration],
        deny_warnings: true,
    };
    for f in &mut r {
        for m in &mut f.machines {
            m.diagnostics = apply_options(std::mem::take(&mut m.diagnostics), &opts);
        }
    }
    let log = sarif_log(&r);
    validate(&log);
    let results = log["runs"][0]["results"].as_array().expect("results");
    assert!(results.iter().all(|r| r["ruleId"] != "unused_declaration"));
    assert!(results.iter().all(|r| r["level"] == "error"));
}
