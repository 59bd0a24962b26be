//! Scoring a generated scenario: run the comparator on it (states inferred and given), reduce each report to
//! what is scored (false alarms, the rank-1 finding, the states), and gather the figures and Markdown tables
//! of docs/accuracy.md.
//!
//! Conventions: as the parent module: positions in the nominal line's as-built metres, levels in dB.

use super::{Case, Scenario, TrueKind, END_REFLECTION, VISIBLE_LEVEL_DB};
use coldtrace::compare::{CompareReport, Severity};
use coldtrace::line::State;
use std::fmt::Write as _;

/// The rank-1 finding, as scored.
#[derive(Debug, Clone, PartialEq)]
pub struct Top {
    pub element: String,
    pub nearest_connector: Option<String>,
    pub distance_m: f64,
    pub kind: &'static str,
    pub severity: Severity,
    pub reflection_db: f64,
}

/// One comparison's result, reduced to what is scored.
#[derive(Debug, Clone, PartialEq)]
pub struct Run {
    pub states_given: bool,
    /// The comparator's error, if any.
    pub error: Option<String>,
    /// Findings above info: (element, kind, severity, distance m, reflection dB).
    pub alarms: Vec<(String, &'static str, Severity, f64, f64)>,
    pub top: Option<Top>,
    /// The states the report used.
    pub states: (String, String),
    /// The hypotheses the data left open (`warm->cold`, ...), the one used first.
    pub open: Vec<String>,
}

/// Each finding above info of `r`, as `Severity Kind at X m`.
pub fn alarm_lines(r: &CompareReport) -> Vec<String> {
    r.findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .map(|f| {
            format!(
                "{:?} {:?} at {:.3} m",
                f.severity, f.kind, f.place.distance_m
            )
        })
        .collect()
}

fn state_name(s: State) -> &'static str {
    match s {
        State::Warm => "warm",
        State::Cold => "cold",
    }
}

impl Run {
    fn from(report: coldtrace::Result<CompareReport>, states_given: bool) -> Run {
        match report {
            Err(e) => Run {
                states_given,
                error: Some(e.to_string()),
                alarms: Vec::new(),
                top: None,
                states: (String::new(), String::new()),
                open: Vec::new(),
            },
            Ok(r) => Run {
                states_given,
                error: None,
                alarms: r
                    .findings
                    .iter()
                    .filter(|f| f.severity > Severity::Info)
                    .map(|f| {
                        (
                            f.place.element.clone(),
                            f.kind.name(),
                            f.severity,
                            f.place.distance_m,
                            f.reflection_db,
                        )
                    })
                    .collect(),
                top: r.findings.iter().min_by_key(|f| f.rank).map(|f| Top {
                    element: f.place.element.clone(),
                    nearest_connector: f.place.nearest_connector.clone(),
                    distance_m: f.place.distance_m,
                    kind: f.kind.name(),
                    severity: f.severity,
                    reflection_db: f.reflection_db,
                }),
                states: (r.states.baseline.to_string(), r.states.current.to_string()),
                open: r
                    .states
                    .hypotheses_open
                    .iter()
                    .map(|h| h.name().to_string())
                    .collect(),
            },
        }
    }
}

/// A scenario with its two comparisons (states inferred, states given).
#[derive(Debug, Clone)]
pub struct Evaluated {
    pub scenario: Scenario,
    pub inferred: Run,
    pub given: Run,
}

impl Evaluated {
    pub fn run(&self, states_given: bool) -> &Run {
        if states_given {
            &self.given
        } else {
            &self.inferred
        }
    }

    /// A false alarm: a healthy or repeat case with a finding above info.
    pub fn false_alarm(&self, states_given: bool) -> bool {
        self.scenario.fault.is_none() && !self.run(states_given).alarms.is_empty()
    }

    /// The rank-1 finding names the faulty element: it lies in it, or, for a fault at a connector, names
    /// the connector as its nearest one while lying within [`Scenario::connector_tolerance_m`] of it (a
    /// finding half a metre away in the next cable is not the connector's). None for a healthy case.
    pub fn right_element(&self, states_given: bool) -> Option<bool> {
        let f = self.scenario.fault.as_ref()?;
        Some(match &self.run(states_given).top {
            None => false,
            Some(t) => {
                t.element == f.element
                    || (f.at_connector
                        && t.nearest_connector.as_deref() == Some(f.element.as_str())
                        && (t.distance_m - f.position_m).abs()
                            <= self.scenario.connector_tolerance_m())
            }
        })
    }

