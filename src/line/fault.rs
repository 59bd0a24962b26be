//! Fault specifications (`J2:gap=30fF`, `J2:gap=20fF,contact=50ohm`, `room to 50K@0.12m:crush=40ohm,8mm`)
//! and their lumped models.
//!
//! Conventions: SI units after parsing (F, ohm, H, m); positions are as-built offsets inside the target
//! element; a fault at a connector sits at the connector's centre. Lumped parts between matched lines
//! reflect series Z as Z / (2 Z0 + Z) and shunt Y as -Y Z0 / (2 + Y Z0) (circuit theory); a gap bridged by a
//! poor contact is the series Z = R / (1 + j omega R C) of R in parallel with C.

use super::chain::{ElementKind, Line};
use super::materials::EPS0;
use super::LineError;
use crate::units::{self, Family};
use serde::Serialize;
use std::f64::consts::PI;

/// The fault grammar, shown with every fault error.
pub const GRAMMAR: &str = "TARGET:KIND where TARGET is a connector name (J2) or ELEMENT@OFFSET \
(\"room to 50K@0.12m\") and KIND is gap=30fF | gap=40um | gap=20fF,contact=50ohm | contact=2ohm | \
inductance=0.5nH | crush=40ohm,8mm | step=60ohm | open | short | shunt=50fF";

/// Where a fault is.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "at", rename_all = "lowercase")]
pub enum FaultTarget {
    /// At the centre of a named connector (or any named element without an offset).
    Connector { name: String },
    /// At an as-built offset inside a named element.
    Offset { element: String, offset_m: f64 },
}

/// What a fault is.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "type", rename_all = "lowercase")]
pub enum FaultKind {
    /// Series capacitance (an axial gap between centre-conductor ends), F.
    Gap { farad: f64 },
    /// Series resistance (a poor contact), ohm.
    Contact { ohm: f64 },
    /// A pin gap bridged by a partial contact: series capacitance `farad` in parallel with a series
    /// resistance `ohm`, Z = R / (1 + j omega R C).
    #[serde(rename = "partial-gap")]
    PartialGap { farad: f64, ohm: f64 },
    /// Series inductance, H.
    Inductance { henry: f64 },
    /// A short section of another impedance (a crushed or dented cable), ohm and m.
    Crush { ohm: f64, length_m: f64 },
    /// The impedance changes to `ohm` from here to the end of the element.
    Step { ohm: f64 },
    /// The line is open here.
    Open,
    /// The line is shorted here.
    Short,
    /// Shunt capacitance, F.
    Shunt { farad: f64 },
}

/// A parsed fault.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Fault {
    /// The specification as the user wrote it.
    pub spec: String,
    pub target: FaultTarget,
    pub kind: FaultKind,
    /// For `gap=LENGTH`: the gap length the capacitance was derived from, m.
    pub gap_length_m: Option<f64>,
}

fn err(spec: &str, message: impl Into<String>) -> LineError {
    LineError::Fault {
        spec: crate::limits::clip(spec).into_owned(),
        message: message.into(),
    }
}

/// Axial gap capacitance between two coaxial disc ends of radius `a` separated by `g`, in a medium of
/// relative permittivity `er`: parallel plate plus Kirchhoff's fringing term,
/// C = eps0 er [pi a^2 / g + a (ln(16 pi a / g) - 1)] (G. Kirchhoff 1877, from memory, as given in standard
/// capacitance compilations; within a few percent of a full field solution for g < 0.4 a).
pub fn gap_capacitance(a: f64, g: f64, er: f64) -> f64 {
    EPS0 * er * (PI * a * a / g + a * ((16.0 * PI * a / g).ln() - 1.0))
}

