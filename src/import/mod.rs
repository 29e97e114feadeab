//! Visit files in: every row checked, one transaction per file, exact errors.
//!
//! [`cell`] and [`row`] read text into values and know nothing else; [`source`] reads a file's
//! rows; `apply` decides what each row means for the history (new, unchanged, a conflict, a
//! register change) and asks [`crate::store`] to write it, keeping what rows refer to in the
//! per-file cache of `state`. This module is the entry: [`import_file`].

mod apply;
pub mod cell;
mod fault;
mod observation;
mod reading;
mod register;
mod rejected;
pub mod row;
mod schedule;
mod source;
mod state;

use std::path::{Path, PathBuf};
use std::sync::mpsc;

use chrono::NaiveDate;
use serde::Serialize;

use apply::Importer;
pub use cell::{
    Cell, CellError, Column, ParseOptions, escape, format_number, normalise_circuit, parse_cell,
    unescape,
};
use fault::Effect;
use observation::run_row;
pub use reading::reading_text;
pub use register::{register_at, register_texts};
use rejected::Rejected;
pub use row::{
    FieldError, FileKind, Header, ObservationRow, RowRegister, VisitRow, parse_header,
    parse_observation_row, parse_visit_row,
};
use source::{
    BATCHES_IN_FLIGHT, Batch, Parsed, ReadResult, RowTooLong, open_csv, read_header, read_rows,
    row_too_long,
};
pub use source::{MAX_COLUMNS, MAX_ROW_BYTES};
use state::Cache;

use crate::error::{Error, Result};
use crate::store::Store;

/// At most this many errors are printed; the rest are counted.
pub const ERROR_CAP: usize = 100;

/// How a file is imported.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ImportOptions {
    pub parse: ParseOptions,
    /// Write the valid rows and put the rejected ones in a sidecar file.
    pub skip_invalid: bool,
    /// Overwrite stored values that the file contradicts, instead of refusing.
    pub replace: bool,
    /// Ignore columns this tool does not know, instead of refusing the file.
    pub ignore_unknown: bool,
}

impl ImportOptions {
    /// Strict defaults: decimal point, every row valid, no overwriting, no unknown columns.
    pub fn new(today: NaiveDate) -> ImportOptions {
        ImportOptions {
            parse: ParseOptions {
                decimal_comma: false,
                today,
            },
            skip_invalid: false,
            replace: false,
            ignore_unknown: false,
        }
    }
}

/// A register change that a row recorded.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RegisterChange {
    pub line: u64,
    pub property_ref: String,
    pub board: String,
    pub circuit: String,
    pub date: NaiveDate,
    pub kind: String,
    pub field: String,
    pub old_value: Option<String>,
    pub new_value: Option<String>,
}

/// What an import did, for people and for scripts.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Summary {
    pub file: String,
    pub kind: Option<FileKind>,
    pub rows: u64,
    pub blank_rows: u64,
    pub properties_created: u64,
    pub boards_created: u64,
    pub circuits_created: u64,
    pub visits_created: u64,
    pub test_records_written: u64,
    pub test_records_replaced: u64,
    pub test_records_unchanged: u64,
    /// Stored details overwritten with `--replace`: a visit's inspector, instrument or
    /// ambient, Ze at a board, a property's address, a board's earthing (one a row).
    pub details_replaced: u64,
    pub observations_written: u64,
    pub observations_unchanged: u64,
    pub changes: Vec<RegisterChange>,
    pub rows_rejected: u64,
    /// `FILE:LINE:COLUMN: message`, at most [`ERROR_CAP`] of them.
    pub errors: Vec<String>,
    pub errors_total: u64,
    /// Where the rejected rows went, with `skip_invalid`.
    pub sidecar: Option<PathBuf>,
    /// Whether anything was written to the database.
    pub written: bool,
}

impl Summary {
    /// Whether the file was refused as a whole: errors without `skip_invalid`.
    pub fn failed(&self) -> bool {
        self.errors_total > 0 && self.rows_rejected == 0
    }

    /// Everything from this file was rolled back.
    fn rolled_back(&mut self) {
        self.written = false;
        self.properties_created = 0;
        self.boards_created = 0;
        self.circuits_created = 0;
        self.visits_created = 0;
        self.test_records_written = 0;
        self.test_records_replaced = 0;
        self.observations_written = 0;
        self.changes.clear();
    }

    fn add(&mut self, e: &Effect) {
        self.properties_created += e.properties;
        self.boards_created += e.boards;
        self.circuits_created += e.circuits;
        self.visits_created += e.visits;
        self.test_records_written += e.written;
        self.test_records_replaced += e.replaced;
        self.test_records_unchanged += e.unchanged;
        self.details_replaced += e.details_replaced;
        self.observations_written += e.observations;
        self.observations_unchanged += e.observations_unchanged;
        self.changes.extend(e.changes.iter().cloned());
        if e.wrote {
            self.written = true;
        }
    }
}

/// Reading columns stored in a test record, in export order.
pub const READING_COLUMNS: [Column; 16] = [
    Column::ZeOhm,
    Column::RingR1Ohm,
    Column::RingRnOhm,
    Column::RingR2Ohm,
    Column::R1r2Ohm,
    Column::R2Ohm,
    Column::R1rnOhm,
    Column::ZsOhm,
    Column::Polarity,
    Column::IrTestV,
    Column::IrLlMohm,
    Column::IrLeMohm,
    Column::RcdMs,
    Column::Rcd5xMs,
    Column::RcdButton,
    Column::Note,
];

/// Collects `FILE:LINE:COLUMN: message` lines up to the cap, and counts the rest.
struct Errors<'a> {
    file: &'a str,
    summary: &'a mut Summary,
}

