//! The MOSFET: Shichman–Hodges square law (ngspice MOS level 1 with
//! λ = 0, W = L = 1), its body diode and its gate capacitances.
//!
//! In the device's own polarity (voltages multiplied by −1 for a
//! p-channel part), with `Vov = V_GS − VTO`:
//! off `I_D = 0` (`Vov ≤ 0`); linear `I_D = K·(Vov − V_DS/2)·V_DS`
//! (`V_DS < Vov`); saturated `I_D = K/2·Vov²`. Drain and source swap when
//! `V_DS < 0` (the channel is symmetric).

use super::Source;
use crate::model::{Kind, Part};

/// Gate threshold when none is given (V) [memory].
pub const VTH_DEFAULT: f64 = 2.0;
/// Gate voltage at which `rds_on` is taken to be specified when
/// `rds_on_vgs` is absent: 10 V, the usual data-sheet condition [memory].
pub const RDS_ON_VGS_DEFAULT: f64 = 10.0;
/// On-resistance when none is given (Ω): only so that a state solves; the
/// part's losses are reported as missing.
pub const RDS_ON_FALLBACK: f64 = 0.01;
/// Output capacitance when `coss` is not given [memory].
pub const COSS_DEFAULT: f64 = 100e-12;
/// Temperature coefficient of the on-resistance, 0.6 %/K [memory]: R
/// roughly doubles by 140 °C.
pub const RDS_ALPHA: f64 = 0.006;

#[derive(Clone, Debug, PartialEq)]
pub struct Mosfet {
    /// +1 n-channel, −1 p-channel.
    pub polarity: f64,
    /// Threshold in the device's own polarity (positive for enhancement).
    pub vto: f64,
    /// Transconductance parameter `KP` (A/V²), W = L = 1.
    pub kp: f64,
    pub cgs: f64,
    pub cgd: f64,
    pub cds: f64,
}

/// The channel current and its derivatives, in the device's polarity.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct MosEval {
    /// Current into the drain (A).
    pub id: f64,
    /// ∂I_D/∂V_GS.
    pub dvgs: f64,
    /// ∂I_D/∂V_DS.
    pub dvds: f64,
}

/// How the parameters were obtained.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct MosFit {
    pub rds_on: f64,
    pub rds_on_vgs: f64,
    pub vth_from: Option<Source>,
    pub vgs_from: Option<Source>,
    pub caps_from: Option<Source>,
    pub has_rds_on: bool,
}

impl Mosfet {
    /// `VTO = vgs_th`; `K = 1/(rds_on·(rds_on_vgs − vgs_th))`, so that the
    /// model has `rds_on` at `rds_on_vgs` and small `V_DS`;
    /// `Cgd = qgd/(vds_max/2)` with `qgd` default `qg/3` [memory];
    /// `Cgs = qg/rds_on_vgs − Cgd` — charge-equivalent capacitances, an
    /// approximation of the nonlinear gate charge curve;
    /// `Cds = coss − Cgd`, `coss` default 100 pF [memory].
    pub fn fit(p: &Part) -> (Mosfet, MosFit) {
        let polarity = if p.kind == Kind::Pmos { -1.0 } else { 1.0 };
        let mut fit = MosFit::default();
        let (vth, vth_from) = match p.num("vgs_th") {
            Some(v) => (v.abs(), Source::Rating),
            None => (VTH_DEFAULT, Source::Memory),
        };
        fit.vth_from = Some(vth_from);
        let (vgs_spec, vgs_from) = match p.num("rds_on_vgs") {
            Some(v) if v.abs() > vth => (v.abs(), Source::Rating),
            Some(_) | None => (RDS_ON_VGS_DEFAULT.max(vth + 1.0), Source::Memory),
        };
        fit.vgs_from = Some(vgs_from);
        fit.rds_on_vgs = vgs_spec;
        fit.has_rds_on = p.num("rds_on").is_some();
        let rds = p.num("rds_on").unwrap_or(RDS_ON_FALLBACK).max(1e-6);
        fit.rds_on = rds;
        let kp = 1.0 / (rds * (vgs_spec - vth));
        let (cgs, cgd, cds, caps_from) = match p.num("qg") {
            Some(qg) => {
                let qgd = p.num("qgd").unwrap_or(qg / 3.0);
                let vds_half = p.num("vds_max").map_or(RDS_ON_VGS_DEFAULT, |v| v / 2.0);
                let cgd = qgd / vds_half.max(1e-3);
                let ciss = qg / vgs_spec;
                let cgs = (ciss - cgd).max(0.1 * ciss);
                let coss = p.num("coss").unwrap_or(COSS_DEFAULT);
                let cds = (coss - cgd).max(0.1 * coss);
                let from = if p.num("qgd").is_some() && p.num("coss").is_some() {
                    Source::Rating
                } else {
                    Source::Memory
                };
                (cgs, cgd, cds, from)
            }
            None => {
                let coss = p.num("coss").unwrap_or(COSS_DEFAULT);
                (0.0, 0.0, coss, Source::Memory)
            }
        };
        fit.caps_from = Some(caps_from);
        (
            Mosfet {
                polarity,
                vto: vth,
                kp,
                cgs,
                cgd,
                cds,
            },
            fit,
        )
    }

