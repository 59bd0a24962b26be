//! Shell completions and manual pages generated from the clap definitions, and the README's install
//! commands for them.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;

/// Every subcommand a user can type, and flags added late that must be completed too.
const COMMANDS: &[&str] = &[
    "inspect",
    "convert",
    "trace",
    "locate",
    "simulate",
    "compare",
    "history",
    "survey",
    "completions",
    "manpage",
];

#[test]
fn completions_cover_every_command_and_bash_reads_the_script() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let o = run(&["completions", shell]);
        assert!(o.status.success(), "{shell}: {}", stderr(&o));
        let script = stdout(&o);
        for c in COMMANDS {
            assert!(script.contains(c), "{shell} lacks {c}");
        }
        for flag in ["param", "ports", "quiet", "touchstone-version"] {
            assert!(script.contains(flag), "{shell} lacks {flag}");
        }
    }
    // bash itself parses the script without running it (bash -n), when bash is there, as on every
    // machine this project builds on.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("coldtrace.bash");
    std::fs::write(&path, run(&["completions", "bash"]).stdout).unwrap();
    let checked = std::process::Command::new("bash")
        .arg("-n")
        .arg(&path)
        .output()
        .expect("bash runs");
    assert!(
        checked.status.success(),
        "{}",
        String::from_utf8_lossy(&checked.stderr)
    );
    refused(
        &run(&["completions", "tcsh"]),
        &["error: ", "possible values"],
    );
}

#[test]
fn manual_pages_are_generated_and_never_overwritten_without_force() {
    let o = run(&["manpage"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let page = stdout(&o);
    assert!(page.contains(".TH coldtrace 1"), "{page}");
    assert!(page.contains(".SH SUBCOMMANDS"), "{page}");
    let dir = tempfile::tempdir().unwrap();
    let o = run(&["manpage", "--dir", s(dir.path())]);
    assert!(o.status.success(), "{}", stderr(&o));
    let read = |name: &str| std::fs::read_to_string(dir.path().join(name)).unwrap();
    for c in COMMANDS {
        assert!(read(&format!("coldtrace-{c}.1")).contains(&format!(".TH coldtrace-{c} 1")));
    }
    assert!(read("coldtrace-history-record.1").contains(".TH coldtrace-history-record 1"));
    // The locate page lists its flags, the new ones too (roff writes a dash as \-).
    let locate = read("coldtrace-locate.1");
    for flag in ["\\-\\-line", "\\-\\-param", "\\-\\-ports", "\\-\\-quiet"] {
        assert!(locate.contains(flag), "coldtrace-locate.1 lacks {flag}");
    }
    // A second run leaves the pages as they are unless --force.
    std::fs::write(dir.path().join("coldtrace.1"), "mine").unwrap();
    refused(
        &run(&["manpage", "--dir", s(dir.path())]),
        &["coldtrace.1", "--force"],
    );
    assert_eq!(read("coldtrace.1"), "mine");
    let o = run(&["manpage", "--dir", s(dir.path()), "--force"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(read("coldtrace.1").contains(".TH coldtrace 1"));
}

#[test]
fn the_readme_says_how_to_install_completions_and_pages() {
    let readme = repo_text("README.md");
    for needle in [
        "coldtrace completions bash >",
        "coldtrace completions zsh >",
        "coldtrace completions fish >",
        "coldtrace manpage --dir ~/.local/share/man/man1",
    ] {
        assert!(readme.contains(needle), "README lacks {needle:?}");
    }
}
