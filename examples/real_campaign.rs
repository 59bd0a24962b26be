//! The comparator on a whole real campaign: every pair the four checks of `tests/common/real_campaign.rs`
//! apply to, as Markdown tables (one per check, with a summary first).
//!
//! ```sh
//! cargo run --release --example real_campaign -- CAMPAIGN_DIR [--out FILE.md] [--force] [--only SUBSTRING]
//! ```
//!
//! `--only SUBSTRING` keeps only the pairs one of whose sweeps, named `TEMPERATURE/STEM` (`3k/port2_MOS4`),
//! contains SUBSTRING (`--only port2_`, `--only 3k/port6_MOS4`), to rerun a few pairs quickly; the summary then
//! counts those pairs only.
//!
//! `CAMPAIGN_DIR` holds `295k/` and `3k/`, each with the campaign's `.s1p` files (`ecal_{short,open,load}_X`
//! for cooldowns X = A..F, `portP_MOSm` for ports P = 1..6 and standards m = 1..6; see
//! tests/data/real/campaign-1/README.md). The pairs:
//!
//! - cooldown: each file at 295 K against the same file at ~3 K;
//! - far end: at each temperature, the switch-board standards of one cooldown against each other, and one
//!   port's six standards against each other (the README counts one port's standards against each other among
//!   the terminations that differ only at the far end);
//! - repeat: at each temperature, each switch-board standard of one cooldown against the same standard of
//!   the next cooldown (A -> B, ..., E -> F);
//! - air line: at each temperature, each port's offset shorts `MOS2`..`MOS5` against its flush short `MOS1`,
//!   compared both ways.
//!
//! A pair the comparator fails on (an error, or a panic) is a failure row with the message; the program itself
//! never panics. Exit code 0 when every pair passes, 1 when some fail, 2 on bad usage or an unwritable output.

#[path = "../tests/common/real_campaign.rs"]
mod checks;

use checks::{FarEnd, FarRegion, OffsetMove};
use coldtrace::compare::{CompareReport, Severity};
use coldtrace::Network;
use std::collections::HashMap;
use std::fmt::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

/// The two temperatures' folders, baseline first in the cooldown check.
const TEMPERATURES: [&str; 2] = ["295k", "3k"];

struct Args {
    dir: PathBuf,
    out: Option<PathBuf>,
    force: bool,
    only: Option<String>,
}

fn parse_args() -> Result<Args, String> {
    let mut dir = None;
    let mut out = None;
    let mut force = false;
    let mut only = None;
    let mut it = std::env::args().skip(1);
    while let Some(a) = it.next() {
        match a.as_str() {
            "--out" => out = Some(PathBuf::from(it.next().ok_or("--out needs a file name")?)),
            "--force" => force = true,
            "--only" => only = Some(it.next().ok_or("--only needs a substring")?),
            _ if a.starts_with("--") => return Err(format!("unknown flag {a}")),
            _ if dir.is_none() => dir = Some(PathBuf::from(a)),
            _ => return Err(format!("unexpected argument {a}")),
        }
    }
    Ok(Args {
        dir: dir.ok_or("give the campaign folder (holding 295k/ and 3k/)")?,
        out,
        force,
        only,
    })
}

/// File stems of the `.s1p` files in `dir`, sorted.
fn stems(dir: &Path) -> Result<Vec<String>, String> {
    let rd = std::fs::read_dir(dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let mut v: Vec<String> = rd
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "s1p"))
        .filter_map(|p| p.file_stem().map(|s| s.to_string_lossy().into_owned()))
        .collect();
    v.sort();
    Ok(v)
}

