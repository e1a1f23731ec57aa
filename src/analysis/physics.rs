//! Closed-form physics: turn-off decay, clamp energy, PWM ripple, losses
//! and junction temperature. Each function names its source.

/// Decay time of an inductive current `i0` (A) in a winding `l` (H), `r`
/// (Ω), against a constant loop voltage `v_loop` (V).
///
/// From `L·di/dt = -V_loop - R·i`: `i(t) = (I0 + V/R)·e^(-t/τ) - V/R` with
/// `τ = L/R`; `i = 0` at `t = (L/R)·ln(1 + R·I0/V)`. For `R → 0` the
/// current falls linearly: `t = L·I0/V`.
pub fn decay_time(l: f64, r: f64, i0: f64, v_loop: f64) -> f64 {
    if v_loop <= 0.0 {
        return f64::INFINITY;
    }
    if r <= 1e-9 {
        return l * i0 / v_loop;
    }
    (l / r) * (1.0 + r * i0 / v_loop).ln()
}

/// Energy delivered into clamp elements whose voltage is `v_elem`, while
/// the whole loop opposes the current with `v_loop` (they differ when the
/// loop passes through a supply: a clamp across a switch sees
/// `v_loop = V_cl - V_rail`, `v_elem = V_cl`).
///
/// `E = V_elem·∫i dt`, and with `i(t)` above, `∫₀^t i dt = τ·I0 - (V/R)·t`.
/// For `R → 0`: `E = ½·L·I0²·V_elem/V_loop`.
pub fn clamp_energy(l: f64, r: f64, i0: f64, v_loop: f64, v_elem: f64) -> f64 {
    if v_loop <= 0.0 {
        return f64::INFINITY;
    }
    if r <= 1e-9 {
        return 0.5 * l * i0 * i0 * v_elem / v_loop;
    }
    let t = decay_time(l, r, i0, v_loop);
    let tau = l / r;
    v_elem * (tau * i0 - (v_loop / r) * t)
}

/// Peak voltage when the current has nowhere to go but a capacitance `c`:
/// the inductor's energy rings into it, `V ≈ I·sqrt(L/C)`.
pub fn open_circuit_peak(l: f64, c: f64, i0: f64) -> f64 {
    i0 * (l / c).sqrt()
}

/// Peak-to-peak ripple of an RL load switched at frequency `f`, duty `d`,
/// from a source `v` (the back-EMF only shifts the mean):
/// `ΔI = (V/R)(1 - e^(-DT/τ))(1 - e^(-(1-D)T/τ)) / (1 - e^(-T/τ))`.
pub fn ripple(v: f64, r: f64, l: f64, f: f64, d: f64) -> f64 {
    if r <= 1e-9 {
        // T ≪ τ limit
        return v * d * (1.0 - d) / (l * f);
    }
    let tau = l / r;
    let t = 1.0 / f;
    let a = 1.0 - (-d * t / tau).exp();
    let b = 1.0 - (-(1.0 - d) * t / tau).exp();
    let c = 1.0 - (-t / tau).exp();
    (v / r) * a * b / c
}

/// Mean current of a PWM-driven RL load with back-EMF `e`: `(D·V - E)/R`.
pub fn pwm_mean(v: f64, r: f64, d: f64, e: f64) -> f64 {
    (d * v - e) / r
}

/// Switching loss for edge times `t_on + t_off` at frequency `f`, with an
/// edge factor: ½ for an inductive (clamped) load, 1/6 for resistive
/// edges (Erickson & Maksimović, ch. 4).
pub fn switching_loss(v: f64, i: f64, t_on: f64, t_off: f64, f: f64, factor: f64) -> f64 {
    factor * v * i * (t_on + t_off) * f
}

/// Default temperature coefficient of R_DS(on): 0.6 %/K [memory].
pub const RDS_ALPHA: f64 = 0.006;

/// `R(Tj) = R25·(1 + α)^(Tj - 25)`.
pub fn rds_at(r25: f64, tj: f64, alpha: f64) -> f64 {
    r25 * (1.0 + alpha).powf(tj - 25.0)
}

/// The junction temperature fixed point, or why there is none.
#[derive(Clone, Debug, PartialEq)]
pub enum Thermal {
    Converged {
        tj: f64,
        p: f64,
    },
    /// No fixed point below the limit: thermal runaway.
    Runaway {
        p_at_limit: f64,
    },
}

