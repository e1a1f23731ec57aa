//! Supply rules: rails shorted, rails without bulk capacitance.

pub mod bulk_cap_missing;
pub mod rail_short;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![rail_short::RULE, bulk_cap_missing::RULE]
}
