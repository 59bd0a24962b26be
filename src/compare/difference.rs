//! The difference stage: every echo of either sweep, paired across the aligned sweeps, with the change of
//! its strength judged against what the calibration expects there (the level and loss change fitted on the
//! landmarks, and the shadow of changed joints in front of it), and the zone it lies in.
//!
//! Conventions: round-trip delays in s; as-built positions in m; changes in dB, current over baseline;
//! `expected` is an interval of changes the calibration explains; `excess_db` is how far the measured change
//! lies outside it (0 inside).

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, SegmentKind, Which};
use super::detect::NOISE_SIGMAS;
use super::far_end::{Termination, ALIAS_EDGE};
use super::landmarks::{match_events, Fitted, AMPLITUDE_SIGMA_DB, MODEL_LOSS_ERROR};
use super::sweep::db;
use crate::line::Load;
use crate::transform::TraceEngine;
use num_complex::Complex64;

/// Where on the record an echo lies, and so what may be claimed of it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Zone {
    /// On the visible line: anything may be claimed.
    Line,
    /// Behind a part reflection cannot see through (a device of the line file).
    BehindDevice,
    /// Behind an open or short far end: only multiple reflections live there.
    BeyondFarEnd,
    /// Near the end of the alias-free record, where echoes from beyond it fold back.
    AliasEdge,
    /// At the start of the record, where the line's own far part folds back from beyond the alias-free
    /// time (a line longer than the record: `far_end::folded_until`).
    Folded,
}

/// The far end as both sweeps saw it.
#[derive(Debug, Clone, PartialEq)]
pub struct FarEnds {
    pub baseline: Option<Termination>,
    pub current: Option<Termination>,
}

impl FarEnds {
    /// True when the same open or short terminates both sweeps (same polarity, both total).
    pub fn same_total(&self) -> bool {
        match (&self.baseline, &self.current) {
            (Some(b), Some(c)) => b.total && c.total && b.polarity * c.polarity > 0.0,
            _ => false,
        }
    }
}

/// One echo seen in either sweep, paired and judged.
#[derive(Debug, Clone, PartialEq)]
pub struct Change {
    /// As-built position (from the current sweep's delay, or the baseline's for an echo that vanished).
    pub x: f64,
    /// Delay in the current sweep, s.
    pub d_c: f64,
    /// Strength in the current sweep (compensated; at least the noise floor where nothing is seen).
    pub mag_c: f64,
    pub gamma_c: Complex64,
    /// The baseline's echo paired with it: strength and complex response; `None` for a new echo.
    pub base: Option<(f64, Complex64)>,
    /// The baseline's strength at this place (its paired echo, or its response there, at least the noise
    /// floor).
    pub base_level: f64,
    /// Measured change of strength, dB.
    pub raw_change_db: f64,
    /// Interval of changes the calibration and shadowing explain, dB.
    pub expected_db: (f64, f64),
    /// How far the measured change lies outside `expected_db`, dB (signed; 0 inside).
    pub excess_db: f64,
    /// Phase turn of the response, current against baseline, degrees (paired echoes only).
    pub phase_deg: f64,
    pub zone: Zone,
    pub ghost: bool,
    /// True for the far end's own echo when the same open or short terminates both sweeps.
    pub same_termination: bool,
    /// True for the far end's echo when it is an open or short now and was one before (of either kind).
    pub was_total: bool,
    /// Amplitude signal-to-noise of the current echo.
    pub snr: f64,
    /// For the far end's own open or short: its echo's change beyond what the landmarks in front of it
    /// predict (the prediction's centre), dB, when it lies further from it than [`FAR_END_SIGMAS`] standard
    /// uncertainties (the loss the landmarks leave unpinned and one landmark's amplitude,
    /// [`AMPLITUDE_SIGMA_DB`], in quadrature) and [`CHANGE_DB`]: the termination's own joint changed. (An
    /// open or short reflects all; its echo moves with the line's loss, not with its joint's contraction.)
    pub far_level_db: Option<f64>,
    /// For the echo that now blocks the line, the far end's fall beyond its interval, dB (positive; a lower
    /// bound where it fell into the noise): the baseline's far end vanished from the current sweep (it fell
    /// by [`SHADOW_MAX_DB`] or more beyond what the calibration explains), and this echo in front of it rose
    /// the most beyond its own calibration (`blocker`). It counts as a change under its own threshold: the
    /// two together are one change, a joint that now reflects what used to reach the far end.
    pub blocks_far_end: Option<f64>,
    /// For a joint of the line file judged at its own place, both sweeps in one state (`joint_probes`):
    /// its complex change over what counts as one (>= 1).
    pub joint_change: Option<f64>,
    /// True for an echo within a resolution cell of the line file's device that ends the visible line (a
    /// load, an amplifier's input; not an open or short): a component's echo however weak it is (a cold
    /// load's resistance and a cold cable's impedance both move, so a matched end's faint echo may rise by
    /// tens of dB on cooling and still cost nothing).
    pub at_device: bool,
    /// The reflection under which the device's echo is what its own cooling makes of it
    /// ([`DEVICE_DRIFT_REFLECTION`], or [`MATCHED_DEVICE_DRIFT_REFLECTION`] for a declared match).
    pub device_drift: f64,
    /// For an echo within half a resolution cell and 5 mm of an attenuator's loss step (the middle of its
    /// body, where the line file's model puts its loss and where its resistive element and that element's
    /// own mismatch sit): the factor that reads its compensated strength as seen in front of that step (1 in front of
    /// it, 10^(-A/20) for a round-trip loss A behind it). Which side of the step such an echo lies on is
    /// not known to within the length errors and the cell; in front, it is the pad's own echo.
    pub pad_front: Option<f64>,
    /// For an echo at an attenuator's loss step ([`Change::pad_front`]): the reflection, read in front of the
    /// step, under which its echo is what the pad's own cooling makes of it ([`pad_drift_reflection`]).
    pub pad_drift: f64,
    /// For a new echo at an attenuator's element, behind its loss step, where the baseline's echo in front of
    /// the step within a cell and a half is gone: this echo read in front of the step over that one, beyond
    /// the calibration, dB ([`pad_step_change_db`]). An echo whose peak slid across the step (the joint's and
    /// the pad's echoes overlap within a cell, and a cooldown shifts their balance) reads 20 dB up behind a
    /// 10 dB pad for what is, in front of it, the same echo.
    pub pad_step_change_db: Option<f64>,
    /// For an echo at an attenuator's loss step that reads [`PAD_OPEN_REFLECTION`] or more behind it: an
    /// echo further on is still seen at its level (it fell by less than half of what so strong a
    /// reflection behind the pad would take from it), so this one lies in front of the step.
    pub seen_behind: bool,
    /// True for an echo in the line's steady part across a change of state: everything in front of it, and
    /// its own place, at room temperature in both sweeps, and nothing that cools within
    /// [`STEADY_CLEAR_CELLS`] behind it but a cable's gradual taper down from room temperature (see
    /// [`ChainView::steady_to`]). Nothing there changed with the cooldown, so it is judged as in one state.
    pub steady: bool,
}

/// Least distance, in resolution cells, between an echo and the first joint or part of the line that cools
/// (other than a cable's taper down from room temperature), for the echo to be judged as in one state
/// across a change of state ([`Change::steady`]): past the main lobe
/// (1.3 cells to its first null for the default window, `analysis::lobe_shape`) what changes behind it
/// reaches the echo only through the window's sidelobes, -66 dB for Kaiser beta 9 (Harris 1978, Table 1).
pub const STEADY_CLEAR_CELLS: f64 = 2.0;

/// Standard uncertainties by which a far end's echo must lie beyond the prediction of the landmarks in
/// front of it to count as its own change (the usual three-sigma rule; common practice, no source).
pub const FAR_END_SIGMAS: f64 = 3.0;

/// Standard uncertainty of an open or short far end's echo between two sweeps in one state, dB, beyond the
/// noise: a network analyser's drift and a flexed test cable (common practice, no source). The real
/// campaign's switch-board short, swept in six cooldowns without being re-mated, moves by at most 0.03 dB
/// from one cooldown to the next at room temperature and cold alike (docs/accuracy-real.md, check (d),
/// the `loss-ratio` signature).
pub const ONE_STATE_LEVEL_SIGMA_DB: f64 = 0.1;

/// Share of the round-trip loss to an open or short far end by which its echo may move between two sweeps
/// in one state: two warm sweeps a few kelvin of room temperature apart move copper's resistivity by 0.39 %
/// per kelvin (the International Annealed Copper Standard's temperature coefficient at 20 C, 0.00393/K)
/// and its surface resistance by half of that, 1 % of the conductor loss for 5 K; twice that is allowed.
pub const ONE_STATE_LOSS_SHARE: f64 = 0.02;

/// Least change of an open or short far end's echo, beyond what the landmarks in front of it predict, that
/// counts as its own joint's change when both sweeps are in one state, dB: a series resistance of 1.5 ohm
/// in front of a short on 50 ohm, 20 log10((50 - R)/(50 + R)) (circuit theory). Across a change of state
/// it is [`CHANGE_DB`].
pub const ONE_STATE_FAR_LEVEL_DB: f64 = 0.5;

/// How far behind an open or short far end, in resolution cells, an echo is taken for a multiple reflection:
/// one cell, the far end's own main lobe (common practice, no source).
pub const BEYOND_CELLS: f64 = 1.0;

/// Largest reflection a changed joint is taken to have when its shadow is worked out (0.9, as `explain`
/// reads an open or short from).
pub const SHADOW_MAX_REFLECTION: f64 = 0.9;

/// Largest shadow the changes in front of an echo may explain, dB (a joint that reflects 0.9 passes
/// 20 log10(0.19) = -14 dB round trip; common practice, no source).
pub const SHADOW_MAX_DB: f64 = 15.0;

/// Change of strength that counts as a change once the calibration is allowed for, dB. Cold connectors' own
/// reflections move by a dB or two as their parts contract (common practice, no source).
pub const CHANGE_DB: f64 = 3.0;

/// Relative complex change of a joint's echo that counts as a change across a change of state, and the least
/// amplitude signal-to-noise for it (100: 40 dB). Each sweep's echo is read at its own peak, so the phases
/// compare without the alignment's residual; what the compensation leaves of the line's dispersion turns
/// them by some tens of degrees at most, |e^{j 40 deg} - 1| = 0.68 (common practice, no source).
pub const VECTOR_CHANGE_ACROSS_STATES: f64 = 0.8;
pub const ACROSS_STATES_SNR: f64 = 100.0;

/// Widest interval of explained strength changes, dB, where phases still compare across a change of state
/// (common practice, no source).
pub const ACROSS_STATES_INTERVAL_DB: f64 = 1.0;

/// Reflection from which an echo is a component's (a switch, a filter, an amplifier's input, a device of
/// the line) rather than a joint's: 0.1 (-20 dB); a good joint of 0.086-in coax reflects a few per cent at
/// 10 GHz (common practice, no source).
pub const COMPONENT_REFLECTION: f64 = 0.1;

/// Reflection a device at the end of the visible line (a load, an amplifier's input) may show in either
/// state on its own, across a change of state: 0.03 (-30 dB), a 50 ohm load 6 % off (a chip resistor's
/// temperature coefficient of 100-200 ppm/K over the 290 K of a cooldown) or a cold cable's impedance a
/// few per cent under the load's (common practice, no source). Below it in both sweeps, the device's echo
/// is reported at `info` at most across a change of state.
pub const DEVICE_DRIFT_REFLECTION: f64 = 0.03;

