//! A second analysis of the same sweep after the chain's delays moved (the comparator's re-analysis of the
//! baseline on its anchored joints) takes what it can from the first (`SweepAnalysis::again`): the
//! compensated pieces, and the traces of pieces that start at the same bin on the same plan. Held here to
//! the analysis worked out afresh, bit for bit, on a line of our own (tests/data/compare/south-fridge-in-02.toml)
//! simulated by the forward model.

use coldtrace::compare::analysis::SweepAnalysis;
use coldtrace::compare::chain::Which;
use coldtrace::compare::sweep::t_max;
use coldtrace::compare::{AnalysisConfig, ChainView};
use coldtrace::line::{simulate, SimConfig, State};
use coldtrace::transform::TraceEngine;
use std::path::Path;

#[test]
fn an_analysis_again_is_the_analysis_afresh() {
    let line =
        coldtrace::line::file::read_file(Path::new("tests/data/compare/south-fridge-in-02.toml"))
            .unwrap();
    let mut sim = SimConfig::linear(State::Warm, 0.5e9, 10e9, 1601);
    sim.noise_db = Some(-90.0);
    sim.seed = 3;
    let net = simulate(&line, &sim).unwrap();
    let s11 = net.s11();
    let window = AnalysisConfig::default().window;
    let chain = ChainView::from_line(&line, State::Warm, State::Cold, 0.5e9, 10e9, 5e9);
    // The joints found a little later than modelled from the second segment on, as anchoring moves them.
    let mut moved = chain.clone();
    for s in moved.segments.iter_mut().skip(2) {
        s.delay_s[0] *= 1.004;
        s.delay_s[1] *= 1.004;
    }
    let res = 1.0 / (net.freqs_hz[net.len() - 1] - net.freqs_hz[0]);
    let analyse = |chain: &ChainView, prior: Option<&SweepAnalysis>| {
        SweepAnalysis::again(
            &net.freqs_hz,
            &s11,
            &window,
            t_max(chain, Which::Baseline, res),
            chain,
            Which::Baseline,
            &mut TraceEngine::new(),
            prior,
        )
        .unwrap()
    };
    let first = analyse(&chain, None);
    let afresh = analyse(&moved, None);
    let again = analyse(&moved, Some(&first));
    // The case is one where something is taken: pieces of the same compensation from the same first bin.
    let shared = afresh
        .pieces
        .iter()
        .filter(|p| {
            first
                .pieces
                .iter()
                .any(|q| q.undone == p.undone && q.bins.0 == p.bins.0)
        })
        .count();
    assert!(
        shared >= 2 && shared < afresh.pieces.len(),
        "{shared} of {} pieces shared",
        afresh.pieces.len()
    );
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(&again.mag), bits(&afresh.mag));
    assert_eq!(bits(&again.gain), bits(&afresh.gain));
    assert_eq!(again.pieces.len(), afresh.pieces.len());
    for (a, b) in again.pieces.iter().zip(&afresh.pieces) {
        assert_eq!(a.bins, b.bins);
        assert_eq!(a.gain.to_bits(), b.gain.to_bits());
        assert_eq!(a.spectrum.weighted, b.spectrum.weighted);
    }
    assert_eq!(again.events.len(), afresh.events.len());
    for (a, b) in again.events.iter().zip(&afresh.events) {
        assert_eq!(a.delay_s.to_bits(), b.delay_s.to_bits());
        assert_eq!(a.magnitude.to_bits(), b.magnitude.to_bits());
    }
    // A different sweep takes nothing from the prior: the analysis of another sweep is its own.
    let mut other = s11.clone();
    other[5] *= 1.5;
    let on_other = SweepAnalysis::again(
        &net.freqs_hz,
        &other,
        &window,
        t_max(&moved, Which::Baseline, res),
        &moved,
        Which::Baseline,
        &mut TraceEngine::new(),
        Some(&first),
    )
    .unwrap();
    assert_ne!(bits(&on_other.mag), bits(&afresh.mag));
}

#[test]
fn a_chain_of_two_states_holds_each_states_own_chain() {
    // The state check reads the warm and the cold model from one chain built for warm -> cold (its
    // baseline's side and its current's). That holds only while each side is worked out from its own state
    // alone: held here, bit for bit, against the chains of one state each, at every band the bench and the
    // scenarios use.
    let line =
        coldtrace::line::file::read_file(Path::new("tests/data/compare/south-fridge-in-02.toml"))
            .unwrap();
    for (lo, hi) in [(0.5e9, 10e9), (10e6, 20e9), (1e9, 18e9)] {
        let f = 0.5 * (lo + hi);
        let both = ChainView::from_line(&line, State::Warm, State::Cold, lo, hi, f);
        let warm = ChainView::from_line(&line, State::Warm, State::Warm, lo, hi, f);
        let cold = ChainView::from_line(&line, State::Cold, State::Cold, lo, hi, f);
        assert_eq!(both.segments.len(), warm.segments.len());
        assert_eq!(both.visible_end_m(), warm.visible_end_m());
        for ((s, w), c) in both.segments.iter().zip(&warm.segments).zip(&cold.segments) {
            assert_eq!(s.delay_s[0].to_bits(), w.delay_s[0].to_bits(), "{}", s.name);
            assert_eq!(s.delay_s[1].to_bits(), c.delay_s[1].to_bits(), "{}", s.name);
            assert_eq!(s.loss[0], w.loss[0], "{}", s.name);
            assert_eq!(s.loss[1], c.loss[1], "{}", s.name);
        }
        // And what the state check takes from them: the loss to the visible end, each side.
        let end = both.visible_end_m();
        for g in [lo, f, hi] {
            assert_eq!(
                both.loss_to_db(end, g, Which::Baseline).to_bits(),
                warm.loss_to_db(end, g, Which::Baseline).to_bits()
            );
            assert_eq!(
                both.loss_to_db(end, g, Which::Current).to_bits(),
                cold.loss_to_db(end, g, Which::Baseline).to_bits()
            );
        }
    }
}
