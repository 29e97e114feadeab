//! Printing helpers: aligned tables for people, JSON for scripts.

use std::io::Write;

use std::path::{Path, PathBuf};

use anyhow::{Context as _, Result, anyhow, bail};
use comfy_table::{Table, presets};
use serde::Serialize;

/// Print `value` as pretty JSON followed by a newline.
pub fn json<T: Serialize + ?Sized>(out: &mut dyn Write, value: &T) -> Result<()> {
    serde_json::to_writer_pretty(&mut *out, value)?;
    writeln!(out)?;
    Ok(())
}

/// A status line: what a command wrote and where, or what it left out. Status lines go to
/// standard error, so standard output carries only data (a listing, JSON, a report sent to
/// `-o -`) and a pipe gets nothing else. `out` is flushed first, so on a terminal the lines
/// come in the order they were made. A status line that cannot be written (standard error
/// closed) is dropped: the file it would announce is already in place.
pub fn status(out: &mut dyn Write, line: std::fmt::Arguments) -> Result<()> {
    out.flush()?;
    let _ = writeln!(std::io::stderr().lock(), "{line}");
    Ok(())
}

/// An aligned plain-text table with a header row.
pub fn table(out: &mut dyn Write, header: &[&str], rows: Vec<Vec<String>>) -> Result<()> {
    let mut t = Table::new();
    t.load_style(presets::NOTHING);
    t.set_header(header.iter().map(|h| h.to_string()));
    for r in rows {
        t.add_row(r);
    }
    for line in t.to_string().lines() {
        // Drop the padding before the first column so the table starts at the margin.
        writeln!(out, "{}", line.strip_prefix(' ').unwrap_or(line).trim_end())?;
    }
    Ok(())
}

/// Text for an optional value in a table cell.
pub fn cell<T: ToString>(v: &Option<T>) -> String {
    v.as_ref()
        .map(|x| x.to_string())
        .unwrap_or_else(|| "-".into())
}

/// The directory a file is to be written in; it must exist, and the file must not be a
/// directory.
pub fn output_dir(target: &Path) -> Result<PathBuf> {
    if target.as_os_str().is_empty() {
        bail!("the output path is empty: expected a file name such as report.html");
    }
    if target.is_dir() {
        bail!(
            "cannot write {}: it is a directory: expected a file name such as {}/report.html",
            target.display(),
            target.display()
        );
    }
    let dir = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if !dir.is_dir() {
        // Name the part of the path that is in the way, not just the folder that is missing.
        if let Some(file) = dir.ancestors().find(|a| a.is_file()) {
            bail!(
                "cannot write {}: {} is a file, not a directory",
                target.display(),
                file.display()
            );
        }
        bail!(
            "cannot write {}: the output directory {} does not exist: create it first, or give -o a file in an existing directory",
            target.display(),
            dir.display()
        );
    }
    Ok(dir)
}

/// Write `body` to `path` by way of a temporary file in the same directory and a rename, so a
/// reader never sees a half-written file and a failure leaves nothing behind.
pub fn write_atomic(path: &Path, body: &[u8]) -> Result<()> {
    write_atomic_with(path, |w| Ok(w.write_all(body)?))
}

/// Whether `path` names something that exists and is neither a regular file nor a directory
/// (a terminal, `/dev/null`, a pipe, a socket), following symbolic links. Such a target is
/// written into as a stream: renaming a file over it would replace the device or pipe itself.
pub fn is_special(path: &Path) -> bool {
    std::fs::metadata(path).is_ok_and(|m| !m.is_file() && !m.is_dir())
}

/// Write into a special file (see [`is_special`]) as a stream; an error on the way, such as
/// no space left on the device, is the error of the whole write.
fn write_stream<T>(path: &Path, f: impl FnOnce(&mut dyn Write) -> Result<T>) -> Result<T> {
    let file = std::fs::OpenOptions::new()
        .write(true)
        .open(path)
        .with_context(|| format!("cannot write {}", path.display()))?;
    let mut w = std::io::BufWriter::new(file);
    let value = f(&mut w).with_context(|| format!("cannot write {}", path.display()))?;
    w.flush()
        .with_context(|| format!("cannot write {}", path.display()))?;
    Ok(value)
}

/// Like [`write_atomic`], for output written as it is made: `f` writes into a buffered
/// temporary file that replaces `path` only when `f` succeeds. A special file (a device or a
/// pipe) is written into as a stream instead, and never replaced.
pub fn write_atomic_with<T>(path: &Path, f: impl FnOnce(&mut dyn Write) -> Result<T>) -> Result<T> {
    if is_special(path) {
        return write_stream(path, f);
    }
    let dir = output_dir(path)?;
    let tmp = tempfile::Builder::new()
        .prefix(".ohmtrail-")
        .suffix(".tmp")
        .tempfile_in(&dir)
        .with_context(|| {
            format!(
                "cannot write in the output directory {}: check it is writable",
                dir.display()
            )
        })?;
    let mut w = std::io::BufWriter::new(tmp);
    let value = f(&mut w)?;
    let tmp = w
        .into_inner()
        .map_err(|e| anyhow!("cannot write {}: {}", path.display(), e.error()))?;
    tmp.as_file()
        .sync_all()
        .with_context(|| format!("cannot write {}", path.display()))?;
    // Output is meant to be shared: readable by others, as a newly created file would be.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let _ = tmp
            .as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644));
    }
    tmp.persist(path)
        .map_err(|e| anyhow!("cannot write {}: {}", path.display(), e.error))?;
    Ok(value)
}

/// "1 value", "3 values": the report's count in words, for any integer type a count comes in.
pub fn count<N>(n: N, one: &str, many: &str) -> String
where
    N: TryInto<usize> + std::fmt::Display + Copy,
{
    match n.try_into() {
        Ok(k) => ohmtrail::report::html::count(k, one, many),
        Err(_) => format!("{n} {many}"),
    }
}
