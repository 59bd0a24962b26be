//! The comparator's front door for the command line and for scripts: read the files, resolve the line (a
//! line file, or a uniform line of a given velocity factor), settle each sweep's state (given, or inferred
//! and reported), and run [`compare`](super::compare) or [`locate`](super::locate).

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, Which};
use super::locate::locate;
use super::report::{CompareReport, LocateReport, StateReport};
use super::run::{compare, AnalysisConfig, Sweep};
use crate::line::{Line, State};
use crate::touchstone::read_file;
use crate::{Error, Network, Result, Warning};
use std::path::{Path, PathBuf};

/// What the line is known to be.
#[derive(Debug, Clone, PartialEq)]
pub enum LineSource {
    /// A line file.
    File(PathBuf),
    /// A line of unknown construction with this velocity factor.
    Uniform { velocity_factor: f64 },
}

/// A `compare` request, as plain data.
#[derive(Debug, Clone, PartialEq)]
pub struct CompareJob {
    pub baseline: PathBuf,
    pub current: PathBuf,
    pub line: LineSource,
    pub baseline_state: Option<State>,
    pub current_state: Option<State>,
    pub analysis: AnalysisConfig,
}

/// A `locate` request, as plain data.
#[derive(Debug, Clone, PartialEq)]
pub struct LocateJob {
    pub sweep: PathBuf,
    pub line: LineSource,
    pub state: Option<State>,
    pub analysis: AnalysisConfig,
}

/// A sweep read from a file, with the reader's warnings.
fn read_sweep(path: &Path) -> Result<(Network, Vec<Warning>)> {
    let t = read_file(path)?;
    if t.network.len() < 16 {
        return Err(Error::Usage(format!(
            "{}: {} frequency point(s); a reflectometry trace needs a sweep of many points (201 or more is usual)",
            path.display(),
            t.network.len()
        )));
    }
    let warnings = t
        .warnings
        .into_iter()
        .map(|w| {
            if w.location.is_none() {
                w.at(path.display().to_string())
            } else {
                w
            }
        })
        .collect();
    Ok((t.network, warnings))
}

fn state_name(s: State) -> &'static str {
    match s {
        State::Warm => "warm",
        State::Cold => "cold",
    }
}

/// Band edges of a sweep, Hz.
fn band(n: &Network) -> (f64, f64) {
    (n.freqs_hz[0], n.freqs_hz[n.len() - 1])
}

/// Infer the two sweeps' states.
///
/// With a line file: each hypothesis (warm -> cold, cold -> warm, one state) predicts where the baseline's
/// strong echoes fall in the current sweep; the hypothesis whose predictions miss the current echoes least
/// wins (misses capped at half a resolution cell, so a changed or missing echo cannot dominate). Cooling
/// moves echoes in cold sections by a few tenths of a percent of their delay, which the sub-bin peak
/// positions resolve. For a line of unknown construction only the far echo's strength can tell (a cold
/// line loses less); a difference under [`STATE_LOSS_DB`] is read as one state.
fn infer_states(
    b: &Network,
    c: &Network,
    line: Option<&Line>,
    cfg: &AnalysisConfig,
) -> (State, State, String) {
    let Some((ab, ac)) = quick_analyses(b, c, &cfg.window) else {
        return (
            State::Cold,
            State::Cold,
            "no echo was found in the sweeps; one state is assumed (give --baseline-state and --current-state)".into(),
        );
    };
    if let Some(line) = line {
        let (lo, hi) = band(c);
        let f_ref = 0.5 * (lo + hi);
        let res = ab.resolution_s.max(ac.resolution_s);
        let strong: Vec<f64> = ab
            .events
            .iter()
            .filter(|e| ab.snr(e.magnitude, e.delay_s) >= super::landmarks::LANDMARK_SNR)
            .map(|e| e.delay_s)
            .collect();
        let cost = |bs: State, cs: State| -> f64 {
            let chain = ChainView::from_line(line, bs, cs, lo, hi, f_ref);
            let end = chain.delay_to(chain.visible_end_m(), Which::Baseline, None) + res;
            strong
                .iter()
                .filter(|&&d| d <= end)
                .map(|&d| {
                    let x = chain.position_of(d, Which::Baseline, None);
                    let p = chain.delay_to(x, Which::Current, None);
                    let miss = ac
                        .events
                        .iter()
                        .map(|e| (e.delay_s - p).abs())
                        .fold(f64::INFINITY, f64::min);
                    miss.min(0.5 * res).powi(2)
                })
                .sum::<f64>()
        };
        let hyps = [
            (State::Warm, State::Cold),
            (State::Cold, State::Warm),
            (State::Cold, State::Cold),
        ];
        let costs: Vec<f64> = hyps.iter().map(|&(x, y)| cost(x, y)).collect();
        let k = (0..3)
            .min_by(|&x, &y| costs[x].total_cmp(&costs[y]))
            .unwrap_or(2);
        let rms = |c: f64| (c / strong.len().max(1) as f64).sqrt() * 1e12;
        let (bs, cs) = hyps[k];
        let what = match k {
            0 => "warm -> cold",
            1 => "cold -> warm",
            _ => "one state (taken as cold: a comparison across a thermal cycle)",
        };
        return (
            bs,
            cs,
            format!(
                "inferred {what}: the line model's predictions miss the current echoes by {:.2} ps rms, against \
                 {:.2} ps ({}) and {:.2} ps ({})",
                rms(costs[k]),
                rms(costs[(k + 1) % 3]),
                ["warm -> cold", "cold -> warm", "one state"][(k + 1) % 3],
                rms(costs[(k + 2) % 3]),
                ["warm -> cold", "cold -> warm", "one state"][(k + 2) % 3],
            ),
        );
    }
    match far_echo_change_db(&ab, &ac) {
        Some(amp_db) if amp_db >= STATE_LOSS_DB => (
            State::Warm,
            State::Cold,
            format!("inferred: the far echo is {amp_db:.1} dB stronger in the current sweep (less loss: colder)"),
        ),
        Some(amp_db) if amp_db <= -STATE_LOSS_DB => (
            State::Cold,
            State::Warm,
            format!("inferred: the far echo is {:.1} dB weaker in the current sweep (more loss: warmer)", -amp_db),
        ),
        Some(amp_db) => (
            State::Cold,
            State::Cold,
            format!(
                "inferred: the far echo's strength differs by only {amp_db:+.2} dB, so one state is assumed \
                 (taken as cold)"
            ),
        ),
        None => (
            State::Cold,
            State::Cold,
            "no echo was strong in both sweeps; one state is assumed (give --baseline-state and --current-state)".into(),
        ),
    }
}

