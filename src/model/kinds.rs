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
