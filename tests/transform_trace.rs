//! Traces of lines built from first principles: reflections at known distances, loads, sections.

use coldtrace::transform::{
    classify_step, find_peaks, refine_peak, trace, DcMethod, DistanceMap, Mode, Spectrum,
    StepFeature, TracePlan, TransformError, UniformLine, Window, C0_M_PER_S,
};
use num_complex::Complex64;
use std::f64::consts::PI;

const Z0: f64 = 50.0;
const VF: f64 = 0.695;

/// Phase constant of a lossless TEM line, beta = 2 pi f / (c0 vf) (Pozar, Microwave Engineering, 4th ed.,
/// sec. 2.1 with v = c0 vf).
fn beta(f: f64) -> f64 {
    2.0 * PI * f / (C0_M_PER_S * VF)
}

/// Gamma_L = (ZL - Z0) / (ZL + Z0) (Pozar, 4th ed., eq. 2.35).
fn gamma_load(zl: Complex64) -> Complex64 {
    (zl - Z0) / (zl + Z0)
}

/// Input impedance of a lossless line Z0 l terminated in ZL: Z0 (ZL + j Z0 tan bl) / (Z0 + j ZL tan bl)
/// (Pozar, 4th ed., eq. 2.44).
fn z_in(z_line: f64, zl: Complex64, bl: f64) -> Complex64 {
    let j = Complex64::i();
    let t = bl.tan();
    z_line * (zl + j * z_line * t) / (z_line + j * zl * t)
}

/// Harmonic grid f_k = k df, k = k0..=k_max.
fn harmonic(df: f64, k0: usize, k_max: usize) -> Vec<f64> {
    (k0..=k_max).map(|k| k as f64 * df).collect()
}

fn map() -> UniformLine {
    UniformLine::new(VF).unwrap()
}

/// A load ZL at the end of a 50 ohm line of length l: G(f) = Gamma_L e^{-j 2 beta l}.
fn load_at(freqs: &[f64], zl: Complex64, l: f64) -> Vec<Complex64> {
    freqs
        .iter()
        .map(|&f| gamma_load(zl) * Complex64::from_polar(1.0, -2.0 * beta(f) * l))
        .collect()
}

#[test]
fn single_reflection_peak_is_rho_for_every_window_and_padding() {
    // Band 1-5 GHz, 401 points; rho = 0.3 e^{j 0.7} at 1.2345 m.
    let freqs: Vec<f64> = (0..401).map(|i| 1e9 + i as f64 * 1e7).collect();
    let rho = Complex64::from_polar(0.3, 0.7);
    let x = 1.2345;
    let tau = map().round_trip_s(x);
    let g: Vec<Complex64> = freqs
        .iter()
        .map(|&f| rho * Complex64::from_polar(1.0, -2.0 * PI * f * tau))
        .collect();
    for window in [
        Window::Rectangular,
        Window::Hann,
        Window::Hamming,
        Window::BlackmanHarris4,
        Window::Kaiser { beta: 6.0 },
        Window::Kaiser { beta: 13.0 },
    ] {
        for padding in [1, 3, 8] {
            let plan = TracePlan {
                window,
                padding,
                ..TracePlan::default()
            };
            let tr = trace(&freqs, &g, &plan, &map()).unwrap();
            let peaks = find_peaks(&tr, 20.0, 3);
            let check = plan.check(&freqs, &map()).unwrap();
            let spec = Spectrum::new(&g, &plan, &check).unwrap();
            let p = refine_peak(&tr, &spec, &peaks[0], &|t| map().distance_m(t));
            assert!(
                (p.value - 0.3).abs() < 1e-9,
                "{window:?} x{padding}: peak {}",
                p.value
            );
            assert!(
                (p.distance_m - x).abs() < 1e-6,
                "{window:?} x{padding}: at {}",
                p.distance_m
            );
        }
        // A span whose grid lands on x: exact without refinement.
        let plan = TracePlan {
            window,
            span_m: Some((x - 0.05, x + 0.05)),
            step_m: Some(0.001),
            ..TracePlan::default()
        };
        let tr = trace(&freqs, &g, &plan, &map()).unwrap();
        assert!(
            (tr.linear[50] - 0.3).abs() < 1e-9,
            "{window:?}: span value {}",
            tr.linear[50]
        );
        assert!((tr.axis_m[50] - x).abs() < 1e-9);
        assert!(
            (tr.complex[50] - rho).norm() < 1e-9,
            "complex value keeps the phase"
        );
        assert!((tr.values[50] - 20.0 * 0.3f64.log10()).abs() < 1e-7);
    }
}

