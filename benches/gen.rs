//! Generator of large, realistic netlists for benchmarks and the tests
//! that need a large board, with their parts library: channels of every
//! kind the checker analyses and full bridges driven by complementary PWM,
//! with varied values and sprinkled faults (see [`netlist`]). Shared by
//! the benches, `tests/machine.rs` and `examples/gen_netlist.rs`.

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
  GEN-N60S:
    kind: nmos
    vds_max: 60V
    vgs_max: 20V
    id_max: 1A
    rds_on: 0.5ohm
    rds_on_vgs: 10V
    vgs_th: 3.5V
    qg: 4nC
    tr: 10ns
    tf: 15ns
    rth_ja: 120K/W
    tj_max: 150degC
  GEN-Z24:
    kind: zener
    vz: 24V
    vf: 0.9V
    p_max: 1W
  GEN-Z47:
    kind: zener
    vz: 47V
    vf: 0.9V
    p_max: 1W
  GEN-RECT:
    kind: diode
    type: standard
    vrrm: 400V
    if_avg: 1A
    ifsm: 30A
    vf: 1.0V
    trr: 2us
  GEN-GD:
    kind: driver
    io_i_max: 1.5A
    vdd_max: 18V
  GEN-VALVE:
    kind: solenoid
    r: 24ohm
    l: 60mH
    i_rated: 0.5A
  GEN-RLY:
    kind: relay
    r: 160ohm
    l: 250mH
  GEN-WIND:
    kind: motor
    r: 0.9ohm
    l: 0.5mH
    i_rated: 3A
  GEN-ACT:
    kind: motor
    r: 6ohm
    l: 2mH
    i_rated: 1.2A
"#;

const PINS_PER_MCU: usize = 32;

/// Distinct channel variants (kind and values) before faults.
pub const VARIANTS: usize = 211;

/// Kinds whose lines are parts (for counting a generated netlist's parts).
const PART_WORDS: &[&str] = &[
    "resistor",
    "capacitor",
    "nmos",
    "pmos",
    "npn",
    "pnp",
    "diode",
    "zener",
    "tvs",
    "motor",
    "solenoid",
    "relay",
    "mcu",
    "driver",
];

/// Parts of a generated netlist.
pub fn count_parts(text: &str) -> usize {
    text.lines()
        .filter(|l| {
            l.split_whitespace()
                .next()
                .is_some_and(|w| PART_WORDS.contains(&w))
        })
        .count()
}

/// Parts of a netlist generated for `n` channels.
pub fn parts_for(n: usize) -> usize {
    count_parts(&netlist(n, "gen-parts.yaml"))
}

/// The channel count that gives about `parts` parts (the mix repeats, so
/// a sample of 4,620 channels gives the rate).
pub fn channels_for(parts: usize) -> usize {
    let sample = 4620;
    let per = count_parts(&netlist(sample, "gen-parts.yaml")) as f64 / sample as f64;
    ((parts as f64) / per).round().max(1.0) as usize
}

/// Controller pins handed out in order, a 32-pin controller at a time
/// (written into the netlist as it is opened).
struct Pins {
    pin: usize,
    mcu: usize,
}

impl Pins {
    /// The next pin: (its net, its `drive` name).
    fn next(&mut self, s: &mut String) -> (String, String) {
        if self.pin.is_multiple_of(PINS_PER_MCU) {
            self.mcu += 1;
            let pins: Vec<String> = (0..PINS_PER_MCU)
                .map(|k| format!("P{k}: U{}_P{k}", self.mcu))
                .collect();
            let _ = writeln!(
                s,
                "mcu U{} ({}, VDD: V5, VSS: GND) part=GEN-MCU",
                self.mcu,
                pins.join(", ")
            );
        }
        let k = self.pin % PINS_PER_MCU;
        self.pin += 1;
        (format!("U{}_P{k}", self.mcu), format!("U{}.P{k}", self.mcu))
    }
}

