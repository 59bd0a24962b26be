//! The comparator's front door for the command line and for scripts: read the files, resolve the line (a
//! line file, or a uniform line of a given velocity factor), settle each sweep's state (given, or inferred
//! and reported), and run [`compare`](super::compare) or [`locate`](mod@super::locate).

use super::chain::{ChainView, Which};
use super::locate::{expected_echoes, locate_in, mark_expected, rank_events};
use super::report::{CompareReport, LocateReport, StateReport};
use super::run::{compare_in, Detail};
use super::severity::Severity;
use super::states::{
    decide, model_signatures, pair_signatures, quick_analyses, Hypothesis, OPEN_MARGIN,
};
use super::sweep::{AnalysisConfig, Sweep};
use crate::line::{Line, State};
use crate::touchstone::{is_stdin, read_source, stdin_name};
use crate::transform::TraceEngine;
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
    pub source: SweepSource,
}

/// A `locate` request, as plain data.
#[derive(Debug, Clone, PartialEq)]
pub struct LocateJob {
    pub sweep: PathBuf,
    pub line: LineSource,
    pub state: Option<State>,
    pub analysis: AnalysisConfig,
    pub source: SweepSource,
}

/// Which reflection of a sweep is analysed, and the port count of a sweep read from standard input.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct SweepSource {
    /// Zero-based port whose reflection is analysed (`--param S22` is 1). `None`: port 1, with a
    /// `port-s11` warning for a sweep of more ports.
    pub port: Option<usize>,
    /// The port count of a sweep read from standard input (`-`), which a `.sNp` name would give.
    pub stdin_ports: Option<usize>,
}

/// The name a sweep goes by in reports: its path, or `<stdin>.sNp` for standard input.
fn shown_name(path: &Path, source: SweepSource) -> PathBuf {
    if is_stdin(path) {
        stdin_name(source.stdin_ports)
    } else {
        path.to_path_buf()
    }
}

/// A sweep read from a file (or standard input, `-`), reduced to the reflection `source` asks for, with
/// the reader's warnings.
fn read_sweep(path: &Path, source: SweepSource) -> Result<(Network, Vec<Warning>)> {
    let shown = shown_name(path, source);
    let (n, mut w) = sweep_of(read_source(path, source.stdin_ports)?, &shown)?;
    if source.port.is_none() && n.ports > 1 {
        w.push(crate::network::first_port_warning(n.ports).at(shown.display().to_string()));
    }
    let n = n
        .reflection_at(source.port.unwrap_or(0))
        .map_err(|e| Error::Usage(format!("{}: --param {e}", shown.display())))?;
    Ok((n, w))
}

