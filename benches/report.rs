//! The HTML report against the JSON output of the same check: the
//! generated board of about 160k parts (PWM channels, bridges, missing
//! pull-downs and freewheel diodes) is checked with `armature check
//! --format json` and written with `armature report -o FILE` (a release
//! build, as a child process), alternating, five runs each. Prints the
//! best and median of each, the ratio report / JSON, the page's size and
//! how many findings it lists and draws. `cargo bench --bench report`
//! (`-- 16000` for another size).

#[path = "gen.rs"]
#[allow(dead_code)] // the other benches use the rest of the generator
mod generator;

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

fn time(mut c: Command) -> (f64, Vec<u8>) {
    let t = Instant::now();
    let out = c.output();
    let dt = t.elapsed().as_secs_f64() * 1e3;
    (dt, out.map(|o| o.stdout).unwrap_or_default())
}

fn main() {
    let parts: usize = std::env::args()
        .skip(1)
        .find_map(|a| a.parse().ok())
        .unwrap_or(160_000);
    let dir = PathBuf::from("target/bench-report");
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(dir.join("gen-parts.yaml"), generator::LIBRARY);
    let n = generator::channels_for(parts);
    let drive = dir.join(format!("gen-{parts}.drive"));
    let _ = std::fs::write(&drive, generator::netlist(n, "gen-parts.yaml"));
    let page = dir.join(format!("gen-{parts}.html"));
    let exe = PathBuf::from(env!("CARGO_BIN_EXE_armature"));
    let file = drive.to_str().unwrap_or("");
    let json = |exe: &Path| {
        let mut c = Command::new(exe);
        c.args(["check", file, "--format", "json"]);
        c
    };
    let report = |exe: &Path| {
        let mut c = Command::new(exe);
        c.args(["report", file, "-o"]).arg(&page);
        c
    };
    let (mut j, mut r) = (Vec::new(), Vec::new());
    let mut findings = 0;
    for _ in 0..5 {
        let (t1, out) = time(json(&exe));
        let (t2, _) = time(report(&exe));
        j.push(t1);
        r.push(t2);
        findings = serde_json::from_slice::<serde_json::Value>(&out)
            .ok()
            .and_then(|v| v["findings"].as_array().map(Vec::len))
            .unwrap_or(0);
    }
    j.sort_by(f64::total_cmp);
    r.sort_by(f64::total_cmp);
    let text = std::fs::read_to_string(&page).unwrap_or_default();
    let sections = text.matches("<section class=\"finding").count();
    let drawings = text.matches("<svg class=\"schematic\"").count();
    let plots = text.matches("<svg class=\"plot\"").count();
    println!(
        "{parts} parts ({n} channels), {findings} findings: JSON best {:.0} ms, median {:.0} ms; report best {:.0} ms, median {:.0} ms; ratio {:.2}× (best), {:.2}× (median)",
        j[0],
        j[2],
        r[0],
        r[2],
        r[0] / j[0],
        r[2] / j[2]
    );
    println!(
        "  page {:.1} MB: {sections} finding sections, {drawings} drawn, {plots} edge plots{}",
        text.len() as f64 / 1e6,
        if text.contains("id=\"not-drawn\"") {
            "; the page says the rest are not drawn"
        } else {
            ""
        }
    );
    if sections != findings || (findings > 500 && drawings != 500) {
        eprintln!("the page does not list every finding or draws the wrong number");
        std::process::exit(1);
    }
}
