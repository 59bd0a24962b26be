//! Quantities written by people on the command line and in line files: `0.5GHz`, `1mm`, `0m..3m`, `30fF`.
//!
//! Every parser returns SI base units (Hz, m, s, ohm, F, H, K). A bare number takes the family's base unit.
//! SI prefixes: f p n u (or µ) m c k M G T; unit symbols are case-insensitive except that `M` (mega) and
//! `m` (milli) are told apart by case when a prefix is followed by a unit symbol.
//!
//! On the command line a frequency, length or time must carry its unit (`parse_flag`, `parse_flag_range`):
//! `--at 6` is refused with the fix `write 6GHz`, since a bare number read as Hz is almost never what was
//! meant. Line files take the bare number in the unit their key names, or a quoted quantity with its unit
//! read by `parse` (`line::quantity`, docs/line-file.md). Levels in dB
//! (`parse_db`) take `6` or `6dB`.

use thiserror::Error;

/// A quantity that could not be understood.
#[derive(Debug, Error, PartialEq)]
#[error("cannot read {what} from '{text}': {reason}; write it like {example}")]
pub struct UnitError {
    pub what: &'static str,
    pub text: String,
    pub reason: String,
    pub example: &'static str,
}

/// A family of units sharing one SI base unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Family {
    Frequency,
    Length,
    Time,
    Resistance,
    Capacitance,
    Inductance,
    /// Kelvin (`4K`, `15mK`); used by line files' stage temperatures.
    Temperature,
}

impl Family {
    fn symbols(self) -> &'static [&'static str] {
        match self {
            Family::Frequency => &["hz"],
            Family::Length => &["m"],
            Family::Time => &["s"],
            Family::Resistance => &["ohm", "ohms", "Ω"],
            Family::Capacitance => &["f"],
            Family::Inductance => &["h"],
            Family::Temperature => &["k"],
        }
    }

    fn what(self) -> &'static str {
        match self {
            Family::Frequency => "a frequency",
            Family::Length => "a length",
            Family::Time => "a time",
            Family::Resistance => "a resistance",
            Family::Capacitance => "a capacitance",
            Family::Inductance => "an inductance",
            Family::Temperature => "a temperature",
        }
    }

    fn example(self) -> &'static str {
        match self {
            Family::Frequency => "'0.5GHz', '500MHz' or '5e8' (Hz)",
            Family::Length => "'1mm', '0.3m', '30cm' or '0.3' (m)",
            Family::Time => "'2ns', '150ps' or '2e-9' (s)",
            Family::Resistance => "'2ohm', '50' or '1.5kohm'",
            Family::Capacitance => "'30fF', '0.2pF' or '3e-14' (F)",
            Family::Inductance => "'0.5nH', '200pH' or '5e-10' (H)",
            Family::Temperature => "'4K', '15mK' or '4' (K)",
        }
    }
}

fn prefix_factor(p: &str) -> Option<f64> {
    Some(match p {
        "" => 1.0,
        "f" => 1e-15,
        "p" => 1e-12,
        "n" => 1e-9,
        "u" | "µ" | "μ" => 1e-6,
        "m" => 1e-3,
        "c" => 1e-2,
        "k" | "K" => 1e3,
        "M" => 1e6,
        "G" | "g" => 1e9,
        "T" | "t" => 1e12,
        _ => return None,
    })
}

/// Parse one quantity of `family` into SI base units.
pub fn parse(text: &str, family: Family) -> Result<f64, UnitError> {
    let err = |reason: String| UnitError {
        what: family.what(),
        text: crate::limits::clip(text).into_owned(),
        reason,
        example: family.example(),
    };
    let t = text.trim();
    let split = t
        .char_indices()
        .find(|&(i, c)| {
            !(c.is_ascii_digit()
                || c == '.'
                || c == '+'
                || c == '-'
                || ((c == 'e' || c == 'E')
                    && t[i + 1..]
                        .chars()
                        .next()
                        .is_some_and(|d| d.is_ascii_digit() || d == '-' || d == '+')))
        })
        .map(|(i, _)| i)
        .unwrap_or(t.len());
    let (num, suffix) = t.split_at(split);
    let value: f64 = num
        .parse()
        .map_err(|_| err(format!("'{}' is not a number", crate::limits::clip(num))))?;
    if !value.is_finite() {
        return Err(err("the number is not finite".into()));
    }
    let suffix = suffix.trim();
    if suffix.is_empty() {
        return Ok(value);
    }
    let lower = suffix.to_lowercase();
    for sym in family.symbols() {
        if lower.ends_with(sym) {
            let prefix = &suffix[..suffix.len() - sym.len()];
            // Frequencies are commonly written GHZ/MHZ/KHZ in any case: accept those prefixes case-blind.
            let prefix = if family == Family::Frequency {
                match prefix.to_lowercase().as_str() {
                    "m" => "M",
                    "g" => "G",
                    "k" => "k",
                    "t" => "T",
                    "" => "",
                    _ => prefix,
                }
            } else {
                prefix
            };
            let factor = prefix_factor(prefix)
                .ok_or_else(|| err(format!("unknown prefix '{}'", crate::limits::clip(prefix))))?;
            let si = value * factor;
            if !si.is_finite() {
                return Err(err(format!(
                    "{} {} overflows a 64-bit float in SI units",
                    crate::limits::short_number(value),
                    crate::limits::clip(suffix)
                )));
            }
            return Ok(si);
        }
    }
    Err(err(format!(
        "unknown unit '{}'",
        crate::limits::clip(suffix)
    )))
}

