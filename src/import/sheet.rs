//! Spreadsheets (`.xlsx`, `.ods`, read with calamine) as a source of rows: each row's cells
//! become the text the CSV reader would have given, so the same row parser reads them, and
//! positions are the sheet's own (`FILE:SHEET!B12`).

use std::path::Path;

use calamine::{Data, Range, Reader, Sheets, open_workbook_auto};
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

/// One sheet's used cells, and where its header is.
pub struct Sheet {
    pub name: String,
    range: Range<Data>,
    /// 0-based sheet row and column of the range's first cell.
    origin: (u32, u32),
    /// 0-based index into the range of the header's last row.
    header_end: usize,
    /// The header's names, merged cells spread over the columns they cover.
    pub header: Vec<String>,
    /// Columns read as dates: a number there is an Excel serial date.
    date_columns: Vec<bool>,
    decimal_comma: bool,
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

/// Open a workbook's sheet: by name, else by 1-based index, else the first. `header_row` is
/// the 1-based sheet row of the headers (the first used row when `None`).
pub fn open_sheet(path: &Path, which: Option<&str>, header_row: Option<u32>) -> Result<Sheet> {
    let mut book = open_workbook_auto(path)
        .map_err(|e| sheet_err(path, format!("not a workbook this import reads: {e}")))?;
    let names = book.sheet_names();
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
    let Some(name) = name else {
        return Err(sheet_err(
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
        ));
    };
    let range = book
        .worksheet_range(&name)
        .map_err(|e| sheet_err(path, format!("sheet {name:?} cannot be read: {e}")))?;
    let origin = range.start().unwrap_or((0, 0));
    let (height, width) = range.get_size();
    let first = match header_row {
        Some(r) => (r - 1).saturating_sub(origin.0) as usize,
        None => 0,
    };
    // Merged cells matter only in a header with gaps (a merged cell leaves the cells it
    // covers empty); finding them reads the sheet again, so a full header skips it.
    let gaps = (0..width).any(|c| matches!(range.get((first, c)), Some(Data::Empty) | None));
    let merged = if gaps {
        merged_regions(&mut book, &name)
    } else {
        Vec::new()
    };
    if height == 0 || first >= height {
        return Err(sheet_err(
            path,
            format!(
                "sheet {name:?} has no header row: expected the column names in its first used row"
            ),
        ));
    }
    let text_at = |r: usize, c: usize| -> String {
        // A merged cell's text stands in every cell it covers.
        let (ar, ac) = (origin.0 + r as u32, origin.1 + c as u32);
        let (sr, sc) = merged
            .iter()
            .find(|(s, e)| s.0 <= ar && ar <= e.0 && s.1 <= ac && ac <= e.1)
            .map(|(s, _)| *s)
            .unwrap_or((ar, ac));
        match range.get_value((sr, sc)) {
            Some(Data::String(s)) => s.trim().to_string(),
            Some(Data::Empty) | None => String::new(),
            Some(d) => d.to_string(),
        }
    };
    // A header cell merged across columns heads a group: the names are in the row under it,
    // and each is read with the group's name before it ("IR" over "L-L" and "L-E").
    let grouped = merged
        .iter()
        .any(|(s, e)| s.0 == origin.0 + first as u32 && e.1 > s.1 && e.0 == s.0)
        && first + 1 < height;
    let header: Vec<String> = (0..width)
        .map(|c| {
            let top = text_at(first, c);
            if !grouped {
                return top;
            }
            let under = text_at(first + 1, c);
            let spans = merged.iter().any(|(s, e)| {
                s.0 == origin.0 + first as u32
                    && e.1 > s.1
                    && s.1 <= origin.1 + c as u32
                    && origin.1 + c as u32 <= e.1
            });
            match (spans, under.is_empty()) {
                (true, false) => format!("{top} {under}"),
                (_, true) => top,
                (false, false) => under,
            }
        })
        .collect();
    Ok(Sheet {
        name,
        range,
        origin,
        header_end: first + usize::from(grouped),
        header,
        date_columns: vec![false; width],
        decimal_comma: false,
    })
}

/// Merged regions of an `.xlsx` sheet, as (start, end) 0-based (row, column). calamine gives
/// them for `.xlsx` only; other formats are read without.
fn merged_regions<RS: std::io::Read + std::io::Seek>(
    book: &mut Sheets<RS>,
    name: &str,
) -> Vec<((u32, u32), (u32, u32))> {
    match book {
        Sheets::Xlsx(x) => x
            .merge_cells_by_sheet_name(name)
            .map(|v| v.into_iter().map(|d| (d.start, d.end)).collect())
            .unwrap_or_default(),
        _ => Vec::new(),
    }
}

/// The first day of Excel's 1900 date system, as its serial numbers count from 61 on (Excel
/// counts a 29 February 1900 that never was; dates before March 1900 are no visit's).
const EXCEL_EPOCH: NaiveDate = match NaiveDate::from_ymd_opt(1899, 12, 30) {
    Some(d) => d,
    None => panic!("a valid date"),
};

impl Sheet {
    /// The sheet row (1-based) of the header's last row.
    pub fn header_line(&self) -> u64 {
        u64::from(self.origin.0) + self.header_end as u64 + 1
    }

