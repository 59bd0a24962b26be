//! The cold model against reality: the warm -> cold change of the in-cryostat part's electrical length,
//! measured from the landmarks of real sweeps (tests/data/real/cryostat-a, CC0) and predicted by the line
//! model and its simulator.
//!
//! How it is measured (the same estimator runs on the real and the simulated sweeps):
//! - band-pass time response by direct DFT of the whole 1 MHz - 20 GHz sweep with a Kaiser window,
//!   beta = 6 (J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh window function",
//!   Proc. IEEE ISCAS 1974): h(t) = sum_n w_n S11_n e^{+j 2 pi f_n t};
//! - each landmark's round-trip time is the peak of |h| in a search window, refined on a 0.1 ps grid
//!   with a parabolic fit of ln|h| through the three top samples;
//! - landmarks: the vacuum feedthrough echo (~4.07 ns round trip, at room temperature in both sweeps) and
//!   the switch termination (the short standard, ~11.79 ns warm);
//! - fraction = (tau_cold - tau_warm) / tau_warm with tau = t(termination) - t(feedthrough).

use coldtrace::line::materials::PtfeModel;
use coldtrace::line::{catalogue, conduction};
use coldtrace::line::{simulate, Element, ElementKind, Line, Load, SimConfig, Stage, State};
use num_complex::Complex64;
use std::f64::consts::PI;
use std::path::Path;

fn read_s1p(path: &Path) -> (Vec<f64>, Vec<Complex64>) {
    let text = std::fs::read_to_string(path).unwrap();
    let (mut f, mut s) = (Vec::new(), Vec::new());
    for line in text.lines() {
        let line = line.split('!').next().unwrap().trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let v: Vec<f64> = line
            .split_whitespace()
            .map(|x| x.parse().unwrap())
            .collect();
        f.push(v[0] * 1e9);
        s.push(Complex64::new(v[1], v[2]));
    }
    (f, s)
}

/// Modified Bessel function I0 by its power series (Abramowitz and Stegun 9.6.12).
fn bessel_i0(x: f64) -> f64 {
    let (mut sum, mut term, mut k) = (1.0, 1.0, 1.0);
    while term > 1e-17 * sum {
        term *= (x / (2.0 * k)).powi(2);
        sum += term;
        k += 1.0;
    }
    sum
}

fn kaiser(n: usize, beta: f64) -> Vec<f64> {
    (0..n)
        .map(|i| {
            let r = 2.0 * i as f64 / (n - 1) as f64 - 1.0;
            bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) / bessel_i0(beta)
        })
        .collect()
}

fn response(f: &[f64], ws: &[Complex64], t: f64) -> f64 {
    let mut acc = Complex64::new(0.0, 0.0);
    for (fi, x) in f.iter().zip(ws) {
        acc += x * Complex64::from_polar(1.0, 2.0 * PI * fi * t);
    }
    acc.norm()
}

/// Round-trip time of the largest echo between `t0` and `t1`, s.
fn peak(f: &[f64], s: &[Complex64], t0: f64, t1: f64) -> f64 {
    let w = kaiser(f.len(), 6.0);
    let ws: Vec<Complex64> = s.iter().zip(&w).map(|(x, w)| x * w).collect();
    let coarse = 2e-12;
    let n = ((t1 - t0) / coarse) as usize;
    let best = (0..=n)
        .map(|i| t0 + i as f64 * coarse)
        .max_by(|a, b| response(f, &ws, *a).total_cmp(&response(f, &ws, *b)))
        .unwrap();
    let fine = 0.1e-12;
    let ts: Vec<f64> = (-30..=30).map(|i| best + i as f64 * fine).collect();
    let hs: Vec<f64> = ts.iter().map(|t| response(f, &ws, *t)).collect();
    let i = (1..hs.len() - 1)
        .max_by(|a, b| hs[*a].total_cmp(&hs[*b]))
        .unwrap();
    let (y0, y1, y2) = (hs[i - 1].ln(), hs[i].ln(), hs[i + 1].ln());
    ts[i] + 0.5 * (y0 - y2) / (y0 - 2.0 * y1 + y2) * fine
}

fn data(t: &str, name: &str) -> (Vec<f64>, Vec<Complex64>) {
    read_s1p(
        &Path::new(env!("CARGO_MANIFEST_DIR"))
            .join(format!("tests/data/real/cryostat-a/{t}/{name}.s1p")),
    )
}

