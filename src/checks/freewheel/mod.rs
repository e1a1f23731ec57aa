//! Freewheel rules: where the inductive current goes at turn-off.

pub mod clamp_overload;
pub mod clamp_overvoltage;
pub mod freewheel_diode_slow;
pub mod freewheel_diode_underrated;
pub mod freewheel_missing;
pub mod freewheel_reversed;
pub mod freewheel_via_supply;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![
        freewheel_missing::RULE,
        freewheel_reversed::RULE,
        freewheel_diode_underrated::RULE,
        freewheel_diode_slow::RULE,
        freewheel_via_supply::RULE,
        clamp_overvoltage::RULE,
        clamp_overload::RULE,
    ]
}
