//! Visit files in: every row checked, one transaction per file, exact errors.
//!
//! [`cell`] and [`row`] read text into values and know nothing else; this module decides what
//! each row means for the history (new, unchanged, a conflict, a register change) and asks
//! [`crate::store`] to write it.

pub mod cell;
mod reading;
pub mod row;

use std::borrow::Cow;
use std::collections::VecDeque;
use std::fs::File;
use std::io::{BufRead, BufReader, Read};
use std::path::{Path, PathBuf};
use std::sync::mpsc;

use chrono::NaiveDate;
// The per-file caches are looked up several times a row; a fast hasher shows in the profile.
use foldhash::{HashMap, HashMapExt, HashSet, HashSetExt};
use serde::Serialize;

pub use cell::{
    Cell, CellError, Column, ParseOptions, escape, format_number, normalise_circuit, parse_cell,
    unescape,
};
pub use reading::reading_text;
use reading::{copy_reading, same_reading};
pub use row::{
    FieldError, FileKind, Header, ObservationRow, RowRegister, VisitRow, parse_header,
    parse_observation_row, parse_visit_row,
};

use crate::error::{Error, Result};
use crate::store::{CircuitDetails, IngestBoard, IngestChange, IngestVisit, Store, fmt_num};

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

/// What one row did; added to the summary only when the row is kept.
#[derive(Debug, Default)]
struct Effect {
    properties: u64,
    boards: u64,
    circuits: u64,
    visits: u64,
    written: u64,
    replaced: u64,
    unchanged: u64,
    details_replaced: u64,
    observations: u64,
    observations_unchanged: u64,
    changes: Vec<RegisterChange>,
    wrote: bool,
}

/// A fault found while applying a row: the column it concerns, if one, and why.
#[derive(Debug, Clone)]
struct Fault {
    column: Option<Column>,
    message: String,
}

/// Why a row was not applied.
enum Faults {
    /// Faults in the row itself: reported at its line, and the rest of the file is still read.
    Row(Vec<Fault>),
    /// The database itself failed (full, I/O, locked). SQLite may already have rolled the
    /// transaction back, so nothing more may be written: the whole file stops.
    Fatal(Error),
}

impl From<Error> for Faults {
    fn from(e: Error) -> Faults {
        if is_fatal(&e) {
            return Faults::Fatal(e);
        }
        Faults::Row(vec![Fault {
            column: None,
            message: e.to_string(),
        }])
    }
}

/// Whether an error is the database failing rather than the row being wrong. A constraint
/// failure is about the row; any other SQLite failure (full, I/O, busy, corrupt) is not, and
/// after some of them SQLite has rolled back the whole transaction.
fn is_fatal(e: &Error) -> bool {
    match e {
        Error::Invalid(_) | Error::NotFound { .. } => false,
        Error::Sql(rusqlite::Error::SqliteFailure(f, _))
        | Error::Database {
            source: rusqlite::Error::SqliteFailure(f, _),
            ..
        } => f.code != rusqlite::ErrorCode::ConstraintViolation,
        _ => true,
    }
}

fn fault<T>(column: Column, message: String) -> std::result::Result<T, Faults> {
    Err(Faults::Row(vec![Fault {
        column: Some(column),
        message,
    }]))
}

type RowResult<T> = std::result::Result<T, Faults>;

/// The register fields a row may carry, with the change-log field name for each.
const REGISTER: [(Column, &str); 9] = [
    (Column::Description, "description"),
    (Column::Ring, "kind"),
    (Column::Device, "device"),
    (Column::RcdMa, "rcd_ma"),
    (Column::LiveMm2, "live_mm2"),
    (Column::CpcMm2, "cpc_mm2"),
    (Column::LengthM, "length_m"),
    (Column::RcdType, "rcd_type"),
    (Column::RcdDelay, "rcd_delay"),
];

/// Register details as the change log writes them, in [`REGISTER`] order.
pub fn register_texts(d: &CircuitDetails) -> [Option<String>; 9] {
    [
        d.description.clone(),
        d.kind.map(|k| k.as_str().to_string()),
        d.device.map(|x| x.to_string()),
        d.rcd_ma.map(|x| x.to_string()),
        d.live_mm2.map(fmt_num),
        d.cpc_mm2.map(fmt_num),
        d.length_m.map(fmt_num),
        d.rcd_type.map(|t| t.as_str().to_string()),
        d.rcd_delay.map(|t| t.as_str().to_string()),
    ]
}

/// Whether every register field the row gives equals the register's.
fn register_agrees(d: &CircuitDetails, r: &RowRegister) -> bool {
    fn same<T: PartialEq>(row: &Option<T>, reg: &Option<T>) -> bool {
        row.is_none() || row == reg
    }
    same(&r.description, &d.description)
        && same(&r.kind, &d.kind)
        && same(&r.device, &d.device)
        && same(&r.rcd_ma, &d.rcd_ma)
        && same(&r.live_mm2, &d.live_mm2)
        && same(&r.cpc_mm2, &d.cpc_mm2)
        && same(&r.length_m, &d.length_m)
        && same(&r.rcd_type, &d.rcd_type)
        && same(&r.rcd_delay, &d.rcd_delay)
}

