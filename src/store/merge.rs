//! Bringing an archive's rows into this database, table by table, in the order the archive
//! gives them (referenced tables first). Rows are matched by identity ([`Identity`]): the
//! same row is skipped, a new one added, one whose values differ is a conflict reported with
//! both values. Nothing here begins or ends a transaction: the caller runs the whole merge
//! inside [`Store::atomic`], so a refused merge leaves the database as it was.

use std::collections::{HashMap, HashSet};

use rusqlite::types::Value;
use rusqlite::{OptionalExtension, params_from_iter};

use super::Store;
use super::archive::{ColumnKind, Identity, TableSchema, quote};
use crate::error::{Error, Result};

/// One cell of an archive row, as the file gives it.
#[derive(Debug, Clone, PartialEq)]
pub enum ArchiveCell {
    Value(Value),
    /// A row identifier: the row's own, or that of the row referred to.
    Uuid([u8; 16]),
    /// A reference by position in the referenced table's rows in the archive.
    Ordinal(u64),
}

/// What to do with a row that both hold with different values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Prefer {
    /// Report it and write nothing at all.
    #[default]
    Neither,
    /// Keep this database's values.
    Local,
    /// Write the archive's values over this database's.
    Archive,
}

/// What the merge did with one table's rows.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct TableCounts {
    pub added: u64,
    pub unchanged: u64,
    /// Conflicts settled by writing the archive's values (`--prefer archive`).
    pub replaced: u64,
    /// Conflicts settled by keeping this database's values (`--prefer local`).
    pub kept: u64,
    /// Rows left out because a row they refer to was left out.
    pub held_back: u64,
}

/// Why two rows could not simply be merged.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ConflictKind {
    /// The same row (same identifier or key) with different values.
    Differs,
    /// Two different rows (different identifiers) that the database takes for one: the same
    /// property reference, the same visit date at a property, the same circuit number on a
    /// board. Made separately on two machines; never merged silently.
    TwoIdentities,
}

#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Conflict {
    pub table: String,
    pub kind: ConflictKind,
    /// The row in words, as this database knows it.
    pub row: String,
    /// (column, this database's value, the archive's value) for each value that differs.
    pub differences: Vec<(String, String, String)>,
}

#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct MergeOutcome {
    pub tables: Vec<(String, TableCounts)>,
    pub conflicts: Vec<Conflict>,
}

impl MergeOutcome {
    /// Conflicts that stop the merge under `prefer`.
    pub fn blocking(&self, prefer: Prefer) -> usize {
        self.conflicts
            .iter()
            .filter(|c| match prefer {
                Prefer::Neither => true,
                Prefer::Local => false,
                Prefer::Archive => c.kind == ConflictKind::TwoIdentities,
            })
            .count()
    }

    pub fn total(&self) -> TableCounts {
        let mut t = TableCounts::default();
        for (_, c) in &self.tables {
            t.added += c.added;
            t.unchanged += c.unchanged;
            t.replaced += c.replaced;
            t.kept += c.kept;
            t.held_back += c.held_back;
        }
        t
    }
}

/// The archive's description of one table: its name and its columns with their kinds.
#[derive(Debug, Clone)]
pub struct ArchiveTable {
    pub name: String,
    pub columns: Vec<(String, ColumnKind)>,
}

struct TableState {
    schema: TableSchema,
    /// Archive column → column of `schema`.
    cols: Vec<usize>,
    /// This database's identifiers (uuid tables), rows added by the merge included.
    uuids: HashMap<[u8; 16], i64>,
    /// Identifiers of archive rows left out, so rows referring to them are left out too.
    held: HashSet<[u8; 16]>,
    /// Archive position → row here (`None`: left out), for tables referred to by position.
    ordinals: Vec<Option<i64>>,
    referenced_by_position: bool,
    /// Rows numbered above this were added by this merge.
    max_id: i64,
    /// Rows of a table without a key, by their values, loaded when first needed.
    content: Option<HashMap<String, u32>>,
    /// (row, column, identifier) of references to a row of the same table not seen yet.
    fixups: Vec<(i64, usize, [u8; 16])>,
    insert_sql: String,
    select_sql: String,
    counts: TableCounts,
}