    /// Level-1 channel current in the device's polarity.
    pub fn eval(&self, vgs: f64, vds: f64) -> MosEval {
        if vds >= 0.0 {
            let (id, gm, gds) = self.forward(vgs - self.vto, vds);
            MosEval {
                id,
                dvgs: gm,
                dvds: gds,
            }
        } else {
            // source and drain swap: the gate-drain voltage controls
            let (c, gm, gds) = self.forward(vgs - vds - self.vto, -vds);
            MosEval {
                id: -c,
                dvgs: -gm,
                dvds: gm + gds,
            }
        }
    }

    /// `(I, ∂I/∂Vov, ∂I/∂V_DS)` for `V_DS ≥ 0`.
    fn forward(&self, vov: f64, vds: f64) -> (f64, f64, f64) {
        if vov <= 0.0 {
            (0.0, 0.0, 0.0)
        } else if vov <= vds {
            (0.5 * self.kp * vov * vov, self.kp * vov, 0.0)
        } else {
            (
                self.kp * (vov - 0.5 * vds) * vds,
                self.kp * vds,
                self.kp * (vov - vds),
            )
        }
    }

    /// The channel's region: 0 off, 1 linear, 2 saturated (+3 reversed).
    pub fn region(&self, vgs: f64, vds: f64) -> u8 {
        let (vov, vds, base) = if vds >= 0.0 {
            (vgs - self.vto, vds, 0)
        } else {
            (vgs - vds - self.vto, -vds, 3)
        };
        base + if vov <= 0.0 {
            0
        } else if vov > vds {
            1
        } else {
            2
        }
    }

    /// Small-signal on-resistance at `V_GS` (device polarity) and
    /// `V_DS → 0`.
    pub fn r_on_at(&self, vgs: f64) -> f64 {
        let vov = vgs - self.vto;
        if vov <= 0.0 {
            f64::INFINITY
        } else {
            1.0 / (self.kp * vov)
        }
    }

    /// The largest current the channel can carry at `V_GS` (saturation).
    pub fn i_sat(&self, vgs: f64) -> f64 {
        let vov = (vgs - self.vto).max(0.0);
        0.5 * self.kp * vov * vov
    }

