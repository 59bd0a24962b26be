//! `coldtrace simulate` end to end in a temp dir; the output is read back with the Touchstone reader.

use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_coldtrace"))
}

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml")
}

#[test]
fn writes_a_cold_sweep_with_faults_and_noise_that_reads_back() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("cold.s1p");
    let run = |extra: &[&str]| {
        bin()
            .args(["simulate"])
            .arg(demo())
            .args([
                "--state", "cold", "--start", "0.5GHz", "--stop", "10GHz", "--points", "201",
            ])
            .args(["--noise-db", "-90", "--seed", "7"])
            .args([
                "--fault",
                "J2:gap=30fF",
                "--fault",
                "room to 50K@0.12m:crush=40ohm,8mm",
            ])
            .args(["--fault", "J3:contact=2ohm", "-o"])
            .arg(&out)
            .args(extra)
            .output()
            .unwrap()
    };
    let o = run(&[]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "stderr: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let ts = coldtrace::touchstone::read_file(&out).unwrap();
    assert_eq!(ts.network.ports, 1);
    assert_eq!(ts.network.len(), 201);
    assert!((ts.network.freqs_hz[0] - 0.5e9).abs() < 1.0);
    // Compare with the library directly (same seed): the file holds the simulated values.
    let line = coldtrace::line::file::read_file(&demo()).unwrap();
    let mut cfg =
        coldtrace::line::SimConfig::linear(coldtrace::line::State::Cold, 0.5e9, 10e9, 201);
    cfg.noise_db = Some(-90.0);
    cfg.seed = 7;
    for f in [
        "J2:gap=30fF",
        "room to 50K@0.12m:crush=40ohm,8mm",
        "J3:contact=2ohm",
    ] {
        cfg.faults.push(coldtrace::line::Fault::parse(f).unwrap());
    }
    let net = coldtrace::line::simulate(&line, &cfg).unwrap();
    for (a, b) in ts.network.s.iter().zip(&net.s) {
        assert!((a - b).norm() < 1e-6, "{a} vs {b}");
    }
    // Existing output refused without --force, kept intact; replaced with it.
    let before = std::fs::read(&out).unwrap();
    let o = run(&[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--force"));
    assert_eq!(std::fs::read(&out).unwrap(), before);
    assert_eq!(run(&["--force"]).status.code(), Some(0));
}

#[test]
fn s21_writes_a_two_port() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("thru.s2p");
    let o = bin()
        .arg("simulate")
        .arg(demo())
        .args(["--state", "warm", "--points", "51", "--s21", "-o"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let ts = coldtrace::touchstone::read_file(&out).unwrap();
    assert_eq!(ts.network.ports, 2);
    let s21 = ts.network.param(1, 0);
    assert!(s21.iter().all(|x| 20.0 * x.norm().log10() < -20.0));
}

#[test]
fn bad_inputs_exit_2_with_a_clear_message() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("x.s1p");
    let cases: Vec<(Vec<String>, &str)> = vec![
        (vec!["--fault".into(), "J2:wobble=3".into()], "grammar"),
        (
            vec!["--fault".into(), "J9:open".into()],
            "no element named 'J9'",
        ),
        (vec!["--state".into(), "tepid".into()], "warm"),
        (
            vec![
                "--start".into(),
                "5GHz".into(),
                "--stop".into(),
                "1GHz".into(),
            ],
            "--stop",
        ),
        (vec!["--s21".into()], ".s2p"),
    ];
    for (extra, needle) in cases {
        let o = bin()
            .arg("simulate")
            .arg(demo())
            .args(&extra)
            .arg("-o")
            .arg(&out)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{extra:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(needle), "{extra:?}: {err}");
        assert!(!out.exists());
    }
    // A broken line file: the error names file, line and key.
    let bad = dir.path().join("bad.toml");
    std::fs::write(&bad, "name = \"x\"\n[[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"nope\"\nlength_m = 1.0\nfrom = \"room\"\nto = \"room\"\n").unwrap();
    let o = bin()
        .arg("simulate")
        .arg(&bad)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("bad.toml:5:") && err.contains("key 'cable'") && err.contains("ss-086"),
        "{err}"
    );
}
