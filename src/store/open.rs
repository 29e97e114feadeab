//! Opening a database: the ownership check, read-only directories, migrations, transactions.

use super::*;

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
}
