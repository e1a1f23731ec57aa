//! Bounded property tests: random and mutated netlists, libraries and
//! expressions go through the whole pipeline. Nothing may panic, and every
//! rejected input must come with a located diagnostic.

use armature::finding::Class;
use armature::source::SourceFile;
use armature::{Options, check_source};
use proptest::prelude::*;

const SEED_NETLIST: &str = include_str!("../samples/vent_fan.drive");

fn check_netlist(text: &str) {
    let f = SourceFile::new("p.drive", "samples/p.drive", text.to_string());
    let r = check_source(f, &Options::default(), &Default::default());
    for x in &r.findings {
        assert!(
            x.span.start() <= x.file.text.len() && x.span.end() <= x.file.text.len() + 1,
            "span out of range: {x:?}"
        );
        let _ = armature::report::human::Renderer::plain().render(x);
        let _ = armature::report::compact(x);
    }
    if r.input_error() {
        assert!(
            r.findings
                .iter()
                .any(|x| x.class == Class::Input && !x.message.is_empty())
        );
    }
}

fn mutate(base: &str, ops: &[(usize, u8, u8)]) -> String {
    let mut b = base.as_bytes().to_vec();
    for &(pos, kind, byte) in ops {
        if b.is_empty() {
            break;
        }
        let i = pos % b.len();
        match kind % 4 {
            0 => b[i] = byte,
            1 => {
                b.remove(i);
            }
            2 => b.insert(i, byte),
            _ => {
                let j = (i + (byte as usize)).min(b.len());
                let chunk: Vec<u8> = b[i..j].to_vec();
                b.splice(i..i, chunk);
            }
        }
    }
    String::from_utf8_lossy(&b).into_owned()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, .. ProptestConfig::default() })]

    #[test]
    fn mutated_netlists_never_panic(ops in proptest::collection::vec((any::<usize>(), any::<u8>(), any::<u8>()), 1..12)) {
        check_netlist(&mutate(SEED_NETLIST, &ops));
    }

    #[test]
    fn random_text_never_panics(s in "\\PC{0,300}") {
        check_netlist(&s);
    }

    #[test]
    fn random_token_soup_never_panics(toks in proptest::collection::vec(prop_oneof![
        Just("rail"), Just("ground"), Just("motor"), Just("nmos"), Just("diode"), Just("drive"), Just("pwm"),
        Just("(") , Just(")"), Just(":"), Just(","), Just("="), Just("VBAT"), Just("GND"), Just("12V"), Just("4k7"),
        Just("d: SW"), Just("g: G"), Just("s: GND"), Just("+: VBAT"), Just("-: SW"), Just("\n"), Just("\\\n"),
        Just("# armature: allow x"), Just("\""), Just("..")
    ], 0..40)) {
        check_netlist(&toks.join(" "));
    }

    #[test]
    fn random_libraries_never_panic(s in "(parts:\n  P:\n    kind: (nmos|diode|motor|x)\n    (vds_max|r|vf|bogus): [-0-9a-zA-Z.%]{0,6}\n){0,3}[\\[\\]{}:,&*! a-z\n]{0,40}") {
        let f = SourceFile::new("l.yaml", "l.yaml", s);
        match armature::model::library::load_library(&f) {
            Ok(_) => {}
            Err(errs) => prop_assert!(!errs.is_empty()),
        }
    }

    #[test]
    fn random_expressions_never_panic(s in "[a-z_()0-9 <>=!+*/.-]{0,60}|[a-z]{1,8}\\([a-z0-9]{0,6}\\)") {
        if let Ok(e) = armature::team::expr::parse(&s) {
            let _ = format!("{e:?}");
        }
    }
}
