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

    /// The 1-port network seen at zero-based `port`: its reflection S_{port+1, port+1}, with that port's
    /// reference impedance. An error naming the ports there are when `port` is not one of them.
    pub fn reflection_at(&self, port: usize) -> Result<Network, String> {
        if port >= self.ports {
            return Err(format!(
                "S{0}{0} needs port {0}, but the sweep has {1} port(s): use {2}",
                port + 1,
                self.ports,
                (1..=self.ports.min(4))
                    .map(|p| format!("S{p}{p}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
        Ok(Network::one_port(
            self.freqs_hz.clone(),
            self.param(port, port),
            self.reference_ohm.get(port).copied().unwrap_or(50.0),
        ))
    }
}

/// The warning that a sweep of `ports` ports is analysed by its S11 alone (kind `port-s11`).
pub fn first_port_warning(ports: usize) -> crate::Warning {
    crate::Warning::new(
        "port-s11",
        format!("{ports}-port sweep: S11 is analysed, the line seen from port 1"),
        "pass --param S22 to analyse the line seen from port 2",
    )
}

/// The zero-based port of a reflection parameter written `S11`, `S22`, ... (any case, `S1,1` too).
pub fn reflection_port(text: &str) -> Result<usize, String> {
    let t = text.trim();
    let refuse = || {
        format!(
            "'{}' is not a reflection parameter; write S11 (port 1's end) or S22 (port 2's end)",
            crate::limits::clip(t)
        )
    };
    let digits = t
        .strip_prefix('S')
        .or_else(|| t.strip_prefix('s'))
        .ok_or_else(refuse)?;
    let (i, j) = match digits.split_once(',') {
        Some((i, j)) => (i, j),
        None if digits.len() == 2 && digits.is_ascii() => digits.split_at(1),
        None => return Err(refuse()),
    };
    match (i.trim().parse::<usize>(), j.trim().parse::<usize>()) {
        (Ok(i), Ok(j)) if i == j && i >= 1 => Ok(i - 1),
        (Ok(i), Ok(j)) if i != j && i >= 1 && j >= 1 => Err(format!(
            "S{i}{j} is a transmission; reflectometry reads a reflection: S{i}{i} or S{j}{j}"
        )),
        _ => Err(refuse()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reflection_parameters_name_their_port() {
        assert_eq!(reflection_port("S11"), Ok(0));
        assert_eq!(reflection_port("s22"), Ok(1));
        assert_eq!(reflection_port("S3,3"), Ok(2));
        assert!(reflection_port("S21").unwrap_err().contains("transmission"));
        assert!(reflection_port("Z11").is_err());
        assert!(reflection_port("S").is_err());
    }

    #[test]
    fn the_reflection_at_a_port_is_its_diagonal_term() {
        let c = |x: f64| Complex64::new(x, 0.0);
        // Two points of a 2-port: S11, S12, S21, S22 row by row.
        let n = Network {
            ports: 2,
            freqs_hz: vec![1e9, 2e9],
            s: vec![
                c(0.1),
                c(0.2),
                c(0.3),
                c(0.4),
                c(0.5),
                c(0.6),
                c(0.7),
                c(0.8),
            ],
            reference_ohm: vec![50.0, 75.0],
            noise: Vec::new(),
        };
        let p2 = n.reflection_at(1).unwrap();
        assert_eq!(p2.s, vec![c(0.4), c(0.8)]);
        assert_eq!(p2.reference_ohm, vec![75.0]);
        assert!(n.reflection_at(2).unwrap_err().contains("2 port(s)"));
    }
}
