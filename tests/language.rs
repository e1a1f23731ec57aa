//! Every form of the `.drive` language, error positions and hostile input.

use armature::finding::Class;
use armature::source::SourceFile;
use armature::{Options, check_text, syntax};
use std::sync::Arc;

const LIB: &str = "tests/fixtures/parts.yaml";

fn file(text: &str) -> Arc<SourceFile> {
    SourceFile::from_str("t.drive", text)
}

/// The AST of a file that must parse cleanly (it borrows the file).
fn parse_ok(f: &Arc<SourceFile>) -> syntax::ast::Netlist<'_> {
    let (n, e) = syntax::parse(f);
    assert!(
        e.is_empty(),
        "{:?}",
        e.iter().map(|x| &x.message).collect::<Vec<_>>()
    );
    n
}

/// (message, line, column) of every input error.
fn errors(text: &str) -> Vec<(String, usize, usize)> {
    let r = check_text("t.drive", text, &Options::default());
    r.findings
        .iter()
        .filter(|f| f.class == Class::Input)
        .map(|f| {
            let (l, c) = f.line_col();
            (f.message.clone(), l, c)
        })
        .collect()
}

#[test]
fn every_statement_form() {
    let f = file(
        r#"design "greenhouse vent fan" rev "C"
library "parts/demo.yaml"
ambient 45degC
rail VBAT 12V max 14.4V
rail V5 5V tol 5%
rail VN -12V min -13V max -11V
ground GND
motor     M1 (+: VBAT, -: FAN_SW)  r=8.5ohm l=1.2mH i_rated=0.9A
nmos      Q1 (d: FAN_SW, g: FAN_G, s: GND)  part=DEMO-N60-3A
diode     D1 (a: FAN_SW, k: VBAT)  part=DEMO-SK40-1A
resistor  R1 (FAN_G, GND) 100k
resistor  R2 (FAN_PWM, FAN_G) 100 p_max=0.1W
capacitor C1 (VBAT, GND) 470uF v_max=25V
mcu       U1 (PA3: FAN_PWM, VDD: V5, VSS: GND)  part=DEMO-MCU-5V
drive U1.PA3 pwm 25kHz duty 0%..100%
drive U1.PA4 pwm 20kHz complement U1.PA5 deadtime 500ns
drive U1.PA6 static
"#,
    );
    let n = parse_ok(&f);
    assert_eq!(n.statements.len(), 17);
}

