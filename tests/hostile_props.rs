//! Property tests that reach the deep paths: structurally valid Touchstone and line files whose fields take
//! extreme values (frequency 0, every format and matrix layout, reference impedances from 1e-6 to 1e9 ohm,
//! values near the ends of the 64-bit float range, cables from a micrometre to kilometres, attenuators up to
//! 300 dB). Each must be read with every value finite, or refused with an error that names a line of the
//! file; a line file that reads must simulate to finite values or be refused with a message. Never a panic.

use coldtrace::line::{file, simulate, LineError, SimConfig, State};
use coldtrace::touchstone::{read_str, summarize, TouchstoneError};
use coldtrace::transform::{
    run_trace, TraceConfig, TraceEngine, UniformLine, DEFAULT_VELOCITY_FACTOR,
};
use proptest::prelude::*;
use std::path::Path;

/// Numbers a damaged or careless file may hold: ordinary ones, zero, the smallest and largest magnitudes.
fn extreme_value() -> impl Strategy<Value = f64> {
    prop_oneof![
        4 => -2.0f64..2.0,
        1 => Just(0.0),
        1 => Just(5e-324),
        1 => Just(1e-300),
        1 => Just(1e300),
        1 => Just(-1e300),
        1 => Just(1e308),
        1 => Just(-1.7e308),
        1 => -400.0f64..400.0,
    ]
}

/// log10 of a reference impedance, ohm: 1e-6 to 1e9.
fn reference_exponent() -> impl Strategy<Value = f64> {
    -6.0f64..9.0
}

#[derive(Debug, Clone)]
struct FileSpec {
    v2: bool,
    ports: usize,
    matrix: &'static str,
    format: &'static str,
    unit: &'static str,
    parameter: &'static str,
    reference: f64,
    start: f64,
    step: f64,
    values: Vec<f64>,
}

fn file_spec() -> impl Strategy<Value = FileSpec> {
    (
        any::<bool>(),
        1usize..=4,
        prop::sample::select(vec!["Full", "Lower", "Upper"]),
        prop::sample::select(vec!["RI", "MA", "DB"]),
        prop::sample::select(vec!["Hz", "kHz", "MHz", "GHz"]),
        prop::sample::select(vec!["S", "S", "Y", "Z", "H", "G"]),
        reference_exponent(),
        prop_oneof![4 => Just(0.0), 4 => 0.0f64..10.0, 1 => Just(1e300), 1 => Just(1e305)],
        prop_oneof![8 => 0.001f64..10.0, 1 => Just(1e-300), 1 => Just(1e300)],
        1usize..=5,
    )
        .prop_flat_map(
            |(v2, ports, matrix, format, unit, parameter, r_exp, start, step, points)| {
                let per_record = 2 * ports * ports;
                let n = points * per_record;
                // Ordinary values, with one extreme value in most files (one is enough to reach its
                // check; more would stop nearly every file at the first).
                (
                    prop::collection::vec(-2.0f64..2.0, n),
                    prop::option::weighted(0.7, (0..n, extreme_value())),
                )
                    .prop_map(move |(mut values, extreme)| {
                        if let Some((at, v)) = extreme {
                            values[at] = v;
                        }
                        FileSpec {
                            v2,
                            ports,
                            matrix: if v2 { matrix } else { "Full" },
                            format,
                            unit,
                            parameter,
                            reference: 10f64.powf(r_exp),
                            start,
                            step,
                            values,
                        }
                    })
            },
        )
}

