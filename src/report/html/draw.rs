//! The sub-circuit of a finding as an SVG schematic, laid out from the
//! circuit graph.
//!
//! Layout: every net is a horizontal line at its own height, ordered by its
//! highest DC voltage: rails on top, ground at the bottom, so that current
//! flows downward. Each part stands in a column between the nets of its
//! pins (a switch between its drain and source, its gate lead to the left);
//! columns are filled left to right in the order controller, gate network,
//! switch, load, freewheel path, others, a part taking the first column
//! from its preferred one whose parts it does not overlap in height (so a
//! load stands above its low-side switch). Symbols follow the IEC 60617
//! forms (resistor as a rectangle, coils as arcs, motor as a circle with
//! M), the transistors the IEEE 315 forms.

use super::esc;
use super::scene::{Scene, ScenePart};
use crate::model::Kind;
use std::fmt::Write;

const LEVEL: f64 = 64.0;
const COL: f64 = 118.0;
const LEFT: f64 = 130.0;
const TOP: f64 = 34.0;

/// Colours (Okabe–Ito: distinguishable with the common colour-vision
/// deficiencies) with a line style each, so greyscale prints keep them
/// apart.
pub const INK: &str = "#000000";
pub const FLOW: &str = "#0072B2";
pub const FAULT: &str = "#D55E00";
pub const NAMED_FILL: &str = "#F3E3C4";

struct Placed<'a> {
    p: &'a ScenePart,
    col: usize,
    /// Levels of the top and bottom contacts.
    top: usize,
    bot: usize,
    /// Pins at the top and the bottom, and the side (control) pin.
    top_pin: Option<usize>,
    bot_pin: Option<usize>,
    side_pin: Option<usize>,
}

fn x_of(col: usize) -> f64 {
    LEFT + col as f64 * COL
}

fn y_of(level: usize) -> f64 {
    TOP + level as f64 * LEVEL
}

/// Net order: rails (highest first), signals (highest first), ground.
fn levels(s: &Scene) -> Vec<usize> {
    let mut order: Vec<usize> = (0..s.nets.len()).collect();
    let class = |i: usize| {
        let n = &s.nets[i];
        if n.ground {
            2
        } else if n.rail.is_some() {
            0
        } else {
            1
        }
    };
    order.sort_by(|&a, &b| {
        class(a)
            .cmp(&class(b))
            .then(s.nets[b].v.total_cmp(&s.nets[a].v))
            .then(s.nets[a].name.cmp(&s.nets[b].name))
    });
    let mut level = vec![0; s.nets.len()];
    for (l, &i) in order.iter().enumerate() {
        level[i] = l;
    }
    level
}

/// The pins of a part that stand at its top and bottom, and at its side.
fn orient(p: &ScenePart, level: &[usize]) -> (Option<usize>, Option<usize>, Option<usize>) {
    let find = |name: &str| p.pins.iter().position(|(n, _)| n == name);
    let lv = |i: usize| p.pins.get(i).map(|&(_, n)| level[n]).unwrap_or(0);
    let pair = |a: Option<usize>, b: Option<usize>| match (a, b) {
        (Some(a), Some(b)) if lv(a) <= lv(b) => (Some(a), Some(b)),
        (Some(a), Some(b)) => (Some(b), Some(a)),
        (a, b) => (a.or(b), None),
    };
    match p.kind.switch_pins() {
        Some((main, ctl, reference)) => {
            let (t, b) = pair(find(main), find(reference));
            (t, b, find(ctl))
        }
        None => match p.kind {
            Kind::Mcu | Kind::Driver | Kind::Connector => (None, None, None),
            _ => {
                let (t, b) = pair(
                    p.pins.first().map(|_| 0),
                    if p.pins.len() > 1 { Some(1) } else { None },
                );
                (t, b, None)
            }
        },
    }
}