/// A merge in progress: feed it each table's rows in the archive's order.
pub struct Merger<'s> {
    store: &'s Store,
    prefer: Prefer,
    tables: Vec<TableState>,
    by_name: HashMap<String, usize>,
    current: Option<usize>,
    conflicts: Vec<Conflict>,
}

/// A shorter text of a value for a conflict report.
pub fn show_value(v: &Value) -> String {
    match v {
        Value::Null => "(none)".into(),
        Value::Integer(i) => i.to_string(),
        Value::Real(r) => super::fmt_num(*r),
        Value::Text(t) => format!("{t:?}"),
        Value::Blob(b) if b.len() == 16 => {
            uuid::Uuid::from_slice(b).map_or_else(|_| hex(b), |u| u.hyphenated().to_string())
        }
        Value::Blob(b) => hex(b),
    }
}

fn hex(b: &[u8]) -> String {
    b.iter().map(|x| format!("{x:02x}")).collect()
}

/// A value as the column stores it: STRICT REAL columns hold whole numbers as reals.
fn coerce(v: Value, decl: &str) -> Value {
    match (v, decl) {
        (Value::Integer(i), "REAL") => Value::Real(i as f64),
        (v, _) => v,
    }
}

fn content_key(vals: &[Value]) -> String {
    format!("{vals:?}")
}

impl Store {
    /// Begin merging an archive whose tables are `archive` (in its order). Refuses, before
    /// anything is written, an archive carrying a table or column this database lacks or
    /// holding a reference this database's schema does not make.
    pub fn merge_begin(&self, archive: &[ArchiveTable], prefer: Prefer) -> Result<Merger<'_>> {
        let local: HashMap<String, TableSchema> = self
            .archive_schema()?
            .into_iter()
            .map(|t| (t.name.clone(), t))
            .collect();
        let referenced: HashSet<&str> = archive
            .iter()
            .flat_map(|t| t.columns.iter())
            .filter_map(|(_, k)| match k {
                ColumnKind::Ref { table } => Some(table.as_str()),
                _ => None,
            })
            .collect();
        let mut tables = Vec::new();
        let mut by_name = HashMap::new();
        for at in archive {
            let Some(schema) = local.get(&at.name) else {
                return Err(Error::invalid(format!(
                    "the archive carries table {}, which this database does not have: it was written by a newer ohmtrail; update this one first",
                    at.name
                )));
            };
            let mut cols = Vec::new();
            for (name, kind) in &at.columns {
                let Some(i) = schema.column(name) else {
                    return Err(Error::invalid(format!(
                        "the archive carries column {}.{name}, which this database does not have: it was written by a newer ohmtrail; update this one first",
                        at.name
                    )));
                };
                if &schema.columns[i].kind != kind {
                    return Err(Error::invalid(format!(
                        "column {}.{name} is {:?} in the archive but {:?} here: the archive does not fit this database",
                        at.name, kind, schema.columns[i].kind
                    )));
                }
                cols.push(i);
            }
            if schema.has_uuid()
                && !cols
                    .iter()
                    .any(|&i| schema.columns[i].kind == ColumnKind::Uuid)
            {
                return Err(Error::invalid(format!(
                    "the archive's table {} has no uuid column: rows cannot be matched",
                    at.name
                )));
            }
            if let Identity::Key(k) = &schema.identity
                && !k.iter().all(|i| cols.contains(i))
            {
                return Err(Error::invalid(format!(
                    "the archive's table {} lacks a column of its key: rows cannot be matched",
                    at.name
                )));
            }
            let names: Vec<String> = cols
                .iter()
                .map(|&i| quote(&schema.columns[i].name))
                .collect();
            let marks: Vec<String> = (1..=cols.len()).map(|i| format!("?{i}")).collect();
            let table = quote(&at.name);
            let max_id: Option<i64> =
                self.conn
                    .query_row(&format!("SELECT max(rowid) FROM {table}"), [], |r| r.get(0))?;
            let uuids = if schema.has_uuid() {
                let mut st = self.conn.prepare(&format!(
                    "SELECT uuid, rowid FROM {table} WHERE uuid IS NOT NULL"
                ))?;
                let rows =
                    st.query_map([], |r| Ok((r.get::<_, Vec<u8>>(0)?, r.get::<_, i64>(1)?)))?;
                let mut m = HashMap::new();
                for row in rows {
                    let (u, id) = row?;
                    if let Ok(u) = <[u8; 16]>::try_from(u.as_slice()) {
                        m.insert(u, id);
                    }
                }
                m
            } else {
                HashMap::new()
            };
            by_name.insert(at.name.clone(), tables.len());
            tables.push(TableState {
                schema: schema.clone(),
                insert_sql: format!(
                    "INSERT INTO {table} ({}) VALUES ({})",
                    names.join(", "),
                    marks.join(", ")
                ),
                select_sql: format!(
                    "SELECT {} FROM {table} WHERE rowid = ?1",
                    if names.is_empty() {
                        "NULL".to_string()
                    } else {
                        names.join(", ")
                    }
                ),
                cols,
                uuids,
                held: HashSet::new(),
                ordinals: Vec::new(),
                referenced_by_position: referenced.contains(at.name.as_str()) && !schema.has_uuid(),
                max_id: max_id.unwrap_or(0),
                content: None,
                fixups: Vec::new(),
                counts: TableCounts::default(),
            });
        }
        self.conn.set_prepared_statement_cache_capacity(64);
        Ok(Merger {
            store: self,
            prefer,
            tables,
            by_name,
            current: None,
            conflicts: Vec::new(),
        })
    }
}

