//! Reading a CSV file's rows on their own thread: the delimiter, physical line numbers,
//! rows too long to be a visit file, and batches handed to the writer.

use std::collections::VecDeque;
use std::fs::File;
use std::io::{BufRead, BufReader, Read};
use std::path::Path;
use std::sync::mpsc;

use super::layout::Mapping;
use super::open::Errors;
use super::sheet::ReadRow;
use super::{
    Column, FieldError, FileKind, Header, Located, ObservationRow, ParseOptions, VisitRow, cell,
    parse_observation_row, parse_visit_row, row,
};
use crate::error::{Error, Result};

/// The field separator: a semicolon when the header line has more of them than commas, as
/// spreadsheets write when numbers use a decimal comma.
pub(super) fn sniff_delimiter(head: &[u8]) -> u8 {
    let line = head.split(|b| *b == b'\n').next().unwrap_or(head);
    let count = |c: u8| line.iter().filter(|b| **b == c).count();
    if count(b';') > count(b',') {
        b';'
    } else {
        b','
    }
}

/// Notes the byte offset of every newline the CSV reader reads, and whether it ends an empty
/// line, so that a record's physical line can be told from its byte offset whatever the line
/// endings (CRLF included) and however many blank lines the reader skipped.
pub(super) struct NewlineTap<R> {
    pub(super) inner: R,
    pub(super) offset: u64,
    pub(super) line_has_text: bool,
    pub(super) newlines: VecDeque<(u64, bool)>,
    /// Inside a quoted field, where a newline does not end the row (quote parity: a doubled
    /// quote inside a field flips it twice).
    pub(super) quoted: bool,
    /// Where the row being read began, and its line; every newline counted so far.
    pub(super) row_start: u64,
    pub(super) row_line: u64,
    pub(super) newline_count: u64,
}

impl<R> NewlineTap<R> {
    pub(super) fn new(inner: R) -> NewlineTap<R> {
        NewlineTap {
            inner,
            offset: 0,
            line_has_text: false,
            newlines: VecDeque::new(),
            quoted: false,
            row_start: 0,
            row_line: 1,
            newline_count: 0,
        }
    }
}

/// The longest row read: a real row is at most a few cells of [`cell::MAX_CELL_BYTES`] and
/// short values, so anything longer is not a visit file (a file with no newline at all, say),
/// and reading on would hold all of it in memory.
pub const MAX_ROW_BYTES: u64 = 64 * 1024;

/// A row longer than [`MAX_ROW_BYTES`], carried through the CSV reader as an I/O error.
#[derive(Debug)]
pub(super) struct RowTooLong {
    pub(super) line: u64,
}

impl std::fmt::Display for RowTooLong {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "row is longer than {MAX_ROW_BYTES} bytes (64 KiB): expected one row of a visit or observation file per line; check the file is one, and that every quote is closed"
        )
    }
}

impl std::error::Error for RowTooLong {}

/// The line of a row that was too long, when that is what `e` is.
pub(super) fn row_too_long(e: &csv::Error) -> Option<u64> {
    match e.kind() {
        csv::ErrorKind::Io(io) => io
            .get_ref()
            .and_then(|inner| inner.downcast_ref::<RowTooLong>())
            .map(|r| r.line),
        _ => None,
    }
}

impl<R: Read> Read for NewlineTap<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        let q = &mut self.newlines;
        for (i, b) in buf[..n].iter().enumerate() {
            match *b {
                b'\n' => {
                    q.push_back((self.offset + i as u64, !self.line_has_text));
                    self.line_has_text = false;
                    self.newline_count += 1;
                    if !self.quoted {
                        self.row_start = self.offset + i as u64 + 1;
                        self.row_line = self.newline_count + 1;
                    }
                }
                b'\r' => {}
                b'"' => {
                    self.quoted = !self.quoted;
                    self.line_has_text = true;
                }
                _ => self.line_has_text = true,
            }
        }
        self.offset += n as u64;
        if self.offset - self.row_start > MAX_ROW_BYTES {
            return Err(std::io::Error::new(
                std::io::ErrorKind::InvalidData,
                RowTooLong {
                    line: self.row_line,
                },
            ));
        }
        Ok(n)
    }
}

/// Turns record start offsets, which only grow, into 1-based line numbers. The reader reports
/// a record as starting where the previous one ended: on the LF of a CRLF, or before the blank
/// lines it skipped; those newlines are counted too.
pub(super) struct Lines {
    pub(super) passed: u64,
}

