//! Lumped models of a single discontinuity between two matched lines, and their fit to a measured,
//! de-embedded reflection versus frequency.
//!
//! Conventions: time dependence e^{+j omega t}; `z0` is the line's characteristic impedance (real, ohm);
//! every model gives the reflection coefficient seen from the source side with the far side matched:
//! a series impedance Z gives Gamma = Z / (2 Z0 + Z), a shunt admittance Y gives Gamma = -Y Z0 / (2 + Y Z0)
//! (circuit theory; e.g. Pozar, Microwave Engineering, 4th ed., sec. 4.4 two-port networks, from memory).
//! The fit allows a small residual delay `delta_s` (the position uncertainty of the gate centre), so the model
//! compared with the data is Gamma_model(f) e^{-j 2 pi f delta_s}.

use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

pub use crate::line::fault::gap_capacitance;
use crate::numeric::golden_min;

/// The bracket left after 30 golden-section steps, relative to the first: 0.618^30.
const GOLDEN_SHRINK_30: f64 = 5.4e-7;

/// The lumped models a finding can be explained by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Hash)]
#[serde(rename_all = "kebab-case")]
pub enum ModelType {
    /// Series capacitance: the open centre-conductor joint of a pulled-back pin. Value in farads.
    SeriesCapacitance,
    /// Series resistance: a degraded contact. Value in ohms.
    SeriesResistance,
    /// Series inductance: a loose pin or an air gap round the pin. Value in henries.
    SeriesInductance,
    /// Shunt capacitance: a crushed (locally low-impedance) section. Value in farads.
    ShuntCapacitance,
    /// A step to another characteristic impedance. Value in ohms (the impedance after the step).
    ImpedanceStep,
    /// Total reflection with Gamma = +1.
    Open,
    /// Total reflection with Gamma = -1.
    Short,
}

impl ModelType {
    /// Every model, in the order they are tried.
    pub const ALL: [ModelType; 7] = [
        ModelType::SeriesCapacitance,
        ModelType::SeriesResistance,
        ModelType::SeriesInductance,
        ModelType::ShuntCapacitance,
        ModelType::ImpedanceStep,
        ModelType::Open,
        ModelType::Short,
    ];

