//! SPICE reader + mapping defaults + lowering + the whole check +
//! rendering. The file is in a scratch folder of its own, so `.include`
//! lines find nothing (or the file itself: a loop).
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let f = armature::source::SourceFile::new("f.cir", "/nonexistent/fuzz/f.cir", text.to_string());
    let r = armature::spice::check_source(f, &armature::Options::default(), &Default::default());
    let plain = armature::report::human::Renderer::plain();
    for x in &r.findings {
        let _ = plain.render(x);
    }
});
