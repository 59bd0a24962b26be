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

/// Gating done the plain way, by direct sums in full: the record's time response at every padded sample
/// h_m = sum_k x_k e^{+j 2 pi k m / len}, weighted by the gate shape, summed back at every bin, and the
/// same for a unit reflection at the gate centre for the edge correction (the method of `transform::gate`,
/// without its shortcuts: no kept time response, no closed-form unit response, no FFT).
fn plain_gate(freqs: &[f64], x: &[Complex64], plan: &GatePlan) -> Vec<Complex64> {
    let n = x.len();
    let df = (freqs[n - 1] - freqs[0]) / (n - 1) as f64;
    let len = coldtrace::transform::czt::fast_len(plan.padding * n);
    let dt = 1.0 / (df * len as f64);
    let width = plan.stop_s - plan.start_s;
    let w: Vec<f64> = (0..len)
        .map(|m| plan.shape.value((m as f64 * dt - plan.start_s) / width))
        .collect();
    let cis = |cycles: f64| Complex64::from_polar(1.0, 2.0 * PI * (cycles - cycles.floor()));
    let through = |x: &[Complex64]| -> Vec<Complex64> {
        let h: Vec<Complex64> = (0..len)
            .map(|m| {
                if w[m] == 0.0 {
                    return Complex64::new(0.0, 0.0);
                }
                x.iter()
                    .enumerate()
                    .map(|(k, xk)| xk * cis(((k * m) % len) as f64 / len as f64))
                    .sum::<Complex64>()
                    * w[m]
            })
            .collect();
        (0..n)
            .map(|k| {
                h.iter()
                    .enumerate()
                    .filter(|(_, hm)| hm.norm_sqr() > 0.0)
                    .map(|(m, hm)| hm * cis(-(((k * m) % len) as f64) / len as f64))
                    .sum::<Complex64>()
                    / len as f64
            })
            .collect()
    };
    let centre = 0.5 * (plan.start_s + plan.stop_s);
    let unit: Vec<Complex64> = (0..n).map(|k| cis(-(k as f64) * df * centre)).collect();
    through(x)
        .iter()
        .zip(&unit)
        .zip(through(&unit))
        .map(|((g, u), ug)| g * u / ug)
        .collect()
}

#[test]
fn gate_agrees_with_plain_direct_sums() {
    // Two echoes and a ripple on 2-8 GHz, 241 points; gates of Kaiser and Hann shape, padding 2 and 3, one
    // of them reaching the end of the record. The kept time response, the closed-form unit response and the
    // FFTs give what direct sums give, to rounding.
    let freqs: Vec<f64> = (0..241).map(|i| 2e9 + i as f64 * 25e6).collect();
    let x: Vec<Complex64> = echo(&freqs, 0.4, 3.1e-9)
        .iter()
        .zip(echo(&freqs, 0.15, 7.3e-9))
        .zip(&freqs)
        .map(|((a, b), f)| a + b + Complex64::new(0.01 * (f / 3e8).sin(), 0.0))
        .collect();
    let period = 1.0 / 25e6;
    for (start, stop, shape, padding) in [
        (2.0e-9, 4.3e-9, Window::Kaiser { beta: 6.0 }, 2),
        (6.1e-9, 8.9e-9, Window::Hann, 3),
        (period - 3e-9, period, Window::Kaiser { beta: 6.0 }, 2),
    ] {
        let mut plan = GatePlan::new(start, stop);
        plan.shape = shape;
        plan.padding = padding;
        let fast = gate(&freqs, &x, &plan).unwrap().values;
        let plain = plain_gate(&freqs, &x, &plan);
        let scale = plain.iter().map(|v| v.norm()).fold(0.0, f64::max);
        let worst = fast
            .iter()
            .zip(&plain)
            .map(|(a, b)| (a - b).norm())
            .fold(0.0, f64::max);
        assert!(
            worst <= 1e-12 * scale,
            "gate {start:e}..{stop:e}: worst {worst:e} of {scale}"
        );
        // A few bins by direct sums from the kept time response: the same values.
        let source = coldtrace::transform::gate::GateSource::new(
            &freqs,
            &x,
            padding,
            &mut coldtrace::transform::FftCache::new(),
        )
        .unwrap();
        for bins in [0..7, 100..131, 236..241] {
            let part = source.gate_bins(&plan, bins.clone()).unwrap();
            for (k, v) in bins.zip(&part) {
                assert!(
                    (v - fast[k]).norm() <= 1e-12 * scale,
                    "bin {k}: {v} vs {}",
                    fast[k]
                );
            }
        }
        // Every few bins over the whole sweep, as a local reflection reads a long one: the same values, and
        // no bin past the sweep's last.
        for (first, stride, count) in [(3usize, 7usize, 30usize), (0, 1, 5), (20, 13, 1000)] {
            let part = source.gate_every(&plan, first, stride, count).unwrap();
            let expect: Vec<usize> = (first..x.len()).step_by(stride).take(count).collect();
            assert_eq!(part.len(), expect.len(), "{first}, {stride}, {count}");
            for (&k, v) in expect.iter().zip(&part) {
                assert!(
                    (v - fast[k]).norm() <= 1e-12 * scale,
                    "bin {k} (every {stride} from {first}): {v} vs {}",
                    fast[k]
                );
            }
        }
    }
}

#[test]
fn dirichlet_kernel_is_the_geometric_sum() {
    // sum_{k<n} e^{+j 2 pi k x} summed term by term, near and far from the peak, and at whole cycles.
    use coldtrace::transform::gate::dirichlet;
    for n in [1usize, 2, 7, 1601] {
        for x in [0.0, 1e-9, -3.3e-4, 0.01, 0.25, -0.49, 0.5, 0.77, 1.0, -2.0] {
            let direct: Complex64 = (0..n)
                .map(|k| Complex64::from_polar(1.0, 2.0 * PI * ((k as f64 * x) % 1.0)))
                .sum();
            let closed = dirichlet(n, x);
            assert!(
                (closed - direct).norm() <= 1e-12 * n as f64,
                "n {n}, x {x}: {closed} vs {direct}"
            );
        }
    }
}