    /// The SI unit of the model's value.
    pub fn unit(self) -> &'static str {
        match self {
            ModelType::SeriesCapacitance | ModelType::ShuntCapacitance => "F",
            ModelType::SeriesResistance | ModelType::ImpedanceStep => "ohm",
            ModelType::SeriesInductance => "H",
            ModelType::Open | ModelType::Short => "",
        }
    }

    /// The model's stable name in JSON (`series-capacitance`, ...).
    pub fn name(self) -> &'static str {
        match self {
            ModelType::SeriesCapacitance => "series-capacitance",
            ModelType::SeriesResistance => "series-resistance",
            ModelType::SeriesInductance => "series-inductance",
            ModelType::ShuntCapacitance => "shunt-capacitance",
            ModelType::ImpedanceStep => "impedance-step",
            ModelType::Open => "open",
            ModelType::Short => "short",
        }
    }

    /// Search range of the model's value, SI. Wide enough for anything a cryostat joint does; `None` for the
    /// models without a value.
    fn range(self, z0: f64) -> Option<(f64, f64)> {
        match self {
            ModelType::SeriesCapacitance => Some((1e-16, 1e-10)),
            ModelType::ShuntCapacitance => Some((1e-16, 1e-10)),
            ModelType::SeriesInductance => Some((1e-13, 1e-7)),
            ModelType::SeriesResistance => Some((1e-3, 1e5)),
            // Impedance after a step: between Z0/20 and 20 Z0, searched on a log scale.
            ModelType::ImpedanceStep => Some((z0 / 20.0, z0 * 20.0)),
            ModelType::Open | ModelType::Short => None,
        }
    }

    /// Reflection of this model with value `value` at frequency `f` on a line of impedance `z0`.
    pub fn gamma(self, value: f64, f: f64, z0: f64) -> Complex64 {
        let w = 2.0 * PI * f;
        let series = |z: Complex64| z / (2.0 * z0 + z);
        match self {
            ModelType::SeriesCapacitance => {
                // Z = 1/(j w C)  =>  Gamma = 1 / (1 + j 2 w C Z0): an open at DC.
                Complex64::new(1.0, 0.0) / Complex64::new(1.0, 2.0 * w * value * z0)
            }
            ModelType::SeriesResistance => series(Complex64::new(value, 0.0)),
            ModelType::SeriesInductance => series(Complex64::new(0.0, w * value)),
            ModelType::ShuntCapacitance => {
                let yz = Complex64::new(0.0, w * value * z0);
                -yz / (2.0 + yz)
            }
            ModelType::ImpedanceStep => Complex64::new((value - z0) / (value + z0), 0.0),
            ModelType::Open => Complex64::new(1.0, 0.0),
            ModelType::Short => Complex64::new(-1.0, 0.0),
        }
    }

    /// Power transmission |S21|^2 past this discontinuity at `f` (the far side matched): what the line loses
    /// to it, by reflection and, for a resistance, by dissipation.
    pub fn transmission(self, value: f64, f: f64, z0: f64) -> f64 {
        let w = 2.0 * PI * f;
        let series = |z: Complex64| (2.0 * z0 / (2.0 * z0 + z)).norm_sqr();
        match self {
            ModelType::SeriesCapacitance => series(Complex64::new(
                0.0,
                -1.0 / (w * value).max(f64::MIN_POSITIVE),
            )),
            ModelType::SeriesResistance => series(Complex64::new(value, 0.0)),
            ModelType::SeriesInductance => series(Complex64::new(0.0, w * value)),
            ModelType::ShuntCapacitance => {
                let yz = Complex64::new(0.0, w * value * z0);
                (2.0 / (2.0 + yz)).norm_sqr()
            }
            // A lossless step passes 1 - |Gamma|^2 of the power.
            ModelType::ImpedanceStep => 1.0 - ((value - z0) / (value + z0)).powi(2),
            ModelType::Open | ModelType::Short => 0.0,
        }
    }
}

/// The best value of one model for one measured reflection.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ModelFit {
    #[serde(rename = "type")]
    pub model: ModelType,
    /// The model's value in SI (`unit`); 0 for open and short.
    pub value: f64,
    pub unit: &'static str,
    /// RMS of (measured - model) over RMS of measured, 0 = perfect.
    pub fit_error: f64,
    /// The residual delay the fit used, s (positive: the event is later than the gate centre).
    #[serde(skip)]
    pub delta_s: f64,
}

/// Fit every model to `gamma` measured at `freqs` (Hz) on a line of impedance `z0`, allowing a residual delay
/// of at most `max_delta_s`. Returns the fits sorted best first.
///
/// The residual delay is searched on a grid of 0.5 rad of phase at the top frequency, then refined by golden
/// section; each model's value on a log grid, then by golden section.
pub fn fit_all(freqs: &[f64], gamma: &[Complex64], z0: f64, max_delta_s: f64) -> Vec<ModelFit> {
    assert_eq!(
        freqs.len(),
        gamma.len(),
        "fit_all: {} frequencies but {} values",
        freqs.len(),
        gamma.len()
    );
    let (f, g) = decimate(freqs, gamma, MAX_FIT_POINTS);
    let norm = (g.iter().map(|x| x.norm_sqr()).sum::<f64>() / g.len().max(1) as f64).sqrt();
    let mut fits: Vec<ModelFit> = ModelType::ALL
        .iter()
        .map(|&m| fit_one(m, &f, &g, z0, max_delta_s, norm))
        .collect();
    fits.sort_by(|a, b| a.fit_error.total_cmp(&b.fit_error));
    fits
}

/// Most frequency points a fit uses; longer sweeps are decimated evenly (the models are smooth in f).
pub const MAX_FIT_POINTS: usize = 128;

fn decimate(freqs: &[f64], gamma: &[Complex64], max: usize) -> (Vec<f64>, Vec<Complex64>) {
    if freqs.len() <= max {
        return (freqs.to_vec(), gamma.to_vec());
    }
    let step = freqs.len() as f64 / max as f64;
    (0..max)
        .map(|i| {
            let k = ((i as f64 + 0.5) * step) as usize;
            (freqs[k], gamma[k])
        })
        .unzip()
}