/// How near an attenuator's loss step an echo is taken for the pad's own ([`Change::pad_front`]): half a
/// resolution cell (where the main lobe's peak of an echo at the step lies whatever its phase) and 5 mm
/// (half the centimetre by which a body the line file only defaults may be off its 2 cm; common practice,
/// no source). A joint beside the pad lies half the body and half its connector away, 14 mm for 2 cm and
/// 8 mm.
pub const PAD_STEP_CELLS: f64 = 0.5;
pub const PAD_STEP_M: f64 = 5e-3;

/// Reflection an attenuator's own resistive element may show, read in front of its loss, on its own across a
/// change of state: 0.01. Its resistors move by up to 2 % over a cooldown (thin-film temperature
/// coefficients of tens of ppm/K over 290 K; common practice, no source), which moves its input impedance by
/// as much and its reflection by half of that, |dZ| / (2 Z0) (circuit theory). A contact of 2 ohm or more at
/// the joint beside it reflects more. The steps its fixed 50 ohm makes with the cables beside it, whose
/// impedance moves on cooling (about 1 % for a PTFE cable by the model, up to twice that for real ones),
/// come on top ([`pad_drift_reflection`]).
pub const PAD_DRIFT_REFLECTION: f64 = 0.01;

/// Reflection, read behind an attenuator's loss step, from which an echo there is an open or nearly (a pin
/// pulled back, a break) and never taken for the pad's own drift: 0.5 (common practice, no source). Under
/// it, across a change of state, the pad's drift and a small fault right behind it cannot be told apart.
pub const PAD_OPEN_REFLECTION: f64 = 0.5;

/// The same for a device the line file calls a match (`load = "match"`): 0.05, a coaxial termination's
/// specified match over the first ten gigahertz or so (VSWR 1.1; common practice, no source), which its
/// cooling may use up as its resistive film and launch move. A contact of 5 ohm or more in front of it
/// reflects more.
pub const MATCHED_DEVICE_DRIFT_REFLECTION: f64 = 0.05;

/// Strength change of a component's echo that counts as a change across a change of state, dB: a
/// component's match moves by several dB on cooling (its semiconductors, ferrites and resonances move with
/// temperature) where a joint's moves by a dB or two (common practice, no source). A component that failed
/// changes by more (an open, a short), or shows it in one state.
pub const COMPONENT_CHANGE_DB: f64 = 6.0;

/// Phase turn that counts as a change when both sweeps are in the same state, degrees.
pub const PHASE_CHANGE_DEG: f64 = 90.0;

/// Relative complex change of an echo that counts as a change when both sweeps are in the same state:
/// 10^(3/20) - 1 = 0.41, what a [`CHANGE_DB`] rise is when the added reflection is in phase with the echo;
/// at right angles it is a rise of only 0.7 dB.
pub const VECTOR_CHANGE: f64 = 0.412_537_5;

/// Relative complex change of an echo, both sweeps in one state, from which a change too small to count
/// ([`VECTOR_CHANGE`]) is still reported at `info`: 0.15, about 1.2 dB in phase with the echo or 9 degrees
/// at right angles, above what a network analyser's drift and a flexed test cable leave after the
/// alignment (common practice, no source).
pub const NOTED_VECTOR_CHANGE: f64 = 0.15;

/// Strength change of a component's echo beyond the calibration, across a change of state, from which it
/// is reported at `info` though under [`COMPONENT_CHANGE_DB`]: half as much again as a landmark's own
/// amplitude uncertainty in the calibration of levels ([`AMPLITUDE_SIGMA_DB`], 1 dB; common practice, no
/// source).
pub const NOTED_COMPONENT_DB: f64 = 1.5;

/// Least amplitude SNR of an echo whose small change is reported (1000: 60 dB): the noise then moves its
/// complex response by a thousandth, and a faint echo's response is shaped by its neighbours' skirts and
/// the compensation's residue more than by its joint (common practice, no source).
pub const NOTED_SNR: f64 = 1000.0;

/// Least amplitude SNR of an echo whose phase turn counts as a change (10: 20 dB).
pub const PHASE_SNR: f64 = 10.0;

impl Change {
    /// Whether this counts as a change: its strength moved by [`CHANGE_DB`] or more beyond what the
    /// calibration explains, or, both sweeps in one state, its phase turned by [`PHASE_CHANGE_DEG`] or more.
    pub fn changed(&self, same_state: bool) -> bool {
        let same_state = self.one_state(same_state);
        self.far_level_db.is_some()
            || self.blocks_far_end.is_some()
            || (same_state && self.joint_change.is_some())
            || self.excess_db.abs() >= self.threshold_db(same_state)
            || self.complex_significance(same_state) >= 1.0
    }

    /// The complex change of the response relative to the baseline's, net of the calibration's level:
    /// |G_c / (G_b g) - 1| with g the expected amplitude ratio, the nearest edge of `expected_db` (so the
    /// strength enters by `excess_db`), turned by `phase_deg`; 0 for an echo with no partner. It catches what
    /// adds at right angles to an echo (a contact's resistance on a connector's capacitance), which barely
    /// moves the strength.
    pub fn vector_change(&self) -> f64 {
        if self.base.is_none() {
            return 0.0;
        }
        (Complex64::from_polar(
            10f64.powf(self.excess_db / 20.0),
            self.phase_deg.to_radians(),
        ) - 1.0)
            .norm()
    }

    /// The strength change that counts as a change here: [`CHANGE_DB`], or across a change of state
    /// [`COMPONENT_CHANGE_DB`] for an echo the baseline already saw at [`COMPONENT_REFLECTION`] or more.
    pub fn threshold_db(&self, same_state: bool) -> f64 {
        let same_state = self.one_state(same_state);
        if !same_state && self.base.is_some() && self.is_component() {
            COMPONENT_CHANGE_DB
        } else {
            CHANGE_DB
        }
    }

    /// How far the complex change stands beyond what counts as a change: in one state the phase turn over
    /// [`PHASE_CHANGE_DEG`] or the relative complex change over [`VECTOR_CHANGE`]; across a change of state,
    /// for a joint's echo well over the noise, the relative complex change over
    /// [`VECTOR_CHANGE_ACROSS_STATES`]; 0 for an echo with no partner, a component's across a change of
    /// state, or one too close to the noise for its phase to mean anything.
    pub fn complex_significance(&self, same_state: bool) -> f64 {
        let same_state = self.one_state(same_state);
        if self.base.is_none() {
            return 0.0;
        }
        if same_state {
            if self.snr <= PHASE_SNR {
                return 0.0;
            }
            // A component's response has structure of its own (resonances, its neighbours' skirts): only
            // its phase turn counts.
            let vector = if self.base_level < COMPONENT_REFLECTION {
                self.vector_change() / VECTOR_CHANGE
            } else {
                0.0
            };
            return (self.phase_deg.abs() / PHASE_CHANGE_DEG).max(vector);
        }
        if self.phases_compare(false) {
            return self.vector_change() / VECTOR_CHANGE_ACROSS_STATES;
        }
        0.0
    }

    /// Whether the complex responses compare here: a joint's echo (under [`COMPONENT_REFLECTION`]), paired,
    /// over the noise by [`PHASE_SNR`] in one state and by [`ACROSS_STATES_SNR`] across a change of state.
    pub fn phases_compare(&self, same_state: bool) -> bool {
        let same_state = self.one_state(same_state);
        let snr = if same_state {
            PHASE_SNR
        } else {
            ACROSS_STATES_SNR
        };
        // Across a change of state, only where the calibration is sure of the strength: behind a capped
        // compensation or a changed joint the model's error of the loss, and of the dispersion that comes
        // with it, turns the phase too.
        let sure =
            same_state || self.expected_db.1 - self.expected_db.0 <= ACROSS_STATES_INTERVAL_DB;
        self.base.is_some() && !self.is_component() && self.snr > snr && sure
    }

    /// Whether, both sweeps in one state, a joint's echo (under [`COMPONENT_REFLECTION`]) that stands
    /// [`NOTED_SNR`] over the noise moved its complex response by less than counts as a change but by more
    /// than [`NOTED_VECTOR_CHANGE`] of itself: a joint that changed a little (a contact that has started to
    /// open). It is reported at `info`, never above, so that its history can be followed.
    ///
    /// Across a change of state, a component's echo ([`Change::is_component`]) well over the noise
    /// ([`ACROSS_STATES_SNR`]) whose strength moved beyond the calibration by [`NOTED_COMPONENT_DB`] or more
    /// but by less than counts as a change there ([`COMPONENT_CHANGE_DB`]) is noted too: its own cooling
    /// may have made it, and so may a fault at the joint in front of it, which shares its resolution cell.
    pub fn noted(&self, same_state: bool) -> bool {
        let same_state = self.one_state(same_state);
        if !same_state {
            return self.base.is_some()
                && self.is_component()
                && self.snr >= ACROSS_STATES_SNR
                && self.excess_db.abs() >= NOTED_COMPONENT_DB;
        }
        self.base.is_some()
            && self.base_level < COMPONENT_REFLECTION
            && self.snr >= NOTED_SNR
            && self.vector_change() >= NOTED_VECTOR_CHANGE
    }

    /// Whether, across a change of state, this is the device's own echo at the end of the visible line
    /// and under its drift bound ([`Change::device_drift`]) in both sweeps: what the device's own cooling can
    /// make of it. Such a change is reported at `info`, never above.
    pub fn within_device_drift(&self, same_state: bool) -> bool {
        let same_state = self.one_state(same_state);
        !same_state && self.at_device && self.mag_c.max(self.base_level) < self.device_drift
    }

    /// Whether, across a change of state, this is an echo at an attenuator's loss step ([`Change::pad_front`])
    /// whose strength, read in front of the step, moved by less than the pad's drift ([`Change::pad_drift`]:
    /// what the pad's own cooling and that of the cables beside it make of its match; a joint beside the
    /// pad may reflect more than that in both sweeps and still be only what it was), or that only slid
    /// across the step: read in front of it, within
    /// [`CHANGE_DB`] of the baseline's echo it replaced ([`Change::pad_step_change_db`]). Such a change is
    /// reported at `info`, never above. Not when the far end vanished behind it ([`Change::blocks_far_end`]:
    /// it is the fault that blocks the line), nor when it reads [`PAD_OPEN_REFLECTION`] or more behind the
    /// step unless what lies behind is still seen ([`Change::seen_behind`]).
    pub fn within_pad_drift(&self, same_state: bool) -> bool {
        let same_state = self.one_state(same_state);
        // An echo that now blocks the line (the far end vanished behind it) is no pad's drift.
        !same_state
            && self.blocks_far_end.is_none()
            && (self.mag_c.max(self.base_level) < PAD_OPEN_REFLECTION || self.seen_behind)
            && self.pad_front.is_some_and(|g| {
                g * (self.mag_c - self.base_level).abs() < self.pad_drift
                    || self.pad_step_change_db.is_some_and(|d| d.abs() < CHANGE_DB)
            })
    }

    /// Whether the baseline saw a component's echo here: one of [`COMPONENT_REFLECTION`] or more, or the
    /// line file's device at the end of the visible line ([`Change::at_device`]).
    pub fn is_component(&self) -> bool {
        self.base_level >= COMPONENT_REFLECTION || self.at_device
    }

    /// Whether this echo is judged as in one state: both sweeps are, or it lies in the line's steady part
    /// ([`Change::steady`]).
    pub fn one_state(&self, same_state: bool) -> bool {
        same_state || self.steady
    }

    /// Whether it may be reported above info at all.
    pub fn claimable(&self) -> bool {
        self.zone == Zone::Line
            && !self.ghost
            && (!self.same_termination || self.far_level_db.is_some())
    }
}

