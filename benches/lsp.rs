//! The language server's re-check after a one-line edit: the generated
//! board of about 2,000 parts (PWM channels, bridges, faults: every rule
//! and analysis path), checked once to warm the server's memory of
//! solutions, then with one line changed (a gate resistor's value: its
//! group is solved again, the others are remembered). Prints the first
//! check, the re-check after the edit (best and median of 9 edits, each to
//! a new value) and the same check with no memory. `cargo bench --bench
//! lsp` (`-- 20000` for another size).

#[path = "gen.rs"]
#[allow(dead_code)]
mod generator;

use armature::model::library::LibraryCache;
use armature::source::SourceFile;
use armature::{Options, analysis, check_source};
use std::time::Instant;

fn main() {
    let parts: usize = std::env::args()
        .skip(1)
        .find_map(|a| a.parse().ok())
        .unwrap_or(2_000);
    let dir = std::path::PathBuf::from("target/bench-lsp");
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(dir.join("gen-parts.yaml"), generator::LIBRARY);
    let n = generator::channels_for(parts);
    let text = generator::netlist(n, "gen-parts.yaml");
    let path = dir.join("board.drive");
    let opts = Options::default();
    let check = |t: &str| -> (f64, usize) {
        let cache = LibraryCache::default();
        let f = SourceFile::new("board.drive", &path, t.to_string());
        let t0 = Instant::now();
        let r = check_source(f, &opts, &cache);
        (t0.elapsed().as_secs_f64() * 1e3, r.findings.len())
    };
    analysis::remember_solutions(false);
    let (cold, k0) = check(&text);
    analysis::remember_solutions(true);
    let (first, _) = check(&text);
    let mut edits = Vec::new();
    let mut k = 0;
    for i in 0..9 {
        // the gate pull-down of the first channel
        let edited = text.replacen(
            "(G0, GND) 47k\n",
            &format!("(G0, GND) {}k\n", 51 + 4 * i),
            1,
        );
        assert_ne!(edited, text, "the edit changed nothing");
        let (t, kk) = check(&edited);
        edits.push(t);
        k = kk;
    }
    edits.sort_by(f64::total_cmp);
    println!(
        "{} lines, about {parts} parts: no memory {cold:.0} ms ({k0} findings); first check {first:.0} ms; after a one-line edit best {:.1} ms, median {:.1} ms ({k} findings)",
        text.lines().count(),
        edits[0],
        edits[4]
    );
}
