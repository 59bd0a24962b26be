//! The network every later stage works on: S-parameters in complex form, frequencies in Hz.
//!
//! Conventions: `s` holds one `ports x ports` matrix per frequency, row-major, so
//! `s[k * n * n + i * n + j]` is S_{i+1, j+1} at `freqs_hz[k]` (zero-based `i`, `j`). S-parameters are
//! referenced to `reference_ohm[p]` at port `p` (real, positive). Frequencies strictly increase.

use num_complex::Complex64;
use serde::Serialize;

/// One point of a 2-port noise-parameter block (kept, never mixed with network data).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct NoisePoint {
    pub freq_hz: f64,
    /// Minimum noise figure, dB.
    pub nf_min_db: f64,
    /// Optimum source reflection coefficient, referenced to port 1's reference impedance.
    pub gamma_opt: Complex64,
    /// Effective noise resistance, ohm (never normalised here).
    pub rn_ohm: f64,
}

/// An N-port network as S-parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    pub ports: usize,
    pub freqs_hz: Vec<f64>,
    pub s: Vec<Complex64>,
    pub reference_ohm: Vec<f64>,
    pub noise: Vec<NoisePoint>,
}

impl Network {
    /// A 1-port network from its reflection coefficient.
    pub fn one_port(freqs_hz: Vec<f64>, s11: Vec<Complex64>, reference_ohm: f64) -> Self {
        assert_eq!(
            freqs_hz.len(),
            s11.len(),
            "one_port: {} frequencies but {} values",
            freqs_hz.len(),
            s11.len()
        );
        Network {
            ports: 1,
            freqs_hz,
            s: s11,
            reference_ohm: vec![reference_ohm],
            noise: Vec::new(),
        }
    }

    /// Number of frequency points.
    pub fn len(&self) -> usize {
        self.freqs_hz.len()
    }

    pub fn is_empty(&self) -> bool {
        self.freqs_hz.is_empty()
    }

    /// S_{i+1, j+1} at frequency index `k` (zero-based indices).
    pub fn at(&self, k: usize, i: usize, j: usize) -> Complex64 {
        let n = self.ports;
        self.s[k * n * n + i * n + j]
    }

    /// S_{i+1, j+1} over all frequencies (zero-based indices).
    pub fn param(&self, i: usize, j: usize) -> Vec<Complex64> {
        assert!(
            i < self.ports && j < self.ports,
            "param({i}, {j}) on a {}-port network",
            self.ports
        );
        (0..self.len()).map(|k| self.at(k, i, j)).collect()
    }

    /// S11 over all frequencies.
    pub fn s11(&self) -> Vec<Complex64> {
        self.param(0, 0)
    }
}
