//! The archive: a whole history in one file, to move it between machines without loss, and
//! the merge of such a file into a database (`ohmtrail export --archive`, `ohmtrail merge`).
//!
//! The format is JSON Lines (UTF-8, one JSON value a line, `\n` after each), described in the
//! README's "Archive format" section:
//!
//! 1. a header object: `{"format":"ohmtrail-archive","version":1,"schema_version":N,
//!    "tables":[{"name":..,"columns":[{"name":..}, {"name":..,"ref":TABLE},
//!    {"name":"uuid","uuid":true}, ..]}, ..]}`;
//! 2. for each table, in the header's order (a referenced table before those referring to
//!    it), a line `{"table":NAME}` and then one JSON array a row, its values in the order of
//!    the header's columns;
//! 3. a closing object `{"end":{TABLE:ROWS,..},"crc32":"xxxxxxxx"}`: the rows of each table
//!    and the CRC-32 (IEEE) of every byte before this line, in lower-case hex.
//!
//! What is carried comes from the database's own schema ([`Store::archive_schema`]): every
//! table and column, so a column a later migration adds travels without anyone listing it.
//! The row number (`id`) is left out: it is this database's own. A reference is written as
//! the referenced row's UUID where that table has them (property, board, circuit, visit),
//! and otherwise as the referenced row's position among that table's rows in the archive.
//! A test record's identifier is not stored: the (visit, circuit) pair is unique, and
//! [`record_uuid`] derives it (UUID version 5 of the circuit's identifier in the visit's).

use std::borrow::Cow;
use std::collections::HashMap;
use std::io::{BufRead, BufReader, Write};
use std::path::Path;

use rusqlite::types::{Value, ValueRef};
use serde::Deserialize;
use serde::de::{self, Deserializer, MapAccess, SeqAccess, Visitor};

use crate::error::{Error, Result};
use crate::store::{
    ArchiveCell, ArchiveTable, ColumnKind, MergeOutcome, Prefer, Store, TableSchema,
};

/// The first field of the header: what the file is.
pub const FORMAT: &str = "ohmtrail-archive";
/// The version of the format this build writes and the newest it reads.
pub const VERSION: u64 = 1;

/// A test record's identifier: UUID version 5 (RFC 9562, SHA-1) of the circuit's 16 bytes
/// in the namespace of the visit's identifier.
pub fn record_uuid(visit: &uuid::Uuid, circuit: &uuid::Uuid) -> uuid::Uuid {
    uuid::Uuid::new_v5(visit, circuit.as_bytes())
}

/// What an archive holds, per table.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct ArchiveCounts {
    pub tables: Vec<(String, u64)>,
}

impl ArchiveCounts {
    pub fn rows(&self, table: &str) -> u64 {
        self.tables
            .iter()
            .find(|(t, _)| t == table)
            .map_or(0, |(_, n)| *n)
    }
}

/// A writer that keeps the CRC-32 of what passes through it.
struct Crc<W> {
    inner: W,
    hasher: crc32fast::Hasher,
}

impl<W: Write> Write for Crc<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.inner.write(buf)?;
        self.hasher.update(&buf[..n]);
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

/// How a referenced row is written.
#[derive(Clone, Copy)]
enum RefOut {
    Uuid([u8; 16]),
    Position(u64),
}

fn io_err(e: std::io::Error) -> Error {
    Error::invalid(format!("writing the archive: {e}"))
}

fn header_json(store: &Store, tables: &[TableSchema]) -> Result<serde_json::Value> {
    use serde_json::json;
    let tables: Vec<serde_json::Value> = tables
        .iter()
        .map(|t| {
            let cols: Vec<serde_json::Value> = t
                .columns
                .iter()
                .map(|c| match &c.kind {
                    ColumnKind::Value => json!({"name": c.name}),
                    ColumnKind::Uuid => json!({"name": c.name, "uuid": true}),
                    ColumnKind::Ref { table } => json!({"name": c.name, "ref": table}),
                })
                .collect();
            json!({"name": t.name, "columns": cols})
        })
        .collect();
    Ok(json!({
        "format": FORMAT,
        "version": VERSION,
        "schema_version": store.schema_version()?,
        "written_by": concat!("ohmtrail ", env!("CARGO_PKG_VERSION")),
        "tables": tables,
    }))
}

