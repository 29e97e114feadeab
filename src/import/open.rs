//! Opening a file to import: a CSV file or a spreadsheet's sheet, its header read and checked,
//! and the layout, if any, fitted to it. Also how positions in it are written.

use std::path::Path;

use super::layout::{Layout, Mapping};
use super::sheet::{ReadRow, Sheet, column_letters, is_spreadsheet, open_sheet};
use super::source::{Lines, TappedCsv, open_csv, read_header_names};
use super::{Column, Header, ImportOptions, Summary, parse_header};
use crate::error::Result;

/// How a file is read besides its rows' meaning: which sheet, which layout, and values given
/// for every row.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SourceOptions {
    /// A spreadsheet's sheet, by name or 1-based index; the first when `None`.
    pub sheet: Option<String>,
    /// The layout that maps the file's headers; the file is ohmtrail's own format when `None`.
    pub layout: Option<Layout>,
}

/// How positions in a file are written in messages: `FILE:LINE:COLUMN` for CSV,
/// `FILE:SHEET!B12` for a spreadsheet, with the source's own header names under a layout.
#[derive(Debug, Clone, Default)]
pub struct Positions {
    /// The sheet's name and the 0-based sheet column of the first column read.
    pub sheet: Option<(String, u32)>,
    /// The file's header names, shown beside the column they fill under a layout.
    pub source_names: Option<Vec<String>>,
    /// Columns added by the layout's constants, after the file's own.
    pub constants: Vec<String>,
}

impl Positions {
    /// `FILE:LINE:COLUMN` or `FILE:SHEET!B12`, and the column's name as the message gives it.
    pub fn render(&self, file: &str, line: u64, column: usize, name: Option<&str>) -> String {
        let own = self.source_names.as_ref().map_or(usize::MAX, |n| n.len());
        if column > own {
            // A column the layout's constants added: it has no place in the file.
            let constant = self
                .constants
                .get(column - own - 1)
                .map(String::as_str)
                .unwrap_or("");
            let at = match &self.sheet {
                Some((sheet, _)) => format!("{file}:{sheet}!row {line}"),
                None => format!("{file}:{line}"),
            };
            return format!("{at}: {constant} (set by the layout)");
        }
        let at = match &self.sheet {
            Some((sheet, first)) => format!(
                "{file}:{sheet}!{}{line}",
                column_letters(first + column.saturating_sub(1) as u32)
            ),
            None => format!("{file}:{line}:{column}"),
        };
        let source = self
            .source_names
            .as_ref()
            .and_then(|n| n.get(column.wrapping_sub(1)));
        match (name, source) {
            (Some(n), Some(s)) => format!("{at}: {s:?} ({n})"),
            (Some(n), None) => format!("{at}: {n}"),
            (None, _) => at,
        }
    }
}

/// Where a file's rows come from.
pub(super) enum Source {
    Csv(TappedCsv, Lines),
    Sheet(Sheet),
}

impl Source {
    /// Run `f` with a reader of the rows: each call fills `record` with the next row and gives
    /// its line (sheet row) and a position for progress (the byte offset, or the row's count in
    /// a sheet), or `None` at the end.
    pub(super) fn with_rows<T>(
        self,
        f: impl FnOnce(&mut dyn FnMut(&mut csv::ByteRecord) -> ReadRow) -> T,
    ) -> T {
        match self {
            Source::Csv(mut csv, mut lines) => f(&mut |record| {
                if !csv.read_byte_record(record)? {
                    return Ok(None);
                }
                let byte = record.position().map(|p| p.byte()).unwrap_or(0);
                Ok(Some((lines.at(&mut csv.get_mut().newlines, byte), byte)))
            }),
            Source::Sheet(sheet) => sheet.with_rows(f),
        }
    }
}

/// A file opened for import, its header read and checked.
pub(super) struct Opened {
    pub source: Source,
    pub header: Header,
    /// The header's fields as the file wrote them, for the sidecar of rejected rows.
    pub header_raw: Vec<Vec<u8>>,
    pub header_line: u64,
    pub mapping: Option<Mapping>,
    pub positions: Positions,
    /// For the progress bar: the file's size, or a sheet's rows where known (0: not known).
    pub size: u64,
}

/// Collects errors with their positions up to the cap, and counts the rest.
pub(super) struct Errors<'a> {
    pub file: &'a str,
    pub summary: &'a mut Summary,
    pub at: &'a Positions,
}

