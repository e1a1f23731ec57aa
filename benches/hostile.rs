//! Hostile-input benchmark: the inputs a careless or malicious pull
//! request can carry, each at the size where a naive implementation took
//! seconds to minutes. Each case is generated into a scratch project
//! (with `.git`), then `armature` (the release binary) runs on it as a
//! child process; the wall time, the peak memory of the child and the
//! exit status are printed, with the budget (1 s each). The expected
//! status is checked too: a fast wrong answer is not a pass.
//!
//! Run with `cargo bench --bench hostile` (`-- NAME…` for some cases).
//! The exit status is non-zero when a case is over budget or answers
//! with the wrong status.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Instant;

const LIB: &str = include_str!("../tests/fixtures/parts.yaml");
const BUDGET_S: f64 = 1.0;

struct Case {
    name: &'static str,
    what: &'static str,
    /// Builds the project; returns the arguments of the run.
    build: fn(&Path) -> Vec<String>,
    /// The exit statuses that are right for it.
    expect: &'static [i32],
}

fn write(p: &Path, text: &str) {
    if let Some(d) = p.parent() {
        let _ = std::fs::create_dir_all(d);
    }
    if let Err(e) = std::fs::write(p, text) {
        panic!("{}: {e}", p.display());
    }
}

fn args(a: &[&str]) -> Vec<String> {
    a.iter().map(|s| s.to_string()).collect()
}

/// One controller pin, one gate net, `n` solenoid channels on it; with
/// or without a freewheel diode per channel.
fn channels(n: usize, diodes: bool) -> String {
    let mut s = String::from(
        "library \"parts.yaml\"\nrail VBAT 12V max 14.4V\nrail V5 5V\nground GND\n\
         capacitor C1 (VBAT, GND) 470uF v_max=25V\n\
         mcu U1 (PA0: CTL, VDD: V5, VSS: GND) part=DEMO-MCU-5V\n\
         resistor RG (CTL, G) 100\nresistor RP (G, GND) 47k\n",
    );
    for i in 0..n {
        let _ = writeln!(s, "solenoid L{i} (+: VBAT, -: SW{i}) part=DEMO-VALVE-12V");
        let _ = writeln!(s, "nmos Q{i} (d: SW{i}, g: G, s: GND) part=DEMO-N60-3A");
        if diodes {
            let _ = writeln!(s, "diode D{i} (a: SW{i}, k: VBAT) part=DEMO-SK40-1A");
        }
    }
    s.push_str("drive U1.PA0 pwm 1kHz duty 0%..100%\n");
    s
}

fn gate200(d: &Path) -> Vec<String> {
    write(&d.join("parts.yaml"), LIB);
    write(&d.join("b.drive"), &channels(200, true));
    args(&["check", "b.drive", "--format", "compact"])
}

fn nodiode1100(d: &Path) -> Vec<String> {
    write(&d.join("parts.yaml"), LIB);
    write(&d.join("b.drive"), &channels(1100, false));
    args(&["check", "b.drive", "--format", "compact"])
}

/// 2,400 nets that each touch one pin, all near-misses of each other.
fn onepin(d: &Path) -> Vec<String> {
    let mut s = String::from("rail V5 5V\nground GND\n");
    for i in 0..2400 {
        let _ = writeln!(s, "resistor R{i} (V5, NET_{i:04}A) 10k");
    }
    write(&d.join("b.drive"), &s);
    args(&["check", "b.drive", "--format", "compact"])
}

/// 5,000 unknown part names against a library of 5,000 parts.
fn partnames(d: &Path) -> Vec<String> {
    let mut lib = String::from("parts:\n");
    for i in 0..5000 {
        let _ = writeln!(
            lib,
            "  DEMO-R{i:05}-X:\n    kind: resistor\n    p_max: 0.25W"
        );
    }
    write(&d.join("lib.yaml"), &lib);
    let mut s = String::from("library \"lib.yaml\"\nrail V5 5V\nground GND\n");
    for i in 0..5000 {
        let _ = writeln!(s, "resistor R{i} (V5, GND) 10k part=DEMO-R{i:05}-Y");
    }
    write(&d.join("b.drive"), &s);
    args(&["check", "b.drive", "--format", "compact"])
}

/// 50,000 suppressions, each on a part line.
fn suppressions(d: &Path) -> Vec<String> {
    let mut s = String::from("rail V5 5V\nground GND\n");
    for i in 0..50_000 {
        let _ = writeln!(
            s,
            "resistor R{i} (V5, GND) 10 # armature: allow resistor-overload -- bench"
        );
    }
    write(&d.join("b.drive"), &s);
    args(&["check", "b.drive", "--format", "compact"])
}

