//! SPICE numbers (`10k`, `4.7uF`, `1meg`, `2mil`) and the arithmetic of
//! `{…}` expressions.

use std::collections::HashMap;

/// A number as SPICE reads it: the value, and whether its scale letter
/// was an upper-case `M` (milli in SPICE, mega to most readers).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Number {
    pub value: f64,
    pub upper_m: bool,
}

/// Parse a SPICE number: digits, an optional exponent, an optional scale
/// (`f p n u m k meg g t mil`, any case) and any trailing letters, which
/// SPICE ignores (`10uF`, `4.7kohm`, `12V`). `None` when the text does
/// not start with a number.
pub fn parse(text: &str) -> Option<Number> {
    let b = text.as_bytes();
    let mut i = 0;
    if matches!(b.first(), Some(b'+' | b'-')) {
        i += 1;
    }
    let digits_start = i;
    while b.get(i).is_some_and(u8::is_ascii_digit) {
        i += 1;
    }
    let mut digits = i - digits_start;
    if b.get(i) == Some(&b'.') {
        i += 1;
        let f = i;
        while b.get(i).is_some_and(u8::is_ascii_digit) {
            i += 1;
        }
        digits += i - f;
    }
    if digits == 0 {
        return None;
    }
    // an exponent only when digits follow it (`1e3`; `1meg` is a scale)
    if matches!(b.get(i), Some(b'e' | b'E')) {
        let mut j = i + 1;
        if matches!(b.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        if b.get(j).is_some_and(u8::is_ascii_digit) {
            while b.get(j).is_some_and(u8::is_ascii_digit) {
                j += 1;
            }
            i = j;
        }
    }
    let mantissa: f64 = text.get(..i)?.parse().ok()?;
    let rest = text.get(i..).unwrap_or("");
    let lower = rest.to_ascii_lowercase();
    let (scale, upper_m) = if lower.starts_with("meg") {
        (1e6, false)
    } else if lower.starts_with("mil") {
        (25.4e-6, false)
    } else {
        match lower.bytes().next() {
            Some(b'f') => (1e-15, false),
            Some(b'p') => (1e-12, false),
            Some(b'n') => (1e-9, false),
            Some(b'u') => (1e-6, false),
            Some(b'm') => (1e-3, rest.starts_with('M')),
            Some(b'k') => (1e3, false),
            Some(b'g') => (1e9, false),
            Some(b't') => (1e12, false),
            _ => (1.0, false),
        }
    };
    let value = mantissa * scale;
    value.is_finite().then_some(Number { value, upper_m })
}

/// Parameters in scope, by lower-case name.
pub type Scope = HashMap<String, f64>;

/// The deepest nesting of parentheses and signs an expression may have.
pub const MAX_DEPTH: usize = 64;

/// Evaluate `+ - * / ( )` over numbers and parameters. The error says
/// what does not evaluate.
pub fn eval(text: &str, scope: &Scope) -> Result<f64, String> {
    let mut p = Parser {
        s: text.as_bytes(),
        text,
        i: 0,
        scope,
        depth: 0,
    };
    let v = p.sum()?;
    p.ws();
    if p.i < p.s.len() {
        return Err(format!(
            "`{}` is not part of an expression",
            text.get(p.i..).unwrap_or("").trim()
        ));
    }
    if !v.is_finite() {
        return Err("the result is not a finite number (a division by zero?)".into());
    }
    Ok(v)
}

struct Parser<'a> {
    s: &'a [u8],
    text: &'a str,
    i: usize,
    scope: &'a Scope,
    depth: usize,
}

