//! A finding's evidence, for its plot: the local reflection the comparator read at the finding's place
//! (gated, moved to the event's plane and loss-compensated: [`SweepAnalysis::local_reflection`]) and the
//! reflection of the lumped model it fitted there, on the same frequencies.
//!
//! Conventions: frequencies Hz; reflections are |Gamma| (linear, dB only at the plot); the model's
//! reflection is [`ModelType::gamma`] of the finding's `model` summary on a line of impedance `z0` (ohm).
//! Its residual delay turns only the phase, so the magnitudes compare without it.
//!
//! [`SweepAnalysis::local_reflection`]: super::analysis::SweepAnalysis::local_reflection

use super::lumped::ModelType;
use super::report::ModelSummary;
use num_complex::Complex64;

/// What a finding's evidence plot draws; not part of the JSON (the finding's `model` is).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Evidence {
    /// Frequencies of the inner band the fit used, Hz.
    pub freqs_hz: Vec<f64>,
    /// |Gamma| of the gated local reflection at each frequency.
    pub measured: Vec<f64>,
    /// |Gamma| of the fitted model at each frequency.
    pub model: Vec<f64>,
}

impl Evidence {
    /// The evidence of a local reflection `gamma` at `freqs` explained by `model` on a line of `z0` ohm.
    pub fn new(freqs: &[f64], gamma: &[Complex64], model: &ModelSummary, z0: f64) -> Self {
        assert_eq!(
            freqs.len(),
            gamma.len(),
            "Evidence::new: {} frequencies but {} values",
            freqs.len(),
            gamma.len()
        );
        Evidence {
            freqs_hz: freqs.to_vec(),
            measured: gamma.iter().map(|g| g.norm()).collect(),
            model: freqs
                .iter()
                .map(|&f| model_gamma(model, f, z0).norm())
                .collect(),
        }
    }

    /// Whether there is anything to draw.
    pub fn is_empty(&self) -> bool {
        self.freqs_hz.is_empty()
    }
}

/// The reflection of a finding's model at `f`. An open or short read through a line of unknown loss keeps
/// its apparent |rho| as its value (`ModelSummary::value`, below 1); on a compensated trace its value is 0
/// and it reflects totally.
pub fn model_gamma(m: &ModelSummary, f: f64, z0: f64) -> Complex64 {
    match m.model {
        ModelType::Open | ModelType::Short if m.value > 0.0 && m.value < 1.0 => {
            m.model.gamma(0.0, f, z0) * m.value
        }
        t => t.gamma(m.value, f, z0),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn summary(model: ModelType, value: f64) -> ModelSummary {
        ModelSummary {
            model,
            value,
            unit: model.unit(),
            fit_error: 0.0,
            gap_m: None,
        }
    }

    #[test]
    fn a_series_capacitance_reads_as_its_circuit() {
        // Gamma = 1 / (1 + j 2 w C Z0) for a series C between matched 50 ohm lines (Pozar, Microwave
        // Engineering, 4th ed., sec. 4.4, from memory): 100 fF at 5 GHz gives |Gamma| = 1/sqrt(1 + x^2),
        // x = 2 * 2 pi * 5e9 * 1e-13 * 50 = 0.314159, so 0.954028 (hand-worked).
        let m = summary(ModelType::SeriesCapacitance, 1e-13);
        let g: Vec<Complex64> = vec![Complex64::new(0.9, 0.1); 2];
        let e = Evidence::new(&[5e9, 5e9], &g, &m, 50.0);
        assert!((e.model[0] - 0.954028).abs() < 1e-6, "{}", e.model[0]);
        assert!((e.measured[0] - 0.905539).abs() < 1e-6);
    }

    #[test]
    fn an_apparent_open_keeps_its_level() {
        let m = summary(ModelType::Open, 0.4);
        assert!((model_gamma(&m, 1e9, 50.0) - Complex64::new(0.4, 0.0)).norm() < 1e-12);
        let short = summary(ModelType::Short, 0.0);
        assert!((model_gamma(&short, 1e9, 50.0) + Complex64::new(1.0, 0.0)).norm() < 1e-12);
    }
}