/// Set one register field from its change-log text.
fn apply_text(d: &mut CircuitDetails, field: &str, v: Option<&str>) {
    let num = |v: Option<&str>| v.and_then(|t| t.parse().ok());
    match field {
        "description" => d.description = v.map(String::from),
        "kind" => d.kind = v.and_then(|t| t.parse().ok()),
        "device" => d.device = v.and_then(|t| t.parse().ok()),
        "rcd_ma" => d.rcd_ma = v.and_then(|t| t.parse().ok()),
        "live_mm2" => d.live_mm2 = num(v),
        "cpc_mm2" => d.cpc_mm2 = num(v),
        "length_m" => d.length_m = num(v),
        "rcd_type" => {
            d.rcd_type = v.and_then(|t| t.parse::<crate::model::RcdMarking>().ok()?.waveform)
        }
        "rcd_delay" => d.rcd_delay = v.and_then(|t| t.parse().ok()),
        _ => {}
    }
}

fn row_register_details(r: &RowRegister) -> CircuitDetails {
    CircuitDetails {
        description: r.description.clone(),
        kind: r.kind,
        live_mm2: r.live_mm2,
        cpc_mm2: r.cpc_mm2,
        length_m: r.length_m,
        device: r.device,
        rcd_ma: r.rcd_ma,
        rcd_type: r.rcd_type,
        rcd_delay: r.rcd_delay,
        ..Default::default()
    }
}

/// A register field's value at `date`: the value before the first later change, else now.
pub fn register_at(
    current: &[Option<String>; 9],
    changes: &[IngestChange],
    date: NaiveDate,
) -> [Option<String>; 9] {
    let mut out = current.clone();
    for (i, (_, field)) in REGISTER.iter().enumerate() {
        if let Some(c) = changes
            .iter()
            .find(|c| c.date > date && c.field.as_deref() == Some(field))
        {
            out[i] = c.old_value.clone();
        }
    }
    out
}

/// Reading columns stored in a test record, in export order.
pub const READING_COLUMNS: [Column; 13] = [
    Column::ZeOhm,
    Column::RingR1Ohm,
    Column::RingRnOhm,
    Column::RingR2Ohm,
    Column::R1r2Ohm,
    Column::R2Ohm,
    Column::R1rnOhm,
    Column::ZsOhm,
    Column::IrLlMohm,
    Column::IrLeMohm,
    Column::RcdMs,
    Column::Rcd5xMs,
    Column::Note,
];

fn shown(v: &Option<String>) -> String {
    match v {
        Some(t) => format!("{t:?}"),
        None => "not recorded".to_string(),
    }
}

/// Two rows of one file that give one thing two values.
fn in_file_conflict(what: &str, earlier: &Option<String>, this: &Option<String>) -> String {
    format!(
        "conflicts with an earlier row of this file for {what}: earlier {}, this row {}",
        shown(earlier),
        shown(this)
    )
}

fn conflict(what: &str, stored: &Option<String>, file: &Option<String>) -> String {
    format!(
        "conflicts with {what}: stored {}, file {} (pass --replace to overwrite)",
        shown(stored),
        shown(file)
    )
}

// ----- the per-file cache of what rows refer to -----

struct CircuitState {
    id: i64,
    /// The register now, typed for the common case of a row that agrees with it.
    details: CircuitDetails,
    /// The register now as text, made when a row first disagrees with `details`.
    current: Option<[Option<String>; 9]>,
    changes: Vec<IngestChange>,
    /// The date of the circuit's latest test record, once looked up: only a row that
    /// disagrees with the register needs it, so most rows never ask.
    latest: Option<Option<NaiveDate>>,
}

struct BoardState {
    id: i64,
    earthing: Option<String>,
    /// Every circuit in service on the board, by its number as import reads it: read whole
    /// when the board is first met, so a number missing here is a new circuit.
    circuits: HashMap<String, CircuitState>,
    /// Numbers that two stored circuits share once read as import reads them (`1` and `01`
    /// stored before numbers were normalised), with the stored numbers: rows cannot say which.
    ambiguous: HashMap<String, Vec<String>>,
}

struct VisitState {
    v: IngestVisit,
    /// Ze stored at each board at this visit, as far as this import knows.
    ze: HashMap<i64, Option<f64>>,
    /// Created by this import, so it holds only records this import wrote.
    created: bool,
    written: HashSet<i64>,
    /// Inspector, instrument and ambient as set by a row of this file, not found stored.
    from_file: [bool; 3],
    /// Boards whose Ze a row of this file set.
    ze_from_file: HashSet<i64>,
}

struct PropertyState {
    id: i64,
    /// Created by this import, so its only boards and visits are the ones cached here.
    created: bool,
    address: Option<String>,
    boards: HashMap<String, BoardState>,
    visits: HashMap<NaiveDate, VisitState>,
}

/// Keeps recently used properties so most rows need no lookup. Bounded, so memory does not
/// grow with the file; a property dropped from it is read again from the database.
#[derive(Default)]
struct Cache {
    properties: HashMap<String, PropertyState>,
    instruments: HashMap<String, i64>,
}

const CACHE_PROPERTIES: usize = 2_000;

impl Cache {
    fn property(
        &mut self,
        s: &Store,
        reference: &str,
        address: Option<&str>,
        eff: &mut Effect,
    ) -> RowResult<&mut PropertyState> {
        if self.properties.len() >= CACHE_PROPERTIES && !self.properties.contains_key(reference) {
            self.properties.clear();
        }
        if !self.properties.contains_key(reference) {
            let state = match s.ingest_property(reference)? {
                Some(p) => PropertyState {
                    id: p.id,
                    created: false,
                    address: p.address,
                    boards: HashMap::new(),
                    visits: HashMap::new(),
                },
                None => {
                    let id = s.ingest_insert_property(reference, address)?;
                    eff.properties += 1;
                    eff.wrote = true;
                    PropertyState {
                        id,
                        created: true,
                        address: address.map(String::from),
                        boards: HashMap::new(),
                        visits: HashMap::new(),
                    }
                }
            };
            self.properties.insert(reference.to_string(), state);
        }
        Ok(self.properties.get_mut(reference).expect("just inserted"))
    }

