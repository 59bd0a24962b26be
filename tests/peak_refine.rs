//! Sub-bin placement of an echo's peak on the exact band-pass response: the Newton steps of
//! `analysis::refine_exact` (on h and its derivatives from one pass) against an analytic answer, against
//! finite differences, against a dense scan, and against the slower parabola search it replaced
//! (`refine_by_parabolas`).

use coldtrace::compare::analysis::{refine_by_parabolas, refine_exact};
use coldtrace::transform::bandpass::BandPassSpectrum;
use coldtrace::transform::{uniform_grid, Window};
use num_complex::Complex64;
use std::f64::consts::PI;

/// 1601 points over 0.5-10 GHz (the demo line's sweep) and the default window (Kaiser, beta 9).
fn freqs() -> Vec<f64> {
    (0..1601)
        .map(|k| 0.5e9 + k as f64 * 9.5e9 / 1600.0)
        .collect()
}

/// Echoes (rho, round-trip delay s) as S11: the sum of rho e^{-j 2 pi f tau}.
fn spectrum(echoes: &[(Complex64, f64)]) -> BandPassSpectrum {
    let f = freqs();
    let values: Vec<Complex64> = f
        .iter()
        .map(|&fk| {
            echoes
                .iter()
                .map(|(rho, tau)| rho * Complex64::from_polar(1.0, -2.0 * PI * fk * tau))
                .sum()
        })
        .collect();
    let grid = uniform_grid(&f).unwrap();
    BandPassSpectrum::new(&grid, &values, &Window::Kaiser { beta: 9.0 })
}

/// The analysis grid's step: a resolution cell (Kaiser 9: 2.34 bins at -6 dB over 9.5 GHz) over 8.
fn grid_step() -> f64 {
    2.34 / 9.5e9 / 8.0
}

/// Analytic answer: with a symmetric window the envelope of a lone reflection rho at tau is symmetric about
/// tau, and the band-pass normalisation makes h(tau) = rho (transform::bandpass, module docs). Each of three
/// lone reflections is placed from each start (in bins off its delay) to 1e-5 of a bin, its size to 1e-9.
fn assert_places_lone_reflections(starts: &[f64]) {
    let dt = grid_step();
    for (rho, tau) in [
        (Complex64::new(0.3, 0.0), 20e-9),
        (Complex64::from_polar(0.02, 1.1), 31.234e-9),
        (Complex64::new(-1.0, 0.0), 7.5e-9),
    ] {
        let s = spectrum(&[(rho, tau)]);
        for &start in starts {
            let (t, m) = refine_exact(&s, tau + start * dt, dt);
            assert!(
                (t - tau).abs() < 1e-5 * dt,
                "rho {rho}: from {start} bins, off by {} bins",
                (t - tau) / dt
            );
            assert!(
                (m / rho.norm() - 1.0).abs() < 1e-9,
                "rho {rho}: height {m} for {}",
                rho.norm()
            );
        }
    }
}

#[test]
fn a_lone_reflection_peaks_at_its_delay_with_its_own_size() {
    assert_places_lone_reflections(&[-0.45, -0.2, 0.0, 0.3, 0.5]);
}

#[test]
fn the_derivatives_match_finite_differences() {
    let s = spectrum(&[
        (Complex64::from_polar(0.1, 0.4), 12e-9),
        (Complex64::from_polar(0.05, -2.0), 12.2e-9),
    ]);
    let n = s.weighted.len();
    let fc = s.start_hz + 0.5 * (n - 1) as f64 * s.step_hz;
    // g(t) = h(t) e^{-j 2 pi fc t}, the envelope's complex form that eval_derivatives differentiates.
    let g = |t: f64| s.eval(t) * Complex64::from_polar(1.0, -2.0 * PI * fc * t);
    let h = 1e-13;
    for t in [11.9e-9, 12.05e-9, 12.31e-9] {
        let [g0, g1, g2] = s.eval_derivatives(t);
        let d1 = (g(t + h) - g(t - h)) / (2.0 * h);
        let d2 = (g(t + h) - 2.0 * g(t) + g(t - h)) / (h * h);
        assert!((g0 - g(t)).norm() < 1e-12, "{g0} against {}", g(t));
        assert!(
            (g1 - d1).norm() < 1e-6 * d1.norm().max(1e6),
            "{g1} against {d1}"
        );
        assert!(
            (g2 - d2).norm() < 1e-3 * d2.norm().max(1e16),
            "{g2} against {d2}"
        );
    }
}

