//! Generator of large, realistic netlists for benchmarks: `n` low-side
//! PWM channels and `n / 10` interlocked full bridges sharing the same
//! rails, with a few faults sprinkled in (a missing freewheel diode every
//! 97th channel, a missing gate pull-down every 89th), plus their parts
//! library. Shared by `benches/scale.rs` and `examples/gen_netlist.rs`.

use std::fmt::Write;

pub const LIBRARY: &str = r#"parts:
  GEN-N60:
    kind: nmos
    vds_max: 60V
    vgs_max: 20V
    id_max: 3A
    rds_on: 0.12ohm
    rds_on_vgs: 4.5V
    vgs_th: 1.8V
    qg: 6nC
    tr: 12ns
    tf: 18ns
    rth_ja: 90K/W
    tj_max: 150degC
  GEN-N40:
    kind: nmos
    vds_max: 40V
    vgs_max: 20V
    id_max: 12A
    rds_on: 0.018ohm
    rds_on_vgs: 4.5V
    vgs_th: 1.6V
    tr: 20ns
    tf: 25ns
    rth_ja: 50K/W
    tj_max: 175degC
  GEN-P30:
    kind: pmos
    vds_max: 30V
    vgs_max: 20V
    id_max: 4A
    rds_on: 0.06ohm
    rds_on_vgs: 4.5V
    vgs_th: 2V
    tr: 15ns
    tf: 40ns
    rth_ja: 80K/W
    tj_max: 150degC
  GEN-NPN:
    kind: npn
    vce_max: 40V
    ic_max: 0.2A
    hfe_min: 100
    vce_sat: 0.2V
    vbe_on: 0.7V
  GEN-SK:
    kind: diode
    type: schottky
    vrrm: 40V
    if_avg: 3A
    ifsm: 80A
    vf: 0.5V
  GEN-MCU:
    kind: mcu
    io_v: 5V
    io_i_max: 20mA
  GEN-FAN:
    kind: motor
    r: 8.5ohm
    l: 1.2mH
    i_rated: 0.9A
  GEN-ACT:
    kind: motor
    r: 6ohm
    l: 2mH
    i_rated: 1.2A
"#;

/// Parts per low-side channel and per bridge.
pub const PARTS_PER_CHANNEL: usize = 5;
pub const PARTS_PER_BRIDGE: usize = 23;
const PINS_PER_MCU: usize = 32;

/// Parts of a netlist generated for `n` channels.
pub fn parts_for(n: usize) -> usize {
    let bridges = n / 10;
    let pins = n + 2 * bridges;
    n * PARTS_PER_CHANNEL + bridges * PARTS_PER_BRIDGE + pins.div_ceil(PINS_PER_MCU) + 3
}

/// The channel count that gives about `parts` parts.
pub fn channels_for(parts: usize) -> usize {
    let per = PARTS_PER_CHANNEL as f64 + PARTS_PER_BRIDGE as f64 / 10.0 + 1.2 / PINS_PER_MCU as f64;
    ((parts as f64) / per).round() as usize
}