#[test]
fn low_pass_impulse_is_signed_rho() {
    // Harmonic grid from DC (measured DC point), rho = -0.25 at 0.8 m.
    let freqs = harmonic(1e7, 0, 800);
    let tau = map().round_trip_s(0.8);
    let g: Vec<Complex64> = freqs
        .iter()
        .map(|&f| Complex64::from_polar(-0.25, -2.0 * PI * f * tau))
        .collect();
    for window in [
        Window::Rectangular,
        Window::Hann,
        Window::Kaiser { beta: 9.0 },
    ] {
        for padding in [1, 4] {
            let plan = TracePlan {
                mode: Mode::LowPassImpulse,
                window,
                padding,
                ..TracePlan::default()
            };
            let tr = trace(&freqs, &g, &plan, &map()).unwrap();
            assert_eq!(tr.unit, "rho");
            let peaks = find_peaks(&tr, 20.0, 2);
            let check = plan.check(&freqs, &map()).unwrap();
            let spec = Spectrum::new(&g, &plan, &check).unwrap();
            let p = refine_peak(&tr, &spec, &peaks[0], &|t| map().distance_m(t));
            assert!((p.value + 0.25).abs() < 1e-9, "{window:?}: {}", p.value);
            assert!((p.distance_m - 0.8).abs() < 1e-6);
        }
    }
}

#[test]
fn open_and_short_read_plus_and_minus_one_on_the_step() {
    // 10 MHz steps from 10 MHz (no DC point: Gamma(0) extrapolated) to 10 GHz; 1 m of line.
    let freqs = harmonic(1e7, 1, 1000);
    let plan = TracePlan {
        mode: Mode::LowPassStep,
        span_m: Some((0.0, 2.0)),
        step_m: Some(0.005),
        ..TracePlan::default()
    };
    for (zl, want) in [
        (Complex64::new(1e12, 0.0), 1.0),
        (Complex64::new(0.0, 0.0), -1.0),
    ] {
        let tr = trace(&freqs, &load_at(&freqs, zl, 1.0), &plan, &map()).unwrap();
        let at = |x: f64| tr.linear[(x / 0.005).round() as usize];
        assert!(at(0.5).abs() < 0.01, "before the load: {}", at(0.5));
        // The DC estimate from 10 and 20 MHz is good to about 2 % here (cos of 0.1 and 0.2 cycles).
        assert!(
            (at(1.3) - want).abs() < 0.03,
            "after the load: {} (want {want})",
            at(1.3)
        );
    }
    // With the DC value known, the step settles to +1 far more closely.
    let plan_dc = TracePlan {
        dc: DcMethod::Fixed(1.0),
        ..plan.clone()
    };
    let tr = trace(
        &freqs,
        &load_at(&freqs, Complex64::new(1e12, 0.0), 1.0),
        &plan_dc,
        &map(),
    )
    .unwrap();
    let v = tr.linear[(1.3f64 / 0.005).round() as usize];
    assert!((v - 1.0).abs() < 0.003, "{v}");
}

#[test]
fn seventy_five_ohm_section_reads_75_ohm() {
    // 50 ohm lead 1 m, then 0.5 m of 75 ohm line, then a matched 50 ohm load; S11 exact from eq. 2.44.
    let freqs = harmonic(1e7, 1, 1000);
    let g: Vec<Complex64> = freqs
        .iter()
        .map(|&f| {
            let zin = z_in(75.0, Complex64::new(50.0, 0.0), beta(f) * 0.5);
            gamma_load(zin) * Complex64::from_polar(1.0, -2.0 * beta(f) * 1.0)
        })
        .collect();
    let plan = TracePlan {
        mode: Mode::Impedance,
        span_m: Some((0.0, 2.0)),
        step_m: Some(0.01),
        ..TracePlan::default()
    };
    let tr = trace(&freqs, &g, &plan, &map()).unwrap();
    assert_eq!(tr.unit, "ohm");
    let at = |x: f64| tr.values[(x / 0.01).round() as usize];
    assert!((at(0.5) - 50.0).abs() < 0.5, "lead: {}", at(0.5));
    for x in [1.15, 1.25, 1.35] {
        assert!((at(x) - 75.0).abs() < 0.5, "section at {x} m: {}", at(x));
    }
    // Behind the section the step returns near 50 ohm (the second edge reads (1 - 0.04)(-0.2)).
    assert!((at(1.8) - 50.0).abs() < 2.0, "after: {}", at(1.8));
}

