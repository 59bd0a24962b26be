//! Healthy generated cooldowns (tests/scenario/mod.rs) swept through an amplifier in front of the line: how
//! often the comparator raises a finding above info when only the amplifier's gain changed. Prints a
//! Markdown section, and writes it into a page with `--into` (replacing its own section, keeping the rest).
//!
//! ```sh
//! cargo run --release --example amplified_accuracy -- --healthy 200 --seed 9 --into docs/accuracy.md
//! cargo run --release --example amplified_accuracy -- --show 9000022:flat   # one line, one gain, the report
//! ```
//!
//! Each healthy scenario's warm and cold sweeps are multiplied by a round-trip gain (invented figures for
//! the test: 36 dB warm, 40 dB cold, as a cold amplifier's gain rises on cooling). Three shapes of gain:
//! - `flat`: flat, tilted by -1 dB (warm) and -1.5 dB (cold) across the band;
//! - `band`: the same, with a roll-off outside the middle 60 % of the band (an eighth-order edge) whose
//!   width grows 5 % on cooling;
//! - `ripple`: the same as `flat` with a ripple of 0.5 dB of period 700 MHz whose phase moves by 1.3 rad on
//!   cooling (a standing wave between the amplifier and a cable), which the comparator does not model.

#[path = "common/dump.rs"]
mod dump;
#[path = "../tests/scenario/mod.rs"]
mod scenario;
#[path = "common/section.rs"]
mod section;

use coldtrace::compare::CompareReport;
use scenario::{Case, Scenario};
use std::f64::consts::PI;

const USAGE: &str = "usage: amplified_accuracy [--healthy N] [--seed S] [--into FILE.md] | --show SEED:SHAPE \
                     [--declared] [--dump NEW_DIR]  (--declared: the line file declares the gain; --dump writes \
                     line.toml, baseline.s1p and current.s1p, as swept through the gain, for the command line)";

/// The heading of the section this program writes.
const SECTION: &str = "## Amplified lines (gain in the path)";

/// The gain's shapes.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Shape {
    Flat,
    Band,
    Ripple,
}

impl Shape {
    const ALL: [Shape; 3] = [Shape::Flat, Shape::Band, Shape::Ripple];

    fn name(self) -> &'static str {
        match self {
            Shape::Flat => "flat",
            Shape::Band => "band",
            Shape::Ripple => "ripple",
        }
    }

    fn what(self) -> &'static str {
        match self {
            Shape::Flat => "flat gain, tilted",
            Shape::Band => "band-limited gain whose edges move",
            Shape::Ripple => "gain ripple that moves (not modelled)",
        }
    }
}

/// `n` as swept through the amplifier in `warm` or cold state.
fn through(n: coldtrace::Network, shape: Shape, warm: bool) -> coldtrace::Network {
    let (gain, tilt) = if warm { (36.0, -1.0) } else { (40.0, -1.5) };
    scenario::through_gain(n, |f, u| {
        gain + tilt * u
            + match shape {
                Shape::Flat => 0.0,
                // The middle 60 % of the band (u from 0.2 to 0.8), wider by 5 % cold.
                Shape::Band => {
                    let x = (u - 0.5) / (0.3 * if warm { 1.0 } else { 1.05 });
                    -10.0 * (1.0 + x.powi(8)).log10()
                }
                Shape::Ripple => 0.5 * (2.0 * PI * f / 700e6 + if warm { 0.0 } else { 1.3 }).sin(),
            }
    })
}

/// Whether a sweep returns more power than a passive line can (the amplifier shows in the data).
fn reads_above_total(n: &coldtrace::Network) -> bool {
    use coldtrace::compare::sweep::{returned_power_db, PASSIVE_POWER_LIMIT_DB};
    returned_power_db(&n.s11()) > PASSIVE_POWER_LIMIT_DB
}

