//! Netlist parser + elaboration + analysis + checks + rendering.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let f = armature::source::SourceFile::new("f.drive", "f.drive", text.to_string());
    let r = armature::check_source(f, &armature::Options::default(), &Default::default());
    let plain = armature::report::human::Renderer::plain();
    for x in &r.findings {
        let _ = plain.render(x);
    }
});
