//! The command line: exit codes, formats, commands.

use assert_cmd::Command;

fn armature() -> Command {
    match Command::cargo_bin("armature") {
        Ok(c) => c,
        Err(e) => panic!("{e}"),
    }
}

fn stdout(args: &[&str]) -> (i32, String, String) {
    let out = match armature().args(args).output() {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn clean_sample_exits_0() {
    for f in [
        "samples/vent_fan.drive",
        "samples/irrigation_valve.drive",
        "samples/window_actuator.drive",
        "samples/conveyor_driver.drive",
    ] {
        let (code, out, _) = stdout(&["check", f]);
        assert_eq!(code, 0, "{f}: {out}");
        assert!(out.contains("1 file checked: 0 errors"), "{out}");
    }
}

#[test]
fn faulty_sample_exits_1() {
    let (code, _, _) = stdout(&["check", "samples/alarm_relay_faulty.drive"]);
    assert_eq!(code, 1);
}

#[test]
fn warnings_fail_only_with_fail_on_warning() {
    let f = "tests/fixtures/rules/bulk-cap-missing/bad.drive";
    assert_eq!(stdout(&["check", f]).0, 0);
    assert_eq!(stdout(&["check", f, "--fail-on", "warning"]).0, 1);
}

#[test]
fn input_errors_exit_2() {
    let dir = tempdir();
    let bad = dir.join("bad.drive");
    let _ = std::fs::write(&bad, "rail VBAT 12V\nmotor M1 (+ VBAT\n");
    let (code, out, _) = stdout(&["check", bad.to_str().unwrap_or(""), "--format", "compact"]);
    assert_eq!(code, 2);
    assert!(out.contains(":2:"), "{out}");
    assert!(out.contains("error[parse-error]"), "{out}");
    let (code, out, _) = stdout(&["check", "no/such/file.drive", "--format", "json"]);
    assert_eq!(code, 2);
    assert!(out.contains("file-error"), "{out}");
    let nolib = dir.join("nolib.drive");
    let _ = std::fs::write(&nolib, "library \"missing.yaml\"\nground GND\n");
    let (code, out, _) = stdout(&["check", nolib.to_str().unwrap_or(""), "--format", "compact"]);
    assert_eq!(code, 2);
    assert!(
        out.contains("nolib.drive:1:9: error[library-error]"),
        "{out}"
    );
    let libdir = dir.join("libdir.drive");
    let _ = std::fs::create_dir_all(dir.join("adir.yaml"));
    let _ = std::fs::write(&libdir, "library \"adir.yaml\"\n");
    let root = dir.to_str().unwrap_or("");
    let (code, out, _) = stdout(&[
        "check",
        libdir.to_str().unwrap_or(""),
        "--format",
        "compact",
        "--root",
        root,
    ]);
    assert_eq!(code, 2);
    assert!(out.contains("is a folder"), "{out}");
}

#[test]
fn compact_format_is_file_line_col_severity_rule_message() {
    let (_, out, _) = stdout(&[
        "check",
        "samples/structure_faulty.drive",
        "--format",
        "compact",
    ]);
    let first = out.lines().next().unwrap_or("");
    assert_eq!(
        first,
        "samples/structure_faulty.drive:12:25: warning[net-touches-one-pin]: net `LIGHT_GATE` connects only to `R1`"
    );
}

#[test]
fn json_format_has_the_contract_fields() {
    let (code, out, _) = stdout(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--format",
        "json",
    ]);
    assert_eq!(code, 1);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    let f = &v["findings"][0];
    for k in [
        "rule", "severity", "file", "line", "column", "parts", "message", "help",
    ] {
        assert!(!f[k].is_null(), "missing {k} in {f}");
    }
    assert!(v["summary"]["errors"].as_u64().unwrap_or(0) > 0);
    assert_eq!(v["summary"]["files"], 1);
    assert_eq!(v["derating"]["voltage"], 0.8);
    assert_eq!(v["derating"]["gate_voltage"], 0.7);
}

#[test]
fn folders_are_checked_sorted() {
    let (_, out, _) = stdout(&["check", "samples", "--format", "compact"]);
    let files: Vec<&str> = out.lines().filter_map(|l| l.split(':').next()).collect();
    let mut sorted = files.clone();
    sorted.sort();
    assert_eq!(files, sorted);
    let (_, out, _) = stdout(&["check", "samples"]);
    assert!(out.contains("6 files checked"), "{out}");
}

#[test]
fn explain_and_rules() {
    let (code, out, _) = stdout(&["explain", "freewheel-missing"]);
    assert_eq!(code, 0);
    for h in [
        "What it checks",
        "Why it matters",
        "How it is computed",
        "Example",
        "Fix",
        "Caution",
    ] {
        assert!(out.contains(h), "{h}");
    }
    let (code, _, err) = stdout(&["explain", "no-such-rule"]);
    assert_eq!(code, 2);
    assert!(err.contains("freewheel-missing"), "{err}");
    let (code, out, _) = stdout(&["rules"]);
    assert_eq!(code, 0);
    assert!(out.lines().count() >= 25);
}

#[test]
fn facts_json_has_the_contract_shape() {
    let (code, out, _) = stdout(&["facts", "samples/vent_fan.drive", "--format", "json"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    assert_eq!(v["file"], "samples/vent_fan.drive");
    let q1 = &v["parts"]["Q1"];
    assert_eq!(q1["i_on"]["unit"], "A");
    assert_eq!(q1["v_peak"]["unit"], "V");
    // stall = 14.4 V / (8.5 Ω · 0.9 + R_on), with R_on the square-law
    // model's 1/(K·(V_GS − VTO)) at the gate's 5.25 V · 100k/(100k + 125 Ω),
    // K = 1/(0.12 Ω · (4.5 − 1.8) V): 1.86 A (the V_DS/2 term is 0.05 %)
    let r_on = 0.12 * 2.7 / (5.25 * 100e3 / 100.125e3 - 1.8);
    let want = 14.4 / (8.5 * 0.9 + r_on);
    let i = q1["i_on"]["value"].as_f64().unwrap_or(0.0);
    assert!((i - want).abs() / want < 1e-3, "{i} vs {want}");
    assert_eq!(q1["tj"]["unit"], "degC");
}

fn tempdir() -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!(
        "armature-cli-{}-{}",
        std::process::id(),
        rand_suffix()
    ));
    let _ = std::fs::create_dir_all(&d);
    d
}

fn rand_suffix() -> u128 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0)
}

