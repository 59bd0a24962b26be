//! The `trace` command's core, as a library function on plain config: trace, peaks, optional gate, and the
//! text, CSV and plot views of the result. A later line model only swaps the [`DistanceMap`] and adds
//! markers to the figure.

use super::gate::{gate_with, GatePlan, Gated};
use super::peak::{find_peaks, refine_peak};
use super::plan::{Mode, TracePlan};
use super::trace::{Spectrum, Trace, TraceEngine};
use super::{DistanceMap, TransformError, Window};
use crate::report::{Figure, Marker, Series};
use num_complex::Complex64;
use std::fmt::Write;

/// Default number of peaks listed.
pub const DEFAULT_PEAK_COUNT: usize = 5;
/// Peaks more than this far below the strongest are not listed, dB.
pub const DEFAULT_PEAK_FLOOR_DB: f64 = 40.0;

/// Plain configuration of one trace run.
#[derive(Debug, Clone, PartialEq)]
pub struct TraceConfig {
    pub plan: TracePlan,
    /// Gate span, one-way metres (mapped to time by the distance map).
    pub gate_m: Option<(f64, f64)>,
    pub gate_shape: Window,
    pub peak_count: usize,
    pub peak_floor_db: f64,
}

impl Default for TraceConfig {
    fn default() -> Self {
        TraceConfig {
            plan: TracePlan::default(),
            gate_m: None,
            gate_shape: Window::Kaiser { beta: 6.0 },
            peak_count: DEFAULT_PEAK_COUNT,
            peak_floor_db: DEFAULT_PEAK_FLOOR_DB,
        }
    }
}

/// Trace (with its peaks filled in) and, when a gate was asked, the gated sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct TraceOutcome {
    pub trace: Trace,
    pub gated: Option<Gated>,
}

/// Run `config` on one sweep.
pub fn run_trace(
    engine: &mut TraceEngine,
    freqs: &[f64],
    values: &[Complex64],
    config: &TraceConfig,
    map: &dyn DistanceMap,
) -> Result<TraceOutcome, TransformError> {
    let plan = &config.plan;
    let mut trace = engine.trace(freqs, values, plan, map)?;
    let check = plan.check(freqs, map)?;
    let w = engine.window_coefficients(&plan.window, Spectrum::window_len(&check));
    let spectrum = Spectrum::with_coefficients(values, plan, &check, &w)?;
    let coarse = find_peaks(&trace, config.peak_floor_db, config.peak_count);
    trace.peaks = coarse
        .iter()
        .map(|p| refine_peak(&trace, &spectrum, p, &|t| map.distance_m(t)))
        .collect();
    let gated = match config.gate_m {
        None => None,
        Some((x0, x1)) => {
            if x1.partial_cmp(&x0) != Some(std::cmp::Ordering::Greater) {
                return Err(TransformError::Invalid(format!(
                    "gate {x0} m..{x1} m is empty; give START..STOP with STOP > START, e.g. 0.9m..1.1m"
                )));
            }
            let gp = GatePlan {
                shape: config.gate_shape,
                ..GatePlan::new(map.round_trip_s(x0), map.round_trip_s(x1))
            };
            let g = gate_with(freqs, values, &gp, engine.cache())?;
            trace.warnings.extend(g.warnings.iter().cloned());
            Some(g)
        }
    };
    Ok(TraceOutcome { trace, gated })
}

impl Trace {
    /// A short text summary: window, resolution, range, strongest peaks, warnings.
    pub fn summary(&self) -> String {
        let mut s = String::new();
        let w = &self.window;
        let wname = match w.beta {
            Some(b) => format!("{} (beta {b})", w.name),
            None => w.name.to_string(),
        };
        let _ = writeln!(
            s,
            "{} trace, window {wname}: main lobe {:.2} bins at -6 dB, highest sidelobe {:.1} dB",
            self.mode.name(),
            w.figures.mainlobe_6db_bins,
            w.figures.highest_sidelobe_db
        );
        let _ = writeln!(s, "distance map: {}", self.distance_map);
        let (a, b) = match (self.axis_m.first(), self.axis_m.last()) {
            (Some(a), Some(b)) => (*a, *b),
            _ => (0.0, 0.0),
        };
        let _ = writeln!(
            s,
            "resolution {:.4} m, alias-free range {:.3} m, {} points over {a:.4} m..{b:.4} m",
            self.resolution_m,
            self.alias_free_range_m,
            self.axis_m.len()
        );
        if self.peaks.is_empty() {
            let _ = writeln!(s, "no peaks");
        } else {
            let what = match self.mode {
                Mode::BandPass => "strongest peaks (|h|)",
                Mode::LowPassImpulse => "strongest impulses (rho)",
                Mode::LowPassStep | Mode::Impedance => "steepest step changes (|d rho/dx|, per m)",
            };
            let _ = writeln!(s, "{what}:");
            for (i, p) in self.peaks.iter().enumerate() {
                let _ = match self.mode {
                    Mode::BandPass => writeln!(
                        s,
                        "  {:>2}  {:>10.4} m  {:>8.2} dB",
                        i + 1,
                        p.distance_m,
                        p.db
                    ),
                    Mode::LowPassImpulse => writeln!(
                        s,
                        "  {:>2}  {:>10.4} m  rho {:+.4} ({:.2} dB)",
                        i + 1,
                        p.distance_m,
                        p.value,
                        p.db
                    ),
                    _ => writeln!(
                        s,
                        "  {:>2}  {:>10.4} m  {:.4} /m",
                        i + 1,
                        p.distance_m,
                        p.value
                    ),
                };
            }
        }
        for w in &self.warnings {
            let _ = writeln!(s, "warning: {w}");
        }
        s
    }

    /// `distance_m,value` header and one row per point.
    pub fn csv(&self) -> String {
        let mut s = String::with_capacity(self.values.len() * 24 + 20);
        s.push_str("distance_m,value\n");
        for (x, v) in self.axis_m.iter().zip(&self.values) {
            let _ = writeln!(s, "{x},{v}");
        }
        s
    }

    /// A figure of the trace (distance in metres against dB, rho or ohm).
    pub fn figure(&self, title: &str) -> Figure {
        let y_label = match self.mode {
            Mode::BandPass => "|h| (dB)",
            Mode::LowPassImpulse => "impulse response (rho)",
            Mode::LowPassStep => "step response (rho)",
            Mode::Impedance => "impedance (ohm)",
        };
        let mut fig = Figure::new(title, "distance (m)", y_label);
        fig.series.push(Series {
            name: format!("{} {}", self.mode.name(), self.window.name),
            x: self.axis_m.clone(),
            y: self.values.clone(),
        });
        fig.markers.extend(self.landmarks.iter().map(|l| Marker {
            x: l.distance_m,
            label: l.name.clone(),
        }));
        if self.mode == Mode::BandPass {
            // Show 100 dB below the strongest point, the useful range of a -92 dB window.
            let top = self
                .values
                .iter()
                .cloned()
                .fold(f64::NEG_INFINITY, f64::max);
            if top.is_finite() {
                fig.y_range = Some((top - 100.0, top + 5.0));
                fig.max_envelope = true;
            }
        }
        fig
    }
}
