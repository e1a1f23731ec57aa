//! Machine output: SARIF validated against the OASIS schema, stable
//! fingerprints, snapshots of every format, determinism, a pre-commit
//! style run.

use assert_cmd::Command;
use std::path::Path;

fn run_env(args: &[&str], env: &[(&str, &str)], dir: Option<&Path>) -> (i32, String) {
    let mut c = match Command::cargo_bin("armature") {
        Ok(c) => c,
        Err(e) => panic!("{e}"),
    };
    c.args(args);
    for (k, v) in env {
        c.env(k, v);
    }
    if let Some(d) = dir {
        c.current_dir(d);
    }
    let out = match c.output() {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
    )
}

fn run(args: &[&str]) -> (i32, String) {
    run_env(args, &[], None)
}

fn schema() -> serde_json::Value {
    // vendored: the tests need nothing beside the repository
    let candidates = ["tests/schemas/sarif-schema-2.1.0.json"];
    for c in candidates {
        if let Ok(t) = std::fs::read_to_string(c) {
            // The schema's `language` pattern has a stray `]`, which an
            // ECMA-262 engine reads as a literal and Rust's regex engines
            // reject; escaping it keeps its meaning.
            let t = t.replace("-[a-zA-Z]{2}]?$", "-[a-zA-Z]{2}\\\\]?$");
            if let Ok(mut v) = serde_json::from_str::<serde_json::Value>(&t) {
                // This copy of the schema keeps the log's own shape under
                // `definitions/Root` with nothing at the top that points to
                // it, so as it stands it accepts any document. Validate
                // against the root definition explicitly.
                if v.get("$ref").is_none() && v["definitions"].get("Root").is_some() {
                    v["$ref"] = serde_json::Value::String("#/definitions/Root".into());
                }
                return v;
            }
        }
    }
    panic!("the SARIF 2.1.0 schema is not at tests/schemas/");
}