impl Errors<'_> {
    pub fn push(&mut self, line: u64, column: usize, name: Option<&str>, message: &str) -> String {
        let text = format!(
            "{}: {message}",
            self.at.render(self.file, line, column, name)
        );
        self.summary.errors_total += 1;
        if self.summary.errors.len() < super::ERROR_CAP {
            self.summary.errors.push(text.clone());
        }
        text
    }
}

/// Open `path` and read its header. `None` when the header is refused; the reasons are then in
/// `summary`.
pub(super) fn open(
    path: &Path,
    opts: &ImportOptions,
    src: &SourceOptions,
    summary: &mut Summary,
) -> Result<Option<Opened>> {
    let file = path.display().to_string();
    let layout = src.layout.as_ref();
    let mut positions = Positions::default();
    let mut sheet = None;
    let (source, names, header_raw, header_line, size) = if is_spreadsheet(path) {
        let s = open_sheet(
            path,
            src.sheet.as_deref(),
            layout.and_then(|l| l.header_row),
        )?;
        let sheet = sheet.insert(s);
        positions.sheet = Some((sheet.name.clone(), sheet.first_column()));
        let names = sheet.header.clone();
        let raw = names.iter().map(|n| n.as_bytes().to_vec()).collect();
        let line = sheet.header_line();
        // Filled in once the header says which columns hold dates.
        (None, names, raw, line, 0)
    } else {
        let (mut csv, mut lines, size) = open_csv(path)?;
        let mut errs = Errors {
            file: &file,
            summary,
            at: &positions,
        };
        let Some((names, raw, line)) = read_header_names(&mut csv, &mut lines, &mut errs, path)?
        else {
            return Ok(None);
        };
        (Some(Source::Csv(csv, lines)), names, raw, line, size)
    };
    let mapping = match layout {
        Some(l) => match l.mapping(&names) {
            Ok(m) => Some(m),
            Err(faults) => {
                let mut errs = Errors {
                    file: &file,
                    summary,
                    at: &positions,
                };
                for (column, message) in faults {
                    errs.push(header_line, column, None, &message);
                }
                return Ok(None);
            }
        },
        None => None,
    };
    if let Some(m) = &mapping {
        positions.source_names = Some(m.source_names.clone());
        positions.constants = m.constants.iter().map(|(c, _)| c.clone()).collect();
    }
    let parser_names = match &mapping {
        Some(m) => m.header_names(),
        None => names.clone(),
    };
    let refs: Vec<&str> = parser_names.iter().map(String::as_str).collect();
    let header = match parse_header(&refs, opts.ignore_unknown || mapping.is_some()) {
        Ok(h) => h,
        Err(faults) => {
            let mut errs = Errors {
                file: &file,
                summary,
                at: &positions,
            };
            for f in faults {
                errs.push(header_line, f.column, f.name.as_deref(), &f.message);
            }
            return Ok(None);
        }
    };
    let (source, size) = match (source, sheet) {
        (Some(s), _) => (s, size),
        (None, None) => unreachable!("a file is read as CSV or as a sheet"),
        (None, Some(mut sheet)) => {
            let dates: Vec<usize> = header
                .columns
                .iter()
                .enumerate()
                .filter(|(_, c)| **c == Some(Column::VisitDate))
                .map(|(i, _)| i)
                .collect();
            sheet.set_reading(&dates, opts.parse.decimal_comma);
            let n = sheet.rows_hint();
            (Source::Sheet(sheet), n)
        }
    };
    Ok(Some(Opened {
        source,
        header,
        header_raw,
        header_line,
        mapping,
        positions,
        size,
    }))
}

/// A file's header names as written, for `layout guess`: a CSV file's first row, or a sheet's
/// header row (merged group headers spread over their columns).
pub fn file_headers(
    path: &Path,
    sheet: Option<&str>,
    header_row: Option<u32>,
) -> Result<Vec<String>> {
    if is_spreadsheet(path) {
        return Ok(open_sheet(path, sheet, header_row)?.header);
    }
    let (mut csv, mut lines, _) = open_csv(path)?;
    let mut summary = Summary::default();
    let positions = Positions::default();
    let file = path.display().to_string();
    let mut errs = Errors {
        file: &file,
        summary: &mut summary,
        at: &positions,
    };
    match read_header_names(&mut csv, &mut lines, &mut errs, path)? {
        Some((names, _, _)) => Ok(names),
        None => Err(crate::error::Error::invalid(summary.errors.join("; "))),
    }
}
