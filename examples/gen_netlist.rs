//! Write a generated benchmark netlist and its library:
//! `cargo run --release --example gen_netlist -- PARTS OUT_DIR`

#[path = "../benches/gen.rs"]
#[allow(dead_code)] // the bench uses the rest of the generator
mod generator;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let parts: usize = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(160_000);
    let dir = std::path::PathBuf::from(args.get(2).cloned().unwrap_or_else(|| "target/gen".into()));
    if let Err(e) = std::fs::create_dir_all(&dir) {
        eprintln!("{e}");
        std::process::exit(2);
    }
    let n = generator::channels_for(parts);
    let lib = dir.join("gen-parts.yaml");
    let net = dir.join(format!("gen-{parts}.drive"));
    let ok = std::fs::write(&lib, generator::LIBRARY).is_ok()
        && std::fs::write(&net, generator::netlist(n, "gen-parts.yaml")).is_ok();
    if !ok {
        eprintln!("cannot write to {}", dir.display());
        std::process::exit(2);
    }
    println!(
        "{} ({} channels, {} parts)",
        net.display(),
        n,
        generator::parts_for(n)
    );
}