/// References to rows of the same table not seen yet: (archive column, identifier).
type Forward = Vec<(usize, [u8; 16])>;

/// What resolving an archive row's references gave.
enum Resolved {
    Row {
        vals: Vec<Value>,
        fresh: bool,
        own: Option<[u8; 16]>,
    },
    /// A row it refers to was left out.
    HeldBack { own: Option<[u8; 16]> },
}

impl<'s> Merger<'s> {
    /// The rows that follow belong to `table`.
    pub fn start_table(&mut self, table: &str) -> Result<()> {
        let Some(&i) = self.by_name.get(table) else {
            return Err(Error::invalid(format!(
                "rows of table {table}, which the archive's header does not describe"
            )));
        };
        self.finish_table()?;
        self.current = Some(i);
        Ok(())
    }

    /// Resolve the references still waiting for a later row of the same table.
    fn finish_table(&mut self) -> Result<()> {
        let Some(i) = self.current.take() else {
            return Ok(());
        };
        let t = &mut self.tables[i];
        for (row, col, u) in std::mem::take(&mut t.fixups) {
            let name = &t.schema.columns[col].name;
            let Some(&target) = t.uuids.get(&u) else {
                return Err(Error::invalid(format!(
                    "{}.{name} refers to {}, which is neither in the archive nor in this database",
                    t.schema.name,
                    uuid::Uuid::from_bytes(u).hyphenated()
                )));
            };
            self.store.conn.execute(
                &format!(
                    "UPDATE {} SET {} = ?1 WHERE rowid = ?2",
                    quote(&t.schema.name),
                    quote(name)
                ),
                [target, row],
            )?;
        }
        Ok(())
    }

    /// Everything done: the counts per table and the conflicts found.
    pub fn finish(mut self) -> Result<MergeOutcome> {
        self.finish_table()?;
        Ok(MergeOutcome {
            tables: self
                .tables
                .into_iter()
                .map(|t| (t.schema.name, t.counts))
                .collect(),
            conflicts: self.conflicts,
        })
    }

