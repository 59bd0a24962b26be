//! One sweep as the comparator's stages take it: the named network, the analysis settings, and the first
//! stage of the pipeline, [`analyse`] (a sweep's band-pass trace on the chain, compensated, with its noise
//! floor and events).
//!
//! Conventions: round-trip delays in s; dB as 20 log10 of an amplitude; positions as-built metres.

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, Which};
use super::CompareError;
use crate::transform::{TraceEngine, Window, C0_M_PER_S};
use crate::{Network, Warning};
use num_complex::Complex64;

/// Settings of a comparison or a location.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalysisConfig {
    /// Window of the band-pass transform. Default Kaiser beta 9 (highest sidelobe about -66 dB, so a fault
    /// 20 dB under a strong neighbour stands well clear of its sidelobes).
    pub window: Window,
    /// Frequency at which power drops are quoted; default the band centre.
    pub reference_hz: Option<f64>,
    /// A measured drop of transmitted power to compare with what the findings explain, dB.
    pub observed_drop_db: Option<f64>,
}

impl Default for AnalysisConfig {
    fn default() -> Self {
        AnalysisConfig {
            window: Window::Kaiser { beta: 9.0 },
            reference_hz: None,
            observed_drop_db: None,
        }
    }
}

/// A named sweep.
#[derive(Debug, Clone, Copy)]
pub struct Sweep<'a> {
    pub name: &'a str,
    pub network: &'a Network,
    /// Its state's name, for reports (`warm`, `cold`, ...).
    pub state: &'static str,
}

/// Stage 1: one sweep analysed on `chain` in `which` state, up to a little past the chain's far end.
pub fn analyse(
    sweep: &Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    which: Which,
    engine: &mut TraceEngine,
) -> Result<SweepAnalysis, CompareError> {
    let s = s11_of(sweep)?;
    let f = &sweep.network.freqs_hz;
    let res0 = super::analysis::lobe_shape(&cfg.window, f[f.len() - 1] - f[0]).1;
    SweepAnalysis::new(
        f,
        &s,
        &cfg.window,
        t_max(chain, which, res0),
        chain,
        which,
        engine,
    )
}

/// The kind of [`no_line_file`]'s warning; the text reports print it first, set apart.
pub const NO_LINE_FILE: &str = "no-line-file";

/// The warning every result of a line of unknown construction carries.
pub fn no_line_file(chain: &ChainView) -> Option<Warning> {
    (!chain.as_built).then(|| {
        Warning::new(
            NO_LINE_FILE,
            "no line file: reflections are not loss-compensated (except where an open or short far end shows \
             the line's loss), so an echo far down the line reads weaker by the round-trip loss in front of it \
             (20 dB of loss makes a gap read ten times smaller); positions are metres of one uniform line",
            "pass --line LINE for as-built positions, element names and compensated reflections",
        )
    })
}

/// S11 of a sweep; an error for a sweep with no points.
pub fn s11_of(s: &Sweep) -> Result<Vec<Complex64>, CompareError> {
    if s.network.is_empty() {
        return Err(CompareError::Invalid(format!(
            "{}: the sweep has no points",
            s.name
        )));
    }
    Ok(s.network.s11())
}

/// Round-trip delay up to which a sweep is analysed: a little past the far end in its state.
pub fn t_max(chain: &ChainView, which: Which, resolution_s: f64) -> f64 {
    let t = chain.delay_to(chain.length_m(), which, None);
    if chain.as_built {
        t * 1.02 + 6.0 * resolution_s
    } else {
        // A uniform line of unknown construction is sized to the alias-free range already.
        t
    }
}

/// A uniform chain long enough for the whole alias-free range of the sweeps.
pub fn sized(chain: &ChainView, freqs: &[&[f64]]) -> ChainView {
    if chain.as_built {
        return chain.clone();
    }
    let seg = &chain.segments[0];
    let vf = 2.0 * (seg.end_m - seg.start_m) / (C0_M_PER_S * seg.delay_s[0]);
    let df = freqs
        .iter()
        .filter(|f| f.len() > 1)
        .map(|f| (f[f.len() - 1] - f[0]) / (f.len() - 1) as f64)
        .fold(0.0, f64::max);
    let len = if df > 0.0 {
        C0_M_PER_S * vf / (2.0 * df)
    } else {
        seg.end_m
    };
    let mut out = ChainView::uniform(&chain.name, vf, len, chain.impedance_ohm);
    out.segments[0].loss = seg.loss.map(|l| super::chain::LossModel {
        a_sqrt: l.a_sqrt * len / (seg.end_m - seg.start_m).max(1e-12),
        a_lin: l.a_lin * len / (seg.end_m - seg.start_m).max(1e-12),
        a_flat: 0.0,
    });
    out
}

/// The centre of a sweep's band, Hz.
pub fn band_centre(freqs: &[f64]) -> f64 {
    0.5 * (freqs[0] + freqs[freqs.len() - 1])
}

/// An amplitude in dB, 20 log10 |a| (floored at -400 dB).
pub fn db(a: f64) -> f64 {
    20.0 * a.max(1e-20).log10()
}