    fn instrument(&mut self, s: &Store, serial: &str) -> Result<i64> {
        if let Some(id) = self.instruments.get(serial) {
            return Ok(*id);
        }
        let id = s.ingest_instrument(serial)?;
        self.instruments.insert(serial.to_string(), id);
        Ok(id)
    }
}

/// A board already stored, with every circuit in service on it keyed by its number as import
/// reads it (`normalise_circuit`); two stored numbers that read alike are kept aside as
/// ambiguous.
fn stored_board(s: &Store, b: IngestBoard) -> RowResult<BoardState> {
    let rows = s.ingest_board_circuits(b.id)?;
    let mut circuits = HashMap::with_capacity(rows.len());
    let mut ambiguous: HashMap<String, Vec<String>> = HashMap::new();
    // Stored numbers that read differently (stored before numbers were
    // normalised), by how they read now: rare, so only those are kept.
    let mut unusual: HashMap<String, String> = HashMap::new();
    for (number, id, details, changed) in rows {
        let normal = match normalise_circuit(&number) {
            Cow::Borrowed(_) => None,
            Cow::Owned(k) => Some(k),
        };
        let (key, original) = match normal {
            None => (number, None),
            Some(k) => (k, Some(number)),
        };
        if circuits.contains_key(&key) {
            let both = ambiguous.entry(key.clone()).or_default();
            if both.is_empty() {
                both.push(unusual.get(&key).unwrap_or(&key).clone());
            }
            both.push(original.unwrap_or_else(|| key.clone()));
            continue;
        }
        if let Some(o) = original {
            unusual.insert(key.clone(), o);
        }
        let number = key;
        let changes = if changed {
            s.ingest_changes(id)?
        } else {
            Vec::new()
        };
        let state = CircuitState {
            id,
            current: None,
            details,
            changes,
            latest: None,
        };
        circuits.insert(number, state);
    }
    Ok(BoardState {
        id: b.id,
        earthing: b.earthing,
        circuits,
        ambiguous,
    })
}

/// Why a row cannot name a circuit whose number two stored circuits share once read as import
/// reads it.
fn ambiguous_circuit(number: &str, board: &str, property_ref: &str, stored: &[String]) -> String {
    format!(
        "circuit {number:?} of board {board} at {property_ref} could be any of the stored circuits {}: circuit numbers are now read as numbers (01 and 1.0 are 1); renumber all but one with `ohmtrail circuit replace`",
        stored
            .iter()
            .map(|n| format!("{n:?}"))
            .collect::<Vec<_>>()
            .join(", ")
    )
}

fn visit_state<'a>(
    s: &Store,
    p: &'a mut PropertyState,
    date: NaiveDate,
    wanted: &IngestVisit,
    instrument_id: Option<i64>,
    eff: &mut Effect,
) -> Result<&'a mut VisitState> {
    if !p.visits.contains_key(&date) {
        let stored = if p.created {
            None
        } else {
            s.ingest_visit(p.id, date)?
        };
        let state = match stored {
            Some(v) => VisitState {
                v,
                ze: HashMap::new(),
                created: false,
                written: HashSet::new(),
                from_file: [false; 3],
                ze_from_file: HashSet::new(),
            },
            None => {
                let id = s.ingest_insert_visit(p.id, date, wanted, instrument_id)?;
                eff.visits += 1;
                eff.wrote = true;
                VisitState {
                    v: IngestVisit {
                        id,
                        ..wanted.clone()
                    },
                    ze: HashMap::new(),
                    created: true,
                    written: HashSet::new(),
                    from_file: [false; 3],
                    ze_from_file: HashSet::new(),
                }
            }
        };
        p.visits.insert(date, state);
    }
    Ok(p.visits.get_mut(&date).expect("just inserted"))
}

struct Importer<'a> {
    store: &'a Store,
    inserts: crate::store::HeldInserts<'a>,
    opts: &'a ImportOptions,
    header: &'a Header,
    cache: Cache,
}