    /// Limit the terminal voltages between Newton iterations (ngspice
    /// `mos1load`: `fetlim` on the controlling gate voltage, `limvds` on
    /// the drain-source voltage), in the device's polarity.
    pub fn limit(&self, vgs: f64, vds: f64, vgs_old: f64, vds_old: f64) -> (f64, f64) {
        let vgd = vgs - vds;
        let vgd_old = vgs_old - vds_old;
        if vds_old >= 0.0 {
            let vgs = fetlim(vgs, vgs_old, self.vto);
            let vds = limvds(vgs - vgd, vds_old);
            (vgs, vds)
        } else {
            let vgd = fetlim(vgd, vgd_old, self.vto);
            let vds = -limvds(-(vgs - vgd), -vds_old);
            (vgd + vds, vds)
        }
    }
}

/// SPICE3 `DEVfetlim`: limit a gate voltage step around the threshold.
pub fn fetlim(vnew: f64, vold: f64, vto: f64) -> f64 {
    let vtsthi = (2.0 * (vold - vto)).abs() + 2.0;
    let vtstlo = (vold - vto).abs() + 1.0;
    let vtox = vto + 3.5;
    let delv = vnew - vold;
    let mut v = vnew;
    if vold >= vto {
        if vold >= vtox {
            if delv <= 0.0 {
                if vnew >= vtox {
                    if -delv > vtstlo {
                        v = vold - vtstlo;
                    }
                } else {
                    v = vnew.max(vto + 2.0);
                }
            } else if delv >= vtsthi {
                v = vold + vtsthi;
            }
        } else if delv <= 0.0 {
            v = vnew.max(vto - 0.5);
        } else {
            v = vnew.min(vto + 4.0);
        }
    } else if delv <= 0.0 {
        if -delv > vtsthi {
            v = vold - vtsthi;
        }
    } else {
        let vtemp = vto + 0.5;
        if vnew <= vtemp {
            if delv > vtstlo {
                v = vold + vtstlo;
            }
        } else {
            v = vtemp;
        }
    }
    v
}

/// SPICE3 `DEVlimvds`.
pub fn limvds(vnew: f64, vold: f64) -> f64 {
    if vold >= 3.5 {
        if vnew > vold {
            vnew.min(3.0 * vold + 2.0)
        } else if vnew < 3.5 {
            vnew.max(2.0)
        } else {
            vnew
        }
    } else if vnew > vold {
        vnew.min(4.0)
    } else {
        vnew.max(-0.5)
    }
}

/// `R(Tj) = R25·(1 + α)^(Tj − 25)`: the on-resistance at a junction
/// temperature, the method of Erickson & Maksimović, *Fundamentals of
/// Power Electronics*, ch. 4; equivalently `K(Tj) = K25/(1 + α)^(Tj − 25)`.
pub fn r_at(r25: f64, tj: f64) -> f64 {
    r25 * (1.0 + RDS_ALPHA).powf(tj - 25.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn m() -> Mosfet {
        Mosfet {
            polarity: 1.0,
            vto: 1.8,
            kp: 1.0 / (0.12 * (4.5 - 1.8)),
            cgs: 0.0,
            cgd: 0.0,
            cds: 0.0,
        }
    }

    #[test]
    fn on_resistance_at_the_specified_gate_voltage() {
        // the fit's purpose: R = 1/(K·(V_GS − VTO)) = rds_on at rds_on_vgs
        assert!((m().r_on_at(4.5) - 0.12).abs() < 1e-12);
    }

    #[test]
    fn level1_matches_ngspice_op() {
        // ngspice-39 `.op`: 12 V, 6 Ω to the drain, V_GS 4.5 V, VTO 1.8,
        // KP 3.0864: v(d) = 0.2463103 V, i = 1.95895 A
        let mos = m();
        let vd = 0.246_310_3;
        let e = mos.eval(4.5, vd);
        assert!((e.id - (12.0 - vd) / 6.0).abs() < 1e-4, "{}", e.id);
    }

    #[test]
    fn reversed_channel_is_symmetric() {
        let mos = m();
        let f = mos.eval(4.5, 0.1);
        // with drain and source swapped, V_GD = V_GS − V_DS controls
        let r = mos.eval(4.4, -0.1);
        assert!((f.id + r.id).abs() < 1e-12);
    }
}
