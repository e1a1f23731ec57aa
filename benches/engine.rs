//! Engine benchmark: the time to solve a group (every operating point and
//! every edge) and per simulated edge, on the samples and the check
//! circuits; and dense against sparse LU on nodal-like matrices, which is
//! where `mna::DENSE_MAX` comes from. Run with `cargo bench --bench engine`.

#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

use armature::analysis::{groups, mna, netlist, solve};
use armature::model::library::LibraryCache;
use std::time::Instant;

fn per_group(path: &str) {
    let f = match armature::read_netlist(std::path::Path::new(path), path) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("{path}: {}", e.message);
            return;
        }
    };
    let Ok(b) = armature::build(&f, &Default::default(), &LibraryCache::default()) else {
        eprintln!("{path}: does not build");
        return;
    };
    let c = &b.circuit;
    for (gi, grp) in b.analysis.groups.iter().enumerate() {
        let sol = &b.analysis.solutions[gi];
        if sol.edges.is_empty() {
            continue;
        }
        let drives = sol.drives.clone();
        let rated = solve::rated(c, &grp.parts);
        let runs = 20;
        let t = Instant::now();
        let mut edges = 0;
        let mut steps = 0;
        for _ in 0..runs {
            let s = solve::solve(netlist::build(c, grp), &drives, &rated);
            edges = s.edges.len();
            steps = s
                .edges
                .iter()
                .map(|e| e.res.wave_off.t.len() + e.res.wave_on.t.len())
                .sum();
        }
        let per = t.elapsed().as_secs_f64() / runs as f64;
        // the operating points alone
        let t = Instant::now();
        for _ in 0..runs {
            let nl = netlist::build(c, grp);
            for a in &sol.states {
                for corner in netlist::Corner::BOTH {
                    let ex = armature::analysis::op::excitation(&nl, grp.pins.len(), a, corner);
                    std::hint::black_box(armature::analysis::op::solve(&nl, ex, None));
                }
            }
        }
        let per_op = t.elapsed().as_secs_f64() / runs as f64;
        let edge_ms = (per - 2.0 * per_op).max(0.0) / edges.max(1) as f64 * 1e3;
        println!(
            "{path} group {gi} ({} parts, {} nodes, {} states, {edges} edges, {steps} time steps): {:.2} ms per group, {:.3} ms per edge",
            grp.parts.len(),
            sol.nl.n,
            sol.states.len(),
            per * 1e3,
            edge_ms
        );
    }
    let _ = groups::MAX_GROUP_PINS;
}

/// A nodal-like matrix: a chain with a star every seventh node and a
/// transconductance, as in `mna`'s own test.
fn system(n: usize) -> (mna::Pattern, Vec<f64>) {
    let mut p = mna::Pattern::new(n);
    let mut vals = vec![0.0; n];
    let mut add = |p: &mut mna::Pattern, i: usize, j: usize, v: f64| {
        let h = p.handle(i as u32, j as u32) as usize;
        if vals.len() <= h {
            vals.resize(h + 1, 0.0);
        }
        vals[h] += v;
    };
    for i in 0..n {
        add(&mut p, i, i, 1e-3);
    }
    for i in 1..n {
        let j = if i % 7 == 0 { 0 } else { i - 1 };
        let g = 1.0 / (10.0 + i as f64);
        add(&mut p, i, i, g);
        add(&mut p, j, j, g);
        add(&mut p, i, j, -g);
        add(&mut p, j, i, -g + 0.01);
    }
    (p, vals)
}

fn lu_bench() {
    for n in [4usize, 8, 12, 16, 24, 32, 48, 64, 128, 512] {
        let (p, vals) = system(n);
        let reps = (200_000 / (n * n)).max(20);
        let mut b = vec![1.0; n];
        let mut dense = mna::Lu::Dense(mna::DenseLu::new(&p));
        let t = Instant::now();
        for _ in 0..reps {
            b.iter_mut().for_each(|x| *x = 1.0);
            std::hint::black_box(dense.solve(&vals, &mut b));
        }
        let td = t.elapsed().as_secs_f64() / reps as f64;
        let mut sparse = mna::Lu::Sparse(mna::SparseLu::new(&p));
        let t = Instant::now();
        for _ in 0..reps {
            b.iter_mut().for_each(|x| *x = 1.0);
            std::hint::black_box(sparse.solve(&vals, &mut b));
        }
        let ts = t.elapsed().as_secs_f64() / reps as f64;
        println!(
            "LU n = {n:>3}: dense {:>9.2} µs, sparse {:>9.2} µs per factor + solve",
            td * 1e6,
            ts * 1e6
        );
    }
}

fn main() {
    for f in [
        "samples/vent_fan.drive",
        "samples/irrigation_valve.drive",
        "samples/alarm_relay_faulty.drive",
        "samples/conveyor_driver.drive",
        "samples/window_actuator.drive",
        "tests/fixtures/spice/tvs_only.drive",
        "tests/fixtures/spice/slow_diode_pwm.drive",
        "tests/fixtures/spice/pmos_pullup.drive",
    ] {
        per_group(f);
    }
    lu_bench();
}
