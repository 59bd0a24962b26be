//! The whole `coldtrace trace` binary on a small fixture in a temp dir.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn fixture() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/transform/in-07-load-1.5m.s1p")
}

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_coldtrace"))
        .arg("trace")
        .args(args)
        .output()
        .expect("run coldtrace")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}
fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn text_summary_names_the_load_distance() {
    let f = fixture();
    let o = run(&[f.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("band-pass trace, window kaiser"), "{text}");
    assert!(text.contains("resolution"), "{text}");
    // The strongest peak: 1.5000 m at 20 log10(30/70) = -7.36 dB.
    let first = text
        .lines()
        .find(|l| l.trim_start().starts_with("1 "))
        .expect(&text);
    assert!(
        first.contains("1.5000 m") && first.contains("-7.36 dB"),
        "{first}"
    );
}

#[test]
fn json_is_the_trace_contract() {
    let f = fixture();
    let o = run(&[
        f.to_str().unwrap(),
        "--json",
        "--span",
        "1m..2m",
        "--step",
        "1mm",
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    for key in [
        "axis_m",
        "values",
        "unit",
        "resolution_m",
        "alias_free_range_m",
        "window",
        "warnings",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    assert_eq!(v["unit"], "dB");
    assert_eq!(v["window"]["name"], "kaiser");
    assert_eq!(v["window"]["beta"], 9.0);
    assert_eq!(v["axis_m"].as_array().unwrap().len(), 1001);
    let peak = v["peaks"][0]["distance_m"].as_f64().unwrap();
    assert!((peak - 1.5).abs() < 1e-4, "{peak}");
    // Alias-free range c0 vf / (2 df), df = 10 MHz.
    let r = v["alias_free_range_m"].as_f64().unwrap();
    assert!((r - 299_792_458.0 * 0.695 / 2e7).abs() < 1e-9);
}

#[test]
fn impedance_mode_reads_the_20_ohm_load() {
    let f = fixture();
    let dir = tempfile::tempdir().unwrap();
    let csv = dir.path().join("z.csv");
    let o = run(&[
        f.to_str().unwrap(),
        "--mode",
        "impedance",
        "--span",
        "0m..2.5m",
        "--step",
        "1cm",
        "--csv",
        csv.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("distance_m,value"));
    let rows: Vec<(f64, f64)> = lines
        .map(|l| {
            let (a, b) = l.split_once(',').unwrap();
            (a.parse().unwrap(), b.parse().unwrap())
        })
        .collect();
    assert_eq!(rows.len(), 251);
    let at = |x: f64| {
        rows.iter()
            .min_by(|a, b| (a.0 - x).abs().total_cmp(&(b.0 - x).abs()))
            .unwrap()
            .1
    };
    assert!((at(0.8) - 50.0).abs() < 1.0, "line: {}", at(0.8));
    // DC extrapolated from 10 and 20 MHz; the load reads 20 ohm within 1 ohm.
    assert!((at(2.2) - 20.0).abs() < 1.0, "load: {}", at(2.2));
}

#[test]
fn outputs_gate_plot_and_force() {
    let f = fixture();
    let dir = tempfile::tempdir().unwrap();
    let gated = dir.path().join("gated.s1p");
    let svg = dir.path().join("trace.svg");
    let png = dir.path().join("trace.png");
    let args = |p: &Path| {
        vec![
            f.to_str().unwrap().to_string(),
            "--gate".into(),
            "1.3m..1.7m".into(),
            "--output".into(),
            gated.to_str().unwrap().to_string(),
            "--plot".into(),
            p.to_str().unwrap().to_string(),
        ]
    };
    let a = args(&svg);
    let o = run(&a.iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(
        text.starts_with("<svg") && text.contains("distance from the reference plane (m"),
        "svg"
    );
    let ts = coldtrace::touchstone::read_file(&gated).unwrap();
    assert_eq!(ts.network.freqs_hz.len(), 300);
    // The only echo sits inside the gate: the gated sweep is the input, to 1 % inside the band.
    let orig = coldtrace::touchstone::read_file(&f).unwrap();
    let (g, s) = (ts.network.s11(), orig.network.s11());
    for k in 30..270 {
        assert!((g[k] - s[k]).norm() < 0.01 * s[k].norm(), "bin {k}");
    }
    // Existing outputs are refused without --force, kept unchanged, and replaced with it.
    let before = std::fs::read(&svg).unwrap();
    let o = run(&a.iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--force"), "{}", stderr(&o));
    assert_eq!(std::fs::read(&svg).unwrap(), before);
    let mut forced = args(&png);
    forced.push("--force".into());
    let o = run(&forced.iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert_eq!(&std::fs::read(&png).unwrap()[..8], b"\x89PNG\r\n\x1a\n");
}

#[test]
fn bad_flags_give_exit_2_and_the_fix() {
    let f = fixture();
    let f = f.to_str().unwrap();
    let o = run(&[f, "--window", "gauss"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("allowed: rect, hann"), "{}", stderr(&o));
    let o = run(&[f, "--mode", "fast"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("band-pass, low-pass-impulse"),
        "{}",
        stderr(&o)
    );
    let o = run(&[f, "--plot", "/tmp/never-written.gif"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains(".svg or .png"), "{}", stderr(&o));
    let o = run(&[f, "--gate", "1m..2m"]);
    assert_ne!(o.status.code(), Some(0), "--gate without --out");
    let o = run(&[f, "--span", "0m..3m", "--step", "1km"]);
    assert_eq!(o.status.code(), Some(0));
    assert!(stdout(&o).contains("coarser than the resolution"));
    let o = run(&["/nonexistent/file.s1p"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("/nonexistent/file.s1p"));
}

#[test]
fn non_harmonic_low_pass_is_refused_then_resampled() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("offset.s1p");
    // 15 MHz start, 10 MHz step: not harmonic.
    let mut text = String::from("# MHZ S RI R 50\n");
    for k in 0..200 {
        text.push_str(&format!("{} 0.1 0.0\n", 15 + 10 * k));
    }
    std::fs::write(&p, text).unwrap();
    let o = run(&[p.to_str().unwrap(), "--mode", "low-pass-step"]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(
        e.contains("offset.s1p") && e.contains("--resample") && e.contains("band-pass"),
        "{e}"
    );
    let o = run(&[p.to_str().unwrap(), "--mode", "low-pass-step", "--resample"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(stdout(&o).contains("interpolated"), "{}", stdout(&o));
}
