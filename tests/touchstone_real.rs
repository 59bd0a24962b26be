//! Real instrument files (CC0, see tests/data/real/README.md): version 1, `# GHZ S RI R 50.0`, 10001 points,
//! 1 MHz to 20 GHz, leading and trailing spaces. Expected figures were computed independently with
//! Python 3.11 float parsing of the same files (max |S11| and its point, step spread).

use coldtrace::touchstone::{read_file, summarize, Format, FreqUnit, Version};
use std::path::PathBuf;

fn data(rel: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/real")
        .join(rel)
}

#[test]
fn cryostat_a_open_sweeps_read() {
    for (rel, max_mag) in [
        ("cryostat-a/295k/open.s1p", 1.0300212863685148),
        ("cryostat-a/3k/open.s1p", 1.029533171785232),
    ] {
        let path = data(rel);
        let t = read_file(&path).unwrap();
        assert_eq!(t.info.version, Version::V1_0);
        assert_eq!(t.info.format, Format::RI);
        assert_eq!(t.info.unit, FreqUnit::GHz);
        let n = &t.network;
        assert_eq!(n.len(), 10001);
        assert_eq!(n.freqs_hz[0], 1e6);
        assert_eq!(n.freqs_hz[10000], 20e9);
        assert_eq!(n.reference_ohm, vec![50.0]);
        // The first point's |S11| exceeds 1 (raw, uncalibrated data): the only warning, on line 3.
        assert_eq!(t.warnings.len(), 1, "{:?}", t.warnings);
        assert_eq!(t.warnings[0].kind, "reflection-above-one");
        assert!(t.warnings[0]
            .location
            .as_deref()
            .unwrap()
            .ends_with("open.s1p:3"));
        assert!((n.s11()[0].norm() - max_mag).abs() < 1e-12);
        let s = summarize(&t, &path);
        assert!(
            s.uniform,
            "steps agree within 1.2e-12 relative (Python check)"
        );
        assert!(!s.harmonic, "f_0 = 1 MHz differs from the step 1.9999 MHz");
    }
}
