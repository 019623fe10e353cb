//! Small helpers shared by the commands.

use anyhow::{Context, bail};
use chordline::units::{FOOT, INCH};
use std::io::Write;
use std::path::Path;

/// Parse a small length with its unit (`1mm`, `0.5 mm`, `0.125in`, `0.001m`) into metres.
pub fn small_length(s: &str) -> Result<f64, String> {
    let t = s.trim();
    let split = t.trim_end_matches(|c: char| c.is_ascii_alphabetic()).len();
    let (num, unit) = t.split_at(split);
    let scale = match unit.trim() {
        "mm" => 1e-3,
        "m" => 1.0,
        "in" => INCH,
        "ft" => FOOT,
        "" => return Err(format!("'{s}' has no unit: write e.g. 1mm or 0.125in")),
        _ => return Err(format!("'{s}' has an unknown unit: use mm, m, in or ft")),
    };
    let v: f64 = num
        .trim()
        .parse()
        .map_err(|_| format!("'{s}' is not a number with a unit (e.g. 1mm)"))?;
    if !(v.is_finite() && v >= 0.0) {
        return Err(format!("'{s}' must be a finite length not below zero"));
    }
    Ok(v * scale)
}

/// Write a file through a temporary file in the same folder, renamed into
/// place only when complete. Refuses to replace an existing file unless `force`.
pub fn write_file_atomic(
    path: &Path,
    force: bool,
    f: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
) -> anyhow::Result<()> {
    if path.exists() && !force {
        bail!(
            "{} already exists; pass --force to replace it, or choose another name",
            path.display()
        );
    }
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .with_context(|| format!("{} is not a file name", path.display()))?;
    let tmp = dir.join(format!(
        ".{}.{}.tmp",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| -> std::io::Result<()> {
        let file = std::fs::File::create(&tmp)?;
        let mut w = std::io::BufWriter::new(file);
        f(&mut w)?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(e).with_context(|| format!("could not write {}", path.display()));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn small_lengths_need_units() {
        assert_eq!(small_length("1mm"), Ok(1e-3));
        assert_eq!(small_length("0.125in"), Ok(0.125 * INCH));
        assert!(small_length("1").is_err());
        assert!(small_length("-1mm").is_err());
        assert!(small_length("1yd").is_err());
    }
}
