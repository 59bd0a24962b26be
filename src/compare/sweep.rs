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
    let amplified = chain.gain_in_path || shows_gain(sweep)?;
    analyse_found(sweep, chain, cfg, which, engine, amplified)
}

/// [`analyse_through`] afresh, the gain (where `amplified`) found from the sweep itself.
pub fn analyse_found(
    sweep: &Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    which: Which,
    engine: &mut TraceEngine,
    amplified: bool,
) -> Result<SweepAnalysis, CompareError> {
    analyse_through(
        sweep,
        chain,
        cfg,
        which,
        engine,
        PathGain::found(amplified),
        None,
    )
}

/// Power a passive line may return, band-averaged, over what it is sent, dB: at most all of it (0 dB). A
/// calibrated sweep of an open reads a few hundredths above 1 at most (the real campaign's, 1.03), and a
/// sum of echoes each taken without the transmission through the others (a first-order simulation) a
/// fraction more; 3 dB over is gain (common practice, no source).
pub const PASSIVE_POWER_LIMIT_DB: f64 = 3.0;

/// Power a reflection returns over what it is sent, band-averaged (mean |S11|^2), dB.
pub fn returned_power_db(s11: &[Complex64]) -> f64 {
    let mean = s11.iter().map(|g| g.norm_sqr()).sum::<f64>() / s11.len().max(1) as f64;
    10.0 * mean.log10()
}

/// Largest |S11| a passive port may read at any one frequency, dB: 1 (0 dB), and a calibrated sweep a few
/// hundredths over at a band edge (the real campaign's largest, 1.03); 3 dB over (1.41) is gain (common
/// practice, no source).
pub const PASSIVE_PEAK_LIMIT_DB: f64 = 3.0;

/// Whether `sweep` returns more than a passive line can: more power over the band ([`returned_power_db`]
/// over [`PASSIVE_POWER_LIMIT_DB`]), or more than it was sent at some frequency (|S11| over
/// [`PASSIVE_PEAK_LIMIT_DB`]). An amplifier lies in its path.
pub fn shows_gain(sweep: &Sweep) -> Result<bool, CompareError> {
    let s = s11_of(sweep)?;
    // The largest |S11| as the root of the largest |S11|^2 (one root, not one per point).
    let peak = s.iter().map(|g| g.norm_sqr()).fold(0.0, f64::max).sqrt();
    Ok(returned_power_db(&s) > PASSIVE_POWER_LIMIT_DB || db(peak) > PASSIVE_PEAK_LIMIT_DB)
}

/// The warning of a result whose reflections' size nothing sets, an amplifier in the path (`capped`: how
/// many findings were kept at info for it).
pub fn gain_scale_unknown(capped: usize) -> Warning {
    Warning::new(
        "gain-scale-unknown",
        format!(
            "an amplifier lies in the line's path and the sweeps show no open or short end and too few of the \
             line file's joints to tell how strong their reflections are: {capped} change(s) that would have \
             been reported above info are reported at info"
        ),
        "sweep the passive line without the amplifier, or from its other end",
    )
}

/// The words a finding kept at info by [`gain_scale_unknown`] carries.
pub const GAIN_SCALE_UNKNOWN_NOTE: &str =
    " (the amplifier in the path leaves the reflection's size unknown: the cost is not known)";

