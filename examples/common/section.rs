//! One `## ` section of a Markdown page, replaced by an example program that writes it (`--into`).

/// `doc` with its section headed `heading` replaced by `section` (appended when it has none); every other
/// section is kept as it was.
pub fn replace_section(doc: &str, heading: &str, section: &str) -> String {
    let Some(start) = doc.find(heading) else {
        let mut s = doc.trim_end().to_string();
        s.push_str("\n\n");
        s.push_str(section);
        return s;
    };
    let rest = &doc[start + heading.len()..];
    let end = rest
        .find("\n## ")
        .map_or(doc.len(), |i| start + heading.len() + i + 1);
    format!(
        "{}{}{}{}",
        &doc[..start],
        section,
        if end < doc.len() { "\n" } else { "" },
        &doc[end..]
    )
}
