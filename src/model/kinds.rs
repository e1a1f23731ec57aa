//! Part kinds: their pins, their keys and the dimension of each key.

use crate::units::Dimension;

#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Kind {
    Motor,
    Solenoid,
    Relay,
    Inductor,
    Nmos,
    Pmos,
    Npn,
    Pnp,
    Diode,
    Zener,
    Tvs,
    Resistor,
    Capacitor,
    Mcu,
    Driver,
    Connector,
}

/// The switch kinds (as [`Kind::is_switch`]).
pub const SWITCHES: &[Kind] = &[Kind::Nmos, Kind::Pmos, Kind::Npn, Kind::Pnp];
/// The diode kinds (as [`Kind::is_diode`]).
pub const DIODES: &[Kind] = &[Kind::Diode, Kind::Zener, Kind::Tvs];

/// What a key holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum KeyType {
    Q(Dimension),
    /// A temperature difference (`25degC`, `25K`).
    DeltaT,
    /// A bare word or string (`schottky`).
    Word,
}

pub struct KeyDef {
    pub name: &'static str,
    pub ty: KeyType,
    pub doc: &'static str,
}

const fn q(name: &'static str, d: Dimension, doc: &'static str) -> KeyDef {
    KeyDef {
        name,
        ty: KeyType::Q(d),
        doc,
    }
}

use Dimension::*;

const MOS_KEYS: &[KeyDef] = &[
    q("vds_max", Voltage, "drain-source blocking rating"),
    q("vgs_max", Voltage, "gate-source voltage rating (±)"),
    q("id_max", Current, "continuous drain current rating"),
    q(
        "rds_on",
        Resistance,
        "on-resistance at 25 °C, at `rds_on_vgs`",
    ),
    q(
        "rds_on_vgs",
        Voltage,
        "gate-source voltage at which `rds_on` is specified",
    ),
    q("vgs_th", Voltage, "gate threshold voltage"),
    q(
        "vgs_plateau",
        Voltage,
        "Miller plateau voltage (default vgs_th + 1 V)",
    ),
    q("qg", Charge, "total gate charge"),
    q("qgd", Charge, "gate-drain (Miller) charge"),
    q("tr", Time, "rise time"),
    q("tf", Time, "fall time"),
    q("td_off", Time, "turn-off delay"),
    q("coss", Capacitance, "output capacitance"),
    q(
        "rth_ja",
        ThermalResistance,
        "junction-to-ambient thermal resistance",
    ),
    q("tj_max", Temperature, "maximum junction temperature"),
    q("body_vf", Voltage, "body diode forward voltage"),
    q("body_trr", Time, "body diode reverse recovery time"),
];

const BJT_KEYS: &[KeyDef] = &[
    q("vce_max", Voltage, "collector-emitter blocking rating"),
    q("ic_max", Current, "continuous collector current rating"),
    q("hfe_min", Number, "minimum DC current gain"),
    q("vce_sat", Voltage, "collector-emitter saturation voltage"),
    q("vbe_on", Voltage, "base-emitter on voltage"),
    q("ib_max", Current, "base current rating"),
    q("tf", Time, "fall time"),
    q(
        "coss",
        Capacitance,
        "output (collector-emitter) capacitance",
    ),
    q(
        "rth_ja",
        ThermalResistance,
        "junction-to-ambient thermal resistance",
    ),
    q("tj_max", Temperature, "maximum junction temperature"),
];

const DIODE_KEYS: &[KeyDef] = &[
    KeyDef {
        name: "type",
        ty: KeyType::Word,
        doc: "schottky, fast, ultrafast, standard, zener, tvs",
    },
    q("vrrm", Voltage, "repetitive reverse voltage rating"),
    q("if_avg", Current, "average forward current rating"),
    q("ifsm", Current, "surge forward current rating"),
    q("vf", Voltage, "forward voltage"),
    q("trr", Time, "reverse recovery time"),
    q("qrr", Charge, "reverse recovery charge"),
    q("vz", Voltage, "Zener (breakdown) voltage"),
    q("v_clamp", Voltage, "clamping voltage"),
    q("p_max", Power, "power rating (continuous)"),
    q(
        "e_max",
        Energy,
        "single-pulse energy rating (a clamp's one-time surge)",
    ),
    q(
        "rth_ja",
        ThermalResistance,
        "junction-to-ambient thermal resistance",
    ),
    q("tj_max", Temperature, "maximum junction temperature"),
];