/// A team rule whose pattern backtracks badly in a naive matcher,
/// against 20,000 distinct 200-character part names.
fn glob(d: &Path) -> Vec<String> {
    let mut lib = String::from("parts:\n");
    let mut s = String::from("library \"lib.yaml\"\nrail V5 5V\nground GND\n");
    for i in 0..20_000 {
        let name = format!("{}{i:05}", "A".repeat(195));
        let _ = writeln!(lib, "  {name}:\n    kind: resistor\n    p_max: 0.25W");
        let _ = writeln!(s, "resistor R{i} (V5, GND) 100k part={name}");
    }
    write(&d.join("lib.yaml"), &lib);
    write(&d.join("b.drive"), &s);
    let pat = format!("*{}B", "A".repeat(150));
    write(
        &d.join("rule.yaml"),
        &format!(
            "rules:\n  - id: team/pattern\n    severity: warning\n    kinds: [resistor]\n    \
             parts: \"{pat}\"\n    require: \"false\"\n    message: \"matched\"\n"
        ),
    );
    args(&[
        "check",
        "b.drive",
        "--rules",
        "rule.yaml",
        "--format",
        "compact",
    ])
}

/// 20,000 folders, each with its own configuration and netlist.
fn folders(d: &Path) -> Vec<String> {
    for i in 0..20_000 {
        let f = d.join(format!("d{i:05}"));
        write(
            &f.join("armature.yaml"),
            "severity:\n  bulk-cap-missing: off\n",
        );
        write(
            &f.join("a.drive"),
            "rail V5 5V\nground GND\nresistor R1 (V5, GND) 10k\n",
        );
    }
    args(&["check", ".", "--format", "compact"])
}

/// A folder tree with a symlink loop and a symlink to `/`.
fn symlinks(d: &Path) -> Vec<String> {
    write(
        &d.join("a/b/x.drive"),
        "rail V5 5V\nground GND\nresistor R1 (V5, GND) 10k\n",
    );
    #[cfg(unix)]
    {
        let _ = std::os::unix::fs::symlink("..", d.join("a/b/up"));
        let _ = std::os::unix::fs::symlink("/", d.join("a/root"));
    }
    args(&["check", ".", "--format", "compact"])
}

/// A 20 KB library whose one anchor is referenced 4,000 times.
fn aliases(d: &Path) -> Vec<String> {
    let mut lib = String::from(
        "base: &b\n  kind: resistor\n  p_max: 0.25W\n  note: [a, b, c, d, e, f, g, h]\nparts:\n",
    );
    for i in 0..4000 {
        let _ = writeln!(lib, "  R{i}: *b");
    }
    write(&d.join("lib.yaml"), &lib);
    write(
        &d.join("b.drive"),
        "library \"lib.yaml\"\nrail V5 5V\nground GND\nresistor R1 (V5, GND) 10k part=R1\n",
    );
    args(&["check", "b.drive", "--format", "compact"])
}

/// Netlists that are not files: `/dev/zero` through a link, and a FIFO.
fn devices(d: &Path) -> Vec<String> {
    #[cfg(unix)]
    {
        let _ = std::os::unix::fs::symlink("/dev/zero", d.join("zero.drive"));
        let fifo = d.join("pipe.drive");
        if let Ok(c) = std::ffi::CString::new(fifo.to_string_lossy().as_bytes()) {
            // SAFETY: mkfifo reads a NUL-terminated path we own.
            unsafe {
                libc::mkfifo(c.as_ptr(), 0o644);
            }
        }
    }
    args(&[
        "check",
        "zero.drive",
        "pipe.drive",
        "--allow-outside-root",
        "--format",
        "compact",
    ])
}

/// A netlist over the part limit (2,100,000 part lines).
fn partlimit(d: &Path) -> Vec<String> {
    let mut s = String::with_capacity(80 << 20);
    s.push_str("ground GND\n");
    for i in 0..2_100_000 {
        let _ = writeln!(s, "resistor R{i} (N{i}, GND) 1k");
    }
    write(&d.join("b.drive"), &s);
    args(&["check", "b.drive", "--format", "compact"])
}

/// A clamp of 1,000 Zeners in series: the finding names a path of 1,001
/// parts.
fn longpath(d: &Path) -> Vec<String> {
    write(&d.join("parts.yaml"), LIB);
    let mut s = String::from(
        "library \"parts.yaml\"\nrail VBAT 12V max 14.4V\nrail V5 5V\nground GND\n\
         capacitor C1 (VBAT, GND) 470uF v_max=25V\n\
         mcu U1 (PB1: CTL, VDD: V5, VSS: GND) part=DEMO-MCU-5V\n\
         resistor R3 (CTL, G) 220\nresistor R4 (G, GND) 47k\n\
         nmos Q2 (d: SW, g: G, s: GND) part=DEMO-N60-3A\n\
         solenoid L1 (+: VBAT, -: SW) part=DEMO-VALVE-12V\n\
         diode D2 (a: SW, k: Z0) part=DEMO-SK40-1A\n",
    );
    for i in 0..1000 {
        let next = if i == 999 {
            "VBAT".to_string()
        } else {
            format!("Z{}", i + 1)
        };
        let _ = writeln!(s, "zener Z{i} (a: {next}, k: Z{i}) part=DEMO-Z24 vz=0.05V");
    }
    write(&d.join("b.drive"), &s);
    args(&["check", "b.drive", "--format", "human", "--color", "never"])
}

