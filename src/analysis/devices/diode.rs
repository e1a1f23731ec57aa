//! The junction diode: Shockley's law with series resistance, reverse
//! breakdown and stored (diffusion) charge — ngspice's diode model with
//! `IS N RS BV IBV TT` and no junction capacitance.
//!
//! `I = Is·(e^(V/(n·Vt)) − 1)` forward; below `−BV` the current grows as
//! `−Is·e^(−(BV + V)/(n·Vt))`, with `BV` moved slightly (ngspice's
//! `diotemp`) so that the breakdown current at the rated `BV` is `IBV`.
//! The stored charge is `Q = TT·I`, whose removal at turn-off is the
//! reverse-recovery current (the charge-control model of the diode).

use super::{GMIN, Source, VT, junction, pnjlim, vcrit};
use crate::model::{Kind, Part};

/// Emission coefficient of a pn diode [memory].
pub const N_PN: f64 = 1.0;
/// Emission coefficient of a Schottky diode [memory].
pub const N_SCHOTTKY: f64 = 1.05;
/// Forward voltage of a silicon diode when none is given (common practice).
pub const VF_DEFAULT: f64 = 0.7;
/// Body-diode forward voltage when none is given, at `id_max` [memory].
pub const BODY_VF: f64 = 0.9;
/// Breakdown current at which `BV` is specified (ngspice's `IBV` default).
pub const IBV: f64 = 1e-3;
/// Fit current when a diode gives no current rating (A) [memory].
pub const I_REF_DEFAULT: f64 = 1.0;
/// A switch with nothing else to clamp its drain avalanches at this
/// multiple of its blocking rating [memory].
pub const AVALANCHE_FACTOR: f64 = 1.3;
/// Dynamic resistance of a TVS in breakdown: 5 % of its clamping voltage
/// per ampere [memory].
pub const TVS_RDYN_PER_V: f64 = 0.05;

#[derive(Clone, Debug, PartialEq)]
pub struct Diode {
    pub is: f64,
    pub n: f64,
    pub rs: f64,
    /// Reverse breakdown voltage as given (`BV`).
    pub bv: Option<f64>,
    pub tt: f64,
    vte: f64,
    vcrit: f64,
    /// Breakdown voltage as the equations use it (`BV` moved so that the
    /// current at `BV` is `IBV`).
    xbv: f64,
}

/// How a diode's parameters were obtained, for `facts` notes.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct DiodeFit {
    pub i_ref: f64,
    pub vf: f64,
    pub vf_from: Option<Source>,
    pub i_ref_from: Option<Source>,
    pub tt_from: Option<Source>,
}

impl Diode {
    pub fn new(is: f64, n: f64, rs: f64, bv: Option<f64>, tt: f64) -> Diode {
        let is = is.max(1e-300);
        let vte = n * VT;
        let xbv = bv.map_or(0.0, |bv| breakdown_knee(is, n, bv));
        Diode {
            is,
            n,
            rs: rs.max(0.0),
            bv,
            tt: tt.max(0.0),
            vte,
            vcrit: vcrit(vte, is),
            xbv,
        }
    }

    /// Junction current and conductance at junction voltage `vd` (the
    /// voltage across the junction, after the series resistance), with
    /// `gmin` in parallel.
    pub fn eval(&self, vd: f64) -> (f64, f64) {
        let (i, g) = self.eval_junction(vd);
        (i + GMIN * vd, g + GMIN)
    }

    /// The junction alone (no `gmin`): what the stored charge follows.
    pub fn eval_junction(&self, vd: f64) -> (f64, f64) {
        match self.bv {
            Some(_) if vd < -self.xbv => {
                let e = (-(self.xbv + vd) / self.vte).min(700.0).exp();
                (-self.is * e, self.is * e / self.vte)
            }
            _ if vd >= -3.0 * self.vte => junction(self.is, vd, self.vte),
            _ => junction(self.is, vd, self.vte),
        }
    }

    /// Stored charge `TT·I` and its capacitance `TT·g`.
    pub fn charge(&self, vd: f64) -> (f64, f64) {
        if self.tt == 0.0 {
            return (0.0, 0.0);
        }
        let (i, g) = self.eval_junction(vd);
        (self.tt * i, self.tt * g)
    }

    /// The junction's region: 0 blocking, 1 conducting forward, 2 in
    /// breakdown (the events a transient steps carefully across).
    pub fn region(&self, vd: f64) -> u8 {
        if vd > 0.5 * self.vcrit.min(0.6) {
            1
        } else if self.bv.is_some() && vd < -self.xbv + 5.0 * self.vte {
            2
        } else {
            0
        }
    }

    /// Junction limiting between Newton iterations, in breakdown too
    /// (ngspice `dioload`).
    pub fn limit(&self, vnew: f64, vold: f64) -> (f64, bool) {
        if self.bv.is_some() && vnew < (-self.xbv + 10.0 * self.vte).min(0.0) {
            let t = -(vnew + self.xbv);
            let (t, lim) = pnjlim(t, -(vold + self.xbv), self.vte, self.vcrit);
            (-(t + self.xbv), lim)
        } else {
            pnjlim(vnew, vold, self.vte, self.vcrit)
        }
    }

    /// The initial junction voltage of an operating-point solve
    /// (SPICE's `MODEINITJCT`: the critical voltage).
    pub fn v_init(&self) -> f64 {
        self.vcrit.min(1.0)
    }

    /// Voltage across the diode (junction + `I·Rs`) at forward current `i`.
    pub fn v_at(&self, i: f64) -> f64 {
        self.vte * (i / self.is + 1.0).ln() + i * self.rs
    }

