//! Structure rules: the netlist's parts, pins and nets make sense.

pub mod designator_reused;
pub mod net_touches_one_pin;
pub mod part_not_in_library;
pub mod pin_not_listed;
pub mod shorted_part;
pub mod unknown_pin;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![
        part_not_in_library::RULE,
        unknown_pin::RULE,
        pin_not_listed::RULE,
        net_touches_one_pin::RULE,
        designator_reused::RULE,
        shorted_part::RULE,
    ]
}
