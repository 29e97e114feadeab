//! The simulated portfolio through the real pipeline: its visit file written, imported into a
//! fresh database, and the worklist run with the settings the database holds, as `ohmtrail
//! flags` does. The analysis date is [`super::as_of`], so results do not depend on the day.

use std::fs::File;
use std::io::BufWriter;
use std::path::{Path, PathBuf};

use crate::analysis::{Flag, Settings, WorklistFilter, worklist};
use crate::error::{Error, Result};
use crate::import::{ImportOptions, import_file};
use crate::store::Store;

use super::{Portfolio, SimRow};

fn io_error(path: &Path, e: std::io::Error) -> Error {
    Error::Io {
        path: path.to_path_buf(),
        source: e,
    }
}

/// Write the rows `keep` selects to `csv_path`.
pub fn write_visit_file(
    p: &Portfolio,
    csv_path: &Path,
    keep: impl Fn(&SimRow) -> bool,
) -> Result<()> {
    let file = File::create(csv_path).map_err(|e| io_error(csv_path, e))?;
    p.write_csv_where(BufWriter::new(file), keep)
        .map_err(|e| match e.into_kind() {
            csv::ErrorKind::Io(e) => io_error(csv_path, e),
            other => Error::invalid(format!("{}: {other:?}", csv_path.display())),
        })
}

/// Import a visit file into a new database at `db_path`. Every row must go in: a rejected
/// row means the simulator wrote something the visit file does not allow.
pub fn import_into_new(csv_path: &Path, db_path: &Path) -> Result<Store> {
    if db_path.exists() {
        return Err(Error::invalid(format!(
            "{}: already exists: the simulation imports into a new database",
            db_path.display()
        )));
    }
    let store = Store::open(db_path)?;
    let summary = import_file(
        &store,
        csv_path,
        &ImportOptions::new(super::as_of()),
        &mut |_, _| {},
    )?;
    if summary.errors_total > 0 || summary.rows_rejected > 0 {
        return Err(Error::invalid(format!(
            "{}: {} rows rejected: {}",
            csv_path.display(),
            summary.rows_rejected,
            summary.errors.join("; ")
        )));
    }
    Ok(store)
}

/// The worklist with the settings the database holds, on [`super::as_of`].
pub fn worklist_of(store: &Store) -> Result<Vec<Flag>> {
    let settings = Settings::load(store, super::as_of())?;
    worklist(store, &settings, &WorklistFilter::default())
}

/// Where the files of a run go: `dir/NAME.csv` and `dir/NAME.db`.
pub fn paths(dir: &Path, name: &str) -> (PathBuf, PathBuf) {
    (
        dir.join(format!("{name}.csv")),
        dir.join(format!("{name}.db")),
    )
}

/// The whole portfolio imported into `dir/portfolio.db` and its worklist.
pub fn portfolio_worklist(p: &Portfolio, dir: &Path) -> Result<Vec<Flag>> {
    let (csv, db) = paths(dir, "portfolio");
    write_visit_file(p, &csv, |_| true)?;
    let store = import_into_new(&csv, &db)?;
    worklist_of(&store)
}
