//! Steady-state temperature profile of a cable between two stages, set by heat conduction along its
//! conductors (Fourier's law), and the split of a cable into pieces that follow it.
//!
//! Why: a line file gives a cable's two end temperatures, and the chain model interpolates linearly
//! between them. In vacuum, with no heat sink between its ends and negligible radiation, the heat current
//! Q = -A k(T) dT/dx is the same at every x, so the conductivity integral theta(T) = int_{Tc}^{T} A k dT
//! grows linearly along the cable. Metals conduct far better warm than cold (stainless 304: 15 W/(m K) at
//! 300 K, 0.27 at 4 K), so a cable spends most of its length near the warm end and falls steeply at the
//! cold end; the linear profile overstates how much of it is cold.
//!
//! Conventions: kelvin, W/(m K), metres as built; positions are fractions of the as-built length from the
//! cable's start. The PTFE's own conduction is neglected (about 2 % of a stainless 0.086-in cable's at
//! 300 K and up to ~20 % at 4 K, from the relative areas and PTFE's ~0.25 W/(m K) warm, from memory),
//! as are radiation and contact resistance at the ends.

use super::catalogue::CableKind;
use super::chain::Element;
use super::materials::Material;
use std::f64::consts::PI;

/// Lorenz number (Sommerfeld value pi^2/3 (k_B/e)^2), W ohm / K^2: the Wiedemann-Franz law k = L0 T / rho
/// for the electronic thermal conductivity of a metal (N. W. Ashcroft and N. D. Mermin, Solid State
/// Physics, 1976, ch. 1-2; computed from the exact SI k_B and e).
pub const LORENZ_W_OHM_PER_K2: f64 = 2.443_004e-8;

/// NIST cryogenic material properties fit for the thermal conductivity of 304 stainless steel, valid 1-300 K:
/// log10 k = sum_i c_i (log10 T)^i (NIST Cryogenic Technologies Group, "Material properties: 304 Stainless
/// (UNS S30400)", cryogenics.nist.gov/MPropsMAY/304Stainless; coefficients as published there). They
/// reproduce the conductivity integrals int_4^300 k dT = 3031 W/m against 3060 W/m and int_4^77 = 326 W/m
/// against 325 W/m of Ekin, Experimental Techniques for Low-Temperature Measurements, Oxford 2006,
/// appendix A2.1 (from memory; checked in tests).
pub const SS304_K_FIT: [f64; 9] = [
    -1.4087, 1.3982, 0.2543, -0.6260, 0.2334, 0.4256, -0.4658, 0.1650, -0.0199,
];

/// Wall thickness of a semi-rigid outer conductor relative to its inner radius b: the 0.086-in class has
/// b = 0.838 mm and an outside radius of 0.086 in / 2 = 1.092 mm (common practice, no source).
pub const OUTER_WALL_RATIO: f64 = 1.092 / 0.838;

/// Thermal conductivity of `m` at `t_k`, W/(m K): the NIST fit for stainless 304, the Wiedemann-Franz law
/// on the model's resistivity for the other metals (electronic part only; an approximation for alloys and
/// for superconductors below Tc, where it overstates k), 0 for dielectrics.
pub fn thermal_conductivity(m: Material, t_k: f64) -> f64 {
    let t = t_k.clamp(1.0, 300.0);
    match m {
        Material::Stainless304 => {
            let l = t.log10();
            let mut acc = 0.0;
            let mut p = 1.0;
            for c in SS304_K_FIT {
                acc += c * p;
                p *= l;
            }
            10f64.powf(acc)
        }
        Material::Ptfe | Material::Polyethylene => 0.0,
        _ => LORENZ_W_OHM_PER_K2 * t / m.resistivity(t),
    }
}

/// Thermal conductance per unit length of a cable's conductors at `t_k`, W m / K (A k summed).
pub fn conductance(kind: &CableKind, t_k: f64) -> f64 {
    let a = kind.inner_radius_m;
    let b = kind.outer_radius_m;
    let b2 = b * OUTER_WALL_RATIO;
    PI * a * a * thermal_conductivity(kind.inner, t_k)
        + PI * (b2 * b2 - b * b) * thermal_conductivity(kind.outer, t_k)
}

/// Number of temperature steps of the conductivity integral.
const INTEGRAL_STEPS: usize = 2000;

/// Temperatures at the `n + 1` equally spaced as-built positions 0, 1/n, .., 1 of a cable whose start is
/// held at `t_from` and end at `t_to`, in conduction steady state.
pub fn profile(kind: &CableKind, t_from: f64, t_to: f64, n: usize) -> Vec<f64> {
    assert!(n >= 1, "profile needs at least one piece, got {n}");
    if (t_from - t_to).abs() < 1e-12 {
        return vec![t_from; n + 1];
    }
    // theta(T) on a grid from t_from to t_to (trapezoid rule), then invert it at equal fractions.
    let m = INTEGRAL_STEPS;
    let ts: Vec<f64> = (0..=m)
        .map(|i| t_from + (t_to - t_from) * i as f64 / m as f64)
        .collect();
    let g: Vec<f64> = ts.iter().map(|&t| conductance(kind, t)).collect();
    let mut theta = vec![0.0; m + 1];
    for i in 1..=m {
        theta[i] = theta[i - 1] + 0.5 * (g[i] + g[i - 1]) * (ts[i] - ts[i - 1]).abs();
    }
    let total = theta[m];
    if total.is_nan() || total <= 0.0 {
        // No conduction data (a dielectric-only kind): fall back to the linear profile.
        return (0..=n)
            .map(|i| t_from + (t_to - t_from) * i as f64 / n as f64)
            .collect();
    }
    let mut out = Vec::with_capacity(n + 1);
    let mut j = 0;
    for i in 0..=n {
        let want = total * i as f64 / n as f64;
        while j < m - 1 && theta[j + 1] < want {
            j += 1;
        }
        let span = theta[j + 1] - theta[j];
        let u = if span > 0.0 {
            ((want - theta[j]) / span).clamp(0.0, 1.0)
        } else {
            0.0
        };
        out.push(ts[j] + (ts[j + 1] - ts[j]) * u);
    }
    out[0] = t_from;
    out[n] = t_to;
    out
}

