//! The comparator against a world that is not its model: cryostat input lines simulated by the independent
//! physics of tests/independent/mod.rs (RLGC cables with Bloch-Grueneisen copper, lumped-ladder joints,
//! resistive pads that drift on cooling, a calibrated port's residual errors), analysed with the nominal
//! line file. Prints a Markdown section, and writes it into a page with `--into`.
//!
//! ```sh
//! cargo run --release --example independent_accuracy -- --cooldowns 150 --repeats 50 --faults 150 --seed 1 \
//!     [--into docs/accuracy.md]
//! cargo run --release --example independent_accuracy -- --show fault:1000007 [--dump NEW_DIR]
//! ```

#[path = "../tests/independent/mod.rs"]
mod independent;
#[path = "common/section.rs"]
mod section;

use coldtrace::compare::Severity;
use independent::{judge, Case, Judged, Scene, VISIBLE_LEVEL_DB};
use std::fmt::Write as _;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

const USAGE: &str = "usage: independent_accuracy [--cooldowns N] [--repeats N] [--faults N] [--seed S] \
                     [--threads N] [--into FILE.md] | --show CASE:SEED [--dump NEW_DIR] (CASE cooldown, repeat or fault)";

/// The heading of the section this program writes.
const HEADING: &str = "## An independent simulator";

/// Seed offsets of the three kinds of case.
const OFFSETS: [(Case, u64); 3] = [
    (Case::Cooldown, 0),
    (Case::Repeat, 1_000_000),
    (Case::Fault, 2_000_000),
];

fn main() {
    let mut counts = [150usize, 50, 150];
    let mut seed = 1u64;
    let mut threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let mut into: Option<PathBuf> = None;
    let mut show: Option<(Case, u64)> = None;
    let mut dump: Option<PathBuf> = None;
    let mut it = std::env::args().skip(1);
    let fail = |m: String| -> ! {
        eprintln!("{m}\n{USAGE}");
        std::process::exit(2)
    };
    while let Some(flag) = it.next() {
        let mut value = || {
            it.next()
                .unwrap_or_else(|| fail(format!("{flag} needs a value")))
        };
        let num = |v: String| {
            v.parse::<u64>()
                .unwrap_or_else(|e| fail(format!("{v}: {e}")))
        };
        match flag.as_str() {
            "--cooldowns" => counts[0] = num(value()) as usize,
            "--repeats" => counts[1] = num(value()) as usize,
            "--faults" => counts[2] = num(value()) as usize,
            "--seed" => seed = num(value()),
            "--threads" => threads = (num(value()) as usize).max(1),
            "--into" => into = Some(PathBuf::from(value())),
            "--dump" => dump = Some(PathBuf::from(value())),
            "--show" => {
                let v = value();
                let (c, s) = v
                    .split_once(':')
                    .unwrap_or_else(|| fail(format!("--show {v}")));
                let case = match c {
                    "cooldown" => Case::Cooldown,
                    "repeat" => Case::Repeat,
                    "fault" => Case::Fault,
                    _ => fail(format!("--show {v}: unknown case")),
                };
                show = Some((case, num(s.to_string())));
            }
            _ => fail(format!("unknown flag {flag}")),
        }
    }
    if let Some((case, s)) = show {
        let scene = Scene::generate(s, case);
        if let Some(dir) = dump {
            std::fs::create_dir(&dir).unwrap_or_else(|e| fail(format!("{}: {e}", dir.display())));
            std::fs::write(dir.join("line.toml"), &scene.line_text).expect("line file");
            let (b, c) = scene.sweeps();
            let opts = coldtrace::touchstone::WriteOptions::default();
            for (name, n) in [("baseline.s1p", &b), ("current.s1p", &c)] {
                let text = coldtrace::touchstone::write(n, &opts).expect("touchstone");
                std::fs::write(dir.join(name), text).expect("sweep");
            }
        }
        println!("{:#?}\n\n{}", scene.world.parts, scene.line_text);
        let j = judge(scene);
        println!("[states inferred] {}", j.describe(&j.inferred));
        println!("[states given] {}", j.describe(&j.given));
        return;
    }
    let mut plan = Vec::new();
    for (k, (case, off)) in OFFSETS.iter().enumerate() {
        for i in 0..counts[k] as u64 {
            plan.push((*case, seed * 10_000_000 + off + i));
        }
    }
    let started = Instant::now();
    let next = AtomicUsize::new(0);
    let mut all: Vec<Judged> = std::thread::scope(|s| {
        let workers: Vec<_> = (0..threads)
            .map(|_| {
                s.spawn(|| {
                    let mut out = Vec::new();
                    loop {
                        let k = next.fetch_add(1, Ordering::Relaxed);
                        let Some(&(case, sd)) = plan.get(k) else {
                            break;
                        };
                        out.push(judge(Scene::generate(sd, case)));
                    }
                    out
                })
            })
            .collect();
        workers
            .into_iter()
            .flat_map(|w| w.join().expect("worker"))
            .collect()
    });
    all.sort_by_key(|j| j.scene.seed);
    let text = section_text(&all, counts, seed, threads, started.elapsed().as_secs_f64());
    println!("{text}");
    if let Some(path) = into {
        let doc = std::fs::read_to_string(&path)
            .unwrap_or_else(|e| fail(format!("--into {}: {e}", path.display())));
        std::fs::write(&path, section::replace_section(&doc, HEADING, &text))
            .unwrap_or_else(|e| fail(format!("--into {}: {e}", path.display())));
        eprintln!("wrote {}", path.display());
    }
}

