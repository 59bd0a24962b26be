//! The whole binary on small fixtures (tests/data/touchstone): `inspect` text and JSON, several files,
//! a bad file among good ones, and `convert`.

use std::path::PathBuf;
use std::process::{Command, Output};

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/touchstone")
        .join(name)
}

fn coldtrace(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_coldtrace"))
        .args(args)
        .output()
        .unwrap()
}

fn json(out: &Output) -> serde_json::Value {
    serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("{e}: {}", String::from_utf8_lossy(&out.stdout)))
}

#[test]
fn inspect_json_contract_keys_one_file() {
    let f = fixture("in-07_v1.s1p");
    let out = coldtrace(&["inspect", f.to_str().unwrap(), "--json"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v = json(&out);
    for key in [
        "version",
        "ports",
        "points",
        "f_start_hz",
        "f_stop_hz",
        "uniform",
        "harmonic",
        "parameter",
        "format",
        "reference_ohm",
        "warnings",
    ] {
        assert!(v.get(key).is_some(), "missing key {key}: {v}");
    }
    assert_eq!(v["version"], "1.0");
    assert_eq!(v["ports"], 1);
    assert_eq!(v["points"], 4);
    assert_eq!(v["f_start_hz"], 1e8);
    assert_eq!(v["f_stop_hz"], 4e8);
    assert_eq!(v["f_step_hz"], 1e8);
    assert_eq!(v["uniform"], true);
    assert_eq!(v["harmonic"], true, "f_k = k * 100 MHz from k = 1");
    assert_eq!(v["parameter"], "S");
    assert_eq!(v["format"], "MA");
    assert_eq!(v["unit"], "MHz");
    assert_eq!(v["reference_ohm"], serde_json::json!([50.0]));
    assert_eq!(v["warnings"], serde_json::json!([]));
}

#[test]
fn inspect_several_files_json_array_and_every_version() {
    let names = [
        "in-07_v1.s1p",
        "harmonic_v1.s1p",
        "amp_v1.s2p",
        "out-03_v2.s2p",
        "in-12_v2.s4p",
    ];
    let paths: Vec<String> = names
        .iter()
        .map(|n| fixture(n).to_string_lossy().into_owned())
        .collect();
    let mut args = vec!["inspect", "--json"];
    args.extend(paths.iter().map(String::as_str));
    let out = coldtrace(&args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v = json(&out);
    let a = v.as_array().unwrap();
    assert_eq!(a.len(), 5);
    assert_eq!(a[2]["noise"], true);
    assert_eq!(a[2]["format"], "DB");
    assert_eq!(a[3]["version"], "2.1");
    assert_eq!(a[3]["parameter"], "Z");
    assert_eq!(a[3]["reference_ohm"], serde_json::json!([50.0, 75.0]));
    assert_eq!(a[3]["noise_points"], 1);
    assert_eq!(a[4]["version"], "2.0");
    assert_eq!(a[4]["ports"], 4);
    assert_eq!(a[4]["harmonic"], true, "1 MHz, 2 MHz");
}

#[test]
fn inspect_keeps_going_past_a_bad_file_and_exits_2() {
    let good = fixture("amp_v1.s2p");
    let bad = fixture("bad_freq_v1.s1p");
    let out = coldtrace(&["inspect", bad.to_str().unwrap(), good.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("bad_freq_v1.s1p:4:1: found '2', expected a frequency larger"),
        "{stderr}"
    );
    assert!(stderr.contains("fix: sort"), "{stderr}");
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        stdout.contains("amp_v1.s2p") && stdout.contains("noise        2 points"),
        "{stdout}"
    );
    // JSON with several files: the good ones are still printed as an array.
    let out = coldtrace(&[
        "inspect",
        "--json",
        bad.to_str().unwrap(),
        good.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(json(&out).as_array().unwrap().len(), 1);
}

#[test]
fn inspect_text_block() {
    let f = fixture("harmonic_v1.s1p");
    let out = coldtrace(&["inspect", f.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("version      1.0"), "{text}");
    assert!(text.contains("uniform, harmonic"), "{text}");
    assert!(text.contains("reference    50 ohm"), "{text}");
}

// Z to S at per-port references 50 and 75 ohm, checked against numpy 2.4.6:
// S = R^-1/2 (Z - R) (Z + R)^-1 R^1/2 with numpy.linalg.inv, Z = [[60+5j, 10], [10, 80-5j]].
#[test]
fn convert_z_file_to_s_v2_and_refuse_overwrites() {
    let dir = tempfile::tempdir().unwrap();
    let input = fixture("out-03_v2.s2p");
    let out_path = dir.path().join("out-03_s.s2p");
    let o = out_path.to_str().unwrap();
    let run = coldtrace(&[
        "convert",
        input.to_str().unwrap(),
        "-o",
        o,
        "--format",
        "ri",
    ]);
    assert_eq!(
        run.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let t = coldtrace::touchstone::read_file(&out_path).unwrap();
    assert_eq!(t.info.parameter, coldtrace::touchstone::Parameter::S);
    assert_eq!(t.info.version, coldtrace::touchstone::Version::V2_0);
    assert_eq!(t.network.reference_ohm, vec![50.0, 75.0]);
    let want = [
        (0.08744323628020352, 0.041550826028686566),
        (0.07213724503926414, -0.0009561637781345765),
        (0.07213724503926418, -0.0009561637781345766),
        (0.027567541778531494, -0.03129323693079055),
    ];
    for (k, (re, im)) in want.iter().enumerate() {
        let got = t.network.at(0, k / 2, k % 2);
        assert!(
            (got.re - re).abs() < 1e-14 && (got.im - im).abs() < 1e-14,
            "{k}: {got}"
        );
    }
    assert_eq!(t.network.noise.len(), 1);
    assert_eq!(t.network.noise[0].rn_ohm, 25.0);
    // The output exists now: refused without --force, accepted with it.
    let again = coldtrace(&["convert", input.to_str().unwrap(), "-o", o]);
    assert_eq!(again.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&again.stderr).contains("--force"));
    let forced = coldtrace(&[
        "convert",
        input.to_str().unwrap(),
        "-o",
        o,
        "--force",
        "--touchstone-version",
        "2",
        "--unit",
        "MHZ",
    ]);
    assert_eq!(forced.status.code(), Some(0));
    assert!(std::fs::read_to_string(&out_path)
        .unwrap()
        .contains("# MHz S RI R 50"));
    // The input is never overwritten, even with --force.
    let copy = dir.path().join("in.s1p");
    std::fs::copy(fixture("in-07_v1.s1p"), &copy).unwrap();
    let before = std::fs::read(&copy).unwrap();
    let c = copy.to_str().unwrap();
    let over = coldtrace(&["convert", c, "-o", c, "--force"]);
    assert_eq!(over.status.code(), Some(2));
    assert_eq!(std::fs::read(&copy).unwrap(), before);
}

#[test]
fn convert_v1_2port_to_v1_and_bad_flags() {
    let dir = tempfile::tempdir().unwrap();
    let input = fixture("amp_v1.s2p");
    let o = dir.path().join("amp_ri.s2p");
    let run = coldtrace(&[
        "convert",
        input.to_str().unwrap(),
        "-o",
        o.to_str().unwrap(),
        "--touchstone-version",
        "1",
    ]);
    assert_eq!(
        run.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let a = coldtrace::touchstone::read_file(&input).unwrap();
    let b = coldtrace::touchstone::read_file(&o).unwrap();
    assert_eq!(b.network.noise.len(), 2);
    for (x, y) in a.network.s.iter().zip(&b.network.s) {
        assert!((x - y).norm() < 1e-13);
    }
    let bad = coldtrace(&[
        "convert",
        input.to_str().unwrap(),
        "-o",
        "x.s2p",
        "--format",
        "XY",
    ]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("expected RI, MA or DB"));
    let bad = coldtrace(&[
        "convert",
        input.to_str().unwrap(),
        "-o",
        "x.s2p",
        "--touchstone-version",
        "3",
    ]);
    assert_eq!(bad.status.code(), Some(2));
}