const RES_KEYS: &[KeyDef] = &[
    q("value", Resistance, "resistance"),
    q("p_max", Power, "power rating"),
    q("tol", Number, "tolerance (fraction or %)"),
];

const CAP_KEYS: &[KeyDef] = &[
    q("value", Capacitance, "capacitance"),
    q("v_max", Voltage, "voltage rating"),
    q("esr", Resistance, "equivalent series resistance"),
];

const LOAD_KEYS: &[KeyDef] = &[
    q("r", Resistance, "winding resistance"),
    q("l", Inductance, "inductance"),
    q("v_rated", Voltage, "rated voltage"),
    q("i_rated", Current, "rated continuous current"),
    q("i_noload", Current, "no-load current"),
    q("i_stall", Current, "stall current"),
    q(
        "r_tol",
        Number,
        "winding resistance tolerance (fraction or %)",
    ),
    q("i_sat", Current, "saturation current"),
];

const INDUCTOR_KEYS: &[KeyDef] = &[
    q("value", Inductance, "inductance"),
    q("r", Resistance, "winding resistance"),
    q("l", Inductance, "inductance (same as the value)"),
    q("i_rated", Current, "rated continuous current"),
    q("i_sat", Current, "saturation current"),
    q("r_tol", Number, "winding resistance tolerance"),
];

const IC_KEYS: &[KeyDef] = &[
    q("io_v", Voltage, "output high level"),
    q("io_i_max", Current, "output current rating of a pin"),
    q("vdd_max", Voltage, "supply voltage rating"),
    q(
        "r_out",
        Resistance,
        "output resistance of a pin (default 25 Ω)",
    ),
    q(
        "vin_th",
        Voltage,
        "a driver's input threshold (default half the logic level)",
    ),
    KeyDef {
        name: "invert",
        ty: KeyType::Word,
        doc: "`true` for a driver whose output is the inverse of its input",
    },
];

const NO_KEYS: &[KeyDef] = &[];

pub enum PinSpec {
    /// Fixed pins: (name, required).
    Fixed(&'static [(&'static str, bool)]),
    /// Any pin names.
    Any,
}