#[test]
fn load_distance_found_to_a_tenth_of_resolution() {
    // A 20 ohm load at 2.3456789 m; sweep 0.3-6 GHz, 571 points, band-pass Kaiser 6.
    let freqs: Vec<f64> = (0..571).map(|i| 3e8 + i as f64 * 1e7).collect();
    let x = 2.3456789;
    let g = load_at(&freqs, Complex64::new(20.0, 0.0), x);
    let plan = TracePlan::default();
    let tr = trace(&freqs, &g, &plan, &map()).unwrap();
    let peaks = find_peaks(&tr, 30.0, 5);
    let coarse = peaks[0];
    assert!(
        (coarse.distance_m - x).abs() < tr.resolution_m / 10.0,
        "parabolic: {}",
        coarse.distance_m
    );
    let check = plan.check(&freqs, &map()).unwrap();
    let spec = Spectrum::new(&g, &plan, &check).unwrap();
    let p = refine_peak(&tr, &spec, &coarse, &|t| map().distance_m(t));
    assert!(
        (p.distance_m - x).abs() < 1e-4,
        "refined: {} vs {x}",
        p.distance_m
    );
    assert!(
        (p.value - 30.0 / 70.0).abs() < 1e-6,
        "|Gamma_L| = 30/70: {}",
        p.value
    );
}

/// Domain check value (calc from c0 and the formulas): 0.5-10 GHz with 201 points at vf 0.698 reaches
/// c0 vf / (2 df) = 2.2027 m; Kaiser 6 band-pass resolution k6 / (N df) one-way.
#[test]
fn resolution_and_alias_free_range() {
    let freqs: Vec<f64> = (0..201).map(|i| 0.5e9 + i as f64 * 47.5e6).collect();
    let m = UniformLine::new(0.698).unwrap();
    let c = TracePlan::default().check(&freqs, &m).unwrap();
    let want_range = C0_M_PER_S * 0.698 / (2.0 * 47.5e6);
    assert!((c.alias_free_range_m - want_range).abs() < 1e-9);
    assert!((c.alias_free_range_m - 2.2027).abs() < 1e-3);
    let k6 = Window::Kaiser { beta: 6.0 }.figures().mainlobe_6db_bins;
    let want_res = C0_M_PER_S * 0.698 / 2.0 * k6 / (201.0 * 47.5e6);
    assert!((c.resolution_m - want_res).abs() < 1e-12);
    assert!((c.resolution_m - 0.0214).abs() < 2e-4, "{}", c.resolution_m);
    // Low-pass to 10 GHz: k6 / (2 f_max).
    let lp = harmonic(5e7, 1, 200);
    let c = TracePlan {
        mode: Mode::LowPassImpulse,
        ..TracePlan::default()
    }
    .check(&lp, &m)
    .unwrap();
    assert!((c.resolution_m - C0_M_PER_S * 0.698 / 2.0 * k6 / 2e10).abs() < 1e-12);
    assert!((c.resolution_m - 0.0102).abs() < 1e-4);
}

#[test]
fn warnings_for_span_and_step() {
    let freqs: Vec<f64> = (0..201).map(|i| 0.5e9 + i as f64 * 47.5e6).collect();
    let plan = TracePlan {
        span_m: Some((0.0, 3.0)),
        step_m: Some(0.05),
        ..TracePlan::default()
    };
    let c = plan.check(&freqs, &map()).unwrap();
    let kinds: Vec<&str> = c.warnings.iter().map(|w| w.kind.as_str()).collect();
    assert!(kinds.contains(&"span-past-alias-free-range"), "{kinds:?}");
    assert!(kinds.contains(&"step-coarser-than-resolution"), "{kinds:?}");
    let fine = TracePlan {
        span_m: Some((0.0, 0.01)),
        step_m: Some(1e-8),
        ..TracePlan::default()
    };
    let c = fine.check(&freqs, &map()).unwrap();
    assert!(c
        .warnings
        .iter()
        .any(|w| w.kind == "step-finer-than-needed"));
    let ok = TracePlan {
        span_m: Some((0.0, 2.0)),
        ..TracePlan::default()
    };
    assert!(ok.check(&freqs, &map()).unwrap().warnings.is_empty());
}