impl Lines {
    /// `q` is the tap's queue of newlines read so far.
    pub(super) fn at(&mut self, q: &mut VecDeque<(u64, bool)>, byte: u64) -> u64 {
        while q.front().is_some_and(|&(nl, blank)| nl <= byte || blank) {
            q.pop_front();
            self.passed += 1;
        }
        self.passed + 1
    }
}

/// Rows per batch handed from the reading thread to the writing one.
pub(super) const BATCH_ROWS: usize = 1024;
/// Rows in the first batch; each next one is twice as large, up to [`BATCH_ROWS`].
pub(super) const FIRST_BATCH_ROWS: usize = 32;
/// A batch also ends once its rows hold this many bytes, and a reused record that grew past
/// [`cell::MAX_CELL_BYTES`] is dropped, so that long rows cannot multiply the memory held.
pub(super) const BATCH_BYTES: usize = 1 << 20;
/// The widest header read: the known columns, with room for many a file's own extra columns
/// under `--ignore-unknown`.
pub const MAX_COLUMNS: usize = 256;
/// Batches parsed ahead of the writer; with the one being written and the one being read,
/// this bounds the rows in memory whatever the file's size.
pub(super) const BATCHES_IN_FLIGHT: usize = 2;

/// A row read into values, ready to apply. Not boxed: rows sit in reused batches, and a box
/// would cost an allocation per row.
#[allow(clippy::large_enum_variant)]
pub(super) enum Parsed {
    Visit(VisitRow),
    Observation(ObservationRow),
}

/// One row as the reading thread hands it over.
pub(super) struct Item {
    pub(super) line: u64,
    /// Byte offset of the row's start, for the progress bar.
    pub(super) byte: u64,
    /// `None` for a blank row.
    pub(super) parsed: Option<std::result::Result<Parsed, Located>>,
}

/// Consecutive rows with their raw records (kept for the sidecar of rejected rows); the
/// records are reused when the batch comes back.
pub(super) struct Batch {
    pub(super) records: Vec<csv::ByteRecord>,
    pub(super) rows: Vec<Item>,
}

pub(super) type ReadResult = std::result::Result<Batch, csv::Error>;

pub(super) type TappedCsv = csv::Reader<NewlineTap<BufReader<File>>>;

/// The reading thread: read and parse every row after the header, in batches, until the file
/// ends, the reader fails, or the writer stops listening. Under a layout, each row's cells are
/// rewritten as it says and its constants added before the row is parsed; the batch keeps the
/// row as read.
pub(super) fn read_rows(
    next: &mut dyn FnMut(&mut csv::ByteRecord) -> ReadRow,
    mapping: Option<&Mapping>,
    header: &Header,
    parse: &ParseOptions,
    full: &mpsc::SyncSender<ReadResult>,
    free: &mpsc::Receiver<Batch>,
) {
    // The writer waits for the first batch, so the first ones are small and the size grows
    // to BATCH_ROWS: a short file (one visit of a portfolio) spends less of its time with one
    // thread waiting for the other to fill the pipeline.
    let mut rows_wanted = FIRST_BATCH_ROWS;
    let mut mapped: Vec<Vec<u8>> = Vec::new();
    loop {
        let mut batch = match free.try_recv() {
            Ok(mut b) => {
                b.rows.clear();
                b
            }
            Err(_) => Batch {
                records: Vec::new(),
                rows: Vec::with_capacity(BATCH_ROWS),
            },
        };
        let mut done = false;
        let mut bytes = 0;
        while batch.rows.len() < rows_wanted && bytes < BATCH_BYTES {
            let i = batch.rows.len();
            if batch.records.len() == i {
                batch.records.push(csv::ByteRecord::new());
            }
            let record = &mut batch.records[i];
            if record.as_slice().len() > cell::MAX_CELL_BYTES {
                *record = csv::ByteRecord::new();
            }
            let (line, byte) = match next(record) {
                Ok(Some(at)) => at,
                Ok(None) => {
                    done = true;
                    break;
                }
                Err(e) => {
                    let _ = full.send(Err(e));
                    return;
                }
            };
            bytes += record.as_slice().len();
            let raw: Vec<&[u8]> = record.iter().collect();
            let parsed = if row::is_blank(&raw) {
                None
            } else {
                let fields = match mapping {
                    Some(m) => map_fields(m, &raw, &mut mapped),
                    None => raw,
                };
                Some(parse_fields(header, &fields, parse))
            };
            batch.rows.push(Item { line, byte, parsed });
        }
        rows_wanted = (rows_wanted * 2).min(BATCH_ROWS);
        if !batch.rows.is_empty() && full.send(Ok(batch)).is_err() {
            return;
        }
        if done {
            return;
        }
    }
}

