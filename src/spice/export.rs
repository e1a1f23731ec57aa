//! A whole board as a SPICE netlist, with the mapping that reads it back
//! (`armature export spice --board`): the netlist a schematic tool would
//! export for the same circuit, so that the SPICE front end can be checked
//! against the `.drive` one on every board.

use crate::model::kinds::Kind;
use crate::model::{Circuit, NetKind, Origin, Part};
use std::fmt::Write as _;

/// The SPICE netlist and its mapping (YAML text).
pub struct Board {
    pub netlist: String,
    pub mapping: String,
}

/// A designator as a SPICE element name: the element letter in front
/// when the designator does not start with it.
fn element(letter: char, reference: &str) -> String {
    if reference
        .chars()
        .next()
        .is_some_and(|c| c.eq_ignore_ascii_case(&letter))
    {
        reference.to_string()
    } else {
        format!("{letter}{reference}")
    }
}

fn yaml_str(s: &str) -> String {
    let plain = !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.' | '+' | '/'))
        && !matches!(s, "true" | "false" | "null" | "yes" | "no" | "on" | "off");
    if plain && !s.starts_with(|c: char| c.is_ascii_digit() || c == '-' || c == '.') {
        s.to_string()
    } else {
        format!("\"{}\"", s.replace('\\', "\\\\").replace('"', "\\\""))
    }
}

/// The instance parameters of a part as written in the netlist (`v_max:
/// 25V`), without the primary value and the winding's `r` and `l` when the
/// elements carry them.
fn inline(c: &Circuit, p: &Part, skip: &[&str]) -> Vec<(String, String)> {
    p.inst
        .iter()
        .filter(|q| q.origin == Origin::Instance && !skip.contains(&q.key))
        .map(|q| {
            let t = c.file.slice(q.span);
            let v = t.split_once('=').map_or(t, |(_, v)| v).trim();
            (q.key.to_string(), yaml_str(v.trim_matches('"')))
        })
        .collect()
}

use super::num;

