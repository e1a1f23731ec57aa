//! Switch rating rules: current, voltage, temperature.

pub mod switch_overcurrent;
pub mod switch_overheat;
pub mod switch_overvoltage;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![
        switch_overcurrent::RULE,
        switch_overvoltage::RULE,
        switch_overheat::RULE,
    ]
}
