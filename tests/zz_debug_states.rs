mod scenario;
use scenario::{Case, Scenario};

#[test]
#[ignore]
fn probe() {
    for (seed, case) in [(1500137u64, Case::Fault), (1500019, Case::Fault)] {
        let s = Scenario::generate(seed, case);
        let (b, c) = s.sweeps().unwrap();
        let r = s.compare(&b, &c, true).unwrap();
        eprintln!("== {seed} {} | {:?}", r.states.basis, s.fault.as_ref().map(|f| (f.element.clone(), f.position_m)));
        for f in r.findings.iter().take(5) {
            eprintln!("   {} {} {:?} {:.4} {} meas {:.1} exp {:?} exc {:.1} | {}", f.rank, f.severity, f.kind, f.place.distance_m, f.zone, f.measured_change_db, f.expected_change_db, f.change_db, f.explanation);
        }
        eprintln!("   landmarks {:?} level {:.2}", r.alignment.landmarks_m, r.alignment.level_change_db);
        for w in &r.warnings { eprintln!("   W {}", w.message); }
    }
}