/// [`analyse`], told whether an amplifier lies in the sweep's path and what sets its gain (`gain`: this
/// sweep or the other of its pair returned more power than it was sent, the same amplifier being in both,
/// or the line file declares it; the gain found from this sweep alone or known from the pair), and given an
/// earlier analysis of the same sweep whose compensated pieces it may take ([`SweepAnalysis::again`]).
pub fn analyse_through(
    sweep: &Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    which: Which,
    engine: &mut TraceEngine,
    gain: PathGain,
    prior: Option<&SweepAnalysis>,
) -> Result<SweepAnalysis, CompareError> {
    let mut s = s11_of(sweep)?;
    let f = &sweep.network.freqs_hz;
    let res0 = super::analysis::lobe_shape(&cfg.window, f[f.len() - 1] - f[0]).1;
    let t_end = t_max(chain, which, res0);
    let run = |s: &[Complex64], engine: &mut TraceEngine| {
        SweepAnalysis::again(f, s, &cfg.window, t_end, chain, which, engine, prior)
    };
    let known = match gain {
        PathGain::None => return run(&s, engine),
        PathGain::FromSweep => None,
        PathGain::Known { gain, scale_known } => Some((gain.max(1e-300), scale_known)),
    };
    let (a, path_gain) = match known {
        // The gain known from elsewhere (the other sweep of a pair): taken out as it is.
        Some((g, known)) => {
            for x in &mut s {
                *x /= g;
            }
            let mut a = run(&s, engine)?;
            a.scale_known = known;
            (a, g)
        }
        None => scale_down(&mut s, chain, which, |s, e| run(s, e), engine)?,
    };
    Ok(with_gain_warning(a, path_gain, sweep, chain))
}

/// How much gain a sweep's analysis takes out before reading it as a passive line's.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PathGain {
    /// No amplifier in the path: the sweep is read as it is.
    None,
    /// An amplifier in the path, whose gain the sweep itself sets (its largest reflection, its open or short
    /// end, or its joints: [`analyse_through`]).
    FromSweep,
    /// An amplifier in the path whose round-trip amplitude gain (linear) is known from elsewhere (the other
    /// sweep of a pair, `run::pair_gain`), and whether that sets the reflections' size.
    Known { gain: f64, scale_known: bool },
}

impl PathGain {
    /// [`PathGain::FromSweep`] when `amplified`, else [`PathGain::None`].
    pub fn found(amplified: bool) -> PathGain {
        if amplified {
            PathGain::FromSweep
        } else {
            PathGain::None
        }
    }
}

/// The gain in a sweep's path taken out of `s` by the sweep alone, `run` analysing the scaled sweep: the
/// analysis of what is left and the gain (linear) taken out.
fn scale_down(
    s: &mut [Complex64],
    chain: &ChainView,
    which: Which,
    run: impl Fn(&[Complex64], &mut TraceEngine) -> Result<SweepAnalysis, CompareError>,
    engine: &mut TraceEngine,
) -> Result<(SweepAnalysis, f64), CompareError> {
    // Gain in the path (an amplifier in front of the line): a passive line reflects at most all, so the
    // sweep is scaled down until its largest reflection reads 1. The gain found is a lower bound of the
    // amplifier's: reflections read no smaller than they are, and costs read from them are upper bounds.
    let mut path_gain = s.iter().map(|g| g.norm()).fold(0.0, f64::max).max(1e-300);
    for g in s.iter_mut() {
        *g /= path_gain;
    }
    let mut a = run(s, engine)?;
    // What sets the scale: an open or short end that the line file gives, when its echo stands clear of the
    // compensation's cap (scaled down further until it reads all); else the joints (until their typical
    // echo reads as a joint's); else nothing. The largest reflection is the end's only on a line that loses
    // little: behind attenuators a joint in front of them is larger.
    let (extra, known) = match total_end_level(&a, chain, which) {
        Some(m) => (m.max(1.0), true),
        None => match joint_level(&a, chain, which) {
            Some((m, from_joints)) => ((m / TYPICAL_JOINT_REFLECTION).max(1.0), from_joints),
            None => (1.0, false),
        },
    };
    if extra > 1.0 {
        for g in s.iter_mut() {
            *g /= extra;
        }
        path_gain *= extra;
        a = run(s, engine)?;
    }
    a.scale_known = known;
    Ok((a, path_gain))
}

