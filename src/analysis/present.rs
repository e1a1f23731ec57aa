//! What `armature facts` prints: every part's facts, the operating
//! points of every switch at both corners, and an edge's waveform.

use super::netlist::Corner;
use super::op::Mode;
use super::{EdgeKind, Point};
use crate::units::Dimension::*;
use crate::units::format_si;

/// A switch's operating points, with each state described.
pub fn switch_points(b: &crate::Built, pid: usize) -> Vec<(String, Point)> {
    let a = &b.analysis;
    let Some(info) = a.switches.get(&pid) else {
        return Vec::new();
    };
    let (Some(grp), Some(sol)) = (a.groups.get(info.group), a.solutions.get(info.group)) else {
        return Vec::new();
    };
    let Some(li) = grp.parts.iter().position(|&p| p == pid) else {
        return Vec::new();
    };
    let Some(ls) = sol.switch(li as u32) else {
        return Vec::new();
    };
    let mut pts = ls.points.clone();
    pts.sort_by_key(|p| (p.state, p.corner != Corner::Max));
    pts.into_iter()
        .map(|p| {
            let st = sol
                .states
                .get(p.state as usize)
                .map(|s| super::describe_state(&b.circuit, grp, s))
                .unwrap_or_default();
            (st, p)
        })
        .collect()
}

fn q(v: f64, unit: &str) -> serde_json::Value {
    serde_json::json!({"value": v, "unit": unit})
}

/// `facts --format json`.
pub fn facts_json(b: &crate::Built) -> serde_json::Value {
    let mut parts = serde_json::Map::new();
    let mut missing = serde_json::Map::new();
    let c = &b.circuit;
    for (i, p) in c.parts.iter().enumerate() {
        let mut m = serde_json::Map::new();
        if let Some(pf) = b.analysis.facts.parts.get(i) {
            for f in &pf.facts {
                m.insert(
                    f.name.to_string(),
                    serde_json::json!({"value": f.value, "unit": f.dim.json_unit()}),
                );
            }
            for pin in &p.pins {
                if let Some(v) = b.analysis.net_vmax.get(pin.net).copied().flatten() {
                    m.insert(
                        format!("v_max({})", pin.name),
                        serde_json::json!({"value": v, "unit": "V"}),
                    );
                }
                if let Some(v) = b.analysis.net_vmin.get(pin.net).copied().flatten() {
                    m.insert(
                        format!("v_min({})", pin.name),
                        serde_json::json!({"value": v, "unit": "V"}),
                    );
                }
            }
            if !pf.missing.is_empty() {
                let miss: serde_json::Map<String, serde_json::Value> = pf
                    .missing
                    .iter()
                    .map(|x| {
                        (
                            x.name.to_string(),
                            serde_json::Value::String(x.reason.to_string()),
                        )
                    })
                    .collect();
                missing.insert(p.reference.clone(), serde_json::Value::Object(miss));
            }
        }
        parts.insert(p.reference.clone(), serde_json::Value::Object(m));
    }
    let mut states = serde_json::Map::new();
    for (i, p) in c.parts.iter().enumerate() {
        let pts = switch_points(b, i);
        if pts.is_empty() {
            continue;
        }
        let rows: Vec<serde_json::Value> = pts
            .iter()
            .map(|(st, pt)| {
                serde_json::json!({
                    "state": st,
                    "index": pt.state,
                    "corner": pt.corner.name(),
                    "region": pt.region.name(),
                    "v_gs": q(pt.v_gs, "V"),
                    "v_ds": q(pt.v_ds, "V"),
                    "i_d": q(pt.i_d, "A"),
                })
            })
            .collect();
        states.insert(p.reference.clone(), serde_json::Value::Array(rows));
    }
    serde_json::json!({
        "file": c.file.name,
        // per switch: its operating point in every pin state at both
        // corners (device polarity: positive when it conducts normally)
        "states": states,
        "ambient": {"value": b.settings.ambient, "unit": "degC"},
        "derating": crate::report::json::derating(&b.settings.derating),
        "parts": parts,
        // facts that could not be computed, with the reason, per part
        "missing": missing,
    })
}