    /// |rank-1 distance - truth|, m.
    pub fn location_error_m(&self, states_given: bool) -> Option<f64> {
        let f = self.scenario.fault.as_ref()?;
        self.run(states_given)
            .top
            .as_ref()
            .map(|t| (t.distance_m - f.position_m).abs())
    }

    /// The report's states match the truth's.
    pub fn states_right(&self, states_given: bool) -> bool {
        let r = self.run(states_given);
        r.error.is_none()
            && r.states
                == (
                    state_name(self.scenario.baseline_state).to_string(),
                    state_name(self.scenario.current_state).to_string(),
                )
    }

    /// Whether the states are honest: the truth is among the hypotheses the data left open (so no finding
    /// depends on a wrong choice), and when only one was left it is the truth.
    pub fn states_honest(&self, states_given: bool) -> bool {
        let r = self.run(states_given);
        let truth = format!(
            "{}->{}",
            state_name(self.scenario.baseline_state),
            state_name(self.scenario.current_state)
        );
        // Without a line file nothing tells warm->warm from cold->cold; with one, both are hypotheses.
        r.error.is_none() && r.open.contains(&truth)
    }

    /// One line: what happened in the run.
    pub fn what_happened(&self, states_given: bool) -> String {
        let r = self.run(states_given);
        if let Some(e) = &r.error {
            return format!("error: {e}");
        }
        let mut s = format!(
            "states {} -> {} (open: {})",
            r.states.0,
            r.states.1,
            r.open.join(", ")
        );
        if let Some(f) = &self.scenario.fault {
            let _ = write!(
                s,
                "; truth {} ({}) at {:.4} m, {:.1} dB over noise",
                f.element,
                f.kind.name(),
                f.position_m,
                f.level_db
            );
        }
        match &r.top {
            Some(t) => {
                let _ = write!(
                    s,
                    "; rank 1: {} {} in {} (nearest {}) at {:.4} m, {:.1} dB",
                    t.severity,
                    t.kind,
                    t.element,
                    t.nearest_connector.as_deref().unwrap_or("-"),
                    t.distance_m,
                    t.reflection_db
                );
            }
            None => s.push_str("; no finding"),
        }
        if !r.alarms.is_empty() {
            let list: Vec<String> = r
                .alarms
                .iter()
                .take(4)
                .map(|(e, k, sev, x, db)| format!("{sev} {k} in {e} at {x:.4} m ({db:.1} dB)"))
                .collect();
            let _ = write!(
                s,
                "; {} above info: {}{}",
                r.alarms.len(),
                list.join(", "),
                if r.alarms.len() > 4 { ", ..." } else { "" }
            );
        }
        s
    }
}

/// Generate, simulate and compare one scenario (states inferred and given).
pub fn evaluate(seed: u64, case: Case) -> Evaluated {
    let scenario = Scenario::generate(seed, case);
    let (inferred, given) = match scenario.sweeps() {
        Err(e) => {
            let r = Run {
                states_given: false,
                error: Some(format!("simulation: {e}")),
                alarms: Vec::new(),
                top: None,
                states: (String::new(), String::new()),
                open: Vec::new(),
            };
            (
                r.clone(),
                Run {
                    states_given: true,
                    ..r
                },
            )
        }
        Ok((b, c)) => (
            Run::from(scenario.compare(&b, &c, false), false),
            Run::from(scenario.compare(&b, &c, true), true),
        ),
    };
    Evaluated {
        scenario,
        inferred,
        given,
    }
}