impl Family {
    /// Every family, for telling a user which one a quantity they wrote belongs to.
    pub const ALL: [Family; 7] = [
        Family::Frequency,
        Family::Length,
        Family::Time,
        Family::Resistance,
        Family::Capacitance,
        Family::Inductance,
        Family::Temperature,
    ];

    /// The family's name with its article, as messages use it: "a length".
    pub fn describe(self) -> &'static str {
        self.what()
    }

    /// Whether a bare number is refused on the command line: a frequency, a length or a time, whose base
    /// unit (Hz, m, s) is rarely the one meant.
    fn needs_unit_on_flag(self) -> bool {
        matches!(self, Family::Frequency | Family::Length | Family::Time)
    }

    /// The unit suggested in the fix for a bare number on the command line, and another example.
    fn usual_unit(self) -> (&'static str, &'static str) {
        match self {
            Family::Frequency => ("GHz", "500MHz"),
            Family::Length => ("m", "30cm"),
            Family::Time => ("ns", "150ps"),
            Family::Resistance => ("ohm", "1.5kohm"),
            Family::Capacitance => ("fF", "0.2pF"),
            Family::Inductance => ("nH", "200pH"),
            Family::Temperature => ("K", "15mK"),
        }
    }
}

/// Whether `text` is a number with no unit after it.
fn is_bare_number(text: &str) -> bool {
    text.trim().parse::<f64>().is_ok()
}

/// The refusal of a bare number given to `flag`.
fn bare_number_error(flag: &str, text: &str, family: Family) -> crate::Error {
    let t = crate::limits::clip(text.trim());
    let (unit, other) = family.usual_unit();
    crate::Error::Usage(format!(
        "{flag} {t}: {} needs its unit; write {t}{unit} (or another unit, e.g. {other})",
        family.what()
    ))
}

/// Parse the value of the command-line flag `flag` (named in the error). A frequency, length or time
/// without a unit is refused with the fix; use this only for flags whose name does not state the unit.
pub fn parse_flag(flag: &str, text: &str, family: Family) -> crate::Result<f64> {
    if family.needs_unit_on_flag() && is_bare_number(text) {
        return Err(bare_number_error(flag, text, family));
    }
    parse(text, family).map_err(|e| crate::Error::Usage(format!("{flag}: {e}")))
}

/// [`parse_range`] for the command-line flag `flag`: each end needs its unit as in [`parse_flag`].
pub fn parse_flag_range(flag: &str, text: &str, family: Family) -> crate::Result<(f64, f64)> {
    if family.needs_unit_on_flag() {
        if let Some((a, b)) = text.split_once("..") {
            if let Some(bare) = [a, b].into_iter().find(|e| is_bare_number(e)) {
                return Err(bare_number_error(flag, bare, family));
            }
        }
    }
    parse_range(text, family).map_err(|e| crate::Error::Usage(format!("{flag}: {e}")))
}

/// A level in decibels, written `6`, `6dB` or `-90 dB` (the unit in any case).
pub fn parse_db(text: &str) -> Result<f64, UnitError> {
    let err = |reason: String| UnitError {
        what: "a level in dB",
        text: crate::limits::clip(text).into_owned(),
        reason,
        example: "'6', '6dB' or '-90 dB'",
    };
    let t = text.trim();
    let cut = t.len().saturating_sub(2);
    let num = match t.get(cut..) {
        Some(unit) if unit.eq_ignore_ascii_case("db") => t[..cut].trim_end(),
        _ => t,
    };
    let value: f64 = num
        .parse()
        .map_err(|_| err(format!("'{}' is not a number", crate::limits::clip(num))))?;
    if !value.is_finite() {
        return Err(err("the number is not finite".into()));
    }
    Ok(value)
}