/// The schematic of a scene, with a text alternative.
pub fn svg(s: &Scene, id: &str, title: &str) -> String {
    let level = levels(s);
    let mut order: Vec<&ScenePart> = s.parts.iter().collect();
    order.sort_by_key(|p| (p.role, !p.named));
    // columns: (part spans) already there
    let mut cols: Vec<Vec<(usize, usize)>> = Vec::new();
    let mut placed: Vec<Placed> = Vec::new();
    let mut ic_cols = 0usize;
    for p in order {
        let (tp, bp, sp) = orient(p, &level);
        let ic = tp.is_none() && bp.is_none();
        let lv = |i: Option<usize>| i.and_then(|i| p.pins.get(i)).map(|&(_, n)| level[n]);
        let (top, bot) = if ic {
            let ls: Vec<usize> = p.pins.iter().map(|&(_, n)| level[n]).collect();
            (
                ls.iter().copied().min().unwrap_or(0),
                ls.iter().copied().max().unwrap_or(0),
            )
        } else {
            let t = lv(tp).unwrap_or(0);
            (t, lv(bp).unwrap_or(t + 1).max(t))
        };
        let col = if ic {
            ic_cols += 1;
            cols.push(vec![(0, usize::MAX)]);
            cols.len() - 1
        } else {
            // a column is free where no part overlaps in height
            let mut c = ic_cols;
            loop {
                match cols.get(c) {
                    None => {
                        cols.push(Vec::new());
                        break;
                    }
                    Some(spans) => {
                        // heights overlap (touching at a shared net is
                        // fine: a load above its switch)
                        let end = bot.max(top + 1);
                        let clash = spans.iter().any(|&(a, b)| top < b.max(a + 1) && a < end);
                        if !clash {
                            break;
                        }
                        c += 1;
                    }
                }
            }
            c
        };
        if let Some(v) = cols.get_mut(col) {
            v.push((top, bot.max(top)));
        }
        placed.push(Placed {
            p,
            col,
            top,
            bot,
            top_pin: tp,
            bot_pin: bp,
            side_pin: sp,
        });
    }
    // the missing freewheel paths: a column each, right of the rest
    let n_cols = cols.len() + s.missing.len();
    let n_levels = s.nets.len().max(2);
    let width = LEFT + n_cols as f64 * COL + 40.0;
    let height = TOP + (n_levels - 1) as f64 * LEVEL + 46.0;
    // the contacts on every net: (x, is a pin end)
    let mut contacts: Vec<Vec<f64>> = vec![Vec::new(); s.nets.len()];
    let mut body = String::new();
    for pl in &placed {
        draw_part(&mut body, pl, &level, &mut contacts);
    }
    for (k, (load, t, b)) in s.missing.iter().enumerate() {
        let x = x_of(cols.len() + k);
        let (yt, yb) = (y_of(level[*t]), y_of(level[*b]));
        contacts[*t].push(x);
        contacts[*b].push(x);
        let mid = (yt + yb) / 2.0;
        let _ = write!(
            body,
            r#"<g class="missing" data-load="{l}"><path d="M{x} {yt} V{a} M{x} {c} V{yb}" stroke="{FAULT}" stroke-width="2" stroke-dasharray="5 4" fill="none"/><rect x="{rx}" y="{a}" width="36" height="{h}" fill="none" stroke="{FAULT}" stroke-width="2" stroke-dasharray="5 4"/><text x="{x}" y="{ty}" text-anchor="middle" font-size="18" font-weight="bold" fill="{FAULT}">?</text><text x="{lx}" y="{ly}" font-size="10" fill="{FAULT}">no freewheel path</text><text x="{lx}" y="{ly2}" font-size="10" fill="{FAULT}">across {l}</text></g>"#,
            l = esc(load),
            a = mid - 18.0,
            c = mid + 18.0,
            rx = x - 18.0,
            h = 36.0,
            ty = mid + 6.0,
            lx = x + 22.0,
            ly = mid - 2.0,
            ly2 = mid + 10.0,
        );
    }
    // nets last but under the parts: written first in the document
    let mut wires = String::new();
    for (i, n) in s.nets.iter().enumerate() {
        let y = y_of(level[i]);
        let xs = &contacts[i];
        let (mut lo, mut hi) = xs
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), &x| (a.min(x), b.max(x)));
        if xs.is_empty() {
            lo = LEFT;
            hi = LEFT;
        }
        let fixed = n.ground || n.rail.is_some();
        if fixed {
            hi = hi.max(width - 70.0);
        }
        let _ = write!(
            wires,
            r#"<g class="net" data-net="{}"><line x1="{lo}" y1="{y}" x2="{hi}" y2="{y}" stroke="{INK}" stroke-width="{}"/>"#,
            esc(&n.name),
            if fixed { 2.2 } else { 1.3 }
        );
        // junctions where a contact is not at an end of the line
        for &x in xs {
            if x > lo + 0.5 && x < hi - 0.5 {
                let _ = write!(wires, r#"<circle cx="{x}" cy="{y}" r="2.6" fill="{INK}"/>"#);
            }
        }
        let what = match n.rail {
            Some(v) => format!(
                "{} ({})",
                n.name,
                crate::units::format_si(v, crate::units::Dimension::Voltage)
            ),
            None => n.name.clone(),
        };
        if n.ground {
            // the IEC earth/ground symbol at the right end
            let gx = hi;
            let _ = write!(
                wires,
                r#"<path d="M{gx} {y} v8 M{a} {b} h20 M{c} {d} h12 M{e} {f} h4" stroke="{INK}" stroke-width="1.6"/>"#,
                a = gx - 10.0,
                b = y + 8.0,
                c = gx - 6.0,
                d = y + 12.0,
                e = gx - 2.0,
                f = y + 16.0,
            );
            let _ = write!(
                wires,
                r#"<text x="{}" y="{}" font-size="11" font-weight="bold">{}</text>"#,
                gx + 14.0,
                y + 16.0,
                esc(&what)
            );
        } else if fixed {
            let _ = write!(
                wires,
                r#"<text x="{}" y="{}" font-size="11" font-weight="bold">{}</text>"#,
                lo + 2.0,
                y - 5.0,
                esc(&what)
            );
        } else {
            // a signal net's name over the longest stretch of its line
            // between two contacts (left of it when it has one contact)
            let mut xs: Vec<f64> = xs.clone();
            xs.sort_by(f64::total_cmp);
            let gap = xs
                .windows(2)
                .map(|w| (w[1] - w[0], (w[0] + w[1]) / 2.0))
                .max_by(|p, q| p.0.total_cmp(&q.0));
            let (x, anchor) = match gap {
                Some((g, mid)) if g > 40.0 => (mid, "middle"),
                _ => (lo - 5.0, "end"),
            };
            let _ = write!(
                wires,
                r##"<text x="{x}" y="{}" font-size="10.5" text-anchor="{anchor}" fill="#333">{}</text>"##,
                y - 4.0,
                esc(&what)
            );
        }
        wires.push_str("</g>");
    }
    let desc = describe(s);
    let mut out = String::with_capacity(body.len() + wires.len() + 600);
    let _ = write!(
        out,
        r#"<svg class="schematic" xmlns="http://www.w3.org/2000/svg" role="img" aria-labelledby="{id}-t {id}-d" viewBox="0 0 {w} {h}" width="{w}" height="{h}" font-family="DejaVu Sans, Liberation Sans, Arial, sans-serif"><title id="{id}-t">{t}</title><desc id="{id}-d">{d}</desc>"#,
        w = width.round(),
        h = height.round(),
        t = esc(title),
        d = esc(&desc),
    );
    out.push_str(&wires);
    out.push_str(&body);
    out.push_str("</svg>");
    out
}