#[test]
fn bad_grids_are_refused_with_the_fix() {
    let m = map();
    let uneven = vec![1e9, 2e9, 3.5e9];
    let e = TracePlan::default().check(&uneven, &m).unwrap_err();
    assert!(
        matches!(e, TransformError::NonUniformGrid { index: 0, .. }),
        "{e}"
    );
    assert!(e.to_string().contains("resample"));
    let offset: Vec<f64> = (0..100).map(|i| 0.5e9 + i as f64 * 1e7).collect();
    let lp = TracePlan {
        mode: Mode::LowPassStep,
        ..TracePlan::default()
    };
    let e = lp.check(&offset, &m).unwrap_err();
    assert!(matches!(e, TransformError::NotHarmonic { .. }), "{e}");
    assert!(e.to_string().contains("--mode band-pass") && e.to_string().contains("--resample"));
    // Even with --resample, 50 missing low points cannot be extrapolated.
    let e = TracePlan {
        resample: true,
        ..lp.clone()
    }
    .check(&offset, &m)
    .unwrap_err();
    assert!(e.to_string().contains("band-pass"), "{e}");
    let e = trace(
        &[1e9],
        &[Complex64::new(0.0, 0.0)],
        &TracePlan::default(),
        &m,
    )
    .unwrap_err();
    assert!(matches!(e, TransformError::TooFewPoints { .. }));
    let e = trace(
        &[1e9, 2e9],
        &[Complex64::new(f64::NAN, 0.0); 2],
        &TracePlan::default(),
        &m,
    )
    .unwrap_err();
    assert!(matches!(e, TransformError::NonFinite { index: 0 }));
}

#[test]
fn resampled_near_harmonic_grid_reads_the_open() {
    // 12 MHz start, 9.99 MHz steps: not harmonic; resampled with a warning.
    let freqs: Vec<f64> = (0..1000).map(|i| 12e6 + i as f64 * 9.99e6).collect();
    let g = load_at(&freqs, Complex64::new(1e12, 0.0), 1.0);
    let plan = TracePlan {
        mode: Mode::LowPassStep,
        span_m: Some((0.0, 2.0)),
        step_m: Some(0.01),
        resample: true,
        ..TracePlan::default()
    };
    let tr = trace(&freqs, &g, &plan, &map()).unwrap();
    assert!(tr.warnings.iter().any(|w| w.kind == "resampled-grid"));
    assert!(tr.linear[50].abs() < 0.02, "{}", tr.linear[50]);
    assert!((tr.linear[130] - 1.0).abs() < 0.05, "{}", tr.linear[130]);
}

#[test]
fn series_inductance_and_shunt_capacitance_are_told_apart() {
    // Lumped parts between matched lines at 1 m: series Z: Gamma = Z / (2 Z0 + Z); shunt Y:
    // Gamma = -Y Z0 / (2 + Y Z0) (circuit theory, two-port between matched lines).
    let freqs = harmonic(1e7, 1, 1000);
    let l = 1e-9; // 1 nH
    let c = 0.4e-12; // 0.4 pF
    let j = Complex64::i();
    let delay = |f: f64| Complex64::from_polar(1.0, -2.0 * beta(f) * 1.0);
    let series_l: Vec<Complex64> = freqs
        .iter()
        .map(|&f| {
            let z = j * 2.0 * PI * f * l;
            z / (2.0 * Z0 + z) * delay(f)
        })
        .collect();
    let shunt_c: Vec<Complex64> = freqs
        .iter()
        .map(|&f| {
            let y = j * 2.0 * PI * f * c;
            -y * Z0 / (2.0 + y * Z0) * delay(f)
        })
        .collect();
    let series_r: Vec<Complex64> = freqs
        .iter()
        .map(|&f| Complex64::new(10.0 / 110.0, 0.0) * delay(f))
        .collect();
    let plan = TracePlan {
        mode: Mode::LowPassStep,
        span_m: Some((0.0, 2.0)),
        step_m: Some(0.002),
        ..TracePlan::default()
    };
    let feature = |g: &[Complex64]| {
        let tr = trace(&freqs, g, &plan, &map()).unwrap();
        let before = tr.linear[400];
        let after = tr.linear[700];
        let excursion = tr.linear[450..550]
            .iter()
            .map(|v| v - before)
            .fold(0.0f64, |a, v| if v.abs() > a.abs() { v } else { a });
        classify_step(before, excursion, after, 0.02)
    };
    assert_eq!(feature(&series_l), Some(StepFeature::Inductive));
    assert_eq!(feature(&shunt_c), Some(StepFeature::Capacitive));
    // Series R = 10 ohm: R / (2 Z0 + R) = 0.0909, a lasting rise.
    assert_eq!(feature(&series_r), Some(StepFeature::HigherImpedance));
    let neg: Vec<Complex64> = series_r.iter().map(|v| -v).collect();
    assert_eq!(feature(&neg), Some(StepFeature::LowerImpedance));
}

