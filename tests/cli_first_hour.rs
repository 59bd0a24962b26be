//! The whole binary, as a new user meets it: the install line and the test cost in the README, one window
//! default, one `--state` rule, one output-flag spelling, `convert --touchstone-version` beside the
//! program's own `--version`, each command's own `--all`, and quantities that carry their units.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;
use std::path::Path;

#[test]
fn the_readme_says_how_to_install_and_what_the_first_test_costs() {
    let readme = repo_text("README.md");
    for needle in [
        "cargo install --path .",
        "target/release/coldtrace",
        "du -sh target",
        "2-core",
    ] {
        assert!(readme.contains(needle), "README lacks {needle:?}");
    }
    let o = run(&["--version"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        stdout(&o).trim(),
        format!("coldtrace {}", env!("CARGO_PKG_VERSION"))
    );
}

#[test]
fn every_command_defaults_to_the_same_window() {
    for command in ["trace", "locate", "compare"] {
        assert!(
            help(command).contains("[default: kaiser:9]"),
            "{command} --help"
        );
    }
    let o = run(&["trace", s(&sample("in-07-cold.s1p")), "--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_eq!(v["window"]["name"], "kaiser");
    assert_eq!(v["window"]["beta"], 9.0);
    // Measured by the crate (docs/method.md, Windows): kaiser:9's highest sidelobe is -66.30 dB.
    let sidelobe = v["window"]["highest_sidelobe_db"].as_f64().unwrap();
    assert!((sidelobe + 66.30).abs() < 0.01, "{sidelobe}");
}

#[test]
fn one_state_rule_shown_in_every_help_and_simulate_defaults_to_cold() {
    for command in ["trace", "simulate"] {
        assert!(help(command).contains("Default cold"), "{command}");
    }
    let h = help("locate");
    assert!(
        h.contains("inferred where the data allow") && h.contains("else cold"),
        "{h}"
    );
    // locate: inferred with a line file, cold without one.
    let cold = sample("in-07-cold.s1p");
    let o = run(&[
        "locate",
        s(&cold),
        "--json",
        "--line",
        s(&sample("in-07.toml")),
    ]);
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_ne!(v["state_basis"], "given", "{}", v["state_basis"]);
    let o = run(&["locate", s(&cold), "--json"]);
    let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_eq!(v["state"], "cold");
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("sim.s1p");
    let o = run(&[
        "simulate",
        s(&sample("in-07.toml")),
        "--points",
        "201",
        "-o",
        s(&out),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("cold)"), "{}", stdout(&o));
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.contains("state cold"), "{text}");
}

#[test]
fn trace_writes_the_gated_sweep_with_output_and_still_reads_out() {
    let dir = tempfile::tempdir().unwrap();
    let sweep = sample("in-07-cold.s1p");
    for (flag, name) in [("-o", "a.s1p"), ("--output", "b.s1p"), ("--out", "c.s1p")] {
        let out = dir.path().join(name);
        let o = run(&["trace", s(&sweep), "--gate", "1.5m..2.1m", flag, s(&out)]);
        assert!(o.status.success(), "{flag}: {}", stderr(&o));
        let text = std::fs::read_to_string(&out).unwrap();
        assert!(text.contains("gated to 1.5m..2.1m"), "{flag}: {text}");
    }
    let h = help("trace");
    assert!(h.contains("-o, --output <FILE>"), "{h}");
    assert!(
        !h.contains("--out <"),
        "the old spelling stays out of the help: {h}"
    );
    for command in ["convert", "simulate"] {
        assert!(help(command).contains("-o, --output"), "{command}");
    }
}

#[test]
fn convert_takes_touchstone_version_and_the_program_keeps_its_version() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("v2.s1p");
    let o = run(&[
        "convert",
        s(&sample("in-07-cold.s1p")),
        "-o",
        s(&out),
        "--touchstone-version",
        "2",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .contains("[Version] 2.0"));
    let o = run(&["convert", "--version"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains(env!("CARGO_PKG_VERSION")),
        "{}",
        stdout(&o)
    );
    let o = run(&[
        "convert",
        s(&sample("in-07-cold.s1p")),
        "-o",
        s(&dir.path().join("v3.s1p")),
        "--touchstone-version",
        "3",
    ]);
    refused(&o, &["--touchstone-version 3", "expected 1 or 2"]);
}

#[test]
fn locate_and_compare_explain_their_own_all() {
    let line = |command: &str| {
        help(command)
            .lines()
            .skip_while(|l| !l.trim_start().starts_with("--all"))
            .take(2)
            .collect::<Vec<_>>()
            .join(" ")
    };
    let (locate, compare) = (line("locate"), line("compare"));
    assert!(locate.contains("event"), "{locate}");
    assert!(compare.contains("finding"), "{compare}");
    assert!(!locate.contains("compare"), "{locate}");
    assert!(!compare.contains("locate"), "{compare}");
    assert_ne!(locate, compare);
}

#[test]
fn quantities_need_their_units_and_at_stays_in_the_band() {
    let (warm, cold, line) = (
        sample("in-07-warm.s1p"),
        sample("in-07-cold.s1p"),
        sample("in-07.toml"),
    );
    let o = run(&["locate", s(&cold), "--line", s(&line), "--at", "6"]);
    refused(&o, &["--at 6", "write 6GHz"]);
    let o = run(&["trace", s(&cold), "--span", "0..3m"]);
    refused(&o, &["--span", "write 0m"]);
    let o = run(&["trace", s(&cold), "--span", "0m..3m", "--step", "1"]);
    refused(&o, &["--step 1", "write 1m"]);
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("x.s1p");
    let o = run(&["simulate", s(&line), "--start", "0.5", "-o", s(&out)]);
    refused(&o, &["--start 0.5", "write 0.5GHz"]);
    assert!(!out.exists());
    // The sample sweeps run from 0.5 to 10 GHz (sample-sweeps/README.md).
    let o = run(&["locate", s(&cold), "--line", s(&line), "--at", "20GHz"]);
    refused(&o, &["--at 20GHz", "0.5GHz to 10GHz", "in-07-cold.s1p"]);
    let o = run(&["compare", s(&warm), s(&cold), "--at", "0.1GHz"]);
    refused(&o, &["--at 0.1GHz", "0.5GHz to 10GHz"]);
    // dB with or without its unit.
    for drop in ["6", "6dB", "6 dB"] {
        let o = run(&[
            "compare",
            s(&warm),
            s(&cold),
            "--line",
            s(&line),
            "--power-drop",
            drop,
            "--at",
            "6GHz",
            "--json",
        ]);
        assert_ne!(o.status.code(), Some(2), "{drop}: {}", stderr(&o));
        let v: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
        assert_eq!(v["reference_hz"], 6e9);
        assert_eq!(v["power"]["observed_drop_db"], 6.0, "{drop}");
    }
    let o = run(&["compare", s(&warm), s(&cold), "--power-drop", "6dBm"]);
    refused(&o, &["--power-drop", "6dBm"]);
    let o = run(&[
        "simulate",
        s(&line),
        "--points",
        "201",
        "--noise-db",
        "-90dB",
        "-o",
        s(&out),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .contains("noise -90 dB"));
}

#[test]
fn simulate_refuses_a_sweep_too_short_for_locate() {
    let dir = tempfile::tempdir().unwrap();
    let line = sample("in-07.toml");
    let short = dir.path().join("short.s1p");
    let o = run(&["simulate", s(&line), "--points", "5", "-o", s(&short)]);
    refused(&o, &["--points 5", "16"]);
    assert!(!short.exists());
    // The fewest points simulate writes are enough for locate.
    let least = dir.path().join("least.s1p");
    let o = run(&["simulate", s(&line), "--points", "16", "-o", s(&least)]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o = run(&["locate", s(&least), "--line", s(&line)]);
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn trace_refuses_an_output_whose_extension_does_not_fit_even_with_force() {
    let dir = tempfile::tempdir().unwrap();
    let other = dir.path().join("other.s1p");
    std::fs::copy(sample("in-07-warm.s1p"), &other).unwrap();
    let before = std::fs::read(&other).unwrap();
    let cold = sample("in-07-cold.s1p");
    let o = run(&["trace", s(&cold), "--csv", s(&other), "--force"]);
    refused(&o, &["other.s1p", "--csv", ".csv"]);
    assert_eq!(std::fs::read(&other).unwrap(), before, "the sweep is kept");
    let g = dir.path().join("gated.csv");
    let o = run(&["trace", s(&cold), "--gate", "1.5m..2.1m", "-o", s(&g)]);
    refused(&o, &["gated.csv", ".s1p"]);
    assert!(!g.exists());
    let csv = dir.path().join("t.CSV");
    let o = run(&["trace", s(&cold), "--csv", s(&csv)]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(csv.exists());
}

#[test]
fn stage_names_match_in_any_case_and_room_has_its_common_spellings() {
    let dir = tempfile::tempdir().unwrap();
    let simulate = |line: &Path, out: &str| simulate_short(dir.path(), line, out);
    let (o, plain) = simulate(&sample("in-07.toml"), "plain.s1p");
    assert!(o.status.success(), "{}", stderr(&o));
    let spelled = edited_line(
        dir.path(),
        "spelled.toml",
        &[
            ("from = \"room\"", "from = \"RT\""),
            ("stage = \"room\"", "stage = \"Room-Temperature\""),
            ("to = \"k50\"", "to = \"K50\""),
        ],
    );
    let (o, other) = simulate(&spelled, "spelled.s1p");
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(data_lines(&plain), data_lines(&other));
    // A stage spelled twice, or room defined again, is refused with the key.
    let twice = edited_line(
        dir.path(),
        "twice.toml",
        &[("k4 = 3.5", "k4 = 3.5\nK4 = 3.0")],
    );
    let (o, _) = simulate(&twice, "x.s1p");
    refused(&o, &["twice.toml:", "again", "matched in any case"]);
    let room = edited_line(
        dir.path(),
        "room.toml",
        &[("k50 = 45.0", "RT = 300.0\nk50 = 45.0")],
    );
    let (o, _) = simulate(&room, "x.s1p");
    refused(&o, &["room.toml:", "stages.RT", "built-in stage 'room'"]);
}

#[test]
fn stage_temperatures_that_cannot_be_right_are_warned_of() {
    let dir = tempfile::tempdir().unwrap();
    for (edit, needle) in [
        (
            ("mxc = 0.015", "mxc = 0.0"),
            "stage 'mxc' at 0 K cannot be reached",
        ),
        (
            ("k50 = 45.0", "k50 = 400.0"),
            "stage 'k50' at 400 K is warmer than the room stage",
        ),
    ] {
        let line = edited_line(dir.path(), "warm.toml", &[edit]);
        let out = dir.path().join("w.s1p");
        let o = run(&[
            "simulate",
            s(&line),
            "--points",
            "101",
            "-o",
            s(&out),
            "--force",
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        let err = stderr(&o);
        assert!(err.contains(needle), "{err}");
        assert!(
            err.contains("warm.toml:"),
            "the warning names the file and line: {err}"
        );
    }
    let o = run(&[
        "simulate",
        s(&sample("in-07.toml")),
        "--points",
        "101",
        "-o",
        s(&dir.path().join("ok.s1p")),
    ]);
    assert!(!stderr(&o).contains("stage-temperature") && !stderr(&o).contains("cannot be reached"));
}

#[test]
fn a_missing_input_and_a_missing_output_folder_are_told_apart() {
    let dir = tempfile::tempdir().unwrap();
    let gone = dir.path().join("gone.s1p");
    let o = run(&["inspect", s(&gone)]);
    refused(&o, &["gone.s1p", "the sweep to read does not exist"]);
    let o = run(&[
        "simulate",
        s(&dir.path().join("gone.toml")),
        "-o",
        s(&dir.path().join("x.s1p")),
    ]);
    refused(&o, &["gone.toml", "the line file to read does not exist"]);
    let folder = dir.path().join("no-such-folder");
    let out = folder.join("x.s1p");
    let o = run(&["convert", s(&sample("in-07-cold.s1p")), "-o", s(&out)]);
    let err = refused(
        &o,
        &[
            "x.s1p",
            "the output's folder",
            "no-such-folder",
            "does not exist",
        ],
    );
    assert!(!err.contains("to read"), "{err}");
    let o = run(&[
        "trace",
        s(&sample("in-07-cold.s1p")),
        "--csv",
        s(&folder.join("t.csv")),
    ]);
    refused(&o, &["the output's folder", "no-such-folder"]);
}

#[test]
fn convert_checks_the_extension_against_the_ports_and_keeps_the_comments() {
    let dir = tempfile::tempdir().unwrap();
    let input = sample("in-07-cold.s1p");
    let wrong = dir.path().join("out.s2p");
    let o = run(&["convert", s(&input), "-o", s(&wrong)]);
    refused(&o, &["out.s2p", "1 port(s)", ".s1p"]);
    assert!(!wrong.exists());
    let o = run(&["convert", s(&input), "-o", s(&dir.path().join("out.ts"))]);
    refused(&o, &["out.ts", ".s1p"]);
    let ts = dir.path().join("out.ts");
    let o = run(&[
        "convert",
        s(&input),
        "-o",
        s(&ts),
        "--touchstone-version",
        "2",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o = run(&["inspect", s(&ts)]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = dir.path().join("out.S1P");
    let o = run(&["convert", s(&input), "-o", s(&out), "--format", "DB"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(&out).unwrap();
    // The input's provenance comments come through, before the conversion's own note.
    let input_text = std::fs::read_to_string(&input).unwrap();
    let original: Vec<&str> = input_text
        .lines()
        .take_while(|l| l.starts_with('!'))
        .collect();
    assert!(!original.is_empty());
    let comments: Vec<&str> = text.lines().take_while(|l| l.starts_with('!')).collect();
    assert_eq!(&comments[..original.len()], &original[..], "{text}");
    assert!(comments[original.len()].contains("converted by coldtrace"));
}

#[test]
fn a_place_far_from_every_connector_is_given_by_its_offset_not_as_near_one() {
    let (sweep, line) = (sample("in-07-cold.s1p"), sample("in-07.toml"));
    let o = run(&["locate", s(&sweep), "--line", s(&line), "--all"]);
    let text = stdout(&o);
    // The reference plane's own echo lies 1.5 m from the feedthrough, the nearest connector.
    let first = text
        .lines()
        .find(|l| l.contains(" 0.000 m "))
        .unwrap_or_else(|| panic!("no event at 0.000 m:\n{text}"));
    assert!(first.contains("room cable +0.000 m"), "{first}");
    assert!(!first.contains("near"), "{first}");
    // The joints themselves are still named.
    assert!(text.contains("1.798 m J2"), "{text}");
}

#[test]
fn ci_and_the_readme_run_one_test_command_in_one_profile() {
    let (readme, ci, manifest) = (
        repo_text("README.md"),
        repo_text(".ci/run"),
        repo_text("Cargo.toml"),
    );
    assert!(
        readme.contains("<!-- test-command -->\n```sh\ncargo test --locked\n```"),
        "README's test command"
    );
    // CI runs exactly that command, without settings that would change the build's profile.
    assert!(
        ci.lines().any(|l| l.trim() == "cargo test --locked"),
        "{ci}"
    );
    assert!(!ci.contains("CARGO_INCREMENTAL"), "{ci}");
    assert!(!ci.contains("RUSTFLAGS"), "{ci}");
    // One profile: test inherits dev unchanged, so `cargo run` reuses what `cargo test` built.
    assert!(!manifest.contains("[profile.test]"), "{manifest}");
    assert!(manifest.contains("[profile.dev]"), "{manifest}");
}