/// [`parse_db`] for the command-line flag `flag`, named in the error.
pub fn parse_flag_db(flag: &str, text: &str) -> crate::Result<f64> {
    parse_db(text).map_err(|e| crate::Error::Usage(format!("{flag}: {e}")))
}

/// Parse a range written `a..b` (both ends in `family`), returning `(a, b)` with `a < b`.
pub fn parse_range(text: &str, family: Family) -> Result<(f64, f64), UnitError> {
    let (a, b) = text.split_once("..").ok_or_else(|| UnitError {
        what: "a range",
        text: crate::limits::clip(text).into_owned(),
        reason: "no '..' between the two ends".into(),
        example: "'0m..3m' or '0.9m..1.1m'",
    })?;
    let (a, b) = (parse(a, family)?, parse(b, family)?);
    if a >= b {
        return Err(UnitError {
            what: "a range",
            text: crate::limits::clip(text).into_owned(),
            reason: "the first end must be below the second".into(),
            example: "'0m..3m' or '0.9m..1.1m'",
        });
    }
    Ok((a, b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn frequencies() {
        assert_eq!(parse("0.5GHz", Family::Frequency).unwrap(), 0.5e9);
        assert_eq!(parse("500 MHZ", Family::Frequency).unwrap(), 500e6);
        assert_eq!(parse("10khz", Family::Frequency).unwrap(), 1e4);
        assert_eq!(parse("5e8", Family::Frequency).unwrap(), 5e8);
        assert!(parse("5 furlongs", Family::Frequency).is_err());
    }

    #[test]
    fn overflow_and_long_text_are_refused_short() {
        // 1e300 THz is 1e312 Hz, past the largest 64-bit float (about 1.8e308).
        let e = parse("1e300THz", Family::Frequency).unwrap_err();
        assert!(e.reason.contains("overflows"), "{e}");
        let long = format!("{}GHz", "9".repeat(100_000));
        let e = parse(&long, Family::Frequency).unwrap_err();
        assert!(e.to_string().len() < 400, "{} bytes", e.to_string().len());
    }

    #[test]
    fn lengths_and_parts() {
        assert!((parse("1mm", Family::Length).unwrap() - 1e-3).abs() < 1e-15);
        assert!((parse("30cm", Family::Length).unwrap() - 0.3).abs() < 1e-15);
        assert!((parse("30fF", Family::Capacitance).unwrap() - 30e-15).abs() < 1e-27);
        assert_eq!(parse("2ohm", Family::Resistance).unwrap(), 2.0);
        assert_eq!(parse("1.5kohm", Family::Resistance).unwrap(), 1500.0);
        assert!((parse("0.5nH", Family::Inductance).unwrap() - 0.5e-9).abs() < 1e-21);
        assert!((parse("1.2e-3m", Family::Length).unwrap() - 1.2e-3).abs() < 1e-15);
        assert_eq!(parse("4 K", Family::Temperature).unwrap(), 4.0);
        assert!((parse("15mK", Family::Temperature).unwrap() - 0.015).abs() < 1e-15);
        assert!(parse("4 K", Family::Length).is_err());
    }

    #[test]
    fn flags_need_units_for_frequency_length_and_time() {
        let e = parse_flag("--at", "6", Family::Frequency).unwrap_err();
        assert!(e.to_string().contains("write 6GHz"), "{e}");
        assert_eq!(parse_flag("--at", "6GHz", Family::Frequency).unwrap(), 6e9);
        let e = parse_flag_range("--span", "0..3m", Family::Length).unwrap_err();
        assert!(e.to_string().contains("write 0m"), "{e}");
        assert_eq!(
            parse_flag_range("--span", "0m..3m", Family::Length).unwrap(),
            (0.0, 3.0)
        );
        // A resistance's bare number is ohms, as everyone writes it.
        assert_eq!(parse_flag("--r", "50", Family::Resistance).unwrap(), 50.0);
    }

    #[test]
    fn decibels_with_or_without_the_unit() {
        assert_eq!(parse_db("6").unwrap(), 6.0);
        assert_eq!(parse_db("6dB").unwrap(), 6.0);
        assert_eq!(parse_db("-90 DB").unwrap(), -90.0);
        assert!(parse_db("6 dBm").is_err());
        assert!(parse_db("inf").is_err());
        assert!(parse_db("dB").is_err());
    }

    #[test]
    fn ranges() {
        assert_eq!(parse_range("0m..3m", Family::Length).unwrap(), (0.0, 3.0));
        assert!(parse_range("3m..1m", Family::Length).is_err());
        assert!(parse_range("3m", Family::Length).is_err());
    }
}
