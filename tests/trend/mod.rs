//! The trend rule measured with the simulator: lines whose connectors are re-made every cooldown (their
//! reflection moving by a dB or two) and lines with one connector degrading. Shared by
//! `tests/history_trend.rs` (`mod trend;`, a fixed-seed subset) and `examples/trend_accuracy.rs`
//! (`#[path = "../tests/trend/mod.rs"] mod trend;`, the figures of docs/accuracy.md).
//!
//! Every line is the demo line `tests/data/line/north-fridge-in-07.toml` (invented scenario), simulated
//! cold at [`POINTS`] points over 0.5-10 GHz with noise [`NOISE_DB`] per point, a fresh noise seed each
//! cooldown. Each connector before the 20 dB attenuator carries a parasitic shunt capacitance of its own
//! (drawn once per line in [`SHUNT_FF`]) that moves by up to [`REMATE_DB`] each cooldown, as a re-made
//! connector's reflection does (|rho| of a small shunt C is proportional to C). A degrading line has
//! [`HEALTHY_BEFORE`] such cooldowns, then one connector degrades over N cooldowns (N in [`DEGRADE_CYCLES`]):
//! - `contact`: a series contact resistance growing geometrically from 0.3 to 5 ohm;
//! - `gap`: a pin gap opening step by step, its series capacitance shrinking geometrically from
//!   [`GAP_START_PF`] to [`GAP_END_PF`] pF (from a gap a reflection under the connector's own, to one that
//!   cuts most of the power).
//!
//! Each cooldown is recorded as `history record` would (`history::record::analyse_sweep`: the connector
//! figures, and the findings against the first cooldown as baseline); the trend rule is applied after
//! every cooldown to the records so far. A finding "reaches major" at the first cooldown whose comparison
//! has a finding of at least `major` within [`AT_CONNECTOR_M`] of the degrading connector.
//!
//! Conventions: SI inside (Hz, F, ohm, m), dB at the edges; the simulator's noise (power per point
//! relative to |S| = 1, dB).

#![allow(dead_code)]

use coldtrace::compare::{AnalysisConfig, Severity};
use coldtrace::history::record::analyse_sweep;
use coldtrace::history::{LandmarkKind, TrendRule};
use coldtrace::line::rng::Rng;
use coldtrace::line::{simulate, Fault, Line, SimConfig, State};
use std::path::Path;

/// Points per sweep (a common analyzer setting, common practice, no source).
pub const POINTS: usize = 1601;
/// Noise per point, dB relative to |S| = 1 (the demo sample's level).
pub const NOISE_DB: f64 = -85.0;
/// Range of a connector's own parasitic shunt capacitance, fF (a reflection of about -45 to -33 dB at
/// 5 GHz; invented for the measurement).
pub const SHUNT_FF: (f64, f64) = (10.0, 40.0);
/// How far a re-made connector's reflection moves, +- dB, uniformly ("a dB or two").
pub const REMATE_DB: f64 = 2.0;
/// Healthy cooldowns before a degradation starts (inclusive range).
pub const HEALTHY_BEFORE: (usize, usize) = (3, 5);
/// Cooldowns a degradation takes (inclusive range).
pub const DEGRADE_CYCLES: (usize, usize) = (6, 10);
/// A contact's resistance at the start and end of its growth, ohm.
pub const CONTACT_OHM: (f64, f64) = (0.3, 5.0);
/// A gap's series capacitance at the start and end of its opening, pF.
pub const GAP_START_PF: f64 = 10.0;
pub const GAP_END_PF: f64 = 0.2;
/// How close to the degrading connector a finding counts as its, m (a few resolution cells).
pub const AT_CONNECTOR_M: f64 = 0.05;
/// Cooldowns of a healthy line.
pub const HEALTHY_CYCLES: usize = 20;
/// The connectors in front of the attenuator, where a connector's reflection stands over the noise.
pub const CONNECTORS: [&str; 3] = ["feedthrough", "J2", "J3"];

/// How a degrading line degrades.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Degradation {
    Contact,
    Gap,
}

impl Degradation {
    pub fn name(self) -> &'static str {
        match self {
            Degradation::Contact => "contact",
            Degradation::Gap => "gap",
        }
    }
}

/// The demo line.
pub fn line() -> Line {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml");
    coldtrace::line::file::read_file(&p).expect("the demo line file reads")
}