/// Change of the round-trip amplitude, dB, through a joint whose reflection went from `gb` to `gc`: the
/// interval between a lossless discontinuity (amplitude sqrt(1 - |G|^2) each way, so 1 - |G|^2 for the round
/// trip) and a series resistance (amplitude 1 - |G| each way, (1 - |G|)^2 for the round trip); circuit
/// theory, as in `lumped`.
pub fn shadow_db(gb: f64, gc: f64) -> (f64, f64) {
    let (gb, gc) = (gb.min(0.999), gc.min(0.999));
    let lossless = 20.0 * ((1.0 - gc * gc) / (1.0 - gb * gb)).log10();
    let resistive = 20.0 * ((1.0 - gc).powi(2) / (1.0 - gb).powi(2)).log10();
    (lossless.min(resistive), lossless.max(resistive))
}

/// Inputs of the difference stage.
pub struct Inputs<'a> {
    pub chain: &'a ChainView,
    pub b: &'a SweepAnalysis,
    pub c: &'a SweepAnalysis,
    pub fit: &'a Fitted,
    pub far: &'a FarEnds,
    /// Places of the joints the baseline showed, on which the chain was anchored, m.
    pub anchors_m: &'a [f64],
    /// Both sweeps in one state (the hypothesis under which the changes are judged).
    pub same_state: bool,
    /// Both states were given, not inferred: a hypothesis of one state is then known, not a reading of the
    /// data that a line whose loss barely moves on cooling can mislead.
    pub states_given: bool,
}

impl Inputs<'_> {
    /// How far, round trip, the aligned map may put an echo at as-built `x` from where it is, s: a tenth of
    /// a resolution cell ([`FLANK_TOLERANCE_CELLS`]) and twice the alignment's residual there.
    fn tolerance_s(&self, x: f64) -> f64 {
        let res_s = self.b.resolution_s.max(self.c.resolution_s);
        let speed = super::place::speed_at(&self.fit.chain, x, Which::Current);
        FLANK_TOLERANCE_CELLS * res_s + 2.0 * self.fit.report.residual_m / speed.max(1.0)
    }

    /// Where, m, what lies behind the line's visible end begins, a resolution cell before it: the end's
    /// declared place; for a device the line file calls a match, as far again as the parts between the
    /// last anchor in front of it and the device may be off their declared lengths
    /// ([`super::anchor::position_tolerance_m`]): the device's own faint echo read there is still the
    /// device's.
    fn device_end_m(&self) -> f64 {
        let end = self.chain.visible_end_m();
        // An open or short end is found where it is (`far_end`), and a device that reflects is an anchor
        // itself or its echo is the far end's: only a matched device's faint echo is where the lengths in
        // front of it put it, no nearer. A device the baseline anchored is where it was seen.
        let matched = self
            .chain
            .first_blocking()
            .is_some_and(|i| self.chain.segments[i].load == Some(Load::Match));
        if !matched {
            return end;
        }
        let from = self
            .anchors_m
            .iter()
            .copied()
            .filter(|&a| a <= end + 1e-9)
            .fold(0.0, f64::max);
        end + super::anchor::position_tolerance_m(self.chain, from, end)
    }

    /// The zone of an echo at as-built `x` (m) and current delay `d_c` (s), with a resolution cell of
    /// `res_m` there and the device's end at `device_end_m` ([`Self::device_end_m`]).
    fn zone(&self, x: f64, d_c: f64, res_m: f64, device_end_m: f64) -> Zone {
        let alias = self.c.alias_free_s.min(self.b.alias_free_s);
        if d_c >= ALIAS_EDGE * alias {
            return Zone::AliasEdge;
        }
        if d_c < super::far_end::pair_folded_until(self.chain, self.b, self.c) {
            return Zone::Folded;
        }
        if self.chain.as_built && x > device_end_m + res_m {
            return Zone::BehindDevice;
        }
        // Behind an open or short far end of either sweep (a little past it: its own main lobe).
        let beyond = |t: &Option<Termination>, a: &SweepAnalysis, which: Which| {
            t.as_ref().is_some_and(|t| {
                t.total && {
                    let xt = self.fit.chain.position_of(t.delay_s, which, None);
                    x > xt
                        + BEYOND_CELLS
                            * a.resolution_s
                            * super::place::speed_at(&self.fit.chain, xt, which)
                }
            })
        };
        if beyond(&self.far.baseline, self.b, Which::Baseline)
            || beyond(&self.far.current, self.c, Which::Current)
        {
            return Zone::BeyondFarEnd;
        }
        Zone::Line
    }
}

/// How much lower than it is a reflection at as-built `x` reads in sweep `which` because compensation
/// stopped at its cap, dB, at frequency `f` (0 where nothing is compensated).
pub fn cap_shortfall_db(chain: &ChainView, x: f64, f: f64, which: Which) -> f64 {
    if !chain.compensates() {
        return 0.0;
    }
    shortfall_db(&chain.loss_model_to(x, which), f)
}

/// [`cap_shortfall_db`] for the round trip `m` (from `ChainView::loss_model_to`) on a compensated chain, at
/// `f`: the loss beyond the cap, dB.
fn shortfall_db(m: &super::chain::LossModel, f: f64) -> f64 {
    let cap_db = 20.0 * super::analysis::MAX_COMPENSATION.log10();
    (m.db(f) - cap_db).max(0.0)
}

/// Most the model's loss error may widen the interval of explained changes where a sweep's compensation is
/// capped, dB: a reflection that rose by more than this beyond the caps is a change whatever the model got
/// wrong (a joint turned into a near-open rises by 20 dB or more; common practice, no source).
pub const CAPPED_MODEL_ERROR_DB: f64 = 12.0;

/// How far, in resolution cells, an echo must stand from an attenuator's middle, besides the model's error
/// since the nearest landmark, to be taken as lying on its side of the attenuator when echoes are paired:
/// echoes are placed to a small fraction of a cell (common practice, no source).
pub const PAIR_CLEAR_CELLS: f64 = 0.25;

/// Share of the delay from the nearest landmark by which the cold model may misplace an echo: about half
/// the physical range of a PTFE line's warm-to-cold change of electrical length
/// ([`super::landmarks::WARM_TO_COLD_CHANGE`], 1.2 %), which a model of the cooldown gets half right at worst
/// (common practice, no source).
pub const COLD_DELAY_ERROR: f64 = 0.005;

/// Share of an attenuator's round-trip loss its warm or cold value may be off from the line file's: a chip
/// attenuator is specified to a few tenths of a dB and moves little on cooling, unlike a cable's conductor
/// loss (common practice, no source).
pub const ATTENUATOR_LOSS_ERROR: f64 = 0.1;

/// Share of the band left out at each edge when the caps' shortfalls are compared: the band-pass window
/// weighs the edges down (Kaiser beta 9 a quarter of the band in from its edge is at I0(9 sqrt(0.75)) / I0(9) =
/// 0.32 of its peak; from the window's definition), so an echo's strength comes from the inner half.
pub const CAP_BAND_EDGE: f64 = 0.25;

/// Frequencies at which the compensation caps are compared across the band.
const CAP_PROBES: usize = 9;

/// The interval of strength changes, current over baseline, that the compensation caps of the two sweeps
/// explain at `x`, dB: each sweep reads low by its shortfall, which grows with frequency, and which part of
/// the band an echo's strength comes from depends on the echo (a capacitive joint reflects mostly at the
/// top): the least and the most of the two shortfalls' difference over the band bound it.
///
/// Where a sweep's compensation stopped at its cap somewhere in the band, the line in front of `x` is
/// lossy enough that the model's error of that loss ([`MODEL_LOSS_ERROR`] of the cables' part at the band
/// centre, [`ATTENUATOR_LOSS_ERROR`] of the attenuators') is no
/// longer small next to a change: that sweep's reading is a lower bound, and the interval widens by that
/// error on its side. (In one state both sweeps share the model, and the error cancels.)
///
/// With `spectrum`, the echo's own strength across the band as the current sweep shows it (frequency and
/// window-weighted compensated |Gamma|), the caps' difference is not bounded but weighed by it: if nothing
/// changed, the baseline shows the same reflection less its own shortfall, and the two band-weighted sums
/// give the change the caps alone make.
fn cap_interval_db(inp: &Inputs, x: f64, spectrum: Option<&[(f64, f64)]>) -> (f64, f64) {
    let (f0, f1) = inner_band(inp);
    let trips = RoundTrips::to(inp, x);
    let weighed = spectrum.and_then(|sp| {
        let (mut num, mut den) = (0.0, 0.0);
        for &(f, m) in sp {
            let d = trips.shortfall(&trips.c, f) - trips.shortfall(&trips.b, f);
            num += m;
            den += m * 10f64.powf(d / 20.0);
        }
        (num > 0.0 && den > 0.0).then(|| 20.0 * (num / den).log10())
    });
    let (mut lo, mut hi) = match weighed {
        Some(e) => (e, e),
        None => trips.bounds((f0, f1)),
    };
    let f_c = 0.5 * (f0 + f1);
    let model_error = |m: &super::chain::LossModel| {
        (MODEL_LOSS_ERROR * (m.db(f_c) - m.a_flat) + ATTENUATOR_LOSS_ERROR * m.a_flat)
            .min(CAPPED_MODEL_ERROR_DB)
    };
    let one_model = (trips.b.db(f_c) - trips.c.db(f_c)).abs() < 1e-9;
    if !one_model {
        if trips.shortfall(&trips.b, f1) > 0.0 {
            hi += model_error(&trips.b);
        }
        if trips.shortfall(&trips.c, f1) > 0.0 {
            lo -= model_error(&trips.c);
        }
    }
    (lo, hi)
}