    /// The 0-based sheet column of the range's first column.
    pub fn first_column(&self) -> u32 {
        self.origin.1
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

    /// Rows under the header.
    pub fn rows(self) -> SheetRows {
        SheetRows {
            next: self.header_end + 1,
            sheet: self,
        }
    }

    fn text(&self, c: usize, d: &Data, out: &mut String) {
        use std::fmt::Write;
        out.clear();
        let date = self.date_columns.get(c).copied().unwrap_or(false);
        let number = |v: f64, out: &mut String| {
            if date && v.fract() == 0.0 && (61.0..2_958_466.0).contains(&v) {
                let d = EXCEL_EPOCH + Duration::days(v as i64);
                let _ = write!(out, "{d}");
            } else {
                let t = format_number(v);
                out.push_str(&if self.decimal_comma {
                    t.replace('.', ",")
                } else {
                    t
                });
            }
        };
        match d {
            Data::Empty => {}
            Data::String(s) => out.push_str(s),
            Data::Float(v) => number(*v, out),
            Data::Int(v) => number(*v as f64, out),
            Data::Bool(b) => out.push_str(if *b { "yes" } else { "no" }),
            Data::DateTime(dt) => match dt.as_datetime() {
                // A date cell: its date, whatever time of day it also holds.
                Some(t) if dt.is_datetime() => {
                    let _ = write!(out, "{}", t.date());
                }
                _ => number(dt.as_f64(), out),
            },
            Data::DateTimeIso(s) => out.push_str(s.get(..10).unwrap_or(s)),
            Data::DurationIso(s) => out.push_str(s),
            Data::Error(e) => {
                let _ = write!(out, "{e}");
            }
        }
    }
}

/// The rows under a sheet's header, each as text cells with its sheet row number.
pub struct SheetRows {
    sheet: Sheet,
    next: usize,
}

impl SheetRows {
    /// Fill `record` with the next row's cells; its 1-based sheet row, or `None` at the end.
    pub fn read(&mut self, record: &mut csv::ByteRecord) -> Option<u64> {
        let (height, width) = self.sheet.range.get_size();
        if self.next >= height {
            return None;
        }
        let r = self.next;
        self.next += 1;
        record.clear();
        let mut text = String::new();
        for c in 0..width {
            let d = self.sheet.range.get((r, c)).unwrap_or(&Data::Empty);
            self.sheet.text(c, d, &mut text);
            record.push_field(text.as_bytes());
        }
        Some(u64::from(self.sheet.origin.0) + r as u64 + 1)
    }

    pub fn len(&self) -> usize {
        self.sheet.range.get_size().0
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    pub fn position(&self) -> usize {
        self.next
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
