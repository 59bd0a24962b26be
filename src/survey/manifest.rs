//! The survey manifest: a TOML file of `[[line]]` tables, each a line file and two sweeps of it, paths
//! relative to the manifest's folder.
//!
//! ```toml
//! [[line]]
//! line = "in-07.toml"
//! baseline = "in-07/2026-10-warm.s1p"
//! current = "in-07/2026-12-cold.s1p"
//! baseline_state = "warm"     # optional: inferred when absent
//! current_state = "cold"      # optional
//! ```

use super::SurveyError;
use crate::line::State;
use serde::Deserialize;
use std::path::{Path, PathBuf};

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawManifest {
    #[serde(default)]
    line: Vec<toml::Spanned<RawLine>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawLine {
    line: String,
    baseline: String,
    current: String,
    baseline_state: Option<String>,
    current_state: Option<String>,
}

/// One line of the fleet, its paths resolved against the manifest's folder.
#[derive(Debug, Clone, PartialEq)]
pub struct SurveyItem {
    pub line: PathBuf,
    pub baseline: PathBuf,
    pub current: PathBuf,
    pub baseline_state: Option<State>,
    pub current_state: Option<State>,
    /// The `[[line]]` table's line in the manifest (1-based).
    pub manifest_line: usize,
}

/// 1-based line and column of byte `offset` in `text`.
fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let before = &text[..offset.min(text.len())];
    let line = before.matches('\n').count() + 1;
    let col = before
        .rfind('\n')
        .map_or(before.len(), |i| before.len() - i - 1)
        + 1;
    (line, col)
}

/// Read a manifest; every error names the manifest, the line and column, and the fix.
pub fn read_manifest(path: &Path) -> Result<Vec<SurveyItem>, SurveyError> {
    let manifest_error = |e: String| SurveyError::Manifest {
        path: path.to_path_buf(),
        line: 0,
        column: 0,
        message: format!("{e}; give the path of a survey manifest (TOML, docs/history.md)"),
    };
    // A manifest is a short list of lines: the line file's size limit bounds it too.
    let bytes =
        crate::limits::read_capped(path, crate::limits::MAX_LINE_FILE_BYTES, "survey manifest")
            .map_err(|e| manifest_error(e.to_string()))?;
    let text = String::from_utf8(bytes).map_err(|e| manifest_error(e.to_string()))?;
    parse_manifest(&text, path)
}

/// Parse a manifest's text (`path` names it in errors and anchors its relative paths).
pub fn parse_manifest(text: &str, path: &Path) -> Result<Vec<SurveyItem>, SurveyError> {
    let raw: RawManifest = toml::from_str(text).map_err(|e| {
        let (line, column) = e.span().map_or((0, 0), |s| line_col(text, s.start));
        SurveyError::Manifest {
            path: path.to_path_buf(),
            line,
            column,
            message: format!(
                "{}; each [[line]] table takes line, baseline, current, and optionally baseline_state and \
                 current_state",
                e.message()
            ),
        }
    })?;
    if raw.line.is_empty() {
        return Err(SurveyError::Manifest {
            path: path.to_path_buf(),
            line: 1,
            column: 1,
            message:
                "no [[line]] tables; add one per line: [[line]] line = \"in-07.toml\" baseline = \
                      \"warm.s1p\" current = \"cold.s1p\""
                    .into(),
        });
    }
    let dir = path.parent().unwrap_or(Path::new(""));
    raw.line
        .into_iter()
        .map(|spanned| {
            let (line_no, _) = line_col(text, spanned.span().start);
            let r = spanned.into_inner();
            let state = |key: &str, v: Option<String>| -> Result<Option<State>, SurveyError> {
                v.map(|s| {
                    s.parse::<State>().map_err(|e| SurveyError::Manifest {
                        path: path.to_path_buf(),
                        line: line_no,
                        column: 1,
                        message: format!("key '{key}': {e}"),
                    })
                })
                .transpose()
            };
            Ok(SurveyItem {
                line: dir.join(&r.line),
                baseline: dir.join(&r.baseline),
                current: dir.join(&r.current),
                baseline_state: state("baseline_state", r.baseline_state)?,
                current_state: state("current_state", r.current_state)?,
                manifest_line: line_no,
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_are_relative_to_the_manifest_and_errors_are_located() {
        let text = "[[line]]\nline = \"a.toml\"\nbaseline = \"w.s1p\"\ncurrent = \"c.s1p\"\n\n[[line]]\n\
                    line = \"b.toml\"\nbaseline = \"w2.s1p\"\ncurrent = \"c2.s1p\"\ncurrent_state = \"cold\"\n";
        let items = parse_manifest(text, Path::new("fleet/survey.toml")).unwrap();
        assert_eq!(items.len(), 2);
        assert_eq!(items[0].line, Path::new("fleet/a.toml"));
        assert_eq!(items[1].current, Path::new("fleet/c2.s1p"));
        assert_eq!(items[1].current_state, Some(State::Cold));
        assert_eq!(items[1].manifest_line, 6);

        let bad = "[[line]]\nline = \"a.toml\"\nbaseline = \"w.s1p\"\ncurent = \"c.s1p\"\n";
        let e = parse_manifest(bad, Path::new("m.toml"))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("m.toml:"), "{e}");
        assert!(e.contains("curent") || e.contains("current"), "{e}");
        let e = parse_manifest(
            "[[line]]\nline = \"a\"\nbaseline = \"b\"\ncurrent = \"c\"\ncurrent_state = \"tepid\"\n",
            Path::new("m.toml"),
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("m.toml:1:") && e.contains("tepid"), "{e}");
        assert!(parse_manifest("", Path::new("m.toml")).is_err());
    }
}
