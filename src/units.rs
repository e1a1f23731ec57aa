//! Quantities with dimensions, SI prefixes and IEC 60062 letter codes.
//!
//! One parser for netlists, parts libraries, configuration and team rules.
//! Values are held in SI base units (V, A, Ω, F, H, Hz, W, s, C, K/W, J);
//! temperatures in degrees Celsius; percentages as fractions.

use std::fmt;

#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Dimension {
    /// A plain number (gain, fraction, percentage).
    Number,
    Voltage,
    Current,
    Resistance,
    Capacitance,
    Inductance,
    Frequency,
    Power,
    Time,
    Charge,
    Energy,
    Temperature,
    ThermalResistance,
}

impl Dimension {
    pub const ALL: [Dimension; 13] = [
        Dimension::Number,
        Dimension::Voltage,
        Dimension::Current,
        Dimension::Resistance,
        Dimension::Capacitance,
        Dimension::Inductance,
        Dimension::Frequency,
        Dimension::Power,
        Dimension::Time,
        Dimension::Charge,
        Dimension::Energy,
        Dimension::Temperature,
        Dimension::ThermalResistance,
    ];

    /// "a resistance", for "expected a resistance, found an inductance".
    pub fn article_name(self) -> &'static str {
        match self {
            Dimension::Number => "a plain number",
            Dimension::Voltage => "a voltage",
            Dimension::Current => "a current",
            Dimension::Resistance => "a resistance",
            Dimension::Capacitance => "a capacitance",
            Dimension::Inductance => "an inductance",
            Dimension::Frequency => "a frequency",
            Dimension::Power => "a power",
            Dimension::Time => "a time",
            Dimension::Charge => "a charge",
            Dimension::Energy => "an energy",
            Dimension::Temperature => "a temperature",
            Dimension::ThermalResistance => "a thermal resistance",
        }
    }

    /// The unit symbol used when printing.
    pub fn unit(self) -> &'static str {
        match self {
            Dimension::Number => "",
            Dimension::Voltage => "V",
            Dimension::Current => "A",
            Dimension::Resistance => "Ω",
            Dimension::Capacitance => "F",
            Dimension::Inductance => "H",
            Dimension::Frequency => "Hz",
            Dimension::Power => "W",
            Dimension::Time => "s",
            Dimension::Charge => "C",
            Dimension::Energy => "J",
            Dimension::Temperature => "°C",
            Dimension::ThermalResistance => "K/W",
        }
    }

    /// The unit written in machine output (ASCII, base SI).
    pub fn json_unit(self) -> &'static str {
        match self {
            Dimension::Resistance => "ohm",
            Dimension::Temperature => "degC",
            Dimension::Number => "",
            d => d.unit(),
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Quantity {
    pub value: f64,
    pub dim: Dimension,
}

impl Quantity {
    pub const fn new(value: f64, dim: Dimension) -> Quantity {
        Quantity { value, dim }
    }
}

impl fmt::Display for Quantity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&format_si(self.value, self.dim))
    }
}

/// Why a quantity could not be read.
#[derive(Clone, Debug, PartialEq)]
pub enum UnitError {
    /// Not a number at all.
    NotANumber,
    /// The number overflows or is not finite.
    OutOfRange,
    /// A suffix that is neither a unit nor prefix + unit.
    UnknownUnit(String),
    /// A quantity of the wrong dimension for the key.
    WrongDimension {
        expected: Dimension,
        found: Dimension,
    },
    /// A temperature colder than absolute zero.
    BelowAbsoluteZero,
}

impl fmt::Display for UnitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            UnitError::NotANumber => write!(f, "expected a number with an optional unit"),
            UnitError::OutOfRange => write!(f, "number out of range"),
            UnitError::BelowAbsoluteZero => {
                write!(f, "a temperature below absolute zero (−273.15 °C, 0 K)")
            }
            UnitError::UnknownUnit(u) => write!(
                f,
                "unknown unit `{u}` (known: V A ohm Ω F H Hz W s C J K K/W degC/W degC °C %, with prefixes p n u µ m k M G)"
            ),
            UnitError::WrongDimension { expected, found } => write!(
                f,
                "expected {}, found {}",
                expected.article_name(),
                found.article_name()
            ),
        }
    }
}