#[test]
fn newton_steps_find_the_maximum_a_dense_scan_finds_on_close_echoes() {
    // Two echoes a cell and a half apart, the weaker pulling the stronger's peak. The naive reference: |h|
    // on a scan 1/5000 of a bin apart over three bins. The parabola search it replaced agrees where it is
    // used, started within a tenth of a bin of the peak (where the grid's own parabola puts it).
    let dt = grid_step();
    let res = 8.0 * dt;
    for (a2, turn) in [(0.3, 0.0), (0.5, 2.0), (0.1, -1.0)] {
        let s = spectrum(&[
            (Complex64::new(0.2, 0.0), 15e-9),
            (Complex64::from_polar(0.2 * a2, turn), 15e-9 + 1.5 * res),
        ]);
        let scan_step = dt / 5000.0;
        let (ts, ms) = (0..=15000)
            .map(|k| 15e-9 - 1.5 * dt + k as f64 * scan_step)
            .map(|t| (t, s.eval(t).norm()))
            .fold((0.0, 0.0), |best, p| if p.1 > best.1 { p } else { best });
        for start in [-0.4, -0.1, 0.1, 0.4] {
            let (tn, mn) = refine_exact(&s, ts + start * dt, dt);
            assert!(
                (tn - ts).abs() < scan_step,
                "{a2} {turn}: Newton from {start} bins off the scan's maximum by {} bins",
                (tn - ts) / dt
            );
            assert!((mn / ms - 1.0).abs() < 1e-8, "{mn} against {ms}");
            if start.abs() <= 0.1 {
                let (tp, mp) = refine_by_parabolas(&s, ts + start * dt, dt);
                assert!(
                    (tp - tn).abs() < 1e-3 * dt,
                    "parabolas {} bins",
                    (tp - ts) / dt
                );
                assert!((mp / mn - 1.0).abs() < 1e-6, "{mp} against {mn}");
            }
        }
    }
}

#[test]
fn a_start_off_any_peak_stays_within_a_bin() {
    // Half-way between two echoes four cells apart the response has a minimum: no Newton step lands on a
    // maximum there, and the parabola search takes over; neither wanders beyond a bin.
    let dt = grid_step();
    let res = 8.0 * dt;
    let s = spectrum(&[
        (Complex64::new(0.2, 0.0), 15e-9),
        (Complex64::new(0.2, 0.0), 15e-9 + 4.0 * res),
    ]);
    let start = 15e-9 + 2.0 * res;
    let (t, m) = refine_exact(&s, start, dt);
    assert!(
        (t - start).abs() <= 1.0 * dt + 1e-18,
        "{} bins",
        (t - start) / dt
    );
    assert!(m.is_finite() && m >= 0.0);
}

#[test]
fn a_start_close_to_the_peak_settles_in_one_step_as_closely_as_two() {
    // From within a hundredth of a bin (where the grid's parabola usually puts the peak) one Newton step
    // moves the estimate by under `SETTLED_STEP_BINS` and is the last; it must still place a lone reflection
    // as the analytic answer does (its delay, its size) and agree with the dense scan on close echoes.
    use coldtrace::compare::analysis::SETTLED_STEP_BINS;
    let starts = [-0.009, -0.003, 0.002, 0.008];
    assert!(starts.iter().all(|s: &f64| s.abs() < SETTLED_STEP_BINS));
    assert_places_lone_reflections(&starts);
    let dt = grid_step();
    let res = 8.0 * dt;
    let s = spectrum(&[
        (Complex64::new(0.2, 0.0), 15e-9),
        (Complex64::from_polar(0.1, 2.0), 15e-9 + 1.5 * res),
    ]);
    let scan_step = dt / 5000.0;
    let (ts, ms) = (0..=15000)
        .map(|k| 15e-9 - 1.5 * dt + k as f64 * scan_step)
        .map(|t| (t, s.eval(t).norm()))
        .fold((0.0, 0.0), |best, p| if p.1 > best.1 { p } else { best });
    for start in [-0.008, 0.004] {
        let (tn, mn) = refine_exact(&s, ts + start * dt, dt);
        assert!((tn - ts).abs() < scan_step, "{} bins", (tn - ts) / dt);
        assert!((mn / ms - 1.0).abs() < 1e-8, "{mn} against {ms}");
    }
}
