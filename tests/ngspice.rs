//! Agreement with ngspice (Debian package `ngspice`). The engine writes
//! each circuit as a deck with the same device models (`export spice`);
//! ngspice solves it and the results are compared:
//! - operating points (`.op`): every node voltage of the group within 1 %
//!   (floor 1 mV) and every load, switch and diode current within 1 % of
//!   its value, floor 1 % of the largest current in the group + 10 µA;
//! - switching edges (`tran`, with `wrdata`): `v_peak`, `t_off`, `e_off`,
//!   `t_decay`, each clamp part's energy and the switch's own avalanche
//!   energy within 5 % (`t_off` within 5 % + 0.5 ns; energies below 0.1 %
//!   of the load's stored energy are not compared), read from ngspice's
//!   waveforms with the same reading functions the engine uses.
//!
//! With `CI` set and ngspice missing, these tests fail; elsewhere they are
//! skipped with a note.

use armature::analysis::edges;
use armature::analysis::netlist::Corner;
use armature::analysis::op::Mode;
use armature::analysis::spice;
use armature::model::library::LibraryCache;
use armature::{Built, Options, build, read_netlist};
use std::path::{Path, PathBuf};
use std::process::Command;

fn ngspice_available() -> bool {
    let ok = Command::new("ngspice")
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success());
    if !ok && std::env::var_os("CI").is_some() {
        panic!("ngspice is required when CI is set (apt-get install -y ngspice)");
    }
    if !ok {
        eprintln!("ngspice not found: skipping the simulator comparison");
    }
    ok
}