    fn resolve(&self, i: usize, cells: &[ArchiveCell]) -> Result<(Resolved, Forward)> {
        let t = &self.tables[i];
        if cells.len() != t.cols.len() {
            return Err(Error::invalid(format!(
                "a row of {} has {} values where the header names {} columns",
                t.schema.name,
                cells.len(),
                t.cols.len()
            )));
        }
        let mut vals = Vec::with_capacity(cells.len());
        let mut fresh = false;
        let mut own = None;
        let mut forward = Vec::new();
        for (ai, cell) in cells.iter().enumerate() {
            let col = &t.schema.columns[t.cols[ai]];
            let v = match (&col.kind, cell) {
                (ColumnKind::Uuid, ArchiveCell::Uuid(u)) => {
                    own = Some(*u);
                    Value::Blob(u.to_vec())
                }
                (ColumnKind::Ref { .. }, ArchiveCell::Value(Value::Null)) => Value::Null,
                (ColumnKind::Ref { table }, ArchiveCell::Uuid(u)) => {
                    let r = &self.tables[self.by_name[table]];
                    match r.uuids.get(u) {
                        Some(&id) => {
                            fresh |= id > r.max_id;
                            Value::Integer(id)
                        }
                        None if r.held.contains(u) => {
                            return Ok((Resolved::HeldBack { own }, forward));
                        }
                        None if table == &t.schema.name => {
                            forward.push((ai, *u));
                            fresh = true;
                            Value::Null
                        }
                        None => {
                            return Err(Error::invalid(format!(
                                "{}.{} refers to {table} {}, which is neither in the archive nor in this database",
                                t.schema.name,
                                col.name,
                                uuid::Uuid::from_bytes(*u).hyphenated()
                            )));
                        }
                    }
                }
                (ColumnKind::Ref { table }, ArchiveCell::Ordinal(n)) => {
                    let r = &self.tables[self.by_name[table]];
                    match r.ordinals.get(*n as usize) {
                        Some(Some(id)) => {
                            fresh |= *id > r.max_id;
                            Value::Integer(*id)
                        }
                        Some(None) => return Ok((Resolved::HeldBack { own }, forward)),
                        None => {
                            return Err(Error::invalid(format!(
                                "{}.{} refers to row {n} of {table}, which the archive does not hold",
                                t.schema.name, col.name
                            )));
                        }
                    }
                }
                (ColumnKind::Value, ArchiveCell::Value(v)) => coerce(v.clone(), &col.decl),
                (kind, _) => {
                    return Err(Error::invalid(format!(
                        "{}.{}: expected {}",
                        t.schema.name,
                        col.name,
                        match kind {
                            ColumnKind::Uuid => "the row's identifier (a UUID)",
                            ColumnKind::Ref { .. } => "a reference (a UUID, a position or null)",
                            ColumnKind::Value => "a value",
                        }
                    )));
                }
            };
            vals.push(v);
        }
        Ok((Resolved::Row { vals, fresh, own }, forward))
    }

    /// Merge one row of the current table.
    pub fn row(&mut self, cells: &[ArchiveCell]) -> Result<()> {
        let Some(i) = self.current else {
            return Err(Error::invalid("a row before any table was named"));
        };
        let (resolved, forward) = self.resolve(i, cells)?;
        let (vals, fresh, own) = match resolved {
            Resolved::Row { vals, fresh, own } => (vals, fresh, own),
            Resolved::HeldBack { own } => {
                self.hold(i, own);
                return Ok(());
            }
        };
        let existing = match (&self.tables[i].schema.identity, own) {
            _ if fresh => None,
            (Identity::Uuid, Some(u)) => self.tables[i].uuids.get(&u).copied(),
            (Identity::Key(k), _) => self.find_by_key(i, k.clone(), &vals)?,
            (Identity::Content, _) => {
                if self.take_content(i, &vals)? {
                    let t = &mut self.tables[i];
                    t.counts.unchanged += 1;
                    // Rows without a key are never referred to by position with a match
                    // known here; give the position no row rather than a wrong one.
                    if t.referenced_by_position {
                        let id = self.find_by_content(i, &vals)?;
                        self.tables[i].ordinals.push(id);
                    }
                    return Ok(());
                }
                None
            }
            (Identity::Uuid, None) => {
                return Err(Error::invalid(format!(
                    "a row of {} without its identifier",
                    self.tables[i].schema.name
                )));
            }
        };
        let id = match existing {
            Some(id) => {
                self.compare(i, id, &vals)?;
                Some(id)
            }
            None => match self.insert(i, &vals, own, forward)? {
                Some(id) => Some(id),
                // A conflict: its position is already marked as left out.
                None => return Ok(()),
            },
        };
        let t = &mut self.tables[i];
        if t.referenced_by_position {
            t.ordinals.push(id);
        }
        Ok(())
    }