/// One simulated line's cooldowns, scored.
#[derive(Debug, Clone, PartialEq)]
pub struct LineRun {
    pub seed: u64,
    /// `None` for a healthy line.
    pub degradation: Option<Degradation>,
    pub connector: &'static str,
    pub cycles: usize,
    /// First cooldown (0-based) at which the rule warned on the degrading connector.
    pub first_warning: Option<usize>,
    /// First cooldown at which the comparison's finding there reached major.
    pub first_major: Option<usize>,
    /// First cooldown at which it reached minor.
    pub first_minor: Option<usize>,
    /// Warnings on any other connector (false alarms): (cooldown, connector).
    pub false_warnings: Vec<(usize, String)>,
    /// Each connector's values, dB, one per cooldown (for replaying a case).
    pub series: Vec<(&'static str, Vec<f64>)>,
    /// The worst severity found within [`AT_CONNECTOR_M`] of the degrading connector, per cooldown.
    pub severities: Vec<Option<Severity>>,
}

impl LineRun {
    /// Cooldowns between the first warning and the finding reaching major (positive: warned earlier).
    pub fn lead(&self) -> Option<i64> {
        match (self.first_warning, self.first_major) {
            (Some(w), Some(m)) => Some(m as i64 - w as i64),
            _ => None,
        }
    }

