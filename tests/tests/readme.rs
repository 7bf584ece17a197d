//! The spec shown in the README checks clean: documentation that compiles.

use detent_compiler::driver::check_source;

#[test]
fn the_readme_spec_checks_without_findings() {
    let readme = std::fs::read_to_string(detent_tests::workspace_root().join("README.md")).unwrap();
    let section = readme.find("## A spec").expect("README has a spec section");
    let start = readme[section..].find("```\n").unwrap() + section + 4;
    let end = readme[start..].find("```\n").unwrap() + start;
    let report = check_source("README.md", &readme[start..end]);
    let findings: Vec<_> = report.diagnostics().collect();
    assert!(findings.is_empty(), "{findings:#?}");
    assert_eq!(report.machines.len(), 1);
    let m = report.machines[0].machine.as_ref().unwrap();
    assert_eq!(
        m.properties.len(),
        3,
        "the README shows two `never` (one naming an event) and a `recover to`"
    );
    // It shows a preempt rule and an `else` rule.
    assert!(m.rules.iter().any(|r| r.preempt));
    assert!(m.rules.iter().any(|r| r.otherwise));
}
