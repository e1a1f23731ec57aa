//! Structure rules: the netlist's parts, pins and nets make sense.

pub mod duplicate_ref;
pub mod shorted_part;
pub mod single_pin_net;
pub mod unconnected_pin;
pub mod unknown_part;
pub mod unknown_pin;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![
        unknown_part::RULE,
        unknown_pin::RULE,
        unconnected_pin::RULE,
        single_pin_net::RULE,
        duplicate_ref::RULE,
        shorted_part::RULE,
    ]
}
