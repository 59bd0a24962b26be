//! Delay <-> as-built position, places, and the expected warm -> cold change.

use coldtrace::line::materials::C0;
use coldtrace::line::{LineMap, State};
use std::path::Path;

fn demo() -> coldtrace::line::Line {
    coldtrace::line::file::read_file(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml"),
    )
    .unwrap()
}

#[test]
fn delay_and_distance_are_inverse_and_monotonic() {
    let line = demo();
    for state in [State::Warm, State::Cold] {
        let map = LineMap::new(&line, state);
        let mut last = -1.0;
        for i in 0..=400 {
            let x = -0.2 + line.length_m() * 1.2 * i as f64 / 400.0;
            let t = map.round_trip_s(x);
            assert!(t > last, "{state:?} at {x}");
            last = t;
            assert!((map.distance_m(t) - x).abs() < 1e-9, "{state:?} at {x}");
            assert!((line.round_trip_s(x, state) - t).abs() < 1e-18);
        }
        assert!(map.describe().contains("north-fridge/in-07"));
    }
}

#[test]
fn room_cable_delay_is_its_length_over_phase_velocity() {
    // The first 1.5 m is cu-flex (er 1.73) at room temperature in both states: round trip about
    // 2 l sqrt(er) / c0, plus a small skin-effect group-delay excess (< 0.5 %).
    let line = demo();
    let want = 2.0 * 1.5 * 1.73f64.sqrt() / C0;
    for state in [State::Warm, State::Cold] {
        let t = line.round_trip_s(1.5, state);
        assert!(t > want && t < want * 1.005, "{state:?}: {t} vs {want}");
    }
}

#[test]
fn cold_positions_stay_as_built_only_delays_change() {
    let line = demo();
    let x = line.element("J5").unwrap().1.start_m;
    let (tw, tc) = (
        line.round_trip_s(x, State::Warm),
        line.round_trip_s(x, State::Cold),
    );
    assert!(tw != tc);
    assert!((line.distance_m(tc, State::Cold) - x).abs() < 1e-9);
    // Read with the warm map, the cold echo appears at a different (wrong) place.
    assert!((line.distance_m(tc, State::Warm) - x).abs() > 1e-4);
}

#[test]
fn where_is_names_element_offset_and_connector() {
    let line = demo();
    let j2 = line.element("J2").unwrap().1.clone();
    let p = line.where_is(j2.start_m - 0.05);
    assert_eq!(p.element, "room to 50K");
    // The 0.30 m cable as built starts 4 mm past the feedthrough's joint and ends 4 mm short of J2's: each
    // connector's 8 mm section is half in it.
    assert!((p.offset_m - (0.30 - 0.004 - 0.004 - 0.05)).abs() < 1e-12);
    assert_eq!(p.nearest_connector.as_deref(), Some("J2"));
    assert!((p.nearest_connector_distance_m.unwrap() - (0.05 + 0.004)).abs() < 1e-12);
    let p = line.where_is(0.3);
    assert_eq!(p.element, "room cable");
    assert_eq!(p.nearest_connector.as_deref(), Some("feedthrough"));
}

#[test]
fn thermal_changes_and_pull_back() {
    let line = demo();
    let ch = line.thermal_changes();
    let get = |n: &str| ch.iter().find(|c| c.element == n).unwrap();
    // Room cable: no change.
    assert!(get("room cable").delay_change_fraction.abs() < 1e-12);
    // Stainless room -> 45 K: shrinks; about 0.3 m x (average contraction over the profile ~0.15 %).
    let c = get("room to 50K");
    assert!(
        c.length_change_m < -2e-4 && c.length_change_m > -9e-4,
        "{}",
        c.length_change_m
    );
    assert!(c.er_cold > c.er_warm);
    // Superconducting NbTi below Tc: loss collapses.
    let n = get("still to MXC");
    assert!(
        n.loss_cold_db < 0.3 * n.loss_warm_db,
        "{} vs {}",
        n.loss_cold_db,
        n.loss_warm_db
    );
    let pb = line.pull_back();
    assert_eq!(pb.len(), 5);
    let p = pb.iter().find(|p| p.element == "50K to 4K").unwrap();
    // Free differential PTFE vs stainless contraction over 0.3 m from 45 K to 3.5 K: about
    // 0.3 m x (2.11 % - 0.30 %) = 5.4 mm; half at each end; far above the 76 um SMA pin-depth budget.
    assert!(
        (p.free_differential_um - 5430.0).abs() < 150.0,
        "{}",
        p.free_differential_um
    );
    assert!(p.risk_ratio > 10.0);
    let json = serde_json::to_string(&ch).unwrap();
    assert!(json.contains("delay_change_fraction"));
}

