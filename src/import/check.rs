//! A dry run: a file read and every row parsed as the import would, the mapping and the first
//! rows shown as they would be stored, and nothing written: the store is never opened.

use std::path::Path;

use serde::Serialize;

use super::layout::Mapping;
use super::open::{self, Errors, open};
use super::source::{map_fields, parse_fields};
use super::{Cell, Column, ImportOptions, SourceOptions, Summary, parse_cell, row};
use crate::error::{Error, Result};

/// One cell of a checked row: the column, the text as the source gave it, and the value as
/// it would be stored.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckedCell {
    pub column: String,
    pub source: String,
    pub stored: String,
}

/// One row of a dry run, by its line (sheet row).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckRow {
    pub line: u64,
    pub cells: Vec<CheckedCell>,
}

/// What a dry run found.
#[derive(Debug, Clone, Default, Serialize)]
pub struct DryRun {
    /// Errors and counts, as an import would give them; nothing is written.
    pub summary: Summary,
    /// Each source header and the column it fills (empty: ignored), then the constants.
    pub mapping: Vec<(String, String)>,
    /// The first rows as they would be stored.
    pub rows: Vec<CheckRow>,
}

/// A value as the store would keep it, in words where it is a mark.
fn stored_text(cell: &Cell) -> String {
    match cell {
        Cell::Missing => "(not recorded)".into(),
        Cell::NotApplicable => "N/A (not applicable)".into(),
        Cell::NotTested => "N/T (not tested)".into(),
        Cell::Limitation => "LIM (limitation)".into(),
        Cell::Text(t) => t.clone(),
        Cell::Date(d) => d.to_string(),
        Cell::Number(v) => super::format_number(*v),
        Cell::OverRange(v) => format!(">{} (over range: at least this)", super::format_number(*v)),
        Cell::Device(d) => d.to_string(),
        Cell::RcdMa(v) => v.to_string(),
        Cell::RcdType(m) => format!("{m:?}"),
        Cell::RcdDelay(d) => d.as_str().to_string(),
        Cell::Ring(k) => k.as_str().to_string(),
        Cell::Earthing(e) => e.as_str().to_string(),
        Cell::Code(c) => c.as_str().to_string(),
        Cell::Bonding(b) => b.as_str().to_string(),
        Cell::Months(m) => format!("{m} months"),
        Cell::Insulation(i) => i.as_str().to_string(),
        Cell::RefMethod(m) => m.as_str().to_string(),
        Cell::Count(n) => n.to_string(),
        Cell::YesNo(b) => if *b { "yes" } else { "no" }.to_string(),
        Cell::Polarity(p) => p.as_str().to_string(),
        Cell::Volts(v) => format!("{v} V"),
        Cell::Button(b) => b.as_str().to_string(),
    }
}

/// Read `path` as the import would and parse every row; keep the first `shown` rows.
pub fn check_file(
    path: &Path,
    opts: &ImportOptions,
    src: &SourceOptions,
    shown: usize,
) -> Result<DryRun> {
    let name = path.display().to_string();
    let mut run = DryRun {
        summary: Summary {
            file: name.clone(),
            ..Default::default()
        },
        ..Default::default()
    };
    let opts = &ImportOptions {
        parse: match &src.layout {
            Some(l) => l.parse_options(opts.parse),
            None => opts.parse,
        },
        ..*opts
    };
    let Some(opened) = open(path, opts, src, &mut run.summary)? else {
        return Ok(run);
    };
    run.summary.kind = Some(opened.header.kind);
    run.mapping = mapping_rows(opened.mapping.as_ref(), &opened.header);
    let csv_err = |e: csv::Error| Error::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e),
    };
    let open::Opened {
        source,
        header,
        mapping,
        positions,
        header_line,
        ..
    } = opened;
    let outcome: Result<u64> = source.with_rows(|next| {
        let mut record = csv::ByteRecord::new();
        let mut scratch = Vec::new();
        let mut last_line = header_line;
        while let Some((line, _)) = next(&mut record).map_err(csv_err)? {
            last_line = line;
            let raw: Vec<&[u8]> = record.iter().collect();
            if row::is_blank(&raw) {
                run.summary.blank_rows += 1;
                continue;
            }
            run.summary.rows += 1;
            let fields = match &mapping {
                Some(m) => map_fields(m, &raw, &mut scratch),
                None => raw.clone(),
            };
            let mut errs = Errors {
                file: &name,
                summary: &mut run.summary,
                at: &positions,
            };
            if let Err(faults) = parse_fields(&header, &fields, &opts.parse) {
                // Counted as rows refused, as `--skip-invalid` would refuse them.
                errs.summary.rows_rejected += 1;
                for (col, n, msg) in &faults {
                    errs.push(line, *col, n.as_deref(), msg);
                }
                continue;
            }
            if run.rows.len() < shown {
                let cells = header
                    .columns
                    .iter()
                    .zip(
                        fields
                            .iter()
                            .zip(raw.iter().chain(std::iter::repeat(&&b""[..]))),
                    )
                    .filter_map(|(c, (f, r))| {
                        let c = (*c)?;
                        let text = String::from_utf8_lossy(f);
                        let stored = parse_cell(c, &text, &opts.parse)
                            .map(|cell| stored_text(&cell))
                            .unwrap_or_default();
                        let source = if r.is_empty() && !f.is_empty() {
                            text.to_string()
                        } else {
                            String::from_utf8_lossy(r).into_owned()
                        };
                        Some(CheckedCell {
                            column: c.name().to_string(),
                            source,
                            stored,
                        })
                    })
                    .collect();
                run.rows.push(CheckRow { line, cells });
            }
        }
        Ok(last_line)
    });
    let last_line = outcome?;
    if run.summary.rows == 0 {
        let mut errs = Errors {
            file: &name,
            summary: &mut run.summary,
            at: &positions,
        };
        errs.push(
            last_line + 1,
            1,
            None,
            "no rows under the header: nothing to import",
        );
    }
    Ok(run)
}

fn mapping_rows(m: Option<&Mapping>, header: &super::Header) -> Vec<(String, String)> {
    match m {
        Some(m) => m
            .source_names
            .iter()
            .cloned()
            .zip(m.targets.iter().cloned())
            .chain(
                m.constants
                    .iter()
                    .map(|(c, v)| (format!("(constant {v:?})"), c.clone())),
            )
            .collect(),
        None => header
            .columns
            .iter()
            .map(|c| {
                let n = c.map(Column::name).unwrap_or("").to_string();
                (n.clone(), n)
            })
            .collect(),
    }
}
