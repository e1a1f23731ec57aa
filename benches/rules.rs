//! Per-rule scaling: each built-in rule run alone on generated boards of
//! 2,000 and 20,000 channels (the generator of `benches/scale.rs`), with
//! the ×10 time ratio per rule (goal: at most 11) and the findings each
//! rule gives at each size. A rule with no finding on the board may skip
//! its costly path: such rows are marked, so that a cheap-looking rule
//! is not mistaken for a linear one. Also times the analysis itself.
//!
//! Run with `cargo bench --bench rules` (`-- 1000 10000` for other sizes).
//! Each rule's time is the best of three runs.

#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

#[path = "gen.rs"]
#[allow(dead_code)]
mod generator;

use armature::model::library::LibraryCache;
use armature::source::SourceFile;
use armature::{analysis, checks, graph, model, syntax};
use std::time::Instant;

struct Sized {
    parts: usize,
    analysis_ms: f64,
    /// (rule id, best ms, findings)
    rules: Vec<(&'static str, f64, usize)>,
}

fn measure(channels: usize, dir: &std::path::Path) -> Sized {
    let lib = dir.join("gen-parts.yaml");
    let _ = std::fs::write(&lib, generator::LIBRARY);
    let text = generator::netlist(channels, "gen-parts.yaml");
    let path = dir.join(format!("rules-{channels}.drive"));
    let file = SourceFile::new(path.to_string_lossy(), &path, text);
    let (ast, _) = syntax::parse(&file);
    let cache = LibraryCache::default();
    let libs: Vec<_> = cache
        .load(&lib, "gen-parts.yaml")
        .ok()
        .into_iter()
        .collect();
    let (circuit, _) = model::elaborate(&file, &ast, &libs);
    drop(ast);
    let g = graph::CircuitGraph::build(&circuit);
    let settings = armature::settings::Settings::default();
    let t = Instant::now();
    let a = analysis::analyze(&circuit, &g, &settings);
    let analysis_ms = t.elapsed().as_secs_f64() * 1e3;
    let ctx = checks::Ctx {
        circuit: &circuit,
        graph: &g,
        analysis: &a,
        settings: &settings,
    };
    let mut rules = Vec::new();
    for r in checks::registry() {
        let mut best = f64::INFINITY;
        let mut n = 0;
        for _ in 0..3 {
            let t = Instant::now();
            let f = (r.check)(&ctx);
            best = best.min(t.elapsed().as_secs_f64() * 1e3);
            n = f.len();
        }
        rules.push((r.meta.id, best, n));
    }
    Sized {
        parts: circuit.parts.len(),
        analysis_ms,
        rules,
    }
}

fn main() {
    let sizes: Vec<usize> = std::env::args()
        .skip(1)
        .filter_map(|a| a.parse().ok())
        .collect();
    let (small, large) = match sizes.as_slice() {
        [a, b, ..] => (*a, *b),
        _ => (2_000, 20_000),
    };
    let dir = std::env::temp_dir().join(format!("armature-rules-bench-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let s = measure(small, &dir);
    let l = measure(large, &dir);
    let _ = std::fs::remove_dir_all(&dir);
    println!(
        "{} channels ({} parts) and {} channels ({} parts); ratio = time at the large size / time at the small",
        small, s.parts, large, l.parts
    );
    println!(
        "{:<28} {:>10} {:>10} {:>7} {:>9} {:>9}",
        "rule", "small ms", "large ms", "ratio", "findings", "findings"
    );
    let mut worst = (0.0f64, "");
    for ((id, ts, ns), (_, tl, nl)) in s.rules.iter().zip(&l.rules) {
        // below 0.05 ms a ratio is timer noise
        let ratio = if *ts > 0.05 { tl / ts } else { f64::NAN };
        if ratio.is_finite() && ratio > worst.0 {
            worst = (ratio, id);
        }
        println!(
            "{:<28} {:>10.3} {:>10.3} {:>7.1} {:>9} {:>9}{}",
            id,
            ts,
            tl,
            ratio,
            ns,
            nl,
            if *nl == 0 {
                "  (no finding: its fault path is not exercised)"
            } else {
                ""
            }
        );
    }
    println!(
        "{:<28} {:>10.1} {:>10.1} {:>7.1}",
        "(analysis)",
        s.analysis_ms,
        l.analysis_ms,
        l.analysis_ms / s.analysis_ms
    );
    println!(
        "largest rule ratio: {} ×{:.1} (goal ≤ 11)",
        worst.1, worst.0
    );
}
