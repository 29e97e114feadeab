//! The SQLite history. This is the only module that talks SQL.
//!
//! A [`Store`] is one connection with foreign keys on, WAL, and a busy timeout long enough for
//! another process's import to finish. Register operations check their input and write nothing
//! when it is wrong.

#[macro_use]
mod record;

mod history;
mod ingest;
pub mod migrate;
mod pending;
mod visits;

pub use history::{ALL_PROPERTIES, HistoryParts, PropertyHistory};
pub use ingest::{
    ExportObservation, ExportRecord, HeldInserts, IngestBoard, IngestChange, IngestProperty,
    IngestVisit, LaterHistory,
};
pub use pending::Abandoned;
pub use visits::{NewVisit, validate_readings};

use std::path::{Path, PathBuf};
use std::time::Duration;

use chrono::NaiveDate;
use rusqlite::{Connection, OpenFlags, OptionalExtension, Row, params};
use serde::Serialize;

use crate::error::{Error, Result};
use crate::model::{
    Board, ChangeKind, Circuit, CircuitChange, CircuitKind, Device, Earthing, Instrument,
    Insulation, Property, RcdDelay, RcdMarking, RcdType, Status, validate_csa, validate_length,
    validate_rcd_ma,
};

/// How long a writer waits for another process's transaction before giving up.
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(60);

/// A property by its reference without regard to ASCII case, through the index migration 007
/// made for exactly this comparison.
const PROPERTY_REF_SQL: &str =
    "SELECT id, ref FROM property WHERE ref = ?1 COLLATE NOCASE ORDER BY ref";

/// The page size of a database ohmtrail creates, in bytes.
pub const DEFAULT_PAGE_SIZE: i64 = 16_384;

/// Test hook, not a setting: caps the database at this many pages (`PRAGMA max_page_count`)
/// so that tests can fill the "disk" without filling the machine's.
pub const MAX_PAGE_COUNT_ENV: &str = "OHMTRAIL_MAX_PAGE_COUNT";

/// Apply [`MAX_PAGE_COUNT_ENV`] when it is set. SQLite keeps a cap below the current size at
/// the current size, so the database can never shrink because of it.
fn limit_pages_for_tests(conn: &Connection, path: &Path) -> Result<()> {
    let Ok(text) = std::env::var(MAX_PAGE_COUNT_ENV) else {
        return Ok(());
    };
    let pages: u32 = text.trim().parse().map_err(|_| {
        Error::invalid(format!(
            "{MAX_PAGE_COUNT_ENV}={text:?} is not a page count: expected a whole number of pages"
        ))
    })?;
    conn.query_row(&format!("PRAGMA max_page_count = {pages}"), [], |_| Ok(()))
        .map_err(|source| Error::Database {
            path: path.to_path_buf(),
            source,
        })
}

pub struct Store {
    conn: Connection,
    path: PathBuf,
    read_only: bool,
    /// Opened read-only because its directory cannot be written, though the file could be.
    in_read_only_dir: bool,
}

/// A new property for the register.
#[derive(Debug, Clone, Default)]
pub struct NewProperty {
    pub reference: String,
    pub address: Option<String>,
    pub client: Option<String>,
    pub interval_months: Option<u32>,
    pub notes: Option<String>,
}

/// A new board for the register.
#[derive(Debug, Clone, Default)]
pub struct NewBoard {
    pub designation: String,
    pub location: Option<String>,
    /// Designation of the feeding board; `None` for the origin.
    pub fed_from: Option<String>,
    pub earthing: Option<Earthing>,
}

/// The register details of a circuit, as given when adding or editing one.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct CircuitDetails {
    pub description: Option<String>,
    pub kind: Option<CircuitKind>,
    pub live_mm2: Option<f64>,
    pub cpc_mm2: Option<f64>,
    pub length_m: Option<f64>,
    pub device: Option<Device>,
    pub rcd_ma: Option<u16>,
    pub rcd_type: Option<RcdType>,
    pub rcd_delay: Option<RcdDelay>,
    pub insulation: Option<Insulation>,
    pub disconnect_s: Option<f64>,
}

impl CircuitDetails {
    /// Check every given value; the first fault is the error.
    pub fn validate(&self) -> Result<()> {
        check_text("circuit description", self.description.as_deref())?;
        let bad = |m: String| Err(Error::Invalid(m));
        if let Some(v) = self.live_mm2
            && let Err(m) = validate_csa("live csa", v)
        {
            return bad(m);
        }
        if let Some(v) = self.cpc_mm2
            && let Err(m) = validate_csa("cpc csa", v)
        {
            return bad(m);
        }
        if let Some(v) = self.length_m
            && let Err(m) = validate_length(v)
        {
            return bad(m);
        }
        if let Some(v) = self.rcd_ma
            && let Err(m) = validate_rcd_ma(v)
        {
            return bad(m);
        }
        if let Some(t) = self.disconnect_s
            && !(t.is_finite() && t > 0.0 && t <= 5.0)
        {
            return bad(format!(
                "disconnection time {t} s is out of range: expected 0.2, 0.4, 1 or 5 s"
            ));
        }
        Ok(())
    }
}

/// A property with the counts a listing shows.
#[derive(Debug, Clone, Serialize)]
pub struct PropertySummary {
    pub property_ref: String,
    pub address: Option<String>,
    pub client: Option<String>,
    pub interval_months: u32,
    pub boards: i64,
    pub circuits: i64,
    pub visits: i64,
    pub last_visit: Option<NaiveDate>,
}

/// A visit with the names a listing shows.
#[derive(Debug, Clone, Serialize)]
pub struct VisitSummary {
    pub property_ref: String,
    pub date: NaiveDate,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
    pub ze_ohm: Option<f64>,
    pub pfc_ka: Option<f64>,
    pub test_records: i64,
    pub observations: i64,
}

/// Refuse text holding a control character (NUL, escape, backspace and the like; a tab or a
/// line break may stay), naming the character and its position (`model::check_text`).
pub fn check_text(what: &str, text: Option<&str>) -> Result<()> {
    match text {
        Some(t) => crate::model::check_text(what, t).map_err(Error::Invalid),
        None => Ok(()),
    }
}