impl Kind {
    pub const ALL: &'static [Kind] = &[
        Kind::Motor,
        Kind::Solenoid,
        Kind::Relay,
        Kind::Inductor,
        Kind::Nmos,
        Kind::Pmos,
        Kind::Npn,
        Kind::Pnp,
        Kind::Diode,
        Kind::Zener,
        Kind::Tvs,
        Kind::Resistor,
        Kind::Capacitor,
        Kind::Mcu,
        Kind::Driver,
        Kind::Connector,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Kind::Motor => "motor",
            Kind::Solenoid => "solenoid",
            Kind::Relay => "relay",
            Kind::Inductor => "inductor",
            Kind::Nmos => "nmos",
            Kind::Pmos => "pmos",
            Kind::Npn => "npn",
            Kind::Pnp => "pnp",
            Kind::Diode => "diode",
            Kind::Zener => "zener",
            Kind::Tvs => "tvs",
            Kind::Resistor => "resistor",
            Kind::Capacitor => "capacitor",
            Kind::Mcu => "mcu",
            Kind::Driver => "driver",
            Kind::Connector => "connector",
        }
    }

    pub fn from_name(s: &str) -> Option<Kind> {
        Kind::ALL.iter().copied().find(|k| k.name() == s)
    }

    pub fn pins(self) -> PinSpec {
        match self {
            Kind::Motor | Kind::Solenoid | Kind::Relay => {
                PinSpec::Fixed(&[("+", true), ("-", true)])
            }
            Kind::Inductor | Kind::Resistor | Kind::Capacitor => {
                PinSpec::Fixed(&[("1", true), ("2", true)])
            }
            Kind::Nmos | Kind::Pmos => PinSpec::Fixed(&[("d", true), ("g", true), ("s", true)]),
            Kind::Npn | Kind::Pnp => PinSpec::Fixed(&[("c", true), ("b", true), ("e", true)]),
            Kind::Diode | Kind::Zener | Kind::Tvs => PinSpec::Fixed(&[("a", true), ("k", true)]),
            Kind::Driver => PinSpec::Fixed(&[
                ("in", true),
                ("out", true),
                ("vdd", true),
                ("gnd", true),
                ("inb", false),
                ("outb", false),
            ]),
            Kind::Mcu | Kind::Connector => PinSpec::Any,
        }
    }

    /// Whether bare nets may be listed (pins `1`, `2` in order).
    pub fn positional_pins(self) -> Option<&'static [&'static str]> {
        match self {
            Kind::Inductor | Kind::Resistor | Kind::Capacitor => Some(&["1", "2"]),
            _ => None,
        }
    }

    pub fn keys(self) -> &'static [KeyDef] {
        match self {
            Kind::Nmos | Kind::Pmos => MOS_KEYS,
            Kind::Npn | Kind::Pnp => BJT_KEYS,
            Kind::Diode | Kind::Zener | Kind::Tvs => DIODE_KEYS,
            Kind::Resistor => RES_KEYS,
            Kind::Capacitor => CAP_KEYS,
            Kind::Motor | Kind::Solenoid | Kind::Relay => LOAD_KEYS,
            Kind::Inductor => INDUCTOR_KEYS,
            Kind::Mcu | Kind::Driver => IC_KEYS,
            Kind::Connector => NO_KEYS,
        }
    }

    pub fn key(self, name: &str) -> Option<&'static KeyDef> {
        self.keys().iter().find(|k| k.name == name)
    }

    /// The key that a bare value after the pin list sets.
    pub fn primary_key(self) -> Option<&'static str> {
        match self {
            Kind::Resistor | Kind::Capacitor | Kind::Inductor => Some("value"),
            _ => None,
        }
    }

    pub fn is_inductive_load(self) -> bool {
        matches!(
            self,
            Kind::Motor | Kind::Solenoid | Kind::Relay | Kind::Inductor
        )
    }

    pub fn is_switch(self) -> bool {
        matches!(self, Kind::Nmos | Kind::Pmos | Kind::Npn | Kind::Pnp)
    }

    pub fn is_mos(self) -> bool {
        matches!(self, Kind::Nmos | Kind::Pmos)
    }

    pub fn is_bipolar(self) -> bool {
        matches!(self, Kind::Npn | Kind::Pnp)
    }

    pub fn is_diode(self) -> bool {
        matches!(self, Kind::Diode | Kind::Zener | Kind::Tvs)
    }

    /// p-type switches turn on with their control pin below the source.
    pub fn is_p_type(self) -> bool {
        matches!(self, Kind::Pmos | Kind::Pnp)
    }

    /// (main terminal, control pin, reference terminal) pin names.
    pub fn switch_pins(self) -> Option<(&'static str, &'static str, &'static str)> {
        match self {
            Kind::Nmos | Kind::Pmos => Some(("d", "g", "s")),
            Kind::Npn | Kind::Pnp => Some(("c", "b", "e")),
            _ => None,
        }
    }
}

