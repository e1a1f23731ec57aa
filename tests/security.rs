//! Untrusted input: a netlist from a pull request must not make the tool
//! read outside the project, leak what it reads, hang, or pass silently.
//! Each case builds its hostile input in a scratch project.

use std::path::{Path, PathBuf};
use std::process::Command;

fn armature() -> Command {
    Command::new(env!("CARGO_BIN_EXE_armature"))
}

fn run(dir: &Path, args: &[&str]) -> (i32, String, String) {
    let out = match armature().args(args).current_dir(dir).output() {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A scratch project (with `.git`) inside a scratch parent.
fn project(tag: &str) -> (PathBuf, PathBuf) {
    let parent = std::env::temp_dir().join(format!("armature-sec-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&parent);
    let proj = parent.join("proj");
    let _ = std::fs::create_dir_all(proj.join(".git"));
    (parent, proj)
}

fn write(p: &Path, text: &str) {
    if let Some(d) = p.parent() {
        let _ = std::fs::create_dir_all(d);
    }
    if let Err(e) = std::fs::write(p, text) {
        panic!("{e}");
    }
}

const SECRET: &str = "API_TOKEN: s3cr3t-value-123\n";

#[test]
fn libraries_outside_the_project_are_not_read_or_quoted() {
    let (parent, proj) = project("outside");
    write(&parent.join("secret.yaml"), SECRET);
    for lib in [
        parent.join("secret.yaml").to_string_lossy().into_owned(),
        "../secret.yaml".to_string(),
        "link.yaml".to_string(),
    ] {
        #[cfg(unix)]
        let _ = std::os::unix::fs::symlink(parent.join("secret.yaml"), proj.join("link.yaml"));
        write(
            &proj.join("a.drive"),
            &format!("library \"{lib}\"\nrail V 5V\nground GND\n"),
        );
        let (code, out, err) = run(&proj, &["check", "a.drive", "--format", "compact"]);
        assert_eq!(code, 2, "{lib}: {out}");
        assert!(out.contains("outside the project root"), "{lib}: {out}");
        assert!(
            !out.contains("s3cr3t") && !err.contains("s3cr3t"),
            "{lib} leaked: {out}"
        );
    }
    // the operator may trust it explicitly
    write(
        &proj.join("a.drive"),
        "library \"../secret.yaml\"\nrail V 5V\nground GND\n",
    );
    let (_, out, _) = run(
        &proj,
        &[
            "check",
            "a.drive",
            "--allow-outside-root",
            "--format",
            "compact",
        ],
    );
    assert!(!out.contains("outside the project root"), "{out}");
    // and even then a file that is not a library is not quoted
    assert!(!out.contains("s3cr3t"), "{out}");
    assert!(out.contains("is not a parts library"), "{out}");
}

#[test]
fn a_file_in_the_project_that_is_not_a_library_is_not_quoted() {
    let (_, proj) = project("notlib");
    write(&proj.join("env.txt"), "SECRET=abc123\nOTHER=xyz\n");
    write(&proj.join("creds.yaml"), SECRET);
    for lib in ["env.txt", "creds.yaml"] {
        write(
            &proj.join("a.drive"),
            &format!("library \"{lib}\"\nrail V 5V\nground GND\n"),
        );
        let (code, out, _) = run(&proj, &["check", "a.drive"]);
        assert_eq!(code, 2, "{out}");
        assert!(
            !out.contains("abc123") && !out.contains("s3cr3t"),
            "{lib}: {out}"
        );
    }
}

#[test]
fn configuration_stops_at_the_project_root_and_is_named() {
    let (parent, proj) = project("config");
    // above the repository: must not turn rules off
    write(
        &parent.join("armature.yaml"),
        "severity:\n  bulk-cap-missing: off\n",
    );
    write(
        &proj.join("a.drive"),
        "rail V 12V\nground GND\nsolenoid L1 (+: V, -: SW) r=24ohm l=10mH\nrail V5 5V\nmcu U1 (PA0: C, VDD: V5, VSS: GND) io_v=5V\nresistor R1 (C, G) 100\nresistor R2 (G, GND) 10k\nnmos Q1 (d: SW, g: G, s: GND) vds_max=60V id_max=3A rds_on=0.1ohm rds_on_vgs=4.5V vgs_th=2V\ndiode D1 (a: SW, k: V) vf=0.7V\n",
    );
    let (_, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert!(
        out.contains("bulk-cap-missing"),
        "a config above the root was used: {out}"
    );
    let (_, out, _) = run(&proj, &["check", "a.drive"]);
    assert!(out.contains("configuration: none (defaults)"), "{out}");
    // one inside is used, and named in every format
    write(
        &proj.join("armature.yaml"),
        "severity:\n  bulk-cap-missing: off\n",
    );
    let (_, out, _) = run(&proj, &["check", "a.drive"]);
    assert!(out.contains("configuration: armature.yaml"), "{out}");
    assert!(!out.contains("bulk-cap-missing"), "{out}");
    let (_, out, _) = run(&proj, &["check", "a.drive", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    assert_eq!(v["config"][0], "armature.yaml", "{out}");
    let (_, out, _) = run(&proj, &["check", "a.drive", "--format", "sarif"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    assert_eq!(
        v["runs"][0]["properties"]["configuration"][0],
        "armature.yaml"
    );
    // --no-config: the defaults
    let (_, out, _) = run(
        &proj,
        &["check", "a.drive", "--no-config", "--format", "compact"],
    );
    assert!(out.contains("bulk-cap-missing"), "{out}");
    // a config naming a rule file outside the root: a located error
    write(&parent.join("team.yaml"), "rules: []\n");
    write(&proj.join("armature.yaml"), "rules: [../team.yaml]\n");
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert_eq!(code, 2, "{out}");
    assert!(
        out.contains("armature.yaml:1:") && out.contains("outside the project root"),
        "{out}"
    );
    // the other commands honour the same configuration errors
    for args in [
        &["facts", "a.drive"][..],
        &["facts", "a.drive", "--format", "json"][..],
        &["export", "spice", "a.drive"][..],
    ] {
        let (code, out, err) = run(&proj, args);
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert!(err.contains("outside the project root"), "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?}: {out}");
    }
    write(
        &proj.join("armature.yaml"),
        "severity:\n  no-such-rule: off\n",
    );
    let (code, _, err) = run(&proj, &["facts", "a.drive"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("armature.yaml:2:"), "{err}");
}

#[test]
fn devices_pipes_and_aliases_are_refused() {
    let (_, proj) = project("devices");
    let (code, out, _) = run(&proj, &["check", "/dev/zero"]);
    assert_eq!(code, 2);
    assert!(out.contains("not a regular file"), "{out}");
    #[cfg(unix)]
    {
        let fifo = proj.join("pipe.drive");
        let ok = Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .is_ok_and(|s| s.success());
        if ok {
            let (code, out, _) = run(&proj, &["check", "pipe.drive"]);
            assert_eq!(code, 2);
            assert!(out.contains("not a regular file"), "{out}");
        }
    }
    // a billion laughs in 1 KB: refused before it is expanded
    let mut y = String::from("a: &a [x, x, x, x, x, x, x, x]\n");
    for i in 0..8 {
        y.push_str(&format!("b{i}: &b{i} [*a, *a, *a, *a, *a, *a, *a, *a]\n"));
    }
    write(&proj.join("bomb.yaml"), &format!("parts: {{}}\n{y}"));
    write(
        &proj.join("a.drive"),
        "library \"bomb.yaml\"\nrail V 5V\nground GND\n",
    );
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert_eq!(code, 2, "{out}");
    assert!(
        out.contains("anchors and aliases are not accepted"),
        "{out}"
    );
}

#[test]
fn old_mac_line_endings_read_as_lines() {
    let (_, proj) = project("cr");
    write(
        &proj.join("a.drive"),
        "rail V 12V\rground GND\rresistor R1 (V, X) 10\r",
    );
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    // three statements: R1's net X touches one pin
    assert_eq!(code, 0, "{out}");
    assert!(out.contains("net-touches-one-pin"), "{out}");
}

#[test]
fn nothing_checked_is_not_a_pass() {
    let (_, proj) = project("empty");
    let _ = std::fs::create_dir_all(proj.join("empty"));
    let (code, out, _) = run(&proj, &["check", "empty"]);
    assert_eq!(code, 2, "{out}");
    assert!(out.contains("no netlist"), "{out}");
    write(&proj.join("e.drive"), "# only a comment\n\n");
    let (code, out, _) = run(&proj, &["check", "e.drive"]);
    assert_eq!(code, 2, "{out}");
    assert!(out.contains("holds no statements"), "{out}");
    // extensions in any case
    write(
        &proj.join("up/BOARD.DRIVE"),
        "rail V 5V\nground GND\nresistor R1 (V, GND) 1k p_max=1W\n",
    );
    let (code, out, _) = run(&proj, &["check", "up", "--format", "compact"]);
    assert_eq!(code, 0, "{out}");
    // a folder that contains itself through a symlink: the walk ends
    #[cfg(unix)]
    {
        let _ = std::os::unix::fs::symlink(proj.join("up"), proj.join("up/loop"));
        let (code, _, _) = run(&proj, &["check", "up"]);
        assert_eq!(code, 0);
    }
}

#[test]
fn shown_paths_keep_a_leading_parent() {
    assert_eq!(
        armature::shown_path(Path::new("../../a/b.drive")),
        "../../a/b.drive"
    );
    assert_eq!(
        armature::shown_path(Path::new("x/../../b.drive")),
        "../b.drive"
    );
}

/// Boards that used to pass clean although nothing on them can work.
#[test]
fn boards_that_cannot_work_do_not_pass() {
    let (_, proj) = project("silent");
    write(
        &proj.join("parts.yaml"),
        include_str!("fixtures/parts.yaml"),
    );
    let body = "mcu U1 (PA3: PWM, VDD: V5, VSS: GND) part=DEMO-MCU-5V\n\
                resistor R2 (PWM, GND) 100k\n\
                nmos Q1 (d: SW, g: PWM, s: GND) part=DEMO-N60-3A\n\
                motor M1 (+: V12, -: SW) part=DEMO-FAN-12V\n\
                diode D1 (a: SW, k: V12) part=DEMO-SK40-3A\n\
                capacitor C1 (V12, GND) 100uF v_max=25V\n\
                capacitor C2 (V5, GND) 10uF v_max=16V\n";
    let clean = format!("library \"parts.yaml\"\nrail V12 12V\nrail V5 5V\nground GND\n{body}");
    write(&proj.join("a.drive"), &clean);
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert_eq!(code, 0, "the reference board is clean: {out}");
    // no ground at all: an input error, not a pass
    write(&proj.join("a.drive"), &clean.replace("ground GND\n", ""));
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert_eq!(code, 2, "{out}");
    assert!(out.contains("error[ground-missing]"), "{out}");
    // the rail misspelt in its statement
    write(
        &proj.join("a.drive"),
        &clean.replace("rail V12 ", "rail V12V "),
    );
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("warning[rail-unused]"), "{out}");
    assert!(out.contains("error[load-unpowered]"), "{out}");
    // a 10 ohm pull-down: the pin sags below the threshold, the fan is dead
    write(
        &proj.join("a.drive"),
        &clean.replace("(PWM, GND) 100k", "(PWM, GND) 10"),
    );
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("error[gate-pulldown-strong]") && out.contains("never turns on"),
        "{out}"
    );
    // 220 ohm: 5 V / (220 + 25) ohm = 20.4 mA, just over the 20 mA
    // rating, but the gate still reaches 4.5 V: a warning
    write(
        &proj.join("a.drive"),
        &clean.replace("(PWM, GND) 100k", "(PWM, GND) 220"),
    );
    let (code, out, _) = run(&proj, &["check", "a.drive", "--format", "compact"]);
    assert!(
        out.contains("warning[gate-pulldown-strong]"),
        "{code} {out}"
    );
}

#[test]
fn control_characters_never_reach_the_terminal() {
    let (_, proj) = project("escape");
    write(
        &proj.join("parts.yaml"),
        include_str!("fixtures/parts.yaml"),
    );
    // a team rule whose message tries to clear the screen and print a pass
    write(
        &proj.join("house.yaml"),
        "rules:\n  - id: team/loud\n    severity: error\n    kinds: [resistor]\n    \
         require: \"false\"\n    message: \"\\e[2J\\e[HALL CHECKS PASSED {ref}\"\n",
    );
    // a comment on the quoted line carries an escape and a direction override
    let body = "library \"parts.yaml\"\nrail V5 5V\nground GND\n\
                resistor R1 (V5, GND) 1k # \u{1b}]0;owned\u{7} \u{202e}txet\n";
    let name = "b\u{1b}[31m.drive";
    write(&proj.join(name), body);
    for format in ["human", "compact"] {
        let (code, out, err) = run(
            &proj,
            &[
                "check",
                name,
                "--rules",
                "house.yaml",
                "--format",
                format,
                "--color",
                "never",
            ],
        );
        assert_eq!(code, 1, "{format}: {out}{err}");
        for text in [&out, &err] {
            assert!(
                !text
                    .chars()
                    .any(|c| c == '\u{1b}' || c == '\u{7}' || c == '\u{202e}'),
                "{format}: a control character reached the terminal: {text:?}"
            );
        }
        assert!(out.contains("\\u{1b}[2J"), "{format}: shown escaped: {out}");
        assert!(out.contains("b\\u{1b}[31m.drive"), "{format}: {out}");
    }
    // JSON keeps the text exact: the escape is JSON's own
    let (_, out, _) = run(
        &proj,
        &["check", name, "--rules", "house.yaml", "--format", "json"],
    );
    assert!(out.contains("\\u001b[2J"), "{out}");
}

#[cfg(unix)]
#[test]
fn a_closed_pipe_ends_the_output_quietly() {
    use std::io::Read;
    use std::os::unix::process::ExitStatusExt;
    use std::process::Stdio;
    let (_, proj) = project("pipe");
    let mut text = String::from("rail V5 5V\nground GND\n");
    for i in 0..3000 {
        text.push_str(&format!("resistor R{i} (V5, GND) 10k\n"));
    }
    write(&proj.join("big.drive"), &text);
    let mut child = match armature()
        .args(["facts", "big.drive"])
        .current_dir(&proj)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
    {
        Ok(c) => c,
        Err(e) => panic!("{e}"),
    };
    let mut first = [0u8; 16];
    if let Some(out) = child.stdout.as_mut() {
        let _ = out.read_exact(&mut first);
    }
    // like `| head -c 16`: the reader goes away after the first bytes
    drop(child.stdout.take());
    let out = match child.wait_with_output() {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    assert_eq!(out.status.signal(), Some(13), "{:?}", out.status);
    assert!(
        out.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn sarif_uris_are_percent_encoded() {
    let (_, proj) = project("uri");
    let body = "rail V5 5V\nground GND\nresistor R1 (V5, GND) 1k\nresistor R1 (V5, GND) 2k\n";
    let name = "a #1 %41?\u{7}é.drive";
    write(&proj.join(name), body);
    let (code, out, err) = run(&proj, &["check", name, "--format", "sarif"]);
    assert!(code == 1 || code == 2, "{out}{err}");
    let doc: serde_json::Value = match serde_json::from_str(&out) {
        Ok(v) => v,
        Err(e) => panic!("{e}: {out}"),
    };
    let mut uris = Vec::new();
    collect_uris(&doc, &mut uris);
    assert!(!uris.is_empty(), "{out}");
    let want = "a%20%231%20%2541%3F%07%C3%A9.drive";
    assert!(uris.iter().any(|u| u == want), "{uris:?}");
    for u in &uris {
        assert!(
            u.bytes()
                .all(|b| b.is_ascii_graphic() && !matches!(b, b'#' | b'?' | b' ' | b'\\')),
            "{u}"
        );
    }
}

fn collect_uris(v: &serde_json::Value, out: &mut Vec<String>) {
    match v {
        serde_json::Value::Object(m) => {
            for (k, x) in m {
                if let (true, Some(s)) = (k == "uri", x.as_str()) {
                    out.push(s.to_string());
                }
                collect_uris(x, out);
            }
        }
        serde_json::Value::Array(a) => a.iter().for_each(|x| collect_uris(x, out)),
        _ => {}
    }
}

#[cfg(unix)]
#[test]
fn a_symlinked_netlist_leading_out_of_the_project_is_not_read() {
    let (parent, proj) = project("netlink");
    write(&parent.join("secret.txt"), "TOKEN=s3cr3t-value here\n");
    write(
        &proj.join("sub/ok.drive"),
        "rail V 5V\nground GND\nresistor R1 (V, GND) 10k\n",
    );
    let _ = std::os::unix::fs::symlink(parent.join("secret.txt"), proj.join("leak.drive"));
    let _ = std::os::unix::fs::symlink("sub/ok.drive", proj.join("inside.drive"));
    for args in [
        &["check", "."][..],
        &["check", "leak.drive"][..],
        &["check", ".", "--format", "json"][..],
        &["facts", "leak.drive"][..],
    ] {
        let (code, out, err) = run(&proj, args);
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert!(
            !out.contains("s3cr3t") && !err.contains("s3cr3t"),
            "{args:?}: {out}{err}"
        );
        assert!(
            (out.contains("outside the project root") || err.contains("outside the project root")),
            "{args:?}: {out}{err}"
        );
    }
    // a link that stays inside is read as usual
    let (code, out, err) = run(&proj, &["check", "inside.drive"]);
    assert_eq!(code, 0, "{out}{err}");
    // and the user may trust the link
    let (code, out, _) = run(&proj, &["check", "leak.drive", "--allow-outside-root"]);
    assert_eq!(code, 2);
    assert!(out.contains("parse-error"), "{out}");
}

#[test]
fn the_configuration_line_stays_a_line() {
    let (_, proj) = project("cfgline");
    for i in 0..20 {
        write(
            &proj.join(format!("d{i:02}/armature.yaml")),
            "severity:\n  bulk-cap-missing: off\n",
        );
        write(
            &proj.join(format!("d{i:02}/a.drive")),
            "rail V 5V\nground GND\nresistor R1 (V, GND) 10k\n",
        );
    }
    let (code, out, _) = run(&proj, &["check", "."]);
    assert_eq!(code, 0, "{out}");
    let line = out
        .lines()
        .find(|l| l.starts_with("configuration:"))
        .unwrap_or("");
    assert!(
        line.contains("d07/armature.yaml") && !line.contains("d08/"),
        "{line}"
    );
    assert!(line.ends_with("and 12 more"), "{line}");
    let (_, out, _) = run(&proj, &["check", ".", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap_or_default();
    assert_eq!(v["config"].as_array().map(Vec::len), Some(20), "{out}");
}