/// One sweep: (temperature folder, file stem).
type Key = (&'static str, String);

/// The campaign's sweeps, their far-end echoes and the comparisons already run.
struct Campaign {
    dir: PathBuf,
    networks: HashMap<Key, Result<Network, String>>,
    far_ends: HashMap<Key, Result<FarEnd, String>>,
    reports: HashMap<(Key, Key), Result<CompareReport, String>>,
    inputs: Vec<PathBuf>,
    done: usize,
    total: usize,
    started: Instant,
}

/// Run `f`, turning a panic into its message.
fn guarded<T>(f: impl FnOnce() -> Result<T, String>) -> Result<T, String> {
    std::panic::catch_unwind(std::panic::AssertUnwindSafe(f))
        .unwrap_or_else(|_| Err("panic (message on standard error)".into()))
}

impl Campaign {
    /// Read a sweep once.
    fn load(&mut self, k: &Key) {
        if !self.networks.contains_key(k) {
            let path = self.dir.join(k.0).join(format!("{}.s1p", k.1));
            self.inputs.push(path.clone());
            let n = guarded(|| checks::read(&path));
            self.networks.insert(k.clone(), n);
        }
    }

    fn network(&mut self, k: &Key) -> Result<&Network, String> {
        self.load(k);
        match &self.networks[k] {
            Ok(n) => Ok(n),
            Err(e) => Err(e.clone()),
        }
    }

    fn far_end(&mut self, k: &Key) -> Result<FarEnd, String> {
        if !self.far_ends.contains_key(k) {
            let fe = match self.network(k) {
                Ok(n) => guarded(|| checks::far_end(n)),
                Err(e) => Err(e),
            };
            self.far_ends.insert(k.clone(), fe);
        }
        self.far_ends[k].clone()
    }

    fn report(&mut self, b: &Key, c: &Key) -> Result<&CompareReport, String> {
        let key = (b.clone(), c.clone());
        if !self.reports.contains_key(&key) {
            let t = Instant::now();
            self.load(b);
            self.load(c);
            let r = match (&self.networks[b], &self.networks[c]) {
                (Ok(nb), Ok(nc)) => {
                    let (bn, cn) = (format!("{}/{}", b.0, b.1), format!("{}/{}", c.0, c.1));
                    checks::compare_pair((&bn, nb), (&cn, nc)).map(|mut r| {
                        // Traces for plots are not needed here; keep the memory of some 300 reports small.
                        r.plot = Default::default();
                        r
                    })
                }
                (Err(e), _) | (_, Err(e)) => Err(e.clone()),
            };
            self.done += 1;
            eprintln!(
                "[{}/{} {:.0} s] {}/{} -> {}/{}: {} ({:.1} s)",
                self.done,
                self.total,
                self.started.elapsed().as_secs_f64(),
                b.0,
                b.1,
                c.0,
                c.1,
                if r.is_ok() { "compared" } else { "failed" },
                t.elapsed().as_secs_f64()
            );
            self.reports.insert(key.clone(), r);
        }
        match &self.reports[&key] {
            Ok(r) => Ok(r),
            Err(e) => Err(e.clone()),
        }
    }
}

/// A table cell: no pipes or line breaks.
fn cell(s: &str) -> String {
    s.replace('|', "\\|").replace('\n', " ")
}

fn pass(r: &Result<(), String>) -> &'static str {
    if r.is_ok() {
        "pass"
    } else {
        "**FAIL**"
    }
}

/// The worst finding above info (highest severity, then best rank), if any.
fn worst(r: &CompareReport) -> String {
    r.findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .max_by(|a, b| a.severity.cmp(&b.severity).then(b.rank.cmp(&a.rank)))
        .map_or("none".into(), checks::describe)
}

fn rank1(r: &CompareReport) -> String {
    checks::top(r).map_or("none".into(), checks::describe)
}

fn length_change(r: &CompareReport) -> String {
    format!("{:+.3} %", 100.0 * r.alignment.electrical_length_change)
}

/// Counts of one check: pairs, passes, and pairs the comparator could not run.
#[derive(Default)]
struct Tally {
    pairs: usize,
    passed: usize,
    errors: usize,
}

impl Tally {
    fn add(&mut self, ok: bool, error: bool) {
        self.pairs += 1;
        self.passed += ok as usize;
        self.errors += error as usize;
    }
}

/// The pairs of each check: (baseline, current).
struct Pairs {
    cooldown: Vec<(Key, Key)>,
    far_end: Vec<(Key, Key)>,
    repeat: Vec<(Key, Key)>,
    air_line: Vec<(Key, Key, f64)>,
}

impl Pairs {
    /// Only the pairs one of whose sweeps (`TEMPERATURE/STEM`) contains `only`.
    fn keep(mut self, only: &str) -> Pairs {
        let hit = |k: &Key| format!("{}/{}", k.0, k.1).contains(only);
        self.cooldown.retain(|(b, c)| hit(b) || hit(c));
        self.far_end.retain(|(b, c)| hit(b) || hit(c));
        self.repeat.retain(|(b, c)| hit(b) || hit(c));
        self.air_line.retain(|(b, c, _)| hit(b) || hit(c));
        self
    }
}