#[test]
fn sarif_validates_against_the_schema() {
    let validator = match jsonschema::options()
        .with_pattern_options(jsonschema::PatternOptions::regex())
        .build(&schema())
    {
        Ok(v) => v,
        Err(e) => panic!("{e}"),
    };
    // the validator does reject a broken log
    let broken =
        serde_json::json!({"runs": [{"tool": {"driver": {}}, "results": [{"level": "fatal"}]}]});
    assert!(validator.iter_errors(&broken).count() > 0);
    for args in [
        vec!["check", "samples", "--format", "sarif"],
        vec![
            "check",
            "tests/fixtures/team/circuit.drive",
            "--rules",
            "tests/fixtures/team/rules.yaml",
            "--format",
            "sarif",
        ],
        vec![
            "check",
            "tests/fixtures/team/bad_rules.yaml",
            "--format",
            "sarif",
        ],
    ] {
        let (_, out) = run(&args);
        let v: serde_json::Value = match serde_json::from_str(&out) {
            Ok(v) => v,
            Err(e) => panic!("{e}: {out}"),
        };
        let errors: Vec<String> = validator
            .iter_errors(&v)
            .map(|e| format!("{e} at {}", e.instance_path()))
            .collect();
        assert!(errors.is_empty(), "{args:?}: {errors:?}");
        let run0 = &v["runs"][0];
        assert_eq!(run0["tool"]["driver"]["name"], "armature");
        assert_eq!(run0["columnKind"], "unicodeCodePoints");
    }
    let (_, out) = run(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--format",
        "sarif",
    ]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    let rules = v["runs"][0]["tool"]["driver"]["rules"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    assert!(rules.len() >= 25);
    assert!(rules.iter().all(|r| r["help"]["markdown"].is_string() && r["shortDescription"]["text"].is_string()));
    let r0 = &v["runs"][0]["results"][0];
    assert_eq!(
        r0["locations"][0]["physicalLocation"]["artifactLocation"]["uri"],
        "samples/alarm_relay_faulty.drive"
    );
    assert!(r0["partialFingerprints"]["armature/v1"].is_string());
}

#[test]
fn fingerprints_survive_lines_moving() {
    let dir = std::env::temp_dir().join(format!("armature-fp-{}", std::process::id()));
    let _ = std::fs::create_dir_all(dir.join("parts"));
    let lib = std::fs::read_to_string("samples/parts/greenhouse.yaml").unwrap_or_default();
    let _ = std::fs::write(dir.join("parts/greenhouse.yaml"), lib);
    let src = std::fs::read_to_string("samples/alarm_relay_faulty.drive").unwrap_or_default();
    let _ = std::fs::write(dir.join("a.drive"), &src);
    let shifted = format!("# a new comment\n# and another\n\n{src}");
    let _ = std::fs::write(dir.join("b.drive"), &shifted);
    let fps = |name: &str| -> Vec<(String, String, u64)> {
        let (_, out) = run_env(&["check", name, "--format", "sarif"], &[], Some(&dir));
        let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
        v["runs"][0]["results"]
            .as_array()
            .map(|a| {
                a.iter()
                    .map(|r| {
                        (
                            r["ruleId"].as_str().unwrap_or("").to_string(),
                            r["partialFingerprints"]["armature/v1"]
                                .as_str()
                                .unwrap_or("")
                                .to_string(),
                            r["locations"][0]["physicalLocation"]["region"]["startLine"]
                                .as_u64()
                                .unwrap_or(0),
                        )
                    })
                    .collect()
            })
            .unwrap_or_default()
    };
    // same file name, so write the shifted text over it
    let before = fps("a.drive");
    let _ = std::fs::write(dir.join("a.drive"), &shifted);
    let after = fps("a.drive");
    assert!(!before.is_empty());
    assert_eq!(before.len(), after.len());
    for (b, a) in before.iter().zip(after.iter()) {
        assert_eq!(b.0, a.0);
        assert_eq!(b.1, a.1, "fingerprint of {} changed", b.0);
        assert_eq!(b.2 + 3, a.2);
    }
}

#[test]
fn snapshots_of_compact_json_and_sarif() {
    let (_, compact) = run(&["check", "samples", "--format", "compact"]);
    insta::assert_snapshot!("samples_compact", compact);
    let (_, json) = run(&["check", "samples", "--format", "json"]);
    insta::assert_snapshot!("samples_json", json);
    let (_, sarif) = run(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--format",
        "sarif",
    ]);
    let mut v: serde_json::Value = serde_json::from_str(&sarif).unwrap_or_default();
    // the absolute root differs between machines
    v["runs"][0]["originalUriBaseIds"]["%SRCROOT%"]["uri"] =
        serde_json::Value::String("file:///ROOT/".into());
    v["runs"][0]["tool"]["driver"]["rules"] = serde_json::Value::String("(rules elided)".into());
    insta::assert_snapshot!(
        "alarm_sarif",
        serde_json::to_string_pretty(&v).unwrap_or_default()
    );
}

#[test]
fn output_is_identical_across_runs_and_thread_counts() {
    let mut outs = Vec::new();
    for threads in ["1", "2", "2"] {
        for fmt in ["json", "compact", "sarif", "human"] {
            let (_, out) = run_env(
                &[
                    "check",
                    "samples",
                    "tests/fixtures/rules",
                    "--format",
                    fmt,
                    "--color",
                    "never",
                ],
                &[("RAYON_NUM_THREADS", threads)],
                None,
            );
            outs.push((fmt, out));
        }
    }
    for i in 4..outs.len() {
        assert_eq!(outs[i].1, outs[i % 4].1, "{} differs", outs[i].0);
    }
}

#[path = "../benches/gen.rs"]
#[allow(dead_code)] // the bench uses the rest of the generator
mod generator;