fn prefix_factor(c: char) -> Option<f64> {
    Some(match c {
        'p' => 1e-12,
        'n' => 1e-9,
        'u' | 'µ' | 'μ' => 1e-6,
        'm' => 1e-3,
        'k' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        _ => return None,
    })
}

/// A unit symbol: its dimension, scale to SI and (for kelvin) offset.
fn unit_of(s: &str) -> Option<(Dimension, f64)> {
    Some(match s {
        "V" => (Dimension::Voltage, 1.0),
        "A" => (Dimension::Current, 1.0),
        "ohm" | "Ohm" | "Ω" | "ohms" => (Dimension::Resistance, 1.0),
        "F" => (Dimension::Capacitance, 1.0),
        "H" => (Dimension::Inductance, 1.0),
        "Hz" => (Dimension::Frequency, 1.0),
        "W" => (Dimension::Power, 1.0),
        "s" => (Dimension::Time, 1.0),
        "C" => (Dimension::Charge, 1.0),
        "J" => (Dimension::Energy, 1.0),
        "K/W" | "degC/W" | "°C/W" => (Dimension::ThermalResistance, 1.0),
        "degC" | "°C" | "K" => (Dimension::Temperature, 1.0),
        "%" => (Dimension::Number, 0.01),
        _ => return None,
    })
}

/// Parse the suffix after a number: unit, prefix + unit, or prefix alone.
fn parse_suffix(suffix: &str) -> Result<(Dimension, f64, bool), UnitError> {
    if suffix.is_empty() {
        return Ok((Dimension::Number, 1.0, false));
    }
    if let Some((d, k)) = unit_of(suffix) {
        return Ok((d, k, suffix == "K"));
    }
    let mut chars = suffix.chars();
    if let Some(c) = chars.next()
        && let Some(p) = prefix_factor(c)
    {
        let rest = chars.as_str();
        if rest.is_empty() {
            return Ok((Dimension::Number, p, false));
        }
        if let Some((d, k)) = unit_of(rest) {
            if d == Dimension::Temperature || rest == "%" {
                return Err(UnitError::UnknownUnit(suffix.to_string()));
            }
            return Ok((d, p * k, false));
        }
    }
    Err(UnitError::UnknownUnit(suffix.to_string()))
}

/// Split a leading decimal number (with optional sign and exponent).
fn split_number(s: &str) -> Option<(&str, &str)> {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'-' || b[i] == b'+') {
        i += 1;
    }
    let digits_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    let mut had_digits = i > digits_start;
    if i < b.len() && b[i] == b'.' && i + 1 < b.len() && b[i + 1].is_ascii_digit() {
        i += 1;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        had_digits = true;
    }
    if !had_digits {
        return None;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'-' || b[j] == b'+') {
            j += 1;
        }
        let exp_start = j;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j > exp_start {
            i = j;
        }
    }
    Some((&s[..i], &s[i..]))
}

/// IEC 60062 letter code (the resistance and capacitance codes of IEC
/// 60062:2016, clause 4): the letter stands for the decimal point and the
/// multiplier, at any place — `R47`, `4R7`, `47R`, `4K7`, `4k7`, `2M2`,
/// `1u5`, `4n7` — with an optional unit after the code (`4u7F`). (`47K` and
/// a bare prefix like `15p` read as a number with a prefix.)
fn parse_letter_code(s: &str) -> Option<Result<Quantity, UnitError>> {
    let chars: Vec<char> = s.chars().collect();
    let pos = chars.iter().position(|c| !c.is_ascii_digit())?;
    let letter = *chars.get(pos)?;
    let ohm = letter == 'R' || letter == 'r';
    let rest = chars.get(pos + 1..)?;
    let frac_len = rest.iter().take_while(|c| c.is_ascii_digit()).count();
    let factor = match letter {
        'R' | 'r' => 1.0,
        // the resistor code writes kilo as a capital K (`4K7`); alone,
        // `47K` is kelvin unless the key wants a resistance (`parse_as`)
        'K' if frac_len > 0 => 1e3,
        c => prefix_factor(c)?,
    };
    let int: String = chars.get(..pos)?.iter().collect();
    // `47R`: the letter at the end (an integer number of ohms)
    let r_at_end =
        ohm && frac_len == 0 && !int.is_empty() && rest.iter().all(|c| c.is_alphabetic());
    if frac_len == 0 && !r_at_end {
        return None;
    }
    let frac: String = rest.get(..frac_len)?.iter().collect();
    let unit: String = rest.get(frac_len..)?.iter().collect();
    let num: f64 = format!("{}.{}", if int.is_empty() { "0" } else { &int }, frac)
        .parse()
        .ok()?;
    let (dim, k) = if unit.is_empty() {
        if letter == 'R' || letter == 'r' {
            (Dimension::Resistance, 1.0)
        } else {
            (Dimension::Number, 1.0)
        }
    } else {
        match unit_of(&unit) {
            Some((d, k)) if d != Dimension::Temperature => (d, k),
            _ => return Some(Err(UnitError::UnknownUnit(unit))),
        }
    };
    Some(Ok(Quantity::new(num * factor * k, dim)))
}