/// The model of the path: a room-temperature lead (placing the feedthrough where the sweeps show it), the
/// feedthrough as a connector at room temperature, one stainless 0.086-in PTFE cable from room to the 3 K
/// stage with a linear temperature profile, the switch's input connector and a short switch-board path at
/// 3 K, and the short. Lengths come from the warm sweep's landmark times only.
fn model(cable: &str, ptfe: PtfeModel) -> Line {
    let el =
        |name: &str, kind: ElementKind, len: f64, from: (&str, f64), to: (&str, f64)| Element {
            name: name.into(),
            kind,
            length_m: len,
            start_m: 0.0,
            from_stage: from.0.into(),
            to_stage: to.0.into(),
            cold_from_k: from.1,
            cold_to_k: to.1,
            line_no: 0,
        };
    let room = ("room", 295.0);
    let k3 = ("k3", 3.0);
    let lead = catalogue::built_in("cu-141").unwrap();
    let conn = |z: f64| catalogue::built_in("cu-086").unwrap().with_impedance(z);
    let mut line = Line::new(
        "cryostat-a model",
        50.0,
        vec![
            Stage {
                name: "room".into(),
                kelvin: 295.0,
            },
            Stage {
                name: "k3".into(),
                kelvin: 3.0,
            },
        ],
        vec![
            el(
                "lead",
                ElementKind::Cable { cable: lead },
                0.415,
                room,
                room,
            ),
            el(
                "feedthrough",
                ElementKind::Connector {
                    section: conn(58.0),
                    pin_radius_m: 0.2555e-3,
                },
                0.01,
                room,
                room,
            ),
            el(
                "cryostat coax",
                ElementKind::Cable {
                    cable: catalogue::built_in(cable).unwrap(),
                },
                0.742,
                room,
                k3,
            ),
            el(
                "switch input",
                ElementKind::Connector {
                    section: conn(58.0),
                    pin_radius_m: 0.2555e-3,
                },
                0.01,
                k3,
                k3,
            ),
            el(
                "switch board",
                ElementKind::Cable {
                    cable: catalogue::built_in("cu-086").unwrap(),
                },
                0.056,
                k3,
                k3,
            ),
            el(
                "switch",
                ElementKind::Device { load: Load::Short },
                0.0,
                k3,
                k3,
            ),
        ],
    );
    line.ptfe_model = ptfe;
    line
}

/// Landmarks of the measured sweeps: (feedthrough, switch input, termination) search windows, s.
const FT: (f64, f64) = (3.8e-9, 4.3e-9);
const SWITCH_IN: (f64, f64) = (11.10e-9, 11.25e-9);
const TERM: (f64, f64) = (11.70e-9, 11.90e-9);

/// (warm delay, fraction) feedthrough -> switch input and feedthrough -> termination.
fn fractions(
    fw: &[f64],
    sw: &[Complex64],
    fc: &[f64],
    sc: &[Complex64],
    win: [(f64, f64); 3],
) -> [(f64, f64); 2] {
    let t = |f: &[f64], s: &[Complex64]| {
        [
            peak(f, s, win[0].0, win[0].1),
            peak(f, s, win[1].0, win[1].1),
            peak(f, s, win[2].0, win[2].1),
        ]
    };
    let (w, c) = (t(fw, sw), t(fc, sc));
    let frac = |i: usize| {
        let (dw, dc) = (w[i] - w[0], c[i] - c[0]);
        (dw, (dc - dw) / dw)
    };
    [frac(1), frac(2)]
}

fn measured(name: &str) -> [(f64, f64); 2] {
    let (fw, sw) = data("295k", name);
    let (fc, sc) = data("3k", name);
    fractions(&fw, &sw, &fc, &sc, [FT, SWITCH_IN, TERM])
}

/// As [`model`], with the cryostat coax's cold temperature following the steady-state conduction profile
/// of its conductors ([`conduction::split`], 40 pieces) instead of a straight line from 295 K to 3 K.
fn model_conducting(cable: &str, ptfe: PtfeModel) -> Line {
    // 40 pieces; 80 change the predicted fraction by 1.1e-6.
    const PIECES: usize = 40;
    let m = model(cable, ptfe);
    let elements = m
        .elements
        .iter()
        .flat_map(|e| {
            if e.name == "cryostat coax" {
                conduction::split(e, PIECES)
            } else {
                vec![e.clone()]
            }
        })
        .collect();
    let mut line = Line::new(&m.name, m.impedance_ohm, m.stages.clone(), elements);
    line.ptfe_model = ptfe;
    line
}

fn predicted(cable: &str, ptfe: PtfeModel) -> [(f64, f64); 2] {
    predicted_for(&model(cable, ptfe))
}

fn predicted_for(line: &Line) -> [(f64, f64); 2] {
    let (f, _) = data("295k", "short");
    let mut cfg = SimConfig::linear(State::Warm, f[0], *f.last().unwrap(), f.len());
    cfg.freqs_hz = f.clone();
    let warm = simulate(line, &cfg).unwrap();
    cfg.state = State::Cold;
    let cold = simulate(line, &cfg).unwrap();
    // Search windows from the model's own warm and cold positions: centre of each landmark +- 0.08 ns.
    let centre = |name: &str| {
        let (_, e) = line.element(name).unwrap();
        e.start_m + 0.5 * e.length_m
    };
    let win = |x: f64| {
        let t = line.round_trip_s(x, State::Warm);
        (t - 0.08e-9, t + 0.12e-9)
    };
    let end = line.length_m();
    fractions(
        &f,
        &warm.s,
        &f,
        &cold.s,
        [
            win(centre("feedthrough")),
            win(centre("switch input")),
            win(end),
        ],
    )
}