    /// Fit a discrete diode, Zener or TVS from its ratings:
    /// `Rs = 0.1·vf/I_ref` [memory] and `Is` so that `V(I_ref) = vf`, with
    /// `I_ref = if_avg` (else a Zener's `p_max/vz`, else 1 A [memory]);
    /// `TT = qrr/if_avg`, else `trr/2` [memory], 0 for a Schottky;
    /// `BV = vz` (Zener) or `v_clamp` (TVS, whose series resistance is 5 %
    /// of `v_clamp` per ampere [memory], or `(v_clamp − vz)/I_pp` when
    /// both voltages are given with `I_pp = p_max/v_clamp`).
    pub fn fit(p: &Part) -> (Diode, DiodeFit) {
        let schottky = p.word("type") == Some("schottky");
        let n = if schottky { N_SCHOTTKY } else { N_PN };
        let mut fit = DiodeFit::default();
        let (vf, vf_from) = match p.num("vf") {
            Some(v) => (v, Source::Rating),
            None => (VF_DEFAULT, Source::Memory),
        };
        fit.vf = vf;
        fit.vf_from = Some(vf_from);
        let bv = match p.kind {
            Kind::Zener => p.num("vz"),
            Kind::Tvs => p.num("v_clamp").or(p.num("vz")),
            _ => None,
        };
        let (i_ref, i_from) = match (p.num("if_avg"), p.kind, p.num("p_max"), bv) {
            (Some(i), _, _, _) => (i, Source::Rating),
            (None, Kind::Zener, Some(pm), Some(bv)) if bv > 0.0 => (pm / bv, Source::Rating),
            _ => (I_REF_DEFAULT, Source::Memory),
        };
        fit.i_ref = i_ref;
        fit.i_ref_from = Some(i_from);
        let (rs, bv) = if p.kind == Kind::Tvs {
            let vc = p.num("v_clamp");
            match (vc, p.num("vz"), p.num("p_max")) {
                (Some(vc), Some(vz), Some(pm)) if vz < vc && pm > 0.0 => {
                    (((vc - vz) / (pm / vc)).max(0.0), Some(vz))
                }
                _ => (bv.map_or(0.0, |b| TVS_RDYN_PER_V * b), bv),
            }
        } else {
            (0.1 * vf / i_ref.max(1e-9), bv)
        };
        // the junction takes what the series resistance leaves of vf
        let vj = (vf - i_ref * rs).max(0.5 * vf);
        let is = i_ref / ((vj / (n * VT)).min(700.0).exp() - 1.0);
        let (tt, tt_from) = if schottky {
            (0.0, Source::Rating)
        } else {
            match (p.num("qrr"), p.num("if_avg"), p.num("trr")) {
                (Some(q), Some(i), _) if i > 0.0 => (q / i, Source::Rating),
                (_, _, Some(trr)) => (trr / 2.0, Source::Memory),
                _ => (0.0, Source::Memory),
            }
        };
        fit.tt_from = Some(tt_from);
        (Diode::new(is, n, rs, bv, tt), fit)
    }

    /// The body diode of a MOSFET: `body_vf` (0.9 V [memory]) at `id_max`,
    /// `Rs = 0.1·vf/id_max` [memory], breaking down at 1.3·`vds_max`
    /// [memory] (the avalanche of the switch itself), `TT = body_trr/2`.
    pub fn body(p: &Part) -> Diode {
        let vf = p.num("body_vf").unwrap_or(BODY_VF);
        let i_ref = p.num("id_max").unwrap_or(I_REF_DEFAULT).max(1e-6);
        let rs = 0.1 * vf / i_ref;
        let is = i_ref / (((vf - i_ref * rs) / VT).min(700.0).exp() - 1.0);
        let bv = p.num("vds_max").map(|v| AVALANCHE_FACTOR * v);
        let tt = p.num("body_trr").map_or(0.0, |t| t / 2.0);
        Diode::new(is, N_PN, rs, bv, tt)
    }

    /// The collector-emitter breakdown of a bipolar switch, as a diode
    /// from emitter to collector breaking down at 1.3·`vce_max` [memory].
    pub fn avalanche(v_max: f64) -> Diode {
        Diode::new(1e-14, N_PN, 0.0, Some(AVALANCHE_FACTOR * v_max), 0.0)
    }
}

/// ngspice's `diotemp`: the breakdown voltage used in the equations, so
/// that the current at the rated `BV` is `IBV` (25 fixed-point steps).
fn breakdown_knee(is: f64, n: f64, bv: f64) -> f64 {
    let vt = VT;
    let nbv = n;
    let cbv = IBV;
    if cbv < is * bv / vt {
        return bv;
    }
    let tol = 1e-3 * cbv;
    let mut xbv = bv - nbv * vt * (1.0 + cbv / is).ln();
    for _ in 0..25 {
        xbv = bv - nbv * vt * (cbv / is + 1.0 - xbv / vt).ln();
        let xcbv = is * (((bv - xbv) / (nbv * vt)).exp() - 1.0 + xbv / vt);
        if (xcbv - cbv).abs() <= tol {
            break;
        }
    }
    xbv
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fit_gives_vf_at_the_rated_current() {
        // Is chosen so that the junction drops 0.9·vf and Rs 0.1·vf
        let d = Diode::new(
            1.0 / ((0.9 * 0.45 / (N_SCHOTTKY * VT)).exp() - 1.0),
            N_SCHOTTKY,
            0.045,
            None,
            0.0,
        );
        assert!((d.v_at(1.0) - 0.45).abs() < 1e-9, "{}", d.v_at(1.0));
    }

    #[test]
    fn breakdown_current_at_bv_is_ibv() {
        let d = Diode::new(1e-12, 1.0, 0.0, Some(24.0), 0.0);
        let (i, _) = d.eval_junction(-24.0);
        assert!((i + IBV).abs() < 2e-6, "{i}");
    }
}
