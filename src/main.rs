fn main() {
    let code = armature::cli::run(std::env::args().collect());
    std::process::exit(code);
}