/// A board of `n` channels exercising every analysis path and rule:
///
/// - low-side PWM fans with a Schottky freewheel diode (most channels),
///   every tenth with two fans in parallel on one switch;
/// - solenoid valves with a Zener in series with the freewheel diode (a
///   fast-decay clamp), switched on and off;
/// - relay coils on bipolar switches with a base resistor and a diode;
/// - resistive heaters through a gate driver (no freewheel path needed);
/// - per ten channels one full bridge: each leg a p-channel high side
///   through an npn level shifter and an n-channel low side through a gate
///   driver, driven by complementary PWM with dead time.
///
/// Channels come in [`VARIANTS`] variants of kind and values (gate,
/// pull-down and base resistors, PWM frequency and duty, heater
/// resistance), bridges in nine (gate resistors, dead time), so that
/// solving identical groups once is measured on a board with several
/// hundred distinct groups, not as a best case. Faults are sprinkled at coprime
/// periods: missing freewheel diodes, missing or open gate pull-downs,
/// reversed diodes, a standard-level switch from a logic pin, a winding
/// whose stall current is beyond its switch, a base without a resistor,
/// a Zener clamp above the switch's rating, capacitors and resistors
/// beyond their ratings, a short dead time.
pub fn netlist(n: usize, library: &str) -> String {
    let mut s = String::with_capacity(n * 420);
    let _ = writeln!(
        s,
        "design \"generated {n} channels\"\nlibrary \"{library}\"\nrail VBAT 12V max 14.4V\nrail V5 5V tol 5%\nrail V12G 12V tol 5%\nground GND"
    );
    let _ = writeln!(
        s,
        "capacitor CB1 (VBAT, GND) 4700uF v_max=25V\ncapacitor CB2 (V12G, GND) 100uF v_max=25V"
    );
    let mut pins = Pins { pin: 0, mcu: 0 };
    let freqs = ["16kHz", "20kHz", "25kHz"];
    for i in 0..n {
        let (net, drv) = pins.next(&mut s);
        // the channel's variant: its kind and values (faults come on top)
        let v = i % VARIANTS;
        let rg = 47 + 3 * (v % 67);
        let f = freqs[v % 3];
        let pd = if i % 89 == 5 {
            format!("resistor RP{i} (G{i}, TP{i}) 100k")
        } else if i % 151 == 9 {
            String::new()
        } else {
            format!("resistor RP{i} (G{i}, GND) {}k", 47 + v % 53)
        };
        match v % 10 {
            // a resistive heater through a gate driver
            3 => {
                let _ = writeln!(
                    s,
                    "drive {drv} pwm 1kHz duty 0%..100%\nresistor RI{i} ({net}, GND) 47k\ndriver UD{i} (in: {net}, out: GD{i}, vdd: V12G, gnd: GND) part=GEN-GD\nresistor RG{i} (GD{i}, G{i}) {rg}"
                );
                if !pd.is_empty() {
                    let _ = writeln!(s, "{pd}");
                }
                let p = if i % 131 == 3 {
                    "p_max=1W"
                } else {
                    "p_max=50W"
                };
                let _ = writeln!(
                    s,
                    "nmos Q{i} (d: SW{i}, g: G{i}, s: GND) part=GEN-N40\nresistor RH{i} (VBAT, SW{i}) {} {p}",
                    ["12", "15", "18", "22"][v % 4]
                );
            }
            // a solenoid valve with a Zener clamp
            6 => {
                let _ = writeln!(s, "drive {drv} static\nresistor RG{i} ({net}, G{i}) {rg}");
                if !pd.is_empty() {
                    let _ = writeln!(s, "{pd}");
                }
                let z = if i % 137 == 6 { "GEN-Z47" } else { "GEN-Z24" };
                let _ = writeln!(
                    s,
                    "nmos Q{i} (d: SW{i}, g: G{i}, s: GND) part=GEN-N60\nsolenoid L{i} (+: VBAT, -: SW{i}) part=GEN-VALVE\ndiode D{i} (a: SW{i}, k: Z{i}) part=GEN-SK\nzener Z{i} (a: VBAT, k: Z{i}) part={z}"
                );
            }
            // a relay coil on a bipolar switch
            8 => {
                let _ = writeln!(s, "drive {drv} static");
                if i % 103 == 8 {
                    let _ = writeln!(s, "npn Q{i} (c: SW{i}, b: {net}, e: GND) part=GEN-NPN");
                } else {
                    let _ = writeln!(
                        s,
                        "resistor RB{i} ({net}, B{i}) {}\nresistor RBE{i} (B{i}, GND) 47k\nnpn Q{i} (c: SW{i}, b: B{i}, e: GND) part=GEN-NPN",
                        ["1k", "2k2", "3k3", "4k7"][v % 4]
                    );
                }
                let _ = writeln!(
                    s,
                    "relay K{i} (+: VBAT, -: SW{i}) part=GEN-RLY\ndiode D{i} (a: SW{i}, k: VBAT) part=GEN-RECT"
                );
            }
            // PWM fans, one or two in parallel
            k => {
                let _ = writeln!(
                    s,
                    "drive {drv} pwm {f} duty 0%..{}%\nresistor RG{i} ({net}, G{i}) {rg}",
                    80 + v % 20
                );
                if !pd.is_empty() {
                    let _ = writeln!(s, "{pd}");
                }
                let q = if i % 107 == 4 {
                    "GEN-N60S"
                } else if k == 5 {
                    "GEN-N40"
                } else {
                    "GEN-N60"
                };
                let m = if i % 109 == 2 { "GEN-WIND" } else { "GEN-FAN" };
                let _ = writeln!(
                    s,
                    "nmos Q{i} (d: SW{i}, g: G{i}, s: GND) part={q}\nmotor M{i} (+: VBAT, -: SW{i}) part={m}"
                );
                if k == 5 {
                    let _ = writeln!(s, "motor MP{i} (+: VBAT, -: SW{i}) part=GEN-FAN");
                }
                if i % 97 == 7 {
                    let _ = writeln!(s, "diode D{i} (a: SW{i}, k: TD{i}) part=GEN-SK");
                } else if i % 101 == 11 {
                    let _ = writeln!(s, "diode D{i} (a: VBAT, k: SW{i}) part=GEN-SK");
                } else {
                    let _ = writeln!(s, "diode D{i} (a: SW{i}, k: VBAT) part=GEN-SK");
                }
                if i % 127 == 1 {
                    let _ = writeln!(s, "capacitor CS{i} (SW{i}, GND) 1nF v_max=10V");
                }
            }
        }
    }
    for b in 0..n / 10 {
        let dead = if b % 53 == 17 {
            "20ns".to_string()
        } else {
            format!("{}ns", 600 + 50 * (b % 9))
        };
        for leg in ["A", "B"] {
            let (hi, hdrv) = pins.next(&mut s);
            let (lo, ldrv) = pins.next(&mut s);
            let t = format!("{b}{leg}");
            let _ = writeln!(
                s,
                "drive {hdrv} pwm 20kHz duty 0%..95% complement {ldrv} deadtime {dead}"
            );
            let _ = writeln!(
                s,
                "resistor RH1_{t} ({hi}, BH{t}) 4k7\nresistor RH2_{t} (BH{t}, GND) 47k\nnpn QH{t} (c: PGL{t}, b: BH{t}, e: GND) part=GEN-NPN"
            );
            let _ = writeln!(
                s,
                "resistor RH3_{t} (PG{t}, PGL{t}) {}\nresistor RH4_{t} (VBAT, PG{t}) 10k\npmos P{t} (d: MID{t}, g: PG{t}, s: VBAT) part=GEN-P30",
                ["1k", "1k5", "2k2"][b % 3]
            );
            let _ = writeln!(
                s,
                "resistor RL0_{t} ({lo}, GND) 47k\ndriver UL{t} (in: {lo}, out: NGD{t}, vdd: V12G, gnd: GND) part=GEN-GD\nresistor RL3_{t} (NGD{t}, NG{t}) {}\nresistor RL4_{t} (NG{t}, GND) 100k\nnmos N{t} (d: MID{t}, g: NG{t}, s: GND) part=GEN-N40",
                [10, 15, 22][b % 3]
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
