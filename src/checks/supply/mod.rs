//! Supply rules: rails shorted, rails without bulk capacitance.

pub mod bulk_cap_missing;
pub mod load_unpowered;
pub mod rail_short;
pub mod rail_unused;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![
        rail_short::RULE,
        bulk_cap_missing::RULE,
        rail_unused::RULE,
        load_unpowered::RULE,
    ]
}