/// Measured with the estimator above (Kaiser beta 6, whole band), from the `short` sweeps:
/// feedthrough -> switch input 7.0902 ns warm, cold 0.376 % longer; feedthrough -> short termination
/// 7.7199 ns warm, cold 0.321 % longer. Cooling lengthens the in-cryostat path: PTFE densifies faster than
/// the conductors shrink. (Other windows move these figures: Kaiser beta 9 gives +0.41 % and +0.32 %.)
const MEASURED_COAX_FRACTION: f64 = 0.003_757;
const MEASURED_TERMINATION_FRACTION: f64 = 0.003_209;

#[test]
fn measured_landmarks_show_cooling_lengthens_the_in_cryostat_path() {
    let m = measured("short");
    assert!(
        (m[0].0 - 7.0902e-9).abs() < 2e-12,
        "warm coax delay {}",
        m[0].0
    );
    assert!(
        (m[0].1 - MEASURED_COAX_FRACTION).abs() < 2e-5,
        "coax fraction {}",
        m[0].1
    );
    assert!(
        (m[1].1 - MEASURED_TERMINATION_FRACTION).abs() < 2e-5,
        "termination fraction {}",
        m[1].1
    );
    // The open standard's sweeps (independent files, same path) agree on the coax landmark.
    let o = measured("open");
    assert!(
        (o[0].1 - m[0].1).abs() < 1e-4,
        "open {} vs short {}",
        o[0].1,
        m[0].1
    );
}

/// The gapped PTFE model (the default, no parameter fitted to these sweeps) with a linear temperature
/// profile predicts the coax landmark's change as +0.49 % (copper 0.086-in PTFE line) and +0.49 %
/// (stainless) against +0.376 % measured: within 0.0015 absolute in fractional delay change, not within the
/// 0.001 aimed at (it overshoots by ~0.0011); the conduction profile (next test) closes most of the gap.
/// The free Clausius-Mossotti bound (+1.3 %) and the filled-cavity bound (~0) are both ruled out.
#[test]
fn gapped_ptfe_model_predicts_the_measured_change() {
    let m = MEASURED_COAX_FRACTION;
    let cu = predicted("cu-086", PtfeModel::Gapped)[0].1;
    assert!(
        (cu - m).abs() < 1.5e-3,
        "copper gapped {cu} vs measured {m}"
    );
    assert!(
        cu > m,
        "the gapped model overshoots the measured change: {cu} vs {m}"
    );
    let ss = predicted("ss-086", PtfeModel::Gapped)[0].1;
    assert!(
        (ss - m).abs() < 1.5e-3,
        "stainless gapped {ss} vs measured {m}"
    );
    let free = predicted("cu-086", PtfeModel::Free)[0].1;
    assert!(free > m + 0.005, "free {free}");
    let filled = predicted("cu-086", PtfeModel::Filled)[0].1;
    assert!(filled < m - 0.003, "filled {filled}");
}

/// The missing physics: the cryostat coax's temperature profile. A cable in vacuum from the 295 K flange
/// to the 3 K stage with no anchor between carries the same heat current everywhere, so int A k dT is linear
/// along it (Fourier's law); stainless conducts ~55x better at 295 K than at 4 K (NIST 304 fit), so the
/// line stays warm over most of its length (midpoint ~187 K, not 149 K) and less PTFE is densified than the
/// linear profile assumes. With that profile (no parameter fitted to these sweeps) the gapped model predicts
/// +0.432 % for a stainless 0.086-in line against +0.376 % measured: 0.00056 off, inside the 0.001 aimed
/// at. The cable material is not published: stainless is the usual choice for a line from room temperature
/// to 3 K without an intermediate anchor (common practice, no source). A copper line (Wiedemann-Franz
/// conductivity, which stays high cold) would be cold over more of its length: +0.540 %, 0.0016 off, so the
/// agreement rests on the stainless assumption, and an unpublished anchor at the ~50 K stage would also
/// move the prediction up. Tolerances: 0.001 absolute for stainless (the target), and the copper figure
/// pinned to +-3e-4 so a change in the model shows.
#[test]
fn conduction_profile_brings_the_stainless_prediction_within_target() {
    let m = MEASURED_COAX_FRACTION;
    let ss = predicted_for(&model_conducting("ss-086", PtfeModel::Gapped))[0].1;
    assert!(
        (ss - m).abs() < 1e-3,
        "stainless, conduction profile: {ss} vs measured {m}"
    );
    let ss_linear = predicted("ss-086", PtfeModel::Gapped)[0].1;
    assert!(
        ss < ss_linear - 4e-4,
        "conduction {ss} vs linear {ss_linear}"
    );
    let cu = predicted_for(&model_conducting("cu-086", PtfeModel::Gapped))[0].1;
    assert!(
        (cu - 0.0054).abs() < 3e-4,
        "copper, conduction profile: {cu}"
    );
}
