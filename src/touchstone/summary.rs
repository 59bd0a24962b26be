//! What `coldtrace inspect` reports about a file: a serializable summary whose JSON keys are a contract
//! (`version`, `ports`, `points`, `f_start_hz`, `f_stop_hz`, `uniform`, `harmonic`, `parameter`, `format`,
//! `reference_ohm`, `warnings`, plus `path`, `f_step_hz`, `unit`, `noise`, `noise_points`).

use super::Touchstone;
use crate::Warning;
use serde::Serialize;
use std::path::Path;

/// Relative tolerance (of the mean step df) for calling a grid uniform or harmonic: every step must be
/// within `GRID_TOLERANCE * df` of df, and for a harmonic grid f_0 within it of df or of 0. 1e-6 allows for
/// the 6 to 10 significant digits instruments print frequencies with (common practice, no source).
pub const GRID_TOLERANCE: f64 = 1e-6;

/// Summary of one file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    pub path: String,
    /// "1.0", "1.1", "2.0" or "2.1".
    pub version: String,
    pub ports: usize,
    pub points: usize,
    pub f_start_hz: f64,
    pub f_stop_hz: f64,
    /// Mean step (f_stop - f_start) / (points - 1); `null` for a single point.
    pub f_step_hz: Option<f64>,
    /// Every step equals `f_step_hz` within [`GRID_TOLERANCE`].
    pub uniform: bool,
    /// Uniform, and f_k = k df with k starting at 1 or 0 (what low-pass transforms need).
    pub harmonic: bool,
    /// Parameter stored in the file (the network is always converted to S).
    pub parameter: String,
    pub format: String,
    pub unit: String,
    pub reference_ohm: Vec<f64>,
    /// A noise-parameter block is present.
    pub noise: bool,
    pub noise_points: usize,
    pub warnings: Vec<Warning>,
}

/// Build the summary of a file that was read.
pub fn summarize(ts: &Touchstone, path: &Path) -> Summary {
    let f = &ts.network.freqs_hz;
    let points = f.len();
    let (start, stop) = (
        f.first().copied().unwrap_or(0.0),
        f.last().copied().unwrap_or(0.0),
    );
    let step = (points >= 2).then(|| (stop - start) / (points - 1) as f64);
    let uniform = match step {
        None => points == 1,
        Some(df) => {
            df > 0.0
                && f.windows(2)
                    .all(|w| ((w[1] - w[0]) - df).abs() <= GRID_TOLERANCE * df)
        }
    };
    let harmonic = uniform
        && match step {
            Some(df) => {
                (start - df).abs() <= GRID_TOLERANCE * df || start.abs() <= GRID_TOLERANCE * df
            }
            None => false,
        };
    Summary {
        path: path.display().to_string(),
        version: ts.info.version.as_str().to_string(),
        ports: ts.network.ports,
        points,
        f_start_hz: start,
        f_stop_hz: stop,
        f_step_hz: step,
        uniform,
        harmonic,
        parameter: ts.info.parameter.as_str().to_string(),
        format: ts.info.format.as_str().to_string(),
        unit: ts.info.unit.as_str().to_string(),
        reference_ohm: ts.info.reference_ohm.clone(),
        noise: !ts.network.noise.is_empty(),
        noise_points: ts.network.noise.len(),
        warnings: ts.warnings.clone(),
    }
}

