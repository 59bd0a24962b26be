//! The option line `# [unit] [parameter] [format] [R n]` (Touchstone 1.1, section "Option Line"; Touchstone
//! 2.0, section "Option Line"; section numbers from memory).
//!
//! Tokens may come in any order and in any letter case; each may be omitted (defaults GHz, S, MA, R 50);
//! the number must follow `R` directly. A bare `#` is legal.

use super::{Format, FreqUnit, Parameter};
use crate::limits::REFERENCE_RANGE_OHM;
use nom::bytes::complete::{tag, take_while1};
use nom::character::complete::space0;
use nom::combinator::{all_consuming, map};
use nom::multi::many0;
use nom::sequence::preceded;
use nom::{IResult, Parser};

/// What a reference resistance must be: positive and within coldtrace's limit.
pub(crate) fn reference_expected() -> String {
    format!(
        "a positive reference resistance from {:e} to {:e} ohm (coldtrace's limit, docs/limits.md)",
        REFERENCE_RANGE_OHM.0, REFERENCE_RANGE_OHM.1
    )
}

/// Default reference resistance when the option line gives none, ohm (Touchstone 1.1, "Option Line").
pub const DEFAULT_REFERENCE_OHM: f64 = 50.0;

/// What an option line said. Fields the line omitted are `None`.
#[derive(Debug, Clone, PartialEq, Default)]
pub(crate) struct OptionLine {
    pub unit: Option<FreqUnit>,
    pub parameter: Option<Parameter>,
    pub format: Option<Format>,
    /// The numbers after `R`: one (the usual case) or one per port (a version 1 deviation).
    pub reference: Vec<f64>,
}

/// A problem on the option line: 0-based byte offset in the line, found text, expected text.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct OptionError {
    pub offset: usize,
    pub found: String,
    pub expected: String,
}

/// One raw token of the option line with its offset from the start of the text handed to nom.
fn token(input: &str) -> IResult<&str, &str> {
    preceded(space0, take_while1(|c: char| c != ' ' && c != '\t')).parse(input)
}

/// `#` followed by tokens, nothing else (comments are stripped before).
fn option_tokens(input: &str) -> IResult<&str, Vec<&str>> {
    all_consuming(map(
        (space0, tag("#"), many0(token), space0),
        |(_, _, toks, _)| toks,
    ))
    .parse(input)
}

const EXPECTED_TOKEN: &str = "a unit (Hz, kHz, MHz, GHz), a parameter (S, Y, Z, H, G), a format (DB, MA, RI) or R followed by a resistance";

/// Parse a comment-free option line (starting with optional spaces then `#`).
pub(crate) fn parse_option_line(line: &str) -> Result<OptionLine, OptionError> {
    let (_, toks) = option_tokens(line).map_err(|_| OptionError {
        offset: 0,
        found: line.trim().to_string(),
        expected: "an option line starting with '#'".into(),
    })?;
    let base = line.as_ptr() as usize;
    let offset_of = |t: &str| t.as_ptr() as usize - base;
    let mut out = OptionLine::default();
    let mut i = 0;
    while i < toks.len() {
        let t = toks[i];
        let lower = t.to_ascii_lowercase();
        let dup = |what: &str| OptionError {
            offset: offset_of(t),
            found: t.to_string(),
            expected: format!("at most one {what} on the option line"),
        };
        match lower.as_str() {
            "hz" | "khz" | "mhz" | "ghz" => {
                if out.unit.is_some() {
                    return Err(dup("frequency unit"));
                }
                out.unit = Some(match lower.as_str() {
                    "hz" => FreqUnit::Hz,
                    "khz" => FreqUnit::KHz,
                    "mhz" => FreqUnit::MHz,
                    _ => FreqUnit::GHz,
                });
            }
            "s" | "y" | "z" | "h" | "g" => {
                if out.parameter.is_some() {
                    return Err(dup("parameter"));
                }
                out.parameter = Some(match lower.as_str() {
                    "s" => Parameter::S,
                    "y" => Parameter::Y,
                    "z" => Parameter::Z,
                    "h" => Parameter::H,
                    _ => Parameter::G,
                });
            }
            "db" | "ma" | "ri" => {
                if out.format.is_some() {
                    return Err(dup("format"));
                }
                out.format = Some(match lower.as_str() {
                    "db" => Format::DB,
                    "ma" => Format::MA,
                    _ => Format::RI,
                });
            }
            "r" => {
                if !out.reference.is_empty() {
                    return Err(dup("R"));
                }
                i += 1;
                while i < toks.len() {
                    match super::lexer::parse_number(toks[i]) {
                        Some(v) => {
                            if !(REFERENCE_RANGE_OHM.0..=REFERENCE_RANGE_OHM.1).contains(&v) {
                                return Err(OptionError {
                                    offset: offset_of(toks[i]),
                                    found: toks[i].to_string(),
                                    expected: reference_expected(),
                                });
                            }
                            out.reference.push(v);
                            i += 1;
                        }
                        None => break,
                    }
                }
                if out.reference.is_empty() {
                    let (offset, found) = match toks.get(i) {
                        Some(t) => (offset_of(t), t.to_string()),
                        None => (offset_of(t) + 1, "end of line".to_string()),
                    };
                    return Err(OptionError {
                        offset,
                        found,
                        expected: "a reference resistance in ohm after R (e.g. 'R 50')".into(),
                    });
                }
                continue;
            }
            _ => {
                return Err(OptionError {
                    offset: offset_of(t),
                    found: t.to_string(),
                    expected: EXPECTED_TOKEN.into(),
                })
            }
        }
        i += 1;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Touchstone 1.1, "Option Line" (section number from memory): any order, any case, each field optional.
    #[test]
    fn any_order_any_case() {
        let o = parse_option_line("# ri r 75 mhz y").unwrap();
        assert_eq!(o.unit, Some(FreqUnit::MHz));
        assert_eq!(o.parameter, Some(Parameter::Y));
        assert_eq!(o.format, Some(Format::RI));
        assert_eq!(o.reference, vec![75.0]);
        assert_eq!(parse_option_line("#").unwrap(), OptionLine::default());
        assert_eq!(
            parse_option_line("  #\tGHz ").unwrap().unit,
            Some(FreqUnit::GHz)
        );
    }

    #[test]
    fn rejects_bad_tokens_with_offsets() {
        let e = parse_option_line("# GHz S XX").unwrap_err();
        assert_eq!((e.offset, e.found.as_str()), (8, "XX"));
        let e = parse_option_line("# GHz S RI R").unwrap_err();
        assert!(e.expected.contains("after R"), "{e:?}");
        let e = parse_option_line("# GHz MHz").unwrap_err();
        assert_eq!(e.found, "MHz");
        assert!(parse_option_line("# R -5").is_err());
    }

    #[test]
    fn per_port_references() {
        assert_eq!(
            parse_option_line("# GHz S RI R 50 75").unwrap().reference,
            vec![50.0, 75.0]
        );
    }
}
