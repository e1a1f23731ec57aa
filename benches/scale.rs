//! Scale benchmark: generated netlists of 16k, 160k and 1.6M parts.
//! Reports the time of each pipeline stage, the total of
//! `armature check --format json` (a release build, as a child process,
//! with its peak memory), and the ratio to a plain read-and-count-lines
//! pass over the same file. Run with `cargo bench --bench scale`
//! (`-- 16000 160000` to choose the sizes; `--team 1000` adds 1,000 team
//! rules; `--render 10000` times rendering of 10,000 findings).

// The same allocator as the binary, so that stage times are what users get.
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

#[path = "gen.rs"]
#[allow(dead_code)] // the example uses the rest of the generator
mod generator;

use armature::model::library::LibraryCache;
use armature::source::SourceFile;
use armature::{Options, analysis, checks, graph, model, syntax};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::Instant;

fn ms(t: Instant) -> f64 {
    t.elapsed().as_secs_f64() * 1e3
}

/// Resident memory of this process now, in MiB (Linux; 0 elsewhere).
fn rss_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines().find(|l| l.starts_with("VmRSS:")).and_then(|l| {
                l.split_whitespace()
                    .nth(1)
                    .and_then(|v| v.parse::<f64>().ok())
            })
        })
        .map(|kib| kib / 1024.0)
        .unwrap_or(0.0)
}