#[test]
fn a_large_board_gives_the_same_output_on_one_and_two_threads() {
    // Big enough that parsing and the group analysis split across threads
    // (both work in chunks of at least 1,024 lines / 64 groups).
    let dir = std::env::temp_dir().join(format!("armature-det-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(dir.join("gen-parts.yaml"), generator::LIBRARY);
    let board = dir.join("board.drive");
    let _ = std::fs::write(&board, generator::netlist(1200, "gen-parts.yaml"));
    let path = board.to_string_lossy().into_owned();
    let root = dir.to_string_lossy().into_owned();
    let mut outs = Vec::new();
    for threads in ["1", "2", "2"] {
        for args in [
            vec![
                "check",
                path.as_str(),
                "--format",
                "json",
                "--root",
                root.as_str(),
            ],
            vec![
                "facts",
                path.as_str(),
                "--format",
                "json",
                "--root",
                root.as_str(),
            ],
        ] {
            let (_, out) = run_env(&args, &[("RAYON_NUM_THREADS", threads)], None);
            outs.push(out);
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
    assert!(
        outs[0].contains("\"findings\""),
        "{}",
        &outs[0][..outs[0].len().min(300)]
    );
    assert!(outs[1].len() > 50_000, "facts of 1,200 channels");
    for i in 2..outs.len() {
        assert!(outs[i] == outs[i % 2], "run {i} differs");
    }
}

#[test]
fn colour_only_when_asked_or_on_a_terminal() {
    let (_, plain) = run(&["check", "samples/alarm_relay_faulty.drive"]);
    assert!(!plain.contains('\u{1b}'));
    let (_, coloured) = run(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--color",
        "always",
    ]);
    assert!(coloured.contains('\u{1b}'));
    let (_, capped) = run(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--max-findings",
        "2",
        "--color",
        "never",
    ]);
    assert!(capped.contains("more findings not shown"), "{capped}");
}

#[test]
fn pre_commit_style_run_on_a_git_repo() {
    if std::process::Command::new("git")
        .arg("--version")
        .output()
        .is_err()
    {
        if std::env::var_os("CI").is_some() {
            panic!("git is required when CI is set");
        }
        return;
    }
    let dir = std::env::temp_dir().join(format!("armature-git-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let _ = std::fs::create_dir_all(dir.join("parts"));
    let git = |args: &[&str]| {
        let _ = std::process::Command::new("git")
            .args(args)
            .current_dir(&dir)
            .output();
    };
    git(&["init", "-q"]);
    git(&["config", "user.email", "dev@example.invalid"]);
    git(&["config", "user.name", "dev"]);
    let _ = std::fs::copy(
        "samples/parts/greenhouse.yaml",
        dir.join("parts/greenhouse.yaml"),
    );
    let _ = std::fs::copy("samples/vent_fan.drive", dir.join("fan.drive"));
    git(&["add", "."]);
    // what the hook runs: armature on the staged .drive files
    let staged = || -> Vec<String> {
        let out = std::process::Command::new("git")
            .args(["diff", "--cached", "--name-only", "--diff-filter=ACM"])
            .current_dir(&dir)
            .output();
        out.map(|o| {
            String::from_utf8_lossy(&o.stdout)
                .lines()
                .filter(|l| l.ends_with(".drive"))
                .map(String::from)
                .collect()
        })
        .unwrap_or_default()
    };
    let files = staged();
    assert_eq!(files, vec!["fan.drive".to_string()]);
    let mut args = vec!["check", "--format", "compact"];
    args.extend(files.iter().map(|s| s.as_str()));
    assert_eq!(run_env(&args, &[], Some(&dir)).0, 0);
    git(&["commit", "-qm", "clean"]);
    let faulty = std::fs::read_to_string("samples/alarm_relay_faulty.drive").unwrap_or_default();
    let _ = std::fs::write(dir.join("relay.drive"), faulty);
    git(&["add", "relay.drive"]);
    let files = staged();
    let mut args = vec!["check", "--format", "compact"];
    args.extend(files.iter().map(|s| s.as_str()));
    let (code, out) = run_env(&args, &[], Some(&dir));
    assert_eq!(code, 1, "{out}");
    assert!(out.starts_with("relay.drive:"), "{out}");
}