/// Parse a quantity as written by a user.
pub fn parse(text: &str) -> Result<Quantity, UnitError> {
    let s = text.trim();
    if let Some(q) = parse_letter_code(s) {
        return q;
    }
    let (num, suffix) = split_number(s).ok_or(UnitError::NotANumber)?;
    let n: f64 = num.parse().map_err(|_| UnitError::NotANumber)?;
    if !n.is_finite() {
        return Err(UnitError::OutOfRange);
    }
    // an underflow to zero of a number that is not zero
    let mantissa = num.split(['e', 'E']).next().unwrap_or("");
    if n == 0.0 && mantissa.chars().any(|c| c.is_ascii_digit() && c != '0') {
        return Err(UnitError::OutOfRange);
    }
    let (dim, k, kelvin) = parse_suffix(suffix)?;
    let mut v = n * k;
    if kelvin {
        v -= 273.15;
    }
    if !v.is_finite() || (v != 0.0 && v.abs() < 1e-300) {
        return Err(UnitError::OutOfRange);
    }
    Ok(Quantity::new(v, dim))
}

/// Parse a quantity for a key of a known dimension. A bare number (with or
/// without a prefix) takes the key's dimension; anything else must match.
pub fn parse_as(text: &str, expected: Dimension) -> Result<Quantity, UnitError> {
    let t = text.trim();
    // the resistor code's capital K (`47K`, IEC 60062) where a resistance is
    // expected: kilo-ohms, not kelvin
    if expected == Dimension::Resistance
        && let Some(num) = t.strip_suffix('K')
        && !num.is_empty()
        && num.chars().all(|c| c.is_ascii_digit() || c == '.')
        && let Ok(v) = num.parse::<f64>()
    {
        return Ok(Quantity::new(v * 1e3, Dimension::Resistance));
    }
    let q = coerce(parse(t)?, expected, text)?;
    if expected == Dimension::Temperature && q.value < ABSOLUTE_ZERO_C {
        return Err(UnitError::BelowAbsoluteZero);
    }
    Ok(q)
}

/// Absolute zero in °C (temperatures are held in °C).
pub const ABSOLUTE_ZERO_C: f64 = -273.15;

/// Like `parse_as`, for a temperature difference (`25degC`, `25K`).
pub fn parse_delta_temperature(text: &str) -> Result<Quantity, UnitError> {
    let q = parse(text)?;
    if q.dim == Dimension::Temperature && text.trim().ends_with('K') {
        return Ok(Quantity::new(q.value + 273.15, Dimension::Temperature));
    }
    coerce(q, Dimension::Temperature, text)
}

fn coerce(q: Quantity, expected: Dimension, text: &str) -> Result<Quantity, UnitError> {
    if q.dim == expected {
        return Ok(q);
    }
    // `4R7` written for a capacitor is still wrong; a bare number is not.
    if q.dim == Dimension::Number && !text.trim().ends_with('%') {
        return Ok(Quantity::new(q.value, expected));
    }
    if q.dim == Dimension::Number && expected == Dimension::Number {
        return Ok(q);
    }
    Err(UnitError::WrongDimension {
        expected,
        found: q.dim,
    })
}

