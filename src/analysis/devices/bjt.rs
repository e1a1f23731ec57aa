//! The bipolar transistor: the Ebers–Moll transport model (ngspice's
//! Gummel–Poon model with its defaults: no Early effect, no high
//! injection, no leakage terms), with a series collector resistance.
//!
//! In the device's polarity, with `Icc = Is·(e^(Vbe/Vt) − 1)` and
//! `Iec = Is·(e^(Vbc/Vt) − 1)`:
//! `Ic = Icc − Iec·(1 + 1/BR)`, `Ib = Icc/BF + Iec/BR` (+ `gmin` terms).

use super::{GMIN, Source, VT, junction, pnjlim, vcrit};
use crate::model::{Kind, Part};

/// Current gain when `hfe_min` is not given [memory].
pub const HFE_DEFAULT: f64 = 100.0;
/// Base-emitter on voltage when `vbe_on` is not given (silicon, common
/// practice).
pub const VBE_DEFAULT: f64 = 0.7;
/// Saturation voltage when `vce_sat` is not given [memory].
pub const VCE_SAT_DEFAULT: f64 = 0.2;
/// Collector current rating when `ic_max` is not given (A) [memory].
pub const IC_MAX_DEFAULT: f64 = 1.0;
/// Collector-emitter capacitance when `coss` is not given: 10 pF, of the
/// order of a small-signal transistor's output capacitance [memory].
pub const COSS_DEFAULT: f64 = 10e-12;
/// Reverse current gain (ngspice's default `BR`).
pub const BR: f64 = 1.0;

#[derive(Clone, Debug, PartialEq)]
pub struct Bjt {
    /// +1 npn, −1 pnp.
    pub polarity: f64,
    pub is: f64,
    pub bf: f64,
    pub br: f64,
    /// Series collector resistance (Ω).
    pub rc: f64,
    vcrit: f64,
}

/// Terminal currents (device polarity) and their derivatives.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct BjtEval {
    pub ic: f64,
    pub ib: f64,
    pub dic_dvbe: f64,
    pub dic_dvbc: f64,
    pub dib_dvbe: f64,
    pub dib_dvbc: f64,
}

#[derive(Clone, Debug, Default, PartialEq)]
pub struct BjtFit {
    pub from: Option<Source>,
}

impl Bjt {
    pub fn new(polarity: f64, is: f64, bf: f64, br: f64, rc: f64) -> Bjt {
        let is = is.max(1e-300);
        Bjt {
            polarity,
            is,
            bf,
            br,
            rc,
            vcrit: vcrit(VT, is),
        }
    }

    /// `BF = hfe_min`, `BR = 1`, `Is` so that `Vbe(ic_max/10) = vbe_on`,
    /// `RC` so that `Vce = vce_sat` at `ic_max/10` with a forced gain of
    /// 10 (`Ib = Ic/10`).
    pub fn fit(p: &Part) -> (Bjt, BjtFit) {
        let polarity = if p.kind == Kind::Pnp { -1.0 } else { 1.0 };
        let all_given = ["hfe_min", "vbe_on", "vce_sat", "ic_max"]
            .iter()
            .all(|k| p.num(k).is_some());
        let bf = p.num("hfe_min").unwrap_or(HFE_DEFAULT).max(1.0);
        let vbe = p.num("vbe_on").unwrap_or(VBE_DEFAULT);
        let vsat = p.num("vce_sat").unwrap_or(VCE_SAT_DEFAULT);
        let ic = p.num("ic_max").unwrap_or(IC_MAX_DEFAULT).max(1e-9) / 10.0;
        let is = ic / ((vbe / VT).min(700.0).exp() - 1.0);
        let rc = ((vsat - vce_sat_intrinsic(is, bf, BR, ic, ic / 10.0)) / ic).max(0.0);
        (
            Bjt::new(polarity, is, bf, BR, rc),
            BjtFit {
                from: Some(if all_given {
                    Source::Rating
                } else {
                    Source::Memory
                }),
            },
        )
    }

    pub fn eval(&self, vbe: f64, vbc: f64) -> BjtEval {
        let (cbe, gbe) = junction(self.is, vbe, VT);
        let (cbc, gbc) = junction(self.is, vbc, VT);
        BjtEval {
            ic: cbe - cbc - cbc / self.br - GMIN * vbc,
            ib: cbe / self.bf + GMIN * vbe + cbc / self.br + GMIN * vbc,
            dic_dvbe: gbe,
            dic_dvbc: -gbc - gbc / self.br - GMIN,
            dib_dvbe: gbe / self.bf + GMIN,
            dib_dvbc: gbc / self.br + GMIN,
        }
    }

    pub fn limit(&self, vbe: f64, vbc: f64, vbe_old: f64, vbc_old: f64) -> (f64, f64, bool) {
        let (a, l1) = pnjlim(vbe, vbe_old, VT, self.vcrit);
        let (b, l2) = pnjlim(vbc, vbc_old, VT, self.vcrit);
        (a, b, l1 || l2)
    }

    pub fn v_init(&self) -> f64 {
        self.vcrit.min(1.0)
    }
}

/// The junction part of `Vce` in saturation at forced currents `ic`,
/// `ib` (Ebers–Moll): solve the two junction currents from `Ic` and `Ib`
/// and take `Vbe − Vbc`.
pub fn vce_sat_intrinsic(is: f64, bf: f64, br: f64, ic: f64, ib: f64) -> f64 {
    // Ic/Is = a − (1 + 1/BR)·b, Ib/Is = a/BF + b/BR  (a, b: e^(V/Vt) − 1)
    let b = (bf * ib - ic) / (is * (bf / br + 1.0 + 1.0 / br));
    let a = bf * (ib / is - b / br);
    if a <= 0.0 || b <= -1.0 {
        return 0.0;
    }
    VT * ((a + 1.0) / (b + 1.0)).ln()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn forced_gain_saturation_voltage() {
        // textbook Ebers–Moll result (e.g. Sedra & Smith): with BF = 100,
        // BR = 1, forced gain 10, Vce(sat) = Vt·ln((1 + (βf+1)/βR)/(1 − βf/βF))
        // = Vt·ln((1 + 11)/(1 − 0.1)) = Vt·ln(13.33) ≈ 67 mV
        let v = vce_sat_intrinsic(1e-14, 100.0, 1.0, 10e-3, 1e-3);
        let want = VT * ((1.0 + 11.0 / 1.0) / (1.0 - 0.1_f64)).ln();
        assert!((v - want).abs() < 1e-6, "{v} vs {want}");
    }
}
