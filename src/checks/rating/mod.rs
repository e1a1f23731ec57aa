//! Rating rules: a part's declared rating against the computed value it
//! limits. They share one mechanism (`over` and `message`): the rating
//! key, the fact, the derating class and the words of the message.

pub mod capacitor_overvoltage;
pub mod pin_overvoltage;
pub mod resistor_overload;
pub mod supply_overvoltage;

use super::Rule;
use crate::model::Part;
use crate::units::{Dimension, format_si, percent};

pub fn rules() -> Vec<Rule> {
    vec![
        capacitor_overvoltage::RULE,
        resistor_overload::RULE,
        supply_overvoltage::RULE,
        pin_overvoltage::RULE,
    ]
}

/// A computed value above a rating × derating.
#[derive(Clone, Debug, PartialEq)]
pub struct Over {
    pub part: usize,
    pub key: &'static str,
    pub rating: f64,
    pub derate: f64,
    pub limit: f64,
    pub value: f64,
    pub dim: Dimension,
    /// The rating was not given: this default stands in.
    pub assumed: bool,
}

/// The check every rating rule makes: `value > rating × derate`.
pub fn over(
    p: &Part,
    part: usize,
    key: &'static str,
    value: f64,
    dim: Dimension,
    derate: f64,
) -> Option<Over> {
    let rating = p.num(key)?;
    let limit = rating * derate;
    (value > limit).then_some(Over {
        part,
        key,
        rating,
        derate,
        limit,
        value,
        dim,
        assumed: false,
    })
}

/// "`C1` sees up to 26.4 V, above 80 % of its 16 V `v_max` rating
/// (12.8 V)"; `context` follows the value (" (`M1` stalled)").
pub fn message(p: &Part, o: &Over, what: &str) -> String {
    message_in(p, o, what, "")
}

pub fn message_in(p: &Part, o: &Over, what: &str, context: &str) -> String {
    let f = |x: f64| format_si(x, o.dim);
    let share = if o.derate < 1.0 {
        format!("{} of ", percent(o.derate))
    } else {
        String::new()
    };
    let assumed = if o.assumed {
        " (assumed: none is given)"
    } else {
        ""
    };
    let limit = if o.derate < 1.0 {
        format!(" ({})", f(o.limit))
    } else {
        String::new()
    };
    format!(
        "`{}` {what} {}{context}, above {share}its {} `{}` rating{assumed}{limit}",
        p.reference,
        f(o.value),
        f(o.rating),
        o.key
    )
}

/// "use a part rated at least …".
pub fn help(o: &Over, what: &str) -> String {
    format!(
        "use a {what} rated at least {}{}",
        format_si(o.value / o.derate, o.dim),
        if o.derate < 1.0 {
            format!(" ({} derating)", percent(o.derate))
        } else {
            String::new()
        }
    )
}