fn pairs(warm: &[String], cold: &[String]) -> Pairs {
    let cooldown = warm
        .iter()
        .filter(|n| cold.contains(n))
        .map(|n| (("295k", n.clone()), ("3k", n.clone())))
        .collect();
    let mut far_end = Vec::new();
    let mut repeat = Vec::new();
    let mut air_line = Vec::new();
    for (t, names) in TEMPERATURES.iter().zip([warm, cold]) {
        let has = |n: &str| names.iter().any(|x| x == n);
        let key = |n: &str| (*t, n.to_string());
        for s in ["open", "short", "load"] {
            for (x, y) in ('A'..='E').zip('B'..='F') {
                let (b, c) = (format!("ecal_{s}_{x}"), format!("ecal_{s}_{y}"));
                if has(&b) && has(&c) {
                    repeat.push((key(&b), key(&c)));
                }
            }
        }
        for x in 'A'..='F' {
            let group: Vec<String> = ["open", "short", "load"]
                .iter()
                .map(|s| format!("ecal_{s}_{x}"))
                .filter(|n| has(n))
                .collect();
            for i in 0..group.len() {
                for j in i + 1..group.len() {
                    far_end.push((key(&group[i]), key(&group[j])));
                }
            }
        }
        for p in 1..=6 {
            let group: Vec<String> = (1..=6)
                .map(|m| format!("port{p}_MOS{m}"))
                .filter(|n| has(n))
                .collect();
            for i in 0..group.len() {
                for j in i + 1..group.len() {
                    far_end.push((key(&group[i]), key(&group[j])));
                }
            }
            let flush = format!("port{p}_MOS1");
            for n in &group {
                if let (true, Some(mm)) = (has(&flush), checks::offset_short_mm(n)) {
                    air_line.push((key(&flush), key(n), mm));
                }
            }
        }
    }
    Pairs {
        cooldown,
        far_end,
        repeat,
        air_line,
    }
}

/// One row of a check that asks a healthy pair for quiet: `lead` (the pair's own cells), the result, the
/// states, the worst finding above info, the electrical length change and why it failed.
fn quiet_row(
    camp: &mut Campaign,
    b: &Key,
    c: &Key,
    lead: &str,
    check: fn(&CompareReport) -> Result<(), String>,
    t: &mut Tally,
) -> String {
    match camp.report(b, c) {
        Ok(r) => {
            let ok = check(r);
            t.add(ok.is_ok(), false);
            format!(
                "| {lead} | {} | {} | {} | {} | {} |",
                pass(&ok),
                checks::states(r),
                worst(r),
                length_change(r),
                cell(ok.err().as_deref().unwrap_or(""))
            )
        }
        Err(e) => {
            t.add(false, true);
            format!("| {lead} | **FAIL** | | | | {} |", cell(&e))
        }
    }
}

