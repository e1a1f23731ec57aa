//! Bridge rules: both switches of a leg on together, dead time.

pub mod dead_time_short;
pub mod shoot_through;

use super::Rule;

pub fn rules() -> Vec<Rule> {
    vec![shoot_through::RULE, dead_time_short::RULE]
}