/// The fast dB conversion against the library log10 over 40 decades and random mantissas.
#[test]
fn fast_db_matches_log10() {
    use coldtrace::transform::trace::power_to_db;
    let mut x = 1e-30f64;
    while x < 1e10 {
        for k in 0..97 {
            let p = x * (1.0 + k as f64 / 97.0);
            let want = 10.0 * p.log10();
            assert!(
                (power_to_db(p) - want).abs() < 1e-12,
                "{p}: {} vs {want}",
                power_to_db(p)
            );
        }
        x *= 10.0;
    }
    assert!((power_to_db(0.0) - coldtrace::transform::trace::DB_FLOOR).abs() < 1e-9);
    assert_eq!(power_to_db(1.0), 0.0);
}

#[test]
fn engine_reuse_and_recycling_give_identical_traces() {
    // Warm and cold sweeps of one line share one engine (cached plans and buffers).
    let freqs: Vec<f64> = (0..801).map(|i| 5e8 + i as f64 * 1e7).collect();
    let warm = load_at(&freqs, Complex64::new(30.0, 0.0), 1.1);
    let cold = load_at(&freqs, Complex64::new(35.0, 0.0), 1.08);
    let mut engine = coldtrace::transform::TraceEngine::new();
    for plan in [
        TracePlan::default(),
        TracePlan {
            span_m: Some((0.5, 1.5)),
            ..TracePlan::default()
        },
    ] {
        let a = engine.trace(&freqs, &warm, &plan, &map()).unwrap();
        let fresh_cold = trace(&freqs, &cold, &plan, &map()).unwrap();
        engine.recycle(a.clone());
        let b = engine.trace(&freqs, &cold, &plan, &map()).unwrap();
        assert_eq!(b, fresh_cold);
        let again = engine.trace(&freqs, &warm, &plan, &map()).unwrap();
        assert_eq!(again, a);
    }
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(32))]
    /// Any single reflection inside the alias-free range, any window: the refined band-pass peak is |rho|
    /// at the true distance.
    #[test]
    fn any_single_reflection_peaks_at_rho(
        mag in 0.01f64..1.0,
        phase in -3.1f64..3.1,
        x in 0.2f64..8.0,
        n in 64usize..600,
        w in 0usize..4,
    ) {
        let window = [Window::Hann, Window::Hamming, Window::BlackmanHarris4, Window::Kaiser { beta: 6.0 }][w];
        let freqs: Vec<f64> = (0..n).map(|i| 1e9 + i as f64 * 1e7).collect();
        let rho = Complex64::from_polar(mag, phase);
        let tau = map().round_trip_s(x);
        let g: Vec<Complex64> = freqs.iter().map(|&f| rho * Complex64::from_polar(1.0, -2.0 * PI * f * tau)).collect();
        let plan = TracePlan { window, padding: 4, ..TracePlan::default() };
        let tr = trace(&freqs, &g, &plan, &map()).unwrap();
        let peaks = find_peaks(&tr, 10.0, 1);
        let check = plan.check(&freqs, &map()).unwrap();
        let spec = Spectrum::new(&g, &plan, &check).unwrap();
        let p = refine_peak(&tr, &spec, &peaks[0], &|t| map().distance_m(t));
        proptest::prop_assert!((p.value - mag).abs() < 1e-9 * mag.max(1e-3) + 1e-12, "{} vs {mag}", p.value);
        proptest::prop_assert!((p.distance_m - x).abs() < 1e-5, "{} vs {x}", p.distance_m);
    }
}
