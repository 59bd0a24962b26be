//! Reading rules of the Touchstone specification (IBIS Open Forum), one test per rule, each citing the
//! version and section title it checks. Section numbers are not given: titles are from memory of the
//! documents (Touchstone File Format Specification 1.1, EIA/IBIS Open Forum 2002; 2.0, ratified 2009;
//! 2.1, ratified 2024).

use coldtrace::touchstone::{
    read_bytes, read_str, FreqUnit, MatrixFormat, Parameter, Touchstone, TwoPortOrder, Version,
};
use num_complex::Complex64 as C;
use std::path::Path;

fn read(text: &str, name: &str) -> Touchstone {
    read_str(text, Path::new(name)).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn close(a: C, b: C) -> bool {
    (a - b).norm() < 1e-12 * (1.0 + b.norm())
}

fn kinds(t: &Touchstone) -> Vec<&str> {
    t.warnings.iter().map(|w| w.kind.as_str()).collect()
}

// 1.1 "Option Line": defaults GHz, S, MA, R 50 when fields are missing.
#[test]
fn option_line_defaults() {
    let t = read("#\n1 0.5 90\n", "a.s1p");
    assert_eq!(t.info.unit, FreqUnit::GHz);
    assert_eq!(t.info.parameter, Parameter::S);
    assert_eq!(t.network.reference_ohm, vec![50.0]);
    assert_eq!(t.network.freqs_hz, vec![1e9]);
    assert!(close(t.network.s11()[0], C::new(0.0, 0.5)));
    assert!(t.warnings.is_empty());
}

// 1.1 "Option Line": a missing option line means the defaults (accepted with a warning).
#[test]
fn missing_option_line_warns_and_uses_defaults() {
    let t = read("! vendor header\n1 0.5 90\n", "a.s1p");
    assert_eq!(kinds(&t), vec!["missing-option-line"]);
    assert!(!t.info.option_line);
    assert!(close(t.network.s11()[0], C::new(0.0, 0.5)));
    assert_eq!(t.info.header_comments, vec!["vendor header"]);
}

// 1.1 "Option Line": case-insensitive, any order, every unit.
#[test]
fn option_line_units_case_insensitive() {
    for (unit, scale) in [("hz", 1.0), ("KHZ", 1e3), ("mHz", 1e6), ("GhZ", 1e9)] {
        let t = read(&format!("# ri {unit} s r 75\n2 0.1 0.2\n"), "a.s1p");
        assert_eq!(t.network.freqs_hz, vec![2.0 * scale]);
        assert_eq!(t.network.reference_ohm, vec![75.0]);
        assert_eq!(t.network.s11()[0], C::new(0.1, 0.2));
    }
}

// 1.1 "Option Line": only the first option line counts; later ones are ignored (warning).
#[test]
fn only_first_option_line_counts_v1() {
    let t = read("# MHz S RI R 50\n# GHz S MA R 75\n1 0.1 0.2\n", "a.s1p");
    assert_eq!(t.network.freqs_hz, vec![1e6]);
    assert_eq!(t.network.reference_ohm, vec![50.0]);
    assert_eq!(kinds(&t), vec!["extra-option-line"]);
    assert_eq!(t.warnings[0].location.as_deref(), Some("a.s1p:2"));
}

// 1.1 "Data Lines" (formats): DB is 20 log10 |x|, angles in degrees.
#[test]
fn db_and_ma_formats() {
    let t = read("# Hz S DB R 50\n1 -6.020599913279624 -90\n", "a.s1p");
    assert!(close(t.network.s11()[0], C::new(0.0, -0.5)));
    let t = read("# Hz S MA R 50\n1 2 180\n", "a.s1p");
    assert!(close(t.network.s11()[0], C::new(-2.0, 0.0)));
}

// 1.1 "Comment Lines" / 2.0 "Rules for Version 2.0 Files": comments anywhere, blank lines, tabs, CRLF, CR,
// leading and trailing spaces, no final newline.
#[test]
fn comments_blank_lines_tabs_and_line_ends() {
    let lf = "! head\n\n# MHz S RI R 50 ! trailing comment\n  1\t0.1  0.2  ! c\n\n2 0.3 0.4";
    let crlf = lf.replace('\n', "\r\n");
    let cr = lf.replace('\n', "\r");
    for text in [lf.to_string(), crlf, cr] {
        let t = read(&text, "a.s1p");
        assert_eq!(t.network.freqs_hz, vec![1e6, 2e6]);
        assert_eq!(t.network.s11()[1], C::new(0.3, 0.4));
        assert!(t.warnings.is_empty(), "{:?}", t.warnings);
    }
}

// 1.1 "Network Data", 2-port: one line per frequency, order N11 N21 N12 N22.
#[test]
fn two_port_column_order_v1() {
    let t = read("# Hz S RI R 50\n1 11 0 21 0 12 0 22 0\n", "a.s2p");
    let n = &t.network;
    assert_eq!(
        (
            n.at(0, 0, 0).re,
            n.at(0, 1, 0).re,
            n.at(0, 0, 1).re,
            n.at(0, 1, 1).re
        ),
        (11.0, 21.0, 12.0, 22.0)
    );
    assert_eq!(t.info.two_port_order, Some(TwoPortOrder::O21_12));
}

/// A v1 N-port record written by hand: value of S_ij (1-based) = 10 i + j, imaginary = -(10 i + j).
fn v1_record(n: usize, f: f64) -> String {
    let mut s = format!("{f}");
    for i in 1..=n {
        for j in 1..=n {
            if j > 1 && n > 4 && (j - 1) % 4 == 0 {
                s.push('\n');
            }
            let v = (10 * i + j) as f64;
            s.push_str(&format!(" {v} {}", -v));
        }
        s.push('\n');
    }
    s
}

// 1.1 "Network Data", 3- and 4-port: one matrix row per line; 5+ ports: at most four pairs per line, each
// row starting a new line. Row-major order.
#[test]
fn multi_line_rows_3_to_7_ports() {
    for n in 3..=7 {
        let text = format!("# Hz S RI R 50\n{}{}", v1_record(n, 1.0), v1_record(n, 2.0));
        let t = read(&text, &format!("a.s{n}p"));
        assert_eq!(t.network.ports, n);
        assert_eq!(t.network.freqs_hz, vec![1.0, 2.0]);
        for k in 0..2 {
            for i in 0..n {
                for j in 0..n {
                    let v = (10 * (i + 1) + j + 1) as f64;
                    assert_eq!(t.network.at(k, i, j), C::new(v, -v), "n={n}");
                }
            }
        }
    }
}

// 1.1 "Noise Parameter Data": 2-port noise begins where the frequency is <= the previous one; 5 values;
// Rn normalised to R in version 1; Gamma_opt in MA.
#[test]
fn v1_noise_block_kept_apart() {
    let text = "# GHz S RI R 50\n1 0 0 1 0 1 0 0 0\n2 0 0 1 0 1 0 0 0\n1 0.5 0.3 90 0.4\n2 0.6 0.2 -90 0.5\n";
    let t = read(text, "amp.s2p");
    assert_eq!(t.network.len(), 2);
    assert_eq!(t.network.noise.len(), 2);
    let p = t.network.noise[0];
    assert_eq!((p.freq_hz, p.nf_min_db), (1e9, 0.5));
    assert!(close(p.gamma_opt, C::new(0.0, 0.3)));
    assert!((p.rn_ohm - 20.0).abs() < 1e-12);
}

// 1.1 "Option Line" (normalised parameters): Z values in version 1 are normalised to R.
// Check: Z_L = 2R (normalised z = 2) -> Gamma = (2 - 1)/(2 + 1) = 1/3 (Pozar, 4th ed., eq. 2.35).
#[test]
fn v1_z_and_y_are_normalised() {
    let t = read("# GHz Z RI R 75\n1 2 0\n", "a.s1p");
    assert!(close(t.network.s11()[0], C::new(1.0 / 3.0, 0.0)));
    assert_eq!(t.network.reference_ohm, vec![75.0]);
    let t = read("# GHz Y RI R 75\n1 0.5 0\n", "a.s1p");
    assert!(close(t.network.s11()[0], C::new(1.0 / 3.0, 0.0)));
}

// 2.0 "[Version]", "[Number of Ports]", "[Two-Port Data Order]", "[Number of Frequencies]",
// "[Network Data]", "[End]"; 12_21 order.
#[test]
fn v2_two_port_12_21() {
    let text = "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 2\n[Two-Port Data Order] 12_21\n\
                [Number of Frequencies] 1\n[Network Data]\n1 11 0 12 0 21 0 22 0\n[End]\n";
    let t = read(text, "x.s2p");
    assert_eq!(t.info.version, Version::V2_0);
    assert_eq!(t.network.at(0, 0, 1).re, 12.0);
    assert_eq!(t.network.at(0, 1, 0).re, 21.0);
    assert_eq!(t.info.two_port_order, Some(TwoPortOrder::O12_21));
}

// 2.0 "[Network Data]": records are counted, so line breaks inside a record do not matter; keywords are
// case-insensitive.
#[test]
fn v2_records_span_lines_freely() {
    let text = "[VERSION] 2.1\n# Hz S RI\n[number of ports] 1\n[Number of Frequencies] 3\n[Network Data]\n\
                1 0.1\n0.2 2 0.3 0.4\n3\n0.5\n0.6\n[END]\n";
    let t = read(text, "x.s1p");
    assert_eq!(t.info.version, Version::V2_1);
    assert_eq!(t.network.freqs_hz, vec![1.0, 2.0, 3.0]);
    assert_eq!(t.network.s11()[2], C::new(0.5, 0.6));
}

// 2.0 "[Reference]": per-port references, may span lines, override R; "[Matrix Format]" Lower: the lower
// triangle row by row, mirrored; 2.0 "Option Line": Z not normalised in version 2 (ohms).
#[test]
fn v2_reference_lower_matrix_and_unnormalised_z() {
    let text = "[Version] 2.0\n# Hz Z RI R 50\n[Number of Ports] 3\n[Reference] 25\n50\n100\n\
                [Matrix Format] Lower\n[Number of Frequencies] 1\n[Network Data]\n\
                1 75 0\n0 0 150 0\n0 0 0 0 300 0\n[End]\n";
    let t = read(text, "x.s3p");
    assert_eq!(t.info.matrix_format, MatrixFormat::Lower);
    assert_eq!(t.network.reference_ohm, vec![25.0, 50.0, 100.0]);
    // Diagonal Z with Z_pp = 3 R_p: each port sees Gamma = (3 - 1)/(3 + 1) = 0.5 (Pozar, 4th ed., eq. 2.35).
    for p in 0..3 {
        assert!(close(t.network.at(0, p, p), C::new(0.5, 0.0)));
    }
    assert!(t.network.at(0, 1, 0).norm() < 1e-15);
}

// 2.0 "[Matrix Format]" Upper mirrors too.
#[test]
fn v2_upper_matrix_mirrors() {
    let text = "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 3\n[Matrix Format] upper\n\
                [Number of Frequencies] 1\n[Network Data]\n1 11 0 12 0 13 0\n22 0 23 0\n33 0\n[End]\n";
    let t = read(text, "x.s3p");
    for (i, j, v) in [
        (0, 2, 13.0),
        (2, 0, 13.0),
        (1, 2, 23.0),
        (2, 1, 23.0),
        (2, 2, 33.0),
    ] {
        assert_eq!(t.network.at(0, i, j).re, v);
    }
}

// 2.0 "[Noise Data]", "[Number of Noise Frequencies]", "[Mixed-Mode Order]", "[Begin Information]":
// noise Rn in ohms in version 2; mixed-mode order kept; information kept.
#[test]
fn v2_noise_mixed_mode_information() {
    let text = "[Version] 2.0\n# GHz S MA R 50\n[Number of Ports] 2\n[Two-Port Data Order] 21_12\n\
                [Number of Frequencies] 2\n[Number of Noise Frequencies] 1\n[Mixed-Mode Order] D2,1 D1,2\n\
                [Begin Information]\nline in-07 north-fridge\n[End Information]\n[Network Data]\n\
                1 0.1 0 0.9 0 0.9 0 0.1 0\n2 0.1 0 0.9 0 0.9 0 0.1 0\n[Noise Data]\n1 0.5 0.3 45 12.5\n[End]\n";
    let t = read(text, "x.s2p");
    assert_eq!(t.network.noise.len(), 1);
    assert_eq!(t.network.noise[0].rn_ohm, 12.5);
    assert_eq!(t.info.mixed_mode_order.as_deref(), Some("D2,1 D1,2"));
    assert_eq!(t.info.information, vec!["line in-07 north-fridge"]);
}

// 2.0 "[End]": missing in 2.0 is accepted with a warning (harmless deviation).
#[test]
fn v2_0_missing_end_warns() {
    let text = "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0 0\n";
    let t = read(text, "x.s1p");
    assert_eq!(kinds(&t), vec!["missing-end"]);
}

// H parameters, 2-ports, version 1 normalised: a 2-port with h = [[h11, 0], [0, h22]] isolates the ports;
// port 1 sees z = h11, port 2 sees y = h22 (Pozar, 4th ed., Table 4.2 definitions).
#[test]
fn v1_h_and_g_parameters() {
    let t = read("# Hz H RI R 50\n1 2 0 0 0 0 0 0.5 0\n", "a.s2p");
    assert!(close(t.network.at(0, 0, 0), C::new(1.0 / 3.0, 0.0)));
    assert!(close(t.network.at(0, 1, 1), C::new(1.0 / 3.0, 0.0)));
    assert!(t.network.at(0, 1, 0).norm() < 1e-15);
    // g = [[g11, 0], [0, g22]]: port 1 sees y = g11, port 2 sees z = g22.
    let t = read("# Hz G RI R 50\n1 0.5 0 0 0 0 0 2 0\n", "a.s2p");
    assert!(close(t.network.at(0, 0, 0), C::new(1.0 / 3.0, 0.0)));
    assert!(close(t.network.at(0, 1, 1), C::new(1.0 / 3.0, 0.0)));
}

// 1.1 per-port R on the option line (a version 1.1 feature, accepted with a warning; from memory).
#[test]
fn v1_per_port_reference_warns() {
    let t = read("# Hz S RI R 50 75\n1 0 0 0 0 0 0 0 0\n", "a.s2p");
    assert_eq!(t.info.version, Version::V1_1);
    assert_eq!(t.network.reference_ohm, vec![50.0, 75.0]);
    assert_eq!(kinds(&t), vec!["per-port-reference-v1"]);
}

// |S11| slightly above 1 (band-edge calibration drift): accepted with a warning.
#[test]
fn reflection_above_one_warns() {
    let t = read("# Hz S RI R 50\n1 1.001 0\n2 0.5 0\n", "a.s1p");
    assert_eq!(kinds(&t), vec!["reflection-above-one"]);
    assert_eq!(t.warnings[0].location.as_deref(), Some("a.s1p:2"));
}

// 1.1: f = 0 is legal.
#[test]
fn zero_frequency_is_legal() {
    let t = read("# Hz S RI R 50\n0 1 0\n1 0.5 0\n", "a.s1p");
    assert_eq!(t.network.freqs_hz, vec![0.0, 1.0]);
}

#[test]
fn bytes_that_are_not_utf8_are_an_error_not_a_panic() {
    let e = read_bytes(b"# Hz S RI\n1 0 \xff\n", Path::new("a.s1p")).unwrap_err();
    assert_eq!(e.line(), Some(2));
}

/// A million-point 1-port file generated in memory reads in linear time (the speed figure is in the
/// criterion bench, not here).
#[test]
fn million_points() {
    let n = 1_000_000;
    let mut text = String::with_capacity(n * 40);
    text.push_str("# Hz S RI R 50\n");
    for k in 0..n {
        text.push_str(&format!("{} {:.7} {:.7}\n", k + 1, 0.5, -0.25));
    }
    let t = read(&text, "big.s1p");
    assert_eq!(t.network.len(), n);
    assert_eq!(t.network.freqs_hz[n - 1], n as f64);
}

// 1.1 "Option Line": the option line precedes the data; a late one is ignored with a warning.
#[test]
fn late_option_line_v1_warns() {
    let t = read("1 0.5 0\n# Hz S RI R 75\n2 0.5 0\n", "a.s1p");
    assert_eq!(kinds(&t), vec!["late-option-line", "missing-option-line"]);
    assert_eq!(t.network.freqs_hz, vec![1e9, 2e9]);
    assert_eq!(t.network.reference_ohm, vec![50.0]);
}

// 2.0 "[Number of Ports]" counts ports; a disagreeing .sNp name and a 2-port keyword in a 1-port file are
// harmless (warnings).
#[test]
fn v2_extension_mismatch_and_ignored_two_port_order_warn() {
    let text = "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 1\n[Two-Port Data Order] 12_21\n\
                [Number of Frequencies] 1\n[Network Data]\n1 0 0\n[End]\n";
    let t = read(text, "x.s2p");
    assert_eq!(
        kinds(&t),
        vec!["extension-port-mismatch", "two-port-order-ignored"]
    );
    assert_eq!(t.warnings[0].location.as_deref(), Some("x.s2p:3"));
}

// 1.1 "Noise Parameter Data": the writer refuses a version 1 file whose noise would not be found.
#[test]
fn writer_refuses_v1_noise_above_the_band() {
    use coldtrace::network::NoisePoint;
    use coldtrace::touchstone::{write, WriteOptions, WriteVersion};
    let t = read("# Hz S RI R 50\n1 0 0 0 0 0 0 0 0\n", "a.s2p");
    let mut n = t.network;
    n.noise.push(NoisePoint {
        freq_hz: 5.0,
        nf_min_db: 1.0,
        gamma_opt: C::new(0.1, 0.0),
        rn_ohm: 10.0,
    });
    let e = write(&n, &WriteOptions::default()).unwrap_err();
    assert!(e.to_string().contains("--touchstone-version 2"), "{e}");
    let v2 = write(
        &n,
        &WriteOptions {
            version: WriteVersion::V2,
            ..Default::default()
        },
    )
    .unwrap();
    assert_eq!(read(&v2, "a.s2p").network.noise.len(), 1);
}
