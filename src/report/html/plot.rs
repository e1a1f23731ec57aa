//! A simulated switching edge as an SVG plot, written directly (a plotting
//! crate would add fonts and a raster path the report does not need, and
//! its output would still need the text alternative, the classes the tests
//! read and the print styles added by hand).
//!
//! Three panels on one time axis: V_DS with the blocking rating, the
//! derated limit and the clamp level as horizontal lines and the peak
//! marked; the load, channel and clamp-path currents; the gate drive.

use super::esc;
use super::scene::Plot;
use crate::units::{Dimension, format_si};
use std::fmt::Write;

const W: f64 = 700.0;
const L: f64 = 64.0;
const R: f64 = 168.0;
const PANEL_GAP: f64 = 26.0;

/// Trace styles: colour (Okabe–Ito) and dash, so that each stays apart
/// in greyscale and for the common colour-vision deficiencies.
const VDS: (&str, &str) = ("#000000", "");
const ILOAD: (&str, &str) = ("#0072B2", "");
const ICH: (&str, &str) = ("#D55E00", "6 3");
const ICLAMP: (&str, &str) = ("#009E73", "2 2");
const VGS: (&str, &str) = ("#CC79A7", "");
const VGS_PARTNER: (&str, &str) = ("#56B4E9", "5 2");
const RATING: (&str, &str) = ("#D55E00", "8 4");
const DERATED: (&str, &str) = ("#E69F00", "3 3");
const CLAMP: (&str, &str) = ("#009E73", "9 3 2 3");

/// A "nice" step (1, 2 or 5 × 10^k) for about `n` ticks over `span`.
fn step(span: f64, n: f64) -> f64 {
    if !(span.is_finite() && span > 0.0) {
        return 1.0;
    }
    let raw = span / n;
    let mag = 10f64.powf(raw.log10().floor());
    let f = raw / mag;
    let m = if f < 1.5 {
        1.0
    } else if f < 3.5 {
        2.0
    } else if f < 7.5 {
        5.0
    } else {
        10.0
    };
    m * mag
}

/// An SI prefix and its scale for values up to `max`.
fn prefix(max: f64) -> (&'static str, f64) {
    let a = max.abs();
    if a >= 1e3 {
        ("k", 1e-3)
    } else if a >= 1.0 || a == 0.0 {
        ("", 1.0)
    } else if a >= 1e-3 {
        ("m", 1e3)
    } else if a >= 1e-6 {
        ("µ", 1e6)
    } else if a >= 1e-9 {
        ("n", 1e9)
    } else {
        ("p", 1e12)
    }
}

fn num(v: f64) -> String {
    let r = (v * 1000.0).round() / 1000.0;
    let s = format!("{r}");
    if s == "-0" { "0".into() } else { s }
}

/// A linear axis, or for time two linear scales side by side: the edge
/// (up to `brk`) and the decay after it, as a scope's delayed timebase.
struct Axis {
    lo: f64,
    hi: f64,
    px_lo: f64,
    px_hi: f64,
    /// (value, pixel) where the second scale starts.
    brk: Option<(f64, f64)>,
}

impl Axis {
    fn new(lo: f64, hi: f64, px_lo: f64, px_hi: f64) -> Axis {
        let (lo, hi) = if (hi - lo).abs() < 1e-30 {
            (lo - 1.0, hi + 1.0)
        } else {
            (lo, hi)
        };
        Axis {
            lo,
            hi,
            px_lo,
            px_hi,
            brk: None,
        }
    }
    fn lin(v: f64, lo: f64, hi: f64, a: f64, b: f64) -> f64 {
        a + (v - lo) / (hi - lo) * (b - a)
    }
    fn at(&self, v: f64) -> f64 {
        match self.brk {
            Some((bv, bp)) if v <= bv => Self::lin(v, self.lo, bv, self.px_lo, bp),
            Some((bv, bp)) => Self::lin(v, bv, self.hi, bp, self.px_hi),
            None => Self::lin(v, self.lo, self.hi, self.px_lo, self.px_hi),
        }
    }
    fn ticks_in(lo: f64, hi: f64, n: f64) -> Vec<f64> {
        let s = step(hi - lo, n);
        let mut v = Vec::new();
        let mut t = (lo / s).ceil() * s;
        while t <= hi + s * 1e-9 && v.len() < 40 {
            v.push(t);
            t += s;
        }
        v
    }
    fn ticks(&self, n: f64) -> Vec<f64> {
        match self.brk {
            None => Self::ticks_in(self.lo, self.hi, n),
            Some((bv, _)) => {
                let mut v = Self::ticks_in(self.lo, bv, n * 0.55);
                // the second scale's ticks clear of the break
                let s2 = step(self.hi - bv, n * 0.45);
                v.extend(
                    Self::ticks_in(bv, self.hi, n * 0.45)
                        .into_iter()
                        .filter(|t| *t > bv + 0.4 * s2),
                );
                v
            }
        }
    }
}