fn scratch() -> PathBuf {
    let dir = std::env::temp_dir().join(format!("armature-spice-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    dir
}

fn built(file: &str) -> Built {
    let f = match read_netlist(Path::new(file), file) {
        Ok(f) => f,
        Err(e) => panic!("{}", e.message),
    };
    let b = if file.ends_with(".cir") {
        armature::spice::build(&f, &Options::default(), &LibraryCache::default())
    } else {
        build(&f, &Options::default(), &LibraryCache::default())
    };
    match b {
        Ok(b) => b,
        Err(e) => panic!("{:?}", e.iter().map(|x| &x.message).collect::<Vec<_>>()),
    }
}

fn ngspice(deck: &str, tag: &str) -> String {
    let path = scratch().join(format!("{tag}.cir"));
    if let Err(e) = std::fs::write(&path, deck) {
        panic!("{e}");
    }
    let out = match Command::new("ngspice")
        .arg("-b")
        .arg(&path)
        .current_dir(scratch())
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        !text.contains("rror") || text.contains("No. of Data Rows"),
        "{tag}: ngspice failed:\n{text}"
    );
    text
}

/// `name = value` lines of an `op` run.
fn printed(text: &str, name: &str) -> Option<f64> {
    text.lines().find_map(|l| {
        let (a, b) = l.split_once(" = ")?;
        if a.trim().eq_ignore_ascii_case(name) {
            b.split_whitespace().next()?.parse().ok()
        } else {
            None
        }
    })
}

/// Compare every operating point of the group holding `part` (every pin
/// state, both corners, stalled and running) with ngspice `.op`.
/// Returns the number of values compared.
fn op_agrees(file: &str, part: &str) -> usize {
    let b = built(file);
    let Some(p) = b.circuit.part_id(part) else {
        panic!("{file}: no {part}")
    };
    let Some(gi) = b.analysis.groups.iter().position(|g| g.parts.contains(&p)) else {
        panic!("{file}: {part} in no group")
    };
    let sol = &b.analysis.solutions[gi];
    let modes: &[Mode] = if sol.has_run {
        &[Mode::Stall, Mode::Run]
    } else {
        &[Mode::Stall]
    };
    let mut n = 0;
    for s in 0..sol.states.len() {
        for corner in Corner::BOTH {
            for &mode in modes {
                let (deck, expected) = match spice::state_deck(&b, gi, s, corner, mode) {
                    Ok(x) => x,
                    Err(e) => panic!("{e}"),
                };
                let tag = format!(
                    "{}_{part}_{s}_{}_{mode:?}",
                    file.replace(['/', '.'], "_"),
                    corner.name()
                );
                let text = ngspice(&deck, &tag);
                let i_scale = expected
                    .iter()
                    .filter(|(k, _)| k.starts_with("i("))
                    .map(|(_, v)| v.abs())
                    .fold(0.0f64, f64::max);
                for (k, ours) in &expected {
                    let Some(sim) = printed(&text, k) else {
                        panic!("{tag}: {k} not printed:\n{text}")
                    };
                    let floor = if k.starts_with("v(") {
                        1e-3
                    } else {
                        0.01 * i_scale + 10e-6
                    };
                    assert!(
                        (ours - sim).abs() <= 0.01 * sim.abs() + floor,
                        "{tag}: {k} engine {ours:.6e} ngspice {sim:.6e}"
                    );
                    n += 1;
                }
            }
        }
    }
    n
}

/// The figures of a turn-off, read from ngspice's waveforms.
struct Figures {
    v_peak: f64,
    t_off: Option<f64>,
    e_off: f64,
    t_decay: Option<f64>,
    clamps: Vec<(String, f64)>,
}

fn edge_figures(file: &str, part: &str) -> (Vec<(String, f64)>, Figures) {
    let b = built(file);
    let Some(p) = b.circuit.part_id(part) else {
        panic!("{file}: no {part}")
    };
    let tag = format!("{}_{part}_edge", file.replace(['/', '.'], "_"));
    let out = format!("{tag}.wave");
    let d = match spice::edge_deck(&b, p, &out) {
        Ok(d) => d,
        Err(e) => panic!("{file} {part}: {e}"),
    };
    ngspice(&d.deck, &tag);
    let data = match std::fs::read_to_string(scratch().join(&out)) {
        Ok(t) => t,
        Err(e) => panic!("{tag}: {e}"),
    };
    // wrdata: a time column before every probe
    let rows: Vec<Vec<f64>> = data
        .lines()
        .map(|l| {
            l.split_whitespace()
                .filter_map(|x| x.parse().ok())
                .collect()
        })
        .filter(|r: &Vec<f64>| !r.is_empty())
        .collect();
    let col = |k: usize| -> Vec<f64> {
        rows.iter()
            .map(|r| r.get(2 * k + 1).copied().unwrap_or(0.0))
            .collect()
    };
    let t: Vec<f64> = rows
        .iter()
        .map(|r| r.first().copied().unwrap_or(0.0))
        .collect();
    let pol = d.polarity;
    let vds: Vec<f64> = col(0).iter().map(|v| pol * v).collect();
    let id: Vec<f64> = col(2).iter().map(|v| pol * v).collect();
    let il = col(3);
    let i0 = id.first().copied().unwrap_or(0.0);
    let il0 = il.first().copied().unwrap_or(0.0);
    let e_off = edges::integral(
        &t,
        &vds.iter().zip(&id).map(|(v, i)| v * i).collect::<Vec<_>>(),
    );
    let mut clamps = Vec::new();
    for (j, name) in d.clamps.iter().enumerate() {
        let v = col(4 + 2 * j);
        let i = col(5 + 2 * j);
        // a junction's energy while it blocks or breaks down: −V·(−I)
        let p: Vec<f64> = v
            .iter()
            .zip(&i)
            .map(|(v, i)| {
                if name == "switch" && *v > 0.0 {
                    0.0
                } else {
                    v * i
                }
            })
            .collect();
        clamps.push((name.clone(), edges::integral(&t, &p)));
    }
    let f = Figures {
        v_peak: vds.iter().copied().fold(f64::MIN, f64::max),
        t_off: edges::first_below(&t, &id, 0.1 * i0.abs(), d.t_cmd).map(|x| x - d.t_cmd),
        e_off,
        t_decay: edges::first_below(&t, &il, 0.1 * il0.abs(), 0.0),
        clamps,
    };
    (d.expected, f)
}

fn close(what: &str, ours: f64, sim: f64, tol: f64) {
    assert!(
        (ours - sim).abs() <= tol * sim.abs().max(1e-30),
        "{what}: engine {ours:.5e} ngspice {sim:.5e} (tolerance {}%)",
        tol * 100.0
    );
}

/// Compare a turn-off's figures within 5 %; energies below 0.1 % of the
/// energy stored in the load (`½·L·I²`) are not compared.
fn edge_agrees(file: &str, part: &str) -> Vec<(String, f64)> {
    let (exp, f) = edge_figures(file, part);
    let get = |k: &str| exp.iter().find(|(n, _)| n == k).map(|x| x.1);
    let what = format!("{file} {part}");
    eprintln!("{what}: engine {exp:?}");
    eprintln!(
        "{what}: ngspice v_peak {:.5e} t_off {:?} e_off {:.5e} t_decay {:?} clamps {:?}",
        f.v_peak, f.t_off, f.e_off, f.t_decay, f.clamps
    );
    close(
        &format!("{what} v_peak"),
        get("v_peak").unwrap_or(f64::NAN),
        f.v_peak,
        0.05,
    );
    if let (Some(a), Some(b)) = (get("t_off"), f.t_off) {
        // 5 % + 0.5 ns: a quarter of the pin's 2 ns edge, the resolution of
        // both simulations on a switch that turns off within the edge
        assert!(
            (a - b).abs() <= 0.05 * b.abs() + 0.5e-9,
            "{what} t_off: engine {a:.5e} ngspice {b:.5e}"
        );
    } else {
        assert_eq!(get("t_off").is_some(), f.t_off.is_some(), "{what} t_off");
    }
    if let (Some(a), Some(b)) = (get("t_decay"), f.t_decay) {
        close(&format!("{what} t_decay"), a, b, 0.05);
    }
    let e_scale = get("e_load").unwrap_or(0.0);
    if f.e_off.abs() > 1e-3 * e_scale {
        close(
            &format!("{what} e_off"),
            get("e_off").unwrap_or(f64::NAN),
            f.e_off,
            0.05,
        );
    }
    for (name, e) in &f.clamps {
        let key = if name == "switch" {
            "e_aval".to_string()
        } else {
            format!("e_clamp({name})")
        };
        if e.abs() > 1e-3 * e_scale {
            close(
                &format!("{what} {key}"),
                get(&key).unwrap_or(f64::NAN),
                *e,
                0.05,
            );
        }
    }
    exp
}

#[test]
fn operating_points_agree_with_ngspice_op() {
    if !ngspice_available() {
        return;
    }
    let mut total = 0;
    for (file, part) in [
        // low side, PWM, motor stalled and running against its back-EMF
        ("samples/vent_fan.drive", "Q1"),
        // p-channel high side behind an npn level shifter
        ("tests/fixtures/spice/high_side_pmos.drive", "P1"),
        // n-channel high side straight from a pin: a source follower
        ("tests/fixtures/spice/nmos_follower.drive", "Q1"),
        // a leg whose two switches share one gate net
        ("tests/fixtures/spice/shared_gate_leg.drive", "QL"),
        // two loads in parallel on one switch
        ("tests/fixtures/spice/parallel_loads.drive", "Q1"),
        // a source (sense) resistor
        ("tests/fixtures/spice/sense_resistor.drive", "Q1"),
        // a resistive heater
        ("tests/fixtures/spice/heater.drive", "Q1"),
        // a relay on a bipolar with a weak base resistor
        ("tests/fixtures/spice/relay_bjt_weak.drive", "Q1"),
        // a Zener-clamped valve
        ("samples/irrigation_valve.drive", "Q2"),
        // a full bridge in each allowed state
        ("samples/window_actuator.drive", "N1"),
        // a gate driver from its own rail, complementary half bridge
        ("samples/conveyor_driver.drive", "N5"),
        // a motor running against its back-EMF (and its stall)
        ("tests/fixtures/spice/slow_diode_pwm.drive", "Q1"),
    ] {
        let n = op_agrees(file, part);
        eprintln!("{file} {part}: {n} values within 1 %");
        total += n;
    }
    eprintln!("operating points: {total} values compared");
}

/// The samples written as SPICE netlists (`samples/spice/`, each with its
/// mapping): the operating points of the lowered circuits, with the mapped
/// library parts' device models substituted, agree with ngspice `.op`.
#[test]
fn imported_spice_operating_points_agree_with_ngspice_op() {
    if !ngspice_available() {
        return;
    }
    let mut total = 0;
    for (file, part) in [
        ("samples/spice/vent_fan.cir", "Q1"),
        ("samples/spice/irrigation_valve.cir", "Q2"),
        ("samples/spice/window_actuator.cir", "N1"),
        ("samples/spice/conveyor_driver.cir", "N5"),
        ("samples/spice/alarm_relay_faulty.cir", "Q5"),
    ] {
        let n = op_agrees(file, part);
        eprintln!("{file} {part}: {n} values within 1 %");
        assert!(n > 0, "{file}: nothing compared");
        total += n;
    }
    eprintln!("imported SPICE operating points: {total} values compared");
}

#[test]
fn edges_agree_with_ngspice_tran() {
    if !ngspice_available() {
        return;
    }
    // 12 V, 10 mH, 10 Ω check circuits of the physics notes
    edge_agrees("tests/fixtures/spice/diode_only.drive", "Q1");
    edge_agrees("tests/fixtures/spice/diode_zener.drive", "Q1");
    edge_agrees("tests/fixtures/spice/zener_across_switch.drive", "Q1");
    edge_agrees("tests/fixtures/spice/tvs_only.drive", "Q1");
    // no clamp: the switch avalanches
    edge_agrees("tests/fixtures/spice/no_clamp.drive", "Q1");
    edge_agrees("tests/fixtures/spice/slow_diode_pwm.drive", "Q1");
    edge_agrees("tests/fixtures/spice/big_gate_r.drive", "Q1");
    edge_agrees("tests/fixtures/spice/pmos_pullup.drive", "P1");
    // complementary half bridge with dead time
    edge_agrees("samples/conveyor_driver.drive", "P5");
    // a relay on a bipolar with no freewheel path: the transistor breaks down
    edge_agrees("samples/alarm_relay_faulty.drive", "Q5");
    edge_agrees("tests/fixtures/spice/clamp_across_switch.drive", "Q1");
    edge_agrees("samples/vent_fan.drive", "Q1");
}