/// Write the whole history as an archive. Refused while a visit is being recorded on site:
/// register changes made at it are in the register already, and it belongs to this machine
/// until it is completed or abandoned.
pub fn write_archive(store: &Store, out: &mut dyn Write) -> Result<ArchiveCounts> {
    let pending = store.archive_pending()?;
    if let Some((reference, date)) = pending.first() {
        return Err(Error::invalid(format!(
            "property {reference:?} has a visit on {date} still being recorded{}: complete it (`ohmtrail record {reference} --date {date}`) or abandon it before writing an archive",
            if pending.len() > 1 {
                format!(" (and {} more)", pending.len() - 1)
            } else {
                String::new()
            }
        )));
    }
    let tables = store.archive_schema()?;
    let mut w = Crc {
        inner: std::io::BufWriter::with_capacity(1 << 16, out),
        hasher: crc32fast::Hasher::new(),
    };
    serde_json::to_writer(&mut w, &header_json(store, &tables)?)
        .map_err(|e| Error::invalid(e.to_string()))?;
    w.write_all(b"\n").map_err(io_err)?;
    let referenced: std::collections::HashSet<&str> = tables
        .iter()
        .flat_map(|t| &t.columns)
        .filter_map(|c| match &c.kind {
            ColumnKind::Ref { table } => Some(table.as_str()),
            _ => None,
        })
        .collect();
    let mut refs: HashMap<String, HashMap<i64, RefOut>> = HashMap::new();
    let mut counts = ArchiveCounts::default();
    for t in &tables {
        writeln!(
            w,
            "{{\"table\":{}}}",
            serde_json::Value::from(t.name.as_str())
        )
        .map_err(io_err)?;
        if referenced.contains(t.name.as_str()) {
            let mut mine: HashMap<i64, RefOut> = HashMap::new();
            for (pos, (id, u)) in store.archive_ids(t)?.into_iter().enumerate() {
                let r = match (t.has_uuid(), u) {
                    (true, Some(u)) => RefOut::Uuid(u),
                    (true, None) => continue,
                    (false, _) => RefOut::Position(pos as u64),
                };
                mine.insert(id, r);
            }
            refs.insert(t.name.clone(), mine);
        }
        let mut n = 0u64;
        store.archive_scan(t, |_, vals| {
            w.write_all(b"[").map_err(io_err)?;
            for (i, (c, v)) in t.columns.iter().zip(vals).enumerate() {
                if i > 0 {
                    w.write_all(b",").map_err(io_err)?;
                }
                write_cell(&mut w, t, c, v, &refs)?;
            }
            w.write_all(b"]\n").map_err(io_err)?;
            n += 1;
            Ok(())
        })?;
        counts.tables.push((t.name.clone(), n));
    }
    let end: serde_json::Map<String, serde_json::Value> = counts
        .tables
        .iter()
        .map(|(t, n)| (t.clone(), serde_json::Value::from(*n)))
        .collect();
    let crc = w.hasher.clone().finalize();
    let mut inner = w.inner;
    serde_json::to_writer(
        &mut inner,
        &serde_json::json!({"end": end, "crc32": format!("{crc:08x}")}),
    )
    .map_err(|e| Error::invalid(e.to_string()))?;
    inner.write_all(b"\n").map_err(io_err)?;
    inner.flush().map_err(io_err)?;
    Ok(counts)
}

