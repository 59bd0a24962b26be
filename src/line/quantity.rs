//! Quantities written with their unit in a line file: `length_m = "30 cm"`, `k4 = "4 K"`,
//! `loss_db = "20 dB"`, `impedance_ohm = "50 ohm"`, `loss_db_per_m_1ghz = "0.9 dB/m"`.
//!
//! A key's name states its unit (`_m` metres, `_ohm` ohms, `_db` decibels, `_db_per_m_1ghz` dB per metre,
//! a stage under `[stages]` kelvin); a bare number is read in that unit. A quoted string is read by the
//! same parser the command-line flags use ([`crate::units`]) in the key's family, and returned in the SI
//! unit the key names. A quantity of another family (a resistance given to a length) is refused naming
//! the family it is, the unit the key takes and the fix. Keys without a unit (`velocity_factor`,
//! `loss_tangent`) take a plain number only.

use crate::limits::clip;
use crate::units::{self, Family};

/// What a line-file key holds, read from its name.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum KeyUnit {
    /// A quantity of one unit family in SI units (`_m` lengths, `_ohm` resistances, stage kelvin).
    Si(Family),
    /// A level in dB (`_db`).
    Decibel,
    /// A loss in dB per metre (`_db_per_m_1ghz`).
    DecibelPerMetre,
    /// A plain number with no unit (`velocity_factor`, `loss_tangent`).
    Plain,
}

impl KeyUnit {
    /// The unit a key takes, from its full name (`stages.k4`, `length_m`, `cables.x.impedance_ohm`).
    pub fn of_key(key: &str) -> KeyUnit {
        let last = key.rsplit('.').next().unwrap_or(key);
        if key.starts_with("stages.") {
            KeyUnit::Si(Family::Temperature)
        } else if last.ends_with("_db_per_m_1ghz") {
            KeyUnit::DecibelPerMetre
        } else if last.ends_with("_db") {
            KeyUnit::Decibel
        } else if last.ends_with("_m") {
            KeyUnit::Si(Family::Length)
        } else if last.ends_with("_ohm") {
            KeyUnit::Si(Family::Resistance)
        } else {
            KeyUnit::Plain
        }
    }

    /// What the key takes and two ways to write it, for messages: `(description, bare, quoted)`.
    fn forms(self) -> (&'static str, &'static str, &'static str) {
        match self {
            KeyUnit::Si(Family::Length) => ("a length in m", "0.3", "\"30 cm\""),
            KeyUnit::Si(Family::Resistance) => ("a resistance in ohm", "50.0", "\"50 ohm\""),
            KeyUnit::Si(Family::Temperature) => ("a temperature in K", "3.5", "\"3.5 K\""),
            KeyUnit::Si(_) => ("a quantity in SI units", "1.0", "\"1.0\""),
            KeyUnit::Decibel => ("a level in dB", "20.0", "\"20 dB\""),
            KeyUnit::DecibelPerMetre => ("a loss in dB/m", "0.9", "\"0.9 dB/m\""),
            KeyUnit::Plain => ("a plain number without unit", "0.7", "0.7"),
        }
    }
}

/// Read the quoted quantity `text` given to `key` into the unit the key names. The error is the message
/// for the user, without the file position: what `text` is, what the key takes, and the fix.
pub fn read(key: &str, text: &str) -> Result<f64, String> {
    let unit = KeyUnit::of_key(key);
    let last = key.rsplit('.').next().unwrap_or(key);
    let (takes, bare, quoted) = unit.forms();
    let fix = if unit == KeyUnit::Plain {
        format!("write {last} = {bare}, without quotes")
    } else {
        format!("write {last} = {bare} or {last} = {quoted}")
    };
    let parsed = match unit {
        KeyUnit::Si(family) => units::parse(text, family).map_err(|e| e.reason),
        KeyUnit::Decibel => units::parse_db(text).map_err(|e| e.reason),
        KeyUnit::DecibelPerMetre => {
            let t = text.trim();
            let cut = t.len().saturating_sub(2);
            match t.get(cut..) {
                Some(per) if per.eq_ignore_ascii_case("/m") => {
                    units::parse_db(&t[..cut]).map_err(|e| e.reason)
                }
                _ => t
                    .parse::<f64>()
                    .map_err(|_| "a loss per metre is written with 'dB/m'".to_string()),
            }
        }
        KeyUnit::Plain => Err("this key has no unit".to_string()),
    };
    match parsed {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(format!(
            "'{}' is not a finite number; {key} takes {takes}: {fix}",
            clip(text)
        )),
        Err(reason) => {
            let is = what_it_is(text)
                .map(|w| format!("'{}' is {w}, but {key} takes {takes}", clip(text)))
                .unwrap_or_else(|| {
                    format!(
                        "cannot read '{}' ({reason}); {key} takes {takes}",
                        clip(text)
                    )
                });
            Err(format!("{is}: {fix}"))
        }
    }
}

/// Which kind of quantity `text` reads as, when it reads as one ("a resistance", "a level in dB").
fn what_it_is(text: &str) -> Option<&'static str> {
    let t = text.trim();
    if t.parse::<f64>().is_ok() {
        return None;
    }
    if let Some(f) = Family::ALL
        .into_iter()
        .find(|&f| units::parse(t, f).is_ok())
    {
        return Some(f.describe());
    }
    units::parse_db(t).is_ok().then_some("a level in dB")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_name_their_unit() {
        assert_eq!(KeyUnit::of_key("length_m"), KeyUnit::Si(Family::Length));
        assert_eq!(
            KeyUnit::of_key("stages.k4"),
            KeyUnit::Si(Family::Temperature)
        );
        assert_eq!(KeyUnit::of_key("loss_db"), KeyUnit::Decibel);
        assert_eq!(
            KeyUnit::of_key("loss_db_per_m_1ghz"),
            KeyUnit::DecibelPerMetre
        );
        assert_eq!(
            KeyUnit::of_key("impedance_ohm"),
            KeyUnit::Si(Family::Resistance)
        );
        assert_eq!(KeyUnit::of_key("velocity_factor"), KeyUnit::Plain);
    }

    #[test]
    fn quantities_in_si() {
        assert!((read("length_m", "30 cm").unwrap() - 0.3).abs() < 1e-15);
        assert_eq!(read("stages.k4", "4 K").unwrap(), 4.0);
        assert!((read("stages.mxc", "15 mK").unwrap() - 0.015).abs() < 1e-15);
        assert_eq!(read("loss_db", "20 dB").unwrap(), 20.0);
        assert_eq!(read("impedance_ohm", "50 ohm").unwrap(), 50.0);
        assert_eq!(read("loss_db_per_m_1ghz", "0.9 dB/m").unwrap(), 0.9);
    }

    #[test]
    fn another_family_is_named_with_the_fix() {
        let e = read("length_m", "50 ohm").unwrap_err();
        assert!(
            e.contains("'50 ohm' is a resistance, but length_m takes a length in m"),
            "{e}"
        );
        assert!(
            e.contains("write length_m = 0.3 or length_m = \"30 cm\""),
            "{e}"
        );
        let e = read("stages.k4", "4 m").unwrap_err();
        assert!(
            e.contains("is a length") && e.contains("a temperature in K"),
            "{e}"
        );
        let e = read("velocity_factor", "0.7").unwrap_err();
        assert!(e.contains("without quotes"), "{e}");
        let e = read("length_m", "30 furlongs").unwrap_err();
        assert!(e.contains("unknown unit 'furlongs'"), "{e}");
    }
}
