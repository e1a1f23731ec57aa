//! Team rules, configuration discovery, suppressions, rule packs.

use armature::model::library::LibraryCache;
use armature::{Options, check_path};
use assert_cmd::Command;
use std::path::Path;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = match Command::cargo_bin("armature").map(|mut c| c.args(args).output()) {
        Ok(Ok(o)) => o,
        _ => panic!("cannot run armature"),
    };
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn a_team_rule_fires_and_one_passes_on_the_same_netlist() {
    let (code, out, _) = run(&[
        "check",
        "tests/fixtures/team/circuit.drive",
        "--rules",
        "tests/fixtures/team/rules.yaml",
        "--format",
        "compact",
    ]);
    assert_eq!(code, 1, "{out}");
    // Q2 (40 V) fails twice 28.8 V; Q1 (60 V) passes
    assert!(
        out.contains("error[team/fet-vds-2x]: Q2 is rated 40 V; the drain sees 28.8 V"),
        "{out}"
    );
    assert!(!out.contains("team/fet-vds-2x]: Q1"), "{out}");
    // D2 recovers in 2 µs; D1 has no trr: one warning, never a silent pass
    assert!(
        out.contains("warning[team/fast-diode]: D2 recovers in 2 µs"),
        "{out}"
    );
    assert!(
        out.contains(
            "warning[team/fast-diode]: `D1` has no `trr`: team/fast-diode cannot be checked"
        ),
        "{out}"
    );
}

