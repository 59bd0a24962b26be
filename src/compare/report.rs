//! The comparator's results. Their JSON (the keys as named here) is a contract, documented in
//! docs/output.md; text tables are made from the same structs.

use super::align::SegmentAlignment;
pub use super::evidence::Evidence;
use super::lumped::ModelType;
use super::severity::Severity;
use crate::Warning;
use serde::Serialize;

/// What a finding most likely is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum FaultKind {
    PinGap,
    Contact,
    Crush,
    ImpedanceStep,
    Open,
    Short,
    Unknown,
}

impl FaultKind {
    pub fn name(self) -> &'static str {
        match self {
            FaultKind::PinGap => "pin-gap",
            FaultKind::Contact => "contact",
            FaultKind::Crush => "crush",
            FaultKind::ImpedanceStep => "impedance-step",
            FaultKind::Open => "open",
            FaultKind::Short => "short",
            FaultKind::Unknown => "unknown",
        }
    }
}

/// The best lumped model of a finding or event. JSON: `model` {`type`, `value`, `unit`, `fit_error`}.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ModelSummary {
    #[serde(rename = "type")]
    pub model: ModelType,
    /// The model's value in SI units (`unit`): F, ohm or H. For an open or short: 0 on a line file's
    /// compensated trace; on a line of unknown loss, the apparent |rho| (what the line's loss left of 1).
    pub value: f64,
    pub unit: &'static str,
    /// RMS misfit relative to the measured local reflection (0 perfect, 1 no better than nothing).
    pub fit_error: f64,
    /// For a series capacitance: the equivalent axial gap between the centre-conductor ends, m.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gap_m: Option<f64>,
}

/// Where on the line something is.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Place {
    /// As-built metres from the reference plane.
    pub distance_m: f64,
    /// The element it lies in (the line file's name, or `line` for a line of unknown construction).
    pub element: String,
    /// Offset inside that element, m.
    pub offset_m: f64,
    /// The nearest named connector, if the line has any.
    pub nearest_connector: Option<String>,
    /// How far that connector's middle is from `distance_m`, m.
    pub nearest_connector_distance_m: Option<f64>,
}

/// One located change between the two sweeps. Ordered by `rank` in the report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// 1 = the change that costs the line most.
    pub rank: usize,
    #[serde(flatten)]
    pub place: Place,
    pub kind: FaultKind,
    pub severity: Severity,
    /// Reflection of the event in the current sweep, loss-compensated with the line model, dB (20 log10|rho|).
    pub reflection_db: f64,
    /// Change of the event's reflection beyond what the calibration explains (the level and loss change
    /// fitted on the landmarks, and the shadow of changed joints in front of it), dB (positive: stronger now).
    pub change_db: f64,
    /// The measured change of the event's reflection, current over baseline, dB.
    pub measured_change_db: f64,
    /// The interval of changes the calibration explains at this place, dB.
    pub expected_change_db: [f64; 2],
    /// Change of the reflection's phase, current against baseline, degrees (meaningful when both sweeps are in
    /// the same state).
    pub phase_change_deg: f64,
    /// Mismatch loss the event adds, averaged over the swept band, dB.
    pub mismatch_loss_db: f64,
    /// Predicted drop of transmitted power past the event at the reference frequency, dB (from the model;
    /// net of what the baseline already had there): the worse end of `power_drop_range_db`, which ranks.
    pub power_drop_db: f64,
    /// The plausible range of that drop, dB: a contact and an impedance step reflect alike but cost
    /// differently, so both ends are carried.
    pub power_drop_range_db: [f64; 2],
    /// Half-width of the position's 95 % interval, m.
    pub uncertainty_m: f64,
    /// 0..1: how sure the finding is (signal-to-noise of the change and fit quality).
    pub confidence: f64,
    pub model: ModelSummary,
    /// Set when the event sits where a multiple reflection of stronger events would land.
    pub likely_ghost: bool,
    /// How far the change stands beyond what counts as a change, in units of its threshold (1: at it): the
    /// strength's change over `compare::difference::CHANGE_DB`, in one state the phase turn over
    /// `PHASE_CHANGE_DEG` or the relative complex change over `VECTOR_CHANGE`, the far end's move over
    /// `compare::run::FAR_END_MOVE_M`; ranks changes of equal severity and cost.
    pub significance: f64,
    /// The reflection that appeared or vanished beyond the calibration, linear: |G_c - g G_b| where the
    /// phases compare (the echo paired, well over the noise), otherwise from the strengths alone,
    /// |G_c| |1 - 10^(-change_db/20)|; for the far end that moved, what the move turned
    /// (`run::moved_reflection`). Ranks info findings: a large change of a faint echo matters less than a
    /// small change of a strong one.
    pub changed_reflection: f64,
    /// Where it was seen: `line` (the visible line: anything may be claimed), `beyond-far-end` (behind an
    /// open or short far end), `alias-edge` (where echoes from beyond the record fold back),
    /// `behind-device`, or `far-end` (the far end's own open or short, already one in the baseline). Only
    /// `line` findings rank above info.
    pub zone: &'static str,
    /// One plain sentence.
    pub explanation: String,
    /// The local reflection at its place and its model's, for the evidence plot; not in the JSON.
    #[serde(skip)]
    pub evidence: Evidence,
}