/// Format with an SI prefix and three significant digits: `13.8 V`,
/// `2.3 A`, `40 ns`, `4.7 kΩ`.
pub fn format_si(value: f64, dim: Dimension) -> String {
    let unit = dim.unit();
    if !value.is_finite() {
        return format!("{value} {unit}").trim_end().to_string();
    }
    // below the display resolution a value is zero (the numerical residue
    // of a solve, not a quantity)
    if value.abs() < display_floor(dim) {
        return format!("0 {unit}").trim_end().to_string();
    }
    match dim {
        Dimension::Temperature => return format!("{} °C", sig3(value)),
        Dimension::Number => return sig3(value),
        Dimension::ThermalResistance => return format!("{} K/W", sig3(value)),
        _ => {}
    }
    let a = value.abs();
    let (scaled, prefix) = if a == 0.0 {
        (0.0, "")
    } else if a >= 0.9995e12 {
        (value / 1e12, "T")
    } else if a >= 1e9 {
        (value / 1e9, "G")
    } else if a >= 1e6 {
        (value / 1e6, "M")
    } else if a >= 1e3 {
        (value / 1e3, "k")
    } else if a >= 0.9995 {
        (value, "")
    } else if a >= 0.9995e-3 {
        (value * 1e3, "m")
    } else if a >= 0.9995e-6 {
        (value * 1e6, "µ")
    } else if a >= 0.9995e-9 {
        (value * 1e9, "n")
    } else if a >= 0.9995e-12 {
        (value * 1e12, "p")
    } else {
        (value * 1e15, "f")
    };
    format!("{} {prefix}{unit}", sig3(scaled))
}

/// The smallest magnitude worth printing per dimension.
fn display_floor(dim: Dimension) -> f64 {
    match dim {
        Dimension::Voltage => 1e-6,
        Dimension::Current | Dimension::Power => 1e-9,
        Dimension::Energy | Dimension::Time => 1e-12,
        Dimension::Charge => 1e-15,
        _ => 0.0,
    }
}