/// Evaluate every (seed, case) on `threads` threads; results in the order given.
pub fn evaluate_all(list: &[(u64, Case)], threads: usize) -> Vec<Evaluated> {
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::Mutex;
    let next = AtomicUsize::new(0);
    let out: Mutex<Vec<Option<Evaluated>>> = Mutex::new(vec![None; list.len()]);
    std::thread::scope(|s| {
        for _ in 0..threads.max(1) {
            s.spawn(|| loop {
                let i = next.fetch_add(1, Ordering::Relaxed);
                if i >= list.len() {
                    break;
                }
                let (seed, case) = list[i];
                let e = evaluate(seed, case);
                out.lock().unwrap_or_else(|p| p.into_inner())[i] = Some(e);
            });
        }
    });
    out.into_inner()
        .unwrap_or_else(|p| p.into_inner())
        .into_iter()
        .map(|e| e.expect("every scenario evaluated"))
        .collect()
}

/// The seeds of a run: `healthy` no-fault cases (every fourth a same-state repeat) and `faults` fault
/// cases, from `base`.
pub fn plan(base: u64, healthy: usize, faults: usize) -> Vec<(u64, Case)> {
    let mut v = Vec::new();
    for i in 0..healthy as u64 {
        let case = if i % 4 == 3 {
            Case::Repeat
        } else {
            Case::Healthy
        };
        v.push((base * 1_000_000 + i, case));
    }
    for i in 0..faults as u64 {
        v.push((base * 1_000_000 + 500_000 + i, Case::Fault));
    }
    v
}

/// Quantile `q` of `v` (nearest rank), NaN when empty.
pub fn quantile(v: &[f64], q: f64) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    let k = ((q * s.len() as f64).ceil() as usize).clamp(1, s.len()) - 1;
    s[k]
}

