//! Parts-library loader (YAML).
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let f = armature::source::SourceFile::new("l.yaml", "l.yaml", text.to_string());
    let _ = armature::model::library::load_library(&f);
});