impl Importer<'_> {
    fn apply_visit(&mut self, row: &VisitRow, line: u64) -> RowResult<Effect> {
        let s = self.store;
        let replace = self.opts.replace;
        let mut eff = Effect::default();
        let date = row.visit_date;
        let where_ = || format!("{} {}/{}", row.property_ref, row.board, row.circuit);

        // The visit's own fields, resolved before borrowing the property's state.
        let instrument_id = match &row.instrument {
            Some(serial) => Some(self.cache.instrument(s, serial)?),
            None => None,
        };
        let wanted = IngestVisit {
            id: 0,
            inspector: row.inspector.clone(),
            instrument: row.instrument.clone(),
            ambient_c: row.ambient_c,
        };

        let p = self
            .cache
            .property(s, &row.property_ref, row.address.as_deref(), &mut eff)?;
        if let Some(a) = &row.address
            && p.address.as_ref() != Some(a)
        {
            if p.address.is_none() || replace {
                if p.address.is_some() {
                    eff.details_replaced += 1;
                }
                s.ingest_set_address(p.id, a)?;
                p.address = Some(a.clone());
                eff.wrote = true;
            } else {
                return fault(
                    Column::Address,
                    conflict(
                        &format!("the address of property {}", row.property_ref),
                        &p.address,
                        &row.address,
                    ),
                );
            }
        }
        let property_id = p.id;

        // Board.
        if !p.boards.contains_key(&row.board) {
            let stored = if p.created {
                None
            } else {
                s.ingest_board(property_id, &row.board)?
            };
            let state = match stored {
                Some(b) => stored_board(s, b)?,
                None => {
                    let e = row.earthing.map(|e| e.as_str());
                    let id = s.ingest_insert_board(property_id, &row.board, e)?;
                    eff.boards += 1;
                    eff.wrote = true;
                    BoardState {
                        id,
                        earthing: e.map(String::from),
                        circuits: HashMap::new(),
                        ambiguous: HashMap::new(),
                    }
                }
            };
            p.boards.insert(row.board.clone(), state);
        }
        let b = p.boards.get_mut(&row.board).expect("just inserted");
        if let Some(e) = row.earthing.map(|e| e.as_str().to_string())
            && b.earthing.as_ref() != Some(&e)
        {
            if b.earthing.is_none() || replace {
                if b.earthing.is_some() {
                    eff.details_replaced += 1;
                }
                s.ingest_set_earthing(b.id, &e)?;
                b.earthing = Some(e);
                eff.wrote = true;
            } else {
                return fault(
                    Column::Earthing,
                    conflict(
                        &format!(
                            "the earthing of board {} at {}",
                            row.board, row.property_ref
                        ),
                        &b.earthing,
                        &Some(e),
                    ),
                );
            }
        }
        let board_id = b.id;
        if !b.ambiguous.is_empty()
            && let Some(numbers) = b.ambiguous.get(&row.circuit)
        {
            return fault(
                Column::Circuit,
                ambiguous_circuit(&row.circuit, &row.board, &row.property_ref, numbers),
            );
        }

        // Circuit, and whether the row disagrees with the register as it stood on the date.
        let row_details = row_register_details(&row.register);
        if !b.circuits.contains_key(&row.circuit) {
            let id = self.inserts.circuit(board_id, &row.circuit, &row_details)?;
            eff.circuits += 1;
            eff.wrote = true;
            let mut details = row_details.clone();
            details.kind = Some(details.kind.unwrap_or(crate::model::CircuitKind::Radial));
            let state = CircuitState {
                id,
                current: None,
                details,
                changes: Vec::new(),
                latest: Some(None),
            };
            b.circuits.insert(row.circuit.clone(), state);
        }
        let c = b.circuits.get_mut(&row.circuit).expect("just inserted");
        let circuit_id = c.id;
        let mut differing = Vec::new();
        let mut faults = Vec::new();
        // Most rows agree with a register that never changed: no text to build.
        let agrees = c.changes.is_empty() && register_agrees(&c.details, &row.register);
        let (then, row_texts) = if agrees {
            (Default::default(), Default::default())
        } else {
            (
                register_at(
                    c.current.get_or_insert_with(|| register_texts(&c.details)),
                    &c.changes,
                    date,
                ),
                register_texts(&row_details),
            )
        };
        for (i, (col, field)) in REGISTER.iter().enumerate() {
            if agrees {
                break;
            }
            let Some(new) = &row_texts[i] else { continue };
            if then[i].as_ref() == Some(new) {
                continue;
            }
            let later_change = c
                .changes
                .iter()
                .find(|ch| ch.date > date && ch.field.as_deref() == Some(field))
                .map(|ch| ch.date);
            let latest = match c.latest {
                Some(known) => known,
                None => *c.latest.insert(s.ingest_latest_record(circuit_id)?),
            };
            let later = later_change.or(latest.filter(|d| *d > date));
            if let Some(later) = later {
                faults.push(Fault {
                    column: Some(*col),
                    message: format!(
                        "{} on {date} has {new:?} but the register has {} and a later visit ({later}) is already recorded: import visit files oldest first, or record the change with `ohmtrail circuit edit`",
                        where_(),
                        shown(&then[i])
                    ),
                });
            } else {
                differing.push(i);
            }
        }
        if !faults.is_empty() {
            return Err(Faults::Row(faults));
        }

        // Visit.
        let v = visit_state(s, p, date, &wanted, instrument_id, &mut eff)?;
        let visit_id = v.v.id;
        // The visit's own fields: cheap comparisons first, since almost every row agrees.
        let ambient_differs = row.ambient_c.is_some()
            && row.ambient_c.map(f64::to_bits) != v.v.ambient_c.map(f64::to_bits)
            && row.ambient_c.map(format_number) != v.v.ambient_c.map(format_number);
        let differs = [
            row.inspector.is_some() && row.inspector != v.v.inspector,
            row.instrument.is_some() && row.instrument != v.v.instrument,
            ambient_differs,
        ];
        if differs.contains(&true) {
            let mut next = v.v.clone();
            let mut faults = Vec::new();
            let fields = [
                (
                    Column::Inspector,
                    v.v.inspector.clone(),
                    row.inspector.clone(),
                ),
                (
                    Column::Instrument,
                    v.v.instrument.clone(),
                    row.instrument.clone(),
                ),
                (
                    Column::AmbientC,
                    v.v.ambient_c.map(format_number),
                    row.ambient_c.map(format_number),
                ),
            ];
            let mut dirty = false;
            let mut overwrote = false;
            for (i, (col, stored, file)) in fields.into_iter().enumerate() {
                if !differs[i] {
                    continue;
                }
                let what = format!("the visit to {} on {date}", row.property_ref);
                if stored.is_some() && (v.created || v.from_file[i]) {
                    // Two rows of this file disagree: --replace cannot say which one is right.
                    faults.push(Fault {
                        column: Some(col),
                        message: in_file_conflict(&what, &stored, &file),
                    });
                } else if stored.is_none() || replace {
                    overwrote |= stored.is_some();
                    match col {
                        Column::Inspector => next.inspector = file,
                        Column::Instrument => next.instrument = file,
                        _ => next.ambient_c = row.ambient_c,
                    }
                    dirty = true;
                } else {
                    faults.push(Fault {
                        column: Some(col),
                        message: conflict(&what, &stored, &file),
                    });
                }
            }
            if !faults.is_empty() {
                return Err(Faults::Row(faults));
            }
            if dirty {
                let instrument_id = match &next.instrument {
                    Some(serial) => Some(self.cache.instrument(s, serial)?),
                    None => None,
                };
                s.ingest_update_visit(&next, instrument_id)?;
                eff.wrote = true;
                if overwrote {
                    eff.details_replaced += 1;
                }
                // The cache borrow ended above; look the visit up again to keep it current.
                if let Some(p) = self.cache.properties.get_mut(&row.property_ref)
                    && let Some(v) = p.visits.get_mut(&date)
                {
                    v.v = next;
                    for (i, d) in differs.iter().enumerate() {
                        v.from_file[i] |= *d;
                    }
                }
            }
        }

        // Ze at this board.
        if let Some(ze) = row.ze_ohm {
            let v = self
                .cache
                .properties
                .get_mut(&row.property_ref)
                .and_then(|p| p.visits.get_mut(&date));
            let known = v.as_ref().and_then(|v| {
                v.ze.get(&board_id)
                    .copied()
                    .or(if v.created { Some(None) } else { None })
            });
            let stored = match known {
                Some(z) => z,
                None => s.ingest_board_ze(visit_id, board_id)?.flatten(),
            };
            let set_by_file = v
                .as_ref()
                .is_some_and(|v| v.created || v.ze_from_file.contains(&board_id));
            if stored != Some(ze) {
                if stored.is_some() && set_by_file {
                    return fault(
                        Column::ZeOhm,
                        in_file_conflict(
                            &format!("Ze at board {} on {date}", row.board),
                            &stored.map(format_number),
                            &Some(format_number(ze)),
                        ),
                    );
                }
                if stored.is_none() || replace {
                    if stored.is_some() {
                        eff.details_replaced += 1;
                    }
                    s.ingest_set_board_ze(visit_id, board_id, ze)?;
                    eff.wrote = true;
                } else {
                    return fault(
                        Column::ZeOhm,
                        conflict(
                            &format!("Ze at board {} on {date}", row.board),
                            &stored.map(format_number),
                            &Some(format_number(ze)),
                        ),
                    );
                }
            }
            if let Some(v) = self
                .cache
                .properties
                .get_mut(&row.property_ref)
                .and_then(|p| p.visits.get_mut(&date))
            {
                v.ze.insert(board_id, Some(ze));
                v.ze_from_file.insert(board_id);
            }
        }

        // Register changes, effective from this visit.
        if !differing.is_empty() {
            let mut d = CircuitDetails::default();
            for i in &differing {
                match REGISTER[*i].0 {
                    Column::Description => d.description = row_details.description.clone(),
                    Column::Ring => d.kind = row_details.kind,
                    Column::Device => d.device = row_details.device,
                    Column::RcdMa => d.rcd_ma = row_details.rcd_ma,
                    Column::LiveMm2 => d.live_mm2 = row_details.live_mm2,
                    Column::CpcMm2 => d.cpc_mm2 = row_details.cpc_mm2,
                    Column::RcdType => d.rcd_type = row_details.rcd_type,
                    Column::RcdDelay => d.rcd_delay = row_details.rcd_delay,
                    _ => d.length_m = row_details.length_m,
                }
            }
            let made = s.edit_circuit(circuit_id, &d, date, None, Some(visit_id), None)?;
            let mut c = self.circuit_state(&row.property_ref, &row.board, &row.circuit);
            for ch in made {
                if let (Some(c), Some(field)) = (c.as_deref_mut(), ch.field.as_deref())
                    && let Some(i) = REGISTER.iter().position(|(_, f)| *f == field)
                {
                    c.current.get_or_insert_with(|| register_texts(&c.details))[i] =
                        ch.new_value.clone();
                    apply_text(&mut c.details, field, ch.new_value.as_deref());
                    c.changes.push(IngestChange {
                        date,
                        field: ch.field.clone(),
                        old_value: ch.old_value.clone(),
                    });
                }
                eff.changes.push(RegisterChange {
                    line,
                    property_ref: row.property_ref.clone(),
                    board: row.board.clone(),
                    circuit: row.circuit.clone(),
                    date,
                    kind: ch.kind.as_str().to_string(),
                    field: ch.field.unwrap_or_default(),
                    old_value: ch.old_value,
                    new_value: ch.new_value,
                });
            }
            eff.wrote = true;
        }

        // The test record.
        let (fresh, by_file) = self
            .cache
            .properties
            .get(&row.property_ref)
            .and_then(|p| p.visits.get(&date))
            .map_or((false, false), |v| {
                let by_file = v.written.contains(&circuit_id);
                (v.created && !by_file, by_file)
            });
        let stored = if fresh {
            None
        } else {
            s.ingest_record(visit_id, circuit_id)?
        };
        match stored {
            None => {
                self.inserts.record(visit_id, circuit_id, &row.readings)?;
                eff.written += 1;
                eff.wrote = true;
            }
            Some(stored) => {
                let present: Vec<Column> = READING_COLUMNS
                    .iter()
                    .copied()
                    .filter(|c| self.header.has(*c))
                    .collect();
                let differ: Vec<Column> = present
                    .iter()
                    .copied()
                    .filter(|c| !same_reading(&stored, &row.readings, *c))
                    .collect();
                if differ.is_empty() {
                    eff.unchanged += 1;
                } else if by_file {
                    // Two rows of this file for one circuit and visit: --replace cannot say
                    // which one is right.
                    return Err(Faults::Row(
                        differ
                            .iter()
                            .map(|c| Fault {
                                column: Some(*c),
                                message: in_file_conflict(
                                    &format!("{} on {date}", where_()),
                                    &reading_text(&stored, *c),
                                    &reading_text(&row.readings, *c),
                                ),
                            })
                            .collect(),
                    ));
                } else if replace {
                    let mut merged = stored.clone();
                    for c in &present {
                        copy_reading(&mut merged, &row.readings, *c);
                    }
                    s.ingest_put_record(visit_id, circuit_id, &merged)?;
                    eff.replaced += 1;
                    eff.wrote = true;
                } else {
                    return Err(Faults::Row(
                        differ
                            .iter()
                            .map(|c| Fault {
                                column: Some(*c),
                                message: conflict(
                                    &format!("the stored record for {} on {date}", where_()),
                                    &reading_text(&stored, *c),
                                    &reading_text(&row.readings, *c),
                                ),
                            })
                            .collect(),
                    ));
                }
            }
        }
        if let Some(p) = self.cache.properties.get_mut(&row.property_ref) {
            if let Some(v) = p.visits.get_mut(&date) {
                v.written.insert(circuit_id);
            }
            if let Some(c) = p
                .boards
                .get_mut(&row.board)
                .and_then(|b| b.circuits.get_mut(&row.circuit))
            {
                // Unknown stays unknown: the stored records may be later than this one.
                if let Some(known) = c.latest.as_mut() {
                    *known = (*known).max(Some(date));
                }
            }
        }
        Ok(eff)
    }

    fn circuit_state(&mut self, p: &str, b: &str, c: &str) -> Option<&mut CircuitState> {
        self.cache
            .properties
            .get_mut(p)?
            .boards
            .get_mut(b)?
            .circuits
            .get_mut(c)
    }

    fn apply_observation(&mut self, row: &ObservationRow) -> RowResult<Effect> {
        let s = self.store;
        let mut eff = Effect::default();
        // An observation belongs to a property's inspection: it never adds a property.
        if !self.cache.properties.contains_key(&row.property_ref)
            && s.ingest_property(&row.property_ref)?.is_none()
        {
            return fault(
                Column::PropertyRef,
                format!(
                    "property {:?} not found: import its visit file first",
                    row.property_ref
                ),
            );
        }
        let p = self.cache.property(s, &row.property_ref, None, &mut eff)?;
        let property_id = p.id;
        let blank = IngestVisit {
            id: 0,
            inspector: None,
            instrument: None,
            ambient_c: None,
        };
        let visit_id = visit_state(s, p, row.visit_date, &blank, None, &mut eff)?
            .v
            .id;
        let mut board_id = None;
        let mut circuit_id = None;
        if let Some(board) = &row.board {
            // The board's circuits as a visit file's rows find them: by number as import reads
            // it, so `01` and `1.0` find circuit 1 however it was stored.
            if !p.boards.contains_key(board) {
                let Some(stored) = s.ingest_board(property_id, board)? else {
                    return fault(
                        Column::Board,
                        format!(
                            "board {board:?} not found at property {}: import its visit file first",
                            row.property_ref
                        ),
                    );
                };
                p.boards.insert(board.clone(), stored_board(s, stored)?);
            }
            let b = &p.boards[board];
            board_id = Some(b.id);
            if let Some(number) = &row.circuit {
                if let Some(stored) = b.ambiguous.get(number) {
                    return fault(
                        Column::Circuit,
                        ambiguous_circuit(number, board, &row.property_ref, stored),
                    );
                }
                let Some(c) = b.circuits.get(number) else {
                    return fault(
                        Column::Circuit,
                        format!(
                            "circuit {number:?} not found in service on board {board} at property {}: import its visit file first",
                            row.property_ref
                        ),
                    );
                };
                circuit_id = Some(c.id);
            }
        }
        let code = row.code.as_str();
        if s.ingest_has_observation(visit_id, board_id, circuit_id, code, &row.text)? {
            eff.observations_unchanged += 1;
        } else {
            s.add_observation(visit_id, board_id, circuit_id, row.code, &row.text)?;
            eff.observations += 1;
            eff.wrote = true;
        }
        Ok(eff)
    }
}

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