/// The comparison of healthy scenario `seed` through `shape`, states given or inferred, with the line file
/// declaring the gain (`gain_in_path = true`) or not, and whether the amplifier shows in either sweep.
fn run(
    seed: u64,
    shape: Shape,
    given: bool,
    declared: bool,
) -> (Scenario, bool, Result<CompareReport, String>) {
    let mut s = Scenario::generate(seed, Case::Healthy);
    s.nominal.gain_in_path = declared;
    let mut shows = false;
    let r = s.sweeps().and_then(|(b, c)| {
        let (b, c) = (through(b, shape, true), through(c, shape, false));
        shows = reads_above_total(&b) || reads_above_total(&c);
        s.compare(&b, &c, given).map_err(|e| e.to_string())
    });
    (s, shows, r)
}

fn alarm(r: &CompareReport) -> Option<String> {
    scenario::score::alarm_lines(r).into_iter().next()
}

fn main() {
    let mut healthy = 200u64;
    let mut seed = 9u64;
    let mut into: Option<String> = None;
    let mut show: Option<(u64, Shape)> = None;
    let mut declared = false;
    let mut dump: Option<std::path::PathBuf> = None;
    let mut it = std::env::args().skip(1);
    while let Some(flag) = it.next() {
        let mut val = || {
            it.next().unwrap_or_else(|| {
                eprintln!("{flag} needs a value\n{USAGE}");
                std::process::exit(2)
            })
        };
        match flag.as_str() {
            "--healthy" => healthy = val().parse().expect("--healthy takes a count"),
            "--seed" => seed = val().parse().expect("--seed takes a number"),
            "--into" => into = Some(val()),
            "--declared" => declared = true,
            "--dump" => dump = Some(val().into()),
            "--show" => {
                let v = val();
                let (s, k) = v.split_once(':').unwrap_or((&v, "flat"));
                let shape = Shape::ALL.into_iter().find(|x| x.name() == k);
                match (s.parse::<u64>(), shape) {
                    (Ok(s), Some(k)) => show = Some((s, k)),
                    _ => {
                        eprintln!("--show takes SEED:SHAPE (flat, band or ripple), got '{v}'");
                        std::process::exit(2)
                    }
                }
            }
            _ => {
                eprintln!("{USAGE}");
                std::process::exit(2)
            }
        }
    }
    if let Some((s, shape)) = show {
        let (sc, shows, r) = run(s, shape, true, declared);
        println!("{}", sc.describe());
        if let Some(dir) = dump {
            let mut line = sc.nominal_text.clone();
            if declared {
                line = format!("gain_in_path = true\n{line}");
            }
            let swept = sc.sweeps().and_then(|(b, c)| {
                let (b, c) = (through(b, shape, true), through(c, shape, false));
                dump::dump_case(&dir, &line, &b, &c)
            });
            if let Err(e) = swept {
                println!("--dump {}: {e}", dir.display());
            }
        }
        println!("  the amplifier shows in the data (more power returned than sent): {shows}");
        match r {
            Ok(r) => println!("{}", coldtrace::compare::text::render_compare(&r, true)),
            Err(e) => println!("error: {e}"),
        }
        return;
    }
    let mut out = format!("{SECTION}\n\n");
    out.push_str(&format!(
        "Measured with `cargo run --release --example amplified_accuracy -- --healthy {healthy} --seed {seed} \
         --into docs/accuracy.md`: {healthy} healthy warm -> cold cooldowns of the scenario generator (seeds \
         {seed}000000 on), each swept through a round-trip gain of 36 dB warm and 40 dB cold, tilted by -1 and -1.5 dB across the band; the gain's shapes are described in \
         examples/amplified_accuracy.rs. A false alarm is any finding above info. Where a sweep returns more \
         power than it was sent (band-averaged, by 3 dB), the amplifier shows in the data: the sweeps are read scaled down to a passive line's \
         and the gain's change is fitted as a level change (docs/method.md, \"Gain in the path\"). On a line \
         matched well enough that even 40 dB of gain returns less, the power does not tell that an amplifier is \
         there; those lines are counted apart (the gain hidden), and the amplifier shows there only where both \
         sweeps show every joint of the line file they see (all but one of three or more), two at least, at \
         0.1 or more, or where the line file declares it (`gain_in_path = true`, docs/line-file.md): the last \
         column runs the hidden-gain lines again with that declaration.\n\n"
    ));
    out.push_str(
        "| gain | lines whose sweeps return more power than a passive line (3 dB) | false alarms among them, states given | \
         the same, states inferred | false alarms on the other lines (the gain hidden), given / inferred | \
         runs that returned an error | the gain hidden, declared in the line file: false alarms, given / \
         inferred |\n|---|---|---|---|---|---|---|\n",
    );
    let mut listed = Vec::new();
    for shape in Shape::ALL {
        let (mut bad, mut hidden_bad, mut declared_bad, mut shown, mut errors) =
            ([0usize; 2], [0usize; 2], [0usize; 2], 0usize, 0usize);
        for i in 0..healthy {
            let s = seed * 1_000_000 + i;
            for (k, given) in [true, false].into_iter().enumerate() {
                let (_, shows, r) = run(s, shape, given, false);
                if given && shows {
                    shown += 1;
                }
                if !shows {
                    // The same line, its file declaring the amplifier.
                    match run(s, shape, given, true).2 {
                        Ok(r) => {
                            if let Some(a) = alarm(&r) {
                                declared_bad[k] += 1;
                                listed.push(format!(
                                    "- `{s}:{}` [states {}; the gain hidden, declared]: {a}",
                                    shape.name(),
                                    if given { "given" } else { "inferred" },
                                ));
                            }
                        }
                        Err(e) => {
                            errors += 1;
                            eprintln!("{s}:{} (declared): {e}", shape.name());
                        }
                    }
                }
                match r {
                    Ok(r) => {
                        if let Some(a) = alarm(&r) {
                            if shows {
                                bad[k] += 1;
                            } else {
                                hidden_bad[k] += 1;
                            }
                            listed.push(format!(
                                "- `{s}:{}` [states {}{}]: {a}",
                                shape.name(),
                                if given { "given" } else { "inferred" },
                                if shows { "" } else { "; the gain hidden" }
                            ));
                        }
                    }
                    Err(e) => {
                        errors += 1;
                        eprintln!("{s}:{}: {e}", shape.name());
                    }
                }
            }
        }
        out.push_str(&format!(
            "| {} (`{}`) | {shown} of {healthy} | {} ({}/{shown}) | {} ({}/{shown}) | {} / {} of {} | {errors} of {} | {} / {} of {} |\n",
            shape.what(),
            shape.name(),
            percent(bad[0], shown as u64),
            bad[0],
            percent(bad[1], shown as u64),
            bad[1],
            hidden_bad[0],
            hidden_bad[1],
            healthy - shown as u64,
            2 * healthy + 2 * (healthy - shown as u64),
            declared_bad[0],
            declared_bad[1],
            healthy - shown as u64,
        ));
    }
    if !listed.is_empty() {
        out.push_str(
            "\nThe false alarms (replay one with `cargo run --release --example amplified_accuracy -- --show \
             SEED:SHAPE`):\n\n",
        );
        out.push_str(&listed.join("\n"));
        out.push('\n');
    }
    match into {
        Some(path) => {
            let old = std::fs::read_to_string(&path).unwrap_or_default();
            std::fs::write(&path, section::replace_section(&old, SECTION, &out))
                .expect("the Markdown file is writable");
            eprintln!("wrote {path}");
        }
        None => print!("{out}"),
    }
}

fn percent(k: usize, n: u64) -> String {
    format!("{:.1} %", 100.0 * k as f64 / n.max(1) as f64)
}
