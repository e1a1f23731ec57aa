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
    // 14.4 V / (3 Ω · 0.9 + 0.12 Ω) = 5.106 A against 80 % of 3 A
    assert!(
        (hits[0].i_on - 14.4 / (3.0 * 0.9 + 0.12)).abs() < 1e-3,
        "{}",
        hits[0].i_on
    );
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
            hits.first().map(|h| h.path.parts.len()),
        )
    });
    assert_eq!(n, 1);
    // 14.4 V + 0.45 V (Schottky) + 47 V (Zener) = 61.85 V against 80 % of 60 V
    let v_peak = v_peak.unwrap_or(0.0);
    assert!((v_peak - 61.85).abs() < 0.01, "{v_peak}");
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
    assert!(
        u.iter()
            .any(|x| x.what == "average current" && (x.need - 0.9).abs() < 1e-9)
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
    // P5's tf 40 ns is the slower turn-off against 20 ns of dead time
    assert!((d[0] - 40e-9).abs() < 1e-12, "{}", d[0]);
}