/// Pair every echo of both sweeps on the aligned map and judge each change against the calibration.
/// Returned in order of position.
pub fn changes(inp: &Inputs, engine: &mut TraceEngine) -> Vec<Change> {
    let (b, c, fit) = (inp.b, inp.c, inp.fit);
    let res_s = b.resolution_s.max(c.resolution_s);
    let to_x_b = |d: f64| fit.chain.position_of(d, Which::Baseline, None);
    let to_x_c = |d: f64| fit.chain.position_of(d, Which::Current, None);
    // An echo in front of an attenuator and one behind it are two joints, however close: never one pair,
    // once each stands clear of the attenuator's middle by more than its place could be off (a quarter cell,
    // and the cold model's error over the distance from the nearest landmark).
    let steps: Vec<f64> = inp
        .chain
        .segments
        .iter()
        .filter(|s| s.kind == SegmentKind::Attenuator)
        .map(|s| 0.5 * (s.start_m + s.end_m))
        .collect();
    // The baseline is placed by the joints it showed (the anchors), the current through the landmarks the
    // alignment paired.
    let margin = |x: f64, known: &[f64]| {
        let from = known.iter().map(|l| (l - x).abs()).fold(x.abs(), f64::min);
        let res_m = res_s * super::place::speed_at(&fit.chain, x, Which::Current);
        PAIR_CLEAR_CELLS * res_m + COLD_DELAY_ERROR * from
    };
    let apart = |xb: f64, xc: f64| {
        steps.iter().any(|&m| {
            (xb - m) * (xc - m) < 0.0
                && (xb - m).abs() > margin(xb, inp.anchors_m)
                && (xc - m).abs() > margin(xc, &fit.report.landmarks_m)
        })
    };
    let mut pairs = match_events(
        b,
        c,
        |d| fit.chain.delay_to(to_x_b(d), Which::Current, None),
        |_| res_s,
        |i, j| !apart(to_x_b(b.events[i].delay_s), to_x_c(c.events[j].delay_s)),
    );
    // The far end is the far end in both sweeps, however far the cold line moved it: pair it outright.
    if let (Some(tb), Some(tc)) = (&inp.far.baseline, &inp.far.current) {
        pairs.retain(|p| p.0 != tb.event && p.1 != tc.event);
        pairs.push((tb.event, tc.event));
        pairs.sort();
    }
    let term_pair = match (&inp.far.baseline, &inp.far.current) {
        (Some(tb), Some(tc)) => pairs
            .iter()
            .find(|p| p.0 == tb.event && p.1 == tc.event)
            .copied(),
        _ => None,
    };
    let was_total = inp.far.baseline.as_ref().is_some_and(|t| t.total)
        && inp.far.current.as_ref().is_some_and(|t| t.total);
    let mut out: Vec<Change> = Vec::new();
    for (j, ec) in c.events.iter().enumerate() {
        let x = to_x_c(ec.delay_s);
        let gamma_c = c.h(ec.delay_s);
        let pair = pairs.iter().find(|p| p.1 == j).copied();
        let (base, base_level) = match pair {
            Some((i, _)) => {
                let eb = &b.events[i];
                // Both levels compensated as at one place: an echo straddling an attenuator's middle must
                // not gain the attenuator's loss in one sweep only.
                // (Each level was compensated at its place on the analysis' own map.)
                let xb = inp.chain.position_of(eb.delay_s, Which::Baseline, None);
                let xc = inp.chain.position_of(ec.delay_s, Which::Current, None);
                let same_place = b.level_gain(inp.chain, xc, Which::Baseline)
                    / b.level_gain(inp.chain, xb, Which::Baseline).max(1e-300);
                let level = eb.magnitude * same_place;
                (Some((level, b.h(eb.delay_s) * same_place)), level)
            }
            None => {
                let d_b = fit.chain.delay_to(x, Which::Baseline, None);
                (None, unseen_level(inp, x, d_b))
            }
        };
        let phase_deg = base.map_or(0.0, |(_, gb)| (gamma_c / gb).arg().to_degrees());
        let same_termination = pair.is_some() && pair == term_pair && inp.far.same_total();
        out.push(Change {
            x,
            d_c: ec.delay_s,
            mag_c: ec.magnitude,
            gamma_c,
            base,
            base_level,
            raw_change_db: db(ec.magnitude) - db(base_level),
            expected_db: (0.0, 0.0),
            excess_db: 0.0,
            phase_deg,
            zone: Zone::Line,
            ghost: ec.ghost_of.is_some()
                || pair.is_some_and(|(i, _)| b.events[i].ghost_of.is_some()),
            same_termination,
            was_total: pair.is_some() && pair == term_pair && was_total,
            snr: c.snr(ec.magnitude, ec.delay_s),
            far_level_db: None,
            blocks_far_end: None,
            joint_change: None,
            at_device: false,
            device_drift: DEVICE_DRIFT_REFLECTION,
            pad_front: None,
            pad_drift: PAD_DRIFT_REFLECTION,
            pad_step_change_db: None,
            seen_behind: false,
            steady: false,
        });
    }
    // Baseline echoes with no partner: the reflection there fell.
    for (i, eb) in b.events.iter().enumerate() {
        if pairs.iter().any(|p| p.0 == i) {
            continue;
        }
        let x = to_x_b(eb.delay_s);
        let d_c = fit.chain.delay_to(x, Which::Current, None);
        let hc = c.h(d_c);
        // The current sweep stronger there than this echo was, within a cell of an echo of its own that
        // is paired with a neighbour of this one (within two cells): what it shows there is that pair's
        // echo, read on a map a fraction of a cell off, and judged as that pair; a lone echo of the
        // baseline says only whether the reflection there fell.
        let neighbours_pair = || {
            pairs.iter().any(|&(i, j)| {
                (c.events[j].delay_s - d_c).abs() < FLANK_CLEARANCE_CELLS * res_s
                    && (b.events[i].delay_s - eb.delay_s).abs()
                        < 2.0 * FLANK_CLEARANCE_CELLS * res_s
            })
        };
        if hc.norm() > eb.magnitude && neighbours_pair() {
            continue;
        }
        let mag_c = hc.norm().max(NOISE_SIGMAS * c.sigma_at(d_c));
        out.push(Change {
            x,
            d_c,
            mag_c,
            gamma_c: hc,
            base: Some((eb.magnitude, b.h(eb.delay_s))),
            base_level: eb.magnitude,
            raw_change_db: db(mag_c) - db(eb.magnitude),
            expected_db: (0.0, 0.0),
            excess_db: 0.0,
            phase_deg: (hc / b.h(eb.delay_s)).arg().to_degrees(),
            zone: Zone::Line,
            ghost: eb.ghost_of.is_some(),
            same_termination: false,
            was_total: false,
            snr: c.snr(mag_c, d_c),
            far_level_db: None,
            blocks_far_end: None,
            joint_change: None,
            at_device: false,
            device_drift: DEVICE_DRIFT_REFLECTION,
            pad_front: None,
            pad_drift: PAD_DRIFT_REFLECTION,
            pad_step_change_db: None,
            seen_behind: false,
            steady: false,
        });
    }
    let step_gains = StepGains::new(inp);
    let flanks = flank_changes(inp, &out, &step_gains);
    out.extend(flanks);
    let probes = joint_probes(inp, &out, &step_gains);
    out.extend(probes);
    out.sort_by(|p, q| p.x.total_cmp(&q.x));
    // Where the line file's device (not an open or short) ends the visible line.
    let device_end = inp
        .chain
        .first_blocking()
        .filter(|_| inp.chain.as_built)
        .filter(|&i| !matches!(inp.chain.segments[i].load, Some(Load::Open | Load::Short)))
        .map(|i| inp.chain.segments[i].start_m);
    let device_drift = match inp
        .chain
        .first_blocking()
        .map(|i| inp.chain.segments[i].load)
    {
        Some(Some(Load::Match)) => MATCHED_DEVICE_DRIFT_REFLECTION,
        _ => DEVICE_DRIFT_REFLECTION,
    };
    let device_end_m = inp.device_end_m();
    // Every echo of each sweep by place and strength, for the readings at an attenuator's step.
    let echoes_b: Vec<Placed> = b
        .events
        .iter()
        .map(|e| (to_x_b(e.delay_s), e.magnitude))
        .collect();
    let echoes_c: Vec<Placed> = c
        .events
        .iter()
        .map(|e| (to_x_c(e.delay_s), e.magnitude))
        .collect();
    // How far each cable's impedance moved, for the pads' own drift.
    let moved = if inp.same_state {
        Vec::new()
    } else {
        impedance_changes(inp)
    };
    // Calibration and shadowing, front to back: a joint that got worse dims everything behind it.
    let mut shadow = (0.0f64, 0.0f64);
    for ch in &mut out {
        let res_m = res_s * super::place::speed_at(&fit.chain, ch.x, Which::Current);
        ch.zone = inp.zone(ch.x, ch.d_c, res_m, device_end_m);
        ch.at_device = device_end.is_some_and(|x_d| ch.x >= x_d - res_m);
        ch.device_drift = device_drift;
        let x_comp = inp.chain.position_of(ch.d_c, Which::Current, None);
        ch.pad_front = pad_front(inp.chain, ch.x, x_comp, res_m);
        if ch.pad_front.is_none() {
            straddled_rise(inp, ch, x_comp);
        }
        ch.pad_drift = pad_drift_reflection(inp, &moved, ch.x, res_m);
        ch.pad_step_change_db = pad_step_change_db(inp, (&echoes_b, &echoes_c), ch, res_m);
        ch.steady = !inp.same_state && inp.chain.steady_to(ch.x, STEADY_CLEAR_CELLS * res_m);
        // Where compensation stopped at its cap, a sweep reads low by the loss it left undone.
        let cal = fit.expected_change_db(ch.x);
        // Where the caps' difference varies across the band, weigh it by the echo's own spectrum.
        let (lo, hi) = cap_bounds_db(inp, ch.x);
        let spectrum = if hi - lo > CAP_SPREAD_DB {
            echo_spectrum(inp, ch, engine)
        } else {
            None
        };
        let caps = cap_interval_db(inp, ch.x, spectrum.as_deref());
        ch.expected_db = (cal + caps.0 + shadow.0, cal + caps.1 + shadow.1);
        ch.excess_db = outside_db(ch.raw_change_db, ch.expected_db);
        // The far end's own open or short, against what the landmarks in front of it predict without it:
        // beyond every loss change the model allows there, its own joint changed.
        // Only where nothing in front of it changed: the shadow of a changed joint is known only within
        // wide bounds, and a far end that fell behind one is not a second fault.
        let clear = shadow == (0.0, 0.0);
        if let Some(p) = fit
            .far_end_prediction
            .filter(|_| ch.same_termination && clear)
        {
            let centre = p.expected_db + 0.5 * (caps.0 + caps.1 + shadow.0 + shadow.1);
            // Known to be in one state (told so, or all at room temperature), the line's loss did not
            // change: only the analyser's drift, a few kelvin of room temperature and the noise move the echo
            // of an open or short. One state read from the data is not enough: a line whose loss barely moves
            // on cooling (cupronickel) looks the same warm and cold.
            let known_one_state = ch.steady || (inp.same_state && inp.states_given);
            let (sigma, least) = if known_one_state {
                // An echo's relative amplitude noise 1/SNR is NEPER_DB/SNR dB in each sweep.
                let noise = crate::line::physics::NEPER_DB * std::f64::consts::SQRT_2
                    / ch.snr.max(f64::MIN_POSITIVE);
                (
                    ONE_STATE_LEVEL_SIGMA_DB
                        .hypot(ONE_STATE_LOSS_SHARE * p.loss_db)
                        .hypot(noise),
                    ONE_STATE_FAR_LEVEL_DB,
                )
            } else {
                (p.sigma_db.hypot(AMPLITUDE_SIGMA_DB), CHANGE_DB)
            };
            let wide = FAR_END_SIGMAS * sigma;
            let interval = (
                p.expected_db + caps.0 + shadow.0 - wide,
                p.expected_db + caps.1 + shadow.1 + wide,
            );
            let excess = outside_db(ch.raw_change_db, interval);
            if excess != 0.0 && (ch.raw_change_db - centre).abs() >= least {
                ch.expected_db = interval;
                ch.excess_db = excess;
                ch.far_level_db = Some(ch.raw_change_db - centre);
            }
        }
        if ch.claimable() && ch.excess_db.abs() >= CHANGE_DB {
            // This joint's own change, net of the calibration, shadows what lies behind it. Levels are read
            // as reflections of at most SHADOW_MAX_REFLECTION (a compensated level near 1 is a termination's,
            // and nothing behind it is judged anyway).
            let gb = ch.base_level.min(SHADOW_MAX_REFLECTION);
            let gc = (ch.base_level * 10f64.powf(ch.excess_db / 20.0)).min(SHADOW_MAX_REFLECTION);
            let (lo, hi) = shadow_db(gb, gc);
            shadow = (
                (shadow.0 + lo).max(-SHADOW_MAX_DB),
                (shadow.1 + hi).min(SHADOW_MAX_DB),
            );
        }
    }
    if let Some((k, fall)) = blocker(inp, &out) {
        out[k].blocks_far_end = Some(fall);
    }
    seen_behind_pads(inp, &mut out, res_s);
    out
}