/// Analysis `a` of `sweep` with `path_gain` (linear) taken out: the gain recorded and the `gain-in-path`
/// warning added.
fn with_gain_warning(
    mut a: SweepAnalysis,
    path_gain: f64,
    sweep: &Sweep,
    chain: &ChainView,
) -> SweepAnalysis {
    a.path_gain_db = Some(db(path_gain));
    a.warnings.push(Warning::new(
        "gain-in-path",
        format!(
            "{}: an amplifier lies in the line's path ({}); this sweep is read as a passive line's with \
             {:.1} dB of gain taken out (its largest reflection at most total, its joints at a few per cent), \
             so reflections and costs are estimates, and a change of the gain is a level change of the whole \
             trace",
            sweep.name,
            if chain.gain_in_path {
                "the line file says so: gain_in_path = true"
            } else {
                "a sweep of it returns more power than it was sent, at some frequency or over the band, or \
                 every joint of the line file both sweeps show (all but one of three or more) reflects as no \
                 passive joint does"
            },
            db(path_gain)
        ),
        "give the amplifier's gain and match in its own sweep, or sweep the passive line without it",
    ));
    a
}

/// Typical reflection of a good joint of the line, for setting the scale of a sweep taken through gain:
/// a few per cent (a good SMA-family joint of 0.086-in coax reflects 1-5 % up to 10 GHz; common practice,
/// no source).
pub const TYPICAL_JOINT_REFLECTION: f64 = 0.03;

/// Fewest joints whose echoes set a scale ([`joint_level`]).
pub const MIN_SCALE_JOINTS: usize = 2;

/// The median strength of the line file's joints as sweep `a` (analysed on `chain` in state `which`) shows
/// them, and true: for each connector clear of the reference plane and of the visible end by more than a
/// resolution cell, and in front of any place where the compensation stopped at its cap, the strongest echo
/// within a cell of its place. With fewer than [`MIN_SCALE_JOINTS`] joints seen, the median of every echo
/// clear of both ends, and false (a weaker scale: the line's faint ripples count as joints there). `None`
/// on a line of unknown construction or with fewer than [`MIN_SCALE_JOINTS`] echoes.
pub fn joint_level(a: &SweepAnalysis, chain: &ChainView, which: Which) -> Option<(f64, bool)> {
    if !chain.as_built {
        return None;
    }
    let (mut levels, clear) = joint_levels(a, chain, which);
    if levels.len() < MIN_SCALE_JOINTS {
        // Too few joints of the line file seen: every echo on the visible line clear of both ends (most of
        // a line's echoes are joints').
        levels = a
            .events
            .iter()
            .filter(|e| clear(chain.position_of(e.delay_s, which, None)))
            .map(|e| e.magnitude)
            .collect();
        if levels.len() < MIN_SCALE_JOINTS {
            return None;
        }
        return Some((crate::numeric::median(&mut levels), false));
    }
    Some((crate::numeric::median(&mut levels), true))
}

/// The weakest of the line file's joints as sweep `a` (analysed on `chain` in state `which`) shows them
/// (as [`joint_level`] picks them), when it shows at least [`MIN_SCALE_JOINTS`]; with more than that, the
/// weakest but one (two joints within a resolution cell of each other, about a pad's step of the
/// compensation, may read one another's echo, one of them low). `None` on a line of unknown construction
/// or with fewer joints seen.
pub fn joint_floor(a: &SweepAnalysis, chain: &ChainView, which: Which) -> Option<f64> {
    if !chain.as_built {
        return None;
    }
    let (mut levels, _) = joint_levels(a, chain, which);
    if levels.len() < MIN_SCALE_JOINTS {
        return None;
    }
    levels.sort_by(f64::total_cmp);
    Some(levels[usize::from(levels.len() > MIN_SCALE_JOINTS)])
}

/// For each connector of the line file clear of the reference plane and of the visible end by more than a
/// resolution cell, and in front of any place where the compensation stopped at its cap, the strongest
/// echo of sweep `a` within a cell of its place; and the test of a place's being clear.
fn joint_levels<'a>(
    a: &'a SweepAnalysis,
    chain: &'a ChainView,
    which: Which,
) -> (Vec<f64>, impl Fn(f64) -> bool + 'a) {
    let levels = joints(chain)
        .filter_map(|x| joint_echo(a, chain, which, x))
        .map(|e| e.magnitude)
        .collect();
    (levels, move |x| joint_clear(a, chain, which, x))
}

