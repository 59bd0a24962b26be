//! The four checks of the comparator on the real campaign (public CC0 sweeps of one cryostat coax path; the
//! facts checked are those its README lists as physically certain), shared by
//! `tests/compare_real_campaign.rs` (on the copied subset) and `examples/real_campaign.rs` (on the whole
//! campaign), so both demand the same:
//!
//! - cooldown: a sweep at 295 K against the same file at ~3 K is a healthy cooldown: no finding above info,
//!   and the states are inferred warm -> cold;
//! - far end: two terminations of one cooldown differ only at the far end: the rank-1 change lies there, and
//!   so does every finding above info;
//! - repeat: one switch-board standard in two consecutive cooldowns, at one temperature, is a healthy
//!   repeat across a thermal cycle: no finding above info, and one state for both sweeps left open;
//! - air line: an offset short against the same port's flush short moves the far end by the round-trip
//!   delay of its air line, within the delay of [`MOVE_TOLERANCE_MM`] of air line. The comparator's move is
//!   read from its own results only: the far end's move it reports (`far_end.delay_change_s`), both ways
//!   ([`OffsetMove`]).
//!
//! Every comparison runs through `coldtrace::compare::job::compare_networks` on a line of unknown
//! construction of velocity factor [`VF`], states not given. The far end is also found without the
//! comparator, through `coldtrace::transform`: the strongest echo of the band-pass trace of the trace
//! command's default plan, refined by direct summation ([`far_end`]); it places the far end for the far-end
//! check and measures the air lines themselves (the premise of the air-line check).
//!
//! Conventions: delays are round trip, s; positions are one-way as-built metres of the uniform line,
//! x = c0 VF tau / 2 (the comparator's frame for a line of unknown construction); air-line millimetres are
//! c0 tau / 2 (an air line's velocity is c0).

use coldtrace::compare::job::{compare_networks, LineModel, PairRequest};
use coldtrace::compare::{AnalysisConfig, CompareReport, Finding, Severity};
use coldtrace::transform::{
    run_trace, TraceConfig, TraceEngine, TracePlan, UniformLine, C0_M_PER_S,
};
use coldtrace::Network;
use std::path::Path;

/// Velocity factor the line of unknown construction is read at (`--vf 0.70` on the command line; the
/// cryostat's cables are not published, and solid PTFE is about 0.695, common practice, no source).
pub const VF: f64 = 0.70;

/// Nominal air-line lengths of the offset shorts `MOS2` to `MOS5`, mm (the dataset README, from the
/// dataset's own notebooks).
pub const OFFSET_SHORTS_MM: [(&str, f64); 4] = [
    ("MOS2", 5.0),
    ("MOS3", 10.8),
    ("MOS4", 18.0),
    ("MOS5", 30.0),
];

/// Largest miss of a far-end move against its air line, as millimetres of air line: 1 mm, a round-trip delay
/// of 6.7 ps, well under a tenth of a resolution cell (project choice, no source).
pub const MOVE_TOLERANCE_MM: f64 = 1.0;

/// Half-width of "at the far end" beyond the far-end echoes, in two-event resolution cells of the band-pass
/// trace (about 10 mm here). A termination's echo is strong, so a change there is placed to a small fraction
/// of a cell; one cell allows for two overlapping echoes (a short that moved by less than a cell), and stays
/// well clear of the switch input about 60 mm before the switch-board standards (the landmark windows of
/// tests/line_real_sweeps.rs, 11.1..11.25 ns and 11.7..11.9 ns round trip) (project choice, no source).
pub const FAR_END_CELLS: f64 = 1.0;

/// Nominal air-line length of an offset short named like `port1_MOS4`, mm; `None` for other files.
pub fn offset_short_mm(name: &str) -> Option<f64> {
    OFFSET_SHORTS_MM
        .iter()
        .find(|(s, _)| name.ends_with(s))
        .map(|&(_, mm)| mm)
}

/// Whether a file of the campaign ends in a reflecting termination (a short or an open: every file but the
/// switch board's loads), whose echo is then the strongest of its sweep.
pub fn reflects(name: &str) -> bool {
    !name.contains("load")
}

/// A sweep of the campaign.
pub fn read(path: &Path) -> Result<Network, String> {
    coldtrace::touchstone::read_file(path)
        .map(|t| t.network)
        .map_err(|e| format!("reading {}: {e}", path.display()))
}

/// Compare `baseline` with `current` (name, network) on a uniform line of [`VF`], states not given. An error
/// or a panic of the comparator comes back as its message.
pub fn compare_pair(
    baseline: (&str, &Network),
    current: (&str, &Network),
) -> Result<CompareReport, String> {
    let analysis = AnalysisConfig::default();
    let req = PairRequest {
        baseline,
        current,
        line: LineModel::Uniform {
            velocity_factor: VF,
        },
        baseline_state: None,
        current_state: None,
        analysis: &analysis,
    };
    match std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| compare_networks(&req))) {
        Ok(Ok(r)) => Ok(r),
        Ok(Err(e)) => Err(format!("error: {e}")),
        Err(p) => Err(format!(
            "panic: {}",
            p.downcast_ref::<String>()
                .map(String::as_str)
                .or_else(|| p.downcast_ref::<&str>().copied())
                .unwrap_or("(no message)")
        )),
    }
}