impl Fault {
    /// Parse a specification; `gap=LENGTH` is converted later by [`Fault::resolve`] once the pin is known.
    pub fn parse(spec: &str) -> Result<Fault, LineError> {
        let (target, kind) = spec
            .rsplit_once(':')
            .ok_or_else(|| err(spec, "missing ':' between the target and the fault kind"))?;
        let target = target.trim();
        if target.is_empty() {
            return Err(err(spec, "missing target before ':'"));
        }
        let target = match target.rsplit_once('@') {
            Some((el, off)) => {
                let offset_m = units::parse(off.trim(), Family::Length)
                    .map_err(|e| err(spec, format!("offset: {e}")))?;
                if offset_m < 0.0 {
                    return Err(err(spec, "the offset must be >= 0"));
                }
                FaultTarget::Offset {
                    element: el.trim().to_string(),
                    offset_m,
                }
            }
            None => FaultTarget::Connector {
                name: target.to_string(),
            },
        };
        let kind = kind.trim();
        let (word, value) = match kind.split_once('=') {
            Some((w, v)) => (w.trim().to_ascii_lowercase(), Some(v.trim())),
            None => (kind.to_ascii_lowercase(), None),
        };
        let shown = crate::limits::clip(&word);
        let need = |v: Option<&str>| -> Result<String, LineError> {
            v.map(str::to_string)
                .ok_or_else(|| err(spec, format!("'{shown}' needs a value, e.g. {shown}=...")))
        };
        let positive = |x: f64, what: &str| -> Result<f64, LineError> {
            if x > 0.0 && x.is_finite() {
                Ok(x)
            } else {
                Err(err(spec, format!("{what} must be positive")))
            }
        };
        let mut gap_length_m = None;
        let kind = match word.as_str() {
            "gap" => {
                let v = need(value)?;
                // `gap=20fF,contact=50ohm`: the gap bridged by a partial contact.
                let (v, contact) = match v.split_once(',') {
                    Some((g, rest)) => {
                        let rest = rest.trim();
                        let r = match rest.split_once('=') {
                            Some((w, r)) if w.trim().eq_ignore_ascii_case("contact") => r.trim(),
                            _ => {
                                return Err(err(
                                    spec,
                                    "a gap takes at most a bridging contact after the comma: \
                                     gap=20fF,contact=50ohm",
                                ))
                            }
                        };
                        let ohm = positive(
                            units::parse(r, Family::Resistance)
                                .map_err(|e| err(spec, format!("contact: {e}")))?,
                            "the contact resistance",
                        )?;
                        (g.trim().to_string(), Some(ohm))
                    }
                    None => (v, None),
                };
                if !v.chars().any(|c| c.is_alphabetic()) {
                    return Err(err(
                        spec,
                        "gap needs a unit: a capacitance (30fF) or a length (40um)",
                    ));
                }
                let farad = match units::parse(&v, Family::Capacitance) {
                    Ok(c) => positive(c, "the gap capacitance")?,
                    Err(ec) => match units::parse(&v, Family::Length) {
                        Ok(g) => {
                            gap_length_m = Some(positive(g, "the gap length")?);
                            f64::NAN
                        }
                        _ => {
                            return Err(err(
                                spec,
                                format!("gap takes a capacitance (30fF) or a length (40um): {ec}"),
                            ))
                        }
                    },
                };
                match contact {
                    Some(ohm) => FaultKind::PartialGap { farad, ohm },
                    None => FaultKind::Gap { farad },
                }
            }
            "contact" => FaultKind::Contact {
                ohm: positive(
                    units::parse(&need(value)?, Family::Resistance)
                        .map_err(|e| err(spec, e.to_string()))?,
                    "the contact resistance",
                )?,
            },
            "inductance" => FaultKind::Inductance {
                henry: positive(
                    units::parse(&need(value)?, Family::Inductance)
                        .map_err(|e| err(spec, e.to_string()))?,
                    "the inductance",
                )?,
            },
            "shunt" => FaultKind::Shunt {
                farad: positive(
                    units::parse(&need(value)?, Family::Capacitance)
                        .map_err(|e| err(spec, e.to_string()))?,
                    "the shunt capacitance",
                )?,
            },
            "step" => FaultKind::Step {
                ohm: positive(
                    units::parse(&need(value)?, Family::Resistance)
                        .map_err(|e| err(spec, e.to_string()))?,
                    "the impedance",
                )?,
            },
            "crush" => {
                let v = need(value)?;
                let (z, l) = v.split_once(',').ok_or_else(|| {
                    err(
                        spec,
                        "crush takes an impedance and a length: crush=40ohm,8mm",
                    )
                })?;
                FaultKind::Crush {
                    ohm: positive(
                        units::parse(z.trim(), Family::Resistance)
                            .map_err(|e| err(spec, e.to_string()))?,
                        "the impedance",
                    )?,
                    length_m: positive(
                        units::parse(l.trim(), Family::Length)
                            .map_err(|e| err(spec, e.to_string()))?,
                        "the length",
                    )?,
                }
            }
            "open" | "short" if value.is_some() => {
                return Err(err(spec, format!("'{shown}' takes no value")))
            }
            "open" => FaultKind::Open,
            "short" => FaultKind::Short,
            other => {
                return Err(err(
                    spec,
                    format!("unknown fault kind '{}'", crate::limits::clip(other)),
                ))
            }
        };
        Ok(Fault {
            spec: spec.to_string(),
            target,
            kind,
            gap_length_m,
        })
    }

    /// Place the fault on `line`: the element index and as-built offset inside it; converts a gap length
    /// to capacitance with the element's pin radius and dielectric.
    pub fn resolve(&mut self, line: &Line) -> Result<(usize, f64), LineError> {
        let names = || {
            line.visible()
                .iter()
                .map(|e| e.name.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        };
        let (name, offset) = match &self.target {
            FaultTarget::Connector { name } => (name.clone(), None),
            FaultTarget::Offset { element, offset_m } => (element.clone(), Some(*offset_m)),
        };
        let shown = crate::limits::clip(&name);
        let (idx, e) = line.element(&name).ok_or_else(|| {
            err(
                &self.spec,
                format!("no element named '{shown}'; the line has: {}", names()),
            )
        })?;
        if line.first_device().is_some_and(|d| idx > d) {
            return Err(err(
                &self.spec,
                format!("'{shown}' lies beyond the device that ends what reflection can see"),
            ));
        }
        let offset = match offset {
            Some(o) if o > e.length_m + 1e-12 => {
                return Err(err(
                    &self.spec,
                    format!(
                        "offset {} m is past the end of '{shown}' ({} m long)",
                        crate::limits::short_number(o),
                        e.length_m
                    ),
                ))
            }
            Some(o) => o,
            None => match e.kind {
                ElementKind::Cable { .. } => {
                    return Err(err(
                        &self.spec,
                        format!("'{shown}' is a cable: give an offset, e.g. '{shown}@0.1m:...'"),
                    ))
                }
                _ => 0.5 * e.length_m,
            },
        };
        if let Some(g) = self.gap_length_m {
            let (a, er) =
                match &e.kind {
                    ElementKind::Connector {
                        pin_radius_m,
                        section,
                    } => (*pin_radius_m, section.er),
                    ElementKind::Cable { cable } => (cable.inner_radius_m, cable.er),
                    _ => return Err(err(
                        &self.spec,
                        "a gap given as a length needs a connector or cable (for the pin radius); \
                         give a capacitance instead",
                    )),
                };
            let farad = gap_capacitance(a, g, er);
            self.kind = match self.kind {
                FaultKind::PartialGap { ohm, .. } => FaultKind::PartialGap { farad, ohm },
                _ => FaultKind::Gap { farad },
            };
        }
        Ok((idx, offset))
    }
}
