//! The comparator's accuracy on generated mismatch scenarios (tests/scenario/mod.rs): healthy cooldowns,
//! same-state repeats and single faults on random lines whose truth departs from the nominal line file.
//! Prints the accuracy table as Markdown, and writes it with `--out`.
//!
//! ```sh
//! cargo run --release --example accuracy -- --healthy 300 --faults 300 --seed 1 [--out docs/accuracy.md]
//! cargo run --release --example accuracy -- --show fault:1500012     # replay one scenario
//! ```
//!
//! `--healthy N` no-fault cases (every fourth a cold -> cold repeat, the rest warm -> cold), `--faults N`
//! fault cases, `--seed S` the base of their seeds, `--threads N` (default: every core), `--worst N` how many
//! worst cases of each kind to list (default 6), `--cases F` a new file with one line per case (what happened,
//! states inferred and given), to set two builds side by side.

#[path = "common/dump.rs"]
mod dump;
#[path = "../tests/scenario/mod.rs"]
mod scenario;

use scenario::score::{
    confusion_table, evaluate, evaluate_all, kind_table, plan, table, Evaluated, Figures,
};
use scenario::Case;
use std::fmt::Write as _;
use std::path::PathBuf;
use std::time::Instant;

struct Args {
    healthy: usize,
    faults: usize,
    seed: u64,
    threads: usize,
    out: Option<PathBuf>,
    show: Option<(Case, u64)>,
    /// With `--show`: a new folder to write the nominal line file and both sweeps into.
    dump: Option<PathBuf>,
    worst: usize,
    /// A new file to write one line per case into (its name and what happened, states inferred and given),
    /// for comparing two builds case by case.
    cases: Option<PathBuf>,
}

const USAGE: &str =
    "usage: accuracy [--healthy N] [--faults N] [--seed S] [--threads N] [--out FILE.md] [--worst N] [--cases NEW_FILE] \
                     | --show CASE:SEED [--dump NEW_DIR]  (CASE healthy, repeat or fault; --dump writes line.toml, \
                     baseline.s1p and current.s1p for the command line)";

fn args() -> Result<Args, String> {
    let mut a = Args {
        healthy: 300,
        faults: 300,
        seed: 1,
        threads: std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1),
        out: None,
        show: None,
        dump: None,
        worst: 6,
        cases: None,
    };
    let mut it = std::env::args().skip(1);
    while let Some(flag) = it.next() {
        let mut value = || it.next().ok_or(format!("{flag} needs a value\n{USAGE}"));
        let num = |v: String| {
            v.parse::<u64>()
                .map_err(|e| format!("{flag} {v}: {e}\n{USAGE}"))
        };
        match flag.as_str() {
            "--healthy" => a.healthy = num(value()?)? as usize,
            "--faults" => a.faults = num(value()?)? as usize,
            "--seed" => a.seed = num(value()?)?,
            "--threads" => a.threads = num(value()?)?.max(1) as usize,
            "--out" => a.out = Some(PathBuf::from(value()?)),
            "--worst" => a.worst = num(value()?)? as usize,
            "--dump" => a.dump = Some(PathBuf::from(value()?)),
            "--cases" => a.cases = Some(PathBuf::from(value()?)),
            "--show" => {
                let v = value()?;
                let (c, s) = v
                    .split_once(':')
                    .ok_or(format!("--show takes CASE:SEED, got '{v}'"))?;
                let case = Case::parse(c).ok_or(format!("unknown case '{c}'\n{USAGE}"))?;
                let seed = s.parse::<u64>().map_err(|e| format!("--show {v}: {e}"))?;
                a.show = Some((case, seed));
            }
            "-h" | "--help" => return Err(USAGE.to_string()),
            other => return Err(format!("unknown argument '{other}'\n{USAGE}")),
        }
    }
    Ok(a)
}

/// Today's date (UTC) from the system clock, as YYYY-MM-DD: days since 1970-01-01 to the civil date
/// (H. Hinnant, "chrono-Compatible Low-Level Date Algorithms", civil_from_days).
fn today() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0) as i64;
    let z = secs.div_euclid(86_400) + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02}")
}

/// Print to standard output; a closed pipe (`| head`) is not an error.
fn emit(text: &str) {
    use std::io::Write as _;
    let _ = std::io::stdout().write_all(text.as_bytes());
}