/// Iterate `Tj = Ta + P(Tj)·Rth` to a fixed point; `limit` is where the
/// search gives up (a junction that far above `tj_max` has failed).
pub fn junction_temperature(ta: f64, rth: f64, limit: f64, p_of: impl Fn(f64) -> f64) -> Thermal {
    let mut tj = ta;
    for _ in 0..500 {
        let p = p_of(tj);
        let next = ta + p * rth;
        if !next.is_finite() || next > limit {
            return Thermal::Runaway {
                p_at_limit: p_of(limit),
            };
        }
        if (next - tj).abs() < 1e-6 {
            return Thermal::Converged { tj: next, p };
        }
        tj = next;
    }
    Thermal::Runaway {
        p_at_limit: p_of(limit),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn within(a: f64, b: f64, rel: f64) -> bool {
        ((a - b) / b).abs() <= rel
    }

    // Check values simulated with ngspice 39.3 for 12 V, 10 mH, 10 Ω,
    // I0 = 1.19 A (the project's physics notes); the clamp voltages below
    // are the ones that the simulated diode drops imply.
    #[test]
    fn decay_with_a_diode_only() {
        // diode only: analytic 2.88 ms at the diode's ~0.71 V mean drop
        let t = decay_time(10e-3, 10.0, 1.19, 0.708);
        assert!(within(t, 2.88e-3, 0.01), "{t}");
    }

    #[test]
    fn decay_with_diode_and_zener() {
        // diode + 24 V Zener: analytic 0.394 ms (simulated 0.388 ms)
        let t = decay_time(10e-3, 10.0, 1.19, 24.64);
        assert!(within(t, 0.394e-3, 0.01), "{t}");
        assert!(within(t, 0.388e-3, 0.03), "{t}");
    }

    #[test]
    fn clamp_across_the_switch() {
        // 40 V clamp across the switch on a 12 V rail: loop 28 V,
        // 0.354 ms; energy 7.96 mJ analytic (7.94 mJ simulated).
        let t = decay_time(10e-3, 10.0, 1.19, 28.0);
        assert!(within(t, 0.354e-3, 0.01), "{t}");
        let e = clamp_energy(10e-3, 10.0, 1.19, 28.0, 40.0);
        assert!(within(e, 7.96e-3, 0.01), "{e}");
        assert!(within(e, 7.94e-3, 0.01), "{e}");
        // stored energy ½LI² = 7.1 mJ
        assert!(within(0.5 * 10e-3 * 1.19 * 1.19, 7.1e-3, 0.01));
        // R → 0 limit: ½LI²·V_cl/(V_cl - V_rail)
        let e0 = clamp_energy(10e-3, 0.0, 1.19, 28.0, 40.0);
        assert!(within(e0, 0.5 * 10e-3 * 1.19 * 1.19 * 40.0 / 28.0, 1e-9));
    }

    #[test]
    fn no_clamp_rings_into_the_capacitance() {
        // no clamp, 1 nF: simulated 3768 V; I·sqrt(L/C) = 3769 V at 1.192 A
        let v = open_circuit_peak(10e-3, 1e-9, 1.192);
        assert!(within(v, 3769.0, 0.001), "{v}");
        assert!(within(v, 3768.0, 0.002), "{v}");
    }

    #[test]
    fn pwm_ripple_check_value() {
        // 12 V, 2 Ω, 1 mH, 20 kHz, back-EMF 3 V: ngspice 0.14997 A; the
        // mean 1.498 A simulated vs (D·V - E)/R = 1.5 A at D = 0.5.
        let d = 0.5;
        let di = ripple(12.0, 2.0, 1e-3, 20e3, d);
        assert!(within(di, 0.14997, 1e-4), "{di}");
        assert!(within(pwm_mean(12.0, 2.0, d, 3.0), 1.498, 0.002));
        // T ≪ τ approximation V·D(1-D)/(L·f) = 0.15 A
        assert!(within(12.0 * 0.25 / (1e-3 * 20e3), di, 0.01));
    }

    #[test]
    fn textbook_loss_example() {
        // Worked textbook exercise: 40 V, 25 A, 28 mΩ, ton 85 ns, toff
        // 95 ns, 20 kHz, D = 0.6, resistive edges V·I·t/6:
        // 0.283 W + 0.317 W switching, 10.5 W conduction, 11.10 W total.
        let on = switching_loss(40.0, 25.0, 85e-9, 0.0, 20e3, 1.0 / 6.0);
        let off = switching_loss(40.0, 25.0, 0.0, 95e-9, 20e3, 1.0 / 6.0);
        let cond = 25.0f64.powi(2) * 0.028 * 0.6;
        assert!(within(on, 0.283, 0.002), "{on}");
        assert!(within(off, 0.317, 0.002), "{off}");
        assert!(within(cond, 10.5, 1e-9));
        assert!(within(on + off + cond, 11.10, 0.001));
    }

    #[test]
    fn rds_doubles_by_about_140_degc() {
        let r = rds_at(1.0, 140.0, RDS_ALPHA);
        assert!((1.9..2.1).contains(&r), "{r}");
    }

    #[test]
    fn thermal_fixed_point_and_runaway() {
        // constant 1 W at 50 K/W from 40 °C: 90 °C
        match junction_temperature(40.0, 50.0, 400.0, |_| 1.0) {
            Thermal::Converged { tj, .. } => assert!((tj - 90.0).abs() < 1e-6),
            t => panic!("{t:?}"),
        }
        // power that grows faster than the heat path removes it
        let t = junction_temperature(40.0, 50.0, 400.0, |tj| 1.0 * 1.03f64.powf(tj - 25.0));
        assert!(matches!(t, Thermal::Runaway { .. }));
    }
}