/// The file's text and its name (`.sNp`).
fn render(spec: &FileSpec) -> (String, String) {
    let n = spec.ports;
    let per_record = 2 * n * n;
    let points = spec.values.len() / per_record;
    let mut t = String::new();
    if spec.v2 {
        t += "[Version] 2.1\n";
    }
    t += &format!(
        "# {} {} {} R {:e}\n",
        spec.unit, spec.parameter, spec.format, spec.reference
    );
    if spec.v2 {
        t += &format!("[Number of Ports] {n}\n");
        if n == 2 {
            t += "[Two-Port Data Order] 12_21\n";
        }
        t += &format!("[Number of Frequencies] {points}\n");
        t += &format!("[Matrix Format] {}\n", spec.matrix);
        t += "[Network Data]\n";
    }
    for k in 0..points {
        let f = spec.start + spec.step * k as f64;
        t += &format!("{f:e}");
        let rec = &spec.values[k * per_record..(k + 1) * per_record];
        for i in 0..n {
            for j in 0..n {
                let keep = match spec.matrix {
                    "Lower" => j <= i,
                    "Upper" => j >= i,
                    _ => true,
                };
                if keep {
                    let p = 2 * (i * n + j);
                    t += &format!(" {:e} {:e}", rec[p], rec[p + 1]);
                }
            }
            // Version 1 files of 3 and more ports put each matrix row on its own line.
            if !spec.v2 && n >= 3 && i + 1 < n {
                t += "\n";
            }
        }
        t += "\n";
    }
    if spec.v2 {
        t += "[End]\n";
    }
    (t, format!("extreme.s{n}p"))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(600))]

    #[test]
    fn extreme_touchstone_files_read_finite_or_are_refused_with_a_line(spec in file_spec()) {
        let (text, name) = render(&spec);
        let lines = text.lines().count();
        match read_str(&text, Path::new(&name)) {
            Ok(ts) => {
                let net = &ts.network;
                prop_assert!(net.freqs_hz.iter().all(|f| f.is_finite()), "{text}");
                prop_assert!(net.s.iter().all(|v| v.is_finite()), "{text}");
                prop_assert!(net.reference_ohm.iter().all(|r| r.is_finite() && *r > 0.0));
                // What inspect prints never shows NaN or infinity.
                let shown = summarize(&ts, Path::new(&name)).to_string();
                prop_assert!(!shown.contains("NaN") && !shown.contains("inf"), "{shown}\n{text}");
                // The transform takes it, or refuses it; what it gives is finite (dB of an empty trace
                // may be -inf, which the text and JSON show as a floor).
                if net.len() >= 2 {
                    let map = UniformLine::new(DEFAULT_VELOCITY_FACTOR).unwrap();
                    let mut engine = TraceEngine::new();
                    let config = TraceConfig::default();
                    if let Ok(out) = run_trace(&mut engine, &net.freqs_hz, &net.s11(), &config, &map) {
                        prop_assert!(out.trace.axis_m.iter().all(|x| x.is_finite()), "{text}");
                        prop_assert!(out.trace.values.iter().all(|v| !v.is_nan() && *v < f64::INFINITY), "{text}");
                    }
                }
            }
            Err(TouchstoneError::Parse { line, .. }) => {
                prop_assert!(line >= 1 && line <= lines.max(1), "line {line} of {lines}\n{text}");
            }
            Err(other) => prop_assert!(false, "not a parse error: {other}\n{text}"),
        }
    }
}

/// One element of a generated line file.
fn element() -> impl Strategy<Value = String> {
    let length = (-6.0f64..3.5).prop_map(|e| 10f64.powf(e));
    let impedance = (-1.0f64..3.5).prop_map(|e| 10f64.powf(e));
    prop_oneof![
        (length, prop::sample::select(vec!["ss-086", "cu-086", "nbti-086", "cu-flex"]))
            .prop_map(|(l, k)| format!(
                "kind = \"cable\"\ncable = \"{k}\"\nlength_m = {l:e}\nfrom = \"room\"\nto = \"k4\"\n"
            )),
        impedance.prop_map(|z| format!(
            "kind = \"connector\"\nstage = \"k4\"\nimpedance_ohm = {z:e}\n"
        )),
        (0.0f64..300.0).prop_map(|db| format!(
            "kind = \"attenuator\"\nstage = \"k4\"\nloss_db = {db}\n"
        )),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(150))]

    #[test]
    fn extreme_line_files_simulate_finite_or_are_refused(
        elements in prop::collection::vec(element(), 1..6),
        device in prop_oneof![Just("\"open\""), Just("\"short\""), Just("1e-9"), Just("1e9")],
        stop_ghz in prop_oneof![Just(1e-6), 0.1f64..20.0, Just(9000.0)],
    ) {
        let mut text = String::from("name = \"test/extreme\"\nconnector_lengths = \"added\"\n[stages]\nk4 = 4.0\n");
        for (i, e) in elements.iter().enumerate() {
            text += &format!("\n[[element]]\nname = \"e{i}\"\n{e}");
        }
        text += &format!("\n[[element]]\nname = \"dut\"\nkind = \"device\"\nstage = \"k4\"\nload = {device}\n");
        let lines = text.lines().count();
        let line = match file::parse(&text, Path::new("extreme.toml")) {
            Ok(l) => l,
            Err(LineError::File { line, message, .. }) => {
                prop_assert!(line >= 1 && line <= lines, "line {line}: {message}\n{text}");
                return Ok(());
            }
            Err(other) => {
                prop_assert!(false, "not a file error: {other}\n{text}");
                unreachable!()
            }
        };
        for state in [State::Warm, State::Cold] {
            let config = SimConfig::linear(state, 0.5 * stop_ghz * 1e9 / 10.0, stop_ghz * 1e9, 21);
            match simulate(&line, &config) {
                Ok(net) => prop_assert!(net.s.iter().all(|v| v.is_finite()), "{text}"),
                Err(e) => prop_assert!(!e.to_string().is_empty()),
            }
        }
    }
}