fn show(case: Case, seed: u64, dump: Option<&std::path::Path>) {
    let e = evaluate(seed, case);
    let s = &e.scenario;
    let mut o = String::new();
    let _ = writeln!(o, "{}", s.describe());
    let _ = writeln!(
        o,
        "connector parasitics (both sweeps): {}",
        s.parasitics.join(", ")
    );
    let errors: Vec<String> = s
        .length_errors_m
        .iter()
        .map(|x| format!("{:+.2}", x * 1e3))
        .collect();
    let _ = writeln!(
        o,
        "length errors (as built - declared), mm: {}",
        errors.join(", ")
    );
    for given in [false, true] {
        let mode = if given {
            "states given"
        } else {
            "states inferred"
        };
        let _ = writeln!(o, "\n[{mode}] {}", e.what_happened(given));
    }
    if let Ok((b, c)) = s.sweeps() {
        if let Some(dir) = dump {
            if let Err(e) = dump::dump_case(dir, &s.nominal_text, &b, &c) {
                let _ = writeln!(o, "--dump {}: {e}", dir.display());
            }
        }
        if let Ok(r) = s.compare(&b, &c, false) {
            let _ = writeln!(o, "\nreport (states inferred):");
            o.push_str(&coldtrace::compare::text::render_compare(&r, true));
        }
    }
    let _ = writeln!(o, "\n--- nominal line file ---\n{}", s.nominal_text);
    let _ = writeln!(o, "--- truth line file ---\n{}", s.truth_text);
    emit(&o);
}

fn replay(e: &Evaluated) -> String {
    format!("`{}:{}`", e.scenario.case.name(), e.scenario.seed)
}

fn worst_cases(all: &[Evaluated], n: usize) -> String {
    let mut s = String::new();
    let section = |title: &str, mut v: Vec<(f64, &Evaluated, bool)>, n: usize, s: &mut String| {
        if v.is_empty() {
            return;
        }
        v.sort_by(|a, b| b.0.total_cmp(&a.0));
        let _ = writeln!(
            s,
            "\n**{title}** ({} in all; {} shown)\n",
            v.len(),
            v.len().min(n)
        );
        for (_, e, given) in v.into_iter().take(n) {
            let _ = writeln!(
                s,
                "- {} [{}]: {}",
                replay(e),
                if given {
                    "states given"
                } else {
                    "states inferred"
                },
                e.what_happened(given)
            );
        }
    };
    let errors: Vec<_> = all
        .iter()
        .flat_map(|e| [(e, false), (e, true)])
        .filter(|(e, g)| e.run(*g).error.is_some())
        .map(|(e, g)| (0.0, e, g))
        .collect();
    section("Runs that returned an error", errors, 20, &mut s);
    let alarms: Vec<_> = all
        .iter()
        .flat_map(|e| [(e, false), (e, true)])
        .filter(|(e, g)| e.false_alarm(*g))
        .map(|(e, g)| {
            let worst = e.run(g).alarms.iter().map(|a| a.4).fold(f64::MIN, f64::max);
            (worst, e, g)
        })
        .collect();
    section("False alarms (strongest first)", alarms, n, &mut s);
    let misses: Vec<_> = all
        .iter()
        .filter(|e| {
            e.scenario.fault.as_ref().is_some_and(|f| f.visible())
                && e.right_element(false) == Some(false)
        })
        .map(|e| (e.scenario.fault.as_ref().unwrap().level_db, e, false))
        .collect();
    section(
        "Faults over the noise not ranked first at their element, states inferred (clearest first)",
        misses,
        n,
        &mut s,
    );
    let far: Vec<_> = all
        .iter()
        .filter(|e| {
            e.scenario.fault.as_ref().is_some_and(|f| f.visible())
                && e.right_element(false) == Some(true)
        })
        .filter_map(|e| e.location_error_m(false).map(|x| (x, e, false)))
        .filter(|(x, _, _)| *x > 0.01)
        .collect();
    section(
        "Right element but over 1 cm off, states inferred (farthest first)",
        far,
        n.min(4).max(n / 2),
        &mut s,
    );
    let states: Vec<_> = all
        .iter()
        .filter(|e| e.scenario.fault.is_none() && !e.states_right(false))
        .map(|e| (0.0, e, false))
        .collect();
    section(
        "States inferred wrong on healthy lines and repeats",
        states,
        n.min(4).max(n / 2),
        &mut s,
    );
    s
}