/// A rise read across a pad the two maps disagree on: where an attenuator's loss step lies between an
/// echo's place on the aligned map (`ch.x`) and its delay's place on the analysis' own map (`x_comp`, where
/// its strength was compensated), farther from the step than [`pad_step`] reaches, its strength is known only
/// to within the pad's round trip. A new echo's rise is then read at the lesser of the two places'
/// compensations: on a line whose cold dielectric moved far from the model's, a pad's front port lay behind
/// the step on the analysis' map and 24 mm in front of the pad on the aligned one (its landmark paired with
/// the pad's back port), and the port's cold drift, lifted by the pad's 22 dB round trip, read as a critical
/// discontinuity of 0.7 (`healthy:139000254` of seed 139, states given).
fn straddled_rise(inp: &Inputs, ch: &mut Change, x_comp: f64) {
    let (lo, hi) = (ch.x.min(x_comp), ch.x.max(x_comp));
    let straddled = inp.chain.segments.iter().any(|s| {
        let mid = 0.5 * (s.start_m + s.end_m);
        s.kind == SegmentKind::Attenuator && s.loss[1].a_flat > 0.0 && lo < mid && mid <= hi
    });
    // A paired echo's two strengths were compensated as at one place, and their change holds there; a new
    // one's baseline was read where the aligned map puts it.
    if !straddled || ch.base.is_some() || ch.raw_change_db <= 0.0 {
        return;
    }
    let k = inp.c.level_gain(inp.chain, ch.x, Which::Current)
        / inp
            .c
            .level_gain(inp.chain, x_comp, Which::Current)
            .max(f64::MIN_POSITIVE);
    if k < 1.0 {
        ch.mag_c *= k;
        ch.gamma_c *= k;
        ch.raw_change_db = (db(ch.mag_c) - db(ch.base_level)).max(0.0);
    }
}

/// The attenuator whose loss step lies within [`PAD_STEP_CELLS`] and [`PAD_STEP_M`] of as-built `x` (m), with
/// a resolution cell of `res_m`: the step's place (the middle of its body, where the chain's loss model puts
/// its flat loss, [`super::chain::ChainView::loss_model_to`]), how far from it an echo counts as at the step,
/// and the factor 10^(-A/20) that reads a compensated strength behind it as seen in front of it, A its
/// round-trip loss in the current state, dB.
fn pad_step(chain: &ChainView, x: f64, res_m: f64) -> Option<(f64, f64, f64)> {
    pad_at(chain, x, res_m).map(|(_, step)| step)
}

/// [`pad_step`] with the attenuator's index in the chain.
fn pad_at(chain: &ChainView, x: f64, res_m: f64) -> Option<(usize, (f64, f64, f64))> {
    let reach = PAD_STEP_CELLS * res_m + PAD_STEP_M;
    chain
        .segments
        .iter()
        .enumerate()
        .filter(|(_, s)| s.kind == SegmentKind::Attenuator && s.loss[1].a_flat > 0.0)
        .map(|(k, s)| (k, s, 0.5 * (s.start_m + s.end_m)))
        .find(|(_, _, mid)| (x - mid).abs() <= reach)
        .map(|(k, s, mid)| (k, (mid, reach, 10f64.powf(-s.loss[1].a_flat / 20.0))))
}

/// [`Change::pad_front`] for an echo at as-built `x` (m), with a resolution cell of `res_m`: at an
/// attenuator's loss step ([`pad_step`]), 1 where its strength was compensated as in front of the step and
/// 10^(-A/20) where as behind it. The sweep's analysis compensated the echo at `x_comp`, its delay's place
/// on the analysis' own map (`chain`: the line file's model anchored on the baseline's joints), which may
/// lie some millimetres from `x`, its place on the aligned map: the side of the step its strength was read
/// on follows `x_comp`. (A joint's echo 13 mm in front of a 7 dB pad's step on the aligned map lay behind
/// it on the analysis' map, was lifted by the pad's 14 dB round trip and read as 0.093 in front of the
/// step, a minor contact on a healthy cooldown: the generator's `healthy:23000205` of seed 23.)
fn pad_front(chain: &ChainView, x: f64, x_comp: f64, res_m: f64) -> Option<f64> {
    pad_step(chain, x, res_m).map(|(mid, _, behind)| if x_comp >= mid { behind } else { 1.0 })
}

/// [`Change::pad_step_change_db`] for the echo of `ch`, with a resolution cell of `res_m`, from each sweep's
/// echoes by as-built place and compensated strength (baseline, current): for a new echo (no baseline
/// twin) at an attenuator's loss step and behind it, at the attenuator's element ([`SLIDE_ELEMENT_M`]),
/// where the baseline shows an echo in front of the step within a cell and a half of it that the current
/// sweep no longer shows (none within a third of a cell of it), and under [`PAD_OPEN_REFLECTION`] behind
/// the step: this echo read in front of the step over the strongest such baseline echo, less the
/// calibration's expected change there, dB. `None` otherwise.
fn pad_step_change_db(
    inp: &Inputs,
    (b, c): (&[Placed], &[Placed]),
    ch: &Change,
    res_m: f64,
) -> Option<f64> {
    let (mid, reach, behind) = pad_step(inp.chain, ch.x, res_m)?;
    if ch.base.is_some()
        || ch.x < mid
        || ch.x > mid + SLIDE_ELEMENT_M
        || ch.mag_c >= PAD_OPEN_REFLECTION
    {
        return None;
    }
    let &(xb, front) = b
        .iter()
        .filter(|&&(xb, _)| {
            xb < mid
                && xb >= mid - reach - res_m
                && (ch.x - xb).abs() <= SLIDE_CELLS * res_m
                && !c.iter().any(|&(xc, _)| (xc - xb).abs() <= res_m / 3.0)
        })
        .max_by(|p, q| p.1.total_cmp(&q.1))?;
    // Read in front of the step as its strength was compensated ([`pad_front`]).
    let behind = ch.pad_front.unwrap_or(behind);
    Some(db(ch.mag_c * behind) - db(front) - inp.fit.expected_change_db(xb))
}

/// Integrated linear contraction of a coax's conductors from 293 K to 4 K: 0.3 % (copper 0.326 %,
/// stainless 304 0.300 %; NIST cryogenic material property fits, as compiled in DOMAIN.md section 4).
pub const CONDUCTOR_CONTRACTION: f64 = 0.003;

/// For each segment of the chain, how far its cable's impedance moved between the sweeps, as a fraction (0
/// for every other segment, and for a cable at one temperature in both).
///
/// A coax's impedance goes as 1 / sqrt(er) and its delay per metre as sqrt(er) (Pozar, Microwave
/// Engineering, 4th ed., section 2.2): of a change of electrical length by a factor `s`, all but the
/// conductors' contraction ([`CONDUCTOR_CONTRACTION`]) is the dielectric's, and the impedance moves by as
/// much with its sign turned ([`dielectric_change`]). A cable whose delay the landmarks pinned
/// (`constrained` in the alignment) shows its own change; one they did not is given the model's, scaled by
/// the line's ratio: what the pinned cables show over what the model says for them, delay-weighted (the
/// generator's `healthy:13000020` shows 1.8 to 2.0 times the model's change on every pinned cable,
/// docs/accuracy.md).
fn impedance_changes(inp: &Inputs) -> Vec<f64> {
    let model = &inp.chain.segments;
    let fitted = &inp.fit.chain.segments;
    let pinned = &inp.fit.report.segments;
    let dielectric = |s: &super::chain::Segment| dielectric_change(s.delay_s[1] / s.delay_s[0]);
    let cable = |k: usize| {
        let m = &model[k];
        m.kind == SegmentKind::Cable && !m.steady && m.delay_s[0] > 0.0 && k < fitted.len()
    };
    let is_pinned = |k: usize| {
        pinned
            .get(k)
            .is_some_and(|p| p.constrained && p.element == model[k].name)
    };
    let (mut seen, mut modelled) = (0.0, 0.0);
    for k in (0..model.len()).filter(|&k| cable(k) && is_pinned(k)) {
        seen += model[k].delay_s[0] * dielectric(&fitted[k]);
        modelled += model[k].delay_s[0] * dielectric(&model[k]);
    }
    let line_ratio = if modelled > 0.0 { seen / modelled } else { 1.0 };
    (0..model.len())
        .map(|k| {
            if !cable(k) {
                0.0
            } else if is_pinned(k) {
                dielectric(&fitted[k])
            } else {
                line_ratio * dielectric(&model[k])
            }
        })
        .collect()
}

/// The fractional change of a cable's impedance (and of its dielectric's sqrt(er)) that a change of its
/// electrical length by a factor `s` across a cooldown implies, by magnitude: all of it but the conductors'
/// contraction ([`impedance_changes`]).
fn dielectric_change(s: f64) -> f64 {
    (s - 1.0).abs() + CONDUCTOR_CONTRACTION
}

/// [`Change::pad_drift`] at as-built `x` (m), with a resolution cell of `res_m`, given how far each
/// segment's impedance moved ([`impedance_changes`]): at an attenuator's loss step, the bound of
/// [`PAD_DRIFT_REFLECTION`] for the pad's resistors, plus the steps the pad's fixed 50 ohm makes with the
/// cables either side of it where their impedance moved. Each step reflects half that fraction
/// (|dZ| / (2 Z0), circuit theory); the one behind the pad is seen through the pad's round trip.
/// Elsewhere [`PAD_DRIFT_REFLECTION`].
fn pad_drift_reflection(inp: &Inputs, moved: &[f64], x: f64, res_m: f64) -> f64 {
    let segs = &inp.chain.segments;
    let Some((k, (_, _, behind))) = pad_at(inp.chain, x, res_m) else {
        return PAD_DRIFT_REFLECTION;
    };
    let side = |i: Option<usize>| i.and_then(|i| moved.get(i)).map_or(0.0, |e| 0.5 * e);
    let front = side((0..k).rev().find(|&i| segs[i].kind == SegmentKind::Cable));
    let back = side((k + 1..segs.len()).find(|&i| segs[i].kind == SegmentKind::Cable));
    PAD_DRIFT_REFLECTION + front + back * behind
}

/// An echo by its as-built place, m, and its compensated strength.
type Placed = (f64, f64);

/// How far behind an attenuator's middle an echo may lie and be its element's ([`pad_step_change_db`]): 1 cm,
/// the 5 mm by which a body the line file only defaults may be off ([`PAD_STEP_M`]) and 5 mm for the peak's
/// own place; a joint beside a 2 cm pad lies 14 mm from its middle (common practice, no source).
pub const SLIDE_ELEMENT_M: f64 = 0.01;

/// How far, in resolution cells, an echo at an attenuator's loss step may have slid between the sweeps
/// ([`pad_step_change_db`]): the joint in front of a pad and the pad's element lie within a cell of each
/// other (a joint beside a 2 cm body, 14 mm), and the peak their overlapping echoes make moves between them
/// as their balance shifts, plus half a cell for the peak's own place (common practice, no source).
pub const SLIDE_CELLS: f64 = 1.5;

/// Sets [`Change::seen_behind`]: for each echo at an attenuator's loss step that reads
/// [`PAD_OPEN_REFLECTION`] or more behind it in the current sweep, whether a paired echo further on (by a
/// resolution cell, on the visible line or the far end's own, [`PHASE_SNR`] over the noise) fell by less
/// than half of the lossless shadow so strong a reflection would cast, -20 log10(1 - r^2) dB round trip
/// (circuit theory), beyond the calibration there.
fn seen_behind_pads(inp: &Inputs, out: &mut [Change], res_s: f64) {
    for k in 0..out.len() {
        let r = out[k].mag_c.min(0.99);
        if out[k].pad_front.is_none() || r < PAD_OPEN_REFLECTION {
            continue;
        }
        let shadow = -20.0 * (1.0 - r * r).log10();
        let x = out[k].x;
        let res_m = res_s * super::place::speed_at(&inp.fit.chain, x, Which::Current);
        out[k].seen_behind = out.iter().any(|b| {
            b.x > x + res_m
                && b.base.is_some()
                && b.snr > PHASE_SNR
                && (b.zone == Zone::Line || b.same_termination)
                && b.raw_change_db - inp.fit.expected_change_db(b.x) > -0.5 * shadow
        });
    }
}