    fn hold(&mut self, i: usize, own: Option<[u8; 16]>) {
        let t = &mut self.tables[i];
        t.counts.held_back += 1;
        if let Some(u) = own {
            t.held.insert(u);
        }
        if t.referenced_by_position {
            t.ordinals.push(None);
        }
    }

    fn find_by_key(&self, i: usize, key: Vec<usize>, vals: &[Value]) -> Result<Option<i64>> {
        let t = &self.tables[i];
        let mut cond = Vec::new();
        let mut args = Vec::new();
        for k in key {
            let ai = t
                .cols
                .iter()
                .position(|&c| c == k)
                .expect("checked at the start");
            cond.push(format!(
                "{} IS ?{}",
                quote(&t.schema.columns[k].name),
                cond.len() + 1
            ));
            args.push(&vals[ai]);
        }
        let sql = format!(
            "SELECT rowid FROM {} WHERE {}",
            quote(&t.schema.name),
            cond.join(" AND ")
        );
        let mut st = self.store.conn.prepare_cached(&sql)?;
        Ok(st
            .query_row(params_from_iter(args), |r| r.get(0))
            .optional()?)
    }

    /// Whether a row with these values is here and not yet matched by another archive row.
    fn take_content(&mut self, i: usize, vals: &[Value]) -> Result<bool> {
        if self.tables[i].content.is_none() {
            let mut m: HashMap<String, u32> = HashMap::new();
            let t = &self.tables[i];
            let mut st = self
                .store
                .conn
                .prepare(&t.select_sql.replace(" WHERE rowid = ?1", ""))?;
            let mut rows = st.query([])?;
            while let Some(r) = rows.next()? {
                let v: Vec<Value> = (0..t.cols.len())
                    .map(|c| r.get::<_, Value>(c))
                    .collect::<rusqlite::Result<_>>()?;
                *m.entry(content_key(&v)).or_default() += 1;
            }
            self.tables[i].content = Some(m);
        }
        let m = self.tables[i].content.as_mut().expect("loaded above");
        match m.get_mut(&content_key(vals)) {
            Some(n) if *n > 0 => {
                *n -= 1;
                Ok(true)
            }
            _ => Ok(false),
        }
    }

    fn find_by_content(&self, i: usize, vals: &[Value]) -> Result<Option<i64>> {
        let t = &self.tables[i];
        let cond: Vec<String> = t
            .cols
            .iter()
            .enumerate()
            .map(|(n, &c)| format!("{} IS ?{}", quote(&t.schema.columns[c].name), n + 1))
            .collect();
        let sql = format!(
            "SELECT rowid FROM {} WHERE {} ORDER BY rowid LIMIT 1",
            quote(&t.schema.name),
            cond.join(" AND ")
        );
        let mut st = self.store.conn.prepare_cached(&sql)?;
        Ok(st
            .query_row(params_from_iter(vals), |r| r.get(0))
            .optional()?)
    }

