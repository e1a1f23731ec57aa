//! Every built-in rule: its documentation, a faulty and a clean fixture,
//! snapshots of the rendered human output and of the JSON.

use armature::model::library::LibraryCache;
use armature::report::human::Renderer;
use armature::{Options, check_path, checks};
use std::path::{Path, PathBuf};

fn fixture_dir(id: &str) -> PathBuf {
    Path::new("tests/fixtures/rules").join(id)
}

fn fixtures(id: &str) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(fixture_dir(id))
        .map(|d| d.filter_map(|e| e.ok().map(|e| e.path())).collect())
        .unwrap_or_default();
    v.retain(|p| p.extension().is_some_and(|e| e == "drive"));
    v.sort();
    v
}

fn rules_fired(p: &Path) -> (Vec<String>, armature::FileResult) {
    let r = check_path(p, &Options::default(), &LibraryCache::default());
    let mut ids: Vec<String> = r.findings.iter().map(|f| f.rule.clone()).collect();
    ids.sort();
    ids.dedup();
    (ids, r)
}

#[test]
fn every_rule_has_documentation_with_the_fixed_headings() {
    for r in checks::registry() {
        for h in checks::DOC_HEADINGS {
            assert!(r.meta.docs.contains(h), "{} lacks `{h}`", r.meta.id);
        }
        assert!(!r.meta.summary.is_empty(), "{}", r.meta.id);
        assert!(
            !r.meta.summary.ends_with('.'),
            "{}: summary ends with a period",
            r.meta.id
        );
        assert!(
            r.meta.docs.contains("```"),
            "{}: no example snippet",
            r.meta.id
        );
    }
}

#[test]
fn every_rule_id_of_the_contract_is_registered() {
    let ids: Vec<&str> = checks::registry().iter().map(|r| r.meta.id).collect();
    for id in [
        "freewheel-missing",
        "freewheel-reversed",
        "freewheel-diode-underrated",
        "freewheel-diode-slow",
        "freewheel-via-supply",
        "clamp-overvoltage",
        "gate-floating",
        "gate-pulldown-strong",
        "gate-drive-low",
        "gate-overvoltage",
        "gate-stuck-on",
        "base-unlimited",
        "switch-overcurrent",
        "switch-overvoltage",
        "switch-overheat",
        "shoot-through",
        "dead-time-short",
        "part-not-in-library",
        "unknown-pin",
        "pin-not-listed",
        "net-touches-one-pin",
        "designator-reused",
        "shorted-part",
        "rail-short",
        "bulk-cap-missing",
    ] {
        assert!(ids.contains(&id), "{id} is not registered");
    }
}

#[test]
fn every_bad_fixture_fires_its_rule_and_every_good_one_does_not() {
    for r in checks::registry() {
        let id = r.meta.id;
        let files = fixtures(id);
        assert!(
            files.iter().any(|f| f.ends_with("bad.drive")),
            "{id}: no bad.drive"
        );
        assert!(
            files.iter().any(|f| f.ends_with("good.drive")),
            "{id}: no good.drive"
        );
        for f in files {
            let (fired, res) = rules_fired(&f);
            assert!(
                !res.input_error(),
                "{}: input error {:?}",
                f.display(),
                res.findings.iter().map(|x| &x.message).collect::<Vec<_>>()
            );
            let name = f.file_stem().and_then(|s| s.to_str()).unwrap_or("");
            if name == "good" || name.starts_with("ok-") || name == "pulldown-before-resistor" {
                assert!(
                    fired.is_empty(),
                    "{}: a clean fixture fired {fired:?}",
                    f.display()
                );
            } else {
                assert!(
                    fired.iter().any(|x| x == id),
                    "{}: expected {id}, got {fired:?}",
                    f.display()
                );
            }
        }
    }
}

#[test]
fn snapshots_of_every_faulty_fixture() {
    let r = Renderer::plain();
    for rule in checks::registry() {
        for f in fixtures(rule.meta.id) {
            let name = f
                .file_stem()
                .and_then(|s| s.to_str())
                .unwrap_or("x")
                .to_string();
            if name == "good" {
                continue;
            }
            let (_, res) = rules_fired(&f);
            let human: String = res
                .findings
                .iter()
                .map(|x| r.render(x))
                .collect::<Vec<_>>()
                .join("\n");
            let json = armature::report::json::document(
                &res.findings,
                1,
                res.suppressed,
                &res.settings.derating,
            );
            let key = format!("{}__{}", rule.meta.id, name);
            insta::assert_snapshot!(format!("{key}__human"), human);
            insta::assert_snapshot!(
                format!("{key}__json"),
                serde_json::to_string_pretty(&json).unwrap_or_default()
            );
        }
    }
}

#[test]
fn primary_label_is_on_the_offending_line() {
    // the freewheel-missing finding sits on the load's line, with the
    // switch as a related location
    let (_, res) = rules_fired(&fixture_dir("freewheel-missing").join("bad.drive"));
    let f = res.findings.iter().find(|f| f.rule == "freewheel-missing");
    let Some(f) = f else { panic!("no finding") };
    let line = f.file.line_text(f.file.line_index(f.span.start()));
    assert!(line.starts_with("motor M1"), "{line}");
    assert_eq!(f.parts, vec!["M1".to_string(), "Q1".to_string()]);
    assert_eq!(f.related.len(), 1);
    let rel = f
        .file
        .line_text(f.file.line_index(f.related[0].span.start()));
    assert!(rel.starts_with("nmos Q1"), "{rel}");
}

#[test]
fn docs_list_every_rule() {
    let text = std::fs::read_to_string("docs/rules.md").unwrap_or_default();
    for r in checks::registry() {
        assert!(
            text.contains(&format!("`{}`", r.meta.id)),
            "docs/rules.md lacks {}",
            r.meta.id
        );
    }
}

/// A message names at most six parts of a long path and counts the rest;
/// the related locations are capped the same way, and JSON's `parts`
/// still lists every one, once.
#[test]
fn long_part_lists_are_bounded_in_messages() {
    let (fired, res) = rules_fired(&fixture_dir("clamp-overvoltage").join("zener-chain.drive"));
    assert!(fired.iter().any(|x| x == "clamp-overvoltage"), "{fired:?}");
    let Some(f) = res.findings.iter().find(|f| f.rule == "clamp-overvoltage") else {
        panic!("no finding")
    };
    assert!(
        f.message
            .contains("`D2`, `Z0`, `Z1`, `Z2`, `Z3`, `Z4` and 5 more"),
        "{}",
        f.message
    );
    assert!(!f.message.contains("`Z5`"), "{}", f.message);
    assert!(f.related.len() <= 7, "{}", f.related.len());
    assert_eq!(f.parts.len(), 12, "{:?}", f.parts);
    let mut unique = f.parts.clone();
    unique.sort();
    unique.dedup();
    assert_eq!(unique.len(), f.parts.len());
}

/// On a gate net shared by several channels, a load's switch is the one
/// on its own current path, not every channel's switch that conducts.
#[test]
fn a_shared_gate_names_each_load_its_own_switch() {
    let (_, res) = rules_fired(&fixture_dir("freewheel-reversed").join("shared-gate.drive"));
    let Some(f) = res.findings.iter().find(|f| f.rule == "freewheel-reversed") else {
        panic!(
            "{:?}",
            res.findings.iter().map(|f| &f.message).collect::<Vec<_>>()
        )
    };
    assert!(f.message.contains("through `Q2`"), "{}", f.message);
    assert!(!f.message.contains("`Q0`"), "{}", f.message);
}
