//! `line::visibility` against the simulator and the band-pass trace: the round-trip loss it reports for an
//! element is the level at which a full reflection there shows in the trace (the band-pass normalisation
//! makes a lone reflection rho read |rho|, src/transform/bandpass.rs), and the demo line's 20 dB
//! attenuator hides everything behind it by 40 dB plus cable loss.

use coldtrace::line::{file, simulate, visibility, Fault, LineMap, SimConfig, State};
use coldtrace::transform::{run_trace, TraceConfig, TraceEngine};
use std::path::Path;

fn demo() -> coldtrace::line::Line {
    file::read_file(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml"),
    )
    .unwrap()
}

#[test]
fn a_short_behind_the_attenuator_reads_at_the_reported_loss() {
    let line = demo();
    for state in [State::Warm, State::Cold] {
        let mut cfg = SimConfig::linear(state, 0.5e9, 10e9, 2001);
        cfg.faults.push(Fault::parse("J4:short").unwrap());
        let net = simulate(&line, &cfg).unwrap();
        let v = visibility(&line, state, &net.freqs_hz, 1e-6).unwrap();
        let j4 = v.iter().find(|x| x.element == "J4").unwrap();
        let j3 = v.iter().find(|x| x.element == "J3").unwrap();
        let (l4, l3) = (
            j4.round_trip_loss_db.unwrap(),
            j3.round_trip_loss_db.unwrap(),
        );
        // A4 (20 dB one way, the line file) sits between them: 40 dB round trip, plus the 0.25 m NbTi
        // cable (lossy when warm, superconducting when cold) and half of J4.
        let extra = l4 - l3 - 40.0;
        let bound = if state == State::Warm { 6.0 } else { 0.5 };
        assert!(
            extra > 0.0 && extra < bound,
            "{state:?}: J3 {l3} dB, J4 {l4} dB"
        );
        assert!(j4.visible);
        let want_rho = 4.5 * 1e-6 * 10f64.powf(l4 / 20.0);
        assert!((j4.min_visible_rho.unwrap() / want_rho - 1.0).abs() < 1e-12);

        let map = LineMap::new(&line, state);
        let config = TraceConfig {
            peak_count: 10,
            peak_floor_db: 80.0,
            ..TraceConfig::default()
        };
        let out = run_trace(
            &mut TraceEngine::new(),
            &net.freqs_hz,
            &net.s,
            &config,
            &map,
        )
        .unwrap();
        let p = out
            .trace
            .peaks
            .iter()
            .min_by(|a, b| {
                (a.distance_m - j4.distance_m)
                    .abs()
                    .total_cmp(&(b.distance_m - j4.distance_m).abs())
            })
            .unwrap();
        assert!(
            (p.distance_m - j4.distance_m).abs() < 3e-3,
            "{state:?}: peak at {} m",
            p.distance_m
        );
        // The loss is taken at the band centre; conductor loss grows as ~sqrt(f), and the windowed band
        // average of 10^(-L(f)/20) exceeds its value at the centre (convexity), so the echo reads a little
        // above -L: by ~1 dB with the warm line's ~19 dB of cable loss, by less cold.
        let over = p.db + l4;
        assert!(
            over > -0.1 && over < 1.5,
            "{state:?}: short at J4 reads {} dB, loss {l4} dB",
            p.db
        );
        // A reason is given exactly when an element is not visible.
        assert!(v.iter().all(|x| x.reason.is_none() == x.visible));
    }
}
