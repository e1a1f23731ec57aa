//! SPICE front end against the `.drive` one: the generated board of
//! about 160k parts (every rule and analysis path: PWM channels, bridges,
//! missing pull-downs, misplaced diodes) is written as `.drive`, exported
//! with `export spice --board` as a SPICE netlist with its mapping, and
//! both are checked with `armature check --format json` (a release build,
//! as a child process), alternating, five runs each. Prints the best and
//! median of each and the ratio SPICE / `.drive` of the bests, and checks
//! that both give the same number of findings. `cargo bench --bench spice`
//! (`-- 16000` for another size).

#[path = "gen.rs"]
#[allow(dead_code)] // the other benches use the rest of the generator
mod generator;

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

fn run(exe: &Path, file: &Path) -> (f64, usize) {
    let t = Instant::now();
    let out = Command::new(exe)
        .args(["check", file.to_str().unwrap_or(""), "--format", "json"])
        .output();
    let dt = t.elapsed().as_secs_f64() * 1e3;
    let n = out
        .ok()
        .and_then(|o| serde_json::from_slice::<serde_json::Value>(&o.stdout).ok())
        .and_then(|v| v["findings"].as_array().map(Vec::len))
        .unwrap_or(usize::MAX);
    (dt, n)
}

fn main() {
    let parts: usize = std::env::args()
        .skip(1)
        .find_map(|a| a.parse().ok())
        .unwrap_or(160_000);
    let dir = PathBuf::from("target/bench-spice");
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(dir.join("gen-parts.yaml"), generator::LIBRARY);
    let n = generator::channels_for(parts);
    let drive = dir.join(format!("gen-{parts}.drive"));
    let _ = std::fs::write(&drive, generator::netlist(n, "gen-parts.yaml"));
    let exe = PathBuf::from(env!("CARGO_BIN_EXE_armature"));
    let cir = dir.join(format!("gen-{parts}.cir"));
    let map = dir.join(format!("gen-{parts}.map.yaml"));
    let t = Instant::now();
    let out = Command::new(&exe)
        .args(["export", "spice", "--board"])
        .arg(&drive)
        .arg("--map-out")
        .arg(&map)
        .output();
    match out {
        Ok(o) if o.status.success() => {
            let _ = std::fs::write(&cir, &o.stdout);
        }
        _ => {
            eprintln!("export spice --board failed");
            std::process::exit(1);
        }
    }
    let size = |p: &Path| {
        std::fs::metadata(p)
            .map(|m| m.len() as f64 / 1e6)
            .unwrap_or(0.0)
    };
    println!(
        "{parts} parts ({n} channels): .drive {:.1} MB; SPICE {:.1} MB + mapping {:.1} MB (exported in {:.0} ms)",
        size(&drive),
        size(&cir),
        size(&map),
        t.elapsed().as_secs_f64() * 1e3
    );
    let (mut d, mut s) = (Vec::new(), Vec::new());
    let (mut nd, mut ns) = (0, 0);
    for _ in 0..5 {
        let (t1, n1) = run(&exe, &drive);
        let (t2, n2) = run(&exe, &cir);
        d.push(t1);
        s.push(t2);
        (nd, ns) = (n1, n2);
    }
    d.sort_by(f64::total_cmp);
    s.sort_by(f64::total_cmp);
    let (bd, bs) = (d[0], s[0]);
    println!(
        "  .drive: best {bd:.0} ms, median {:.0} ms; SPICE: best {bs:.0} ms, median {:.0} ms; ratio {:.2}× (best), {:.2}× (median)",
        d[2],
        s[2],
        bs / bd,
        s[2] / d[2]
    );
    println!("  findings: .drive {nd}, SPICE {ns}");
    if nd != ns {
        eprintln!("the two netlists give different findings");
        std::process::exit(1);
    }
}