impl Parser<'_> {
    fn ws(&mut self) {
        while self.s.get(self.i).is_some_and(|c| c.is_ascii_whitespace()) {
            self.i += 1;
        }
    }
    fn peek(&mut self) -> Option<u8> {
        self.ws();
        self.s.get(self.i).copied()
    }
    fn deeper(&mut self) -> Result<(), String> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            return Err(format!(
                "the expression nests deeper than {MAX_DEPTH} levels"
            ));
        }
        Ok(())
    }
    fn sum(&mut self) -> Result<f64, String> {
        let mut v = self.product()?;
        while let Some(c @ (b'+' | b'-')) = self.peek() {
            self.i += 1;
            let r = self.product()?;
            v = if c == b'+' { v + r } else { v - r };
        }
        Ok(v)
    }
    fn product(&mut self) -> Result<f64, String> {
        let mut v = self.unary()?;
        while let Some(c @ (b'*' | b'/')) = self.peek() {
            self.i += 1;
            let r = self.unary()?;
            v = if c == b'*' { v * r } else { v / r };
        }
        Ok(v)
    }
    fn unary(&mut self) -> Result<f64, String> {
        self.deeper()?;
        let v = match self.peek() {
            Some(b'-') => {
                self.i += 1;
                -self.unary()?
            }
            Some(b'+') => {
                self.i += 1;
                self.unary()?
            }
            _ => self.atom()?,
        };
        self.depth -= 1;
        Ok(v)
    }
    fn atom(&mut self) -> Result<f64, String> {
        match self.peek() {
            Some(b'(') => {
                self.i += 1;
                let v = self.sum()?;
                if self.peek() != Some(b')') {
                    return Err("a `(` is not closed".into());
                }
                self.i += 1;
                Ok(v)
            }
            Some(c) if c.is_ascii_digit() || c == b'.' => {
                let start = self.i;
                // the number's text: digits, point, exponent, then letters
                while let Some(&c) = self.s.get(self.i) {
                    let exp_sign = matches!(c, b'+' | b'-')
                        && matches!(self.s.get(self.i.wrapping_sub(1)), Some(b'e' | b'E'))
                        && self.s.get(self.i + 1).is_some_and(u8::is_ascii_digit)
                        && self
                            .text
                            .get(start..self.i - 1)
                            .is_some_and(|t| t.bytes().all(|b| b.is_ascii_digit() || b == b'.'));
                    if c.is_ascii_alphanumeric() || c == b'.' || c == b'_' || exp_sign {
                        self.i += 1;
                    } else {
                        break;
                    }
                }
                let t = self.text.get(start..self.i).unwrap_or("");
                parse(t)
                    .map(|n| n.value)
                    .ok_or_else(|| format!("`{t}` is not a number"))
            }
            Some(c) if c.is_ascii_alphabetic() || c == b'_' => {
                let start = self.i;
                while self
                    .s
                    .get(self.i)
                    .is_some_and(|c| c.is_ascii_alphanumeric() || *c == b'_')
                {
                    self.i += 1;
                }
                let name = self.text.get(start..self.i).unwrap_or("");
                if self.peek() == Some(b'(') {
                    return Err(format!(
                        "`{name}(…)`: functions are not evaluated, only + - * / and parameters"
                    ));
                }
                self.scope
                    .get(&name.to_ascii_lowercase())
                    .copied()
                    .ok_or_else(|| format!("no parameter `{name}` is defined here"))
            }
            Some(c) => Err(format!("`{}` is not part of an expression", c as char)),
            None => Err("the expression ends too early".into()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn v(t: &str) -> f64 {
        parse(t).map_or(f64::NAN, |n| n.value)
    }

    /// The scale letters of SPICE (ngspice manual, "Conventions"): any
    /// case, `m` milli, `meg` mega, `mil` a thousandth of an inch;
    /// trailing letters are ignored.
    #[test]
    fn spice_suffixes() {
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs().max(1e-30);
        assert!(close(v("10k"), 1e4));
        assert!(close(v("4.7uF"), 4.7e-6));
        assert!(close(v("1meg"), 1e6));
        assert!(close(v("1MEG"), 1e6));
        assert!(close(v("1M"), 1e-3));
        assert!(close(v("2mil"), 50.8e-6));
        assert!(close(v("100p"), 1e-10));
        assert!(close(v("3n"), 3e-9));
        assert!(close(v("1f"), 1e-15));
        assert!(close(v("2G"), 2e9));
        assert!(close(v("1T"), 1e12));
        assert!(close(v("12V"), 12.0));
        assert!(close(v("4.7kohm"), 4.7e3));
        assert!(close(v("1e3"), 1e3));
        assert!(close(v("1.5e-3"), 1.5e-3));
        assert!(close(v("-5"), -5.0));
        assert!(close(v(".5"), 0.5));
        assert!(parse("1M").is_some_and(|n| n.upper_m));
        assert!(parse("1m").is_some_and(|n| !n.upper_m));
        assert!(parse("1Meg").is_some_and(|n| !n.upper_m));
        assert!(parse("abc").is_none());
        assert!(parse("").is_none());
        assert!(parse("1e999").is_none());
    }

    #[test]
    fn expressions() {
        let mut s = Scope::new();
        s.insert("r".into(), 1e3);
        assert_eq!(eval("2*R", &s), Ok(2e3));
        assert_eq!(eval("(1k + 1k) / 2", &s), Ok(1e3));
        assert_eq!(eval("-r + 1e3", &s), Ok(0.0));
        assert_eq!(eval("1e-3*2", &s), Ok(2e-3));
        assert_eq!(eval("2.5e+2", &s), Ok(250.0));
        assert!(eval("1/0", &s).is_err());
        assert!(eval("x", &s).is_err());
        assert!(eval("(1", &s).is_err());
        assert!(eval("sqrt(2)", &s).is_err());
        assert!(eval(&"(".repeat(10_000), &s).is_err());
        assert!(eval(&"-".repeat(10_000), &s).is_err());
    }
}