/// Least change of the far echo's strength read as a change of state, dB (stainless lines lose about a third
/// less cold; a dB is well clear of a re-mated connector; common practice, no source).
pub const STATE_LOSS_DB: f64 = 1.0;

/// Both sweeps analysed as a uniform line over their common alias-free time.
fn quick_analyses(
    b: &Network,
    c: &Network,
    window: &crate::transform::Window,
) -> Option<(SweepAnalysis, SweepAnalysis)> {
    let mut engine = crate::transform::TraceEngine::new();
    let uni = ChainView::uniform("", 0.7, 1.0, 50.0);
    let alias = |n: &Network| (n.len() - 1) as f64 / (n.freqs_hz[n.len() - 1] - n.freqs_hz[0]);
    let t = alias(b).min(alias(c));
    let ab = SweepAnalysis::new(
        &b.freqs_hz,
        &b.s11(),
        window,
        t,
        &uni,
        Which::Baseline,
        &mut engine,
    )
    .ok()?;
    let ac = SweepAnalysis::new(
        &c.freqs_hz,
        &c.s11(),
        window,
        t,
        &uni,
        Which::Current,
        &mut engine,
    )
    .ok()?;
    Some((ab, ac))
}

/// Strength change (dB, current over baseline) of the farthest echo, within 30 dB of the strongest, that
/// both sweeps show within 2 % of each other's delay.
fn far_echo_change_db(ab: &SweepAnalysis, ac: &SweepAnalysis) -> Option<f64> {
    let top = ab.events.iter().map(|e| e.magnitude).fold(0.0, f64::max);
    ab.events
        .iter()
        .rev()
        .filter(|e| e.magnitude >= top * 10f64.powf(-30.0 / 20.0))
        .find_map(|eb| {
            ac.events
                .iter()
                .filter(|ec| (ec.delay_s / eb.delay_s - 1.0).abs() < 0.02)
                .max_by(|x, y| x.magnitude.total_cmp(&y.magnitude))
                .map(|ec| 20.0 * (ec.magnitude / eb.magnitude).log10())
        })
}

fn uniform_chain(name: &str, vf: f64, z0: f64) -> Result<ChainView> {
    if !(vf > 0.0 && vf <= 1.0) {
        return Err(Error::Usage(format!(
            "--vf {vf} is out of range; give the line's velocity factor in (0, 1], e.g. 0.695 for solid PTFE"
        )));
    }
    Ok(ChainView::uniform(name, vf, 1.0, z0))
}

/// The line a comparison or location runs on, already read.
#[derive(Debug, Clone, Copy)]
pub enum LineModel<'a> {
    /// A line read from a line file.
    Line(&'a Line),
    /// A line of unknown construction with this velocity factor.
    Uniform { velocity_factor: f64 },
}

/// Two sweeps already in memory, for [`compare_networks`] (the path scripts, tests and fleet surveys take).
#[derive(Debug, Clone, Copy)]
pub struct PairRequest<'a> {
    /// Name (for reports) and network of the baseline sweep.
    pub baseline: (&'a str, &'a Network),
    /// Name and network of the current sweep.
    pub current: (&'a str, &'a Network),
    pub line: LineModel<'a>,
    /// The states, when known; `None` is inferred from the data and reported.
    pub baseline_state: Option<State>,
    pub current_state: Option<State>,
    pub analysis: &'a AnalysisConfig,
}

