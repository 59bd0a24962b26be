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
            "  frequency    {} Hz .. {} Hz",
            self.f_start_hz, self.f_stop_hz
        )?;
        match self.f_step_hz {
            Some(df) => writeln!(out, "  step         {df} Hz")?,
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
