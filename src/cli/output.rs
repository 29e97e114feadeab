//! Printing helpers: aligned tables for people, JSON for scripts.

use std::io::Write;

use anyhow::Result;
use comfy_table::{Table, presets};
use serde::Serialize;

/// Print `value` as pretty JSON followed by a newline.
pub fn json<T: Serialize + ?Sized>(out: &mut dyn Write, value: &T) -> Result<()> {
    serde_json::to_writer_pretty(&mut *out, value)?;
    writeln!(out)?;
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