#[test]
fn team_findings_carry_the_rule_location() {
    let (_, out, _) = run(&[
        "check",
        "tests/fixtures/team/circuit.drive",
        "--rules",
        "tests/fixtures/team/rules.yaml",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    let f = v["findings"]
        .as_array()
        .and_then(|a| a.iter().find(|f| f["rule"] == "team/fet-vds-2x").cloned())
        .unwrap_or_default();
    assert_eq!(f["related"][0]["file"], "tests/fixtures/team/rules.yaml");
    assert_eq!(f["related"][0]["line"], 2);
    assert_eq!(f["help"], "pick a switch rated at least 57.6 V");
}

#[test]
fn broken_rule_files_report_every_error_located_and_check_nothing() {
    let (code, out, _) = run(&[
        "check",
        "tests/fixtures/team/circuit.drive",
        "--rules",
        "tests/fixtures/team/bad_rules.yaml",
        "--format",
        "compact",
    ]);
    assert_eq!(code, 2, "{out}");
    let lines: Vec<&str> = out.lines().collect();
    assert!(
        lines
            .iter()
            .all(|l| l.starts_with("tests/fixtures/team/bad_rules.yaml:")),
        "{out}"
    );
    assert!(
        out.contains(
            ":4:32: error[rules-error]: in `require`: cannot compare a voltage with a current"
        ),
        "{out}"
    );
    assert!(out.contains("must contain a `/`"), "{out}");
    assert!(out.contains("unknown name `nope`"), "{out}");
    assert!(out.contains("unknown function `frob`"), "{out}");
    assert!(
        out.contains(":14:5: error[rules-error]: unknown key `colour`"),
        "{out}"
    );
}

#[test]
fn config_is_discovered_from_nested_folders() {
    // nested/armature.yaml turns net-touches-one-pin into an error and fails on warnings
    let (code, out, _) = run(&[
        "check",
        "tests/fixtures/team/nested/deeper/lonely.drive",
        "--format",
        "compact",
    ]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("error[net-touches-one-pin]"), "{out}");
    // without the config it is a warning and exit 0
    let r = check_path(
        Path::new("tests/fixtures/team/other/../nested/deeper/lonely.drive"),
        &Options::default(),
        &LibraryCache::default(),
    );
    assert!(
        r.findings
            .iter()
            .all(|f| f.severity == armature::finding::Severity::Warning)
    );
}

#[test]
fn config_errors_are_located() {
    let (code, out, _) = run(&[
        "check",
        "tests/fixtures/team/other/lonely.drive",
        "--format",
        "compact",
    ]);
    assert_eq!(code, 2, "{out}");
    assert!(
        out.contains("armature.yaml:1:1: error[config-error]: unknown key `severty`"),
        "{out}"
    );
    assert!(
        out.contains("armature.yaml:4:12: error[config-error]: `voltage` is a fraction"),
        "{out}"
    );
    assert!(
        out.contains("armature.yaml:5:3: error[config-error]: unknown derating key `amps`"),
        "{out}"
    );
}

#[test]
fn explicit_config_skips_discovery() {
    let (code, out, _) = run(&[
        "check",
        "tests/fixtures/team/other/lonely.drive",
        "--config",
        "tests/fixtures/team/nested/armature.yaml",
        "--format",
        "compact",
    ]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("error[net-touches-one-pin]"), "{out}");
}

#[test]
fn suppressions_apply_and_bad_ones_are_reported() {
    let (_, out, _) = run(&[
        "check",
        "tests/fixtures/team/suppressed.drive",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    let rules: Vec<String> = v["findings"]
        .as_array()
        .map(|a| {
            a.iter()
                .map(|f| f["rule"].as_str().unwrap_or("").to_string())
                .collect()
        })
        .unwrap_or_default();
    assert!(!rules.contains(&"gate-floating".to_string()), "{rules:?}");
    assert!(
        !rules.contains(&"bulk-cap-missing".to_string()),
        "{rules:?}"
    );
    assert!(
        rules.contains(&"suppression-unused".to_string()),
        "{rules:?}"
    );
    assert!(
        rules.contains(&"suppression-no-reason".to_string()),
        "{rules:?}"
    );
    assert!(
        rules.contains(&"suppression-unknown-rule".to_string()),
        "{rules:?}"
    );
    assert_eq!(v["summary"]["suppressed"], 2);
}

#[test]
fn team_rules_are_listed_and_explained() {
    let (code, out, _) = run(&["rules", "--rules", "tests/fixtures/team/rules.yaml"]);
    assert_eq!(code, 0);
    assert!(
        out.contains("team/fet-vds-2x") && out.contains("tests/fixtures/team/rules.yaml"),
        "{out}"
    );
    let (code, out, _) = run(&[
        "explain",
        "team/fet-vds-2x",
        "--rules",
        "tests/fixtures/team/rules.yaml",
    ]);
    assert_eq!(code, 0);
    assert!(out.contains("Requires: vds_max >= 2 * v_max(d)"), "{out}");
}

#[test]
fn shipped_rule_packs_load_and_run_on_the_samples() {
    for pack in ["rules/team-example.yaml", "rules/strict-derating.yaml"] {
        let (code, out, err) = run(&["check", "samples", "--rules", pack, "--format", "compact"]);
        assert!(code == 0 || code == 1, "{pack}: {code} {out} {err}");
        assert!(!out.contains("rules-error"), "{pack}: {out}");
    }
    // the example pack flags the faulty sample's standard-level PWM switch
    let (_, out, _) = run(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--rules",
        "rules/team-example.yaml",
        "--format",
        "compact",
    ]);
    assert!(
        out.contains("team/pwm-logic-level]: Q6 switches at 20 kHz"),
        "{out}"
    );
    // the strict pack flags the valve's 40.3 V peak on a 60 V switch (> 60 %):
    // 14.4 V + the Schottky's 0.43 V + the Zener's 24 V and 0.6 A through its
    // fitted 2.1 Ω (p_max 1 W: I_ref = 41.7 mA, Rs = 0.1·0.9 V/I_ref) and its
    // junction's 0.17 V above the knee (V_t·ln(0.6 A / 1 mA))
    let (_, out, _) = run(&[
        "check",
        "samples/irrigation_valve.drive",
        "--rules",
        "rules/strict-derating.yaml",
        "--format",
        "compact",
    ]);
    assert!(out.contains("strict/vpeak-60]: Q2 sees 40.3 V"), "{out}");
    // and the clean vent fan passes every strict rule
    let (code, out, _) = run(&[
        "check",
        "samples/vent_fan.drive",
        "--rules",
        "rules/strict-derating.yaml",
        "--format",
        "compact",
    ]);
    assert_eq!(code, 0, "{out}");
}

#[test]
fn hostile_rule_files() {
    let dir = std::env::temp_dir().join(format!("armature-team-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let cases = [
        ("alias.yaml", format!("a: &a [{}]\nb: &b [*a,*a,*a,*a,*a,*a,*a,*a,*a]\nc: &c [*b,*b,*b,*b,*b,*b,*b,*b,*b]\nd: &d [*c,*c,*c,*c,*c,*c,*c,*c,*c]\ne: &e [*d,*d,*d,*d,*d,*d,*d,*d,*d]\nf: &f [*e,*e,*e,*e,*e,*e,*e,*e,*e]\ng: &g [*f,*f,*f,*f,*f,*f,*f,*f,*f]\nh: [*g,*g,*g,*g,*g,*g,*g,*g,*g]\n", "\"lol\",".repeat(9))),
        ("deep.yaml", format!("rules: {}{}\n", "[".repeat(100_000), "]".repeat(100_000))),
        ("deepexpr.yaml", format!("rules:\n  - id: t/x\n    kinds: [nmos]\n    require: \"{}1{}\"\n    message: m\n", "(".repeat(100_000), ")".repeat(100_000))),
        ("divzero.yaml", "rules:\n  - id: t/z\n    kinds: [nmos]\n    require: \"vds_max / 0V > 1\"\n    message: m\n".to_string()),
        ("strcmp.yaml", "rules:\n  - id: t/s\n    kinds: [nmos]\n    require: \"ref > 2V\"\n    message: m\n".to_string()),
        ("garbage.yaml", "\u{0}\u{1}: [".to_string()),
    ];
    for (name, text) in cases {
        let p = dir.join(name);
        let _ = std::fs::write(&p, text);
        // rule files from a scratch folder: trusted explicitly
        let (code, out, err) = run(&[
            "check",
            "samples/vent_fan.drive",
            "--rules",
            p.to_str().unwrap_or(""),
            "--format",
            "compact",
            "--allow-outside-root",
        ]);
        if name == "divzero.yaml" {
            // loads (units are fine), then reports per part that it cannot be evaluated
            assert!(out.contains("division by zero"), "{name}: {out}");
        } else {
            assert_eq!(code, 2, "{name}: {out} {err}");
            assert!(out.contains(name), "{name}: {out}");
        }
        if name == "deepexpr.yaml" {
            assert!(
                out.contains("64 levels") || out.contains("the limit is 8192"),
                "{out}"
            );
        }
    }
}