impl std::fmt::Display for Summary {
    /// A readable block for the text output of `inspect`.
    fn fmt(&self, out: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        writeln!(out, "{}", self.path)?;
        writeln!(out, "  version      {}", self.version)?;
        writeln!(out, "  ports        {}", self.ports)?;
        writeln!(out, "  points       {}", self.points)?;
        writeln!(
            out,
            "  frequency    {} .. {}",
            fmt_hz(self.f_start_hz),
            fmt_hz(self.f_stop_hz)
        )?;
        match self.f_step_hz {
            Some(df) => writeln!(out, "  step         {}", fmt_hz(df))?,
            None => writeln!(out, "  step         - (one point)")?,
        }
        writeln!(
            out,
            "  grid         {}, {}",
            if self.uniform {
                "uniform"
            } else {
                "non-uniform"
            },
            if self.harmonic {
                "harmonic (low-pass ready)"
            } else {
                "not harmonic"
            }
        )?;
        writeln!(out, "  parameter    {} (read as S)", self.parameter)?;
        writeln!(
            out,
            "  format       {}, frequencies in {}",
            self.format, self.unit
        )?;
        let refs: Vec<String> = self.reference_ohm.iter().map(|r| format!("{r}")).collect();
        writeln!(out, "  reference    {} ohm", refs.join(", "))?;
        if self.noise {
            writeln!(out, "  noise        {} points", self.noise_points)?;
        } else {
            writeln!(out, "  noise        none")?;
        }
        if self.warnings.is_empty() {
            writeln!(out, "  warnings     none")?;
        } else {
            writeln!(out, "  warnings     {}", self.warnings.len())?;
            for w in &self.warnings {
                writeln!(out, "    {w}")?;
            }
        }
        Ok(())
    }
}

/// A frequency for people: the largest of Hz, kHz, MHz, GHz that keeps the number >= 1, up to 9
/// significant digits, trailing zeros dropped (`1.9999 MHz`, `20 GHz`).
fn fmt_hz(f: f64) -> String {
    let (scale, unit) = [(1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")]
        .into_iter()
        .find(|(s, _)| f.abs() >= *s)
        .unwrap_or((1.0, "Hz"));
    let v = f / scale;
    let decimals = (8 - v.abs().log10().floor().max(0.0) as i32).max(0) as usize;
    let mut text = format!("{v:.decimals$}");
    if text.contains('.') {
        text = text.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    format!("{text} {unit}")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::touchstone::read_str;

    fn grid(freqs: &[f64]) -> Summary {
        let mut text = String::from("# Hz S RI R 50\n");
        for f in freqs {
            text.push_str(&format!("{f} 0.1 0\n"));
        }
        let ts = read_str(&text, Path::new("g.s1p")).unwrap();
        summarize(&ts, Path::new("g.s1p"))
    }

    #[test]
    fn uniform_and_harmonic_grids() {
        let s = grid(&[0.0, 1e6, 2e6, 3e6]);
        assert!(s.uniform && s.harmonic);
        assert_eq!(s.f_step_hz, Some(1e6));
        let s = grid(&[1e6, 2e6, 3e6]);
        assert!(s.uniform && s.harmonic);
        let s = grid(&[1.5e6, 2.5e6, 3.5e6]);
        assert!(s.uniform && !s.harmonic);
        let s = grid(&[1e6, 2e6, 4e6]);
        assert!(!s.uniform && !s.harmonic);
        let s = grid(&[5e6]);
        assert!(s.uniform && !s.harmonic && s.f_step_hz.is_none());
    }

    #[test]
    fn frequencies_for_people() {
        assert_eq!(fmt_hz(20e9), "20 GHz");
        assert_eq!(fmt_hz(1.9999e6), "1.9999 MHz");
        assert_eq!(fmt_hz(0.0), "0 Hz");
        assert_eq!(fmt_hz(999.5), "999.5 Hz");
        assert_eq!(fmt_hz(1.23456789012e3), "1.23456789 kHz");
    }

    #[test]
    fn tolerance_is_relative_to_the_step() {
        // A step off by 0.5e-6 df passes, by 2e-6 df fails (GRID_TOLERANCE = 1e-6).
        assert!(grid(&[1e6, 2e6 + 0.5, 3e6]).uniform);
        assert!(!grid(&[1e6, 2e6 + 2.0, 3e6]).uniform);
        assert!(grid(&[1e6 + 0.5, 2e6 + 0.5, 3e6 + 0.5]).harmonic);
        assert!(!grid(&[1e6 + 2.0, 2e6 + 2.0, 3e6 + 2.0]).harmonic);
    }
}
