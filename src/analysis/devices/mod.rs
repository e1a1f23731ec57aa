//! Device models, fitted from a part's ratings.
//!
//! Each model is the textbook one that ngspice also implements (so a deck
//! exported with the same parameters reproduces the engine's numbers):
//! the Shockley diode with series resistance and reverse breakdown
//! (`diode.rs`), the square-law MOSFET of Shichman and Hodges, ngspice's
//! MOS level 1 with λ = 0 (`mosfet.rs`), the Ebers–Moll transport model
//! of the bipolar transistor, ngspice's Gummel–Poon with its defaults
//! (`bjt.rs`). Controller pins, gate drivers, loads, resistors and
//! capacitors are in `sources.rs`.
//!
//! The device equations follow the SPICE3 code as described by Nagel,
//! *SPICE2: A computer program to simulate semiconductor circuits*
//! (UCB/ERL M520, 1975) and ngspice's manual: the same junction limiting
//! (`pnjlim`, `fetlim`, `limvds`) and the same `gmin` across junctions.

pub mod bjt;
pub mod diode;
pub mod mosfet;
pub mod sources;

pub use bjt::Bjt;
pub use diode::Diode;
pub use mosfet::Mosfet;

/// Boltzmann's constant and the elementary charge as ngspice 39 defines
/// them (`const.h`).
const BOLTZ: f64 = 1.380_648_52e-23;
const CHARGE: f64 = 1.602_176_620_8e-19;
/// ngspice's default temperature, 27 °C.
pub const T_NOM_K: f64 = 300.15;
/// Thermal voltage kT/q at 27 °C (V): the temperature at which the engine
/// and an exported deck both evaluate their devices.
pub const VT: f64 = BOLTZ * T_NOM_K / CHARGE;
/// Conductance in parallel with every junction (S), SPICE's default.
pub const GMIN: f64 = 1e-12;

/// `pnjlim`: limit the change of a junction voltage between Newton
/// iterations so that the exponential cannot overflow or overshoot
/// (SPICE3 `DEVpnjlim`, as in ngspice 39). Returns the limited voltage and
/// whether it was limited.
pub fn pnjlim(vnew: f64, vold: f64, vt: f64, vcrit: f64) -> (f64, bool) {
    if vnew > vcrit && (vnew - vold).abs() > 2.0 * vt {
        let v = if vold > 0.0 {
            let arg = 1.0 + (vnew - vold) / vt;
            if arg > 0.0 {
                vold + vt * arg.ln()
            } else {
                vcrit
            }
        } else {
            vt * (vnew / vt).ln()
        };
        (v, true)
    } else if vnew < 0.0 {
        let arg = if vold > 0.0 {
            -vold - 1.0
        } else {
            2.0 * vold - 1.0
        };
        if vnew < arg {
            (arg, true)
        } else {
            (vnew, false)
        }
    } else {
        (vnew, false)
    }
}

/// `vcrit = Vt·ln(Vt / (√2·Is))`, the junction voltage above which
/// `pnjlim` limits.
pub fn vcrit(vt: f64, is: f64) -> f64 {
    if is <= 0.0 {
        return f64::INFINITY;
    }
    vt * (vt / (std::f64::consts::SQRT_2 * is)).ln()
}

/// The exponential junction current `Is·(e^(v/vt) − 1)` and its
/// derivative, with SPICE's cubic reverse tail below `−3·vt` (which keeps
/// the Jacobian finite in deep reverse bias).
pub fn junction(is: f64, v: f64, vt: f64) -> (f64, f64) {
    if v >= -3.0 * vt {
        let e = (v / vt).min(700.0).exp();
        (is * (e - 1.0), is * e / vt)
    } else {
        let arg = 3.0 * vt / (v * std::f64::consts::E);
        let arg = arg * arg * arg;
        (-is * (1.0 + arg), is * 3.0 * arg / v)
    }
}

/// Where a default came from, for `facts` notes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Source {
    /// The part's own rating.
    Rating,
    /// A default recalled, not read from a data sheet (marked `[memory]`).
    Memory,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thermal_voltage_at_27_degc() {
        // kT/q at 300.15 K = 25.864 mV (CODATA constants as ngspice uses them)
        assert!((VT - 0.025_864).abs() < 1e-6, "{VT}");
    }

    #[test]
    fn pnjlim_limits_large_forward_steps() {
        let vc = vcrit(VT, 1e-14);
        let (v, lim) = pnjlim(5.0, 0.6, VT, vc);
        assert!(lim && v < 0.8 && v > 0.6, "{v}");
        let (v, lim) = pnjlim(0.61, 0.6, VT, vc);
        assert!(!lim && v == 0.61);
    }
}