/// A row's fields as the layout rewrites them, with its constants after them.
pub(super) fn map_fields<'a>(
    m: &Mapping,
    raw: &[&'a [u8]],
    scratch: &'a mut Vec<Vec<u8>>,
) -> Vec<&'a [u8]> {
    scratch.clear();
    for (i, f) in raw.iter().enumerate() {
        let cell = match std::str::from_utf8(f) {
            Ok(t) if m.rewrites() => m.cell(i, t).as_bytes().to_vec(),
            _ => f.to_vec(),
        };
        scratch.push(cell);
    }
    for (_, v) in &m.constants {
        scratch.push(v.as_bytes().to_vec());
    }
    scratch.iter().map(Vec::as_slice).collect()
}

/// Parse one row's fields by the header's kind of file.
pub(super) fn parse_fields(
    header: &Header,
    fields: &[&[u8]],
    parse: &ParseOptions,
) -> std::result::Result<Parsed, Located> {
    match header.kind {
        FileKind::Visits => parse_visit_row(header, fields, parse)
            .map(Parsed::Visit)
            .map_err(field_errors),
        FileKind::Observations => parse_observation_row(header, fields, parse)
            .map(Parsed::Observation)
            .map_err(field_errors),
    }
}

/// Open a CSV file for reading: the delimiter sniffed from its first line, the tap that
/// counts its lines, and its size for the progress bar.
pub(super) fn open_csv(path: &Path) -> Result<(TappedCsv, Lines, u64)> {
    let io_err = |source| Error::Io {
        path: path.to_path_buf(),
        source,
    };
    let file = File::open(path).map_err(io_err)?;
    let size = file.metadata().map(|m| m.len()).unwrap_or(0);
    let mut reader = BufReader::with_capacity(1 << 16, file);
    let delimiter = sniff_delimiter(reader.fill_buf().map_err(io_err)?);
    let reader = NewlineTap::new(reader);
    let csv = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(reader);
    Ok((csv, Lines { passed: 0 }, size))
}

/// Read a CSV file's header row: its names, its raw fields (for the sidecar) and its line.
/// `None` when it is refused, with the reasons in `errs`.
pub(super) fn read_header_names(
    csv: &mut TappedCsv,
    lines: &mut Lines,
    errs: &mut Errors,
    path: &Path,
) -> Result<Option<HeaderNames>> {
    let csv_err = |e: csv::Error| Error::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e),
    };
    let mut record = csv::ByteRecord::new();
    let first = match csv.read_byte_record(&mut record) {
        Err(e) if let Some(line) = row_too_long(&e) => {
            errs.push(line, 1, None, &RowTooLong { line }.to_string());
            return Ok(None);
        }
        other => other.map_err(csv_err)?,
    };
    if record.len() > MAX_COLUMNS {
        errs.push(
            1,
            MAX_COLUMNS + 1,
            None,
            &format!(
                "the header has {} columns: expected at most {MAX_COLUMNS} (a visit file has {} known columns)",
                record.len(),
                Column::VISIT.len()
            ),
        );
        return Ok(None);
    }
    if !first {
        errs.push(
            1,
            1,
            None,
            "the file is empty: expected a header row naming property_ref, board, circuit and visit_date (or property_ref, visit_date, code and text for observations)",
        );
        return Ok(None);
    }
    let header_line = lines.at(
        &mut csv.get_mut().newlines,
        record.position().map(|p| p.byte()).unwrap_or(0),
    );
    let mut names = Vec::with_capacity(record.len());
    let mut header_raw: Vec<Vec<u8>> = Vec::with_capacity(record.len());
    let mut bad = false;
    for (i, f) in record.iter().enumerate() {
        // A byte-order mark is how some spreadsheets say "UTF-8"; it is not part of the name.
        let f = if i == 0 {
            f.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(f)
        } else {
            f
        };
        header_raw.push(f.to_vec());
        match std::str::from_utf8(f) {
            Ok(t) => names.push(t.to_string()),
            Err(_) => {
                errs.push(
                    header_line,
                    i + 1,
                    None,
                    "column name is not UTF-8 text: save the file as UTF-8",
                );
                bad = true;
                names.push(String::new());
            }
        }
    }
    if bad {
        return Ok(None);
    }
    Ok(Some((names, header_raw, header_line)))
}

/// A CSV header as read: its names, its raw fields and its line.
pub(super) type HeaderNames = (Vec<String>, Vec<Vec<u8>>, u64);

fn field_errors(e: Vec<FieldError>) -> Located {
    e.into_iter()
        .map(|f| (f.column, f.name, f.message))
        .collect()
}