/// A file path as the path of a SQLite URI (https://www.sqlite.org/uri.html): every byte but
/// letters, digits, `/` and `-._~` percent-encoded, so `?`, `#` and `%` keep their meaning.
fn uri_path(path: &Path) -> String {
    use std::os::unix::ffi::OsStrExt;
    let mut out = String::new();
    for &b in path.as_os_str().as_bytes() {
        if b.is_ascii_alphanumeric() || b"/-._~".contains(&b) {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

/// ohmtrail's mark in the SQLite header (`PRAGMA application_id`), set by migration 006:
/// "ohmt" in ASCII.
pub const APPLICATION_ID: i32 = 0x6F68_6D74;

/// Tables every ohmtrail database has had since its first version.
const OWN_TABLES: [&str; 5] = ["property", "board", "circuit", "visit", "test_record"];

/// Why the open database is not ohmtrail's, or `None` when it is (marked, or from before the
/// mark with ohmtrail's tables) or empty. Reads only, so a refused file stays byte-identical.
fn check_ownership(conn: &Connection, version: i64) -> rusqlite::Result<Option<String>> {
    let id: i32 = conn.query_row("PRAGMA application_id", [], |r| r.get(0))?;
    if id == APPLICATION_ID {
        return Ok(None);
    }
    if id != 0 {
        return Ok(Some(format!(
            "its application id is {id:#010x}, not ohmtrail's {APPLICATION_ID:#010x}"
        )));
    }
    let mut st = conn.prepare(
        "SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%'
         ORDER BY name",
    )?;
    let tables: Vec<String> = st
        .query_map([], |r| r.get(0))?
        .collect::<rusqlite::Result<_>>()?;
    if tables.is_empty() && version == 0 {
        return Ok(None);
    }
    let ours = OWN_TABLES.iter().all(|t| tables.iter().any(|x| x == t));
    if ours && (1..=migrate::UNMARKED_VERSIONS).contains(&version) {
        return Ok(None);
    }
    let mut shown: Vec<&str> = tables.iter().take(5).map(String::as_str).collect();
    if tables.len() > 5 {
        shown.push("…");
    }
    Ok(Some(format!(
        "it has no ohmtrail mark and holds {} table{}: {}",
        tables.len(),
        if tables.len() == 1 { "" } else { "s" },
        shown.join(", ")
    )))
}

impl Store {
    /// Open (creating when absent) the database at `path` and bring its schema up to date.
    /// A database stamped by a newer ohmtrail is refused before anything is written to it.
    pub fn open(path: &Path) -> Result<Store> {
        if let Some(dir) = path.parent()
            && !dir.as_os_str().is_empty()
            && !dir.exists()
        {
            std::fs::create_dir_all(dir).map_err(|source| Error::Io {
                path: dir.to_path_buf(),
                source,
            })?;
        }
        let place_err = |why: String| Error::Io {
            path: path.to_path_buf(),
            source: std::io::Error::other(why),
        };
        if path.is_dir() {
            return Err(place_err(
                "is a directory, not a database file: give the path of a file".into(),
            ));
        }
        if let Some(dir) = path.parent()
            && !dir.as_os_str().is_empty()
            && !dir.is_dir()
        {
            return Err(place_err(format!(
                "cannot hold a database: {} is a file, not a directory",
                dir.display()
            )));
        }
        let db_err = |source: rusqlite::Error| match source.sqlite_error_code() {
            Some(rusqlite::ErrorCode::NotADatabase) => Error::NotADatabase {
                path: path.to_path_buf(),
            },
            _ => Error::Database {
                path: path.to_path_buf(),
                source,
            },
        };
        // A file marked read-only is opened read-only even where the user could write it
        // anyway (root), so that marking a database read-only protects it.
        let read_only = std::fs::metadata(path)
            .map(|m| m.permissions().readonly())
            .unwrap_or(false);
        let flags = if read_only {
            OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX
        } else {
            OpenFlags::SQLITE_OPEN_READ_WRITE
                | OpenFlags::SQLITE_OPEN_CREATE
                | OpenFlags::SQLITE_OPEN_NO_MUTEX
        };
        let opened = Connection::open_with_flags(path, flags)
            .map_err(db_err)
            .and_then(|conn| {
                if !read_only {
                    limit_pages_for_tests(&conn, path)?;
                }
                Store::setup(conn, path.to_path_buf(), read_only)
            });
        match opened {
            // SQLite keeps a database's journal files beside it: in a directory that cannot
            // be written it cannot open even to read, unless told to open read-only.
            Err(Error::Database { source, .. })
                if !read_only
                    && path.is_file()
                    && matches!(
                        source.sqlite_error_code(),
                        Some(rusqlite::ErrorCode::CannotOpen | rusqlite::ErrorCode::ReadOnly)
                    ) =>
            {
                Store::open_in_read_only_dir(path)
            }
            other => other,
        }
    }

    /// Open a database whose directory cannot be written, read-only. With no write-ahead log
    /// beside it nobody can be writing it (a writer would have to create one there), so
    /// SQLite is told the file will not change and needs no shared-memory file either
    /// (https://www.sqlite.org/uri.html#uriimmutable).
    fn open_in_read_only_dir(path: &Path) -> Result<Store> {
        let mut wal = path.as_os_str().to_owned();
        wal.push("-wal");
        let immutable = if Path::new(&wal).exists() {
            ""
        } else {
            "&immutable=1"
        };
        let uri = format!("file:{}?mode=ro{immutable}", uri_path(path));
        let flags = OpenFlags::SQLITE_OPEN_READ_ONLY
            | OpenFlags::SQLITE_OPEN_URI
            | OpenFlags::SQLITE_OPEN_NO_MUTEX;
        let conn = Connection::open_with_flags(&uri, flags).map_err(|source| Error::Database {
            path: path.to_path_buf(),
            source,
        })?;
        let mut store = Store::setup(conn, path.to_path_buf(), true)?;
        store.in_read_only_dir = true;
        Ok(store)
    }

    /// Another connection to the same database file, for reading beside this one on another
    /// thread; `None` for a database in memory, which no other connection can see.
    pub fn reader(&self) -> Result<Option<Store>> {
        if self.path.as_os_str() == ":memory:" {
            return Ok(None);
        }
        Store::open(&self.path).map(Some)
    }

    /// Begin one read transaction on each of `stores` (connections to one file), all on the
    /// same snapshot: the write lock is held while they begin, so no commit can fall between
    /// them. Returns `false`, with nothing begun, when the lock is not free at once (a writer
    /// is at work) or the file cannot be written; end each with [`Store::end_read`].
    pub fn begin_shared_read(stores: &[&Store]) -> Result<bool> {
        let Some(first) = stores.first() else {
            return Ok(true);
        };
        if first.read_only || first.path.as_os_str() == ":memory:" {
            return Ok(false);
        }
        let lock = Connection::open_with_flags(
            &first.path,
            OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX,
        )?;
        // No busy timeout (rusqlite's default is five seconds): when a writer holds the lock
        // the caller reads on one connection instead of waiting.
        lock.busy_timeout(Duration::ZERO)?;
        if lock.execute_batch("BEGIN IMMEDIATE").is_err() {
            return Ok(false);
        }
        let begun = stores.iter().try_for_each(|s| {
            s.conn.execute_batch("BEGIN")?;
            // The first read fixes the transaction's snapshot.
            s.conn
                .query_row("SELECT count(*) FROM sqlite_schema", [], |_| Ok(()))
        });
        let released = lock.execute_batch("ROLLBACK");
        if let Err(e) = begun.and(released) {
            // Leave every connection as it was, whichever step failed.
            for s in stores {
                s.end_read()?;
            }
            return Err(e.into());
        }
        Ok(true)
    }

    /// End a read transaction begun by [`Store::begin_shared_read`].
    pub fn end_read(&self) -> Result<()> {
        if !self.conn.is_autocommit() {
            self.conn.execute_batch("COMMIT")?;
        }
        Ok(())
    }

    /// Whether this store was opened read-only (the file is marked read-only).
    pub fn is_read_only(&self) -> bool {
        self.read_only
    }

    /// A private database in memory, for tests and one-off computations.
    pub fn open_in_memory() -> Result<Store> {
        let conn = Connection::open_in_memory()?;
        Store::setup(conn, PathBuf::from(":memory:"), false)
    }

    fn setup(mut conn: Connection, path: PathBuf, read_only: bool) -> Result<Store> {
        // SQLite reads the file only at the first statement, so a file that is not a
        // database is found here.
        let db_err = |source: rusqlite::Error| match source.sqlite_error_code() {
            Some(rusqlite::ErrorCode::NotADatabase) => Error::NotADatabase { path: path.clone() },
            _ => Error::Database {
                path: path.clone(),
                source,
            },
        };
        conn.busy_timeout(BUSY_TIMEOUT).map_err(db_err)?;
        // Read the version before anything that writes (journal_mode=WAL writes the header),
        // so a database from a newer version stays byte-identical.
        let found = migrate::user_version(&conn).map_err(db_err)?;
        if let Some(what) = check_ownership(&conn, found).map_err(db_err)? {
            return Err(Error::ForeignDatabase { path, what });
        }
        let supported = migrate::latest_version();
        if found > supported {
            return Err(Error::NewerSchema {
                path,
                found,
                supported,
            });
        }
        conn.pragma_update(None, "foreign_keys", true)
            .map_err(db_err)?;
        if read_only {
            // Versions from the last unmarked one on differ only by the mark: readable.
            if found < supported.min(migrate::UNMARKED_VERSIONS) {
                return Err(Error::ReadOnly {
                    path,
                    why: format!(
                        "its schema (version {found}) needs upgrading to version {supported} first"
                    ),
                });
            }
            return Ok(Store {
                conn,
                path,
                read_only,
                in_read_only_dir: false,
            });
        }
        if path.as_os_str() != ":memory:" {
            if found == 0 {
                // A new database: 16 KiB pages (SQLite's default is 4 KiB) hold a visit's
                // records in fewer pages, which took about a tenth off a large import. The
                // size is fixed once the file has content, so this does nothing to an
                // existing database; it has to come before WAL mode, which writes the header.
                conn.pragma_update(None, "page_size", DEFAULT_PAGE_SIZE)
                    .map_err(db_err)?;
            }
            conn.query_row("PRAGMA journal_mode = WAL", [], |_| Ok(()))
                .map_err(db_err)?;
            conn.pragma_update(None, "synchronous", "NORMAL")
                .map_err(db_err)?;
        }
        migrate::apply(&mut conn).map_err(db_err)?;
        Ok(Store {
            conn,
            path,
            read_only,
            in_read_only_dir: false,
        })
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    pub fn schema_version(&self) -> Result<i64> {
        Ok(migrate::user_version(&self.conn)?)
    }

    /// Run `f` in one write transaction: everything it writes lands, or nothing does.
    /// Takes the write lock at the start so a concurrent writer waits on the busy timeout
    /// instead of failing part-way.
    pub fn atomic<T>(&self, f: impl FnOnce(&Store) -> Result<T>) -> Result<T> {
        if !self.conn.is_autocommit() {
            // Already inside a transaction: nest with a savepoint.
            self.conn
                .execute_batch("SAVEPOINT nested")
                .map_err(|e| self.explain(e.into()))?;
            return match f(self) {
                Ok(v) => {
                    self.conn
                        .execute_batch("RELEASE nested")
                        .map_err(|e| self.explain(e.into()))?;
                    Ok(v)
                }
                Err(e) => match self
                    .conn
                    .execute_batch("ROLLBACK TO nested; RELEASE nested")
                {
                    Ok(()) => Err(self.explain(e)),
                    // SQLite rolled the whole transaction back itself (a full disk, an I/O
                    // error): the first error says why.
                    Err(_) if self.conn.is_autocommit() => Err(self.explain(e)),
                    Err(r) => Err(self.explain(r.into())),
                },
            };
        }
        if self.read_only {
            let why = if self.in_read_only_dir {
                let dir = match self.path.parent() {
                    Some(d) if !d.as_os_str().is_empty() => d.display().to_string(),
                    _ => ".".into(),
                };
                format!(
                    "this command writes to it, but its directory {dir} cannot be written (SQLite keeps its journal files beside the database)"
                )
            } else {
                "this command writes to it".into()
            };
            return Err(Error::ReadOnly {
                path: self.path.clone(),
                why,
            });
        }
        self.conn
            .execute_batch("BEGIN IMMEDIATE")
            .map_err(|e| self.explain(e.into()))?;
        match f(self) {
            Ok(v) => {
                if let Err(e) = self.conn.execute_batch("COMMIT") {
                    let _ = self.conn.execute_batch("ROLLBACK");
                    return Err(self.explain(e.into()));
                }
                Ok(v)
            }
            Err(e) => {
                // Fails harmlessly when SQLite has already rolled back (a full disk).
                let _ = self.conn.execute_batch("ROLLBACK");
                Err(self.explain(e))
            }
        }
    }

    /// Name the database in an error that is the database's own failure rather than the
    /// input's, and say plainly when it is full.
    fn explain(&self, e: Error) -> Error {
        let Error::Sql(source) = e else { return e };
        match &source {
            rusqlite::Error::SqliteFailure(f, _) if f.code == rusqlite::ErrorCode::DiskFull => {
                Error::Full {
                    path: self.path.clone(),
                }
            }
            rusqlite::Error::SqliteFailure(f, _)
                if f.code != rusqlite::ErrorCode::ConstraintViolation =>
            {
                Error::Database {
                    path: self.path.clone(),
                    source,
                }
            }
            _ => Error::Sql(source),
        }
    }

    // ----- settings -----

    pub fn setting(&self, key: &str) -> Result<Option<String>> {
        Ok(self
            .conn
            .query_row("SELECT value FROM setting WHERE key = ?1", [key], |r| {
                r.get(0)
            })
            .optional()?)
    }

    pub fn set_setting(&self, key: &str, value: &str) -> Result<()> {
        self.conn.execute(
            "INSERT INTO setting (key, value) VALUES (?1, ?2)
             ON CONFLICT (key) DO UPDATE SET value = excluded.value",
            params![key, value],
        )?;
        Ok(())
    }

    pub fn delete_setting(&self, key: &str) -> Result<()> {
        self.conn
            .execute("DELETE FROM setting WHERE key = ?1", [key])?;
        Ok(())
    }

    // ----- clients and properties -----

    /// The client's id, creating the client on first sight.
    pub fn ensure_client(&self, name: &str) -> Result<i64> {
        let name = name.trim();
        if name.is_empty() {
            return Err(Error::invalid("client name is empty"));
        }
        if let Some(id) = self
            .conn
            .query_row("SELECT id FROM client WHERE name = ?1", [name], |r| {
                r.get(0)
            })
            .optional()?
        {
            return Ok(id);
        }
        self.conn
            .execute("INSERT INTO client (name) VALUES (?1)", [name])?;
        Ok(self.conn.last_insert_rowid())
    }

    pub fn add_property(&self, p: &NewProperty) -> Result<Property> {
        let reference = p.reference.trim();
        if reference.is_empty() {
            return Err(Error::invalid("property reference is empty"));
        }
        check_text("property reference", Some(reference))?;
        check_text("address", p.address.as_deref())?;
        check_text("client", p.client.as_deref())?;
        check_text("notes", p.notes.as_deref())?;
        let interval = p
            .interval_months
            .unwrap_or(crate::model::DEFAULT_INTERVAL_MONTHS);
        if !(1..=120).contains(&interval) {
            return Err(Error::invalid(format!(
                "inspection interval {interval} months is out of range: expected 1 to 120 months"
            )));
        }
        self.atomic(|s| {
            if let Some((_, existing)) = s.property_ref_lookup(reference)? {
                return Err(Error::invalid(if existing == reference {
                    format!("property {reference:?} already exists")
                } else {
                    format!(
                        "property {reference:?} differs from the existing {existing:?} only in case, and references match without regard to case: use {existing:?}, or a reference that differs in more than case"
                    )
                }));
            }
            let client_id = p
                .client
                .as_deref()
                .map(|c| s.ensure_client(c))
                .transpose()?;
            s.conn.execute(
                "INSERT INTO property (ref, address, client_id, interval_months, notes)
                 VALUES (?1, ?2, ?3, ?4, ?5)",
                params![reference, p.address, client_id, interval, p.notes],
            )?;
            s.property(reference)
        })
    }

    /// The property whose reference is `reference` without regard to ASCII case, with its
    /// reference as stored. An exact match wins; two stored references that differ only in
    /// case (possible in a database made before such pairs were refused) and neither exact
    /// are an error naming both.
    pub fn property_ref_lookup(&self, reference: &str) -> Result<Option<(i64, String)>> {
        let mut st = self.conn.prepare_cached(PROPERTY_REF_SQL)?;
        let found = st
            .query_map([reference], |r| {
                Ok((r.get::<_, i64>(0)?, r.get::<_, String>(1)?))
            })?
            .collect::<rusqlite::Result<Vec<_>>>()?;
        if found.len() <= 1 {
            return Ok(found.into_iter().next());
        }
        if let Some(exact) = found.iter().find(|(_, r)| r == reference) {
            return Ok(Some(exact.clone()));
        }
        let names: Vec<String> = found.iter().map(|(_, r)| format!("{r:?}")).collect();
        Err(Error::invalid(format!(
            "property {reference:?} matches {}, which differ only in case: give the reference exactly",
            names.join(" and ")
        )))
    }

    pub fn property_id(&self, reference: &str) -> Result<Option<i64>> {
        Ok(self.property_ref_lookup(reference)?.map(|(id, _)| id))
    }

    pub(super) const PROPERTY_COLS: &'static str =
        "p.id, p.ref, p.address, c.name, p.interval_months, p.notes";

    /// Decode a property from [`Self::PROPERTY_COLS`] (client joined as `c`).
    pub(super) fn property_from_row(r: &Row) -> rusqlite::Result<Property> {
        Ok(Property {
            id: r.get(0)?,
            reference: r.get(1)?,
            address: r.get(2)?,
            client: r.get(3)?,
            interval_months: r.get(4)?,
            notes: r.get(5)?,
        })
    }

    /// The property with this reference (without regard to ASCII case), or a not-found error
    /// that says where to find the known ones.
    pub fn property(&self, reference: &str) -> Result<Property> {
        let Some(id) = self.property_id(reference)? else {
            let count: i64 = self
                .conn
                .query_row("SELECT count(*) FROM property", [], |r| r.get(0))?;
            let hint = if count == 0 {
                "the register has no properties yet; add one with `ohmtrail property add` or import a visit file".to_string()
            } else {
                "list the known references with `ohmtrail property list`".to_string()
            };
            return Err(Error::not_found_hint("property", reference, hint));
        };
        Ok(self.conn.query_row(
            &format!(
                "SELECT {} FROM property p LEFT JOIN client c ON c.id = p.client_id WHERE p.id = ?1",
                Self::PROPERTY_COLS
            ),
            [id],
            Self::property_from_row,
        )?)
    }

    pub fn list_properties(&self) -> Result<Vec<PropertySummary>> {
        let mut stmt = self.conn.prepare(
            "SELECT p.ref, p.address, c.name, p.interval_months,
                    (SELECT count(*) FROM board b WHERE b.property_id = p.id AND b.status = 'in_service'),
                    (SELECT count(*) FROM circuit ci JOIN board b ON b.id = ci.board_id
                       WHERE b.property_id = p.id AND ci.status = 'in_service'),
                    (SELECT count(*) FROM visit v WHERE v.property_id = p.id AND v.state = 'complete'),
                    (SELECT max(date) FROM visit v WHERE v.property_id = p.id AND v.state = 'complete')
             FROM property p LEFT JOIN client c ON c.id = p.client_id
             ORDER BY p.ref",
        )?;
        let rows = stmt.query_map([], |r| {
            Ok(PropertySummary {
                property_ref: r.get(0)?,
                address: r.get(1)?,
                client: r.get(2)?,
                interval_months: r.get(3)?,
                boards: r.get(4)?,
                circuits: r.get(5)?,
                visits: r.get(6)?,
                last_visit: r.get(7)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    // ----- boards -----

    pub fn add_board(&self, property_ref: &str, b: &NewBoard) -> Result<Board> {
        let designation = b.designation.trim();
        if designation.is_empty() {
            return Err(Error::invalid("board designation is empty"));
        }
        check_text("board designation", Some(designation))?;
        check_text("board location", b.location.as_deref())?;
        self.atomic(|s| {
            let property = s.property(property_ref)?;
            if s.board_opt(property.id, designation)?.is_some() {
                return Err(Error::invalid(format!(
                    "board {designation:?} already exists at property {property_ref:?}"
                )));
            }
            let fed_from = match b.fed_from.as_deref() {
                None => None,
                Some(f) => Some(s.board(property.id, property_ref, f)?.id),
            };
            s.conn.execute(
                "INSERT INTO board (property_id, designation, location, fed_from_board_id, earthing)
                 VALUES (?1, ?2, ?3, ?4, ?5)",
                params![
                    property.id,
                    designation,
                    b.location,
                    fed_from,
                    b.earthing.map(|e| e.as_str())
                ],
            )?;
            s.board(property.id, property_ref, designation)
        })
    }

    pub(super) const BOARD_COLS: &'static str = "b.id, b.property_id, b.designation, b.location,
        (SELECT f.designation FROM board f WHERE f.id = b.fed_from_board_id), b.earthing, b.status";

    pub(super) fn board_from_row(r: &Row) -> rusqlite::Result<Board> {
        let earthing: Option<String> = r.get(5)?;
        let status: String = r.get(6)?;
        Ok(Board {
            id: r.get(0)?,
            property_id: r.get(1)?,
            designation: r.get(2)?,
            location: r.get(3)?,
            fed_from: r.get(4)?,
            earthing: earthing.and_then(|e| e.parse().ok()),
            status: status.parse().unwrap_or(Status::InService),
        })
    }

    /// Take a board out of service (replaced or removed). Its circuits must be retired or
    /// replaced first, so that no circuit in service hangs off a retired board.
    pub fn retire_board(&self, property_id: i64, designation: &str) -> Result<()> {
        self.atomic(|s| {
            let b = s.board_opt(property_id, designation)?.ok_or_else(|| {
                Error::not_found("board", designation)
            })?;
            let in_service = s
                .circuits(b.id)?
                .into_iter()
                .filter(|c| c.status == Status::InService)
                .count();
            if in_service > 0 {
                let (circuits, them) = if in_service == 1 {
                    ("1 circuit".to_string(), "it")
                } else {
                    (format!("{in_service} circuits"), "them")
                };
                return Err(Error::invalid(format!(
                    "board {designation:?} still has {circuits} in service: retire or replace {them} first"
                )));
            }
            s.conn.execute(
                "UPDATE board SET status = 'retired' WHERE id = ?1",
                [b.id],
            )?;
            Ok(())
        })
    }

    pub fn board_opt(&self, property_id: i64, designation: &str) -> Result<Option<Board>> {
        let sql = format!(
            "SELECT {} FROM board b WHERE b.property_id = ?1 AND b.designation = ?2",
            Self::BOARD_COLS
        );
        Ok(self
            .conn
            .query_row(
                &sql,
                params![property_id, designation],
                Self::board_from_row,
            )
            .optional()?)
    }

    /// The board, or a not-found error listing the property's boards.
    pub fn board(&self, property_id: i64, property_ref: &str, designation: &str) -> Result<Board> {
        if let Some(b) = self.board_opt(property_id, designation)? {
            return Ok(b);
        }
        let known: Vec<String> = self
            .boards(property_id)?
            .into_iter()
            .map(|b| b.designation)
            .collect();
        let hint = if known.is_empty() {
            format!("property {property_ref:?} has no boards yet")
        } else {
            format!("property {property_ref:?} has boards {}", known.join(", "))
        };
        Err(Error::not_found_hint("board", designation, hint))
    }

    pub fn boards(&self, property_id: i64) -> Result<Vec<Board>> {
        let sql = format!(
            "SELECT {} FROM board b WHERE b.property_id = ?1 ORDER BY b.id",
            Self::BOARD_COLS
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let rows = stmt.query_map([property_id], Self::board_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    // ----- circuits -----

    pub(super) const CIRCUIT_COLS: &'static str =
        "id, board_id, number, description, kind, live_mm2, cpc_mm2,
        length_m, device, rcd_ma, rcd_type, insulation, disconnect_s, status, replaces_circuit_id,
        rcd_delay";

    pub(super) fn circuit_from_row(r: &Row) -> rusqlite::Result<Circuit> {
        // The coded columns are read in place rather than copied out first.
        let text =
            |i: usize| -> rusqlite::Result<Option<&str>> { Ok(r.get_ref(i)?.as_str_or_null()?) };
        let kind = text(4)?.unwrap_or_default();
        let device = text(8)?;
        let rcd_type = text(10)?;
        let insulation = text(11)?;
        let status = text(13)?.unwrap_or_default();
        // A database from before 008 may still hold 'S' as the type: it is the delay.
        let marking = rcd_type
            .and_then(|t| t.parse::<RcdMarking>().ok())
            .unwrap_or_default();
        let rcd_delay = text(15)?
            .and_then(|t| t.parse::<RcdDelay>().ok())
            .or(marking.delay);
        Ok(Circuit {
            id: r.get(0)?,
            board_id: r.get(1)?,
            number: r.get(2)?,
            description: r.get(3)?,
            kind: kind.parse().unwrap_or(CircuitKind::Radial),
            live_mm2: r.get(5)?,
            cpc_mm2: r.get(6)?,
            length_m: r.get(7)?,
            device: device.and_then(|d| d.parse().ok()),
            rcd_ma: r.get(9)?,
            rcd_type: marking.waveform,
            rcd_delay,
            insulation: insulation.and_then(|t| t.parse().ok()),
            disconnect_s: r.get(12)?,
            status: status.parse().unwrap_or(Status::InService),
            replaces: r.get(14)?,
        })
    }

    pub fn circuit_by_id(&self, id: i64) -> Result<Circuit> {
        let sql = format!("SELECT {} FROM circuit WHERE id = ?1", Self::CIRCUIT_COLS);
        Ok(self.conn.query_row(&sql, [id], Self::circuit_from_row)?)
    }

    /// The circuit in service with this number on the board, if any.
    pub fn circuit_opt(&self, board_id: i64, number: &str) -> Result<Option<Circuit>> {
        let sql = format!(
            "SELECT {} FROM circuit WHERE board_id = ?1 AND number = ?2 AND status = 'in_service'",
            Self::CIRCUIT_COLS
        );
        Ok(self
            .conn
            .query_row(&sql, params![board_id, number], Self::circuit_from_row)
            .optional()?)
    }

    /// Every circuit on a board, in service first, then by number.
    pub fn circuits(&self, board_id: i64) -> Result<Vec<Circuit>> {
        let sql = format!(
            "SELECT {} FROM circuit WHERE board_id = ?1
             ORDER BY status = 'retired', CAST(number AS INTEGER), number, id",
            Self::CIRCUIT_COLS
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let rows = stmt.query_map([board_id], Self::circuit_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Resolve property, board and circuit number to the circuit in service.
    pub fn find_circuit(&self, property_ref: &str, board: &str, number: &str) -> Result<Circuit> {
        let property = self.property(property_ref)?;
        let board = self.board(property.id, property_ref, board)?;
        self.circuit_opt(board.id, number)?.ok_or_else(|| {
            Error::not_found_hint(
                "circuit",
                number,
                format!(
                    "board {:?} at property {property_ref:?} has no circuit {number} in service",
                    board.designation
                ),
            )
        })
    }

    pub fn add_circuit(
        &self,
        property_ref: &str,
        board: &str,
        number: &str,
        details: &CircuitDetails,
    ) -> Result<Circuit> {
        details.validate()?;
        let number = number.trim();
        if number.is_empty() {
            return Err(Error::invalid("circuit number is empty"));
        }
        self.atomic(|s| {
            let property = s.property(property_ref)?;
            let board = s.board(property.id, property_ref, board)?;
            s.insert_circuit(&board, number, details, None)
        })
    }

    fn insert_circuit(
        &self,
        board: &Board,
        number: &str,
        d: &CircuitDetails,
        replaces: Option<i64>,
    ) -> Result<Circuit> {
        check_text("circuit number", Some(number))?;
        if self.circuit_opt(board.id, number)?.is_some() {
            return Err(Error::invalid(format!(
                "board {:?} already has a circuit {number} in service: choose another number, or retire or replace the existing circuit",
                board.designation
            )));
        }
        self.conn.execute(
            "INSERT INTO circuit (board_id, number, description, kind, live_mm2, cpc_mm2, length_m,
                 device, rcd_ma, rcd_type, insulation, disconnect_s, replaces_circuit_id, rcd_delay)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14)",
            params![
                board.id,
                number,
                d.description,
                d.kind.unwrap_or(CircuitKind::Radial).as_str(),
                d.live_mm2,
                d.cpc_mm2,
                d.length_m,
                d.device.map(|x| x.to_string()),
                d.rcd_ma,
                d.rcd_type.map(|t| t.as_str()),
                d.insulation.map(|i| i.as_str()),
                d.disconnect_s,
                replaces,
                d.rcd_delay.map(|t| t.as_str()),
            ],
        )?;
        self.circuit_by_id(self.conn.last_insert_rowid())
    }

    /// Change a circuit's register details from `date`. Each field that differs is recorded as
    /// a dated change (`kind` when given; otherwise a device change for the device and a
    /// register correction for the rest), never a silent overwrite. Returns the changes made.
    pub fn edit_circuit(
        &self,
        circuit_id: i64,
        new: &CircuitDetails,
        date: NaiveDate,
        kind: Option<ChangeKind>,
        visit_id: Option<i64>,
        note: Option<&str>,
    ) -> Result<Vec<CircuitChange>> {
        new.validate()?;
        self.atomic(|s| {
            let old = s.circuit_by_id(circuit_id)?;
            if old.status == Status::Retired {
                return Err(Error::invalid(format!(
                    "circuit {} is retired: a retired circuit cannot be edited",
                    old.number
                )));
            }
            let mut changes = Vec::new();
            let mut diff = |field: &'static str,
                            col: &str,
                            before: Option<String>,
                            after: Option<String>,
                            value: rusqlite::types::Value,
                            default_kind: ChangeKind|
             -> Result<()> {
                if after.is_none() || before == after {
                    return Ok(());
                }
                s.conn.execute(
                    &format!("UPDATE circuit SET {col} = ?1 WHERE id = ?2"),
                    params![value, circuit_id],
                )?;
                changes.push(s.record_change(
                    circuit_id,
                    date,
                    kind.unwrap_or(default_kind),
                    Some(field),
                    before.as_deref(),
                    after.as_deref(),
                    visit_id,
                    note,
                )?);
                Ok(())
            };
            use rusqlite::types::Value;
            let text = |v: Option<String>| v.map(Value::Text).unwrap_or(Value::Null);
            let real = |v: Option<f64>| v.map(Value::Real).unwrap_or(Value::Null);
            let num = |v: Option<f64>| v.map(fmt_num);
            diff(
                "description",
                "description",
                old.description.clone(),
                new.description.clone(),
                text(new.description.clone()),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "kind",
                "kind",
                Some(old.kind.as_str().into()),
                new.kind.map(|k| k.as_str().into()),
                text(new.kind.map(|k| k.as_str().into())),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "live_mm2",
                "live_mm2",
                num(old.live_mm2),
                num(new.live_mm2),
                real(new.live_mm2),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "cpc_mm2",
                "cpc_mm2",
                num(old.cpc_mm2),
                num(new.cpc_mm2),
                real(new.cpc_mm2),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "length_m",
                "length_m",
                num(old.length_m),
                num(new.length_m),
                real(new.length_m),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "device",
                "device",
                old.device.map(|d| d.to_string()),
                new.device.map(|d| d.to_string()),
                text(new.device.map(|d| d.to_string())),
                ChangeKind::DeviceChanged,
            )?;
            diff(
                "rcd_ma",
                "rcd_ma",
                old.rcd_ma.map(|v| v.to_string()),
                new.rcd_ma.map(|v| v.to_string()),
                new.rcd_ma
                    .map(|v| Value::Integer(v.into()))
                    .unwrap_or(Value::Null),
                ChangeKind::DeviceChanged,
            )?;
            diff(
                "rcd_type",
                "rcd_type",
                old.rcd_type.map(|v| v.as_str().into()),
                new.rcd_type.map(|v| v.as_str().into()),
                text(new.rcd_type.map(|v| v.as_str().into())),
                ChangeKind::DeviceChanged,
            )?;
            diff(
                "rcd_delay",
                "rcd_delay",
                old.rcd_delay.map(|v| v.as_str().into()),
                new.rcd_delay.map(|v| v.as_str().into()),
                text(new.rcd_delay.map(|v| v.as_str().into())),
                ChangeKind::DeviceChanged,
            )?;
            diff(
                "insulation",
                "insulation",
                old.insulation.map(|v| v.as_str().into()),
                new.insulation.map(|v| v.as_str().into()),
                text(new.insulation.map(|v| v.as_str().into())),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "disconnect_s",
                "disconnect_s",
                num(old.disconnect_s),
                num(new.disconnect_s),
                real(new.disconnect_s),
                ChangeKind::RegisterCorrected,
            )?;
            // Dated before what the history already holds, the change would alter what a
            // later visit shows (the register at a date is the register now with later
            // changes undone): refused, as import and `record` refuse it.
            let fields: Vec<&str> = changes.iter().filter_map(|c| c.field.as_deref()).collect();
            if let Some(later) = s.later_history(circuit_id, date, &fields)? {
                return Err(Error::invalid(format!(
                    "circuit {}: a change of {} dated {date} would alter the {later} already recorded: a register change is dated no earlier than the circuit's last visit and the last change of the same detail",
                    old.number,
                    fields.join(", ")
                )));
            }
            Ok(changes)
        })
    }

    /// Record a dated event on a circuit.
    #[allow(clippy::too_many_arguments)]
    pub fn record_change(
        &self,
        circuit_id: i64,
        date: NaiveDate,
        kind: ChangeKind,
        field: Option<&str>,
        old_value: Option<&str>,
        new_value: Option<&str>,
        visit_id: Option<i64>,
        note: Option<&str>,
    ) -> Result<CircuitChange> {
        check_text("note", note)?;
        self.conn.execute(
            "INSERT INTO circuit_change (circuit_id, date, visit_id, kind, field, old_value, new_value, note)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
            params![circuit_id, date, visit_id, kind.as_str(), field, old_value, new_value, note],
        )?;
        Ok(CircuitChange {
            id: self.conn.last_insert_rowid(),
            circuit_id,
            date,
            kind,
            field: field.map(Into::into),
            old_value: old_value.map(Into::into),
            new_value: new_value.map(Into::into),
            note: note.map(Into::into),
        })
    }

    /// Every change recorded on a circuit, oldest first.
    pub fn changes(&self, circuit_id: i64) -> Result<Vec<CircuitChange>> {
        let mut stmt = self.conn.prepare(&format!(
            "SELECT {CHANGE_COLS} FROM circuit_change WHERE circuit_id = ?1 ORDER BY date, id"
        ))?;
        let rows = stmt.query_map([circuit_id], change_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Take a circuit out of service from `date`. Its readings stay in the history.
    pub fn retire_circuit(
        &self,
        circuit_id: i64,
        date: NaiveDate,
        note: Option<&str>,
    ) -> Result<()> {
        self.atomic(|s| {
            let c = s.circuit_by_id(circuit_id)?;
            if c.status == Status::Retired {
                return Err(Error::invalid(format!(
                    "circuit {} is already retired",
                    c.number
                )));
            }
            s.conn.execute(
                "UPDATE circuit SET status = 'retired' WHERE id = ?1",
                [circuit_id],
            )?;
            s.record_change(
                circuit_id,
                date,
                ChangeKind::Retired,
                None,
                None,
                None,
                None,
                note,
            )?;
            Ok(())
        })
    }

    /// Retire `old_id` and put a new circuit in its place, on `board` (same board when `None`)
    /// with `number` (same number when `None`). Details not given are carried over. The new
    /// circuit records what it replaced, so its history carries on through the lineage, and
    /// starts a new baseline with a change of `kind`.
    #[allow(clippy::too_many_arguments)]
    pub fn replace_circuit(
        &self,
        old_id: i64,
        board: Option<&str>,
        number: Option<&str>,
        details: &CircuitDetails,
        date: NaiveDate,
        kind: ChangeKind,
        note: Option<&str>,
    ) -> Result<Circuit> {
        details.validate()?;
        self.atomic(|s| {
            let old = s.circuit_by_id(old_id)?;
            if old.status == Status::Retired {
                return Err(Error::invalid(format!(
                    "circuit {} is already retired: replace the circuit now in service",
                    old.number
                )));
            }
            let old_board = s.board_by_id(old.board_id)?;
            let property_ref: String = s.conn.query_row(
                "SELECT ref FROM property WHERE id = ?1",
                [old_board.property_id],
                |r| r.get(0),
            )?;
            let new_board = match board {
                Some(d) => s.board(old_board.property_id, &property_ref, d)?,
                None => old_board.clone(),
            };
            let merged = CircuitDetails {
                description: details.description.clone().or(old.description.clone()),
                kind: details.kind.or(Some(old.kind)),
                live_mm2: details.live_mm2.or(old.live_mm2),
                cpc_mm2: details.cpc_mm2.or(old.cpc_mm2),
                length_m: details.length_m.or(old.length_m),
                device: details.device.or(old.device),
                rcd_ma: details.rcd_ma.or(old.rcd_ma),
                rcd_type: details.rcd_type.or(old.rcd_type),
                rcd_delay: details.rcd_delay.or(old.rcd_delay),
                insulation: details.insulation.or(old.insulation),
                disconnect_s: details.disconnect_s.or(old.disconnect_s),
            };
            s.conn.execute(
                "UPDATE circuit SET status = 'retired' WHERE id = ?1",
                [old_id],
            )?;
            let number = number.map(str::trim).unwrap_or(&old.number);
            let new = s.insert_circuit(&new_board, number, &merged, Some(old_id))?;
            let before = format!("{}/{}", old_board.designation, old.number);
            let after = format!("{}/{}", new_board.designation, new.number);
            s.record_change(
                old_id,
                date,
                ChangeKind::Retired,
                None,
                None,
                Some(&after),
                None,
                note,
            )?;
            s.record_change(
                new.id,
                date,
                kind,
                Some("circuit"),
                Some(&before),
                Some(&after),
                None,
                note,
            )?;
            Ok(new)
        })
    }

    pub fn board_by_id(&self, id: i64) -> Result<Board> {
        let sql = format!("SELECT {} FROM board b WHERE b.id = ?1", Self::BOARD_COLS);
        Ok(self.conn.query_row(&sql, [id], Self::board_from_row)?)
    }

    // ----- instruments -----

    pub fn add_instrument(
        &self,
        serial: &str,
        description: Option<&str>,
        calibration_due: Option<NaiveDate>,
    ) -> Result<Instrument> {
        let serial = serial.trim();
        if serial.is_empty() {
            return Err(Error::invalid("instrument serial is empty"));
        }
        check_text("instrument serial", Some(serial))?;
        check_text("instrument description", description)?;
        self.atomic(|s| {
            if s.instrument(serial)?.is_some() {
                return Err(Error::invalid(format!(
                    "instrument {serial:?} already exists"
                )));
            }
            s.conn.execute(
                "INSERT INTO instrument (serial, description, calibration_due) VALUES (?1, ?2, ?3)",
                params![serial, description, calibration_due],
            )?;
            Ok(s.instrument(serial)?.expect("just inserted"))
        })
    }

    pub fn instrument(&self, serial: &str) -> Result<Option<Instrument>> {
        Ok(self
            .conn
            .query_row(
                "SELECT id, serial, description, calibration_due FROM instrument WHERE serial = ?1",
                [serial],
                |r| {
                    Ok(Instrument {
                        id: r.get(0)?,
                        serial: r.get(1)?,
                        description: r.get(2)?,
                        calibration_due: r.get(3)?,
                    })
                },
            )
            .optional()?)
    }

    pub fn instruments(&self) -> Result<Vec<Instrument>> {
        let mut stmt = self.conn.prepare(
            "SELECT id, serial, description, calibration_due FROM instrument ORDER BY serial",
        )?;
        let rows = stmt.query_map([], |r| {
            Ok(Instrument {
                id: r.get(0)?,
                serial: r.get(1)?,
                description: r.get(2)?,
                calibration_due: r.get(3)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    // ----- visits -----

    /// Completed visits, newest first, optionally for one property.
    pub fn visits(&self, property_ref: Option<&str>) -> Result<Vec<VisitSummary>> {
        let property_id = property_ref
            .map(|r| self.property(r).map(|p| p.id))
            .transpose()?;
        let mut stmt = self.conn.prepare(
            "SELECT p.ref, v.date, v.inspector, i.serial, v.ambient_c, v.ze_ohm, v.pfc_ka,
                    (SELECT count(*) FROM test_record t WHERE t.visit_id = v.id),
                    (SELECT count(*) FROM observation o WHERE o.visit_id = v.id)
             FROM visit v JOIN property p ON p.id = v.property_id
             LEFT JOIN instrument i ON i.id = v.instrument_id
             WHERE v.state = 'complete' AND (?1 IS NULL OR v.property_id = ?1)
             ORDER BY v.date DESC, p.ref",
        )?;
        let rows = stmt.query_map([property_id], |r| {
            Ok(VisitSummary {
                property_ref: r.get(0)?,
                date: r.get(1)?,
                inspector: r.get(2)?,
                instrument: r.get(3)?,
                ambient_c: r.get(4)?,
                ze_ohm: r.get(5)?,
                pfc_ka: r.get(6)?,
                test_records: r.get(7)?,
                observations: r.get(8)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }
}

/// The columns [`change_from_row`] reads, in order.
pub(crate) const CHANGE_COLS: &str =
    "id, circuit_id, date, kind, field, old_value, new_value, note";

/// Decode a circuit change from the first eight columns of a row ([`CHANGE_COLS`]).
pub(crate) fn change_from_row(r: &Row) -> rusqlite::Result<CircuitChange> {
    let kind: String = r.get(3)?;
    Ok(CircuitChange {
        id: r.get(0)?,
        circuit_id: r.get(1)?,
        date: r.get(2)?,
        kind: kind.parse().unwrap_or(ChangeKind::RegisterCorrected),
        field: r.get(4)?,
        old_value: r.get(5)?,
        new_value: r.get(6)?,
        note: r.get(7)?,
    })
}

/// Decode an observation from (id, visit_id, board designation, circuit number, code, text).
pub(crate) fn observation_from_row(r: &Row) -> rusqlite::Result<crate::model::Observation> {
    let code: String = r.get(4)?;
    Ok(crate::model::Observation {
        id: r.get(0)?,
        visit_id: r.get(1)?,
        board: r.get(2)?,
        circuit: r.get(3)?,
        code: code.parse().unwrap_or(crate::model::ObservationCode::FI),
        text: r.get(5)?,
    })
}

/// Shortest decimal text of a number, as the register shows it (2.5, not 2.5000).
pub fn fmt_num(v: f64) -> String {
    let s = format!("{v}");
    if s.contains('e') {
        format!("{v:.6}")
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn store_with_property() -> Store {
        let s = Store::open_in_memory().unwrap();
        s.add_property(&NewProperty {
            reference: "P1".into(),
            client: Some("Agent".into()),
            ..Default::default()
        })
        .unwrap();
        s.add_board(
            "P1",
            &NewBoard {
                designation: "DB1".into(),
                ..Default::default()
            },
        )
        .unwrap();
        s
    }

    /// The case-blind lookup is a search of its own index, not a scan of every property: the
    /// import runs it once for every property a file names.
    #[test]
    fn the_reference_lookup_searches_its_index() {
        let s = store_with_property();
        let mut st = s
            .conn
            .prepare(&format!("EXPLAIN QUERY PLAN {PROPERTY_REF_SQL}"))
            .unwrap();
        let plan: Vec<String> = st
            .query_map(["p1"], |r| r.get(3))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        assert!(
            plan.iter()
                .any(|p| p.starts_with("SEARCH") && p.contains("property_ref_nocase")),
            "{plan:?}"
        );
        assert!(!plan.iter().any(|p| p.starts_with("SCAN")), "{plan:?}");
    }

    #[test]
    fn references_match_without_regard_to_case_and_an_exact_twin_wins() {
        let s = store_with_property();
        assert_eq!(s.property("p1").unwrap().reference, "P1");
        let err = s
            .add_property(&NewProperty {
                reference: "p1".into(),
                ..Default::default()
            })
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("\"P1\"") && err.contains("only in case"),
            "{err}"
        );
        // A database made before such pairs were refused may hold both: the exact spelling
        // finds its own, and a third spelling is refused as ambiguous, naming both.
        s.conn
            .execute("INSERT INTO property (ref) VALUES ('qa-1'), ('QA-1')", [])
            .unwrap();
        assert_eq!(s.property("qa-1").unwrap().reference, "qa-1");
        assert_eq!(s.property("QA-1").unwrap().reference, "QA-1");
        let err = s.property("Qa-1").unwrap_err().to_string();
        assert!(
            err.contains("\"QA-1\" and \"qa-1\"") && err.contains("only in case"),
            "{err}"
        );
    }

    fn day(s: &str) -> NaiveDate {
        s.parse().unwrap()
    }

    #[test]
    fn duplicate_circuit_number_is_refused_and_nothing_written() {
        let s = store_with_property();
        s.add_circuit("P1", "DB1", "1", &CircuitDetails::default())
            .unwrap();
        let err = s
            .add_circuit("P1", "DB1", "1", &CircuitDetails::default())
            .unwrap_err();
        assert!(err.to_string().contains("already has a circuit 1"), "{err}");
        let board = s.board_opt(1, "DB1").unwrap().unwrap();
        assert_eq!(s.circuits(board.id).unwrap().len(), 1);
    }

    #[test]
    fn edit_records_each_changed_field() {
        let s = store_with_property();
        let c = s
            .add_circuit(
                "P1",
                "DB1",
                "3",
                &CircuitDetails {
                    device: Some("B32".parse().unwrap()),
                    live_mm2: Some(2.5),
                    ..Default::default()
                },
            )
            .unwrap();
        let changes = s
            .edit_circuit(
                c.id,
                &CircuitDetails {
                    device: Some("B20".parse().unwrap()),
                    live_mm2: Some(2.5),
                    ..Default::default()
                },
                day("2024-03-01"),
                None,
                None,
                None,
            )
            .unwrap();
        assert_eq!(changes.len(), 1);
        assert_eq!(changes[0].kind, ChangeKind::DeviceChanged);
        assert_eq!(changes[0].old_value.as_deref(), Some("B32"));
        assert_eq!(changes[0].new_value.as_deref(), Some("B20"));
        assert_eq!(
            s.circuit_by_id(c.id).unwrap().device.unwrap().to_string(),
            "B20"
        );
    }

    #[test]
    fn replace_keeps_lineage_across_boards() {
        let s = store_with_property();
        s.add_board(
            "P1",
            &NewBoard {
                designation: "DB2".into(),
                ..Default::default()
            },
        )
        .unwrap();
        let old = s
            .add_circuit("P1", "DB1", "4", &CircuitDetails::default())
            .unwrap();
        let new = s
            .replace_circuit(
                old.id,
                Some("DB2"),
                Some("7"),
                &CircuitDetails::default(),
                day("2020-01-01"),
                ChangeKind::BoardReplaced,
                None,
            )
            .unwrap();
        // The lineage link: the new circuit names the one it replaced.
        assert_eq!(new.replaces, Some(old.id));
        assert_eq!(s.circuit_by_id(new.id).unwrap().replaces, Some(old.id));
        assert_eq!(s.circuit_by_id(old.id).unwrap().status, Status::Retired);
        // The number is free again on the old board.
        s.add_circuit("P1", "DB1", "4", &CircuitDetails::default())
            .unwrap();
    }

    #[test]
    fn atomic_rolls_back_on_error() {
        let s = Store::open_in_memory().unwrap();
        let r: Result<()> = s.atomic(|s| {
            s.add_property(&NewProperty {
                reference: "X".into(),
                ..Default::default()
            })?;
            Err(Error::invalid("stop"))
        });
        assert!(r.is_err());
        assert!(s.property_id("X").unwrap().is_none());
    }
}