/// The field separator: a semicolon when the header line has more of them than commas, as
/// spreadsheets write when numbers use a decimal comma.
fn sniff_delimiter(head: &[u8]) -> u8 {
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
struct NewlineTap<R> {
    inner: R,
    offset: u64,
    line_has_text: bool,
    newlines: VecDeque<(u64, bool)>,
    /// Inside a quoted field, where a newline does not end the row (quote parity: a doubled
    /// quote inside a field flips it twice).
    quoted: bool,
    /// Where the row being read began, and its line; every newline counted so far.
    row_start: u64,
    row_line: u64,
    newline_count: u64,
}

impl<R> NewlineTap<R> {
    fn new(inner: R) -> NewlineTap<R> {
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
struct RowTooLong {
    line: u64,
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
fn row_too_long(e: &csv::Error) -> Option<u64> {
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
struct Lines {
    passed: u64,
}

impl Lines {
    /// `q` is the tap's queue of newlines read so far.
    fn at(&mut self, q: &mut VecDeque<(u64, bool)>, byte: u64) -> u64 {
        while q.front().is_some_and(|&(nl, blank)| nl <= byte || blank) {
            q.pop_front();
            self.passed += 1;
        }
        self.passed + 1
    }
}

/// Rows per batch handed from the reading thread to the writing one.
const BATCH_ROWS: usize = 1024;
/// Rows in the first batch; each next one is twice as large, up to [`BATCH_ROWS`].
const FIRST_BATCH_ROWS: usize = 32;
/// A batch also ends once its rows hold this many bytes, and a reused record that grew past
/// [`cell::MAX_CELL_BYTES`] is dropped, so that long rows cannot multiply the memory held.
const BATCH_BYTES: usize = 1 << 20;
/// The widest header read: the known columns, with room for many a file's own extra columns
/// under `--ignore-unknown`.
pub const MAX_COLUMNS: usize = 256;
/// Batches parsed ahead of the writer; with the one being written and the one being read,
/// this bounds the rows in memory whatever the file's size.
const BATCHES_IN_FLIGHT: usize = 2;

/// A row read into values, ready to apply. Not boxed: rows sit in reused batches, and a box
/// would cost an allocation per row.
#[allow(clippy::large_enum_variant)]
enum Parsed {
    Visit(VisitRow),
    Observation(ObservationRow),
}

/// One row as the reading thread hands it over.
struct Item {
    line: u64,
    /// Byte offset of the row's start, for the progress bar.
    byte: u64,
    /// `None` for a blank row.
    parsed: Option<std::result::Result<Parsed, Located>>,
}

/// Consecutive rows with their raw records (kept for the sidecar of rejected rows); the
/// records are reused when the batch comes back.
struct Batch {
    records: Vec<csv::ByteRecord>,
    rows: Vec<Item>,
}

type ReadResult = std::result::Result<Batch, csv::Error>;

type TappedCsv = csv::Reader<NewlineTap<BufReader<File>>>;

/// The reading thread: read and parse every row after the header, in batches, until the file
/// ends, the reader fails, or the writer stops listening.
fn read_rows(
    mut csv: TappedCsv,
    mut lines: Lines,
    header: &Header,
    parse: &ParseOptions,
    full: &mpsc::SyncSender<ReadResult>,
    free: &mpsc::Receiver<Batch>,
) {
    // The writer waits for the first batch, so the first ones are small and the size grows
    // to BATCH_ROWS: a short file (one visit of a portfolio) spends less of its time with one
    // thread waiting for the other to fill the pipeline.
    let mut rows_wanted = FIRST_BATCH_ROWS;
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
            match csv.read_byte_record(record) {
                Ok(true) => {}
                Ok(false) => {
                    done = true;
                    break;
                }
                Err(e) => {
                    let _ = full.send(Err(e));
                    return;
                }
            }
            bytes += record.as_slice().len();
            let byte = record.position().map(|p| p.byte()).unwrap_or(0);
            let line = lines.at(&mut csv.get_mut().newlines, byte);
            let fields: Vec<&[u8]> = record.iter().collect();
            let parsed = if row::is_blank(&fields) {
                None
            } else {
                Some(match header.kind {
                    FileKind::Visits => parse_visit_row(header, &fields, parse)
                        .map(Parsed::Visit)
                        .map_err(field_errors),
                    FileKind::Observations => parse_observation_row(header, &fields, parse)
                        .map(Parsed::Observation)
                        .map_err(field_errors),
                })
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
    let io_err = |source| Error::Io {
        path: path.to_path_buf(),
        source,
    };
    let file = File::open(path).map_err(io_err)?;
    let size = file.metadata().map(|m| m.len()).unwrap_or(0);
    let mut reader = BufReader::with_capacity(1 << 16, file);
    let delimiter = sniff_delimiter(reader.fill_buf().map_err(io_err)?);
    let mut lines = Lines { passed: 0 };
    let reader = NewlineTap::new(reader);
    let mut csv = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(reader);
    let name = path.display().to_string();
    let mut summary = Summary {
        file: name.clone(),
        ..Default::default()
    };
    let csv_err = |e: csv::Error| Error::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e),
    };

    let mut record = csv::ByteRecord::new();
    let first = match csv.read_byte_record(&mut record) {
        Err(e) if let Some(line) = row_too_long(&e) => {
            Errors {
                file: &name,
                summary: &mut summary,
            }
            .push(line, 1, None, &RowTooLong { line }.to_string());
            return Ok(summary);
        }
        other => other.map_err(csv_err)?,
    };
    if record.len() > MAX_COLUMNS {
        Errors {
            file: &name,
            summary: &mut summary,
        }
        .push(
            1,
            MAX_COLUMNS + 1,
            None,
            &format!(
                "the header has {} columns: expected at most {MAX_COLUMNS} (a visit file has {} known columns)",
                record.len(),
                Column::VISIT.len()
            ),
        );
        return Ok(summary);
    }
    if !first {
        Errors {
            file: &name,
            summary: &mut summary,
        }
        .push(
            1,
            1,
            None,
            "the file is empty: expected a header row naming property_ref, board, circuit and visit_date (or property_ref, visit_date, code and text for observations)",
        );
        return Ok(summary);
    }
    let header_line = lines.at(
        &mut csv.get_mut().newlines,
        record.position().map(|p| p.byte()).unwrap_or(0),
    );
    let mut names = Vec::with_capacity(record.len());
    let mut header_raw: Vec<Vec<u8>> = Vec::with_capacity(record.len());
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
                Errors {
                    file: &name,
                    summary: &mut summary,
                }
                .push(
                    header_line,
                    i + 1,
                    None,
                    "column name is not UTF-8 text: save the file as UTF-8",
                );
                names.push(String::new());
            }
        }
    }
    if summary.errors_total > 0 {
        return Ok(summary);
    }
    let name_refs: Vec<&str> = names.iter().map(String::as_str).collect();
    let header = match parse_header(&name_refs, opts.ignore_unknown) {
        Ok(h) => h,
        Err(faults) => {
            let mut errs = Errors {
                file: &name,
                summary: &mut summary,
            };
            for f in faults {
                errs.push(header_line, f.column, f.name.as_deref(), &f.message);
            }
            return Ok(summary);
        }
    };
    summary.kind = Some(header.kind);

    store.ingest_prepare()?;
    // Rejected rows are written to a temporary file beside the sidecar's name and renamed
    // onto it at the end: a rename replaces whatever stands at the name (a symbolic link
    // planted there included) instead of writing through it.
    let mut sidecar: Option<csv::Writer<tempfile::NamedTempFile>> = None;
    let sidecar_file = sidecar_path(path);
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
                                if sidecar.is_none() {
                                    let dir = match sidecar_file.parent() {
                                        Some(d) if !d.as_os_str().is_empty() => d,
                                        _ => Path::new("."),
                                    };
                                    let f = tempfile::Builder::new()
                                        .prefix(".ohmtrail-rejected-")
                                        .suffix(".tmp")
                                        .tempfile_in(dir)
                                        .map_err(|source| Error::Io {
                                            path: sidecar_file.clone(),
                                            source,
                                        })?;
                                    let mut w = csv::Writer::from_writer(f);
                                    let mut head = csv::ByteRecord::from(header_raw.clone());
                                    head.push_field(b"reason");
                                    w.write_byte_record(&head).map_err(csv_err)?;
                                    sidecar = Some(w);
                                }
                                if let Some(w) = sidecar.as_mut() {
                                    // Text is protected against formula injection as export
                                    // protects it; import removes the mark again.
                                    let mut out = csv::ByteRecord::new();
                                    for field in record.iter() {
                                        match std::str::from_utf8(field) {
                                            Ok(t) => out.push_field(escape(t).as_bytes()),
                                            Err(_) => out.push_field(field),
                                        }
                                    }
                                    out.push_field(escape(&reasons.join("; ")).as_bytes());
                                    w.write_byte_record(&out).map_err(csv_err)?;
                                }
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
    if let Some(w) = sidecar
        && outcome.is_ok()
    {
        let io_err = |source| Error::Io {
            path: sidecar_file.clone(),
            source,
        };
        let tmp = w
            .into_inner()
            .map_err(|e| io_err(std::io::Error::other(e.to_string())))?;
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let _ = tmp
                .as_file()
                .set_permissions(std::fs::Permissions::from_mode(0o644));
        }
        tmp.persist(&sidecar_file).map_err(|e| io_err(e.error))?;
        summary.sidecar = Some(sidecar_file);
    }
    match outcome {
        Ok(()) => Ok(summary),
        Err(_) if refused => {
            // Everything from this file was rolled back.
            summary.written = false;
            summary.properties_created = 0;
            summary.boards_created = 0;
            summary.circuits_created = 0;
            summary.visits_created = 0;
            summary.test_records_written = 0;
            summary.test_records_replaced = 0;
            summary.observations_written = 0;
            summary.changes.clear();
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

/// Apply a row; with `skip_invalid` inside a savepoint so a refused row leaves no trace.
/// The outer `Err` is a database failure that must stop the whole file.
fn run_row(
    s: &Store,
    opts: &ImportOptions,
    header: &Header,
    apply: impl FnOnce(&Store) -> RowResult<Effect>,
) -> Result<std::result::Result<Effect, Located>> {
    let result = if opts.skip_invalid {
        let mut faults = None;
        let r = s.atomic(|s| match apply(s) {
            Ok(e) => Ok(e),
            Err(Faults::Fatal(e)) => Err(e),
            Err(Faults::Row(f)) => {
                faults = Some(f);
                Err(Error::invalid("row refused"))
            }
        });
        match (r, faults) {
            (Ok(e), _) => Ok(e),
            (Err(_), Some(f)) => Err(Faults::Row(f)),
            (Err(e), None) => Err(Faults::from(e)),
        }
    } else {
        apply(s)
    };
    let list = match result {
        Ok(e) => return Ok(Ok(e)),
        Err(Faults::Fatal(e)) => return Err(e),
        Err(Faults::Row(list)) => list,
    };
    // A fault about no particular column points at the first.
    Ok(Err(list
        .into_iter()
        .map(|f| {
            let at = f.column.and_then(|c| header.position(c)).unwrap_or(1);
            (at, f.column.map(|c| c.name().to_string()), f.message)
        })
        .collect()))
}

type Located = Vec<(usize, Option<String>, String)>;

fn field_errors(e: Vec<FieldError>) -> Located {
    e.into_iter()
        .map(|f| (f.column, f.name, f.message))
        .collect()
}