fn write_cell(
    w: &mut impl Write,
    t: &TableSchema,
    c: &crate::store::ColumnSchema,
    v: &ValueRef,
    refs: &HashMap<String, HashMap<i64, RefOut>>,
) -> Result<()> {
    let missing_id = || {
        Error::invalid(format!(
            "a row of {} has no identifier in column {}: every row needs one before it can be archived",
            t.name, c.name
        ))
    };
    match (&c.kind, v) {
        (_, ValueRef::Null) if c.kind == ColumnKind::Uuid => return Err(missing_id()),
        (_, ValueRef::Null) => w.write_all(b"null").map_err(io_err)?,
        (ColumnKind::Uuid, ValueRef::Blob(b)) => {
            let u = uuid::Uuid::from_slice(b).map_err(|_| missing_id())?;
            write!(w, "\"{}\"", u.hyphenated()).map_err(io_err)?
        }
        (ColumnKind::Ref { table }, ValueRef::Integer(id)) => {
            match refs.get(table).and_then(|m| m.get(id)) {
                Some(RefOut::Uuid(u)) => {
                    write!(w, "\"{}\"", uuid::Uuid::from_bytes(*u).hyphenated()).map_err(io_err)?
                }
                Some(RefOut::Position(n)) => write!(w, "{n}").map_err(io_err)?,
                None => {
                    return Err(Error::invalid(format!(
                        "{}.{} refers to {table} row {id}, which does not exist",
                        t.name, c.name
                    )));
                }
            }
        }
        (_, ValueRef::Integer(i)) => write!(w, "{i}").map_err(io_err)?,
        (_, ValueRef::Real(r)) => {
            serde_json::to_writer(&mut *w, r).map_err(|e| Error::invalid(e.to_string()))?
        }
        (_, ValueRef::Text(s)) => {
            let s = std::str::from_utf8(s).map_err(|_| {
                Error::invalid(format!(
                    "{}.{} holds text that is not UTF-8",
                    t.name, c.name
                ))
            })?;
            serde_json::to_writer(&mut *w, s).map_err(|e| Error::invalid(e.to_string()))?
        }
        (_, ValueRef::Blob(b)) => {
            let hex: String = b.iter().map(|x| format!("{x:02x}")).collect();
            write!(w, "{{\"hex\":\"{hex}\"}}").map_err(io_err)?
        }
    }
    Ok(())
}

// ----- reading -----

/// One JSON value of a row, as parsed: strings borrowed from the line where they can be.
enum RawCell<'a> {
    Null,
    Int(i64),
    Real(f64),
    Str(Cow<'a, str>),
    Hex(Vec<u8>),
}

impl<'de> Deserialize<'de> for RawCell<'de> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawCell<'de>;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("null, a number, a string or {\"hex\": ...}")
            }
            fn visit_unit<E>(self) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Null)
            }
            fn visit_none<E>(self) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Null)
            }
            fn visit_i64<E>(self, v: i64) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Int(v))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> std::result::Result<Self::Value, E> {
                i64::try_from(v)
                    .map(RawCell::Int)
                    .map_err(|_| E::custom(format!("{v} is too large for an integer")))
            }
            fn visit_f64<E>(self, v: f64) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Real(v))
            }
            fn visit_borrowed_str<E>(self, v: &'de str) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Str(Cow::Borrowed(v)))
            }
            fn visit_str<E>(self, v: &str) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Str(Cow::Owned(v.to_string())))
            }
            fn visit_string<E>(self, v: String) -> std::result::Result<Self::Value, E> {
                Ok(RawCell::Str(Cow::Owned(v)))
            }
            fn visit_seq<A: SeqAccess<'de>>(
                self,
                _: A,
            ) -> std::result::Result<Self::Value, A::Error> {
                Err(de::Error::custom(
                    "a list inside a row: expected a single value",
                ))
            }
            fn visit_map<A: MapAccess<'de>>(
                self,
                mut m: A,
            ) -> std::result::Result<Self::Value, A::Error> {
                let mut hex: Option<String> = None;
                while let Some(k) = m.next_key::<Cow<str>>()? {
                    if k != "hex" || hex.is_some() {
                        return Err(de::Error::custom(format!(
                            "unexpected key {k:?}: expected only \"hex\""
                        )));
                    }
                    hex = Some(m.next_value()?);
                }
                let hex = hex.ok_or_else(|| de::Error::custom("expected {\"hex\": ...}"))?;
                decode_hex(&hex)
                    .map(RawCell::Hex)
                    .ok_or_else(|| de::Error::custom("not hexadecimal"))
            }
        }
        d.deserialize_any(V)
    }
}