/// Three significant digits, no trailing zeros: 13.8, 2.3, 40, 0.12.
/// Beyond four digits either way (from 10,000, below 0.001) the number is
/// written with an exponent, `1.23e5`, so that no value of any size prints
/// more than four significant digits.
pub fn sig3(v: f64) -> String {
    if v == 0.0 {
        return "0".to_string();
    }
    if !v.is_finite() {
        return v.to_string();
    }
    let a = v.abs();
    if !(1e-3..9999.5).contains(&a) {
        let s = format!("{v:.2e}");
        return match s.split_once('e') {
            Some((m, e)) if m.contains('.') => {
                format!("{}e{e}", m.trim_end_matches('0').trim_end_matches('.'))
            }
            _ => s,
        };
    }
    let decimals = if a >= 100.0 {
        0
    } else if a >= 10.0 {
        1
    } else if a >= 1.0 {
        2
    } else {
        let mag = a.log10().floor() as i32; // -1 for 0.12
        (2 - mag).clamp(0, 15) as usize
    };
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A percentage for messages: 0.8 → "80 %".
pub fn percent(fraction: f64) -> String {
    format!("{} %", sig3(fraction * 100.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn q(s: &str) -> Quantity {
        match parse(s) {
            Ok(q) => q,
            Err(e) => panic!("{s}: {e}"),
        }
    }
    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-9 * b.abs().max(1e-30)
    }

    #[test]
    fn every_unit_of_the_language() {
        let cases: &[(&str, f64, Dimension)] = &[
            ("12V", 12.0, Dimension::Voltage),
            ("14.4V", 14.4, Dimension::Voltage),
            ("0.8A", 0.8, Dimension::Current),
            ("60mA", 0.06, Dimension::Current),
            ("9ohm", 9.0, Dimension::Resistance),
            ("9Ω", 9.0, Dimension::Resistance),
            ("1.2mH", 1.2e-3, Dimension::Inductance),
            ("470uF", 470e-6, Dimension::Capacitance),
            ("470µF", 470e-6, Dimension::Capacitance),
            ("25kHz", 25e3, Dimension::Frequency),
            ("10ns", 10e-9, Dimension::Time),
            ("3nC", 3e-9, Dimension::Charge),
            ("150K/W", 150.0, Dimension::ThermalResistance),
            ("90degC/W", 90.0, Dimension::ThermalResistance),
            ("40degC", 40.0, Dimension::Temperature),
            ("40°C", 40.0, Dimension::Temperature),
            ("5%", 0.05, Dimension::Number),
            ("1e-3A", 1e-3, Dimension::Current),
            ("2MHz", 2e6, Dimension::Frequency),
            ("1W", 1.0, Dimension::Power),
            ("100pF", 100e-12, Dimension::Capacitance),
            ("1GHz", 1e9, Dimension::Frequency),
            ("7.1mJ", 7.1e-3, Dimension::Energy),
        ];
        for (s, v, d) in cases {
            let got = q(s);
            assert!(close(got.value, *v), "{s}: {} != {v}", got.value);
            assert_eq!(got.dim, *d, "{s}");
        }
    }

    #[test]
    fn milli_and_mega_are_distinct() {
        assert!(close(q("1m").value, 1e-3));
        assert!(close(q("1M").value, 1e6));
        assert!(close(q("3mW").value, 3e-3));
        assert!(close(q("3MW").value, 3e6));
    }

    #[test]
    fn kelvin_is_absolute_temperature() {
        assert!(close(q("423.15K").value, 150.0));
        let d = match parse_delta_temperature("25K") {
            Ok(d) => d,
            Err(e) => panic!("{e}"),
        };
        assert!(close(d.value, 25.0));
    }

    #[test]
    fn bare_numbers_take_the_key_dimension() {
        let r = parse_as("100k", Dimension::Resistance).ok();
        assert_eq!(r, Some(Quantity::new(100e3, Dimension::Resistance)));
        let c = parse_as("470u", Dimension::Capacitance).ok();
        assert!(c.is_some_and(|c| close(c.value, 470e-6)));
    }

    #[test]
    fn values_below_the_display_resolution_print_as_zero() {
        assert_eq!(format_si(2.3e-9, Dimension::Voltage), "0 V");
        assert_eq!(format_si(1.07e-13, Dimension::Energy), "0 J");
        assert_eq!(format_si(2.3e-6, Dimension::Voltage), "2.3 µV");
        assert_eq!(format_si(-0.0, Dimension::Current), "0 A");
    }

    #[test]
    fn iec_60062_letter_codes_in_full() {
        // IEC 60062:2016 clause 4, the letter and digit code for resistance
        // and capacitance values: the letter (R, K, M, G for resistors;
        // p, n, u/µ, m for capacitors) marks the decimal point and the
        // multiplier, at the start, in the middle or at the end.
        let table: &[(&str, Dimension, f64)] = &[
            ("R47", Dimension::Resistance, 0.47),
            ("4R7", Dimension::Resistance, 4.7),
            ("47R", Dimension::Resistance, 47.0),
            ("1R", Dimension::Resistance, 1.0),
            ("4K7", Dimension::Resistance, 4.7e3),
            ("4k7", Dimension::Resistance, 4.7e3),
            ("47K", Dimension::Resistance, 47e3),
            ("47k", Dimension::Resistance, 47e3),
            ("1M", Dimension::Resistance, 1e6),
            ("2M2", Dimension::Resistance, 2.2e6),
            ("1G5", Dimension::Resistance, 1.5e9),
            ("1u5", Dimension::Capacitance, 1.5e-6),
            ("15p", Dimension::Capacitance, 15e-12),
            ("p68", Dimension::Capacitance, 0.68e-12),
            ("4n7", Dimension::Capacitance, 4.7e-9),
            ("470u", Dimension::Capacitance, 470e-6),
            ("2m2", Dimension::Capacitance, 2.2e-3),
        ];
        for &(text, dim, want) in table {
            match parse_as(text, dim) {
                Ok(v) => assert!(close(v.value, want), "{text}: {} vs {want}", v.value),
                Err(e) => panic!("{text}: {e}"),
            }
        }
        // a capital K alone is still kelvin where a temperature is meant
        assert_eq!(q("300K").dim, Dimension::Temperature);
    }

    #[test]
    fn iec_60062_letter_codes() {
        // IEC 60062:2016 clause 4 (letter and digit code for resistance and
        // capacitance values): the letter replaces the decimal point.
        assert!(close(q("4k7").value, 4700.0));
        assert!(close(q("4R7").value, 4.7));
        assert!(close(q("R47").value, 0.47));
        assert!(close(q("2M2").value, 2.2e6));
        assert!(close(q("1u5").value, 1.5e-6));
        assert!(close(q("4n7").value, 4.7e-9));
        assert!(close(q("6p8").value, 6.8e-12));
        assert!(close(q("4u7F").value, 4.7e-6));
        assert_eq!(q("4u7F").dim, Dimension::Capacitance);
        assert_eq!(q("4R7").dim, Dimension::Resistance);
        let c = parse_as("4k7", Dimension::Resistance).ok();
        assert!(c.is_some_and(|c| close(c.value, 4700.0)));
    }

    #[test]
    fn wrong_dimension_names_both() {
        let e = parse_as("1.2mH", Dimension::Resistance).err();
        assert_eq!(
            e.map(|e| e.to_string()),
            Some("expected a resistance, found an inductance".to_string())
        );
        assert!(parse_as("4R7", Dimension::Capacitance).is_err());
        assert!(parse_as("5%", Dimension::Voltage).is_err());
    }

    #[test]
    fn rejects_garbage_and_overflow() {
        assert_eq!(parse("V12"), Err(UnitError::NotANumber));
        assert_eq!(parse("1e999V"), Err(UnitError::OutOfRange));
        assert!(matches!(parse("12Vx"), Err(UnitError::UnknownUnit(_))));
        assert!(matches!(parse("3mdegC"), Err(UnitError::UnknownUnit(_))));
        assert_eq!(parse(""), Err(UnitError::NotANumber));
        assert_eq!(parse("."), Err(UnitError::NotANumber));
        assert!(parse("99999999999999999999999999999999999999V").is_ok());
    }

    #[test]
    fn formatting_with_prefixes() {
        assert_eq!(format_si(13.8, Dimension::Voltage), "13.8 V");
        assert_eq!(format_si(2.3, Dimension::Current), "2.3 A");
        assert_eq!(format_si(40e-9, Dimension::Time), "40 ns");
        assert_eq!(format_si(4700.0, Dimension::Resistance), "4.7 kΩ");
        assert_eq!(format_si(0.12, Dimension::Resistance), "120 mΩ");
        assert_eq!(format_si(1.694, Dimension::Current), "1.69 A");
        assert_eq!(format_si(0.0, Dimension::Voltage), "0 V");
        assert_eq!(format_si(61.5, Dimension::Temperature), "61.5 °C");
        assert_eq!(percent(0.8), "80 %");
    }

    /// No value of any size prints more than four significant digits.
    #[test]
    fn huge_and_tiny_values_print_short() {
        assert_eq!(format_si(2.5e12, Dimension::Voltage), "2.5 TV");
        assert_eq!(format_si(1e300, Dimension::Voltage), "1e288 TV");
        assert_eq!(format_si(3.3e-14, Dimension::Charge), "33 fC");
        assert_eq!(format_si(1e300, Dimension::Temperature), "1e300 °C");
        assert_eq!(format_si(12345.0, Dimension::Number), "1.23e4");
        assert_eq!(format_si(9999.0, Dimension::Number), "9999");
        assert_eq!(
            format_si(-1.5e200, Dimension::ThermalResistance),
            "-1.5e200 K/W"
        );
        for e in -300..=300 {
            let v = 1.234_567 * 10f64.powi(e);
            for d in [
                Dimension::Voltage,
                Dimension::Number,
                Dimension::Temperature,
            ] {
                let s = format_si(v, d);
                let digits = s
                    .split(['e', ' '])
                    .next()
                    .unwrap_or("")
                    .trim_start_matches(['-', '0', '.'])
                    .chars()
                    .filter(|c| c.is_ascii_digit())
                    .count();
                assert!(digits <= 4 && s.len() <= 16, "{v:e}: {s}");
            }
        }
    }

    #[test]
    fn temperatures_below_absolute_zero_are_refused() {
        assert!(parse_as("-273.15degC", Dimension::Temperature).is_ok());
        assert!(parse_as("0K", Dimension::Temperature).is_ok());
        assert_eq!(
            parse_as("-274degC", Dimension::Temperature),
            Err(UnitError::BelowAbsoluteZero)
        );
        assert!(parse_as("-1K", Dimension::Temperature).is_err());
    }
}