fn peak_rss_child_kib() -> i64 {
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

fn stages(path: &Path, team: &[Arc<armature::team::TeamRule>]) {
    let text = std::fs::read_to_string(path).unwrap_or_default();
    let t0 = Instant::now();
    let lines = text.lines().count();
    let floor = ms(t0);
    let file = SourceFile::new(path.to_string_lossy(), path, text);
    let t = Instant::now();
    let (ast, errs) = syntax::parse(&file);
    let t_parse = ms(t);
    let m_parse = rss_mib();
    let cache = LibraryCache::default();
    let lib_path = path.with_file_name("gen-parts.yaml");
    let lib = cache.load(&lib_path, "gen-parts.yaml").ok();
    let t = Instant::now();
    let libs: Vec<_> = lib.into_iter().collect();
    let (circuit, e2) = model::elaborate(&file, &ast, &libs);
    let t_elab = ms(t);
    // as `armature check` does: the circuit owns what it needs
    drop(ast);
    let m_elab = rss_mib();
    let t = Instant::now();
    let g = graph::CircuitGraph::build(&circuit);
    let t_graph = ms(t);
    let settings = armature::settings::Settings::default();
    let t = Instant::now();
    let a = analysis::analyze(&circuit, &g, &settings);
    let t_an = ms(t);
    let m_an = rss_mib();
    let ctx = checks::Ctx {
        circuit: &circuit,
        graph: &g,
        analysis: &a,
        settings: &settings,
    };
    // the checks as the CLI runs them (side by side), then each rule
    // alone to name the slowest
    let t = Instant::now();
    let mut findings = checks::run_all(&ctx);
    let t_checks = ms(t);
    let mut slowest = (0.0f64, "");
    for r in checks::registry() {
        let tr = Instant::now();
        let _ = (r.check)(&ctx);
        let d = ms(tr);
        if d > slowest.0 {
            slowest = (d, r.meta.id);
        }
    }
    println!(
        "  resident memory after parse {m_parse:.0} MiB, elaborate {m_elab:.0} MiB, analysis {m_an:.0} MiB, checks {:.0} MiB",
        rss_mib()
    );
    println!("  slowest rule: {} {:.0} ms", slowest.1, slowest.0);
    let t = Instant::now();
    findings.extend(armature::team::run(team, &circuit, &a, &settings));
    let t_team = ms(t);
    let t = Instant::now();
    let doc = armature::report::json::document(&findings, 1, 0, &settings.derating);
    let json = serde_json::to_string_pretty(&doc).unwrap_or_default();
    let t_render = ms(t);
    println!(
        "  {} parts, {} lines ({} input errors): parse {:.0} ms, elaborate {:.0} ms, graph {:.0} ms, analysis {:.0} ms, checks {:.0} ms{}, render {:.0} ms ({} findings, {} bytes); read+count-lines floor {:.1} ms",
        circuit.parts.len(),
        lines,
        errs.len() + e2.len(),
        t_parse,
        t_elab,
        t_graph,
        t_an,
        t_checks,
        if team.is_empty() {
            String::new()
        } else {
            format!(", {} team rules {:.0} ms", team.len(), t_team)
        },
        t_render,
        findings.len(),
        json.len(),
        floor
    );
    // last (its memory would count in the figures above): the same
    // analysis solving every group apart (no reuse of identical groups),
    // on boards small enough for it to finish in a minute
    if circuit.parts.len() <= 200_000 {
        let t = Instant::now();
        let apart = analysis::analyze_with(&circuit, &g, &settings, false);
        println!(
            "  analysis with reuse {t_an:.0} ms ({} of {} groups solved); without reuse {:.0} ms ({} solved)",
            a.distinct_groups,
            a.groups.len(),
            ms(t),
            apart.distinct_groups
        );
    }
}

/// A 200-part board against `armature --version` (the process start,
/// the allocator and the argument parser): best and median of 21 runs
/// each, interleaved.
fn small_board(exe: &Path, dir: &Path) {
    let n = generator::channels_for(200);
    let path = dir.join("gen-200.drive");
    let text = generator::netlist(n, "gen-parts.yaml");
    let parts = generator::count_parts(&text);
    let _ = std::fs::write(&path, text);
    let (mut check, mut version) = (Vec::new(), Vec::new());
    for _ in 0..21 {
        let t = Instant::now();
        let _ = std::process::Command::new(exe)
            .args(["check", path.to_str().unwrap_or(""), "--format", "json"])
            .output();
        check.push(ms(t));
        let t = Instant::now();
        let _ = std::process::Command::new(exe).arg("--version").output();
        version.push(ms(t));
    }
    check.sort_by(f64::total_cmp);
    version.sort_by(f64::total_cmp);
    println!(
        "{parts}-part board ({n} channels): check best {:.1} ms, median {:.1} ms; --version best {:.1} ms, median {:.1} ms; above --version {:.1} ms (best), {:.1} ms (median)",
        check[0],
        check[10],
        version[0],
        version[10],
        check[0] - version[0],
        check[10] - version[10]
    );
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let mut sizes: Vec<usize> = Vec::new();
    let mut team_n = 0usize;
    let mut render_n = 0usize;
    let mut it = args.iter();
    while let Some(a) = it.next() {
        match a.as_str() {
            "--team" => team_n = it.next().and_then(|x| x.parse().ok()).unwrap_or(1000),
            "--render" => render_n = it.next().and_then(|x| x.parse().ok()).unwrap_or(10_000),
            x => {
                if let Ok(n) = x.parse() {
                    sizes.push(n)
                }
            }
        }
    }
    if sizes.is_empty() && render_n == 0 {
        sizes = vec![16_000, 160_000, 1_600_000];
    }
    let dir = PathBuf::from("target/bench-gen");
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(dir.join("gen-parts.yaml"), generator::LIBRARY);
    let team: Vec<Arc<armature::team::TeamRule>> = if team_n > 0 {
        let f = SourceFile::new(
            "gen-rules.yaml",
            dir.join("gen-rules.yaml"),
            generator::team_rules(team_n),
        );
        armature::team::load(&f)
            .unwrap_or_default()
            .into_iter()
            .map(Arc::new)
            .collect()
    } else {
        Vec::new()
    };
    let exe = PathBuf::from(env!("CARGO_BIN_EXE_armature"));
    for &parts in &sizes {
        let n = generator::channels_for(parts);
        let path = dir.join(format!("gen-{parts}.drive"));
        let _ = std::fs::write(&path, generator::netlist(n, "gen-parts.yaml"));
        let bytes = std::fs::metadata(&path).map(|m| m.len()).unwrap_or(0);
        println!(
            "{parts} parts requested ({n} channels, {:.1} MB):",
            bytes as f64 / 1e6
        );
        // the whole command, as a user runs it: five runs, best and median
        // (single runs on a shared VM spread widely)
        let mut runs: Vec<f64> = Vec::new();
        let mut peak_kib = 0i64;
        // GNU time, where there is one, reports the child's own peak
        // resident set (getrusage's figure for children can include this
        // process's memory at the fork)
        let gnu_time = Path::new("/usr/bin/time").exists();
        for _ in 0..5 {
            let mut cmd = if gnu_time {
                let mut c = std::process::Command::new("/usr/bin/time");
                c.args(["-f", "%M"]).arg(&exe);
                c
            } else {
                std::process::Command::new(&exe)
            };
            cmd.args(["check", path.to_str().unwrap_or(""), "--format", "json"]);
            let t = Instant::now();
            let Ok(out) = cmd.output() else { continue };
            runs.push(ms(t));
            let kib = if gnu_time {
                String::from_utf8_lossy(&out.stderr)
                    .lines()
                    .last()
                    .and_then(|l| l.trim().parse::<i64>().ok())
                    .unwrap_or(-1)
            } else {
                peak_rss_child_kib()
            };
            peak_kib = peak_kib.max(kib);
        }
        runs.sort_by(f64::total_cmp);
        let best = runs.first().copied().unwrap_or(f64::NAN);
        let median = runs.get(runs.len() / 2).copied().unwrap_or(f64::NAN);
        // the floor: read the file and count its lines, best of three
        let mut floor = f64::MAX;
        let mut lines = 0;
        for _ in 0..3 {
            let t = Instant::now();
            let text = std::fs::read_to_string(&path).unwrap_or_default();
            lines = text.lines().count();
            floor = floor.min(ms(t));
        }
        println!(
            "  armature check --format json: best {best:.0} ms, median {median:.0} ms of {} runs; its peak resident memory {:.0} MiB; floor (read + count {lines} lines) {floor:.1} ms; ratio {:.0}× (best)",
            runs.len(),
            peak_kib as f64 / 1024.0,
            best / floor.max(0.001)
        );
        stages(&path, &team);
    }
    if sizes.contains(&200) || (render_n == 0 && args.is_empty()) {
        small_board(&exe, &dir);
    }
    if render_n > 0 {
        // one big file with `render_n` findings: single-pin nets
        let mut s = String::from("ground GND\n");
        for i in 0..render_n {
            s.push_str(&format!(
                "resistor R{i} (LONELY_{i}, GND) 10k   # {}\n",
                "x".repeat(760)
            ));
        }
        let f = SourceFile::new("render.drive", "render.drive", s);
        let r = armature::check_source(f.clone(), &Options::default(), &LibraryCache::default());
        let rend = armature::report::human::Renderer::plain();
        let t = Instant::now();
        let mut total = 0usize;
        for x in &r.findings {
            total += rend.render(x).len();
        }
        println!(
            "render: {} findings from a {:.1} MB file in {:.0} ms ({} bytes of output)",
            r.findings.len(),
            f.text.len() as f64 / 1e6,
            ms(t),
            total
        );
    }
}
