//! The parts-library reference, made from the kinds table itself: every
//! kind, its pins, and every key with its dimension, unit, meaning, what
//! applies when it is absent (and where that value comes from) and what
//! reads it. `armature explain KIND` prints one kind's page;
//! `docs/library.md` is the whole reference, and a test fails when the
//! file and this module disagree.

use super::kinds::{KeyType, Kind, PinSpec, read_by};
use crate::analysis::devices::{bjt, diode, mosfet, sources};
use crate::units::{Dimension, format_si};

/// What a part of the kind is, in a sentence.
pub fn about(kind: Kind) -> &'static str {
    match kind {
        Kind::Motor => {
            "A brushed DC motor: winding resistance, inductance and a back-EMF that grows with speed (zero at stall)."
        }
        Kind::Solenoid => "A solenoid or valve coil: resistance and inductance.",
        Kind::Relay => "A relay coil: resistance and inductance (the contacts are not modelled).",
        Kind::Inductor => "A discrete inductor.",
        Kind::Nmos => "An n-channel MOSFET, with its body diode from source to drain.",
        Kind::Pmos => {
            "A p-channel MOSFET, with its body diode from drain to source. Ratings are magnitudes; the threshold may be written with its sign."
        }
        Kind::Npn => "An NPN bipolar transistor.",
        Kind::Pnp => "A PNP bipolar transistor. Ratings are magnitudes.",
        Kind::Diode => "A rectifier, fast or Schottky diode (`type`).",
        Kind::Zener => "A Zener diode: conducts forward, and in reverse above `vz`.",
        Kind::Tvs => "A transient-voltage suppressor: clamps in reverse at `v_clamp`.",
        Kind::Resistor => "A resistor.",
        Kind::Capacitor => "A capacitor.",
        Kind::Mcu => {
            "A controller. Any pin names; a pin that a `drive` line names, or that reaches a gate or a base, is an output, high-impedance in reset and while programming."
        }
        Kind::Driver => {
            "A gate-driver IC: its output swings between `gnd` and `vdd` and is defined whenever `vdd` is powered."
        }
        Kind::Connector => "An off-board connection: passive, any pin names.",
    }
}

/// The value used when a key is absent, and its source, where the
/// analysis has one. `None`: nothing is assumed (a rating's check is then
/// skipped for the part; a model value falls back as `read_by` says).
pub fn default_of(kind: Kind, key: &str) -> Option<(String, &'static str)> {
    use Kind::*;
    let si = |v: f64, d: Dimension| format_si(v, d);
    Some(match (kind, key) {
        (Nmos | Pmos, "vgs_th") => (si(mosfet::VTH_DEFAULT, Dimension::Voltage), "[memory]"),
        (Nmos | Pmos, "rds_on_vgs") => (
            si(mosfet::RDS_ON_VGS_DEFAULT, Dimension::Voltage),
            "the usual data-sheet condition [memory]",
        ),
        (Nmos | Pmos, "rds_on") => (
            si(mosfet::RDS_ON_FALLBACK, Dimension::Resistance),
            "only so that a state solves; losses are then not checked",
        ),
        (Nmos | Pmos, "coss") => (si(mosfet::COSS_DEFAULT, Dimension::Capacitance), "[memory]"),
        (Nmos | Pmos, "qgd") => ("qg / 3".into(), "[memory]"),
        (Nmos | Pmos, "vgs_plateau") => ("vgs_th + 1 V".into(), "[memory]"),
        (Nmos | Pmos, "body_vf") => (si(diode::BODY_VF, Dimension::Voltage), "at id_max [memory]"),
        (Nmos | Pmos, "td_off") => (si(0.0, Dimension::Time), "added to tf"),
        (Npn | Pnp, "hfe_min") => (si(bjt::HFE_DEFAULT, Dimension::Number), "[memory]"),
        (Npn | Pnp, "vbe_on") => (
            si(bjt::VBE_DEFAULT, Dimension::Voltage),
            "silicon, common practice",
        ),
        (Npn | Pnp, "vce_sat") => (si(bjt::VCE_SAT_DEFAULT, Dimension::Voltage), "[memory]"),
        (Npn | Pnp, "coss") => (si(bjt::COSS_DEFAULT, Dimension::Capacitance), "[memory]"),
        (Nmos | Pmos | Npn | Pnp | Diode | Zener | Tvs, "tj_max") => (
            si(150.0, Dimension::Temperature),
            "common practice for silicon",
        ),
        (Diode | Zener | Tvs, "vf") => (
            si(diode::VF_DEFAULT, Dimension::Voltage),
            "silicon, common practice",
        ),
        (Diode | Zener | Tvs, "type") => {
            ("standard".into(), "a silicon junction with stored charge")
        }
        (Resistor, "p_max") => (
            "250 mW".into(),
            "a small resistor's rating, assumed and said so in the finding",
        ),
        (Resistor, "tol") => (si(0.0, Dimension::Number), "exact"),
        (Inductor, "r") => (
            si(sources::INDUCTOR_R_DEFAULT, Dimension::Resistance),
            "only so that the DC state solves",
        ),
        (Motor | Solenoid | Relay | Inductor, "r_tol") => (si(0.0, Dimension::Number), "exact"),
        (Mcu | Driver, "io_v") => ("the rail on its supply pin".into(), "the netlist"),
        (Mcu, "r_out") => (
            format!(
                "0.1 · io_v / io_i_max, else {}",
                si(sources::PIN_R_OUT_DEFAULT, Dimension::Resistance)
            ),
            "[memory]",
        ),
        (Driver, "r_out") => (
            format!(
                "0.1 · io_v / io_i_max, else {}",
                si(sources::DRIVER_R_OUT_DEFAULT, Dimension::Resistance)
            ),
            "[memory]",
        ),
        (Driver, "vin_th") => ("half the logic level".into(), "common practice"),
        (Driver, "invert") => ("false".into(), "non-inverting"),
        _ => return None,
    })
}