    fn compare(&mut self, i: usize, id: i64, vals: &[Value]) -> Result<()> {
        let here: Vec<Value> = {
            let t = &self.tables[i];
            let mut st = self.store.conn.prepare_cached(&t.select_sql)?;
            st.query_row([id], |r| {
                (0..t.cols.len()).map(|c| r.get::<_, Value>(c)).collect()
            })?
        };
        if here == vals {
            self.tables[i].counts.unchanged += 1;
            return Ok(());
        }
        let t = &self.tables[i];
        let differences: Vec<(String, String, String)> = here
            .iter()
            .zip(vals)
            .zip(&t.cols)
            .filter(|((a, b), _)| a != b)
            .map(|((a, b), &c)| {
                let col = &t.schema.columns[c];
                let show = |v: &Value| match (&col.kind, v) {
                    (ColumnKind::Ref { table }, Value::Integer(id)) => self
                        .store
                        .describe_row(table, *id)
                        .unwrap_or_else(|_| format!("{table} row {id}")),
                    _ => show_value(v),
                };
                (col.name.clone(), show(a), show(b))
            })
            .collect();
        let row = self.store.describe_row(&t.schema.name, id)?;
        let table = t.schema.name.clone();
        self.conflicts.push(Conflict {
            table,
            kind: ConflictKind::Differs,
            row,
            differences,
        });
        match self.prefer {
            Prefer::Archive => {
                let t = &self.tables[i];
                let sets: Vec<String> = t
                    .cols
                    .iter()
                    .enumerate()
                    .map(|(n, &c)| format!("{} = ?{}", quote(&t.schema.columns[c].name), n + 1))
                    .collect();
                let sql = format!(
                    "UPDATE {} SET {} WHERE rowid = ?{}",
                    quote(&t.schema.name),
                    sets.join(", "),
                    t.cols.len() + 1
                );
                let mut args: Vec<&Value> = vals.iter().collect();
                let idv = Value::Integer(id);
                args.push(&idv);
                self.store.conn.execute(&sql, params_from_iter(args))?;
                self.tables[i].counts.replaced += 1;
            }
            Prefer::Local | Prefer::Neither => self.tables[i].counts.kept += 1,
        }
        Ok(())
    }

    fn insert(
        &mut self,
        i: usize,
        vals: &[Value],
        own: Option<[u8; 16]>,
        forward: Vec<(usize, [u8; 16])>,
    ) -> Result<Option<i64>> {
        let result = {
            let t = &self.tables[i];
            let mut st = self.store.conn.prepare_cached(&t.insert_sql)?;
            st.insert(params_from_iter(vals))
        };
        match result {
            Ok(id) => {
                let t = &mut self.tables[i];
                t.counts.added += 1;
                if let Some(u) = own {
                    t.uuids.insert(u, id);
                }
                for (ai, u) in forward {
                    t.fixups.push((id, t.cols[ai], u));
                }
                Ok(Some(id))
            }
            Err(rusqlite::Error::SqliteFailure(e, Some(msg)))
                if e.extended_code == rusqlite::ffi::SQLITE_CONSTRAINT_UNIQUE
                    || e.extended_code == rusqlite::ffi::SQLITE_CONSTRAINT_PRIMARYKEY =>
            {
                let row = self.occupant(i, &msg, vals)?;
                let t = &self.tables[i];
                let mut differences = Vec::new();
                if let (Some(u), Some(id)) = (own, row.1) {
                    let here: Option<Vec<u8>> = self.store.conn.query_row(
                        &format!(
                            "SELECT uuid FROM {} WHERE rowid = ?1",
                            quote(&t.schema.name)
                        ),
                        [id],
                        |r| r.get(0),
                    )?;
                    differences.push((
                        "uuid".to_string(),
                        here.map_or("(none)".into(), |h| show_value(&Value::Blob(h))),
                        show_value(&Value::Blob(u.to_vec())),
                    ));
                }
                let table = t.schema.name.clone();
                self.conflicts.push(Conflict {
                    table,
                    kind: ConflictKind::TwoIdentities,
                    row: row.0,
                    differences,
                });
                // Left out (this database's row stays): what refers to it is held back.
                let t = &mut self.tables[i];
                t.counts.kept += 1;
                if let Some(u) = own {
                    t.held.insert(u);
                }
                if t.referenced_by_position {
                    t.ordinals.push(None);
                }
                Ok(None)
            }
            Err(e) => Err(e.into()),
        }
    }

