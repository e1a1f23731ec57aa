//! Team-rule files: expression parser and type checker, through the loader.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let _ = armature::team::expr::parse(text);
    let yaml = format!(
        "rules:\n  - id: f/x\n    kinds: [nmos, diode]\n    require: {}\n    message: \"{{ref}}\"\n",
        serde_json_quote(text)
    );
    let f = armature::source::SourceFile::new("r.yaml", "r.yaml", yaml);
    let _ = armature::team::load(&f);
});

fn serde_json_quote(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            c if (c as u32) < 0x20 => out.push_str(&format!("\\x{:02x}", c as u32)),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}
