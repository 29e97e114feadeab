//! Spreadsheets (`.xlsx`, `.ods`, read with calamine) as a source of rows: each row's cells
//! become the text the CSV reader would have given, so the same row parser reads them, and
//! positions are the sheet's own (`FILE:SHEET!B12`).

use std::path::Path;

use std::fs::File;
use std::io::BufReader;

use calamine::{Data, DataRef, Range, Reader, Xlsx, open_workbook, open_workbook_auto};
use chrono::{Duration, NaiveDate};

use super::cell::format_number;
use crate::error::{Error, Result};

/// Whether a path names a spreadsheet this import reads.
pub fn is_spreadsheet(path: &Path) -> bool {
    matches!(
        path.extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase())
            .as_deref(),
        Some("xlsx" | "xlsm" | "ods")
    )
}

/// One sheet: its header, and its rows still to read.
pub struct Sheet {
    pub name: String,
    /// The header's names, merged cells spread over the columns they cover.
    pub header: Vec<String>,
    /// 0-based sheet row of the header's last row.
    header_last: u32,
    /// 0-based sheet column of the first column read.
    first_col: u32,
    width: usize,
    /// Columns read as dates: a number there is an Excel serial date.
    date_columns: Vec<bool>,
    decimal_comma: bool,
    body: Body,
}

/// Where a sheet's rows come from: an `.xlsx` sheet is streamed cell by cell on the reading
/// thread (memory stays bounded and reading overlaps writing); other formats are read whole.
enum Body {
    Range(Range<Data>),
    Xlsx(Box<Xlsx<BufReader<File>>>),
}

/// The letters of a 0-based column: 0 is A, 26 is AA.
pub fn column_letters(mut c: u32) -> String {
    let mut out = Vec::new();
    loop {
        out.push(b'A' + (c % 26) as u8);
        if c < 26 {
            break;
        }
        c = c / 26 - 1;
    }
    out.reverse();
    String::from_utf8(out).unwrap_or_default()
}

fn sheet_err(path: &Path, message: String) -> Error {
    Error::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(message),
    }
}