fn run(args: &Args) -> Result<(String, bool, Vec<PathBuf>), String> {
    let warm = stems(&args.dir.join("295k"))?;
    let cold = stems(&args.dir.join("3k"))?;
    let mut pairs = pairs(&warm, &cold);
    if let Some(only) = &args.only {
        pairs = pairs.keep(only);
    }
    if pairs.cooldown.is_empty()
        && pairs.far_end.is_empty()
        && pairs.repeat.is_empty()
        && pairs.air_line.is_empty()
    {
        return Err(format!(
            "{}: no pair of sweeps found (expected 295k/ and 3k/ with .s1p files)",
            args.dir.display()
        ));
    }
    let mut camp = Campaign {
        dir: args.dir.clone(),
        networks: HashMap::new(),
        far_ends: HashMap::new(),
        reports: HashMap::new(),
        inputs: Vec::new(),
        done: 0,
        // The air-line pairs are far-end pairs already; their reverse is new.
        total: pairs.cooldown.len()
            + pairs.far_end.len()
            + pairs.repeat.len()
            + pairs.air_line.len(),
        started: Instant::now(),
    };
    let name = |k: &Key| format!("`{}`", k.1);

    // (a) Cooldown.
    let mut a = String::new();
    let mut ta = Tally::default();
    a.push_str(
        "| pair (295k -> 3k) | result | states | worst finding above info | electrical length change | why |\n\
         |---|---|---|---|---|---|\n",
    );
    for (b, c) in &pairs.cooldown {
        let row = quiet_row(&mut camp, b, c, &name(b), checks::check_cooldown, &mut ta);
        a.push_str(&row);
        a.push('\n');
    }

    // (b) Far end.
    let mut bt = String::new();
    let mut tb = Tally::default();
    bt.push_str(
        "| temperature | baseline | current | far end | result | states | rank 1 | worst finding above info \
         | electrical length change | why |\n|---|---|---|---|---|---|---|---|---|---|\n",
    );
    for (b, c) in &pairs.far_end {
        let mut ends = Vec::new();
        let mut end_err = None;
        for k in [b, c] {
            if checks::reflects(&k.1) {
                match camp.far_end(k) {
                    Ok(e) => ends.push(e),
                    Err(e) => end_err = Some(e),
                }
            }
        }
        let region = FarRegion::around(&ends);
        let row = match (camp.report(b, c), region, end_err) {
            (Ok(r), Some(region), None) => {
                let ok = checks::check_far_end(r, &region);
                tb.add(ok.is_ok(), false);
                format!(
                    "| {} | {} | {} | {:.4}..{:.4} m | {} | {} | {} | {} | {} | {} |",
                    b.0,
                    name(b),
                    name(c),
                    region.start_m,
                    region.end_m,
                    pass(&ok),
                    checks::states(r),
                    rank1(r),
                    worst(r),
                    length_change(r),
                    cell(ok.err().as_deref().unwrap_or(""))
                )
            }
            (Err(e), _, _) => {
                tb.add(false, true);
                format!(
                    "| {} | {} | {} | | **FAIL** | | | | | {} |",
                    b.0,
                    name(b),
                    name(c),
                    cell(&e)
                )
            }
            (Ok(_), _, e) => {
                tb.add(false, false);
                format!(
                    "| {} | {} | {} | | **FAIL** | | | | | far end not measured: {} |",
                    b.0,
                    name(b),
                    name(c),
                    cell(&e.unwrap_or_else(|| "no reflecting termination".into()))
                )
            }
        };
        bt.push_str(&row);
        bt.push('\n');
    }

    // (d) Repeat.
    let mut dt = String::new();
    let mut td = Tally::default();
    dt.push_str(
        "| temperature | baseline | current | result | states | worst finding above info | electrical length \
         change | why |\n|---|---|---|---|---|---|---|---|\n",
    );
    for (b, c) in &pairs.repeat {
        let lead = format!("{} | {} | {}", b.0, name(b), name(c));
        let row = quiet_row(&mut camp, b, c, &lead, checks::check_repeat, &mut td);
        dt.push_str(&row);
        dt.push('\n');
    }

    // (c) Air line: each pair both ways (flush -> offset and offset -> flush).
    let mut ct = String::new();
    let mut tc = Tally::default();
    let mut echoes_ok = 0usize;
    ct.push_str(
        "| temperature | flush -> offset short | nominal air line | far-end echoes moved | comparator moved | \
         result | states | rank 1, flush -> offset | rank 1, offset -> flush | electrical length change | why |\n\
         |---|---|---|---|---|---|---|---|---|---|---|\n",
    );
    for (b, c, mm) in &pairs.air_line {
        let ends = camp.far_end(b).and_then(|fb| Ok((fb, camp.far_end(c)?)));
        let fwd = camp.report(b, c).cloned();
        let rev = camp.report(c, b).cloned();
        let row = match (fwd, rev, ends) {
            (Ok(r), Ok(q), Ok((fb, fc))) => {
                let mv = OffsetMove::of(&r, &q, &fb, &fc, *mm);
                let ok = mv.check();
                let echo = checks::check_echo_move(mv.measured_mm, mv.nominal_mm);
                tc.add(ok.is_ok(), false);
                echoes_ok += echo.is_ok() as usize;
                let why: Vec<String> = [&ok, &echo]
                    .iter()
                    .filter_map(|x| x.as_ref().err().cloned())
                    .collect();
                format!(
                    "| {} | {} -> {} | {} mm | {:.2} mm{} | {} | {} | {} | {} | {} | {} | {} |",
                    b.0,
                    name(b),
                    name(c),
                    mm,
                    mv.measured_mm,
                    if echo.is_ok() { "" } else { " **(off)**" },
                    mv.reported_mm
                        .map_or("none".into(), |x| format!("{x:.2} mm")),
                    pass(&ok),
                    checks::states(&r),
                    rank1(&r),
                    rank1(&q),
                    length_change(&r),
                    cell(&why.join("; "))
                )
            }
            (Err(e), _, _) | (_, Err(e), _) => {
                tc.add(false, true);
                format!(
                    "| {} | {} -> {} | {} mm | | | **FAIL** | | | | | {} |",
                    b.0,
                    name(b),
                    name(c),
                    mm,
                    cell(&e)
                )
            }
            (Ok(_), Ok(_), Err(e)) => {
                tc.add(false, false);
                format!(
                    "| {} | {} -> {} | {} mm | | | **FAIL** | | | | | far end not measured: {} |",
                    b.0,
                    name(b),
                    name(c),
                    mm,
                    cell(&e)
                )
            }
        };
        ct.push_str(&row);
        ct.push('\n');
    }

    let mut md = String::new();
    let _ = writeln!(md, "# The comparator on the real campaign\n");
    let _ = writeln!(
        md,
        "`cargo run --release --example real_campaign -- {}{}`: every pair compared through \
         `coldtrace::compare::job::compare_networks` on a line of unknown construction of velocity factor {} \
         (`--vf {:.2}`), states not given (inferred). Positions are metres of that uniform line; far-end \
         echoes are the strongest echo of each sweep's band-pass trace (`coldtrace::transform::run_trace`, \
         default plan); moves are millimetres of air line (round-trip delay change x c0 / 2). The checks are those of \
         `tests/common/real_campaign.rs`.\n",
        args.dir.display(),
        args.only
            .as_ref()
            .map_or(String::new(), |o| format!(" --only {o}")),
        checks::VF,
        checks::VF
    );
    let _ = writeln!(
        md,
        "| check | pairs | pass | fail | of which errors (the pair could not be compared) |\n|---|---|---|---|---|"
    );
    for (what, t) in [
        (
            "(a) warm -> cold: no finding above info, inferred warm -> cold",
            &ta,
        ),
        (
            "(b) terminations: rank 1 and every finding above info at the far end",
            &tb,
        ),
        (
            "(c) offset shorts: the comparator moves the far end by the air line, within 1 mm",
            &tc,
        ),
        (
            "(d) repeats across a thermal cycle: no finding above info, one state left open",
            &td,
        ),
    ] {
        let _ = writeln!(
            md,
            "| {what} | {} | {} | {} | {} |",
            t.pairs,
            t.passed,
            t.pairs - t.passed,
            t.errors
        );
    }
    let _ = writeln!(md, "\n## (a) Warm against cold of the same file\n\n{a}");
    let _ = writeln!(
        md,
        "## (b) Two terminations of one cooldown\n\nThe far end: between the pair's far-end echoes (of the \
         sweeps ending in an open or a short), widened by {} resolution cell(s) on each side.\n\n{bt}",
        checks::FAR_END_CELLS
    );
    let _ = writeln!(
        md,
        "## (c) Offset shorts against the flush short\n\n\"comparator moved\": the rank-1 change of flush -> \
         offset less the rank-1 change of offset -> flush, as air line. \"far-end echoes moved\": the two \
         sweeps' far-end echoes, without the comparator (the premise; {echoes_ok} of {} within 1 mm of the air \
         line, **(off)** marks the others).\n\n{ct}",
        pairs.air_line.len()
    );
    let _ = writeln!(
        md,
        "## (d) One switch-board standard in consecutive cooldowns\n\nThe standard is built into the switch \
         board and never re-mated; between the two sweeps the line was warmed up, cooled down again and its \
         switch actuated.\n\n{dt}"
    );
    let all_pass = ta.passed == ta.pairs
        && tb.passed == tb.pairs
        && tc.passed == tc.pairs
        && td.passed == td.pairs;
    Ok((md, all_pass, camp.inputs))
}

fn main() -> ExitCode {
    let args = match parse_args() {
        Ok(a) => a,
        Err(e) => {
            eprintln!(
                "real_campaign: {e}\nusage: real_campaign CAMPAIGN_DIR [--out FILE.md] [--force] [--only SUBSTRING]"
            );
            return ExitCode::from(coldtrace::exit::BAD_INPUT);
        }
    };
    let (md, all_pass, inputs) = match run(&args) {
        Ok(x) => x,
        Err(e) => {
            eprintln!("real_campaign: {e}");
            return ExitCode::from(coldtrace::exit::BAD_INPUT);
        }
    };
    print!("{md}");
    if let Some(out) = &args.out {
        let inputs: Vec<&Path> = inputs.iter().map(PathBuf::as_path).collect();
        if let Err(e) = coldtrace::output::write_output(out, md.as_bytes(), args.force, &inputs) {
            eprintln!("real_campaign: {e}");
            return ExitCode::from(coldtrace::exit::BAD_INPUT);
        }
    }
    ExitCode::from(if all_pass {
        coldtrace::exit::OK
    } else {
        coldtrace::exit::FINDINGS
    })
}