/// A sweep the reader returned for `path`, checked to have enough points for a trace, with the reader's
/// warnings located at the file (what `compare`, `locate` and `history record` read).
pub(crate) fn sweep_of(
    t: crate::touchstone::Touchstone,
    path: &Path,
) -> Result<(Network, Vec<Warning>)> {
    if t.network.len() < crate::limits::MIN_TRACE_POINTS {
        return Err(Error::Usage(format!(
            "{}: {} frequency point(s); a reflectometry trace needs at least {} (201 or more is usual)",
            path.display(),
            t.network.len(),
            crate::limits::MIN_TRACE_POINTS
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
    s.name()
}

/// Band edges of a sweep, Hz.
fn band(n: &Network) -> (f64, f64) {
    (n.freqs_hz[0], n.freqs_hz[n.len() - 1])
}

/// Settle a pair's states: the given ones, the inferred ones, or a mix (one given, the other inferred), with
/// the signatures, the margin and the hypotheses left open (see `states`), on `engine`'s transform plans
/// (see [`compare_networks_in`]).
pub fn decide_pair_states(
    nb: &Network,
    nc: &Network,
    line: Option<&Line>,
    given: (Option<State>, Option<State>),
    cfg: &AnalysisConfig,
    engine: &mut TraceEngine,
) -> Result<(StateReport, Vec<Hypothesis>)> {
    let mut signatures = Vec::new();
    let both_given = given.0.is_some() && given.1.is_some();
    // The line file's warm and cold models on the baseline's band: how far the quick analyses read, and
    // the loss ratio the far end's change is checked against.
    let (lo, hi) = (nb.freqs_hz[0], nb.freqs_hz[nb.len() - 1]);
    let models = line.map(|l| super::states::line_models(l, lo, hi));
    let span = models
        .as_ref()
        .and_then(|m| super::states::quick_span(m, lo, hi));
    if let Some((ab, ac)) = quick_analyses(nb, nc, span, &cfg.window, engine) {
        signatures.extend(pair_signatures(&ab, &ac, engine)?);
        if let Some(r) = models
            .as_ref()
            .and_then(super::states::model_cold_over_warm)
        {
            super::states::check_loss_ratio(&mut signatures, r);
        }
        // With both states given, the pair's own signatures are enough to warn of a contradiction.
        if let (Some(l), Some(mb), false) = (line, models.as_ref(), both_given) {
            signatures.extend(model_signatures(&ab, mb, "baseline", engine)?);
            // The current sweep's band gets models of its own where it is not the baseline's.
            let (c_lo, c_hi) = (nc.freqs_hz[0], nc.freqs_hz[nc.len() - 1]);
            let own;
            let mc = if (c_lo, c_hi) == (lo, hi) {
                mb
            } else {
                own = super::states::line_models(l, c_lo, c_hi);
                &own
            };
            signatures.extend(model_signatures(&ac, mc, "current", engine)?);
        }
    }
    // Without a line file nothing tells warm->warm from cold->cold, and nothing depends on it.
    let pool: Vec<Hypothesis> = Hypothesis::ALL
        .iter()
        .copied()
        .filter(|h| line.is_some() || *h != Hypothesis::WarmWarm)
        .collect();
    let all = decide(signatures.clone(), &pool);
    let fits = |h: Hypothesis| {
        let (b, c) = h.states();
        given.0.map_or(true, |g| g == b) && given.1.map_or(true, |g| g == c)
    };
    let allowed: Vec<Hypothesis> = Hypothesis::ALL
        .iter()
        .copied()
        .filter(|&h| fits(h))
        .collect();
    let allowed: Vec<Hypothesis> = if allowed.iter().any(|h| pool.contains(h)) {
        allowed.into_iter().filter(|h| pool.contains(h)).collect()
    } else {
        allowed
    };
    let d = decide(signatures, &allowed);
    let (b, c) = d.chosen.states();
    let total = |dd: &super::states::StateDecision, h: Hypothesis| {
        dd.totals.iter().find(|t| t.0 == h).map_or(0.0, |t| t.1)
    };
    let contradicted = (total(&all, d.chosen) - total(&all, all.chosen))
        .max(0.0)
        .sqrt();
    let mut basis = if given.0.is_some() && given.1.is_some() {
        "given".to_string()
    } else {
        d.basis()
    };
    if given.0.is_some() != given.1.is_some() {
        basis = format!(
            "{} given; {}",
            if given.0.is_some() {
                "baseline"
            } else {
                "current"
            },
            basis
        );
    }
    if (given.0.is_some() || given.1.is_some()) && contradicted >= OPEN_MARGIN {
        basis.push_str(&format!(
            "; the data favour {} by {:.1} sigma over the states given",
            all.chosen.name(),
            contradicted
        ));
    }
    let inferred = given.0.is_none() || given.1.is_none();
    let open = if given.0.is_some() && given.1.is_some() {
        vec![d.chosen]
    } else {
        d.open.clone()
    };
    Ok((
        StateReport {
            baseline: b.name(),
            current: c.name(),
            inferred,
            basis,
            signatures: d.signatures,
            margin: (inferred && d.margin.is_finite()).then_some(d.margin),
            hypotheses_open: open.clone(),
        },
        open,
    ))
}

/// How many times the line's round-trip delay to its visible end the alias-free record of the nominal
/// line's simulated sweep spans (`locate` with a line file): room for the far end's multiple reflections
/// and the window's skirt before the record folds (common practice, no source).
pub const NOMINAL_ALIAS_MARGIN: f64 = 3.0;

/// Fewest points of that simulated sweep.
pub const MIN_NOMINAL_POINTS: usize = 401;

/// Keep above info only what `other` (the same pair under another open hypothesis) also finds there, at the
/// lesser severity and cost of the two.
fn intersect(report: &mut CompareReport, other: &CompareReport, h: Hypothesis) {
    for f in report
        .findings
        .iter_mut()
        .filter(|f| f.severity > Severity::Info)
    {
        // The same change read under another alignment may sit a cell or so away.
        let tol = (3.0 * report.resolution_m.max(other.resolution_m))
            .max(f.uncertainty_m + f.uncertainty_m);
        let twin = other
            .findings
            .iter()
            .filter(|g| g.severity > Severity::Info)
            .filter(|g| (g.place.distance_m - f.place.distance_m).abs() <= tol.max(g.uncertainty_m))
            .min_by(|a, b| a.severity.cmp(&b.severity));
        match twin {
            Some(g) => {
                if g.severity < f.severity {
                    f.severity = g.severity;
                }
                f.power_drop_db = f.power_drop_db.min(g.power_drop_db);
                f.power_drop_range_db[1] = f.power_drop_range_db[1].min(g.power_drop_range_db[1]);
                f.power_drop_range_db[0] = f.power_drop_range_db[0].min(f.power_drop_range_db[1]);
            }
            None => {
                f.severity = Severity::Info;
                f.explanation.push_str(&format!(
                    " (not a change under {}, which the data also allow)",
                    h.name()
                ));
            }
        }
    }
    super::run::rank(&mut report.findings);
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

/// The line file of `src`, read (`None` for a uniform line).
fn read_line(src: &LineSource) -> Result<Option<Line>> {
    Ok(match src {
        LineSource::File(p) => Some(crate::line::file::read_file(p)?),
        LineSource::Uniform { .. } => None,
    })
}

/// The line a job runs on: the line file read by [`read_line`], or the uniform line of `src`.
fn line_model<'a>(line: &'a Option<Line>, src: &LineSource) -> LineModel<'a> {
    match (line, src) {
        (Some(l), _) => LineModel::Line(l),
        (None, LineSource::Uniform { velocity_factor }) => LineModel::Uniform {
            velocity_factor: *velocity_factor,
        },
        (None, LineSource::File(_)) => unreachable!("read_line reads every line file"),
    }
}

/// Run a comparison.
pub fn run_compare(job: &CompareJob) -> Result<CompareReport> {
    run_compare_in(job, &mut TraceEngine::new())
}

/// [`run_compare`] on `engine`'s plans (see [`compare_networks_in`]).
pub fn run_compare_in(job: &CompareJob, engine: &mut TraceEngine) -> Result<CompareReport> {
    run_compare_with(job, engine, Detail::Full)
}

/// [`run_compare_in`] for a caller that keeps the findings only (a fleet survey's worker): every finding
/// as it gives them (`Detail::Findings`), ranked alike, while the report's plot data, each finding's
/// evidence curves and the line's visibility table are left empty. A fleet survey keeps thousands of
/// lines' findings at once; the curves (a few thousand numbers a finding) would make its memory grow with
/// the fleet.
pub fn run_compare_findings_in(
    job: &CompareJob,
    engine: &mut TraceEngine,
) -> Result<CompareReport> {
    run_compare_with(job, engine, Detail::Findings)
}

fn run_compare_with(
    job: &CompareJob,
    engine: &mut TraceEngine,
    detail: Detail,
) -> Result<CompareReport> {
    let (nb, wb) = read_sweep(&job.baseline, job.source)?;
    let (nc, wc) = read_sweep(&job.current, job.source)?;
    let line = read_line(&job.line)?;
    let model = line_model(&line, &job.line);
    let bname = shown_name(&job.baseline, job.source).display().to_string();
    let cname = shown_name(&job.current, job.source).display().to_string();
    let mut report = compare_networks_with(
        &PairRequest {
            baseline: (&bname, &nb),
            current: (&cname, &nc),
            line: model,
            baseline_state: job.baseline_state,
            current_state: job.current_state,
            analysis: &job.analysis,
        },
        engine,
        detail,
    )?;
    let mut w = wb;
    w.extend(wc);
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}

/// Compare two sweeps already in memory: settle the states, run the comparison under the hypothesis chosen
/// and under every other one the data leave open, and keep above info only what is a change under all.
pub fn compare_networks(req: &PairRequest) -> Result<CompareReport> {
    compare_networks_in(req, &mut TraceEngine::new())
}

/// [`compare_networks`] on `engine`'s transform plans and window coefficients. Keep one engine for many
/// pairs on one grid (a fleet survey's worker does): each plan is then built once, not once per pair. The
/// report does not depend on what the engine already holds.
pub fn compare_networks_in(req: &PairRequest, engine: &mut TraceEngine) -> Result<CompareReport> {
    compare_networks_with(req, engine, Detail::Full)
}

fn compare_networks_with(
    req: &PairRequest,
    engine: &mut TraceEngine,
    detail: Detail,
) -> Result<CompareReport> {
    let (bname, nb) = req.baseline;
    let (cname, nc) = req.current;
    let line = match req.line {
        LineModel::Line(l) => Some(l),
        LineModel::Uniform { .. } => None,
    };
    let (states, open) = decide_pair_states(
        nb,
        nc,
        line,
        (req.baseline_state, req.current_state),
        req.analysis,
        engine,
    )?;
    let (lo, hi) = band(nc);
    let mut run = |h: Hypothesis, states: StateReport, detail: Detail| -> Result<CompareReport> {
        let (bs, cs) = h.states();
        let chain = match req.line {
            LineModel::Line(l) => ChainView::from_line(l, bs, cs, lo, hi, 0.5 * (lo + hi)),
            LineModel::Uniform { velocity_factor } => {
                uniform_chain(cname, velocity_factor, nc.reference_ohm[0])?
            }
        };
        Ok(compare_in(
            Sweep {
                name: bname,
                network: nb,
                state: bs.name(),
            },
            Sweep {
                name: cname,
                network: nc,
                state: cs.name(),
            },
            &chain,
            req.analysis,
            h,
            states,
            detail,
            engine,
        )?)
    };
    let mut report = run(open[0], states.clone(), detail)?;
    // Another hypothesis can only take findings above info down (`intersect`): with none, there is nothing
    // to run it for, and what it would find at info is not reported.
    let claims = |r: &CompareReport| r.findings.iter().any(|f| f.severity > Severity::Info);
    for &h in &open[1..] {
        if !claims(&report) {
            break;
        }
        let other = run(h, states.clone(), Detail::AboveInfo)?;
        intersect(&mut report, &other, h);
    }
    let cs = open[0].states().1;
    let mut w = Vec::new();
    if let Some(l) = line {
        w.extend(l.warnings.iter().cloned());
        if detail == Detail::Full {
            report.visibility = crate::line::visibility(l, cs, &nc.freqs_hz, report.noise_rms)?;
        }
        report.connector_lengths = Some(l.connector_lengths.name().to_string());
    }
    if states.inferred && open.len() > 1 {
        w.push(Warning::new(
            "states-uncertain",
            format!(
                "the states are not settled by the data ({}); only changes seen under every one of them are \
                 reported above info",
                open.iter().map(|h| h.name()).collect::<Vec<_>>().join(", ")
            ),
            "give --baseline-state and --current-state when you know them",
        ));
    }
    if (!states.inferred || req.baseline_state.is_some() || req.current_state.is_some())
        && states.basis.contains("the data favour")
    {
        {
            w.push(Warning::new(
                "states-contradicted",
                format!("the states given disagree with the data: {}", states.basis),
                "check --baseline-state and --current-state",
            ));
        }
    }
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}

/// Run a location on one sweep.
pub fn run_locate(job: &LocateJob) -> Result<LocateReport> {
    let (n, w0) = read_sweep(&job.sweep, job.source)?;
    let line = read_line(&job.line)?;
    let model = line_model(&line, &job.line);
    let name = shown_name(&job.sweep, job.source).display().to_string();
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
    // One engine for the state check, the location and the nominal line's: each plan and each sweep's
    // gates are prepared once.
    let mut engine = TraceEngine::new();
    let (st, basis, margin) = match (state, line) {
        (Some(s), _) => (s, "given".to_string(), None),
        (None, LineModel::Line(l)) => {
            super::states::decide_single_in(n, l, &analysis.window, &mut engine)?
        }
        (None, LineModel::Uniform { .. }) => (
            State::Cold,
            "no line file: nothing tells warm from cold; taken as cold".to_string(),
            None,
        ),
    };
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
    let mut report = locate_in(
        Sweep {
            name,
            network: n,
            state: state_name(st),
        },
        &chain,
        analysis,
        true,
        &mut engine,
    )?;
    if let LineModel::Line(l) = line {
        // The echoes the line is built to give: its nominal self, without faults, on the same grid. A line
        // too large to simulate (limits::MAX_SIMULATION_WORK) is located without them, and says so.
        // Its echoes' places and strengths need the sweep's band (the resolution), not its point count: a
        // grid just long enough for the line's round trip, twice over, costs a fraction of a dense sweep's.
        let t_end = chain.delay_to(chain.visible_end_m(), Which::Current, None);
        let needed = (NOMINAL_ALIAS_MARGIN * t_end * (hi - lo)).ceil() as usize + 1;
        let mut sim = crate::line::SimConfig::linear(st, lo, hi, needed.max(MIN_NOMINAL_POINTS));
        if sim.freqs_hz.len() >= n.freqs_hz.len() {
            sim.freqs_hz = n.freqs_hz.clone();
        }
        match crate::line::simulate(l, &sim) {
            Ok(nominal_net) => {
                let nominal = expected_echoes(
                    Sweep {
                        name: "nominal",
                        network: &nominal_net,
                        state: state_name(st),
                    },
                    &chain,
                    analysis,
                    &mut engine,
                )?;
                mark_expected(&mut report.events, &nominal, report.resolution_m);
            }
            Err(e) => report.warnings.push(Warning::new(
                "expected-echoes-unknown",
                format!(
                    "the nominal line could not be simulated ({e}), so no event is set apart as an echo the \
                     line file expects"
                ),
                "read the connectors' and the far end's events in the table as the line's own echoes",
            )),
        }
    }
    rank_events(&mut report.events);
    report.state_basis = basis.clone();
    if let LineModel::Line(l) = line {
        report.visibility = crate::line::visibility(l, st, &n.freqs_hz, report.noise_rms)?;
        report.connector_lengths = Some(l.connector_lengths.name().to_string());
        if state.is_none() && margin.map_or(true, |m| m < super::states::OPEN_MARGIN) {
            w.push(Warning::new(
                "state-assumed",
                format!("the sweep's state was not given and the data do not settle it ({basis})"),
                "pass --state warm for a sweep taken at room temperature, --state cold for one taken cold",
            ));
        }
    }
    w.append(&mut report.warnings);
    report.warnings = w;
    Ok(report)
}
