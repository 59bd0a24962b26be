//! Anchoring the line file on the baseline: the joints the baseline sweep shows pin the model's delays, so
//! that a position read off the trace is a position in the line file's own terms.
//!
//! A line file's lengths are what people measured or were sold, to a centimetre or so a cable, and its cold
//! delays are a model's. Summed along a chain of several cables the declared delay to a joint can be off by
//! more than the few centimetres that separate an attenuator's two joints, so a change at one joint reads as
//! lying at the other, or inside the attenuator, and is compensated with the wrong loss. The baseline shows
//! most joints as echoes of their own; each joint found within the length tolerance of where the model puts
//! it becomes an anchor, and the model's delays are bent, piecewise linearly between anchors, to pass through
//! them. Positions then read in the line file's coordinates: an echo at an anchored joint is at that joint's
//! declared place.
//!
//! Conventions: delays are round-trip seconds in the baseline's state; positions are metres along the line
//! file; a joint's echo is placed at the middle of its connector.

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, SegmentKind, Which};
use super::far_end::ALIAS_EDGE;
use super::landmarks::LANDMARK_SNR;

/// Length tolerance of one cable, absolute part: a cut and terminated assembly is within about a centimetre
/// of its declared length (common practice, no source).
pub const LENGTH_TOLERANCE_ABS_M: f64 = 0.010;

/// Length tolerance of one cable, relative part: 1 % of its length, for the declared length's own error and
/// what a cold model's delay can be off by (the electrical-length change itself is under 1 %; common
/// practice, no source).
pub const LENGTH_TOLERANCE_REL: f64 = 0.01;

/// Largest anchor shift, in resolution cells, for which a sweep analysed on the chain before anchoring is
/// kept rather than analysed again on the anchored one: its compensation pieces and event levels move by
/// far less than they are sure of (common practice, no source).
pub const REANALYSE_CELLS: f64 = 0.05;

/// True when `anchors` move the chain enough (by more than [`REANALYSE_CELLS`] of `resolution_s`) that a
/// sweep analysed before anchoring should be analysed again.
pub fn worth_reanalysing(anchors: &[Anchor], resolution_s: f64) -> bool {
    anchors
        .iter()
        .any(|a| (a.observed_delay_s - a.model_delay_s).abs() > REANALYSE_CELLS * resolution_s)
}

/// One joint of the chain found in the baseline: its model delay and where the baseline shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct Anchor {
    /// The joint the echo is taken for (the front one of joints closer than a resolution cell).
    pub element: String,
    /// Its place in the line file, m.
    pub position_m: f64,
    /// Round-trip delay the model gives it in the anchoring sweep's state, s.
    pub model_delay_s: f64,
    /// Round-trip delay of that sweep's echo, s.
    pub observed_delay_s: f64,
}

/// A place where the chain reflects: a connector's middle, or the start of a device.
struct Joint {
    name: String,
    x: f64,
    t: f64,
    /// Expected amplitude of its echo in the uncompensated trace, relative: the round-trip loss to it.
    weight: f64,
}

/// The joints of `chain` in order, with their baseline delays and relative echo strengths at `f_hz`.
fn joints(chain: &ChainView, f_hz: f64, which: Which) -> Vec<Joint> {
    let mut out = Vec::new();
    for s in &chain.segments {
        let x = match s.kind {
            SegmentKind::Connector => 0.5 * (s.start_m + s.end_m),
            SegmentKind::Device => s.start_m,
            _ => continue,
        };
        out.push(Joint {
            name: s.name.clone(),
            x,
            t: chain.delay_to(x, which, None),
            weight: 10f64.powf(-chain.loss_to_db(x, f_hz, which) / 20.0),
        });
        if s.kind == SegmentKind::Device {
            break;
        }
    }
    out
}

/// Joints closer than a resolution cell, which echo as one.
struct Group<'a> {
    /// The joint the echo is taken for: the one expected to echo strongest.
    lead: &'a Joint,
    /// Where the echo lands: the joints' delays weighed by their expected strength, s.
    t_model: f64,
    /// The first joint's delay, s.
    first_t: f64,
}

