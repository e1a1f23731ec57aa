//! The engine against its closed forms, on circuits where they are exact,
//! and the reuse of identical groups.

use armature::model::library::LibraryCache;
use armature::source::SourceFile;
use armature::{Built, Options, build};

fn built_text(name: &str, text: &str) -> Built {
    let f = SourceFile::new(name, std::path::Path::new(name), text.to_string());
    match build(&f, &Options::default(), &LibraryCache::default()) {
        Ok(b) => b,
        Err(e) => panic!("{:?}", e.iter().map(|x| &x.message).collect::<Vec<_>>()),
    }
}

const HEAD: &str =
    "rail V12 12V max 13.2V\nrail V5 5V tol 5%\nground GND\ncapacitor C0 (V12, GND) 1000uF\n";

fn channel(i: usize) -> String {
    format!(
        "mcu U{i} (PA0: P{i}, VDD: V5, VSS: GND) io_v=5V io_i_max=20mA\n\
         drive U{i}.PA0 pwm 20kHz duty 5%..95%\n\
         resistor RA{i} (P{i}, G{i}) 47\n\
         resistor RB{i} (G{i}, GND) 47k\n\
         nmos Q{i} (d: S{i}, g: G{i}, s: GND) vds_max=40V id_max=6A rds_on=0.04ohm rds_on_vgs=4.5V vgs_th=1.7V vgs_max=20V qg=9nC qgd=3nC coss=150pF rth_ja=60K/W tj_max=150degC\n\
         motor M{i} (+: V12, -: S{i}) r=5ohm l=2mH i_rated=1A\n\
         diode D{i} (a: S{i}, k: V12) vf=0.5V if_avg=2A type=schottky\n"
    )
}

#[test]
fn a_thousand_identical_channels_give_the_facts_of_one() {
    let one = built_text("one.drive", &format!("{HEAD}{}", channel(0)));
    let mut text = HEAD.to_string();
    for i in 0..1000 {
        text.push_str(&channel(i));
    }
    let many = built_text("many.drive", &text);
    // a thousand channels, one solve
    assert_eq!(many.analysis.groups.len(), 1000);
    assert_eq!(many.analysis.distinct_groups, 1);
    let facts = |b: &Built, r: &str| {
        let p = b.circuit.part_id(r).unwrap_or(usize::MAX);
        b.analysis
            .facts
            .parts
            .get(p)
            .map(|pf| {
                pf.facts
                    .iter()
                    .map(|f| (f.name, f.value, f.note.as_deref().map(str::to_string)))
                    .collect::<Vec<_>>()
            })
            .unwrap_or_default()
    };
    for i in [0usize, 1, 499, 999] {
        for (a, b) in [
            ("Q0", format!("Q{i}")),
            ("M0", format!("M{i}")),
            ("D0", format!("D{i}")),
        ] {
            let want = facts(&one, a);
            assert!(!want.is_empty(), "{a}");
            assert_eq!(want, facts(&many, &b), "{b}");
        }
    }
    // and solved apart, the channels give the same as reused
    let apart = armature::analysis::analyze_with(&many.circuit, &many.graph, &many.settings, false);
    assert_eq!(apart.distinct_groups, 1000);
    let q999 = many.circuit.part_id("Q999").unwrap_or(usize::MAX);
    assert_eq!(
        apart.facts.value(q999, "v_peak"),
        many.analysis.facts.value(q999, "v_peak")
    );
}

#[test]
fn stall_current_is_v_over_r_with_a_near_ideal_switch() {
    // the seed's rule of thumb I = V/R is exact as R_on → 0: 1 mΩ against
    // a 5 Ω winding (r_tol 0), rails at their maximum 13.2 V
    let b = built_text(
        "stall.drive",
        &format!(
            "{HEAD}mcu U1 (PA0: P, VDD: V5, VSS: GND) io_v=5V\nresistor RA (P, G) 47\nresistor RB (G, GND) 47k\n\
             nmos Q1 (d: S, g: G, s: GND) vds_max=40V id_max=20A rds_on=0.001ohm rds_on_vgs=4.5V vgs_th=1.7V\n\
             motor M1 (+: V12, -: S) r=5ohm l=2mH\ndiode D1 (a: S, k: V12) vf=0.5V\n"
        ),
    );
    let m = b.circuit.part_id("M1").unwrap_or(usize::MAX);
    let i = b.analysis.facts.value(m, "i_stall").unwrap_or(0.0);
    assert!((i - 13.2 / 5.0).abs() / (13.2 / 5.0) < 1e-3, "{i}");
}

/// `t = (L/R)·ln((I0 + V/R)/(I + V/R))`: the time for a winding current to
/// fall from I0 to I against a constant loop voltage V (physics notes,
/// from `L·di/dt = −V − R·i`).
fn decay_to(l: f64, r: f64, i0: f64, i: f64, v: f64) -> f64 {
    (l / r) * ((i0 + v / r) / (i + v / r)).ln()
}