/// The middles of the line file's connectors, from the port on.
fn joints(chain: &ChainView) -> impl Iterator<Item = f64> + '_ {
    chain
        .segments
        .iter()
        .filter(|s| s.kind == super::chain::SegmentKind::Connector)
        .map(|s| 0.5 * (s.start_m + s.end_m))
}

/// Whether place `x` (as-built m) is clear of the reference plane and the visible end by a resolution cell
/// of sweep `a` (`which` state), and not behind so much loss that the compensation stopped at its cap
/// (such an echo reads low by what it left undone).
fn joint_clear(a: &SweepAnalysis, chain: &ChainView, which: Which, x: f64) -> bool {
    let cell = a.resolution_s * super::place::speed_at(chain, x, which);
    let f_top = a.freqs.last().copied().unwrap_or(0.0);
    x >= 1.5 * cell
        && x <= chain.visible_end_m() - cell
        && super::difference::cap_shortfall_db(chain, x, f_top, which) <= 0.0
}

/// The strongest echo of sweep `a` (`which` state) within a resolution cell of the joint at `x`, when the
/// place is clear ([`joint_clear`]).
fn joint_echo<'a>(
    a: &'a SweepAnalysis,
    chain: &ChainView,
    which: Which,
    x: f64,
) -> Option<&'a super::detect::Peak> {
    if !joint_clear(a, chain, which, x) {
        return None;
    }
    let cell = a.resolution_s * super::place::speed_at(chain, x, which);
    a.events
        .iter()
        .filter(|e| (chain.position_of(e.delay_s, which, None) - x).abs() <= cell)
        .max_by(|p, q| p.magnitude.total_cmp(&q.magnitude))
}

/// The strength of the open or short that the line file says ends the visible line, as sweep `a` (analysed
/// on `chain` in state `which`) shows it: the strongest echo within a resolution cell, or 1 % of its
/// distance, of its place. `None` on a line of unknown construction, one that no open or short ends, one
/// whose end lies behind so much loss that the compensation stopped at its cap (its echo reads low by what
/// was left undone), or where no echo is seen there.
pub fn total_end_level(a: &SweepAnalysis, chain: &ChainView, which: Which) -> Option<f64> {
    if !ends_total(chain) {
        return None;
    }
    let x = chain.visible_end_m();
    let f_top = a.freqs.last().copied().unwrap_or(0.0);
    if super::difference::cap_shortfall_db(chain, x, f_top, which) > 0.0 {
        return None;
    }
    let tol = (a.resolution_s * super::place::speed_at(chain, x, which)).max(END_PLACE_SHARE * x);
    a.events
        .iter()
        .filter(|e| (chain.position_of(e.delay_s, which, None) - x).abs() <= tol)
        .map(|e| e.magnitude)
        .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))))
}

/// Share of its distance within which an open or short end's echo is looked for around the line file's
/// place of it (twice the cold model's error of a delay, `difference::COLD_DELAY_ERROR`).
pub const END_PLACE_SHARE: f64 = 0.01;

/// Whether the line file says an open or short ends the visible line.
fn ends_total(chain: &ChainView) -> bool {
    chain.as_built
        && chain.first_blocking().is_some_and(|i| {
            matches!(
                chain.segments[i].load,
                Some(crate::line::Load::Open | crate::line::Load::Short)
            )
        })
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

/// For each connector of the line file that both sweeps show clear of the reference plane, the visible end
/// and the compensation's cap (as [`joint_level`] picks them), its place and its echo's strength in each:
/// (as-built position m, baseline magnitude, current magnitude, the weaker echo's signal-to-noise ratio).
pub fn joint_level_pairs(
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    chain: &ChainView,
) -> Vec<(f64, f64, f64, f64)> {
    if !chain.as_built {
        return Vec::new();
    }
    joints(chain)
        .filter_map(|x| {
            let eb = joint_echo(b, chain, Which::Baseline, x)?;
            let ec = joint_echo(c, chain, Which::Current, x)?;
            let snr = b
                .snr(eb.magnitude, eb.delay_s)
                .min(c.snr(ec.magnitude, ec.delay_s));
            Some((x, eb.magnitude, ec.magnitude, snr))
        })
        .collect()
}
