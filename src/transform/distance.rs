//! Mapping between round-trip time and one-way distance along the line.
//!
//! Every axis of a trace or plot goes through [`DistanceMap`], so a line model with several segments (each
//! with its own velocity factor) can replace [`UniformLine`] without touching the transform.
//!
//! Conventions: time is the round-trip delay from the reference plane, in seconds; distance is one-way, in
//! metres, along the line from the same plane.

/// Speed of light in vacuum, m/s (exact by the SI definition of the metre, BIPM SI Brochure, 9th ed., 2019).
pub const C0_M_PER_S: f64 = 299_792_458.0;

/// Default velocity factor: solid PTFE dielectric, relative permittivity about 2.07, vf = 1/sqrt(2.07) = 0.695
/// (common practice, no source; vf = 1/sqrt(er) for a TEM line, Pozar, Microwave Engineering, 4th ed., ch. 2).
pub const DEFAULT_VELOCITY_FACTOR: f64 = 0.695;

/// Converts round-trip time to one-way distance and back.
pub trait DistanceMap {
    /// One-way distance (m) of an echo arriving `round_trip_s` seconds after the incident wave.
    fn distance_m(&self, round_trip_s: f64) -> f64;
    /// Round-trip time (s) of an echo from `distance_m` metres.
    fn round_trip_s(&self, distance_m: f64) -> f64;
    /// A short human description, e.g. "uniform line, vf 0.695".
    fn describe(&self) -> String;
    /// The velocity factor, when the map has a single one.
    fn velocity_factor(&self) -> Option<f64> {
        None
    }
    /// Named places along the line (connectors, attenuators, devices), for plot markers and the JSON;
    /// empty for a map that knows no line.
    fn landmarks(&self) -> Vec<Landmark> {
        Vec::new()
    }
}

/// A named place along the line: one-way as-built distance from the reference plane, m.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Landmark {
    pub name: String,
    /// What it is, e.g. "connector", "attenuator", "device".
    pub kind: String,
    pub distance_m: f64,
    /// Round-trip time of an echo from there, s.
    pub round_trip_s: f64,
}

/// A line with one velocity factor: x = c0 * vf * t / 2.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UniformLine {
    pub velocity_factor: f64,
}

impl UniformLine {
    /// A uniform line; the velocity factor must lie in (0, 1].
    pub fn new(velocity_factor: f64) -> Result<Self, super::TransformError> {
        if !(velocity_factor > 0.0 && velocity_factor <= 1.0) {
            return Err(super::TransformError::Invalid(format!(
                "velocity factor {velocity_factor} is out of range; give a value in (0, 1], e.g. 0.695 for solid PTFE"
            )));
        }
        Ok(UniformLine { velocity_factor })
    }
}

impl Default for UniformLine {
    fn default() -> Self {
        UniformLine {
            velocity_factor: DEFAULT_VELOCITY_FACTOR,
        }
    }
}

impl DistanceMap for UniformLine {
    fn distance_m(&self, round_trip_s: f64) -> f64 {
        C0_M_PER_S * self.velocity_factor * round_trip_s / 2.0
    }
    fn round_trip_s(&self, distance_m: f64) -> f64 {
        2.0 * distance_m / (C0_M_PER_S * self.velocity_factor)
    }
    fn describe(&self) -> String {
        format!("uniform line, velocity factor {}", self.velocity_factor)
    }
    fn velocity_factor(&self) -> Option<f64> {
        Some(self.velocity_factor)
    }
}
