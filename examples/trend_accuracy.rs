//! The trend rule measured with the simulator (tests/trend): how often a degrading connector warns at
//! least two cooldowns before its finding reaches major, and how many lines whose connectors are only
//! re-made warn. Prints the Markdown section of docs/accuracy.md.
//!
//! ```sh
//! cargo run --release --example trend_accuracy -- --healthy 120 --degrading 60 --seed 3 --into docs/accuracy.md
//! cargo run --release --example trend_accuracy -- --show 9501:healthy      # one line, cooldown by cooldown
//! cargo run --release --example trend_accuracy -- --rule 6,4,0.05,1,8,2,3 ...  # other rule parameters
//! ```

#[path = "common/section.rs"]
mod section;
#[path = "../tests/trend/mod.rs"]
mod trend;

use coldtrace::history::TrendRule;
use trend::{figures, run_all, run_line, Degradation, LineRun};

fn usage() -> ! {
    eprintln!(
        "usage: trend_accuracy [--healthy N] [--degrading N] [--seed S] [--threads T] [--into FILE.md] \
         [--rule WINDOW,MIN_POINTS,ALPHA,MIN_SLOPE_DB,MIN_RISE_DB,MIN_REFERENCE,MIN_EXCESS_DB] [--show SEED:healthy|gap|contact]"
    );
    std::process::exit(2)
}

fn parse_rule(s: &str) -> TrendRule {
    let v: Vec<&str> = s.split(',').collect();
    if v.len() != 7 {
        usage()
    }
    let n = |i: usize| v[i].parse::<f64>().unwrap_or_else(|_| usage());
    TrendRule {
        window: n(0) as usize,
        min_points: n(1) as usize,
        alpha: n(2),
        min_slope_db: n(3),
        min_rise_db: n(4),
        min_reference: n(5) as usize,
        min_excess_db: n(6),
    }
}

fn kind(s: &str) -> Option<Degradation> {
    match s {
        "healthy" => None,
        "gap" => Some(Degradation::Gap),
        "contact" => Some(Degradation::Contact),
        _ => usage(),
    }
}

fn show(r: &LineRun) {
    println!("{}", r.describe());
    for (c, v) in &r.series {
        let vals: Vec<String> = v.iter().map(|x| format!("{x:.1}")).collect();
        println!("  {c:>12}: {}", vals.join(" "));
    }
    let sev: Vec<&str> = r
        .severities
        .iter()
        .map(|s| s.map_or("-", |s| s.name()))
        .collect();
    println!("  {:>12}: {}", "severity", sev.join(" "));
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let (mut healthy, mut degrading, mut seed) = (120usize, 60usize, 1u64);
    let mut threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let mut rule = TrendRule::default();
    let mut into: Option<String> = None;
    let mut i = 0;
    while i < args.len() {
        let val = || args.get(i + 1).cloned().unwrap_or_else(|| usage());
        match args[i].as_str() {
            "--healthy" => healthy = val().parse().unwrap_or_else(|_| usage()),
            "--degrading" => degrading = val().parse().unwrap_or_else(|_| usage()),
            "--seed" => seed = val().parse().unwrap_or_else(|_| usage()),
            "--threads" => threads = val().parse().unwrap_or_else(|_| usage()),
            "--rule" => rule = parse_rule(&val()),
            "--into" => into = Some(val()),
            "--show" => {
                let v = val();
                let (s, k) = v.split_once(':').unwrap_or_else(|| usage());
                show(&run_line(
                    s.parse().unwrap_or_else(|_| usage()),
                    kind(k),
                    &rule,
                ));
                return;
            }
            _ => usage(),
        }
        i += 2;
    }
    let base = seed * 100_000;
    let mut jobs: Vec<(u64, Option<Degradation>)> = (0..degrading as u64)
        .map(|i| {
            let d = if i % 2 == 0 {
                Degradation::Gap
            } else {
                Degradation::Contact
            };
            (base + i, Some(d))
        })
        .collect();
    jobs.extend((0..healthy as u64).map(|i| (base + 50_000 + i, None)));
    let t = std::time::Instant::now();
    let runs = run_all(&jobs, &rule, threads);
    let elapsed = t.elapsed();
    for r in runs.iter().filter(|r| {
        !r.false_warnings.is_empty()
            || (r.degradation.is_some() && r.lead().map_or(true, |l| l < 2))
    }) {
        eprintln!("{}", r.describe());
    }
    let by = |d: Degradation| -> Vec<LineRun> {
        runs.iter()
            .filter(|r| r.degradation == Some(d))
            .cloned()
            .collect()
    };
    let all = figures(&runs);
    let mut out = String::new();
    out.push_str(&format!("{SECTION}\n\n"));
    out.push_str(&format!(
        "Measured with `cargo run --release --example trend_accuracy -- --healthy {healthy} --degrading \
         {degrading} --seed {seed}` ({} lines in {:.0} s on {threads} threads). Rule: window {}, at least {} \
         values, Mann-Kendall one-sided p <= {}, Theil-Sen slope >= {} dB per cooldown, rise over the \
         median of at least {} earlier values >= {} dB and over every earlier value >= {} dB, latest value \
         over the detection floor \
         (docs/history.md). Lines: {}\n\n",
        runs.len(),
        elapsed.as_secs_f64(),
        rule.window,
        rule.min_points,
        rule.alpha,
        rule.min_slope_db,
        rule.min_reference,
        rule.min_rise_db,
        rule.min_excess_db,
        LINES_TEXT
    ));
    out.push_str("| lines | count | finding reached major | warned >= 2 cooldowns before major | finding reached minor | warned by then | warned at all | lines with a warning on another connector |\n");
    out.push_str("|---|---:|---:|---:|---:|---:|---:|---:|\n");
    for d in [Degradation::Gap, Degradation::Contact] {
        let f = figures(&by(d));
        out.push_str(&format!(
            "| degrading, {} | {} | {} | {} of {} | {} | {} of {} | {} | {} |\n",
            d.name(),
            f.degrading,
            f.reached_major,
            f.warned_two_before,
            f.reached_major,
            f.reached_minor,
            f.warned_by_minor,
            f.reached_minor,
            f.warned,
            f.degrading_false
        ));
    }
    out.push_str(&format!(
        "| healthy, {} cooldowns each | {} | - | - | - | - | - | {} |\n",
        trend::HEALTHY_CYCLES,
        all.healthy,
        all.healthy_warned
    ));
    out.push_str(NOTE);
    match into {
        Some(path) => {
            let old = std::fs::read_to_string(&path).unwrap_or_default();
            std::fs::write(&path, section::replace_section(&old, SECTION, &out))
                .expect("the Markdown file is writable");
        }
        None => print!("{out}"),
    }
}