#[test]
fn every_fact_in_json_is_a_value_with_a_unit() {
    for f in [
        "samples/window_actuator.drive",
        "samples/alarm_relay_faulty.drive",
    ] {
        let (code, out, _) = stdout(&["facts", f, "--format", "json"]);
        assert_eq!(code, 0);
        let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
        let parts = v["parts"].as_object().cloned().unwrap_or_default();
        assert!(!parts.is_empty());
        for (r, facts) in parts {
            for (name, fact) in facts.as_object().cloned().unwrap_or_default() {
                assert!(
                    fact["value"].as_f64().is_some_and(f64::is_finite),
                    "{f} {r}.{name}: {fact}"
                );
                assert!(fact["unit"].is_string(), "{f} {r}.{name}: {fact}");
            }
        }
        // facts that cannot be computed are absent, with a reason
        assert!(v["missing"].is_object());
    }
}

#[test]
fn renamed_rule_ids_point_to_the_new_name() {
    for (old, new) in armature::checks::RENAMED {
        let (code, out, err) = stdout(&["explain", old]);
        assert_eq!(code, 0, "{old}: {err}");
        assert!(
            out.starts_with(&format!("`{old}` is now `{new}`.")),
            "{out}"
        );
        assert!(out.contains(&format!("{new} (")), "{out}");
        assert!(armature::checks::find(old).is_none());
        assert!(armature::checks::find(new).is_some());
    }
}

/// The help of the program and of every command, as users see it: each
/// command has its own description, none is shifted onto its neighbour.
#[test]
fn help_of_every_command() {
    for args in [
        &["--help"][..],
        &["check", "--help"][..],
        &["report", "--help"][..],
        &["lsp", "--help"][..],
        &["explain", "--help"][..],
        &["rules", "--help"][..],
        &["facts", "--help"][..],
        &["export", "--help"][..],
        &["export", "spice", "--help"][..],
        &["import", "--help"][..],
        &["import", "spice", "--help"][..],
    ] {
        let (code, out, err) = stdout(args);
        assert_eq!(code, 0, "{args:?}: {err}");
        let name = format!("help_{}", args[..args.len() - 1].join("_"));
        insta::assert_snapshot!(
            if name == "help_" {
                "help".to_string()
            } else {
                name
            },
            out
        );
    }
    let (_, out, _) = stdout(&["--help"]);
    for (cmd, words) in [
        ("facts", "computed quantities"),
        ("export", "simulator testbench"),
        ("check", "Check netlists"),
    ] {
        let line = out
            .lines()
            .find(|l| l.trim_start().starts_with(cmd))
            .unwrap_or("");
        assert!(line.contains(words), "{cmd}: {line:?}");
    }
}

