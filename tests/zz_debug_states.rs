mod scenario;
use scenario::{Case, Scenario};

#[test]
#[ignore]
fn probe() {
    for (seed, case) in [(1500150u64, Case::Fault), (1500115, Case::Fault), (1500180, Case::Fault)] {
        let s = Scenario::generate(seed, case);
        let (b, c) = s.sweeps().unwrap();
        let r = s.compare(&b, &c, true).unwrap();
        eprintln!("== {seed} {} | {:?} {}", r.states.basis, s.fault.as_ref().map(|f| (f.element.clone(), f.position_m, f.spec.clone())), s.truth_text.lines().filter(|l| l.contains("load") || l.contains("cable =") || l.contains("length_m")).collect::<Vec<_>>().join(" "));
        for f in r.findings.iter().take(6) {
            eprintln!("   {} {} {:?} {:.4} {} meas {:.1} exp {:.1?} exc {:.1} refl {:.1} | {}", f.rank, f.severity, f.kind, f.place.distance_m, f.zone, f.measured_change_db, f.expected_change_db, f.change_db, f.reflection_db, f.explanation);
        }
        eprintln!("   landmarks {:?} level {:.2}", r.alignment.landmarks_m, r.alignment.level_change_db);
        for w in &r.warnings { eprintln!("   W {}", w.message); }
    }
}
