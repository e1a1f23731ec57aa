//! The shipped pre-commit hook (`contrib/pre-commit`) in scratch git
//! repositories: it checks what is staged, re-checks netlists when only a
//! library or a configuration changed, and is safe with odd file names.

use std::path::{Path, PathBuf};
use std::process::Command;

const GOOD: &str = "library \"parts.yaml\"\nrail VBAT 12V max 14.4V\nrail V5 5V\nground GND\n\
capacitor C1 (VBAT, GND) 470uF v_max=25V\n\
mcu U1 (PA3: PWM, VDD: V5, VSS: GND) part=DEMO-MCU-5V\n\
resistor R1 (PWM, G) 100\nresistor R2 (G, GND) 100k\n\
nmos Q1 (d: SW, g: G, s: GND) part=DEMO-N60-3A\n\
motor M1 (+: VBAT, -: SW) part=DEMO-FAN-12V\n\
diode D1 (a: SW, k: VBAT) part=DEMO-SK40-3A\n";

fn git_available() -> bool {
    let ok = Command::new("git").arg("--version").output().is_ok();
    if !ok && std::env::var_os("CI").is_some() {
        panic!("git is needed for the hook tests and is missing on CI");
    }
    ok
}

fn sh(dir: &Path, args: &[&str]) {
    let out = match Command::new(args[0])
        .args(&args[1..])
        .current_dir(dir)
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{args:?}: {e}"),
    };
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn write(p: &Path, text: &str) {
    if let Some(d) = p.parent() {
        let _ = std::fs::create_dir_all(d);
    }
    if let Err(e) = std::fs::write(p, text) {
        panic!("{e}");
    }
}

/// A fresh repository with the library and one good netlist committed.
fn repo(tag: &str, netlist: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("armature-hook-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let _ = std::fs::create_dir_all(&dir);
    sh(&dir, &["git", "init", "-q"]);
    sh(
        &dir,
        &["git", "config", "user.email", "hook@example.invalid"],
    );
    sh(&dir, &["git", "config", "user.name", "hook test"]);
    write(&dir.join("parts.yaml"), include_str!("fixtures/parts.yaml"));
    write(&dir.join(netlist), GOOD);
    sh(&dir, &["git", "add", "-A"]);
    sh(&dir, &["git", "commit", "-q", "-m", "start"]);
    dir
}

/// Run the hook; (status, output).
fn hook(dir: &Path) -> (i32, String) {
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("contrib/pre-commit");
    let out = match Command::new("bash")
        .arg(&script)
        .current_dir(dir)
        .env("ARMATURE", env!("CARGO_BIN_EXE_armature"))
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    (
        out.status.code().unwrap_or(-1),
        format!(
            "{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        ),
    )
}

fn without_diode() -> String {
    GOOD.lines()
        .filter(|l| !l.starts_with("diode"))
        .map(|l| format!("{l}\n"))
        .collect()
}

#[test]
fn the_staged_content_is_checked_not_the_working_tree() {
    if !git_available() {
        return;
    }
    let name = "my board \"v2\".drive";
    let dir = repo("staged", name);
    // nothing staged: nothing to do
    assert_eq!(hook(&dir).0, 0);
    // a fault staged, then fixed in the working tree only: still caught
    write(&dir.join(name), &without_diode());
    sh(&dir, &["git", "add", "--", name]);
    write(&dir.join(name), GOOD);
    let (code, out) = hook(&dir);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("freewheel-missing"), "{out}");
    assert!(out.contains("my board \"v2\".drive:"), "{out}");
    // the fix staged: passes, though the working tree is now broken
    sh(&dir, &["git", "add", "--", name]);
    write(&dir.join(name), &without_diode());
    let (code, out) = hook(&dir);
    assert_eq!(code, 0, "{out}");
}

#[test]
fn a_changed_library_rechecks_the_netlists_that_load_it() {
    if !git_available() {
        return;
    }
    let dir = repo("library", "sub dir/fan.drive");
    // the netlist's library line is relative to its folder
    let text = GOOD.replace("library \"parts.yaml\"", "library \"../parts.yaml\"");
    write(&dir.join("sub dir/fan.drive"), &text);
    sh(&dir, &["git", "add", "-A"]);
    sh(&dir, &["git", "commit", "-q", "-m", "relative"]);
    // only the library changes: the switch's rating drops below the rail
    let lib = include_str!("fixtures/parts.yaml").replacen("vds_max: 60V", "vds_max: 12V", 1);
    assert_ne!(lib, include_str!("fixtures/parts.yaml"));
    write(&dir.join("parts.yaml"), &lib);
    sh(&dir, &["git", "add", "parts.yaml"]);
    let (code, out) = hook(&dir);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("switch-overvoltage"), "{out}");
    assert!(out.contains("sub dir/fan.drive"), "{out}");
}

#[test]
fn a_changed_configuration_rechecks_the_netlists_under_it() {
    if !git_available() {
        return;
    }
    let dir = repo("config", "boards/fan.drive");
    let text = GOOD.replace("library \"parts.yaml\"", "library \"../parts.yaml\"");
    write(&dir.join("boards/fan.drive"), &text);
    write(&dir.join("other.drive"), &without_diode());
    sh(&dir, &["git", "add", "-A"]);
    sh(&dir, &["git", "commit", "-q", "-m", "two boards"]);
    // a configuration that makes a warning an error, in boards/ only
    write(
        &dir.join("boards/armature.yaml"),
        "severity:\n  bulk-cap-missing: error\nfail-on: warning\nderating:\n  voltage: 0.1\n",
    );
    sh(&dir, &["git", "add", "boards/armature.yaml"]);
    let (code, out) = hook(&dir);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("boards/fan.drive"), "{out}");
    // the faulty netlist outside boards/ was not touched and is not checked
    assert!(!out.contains("other.drive"), "{out}");
}