/// The echo that blocks the line now, by index in `changes` (in order of position), and the far end's fall
/// beyond its interval, dB: when the baseline's far
/// end is no termination of the current sweep and its echo fell by [`SHADOW_MAX_DB`] or more beyond the
/// interval the calibration explains, the claimable echo in front of it (by more than a resolution cell)
/// that reads at least [`COMPONENT_REFLECTION`] now and rose the most beyond its own interval, by at least
/// [`CHANGE_DB`]. A far end does not vanish by itself: what it used to reflect now comes back from in front
/// of it (a pin pulled back to an open, a joint cracked), so the rise in front and the fall behind are one
/// change, whatever threshold the rise alone would have to pass (a component's, or one widened by a capped
/// compensation).
fn blocker(inp: &Inputs, changes: &[Change]) -> Option<(usize, f64)> {
    let tb = inp.far.baseline.as_ref()?;
    if inp.far.current.is_some() {
        return None;
    }
    let res_s = inp.b.resolution_s.max(inp.c.resolution_s);
    let x_end = inp.fit.chain.position_of(tb.delay_s, Which::Baseline, None);
    let end = changes.iter().find(|ch| {
        (ch.x - x_end).abs() < 1e-9 && ch.zone == Zone::Line && ch.excess_db <= -SHADOW_MAX_DB
    })?;
    let d_end = end.d_c - res_s;
    changes
        .iter()
        .enumerate()
        .filter(|(_, ch)| {
            ch.d_c < d_end
                && ch.claimable()
                && ch.mag_c >= COMPONENT_REFLECTION
                && ch.excess_db >= CHANGE_DB
        })
        .max_by(|p, q| p.1.excess_db.total_cmp(&q.1.excess_db))
        .map(|(k, _)| (k, -end.excess_db))
}

/// Half-width of the window around a joint's mapped place in which, both sweeps in one state, its complex
/// change is read (`joint_probes`), in resolution cells: the anchors and the alignment place a joint to a
/// small fraction of a cell (common practice, no source).
pub const JOINT_PROBE_CELLS: f64 = 0.5;

/// Steps of that window on each side of the joint's place.
const JOINT_PROBE_STEPS: i32 = 4;

/// Both sweeps in one state (or in the line's steady part), every connector of the line file judged at its
/// own place as well as where echoes peak: a joint next to a stronger echo forms no peak of its own (a
/// contact that opened beside an attenuator, or a connector a few millimetres from the next), so the
/// pairing of echoes never judges it.
///
/// Within [`JOINT_PROBE_CELLS`] of the connector's place on the aligned map, the current response is set
/// against the baseline's at the same place, scaled by the calibration. Where their difference stands
/// [`NOISE_SIGMAS`] over both sweeps' noise, it is weighed against what the baseline's response itself is
/// there plus what it moves by within the alignment's tolerance (a misalignment's residue): a relative
/// complex change of [`VECTOR_CHANGE`] or more, at the step where it is largest, is a change, the same rule
/// as a paired echo's in one state. Places within [`FLANK_CLEARANCE_CELLS`] of an echo already counted as a
/// change, or of an open or short far end that was one in both sweeps, are left to that echo. Across a
/// change of state the two responses do not compare so closely (what the compensation leaves of the
/// dispersion turns them), and only the connectors of the line's steady part are probed (see
/// [`Change::steady`]).
fn joint_probes(inp: &Inputs, have: &[Change], step_gains: &StepGains) -> Vec<Change> {
    if !inp.chain.as_built {
        return Vec::new();
    }
    let (b, c, fit) = (inp.b, inp.c, inp.fit);
    let res_s = b.resolution_s.max(c.resolution_s);
    let alias = c.alias_free_s.min(b.alias_free_s);
    let end = inp.chain.visible_end_m();
    let mut out = Vec::new();
    for seg in inp
        .chain
        .segments
        .iter()
        .filter(|s| s.kind == SegmentKind::Connector)
    {
        let x0 = 0.5 * (seg.start_m + seg.end_m);
        if x0 > end {
            continue;
        }
        // Across a change of state, only in the line's steady part (see `Change::steady`).
        let res_m = res_s * super::place::speed_at(&fit.chain, x0, Which::Current);
        if !inp.same_state && !inp.chain.steady_to(x0, STEADY_CLEAR_CELLS * res_m) {
            continue;
        }
        let d0 = fit.chain.delay_to(x0, Which::Current, None);
        if d0 >= ALIAS_EDGE * alias {
            continue;
        }
        let shift = local_shift(inp, d0);
        // The step where the two responses differ most: (|difference|, d_c, d_b, baseline's factor: the
        // calibration's gain and the reading at the current's side of a pad's step, current, baseline).
        let mut best: Option<(f64, f64, f64, [f64; 2], Complex64, Complex64)> = None;
        for k in -JOINT_PROBE_STEPS..=JOINT_PROBE_STEPS {
            let d_c = d0 + res_s * JOINT_PROBE_CELLS * k as f64 / JOINT_PROBE_STEPS as f64;
            let x = fit.chain.position_of(d_c, Which::Current, None);
            let d_b = fit.chain.delay_to(x, Which::Baseline, None) - shift;
            let (k_c, k_b) = step_gains.factors(inp, d_c, d_b);
            let g = 10f64.powf(fit.expected_change_db(x) / 20.0);
            let (gc, gb) = (c.h(d_c) * k_c, b.h(d_b) * (g * k_b));
            let diff = (gc - gb).norm();
            let noise = NOISE_SIGMAS * (k_c * c.sigma_at(d_c)).hypot(g * k_b * b.sigma_at(d_b));
            if diff >= noise && best.map_or(true, |p| diff > p.0) {
                best = Some((diff, d_c, d_b, [g, k_b], gc, gb));
            }
        }
        let Some((diff, d_c, d_b, [g, k_b], gc, gb)) = best else {
            continue;
        };
        // A place within a cell of an open or short far end that was one in both sweeps reads that
        // termination's echo, which is judged as the far end (`Change::was_total`): its slope is so steep
        // that a misplacement of a fraction of a cell reads as a change of the joint in front of it.
        if have.iter().any(|h| {
            (h.d_c - d_c).abs() < FLANK_CLEARANCE_CELLS * res_s && (h.changed(true) || h.was_total)
        }) {
            continue;
        }
        let x = fit.chain.position_of(d_c, Which::Current, None);
        let tol = inp.tolerance_s(x);
        let moved = 0.5 * g * k_b * (b.h(d_b + tol) - b.h(d_b - tol)).norm();
        let ratio = diff / (gb.norm() + moved) / VECTOR_CHANGE;
        if ratio < 1.0 {
            continue;
        }
        let level_b = gb.norm() / g;
        out.push(Change {
            x,
            d_c,
            mag_c: gc.norm(),
            gamma_c: gc,
            base: Some((level_b, gb / g)),
            base_level: level_b,
            raw_change_db: db(gc.norm()) - db(level_b),
            expected_db: (0.0, 0.0),
            excess_db: 0.0,
            phase_deg: (gc / gb).arg().to_degrees(),
            zone: Zone::Line,
            ghost: false,
            same_termination: false,
            was_total: false,
            snr: c.snr(gc.norm(), d_c),
            far_level_db: None,
            blocks_far_end: None,
            joint_change: Some(ratio),
            at_device: false,
            device_drift: DEVICE_DRIFT_REFLECTION,
            pad_front: None,
            pad_drift: PAD_DRIFT_REFLECTION,
            pad_step_change_db: None,
            seen_behind: false,
            steady: false,
        });
    }
    out
}

/// Noise RMS multiples under which the baseline's level is not taken where it shows no echo paired with a
/// new one: one RMS, what noise alone leaves there. A new echo is detected only at [`NOISE_SIGMAS`] over the
/// current sweep's noise, so its rise is judged against what the baseline really shows at its place, not
/// against the baseline's detection threshold: a reflection that appeared from behind a lossy stretch just
/// over the noise (a crush behind 90 dB of round-trip loss) rises by 10 dB or more over what was there,
/// where against the threshold it would not have risen at all.
pub const UNSEEN_FLOOR_SIGMAS: f64 = 1.0;

/// The baseline's level where a new echo of the current sweep maps to (as-built `x`, baseline delay `d_b`):
/// the largest compensated magnitude of the baseline within the alignment's tolerance of the mapped place
/// (as [`flank_changes`] reads it), at least [`UNSEEN_FLOOR_SIGMAS`] of its noise there.
fn unseen_level(inp: &Inputs, x: f64, d_b: f64) -> f64 {
    let b = inp.b;
    let tol = inp.tolerance_s(x);
    let last = b.mag.len().saturating_sub(1);
    let lo = (((d_b - tol) / b.dt).floor().max(0.0) as usize).min(last);
    let hi = (((d_b + tol) / b.dt).ceil().max(0.0) as usize).min(last);
    let b_max = b.mag[lo..=hi].iter().fold(0.0f64, |a, &v| a.max(v));
    b_max
        .max(b.h(d_b).norm())
        .max(UNSEEN_FLOOR_SIGMAS * b.sigma_at(d_b))
}

/// Reach of the registration of a joint probe on its neighbouring echo, in resolution cells: the strongest
/// baseline echo within it of the joint's place registers the two sweeps there.
pub const PROBE_REGISTRATION_CELLS: f64 = 2.0;

/// How much later, round trip, the current sweep shows an echo near current delay `d_c` than the aligned map
/// puts it, s: the strongest baseline echo within [`PROBE_REGISTRATION_CELLS`] of `d_c` on the map, against
/// the current echo nearest its mapped place (within [`PAIR_CLEAR_CELLS`] of a cell); 0 when there is none.
/// The alignment places landmarks to a small fraction of a cell, but between them, near the far end or
/// beside a component, the map may be off by more than a complex comparison bears (a tenth of a cell turns
/// a response by some 30 degrees at the band centre).
fn local_shift(inp: &Inputs, d_c: f64) -> f64 {
    let (b, c, fit) = (inp.b, inp.c, inp.fit);
    let res_s = b.resolution_s.max(c.resolution_s);
    let to_c = |d_b: f64| {
        fit.chain.delay_to(
            fit.chain.position_of(d_b, Which::Baseline, None),
            Which::Current,
            None,
        )
    };
    let Some(eb) = b
        .events
        .iter()
        .filter(|e| (to_c(e.delay_s) - d_c).abs() <= PROBE_REGISTRATION_CELLS * res_s)
        .max_by(|p, q| p.magnitude.total_cmp(&q.magnitude))
    else {
        return 0.0;
    };
    let mapped = to_c(eb.delay_s);
    c.events
        .iter()
        .map(|e| e.delay_s - mapped)
        .filter(|d| d.abs() <= PAIR_CLEAR_CELLS * res_s)
        .min_by(|p, q| p.abs().total_cmp(&q.abs()))
        .unwrap_or(0.0)
}

/// How far `v` lies outside `[lo, hi]`, signed (0 inside).
fn outside_db(v: f64, (lo, hi): (f64, f64)) -> f64 {
    if v < lo {
        v - lo
    } else if v > hi {
        v - hi
    } else {
        0.0
    }
}

/// Spread of the caps' shortfall difference across the inner band, dB, beyond which a change's interval is
/// weighed by its echo's own spectrum rather than bounded (common practice, no source).
pub const CAP_SPREAD_DB: f64 = 1.0;

