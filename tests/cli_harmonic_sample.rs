//! The shipped harmonic-grid sample (`sample-sweeps/north-fridge/in-07-cold-harmonic.s1p`): it lies on
//! f_k = k df, it is what sample-sweeps/README.md says made it, and the low-pass and impedance modes run on
//! it where the 0.5 GHz sample is refused.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;

const HARMONIC: &str = "in-07-cold-harmonic.s1p";

fn frequencies_ghz(text: &str) -> Vec<f64> {
    text.lines()
        .filter(|l| !l.starts_with('!') && !l.starts_with('#'))
        .map(|l| l.split_whitespace().next().unwrap().parse().unwrap())
        .collect()
}

#[test]
fn the_sample_lies_on_a_harmonic_grid_and_is_made_as_documented() {
    let shipped = std::fs::read_to_string(sample(HARMONIC)).unwrap();
    let f = frequencies_ghz(&shipped);
    assert_eq!(f.len(), 2000);
    // f_k = k * 5 MHz, k = 1..2000, to the written precision.
    for (k, fk) in f.iter().enumerate() {
        let want = (k + 1) as f64 * 0.005;
        assert!((fk - want).abs() <= 1e-12 * want, "point {k}: {fk} GHz");
    }
    // The command sample-sweeps/README.md gives makes the same data.
    let readme = repo_text("sample-sweeps/README.md");
    let documented = "--state cold --start 5MHz --stop 10GHz --points 2000 --noise-db -85\n  --seed 20261105 --fault \"J2:gap=15um\"";
    assert!(
        readme.contains(documented),
        "sample-sweeps/README.md lacks {documented:?}"
    );
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("again.s1p");
    let line = sample("in-07.toml");
    let o = run(&[
        "simulate",
        s(&line),
        "--state",
        "cold",
        "--start",
        "5MHz",
        "--stop",
        "10GHz",
        "--points",
        "2000",
        "--noise-db",
        "-85",
        "--seed",
        "20261105",
        "--fault",
        "J2:gap=15um",
        "-o",
        s(&out),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(data_lines(&out), data_lines(&sample(HARMONIC)));
}

#[test]
fn low_pass_and_impedance_run_on_the_sample_and_find_j2() {
    let line = sample("in-07.toml");
    for mode in ["low-pass-step", "low-pass-impulse", "impedance"] {
        let o = run(&[
            "trace",
            s(&sample(HARMONIC)),
            "--mode",
            mode,
            "--line",
            s(&line),
            "--json",
        ]);
        assert!(o.status.success(), "{mode}: {}", stderr(&o));
        let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
        // J2 sits 1.5 m + 0.30 m from the reference plane in the line file; the gap is the strongest
        // change, within two resolution cells.
        let at = v["peaks"][0]["distance_m"].as_f64().unwrap();
        let cell = v["resolution_m"].as_f64().unwrap();
        assert!(
            (at - 1.8).abs() <= 2.0 * cell,
            "{mode}: strongest at {at} m"
        );
        let resampled = v["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|w| w["kind"] == "resampled-grid");
        assert!(!resampled, "{mode}: the grid was resampled");
    }
    // The impedance profile starts at the line's 50 ohm.
    let o = run(&[
        "trace",
        s(&sample(HARMONIC)),
        "--mode",
        "impedance",
        "--json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let z0 = v["values"][0].as_f64().unwrap();
    assert!((z0 - 50.0).abs() < 0.5, "{z0} ohm");
    // The 0.5-10 GHz sample is refused for low-pass, with the way out.
    refused(
        &run(&["trace", s(&sample("in-07-cold.s1p")), "--mode", "impedance"]),
        &["harmonic grid", "--resample"],
    );
}