/// The drawing in words (its text alternative).
fn describe(s: &Scene) -> String {
    let mut d = String::new();
    for p in &s.parts {
        let nets: Vec<&str> = p
            .pins
            .iter()
            .filter_map(|&(_, n)| s.nets.get(n).map(|n| n.name.as_str()))
            .collect();
        let _ = write!(
            d,
            "{} ({}, {}) on {}{}. ",
            p.name,
            p.kind.name(),
            p.label,
            nets.join(", "),
            if p.flow {
                "; it carries the load current after the turn-off"
            } else {
                ""
            }
        );
    }
    for (l, _, _) in &s.missing {
        let _ = write!(d, "No freewheel path across {l}. ");
    }
    d.trim_end().to_string()
}

fn draw_part(out: &mut String, pl: &Placed, level: &[usize], contacts: &mut [Vec<f64>]) {
    let p = pl.p;
    let x = x_of(pl.col);
    let colour = if p.flow { FLOW } else { INK };
    let sw = if p.flow { 2.4 } else { 1.5 };
    let _ = write!(
        out,
        r#"<g class="part{}" data-part="{}" data-kind="{}">"#,
        if p.named { " named" } else { "" },
        esc(&p.name),
        p.kind.name()
    );
    let pin_net = |i: Option<usize>| i.and_then(|i| p.pins.get(i)).map(|&(_, n)| n);
    let ic = pl.top_pin.is_none() && pl.bot_pin.is_none();
    if ic {
        draw_ic(out, pl, level, contacts, x);
        out.push_str("</g>");
        return;
    }
    let yt = y_of(pl.top);
    let yb = if pl.bot > pl.top {
        y_of(pl.bot)
    } else {
        yt + LEVEL * 0.8
    };
    if let Some(n) = pin_net(pl.top_pin) {
        contacts[n].push(x);
    }
    // both ends on one net (a shorted part): the lower lead returns to it
    let shorted = pl.bot <= pl.top && pin_net(pl.bot_pin).is_some();
    if let Some(n) = pin_net(pl.bot_pin) {
        contacts[n].push(if shorted { x + 16.0 } else { x });
    }
    if shorted {
        let _ = write!(
            out,
            r#"<path d="M{x} {yb} H{r} V{yt}" stroke="{FAULT}" stroke-width="1.8" fill="none"/>"#,
            r = x + 16.0
        );
    }
    let mid = (yt + yb) / 2.0;
    if p.named {
        let _ = write!(
            out,
            r#"<rect x="{}" y="{}" width="64" height="48" rx="6" fill="{NAMED_FILL}"/>"#,
            x - 30.0,
            mid - 24.0
        );
    }
    // leads from the contacts to the symbol (24 px either side of mid)
    let half = 16.0;
    let _ = write!(
        out,
        r#"<path d="M{x} {yt} V{a} M{x} {b} V{yb}" stroke="{colour}" stroke-width="{sw}" fill="none"/>"#,
        a = mid - half,
        b = mid + half,
    );
    let top_name = pl
        .top_pin
        .and_then(|i| p.pins.get(i))
        .map(|(n, _)| n.as_str())
        .unwrap_or("");
    let st = format!(r#"stroke="{colour}" stroke-width="{sw}""#);
    match p.kind {
        Kind::Resistor => {
            let _ = write!(
                out,
                r#"<rect x="{}" y="{}" width="12" height="32" fill="white" {st}/>"#,
                x - 6.0,
                mid - half
            );
        }
        Kind::Capacitor => {
            let _ = write!(
                out,
                r#"<path d="M{x} {a} V{b} M{x} {c} V{d} M{l} {b} h24 M{l} {c} h24" fill="none" {st}/>"#,
                a = mid - half,
                b = mid - 3.0,
                c = mid + 3.0,
                d = mid + half,
                l = x - 12.0,
            );
        }
        Kind::Inductor | Kind::Solenoid | Kind::Relay => {
            if p.kind == Kind::Inductor {
                // four arcs
                let mut d = format!("M{x} {}", mid - half);
                for _ in 0..4 {
                    d.push_str(" a4 4 0 0 1 0 8");
                }
                let _ = write!(out, r#"<path d="{d}" fill="none" {st}/>"#);
            } else {
                // IEC coil of a relay or solenoid: a rectangle; the
                // solenoid's plunger as a line beside it
                let _ = write!(
                    out,
                    r#"<rect x="{}" y="{}" width="22" height="32" fill="white" {st}/>"#,
                    x - 11.0,
                    mid - half
                );
                if p.kind == Kind::Relay {
                    let _ = write!(
                        out,
                        r#"<path d="M{} {} L{} {}" {st}/>"#,
                        x - 11.0,
                        mid + half,
                        x + 11.0,
                        mid - half
                    );
                } else {
                    let _ = write!(
                        out,
                        r#"<path d="M{} {} V{}" stroke-dasharray="3 2" {st}/>"#,
                        x + 15.0,
                        mid - half,
                        mid + half
                    );
                }
            }
        }
        Kind::Motor => {
            let _ = write!(
                out,
                r#"<circle cx="{x}" cy="{mid}" r="{half}" fill="white" {st}/><text x="{x}" y="{}" text-anchor="middle" font-size="15" font-weight="bold" fill="{colour}">M</text>"#,
                mid + 5.0
            );
        }
        Kind::Diode | Kind::Zener | Kind::Tvs => {
            // the triangle points to the cathode
            let k_top = top_name == "k";
            let (base, tip) = if k_top {
                (mid + 8.0, mid - 8.0)
            } else {
                (mid - 8.0, mid + 8.0)
            };
            let _ = write!(
                out,
                r#"<path d="M{x} {a} V{base} M{x} {tip} V{b}" fill="none" {st}/><path d="M{l} {base} H{r} L{x} {tip} Z" fill="{f}" {st}/>"#,
                a = mid - half,
                b = mid + half,
                l = x - 9.0,
                r = x + 9.0,
                f = if p.flow { FLOW } else { "white" },
            );
            let bar = match p.kind {
                Kind::Diode => format!("M{} {tip} h18", x - 9.0),
                Kind::Zener => {
                    let s = if k_top { 4.0 } else { -4.0 };
                    format!("M{} {} l3 {} h18 l3 {}", x - 12.0, tip - s, s, s)
                }
                _ => {
                    let s = if k_top { 4.0 } else { -4.0 };
                    format!("M{} {} l3 {} h18 l3 {}", x - 12.0, tip + s, -s, -s)
                }
            };
            let _ = write!(out, r#"<path d="{bar}" fill="none" {st}/>"#);
        }
        Kind::Nmos | Kind::Pmos => {
            draw_mos(out, pl, level, contacts, x, mid, &st, colour);
        }
        Kind::Npn | Kind::Pnp => {
            draw_bjt(out, pl, level, contacts, x, mid, &st, colour);
        }
        _ => {
            let _ = write!(
                out,
                r#"<rect x="{}" y="{}" width="24" height="32" fill="white" {st}/>"#,
                x - 12.0,
                mid - half
            );
        }
    }
    // current direction after the turn-off, beside the parts of the path
    if p.flow {
        let down = match p.kind {
            k if k.is_inductive_load() => top_name == "+",
            Kind::Diode => top_name == "a",
            Kind::Zener | Kind::Tvs => top_name == "k",
            _ => top_name != "s" && top_name != "e",
        };
        let (ya, yb2) = if down {
            (mid - 12.0, mid + 12.0)
        } else {
            (mid + 12.0, mid - 12.0)
        };
        let dir = if down { 1.0 } else { -1.0 };
        let ax = x - 24.0;
        let _ = write!(
            out,
            r#"<path class="flow" d="M{ax} {ya} V{yb2} M{l} {h} L{ax} {yb2} L{r} {h}" stroke="{FLOW}" stroke-width="1.8" fill="none"/>"#,
            l = ax - 4.0,
            r = ax + 4.0,
            h = yb2 - 6.0 * dir,
        );
    }
    // designator and value to the right
    let _ = write!(
        out,
        r#"<text x="{tx}" y="{ty}" font-size="11.5" font-weight="bold">{n}</text><text x="{tx}" y="{ty2}" font-size="10">{l}</text>"#,
        tx = x + 22.0,
        ty = mid - 2.0,
        ty2 = mid + 11.0,
        n = esc(&p.name),
        l = esc(&short(&p.label)),
    );
    out.push_str("</g>");
}

fn short(s: &str) -> String {
    if s.chars().count() > 16 {
        let t: String = s.chars().take(15).collect();
        format!("{t}…")
    } else {
        s.to_string()
    }
}

/// The gate (base) lead: from the symbol's left side to the left, then up
/// or down to the gate net.
fn side_lead(
    out: &mut String,
    pl: &Placed,
    level: &[usize],
    contacts: &mut [Vec<f64>],
    from_x: f64,
    mid: f64,
    st: &str,
) {
    let Some((_, n)) = pl.side_pin.and_then(|i| pl.p.pins.get(i)) else {
        return;
    };
    let gx = x_of(pl.col) - 44.0;
    let gy = y_of(level[*n]);
    contacts[*n].push(gx);
    let _ = write!(
        out,
        r#"<path d="M{from_x} {mid} H{gx} V{gy}" fill="none" {st}/>"#
    );
}

#[allow(clippy::too_many_arguments)]
fn draw_mos(
    out: &mut String,
    pl: &Placed,
    level: &[usize],
    contacts: &mut [Vec<f64>],
    x: f64,
    mid: f64,
    st: &str,
    colour: &str,
) {
    // IEEE 315 enhancement MOSFET: gate plate, broken channel, arrow on
    // the body (into the channel for n, out for p)
    let cx = x - 8.0;
    let gxp = x - 13.0;
    let _ = write!(
        out,
        r#"<path d="M{gxp} {a} V{b} M{cx} {c} v7 M{cx} {d} v6 M{cx} {e} v7 M{cx} {f} H{x} M{cx} {g} H{x} M{cx} {mid} H{x}" fill="none" {st}/>"#,
        a = mid - 11.0,
        b = mid + 11.0,
        c = mid - 13.0,
        d = mid - 3.0,
        e = mid + 6.0,
        f = mid - 10.0,
        g = mid + 10.0,
    );
    let n = pl.p.kind == Kind::Nmos;
    let (tip, tail) = if n {
        (cx + 1.0, x)
    } else {
        (x - 1.0, cx + 1.0)
    };
    let dir = if n { 1.0 } else { -1.0 };
    let _ = write!(
        out,
        r#"<path d="M{tail} {mid} H{tip} M{a} {b} L{tip} {mid} L{a} {c}" fill="none" stroke="{colour}" stroke-width="1.4"/>"#,
        a = tip + 5.0 * dir,
        b = mid - 3.5,
        c = mid + 3.5,
    );
    side_lead(out, pl, level, contacts, gxp, mid, st);
}

#[allow(clippy::too_many_arguments)]
fn draw_bjt(
    out: &mut String,
    pl: &Placed,
    level: &[usize],
    contacts: &mut [Vec<f64>],
    x: f64,
    mid: f64,
    st: &str,
    colour: &str,
) {
    // IEEE 315 bipolar transistor: base bar, collector and emitter
    // diagonals, the arrow on the emitter (out for npn, in for pnp)
    let bx = x - 9.0;
    let top_is_c = pl
        .top_pin
        .and_then(|i| pl.p.pins.get(i))
        .is_some_and(|(n, _)| n == "c");
    let (yc, ye) = if top_is_c {
        (mid - 16.0, mid + 16.0)
    } else {
        (mid + 16.0, mid - 16.0)
    };
    let dy = if top_is_c { 1.0 } else { -1.0 };
    let _ = write!(
        out,
        r#"<circle cx="{cx}" cy="{mid}" r="15" fill="white" stroke="{colour}" stroke-width="1"/><path d="M{bx} {a} V{b} M{bx} {c} L{x} {yc} M{bx} {d} L{x} {ye}" fill="none" {st}/>"#,
        cx = x - 4.0,
        a = mid - 9.0,
        b = mid + 9.0,
        c = mid - 4.0 * dy,
        d = mid + 4.0 * dy,
    );
    // arrow head on the emitter line
    let npn = pl.p.kind == Kind::Npn;
    let (ex0, ey0) = (bx, mid + 4.0 * dy);
    let (ex1, ey1) = (x, ye);
    let t = if npn { 0.8 } else { 0.35 };
    let (hx, hy) = (ex0 + (ex1 - ex0) * t, ey0 + (ey1 - ey0) * t);
    let (ux, uy) = {
        let (dx, dyy) = (ex1 - ex0, ey1 - ey0);
        let l = (dx * dx + dyy * dyy).sqrt().max(1e-9);
        let s = if npn { 1.0 } else { -1.0 };
        (s * dx / l, s * dyy / l)
    };
    let (px, py) = (-uy, ux);
    let _ = write!(
        out,
        r#"<path d="M{hx} {hy} L{a} {b} L{c} {d} Z" fill="{colour}" stroke="{colour}" stroke-width="1"/>"#,
        a = hx - 6.0 * ux + 3.0 * px,
        b = hy - 6.0 * uy + 3.0 * py,
        c = hx - 6.0 * ux - 3.0 * px,
        d = hy - 6.0 * uy - 3.0 * py,
    );
    side_lead(out, pl, level, contacts, bx, mid, st);
}

fn draw_ic(out: &mut String, pl: &Placed, level: &[usize], contacts: &mut [Vec<f64>], x: f64) {
    let p = pl.p;
    let yt = y_of(pl.top) - 16.0;
    let yb = y_of(pl.bot) + 16.0;
    let (l, r) = (x - 70.0, x + 6.0);
    let _ = write!(
        out,
        r#"<rect x="{l}" y="{yt}" width="{w}" height="{h}" fill="{f}" stroke="{INK}" stroke-width="1.5"/><text x="{tx}" y="{ty}" font-size="11.5" font-weight="bold">{n}</text><text x="{tx}" y="{ty2}" font-size="9.5">{lab}</text>"#,
        w = r - l,
        h = yb - yt,
        f = if p.named { NAMED_FILL } else { "white" },
        tx = l + 3.0,
        ty = yt - 16.0,
        ty2 = yt - 5.0,
        n = esc(&p.name),
        lab = esc(&short(&p.label)),
    );
    for (name, n) in &p.pins {
        let y = y_of(level[*n]);
        contacts[*n].push(r + 10.0);
        let _ = write!(
            out,
            r#"<path d="M{r} {y} h10" stroke="{INK}" stroke-width="1.5"/><text x="{tx}" y="{ty}" font-size="9.5" text-anchor="end">{pn}</text>"#,
            tx = r - 3.0,
            ty = y + 3.5,
            pn = esc(name),
        );
    }
}