#[test]
fn comments_continuations_strings_and_blank_lines() {
    let f = file(
        "# a comment\n\n   design \"with \\\"quotes\\\" and \\\\\"   # trailing\nmotor M1 (+: A, \\\n   -: B) \\\n  r=1ohm\n\t\n",
    );
    let n = parse_ok(&f);
    assert_eq!(n.statements.len(), 2);
    match &n.statements[0].kind {
        syntax::ast::StatementKind::Design { name, .. } => {
            assert_eq!(name.node, "with \"quotes\" and \\")
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn identifiers_with_every_allowed_character() {
    parse_ok(&file(
        "resistor R_1-a+b/c (NET_A-1, net+b/2) 4k7\nnmos Q1 (d: A, g: B, s: C) part=2X7000\n",
    ));
}

#[test]
fn every_quantity_form_elaborates() {
    let text = format!(
        "library \"{LIB}\"\nrail VBAT 12V max 14.4V\nground GND\n\
         motor M1 (+: VBAT, -: SW) r=9Ω l=1.2mH i_rated=60mA r_tol=5%\n\
         resistor R1 (SW, GND) 4k7 p_max=1W tol=1%\n\
         resistor R2 (SW, GND) 4R7\nresistor R3 (SW, GND) 2M2\ncapacitor C1 (SW, GND) 1u5\n\
         capacitor C2 (VBAT, GND) 470µF v_max=25V\ncapacitor C3 (VBAT, GND) 470u\n\
         nmos Q1 (d: SW, g: G, s: GND) rds_on=0.12ohm qg=3nC tr=10ns rth_ja=150K/W tj_max=150°C vgs_max=20V\n\
         diode D1 (a: SW, k: VBAT) vf=0.45V trr=10ns ifsm=1e1A rth_ja=90degC/W\n\
         inductor L2 (SW, GND) 1.2mH i_sat=2A\n"
    );
    assert!(errors(&text).is_empty(), "{:?}", errors(&text));
}

#[test]
fn wrong_dimension_points_at_the_value() {
    let e = errors(
        "ground GND\nresistor R1 (A, GND) 10k\nresistor R2 (A, GND) r=1\nmotor M1 (+: A, -: GND) r=1.2mH\n",
    );
    let dim = e
        .iter()
        .find(|x| x.0.contains("expected a resistance, found an inductance"));
    assert_eq!(dim.map(|x| (x.1, x.2)), Some((4, 27)), "{e:?}");
}

#[test]
fn unknown_keys_are_errors_with_a_suggestion() {
    let r = check_text(
        "t.drive",
        "ground GND\nnmos Q1 (d: A, g: B, s: GND) vds_mx=60V\n",
        &Options::default(),
    );
    let f = r.findings.iter().find(|f| f.rule == "unknown-key");
    let Some(f) = f else { panic!("no unknown-key") };
    assert_eq!(f.line_col(), (2, 30));
    assert_eq!(f.help.as_deref(), Some("did you mean `vds_max`?"));
}

#[test]
fn syntax_errors_have_line_and_column_and_every_bad_line_is_reported() {
    let e = errors(
        "rail VBAT 12V\nmotor M1 (+: VBAT -: SW)\nground GND\nresistor R1 (A, B) 10k =\ndesign \"unterminated\n",
    );
    let pos: Vec<(usize, usize)> = e.iter().map(|x| (x.1, x.2)).collect();
    assert_eq!(pos, vec![(2, 19), (4, 24), (5, 8)], "{e:?}");
    assert!(e[0].0.starts_with("expected"), "{}", e[0].0);
}

#[test]
fn unknown_kind_has_a_suggestion() {
    let r = check_text(
        "t.drive",
        "mosfet Q1 (d: A, g: B, s: C)\n",
        &Options::default(),
    );
    assert_eq!(
        r.findings.first().and_then(|f| f.help.clone()).as_deref(),
        Some("did you mean `nmos`?")
    );
}

#[test]
fn suppression_comments_are_parsed() {
    let f = file(
        "# armature: allow switch-overheat -- duty never above 20 %\nnmos Q7 (d: A, g: B, s: C)  # armature: allow gate-floating, team/x -- bench tested\n",
    );
    let n = parse_ok(&f);
    assert_eq!(n.suppressions.len(), 2);
    assert!(n.suppressions[0].own_line);
    assert!(!n.suppressions[1].own_line);
    assert_eq!(n.suppressions[1].rules.len(), 2);
    assert_eq!(n.suppressions[1].reason.as_deref(), Some("bench tested"));
    let f = file("nmos Q7 (d: A, g: B, s: C)  # armature: allow gate-floating\n");
    let n = parse_ok(&f);
    assert_eq!(n.suppressions[0].reason, None);
}

#[test]
fn crlf_and_bom_are_accepted() {
    let text = "\u{FEFF}rail VBAT 12V\r\nground GND\r\nresistor R1 (VBAT, GND) 1k\r\n";
    assert!(errors(text).is_empty(), "{:?}", errors(text));
}

fn assert_rejected(text: &str) {
    let r = check_text("t.drive", text, &Options::default());
    assert!(
        r.input_error(),
        "accepted: {:?}",
        &text.get(..40.min(text.len()))
    );
    for f in &r.findings {
        assert!(f.span.start() <= text.len(), "span out of range");
        let _ = armature::report::human::Renderer::plain().render(f);
    }
}

#[test]
fn hostile_input_is_rejected_with_a_location_never_a_panic() {
    assert_rejected("\u{0}\u{0}\u{1}garbage\u{7f}");
    assert_rejected(&"(".repeat(100_000));
    assert_rejected(&format!("resistor R1 (A, B) {}", "9".repeat(400)));
    assert_rejected("rail VBAT 1e999V\n");
    assert_rejected("motor M1 (+: A, -: B) r=1e-400ohm\n");
    assert_rejected(&format!("design \"{}\n", "x".repeat(2_000_000)));
    assert_rejected("motor M1 (+: VBAT, -: S");
    assert_rejected("drive U9.PA3 pwm 25kHz\n");
    assert_rejected("ground GND\nground GND\n");
    assert_rejected("rail V 5V\ndrive\n");
    assert_rejected(&"resistor R1 (A, B) 1k x=\n".repeat(2000));
}

#[test]
fn non_utf8_files_are_located() {
    let bytes = b"rail VBAT 12V\n\xff\xfe bad\n".to_vec();
    let e = armature::model::library::text_from_bytes(
        bytes,
        std::path::Path::new("b.drive"),
        "b.drive",
    );
    let Err(f) = e else { panic!("accepted") };
    assert_eq!(f.line_col(), (2, 1));
}

#[test]
fn libraries_report_file_line_and_column() {
    let dir = std::env::temp_dir().join(format!("armature-lib-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let lib = dir.join("bad.yaml");
    let _ = std::fs::write(
        &lib,
        "parts:\n  P1:\n    kind: nmos\n    vds_max: 60A\n    vds_mx: 3V\n  P2:\n    kind: mosfet\n",
    );
    let net = dir.join("n.drive");
    let _ = std::fs::write(&net, "library \"bad.yaml\"\nground GND\n");
    let r = armature::check_path(&net, &Options::default(), &Default::default());
    assert!(r.input_error());
    let got: Vec<(String, usize, usize)> = r
        .findings
        .iter()
        .map(|f| {
            let (l, c) = f.line_col();
            (f.message.clone(), l, c)
        })
        .collect();
    assert!(
        got.iter()
            .any(|x| x.0.contains("expected a voltage, found a current") && x.1 == 4 && x.2 == 14),
        "{got:?}"
    );
    assert!(
        got.iter()
            .any(|x| x.0.contains("unknown key `vds_mx`") && x.1 == 5 && x.2 == 5),
        "{got:?}"
    );
    assert!(
        got.iter()
            .any(|x| x.0.contains("unknown kind `mosfet`") && x.1 == 7 && x.2 == 11),
        "{got:?}"
    );
    assert!(r.findings.iter().all(|f| f.file.name.ends_with("bad.yaml")));
}

#[test]
fn kind_mismatch_names_both_files() {
    let r = check_text(
        "t.drive",
        &format!("library \"{LIB}\"\nground GND\npmos Q1 (d: A, g: B, s: GND) part=DEMO-N60-3A\n"),
        &Options::default(),
    );
    let f = r.findings.iter().find(|f| f.rule == "kind-mismatch");
    let Some(f) = f else {
        panic!(
            "{:?}",
            r.findings.iter().map(|x| &x.message).collect::<Vec<_>>()
        )
    };
    assert!(
        f.message.contains("is a nmos in the library"),
        "{}",
        f.message
    );
    assert!(f.related[0].file.is_some());
}

#[test]
fn instance_values_override_the_library() {
    let text = format!(
        "library \"{LIB}\"\nground GND\nnmos Q1 (d: A, g: B, s: GND) part=DEMO-N60-3A rds_on=0.5ohm\nresistor R1 (A, B) 1k\n"
    );
    let f = SourceFile::from_str("t.drive", &text);
    let b = match armature::build(&f, &Options::default(), &Default::default()) {
        Ok(b) => b,
        Err(e) => panic!("{:?}", e.iter().map(|x| &x.message).collect::<Vec<_>>()),
    };
    let q = b.circuit.part(0);
    assert_eq!(q.num("rds_on"), Some(0.5));
    assert_eq!(q.num("vds_max"), Some(60.0));
}

#[test]
fn values_outside_their_meaning_are_located_errors() {
    let got = errors(
        "ambient -300degC\nrail V 12V\nground GND\n\
         resistor R1 (V, GND) 1k tol=1% tol=2%\n\
         resistor R2 (V, GND) 1k value=2k\n\
         resistor R3 (V, GND) 1k p_max=0W tol=-1%\n\
         nmos Q1 (d: V, g: GND, s: GND) vds_max=-60V id_max=3A tj_max=-274degC\n\
         diode D1 (a: GND, k: V) vrrm=-5V\n\
         pmos Q2 (d: GND, g: V, s: V) vds_max=30V vgs_th=-2V tj_max=150degC\n",
    );
    let has = |needle: &str, line: usize, col: usize| {
        assert!(
            got.iter()
                .any(|(m, l, c)| m.contains(needle) && *l == line && *c == col),
            "{needle} at {line}:{col}: {got:?}"
        );
    };
    has("below absolute zero", 1, 9);
    has("`tol` is given twice for `R1`", 4, 32);
    has("`value` is given twice for `R2`", 5, 25);
    has("`p_max`: a rating must be above zero", 6, 31);
    has("`tol`", 6, 38);
    has("`vds_max`: a rating must be above zero", 7, 40);
    has("`tj_max`: a temperature below absolute zero", 7, 62);
    has("`vrrm`: a rating must be above zero", 8, 30);
    // a p-channel threshold may carry its sign; its ratings are magnitudes
    assert!(!got.iter().any(|(_, l, _)| *l == 9), "{got:?}");
    assert_eq!(got.len(), 8, "{got:?}");
}

#[test]
fn library_values_are_decimal_positive_and_defined_once() {
    let dir = std::env::temp_dir().join(format!("armature-libval-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let _ = std::fs::write(
        dir.join("a.yaml"),
        "parts:\n  P1:\n    kind: nmos\n    vds_max: 0x3C\n    id_max: -3A\n    vgs_th: 2\n  \
         R1:\n    kind: resistor\n    p_max: 0.25W\n",
    );
    let _ = std::fs::write(
        dir.join("b.yaml"),
        "# the same part again\nparts:\n  R1:\n    kind: resistor\n    p_max: 1W\n",
    );
    let net = dir.join("n.drive");
    let _ = std::fs::write(&net, "library \"a.yaml\"\nground GND\n");
    let r = armature::check_path(&net, &Options::default(), &Default::default());
    let got: Vec<(String, usize, usize)> = r
        .findings
        .iter()
        .map(|f| (f.message.clone(), f.line_col().0, f.line_col().1))
        .collect();
    assert!(
        got.iter().any(
            |(m, l, c)| m.contains("`vds_max`: write the number in decimal")
                && m.contains("as 60")
                && *l == 4
                && *c == 14
        ),
        "{got:?}"
    );
    assert!(
        got.iter().any(
            |(m, l, c)| m.contains("`id_max`: a rating must be above zero") && *l == 5 && *c == 13
        ),
        "{got:?}"
    );
    assert_eq!(got.len(), 2, "a plain decimal `2` is fine: {got:?}");
    // two libraries defining one part: an error naming both lines
    let _ = std::fs::write(
        dir.join("a.yaml"),
        "parts:\n  R1:\n    kind: resistor\n    p_max: 0.25W\n",
    );
    let _ = std::fs::write(
        &net,
        "library \"a.yaml\"\nlibrary \"b.yaml\"\nrail V 12V\nground GND\nresistor RA (V, GND) 10k part=R1\n",
    );
    let r = armature::check_path(&net, &Options::default(), &Default::default());
    let Some(f) = r
        .findings
        .iter()
        .find(|f| f.message.contains("defined in two libraries"))
    else {
        panic!(
            "{:?}",
            r.findings.iter().map(|f| &f.message).collect::<Vec<_>>()
        )
    };
    assert!(
        f.message.contains("a.yaml:2") && f.message.contains("b.yaml:3"),
        "{}",
        f.message
    );
    assert_eq!(f.line_col(), (5, 31));
    assert_eq!(f.related.len(), 2);
    assert!(r.input_error());
}

#[test]
fn one_library_loaded_twice_defines_its_parts_once() {
    let opts = Options {
        libraries: vec![(LIB.into(), LIB.to_string())],
        ..Options::default()
    };
    let r = check_text(
        "t.drive",
        &format!(
            "library \"{LIB}\"\nrail V 12V\nground GND\nresistor R1 (V, GND) 10k\nnmos Q1 (d: V, g: GND, s: GND) part=DEMO-N60-3A\n"
        ),
        &opts,
    );
    assert!(
        !r.findings
            .iter()
            .any(|f| f.message.contains("two libraries")),
        "{:?}",
        r.findings.iter().map(|f| &f.message).collect::<Vec<_>>()
    );
}