/// `facts` for people.
pub fn facts_human(b: &crate::Built) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{} (ambient {})",
        b.circuit.file.name,
        crate::units::format_si(b.settings.ambient, Temperature)
    );
    for (i, p) in b.circuit.parts.iter().enumerate() {
        let Some(pf) = b.analysis.facts.parts.get(i) else {
            continue;
        };
        if pf.facts.is_empty() && pf.missing.is_empty() {
            continue;
        }
        let _ = writeln!(
            s,
            "\n{} ({}, {})",
            p.reference,
            p.kind.name(),
            p.part_label()
        );
        for f in &pf.facts {
            let _ = write!(
                s,
                "  {:<10} {:>10}",
                f.name,
                crate::units::format_si(f.value, f.dim)
            );
            if let Some(n) = &f.note {
                let _ = write!(s, "   {n}");
            }
            let _ = writeln!(s);
        }
        for m in &pf.missing {
            let _ = writeln!(s, "  {:<10} {:>10}   {}", m.name, "—", m.reason);
        }
        let pts = switch_points(b, i);
        if !pts.is_empty() {
            let _ = writeln!(
                s,
                "  operating points (device polarity; `export spice --part {} --state #` writes one):",
                p.reference
            );
            let _ = writeln!(
                s,
                "    {:<3} {:<7} {:<8} {:>9} {:>9} {:>10}   pins",
                "#", "corner", "region", "V_GS", "V_DS", "I_D"
            );
            for (st, pt) in pts {
                let _ = writeln!(
                    s,
                    "    {:<3} {:<7} {:<8} {:>9} {:>9} {:>10}   {st}",
                    pt.state,
                    pt.corner.name(),
                    pt.region.name(),
                    format_si(pt.v_gs, Voltage),
                    format_si(pt.v_ds, Voltage),
                    format_si(pt.i_d, Current)
                );
            }
        }
    }
    s
}

/// Which edge `facts --wave` prints.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum WaveEdge {
    Off,
    On,
}

/// The simulated waveform of a switch's edge: the turn-off with the load
/// stalled (the one `v_peak` comes from), or the turn-on of the loss
/// edge (motors running).
pub fn wave(b: &crate::Built, pid: usize, edge: WaveEdge) -> Result<&super::edges::Wave, String> {
    let a = &b.analysis;
    let name = &b.circuit.part(pid).reference;
    let pick = |mode: Mode| {
        a.turnoffs
            .iter()
            .find(|t| t.switch == pid && t.kind == EdgeKind::Toggle && t.mode == mode)
    };
    let t = match edge {
        WaveEdge::Off => pick(Mode::Stall),
        WaveEdge::On => pick(Mode::Run).or_else(|| pick(Mode::Stall)),
    }
    .ok_or_else(|| {
        format!("`{name}` has no simulated edge: it carries no load current that a pin switches")
    })?;
    let er = a
        .solutions
        .get(t.group)
        .and_then(|s| s.edges.get(t.edge))
        .ok_or("no edge")?;
    let w = match edge {
        WaveEdge::Off => &er.res.wave_off,
        WaveEdge::On => &er.res.wave_on,
    };
    if w.t.is_empty() {
        return Err(format!(
            "`{name}` has no simulated turn-on: its drive is static (the turn-on is simulated for PWM)"
        ));
    }
    Ok(w)
}

/// A waveform as CSV: one row per accepted time step.
pub fn wave_csv(w: &super::edges::Wave) -> String {
    use std::fmt::Write;
    let mut s = String::from("t_s,v_ds_V,v_gs_V,i_d_A,i_load_A,i_clamp_A\n");
    for i in 0..w.t.len() {
        let g = |v: &[f64]| v.get(i).copied().unwrap_or(0.0);
        let _ = writeln!(
            s,
            "{:.9e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e}",
            g(&w.t),
            g(&w.vds),
            g(&w.vgs),
            g(&w.id),
            g(&w.il),
            g(&w.iclamp)
        );
    }
    s
}

/// A waveform as JSON: arrays of values in base SI units.
pub fn wave_json(name: &str, edge: WaveEdge, w: &super::edges::Wave) -> serde_json::Value {
    serde_json::json!({
        "part": name,
        "edge": if edge == WaveEdge::Off { "off" } else { "on" },
        "units": {"t": "s", "v_ds": "V", "v_gs": "V", "i_d": "A", "i_load": "A", "i_clamp": "A"},
        "t": w.t, "v_ds": w.vds, "v_gs": w.vgs, "i_d": w.id, "i_load": w.il, "i_clamp": w.iclamp,
    })
}
