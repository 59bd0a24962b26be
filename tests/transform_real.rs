//! Real cryostat sweeps (tests/data/real, CC0; see its README): the open termination at the ~3 K switch,
//! measured warm (295 K) and cold (~3 K), raw (uncalibrated), 1 MHz to 20 GHz, 10001 points.

use coldtrace::transform::{
    run_trace, Mode, TraceConfig, TraceEngine, TracePlan, UniformLine, Window,
};
use std::path::Path;

fn sweep(t: &str) -> (Vec<f64>, Vec<num_complex::Complex64>) {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join(format!("tests/data/real/cryostat-a/{t}/open.s1p"));
    let ts = coldtrace::touchstone::read_file(&p).unwrap();
    (ts.network.freqs_hz.clone(), ts.network.s11())
}

#[test]
fn open_is_the_strongest_echo_warm_and_cold_at_one_place() {
    let map = UniformLine::new(0.695).unwrap();
    let mut engine = TraceEngine::new();
    let config = TraceConfig {
        plan: TracePlan {
            window: Window::Kaiser { beta: 9.0 },
            span_m: Some((0.0, 5.0)),
            ..TracePlan::default()
        },
        ..TraceConfig::default()
    };
    let mut at = Vec::new();
    for t in ["295k", "3k"] {
        let (f, s) = sweep(t);
        let out = run_trace(&mut engine, &f, &s, &config, &map).unwrap();
        let p = out.trace.peaks[0];
        // An open reflects fully; through the uncalibrated path it reads some dB below 0, and far above the
        // connector and feedthrough echoes in front of it.
        assert!(p.db > -15.0 && p.db < 0.5, "{t}: open at {} dB", p.db);
        assert!(
            out.trace.peaks[1].db < p.db - 10.0,
            "{t}: second echo {} dB",
            out.trace.peaks[1].db
        );
        at.push(p.distance_m);
    }
    // Cooling changes the electrical length by well under 1 % (common practice, no source): the open moves
    // by less than a resolution cell.
    assert!(
        (at[0] - at[1]).abs() < 0.01,
        "warm {} m, cold {} m",
        at[0],
        at[1]
    );
}

#[test]
fn resampled_low_pass_step_of_the_open_rises_to_near_one() {
    // 1 MHz start, 2 MHz step: not harmonic, so low-pass needs --resample.
    let (f, s) = sweep("295k");
    let map = UniformLine::new(0.695).unwrap();
    let plan = TracePlan {
        mode: Mode::LowPassStep,
        span_m: Some((0.0, 3.0)),
        step_m: Some(0.005),
        ..TracePlan::default()
    };
    assert!(coldtrace::transform::trace(&f, &s, &plan, &map).is_err());
    let plan = TracePlan {
        resample: true,
        ..plan
    };
    let tr = coldtrace::transform::trace(&f, &s, &plan, &map).unwrap();
    assert!(tr.warnings.iter().any(|w| w.kind == "resampled-grid"));
    let before = tr.linear[(0.8f64 / 0.005) as usize];
    let after = tr.linear[(2.5f64 / 0.005) as usize];
    assert!(before.abs() < 0.1, "before the open: {before}");
    assert!(after > 0.85 && after < 1.05, "after the open: {after}");
}
