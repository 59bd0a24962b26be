//! A generated case written out for the command line (`--dump`): its nominal line file and its two sweeps.

/// Write `line.toml` (the nominal line file `line_text`), `baseline.s1p` and `current.s1p` into the new
/// directory `dir` (an existing one is refused, so nothing is overwritten).
pub fn dump_case(
    dir: &std::path::Path,
    line_text: &str,
    b: &coldtrace::network::Network,
    c: &coldtrace::network::Network,
) -> Result<(), String> {
    std::fs::create_dir(dir).map_err(|e| e.to_string())?;
    std::fs::write(dir.join("line.toml"), line_text).map_err(|e| e.to_string())?;
    let opts = coldtrace::touchstone::WriteOptions::default();
    for (name, n) in [("baseline.s1p", b), ("current.s1p", c)] {
        let text = coldtrace::touchstone::write(n, &opts).map_err(|e| e.to_string())?;
        std::fs::write(dir.join(name), text).map_err(|e| e.to_string())?;
    }
    Ok(())
}
