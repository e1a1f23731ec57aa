//! The parse alone: the 160k-part benchmark board (`benches/gen.rs`)
//! through `syntax::parse` (the logical-line reader, the pest grammar and
//! the lowering to the syntax tree, on every core), five runs; prints the
//! best and median time and the throughput in MB/s of netlist text.
//! `cargo bench --bench parse` (`-- 16000` for another size).

#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

#[path = "gen.rs"]
#[allow(dead_code)]
mod generator;

use armature::source::SourceFile;
use armature::syntax;
use std::time::Instant;

fn main() {
    let parts: usize = std::env::args()
        .skip(1)
        .find_map(|a| a.parse().ok())
        .unwrap_or(160_000);
    let n = generator::channels_for(parts);
    let text = generator::netlist(n, "gen-parts.yaml");
    let mb = text.len() as f64 / 1e6;
    let lines = text.lines().count();
    let file = SourceFile::new("board.drive", std::path::Path::new("board.drive"), text);
    let mut times = Vec::new();
    let mut statements = 0;
    for _ in 0..5 {
        let t = Instant::now();
        let (ast, errs) = syntax::parse(&file);
        times.push(t.elapsed().as_secs_f64());
        statements = ast.statements.len();
        assert!(errs.is_empty(), "the board does not parse");
        drop(ast);
    }
    times.sort_by(f64::total_cmp);
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    println!(
        "{mb:.1} MB, {lines} lines, {statements} statements: parse best {:.0} ms ({:.1} MB/s), median {:.0} ms ({:.1} MB/s), {threads} threads",
        times[0] * 1e3,
        mb / times[0],
        times[2] * 1e3,
        mb / times[2]
    );
}