/// The inner half of the band (without [`CAP_BAND_EDGE`] at each edge), Hz: the window weighs the band's
/// edges down, so an echo's strength comes from its inner part.
fn inner_band(inp: &Inputs) -> (f64, f64) {
    let (fa, fb) = (inp.c.freqs[0], inp.c.freqs[inp.c.freqs.len() - 1]);
    (
        fa + CAP_BAND_EDGE * (fb - fa),
        fb - CAP_BAND_EDGE * (fb - fa),
    )
}

/// The least and the most of the two sweeps' cap shortfalls' difference (baseline less current) over the
/// inner band at `x`, dB, probed at [`CAP_PROBES`] frequencies.
fn cap_bounds_db(inp: &Inputs, x: f64) -> (f64, f64) {
    RoundTrips::to(inp, x).bounds(inner_band(inp))
}

/// The two sweeps' modelled round trips to one place (walked along the chain once, not once per
/// frequency), for the compensation caps' shortfalls there.
struct RoundTrips {
    b: super::chain::LossModel,
    c: super::chain::LossModel,
    compensates: bool,
}

impl RoundTrips {
    fn to(inp: &Inputs, x: f64) -> Self {
        RoundTrips {
            b: inp.chain.loss_model_to(x, Which::Baseline),
            c: inp.chain.loss_model_to(x, Which::Current),
            compensates: inp.chain.compensates(),
        }
    }

    /// [`cap_shortfall_db`] of round trip `m` (one of the two) at `f`.
    fn shortfall(&self, m: &super::chain::LossModel, f: f64) -> f64 {
        if self.compensates {
            shortfall_db(m, f)
        } else {
            0.0
        }
    }

    /// [`cap_bounds_db`] over the band `(f0, f1)`.
    fn bounds(&self, (f0, f1): (f64, f64)) -> (f64, f64) {
        (0..CAP_PROBES)
            .map(|k| {
                let f = f0 + (f1 - f0) * k as f64 / (CAP_PROBES - 1) as f64;
                self.shortfall(&self.b, f) - self.shortfall(&self.c, f)
            })
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), d| {
                (lo.min(d), hi.max(d))
            })
    }
}

/// The echo of change `ch` across the band as the current sweep shows it: (frequency, window weight times
/// its compensated |Gamma|), from its gated local reflection. `None` when the gate cannot be taken.
fn echo_spectrum(inp: &Inputs, ch: &Change, engine: &mut TraceEngine) -> Option<Vec<(f64, f64)>> {
    let c = inp.c;
    let (f, g) = c
        .local_reflection(ch.d_c, ch.x, inp.chain, Which::Current, engine)
        .ok()?;
    let bins = super::analysis::local_bins(c.freqs.len());
    Some(
        f.iter()
            .zip(&g)
            .enumerate()
            .map(|(k, (&fk, gk))| (fk, c.window_w[bins.bin(k)] * gk.norm()))
            .collect(),
    )
}

/// Least rise of the current trace over the baseline's, beyond the calibration, that makes a stretch of the
/// trace with no echo of its own a change, dB: a reflection that appeared within the main lobe of another
/// echo (an open behind an attenuator, a fault at the joint next to a strong echo) forms no peak to pair.
/// Twice [`CHANGE_DB`], since a flank moves more than a peak with what the calibration leaves undone (common
/// practice, no source).
pub const FLANK_RISE_DB: f64 = 6.0;

/// Half-width of the baseline window a flank is compared against, in resolution cells, besides the
/// alignment's own residual (the calibration places echoes to a small fraction of a cell).
pub const FLANK_TOLERANCE_CELLS: f64 = 0.1;

/// Reach, in resolution cells, and least strength above a rise, dB, of an echo that rose itself, within
/// which a rise of the trace is taken for that echo's skirt: a strong echo's change spreads a few cells
/// either side at 20 dB or more below its peak through what the compensation leaves of the dispersion and
/// the window's first sidelobes (common practice, no source).
pub const FLANK_SKIRT_CELLS: f64 = 4.0;
pub const FLANK_SKIRT_DB: f64 = 20.0;

/// Bins between the points at which the flank search works out its map and calibration exactly (half a
/// resolution cell at `analysis::POINTS_PER_RESOLUTION` = 8).
const FLANK_STRIDE: usize = 4;

/// Least distance from an echo already paired, in resolution cells, for a rise to be a reflection of its
/// own rather than that echo's change (which the pairing judges).
pub const FLANK_CLEARANCE_CELLS: f64 = 1.0;

/// Near an attenuator's loss step each trace holds the compensation of its piece, which may straddle the
/// step and lend one side the other's gain, one way in one sweep and the other way in the other (the
/// baseline's pieces follow its anchored joints, the current's the model): there each is read with the
/// compensation of its own place on the analysis' map, as events are. Within a cell of a step the gain of a
/// place is the step's, on its side, to within the loss of a few centimetres of cable: worked out once per
/// step, side and sweep.
struct StepGains {
    /// Each step's middle (as built, m) and the level gains a quarter of its body either side of it,
    /// `[baseline, current][front, back]`.
    steps: Vec<(f64, [[f64; 2]; 2])>,
}

impl StepGains {
    fn new(inp: &Inputs) -> Self {
        let (b, c) = (inp.b, inp.c);
        let steps = inp
            .chain
            .segments
            .iter()
            .filter(|s| s.kind == SegmentKind::Attenuator && s.loss[1].a_flat > 0.0)
            .map(|s| {
                let mid = 0.5 * (s.start_m + s.end_m);
                let quarter = 0.25 * (s.end_m - s.start_m);
                // Each side a quarter of the body from the step: at the step itself, rounding decides the
                // side.
                let sides = |a: &SweepAnalysis, which: Which| {
                    [mid - quarter, mid + quarter].map(|x| a.level_gain(inp.chain, x, which))
                };
                (mid, [sides(b, Which::Baseline), sides(c, Which::Current)])
            })
            .collect();
        StepGains { steps }
    }

    /// The factors that read the current trace at current delay `d_c` and the baseline's at `d_b` with that
    /// compensation, both on the side of the step the current sweep's place is on: one side for both, or
    /// the two sweeps' maps could put them on either side and read a rise or a fall of the pad's whole
    /// round trip (cold -> cold repeats: `repeat:41000103` of seed 41, `repeat:125000375` of seed 125).
    /// (1, 1) away from every step.
    fn factors(&self, inp: &Inputs, d_c: f64, d_b: f64) -> (f64, f64) {
        // A line without attenuators reads every bin as its piece holds it: no place to work out.
        if self.steps.is_empty() {
            return (1.0, 1.0);
        }
        let (b, c) = (inp.b, inp.c);
        let res_s = b.resolution_s.max(c.resolution_s);
        let x_a = inp.chain.position_of(d_c, Which::Current, None);
        let reach = res_s * super::place::speed_at(inp.chain, x_a, Which::Current) + PAD_STEP_M;
        self.steps
            .iter()
            .find(|(mid, _)| (x_a - mid).abs() <= reach)
            .map_or((1.0, 1.0), |(mid, g)| {
                let side = usize::from(x_a >= *mid);
                (
                    g[Which::Current as usize][side] / c.gain_at(d_c),
                    g[Which::Baseline as usize][side] / b.gain_at(d_b),
                )
            })
    }
}