/// The figures of one mode (states inferred or given) over a set of evaluations.
#[derive(Debug, Clone, PartialEq)]
pub struct Figures {
    pub states_given: bool,
    pub no_fault_runs: usize,
    pub false_alarms: usize,
    pub healthy_runs: usize,
    pub healthy_false_alarms: usize,
    pub repeat_runs: usize,
    pub repeat_false_alarms: usize,
    pub visible_faults: usize,
    pub visible_right: usize,
    /// Of those ranked first at their element, the ones whose rank-1 finding stands above info.
    pub visible_right_above_info: usize,
    /// The same by the lumped estimate of the level (`FaultTruth::lumped_level_db`), the measure used before
    /// the level as the port sees it.
    pub lumped_visible_faults: usize,
    pub lumped_visible_right: usize,
    /// Visible faults not at the joint in front of a strongly reflecting far end
    /// (`Scenario::fault_masked_by_end`), and those ranked first at their element.
    pub clear_visible_faults: usize,
    pub clear_visible_right: usize,
    pub all_faults: usize,
    pub all_right: usize,
    /// Location errors of visible faults with a rank-1 finding, m; and of those whose element is right.
    pub location_errors_m: Vec<f64>,
    pub location_errors_right_m: Vec<f64>,
    pub states_checked: usize,
    pub states_right: usize,
    pub states_honest: usize,
    /// Healthy lines and repeats whose states the data left undecided (several hypotheses open).
    pub states_open: usize,
    pub fault_states_right: usize,
    pub errors: usize,
    /// (true kind, reported rank-1 kind or "none") -> count, visible faults.
    pub confusion: std::collections::BTreeMap<(TrueKind, &'static str), usize>,
    /// (true kind, both sweeps in one state, masked by the far end) -> (ranked first at the element,
    /// visible faults).
    pub by_kind: std::collections::BTreeMap<(TrueKind, bool, bool), (usize, usize)>,
}

impl Figures {
    pub fn of(all: &[Evaluated], states_given: bool) -> Figures {
        let mut f = Figures {
            states_given,
            no_fault_runs: 0,
            false_alarms: 0,
            healthy_runs: 0,
            healthy_false_alarms: 0,
            repeat_runs: 0,
            repeat_false_alarms: 0,
            visible_faults: 0,
            visible_right: 0,
            visible_right_above_info: 0,
            lumped_visible_faults: 0,
            lumped_visible_right: 0,
            clear_visible_faults: 0,
            clear_visible_right: 0,
            all_faults: 0,
            all_right: 0,
            location_errors_m: Vec::new(),
            location_errors_right_m: Vec::new(),
            states_checked: 0,
            states_right: 0,
            states_honest: 0,
            states_open: 0,
            fault_states_right: 0,
            errors: 0,
            confusion: Default::default(),
            by_kind: Default::default(),
        };
        for e in all {
            let r = e.run(states_given);
            if r.error.is_some() {
                f.errors += 1;
            }
            match &e.scenario.fault {
                None => {
                    f.no_fault_runs += 1;
                    let fa = e.false_alarm(states_given);
                    f.false_alarms += fa as usize;
                    if e.scenario.case == Case::Healthy {
                        f.healthy_runs += 1;
                        f.healthy_false_alarms += fa as usize;
                    } else {
                        f.repeat_runs += 1;
                        f.repeat_false_alarms += fa as usize;
                    }
                    f.states_checked += 1;
                    f.states_right += e.states_right(states_given) as usize;
                    f.states_honest += e.states_honest(states_given) as usize;
                    f.states_open += (r.open.len() > 1) as usize;
                }
                Some(t) => {
                    let right = e.right_element(states_given) == Some(true);
                    f.all_faults += 1;
                    f.all_right += right as usize;
                    f.fault_states_right += e.states_right(states_given) as usize;
                    if t.lumped_level_db >= VISIBLE_LEVEL_DB {
                        f.lumped_visible_faults += 1;
                        f.lumped_visible_right += right as usize;
                    }
                    if t.visible() {
                        f.visible_faults += 1;
                        f.visible_right += right as usize;
                        f.visible_right_above_info += (right
                            && r.top.as_ref().is_some_and(|t| t.severity > Severity::Info))
                            as usize;
                        if !e.scenario.fault_masked_by_end() {
                            f.clear_visible_faults += 1;
                            f.clear_visible_right += right as usize;
                        }
                        if let Some(x) = e.location_error_m(states_given) {
                            f.location_errors_m.push(x);
                            if right {
                                f.location_errors_right_m.push(x);
                            }
                        }
                        let k = r.top.as_ref().map(|t| t.kind).unwrap_or("none");
                        *f.confusion.entry((t.kind, k)).or_default() += 1;
                        let one_state = e.scenario.baseline_state == e.scenario.current_state;
                        let cell = f
                            .by_kind
                            .entry((t.kind, one_state, e.scenario.fault_masked_by_end()))
                            .or_default();
                        cell.0 += right as usize;
                        cell.1 += 1;
                    }
                }
            }
        }
        f
    }
}

fn pct(n: usize, d: usize) -> String {
    if d == 0 {
        "-".to_string()
    } else {
        format!("{:.1} % ({n}/{d})", 100.0 * n as f64 / d as f64)
    }
}

/// The accuracy table (Markdown) of both modes.
pub fn table(inferred: &Figures, given: &Figures) -> String {
    let mut s = String::new();
    let row = |s: &mut String, what: &str, goal: &str, a: String, b: String| {
        let _ = writeln!(s, "| {what} | {goal} | {a} | {b} |");
    };
    // A share in both modes: (count, out of) from each mode's figures.
    let share = |s: &mut String, what: &str, goal: &str, of: fn(&Figures) -> (usize, usize)| {
        let (a, b) = (of(inferred), of(given));
        row(s, what, goal, pct(a.0, a.1), pct(b.0, b.1));
    };
    let _ = writeln!(s, "| figure | goal | states inferred | states given |");
    let _ = writeln!(s, "|---|---|---|---|");
    share(&mut s, "false alarms, healthy warm -> cold", "0", |f| {
        (f.healthy_false_alarms, f.healthy_runs)
    });
    share(&mut s, "false alarms, same-state repeats", "0", |f| {
        (f.repeat_false_alarms, f.repeat_runs)
    });
    share(
        &mut s,
        &format!("right element first, faults >= {VISIBLE_LEVEL_DB} dB over noise"),
        ">= 98 %",
        |f| (f.visible_right, f.visible_faults),
    );
    share(&mut s, "the same, and that finding above info", "-", |f| {
        (f.visible_right_above_info, f.visible_faults)
    });
    share(
        &mut s,
        &format!(
            "the same, faults >= {VISIBLE_LEVEL_DB} dB over noise except at the joint in front of a far end \
             reflecting {END_REFLECTION} or more"
        ),
        "-",
        |f| (f.clear_visible_right, f.clear_visible_faults),
    );
    share(
        &mut s,
        &format!(
            "right element first, faults >= {VISIBLE_LEVEL_DB} dB over noise by the lumped estimate (the \
             earlier measure)"
        ),
        "-",
        |f| (f.lumped_visible_right, f.lumped_visible_faults),
    );
    share(&mut s, "right element first, all faults", "-", |f| {
        (f.all_right, f.all_faults)
    });
    let loc = |v: &[f64]| {
        format!(
            "{:.1} mm / {:.1} mm (n = {})",
            1e3 * quantile(v, 0.5),
            1e3 * quantile(v, 0.95),
            v.len()
        )
    };
    row(
        &mut s,
        "location error of rank 1, median / 95th percentile, faults over the noise",
        "-",
        loc(&inferred.location_errors_m),
        loc(&given.location_errors_m),
    );
    row(
        &mut s,
        "the same, where rank 1 is the right element",
        "-",
        loc(&inferred.location_errors_right_m),
        loc(&given.location_errors_right_m),
    );
    share(&mut s, "states right, healthy and repeats", "100 %", |f| {
        (f.states_right, f.states_checked)
    });
    share(
        &mut s,
        "states: the truth among the hypotheses left open, healthy and repeats",
        "100 %",
        |f| (f.states_honest, f.states_checked),
    );
    share(
        &mut s,
        "states left undecided (several hypotheses open, said in the report), healthy and repeats",
        "-",
        |f| (f.states_open, f.states_checked),
    );
    share(&mut s, "states right, fault cases", "-", |f| {
        (f.fault_states_right, f.all_faults)
    });
    let n = inferred.no_fault_runs + inferred.all_faults;
    row(
        &mut s,
        "runs that returned an error",
        "0",
        format!("{} of {n}", inferred.errors),
        format!("{} of {n}", given.errors),
    );
    s
}

/// Faults over the noise ranked first at their element, by true kind and the pair's true states (one
/// state, or across a change of state), apart for those at the joint in front of a strongly reflecting
/// far end (Markdown).
pub fn kind_table(f: &Figures) -> String {
    let mut s = String::new();
    let cols = [(true, false), (false, false), (true, true), (false, true)];
    let _ = writeln!(
        s,
        "| true kind | one state | across a change of state | one state, at the far end's joint | across a \
         change of state, at the far end's joint |"
    );
    let _ = writeln!(s, "|---|---|---|---|---|");
    let mut kinds: Vec<TrueKind> = f.by_kind.keys().map(|k| k.0).collect();
    kinds.sort();
    kinds.dedup();
    for k in kinds {
        let cells: Vec<String> = cols
            .iter()
            .map(|&(one_state, masked)| {
                let (n, d) = f
                    .by_kind
                    .get(&(k, one_state, masked))
                    .copied()
                    .unwrap_or((0, 0));
                if d == 0 {
                    "-".to_string()
                } else {
                    format!("{n}/{d}")
                }
            })
            .collect();
        let _ = writeln!(s, "| {} | {} |", k.name(), cells.join(" | "));
    }
    s
}

/// The kind confusion table (Markdown): true kind -> rank-1 kinds reported, visible faults.
pub fn confusion_table(f: &Figures) -> String {
    let mut reported: Vec<&'static str> = f.confusion.keys().map(|k| k.1).collect();
    reported.sort();
    reported.dedup();
    let mut kinds: Vec<TrueKind> = f.confusion.keys().map(|k| k.0).collect();
    kinds.sort();
    kinds.dedup();
    let mut s = String::new();
    let _ = writeln!(s, "| true kind | {} |", reported.join(" | "));
    let _ = writeln!(s, "|---|{}", "---|".repeat(reported.len()));
    for k in kinds {
        let cells: Vec<String> = reported
            .iter()
            .map(|r| f.confusion.get(&(k, *r)).copied().unwrap_or(0).to_string())
            .collect();
        let _ = writeln!(s, "| {} | {} |", k.name(), cells.join(" | "));
    }
    s
}