fn dim_of(ty: KeyType) -> (String, String) {
    match ty {
        KeyType::Q(d) => {
            let unit = d.unit();
            let name = d.article_name();
            let name = name
                .strip_prefix("a ")
                .or_else(|| name.strip_prefix("an "))
                .unwrap_or(name);
            (
                name.to_string(),
                if unit.is_empty() {
                    "—".to_string()
                } else {
                    unit.to_string()
                },
            )
        }
        KeyType::DeltaT => ("temperature difference".into(), "K".into()),
        KeyType::Word => ("word".into(), "—".into()),
    }
}

fn pins_line(kind: Kind) -> String {
    match kind.pins() {
        PinSpec::Fixed(list) => list
            .iter()
            .map(|(n, req)| {
                if *req {
                    format!("`{n}`")
                } else {
                    format!("`{n}` (optional)")
                }
            })
            .collect::<Vec<_>>()
            .join(", "),
        PinSpec::Any => "any names".to_string(),
    }
}

/// One kind's page: what it is, its pins, and a table of its keys.
pub fn kind_page(kind: Kind) -> String {
    let mut s = format!("## `{}`\n\n{}\n\n", kind.name(), about(kind));
    s.push_str(&format!("Pins: {}.", pins_line(kind)));
    if let Some(k) = kind.primary_key() {
        s.push_str(&format!(" A bare value after the pins sets `{k}`."));
    }
    s.push_str("\n\n");
    if kind.keys().is_empty() {
        s.push_str("No keys.\n");
        return s;
    }
    s.push_str("| key | quantity | unit | meaning | when absent | read by |\n");
    s.push_str("|---|---|---|---|---|---|\n");
    for def in kind.keys() {
        let (q, unit) = dim_of(def.ty);
        let mut meaning = def.doc.replace('|', "\\|");
        if super::is_rating(def.name) {
            meaning.push_str(" (a rating: above zero)");
        }
        let absent = match default_of(kind, def.name) {
            Some((v, src)) => format!("{v} ({src})"),
            None if super::is_rating(def.name)
                && !read_by(kind, def.name).starts_with("model")
                && !read_by(kind, def.name).starts_with("informative") =>
            {
                "not checked".to_string()
            }
            None => "—".to_string(),
        };
        s.push_str(&format!(
            "| `{}` | {q} | {unit} | {meaning} | {} | {} |\n",
            def.name,
            absent.replace('|', "\\|"),
            read_by(kind, def.name).replace('|', "\\|")
        ));
    }
    s
}

/// The whole reference, as `docs/library.md` holds it.
pub fn library_reference() -> String {
    let mut s = String::from(
        "# Parts libraries: kinds, pins and keys\n\n\
         <!-- Generated from the kinds table (src/model/kinds.rs and\n\
         src/model/reference.rs); `cargo test` fails when this file differs.\n\
         Regenerate with `ARMATURE_WRITE_DOCS=1 cargo test --lib reference`. -->\n\n\
         A parts library is a YAML file with one mapping, `parts:`, from a part\n\
         name to its `kind` and its keys. Values are written as in netlists\n\
         (`60V`, `0.045ohm`, `12nC`, `150degC`); plain numbers take the key's\n\
         unit, and only decimal numbers are accepted. A netlist line can add or\n\
         override any key for its own part (`part=DEMO-N60-3A rds_on=0.05ohm`).\n\n\
         ```yaml\nparts:\n  DEMO-N60-3A:\n    kind: nmos\n    vds_max: 60V\n    id_max: 3A\n    \
         rds_on: 0.045ohm\n    rds_on_vgs: 4.5V\n    vgs_th: 1.8V\n```\n\n\
         Ratings (every `*_max` key and the others marked so) must be above\n\
         zero and are magnitudes whatever the polarity; temperatures must be\n\
         above absolute zero. \"When absent\" gives the value the analysis uses\n\
         in place of a missing key and where that value comes from\n\
         (\"[memory]\": a typical figure, not a data sheet's; give the real one);\n\
         \"not checked\" means the rule that reads the rating skips the part.\n\
         `armature explain KIND` prints one kind's page.\n\n",
    );
    for (i, &k) in Kind::ALL.iter().enumerate() {
        if i > 0 {
            s.push('\n');
        }
        s.push_str(&kind_page(k));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    /// docs/library.md is this module's output: a change to a kind, a key
    /// or a default that is not regenerated fails here.
    #[test]
    fn the_library_reference_is_current() {
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/docs/library.md");
        let want = library_reference();
        if std::env::var_os("ARMATURE_WRITE_DOCS").is_some()
            && let Err(e) = std::fs::write(path, &want)
        {
            panic!("{e}");
        }
        let have = std::fs::read_to_string(path).unwrap_or_default();
        assert!(
            have == want,
            "docs/library.md is stale: run `ARMATURE_WRITE_DOCS=1 cargo test --lib reference`"
        );
    }

    #[test]
    fn every_kind_and_key_is_on_its_page() {
        for &k in Kind::ALL {
            let page = kind_page(k);
            for def in k.keys() {
                assert!(
                    page.contains(&format!("| `{}` |", def.name)),
                    "{}.{}",
                    k.name(),
                    def.name
                );
            }
        }
    }
}
