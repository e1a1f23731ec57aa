//! Detectors return data; they are tested here without any rendering.

use armature::checks::{self, Ctx};
use armature::{Built, Options, build, read_netlist};
use std::path::Path;

fn built(path: &str) -> Built {
    let f = match read_netlist(Path::new(path), path) {
        Ok(f) => f,
        Err(e) => panic!("{}", e.message),
    };
    match build(&f, &Options::default(), &Default::default()) {
        Ok(b) => b,
        Err(e) => panic!("{:?}", e.iter().map(|x| &x.message).collect::<Vec<_>>()),
    }
}

fn with<T>(b: &Built, f: impl FnOnce(&Ctx) -> T) -> T {
    let ctx = Ctx {
        circuit: &b.circuit,
        graph: &b.graph,
        analysis: &b.analysis,
        settings: &b.settings,
    };
    f(&ctx)
}

#[test]
fn overcurrent_detector_gives_the_stall_current() {
    let b = built("tests/fixtures/rules/switch-overcurrent/bad.drive");
    let hits = with(&b, checks::switch::switch_overcurrent::detect);
    assert_eq!(hits.len(), 1);
    // Hand calculation with the square-law model (V_GS = 5 V (the pin at its rail) · 100k /
    // (100k + 100 Ω + the pin's 25 Ω), VTO 1.8 V, K = 1/(0.12 Ω · 2.7 V)): K·(V_ov − V_DS/2)·V_DS =
    // (14.4 V − V_DS)/(3 Ω · 0.9); the seed's rule of thumb V/R
    // (14.4/2.7 = 5.33 A) is its upper bound.
    let k = 1.0 / (0.12 * 2.7);
    let vov = 5.0 * 100e3 / 100.125e3 - 1.8;
    let r = 2.7;
    // k·r·(vov·x − x²/2) = 14.4 − x  →  (k·r/2)·x² − (k·r·vov + 1)·x + 14.4 = 0
    let (qa, qb, qc): (f64, f64, f64) = (k * r / 2.0, -(k * r * vov + 1.0), 14.4);
    let vds = (-qb - (qb * qb - 4.0 * qa * qc).sqrt()) / (2.0 * qa);
    let want = (14.4 - vds) / r;
    assert!(
        (hits[0].i_on - want).abs() / want < 1e-3,
        "{} vs {want}",
        hits[0].i_on
    );
    assert!(hits[0].i_on < 14.4 / r);
    assert!((hits[0].limit - 2.4).abs() < 1e-9);
}

#[test]
fn clamp_detector_gives_rail_plus_clamp() {
    let b = built("tests/fixtures/rules/clamp-overvoltage/bad.drive");
    let (n, v_peak, path_len) = with(&b, |c| {
        let hits = checks::freewheel::clamp_overvoltage::detect(c);
        (
            hits.len(),
            hits.first().map(|h| h.turnoff.v_peak),
            hits.first().map(|h| h.turnoff.path.len()),
        )
    });
    assert_eq!(n, 1);
    // closed form of the path across the load: rail + diode + Zener, each
    // at the turn-off current I0 = 14.4 V / 24 Ω ≈ 0.6 A through its fitted
    // series resistance (Schottky: Rs = 0.1·0.45 V/1 A; Zener 47 V with
    // p_max 1 W: I_ref = 21.3 mA, Rs = 0.1·0.9 V/I_ref = 4.23 Ω [memory fits])
    let i0 = 14.4 / 24.0;
    let want = 14.4 + 0.45 + 47.0 + i0 * 0.1 * 0.9 / (1.0 / 47.0);
    let v_peak = v_peak.unwrap_or(0.0);
    assert!((v_peak - want).abs() / want < 0.02, "{v_peak} vs {want}");
    assert_eq!(path_len, Some(2));
}
#[test]
fn floating_and_stuck_on_detectors() {
    let b = built("tests/fixtures/rules/gate-floating/bad.drive");
    assert_eq!(with(&b, checks::gate::gate_floating::detect).len(), 1);
    let b = built("tests/fixtures/rules/gate-floating/pulldown-before-resistor.drive");
    assert!(with(&b, checks::gate::gate_floating::detect).is_empty());
    let b = built("tests/fixtures/rules/gate-stuck-on/bad.drive");
    let s = with(&b, checks::gate::gate_stuck_on::detect);
    assert_eq!(s.len(), 1);
    assert_eq!(s[0].source_v, Some(14.4));
}

#[test]
fn diode_detectors() {
    let b = built("tests/fixtures/rules/freewheel-diode-slow/bad.drive");
    let s = with(&b, checks::freewheel::freewheel_diode_slow::detect);
    assert_eq!(s.len(), 1);
    // 2 µs against 1 % of the 50 µs period
    assert!((s[0].limit - 0.5e-6).abs() < 1e-12);
    let b = built("tests/fixtures/rules/freewheel-diode-underrated/bad.drive");
    let u = with(&b, |c| {
        checks::freewheel::freewheel_diode_underrated::detect(c)
    });
    // the running current at the rails' maximum: (14.4 V − E)/R with the
    // back-EMF E = 12 V − 7.65 Ω · 0.9 A (the brushed-motor equation at the
    // nominal rail), less the switch's drop
    let want = (14.4 - (12.0 - 7.65 * 0.9)) / 7.65;
    assert!(
        u.iter()
            .any(|x| x.what == "average current" && (x.need - want).abs() / want < 0.02),
        "{:?}",
        u.iter().map(|x| (x.what, x.need)).collect::<Vec<_>>()
    );
}

#[test]
fn bridge_detectors() {
    let b = built("tests/fixtures/rules/shoot-through/bad.drive");
    assert_eq!(
        with(&b, |c| checks::bridge::shoot_through::detect(c).len()),
        1
    );
    let b = built("tests/fixtures/rules/dead-time-short/bad.drive");
    let d: Vec<f64> = with(&b, |c| {
        checks::bridge::dead_time_short::detect(c)
            .iter()
            .map(|x| x.t_off)
            .collect()
    });
    assert_eq!(d.len(), 1);
    // the simulated turn-off of P5 through its gate stage, against 20 ns
    // of dead time
    let t_off = b
        .circuit
        .part_id("P5")
        .and_then(|p| b.analysis.facts.value(p, "t_off"));
    assert_eq!(Some(d[0]), t_off);
    assert!(d[0] > 20e-9);
}
