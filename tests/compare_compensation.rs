//! The analysis' loss compensation along a line whose round trip passes the cap (40 dB,
//! `analysis::MAX_COMPENSATION`) at the top of the band long before it does at the bottom: warm stainless
//! steel and niobium-titanium behind a 17 dB pad (a line of our own, invented for the test, after the
//! healthy scenario 113000069 of the generator's seed 113). The comparator reckons every place's reading
//! as compensated by the modelled loss up to the cap at each frequency (`difference::cap_shortfall_db`);
//! the compensated trace must be that, within what a piece leaves undone, wherever on the line it is read.

use coldtrace::compare::analysis::{SweepAnalysis, PIECE_MAX_DB};
use coldtrace::compare::chain::{SegmentKind, Which};
use coldtrace::compare::sweep::t_max;
use coldtrace::compare::{AnalysisConfig, ChainView};
use coldtrace::line::{simulate, SimConfig, State};
use coldtrace::transform::TraceEngine;
use std::path::Path;

/// Invented line: copper at room temperature, stainless steel to the 4 K stage, a 17 dB pad and
/// niobium-titanium to a device that reflects half the wave.
const LINE: &str = r#"
name = "test-fridge/lossy-pad"
impedance_ohm = 50.0

[stages]
k50 = 45.0
k4 = 3.2

[[element]]
kind = "cable"
name = "c1"
cable = "cu-086"
length_m = 0.9
from = "room"
to = "room"

[[element]]
kind = "connector"
name = "J1"
stage = "room"

[[element]]
kind = "cable"
name = "c2"
cable = "ss-086"
length_m = 2.2
from = "room"
to = "k4"

[[element]]
kind = "connector"
name = "J2"
stage = "k4"

[[element]]
kind = "attenuator"
name = "A1"
stage = "k4"
loss_db = 17.0

[[element]]
kind = "connector"
name = "J3"
stage = "k4"

[[element]]
kind = "cable"
name = "c3"
cable = "nbti-086"
length_m = 2.4
from = "k4"
to = "k4"

[[element]]
kind = "device"
name = "end"
stage = "k4"
return_loss_db = 6.0
"#;

#[test]
fn the_trace_is_compensated_as_each_place_needs_up_to_the_cap() {
    let line = coldtrace::line::file::parse(LINE, Path::new("lossy-pad.toml")).unwrap();
    let (f0, f1, n) = (0.5e9, 10e9, 1601);
    let mut sim = SimConfig::linear(State::Warm, f0, f1, n);
    sim.noise_db = Some(-100.0);
    let net = simulate(&line, &sim).unwrap();
    let chain = ChainView::from_line(&line, State::Warm, State::Cold, f0, f1, 0.5 * (f0 + f1));
    let res = 1.0 / (f1 - f0);
    let a = SweepAnalysis::again(
        &net.freqs_hz,
        &net.s11(),
        &AnalysisConfig::default().window,
        t_max(&chain, Which::Baseline, res),
        &chain,
        Which::Baseline,
        &mut TraceEngine::new(),
        None,
    )
    .unwrap();
    let db = |g: f64| 20.0 * g.log10();
    // The case is one that passes the cap at the top of the band in front of the pad, and at the bottom
    // only behind it.
    let loss = |x: f64, f: f64| chain.loss_to_db(x, f, Which::Baseline);
    let pad = chain
        .segments
        .iter()
        .find(|s| s.kind == SegmentKind::Attenuator)
        .map(|s| s.start_m)
        .unwrap();
    assert!(loss(pad - 0.01, f1) > 40.0 && loss(pad - 0.01, f0) < 40.0);
    let end = chain.visible_end_m();
    assert!(loss(end, f0) > 40.0);
    // Every 5 cm along the line, the trace's gain (its piece's) against the place's own capped gain: the
    // window-weighted RMS of each, as the events are rescaled.
    let mut worst = (0.0f64, 0.0f64);
    let mut x = 0.05;
    while x < end {
        let t = chain.delay_to(x, Which::Baseline, None);
        let off = db(a.gain_at(t)) - db(a.level_gain(&chain, x, Which::Baseline));
        // Within a cell of the pad the piece boundary and the place may lie either side of its step.
        let near_pad = (x - pad).abs() < 0.05;
        if !near_pad && off.abs() > worst.1.abs() {
            worst = (x, off);
        }
        x += 0.05;
    }
    assert!(
        worst.1.abs() <= PIECE_MAX_DB,
        "the trace's compensation is {:+.2} dB off the place's at {:.2} m (at most {PIECE_MAX_DB} dB)",
        worst.1,
        worst.0
    );
}