/// The far end as the two sweeps saw it. JSON: `far_end` of the compare report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FarEndReport {
    /// As-built position of the far end's echo in each sweep, m.
    pub baseline_m: f64,
    pub current_m: f64,
    /// `open`, `short` or `other` (what the echo's polarity and strength say) in each sweep.
    pub baseline_kind: &'static str,
    pub current_kind: &'static str,
    /// Change of the far end's round-trip delay beyond what the line in front of it explains, s (positive:
    /// the line now ends later): the lag between the two far-end echoes (`far_end::echo_lag`) less the
    /// line's own change in front of them (none in one state); `null` when the two echoes' polarities differ
    /// (an open against a short) or either is unclear.
    pub delay_change_s: Option<f64>,
    /// Least round-trip delay change counted as a move, s: 1 mm of air line (`run::FAR_END_MOVE_M`), and
    /// across a change of state also what the thermal change of the stretch behind the last landmark leaves
    /// unknown (`run::STRETCH_SCALE_SPREAD` of its delay).
    pub move_tolerance_s: f64,
}

/// One discontinuity seen in a single sweep (`locate`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Event {
    #[serde(flatten)]
    pub place: Place,
    pub kind: FaultKind,
    pub severity: Severity,
    /// Loss-compensated reflection, dB.
    pub reflection_db: f64,
    pub mismatch_loss_db: f64,
    pub power_drop_db: f64,
    pub uncertainty_m: f64,
    pub confidence: f64,
    pub model: ModelSummary,
    pub likely_ghost: bool,
    /// False when the event lies where reflection cannot honestly see (behind a device, past the alias-free
    /// range, or where compensation would need more than its cap).
    pub visible: bool,
    pub explanation: String,
    /// 1 = the anomaly that costs the line most (by severity, then predicted drop, then reflection; what is
    /// visible and not a likely ghost first), numbered without gaps; `null` for an echo the line file
    /// expects (`compare::locate::rank_events`).
    pub rank: Option<usize>,
    /// True for an echo the line file expects: the nominal line (its connectors, its designed termination),
    /// simulated without faults in the same state on the same grid, shows one there at most
    /// `compare::locate::EXPECTED_MARGIN_DB` weaker. Such an event is `info`, whatever it costs.
    pub expected: bool,
    /// The nominal line's own echo at this place, dB (compensated as `reflection_db`), when it has one.
    pub expected_reflection_db: Option<f64>,
    /// The local reflection at its place and its model's, for the evidence plot; not in the JSON.
    #[serde(skip)]
    pub evidence: Evidence,
}

/// An element reflection cannot see, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NotVisible {
    pub element: String,
    pub reason: String,
}

/// How the two sweeps were aligned. JSON: `alignment` {`residual_m`, `segments`, ...}.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Alignment {
    /// RMS misalignment of the landmarks after the fit, as-built metres (includes each landmark's own
    /// position uncertainty).
    pub residual_m: f64,
    pub segments: Vec<SegmentAlignment>,
    /// Landmarks used: as-built metres in the baseline.
    pub landmarks_m: Vec<f64>,
    /// Change of the round-trip delay to the farthest landmark, current over baseline minus one.
    pub electrical_length_change: f64,
    /// Change of the whole trace's level, current over baseline, dB (an amplifier's gain, a source power):
    /// what every echo shares before the line's own loss change. In the report, as swept: with the gain
    /// each sweep was read scaled down by (`gain-in-path`) put back.
    pub level_change_db: f64,
    /// The line file's joints the baseline showed, on which positions are anchored (docs/method.md), front
    /// to back; empty without a line file.
    pub anchors: Vec<JointAnchor>,
}

/// A joint of the line file found in the baseline sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct JointAnchor {
    pub element: String,
    /// Its place in the line file, m (where findings at it are reported).
    pub position_m: f64,
    /// How much farther along the line the baseline shows it than the line file's model puts it, m
    /// (negative: nearer). The declared lengths' error and, in a cold baseline, the cold model's.
    pub shift_m: f64,
}