fn main() {
    let a = match args() {
        Ok(a) => a,
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(2);
        }
    };
    if let Some((case, seed)) = a.show {
        show(case, seed, a.dump.as_deref());
        return;
    }
    let list = plan(a.seed, a.healthy, a.faults);
    let t0 = Instant::now();
    let all = evaluate_all(&list, a.threads);
    let took = t0.elapsed().as_secs_f64();
    if let Some(path) = &a.cases {
        let mut text = String::new();
        for e in &all {
            let _ = writeln!(
                text,
                "{}:{} | inferred: {} | given: {}",
                e.scenario.case.name(),
                e.scenario.seed,
                e.what_happened(false),
                e.what_happened(true)
            );
        }
        if let Err(err) = coldtrace::output::write_output(path, text.as_bytes(), false, &[]) {
            eprintln!("--cases {}: {err}", path.display());
            std::process::exit(2);
        }
    }
    let inferred = Figures::of(&all, false);
    let given = Figures::of(&all, true);

    let mut cmd = format!(
        "cargo run --release --example accuracy -- --healthy {} --faults {} --seed {}",
        a.healthy, a.faults, a.seed
    );
    if let Some(p) = &a.out {
        let _ = write!(cmd, " --out {}", p.display());
    }
    let mut md = String::new();
    let _ = writeln!(md, "# Comparator accuracy on generated scenarios\n");
    let _ = writeln!(
        md,
        "The comparator on real sweeps (a public cryostat campaign: warm against cold, terminations of one \
         cooldown, offset shorts, one standard across cooldowns) is measured in docs/accuracy-real.md, regenerated by `cargo run --release \
         --example real_campaign -- CAMPAIGN_DIR --out docs/accuracy-real.md` (CAMPAIGN_DIR: the dataset's \
         `campaign-1` folder, described in tests/data/real/README.md).\n"
    );
    let _ = writeln!(
        md,
        "Measured on {} with `{cmd}`: {} healthy warm -> cold cooldowns, {} cold -> cold repeats and {} single \
         faults ({} of them at least {} dB over the noise at their place), {:.0} s on {} thread(s).\n",
        today(),
        inferred.healthy_runs,
        inferred.repeat_runs,
        inferred.all_faults,
        inferred.visible_faults,
        scenario::VISIBLE_LEVEL_DB,
        took,
        a.threads
    );
    let _ = writeln!(
        md,
        "Each scenario (tests/scenario/mod.rs) is a random line of 2-8 cables between the stages, connectors, \
         0-2 attenuators and a far-end device; the comparator is given its nominal line file while the sweeps \
         are simulated from the truth: cable lengths up to 8 mm off, connectors of 48-53 ohm with 0-15 fF of \
         shunt capacitance the file does not describe, and cold physics perturbed (permittivity change x0.5-2, \
         contraction +/-20 %, surface resistance +/-30 %). Bands from 10 MHz-20 GHz to 0.5-10 GHz, 1601-4001 \
         points, noise -100 to -80 dB per point. Faults in the current sweep only: pin gaps of 5-50 fF with \
         and without a 20-500 ohm bridging contact and contacts of 0.5-10 ohm at a connector, crushes to 35-45 \
         ohm over 5-10 mm inside a cable, opens at either. A false alarm is any finding above `info` on a line \
         with no fault; a fault's element is right when the rank-1 finding lies in it (for a fault at a \
         connector: names it as its element, or as its nearest connector from within a main lobe and the length \
         error of it). A fault's level over the noise is its echo as the port sees it: the truth simulated \
         without noise in the current state with and without the fault, the band-pass trace of the difference \
         at its largest within four resolution cells of the fault's delay, over the band-pass trace's noise RMS \
         (the truth's own loss and mismatches, and a fault's effect on a device's echo beside it, count). The earlier measure, a lumped estimate (the fault's |rho| at \
         band centre less the nominal model's round-trip loss to it), is kept in its own row.\n"
    );
    let _ = writeln!(md, "{}", table(&inferred, &given));
    let _ = writeln!(
        md,
        "Fault kinds, faults over the noise, states inferred: the true kind against the rank-1 finding's kind \
         (`none`: no finding).\n"
    );
    let _ = writeln!(md, "{}", confusion_table(&inferred));
    let _ = writeln!(
        md,
        "Faults over the noise ranked first at their element (of all such faults), states inferred, by true kind \
         and the pair's true states; a fault at the joint in front of a far end that reflects {} or more is \
         counted apart (docs/method.md, \"Where the comparator cannot tell\").\n",
        scenario::END_REFLECTION
    );
    let _ = writeln!(md, "{}", kind_table(&inferred));
    let _ = writeln!(
        md,
        "## Worst cases\n\nReplay any of them with `cargo run --release --example accuracy -- --show CASE:SEED` \
         (the scenario, both line files and the report)."
    );
    md.push_str(&worst_cases(&all, a.worst));
    emit(&md);
    if let Some(p) = &a.out {
        // Sections other programs keep in the same page (the history's trend rule) stay as they were.
        if let Ok(old) = std::fs::read_to_string(p) {
            md.push_str(&foreign_sections(&old, &md));
        }
        if let Err(e) = coldtrace::output::write_output(p, md.as_bytes(), true, &[]) {
            eprintln!("coldtrace accuracy: {e}");
            std::process::exit(2);
        }
        eprintln!("wrote {}", p.display());
    }
}

/// The part of `old` from its first `## ` section that `new` does not have, to the end (with a blank line in
/// front); empty when it has none.
fn foreign_sections(old: &str, new: &str) -> String {
    let mut at = 0;
    for line in old.split_inclusive('\n') {
        if line.starts_with("## ") && !new.contains(line.trim_end()) {
            return format!("\n{}", &old[at..]);
        }
        at += line.len();
    }
    String::new()
}