pub fn netlist(n: usize, library: &str) -> String {
    let mut s = String::with_capacity(n * 400);
    let _ = writeln!(
        s,
        "design \"generated {n} channels\"\nlibrary \"{library}\"\nrail VBAT 12V max 14.4V\nrail V5 5V tol 5%\nrail V12G 12V tol 5%\nground GND"
    );
    let _ = writeln!(
        s,
        "capacitor CB1 (VBAT, GND) 4700uF v_max=25V\ncapacitor CB2 (V12G, GND) 100uF v_max=25V"
    );
    let mut pin = 0usize;
    let mut mcu = 0usize;
    let mut next_pin = |s: &mut String| -> String {
        if pin.is_multiple_of(PINS_PER_MCU) {
            mcu += 1;
            let pins: Vec<String> = (0..PINS_PER_MCU)
                .map(|k| format!("P{k}: U{mcu}_P{k}"))
                .collect();
            let _ = writeln!(
                s,
                "mcu U{mcu} ({}, VDD: V5, VSS: GND) part=GEN-MCU",
                pins.join(", ")
            );
        }
        let name = format!("U{mcu}_P{}", pin % PINS_PER_MCU);
        let d = format!("U{mcu}.P{}", pin % PINS_PER_MCU);
        pin += 1;
        let _ = (name.clone(), d.clone());
        format!("{name}|{d}")
    };
    for i in 0..n {
        let p = next_pin(&mut s);
        let (net, drv) = p.split_once('|').unwrap_or(("", ""));
        let _ = writeln!(s, "drive {drv} pwm 25kHz duty 0%..90%");
        let _ = writeln!(s, "resistor RG{i} ({net}, G{i}) 100");
        if i % 89 != 5 {
            let _ = writeln!(s, "resistor RP{i} (G{i}, GND) 100k");
        } else {
            let _ = writeln!(s, "resistor RP{i} (G{i}, TP{i}) 100k");
        }
        let _ = writeln!(s, "nmos Q{i} (d: SW{i}, g: G{i}, s: GND) part=GEN-N60");
        let _ = writeln!(s, "motor M{i} (+: VBAT, -: SW{i}) part=GEN-FAN");
        if i % 97 != 7 {
            let _ = writeln!(s, "diode D{i} (a: SW{i}, k: VBAT) part=GEN-SK");
        } else {
            let _ = writeln!(s, "diode D{i} (a: SW{i}, k: TD{i}) part=GEN-SK");
        }
    }
    for b in 0..n / 10 {
        for leg in ["A", "B"] {
            let p = next_pin(&mut s);
            let (net, drv) = p.split_once('|').unwrap_or(("", ""));
            let _ = writeln!(s, "drive {drv} static");
            let t = format!("{b}{leg}");
            let _ = writeln!(
                s,
                "resistor RH1_{t} ({net}, BH{t}) 4k7\nresistor RH2_{t} (BH{t}, GND) 47k\nnpn QH{t} (c: PGL{t}, b: BH{t}, e: GND) part=GEN-NPN"
            );
            let _ = writeln!(
                s,
                "resistor RH3_{t} (PG{t}, PGL{t}) 2k2\nresistor RH4_{t} (VBAT, PG{t}) 10k\npmos P{t} (d: MID{t}, g: PG{t}, s: VBAT) part=GEN-P30"
            );
            let _ = writeln!(
                s,
                "resistor RL1_{t} ({net}, BL{t}) 4k7\nresistor RL2_{t} (BL{t}, GND) 47k\nnpn QL{t} (c: NG{t}, b: BL{t}, e: GND) part=GEN-NPN"
            );
            let _ = writeln!(
                s,
                "resistor RL3_{t} (V12G, NG{t}) 2k2\nnmos N{t} (d: MID{t}, g: NG{t}, s: GND) part=GEN-N40"
            );
        }
        let _ = writeln!(s, "motor MB{b} (+: MID{b}A, -: MID{b}B) part=GEN-ACT");
    }
    s
}

/// A rule pack of `k` team rules (variations on a few house rules).
pub fn team_rules(k: usize) -> String {
    let mut s = String::from("rules:\n");
    let bodies = [
        ("[nmos, pmos]", "vds_max >= 2 * v_max(d)"),
        ("[nmos, pmos]", "not has(tj) or tj <= tj_max - 30degC"),
        ("[diode]", "not has(i_fw) or i_fw <= 0.7 * if_avg"),
        ("[motor]", "i_cont <= 2A"),
        ("[resistor]", "value >= 1ohm"),
    ];
    for i in 0..k {
        let (kinds, req) = bodies[i % bodies.len()];
        let _ = writeln!(
            s,
            "  - id: gen/r{i}\n    severity: warning\n    kinds: {kinds}\n    require: \"{req}\"\n    message: \"{{ref}} fails house rule {i}\""
        );
    }
    s
}