/// A cable element split into `n` pieces of equal as-built length whose end temperatures follow the
/// conduction profile between its stages (cold state; warm is unchanged). Pieces are named
/// "NAME [i/n]"; non-cable elements are returned unchanged. Positions are refilled by
/// [`super::Line::new`].
pub fn split(e: &Element, n: usize) -> Vec<Element> {
    let super::ElementKind::Cable { cable } = &e.kind else {
        return vec![e.clone()];
    };
    let t = profile(cable, e.cold_from_k, e.cold_to_k, n);
    (0..n)
        .map(|i| Element {
            name: format!("{} [{}/{n}]", e.name, i + 1),
            length_m: e.length_m / n as f64,
            start_m: e.start_m + e.length_m * i as f64 / n as f64,
            cold_from_k: t[i],
            cold_to_k: t[i + 1],
            ..e.clone()
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::line::catalogue;

    fn integral(m: Material, t0: f64, t1: f64) -> f64 {
        let n = 20000;
        let h = (t1 - t0) / n as f64;
        (0..n)
            .map(|i| {
                let t = t0 + h * i as f64;
                0.5 * h * (thermal_conductivity(m, t) + thermal_conductivity(m, t + h))
            })
            .sum()
    }

    #[test]
    fn stainless_conductivity_integrals_match_the_handbook() {
        // Ekin 2006, table A2.1 (from memory): 304 stainless, int_4^300 k dT = 3060 W/m, int_4^77 = 325 W/m.
        let i300 = integral(Material::Stainless304, 4.0, 300.0);
        let i77 = integral(Material::Stainless304, 4.0, 77.0);
        assert!((i300 / 3060.0 - 1.0).abs() < 0.02, "{i300}");
        assert!((i77 / 325.0 - 1.0).abs() < 0.02, "{i77}");
        // Point values, NIST 304 curve (from memory): ~15 W/(m K) at 300 K, ~0.27 at 4 K.
        assert!((thermal_conductivity(Material::Stainless304, 300.0) - 15.3).abs() < 0.3);
        assert!((thermal_conductivity(Material::Stainless304, 4.0) - 0.272).abs() < 0.01);
    }

    #[test]
    fn copper_at_room_temperature_obeys_wiedemann_franz() {
        // L0 T / rho with the model's 293 K resistivity; copper's handbook k is ~400 W/(m K) (from memory).
        let k = thermal_conductivity(Material::Copper, 293.0);
        assert!((k - 400.0).abs() < 25.0, "{k}");
    }

    #[test]
    fn profile_inverts_the_conductivity_integral() {
        // Equal end temperatures: a flat profile.
        let k = catalogue::built_in("ss-086").unwrap();
        let t = profile(&k, 100.0, 100.0, 4);
        assert_eq!(t, vec![100.0; 5]);
        // Stainless: theta(T) / theta(295) at the midpoint is 1/2 by construction; check by integrating back.
        let t = profile(&k, 295.0, 3.0, 10);
        assert_eq!((t[0], t[10]), (295.0, 3.0));
        let whole = integral(Material::Stainless304, 3.0, 295.0);
        for (i, ti) in t.iter().enumerate() {
            let part = integral(Material::Stainless304, 3.0, *ti);
            let want = 1.0 - i as f64 / 10.0;
            assert!((part / whole - want).abs() < 2e-3, "{i}: {ti} K");
        }
        // Most of a stainless line is warm: its midpoint sits near 187 K, not at the linear 149 K.
        assert!(t[5] > 180.0 && t[5] < 195.0, "{}", t[5]);
    }

    #[test]
    fn split_keeps_length_and_ends() {
        let k = catalogue::built_in("ss-086").unwrap();
        let e = Element {
            name: "c".into(),
            kind: crate::line::ElementKind::Cable { cable: k },
            length_m: 0.7,
            start_m: 0.1,
            from_stage: "room".into(),
            to_stage: "k3".into(),
            cold_from_k: 295.0,
            cold_to_k: 3.0,
            line_no: 3,
        };
        let p = split(&e, 7);
        assert_eq!(p.len(), 7);
        let total: f64 = p.iter().map(|x| x.length_m).sum();
        assert!((total - 0.7).abs() < 1e-12);
        assert_eq!((p[0].cold_from_k, p[6].cold_to_k), (295.0, 3.0));
        assert!(p.windows(2).all(|w| w[0].cold_to_k == w[1].cold_from_k));
        assert_eq!(p[2].name, "c [3/7]");
    }
}
