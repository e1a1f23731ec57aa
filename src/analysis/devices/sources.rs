//! The other devices: controller pins and gate-driver outputs as Thevenin
//! sources, loads as winding + back-EMF, resistors, capacitors.

use crate::model::{NetKind, Part};

/// Output resistance of a controller pin when the part gives neither
/// `r_out` nor `io_i_max`: 25 Ω [memory].
pub const PIN_R_OUT_DEFAULT: f64 = 25.0;
/// A controller pin droops 10 % of its level at its rated current
/// [memory]: `R_out = 0.1·io_v / io_i_max`.
pub const PIN_DROOP: f64 = 0.1;
/// Gate-driver output resistance when neither `r_out` nor `io_i_max` is
/// given: 2 Ω [memory].
pub const DRIVER_R_OUT_DEFAULT: f64 = 2.0;
/// Width of a gate driver's input transition (V): its output follows
/// `½ + ½·tanh((V_in − V_th)/w)` of its supply, a smooth comparator
/// that Newton's method can follow.
pub const DRIVER_IN_WIDTH: f64 = 0.05;
/// Winding resistance of an `inductor` without `r` (Ω), so that its DC
/// state solves.
pub const INDUCTOR_R_DEFAULT: f64 = 1e-3;

/// A controller pin's protection diode: 0.7 V at 10 mA with 10 Ω in
/// series [memory: typical CMOS input protection].
pub fn esd_diode() -> super::Diode {
    let (i, v, rs) = (10e-3, 0.7, 10.0);
    let is = i / (((v - i * rs) / super::VT).exp() - 1.0);
    super::Diode::new(is, 1.0, rs, None, 0.0)
}

/// A controller pin's output resistance: `r_out`, else `0.1·io_v/io_i_max`
/// [memory], else 25 Ω [memory].
pub fn pin_r_out(mcu: &Part, level: f64) -> f64 {
    if let Some(r) = mcu.num("r_out") {
        return r.max(1e-3);
    }
    match mcu.num("io_i_max") {
        Some(i) if i > 0.0 && level > 0.0 => PIN_DROOP * level / i,
        _ => PIN_R_OUT_DEFAULT,
    }
}

/// A gate driver's output resistance: `r_out`, else `vdd_max/io_i_max`
/// (the rated peak current into a short), else 2 Ω [memory].
pub fn driver_r_out(drv: &Part) -> f64 {
    if let Some(r) = drv.num("r_out") {
        return r.max(1e-3);
    }
    match (drv.num("vdd_max"), drv.num("io_i_max")) {
        (Some(v), Some(i)) if i > 0.0 => v / i,
        _ => DRIVER_R_OUT_DEFAULT,
    }
}

/// The smooth comparator of a gate driver's input: the fraction of its
/// supply at its output, and the derivative by the input voltage.
pub fn driver_transfer(v_in: f64, v_th: f64, invert: bool) -> (f64, f64) {
    let t = ((v_in - v_th) / DRIVER_IN_WIDTH).tanh();
    let f = 0.5 + 0.5 * t;
    let df = 0.5 * (1.0 - t * t) / DRIVER_IN_WIDTH;
    if invert { (1.0 - f, -df) } else { (f, df) }
}

/// A winding's resistance at worst case: `r·(1 − r_tol)`.
pub fn winding_r(p: &Part) -> Option<f64> {
    let r = match p.kind {
        crate::model::Kind::Inductor => p.num("r").unwrap_or(INDUCTOR_R_DEFAULT),
        _ => p.num("r")?,
    };
    let tol = p.num("r_tol").unwrap_or(0.0).clamp(0.0, 0.99);
    Some((r * (1.0 - tol)).max(1e-6))
}

/// A winding's inductance: `l`, or an inductor's value.
pub fn winding_l(p: &Part) -> f64 {
    p.num("l").or(p.num("value")).unwrap_or(0.0).max(0.0)
}

/// The supply level of a controller: its `io_v`, else the rail on its
/// supply pin (nominal).
pub fn io_level(c: &crate::model::Circuit, mcu: &Part) -> f64 {
    if let Some(v) = mcu.num("io_v") {
        return v;
    }
    supply_rail(c, mcu).map_or(0.0, |r| r.nominal)
}

/// The rail on a controller's or driver's positive supply pin.
pub fn supply_rail(c: &crate::model::Circuit, p: &Part) -> Option<crate::model::Rail> {
    p.pins.iter().find_map(|pin| {
        let n = pin.name.to_ascii_uppercase();
        let supply = n.starts_with("VDD") || n.starts_with("VCC") || n.starts_with("VIO");
        match c.net(pin.net).kind {
            NetKind::Rail(r) if supply => Some(r),
            _ => None,
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn comparator_is_smooth_and_centred() {
        let (f, df) = driver_transfer(2.5, 2.5, false);
        assert!((f - 0.5).abs() < 1e-12 && df > 0.0);
        let (f, _) = driver_transfer(3.0, 2.5, false);
        assert!(f > 0.999_999);
        let (f, _) = driver_transfer(3.0, 2.5, true);
        assert!(f < 1e-6);
    }
}
