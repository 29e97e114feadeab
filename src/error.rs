//! The library's error type. Messages are one line, without a trailing full stop, and name the
//! value at fault and what was expected.

use std::path::PathBuf;

pub type Result<T, E = Error> = std::result::Result<T, E>;

#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// The user asked for something that does not fit the register or the rules.
    #[error("{0}")]
    Invalid(String),

    /// A named thing is not in the register.
    #[error("{what} {name:?} not found{hint}")]
    NotFound {
        what: &'static str,
        name: String,
        hint: String,
    },

    /// The database was written by a newer ohmtrail; it is left untouched.
    #[error(
        "database {path} is at schema version {found}, newer than this ohmtrail understands (version {supported}); it has been left untouched: use a newer ohmtrail"
    )]
    NewerSchema {
        path: PathBuf,
        found: i64,
        supported: i64,
    },

    /// The database file is marked read-only.
    #[error("database {path} is read-only and {why}: make it writable, or use a copy")]
    ReadOnly { path: PathBuf, why: String },

    /// The file is not a SQLite database at all.
    #[error(
        "{path} is not an ohmtrail database (SQLite: file is not a database): check the --db path"
    )]
    NotADatabase { path: PathBuf },

    /// A SQLite database that another program made; it is left untouched.
    #[error(
        "{path} is a SQLite database that ohmtrail did not make ({what}); it has been left untouched: give --db a new file, or an ohmtrail database"
    )]
    ForeignDatabase { path: PathBuf, what: String },

    /// The database could not grow: the disk, or a size cap, is full.
    #[error(
        "database {path} is full (database or disk is full): free some disk space, then try again"
    )]
    Full { path: PathBuf },

    /// A file stopped part-way for a failure that is not the file's fault; it was rolled back.
    #[error("{file}: stopped at line {line}, nothing from this file was written: {source}")]
    FileAborted {
        file: PathBuf,
        line: u64,
        #[source]
        source: Box<Error>,
    },

    #[error("database {path}: {source}")]
    Database {
        path: PathBuf,
        #[source]
        source: rusqlite::Error,
    },

    #[error(transparent)]
    Sql(#[from] rusqlite::Error),

    /// Output could not be written: a full disk, or a reader that went away (`| head`).
    #[error("writing {what}: {source}")]
    Write {
        what: &'static str,
        #[source]
        source: std::io::Error,
    },

    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
}

impl Error {
    pub fn invalid(msg: impl Into<String>) -> Error {
        Error::Invalid(msg.into())
    }

    /// Writing `what` (CSV, JSON) failed; the I/O error is kept as the source, so the command
    /// can tell a reader that went away from a real failure.
    pub fn write(what: &'static str, source: std::io::Error) -> Error {
        Error::Write { what, source }
    }

    pub fn not_found(what: &'static str, name: impl Into<String>) -> Error {
        Error::NotFound {
            what,
            name: name.into(),
            hint: String::new(),
        }
    }

    pub fn not_found_hint(
        what: &'static str,
        name: impl Into<String>,
        hint: impl Into<String>,
    ) -> Error {
        Error::NotFound {
            what,
            name: name.into(),
            hint: format!(": {}", hint.into()),
        }
    }
}