fn range(series: &[&[f64]], extra: &[f64]) -> (f64, f64) {
    let mut lo = f64::MAX;
    let mut hi = f64::MIN;
    for s in series {
        for &v in s.iter() {
            if v.is_finite() {
                lo = lo.min(v);
                hi = hi.max(v);
            }
        }
    }
    for &v in extra {
        if v.is_finite() {
            lo = lo.min(v);
            hi = hi.max(v);
        }
    }
    if lo > hi {
        return (0.0, 1.0);
    }
    lo = lo.min(0.0);
    let pad = (hi - lo) * 0.08;
    (lo, hi + pad.max(1e-12))
}

fn polyline(
    out: &mut String,
    t: &Axis,
    y: &Axis,
    ts: &[f64],
    vs: &[f64],
    style: (&str, &str),
    class: &str,
) {
    let mut d = String::with_capacity(ts.len() * 14);
    for (i, (a, b)) in ts.iter().zip(vs).enumerate() {
        let _ = write!(
            d,
            "{}{:.1} {:.1}",
            if i == 0 { "M" } else { " L" },
            t.at(*a),
            y.at(*b)
        );
    }
    let _ = write!(
        out,
        r#"<path class="{class}" d="{d}" fill="none" stroke="{}" stroke-width="1.6"{}/>"#,
        style.0,
        dash(style.1)
    );
}