/// Write the board. Library paths in the mapping are the netlist's
/// `library` lines, relative to the same folder.
pub fn board(c: &Circuit) -> Board {
    let mut n = String::new();
    let mut m = String::new();
    let title = c.design.clone().unwrap_or_else(|| c.file.name.clone());
    let _ = writeln!(n, "{}", title.replace('\n', " "));
    let _ = writeln!(
        n,
        "* {} as SPICE, written by `armature export spice --board`",
        c.file.name
    );
    let _ = writeln!(m, "# The mapping of the SPICE export of {}.", c.file.name);
    if !c.library_lines.is_empty() {
        let libs: Vec<String> = c.library_lines.iter().map(|(p, _)| yaml_str(p)).collect();
        let _ = writeln!(m, "libraries: [{}]", libs.join(", "));
    }
    let _ = writeln!(m, "strip_letter: true");
    if let Some((t, _)) = c.ambient {
        let _ = writeln!(m, "ambient: {}degC", num(t));
    }
    let grounds: Vec<String> = c
        .nets
        .iter()
        .filter(|x| matches!(x.kind, NetKind::Ground))
        .map(|x| yaml_str(&x.name))
        .collect();
    let _ = writeln!(m, "ground: [{}]", grounds.join(", "));
    let ground = c
        .nets
        .iter()
        .find(|x| matches!(x.kind, NetKind::Ground))
        .map_or("0".to_string(), |x| x.name.clone());
    let _ = writeln!(m, "rails:");
    for net in &c.nets {
        if let NetKind::Rail(r) = &net.kind {
            let _ = writeln!(
                n,
                "V_{} {} {ground} DC {}",
                net.name,
                net.name,
                num(r.nominal)
            );
            let _ = writeln!(
                m,
                "  {}: {{max: {}V, min: {}V}}",
                yaml_str(&net.name),
                num(r.max),
                num(r.min)
            );
        }
    }
    let mut models: Vec<(String, &'static str)> = Vec::new();
    let mut instances = String::new();
    let mut loads = String::new();
    for p in &c.parts {
        // the pins in the order written, with those the kind does not
        // have (their net read from the `pin: NET` text)
        let mut written: Vec<(usize, String, String)> = p
            .pins
            .iter()
            .map(|pin| {
                let net = c.nets.get(pin.net).map_or("0", |x| x.name.as_str());
                (pin.span.start(), pin.name.to_string(), net.to_string())
            })
            .collect();
        for (name, span) in &p.unknown_pins {
            let rest = c.file.text.get(span.start()..).unwrap_or("");
            let t = rest.split([',', ')', '\n']).next().unwrap_or("");
            if let Some((_, net)) = t.split_once(':') {
                written.push((span.start(), name.clone(), net.trim().to_string()));
            }
        }
        written.sort_by_key(|w| w.0);
        let nets: Vec<&str> = written.iter().map(|w| w.2.as_str()).collect();
        let pin_net = |name: &str| -> &str {
            p.pins
                .iter()
                .find(|pin| pin.name == name)
                .and_then(|pin| c.nets.get(pin.net))
                .map_or("0", |x| x.name.as_str())
        };
        let pins_in_order: Vec<String> = written.iter().map(|w| yaml_str(&w.1)).collect();
        let part_key = p
            .part_name
            .as_ref()
            .map(|x| format!(", part: {}", yaml_str(x)))
            .unwrap_or_default();
        let params = |skip: &[&str]| -> String {
            inline(c, p, skip)
                .iter()
                .map(|(k, v)| format!(", {k}: {v}"))
                .collect()
        };
        match p.kind {
            Kind::Resistor | Kind::Capacitor | Kind::Inductor => {
                let letter = match p.kind {
                    Kind::Resistor => 'R',
                    Kind::Capacitor => 'C',
                    _ => 'L',
                };
                let name = element(letter, &p.reference);
                let value = p.num("value").unwrap_or(0.0);
                let _ = writeln!(n, "{name} {} {}", nets.join(" "), num(value));
                let extra = params(&["value"]);
                let named = written.iter().map(|w| w.1.as_str()).collect::<Vec<_>>() != ["1", "2"];
                if !extra.is_empty() || p.part_name.is_some() || named {
                    let _ = writeln!(
                        instances,
                        "  {name}: {{kind: {}{part_key}, pins: [{}]{extra}}}",
                        p.kind.name(),
                        pins_in_order.join(", ")
                    );
                }
            }
            Kind::Motor | Kind::Solenoid | Kind::Relay => {
                let (lname, rname) = (element('L', &p.reference), element('R', &p.reference));
                let w = format!("{}_winding", p.reference);
                let l = p.num("l").unwrap_or(1e-3);
                let r = p.num("r").unwrap_or(1.0);
                let _ = writeln!(n, "{lname} {} {w} {}", pin_net("+"), num(l));
                let _ = writeln!(n, "{rname} {w} {} {}", pin_net("-"), num(r));
                let _ = writeln!(
                    loads,
                    "  {}: {{kind: {}, elements: [{lname}, {rname}]{part_key}{}}}",
                    yaml_str(&p.reference),
                    p.kind.name(),
                    params(&["r", "l"])
                );
            }
            Kind::Nmos
            | Kind::Pmos
            | Kind::Npn
            | Kind::Pnp
            | Kind::Diode
            | Kind::Zener
            | Kind::Tvs => {
                let (letter, pins, mtype): (char, &[&str], &'static str) = match p.kind {
                    Kind::Nmos => ('M', &["d", "g", "s"], "NMOS"),
                    Kind::Pmos => ('M', &["d", "g", "s"], "PMOS"),
                    Kind::Npn => ('Q', &["c", "b", "e"], "NPN"),
                    Kind::Pnp => ('Q', &["c", "b", "e"], "PNP"),
                    _ => ('D', &["a", "k"], "D"),
                };
                let name = element(letter, &p.reference);
                let mut nodes: Vec<&str> = pins.iter().map(|x| pin_net(x)).collect();
                if letter == 'M' {
                    // the body, tied to the source
                    nodes.push(pin_net("s"));
                }
                let model = p.part_name.as_ref().map_or_else(
                    || format!("{}_{}", p.kind.name(), p.reference),
                    |x| x.to_string(),
                );
                let _ = writeln!(n, "{name} {} {model}", nodes.join(" "));
                if !models.iter().any(|(x, _)| *x == model) {
                    models.push((model.clone(), mtype));
                }
                let extra = params(&[]);
                let listed: Vec<&str> = p.pins.iter().map(|x| x.name.as_ref()).collect();
                if !extra.is_empty() || p.part_name.is_none() || listed != pins {
                    let _ = writeln!(
                        instances,
                        "  {name}: {{kind: {}{part_key}, pins: [{}]{extra}}}",
                        p.kind.name(),
                        pins.join(", ")
                    );
                }
            }
            Kind::Mcu | Kind::Driver | Kind::Connector => {
                let name = element('X', &p.reference);
                let sub = p
                    .part_name
                    .as_ref()
                    .map_or_else(|| p.kind.name().to_ascii_uppercase(), |x| x.to_string());
                let _ = writeln!(n, "{name} {} {sub}", nets.join(" "));
                let _ = writeln!(
                    instances,
                    "  {name}: {{kind: {}{part_key}, pins: [{}]{}}}",
                    p.kind.name(),
                    pins_in_order.join(", "),
                    params(&[])
                );
            }
        }
    }
    for (model, t) in &models {
        let _ = writeln!(n, ".model {model} {t}");
    }
    let _ = writeln!(n, ".end");
    if !instances.is_empty() {
        let _ = writeln!(m, "instances:\n{instances}");
    }
    if !loads.is_empty() {
        let _ = writeln!(m, "loads:\n{loads}");
    }
    if !c.drives.is_empty() {
        let _ = writeln!(m, "drive:");
        for d in &c.drives {
            let t = c.file.slice(d.span).trim();
            let t = t.strip_prefix("drive").unwrap_or(t).trim();
            let t = t.split(" #").next().unwrap_or(t).trim();
            let _ = writeln!(m, "  - {}", yaml_str(t));
        }
    }
    Board {
        netlist: n,
        mapping: m,
    }
}