/// Run a comparison.
pub fn run_compare(job: &CompareJob) -> Result<CompareReport> {
    let (nb, wb) = read_sweep(&job.baseline)?;
    let (nc, wc) = read_sweep(&job.current)?;
    let line = match &job.line {
        LineSource::File(p) => Some(crate::line::file::read_file(p)?),
        LineSource::Uniform { .. } => None,
    };
    let model = match (&line, &job.line) {
        (Some(l), _) => LineModel::Line(l),
        (None, LineSource::Uniform { velocity_factor }) => LineModel::Uniform {
            velocity_factor: *velocity_factor,
        },
        (None, LineSource::File(_)) => unreachable!("a line file was read above"),
    };
    let bname = job.baseline.display().to_string();
    let cname = job.current.display().to_string();
    let mut report = compare_networks(&PairRequest {
        baseline: (&bname, &nb),
        current: (&cname, &nc),
        line: model,
        baseline_state: job.baseline_state,
        current_state: job.current_state,
        analysis: &job.analysis,
    })?;
    let mut w = wb;
    w.extend(wc);
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}

/// Compare two sweeps already in memory.
pub fn compare_networks(req: &PairRequest) -> Result<CompareReport> {
    let (bname, nb) = req.baseline;
    let (cname, nc) = req.current;
    let line = match req.line {
        LineModel::Line(l) => Some(l),
        LineModel::Uniform { .. } => None,
    };
    let (bs, cs, inferred, basis) = match (req.baseline_state, req.current_state) {
        (Some(b), Some(c)) => (b, c, false, "given".to_string()),
        (b, c) => {
            let (ib, ic, why) = infer_states(nb, nc, line, req.analysis);
            (b.unwrap_or(ib), c.unwrap_or(ic), true, why)
        }
    };
    let (lo, hi) = band(nc);
    let chain = match req.line {
        LineModel::Line(l) => ChainView::from_line(l, bs, cs, lo, hi, 0.5 * (lo + hi)),
        LineModel::Uniform { velocity_factor } => {
            uniform_chain(cname, velocity_factor, nc.reference_ohm[0])?
        }
    };
    let states = StateReport {
        baseline: state_name(bs),
        current: state_name(cs),
        inferred,
        basis,
    };
    let mut report = compare(
        Sweep {
            name: bname,
            network: nb,
            state: state_name(bs),
        },
        Sweep {
            name: cname,
            network: nc,
            state: state_name(cs),
        },
        &chain,
        req.analysis,
        states,
    )?;
    let mut w = Vec::new();
    if let Some(l) = line {
        w.extend(l.warnings.iter().cloned());
        report.visibility = crate::line::visibility(l, cs, &nc.freqs_hz, report.noise_rms)?;
    }
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}

/// Run a location on one sweep.
pub fn run_locate(job: &LocateJob) -> Result<LocateReport> {
    let (n, w0) = read_sweep(&job.sweep)?;
    let line = match &job.line {
        LineSource::File(p) => Some(crate::line::file::read_file(p)?),
        LineSource::Uniform { .. } => None,
    };
    let model = match (&line, &job.line) {
        (Some(l), _) => LineModel::Line(l),
        (None, LineSource::Uniform { velocity_factor }) => LineModel::Uniform {
            velocity_factor: *velocity_factor,
        },
        (None, LineSource::File(_)) => unreachable!("a line file was read above"),
    };
    let name = job.sweep.display().to_string();
    let mut report = locate_network(&name, &n, model, job.state, &job.analysis)?;
    let mut w = w0;
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}

/// Locate every discontinuity of one sweep already in memory; `state` `None` is inferred where the line
/// allows it, and reported.
pub fn locate_network(
    name: &str,
    n: &Network,
    line: LineModel,
    state: Option<State>,
    analysis: &AnalysisConfig,
) -> Result<LocateReport> {
    let (lo, hi) = band(n);
    let st = state.unwrap_or(State::Cold);
    let mut w = Vec::new();
    let chain = match line {
        LineModel::Line(l) => {
            w.extend(l.warnings.iter().cloned());
            ChainView::from_line(l, st, st, lo, hi, 0.5 * (lo + hi))
        }
        LineModel::Uniform { velocity_factor } => {
            uniform_chain(name, velocity_factor, n.reference_ohm[0])?
        }
    };
    let mut report = locate(
        Sweep {
            name,
            network: n,
            state: state_name(st),
        },
        &chain,
        analysis,
    )?;
    if let LineModel::Line(l) = line {
        report.visibility = crate::line::visibility(l, st, &n.freqs_hz, report.noise_rms)?;
        if state.is_none() {
            w.push(Warning::new(
                "state-assumed",
                "the sweep's state was not given; the line model is used cold",
                "pass --state warm for a sweep taken at room temperature",
            ));
        }
    }
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}