/// The far-end echo of one sweep, measured without the comparator.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FarEnd {
    /// Round-trip delay, s.
    pub delay_s: f64,
    /// As-built metres on the uniform line of [`VF`].
    pub distance_m: f64,
    /// Two-event resolution of the trace, m.
    pub resolution_m: f64,
}

/// The strongest echo of the sweep's band-pass trace, with the trace command's default plan (Kaiser beta 6,
/// the whole alias-free range; `TracePlan::default()`), refined by direct summation
/// (`coldtrace::transform::run_trace` refines its peaks).
///
/// The far end of these sweeps is a cluster (the port's connector, the standard, the switch's path) rather
/// than one echo, so a peak's place depends a little on the window: on the campaign, the moves of the offset
/// shorts measured this way lie within 0.75 mm of their air lines; with the comparator's Kaiser beta 9 they
/// come out up to 1.3 mm short for the 5 mm line (measured with this function's window swapped, on
/// campaign-1).
pub fn far_end(n: &Network) -> Result<FarEnd, String> {
    let map = UniformLine::new(VF).map_err(|e| e.to_string())?;
    let config = TraceConfig {
        plan: TracePlan::default(),
        peak_count: 1,
        ..TraceConfig::default()
    };
    let out = run_trace(
        &mut TraceEngine::new(),
        &n.freqs_hz,
        &n.s11(),
        &config,
        &map,
    )
    .map_err(|e| format!("far-end trace: {e}"))?;
    let p = out
        .trace
        .peaks
        .first()
        .ok_or("far-end trace: no echo found")?;
    Ok(FarEnd {
        delay_s: p.time_s,
        distance_m: p.distance_m,
        resolution_m: out.trace.resolution_m,
    })
}

/// Move of the far end from `baseline` to `current`, as millimetres of air line: delay change x c0 / 2.
pub fn air_mm(baseline: &FarEnd, current: &FarEnd) -> f64 {
    (current.delay_s - baseline.delay_s) * C0_M_PER_S / 2.0 * 1e3
}

/// The finding of rank 1, if any.
pub fn top(r: &CompareReport) -> Option<&Finding> {
    r.findings.iter().find(|f| f.rank == 1)
}

/// A finding in a few words: `#rank severity kind at x m (element)`.
pub fn describe(f: &Finding) -> String {
    format!(
        "#{} {} {} at {:.4} m ({})",
        f.rank,
        f.severity,
        f.kind.name(),
        f.place.distance_m,
        f.place.element
    )
}

/// Up to three entries joined with "; ", and how many more there are.
pub fn some(items: &[String]) -> String {
    let mut s = items.iter().take(3).cloned().collect::<Vec<_>>().join("; ");
    if items.len() > 3 {
        s.push_str(&format!("; and {} more", items.len() - 3));
    }
    s
}

/// The inferred states as `warm -> cold`, with a `(given)` mark when they were not inferred.
pub fn states(r: &CompareReport) -> String {
    format!(
        "{} -> {}{}",
        r.states.baseline,
        r.states.current,
        if r.states.inferred { "" } else { " (given)" }
    )
}

/// Cooldown check: no finding above info, states inferred warm -> cold.
pub fn check_cooldown(r: &CompareReport) -> Result<(), String> {
    let states_ok = r.states.inferred && r.states.baseline == "warm" && r.states.current == "cold";
    quiet(
        r,
        (!states_ok).then(|| {
            format!(
                "states {} instead of inferred warm -> cold ({})",
                states(r),
                r.states.basis
            )
        }),
    )
}

/// A healthy pair's verdict: `states_wrong` (why the states are not what the pair demands), and any finding
/// above info.
fn quiet(r: &CompareReport, states_wrong: Option<String>) -> Result<(), String> {
    let mut why: Vec<String> = states_wrong.into_iter().collect();
    let above: Vec<String> = r
        .findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .map(describe)
        .collect();
    if !above.is_empty() {
        why.push(format!(
            "{} finding(s) above info: {}",
            above.len(),
            some(&above)
        ));
    }
    if why.is_empty() {
        Ok(())
    } else {
        Err(why.join("; "))
    }
}

/// Repeat check: one switch-board standard (never re-mated: it is built into the switch board) in two
/// consecutive cooldowns, at one temperature. The line was warmed, cooled again and its switch actuated
/// between them, and nothing failed (the dataset README: the same standard across cooldowns shares the
/// line): no finding above info, and the states inferred leave one state for both sweeps open (the
/// hypothesis chosen or one of those the report keeps open).
pub fn check_repeat(r: &CompareReport) -> Result<(), String> {
    let same = r.states.baseline == r.states.current
        || r.states.hypotheses_open.iter().any(|h| h.same_state());
    quiet(
        r,
        (!(r.states.inferred && same)).then(|| {
            format!(
                "states {} with no single state left open ({})",
                states(r),
                r.states.basis
            )
        }),
    )
}