fn decode_hex(s: &str) -> Option<Vec<u8>> {
    if !s.len().is_multiple_of(2) {
        return None;
    }
    (0..s.len())
        .step_by(2)
        .map(|i| u8::from_str_radix(s.get(i..i + 2)?, 16).ok())
        .collect()
}

#[derive(Deserialize)]
struct HeaderColumn {
    name: String,
    #[serde(default)]
    uuid: bool,
    #[serde(default, rename = "ref")]
    refers: Option<String>,
}

#[derive(Deserialize)]
struct HeaderTable {
    name: String,
    columns: Vec<HeaderColumn>,
}

#[derive(Deserialize)]
struct Header {
    format: String,
    version: u64,
    schema_version: i64,
    tables: Vec<HeaderTable>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct Section {
    table: String,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct End {
    end: HashMap<String, u64>,
    crc32: String,
}

/// What a merge did, and whether it was written.
#[derive(Debug, Clone, serde::Serialize)]
pub struct MergeReport {
    pub outcome: MergeOutcome,
    /// False when conflicts stopped it: then nothing was written.
    pub written: bool,
    /// Rows in the archive, all tables.
    pub rows: u64,
}

/// An error at a place in the archive.
fn at(path: &Path, line: u64, col: Option<usize>, msg: impl std::fmt::Display) -> Error {
    match col {
        Some(c) => Error::invalid(format!("{}:{line}:{c}: {msg}", path.display())),
        None => Error::invalid(format!("{}:{line}: {msg}", path.display())),
    }
}

/// Read one line (with its `\n`) into `buf`; false at the end of the file.
fn next_line(r: &mut impl BufRead, buf: &mut Vec<u8>, path: &Path) -> Result<bool> {
    buf.clear();
    let n = r.read_until(b'\n', buf).map_err(|source| Error::Io {
        path: path.to_path_buf(),
        source,
    })?;
    Ok(n > 0)
}

fn strip_newline(buf: &[u8]) -> &[u8] {
    buf.strip_suffix(b"\n").unwrap_or(buf)
}

/// Merge the archive at `path` into `store`, all or nothing in one transaction. A damaged
/// archive (bad JSON, cut short, a wrong checksum, wrong row counts) is refused with its
/// position; a newer format version or a table or column this database lacks is refused
/// before anything is read past the header. Conflicts are reported with both values; unless
/// `prefer` settles them, nothing is written.
pub fn merge_archive(store: &Store, path: &Path, prefer: Prefer) -> Result<MergeReport> {
    let file = std::fs::File::open(path).map_err(|source| Error::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let mut r = BufReader::with_capacity(1 << 16, file);
    let mut buf = Vec::with_capacity(4096);
    let mut hasher = crc32fast::Hasher::new();
    if !next_line(&mut r, &mut buf, path)? {
        return Err(at(
            path,
            1,
            None,
            "the file is empty: expected an ohmtrail archive",
        ));
    }
    hasher.update(&buf);
    let header: Header = serde_json::from_slice(strip_newline(&buf)).map_err(|e| {
        at(
            path,
            1,
            Some(e.column()),
            format!("not an ohmtrail archive header: {e}"),
        )
    })?;
    if header.format != FORMAT {
        return Err(at(
            path,
            1,
            None,
            format!(
                "format {:?} is not {FORMAT:?}: not an ohmtrail archive",
                header.format
            ),
        ));
    }
    if header.version > VERSION {
        return Err(at(
            path,
            1,
            None,
            format!(
                "archive format version {} is newer than this ohmtrail reads (version {VERSION}): nothing written; merge it with a newer ohmtrail",
                header.version
            ),
        ));
    }
    let supported = crate::store::migrate::latest_version();
    if header.schema_version > supported {
        return Err(at(
            path,
            1,
            None,
            format!(
                "written from a database at schema version {}, newer than this ohmtrail knows (version {supported}): nothing written; merge it with a newer ohmtrail",
                header.schema_version
            ),
        ));
    }
    let tables: Vec<ArchiveTable> = header
        .tables
        .iter()
        .map(|t| ArchiveTable {
            name: t.name.clone(),
            columns: t
                .columns
                .iter()
                .map(|c| {
                    let kind = match (&c.refers, c.uuid) {
                        (Some(t), _) => ColumnKind::Ref { table: t.clone() },
                        (None, true) => ColumnKind::Uuid,
                        (None, false) => ColumnKind::Value,
                    };
                    (c.name.clone(), kind)
                })
                .collect(),
        })
        .collect();
    for t in &tables {
        for (c, k) in &t.columns {
            if let ColumnKind::Ref { table } = k
                && !tables.iter().any(|x| &x.name == table)
            {
                return Err(at(
                    path,
                    1,
                    None,
                    format!(
                        "{}.{c} refers to table {table}, which the header does not describe",
                        t.name
                    ),
                ));
            }
        }
    }
    store.ingest_prepare()?;
    let mut report: Option<MergeReport> = None;
    let result = store.atomic(|s| {
        let mut m = s.merge_begin(&tables, prefer).map_err(|e| at(path, 1, None, e))?;
        let mut line = 1u64;
        let mut current: Option<usize> = None;
        let mut counted: Vec<u64> = vec![0; tables.len()];
        let mut cells: Vec<ArchiveCell> = Vec::new();
        loop {
            if !next_line(&mut r, &mut buf, path)? {
                return Err(at(
                    path,
                    line,
                    None,
                    "the archive ends here without its closing line: it was cut short; nothing written",
                ));
            }
            line += 1;
            let text = strip_newline(&buf);
            match text.first() {
                Some(b'[') => {
                    hasher.update(&buf);
                    let Some(ti) = current else {
                        return Err(at(path, line, Some(1), "a row before any {\"table\": ...} line"));
                    };
                    let raw: Vec<RawCell> = serde_json::from_slice(text)
                        .map_err(|e| at(path, line, Some(e.column()), format!("bad JSON: {e}")))?;
                    cells.clear();
                    let t = &tables[ti];
                    if raw.len() != t.columns.len() {
                        return Err(at(
                            path,
                            line,
                            None,
                            format!(
                                "a row of {} has {} values where the header names {} columns",
                                t.name,
                                raw.len(),
                                t.columns.len()
                            ),
                        ));
                    }
                    for (i, (cell, (name, kind))) in raw.into_iter().zip(&t.columns).enumerate() {
                        cells.push(to_cell(cell, kind).map_err(|msg| {
                            at(path, line, None, format!("{}.{name} (value {}): {msg}", t.name, i + 1))
                        })?);
                    }
                    m.row(&cells).map_err(|e| at(path, line, None, e))?;
                    counted[ti] += 1;
                }
                Some(b'{') => {
                    if let Ok(sec) = serde_json::from_slice::<Section>(text) {
                        hasher.update(&buf);
                        let Some(ti) = tables.iter().position(|t| t.name == sec.table) else {
                            return Err(at(
                                path,
                                line,
                                None,
                                format!("table {} is not in the header", sec.table),
                            ));
                        };
                        if current.is_some_and(|c| ti <= c) {
                            return Err(at(
                                path,
                                line,
                                None,
                                format!("table {} out of the header's order", sec.table),
                            ));
                        }
                        current = Some(ti);
                        m.start_table(&sec.table).map_err(|e| at(path, line, None, e))?;
                        continue;
                    }
                    let end: End = serde_json::from_slice(text).map_err(|e| {
                        at(path, line, Some(e.column()), format!("bad JSON: {e}"))
                    })?;
                    let crc = format!("{:08x}", hasher.clone().finalize());
                    if end.crc32 != crc {
                        return Err(at(
                            path,
                            line,
                            None,
                            format!(
                                "checksum {} does not match the content before it (crc32 {crc}): the archive is damaged; nothing written",
                                end.crc32
                            ),
                        ));
                    }
                    for (i, t) in tables.iter().enumerate() {
                        let said = end.end.get(&t.name).copied().unwrap_or(0);
                        if said != counted[i] {
                            return Err(at(
                                path,
                                line,
                                None,
                                format!(
                                    "the archive says {said} rows of {} but holds {}: it is damaged; nothing written",
                                    t.name, counted[i]
                                ),
                            ));
                        }
                    }
                    let mut rest = Vec::new();
                    if next_line(&mut r, &mut rest, path)? {
                        return Err(at(path, line + 1, None, "more after the closing line: the archive is damaged; nothing written"));
                    }
                    break;
                }
                _ => {
                    return Err(at(
                        path,
                        line,
                        Some(1),
                        "expected a row ([...]) or a {\"table\": ...} line",
                    ));
                }
            }
        }
        let outcome = m.finish()?;
        let blocked = outcome.blocking(prefer) > 0;
        report = Some(MergeReport {
            outcome,
            written: !blocked,
            rows: counted.iter().sum(),
        });
        if blocked {
            // Roll back: conflicts are settled by the user, never by the order of the rows.
            return Err(Error::invalid("conflicts"));
        }
        Ok(())
    });
    match (result, report) {
        (Ok(()), Some(rep)) => Ok(rep),
        (Err(_), Some(rep)) if !rep.written => Ok(rep),
        (Err(e), _) => Err(e),
        (Ok(()), None) => unreachable!("a merge that succeeded has its report"),
    }
}

fn to_cell(cell: RawCell, kind: &ColumnKind) -> std::result::Result<ArchiveCell, String> {
    let uuid = |s: &str| {
        uuid::Uuid::try_parse(s)
            .map(|u| ArchiveCell::Uuid(*u.as_bytes()))
            .map_err(|_| format!("{s:?} is not a UUID"))
    };
    Ok(match (kind, cell) {
        (ColumnKind::Uuid, RawCell::Str(s)) => uuid(&s)?,
        (ColumnKind::Uuid, _) => return Err("expected the row's UUID".into()),
        (ColumnKind::Ref { .. }, RawCell::Null) => ArchiveCell::Value(Value::Null),
        (ColumnKind::Ref { .. }, RawCell::Str(s)) => uuid(&s)?,
        (ColumnKind::Ref { .. }, RawCell::Int(n)) if n >= 0 => ArchiveCell::Ordinal(n as u64),
        (ColumnKind::Ref { .. }, _) => {
            return Err("expected a reference: a UUID, a position or null".into());
        }
        (ColumnKind::Value, RawCell::Null) => ArchiveCell::Value(Value::Null),
        (ColumnKind::Value, RawCell::Int(i)) => ArchiveCell::Value(Value::Integer(i)),
        (ColumnKind::Value, RawCell::Real(r)) => ArchiveCell::Value(Value::Real(r)),
        (ColumnKind::Value, RawCell::Str(s)) => ArchiveCell::Value(Value::Text(s.into_owned())),
        (ColumnKind::Value, RawCell::Hex(b)) => ArchiveCell::Value(Value::Blob(b)),
    })
}
