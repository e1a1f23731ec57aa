//! The settings in force for one checked file: derating, ambient,
//! severity overrides. Built from defaults, the project configuration and
//! the command line.

use crate::finding::Severity;
use std::collections::HashMap;

/// Fractions of a rating that a design may use.
#[derive(Clone, Debug, PartialEq)]
pub struct Derating {
    /// Blocking, reverse and capacitor voltage.
    pub voltage: f64,
    /// Switch and diode continuous current.
    pub current: f64,
    /// Gate-source voltage.
    pub gate_voltage: f64,
    /// Resistor power.
    pub power: f64,
    /// Keep the junction this far below `tj_max` (K).
    pub tj_margin: f64,
}

impl Default for Derating {
    /// Common practice; cf. MIL-DTL-917 Table XIX, which gives 0.7 for FET
    /// gate-source voltage and 0.8 for maximum drain current.
    fn default() -> Self {
        Derating {
            voltage: 0.8,
            current: 0.8,
            gate_voltage: 0.7,
            power: 0.5,
            tj_margin: 25.0,
        }
    }
}

/// What a severity override says.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Level {
    Off,
    On(Severity),
}

#[derive(Clone, Debug)]
pub struct Settings {
    pub derating: Derating,
    /// Worst-case ambient (°C) when the netlist gives none.
    pub ambient: f64,
    pub overrides: HashMap<String, Level>,
    pub fail_on: Severity,
    /// Names of every part in the loaded libraries (for suggestions).
    pub known_part_names: Vec<String>,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            derating: Derating::default(),
            ambient: 40.0,
            overrides: HashMap::new(),
            fail_on: Severity::Error,
            known_part_names: Vec::new(),
        }
    }
}

impl Settings {
    /// The severity a rule runs at, or `None` when it is off.
    pub fn severity_of(&self, id: &str, default: Severity) -> Option<Severity> {
        match self.overrides.get(id) {
            Some(Level::Off) => None,
            Some(Level::On(s)) => Some(*s),
            None => Some(default),
        }
    }
}