/// Rises of the current trace over the baseline's where no echo was paired: on every bin of the current
/// trace, its strength against the strongest the baseline shows within the alignment's tolerance there,
/// less the calibration. Each stretch rising by [`FLANK_RISE_DB`] or more, at least [`FLANK_CLEARANCE_CELLS`]
/// from every echo in `have`, gives one change, placed where the current trace exceeds the baseline's the
/// most (the new reflection's own strength, in amplitude).
fn flank_changes(inp: &Inputs, have: &[Change], step_gains: &StepGains) -> Vec<Change> {
    let (b, c, fit) = (inp.b, inp.c, inp.fit);
    let res_s = b.resolution_s.max(c.resolution_s);
    let alias = c.alias_free_s.min(b.alias_free_s);
    // The map to the baseline, the tolerance and the calibration vary slowly along the trace: worked out
    // every FLANK_STRIDE bins and interpolated between (the map is piecewise linear in delay anyway).
    let n = c.mag.len();
    let knot = |i: usize| {
        let d_c = i as f64 * c.dt;
        let x = fit.chain.position_of(d_c, Which::Current, None);
        let d_b = fit.chain.delay_to(x, Which::Baseline, None);
        let tol = inp.tolerance_s(x);
        let cal = fit.expected_change_db(x) + cap_interval_db(inp, x, None).1;
        [d_b, tol, cal]
    };
    let knots: Vec<[f64; 3]> = (0..n.div_ceil(FLANK_STRIDE) + 1)
        .map(|k| knot((k * FLANK_STRIDE).min(n.saturating_sub(1))))
        .collect();
    let own_gains = |d_c: f64, d_b: f64| step_gains.factors(inp, d_c, d_b);
    // Per bin: (rise dB, amplitude excess, the current trace's reading factor).
    let mut rise: Vec<Option<(f64, f64, f64)>> = vec![None; n];
    for (i, &m_c) in c.mag.iter().enumerate() {
        let d_c = i as f64 * c.dt;
        if d_c >= ALIAS_EDGE * alias {
            break;
        }
        let floor_c = NOISE_SIGMAS * c.sigma_at(d_c);
        if m_c < floor_c {
            continue;
        }
        let (k, u) = (
            i / FLANK_STRIDE,
            (i % FLANK_STRIDE) as f64 / FLANK_STRIDE as f64,
        );
        let at = |q: usize| knots[k][q] + u * (knots[k + 1][q] - knots[k][q]);
        let (d_b, tol, cal) = (at(0), at(1), at(2));
        let lo = ((d_b - tol) / b.dt).floor().max(0.0) as usize;
        let hi = ((d_b + tol) / b.dt).ceil() as usize;
        if hi >= b.mag.len() {
            break;
        }
        let b_max = b.mag[lo..=hi].iter().fold(0.0f64, |a, &v| a.max(v));
        let (k_c, k_b) = own_gains(d_c, d_b);
        let level_b = (b_max * k_b).max(NOISE_SIGMAS * b.sigma_at(d_b));
        let m_c = m_c * k_c;
        let r = db(m_c) - db(level_b) - cal;
        if r >= FLANK_RISE_DB {
            rise[i] = Some((r, m_c - level_b * 10f64.powf(cal / 20.0), k_c));
        }
    }
    let mut out = Vec::new();
    let mut k = 0;
    while k < rise.len() {
        if rise[k].is_none() {
            k += 1;
            continue;
        }
        let start = k;
        while k < rise.len() && rise[k].is_some() {
            k += 1;
        }
        let Some((i, (rise_db, _, k_c))) = (start..k)
            .filter_map(|i| rise[i].map(|r| (i, r)))
            .max_by(|p, q| p.1 .1.total_cmp(&q.1 .1))
        else {
            continue;
        };
        let m_c = c.mag[i] * k_c;
        let d_c = i as f64 * c.dt;
        let near = have
            .iter()
            .any(|h| (h.d_c - d_c).abs() < FLANK_CLEARANCE_CELLS * res_s);
        // In the skirt of an echo that itself rose, far stronger than this: that echo's change, spread by
        // what the compensation leaves of the line's dispersion, not a reflection of its own.
        // Strengths as measured, before compensation: a step of it (an attenuator) between the echo and
        // the flank lifts the flank alone.
        let skirt = have.iter().any(|h| {
            (h.d_c - d_c).abs() < FLANK_SKIRT_CELLS * res_s
                && h.raw_change_db >= CHANGE_DB
                && db(h.mag_c / c.gain_at(h.d_c)) - db(c.mag[i] / c.gain[i]) >= FLANK_SKIRT_DB
        });
        if near || skirt {
            continue;
        }
        let x = fit.chain.position_of(d_c, Which::Current, None);
        let d_b = fit.chain.delay_to(x, Which::Baseline, None);
        let hb = b.h(d_b);
        let base_level = (db(m_c) - rise_db - fit.expected_change_db(x)).max(-400.0);
        let base_level = 10f64.powf(base_level / 20.0);
        out.push(Change {
            x,
            d_c,
            mag_c: m_c,
            gamma_c: c.h(d_c) * k_c,
            base: Some((base_level, hb)),
            base_level,
            raw_change_db: db(m_c) - db(base_level),
            expected_db: (0.0, 0.0),
            excess_db: 0.0,
            phase_deg: 0.0,
            zone: Zone::Line,
            ghost: false,
            same_termination: false,
            was_total: false,
            snr: c.snr(c.mag[i], d_c),
            far_level_db: None,
            blocks_far_end: None,
            joint_change: None,
            at_device: false,
            device_drift: DEVICE_DRIFT_REFLECTION,
            pad_front: None,
            pad_drift: PAD_DRIFT_REFLECTION,
            pad_step_change_db: None,
            seen_behind: false,
            steady: false,
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A paired echo of strength `base` in the baseline, `cur` now, its phase turned by `deg`, at `snr`.
    fn paired(base: f64, cur: f64, deg: f64, snr: f64) -> Change {
        Change {
            x: 1.0,
            d_c: 1e-8,
            mag_c: cur,
            gamma_c: Complex64::from_polar(cur, deg.to_radians()),
            base: Some((base, Complex64::new(base, 0.0))),
            base_level: base,
            raw_change_db: db(cur) - db(base),
            expected_db: (0.0, 0.0),
            excess_db: db(cur) - db(base),
            phase_deg: deg,
            zone: Zone::Line,
            ghost: false,
            same_termination: false,
            was_total: false,
            snr,
            far_level_db: None,
            blocks_far_end: None,
            joint_change: None,
            at_device: false,
            device_drift: DEVICE_DRIFT_REFLECTION,
            pad_front: None,
            pad_drift: PAD_DRIFT_REFLECTION,
            pad_step_change_db: None,
            seen_behind: false,
            steady: false,
        }
    }

    #[test]
    fn a_small_change_of_a_strong_joint_is_noted_in_one_state_only() {
        // 0.0224 -> 0.0236 turned by 21 degrees: |1.054 e^{j21} - 1| = 0.38, under VECTOR_CHANGE.
        let ch = paired(0.0224, 0.0236, 21.0, 30_000.0);
        assert!(!ch.changed(true), "{ch:?}");
        assert!(ch.noted(true), "{ch:?}");
        assert!(!ch.noted(false), "{ch:?}");
        // The same change of a faint echo, or a change within the analyser's drift, is not.
        assert!(!paired(0.0224, 0.0236, 21.0, 500.0).noted(true));
        assert!(!paired(0.0224, 0.0226, 3.0, 30_000.0).noted(true));
    }

    #[test]
    fn a_components_echo_moved_under_what_counts_across_states_is_noted() {
        // A device's echo, 0.79 -> 0.57 (-2.8 dB) beyond the calibration, well over the noise: under the
        // 6 dB a component's echo may move by on cooling, over the 1.5 dB that is noted.
        let mut ch = paired(0.79, 0.57, -3.6, 97_000.0);
        ch.at_device = true;
        assert!(!ch.changed(false), "{ch:?}");
        assert!(ch.noted(false), "{ch:?}");
        // Within 1.5 dB of the calibration, or too close to the noise, it is not.
        let mut small = paired(0.79, 0.70, -3.6, 97_000.0);
        small.at_device = true;
        assert!(!small.noted(false), "{small:?}");
        let mut faint = paired(0.79, 0.57, -3.6, 50.0);
        faint.at_device = true;
        assert!(!faint.noted(false), "{faint:?}");
        // A joint's echo (not a component's) is not noted across states.
        assert!(!paired(0.03, 0.022, 0.0, 97_000.0).noted(false));
    }

    #[test]
    fn an_echo_at_a_pads_loss_step_is_read_in_front_of_it_across_states() {
        // A 20 dB pad's own mismatch, 0.0045 in front of its resistive element, compensated as if behind it
        // (x 100 for 40 dB round trip): 0.45, moved by 28 dB on cooling (its resistors' values drift).
        let mut ch = paired(0.018, 0.45, 0.0, 1e4);
        assert!(ch.changed(false));
        ch.pad_front = Some(0.01);
        assert!(ch.within_pad_drift(false), "{ch:?}");
        // In one state the pad does not drift: judged as any echo.
        assert!(!ch.within_pad_drift(true));
        // What moved by PAD_DRIFT_REFLECTION or more in front of the step is not the pad's drift.
        ch.pad_front = Some(0.1);
        assert!(!ch.within_pad_drift(false));
        // Unless the cables beside the pad moved on cooling far enough to widen its bound.
        ch.pad_drift = 0.05;
        assert!(ch.within_pad_drift(false));
        ch.pad_drift = PAD_DRIFT_REFLECTION;
        ch.pad_front = None;
        assert!(!ch.within_pad_drift(false));
        // Read behind the step as an open (0.93): the pad's own only where what lies behind is still seen.
        let mut open = paired(0.0002, 0.93, 0.0, 1e4);
        open.pad_front = Some(0.01);
        assert!(!open.within_pad_drift(false));
        open.seen_behind = true;
        assert!(open.within_pad_drift(false));
        // Nor when the far end vanished behind it.
        open.blocks_far_end = Some(40.0);
        assert!(!open.within_pad_drift(false));
    }

    #[test]
    fn a_cables_impedance_change_is_its_dielectrics_share_of_its_delay_change() {
        // Pozar 4th ed. section 2.2: Z0 = (eta0 / (2 pi sqrt(er))) ln(b/a), delay per metre sqrt(er) / c.
        // A cable 0.3 % shorter (its conductors' contraction) whose delay grew by 1 %: sqrt(er) grew by
        // 1.3 %, and its impedance fell by as much (to first order).
        let z = |er: f64| 60.0 / er.sqrt() * (0.838f64 / 0.2555).ln();
        let (er_w, er_c) = (2.05, 2.05 * 1.013f64.powi(2));
        let s = (1.0 - CONDUCTOR_CONTRACTION) * (er_c / er_w).sqrt();
        let dz = 1.0 - z(er_c) / z(er_w);
        let dielectric = dielectric_change(s);
        assert!((dielectric - dz).abs() < 5e-4, "{dielectric} against {dz}");
        // A warm-up reads the same change.
        assert!((dielectric_change(1.0 / s) - dz).abs() < 5e-4);
    }

    #[test]
    fn an_echo_that_slid_across_a_pads_step_is_the_same_echo_read_in_front_of_it() {
        // A joint and a 10 dB pad's element one cell apart: warm, their echo peaks in front of the step
        // (0.028); cold, behind it, compensated x 10 (0.28): +20 dB, where in front of the step the two
        // sweeps read the same.
        let mut ch = paired(0.0028, 0.28, 0.0, 1e4);
        assert!(ch.changed(false));
        ch.pad_front = Some(0.1);
        // In front of the step it reads 0.028, over the pad's own drift bound: not the pad's drift...
        assert!(!ch.within_pad_drift(false));
        // ... unless it only slid across the step: the baseline's echo in front of it, gone now, read alike.
        ch.pad_step_change_db = Some(-0.4);
        assert!(ch.within_pad_drift(false), "{ch:?}");
        assert!(!ch.within_pad_drift(true));
        // Read in front of the step 3 dB or more over the echo it replaced, it changed.
        ch.pad_step_change_db = Some(CHANGE_DB);
        assert!(!ch.within_pad_drift(false));
        // The guards of the pad's drift hold: an open behind the step (0.93) whose shadow took what lies
        // behind it, or an echo that blocks the far end, is never the step's reading.
        let mut open = paired(0.0028, 0.93, 0.0, 1e4);
        open.pad_front = Some(0.1);
        open.pad_step_change_db = Some(0.0);
        assert!(!open.within_pad_drift(false));
        ch.pad_step_change_db = Some(0.0);
        ch.blocks_far_end = Some(30.0);
        assert!(!ch.within_pad_drift(false));
    }

    #[test]
    fn a_declared_matchs_echo_may_drift_up_to_its_rated_match() {
        // A matched load's echo 0.02 -> 0.032 (+4 dB) on cooling: over DEVICE_DRIFT_REFLECTION, under a
        // termination's rated 0.05.
        let mut ch = paired(0.02, 0.032, 0.0, 1e4);
        ch.at_device = true;
        assert!(!ch.within_device_drift(false));
        ch.device_drift = MATCHED_DEVICE_DRIFT_REFLECTION;
        assert!(ch.within_device_drift(false));
        assert!(!ch.within_device_drift(true));
        // A device that now reflects 0.08 (a contact of 8 ohm in front of it) is past its rated match.
        let mut big = paired(0.02, 0.08, 0.0, 1e4);
        big.at_device = true;
        big.device_drift = MATCHED_DEVICE_DRIFT_REFLECTION;
        assert!(!big.within_device_drift(false));
    }

    #[test]
    fn a_joints_echo_turned_at_right_angles_counts_in_one_state() {
        // 0.03 -> 0.03 * 1.08 at 40 degrees: strength +0.7 dB, complex change |1.08 e^{j40} - 1| = 0.715.
        let ch = paired(0.03, 0.0324, 40.0, 1000.0);
        assert!(ch.raw_change_db < CHANGE_DB);
        assert!(ch.changed(true), "{ch:?}");
        // Across a change of state the same turn is within what the dispersion's residue allows.
        assert!(
            (ch.vector_change() - 0.715).abs() < 0.001,
            "{}",
            ch.vector_change()
        );
        assert!(!ch.changed(false), "{ch:?}");
        // Too close to the noise for its phase to mean anything: no.
        assert!(!paired(0.03, 0.0324, 40.0, 5.0).changed(true));
        // A larger turn counts across states too, but only well over the noise.
        assert!(paired(0.03, 0.03, 80.0, 1000.0).changed(false));
        assert!(!paired(0.03, 0.03, 80.0, 50.0).changed(false));
    }

    #[test]
    fn a_components_echo_needs_more_across_a_change_of_state() {
        // 0.23 -> 0.36: +3.9 dB, a change in one state, within a component's thermal move across states.
        let ch = paired(0.23, 0.36, 0.0, 1e4);
        assert!(ch.changed(true));
        assert!(!ch.changed(false));
        assert_eq!(ch.threshold_db(false), COMPONENT_CHANGE_DB);
        // A joint's echo: 3 dB either way.
        assert!(paired(0.03, 0.045, 0.0, 1e4).changed(false));
        // A component that turned into an open: counts.
        assert!(paired(0.23, 0.95, 0.0, 1e4).changed(false));
    }

    #[test]
    fn shadow_of_a_joint_that_got_worse() {
        // |G| from 0 to 0.1: a lossless step passes 1 - 0.01 each way (-0.087 dB round trip as amplitude,
        // 20 log10 0.99); a series resistance passes (1 - 0.1)^2 of the amplitude each way... as a round
        // trip 20 log10 0.81 = -1.83 dB.
        let (lo, hi) = shadow_db(0.0, 0.1);
        assert!((hi - 20.0 * 0.99f64.log10()).abs() < 1e-9, "{hi}");
        assert!((lo - 20.0 * 0.81f64.log10()).abs() < 1e-9, "{lo}");
        // Nothing changed: no shadow.
        let (lo, hi) = shadow_db(0.05, 0.05);
        assert!(lo.abs() < 1e-12 && hi.abs() < 1e-12);
    }
}
