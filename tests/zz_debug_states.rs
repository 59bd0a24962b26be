mod scenario;
use scenario::{Case, Scenario};

#[test]
#[ignore]
fn probe() {
    for (seed, case) in [(1500047u64, Case::Fault), (1500194, Case::Fault), (1500288, Case::Fault)] {
        let s = Scenario::generate(seed, case);
        let (b, c) = s.sweeps().unwrap();
        let r = s.compare(&b, &c, true).unwrap();
        eprintln!("== {seed} {:?} far {:?}", s.fault.as_ref().map(|f| (f.spec.clone(), f.position_m)), r.far_end);
        for f in r.findings.iter().take(4) {
            eprintln!("   {} {} {:?} {:.4} {} meas {:.1} exp {:.1?} exc {:.1} refl {:.1} | {}", f.rank, f.severity, f.kind, f.place.distance_m, f.zone, f.measured_change_db, f.expected_change_db, f.change_db, f.reflection_db, f.explanation);
        }
        eprintln!("   landmarks {:?} level {:.2}", r.alignment.landmarks_m, r.alignment.level_change_db);
        for w in &r.warnings { eprintln!("   W {}", w.message); }
    }
}