/// The sheet `which` names among `names`: by name (exactly, then in any case), else by
/// 1-based index; the first when `None`.
fn choose(path: &Path, names: &[String], which: Option<&str>) -> Result<String> {
    let name = match which {
        None => names.first().cloned(),
        Some(w) => names
            .iter()
            .find(|n| n.as_str() == w)
            .or_else(|| names.iter().find(|n| n.eq_ignore_ascii_case(w)))
            .cloned()
            .or_else(|| {
                w.parse::<usize>()
                    .ok()
                    .filter(|i| *i >= 1)
                    .and_then(|i| names.get(i - 1).cloned())
            }),
    };
    name.ok_or_else(|| {
        sheet_err(
            path,
            format!(
                "no sheet {:?}: the workbook has {} (choose with --sheet NAME or --sheet INDEX, from 1)",
                which.unwrap_or(""),
                names
                    .iter()
                    .map(|n| format!("{n:?}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        )
    })
}

/// The header rows' cells by (0-based) sheet position, and the merged regions over them.
struct HeaderCells {
    cells: std::collections::HashMap<(u32, u32), String>,
    merged: Vec<((u32, u32), (u32, u32))>,
    /// 0-based sheet row of the header's first row.
    first: u32,
    first_col: u32,
    width: usize,
    /// Whether a row follows the first (a group header needs one).
    next_row: bool,
}

impl HeaderCells {
    fn text_at(&self, r: u32, c: u32) -> String {
        // A merged cell's text stands in every cell it covers.
        let at = self
            .merged
            .iter()
            .find(|(s, e)| s.0 <= r && r <= e.0 && s.1 <= c && c <= e.1)
            .map(|(s, _)| *s)
            .unwrap_or((r, c));
        self.cells.get(&at).cloned().unwrap_or_default()
    }

    fn gaps(&self) -> bool {
        (0..self.width as u32).any(|i| {
            self.cells
                .get(&(self.first, self.first_col + i))
                .is_none_or(|t| t.is_empty())
        })
    }

    /// The names, and whether the header is two rows (a group cell over names).
    fn names(&self) -> (Vec<String>, bool) {
        let f = self.first;
        // A header cell merged across columns heads a group: the names are in the row under
        // it, and each is read with the group's name before it ("IR" over "L-L" and "L-E").
        let grouped = self.next_row
            && self
                .merged
                .iter()
                .any(|(s, e)| s.0 == f && e.0 == f && e.1 > s.1);
        let names = (0..self.width as u32)
            .map(|i| {
                let c = self.first_col + i;
                let top = self.text_at(f, c);
                if !grouped {
                    return top;
                }
                let under = self.text_at(f + 1, c);
                let spans = self
                    .merged
                    .iter()
                    .any(|(s, e)| s.0 == f && e.0 == f && e.1 > s.1 && s.1 <= c && c <= e.1);
                match (spans, under.is_empty()) {
                    (true, false) => format!("{top} {under}"),
                    (_, true) => top,
                    (false, false) => under,
                }
            })
            .collect();
        (names, grouped)
    }
}

/// Open a workbook's sheet: by name, else by 1-based index, else the first. `header_row` is
/// the 1-based sheet row of the headers (the first used row when `None`).
pub fn open_sheet(path: &Path, which: Option<&str>, header_row: Option<u32>) -> Result<Sheet> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase());
    if matches!(ext.as_deref(), Some("xlsx" | "xlsm")) {
        return open_xlsx(path, which, header_row);
    }
    let mut book = open_workbook_auto(path)
        .map_err(|e| sheet_err(path, format!("not a workbook this import reads: {e}")))?;
    let name = choose(path, &book.sheet_names(), which)?;
    let range = book
        .worksheet_range(&name)
        .map_err(|e| sheet_err(path, format!("sheet {name:?} cannot be read: {e}")))?;
    let origin = range.start().unwrap_or((0, 0));
    let (height, width) = range.get_size();
    let first = header_row.map_or(origin.0, |r| r - 1);
    let mut head = HeaderCells {
        cells: Default::default(),
        merged: Vec::new(),
        first,
        first_col: origin.1,
        width,
        next_row: (first + 1) < origin.0 + height as u32,
    };
    for r in [first, first + 1] {
        for c in 0..width as u32 {
            let mut text = String::new();
            if let Some(d) = range.get_value((r, origin.1 + c)) {
                cell_text(&data_ref(d), false, false, &mut text);
            }
            head.cells
                .insert((r, origin.1 + c), text.trim().to_string());
        }
    }
    finish(
        path,
        name,
        head,
        Body::Range(range),
        height > 0 && first < origin.0 + height as u32,
    )
}

fn open_xlsx(path: &Path, which: Option<&str>, header_row: Option<u32>) -> Result<Sheet> {
    let mut book: Xlsx<BufReader<File>> = open_workbook(path)
        .map_err(|e| sheet_err(path, format!("not a workbook this import reads: {e}")))?;
    let name = choose(path, &book.sheet_names(), which)?;
    let read_err =
        |e: calamine::XlsxError| sheet_err(path, format!("sheet {name:?} cannot be read: {e}"));
    let mut head = {
        let mut cells = book.worksheet_cells_reader(&name).map_err(read_err)?;
        let dims = cells.dimensions();
        let mut head = HeaderCells {
            cells: Default::default(),
            merged: Vec::new(),
            first: header_row.map_or(u32::MAX, |r| r - 1),
            first_col: dims.start.1,
            width: (dims.end.1 + 1).saturating_sub(dims.start.1) as usize,
            next_row: false,
        };
        let mut text = String::new();
        while let Some(cell) = cells.next_cell().map_err(read_err)? {
            let (r, c) = cell.get_position();
            cell_text(cell.get_value(), false, false, &mut text);
            let t = text.trim();
            if t.is_empty() {
                continue;
            }
            if head.first == u32::MAX {
                head.first = r;
            }
            if r < head.first {
                continue;
            }
            if r > head.first + 1 {
                head.next_row = true;
                break;
            }
            if r == head.first + 1 {
                head.next_row = true;
            }
            if c < head.first_col {
                head.width += (head.first_col - c) as usize;
                head.first_col = c;
            }
            head.width = head.width.max((c - head.first_col + 1) as usize);
            head.cells.insert((r, c), t.to_string());
        }
        head
    };
    let found = head.first != u32::MAX && !head.cells.is_empty();
    // Merged cells matter only in a header with gaps (a merged cell leaves the cells it covers
    // empty); finding them reads the sheet again, so a full header skips it.
    if found && head.gaps() {
        head.merged = book
            .merge_cells_by_sheet_name(&name)
            .map(|v| v.into_iter().map(|d| (d.start, d.end)).collect())
            .unwrap_or_default();
    }
    finish(path, name, head, Body::Xlsx(Box::new(book)), found)
}

fn finish(path: &Path, name: String, head: HeaderCells, body: Body, found: bool) -> Result<Sheet> {
    if !found || head.width == 0 {
        return Err(sheet_err(
            path,
            format!(
                "sheet {name:?} has no header row: expected the column names in its first used row"
            ),
        ));
    }
    let (header, grouped) = head.names();
    Ok(Sheet {
        name,
        header,
        header_last: head.first + u32::from(grouped),
        first_col: head.first_col,
        width: head.width,
        date_columns: vec![false; head.width],
        decimal_comma: false,
        body,
    })
}

/// The first day of Excel's 1900 date system, as its serial numbers count from 61 on (Excel
/// counts a 29 February 1900 that never was; dates before March 1900 are no visit's).
const EXCEL_EPOCH: NaiveDate = match NaiveDate::from_ymd_opt(1899, 12, 30) {
    Some(d) => d,
    None => panic!("a valid date"),
};

/// A cell of a read-whole sheet as the streamed cells come.
fn data_ref(d: &Data) -> DataRef<'_> {
    match d {
        Data::Int(v) => DataRef::Int(*v),
        Data::Float(v) => DataRef::Float(*v),
        Data::String(s) => DataRef::SharedString(s),
        Data::Bool(b) => DataRef::Bool(*b),
        Data::DateTime(t) => DataRef::DateTime(*t),
        Data::DateTimeIso(s) => DataRef::DateTimeIso(s.clone()),
        Data::DurationIso(s) => DataRef::DurationIso(s.clone()),
        Data::Error(e) => DataRef::Error(e.clone()),
        Data::Empty => DataRef::Empty,
    }
}

/// A cell's text as the CSV reader would have given it: a number as the shortest decimal that
/// reads back the same (with a decimal comma when asked), a date cell as its ISO date, and in
/// a date column a bare whole number as the Excel serial date it is.
fn cell_text(d: &DataRef, date: bool, decimal_comma: bool, out: &mut String) {
    use std::fmt::Write;
    out.clear();
    let number = |v: f64, out: &mut String| {
        if date && v.fract() == 0.0 && (61.0..2_958_466.0).contains(&v) {
            let d = EXCEL_EPOCH + Duration::days(v as i64);
            let _ = write!(out, "{d}");
        } else {
            let t = format_number(v);
            out.push_str(&if decimal_comma {
                t.replace('.', ",")
            } else {
                t
            });
        }
    };
    match d {
        DataRef::Empty => {}
        DataRef::String(s) => out.push_str(s),
        DataRef::SharedString(s) => out.push_str(s),
        DataRef::Float(v) => number(*v, out),
        DataRef::Int(v) => number(*v as f64, out),
        DataRef::Bool(b) => out.push_str(if *b { "yes" } else { "no" }),
        DataRef::DateTime(dt) => match dt.as_datetime() {
            // A date cell: its date, whatever time of day it also holds.
            Some(t) if dt.is_datetime() => {
                let _ = write!(out, "{}", t.date());
            }
            _ => number(dt.as_f64(), out),
        },
        DataRef::DateTimeIso(s) => out.push_str(s.get(..10).unwrap_or(s)),
        DataRef::DurationIso(s) => out.push_str(s),
        DataRef::Error(e) => {
            let _ = write!(out, "{e}");
        }
    }
}

/// A row read: its line (1-based sheet row) and position for progress, or `None` at the end.
pub type ReadRow = std::result::Result<Option<(u64, u64)>, csv::Error>;

impl Sheet {
    /// The sheet row (1-based) of the header's last row.
    pub fn header_line(&self) -> u64 {
        u64::from(self.header_last) + 1
    }

    /// The 0-based sheet column of the first column read.
    pub fn first_column(&self) -> u32 {
        self.first_col
    }

    /// Rows to read, where known before reading them (a streamed sheet: its dimension).
    pub fn rows_hint(&self) -> u64 {
        match &self.body {
            Body::Range(r) => r.get_size().0 as u64,
            Body::Xlsx(_) => 0,
        }
    }

    /// Read the columns at these 0-based positions as dates, and numbers with a decimal comma.
    pub fn set_reading(&mut self, date_columns: &[usize], decimal_comma: bool) {
        for c in date_columns {
            if let Some(d) = self.date_columns.get_mut(*c) {
                *d = true;
            }
        }
        self.decimal_comma = decimal_comma;
    }

    /// Run `f` with a reader of the rows under the header: each call fills a record with the
    /// next row's cells, as text, one field a column (more where a row runs past the header).
    pub fn with_rows<T>(
        self,
        f: impl FnOnce(&mut dyn FnMut(&mut csv::ByteRecord) -> ReadRow) -> T,
    ) -> T {
        let Sheet {
            name,
            header_last,
            first_col,
            width,
            date_columns,
            decimal_comma,
            body,
            ..
        } = self;
        let date = |c: usize| date_columns.get(c).copied().unwrap_or(false);
        let mut fields: Vec<String> = Vec::new();
        let emit = |record: &mut csv::ByteRecord, fields: &mut Vec<String>| {
            record.clear();
            for f in fields.iter() {
                record.push_field(f.as_bytes());
            }
        };
        match body {
            Body::Range(range) => {
                let origin = range.start().unwrap_or((0, 0));
                let height = range.get_size().0 as u32;
                let mut r = header_last + 1;
                f(&mut |record| {
                    if r >= origin.0 + height {
                        return Ok(None);
                    }
                    fields.clear();
                    fields.resize(width, String::new());
                    for (i, field) in fields.iter_mut().enumerate() {
                        if let Some(d) = range.get_value((r, first_col + i as u32)) {
                            cell_text(&data_ref(d), date(i), decimal_comma, field);
                        }
                    }
                    emit(record, &mut fields);
                    r += 1;
                    Ok(Some((u64::from(r), u64::from(r - origin.0))))
                })
            }
            Body::Xlsx(mut book) => {
                let io = |e: calamine::XlsxError| {
                    csv::Error::from(std::io::Error::other(format!(
                        "sheet {name:?} cannot be read: {e}"
                    )))
                };
                let mut cells = match book.worksheet_cells_reader(&name) {
                    Ok(c) => c,
                    Err(e) => {
                        let mut e = Some(io(e));
                        return f(&mut |_| e.take().map_or(Ok(None), Err));
                    }
                };
                let mut pending: Option<(u32, u32, String)> = None;
                let mut text = String::new();
                let mut count = 0u64;
                let mut ended = false;
                f(&mut |record| {
                    fields.clear();
                    let mut row = None;
                    loop {
                        let cell = match pending.take() {
                            Some(p) => Some(p),
                            None if ended => None,
                            None => match cells.next_cell().map_err(io)? {
                                None => {
                                    // The reader may not be asked again once it has ended.
                                    ended = true;
                                    None
                                }
                                Some(cell) => {
                                    let (r, c) = cell.get_position();
                                    if r <= header_last || c < first_col {
                                        continue;
                                    }
                                    let i = (c - first_col) as usize;
                                    cell_text(cell.get_value(), date(i), decimal_comma, &mut text);
                                    Some((r, c, std::mem::take(&mut text)))
                                }
                            },
                        };
                        let Some((r, c, t)) = cell else { break };
                        if row.is_some_and(|cur| cur != r) {
                            pending = Some((r, c, t));
                            break;
                        }
                        row = Some(r);
                        let i = (c - first_col) as usize;
                        if fields.len() < width.max(i + 1) {
                            fields.resize(width.max(i + 1), String::new());
                        }
                        fields[i] = t;
                    }
                    let Some(r) = row else { return Ok(None) };
                    emit(record, &mut fields);
                    count += 1;
                    Ok(Some((u64::from(r) + 1, count)))
                })
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn column_letters_count_as_a_spreadsheet_does() {
        assert_eq!(column_letters(0), "A");
        assert_eq!(column_letters(1), "B");
        assert_eq!(column_letters(25), "Z");
        assert_eq!(column_letters(26), "AA");
        assert_eq!(column_letters(27), "AB");
        assert_eq!(column_letters(701), "ZZ");
        assert_eq!(column_letters(702), "AAA");
    }

    /// Excel's serial 45822 is 14 June 2025 (1900 date system; as Excel shows it).
    #[test]
    fn serial_dates_count_from_excels_epoch() {
        assert_eq!(
            EXCEL_EPOCH + Duration::days(45822),
            NaiveDate::from_ymd_opt(2025, 6, 14).unwrap()
        );
    }
}