/// Where the far end is for a pair: between the two sweeps' far-end echoes (those of them that end in a
/// reflecting termination), widened by [`FAR_END_CELLS`] resolution cells.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FarRegion {
    pub start_m: f64,
    pub end_m: f64,
}

impl FarRegion {
    /// The region round the given far-end echoes; `None` when there is none.
    pub fn around(ends: &[FarEnd]) -> Option<FarRegion> {
        let lo = ends.iter().map(|e| e.distance_m).reduce(f64::min)?;
        let hi = ends.iter().map(|e| e.distance_m).reduce(f64::max)?;
        let pad = FAR_END_CELLS * ends.iter().map(|e| e.resolution_m).fold(0.0, f64::max);
        Some(FarRegion {
            start_m: lo - pad,
            end_m: hi + pad,
        })
    }

    pub fn contains(&self, x: f64) -> bool {
        x >= self.start_m && x <= self.end_m
    }
}

/// Far-end check: a change is reported, the rank-1 one lies in `region`, and so does every finding above
/// info.
pub fn check_far_end(r: &CompareReport, region: &FarRegion) -> Result<(), String> {
    let span = format!("{:.4}..{:.4} m", region.start_m, region.end_m);
    let Some(first) = top(r) else {
        return Err(format!(
            "no change reported; the termination changed at the far end ({span})"
        ));
    };
    let mut why = Vec::new();
    if !region.contains(first.place.distance_m) {
        why.push(format!(
            "rank 1 away from the far end ({span}): {}",
            describe(first)
        ));
    }
    let away: Vec<String> = r
        .findings
        .iter()
        .filter(|f| f.rank != 1 && f.severity > Severity::Info)
        .filter(|f| !region.contains(f.place.distance_m))
        .map(describe)
        .collect();
    if !away.is_empty() {
        why.push(format!(
            "{} other finding(s) above info away from the far end ({span}): {}",
            away.len(),
            some(&away)
        ));
    }
    if why.is_empty() {
        Ok(())
    } else {
        Err(why.join("; "))
    }
}

/// The premise of the air-line check: far-end echoes `measured_mm` of air line apart, against the air line's
/// `nominal_mm`, within [`MOVE_TOLERANCE_MM`].
pub fn check_echo_move(measured_mm: f64, nominal_mm: f64) -> Result<(), String> {
    if (measured_mm - nominal_mm).abs() > MOVE_TOLERANCE_MM {
        return Err(format!(
            "the far-end echoes moved {measured_mm:.2} mm of air line, not {nominal_mm} mm"
        ));
    }
    Ok(())
}

/// The far-end move of an offset short against the flush short of the same port and temperature, air-line
/// mm.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OffsetMove {
    /// Nominal air line, mm.
    pub nominal_mm: f64,
    /// From the two sweeps' far-end echoes ([`far_end`]), without the comparator.
    pub measured_mm: f64,
    /// From the comparator alone: its far-end move (`far_end.delay_change_s`) of flush -> offset and of
    /// offset -> flush, averaged, as air line. `None` when neither comparison gives one.
    pub reported_mm: Option<f64>,
}

impl OffsetMove {
    /// The move from the comparisons `to_offset` (flush -> offset) and `to_flush` (offset -> flush) and the
    /// far-end echoes `flush` and `offset`.
    pub fn of(
        to_offset: &CompareReport,
        to_flush: &CompareReport,
        flush: &FarEnd,
        offset: &FarEnd,
        nominal_mm: f64,
    ) -> OffsetMove {
        // The comparator's own far-end move (`far_end.delay_change_s`, round trip), both ways, averaged:
        // air = c0 tau / 2.
        let mv = |r: &CompareReport| r.far_end.as_ref().and_then(|f| f.delay_change_s);
        let reported_mm = match (mv(to_offset), mv(to_flush)) {
            (Some(a), Some(b)) => {
                Some(0.5 * (a - b) * coldtrace::transform::C0_M_PER_S / 2.0 * 1e3)
            }
            (Some(a), None) => Some(a * coldtrace::transform::C0_M_PER_S / 2.0 * 1e3),
            (None, Some(b)) => Some(-b * coldtrace::transform::C0_M_PER_S / 2.0 * 1e3),
            _ => None,
        };
        OffsetMove {
            nominal_mm,
            measured_mm: air_mm(flush, offset),
            reported_mm,
        }
    }

    /// The comparator's move within [`MOVE_TOLERANCE_MM`] of the air line.
    pub fn check(&self) -> Result<(), String> {
        match self.reported_mm {
            None => Err("no change reported in one of the two directions".into()),
            Some(mm) if (mm - self.nominal_mm).abs() > MOVE_TOLERANCE_MM => Err(format!(
                "the comparator moves the far end by {mm:.2} mm of air line, not {} mm (far-end echoes: \
                 {:.2} mm)",
                self.nominal_mm, self.measured_mm
            )),
            Some(_) => Ok(()),
        }
    }
}
