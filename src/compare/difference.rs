//! The difference stage: every echo of either sweep, paired across the aligned sweeps, with the change of
//! its strength judged against what the calibration expects there (the level and loss change fitted on the
//! landmarks, and the shadow of changed joints in front of it), and the zone it lies in.
//!
//! Conventions: round-trip delays in s; as-built positions in m; changes in dB, current over baseline;
//! `expected` is an interval of changes the calibration explains; `excess_db` is how far the measured change
//! lies outside it (0 inside).

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, Which};
use super::detect::NOISE_SIGMAS;
use super::far_end::{Termination, ALIAS_EDGE};
use super::landmarks::{match_events, Fitted};
use super::sweep::db;
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
}

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

/// Phase turn that counts as a change when both sweeps are in the same state, degrees.
pub const PHASE_CHANGE_DEG: f64 = 90.0;

/// Least amplitude SNR of an echo whose phase turn counts as a change (10: 20 dB).
pub const PHASE_SNR: f64 = 10.0;

impl Change {
    /// Whether this counts as a change: its strength moved by [`CHANGE_DB`] or more beyond what the
    /// calibration explains, or, both sweeps in one state, its phase turned by [`PHASE_CHANGE_DEG`] or more.
    pub fn changed(&self, same_state: bool) -> bool {
        self.excess_db.abs() >= CHANGE_DB
            || (same_state
                && self.base.is_some()
                && self.phase_deg.abs() >= PHASE_CHANGE_DEG
                && self.snr > PHASE_SNR)
    }

    /// Whether it may be reported above info at all.
    pub fn claimable(&self) -> bool {
        self.zone == Zone::Line && !self.ghost && !self.same_termination
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
}

impl Inputs<'_> {
    fn zone(&self, x: f64, d_c: f64, res_m: f64) -> Zone {
        let alias = self.c.alias_free_s.min(self.b.alias_free_s);
        if d_c >= ALIAS_EDGE * alias {
            return Zone::AliasEdge;
        }
        if self.chain.as_built && x > self.chain.visible_end_m() + res_m {
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
/// stopped at its cap, dB (at the band centre).
fn shortfall_db(inp: &Inputs, x: f64, which: Which) -> f64 {
    if !inp.chain.compensates() {
        return 0.0;
    }
    let a = if which == Which::Baseline {
        inp.b
    } else {
        inp.c
    };
    let f_c = 0.5 * (a.freqs[0] + a.freqs[a.freqs.len() - 1]);
    let cap_db = 20.0 * super::analysis::MAX_COMPENSATION.log10();
    (inp.chain.loss_to_db(x, f_c, which) - cap_db).max(0.0)
}

/// Pair every echo of both sweeps on the aligned map and judge each change against the calibration.
/// Returned in order of position.
pub fn changes(inp: &Inputs) -> Vec<Change> {
    let (b, c, fit) = (inp.b, inp.c, inp.fit);
    let res_s = b.resolution_s.max(c.resolution_s);
    let to_x_b = |d: f64| fit.chain.position_of(d, Which::Baseline, None);
    let to_x_c = |d: f64| fit.chain.position_of(d, Which::Current, None);
    let mut pairs = match_events(
        b,
        c,
        |d| fit.chain.delay_to(to_x_b(d), Which::Current, None),
        |_| res_s,
        |_, _| true,
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
                let level = b.h(d_b).norm().max(NOISE_SIGMAS * b.sigma_at(d_b));
                (None, level)
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
        });
    }
    out.sort_by(|p, q| p.x.total_cmp(&q.x));
    // Calibration and shadowing, front to back: a joint that got worse dims everything behind it.
    let mut shadow = (0.0f64, 0.0f64);
    for ch in &mut out {
        let res_m = res_s * super::place::speed_at(&fit.chain, ch.x, Which::Current);
        ch.zone = inp.zone(ch.x, ch.d_c, res_m);
        // Where compensation stopped at its cap, a sweep reads low by the loss it left undone.
        let cal = fit.expected_change_db(ch.x) + shortfall_db(inp, ch.x, Which::Baseline)
            - shortfall_db(inp, ch.x, Which::Current);
        ch.expected_db = (cal + shadow.0, cal + shadow.1);
        ch.excess_db = if ch.raw_change_db < ch.expected_db.0 {
            ch.raw_change_db - ch.expected_db.0
        } else if ch.raw_change_db > ch.expected_db.1 {
            ch.raw_change_db - ch.expected_db.1
        } else {
            0.0
        };
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
    out
}

#[cfg(test)]
mod tests {
    use super::*;

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
