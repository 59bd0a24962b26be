//! Built-in cable kinds: generic cryogenic coax constructions under our own names.
//!
//! Geometry of the 0.086-in class: inner radius a = 0.2555 mm, outer (dielectric) radius b = 0.838 mm;
//! 0.141-in class: a = 0.4555 mm, b = 1.49 mm (from memory of common semi-rigid dimensions). PTFE
//! permittivity 2.03 (room temperature; PTFE spans 2.02-2.10, from memory). Conductor loss is computed from
//! the conductor materials (see [`crate::line::materials`]) unless a kind states its measured
//! `loss_db_per_m_1ghz`, which then scales the computed conductor loss.

use super::materials::Material;
use serde::Serialize;

/// A kind of coaxial cable: its cross-section and materials.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CableKind {
    pub name: String,
    /// Inner conductor radius, m (room temperature).
    pub inner_radius_m: f64,
    /// Outer conductor inner radius (= dielectric outer radius), m (room temperature).
    pub outer_radius_m: f64,
    /// Relative permittivity of the dielectric at room temperature.
    pub er: f64,
    pub dielectric: Material,
    pub inner: Material,
    pub outer: Material,
    /// Dielectric loss tangent at room temperature.
    pub loss_tangent: f64,
    /// Measured conductor loss at 1 GHz and room temperature, dB/m, if the kind states one.
    pub loss_db_per_m_1ghz: Option<f64>,
}

/// Relative permittivity used for the built-in PTFE cables (from memory; PTFE 2.02-2.10).
pub const PTFE_ER: f64 = 2.03;
/// 0.086-in class radii, m (from memory).
pub const A_086: f64 = 0.2555e-3;
pub const B_086: f64 = 0.838e-3;
/// 0.141-in class radii, m (from memory).
pub const A_141: f64 = 0.4555e-3;
pub const B_141: f64 = 1.49e-3;
/// Loss tangent of PTFE at room temperature and GHz (from memory; 1e-4 to 3e-4 is quoted).
pub const PTFE_TAN_D: f64 = 2e-4;

fn kind(
    name: &str,
    a: f64,
    b: f64,
    inner: Material,
    outer: Material,
    loss: Option<f64>,
) -> CableKind {
    CableKind {
        name: name.to_string(),
        inner_radius_m: a,
        outer_radius_m: b,
        er: PTFE_ER,
        dielectric: Material::Ptfe,
        inner,
        outer,
        loss_tangent: PTFE_TAN_D,
        loss_db_per_m_1ghz: loss,
    }
}

/// Names of the built-in kinds, in catalogue order.
pub const BUILT_IN: &[&str] = &[
    "cu-086",
    "cu-141",
    "ss-086",
    "cuni-086",
    "agcuni-086",
    "nbti-086",
    "cu-flex",
];

/// The built-in kind's name as listed in [`BUILT_IN`] for `name` written in any case (`SS-086` is
/// `ss-086`).
pub fn built_in_name(name: &str) -> Option<&'static str> {
    let name = name.trim();
    BUILT_IN
        .iter()
        .copied()
        .find(|k| k.eq_ignore_ascii_case(name))
}

/// A built-in cable kind by name, in any case; the kind carries the name as listed in [`BUILT_IN`].
pub fn built_in(name: &str) -> Option<CableKind> {
    use Material::*;
    let name = built_in_name(name)?;
    Some(match name {
        "cu-086" => kind(name, A_086, B_086, Copper, Copper, None),
        "cu-141" => kind(name, A_141, B_141, Copper, Copper, None),
        // Stainless inner and outer.
        "ss-086" => kind(name, A_086, B_086, Stainless304, Stainless304, None),
        "cuni-086" => kind(name, A_086, B_086, Cupronickel, Cupronickel, None),
        // Silver-plated cupronickel inner, cupronickel outer.
        "agcuni-086" => kind(
            name,
            A_086,
            B_086,
            SilverPlatedCupronickel,
            Cupronickel,
            None,
        ),
        "nbti-086" => kind(name, A_086, B_086, Nbti, Nbti, None),
        // A flexible room-temperature test cable: low-density PTFE (vf ~0.76), braided copper outer, stated
        // loss 0.6 dB/m at 1 GHz (typical of the class; common practice, no source).
        "cu-flex" => CableKind {
            name: name.to_string(),
            inner_radius_m: 0.455e-3,
            outer_radius_m: 0.455e-3 * (50.0 * 1.73f64.sqrt() / ETA0_OVER_2PI).exp(),
            er: 1.73,
            dielectric: Ptfe,
            inner: Copper,
            outer: Copper,
            loss_tangent: PTFE_TAN_D,
            loss_db_per_m_1ghz: Some(0.6),
        },
        _ => return None,
    })
}

/// eta0 / (2 pi) = mu0 c0 / (2 pi), ohm: lossless coax Z0 = (eta0 / (2 pi sqrt(er))) ln(b / a).
pub const ETA0_OVER_2PI: f64 =
    super::materials::MU0 * super::materials::C0 / (2.0 * std::f64::consts::PI);

impl CableKind {
    /// Lossless characteristic impedance from the geometry, ohm.
    pub fn impedance_ohm(&self) -> f64 {
        ETA0_OVER_2PI / self.er.sqrt() * (self.outer_radius_m / self.inner_radius_m).ln()
    }

    /// Velocity factor 1 / sqrt(er).
    pub fn velocity_factor(&self) -> f64 {
        1.0 / self.er.sqrt()
    }

    /// The same kind with its outer radius set so the lossless impedance is `z0` (inner radius kept).
    pub fn with_impedance(&self, z0: f64) -> CableKind {
        let mut k = self.clone();
        k.outer_radius_m = k.inner_radius_m * (z0 * k.er.sqrt() / ETA0_OVER_2PI).exp();
        k
    }
}