/// What reads a key: the rule that checks a rating (and the computed
/// value it is compared with), or the model a parameter feeds. Every key
/// of every kind has an entry (a test keeps it so), so no rating is
/// accepted and then ignored.
pub fn read_by(kind: Kind, key: &str) -> &'static str {
    use Kind::*;
    match (kind, key) {
        (Nmos | Pmos, "vds_max") => {
            "switch-overvoltage (rails' maximum blocked), clamp-overvoltage (simulated v_peak); the body diode's avalanche at 1.3 ×"
        }
        (Nmos | Pmos, "vgs_max") => "gate-overvoltage (largest |V_GS| over every state)",
        (Nmos | Pmos, "id_max") => {
            "switch-overcurrent (i_on, stalled, rails at max); the body diode's fit"
        }
        (Nmos | Pmos, "rds_on") => {
            "model: K of the square law; the region's on-state limit; switch-overheat"
        }
        (Nmos | Pmos, "rds_on_vgs") => {
            "model: K of the square law; gate-drive-low (v_gs_on below it)"
        }
        (Nmos | Pmos, "vgs_th") => "model: VTO; gate-drive-low (never turns on)",
        (Nmos | Pmos, "vgs_plateau") => "informative (the simulated gate charge gives the plateau)",
        (Nmos | Pmos, "qg") => "model: Cgs (with qgd); the simulated edges",
        (Nmos | Pmos, "qgd") => "model: Cgd; the simulated edges",
        (Nmos | Pmos, "tr" | "tf") => {
            "switching loss and dead-time-short when no gate charge is given"
        }
        (Nmos | Pmos, "td_off") => "dead-time-short when no gate charge is given",
        (Nmos | Pmos | Npn | Pnp, "coss") => "model: drain-source (collector-emitter) capacitance",
        (_, "rth_ja") => "switch-overheat (tj = ambient + P·Rth)",
        (_, "tj_max") => "switch-overheat (tj against tj_max less the margin)",
        (Nmos | Pmos, "body_vf") => "model: body-diode fit",
        (Nmos | Pmos, "body_trr") => "model: body-diode stored charge",
        (Npn | Pnp, "vce_max") => "switch-overvoltage, clamp-overvoltage; the avalanche at 1.3 ×",
        (Npn | Pnp, "ic_max") => "switch-overcurrent; model: Is and RC fit",
        (Npn | Pnp, "hfe_min") => "model: BF; gate-drive-low (base current below I_C/hfe_min)",
        (Npn | Pnp, "vce_sat") => "model: RC fit; the region's on-state limit",
        (Npn | Pnp, "vbe_on") => "model: Is fit",
        (Npn | Pnp, "ib_max") => "base-unlimited (the base current drawn)",
        (Npn | Pnp, "tf") => "informative (the edges are simulated)",
        (Diode | Zener | Tvs, "type") => {
            "model: Schottky emission coefficient and no stored charge"
        }
        (Diode | Zener | Tvs, "vrrm") => "freewheel-diode-underrated (v_rev, every state)",
        (Diode | Zener | Tvs, "if_avg") => {
            "freewheel-diode-underrated (i_avg); model: Is and Rs fit"
        }
        (Diode | Zener | Tvs, "ifsm") => "freewheel-diode-underrated (i_fw_peak, stalled)",
        (Diode | Zener | Tvs, "vf") => "model: Is and Rs fit",
        (Diode | Zener | Tvs, "trr") => {
            "freewheel-diode-slow (1 % of the PWM period); model: stored charge"
        }
        (Diode | Zener | Tvs, "qrr") => "model: stored charge",
        (Diode | Zener | Tvs, "vz") => "model: breakdown; rail-short",
        (Diode | Zener | Tvs, "v_clamp") => "model: breakdown; rail-short",
        (Diode | Zener | Tvs, "p_max") => "clamp-overload (e_clamp·f_pwm); the Zener's fit",
        (Diode | Zener | Tvs, "e_max") => "clamp-overload (one turn-off's e_clamp)",
        (Resistor, "value") => "model: resistance",
        (Resistor, "p_max") => "resistor-overload (p_loss, motors running, rails at max)",
        (Resistor, "tol") => "informative",
        (Capacitor, "value") => "model: capacitance; capacitor-overvoltage (the rail's rise)",
        (Capacitor, "v_max") => "capacitor-overvoltage (largest voltage across it)",
        (Capacitor, "esr") => "model: series resistance",
        (Motor | Solenoid | Relay | Inductor, "r") => "model: winding resistance",
        (Motor | Solenoid | Relay | Inductor, "l" | "value") => "model: inductance",
        (Motor | Solenoid | Relay | Inductor, "v_rated") => "model: the running back-EMF",
        (Motor | Solenoid | Relay | Inductor, "i_rated") => "model: the running back-EMF; i_cont",
        (Motor | Solenoid | Relay | Inductor, "i_noload") => "informative",
        (Motor | Solenoid | Relay | Inductor, "i_stall") => {
            "informative (the stall current is solved)"
        }
        (Motor | Solenoid | Relay | Inductor, "r_tol") => {
            "model: winding resistance at r·(1 − r_tol)"
        }
        (Motor | Solenoid | Relay | Inductor, "i_sat") => "informative",
        (Mcu | Driver, "io_v") => "model: the pin's level",
        (Mcu | Driver, "io_i_max") => "gate-pulldown-strong (pin current); model: R_out",
        (Mcu | Driver, "vdd_max") => "supply-overvoltage (supply rail at max); a driver's R_out",
        (Mcu | Driver, "r_out") => "model: output resistance",
        (Mcu | Driver, "vin_th") => "model: a driver's input threshold",
        (Mcu | Driver, "invert") => "model: an inverting driver",
        _ => "",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_key_is_read_by_something() {
        for &k in Kind::ALL {
            for def in k.keys() {
                assert!(
                    !read_by(k, def.name).is_empty(),
                    "{}.{} is read by nothing",
                    k.name(),
                    def.name
                );
            }
        }
    }
}