/// Sum of |g_k e^{+j 2 pi f_k delta} - Gamma_model(f_k)|^2, with the data already turned back by the
/// residual delay (`turned`): the same as comparing the model turned forward, at one rotation per point
/// per delay instead of one per model evaluation.
fn residual(m: ModelType, value: f64, f: &[f64], turned: &[Complex64], z0: f64) -> f64 {
    f.iter()
        .zip(turned)
        .map(|(&fk, &gk)| (gk - m.gamma(value, fk, z0)).norm_sqr())
        .sum::<f64>()
}

/// The data turned back by a residual delay `delta`.
fn turn(f: &[f64], g: &[Complex64], delta: f64) -> Vec<Complex64> {
    f.iter()
        .zip(g)
        .map(|(&fk, &gk)| gk * Complex64::from_polar(1.0, 2.0 * PI * fk * delta))
        .collect()
}

fn fit_one(
    m: ModelType,
    f: &[f64],
    g: &[Complex64],
    z0: f64,
    max_delta: f64,
    norm: f64,
) -> ModelFit {
    let fmax = f.iter().cloned().fold(0.0, f64::max).max(1.0);
    // Delay grid: 0.5 rad of phase at fmax per step, refined by golden section round the best.
    let step = 0.5 / (2.0 * PI * fmax);
    let n = ((max_delta / step).ceil() as usize).clamp(0, 400);
    let best_value = |delta: f64| -> (f64, f64) {
        let g = &turn(f, g, delta);
        match m.range(z0) {
            None => (0.0, residual(m, 0.0, f, g, z0)),
            Some((lo, hi)) => {
                // Coarse log grid, then golden section around the best cell.
                let cells = 16;
                let (llo, lhi) = (lo.ln(), hi.ln());
                let at = |i: usize| llo + (lhi - llo) * i as f64 / cells as f64;
                let mut bi = 0;
                let mut br = f64::INFINITY;
                for i in 0..=cells {
                    let r = residual(m, at(i).exp(), f, g, z0);
                    if r < br {
                        br = r;
                        bi = i;
                    }
                }
                let a = at(bi.saturating_sub(1));
                let b = at((bi + 1).min(cells));
                let x = golden_min(a, b, GOLDEN_SHRINK_30 * (b - a), |x| {
                    residual(m, x.exp(), f, g, z0)
                });
                let r = residual(m, x.exp(), f, g, z0);
                if r < br {
                    (x.exp(), r)
                } else {
                    (at(bi).exp(), br)
                }
            }
        }
    };
    let mut best = (0.0, 0.0, f64::INFINITY);
    for i in 0..=2 * n {
        let delta = if n == 0 {
            0.0
        } else {
            -max_delta + max_delta * i as f64 / n as f64
        };
        let (v, r) = best_value(delta);
        if r < best.2 {
            best = (delta, v, r);
        }
    }
    if n > 0 {
        let d = golden_min(
            best.0 - step,
            best.0 + step,
            GOLDEN_SHRINK_30 * 2.0 * step,
            |d| best_value(d).1,
        );
        let (v, r) = best_value(d);
        if r < best.2 {
            best = (d, v, r);
        }
    }
    let rms = (best.2 / f.len().max(1) as f64).sqrt();
    ModelFit {
        model: m,
        value: best.1,
        unit: m.unit(),
        fit_error: if norm > 0.0 { rms / norm } else { 0.0 },
        delta_s: best.0,
    }
}