#[test]
fn facts_on_a_folder_covers_every_netlist() {
    let (code, out, err) = stdout(&["facts", "samples", "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    let files: Vec<&str> = v
        .as_array()
        .map(|a| a.iter().filter_map(|d| d["file"].as_str()).collect())
        .unwrap_or_default();
    let mut want: Vec<String> = std::fs::read_dir("samples")
        .map(|rd| {
            rd.flatten()
                .map(|e| e.path())
                .filter(|p| p.extension().is_some_and(|x| x == "drive"))
                .map(|p| p.to_string_lossy().replace('\\', "/"))
                .collect()
        })
        .unwrap_or_default();
    want.sort();
    assert_eq!(files, want);
    let (code, out, _) = stdout(&["facts", "samples"]);
    assert_eq!(code, 0);
    assert_eq!(out.matches("(ambient ").count(), want.len(), "{out}");
    // a netlist that cannot be built: located errors, exit 2
    let dir = std::env::temp_dir().join(format!("armature-facts-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(
        dir.join("a.drive"),
        "rail V 5V\nground GND\nresistr R1 (V, GND) 1k\n",
    );
    let d = dir.to_string_lossy().into_owned();
    let (code, _, err) = stdout(&["facts", &d, "--allow-outside-root"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("a.drive:3:1"), "{err}");
    // an empty folder: nothing to show is an error
    let empty = dir.join("empty");
    let _ = std::fs::create_dir_all(&empty);
    let (code, _, err) = stdout(&["facts", &empty.to_string_lossy(), "--allow-outside-root"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("no netlist"), "{err}");
}

/// `explain` knows every id that any output carries (rules, input errors,
/// notes), every part kind, and suggests for the rest.
#[test]
fn explain_knows_every_id_in_any_output() {
    let mut ids: std::collections::BTreeSet<String> = std::collections::BTreeSet::new();
    let mut stack = vec![std::path::PathBuf::from("tests/fixtures"), "samples".into()];
    let mut files = Vec::new();
    while let Some(p) = stack.pop() {
        for e in std::fs::read_dir(&p).into_iter().flatten().flatten() {
            let q = e.path();
            if q.is_dir() {
                stack.push(q);
            } else if q.extension().is_some_and(|x| x == "drive") {
                files.push(q.to_string_lossy().into_owned());
            }
        }
    }
    assert!(files.len() > 50, "{}", files.len());
    for f in &files {
        let (_, out, _) = stdout(&["check", f, "--format", "json", "--no-config"]);
        let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
        for x in v["findings"].as_array().into_iter().flatten() {
            if let Some(r) = x["rule"].as_str() {
                ids.insert(r.to_string());
            }
        }
    }
    // input errors, from inputs made for the purpose
    let dir = std::env::temp_dir().join(format!("armature-explain-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let bad = [
        "rail V 5V\nground GND\nresistor R1 (V GND 1k\n",
        "rail V 5V\nground GND\nresistor R1 (V, GND) 1k tol=1% tol=2%\n",
        "rail V 5V\nground GND\nresistor R1 (V, GND) 1k colour=red\n",
        "rail V 5V\nground GND\nresistr R1 (V, GND) 1k\n",
        "rail V 5V\nresistor R1 (V, V2) 1k\n",
        "rail V 5V\nground GND\nresistor R1 (V, GND) 5V\n",
        "rail V 5V\nground GND\ndrive U9.PA0 static\n",
        "",
        "library \"nowhere.yaml\"\nground GND\n",
    ];
    for (i, text) in bad.iter().enumerate() {
        let f = dir.join(format!("b{i}.drive"));
        let _ = std::fs::write(&f, text);
        let (_, out, _) = stdout(&[
            "check",
            &f.to_string_lossy(),
            "--format",
            "json",
            "--no-config",
            "--allow-outside-root",
        ]);
        let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
        for x in v["findings"].as_array().into_iter().flatten() {
            if let Some(r) = x["rule"].as_str() {
                ids.insert(r.to_string());
            }
        }
    }
    for id in [
        "parse-error",
        "suppression-unused",
        "duplicate-key",
        "unknown-key",
        "unknown-kind",
        "ground-missing",
        "invalid-value",
        "unknown-ref",
        "file-error",
    ] {
        assert!(ids.contains(id), "no fixture shows {id}: {ids:?}");
    }
    for k in armature::model::kinds::Kind::ALL {
        ids.insert(k.name().to_string());
    }
    for id in &ids {
        let (code, out, err) = stdout(&["explain", id]);
        assert_eq!(code, 0, "explain {id}: {err}");
        assert!(out.len() > 40, "explain {id}: {out}");
    }
    let (code, _, err) = stdout(&["explain", "freewheel"]);
    assert_eq!(code, 2);
    assert!(err.contains("`freewheel-missing`"), "{err}");
    let (_, out, _) = stdout(&["explain", "nmos"]);
    assert!(out.contains("| `vgs_th` | voltage | V |"), "{out}");
}

/// A configuration's quantities are held to decimal numbers like a
/// library's: YAML would read `0x28` as 40.
#[test]
fn configuration_quantities_are_decimal() {
    let dir = std::env::temp_dir().join(format!("armature-cfgdec-{}", std::process::id()));
    let _ = std::fs::create_dir_all(dir.join(".git"));
    let _ = std::fs::write(
        dir.join("armature.yaml"),
        "ambient: 0x28\nderating:\n  voltage: 0x1\n  current: 0.8\n",
    );
    let _ = std::fs::write(
        dir.join("a.drive"),
        "rail V 5V\nground GND\nresistor R1 (V, GND) 10k\n",
    );
    let out = match armature()
        .args(["check", "a.drive", "--format", "compact"])
        .current_dir(&dir)
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(2), "{text}");
    assert!(
        text.contains(
            "armature.yaml:1:10: error[config-error]: `ambient`: write the number in decimal"
        ),
        "{text}"
    );
    assert!(
        text.contains(
            "armature.yaml:3:12: error[config-error]: `voltage`: write the number in decimal"
        ),
        "{text}"
    );
    assert!(!text.contains(":4:"), "a decimal value is fine: {text}");
}

#[test]
fn compact_help_follows_each_finding_as_a_note_line() {
    let (_, compact, _) = stdout(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--format",
        "compact",
    ]);
    let (_, json, _) = stdout(&[
        "check",
        "samples/alarm_relay_faulty.drive",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap_or_default();
    let findings = v["findings"].as_array().cloned().unwrap_or_default();
    assert!(findings.len() >= 5);
    let lines: Vec<&str> = compact.lines().collect();
    let mut i = 0;
    for f in &findings {
        let head = format!(
            "{}:{}:{}: ",
            f["file"].as_str().unwrap_or(""),
            f["line"],
            f["column"]
        );
        let rule = f["rule"].as_str().unwrap_or("");
        let sev = f["severity"].as_str().unwrap_or("");
        let msg = f["message"].as_str().unwrap_or("");
        assert_eq!(
            lines.get(i).copied().unwrap_or(""),
            format!("{head}{sev}[{rule}]: {msg}")
        );
        i += 1;
        if let Some(help) = f["help"].as_str() {
            let one: Vec<&str> = help.split_whitespace().collect();
            assert_eq!(
                lines.get(i).copied().unwrap_or(""),
                format!("{head}note[{rule}]: {}", one.join(" "))
            );
            i += 1;
        }
    }
    assert_eq!(i, lines.len(), "no other lines");
}

#[path = "../benches/gen.rs"]
#[allow(dead_code)] // the benches use the rest of the generator
mod generator;

/// Run `armature ARGS` under a pseudo-terminal (util-linux `script`), as a
/// user at a terminal would; what the terminal showed, or None without
/// `script` (a failure under `CI`).
fn on_a_terminal(args: &str, dir: &std::path::Path) -> Option<String> {
    let exe = env!("CARGO_BIN_EXE_armature");
    let log = dir.join("typescript");
    let out = std::process::Command::new("script")
        .arg("-qec")
        .arg(format!("{exe} {args} > /dev/null"))
        .arg(&log)
        .current_dir(dir)
        .env("ARMATURE_PROGRESS_DELAY_MS", "0")
        .output();
    match out {
        Ok(_) => std::fs::read(&log)
            .ok()
            .map(|b| String::from_utf8_lossy(&b).into_owned()),
        Err(e) => {
            assert!(
                std::env::var_os("CI").is_none(),
                "`script` (util-linux) is needed under CI: {e}"
            );
            eprintln!("skipped: no `script` to give the check a terminal");
            None
        }
    }
}

#[test]
fn progress_bar_on_a_terminal_only_and_never_in_machine_formats() {
    let dir = tempdir();
    let _ = std::fs::write(dir.join("gen-parts.yaml"), generator::LIBRARY);
    let _ = std::fs::write(
        dir.join("board.drive"),
        generator::netlist(300, "gen-parts.yaml"),
    );
    let Some(human) = on_a_terminal("check board.drive --max-findings 1", &dir) else {
        return;
    };
    assert!(
        human.contains("stages") && human.contains("board.drive"),
        "no bar on a terminal: {human}"
    );
    let Some(json) = on_a_terminal("check board.drive --format json", &dir) else {
        return;
    };
    assert!(!json.contains("stages"), "a bar in JSON output: {json}");
    // piped: nothing but the findings
    let o = armature()
        .current_dir(&dir)
        .env("ARMATURE_PROGRESS_DELAY_MS", "0")
        .args(["check", "board.drive", "--max-findings", "1"])
        .output();
    let err = o.map(|o| String::from_utf8_lossy(&o.stderr).into_owned());
    assert!(err.is_ok_and(|e| !e.contains("stages")));
    let _ = std::fs::remove_dir_all(&dir);
}