/// What the figures mean and how the rule's parameters were chosen (kept with the table).
const NOTE: &str = "\nThe rule's parameters were chosen on seeds 1-3 of this program (there, a 6 dB rise let one \
healthy line in 120 warn, and a connector whose own mismatch and re-made parasitic add or cancel, reading in \
two modes several dB apart, warned until the rule asked for a value out of the connector's own past range). \
Seed 4 then showed two healthy lines warning at such a connector's first visit to a level it had not shown \
before (levels up to 20 dB apart), and the rule was made to ask for the last two values out of the past \
range; the figures above are of seed 4 since. Seed 5, run once afterwards (`--seed 5`, same counts), is the \
figure out of sample: 2 of 150 healthy lines warned; every gap warned at least 2 cooldowns before major (30 \
of 30); contacts warned by minor on 12 of 30 lines and at all on 24. A 5 ohm contact costs about 0.4 dB \
(rho = R / (2 Z0 + R), |S21| = 1 - rho: circuit theory), so no contact line reaches major, and a contact that \
climbs slowly past a connector's re-made scatter warns late or not within the run. Warnings on another \
connector of a degrading line are listed on standard error (replay each with --show): at the connector behind \
an opening gap once the gap's own finding was major or critical, its echo then riding on the gap's.\n";

/// The heading of the section this program writes.
const SECTION: &str = "## Trend rule (history trend)";

/// What the simulated lines are (tests/trend/mod.rs).
const LINES_TEXT: &str = "the demo line north-fridge/in-07 simulated cold at 1601 points over 0.5-10 GHz, \
noise -85 dB per point; each connector in front of the attenuator (feedthrough, J2, J3) carries a shunt \
capacitance of its own (10-40 fF) moved by up to +-2 dB at every cooldown (a re-made connector). Degrading \
lines: 3-5 such cooldowns, then over 6-10 cooldowns J2 or J3 degrades: a contact growing geometrically from \
0.3 to 5 ohm, or a gap opening step by step (series capacitance 10 pF down to 0.2 pF); each cooldown is \
compared with the first (as `history record` does against a baseline) for the severity at the connector. \
Healthy lines: 20 cooldowns of re-made connectors. The rule runs after every cooldown on the records so far; \
a warning elsewhere is one on a connector that is not degrading (on a gap line, typically the connector behind \
the opening gap once the gap is major).";