impl Errors<'_> {
    fn push(&mut self, line: u64, column: usize, name: Option<&str>, message: &str) -> String {
        let text = match name {
            Some(n) => format!("{}:{line}:{column}: {n}: {message}", self.file),
            None => format!("{}:{line}:{column}: {message}", self.file),
        };
        self.summary.errors_total += 1;
        if self.summary.errors.len() < ERROR_CAP {
            self.summary.errors.push(text.clone());
        }
        text
    }
}

/// Where rejected rows go: `visits.csv` → `visits.rejected.csv`, beside it.
pub fn sidecar_path(path: &Path) -> PathBuf {
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "import".into());
    path.with_file_name(format!("{stem}.rejected.csv"))
}

/// Import one visit or observation file into the store, in one transaction. Row faults are
/// in the summary (nothing is written when there is any, unless `skip_invalid`); an `Err` is
/// a file or database failure. `progress` is called now and then with (bytes read, file size).
pub fn import_file(
    store: &Store,
    path: &Path,
    opts: &ImportOptions,
    progress: &mut dyn FnMut(u64, u64),
) -> Result<Summary> {
    let (mut csv, mut lines, size) = open_csv(path)?;
    let name = path.display().to_string();
    let mut summary = Summary {
        file: name.clone(),
        ..Default::default()
    };
    let csv_err = |e: csv::Error| Error::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e),
    };
    let mut errs = Errors {
        file: &name,
        summary: &mut summary,
    };
    let Some((header, header_raw, header_line)) =
        read_header(&mut csv, &mut lines, opts, &mut errs).map_err(csv_err)?
    else {
        return Ok(summary);
    };
    summary.kind = Some(header.kind);

    store.ingest_prepare()?;
    let mut rejected = Rejected::new(sidecar_path(path), header_raw);
    let mut importer = Importer {
        store,
        inserts: store.ingest_inserts()?,
        opts,
        header: &header,
        cache: Cache::default(),
    };
    let mut last_line = header_line;
    // Set when the file is rolled back for its rows' faults, not for a database failure.
    let mut refused = false;
    // A second thread reads and parses rows while this one writes them; batches go back to
    // it for reuse, so the raw records are not allocated again row after row.
    let (full_tx, full_rx) = mpsc::sync_channel::<ReadResult>(BATCHES_IN_FLIGHT);
    let (free_tx, free_rx) = mpsc::channel::<Batch>();
    let outcome = std::thread::scope(|scope| {
        let header = &header;
        let parse = opts.parse;
        scope.spawn(move || read_rows(csv, lines, header, &parse, &full_tx, &free_rx));
        let outcome = store.atomic(|s| {
            for received in full_rx.iter() {
                let batch = match received {
                    Err(e) if let Some(line) = row_too_long(&e) => {
                        Errors {
                            file: &name,
                            summary: &mut summary,
                        }
                        .push(
                            line,
                            1,
                            None,
                            &RowTooLong { line }.to_string(),
                        );
                        refused = true;
                        return Err(Error::invalid("rolled back"));
                    }
                    other => other.map_err(csv_err)?,
                };
                for (i, item) in batch.rows.iter().enumerate() {
                    let record = &batch.records[i];
                    let line = item.line;
                    last_line = line;
                    let Some(parsed) = &item.parsed else {
                        summary.blank_rows += 1;
                        continue;
                    };
                    summary.rows += 1;
                    if summary.rows.is_multiple_of(4096) {
                        progress(item.byte, size);
                    }
                    let result = match parsed {
                        Ok(Parsed::Visit(r)) => {
                            run_row(s, opts, header, |_| importer.apply_visit(r, line))?
                        }
                        Ok(Parsed::Observation(r)) => {
                            run_row(s, opts, header, |_| importer.apply_observation(r))?
                        }
                        Err(located) => Err(located.clone()),
                    };
                    match result {
                        Ok(eff) => summary.add(&eff),
                        Err(faults) => {
                            // What the cache knew may have been rolled back with the row.
                            importer.cache = Cache::default();
                            let mut errs = Errors {
                                file: &name,
                                summary: &mut summary,
                            };
                            let reasons: Vec<String> = faults
                                .iter()
                                .map(|(col, n, msg)| errs.push(line, *col, n.as_deref(), msg))
                                .collect();
                            if opts.skip_invalid {
                                summary.rows_rejected += 1;
                                rejected.push(record, &reasons)?;
                            }
                        }
                    }
                }
                // The rows are freed on the reading thread, where they were made. The reader
                // may have stopped; then the batch is simply dropped.
                let _ = free_tx.send(batch);
            }
            if summary.rows == 0 {
                Errors {
                    file: &name,
                    summary: &mut summary,
                }
                .push(
                    last_line + 1,
                    1,
                    None,
                    "no rows under the header: nothing to import",
                );
            }
            if summary.errors_total > 0 && !opts.skip_invalid || summary.rows == 0 {
                refused = true;
                return Err(Error::invalid("rolled back"));
            }
            Ok(())
        });
        // Dropping the receiver stops the reader if this side stopped early.
        drop(full_rx);
        outcome
    });
    progress(size, size);
    if outcome.is_ok() {
        summary.sidecar = rejected.persist()?;
    }
    match outcome {
        Ok(()) => Ok(summary),
        Err(_) if refused => {
            summary.rolled_back();
            Ok(summary)
        }
        Err(source) => {
            // A sidecar of rejected rows means nothing once the file is rolled back.
            if let Some(p) = &summary.sidecar {
                let _ = std::fs::remove_file(p);
            }
            Err(Error::FileAborted {
                file: path.to_path_buf(),
                line: last_line,
                source: Box::new(source),
            })
        }
    }
}

type Located = Vec<(usize, Option<String>, String)>;