    /// The row here that holds the key an insert collided with, from SQLite's message
    /// ("UNIQUE constraint failed: visit.property_id, visit.date" or "... index 'name'"):
    /// its description and row number.
    fn occupant(&self, i: usize, msg: &str, vals: &[Value]) -> Result<(String, Option<i64>)> {
        let t = &self.tables[i];
        let tail = msg.split(": ").nth(1).unwrap_or("");
        let names: Vec<String> = if let Some(index) = tail
            .strip_prefix("index '")
            .and_then(|s| s.strip_suffix('\''))
        {
            self.store.index_columns(index)?
        } else {
            tail.split(", ")
                .filter_map(|c| c.split_once('.').map(|(_, c)| c.to_string()))
                .collect()
        };
        let mut cond = Vec::new();
        let mut args = Vec::new();
        for n in &names {
            let Some(ai) = t.cols.iter().position(|&c| &t.schema.columns[c].name == n) else {
                continue;
            };
            cond.push(format!("{} IS ?{}", quote(n), cond.len() + 1));
            args.push(&vals[ai]);
        }
        let found: Option<i64> = if cond.is_empty() {
            None
        } else {
            let sql = format!(
                "SELECT rowid FROM {} WHERE {} ORDER BY rowid LIMIT 1",
                quote(&t.schema.name),
                cond.join(" AND ")
            );
            self.store
                .conn
                .query_row(&sql, params_from_iter(args), |r| r.get(0))
                .optional()?
        };
        Ok(match found {
            Some(id) => (self.store.describe_row(&t.schema.name, id)?, Some(id)),
            None => (format!("{} ({})", t.schema.name, names.join(", ")), None),
        })
    }
}

impl Store {
    /// A row in words, from its first unique key (a partial one too): its own values, then
    /// what its references name, e.g. "visit 2025-03-04 of property QL-001".
    pub fn describe_row(&self, table: &str, id: i64) -> Result<String> {
        self.describe_depth(table, id, 0)
    }

    fn describe_depth(&self, table: &str, id: i64, depth: usize) -> Result<String> {
        let mut st = self.conn.prepare(
            "SELECT name FROM pragma_index_list(?1) WHERE \"unique\" = 1 ORDER BY origin = 'pk', name",
        )?;
        let indexes: Vec<String> = st
            .query_map([table], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?;
        let mut key = Vec::new();
        for ix in indexes {
            let cols = self.index_columns(&ix)?;
            if !cols.is_empty() && !cols.iter().any(|c| c == super::archive::UUID_COLUMN) {
                key = cols;
                break;
            }
        }
        if key.is_empty() {
            return Ok(format!("{table} row {id}"));
        }
        let fks: HashMap<String, String> = self
            .conn
            .prepare("SELECT \"from\", \"table\" FROM pragma_foreign_key_list(?1)")?
            .query_map([table], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<rusqlite::Result<_>>()?;
        let sql = format!(
            "SELECT {} FROM {} WHERE rowid = ?1",
            key.iter().map(|c| quote(c)).collect::<Vec<_>>().join(", "),
            quote(table)
        );
        let vals: Vec<Value> = self.conn.query_row(&sql, [id], |r| {
            (0..key.len()).map(|c| r.get::<_, Value>(c)).collect()
        })?;
        let mut own = Vec::new();
        let mut of = Vec::new();
        for (c, v) in key.iter().zip(&vals) {
            match (fks.get(c), v) {
                (Some(t), Value::Integer(rid)) if depth < 3 => {
                    of.push(self.describe_depth(t, *rid, depth + 1)?)
                }
                (_, Value::Text(s)) => own.push(s.clone()),
                _ => own.push(show_value(v)),
            }
        }
        let mut out = table.replace('_', " ");
        if !own.is_empty() {
            out.push(' ');
            out.push_str(&own.join(" "));
        }
        match of.len() {
            0 => {}
            1 => {
                out.push_str(" of ");
                out.push_str(&of[0]);
            }
            _ => {
                out.push_str(" (");
                out.push_str(&of.join("; "));
                out.push(')');
            }
        }
        Ok(out)
    }
}