fn pct(n: usize, d: usize) -> String {
    if d == 0 {
        "-".into()
    } else {
        format!("{:.1} % ({n}/{d})", 100.0 * n as f64 / d as f64)
    }
}

fn section_text(
    all: &[Judged],
    counts: [usize; 3],
    seed: u64,
    threads: usize,
    secs: f64,
) -> String {
    let mut t = String::new();
    let _ = writeln!(t, "{HEADING}\n");
    let _ = writeln!(
        t,
        "Measured with `cargo run --release --example independent_accuracy -- --cooldowns {} --repeats {} \
         --faults {} --seed {seed} --into docs/accuracy.md`: {} cases in {secs:.0} s on {threads} thread(s). \
         The lines are simulated by tests/independent/mod.rs, whose physics is written apart from \
         coldtrace's own model: RLGC cables in temperature slices (copper by the Bloch-Grueneisen formula, \
         the anomalous skin effect as a floor, surface roughness), joints as lumped ladders with fringing and \
         a pin recess that grows on cooling, resistive pads whose resistors drift on cooling, loads that \
         drift, a calibrated port's residual directivity, source match and tracking drift. Each line runs \
         from a room cable through a feedthrough down to 4 K, the still, the cold plate or the mixing \
         chamber, with up to three pads; the comparator is given the nominal line file (built-in kinds by \
         name, lengths up to 6 mm off, round stage temperatures). Faults in the current sweep only: pin gaps \
         of 60 um to 1.5 mm (81 to 7 fF by Kirchhoff's disc formula), the same bridged by 20-500 ohm, contacts of 0.5-10 ohm, \
         opens at a joint, crushes to 35-45 ohm over 5-10 mm.\n",
        counts[0], counts[1], counts[2], all.len()
    );
    let of = |c: Case| all.iter().filter(move |j| j.scene.case == c);
    let alarms = |c: Case, given: bool| {
        let n = of(c)
            .filter(|j| {
                let o = if given { &j.given } else { &j.inferred };
                !o.alarms.is_empty()
            })
            .count();
        pct(n, of(c).count())
    };
    let visible: Vec<&Judged> = of(Case::Fault)
        .filter(|j| j.level_db.unwrap_or(f64::NEG_INFINITY) >= VISIBLE_LEVEL_DB)
        .collect();
    let right = |given: bool, v: &[&Judged]| {
        let n = v
            .iter()
            .filter(|j| j.right(if given { &j.given } else { &j.inferred }))
            .count();
        pct(n, v.len())
    };
    let errors = |given: bool| {
        all.iter()
            .filter(|j| (if given { &j.given } else { &j.inferred }).error.is_some())
            .count()
    };
    let _ = writeln!(
        t,
        "| figure | goal | states inferred | states given |\n|---|---|---|---|"
    );
    let _ = writeln!(
        t,
        "| false alarms, healthy warm -> cold | 0 | {} | {} |",
        alarms(Case::Cooldown, false),
        alarms(Case::Cooldown, true)
    );
    let _ = writeln!(
        t,
        "| false alarms, cold -> cold repeats | 0 | {} | {} |",
        alarms(Case::Repeat, false),
        alarms(Case::Repeat, true)
    );
    let _ = writeln!(
        t,
        "| right element first, faults >= {VISIBLE_LEVEL_DB} dB over noise | >= 98 % | {} | {} |",
        right(false, &visible),
        right(true, &visible)
    );
    let above = |given: bool, v: &[&Judged]| {
        let n = v
            .iter()
            .filter(|j| {
                let o = if given { &j.given } else { &j.inferred };
                j.right(o) && o.top.as_ref().is_some_and(|t| t.4 > Severity::Info)
            })
            .count();
        pct(n, v.len())
    };
    let _ = writeln!(
        t,
        "| the same, and that finding above info | - | {} | {} |",
        above(false, &visible),
        above(true, &visible)
    );
    let all_faults: Vec<&Judged> = of(Case::Fault).collect();
    let _ = writeln!(
        t,
        "| right element first, all faults | - | {} | {} |",
        right(false, &all_faults),
        right(true, &all_faults)
    );
    let _ = writeln!(
        t,
        "| runs that returned an error | 0 | {} of {} | {} of {} |\n",
        errors(false),
        all.len(),
        errors(true),
        all.len()
    );
    let mut listed = 0;
    let _ = writeln!(t, "Healthy lines with a finding above info, and faults over the noise not ranked first at their element (replay with `--show CASE:SEED`):\n");
    for j in all {
        for (given, o) in [(false, &j.inferred), (true, &j.given)] {
            let bad = match j.scene.case {
                Case::Fault => {
                    j.level_db.unwrap_or(f64::NEG_INFINITY) >= VISIBLE_LEVEL_DB && !j.right(o)
                }
                _ => !o.alarms.is_empty() || o.error.is_some(),
            };
            if bad && listed < 40 {
                listed += 1;
                let mode = if given { "given" } else { "inferred" };
                let _ = writeln!(t, "- [states {mode}] {}", j.describe(o));
            }
        }
    }
    if listed == 0 {
        let _ = writeln!(t, "- none");
    }
    t
}