#[test]
fn slicing_is_fine_enough() {
    // The 5 K slices against a 4000-step midpoint integral of the same group delay over the linear
    // temperature profile of the stainless room -> 45 K cable: agree within 1e-6 relative.
    use coldtrace::line::physics::SectionState;
    use coldtrace::line::position::REFERENCE_FREQUENCY_HZ;
    let line = demo();
    let (_, e) = line.element("room to 50K").unwrap();
    let k = e.section().unwrap();
    let n = 4000;
    let mut fine = 0.0;
    for i in 0..n {
        let x = (i as f64 + 0.5) / n as f64;
        let t = 295.0 + (45.0 - 295.0) * x;
        fine += SectionState::new(k, t, line.ptfe_model).group_delay_per_m(REFERENCE_FREQUENCY_HZ)
            * e.length_m
            / n as f64;
    }
    let ch = line.thermal_changes();
    let sliced = ch
        .iter()
        .find(|c| c.element == "room to 50K")
        .unwrap()
        .delay_cold_s;
    assert!(((sliced - fine) / fine).abs() < 1e-6, "{sliced} vs {fine}");
}

#[test]
fn simulated_echo_arrives_when_the_delay_model_says() {
    // Independent paths: the ABCD simulator's band-pass echo of a short (direct DFT, Hann window, peak
    // refined by a parabola) against the position model's group delay at 5 GHz; warm and cold. They agree
    // to ~2.5e-5 relative (the band's weighted group delay differs slightly from the 5 GHz one).
    use coldtrace::line::{simulate, SimConfig};
    use num_complex::Complex64;
    use std::f64::consts::PI;
    let text = "name = \"t\"\n[stages]\nk4 = 4.0\n[[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"cu-086\"\nlength_m = 1.2\nfrom = \"room\"\nto = \"k4\"\n[[element]]\nkind = \"device\"\nname = \"end\"\nload = \"short\"\n";
    let line = coldtrace::line::file::parse(text, Path::new("t.toml")).unwrap();
    for state in [State::Warm, State::Cold] {
        let cfg = SimConfig::linear(state, 0.5e9, 9.5e9, 901);
        let net = simulate(&line, &cfg).unwrap();
        let n = net.len();
        let h = |t: f64| {
            let mut acc = Complex64::new(0.0, 0.0);
            for (k, (f, s)) in net.freqs_hz.iter().zip(&net.s).enumerate() {
                let w = 0.5 - 0.5 * (2.0 * PI * k as f64 / (n - 1) as f64).cos();
                acc += s * w * Complex64::from_polar(1.0, 2.0 * PI * f * t);
            }
            acc.norm()
        };
        let want = line.round_trip_s(1.2, state);
        let step = 1e-12;
        let ts: Vec<f64> = (-200..=200).map(|i| want + i as f64 * step).collect();
        let hs: Vec<f64> = ts.iter().map(|t| h(*t)).collect();
        let i = (1..hs.len() - 1)
            .max_by(|a, b| hs[*a].total_cmp(&hs[*b]))
            .unwrap();
        let (y0, y1, y2) = (hs[i - 1], hs[i], hs[i + 1]);
        let t = ts[i] + 0.5 * (y0 - y2) / (y0 - 2.0 * y1 + y2) * step;
        assert!(
            ((t - want) / want).abs() < 1e-4,
            "{state:?}: echo {t} vs model {want}"
        );
    }
}