fn cases() -> Vec<Case> {
    vec![
        Case {
            name: "gate200",
            what: "one gate net driving 200 channels",
            build: gate200,
            expect: &[0, 1],
        },
        Case {
            name: "nodiode1100",
            what: "1,100 channels on one pin, no freewheel diodes",
            build: nodiode1100,
            expect: &[1],
        },
        Case {
            name: "onepin",
            what: "2,400 one-pin nets, each a near-miss of the others",
            build: onepin,
            expect: &[0, 1],
        },
        Case {
            name: "partnames",
            what: "5,000 unknown part names, a 5,000-part library",
            build: partnames,
            expect: &[1],
        },
        Case {
            name: "suppressions",
            what: "50,000 suppressions",
            build: suppressions,
            expect: &[0, 1],
        },
        Case {
            name: "glob",
            what: "a backtracking team-rule pattern, 20,000 distinct names",
            build: glob,
            expect: &[0, 1],
        },
        Case {
            name: "folders",
            what: "20,000 folders, each with a configuration",
            build: folders,
            expect: &[0],
        },
        Case {
            name: "symlinks",
            what: "a folder symlink loop and a link to /",
            build: symlinks,
            expect: &[0],
        },
        Case {
            name: "aliases",
            what: "a library anchor referenced 4,000 times",
            build: aliases,
            expect: &[2],
        },
        Case {
            name: "devices",
            what: "/dev/zero and a FIFO as netlists",
            build: devices,
            expect: &[2],
        },
        Case {
            name: "partlimit",
            what: "2,100,000 part lines, over the limit",
            build: partlimit,
            expect: &[2],
        },
        Case {
            name: "longpath",
            what: "a clamp path of 1,001 parts",
            build: longpath,
            expect: &[1],
        },
    ]
}

fn peak_rss_children_kib() -> i64 {
    // SAFETY: getrusage only writes into the struct we hand it.
    unsafe {
        let mut u: libc::rusage = std::mem::zeroed();
        if libc::getrusage(libc::RUSAGE_CHILDREN, &mut u) == 0 {
            u.ru_maxrss
        } else {
            -1
        }
    }
}

fn main() {
    let wanted: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    let bin = PathBuf::from(env!("CARGO_BIN_EXE_armature"));
    let scratch = std::env::temp_dir().join(format!("armature-hostile-{}", std::process::id()));
    let mut failed = 0;
    println!(
        "{:<13} {:>8} {:>10} {:>6}  input",
        "case", "time", "peak", "exit"
    );
    for c in cases() {
        if !wanted.is_empty() && !wanted.iter().any(|w| w == c.name) {
            continue;
        }
        let dir = scratch.join(c.name);
        let _ = std::fs::remove_dir_all(&dir);
        let _ = std::fs::create_dir_all(dir.join(".git"));
        let a = (c.build)(&dir);
        // the peak of the children so far is a high-water mark: a case
        // shows its own only when it is the largest yet ("≤" otherwise)
        let before = peak_rss_children_kib();
        let t = Instant::now();
        let status = Command::new(&bin)
            .args(&a)
            .current_dir(&dir)
            .stdin(Stdio::null())
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .status();
        let secs = t.elapsed().as_secs_f64();
        let after = peak_rss_children_kib();
        let code = status.ok().and_then(|s| s.code()).unwrap_or(-1);
        let peak = if after > before {
            format!("{:.0} MiB", after as f64 / 1024.0)
        } else {
            format!("≤{:.0} MiB", after as f64 / 1024.0)
        };
        let verdict = if !c.expect.contains(&code) {
            failed += 1;
            format!("  WRONG STATUS (want {:?})", c.expect)
        } else if secs > BUDGET_S {
            failed += 1;
            format!("  OVER BUDGET ({BUDGET_S} s)")
        } else {
            String::new()
        };
        println!(
            "{:<13} {:>6.2} s {:>10} {:>6}  {}{verdict}",
            c.name, secs, peak, code, c.what
        );
        if c.name == "folders" {
            // the floor: listing the folders and reading every file once,
            // in this process, without checking anything
            let t = Instant::now();
            let mut bytes = 0usize;
            let mut stack = vec![dir.clone()];
            while let Some(d) = stack.pop() {
                for e in std::fs::read_dir(&d).into_iter().flatten().flatten() {
                    let p = e.path();
                    if e.file_type().is_ok_and(|t| t.is_dir()) {
                        stack.push(p);
                    } else {
                        bytes += std::fs::read(&p).map(|b| b.len()).unwrap_or(0);
                    }
                }
            }
            println!(
                "{:<13} {:>6.2} s {:>10} {:>6}  floor: list the folders and read the {} bytes",
                "  (floor)",
                t.elapsed().as_secs_f64(),
                "",
                "",
                bytes
            );
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
    let _ = std::fs::remove_dir_all(&scratch);
    if failed > 0 {
        println!("{failed} case(s) failed");
        std::process::exit(1);
    }
}
