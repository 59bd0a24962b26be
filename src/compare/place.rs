//! Where something is on the line, for people and for the uncertainty of a position: the element and offset
//! of an as-built position, the local speed of the round-trip delay, the sentence that names a place, and the
//! standard uncertainty of a located change.
//!
//! Conventions: positions are as-built metres from the reference plane; delays are round-trip seconds.

use super::chain::{ChainView, SegmentKind, Which};
use super::report::Place;
use crate::transform::C0_M_PER_S;

/// Relative tolerance of as-built lengths (0.2 %, a cut cable's length to a couple of millimetres a metre;
/// common practice, no source).
pub const LENGTH_TOLERANCE: f64 = 2e-3;

/// Floor of a position's standard uncertainty, in resolution cells: what sub-bin location can promise once
/// window asymmetry and a frequency-dependent reflection phase are allowed for (common practice, no source).
pub const LOCATION_FLOOR_CELLS: f64 = 0.02;

/// Metres per round-trip second at as-built position `x` in sweep `which`.
pub fn speed_at(chain: &ChainView, x: f64, which: Which) -> f64 {
    match chain.segment_at(x) {
        Some((i, _)) => {
            let s = &chain.segments[i];
            let d = s.delay_s[which as usize];
            if d > 0.0 && s.end_m > s.start_m {
                (s.end_m - s.start_m) / d
            } else {
                C0_M_PER_S * 0.35
            }
        }
        None => C0_M_PER_S * 0.35,
    }
}

/// Where `x` is on `chain`.
pub fn place(chain: &ChainView, x: f64) -> Place {
    let (element, offset_m) = match chain.segment_at(x) {
        Some((i, off)) => (chain.segments[i].name.clone(), off),
        None => ("line".to_string(), x),
    };
    Place {
        distance_m: x,
        element,
        offset_m,
        nearest_connector: chain.nearest_connector(x).map(|(s, _)| s.name.clone()),
        nearest_connector_distance_m: chain.nearest_connector(x).map(|(_, d)| d),
    }
}

/// A position for people: millimetre precision, and no "-0.000" for the reference plane.
pub fn metres(x: f64) -> String {
    let x = if x.abs() < 5e-4 { 0.0 } else { x };
    format!("{x:.3} m")
}

/// The place as a person reads it: `J2 at 1.811 m (k50 stage)`.
pub fn where_text(chain: &ChainView, p: &Place) -> String {
    let seg = chain.segments.iter().find(|s| s.name == p.element);
    let place = seg.map(|s| s.place.as_str()).filter(|s| !s.is_empty());
    let name = match (seg, &p.nearest_connector) {
        // A connector, attenuator or device is named itself.
        (Some(s), _) if s.kind != SegmentKind::Cable && s.kind != SegmentKind::Uniform => {
            s.name.clone()
        }
        (_, Some(c))
            if chain
                .nearest_connector(p.distance_m)
                .is_some_and(|(_, d)| d < 0.02) =>
        {
            c.clone()
        }
        _ if chain.as_built => format!("{} +{}", p.element, metres(p.offset_m)),
        _ => "line".to_string(),
    };
    match place {
        Some(pl) => format!("{name} at {} ({pl})", metres(p.distance_m)),
        None => format!("{name} at {}", metres(p.distance_m)),
    }
}

/// Standard uncertainty of a position (m): resolution over twice the amplitude SNR (the usual estimate for
/// locating a peak in noise), the model's residual delay, the alignment residual and the length tolerance
/// over `from_anchor_m`, the as-built distance to the nearest point whose delay was measured (a landmark, or
/// the reference plane), added in quadrature, with a floor.
pub fn position_sigma(
    res_m: f64,
    snr: f64,
    delta_m: f64,
    align_m: f64,
    from_anchor_m: f64,
    as_built: bool,
) -> f64 {
    let length = if as_built {
        LENGTH_TOLERANCE * from_anchor_m
    } else {
        0.0
    };
    let align = if align_m.is_finite() { align_m } else { 0.0 };
    ((res_m / (2.0 * snr.max(1e-9))).powi(2)
        + (0.5 * delta_m).powi(2)
        + align.powi(2)
        + length.powi(2)
        + (LOCATION_FLOOR_CELLS * res_m).powi(2))
    .sqrt()
}
