fn main() {
    let p = std::env::args().nth(1).unwrap();
    let cache = armature::model::library::LibraryCache::default();
    let r = armature::check_path(
        std::path::Path::new(&p),
        &armature::Options::default(),
        &cache,
    );
    let doc = armature::report::json::document(&r.findings, 1, 0, &r.settings.derating);
    let s = serde_json::to_string_pretty(&doc).unwrap();
    println!("{}", s.len());
}
