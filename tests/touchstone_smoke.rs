//! Smoke tests of the basic reader/writer API (1- and 2-port, RI/MA/DB, version 1).
use coldtrace::touchstone::{read_str, write, Format, WriteOptions};
use std::path::Path;

#[test]
fn one_and_two_port_v1_read_and_round_trip() {
    let t = read_str(
        "# MHz S RI R 50\n1 0.5 -0.5\n2 0.25 0\n",
        Path::new("a.s1p"),
    )
    .unwrap();
    assert_eq!(t.network.freqs_hz, vec![1e6, 2e6]);
    assert_eq!(t.network.s11()[0], num_complex::Complex64::new(0.5, -0.5));
    // Touchstone 1.1, "Network Data" (section title from memory): 2-port order N11 N21 N12 N22.
    let t2 = read_str(
        "# GHz S MA R 50\n1 1 0 0.5 90 0.25 180 1 -90\n",
        Path::new("b.s2p"),
    )
    .unwrap();
    let s21 = t2.network.at(0, 1, 0);
    assert!((s21 - num_complex::Complex64::new(0.0, 0.5)).norm() < 1e-15);
    let s12 = t2.network.at(0, 0, 1);
    assert!((s12 - num_complex::Complex64::new(-0.25, 0.0)).norm() < 1e-15);
    for format in [Format::RI, Format::MA, Format::DB] {
        let text = write(
            &t2.network,
            &WriteOptions {
                format,
                ..Default::default()
            },
        )
        .unwrap();
        let back = read_str(&text, Path::new("b.s2p")).unwrap();
        for (a, b) in back.network.s.iter().zip(&t2.network.s) {
            assert!((a - b).norm() < 1e-12, "{format:?}\n{text}");
        }
    }
}
