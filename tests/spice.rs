//! SPICE netlists checked directly: the samples as SPICE give the same
//! findings as their `.drive` versions, the board export reads back, the
//! converter's output checks the same, and every reader error is located.

use assert_cmd::Command;
use serde_json::Value;
use std::path::{Path, PathBuf};

const SAMPLES: &[&str] = &[
    "alarm_relay_faulty",
    "conveyor_driver",
    "irrigation_valve",
    "structure_faulty",
    "vent_fan",
    "window_actuator",
];

fn armature() -> Command {
    match Command::cargo_bin("armature") {
        Ok(c) => c,
        Err(e) => panic!("{e}"),
    }
}

/// A scratch folder inside the project (the project root holds every
/// path a netlist names).
fn scratch(tag: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("spice-{tag}"));
    let _ = std::fs::remove_dir_all(&d);
    if let Err(e) = std::fs::create_dir_all(&d) {
        panic!("{e}");
    }
    d
}

fn write(path: &Path, text: &str) {
    if let Err(e) = std::fs::write(path, text) {
        panic!("{}: {e}", path.display());
    }
}

/// `check --format json`: (exit code, findings).
fn check(args: &[&str]) -> (i32, Vec<Value>) {
    let out = match armature()
        .arg("check")
        .args(args)
        .args(["--format", "json"])
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    let v: Value = match serde_json::from_slice(&out.stdout) {
        Ok(v) => v,
        Err(e) => panic!(
            "{args:?}: {e}\n{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        ),
    };
    let f = v["findings"].as_array().cloned().unwrap_or_default();
    (out.status.code().unwrap_or(-1), f)
}

/// (rule, parts, severity) of each finding, sorted.
fn verdicts(findings: &[Value]) -> Vec<(String, String, String)> {
    let mut v: Vec<(String, String, String)> = findings
        .iter()
        .map(|f| {
            (
                f["rule"].as_str().unwrap_or("").to_string(),
                f["parts"].to_string(),
                f["severity"].as_str().unwrap_or("").to_string(),
            )
        })
        .collect();
    v.sort();
    v
}

#[test]
fn samples_as_spice_give_the_same_findings() {
    let mut compared = 0;
    for s in SAMPLES {
        let drive = format!("samples/{s}.drive");
        let cir = format!("samples/spice/{s}.cir");
        let (c1, f1) = check(&[&drive]);
        let (c2, f2) = check(&[&cir]);
        assert_eq!(c1, c2, "{s}: exit codes");
        assert_eq!(verdicts(&f1), verdicts(&f2), "{s}: findings differ");
        let text = match std::fs::read_to_string(&cir) {
            Ok(t) => t,
            Err(e) => panic!("{e}"),
        };
        for f in &f2 {
            let file = f["file"].as_str().unwrap_or("");
            assert!(
                file == cir || file == format!("samples/spice/{s}.map.yaml"),
                "{s}: a finding in {file}"
            );
            if file == cir {
                // an element line, not a comment or the title
                let line = f["line"].as_u64().unwrap_or(0) as usize;
                let t = text.lines().nth(line.saturating_sub(1)).unwrap_or("");
                assert!(
                    line > 1 && !t.trim_start().starts_with('*'),
                    "{s}: line {line}: {t}"
                );
                // the finding's first part is named on its line (a load
                // on its first element's: `K1` on `LK1`); a finding about
                // a rail or a net is on the rail's source or a pin's line
                let part = f["parts"][0].as_str().unwrap_or("");
                assert!(
                    !part.is_empty() && t.contains(part)
                        || f["rule"] == "net-touches-one-pin"
                        || f["rule"] == "bulk-cap-missing",
                    "{s}: `{part}` not on line {line}: {t}"
                );
            }
            compared += 1;
        }
    }
    eprintln!(
        "{compared} findings compared over {} samples",
        SAMPLES.len()
    );
    assert!(compared >= 13);
}

/// Every number `facts` prints for the SPICE version equals the `.drive`
/// version's (to rounding: the load's resistance and inductance come from
/// the SPICE elements, in another order of summation).
#[test]
fn samples_as_spice_have_the_same_facts() {
    fn walk(a: &Value, b: &Value, path: &str, n: &mut usize) {
        match (a, b) {
            (Value::Number(x), Value::Number(y)) => {
                let (x, y) = (x.as_f64().unwrap_or(0.0), y.as_f64().unwrap_or(0.0));
                assert!(
                    (x - y).abs() <= 1e-9 * x.abs().max(y.abs()) + 1e-15,
                    "{path}: {x} vs {y}"
                );
                *n += 1;
            }
            (Value::Array(x), Value::Array(y)) => {
                assert_eq!(x.len(), y.len(), "{path}: lengths");
                for (i, (p, q)) in x.iter().zip(y).enumerate() {
                    walk(p, q, &format!("{path}/{i}"), n);
                }
            }
            (Value::Object(x), Value::Object(y)) => {
                for (k, v) in x {
                    if k == "file" {
                        continue;
                    }
                    match y.get(k) {
                        Some(w) => walk(v, w, &format!("{path}/{k}"), n),
                        None => panic!("{path}/{k} missing"),
                    }
                }
            }
            _ => assert_eq!(a, b, "{path}"),
        }
    }
    let facts = |f: &str| -> Value {
        let out = match armature().args(["facts", f, "--format", "json"]).output() {
            Ok(o) => o,
            Err(e) => panic!("{e}"),
        };
        match serde_json::from_slice(&out.stdout) {
            Ok(v) => v,
            Err(e) => panic!("{f}: {e}: {}", String::from_utf8_lossy(&out.stderr)),
        }
    };
    let mut n = 0;
    for s in SAMPLES.iter().filter(|s| **s != "structure_faulty") {
        walk(
            &facts(&format!("samples/{s}.drive")),
            &facts(&format!("samples/spice/{s}.cir")),
            s,
            &mut n,
        );
    }
    eprintln!("{n} facts compared");
    assert!(n > 100);
}

/// `export spice --board` of every sample, read back with the mapping it
/// writes, gives the same findings.
#[test]
fn the_board_export_reads_back_with_the_same_findings() {
    let dir = scratch("roundtrip");
    let parts = dir.join("parts");
    let _ = std::fs::create_dir_all(&parts);
    if let Err(e) = std::fs::copy(
        "samples/parts/greenhouse.yaml",
        parts.join("greenhouse.yaml"),
    ) {
        panic!("{e}");
    }
    for s in SAMPLES {
        let drive = format!("samples/{s}.drive");
        let map = dir.join(format!("{s}.map.yaml"));
        let out = match armature()
            .args(["export", "spice", "--board", &drive, "--map-out"])
            .arg(&map)
            .output()
        {
            Ok(o) => o,
            Err(e) => panic!("{e}"),
        };
        assert!(
            out.status.success(),
            "{s}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let cir = dir.join(format!("{s}.cir"));
        write(&cir, &String::from_utf8_lossy(&out.stdout));
        let (c1, f1) = check(&[&drive]);
        let (c2, f2) = check(&[&cir.to_string_lossy()]);
        assert_eq!(c1, c2, "{s}: exit codes");
        assert_eq!(verdicts(&f1), verdicts(&f2), "{s}: round trip differs");
    }
}

/// `import spice -o FILE` writes a `.drive` netlist that checks the same,
/// with a comment naming the SPICE line of each part.
#[test]
fn the_converted_netlist_checks_the_same() {
    let dir = scratch("import");
    for s in SAMPLES {
        let cir = format!("samples/spice/{s}.cir");
        let out = dir.join(format!("{s}.drive"));
        let o = match armature()
            .args(["import", "spice", &cir, "-o"])
            .arg(&out)
            .output()
        {
            Ok(o) => o,
            Err(e) => panic!("{e}"),
        };
        assert!(
            o.status.success(),
            "{s}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let text = std::fs::read_to_string(&out).unwrap_or_default();
        assert!(
            text.contains(&format!("# {cir}:")),
            "{s}: no source comments:\n{text}"
        );
        let lib = armature::spice::relative(&dir, Path::new("samples/parts/greenhouse.yaml"));
        let line = format!("library \"{}\"", lib.to_string_lossy());
        assert!(text.contains(&line), "{s}: no `{line}`:\n{text}");
        let (c1, f1) = check(&[&cir]);
        let (c2, f2) = check(&[&out.to_string_lossy()]);
        assert_eq!(c1, c2, "{s}: exit codes");
        assert_eq!(
            verdicts(&f1),
            verdicts(&f2),
            "{s}: the conversion checks differently"
        );
    }
}

/// Hierarchy, parameters, includes, sections, continuations, comments
/// and case: what the converter makes of them.
#[test]
fn subcircuits_flatten_with_parameters_includes_and_continuations() {
    let dir = scratch("flatten");
    write(
        &dir.join("models.lib"),
        "* a model library with sections\n.lib fast\n.model SW1 NMOS (VTO=2)\n.endl\n.lib slow\n.model SW1 NMOS (VTO=4)\n.endl\n",
    );
    write(
        &dir.join("leg.inc"),
        "* included: the channel subcircuit\n.subckt CHAN in out vdd params: rg=100\nRG in g {rg}\nRPD g 0 {rg*1k}\nM1 out g 0 0 SW1\n.ends CHAN\n",
    );
    write(
        &dir.join("board.cir"),
        "Two channels\n.include leg.inc\n.lib models.lib fast\n.param rbase=47\nVB vb 0 DC 12\nVL vl 0 5\n\
         XA ctl_a mid_a vl CHAN rg={rbase*2} ; armature: allow net-touches-one-pin -- the test's open end\n\
         XB ctl_b\n+ mid_b vl CHAN\nRLOAD_A VB mid_a 24 $ a resistive load\nrload_b vb MID_B 24\n.tran 1u 1m\n.end\nR99 a b 1\n",
    );
    let out = match armature()
        .args(["import", "spice"])
        .arg(dir.join("board.cir"))
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}\n{text}",
        String::from_utf8_lossy(&out.stderr)
    );
    for want in [
        "design \"Two channels\"",
        "rail vb 12V",
        "rail vl 5V",
        "ground 0",
        // the instance's parameter: rg = 2 × 47
        "resistor XA.RG (ctl_a, XA.g) 94ohm",
        // the default, in an expression
        "resistor XB.RPD (XB.g, 0) 100000ohm",
        // ports map to the instance's nets; the continued line read whole
        "nmos XB.M1 (d: mid_b, g: XB.g, s: 0) part=SW1",
        // nets are case-insensitive: named as at their first use
        "resistor rload_b (vb, mid_b) 24ohm",
        "# armature: allow net-touches-one-pin",
    ] {
        assert!(text.contains(want), "missing `{want}` in:\n{text}");
    }
    // after `.end` nothing is read
    assert!(!text.contains("R99"), "{text}");
    // the flattened part inside the include points at the include's line,
    // with the instance line beside it
    let (_, f) = check(&[&dir.join("board.cir").to_string_lossy()]);
    let unknown = f.iter().find(|x| x["rule"] == "part-not-in-library");
    let Some(u) = unknown else { panic!("{f:?}") };
    assert!(u["file"].as_str().unwrap_or("").ends_with("leg.inc"), "{u}");
    assert_eq!(u["line"], 5);
    let rel: Vec<String> = u["related"]
        .as_array()
        .into_iter()
        .flatten()
        .map(|r| format!("{}:{}", r["file"].as_str().unwrap_or(""), r["line"]))
        .collect();
    assert!(rel.iter().any(|r| r.ends_with("board.cir:7")), "{rel:?}");
    // `.tran` is noted, once
    assert_eq!(f.iter().filter(|x| x["rule"] == "spice-ignored").count(), 1);
}

/// Each reader error: exit 2, the rule, the line and column.
#[test]
fn reader_errors_are_located() {
    let dir = scratch("errors");
    write(&dir.join("loop_a.inc"), "* a\n.include loop_b.inc\n");
    write(&dir.join("loop_b.inc"), "* b\n.include loop_a.inc\n");
    let cases: &[(&str, &str, &str, usize, usize, &str)] = &[
        (
            "letter",
            "t\nV1 a 0 5\nJ1 a b c JMOD\n",
            "spice-error",
            3,
            1,
            "JFET",
        ),
        (
            "unknown",
            "t\nV1 a 0 5\nA1 a b c\n",
            "spice-error",
            3,
            1,
            "no element",
        ),
        (
            "ends",
            "t\nV1 a 0 5\n.subckt S a b\nR1 a b 1k\n",
            "spice-error",
            3,
            1,
            "has no `.ends`",
        ),
        (
            "stray_ends",
            "t\nV1 a 0 5\n.ends\n",
            "spice-error",
            3,
            1,
            "without a `.subckt`",
        ),
        (
            "recursive",
            "t\nV1 a 0 5\n.subckt S a b\nR1 a b 1k\nX1 a b T\n.ends\n.subckt T a b\nX2 a b S\n.ends\nX0 a 0 S\n",
            "spice-error",
            8,
            8,
            "contains itself",
        ),
        (
            "include",
            "t\nV1 a 0 5\n.include missing.lib\nR1 a 0 1k\n",
            "spice-error",
            3,
            10,
            "cannot be read",
        ),
        (
            "include_loop",
            "t\nV1 a 0 5\n.include loop_a.inc\n",
            "spice-error",
            2,
            10,
            "includes itself",
        ),
        (
            "param",
            "t\nV1 a 0 5\nR1 a 0 {2*rx}\n",
            "spice-error",
            3,
            8,
            "rx",
        ),
        (
            "param_div",
            "t\n.param z=0\nV1 a 0 5\nR1 a 0 {1/z}\n",
            "spice-error",
            4,
            8,
            "finite",
        ),
        (
            "nodes",
            "t\nV1 a 0 5\n.subckt S a b c\nR1 a b 1k\nR2 b c 1k\n.ends\nX1 a 0 S\n",
            "spice-error",
            7,
            1,
            "has 3 ports",
        ),
        (
            "floating_source",
            "t\nV1 a 0 5\nV2 a b 1\nR1 b 0 1k\n",
            "spice-error",
            3,
            1,
            "not a rail",
        ),
        (
            "syntax",
            "t\nV1 a 0 5\nR1 a 0 {2*(3}\n",
            "spice-error",
            3,
            8,
            "not closed",
        ),
        (
            "paren",
            "t\nV1 a 0 PULSE(0 5\n",
            "parse-error",
            2,
            17,
            "ends too early",
        ),
    ];
    for (tag, deck, rule, line, col, says) in cases {
        let p = dir.join(format!("{tag}.cir"));
        write(&p, deck);
        let (code, f) = check(&["--no-config", &p.to_string_lossy()]);
        assert_eq!(code, 2, "{tag}: {f:?}");
        let hit = f.iter().find(|x| x["rule"] == *rule);
        let Some(h) = hit else {
            panic!("{tag}: no {rule}: {f:?}")
        };
        let file = h["file"].as_str().unwrap_or("");
        let at = (
            h["line"].as_u64().unwrap_or(0) as usize,
            h["column"].as_u64().unwrap_or(0) as usize,
        );
        let msg = h["message"].as_str().unwrap_or("");
        assert!(msg.contains(says), "{tag}: `{msg}`");
        if *tag == "include_loop" {
            assert!(file.ends_with("loop_b.inc"), "{tag}: {file}");
        }
        assert_eq!(at, (*line, *col), "{tag}: {msg}");
    }
}

/// Mapping errors are located in the YAML.
#[test]
fn mapping_errors_are_located() {
    let dir = scratch("maperr");
    let deck = "t\nVB vb 0 12\nL1 vb m 10m\nR1 m sw 5\nR2 vb sw 1k\nM1 sw g 0 0 SW\nR3 g 0 10k\n";
    write(&dir.join("b.cir"), deck);
    let cases: &[(&str, &str, usize, &str)] = &[
        (
            "unknown_key",
            "rails: {}\nmodel: {SW: X}\n",
            2,
            "unknown key `model`",
        ),
        (
            "kind",
            "instances:\n  R2: {kind: resistr}\n",
            2,
            "did you mean `resistor`",
        ),
        (
            "chain",
            "loads:\n  K1: {kind: relay, elements: [L1, R2]}\n",
            2,
            "series chain",
        ),
        (
            "missing",
            "loads:\n  K1: {kind: relay, elements: [L1, R7]}\n",
            2,
            "`R7`",
        ),
        ("rail", "rails:\n  V5: {tol: 5%}\n", 2, "no DC source"),
    ];
    for (tag, yaml, line, says) in cases {
        let m = dir.join(format!("{tag}.yaml"));
        write(&m, yaml);
        let (code, f) = check(&[
            "--no-config",
            "--map",
            &m.to_string_lossy(),
            &dir.join("b.cir").to_string_lossy(),
        ]);
        assert_eq!(code, 2, "{tag}: {f:?}");
        let Some(h) = f.iter().find(|x| x["rule"] == "mapping-error") else {
            panic!("{tag}: {f:?}")
        };
        assert!(
            h["file"]
                .as_str()
                .unwrap_or("")
                .ends_with(&format!("{tag}.yaml")),
            "{tag}: {h}"
        );
        assert_eq!(h["line"].as_u64(), Some(*line as u64), "{tag}: {h}");
        assert!(
            h["message"].as_str().unwrap_or("").contains(says),
            "{tag}: {h}"
        );
    }
}

/// `1M` is milli in SPICE: a warning, which a SPICE comment suppresses.
#[test]
fn an_upper_case_m_warns_and_comments_suppress() {
    let dir = scratch("msuffix");
    let p = dir.join("m.cir");
    write(
        &p,
        "m suffix\nV1 a 0 DC 5\nR1 a b 1M\n* armature: allow spice-m-suffix -- a 2 milliohm shunt\nR2 b 0 2M\nR3 b 0 10Meg\n",
    );
    let (_, f) = check(&["--no-config", &p.to_string_lossy()]);
    let m: Vec<&Value> = f.iter().filter(|x| x["rule"] == "spice-m-suffix").collect();
    assert_eq!(m.len(), 1, "{f:?}");
    assert_eq!(m[0]["line"], 3);
    assert_eq!(m[0]["column"], 8);
    assert!(
        m[0]["message"].as_str().unwrap_or("").contains("1 mΩ"),
        "{}",
        m[0]
    );
    // the resistor is checked as 1 mΩ, as SPICE reads it: 5 V across it
    assert!(
        f.iter()
            .any(|x| x["rule"] == "resistor-overload" && x["parts"][0] == "R1"),
        "{f:?}"
    );
}

/// Inputs built to exhaust the reader end in a located error.
#[test]
fn hostile_decks_are_refused_within_the_limits() {
    let dir = scratch("hostile");
    // subcircuits nested 40 deep
    let mut deep = String::from("deep\nV1 a 0 5\n");
    for i in 0..40 {
        deep.push_str(&format!(".subckt S{i} a b\nX{i} a b S{}\n.ends\n", i + 1));
    }
    deep.push_str(".subckt S40 a b\nR1 a b 1k\n.ends\nX a 0 S0\n");
    // ten instances per level, seven levels: 10^7 elements
    let mut wide = String::from("wide\nV1 a 0 5\n.subckt W0 a b\nR1 a b 1k\n.ends\n");
    for l in 1..=7 {
        wide.push_str(&format!(".subckt W{l} a b\n"));
        for k in 0..10 {
            wide.push_str(&format!("X{k} a b W{}\n", l - 1));
        }
        wide.push_str(".ends\n");
    }
    wide.push_str("XT a 0 W7\n");
    let long = format!("long\nV1 a 0 5\nR1 a 0 1k {}\n", "x".repeat(1 << 21));
    for (tag, deck, says) in [
        ("deep", deep.as_str(), "deeper than"),
        ("wide", wide.as_str(), "more than"),
        ("long", long.as_str(), "the limit is"),
    ] {
        let p = dir.join(format!("{tag}.cir"));
        write(&p, deck);
        let (code, f) = check(&["--no-config", &p.to_string_lossy()]);
        assert_eq!(code, 2, "{tag}");
        assert!(
            f.iter()
                .any(|x| x["message"].as_str().unwrap_or("").contains(says)),
            "{tag}: {:?}",
            f.iter().map(|x| &x["message"]).collect::<Vec<_>>()
        );
    }
}

/// Lines that start with characters of several bytes (found by fuzzing:
/// a byte-order mark inside a line once split a character).
#[test]
fn multibyte_characters_are_read_whole() {
    let dir = scratch("multibyte");
    let p = dir.join("m.cir");
    write(
        &p,
        "t\nV1 a 0 5\n\u{feff}\u{feff}\u{feff}\nÉR1 a 0 1k\n.ctrl\u{e9}\nR2 a\u{feff} 0 1k\n.\u{e9}ndc\n",
    );
    let (code, f) = check(&["--no-config", &p.to_string_lossy()]);
    assert!(code == 0 || code == 1 || code == 2, "{f:?}");
}

/// `--input spice` reads any file as SPICE; `--input drive` the reverse.
#[test]
fn input_overrides_the_extension() {
    let dir = scratch("input");
    let p = dir.join("board.txt");
    write(&p, "t\nV1 a 0 5\nR1 a 0 1k\n");
    let (code, f) = check(&["--no-config", "--input", "spice", &p.to_string_lossy()]);
    assert_eq!(code, 0, "{f:?}");
    let (code, _) = check(&[
        "--no-config",
        "--input",
        "drive",
        "samples/spice/vent_fan.cir",
    ]);
    assert_eq!(code, 2);
}

/// The mapping may sit under `spice:` in `armature.yaml`, its paths
/// relative to the configuration; facts of the board are those of the
/// sample.
#[test]
fn the_mapping_in_the_configuration_is_used() {
    let dir = scratch("config");
    let boards = dir.join("boards");
    let _ = std::fs::create_dir_all(&boards);
    if let Err(e) = std::fs::copy(
        "samples/spice/alarm_relay_faulty.cir",
        boards.join("alarm.cir"),
    ) {
        panic!("{e}");
    }
    if let Err(e) = std::fs::copy("samples/parts/greenhouse.yaml", dir.join("greenhouse.yaml")) {
        panic!("{e}");
    }
    let map = std::fs::read_to_string("samples/spice/alarm_relay_faulty.map.yaml")
        .unwrap_or_default()
        .replace("../parts/greenhouse.yaml", "greenhouse.yaml");
    let indented: Vec<String> = map.lines().map(|l| format!("  {l}")).collect();
    write(
        &dir.join("armature.yaml"),
        &format!("fail-on: error\nspice:\n{}\n", indented.join("\n")),
    );
    let (c1, f1) = check(&["samples/spice/alarm_relay_faulty.cir"]);
    let (c2, f2) = check(&[&boards.join("alarm.cir").to_string_lossy()]);
    assert_eq!(c1, c2);
    assert_eq!(verdicts(&f1), verdicts(&f2));
    // an error in the section is located in the configuration
    write(
        &dir.join("armature.yaml"),
        "spice:\n  rails:\n    VBAT: {maxx: 14.4V}\n",
    );
    let (code, f) = check(&[&boards.join("alarm.cir").to_string_lossy()]);
    assert_eq!(code, 2);
    let Some(e) = f.iter().find(|x| x["rule"] == "mapping-error") else {
        panic!("{f:?}")
    };
    assert!(
        e["file"].as_str().unwrap_or("").ends_with("armature.yaml"),
        "{e}"
    );
    assert_eq!(e["line"], 3);
    assert!(
        e["message"]
            .as_str()
            .unwrap_or("")
            .contains("did you mean `max`"),
        "{e}"
    );
}

/// Net names as schematic tools write them: `/SW`, `+5V`, `N#1`,
/// `Net-(Q1-Pad1)` (parentheses inside a name are part of it).
#[test]
fn schematic_net_names_are_read_whole() {
    let dir = scratch("names");
    let p = dir.join("n.cir");
    write(
        &p,
        "names\nV1 +5V 0 5\nR1 +5V N#1 1k\nR2 N#1 /SW 1k\nR3 /SW Net-(Q1-Pad1) 1k\nR4 Net-(Q1-Pad1) 0 1k\n",
    );
    let out = match armature()
        .args(["import", "spice", "--no-config"])
        .arg(&p)
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    let text = String::from_utf8_lossy(&out.stdout);
    for want in [
        "rail \"+5V\" 5V",
        "resistor R1 (\"+5V\", \"N#1\") 1000ohm",
        "resistor R3 (\"/SW\", \"Net-(Q1-Pad1)\") 1000ohm",
    ] {
        assert!(
            text.contains(want),
            "missing `{want}`:\n{text}{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let (code, f) = check(&["--no-config", &p.to_string_lossy()]);
    assert_eq!(code, 0, "{f:?}");
    // `PWL(0,1)` is a group, not a name: R4 has no value it can use
    write(&p, "names\nV1 +5V 0 5\nR4 +5V 0 PWL(0,1)\n");
    let (code, f) = check(&["--no-config", &p.to_string_lossy()]);
    assert_eq!(code, 2, "{f:?}");
    assert!(f.iter().any(|x| x["line"] == 3), "{f:?}");
}