/// The axial gap whose capacitance (by [`gap_capacitance`], the parallel-plate-plus-fringing estimate) is
/// `c`, found by bisection on a log scale.
/// Returns `None` when `c` is below what the formula gives for a gap of one pin radius (the formula's range
/// ends there; such a joint reads as an open).
pub fn gap_from_capacitance(c: f64, pin_radius_m: f64, eps_r: f64) -> Option<f64> {
    let (mut lo, mut hi) = (1e-9_f64, pin_radius_m);
    if !(c.is_finite() && c > 0.0) || gap_capacitance(pin_radius_m, hi, eps_r) > c {
        return None;
    }
    for _ in 0..200 {
        let mid = (lo * hi).sqrt();
        if gap_capacitance(pin_radius_m, mid, eps_r) > c {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some((lo * hi).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sweep() -> Vec<f64> {
        (0..801).map(|k| 0.5e9 + k as f64 * 11.875e6).collect()
    }

    #[test]
    fn series_formulas_match_circuit_theory() {
        // Series R of 2 Z0 reflects 2/4 = 0.5 (Gamma = Z / (2 Z0 + Z); circuit theory).
        let g = ModelType::SeriesResistance.gamma(100.0, 1e9, 50.0);
        assert!((g.re - 0.5).abs() < 1e-15 && g.im.abs() < 1e-15);
        // Impedance step 50 -> 75 ohm: Gamma 0.2 (DOMAIN check: 75 on 50 gives 0.2; calc).
        let g = ModelType::ImpedanceStep.gamma(75.0, 1e9, 50.0);
        assert!((g.re - 0.2).abs() < 1e-15);
        // Reflection plus transmission of a lossless series reactance: |G|^2 + |T|^2 = 1.
        for m in [
            ModelType::SeriesCapacitance,
            ModelType::SeriesInductance,
            ModelType::ShuntCapacitance,
        ] {
            for &(v, f) in &[(30e-15, 6e9), (0.3e-9, 2e9), (200e-15, 9e9)] {
                let s = m.gamma(v, f, 50.0).norm_sqr() + m.transmission(v, f, 50.0);
                assert!((s - 1.0).abs() < 1e-12, "{m:?} {v} {f}: {s}");
            }
        }
    }

    #[test]
    fn each_model_recovers_its_own_value_and_wins() {
        let f = sweep();
        let cases = [
            (ModelType::SeriesCapacitance, 40e-15),
            (ModelType::SeriesResistance, 3.0),
            (ModelType::SeriesInductance, 0.4e-9),
            (ModelType::ShuntCapacitance, 150e-15),
            (ModelType::ImpedanceStep, 62.0),
            (ModelType::Open, 0.0),
            (ModelType::Short, 0.0),
        ];
        let delay = 3e-12;
        for (m, v) in cases {
            let g: Vec<Complex64> = f
                .iter()
                .map(|&fk| {
                    m.gamma(v, fk, 50.0) * Complex64::from_polar(1.0, -2.0 * PI * fk * delay)
                })
                .collect();
            let fits = fit_all(&f, &g, 50.0, 20e-12);
            // A series resistance and a step to a higher impedance both reflect a constant real Gamma: from
            // one reflection they are the same fit, told apart only by where they are (see `classify`).
            let best = fits.iter().find(|x| x.model == m).unwrap();
            assert!(
                best.fit_error <= fits[0].fit_error + 1e-4,
                "{m:?}: {:?}",
                fits[0]
            );
            if v != 0.0 {
                assert!(
                    (best.value - v).abs() / v < 1e-3,
                    "{m:?}: {} vs {v}",
                    best.value
                );
            }
            assert!(fits[0].fit_error < 1e-3, "{m:?}: {}", fits[0].fit_error);
        }
    }

    #[test]
    fn gap_capacitance_against_field_solution_values() {
        // Full-field check values for 0.086-in PTFE cable, a = 0.2555 mm, er 2.03 (axisymmetric Laplace solve,
        // project domain notes, calc): 414 fF at 10 um, 101 fF at 50 um. The formula claims about 6 %.
        let a = 0.2555e-3;
        for &(g, c_ref) in &[(10e-6, 414e-15), (50e-6, 101e-15)] {
            let c = gap_capacitance(a, g, 2.03);
            // "About 6 %": 4 % at 10 um, 6.3 % at 50 um here.
            assert!((c - c_ref).abs() / c_ref < 0.07, "gap {g}: {c} vs {c_ref}");
            let back = gap_from_capacitance(c, a, 2.03).unwrap();
            assert!((back - g).abs() / g < 1e-9);
        }
        assert!(gap_from_capacitance(1e-18, a, 2.03).is_none());
    }
}