fn dash(d: &str) -> String {
    if d.is_empty() {
        String::new()
    } else {
        format!(r#" stroke-dasharray="{d}""#)
    }
}

/// A horizontal line across a panel with its label at the right.
fn hline(
    out: &mut String,
    t: &Axis,
    y: &Axis,
    v: f64,
    style: (&str, &str),
    class: &str,
    label: &str,
) {
    let py = y.at(v);
    let _ = write!(
        out,
        r#"<g class="{class}" data-v="{v:e}"><line x1="{a:.1}" y1="{py:.1}" x2="{b:.1}" y2="{py:.1}" stroke="{c}" stroke-width="1.4"{d}/><text x="{tx:.1}" y="{ty:.1}" font-size="10" fill="{c}">{l}</text></g>"#,
        a = t.px_lo,
        b = t.px_hi,
        c = style.0,
        d = dash(style.1),
        tx = t.px_hi + 6.0,
        ty = py + 3.5,
        l = esc(label),
    );
}

fn frame(
    out: &mut String,
    t: &Axis,
    y: &Axis,
    unit: &str,
    what: &str,
    tp: (&str, f64),
    show_t: bool,
) {
    let (yp, ys) = prefix(y.hi.abs().max(y.lo.abs()));
    let _ = write!(
        out,
        r##"<rect x="{x:.1}" y="{yy:.1}" width="{w:.1}" height="{h:.1}" fill="none" stroke="#555" stroke-width="0.8"/>"##,
        x = t.px_lo,
        yy = y.px_hi,
        w = t.px_hi - t.px_lo,
        h = y.px_lo - y.px_hi,
    );
    for v in y.ticks(4.0) {
        let py = y.at(v);
        let _ = write!(
            out,
            r##"<line x1="{a:.1}" y1="{py:.1}" x2="{b:.1}" y2="{py:.1}" stroke="#ccc" stroke-width="0.5"/><text x="{tx:.1}" y="{ty:.1}" font-size="9.5" text-anchor="end">{n}</text>"##,
            a = t.px_lo,
            b = t.px_hi,
            tx = t.px_lo - 4.0,
            ty = py + 3.0,
            n = num(v * ys),
        );
    }
    let _ = write!(
        out,
        r#"<text x="{x:.1}" y="{y:.1}" font-size="10.5" text-anchor="middle" transform="rotate(-90 {x:.1} {y:.1})">{what} ({yp}{unit})</text>"#,
        x = t.px_lo - 44.0,
        y = (y.px_lo + y.px_hi) / 2.0,
    );
    for v in t.ticks(7.0) {
        let px = t.at(v);
        let _ = write!(
            out,
            r##"<line x1="{px:.1}" y1="{a:.1}" x2="{px:.1}" y2="{b:.1}" stroke="#ddd" stroke-width="0.5"/>"##,
            a = y.px_lo,
            b = y.px_hi,
        );
        if show_t {
            let _ = write!(
                out,
                r#"<text x="{px:.1}" y="{ty:.1}" font-size="9.5" text-anchor="middle">{n}</text>"#,
                ty = y.px_lo + 12.0,
                n = tick_label(v, tp),
            );
        }
    }
    if let Some((_, bp)) = t.brk {
        // the change of time scale, marked on the frame
        let _ = write!(
            out,
            r##"<line x1="{bp:.1}" y1="{a:.1}" x2="{bp:.1}" y2="{b:.1}" stroke="#888" stroke-width="0.8" stroke-dasharray="1 2"/><path d="M{l1:.1} {c:.1} l5 -8 M{l2:.1} {c:.1} l5 -8" stroke="#333" stroke-width="1.2"/>"##,
            a = y.px_lo,
            b = y.px_hi,
            l1 = bp - 5.0,
            l2 = bp,
            c = y.px_lo + 4.0,
        );
    }
}

/// A time tick: one prefix for a single scale, each tick its own on two.
fn tick_label(v: f64, tp: (&str, f64)) -> String {
    if tp.1 == 0.0 {
        if v == 0.0 {
            "0".into()
        } else {
            format_si(v, Dimension::Time)
        }
    } else {
        num(v * tp.1)
    }
}

fn legend(out: &mut String, x: f64, y: f64, items: &[((&str, &str), &str)]) {
    for (k, (style, label)) in items.iter().enumerate() {
        let yy = y + k as f64 * 13.0;
        let _ = write!(
            out,
            r#"<line x1="{x:.1}" y1="{yy:.1}" x2="{x2:.1}" y2="{yy:.1}" stroke="{c}" stroke-width="1.8"{d}/><text x="{tx:.1}" y="{ty:.1}" font-size="10">{l}</text>"#,
            x2 = x + 20.0,
            c = style.0,
            d = dash(style.1),
            tx = x + 24.0,
            ty = yy + 3.5,
            l = esc(label),
        );
    }
}

/// How long the edge itself lasts (the first time scale): four times the
/// time to the V_DS peak at a turn-off, or to V_DS below a tenth of its
/// start at a turn-on; 20 ns at least.
fn edge_time(p: &Plot, ts: &[f64]) -> f64 {
    let t = if p.edge == "turn-on" {
        let v0 = p.vds.first().copied().unwrap_or(0.0);
        ts.iter()
            .zip(&p.vds)
            .find(|(t, v)| **t > 0.0 && **v < 0.1 * v0)
            .map(|(t, _)| *t)
            .unwrap_or(0.0)
    } else {
        p.t_peak - p.t_cmd
    };
    (4.0 * t).max(20e-9)
}

/// The dead time between the two gates' half-swing crossings, drawn as a
/// dimension line across the gate panel (an overlap when negative).
fn dead_time_marker(out: &mut String, t: &Axis, g: &Axis, a: f64, b: f64) {
    let dt = b - a;
    let (xa, xb) = (t.at(a.min(b)), t.at(a.max(b)));
    let y = 0.5 * (g.px_lo + g.px_hi);
    let word = if dt >= 0.0 {
        "dead time"
    } else {
        "gate overlap"
    };
    let label = format!(
        "{word} {} (simulated)",
        format_si(dt.abs(), Dimension::Time)
    );
    let (tx, anchor) = if xb + 6.0 + 6.0 * label.len() as f64 <= t.px_hi {
        (xb + 6.0, "start")
    } else {
        (xa - 6.0, "end")
    };
    let _ = write!(
        out,
        r##"<g class="dead-time" data-t="{dt:e}"><line x1="{xa:.1}" y1="{y0:.1}" x2="{xa:.1}" y2="{y1:.1}" stroke="#333" stroke-width="0.8"/><line x1="{xb:.1}" y1="{y0:.1}" x2="{xb:.1}" y2="{y1:.1}" stroke="#333" stroke-width="0.8"/><line x1="{xa:.1}" y1="{y:.1}" x2="{xb:.1}" y2="{y:.1}" stroke="#333" stroke-width="1.2"/><text x="{tx:.1}" y="{ty:.1}" font-size="10" text-anchor="{anchor}">{l}</text></g>"##,
        y0 = y - 7.0,
        y1 = y + 7.0,
        ty = y + 3.5,
        l = esc(&label),
    );
}

/// The plot of one edge, with a text alternative.
pub fn svg(p: &Plot, id: &str) -> String {
    let h1 = 170.0;
    let h2 = 120.0;
    let h3 = 80.0;
    let top = 30.0;
    let y1 = (top + h1, top);
    let y2 = (y1.0 + PANEL_GAP + h2, y1.0 + PANEL_GAP);
    let y3 = (y2.0 + PANEL_GAP + h3, y2.0 + PANEL_GAP);
    let height = y3.0 + 40.0;
    // time from the command
    let ts: Vec<f64> = p.t.iter().map(|t| t - p.t_cmd).collect();
    let (t0, t1) = match (ts.first(), ts.last()) {
        (Some(a), Some(b)) if b > a => (*a, *b),
        _ => (0.0, 1e-6),
    };
    let mut ta = Axis::new(t0, t1, L, W - R);
    let edge = edge_time(p, &ts);
    let tp = if t1 > 8.0 * edge && edge > t0 {
        ta.brk = Some((edge, L + 0.55 * (W - R - L)));
        ("", 0.0)
    } else {
        prefix((t1 - t0).max(t1.abs()))
    };
    let mut lines = Vec::new();
    if let Some((_, r)) = p.rating {
        lines.push(r);
    }
    lines.extend(p.derated);
    lines.extend(p.clamp);
    let (vlo, vhi) = range(&[&p.vds], &lines);
    let va = Axis::new(vlo, vhi, y1.0, y1.1);
    let (ilo, ihi) = range(&[&p.il, &p.id, &p.iclamp], &[]);
    let ia = Axis::new(ilo, ihi, y2.0, y2.1);
    let (glo, ghi) = range(&[&p.vgs, &p.vgs_partner], &[]);
    let ga = Axis::new(glo, ghi, y3.0, y3.1);
    let title = format!(
        "{} {}{}: {}, currents and {} against time",
        p.switch,
        p.edge,
        p.load
            .as_deref()
            .map(|l| format!(" of {l}"))
            .unwrap_or_default(),
        if p.bipolar { "V_CE" } else { "V_DS" },
        if p.bipolar {
            "base drive"
        } else {
            "gate drive"
        },
    );
    let mut desc = format!(
        "Simulated {} of {}: {} peaks at {} at {} after the command",
        p.edge,
        p.switch,
        if p.bipolar { "V_CE" } else { "V_DS" },
        format_si(p.v_peak, Dimension::Voltage),
        format_si(p.t_peak - p.t_cmd, Dimension::Time)
    );
    if let Some((key, r)) = p.rating {
        let _ = write!(
            desc,
            "; its rating {key} is {}",
            format_si(r, Dimension::Voltage)
        );
    }
    if let Some(d) = p.derated {
        let _ = write!(
            desc,
            ", the derated limit {}",
            format_si(d, Dimension::Voltage)
        );
    }
    if let Some(c) = p.clamp {
        let _ = write!(
            desc,
            "; the clamp holds {}",
            format_si(c, Dimension::Voltage)
        );
    }
    if let (Some(other), Some((a, b))) = (&p.partner, p.dead_time) {
        let _ = write!(
            desc,
            "; {} with {other}: {}",
            if b >= a { "dead time" } else { "gate overlap" },
            format_si((b - a).abs(), Dimension::Time)
        );
    }
    let i_max = p.il.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let _ = write!(
        desc,
        "; the load current starts at {}.",
        format_si(i_max, Dimension::Current)
    );
    let (vname, gname, iname) = if p.bipolar {
        ("V_CE", "V_BE", "I_C (collector)")
    } else {
        ("V_DS", "V_GS", "I_D (channel)")
    };
    let mut out = String::new();
    let _ = write!(
        out,
        r#"<svg class="plot" xmlns="http://www.w3.org/2000/svg" role="img" aria-labelledby="{id}-t {id}-d" viewBox="0 0 {W} {h}" width="{W}" height="{h}" font-family="DejaVu Sans, Liberation Sans, Arial, sans-serif" data-switch="{sw}" data-edge="{e}" data-peak="{pk:e}"{pf}><title id="{id}-t">{t}</title><desc id="{id}-d">{d}</desc>"#,
        h = height.round(),
        sw = esc(&p.switch),
        e = p.edge,
        pk = p.v_peak,
        pf = p
            .peak_fact
            .map(|v| format!(r#" data-fact-v-peak="{v:e}""#))
            .unwrap_or_default(),
        t = esc(&title),
        d = esc(&desc),
    );
    let _ = write!(
        out,
        r#"<text x="{L}" y="18" font-size="12" font-weight="bold">{}</text>"#,
        esc(&title)
    );
    // panel 1: V_DS
    frame(&mut out, &ta, &va, "V", vname, tp, false);
    if let Some((key, r)) = p.rating {
        hline(
            &mut out,
            &ta,
            &va,
            r,
            RATING,
            "rating",
            &format!("{key} {}", format_si(r, Dimension::Voltage)),
        );
    }
    if let Some(d) = p.derated {
        hline(
            &mut out,
            &ta,
            &va,
            d,
            DERATED,
            "derated",
            &format!("derated {}", format_si(d, Dimension::Voltage)),
        );
    }
    if let Some(c) = p.clamp {
        hline(
            &mut out,
            &ta,
            &va,
            c,
            CLAMP,
            "clamp",
            &format!("clamp {}", format_si(c, Dimension::Voltage)),
        );
    }
    polyline(&mut out, &ta, &va, &ts, &p.vds, VDS, "trace v-ds");
    // the peak
    let (px, py) = (ta.at(p.t_peak - p.t_cmd), va.at(p.v_peak));
    let anchor = if px > (L + W - R) / 2.0 {
        "end"
    } else {
        "start"
    };
    let lx = if anchor == "end" { px - 8.0 } else { px + 8.0 };
    let _ = write!(
        out,
        r#"<g class="peak" data-v="{v:e}" data-t="{tt:e}"><circle cx="{px:.1}" cy="{py:.1}" r="4" fill="none" stroke="{c}" stroke-width="1.8"/><text x="{lx:.1}" y="{ly:.1}" font-size="10.5" font-weight="bold" text-anchor="{anchor}">peak {l}</text></g>"#,
        v = p.v_peak,
        tt = p.t_peak,
        c = RATING.0,
        ly = (py - 6.0).max(y1.1 + 10.0),
        l = esc(&format!(
            "{} at {}",
            format_si(p.v_peak, Dimension::Voltage),
            format_si(p.t_peak - p.t_cmd, Dimension::Time)
        )),
    );
    // the command
    let cx = ta.at(0.0);
    if (L..=W - R).contains(&cx) {
        let _ = write!(
            out,
            r##"<line class="command" x1="{cx:.1}" y1="{a:.1}" x2="{cx:.1}" y2="{b:.1}" stroke="#777" stroke-width="0.8" stroke-dasharray="2 3"/><text x="{tx:.1}" y="{ty:.1}" font-size="9" fill="#555">command</text>"##,
            a = y3.0,
            b = y1.1,
            tx = cx + 3.0,
            ty = y1.1 + 10.0,
        );
    }
    legend(&mut out, W - R + 8.0, y1.0 - 8.0, &[(VDS, vname)]);
    // panel 2: currents
    frame(&mut out, &ta, &ia, "A", "current", tp, false);
    polyline(&mut out, &ta, &ia, &ts, &p.il, ILOAD, "trace i-load");
    polyline(&mut out, &ta, &ia, &ts, &p.id, ICH, "trace i-d");
    polyline(&mut out, &ta, &ia, &ts, &p.iclamp, ICLAMP, "trace i-clamp");
    let load_label = match &p.load {
        Some(l) => format!("I {l} (load)"),
        None => "I load".to_string(),
    };
    legend(
        &mut out,
        W - R + 8.0,
        y2.1 + 8.0,
        &[
            (ILOAD, load_label.as_str()),
            (ICH, iname),
            (ICLAMP, "I clamp path"),
        ],
    );
    // panel 3: gate
    frame(&mut out, &ta, &ga, "V", gname, tp, true);
    polyline(&mut out, &ta, &ga, &ts, &p.vgs, VGS, "trace v-gs");
    let partner_label = p.partner.as_deref().map(|o| format!("{gname} {o}"));
    match &partner_label {
        Some(l) if p.vgs_partner.len() == ts.len() => {
            polyline(
                &mut out,
                &ta,
                &ga,
                &ts,
                &p.vgs_partner,
                VGS_PARTNER,
                "trace v-gs-partner",
            );
            let own = format!("{gname} {}", p.switch);
            legend(
                &mut out,
                W - R + 8.0,
                y3.1 + 8.0,
                &[(VGS, own.as_str()), (VGS_PARTNER, l.as_str())],
            );
        }
        _ => legend(&mut out, W - R + 8.0, y3.1 + 8.0, &[(VGS, gname)]),
    }
    if let Some((a, b)) = p.dead_time {
        dead_time_marker(&mut out, &ta, &ga, a - p.t_cmd, b - p.t_cmd);
    }
    let _ = write!(
        out,
        r#"<text x="{x:.1}" y="{y:.1}" font-size="10.5" text-anchor="middle">{}</text>"#,
        if ta.brk.is_some() {
            "time after the command (two scales: the edge, then the decay)".to_string()
        } else {
            format!("time after the command ({}s)", tp.0)
        },
        x = (L + W - R) / 2.0,
        y = y3.0 + 28.0,
    );
    out.push_str("</svg>");
    out
}