impl Alignment {
    /// Relative change of the round-trip delay between as-built positions `x0` and `x1` (current over
    /// baseline, minus one), from the fitted per-segment scales.
    pub fn delay_change_between(&self, x0: f64, x1: f64) -> f64 {
        let (mut base, mut cur) = (0.0, 0.0);
        for s in &self.segments {
            let len = s.end_m - s.start_m;
            if len <= 0.0 {
                continue;
            }
            let overlap = (s.end_m.min(x1) - s.start_m.max(x0)).max(0.0) / len;
            base += overlap * s.baseline_delay_s;
            cur += overlap * s.baseline_delay_s * s.delay_scale;
        }
        if base > 0.0 {
            cur / base - 1.0
        } else {
            0.0
        }
    }
}

/// Loss the findings explain against the loss observed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PowerCheck {
    /// Observed drop of transmitted power, dB, and where it came from (`s21` or `given`).
    pub observed_drop_db: f64,
    pub source: &'static str,
    /// Sum of the findings' predicted drops, dB.
    pub explained_drop_db: f64,
    pub unexplained_db: f64,
}

/// The state a sweep was taken in, as used by the report, and how it was decided.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StateReport {
    /// The states used: `warm` or `cold`.
    pub baseline: &'static str,
    pub current: &'static str,
    /// True when coldtrace inferred at least one of them rather than being told.
    pub inferred: bool,
    pub basis: String,
    /// The signatures read from the data, each with its misfit under every hypothesis.
    pub signatures: Vec<super::states::Signature>,
    /// Standard uncertainties between the chosen hypothesis and the runner-up; `null` when the states were
    /// given (and not checked) or nothing else was possible.
    pub margin: Option<f64>,
    /// The hypotheses the data leave open, the one used first: a change is reported above info only when it
    /// is a change under every one of them.
    pub hypotheses_open: Vec<super::states::Hypothesis>,
}

impl StateReport {
    /// States given by the user.
    pub fn given(baseline: crate::line::State, current: crate::line::State) -> Self {
        StateReport {
            baseline: baseline.name(),
            current: current.name(),
            inferred: false,
            basis: "given".into(),
            signatures: Vec::new(),
            margin: None,
            hypotheses_open: vec![super::states::Hypothesis::of(baseline, current)],
        }
    }
}

/// Traces and marks for a plot (not part of the JSON).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotData {
    /// (name, as-built metres, compensated |h| in dB) per sweep.
    pub traces: Vec<(String, Vec<f64>, Vec<f64>)>,
    /// (as-built metres, label): connectors, attenuators, devices and findings.
    pub marks: Vec<(f64, String)>,
}

/// `compare`'s result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareReport {
    pub line: String,
    pub baseline: String,
    pub current: String,
    pub states: StateReport,
    /// Two-event resolution of the coarser sweep, m.
    pub resolution_m: f64,
    /// Frequency at which power drops are quoted, Hz.
    pub reference_hz: f64,
    pub alignment: Alignment,
    pub findings: Vec<Finding>,
    pub not_visible: Vec<NotVisible>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub power: Option<PowerCheck>,
    /// RMS magnitude of the noise in the current sweep's uncompensated trace (linear).
    pub noise_rms: f64,
    /// With a line file: each element's round-trip loss and the smallest visible |rho| in the current sweep.
    pub visibility: Vec<crate::line::Visibility>,
    /// The far end both sweeps show, when each has one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub far_end: Option<FarEndReport>,
    /// With a line file: how its connectors' lengths were counted (`in-cables` or `added`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub connector_lengths: Option<String>,
    pub warnings: Vec<Warning>,
    #[serde(skip)]
    pub plot: PlotData,
}

/// `locate`'s result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LocateReport {
    pub line: String,
    pub sweep: String,
    /// The state used: `warm` or `cold`.
    pub state: &'static str,
    /// `given`, or how the state was inferred (the far end's loss against the warm and cold model) and how
    /// sure that is.
    pub state_basis: String,
    pub resolution_m: f64,
    pub reference_hz: f64,
    pub events: Vec<Event>,
    pub not_visible: Vec<NotVisible>,
    /// RMS magnitude of the noise in the uncompensated trace (linear, a lone reflection rho reads |rho|).
    pub noise_rms: f64,
    /// With a line file: for each element, the round-trip loss to it and the smallest |rho| the noise lets
    /// one see there (`line::visibility`).
    pub visibility: Vec<crate::line::Visibility>,
    /// With a line file: how its connectors' lengths were counted (`in-cables` or `added`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub connector_lengths: Option<String>,
    pub warnings: Vec<Warning>,
    #[serde(skip)]
    pub plot: PlotData,
}
