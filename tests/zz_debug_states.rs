use coldtrace::compare::analysis::SweepAnalysis;
use coldtrace::compare::chain::{ChainView, Which};
use coldtrace::compare::far_end;
use coldtrace::transform::{TraceEngine, Window};

#[test]
#[ignore]
fn probe() {
    let r = "/work/shared/real-sweeps/campaign-1/";
    for f in ["3k/port1_MOS1", "3k/port1_MOS2", "3k/port1_MOS3", "3k/port1_MOS4"] {
        let t = coldtrace::touchstone::read_file(std::path::Path::new(&format!("{r}{f}.s1p"))).unwrap();
        let n = &t.network;
        let mut e = TraceEngine::new();
        let alias = (n.len() - 1) as f64 / (n.freqs_hz[n.len() - 1] - n.freqs_hz[0]);
        let uni = ChainView::uniform("", 0.7, 1.0, 50.0);
        let a = SweepAnalysis::new(&n.freqs_hz, &n.s11(), &Window::Kaiser { beta: 9.0 }, alias, &uni, Which::Baseline, &mut e).unwrap();
        let term = far_end::find(&a, &uni, Which::Baseline, &mut e).unwrap();
        eprintln!("{f}: {:?}", term.map(|t| (t.delay_s * 0.7 * 299792458.0 / 2.0, t.polarity, t.low_band_reflection, t.total)));
    }
}
