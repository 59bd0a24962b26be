//! What the binary says besides its output, and what it analyses when not told: the header and the one
//! loud warning without a line file, the notice that a 2-port sweep is read by its S11 and `--param S22`
//! for the other end, `-` with `--ports` for a sweep on standard input, one prefix for every error,
//! no colour in pipes or under NO_COLOR, and `--quiet`.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

fn json(o: &Output) -> serde_json::Value {
    assert!(o.status.success(), "{}", stderr(o));
    serde_json::from_str(&stdout(o)).unwrap()
}

/// The binary with `input` on its standard input.
fn run_with_stdin(args: &[&str], input: &[u8]) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_coldtrace"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    child.stdin.take().unwrap().write_all(input).unwrap();
    child.wait_with_output().unwrap()
}

/// A 2-port sweep of the demo line (S11 and S22 differ: the line is not symmetric), and the 1-port file
/// of its S22 column, cut out of the text as a person would (a version 1 2-port line: f, S11, S21, S12,
/// S22, each as two numbers).
fn two_port(dir: &Path) -> (PathBuf, PathBuf) {
    let two = dir.join("two.s2p");
    let o = run(&[
        "simulate",
        s(&sample("in-07.toml")),
        "--s21",
        "--points",
        "401",
        "-o",
        s(&two),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let mut s22 = String::new();
    for line in std::fs::read_to_string(&two).unwrap().lines() {
        if line.starts_with('!') || line.starts_with('#') {
            s22.push_str(line);
        } else {
            let v: Vec<&str> = line.split_whitespace().collect();
            assert_eq!(v.len(), 9, "{line}");
            s22.push_str(&format!("{} {} {}", v[0], v[7], v[8]));
        }
        s22.push('\n');
    }
    let one = dir.join("s22.s1p");
    std::fs::write(&one, s22).unwrap();
    (two, one)
}

#[test]
fn without_a_line_file_the_header_says_so_and_one_loud_warning_tells_the_cost() {
    let cold = sample("in-07-cold.s1p");
    let o = run(&["locate", s(&cold)]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let first = text.lines().next().unwrap();
    assert_eq!(
        first,
        format!(
            "line (no line file): sweep {} (state not known; analysed as cold)",
            s(&cold)
        )
    );
    assert_eq!(text.matches("not loss-compensated").count(), 1, "{text}");
    assert!(text.contains("!! WARNING: no line file"), "{text}");
    assert!(text.contains("ten times smaller"), "{text}");
    // A state given is known.
    let o = run(&["locate", s(&cold), "--state", "cold"]);
    assert!(stdout(&o).lines().next().unwrap().ends_with("(cold)"));
    // compare: the same sweep twice is one state, but which one no data tell without a line file.
    let o = run(&["compare", s(&cold), s(&cold)]);
    let text = stdout(&o);
    assert!(text.starts_with("line (no line file)\n"), "{text}");
    assert_eq!(
        text.matches("(state not known; analysed as cold)").count(),
        2,
        "{text}"
    );
    assert_eq!(text.matches("not loss-compensated").count(), 1, "{text}");
    // The JSON keeps its contract: the warning in `warnings`, the line named by the sweep.
    let v = json(&run(&["locate", s(&cold), "--json"]));
    assert!(v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["kind"] == "no-line-file"));
    // With the line file, none of it.
    let o = run(&["locate", s(&cold), "--line", s(&sample("in-07.toml"))]);
    let text = stdout(&o);
    assert!(text.starts_with("line north-fridge/in-07: sweep"), "{text}");
    assert!(
        !text.contains("!!") && !text.contains("not known"),
        "{text}"
    );
}

#[test]
fn a_two_port_sweep_says_s11_is_used_and_param_s22_reads_the_other_end() {
    let dir = tempfile::tempdir().unwrap();
    let (two, s22) = two_port(dir.path());
    let o = run(&["locate", s(&two), "--json"]);
    let err = stderr(&o);
    assert!(
        err.starts_with("notice: ")
            && err.contains("S11 is analysed")
            && err.contains("--param S22"),
        "{err}"
    );
    let v = json(&o);
    assert!(v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["kind"] == "port-s11"));
    // --param S22 reads exactly the S22 column: the same events as the 1-port file of it.
    let o = run(&["locate", s(&two), "--param", "S22", "--json"]);
    assert_eq!(stderr(&o), "");
    let by_param = json(&o);
    let by_file = json(&run(&["locate", s(&s22), "--json"]));
    assert_eq!(by_param["events"], by_file["events"]);
    assert_ne!(by_param["events"], v["events"], "S22 must differ from S11");
    let o = run(&["trace", s(&two), "--param", "s22", "--json"]);
    let t_param = json(&o);
    let t_file = json(&run(&["trace", s(&s22), "--json"]));
    assert_eq!(t_param["peaks"], t_file["peaks"]);
    // A transmission or a port the sweep lacks is refused with the choices.
    refused(
        &run(&["locate", s(&two), "--param", "S21"]),
        &["error: --param: S21 is a transmission", "S22 or S11"],
    );
    refused(
        &run(&["trace", s(&two), "--param", "S33"]),
        &["two.s2p: --param S33 needs port 3", "use S11, S22"],
    );
}

#[test]
fn a_sweep_on_standard_input_takes_its_port_count_from_ports() {
    let cold = sample("in-07-cold.s1p");
    let bytes = std::fs::read(&cold).unwrap();
    let from_file = json(&run(&["locate", s(&cold), "--json"]));
    let from_stdin = json(&run_with_stdin(
        &["locate", "-", "--ports", "1", "--json"],
        &bytes,
    ));
    assert_eq!(from_stdin["events"], from_file["events"]);
    assert_eq!(from_stdin["sweep"], "<stdin>.s1p");
    // Without --ports a version 1 sweep on standard input cannot be read, and the error says so.
    refused(
        &run_with_stdin(&["locate", "-"], &bytes),
        &["error: <stdin>:", "pass --ports N"],
    );
    // --ports beside a file whose name gives the count is refused.
    refused(
        &run(&["locate", s(&cold), "--ports", "2"]),
        &["error: --ports 2 is for a sweep read from standard input"],
    );
    let o = run_with_stdin(&["inspect", "-", "--ports", "1", "--json"], &bytes);
    let v = json(&o);
    assert_eq!(v["ports"], 1);
    let o = run_with_stdin(&["trace", "-", "--ports", "1", "--json"], &bytes);
    let t = json(&o);
    assert_eq!(
        t["peaks"],
        json(&run(&["trace", s(&cold), "--json"]))["peaks"]
    );
}

#[test]
fn every_error_has_one_prefix() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("missing.s1p");
    let bad_line = edited_line(dir.path(), "bad.toml", &[("k4 = 3.5", "k4 = \"4 m\"")]);
    let cold = sample("in-07-cold.s1p");
    let cases: Vec<Vec<&str>> = vec![
        vec!["locate", s(&missing)],
        vec!["inspect", s(&missing)],
        vec!["locate", "--no-such-flag"],
        vec!["simulate", s(&bad_line), "-o", "x.s1p"],
        vec!["locate", s(&cold), "--at", "6"],
        vec!["completions", "no-such-shell"],
    ];
    for args in cases {
        let o = run(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        let err = stderr(&o);
        assert!(err.starts_with("error: "), "{args:?}: {err}");
        assert!(!err.contains("coldtrace: error"), "{args:?}: {err}");
    }
}

fn has_escape(o: &Output) -> bool {
    o.stdout.contains(&0x1b) || o.stderr.contains(&0x1b)
}

#[test]
fn no_colour_in_pipes_or_under_no_color_and_quiet_keeps_only_errors_and_output() {
    let dir = tempfile::tempdir().unwrap();
    let (two, _) = two_port(dir.path());
    // The sample has a minor finding, a warning and the no-line-file lines: every coloured part.
    let args = ["locate", s(&two)];
    let piped = run(&args);
    assert!(!stderr(&piped).is_empty() && !has_escape(&piped));
    let no_color = Command::new(env!("CARGO_BIN_EXE_coldtrace"))
        .args(args)
        .env("NO_COLOR", "1")
        .output()
        .unwrap();
    assert!(!has_escape(&no_color));
    assert_eq!(no_color.stdout, piped.stdout);
    // --quiet: no notice, the same output; in any place on the command line.
    for quiet in [
        vec!["--quiet", "locate", s(&two)],
        vec!["locate", s(&two), "-q"],
    ] {
        let o = run(&quiet);
        assert!(o.status.success());
        assert_eq!(stderr(&o), "", "{quiet:?}");
        assert_eq!(o.stdout, piped.stdout);
    }
    // A warning (a stage at 0 K) is silenced, an error is not.
    let cold_line = edited_line(dir.path(), "zero.toml", &[("mxc = 0.015", "mxc = 0.0")]);
    let out = dir.path().join("z.s1p");
    let o = run(&["simulate", s(&cold_line), "-o", s(&out)]);
    assert!(stderr(&o).starts_with("warning: "), "{}", stderr(&o));
    let o = run(&["simulate", s(&cold_line), "-o", s(&out), "--force", "-q"]);
    assert!(o.status.success());
    assert_eq!(stderr(&o), "");
    let o = run(&["-q", "locate", s(&dir.path().join("missing.s1p"))]);
    refused(&o, &["error: "]);
}

/// The binary on a terminal: `script` (util-linux, in every Debian base system) gives it a pseudo-terminal
/// for its output; `no_color` sets NO_COLOR=1.
fn on_a_terminal(args: &str, no_color: bool) -> Vec<u8> {
    let command = format!("'{}' {args}", env!("CARGO_BIN_EXE_coldtrace"));
    let mut c = Command::new("script");
    c.args(["-qec", &command, "/dev/null"]);
    c.env_remove("NO_COLOR");
    if no_color {
        c.env("NO_COLOR", "1");
    }
    let o = c.output().expect("script (util-linux) runs");
    assert!(
        o.status.code().is_some(),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    o.stdout
}

#[test]
fn colour_on_a_terminal_unless_no_color() {
    let args = format!(
        "locate '{}' --line '{}'",
        s(&sample("in-07-cold.s1p")),
        s(&sample("in-07.toml"))
    );
    let coloured = on_a_terminal(&args, false);
    let text = String::from_utf8_lossy(&coloured);
    // The critical severity in bold red (SGR 1;31, ECMA-48 section 8.3.117).
    assert!(text.contains("\x1b[1;31mcritical\x1b[0m"), "{text}");
    let plain = on_a_terminal(&args, true);
    assert!(
        !plain.contains(&0x1b),
        "{}",
        String::from_utf8_lossy(&plain)
    );
}
