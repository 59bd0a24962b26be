//! Gating: an echo inside the gate comes back as it was, across the whole band; others are removed.

use coldtrace::transform::{gate, DistanceMap, GatePlan, UniformLine, Window};
use num_complex::Complex64;
use std::f64::consts::PI;

fn echo(freqs: &[f64], rho: f64, tau: f64) -> Vec<Complex64> {
    freqs
        .iter()
        .map(|&f| Complex64::from_polar(rho, -2.0 * PI * f * tau))
        .collect()
}

#[test]
fn gate_keeps_one_echo_and_removes_the_other() {
    // 1-6 GHz, 501 points (df 10 MHz, alias-free 10.4 m at vf 0.695); echoes 0.3 at 1 m and 0.2 at 3 m.
    let freqs: Vec<f64> = (0..501).map(|i| 1e9 + i as f64 * 1e7).collect();
    let map = UniformLine::new(0.695).unwrap();
    let (t1, t2) = (map.round_trip_s(1.0), map.round_trip_s(3.0));
    let near = echo(&freqs, 0.3, t1);
    let both: Vec<Complex64> = near
        .iter()
        .zip(echo(&freqs, 0.2, t2))
        .map(|(a, b)| a + b)
        .collect();
    let mut plan = GatePlan::new(map.round_trip_s(0.6), map.round_trip_s(1.4));
    let gated = gate(&freqs, &both, &plan).unwrap();
    // Alone at the gate centre, the echo comes back exactly, edges included.
    let only = gate(&freqs, &near, &plan).unwrap();
    let exact = only
        .values
        .iter()
        .zip(&near)
        .map(|(g, w)| (g - w).norm())
        .fold(0.0, f64::max);
    assert!(exact < 1e-12, "single echo: {exact}");
    assert!(gated.warnings.is_empty());
    let err: Vec<f64> = gated
        .values
        .iter()
        .zip(&near)
        .map(|(g, w)| (g - w).norm())
        .collect();
    // With a second echo outside the gate: the part of its response the gate cuts off is its band-edge
    // discontinuity, so it returns within a gate-kernel width (~30 bins here) of the edges, a few per cent of
    // the removed echo at the outermost bin; inside that the kept echo is restored to 1e-3 of itself.
    let inner = err[30..err.len() - 30].iter().cloned().fold(0.0, f64::max);
    assert!(
        inner < 0.3 * 1e-3,
        "corrected gate, inner band: worst error {inner}"
    );
    let all = err.iter().cloned().fold(0.0, f64::max);
    assert!(
        all < 0.3 * 0.06,
        "corrected gate, edges included: worst error {all}"
    );
    // Without the edge correction the band edges come back about 6 dB low (half the amplitude).
    plan.correct_edges = false;
    let raw = gate(&freqs, &both, &plan).unwrap();
    let edge = raw.values[0].norm() / 0.3;
    assert!((0.4..0.6).contains(&edge), "uncorrected edge ratio {edge}");
    let mid = raw.values[250].norm() / 0.3;
    assert!((mid - 1.0).abs() < 0.02, "uncorrected mid-band ratio {mid}");
}

#[test]
fn gate_shapes_and_bad_gates() {
    let freqs: Vec<f64> = (0..201).map(|i| 2e9 + i as f64 * 2e7).collect();
    let g = echo(&freqs, 0.5, 20e-9);
    for shape in [Window::Rectangular, Window::Hann, Window::BlackmanHarris4] {
        let plan = GatePlan {
            shape,
            ..GatePlan::new(14e-9, 26e-9)
        };
        let out = gate(&freqs, &g, &plan).unwrap();
        let worst = out
            .values
            .iter()
            .zip(&g)
            .map(|(a, b)| (a - b).norm())
            .fold(0.0, f64::max);
        assert!(worst < 0.5 * 0.05, "{shape:?}: {worst}");
    }
    // Past the alias-free time 1/df = 50 ns.
    let e = gate(&freqs, &g, &GatePlan::new(40e-9, 60e-9)).unwrap_err();
    assert!(e.to_string().contains("alias-free"), "{e}");
    let e = gate(&freqs, &g, &GatePlan::new(30e-9, 20e-9)).unwrap_err();
    assert!(e.to_string().contains("start < stop"));
    let narrow = gate(&freqs, &g, &GatePlan::new(19.9e-9, 20.1e-9)).unwrap();
    assert!(narrow.warnings.iter().any(|w| w.kind == "gate-narrow"));
}
