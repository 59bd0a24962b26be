//! What the program says besides the output asked for: errors, warnings and notices on standard error,
//! each line with one prefix (`error: `, `warning: `, `notice: `; clap's own usage errors start `error: `
//! too), and colour.
//!
//! Colour only where a person reads it: on a terminal, and never when `NO_COLOR` is set to anything but
//! the empty string (no-color.org's convention). Pipes and files get plain text. `--quiet` silences
//! warnings and notices; errors and the requested output are never silenced.

use std::io::IsTerminal;
use std::sync::atomic::{AtomicBool, Ordering};

static QUIET: AtomicBool = AtomicBool::new(false);

/// Silence warnings and notices on standard error for the rest of the run (`--quiet`).
pub fn set_quiet(quiet: bool) {
    QUIET.store(quiet, Ordering::Relaxed);
}

/// Whether `--quiet` was given (a progress bar is silenced with the notices).
pub fn quiet() -> bool {
    QUIET.load(Ordering::Relaxed)
}

/// ANSI styles used (SGR codes: ECMA-48, 5th edition, section 8.3.117).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// Bold red: errors, critical and major severities.
    Bad,
    /// Bold yellow: warnings, the minor severity.
    Caution,
    /// Bold cyan: notices.
    Note,
}

impl Style {
    fn code(self) -> &'static str {
        match self {
            Style::Bad => "1;31",
            Style::Caution => "1;33",
            Style::Note => "1;36",
        }
    }
}

/// Whether to colour a stream: a terminal, and `NO_COLOR` unset or empty.
pub fn colour_wanted(is_terminal: bool, no_color: Option<&std::ffi::OsStr>) -> bool {
    is_terminal && !matches!(no_color, Some(v) if !v.is_empty())
}

fn colour_on(stream_is_terminal: bool) -> bool {
    colour_wanted(stream_is_terminal, std::env::var_os("NO_COLOR").as_deref())
}

/// `text` in `style` when `on`, else as it is.
pub fn paint(text: &str, style: Style, on: bool) -> String {
    if on {
        format!("\x1b[{}m{text}\x1b[0m", style.code())
    } else {
        text.to_string()
    }
}

fn say(prefix: &str, style: Style, message: &dyn std::fmt::Display) {
    let on = colour_on(std::io::stderr().is_terminal());
    eprintln!("{}{message}", paint(prefix, style, on));
}

/// An error: always said.
pub fn error(message: &dyn std::fmt::Display) {
    say("error: ", Style::Bad, message);
}

/// A warning, unless `--quiet`.
pub fn warning(message: &dyn std::fmt::Display) {
    if !quiet() {
        say("warning: ", Style::Caution, message);
    }
}

/// A notice (something done by default the user may want otherwise), unless `--quiet`.
pub fn notice(message: &dyn std::fmt::Display) {
    if !quiet() {
        say("notice: ", Style::Note, message);
    }
}

/// A text report with its severities and set-apart warnings coloured, when `on`.
pub fn highlight(text: &str, on: bool) -> String {
    if !on {
        return text.to_string();
    }
    let mut out = String::with_capacity(text.len() + 64);
    for line in text.split_inclusive('\n') {
        if line.starts_with("!!") {
            let body = line.trim_end_matches('\n');
            out.push_str(&paint(body, Style::Caution, true));
            out.push_str(&line[body.len()..]);
            continue;
        }
        let mut l = line.to_string();
        for (word, style) in [
            ("critical", Style::Bad),
            ("major", Style::Bad),
            ("minor", Style::Caution),
        ] {
            l = l.replace(
                &format!(" {word} "),
                &format!(" {} ", paint(word, style, true)),
            );
        }
        out.push_str(&l);
    }
    out
}

/// Write a text report to standard output, coloured on a terminal (see [`highlight`]).
pub fn report(text: &str) -> coldtrace::Result<()> {
    super::print(&highlight(text, colour_on(std::io::stdout().is_terminal())))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::ffi::OsStr;

    #[test]
    fn colour_only_on_a_terminal_without_no_color() {
        assert!(colour_wanted(true, None));
        assert!(colour_wanted(true, Some(OsStr::new(""))));
        assert!(!colour_wanted(true, Some(OsStr::new("1"))));
        assert!(!colour_wanted(false, None));
    }

    #[test]
    fn highlight_paints_severities_and_set_apart_lines_only_when_on() {
        let text =
            "1     1.670 m line   pin-gap   minor    0.26 dB\n!! WARNING: no line file\nplain\n";
        assert_eq!(highlight(text, false), text);
        let on = highlight(text, true);
        assert!(on.contains(" \x1b[1;33mminor\x1b[0m "), "{on}");
        assert!(
            on.contains("\x1b[1;33m!! WARNING: no line file\x1b[0m\n"),
            "{on}"
        );
        assert!(on.ends_with("plain\n"));
    }
}