impl<'a> Group<'a> {
    fn of(g: &[&'a Joint]) -> Self {
        let lead = g
            .iter()
            .copied()
            .max_by(|a, b| a.weight.total_cmp(&b.weight))
            .expect("a group has a joint");
        let w: f64 = g.iter().map(|j| j.weight).sum();
        Group {
            lead,
            t_model: g.iter().map(|j| j.weight * j.t).sum::<f64>() / w.max(1e-300),
            first_t: g[0].t,
        }
    }
}

/// Delay tolerance of a joint at as-built `x1`, counted from the last anchor at `x0`: each cable between
/// them may be off by [`LENGTH_TOLERANCE_ABS_M`] plus [`LENGTH_TOLERANCE_REL`] of its length.
fn tolerance_s(chain: &ChainView, x0: f64, x1: f64, which: Which) -> f64 {
    chain
        .segments
        .iter()
        .filter(|s| s.kind == SegmentKind::Cable && s.end_m > x0 && s.start_m < x1)
        .map(|s| {
            let len = s.end_m - s.start_m;
            let per_m = if len > 0.0 {
                s.delay_s[which as usize] / len
            } else {
                0.0
            };
            let inside = (s.end_m.min(x1) - s.start_m.max(x0)).max(0.0);
            let abs = if s.start_m >= x0 {
                LENGTH_TOLERANCE_ABS_M
            } else {
                0.0
            };
            (abs + LENGTH_TOLERANCE_REL * inside) * per_m
        })
        .sum()
}

/// How far from its declared place a part at as-built `x1` may really be, m, counted from a place known at
/// `x0` (the last anchor in front of it, or the reference plane): each cable between them by
/// [`LENGTH_TOLERANCE_ABS_M`] plus [`LENGTH_TOLERANCE_REL`] of its length, as [`tolerance_s`] counts them,
/// and each attenuator by [`LENGTH_TOLERANCE_ABS_M`] too (a body whose length the line file may only
/// default).
pub fn position_tolerance_m(chain: &ChainView, x0: f64, x1: f64) -> f64 {
    chain
        .segments
        .iter()
        .filter(|s| {
            matches!(s.kind, SegmentKind::Cable | SegmentKind::Attenuator)
                && s.end_m > x0
                && s.start_m < x1
        })
        .map(|s| {
            let inside = (s.end_m.min(x1) - s.start_m.max(x0)).max(0.0);
            let abs = if s.start_m >= x0 {
                LENGTH_TOLERANCE_ABS_M
            } else {
                0.0
            };
            let rel = if s.kind == SegmentKind::Cable {
                LENGTH_TOLERANCE_REL * inside
            } else {
                0.0
            };
            abs + rel
        })
        .sum()
}

/// Log-likelihood that an echo `miss` seconds from where a joint should be is that joint's: a Gaussian miss
/// with the tolerance as two standard deviations, times the joint's expected echo strength `weight` (a
/// joint behind an attenuator echoes weaker by its round trip).
fn likelihood(miss: f64, tol: f64, weight: f64) -> f64 {
    let u = miss / (0.5 * tol).max(1e-300);
    weight.max(1e-300).ln() - 0.5 * u * u
}

/// The joints of `chain` that the analysis `b` of a sweep in `which` state shows, front to back. Joints closer together than a
/// resolution cell form one echo, taken for the joint the model expects to echo strongest (the one in front
/// of an attenuator); each later joint is looked for where the anchors before it put it, within the
/// tolerance of the cables in between, and an echo is taken only when it is nearer to that joint than to the
/// next one. Empty on a line of unknown construction.
pub fn find(chain: &ChainView, b: &SweepAnalysis, which: Which) -> Vec<Anchor> {
    if !chain.as_built || b.freqs.is_empty() {
        return Vec::new();
    }
    let f_mid = 0.5 * (b.freqs[0] + b.freqs[b.freqs.len() - 1]);
    let res = b.resolution_s;
    // Groups of joints within one resolution cell of the group's first.
    let js = joints(chain, f_mid, which);
    let mut members: Vec<Vec<&Joint>> = Vec::new();
    for j in &js {
        match members.last_mut() {
            Some(g) if j.t - g[0].t < res => g.push(j),
            _ => members.push(vec![j]),
        }
    }
    let groups: Vec<Group> = members.iter().map(|g| Group::of(g)).collect();
    let edge = ALIAS_EDGE * b.alias_free_s;
    // Nor where the line's far part may be folded back from beyond the record.
    let folded = super::far_end::folded_until(chain, b, which);
    let events: Vec<(f64, f64)> = b
        .events
        .iter()
        .filter(|e| {
            e.delay_s < edge
                && e.delay_s >= folded
                && e.ghost_of.is_none()
                && b.snr(e.magnitude, e.delay_s) >= LANDMARK_SNR
        })
        .map(|e| (e.delay_s, e.magnitude / b.gain_at(e.delay_s).max(1e-300)))
        .collect();
    let mut anchors: Vec<Anchor> = Vec::new();
    let (mut x_last, mut offset) = (0.0, 0.0);
    let mut used = 0usize;
    for (k, g) in groups.iter().enumerate() {
        let lead = g.lead;
        let centre = g.t_model + offset;
        let tol = tolerance_s(chain, x_last, lead.x, which).max(0.5 * res);
        // The next group, to which an echo between the two may belong instead.
        let next = groups.get(k + 1).map(|n| {
            (
                n.first_t + offset,
                tolerance_s(chain, x_last, n.lead.x, which).max(0.5 * res),
                n.lead.weight,
            )
        });
        let pick = events
            .iter()
            .enumerate()
            .skip(used)
            .filter(|(_, &(t, _))| {
                (t - centre).abs() <= tol
                    && next.map_or(true, |(tn, tol_n, w_n)| {
                        likelihood(t - centre, tol, lead.weight) >= likelihood(t - tn, tol_n, w_n)
                    })
            })
            .max_by(|a, b| a.1 .1.total_cmp(&b.1 .1));
        if let Some((i, &(t, _))) = pick {
            // The lead joint's own delay moves with the group's echo.
            let observed = lead.t + (t - g.t_model);
            anchors.push(Anchor {
                element: lead.name.clone(),
                position_m: lead.x,
                model_delay_s: lead.t,
                observed_delay_s: observed,
            });
            offset = observed - lead.t;
            x_last = lead.x;
            used = i + 1;
        }
    }
    anchors
}

/// `chain` with its delays bent through `anchors` (found in a sweep in `which` state): the map from model to
/// observed delay is piecewise
/// linear through the reference plane and the anchors, and keeps the last anchor's offset beyond it. Each
/// segment's delay in both states is scaled by what the map does to its baseline delay (a length error is
/// the same cable in both sweeps; the alignment fits the change between them afterwards).
pub fn anchored(chain: &ChainView, anchors: &[Anchor], which: Which) -> ChainView {
    if anchors.is_empty() {
        return chain.clone();
    }
    let mut knots: Vec<(f64, f64)> = vec![(0.0, 0.0)];
    knots.extend(
        anchors
            .iter()
            .map(|a| (a.model_delay_s, a.observed_delay_s)),
    );
    let map = |t: f64| -> f64 {
        let k = knots.partition_point(|p| p.0 <= t);
        if k >= knots.len() {
            let (m, o) = knots[knots.len() - 1];
            return o + (t - m);
        }
        let (m0, o0) = knots[k.saturating_sub(1)];
        let (m1, o1) = knots[k];
        if m1 > m0 {
            o0 + (o1 - o0) * (t - m0) / (m1 - m0)
        } else {
            o1
        }
    };
    let mut out = chain.clone();
    let mut acc = 0.0;
    for s in &mut out.segments {
        let d = s.delay_s[which as usize];
        let new = map(acc + d) - map(acc);
        acc += d;
        if d > 0.0 && new > 0.0 {
            let k = new / d;
            s.delay_s[0] *= k;
            s.delay_s[1] *= k;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_map_passes_through_every_anchor_and_keeps_the_last_offset() {
        let mut c = ChainView::uniform("t", 0.7, 1.0, 50.0);
        let mut s = c.segments[0].clone();
        for (i, (a, b)) in [(1.0, 1.01), (1.01, 2.0), (2.0, 2.01), (2.01, 3.0)]
            .into_iter()
            .enumerate()
        {
            s.name = format!("s{i}");
            s.kind = if i % 2 == 0 {
                SegmentKind::Connector
            } else {
                SegmentKind::Cable
            };
            s.start_m = a;
            s.end_m = b;
            s.delay_s = [2.0 * (b - a) / (crate::transform::C0_M_PER_S * 0.7); 2];
            c.segments.push(s.clone());
        }
        let t1 = c.delay_to(1.005, Which::Baseline, None);
        let t2 = c.delay_to(2.005, Which::Baseline, None);
        let anchors = vec![
            Anchor {
                element: "s0".into(),
                position_m: 1.005,
                model_delay_s: t1,
                observed_delay_s: t1 + 40e-12,
            },
            Anchor {
                element: "s2".into(),
                position_m: 2.005,
                model_delay_s: t2,
                observed_delay_s: t2 - 10e-12,
            },
        ];
        let a = anchored(&c, &anchors, Which::Baseline);
        for an in &anchors {
            let x = a.position_of(an.observed_delay_s, Which::Baseline, None);
            // Exact at segment ends; inside the 10 mm connector the map's bend (a slope change of 0.9 %
            // here) is spread linearly, which moves its middle by a quarter of that over 10 mm: 23 um.
            assert!((x - an.position_m).abs() < 3e-5, "{x}");
            let xc = a.position_of(an.observed_delay_s, Which::Current, None);
            assert!((xc - an.position_m).abs() < 3e-5, "{xc}");
        }
        // Beyond the last anchor the offset stays.
        let t3 = c.delay_to(2.5, Which::Baseline, None);
        let x = a.position_of(t3 - 10e-12, Which::Baseline, None);
        assert!((x - 2.5).abs() < 1e-6, "{x}");
    }
}