#[test]
fn decay_time_and_clamp_energy_follow_the_closed_forms() {
    // 12 V, 10 mH, 10 Ω with a 33 V Zener across the switch (the physics
    // notes' check circuit), rated for 100 A so that its fitted series
    // resistance is below a milliohm: the loop voltage V_cl − V_rail is
    // constant to a few tens of millivolts, and the clamp takes
    // E = V_cl·∫i dt = V_cl·(τ·I0 − (V/R)·t)
    let text = match std::fs::read_to_string("tests/fixtures/spice/zener_across_switch.drive") {
        Ok(t) => t.replace("vz=33V p_max=1.5W", "vz=33V if_avg=100A"),
        Err(e) => panic!("{e}"),
    };
    let b = built_text("stiff_zener.drive", &text);
    let q = b.circuit.part_id("Q1").unwrap_or(usize::MAX);
    let z = b.circuit.part_id("Z1").unwrap_or(usize::MAX);
    let t = b
        .analysis
        .turnoffs
        .iter()
        .find(|t| t.switch == q)
        .map(|t| (t.il0, t.v_peak, t.t_decay.unwrap_or(0.0)));
    let Some((i0, v_peak, t_decay)) = t else {
        panic!("no turn-off")
    };
    let (l, r) = (10e-3, 10.0);
    let v_loop = v_peak - 12.0;
    let want = decay_to(l, r, i0, 0.1 * i0, v_loop);
    assert!(
        (t_decay - want).abs() / want < 0.01,
        "t_decay {t_decay} vs {want}"
    );
    let t0 = decay_to(l, r, i0, 0.0, v_loop);
    let e = v_peak * ((l / r) * i0 - (v_loop / r) * t0);
    let e_clamp = b.analysis.facts.value(z, "e_clamp").unwrap_or(0.0);
    assert!((e_clamp - e).abs() / e < 0.01, "e_clamp {e_clamp} vs {e}");
    // and for R → 0 the textbook ½·L·I²·V_cl/(V_cl − V_rail) bounds it
    let e_r0 = 0.5 * l * i0 * i0 * v_peak / v_loop;
    assert!(e_clamp < e_r0, "{e_clamp} vs {e_r0}");
}

#[path = "../benches/gen.rs"]
#[allow(dead_code)] // the benches use the rest of the generator
mod generator;

#[test]
fn the_benchmark_board_reused_gives_the_facts_it_gives_solved_apart() {
    // every kind of channel, on every pin of shared controllers, with
    // values that repeat: the reuse of identical groups (which leaves the
    // controller's other pins out of a group's key) must change nothing
    let dir = std::env::temp_dir().join(format!("armature-reuse-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let lib = dir.join("gen-parts.yaml");
    let _ = std::fs::write(&lib, generator::LIBRARY);
    let path = dir.join("board.drive");
    let text = generator::netlist(700, "gen-parts.yaml");
    let f = SourceFile::new("board.drive", &path, text);
    let opts = Options::default();
    let b = match build(&f, &opts, &LibraryCache::default()) {
        Ok(b) => b,
        Err(e) => panic!("{:?}", e.iter().map(|x| &x.message).collect::<Vec<_>>()),
    };
    let _ = std::fs::remove_dir_all(&dir);
    let apart = armature::analysis::analyze_with(&b.circuit, &b.graph, &b.settings, false);
    assert_eq!(apart.distinct_groups, b.analysis.groups.len());
    assert!(
        b.analysis.distinct_groups * 2 < b.analysis.groups.len(),
        "{} distinct of {}: the channels should share solutions",
        b.analysis.distinct_groups,
        b.analysis.groups.len()
    );
    let dump = |a: &armature::analysis::Analysis| {
        a.facts
            .parts
            .iter()
            .map(|pf| {
                pf.facts
                    .iter()
                    .map(|f| {
                        (
                            f.name,
                            f.value.to_bits(),
                            f.note.as_deref().map(str::to_string),
                        )
                    })
                    .collect::<Vec<_>>()
            })
            .collect::<Vec<_>>()
    };
    let (x, y) = (dump(&b.analysis), dump(&apart));
    assert_eq!(x.len(), y.len());
    let mut facts = 0;
    for (p, (a, b2)) in x.iter().zip(&y).enumerate() {
        assert_eq!(a, b2, "part {}", b.circuit.parts[p].reference);
        facts += a.len();
    }
    assert!(facts > 5000, "{facts} facts compared");
    assert_eq!(b.analysis.legs.len(), apart.legs.len());
    assert_eq!(b.analysis.injections.len(), apart.injections.len());
    assert_eq!(
        b.analysis.floating_inputs.len(),
        apart.floating_inputs.len()
    );
}