    pub fn describe(&self) -> String {
        format!(
            "seed {} {} at {}: {} cooldowns, first warning {:?}, minor {:?}, major {:?}, false warnings {:?}",
            self.seed,
            self.degradation.map_or("healthy", |d| d.name()),
            self.connector,
            self.cycles,
            self.first_warning,
            self.first_minor,
            self.first_major,
            self.false_warnings
        )
    }
}

fn sweep(line: &Line, faults: &[String], seed: u64) -> coldtrace::Network {
    let mut cfg = SimConfig::linear(State::Cold, 0.5e9, 10e9, POINTS);
    cfg.noise_db = Some(NOISE_DB);
    cfg.seed = seed;
    cfg.faults = faults
        .iter()
        .map(|f| Fault::parse(f).expect("a fault of the measurement parses"))
        .collect();
    simulate(line, &cfg).expect("the demo line simulates")
}

/// Simulate and score one line. `degradation` `None`: a healthy line of [`HEALTHY_CYCLES`] cooldowns.
pub fn run_line(seed: u64, degradation: Option<Degradation>, rule: &TrendRule) -> LineRun {
    let line = line();
    let mut rng = Rng::new(seed);
    let mut pick = |lo: f64, hi: f64| lo + (hi - lo) * rng.uniform();
    let own: Vec<f64> = CONNECTORS
        .iter()
        .map(|_| pick(SHUNT_FF.0, SHUNT_FF.1))
        .collect();
    let target = CONNECTORS[1 + (pick(0.0, 1.0) < 0.5) as usize];
    let healthy = HEALTHY_BEFORE.0
        + (pick(0.0, 1.0) * (HEALTHY_BEFORE.1 - HEALTHY_BEFORE.0 + 1) as f64) as usize;
    let grow = DEGRADE_CYCLES.0
        + (pick(0.0, 1.0) * (DEGRADE_CYCLES.1 - DEGRADE_CYCLES.0 + 1) as f64) as usize;
    let cycles = match degradation {
        None => HEALTHY_CYCLES,
        Some(_) => healthy.min(HEALTHY_BEFORE.1) + grow.min(DEGRADE_CYCLES.1),
    };
    let healthy = healthy.min(HEALTHY_BEFORE.1);
    let grow = grow.min(DEGRADE_CYCLES.1);
    let cfg = AnalysisConfig::default();
    let target_m = line
        .element(target)
        .map(|(_, e)| e.start_m + 0.5 * e.length_m)
        .expect("the connector is in the demo line");
    let mut series: Vec<Vec<f64>> = vec![Vec::new(); CONNECTORS.len()];
    let mut baseline: Option<coldtrace::Network> = None;
    let mut run = LineRun {
        seed,
        degradation,
        connector: target,
        cycles,
        first_warning: None,
        first_major: None,
        first_minor: None,
        false_warnings: Vec::new(),
        series: Vec::new(),
        severities: Vec::new(),
    };
    for k in 0..cycles {
        let mut faults: Vec<String> = CONNECTORS
            .iter()
            .zip(&own)
            .map(|(c, ff)| {
                let moved = ff * 10f64.powf(pick(-REMATE_DB, REMATE_DB) / 20.0);
                format!("{c}:shunt={moved}fF")
            })
            .collect();
        if let (Some(d), true) = (degradation, k >= healthy) {
            // 0 at the first degraded cooldown, 1 at the last.
            let x = if grow > 1 {
                (k - healthy) as f64 / (grow - 1) as f64
            } else {
                1.0
            };
            faults.push(match d {
                Degradation::Contact => format!(
                    "{target}:contact={}ohm",
                    CONTACT_OHM.0 * (CONTACT_OHM.1 / CONTACT_OHM.0).powf(x)
                ),
                Degradation::Gap => format!(
                    "{target}:gap={}pF",
                    GAP_START_PF * (GAP_END_PF / GAP_START_PF).powf(x)
                ),
            });
        }
        let net = sweep(
            &line,
            &faults,
            seed.wrapping_mul(1000).wrapping_add(k as u64),
        );
        let base = baseline.as_ref().map(|b| ("baseline", b, State::Cold));
        // Healthy lines need no comparison: the rule reads only the connectors' figures.
        let base = base.filter(|_| degradation.is_some());
        let a = analyse_sweep("current", &net, &line, Some(State::Cold), base, &cfg)
            .unwrap_or_else(|e| panic!("seed {seed} cooldown {k}: {e}"));
        if baseline.is_none() {
            baseline = Some(net.clone());
        }
        let here = a
            .findings
            .iter()
            .filter(|f| {
                f.distance_m
                    .is_some_and(|d| (d - target_m).abs() <= AT_CONNECTOR_M)
            })
            .map(|f| f.severity)
            .max();
        run.severities.push(here);
        let major = here.is_some_and(|s| s >= Severity::Major);
        if major && run.first_major.is_none() && degradation.is_some() {
            run.first_major = Some(k);
        }
        if here.is_some_and(|s| s >= Severity::Minor) && degradation.is_some() {
            run.first_minor.get_or_insert(k);
        }
        for (i, c) in CONNECTORS.iter().enumerate() {
            let lm = a
                .landmarks
                .iter()
                .find(|l| l.kind == LandmarkKind::Connector && l.element == *c)
                .expect("every connector has a figure");
            series[i].push(
                lm.reflection_db
                    .expect("a connector in front of the attenuator has a value"),
            );
            let v = rule.evaluate(&series[i], lm.floor_db);
            if v.warning {
                if degradation.is_some() && *c == target {
                    run.first_warning.get_or_insert(k);
                } else {
                    run.false_warnings.push((k, c.to_string()));
                }
            }
        }
    }
    run.series = CONNECTORS.iter().copied().zip(series).collect();
    run
}

/// Run many lines on `threads` threads, in the order given.
pub fn run_all(
    jobs: &[(u64, Option<Degradation>)],
    rule: &TrendRule,
    threads: usize,
) -> Vec<LineRun> {
    let next = std::sync::atomic::AtomicUsize::new(0);
    let out = std::sync::Mutex::new(Vec::new());
    std::thread::scope(|s| {
        for _ in 0..threads.max(1) {
            s.spawn(|| loop {
                let i = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                let Some(&(seed, d)) = jobs.get(i) else { break };
                let r = run_line(seed, d, rule);
                out.lock().unwrap().push((i, r));
            });
        }
    });
    let mut v = out.into_inner().unwrap();
    v.sort_by_key(|p| p.0);
    v.into_iter().map(|p| p.1).collect()
}

/// The figures of docs/accuracy.md's trend section.
#[derive(Debug, Clone, PartialEq)]
pub struct Figures {
    pub degrading: usize,
    pub reached_major: usize,
    /// Of those reaching major: warned at least 2 cooldowns before.
    pub warned_two_before: usize,
    /// Warned at all on the degrading connector (before the end of the run).
    pub warned: usize,
    /// Reached minor, and of those warned no later than that cooldown.
    pub reached_minor: usize,
    pub warned_by_minor: usize,
    pub healthy: usize,
    /// Healthy lines with any warning.
    pub healthy_warned: usize,
    /// Warnings on the other connectors of degrading lines.
    pub degrading_false: usize,
}

pub fn figures(runs: &[LineRun]) -> Figures {
    let deg: Vec<&LineRun> = runs.iter().filter(|r| r.degradation.is_some()).collect();
    let healthy: Vec<&LineRun> = runs.iter().filter(|r| r.degradation.is_none()).collect();
    Figures {
        degrading: deg.len(),
        reached_major: deg.iter().filter(|r| r.first_major.is_some()).count(),
        warned_two_before: deg
            .iter()
            .filter(|r| r.lead().is_some_and(|l| l >= 2))
            .count(),
        warned: deg.iter().filter(|r| r.first_warning.is_some()).count(),
        reached_minor: deg.iter().filter(|r| r.first_minor.is_some()).count(),
        warned_by_minor: deg
            .iter()
            .filter(|r| matches!((r.first_warning, r.first_minor), (Some(w), Some(m)) if w <= m))
            .count(),
        healthy: healthy.len(),
        healthy_warned: healthy
            .iter()
            .filter(|r| !r.false_warnings.is_empty())
            .count(),
        degrading_false: deg.iter().filter(|r| !r.false_warnings.is_empty()).count(),
    }
}
