//! The database's own description of itself, for the archive: every table and column read
//! through SQLite's schema introspection (`pragma_table_info`, `pragma_foreign_key_list`,
//! `pragma_index_list`), so a column or table added by a later migration is carried without
//! anyone listing it, and rows streamed with their references as the referenced row's
//! identifier. The file format itself is `crate::archive`'s; the merge is in `merge.rs`.

use std::collections::{BTreeMap, HashMap};

use rusqlite::types::{Value, ValueRef};

use super::Store;
use crate::error::{Error, Result};

/// Tables that hold the state of this machine rather than history: none are carried. Empty
/// today: a visit being recorded on site (`state = 'pending'`) is a row of `visit`, and the
/// archive refuses to be written while one is open instead (see [`Store::archive_pending`]).
pub const MACHINE_STATE_TABLES: &[&str] = &[];

/// The column that holds a row's stable identifier (migration 011).
pub const UUID_COLUMN: &str = "uuid";

/// What a column of a carried table holds in the archive.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ColumnKind {
    /// A plain value, as stored.
    Value,
    /// The row's own identifier (the `uuid` column).
    Uuid,
    /// A reference to a row of `table`: that row's identifier when the table has them, else
    /// its position among that table's rows in the archive, counting from 0.
    Ref { table: String },
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ColumnSchema {
    pub name: String,
    pub kind: ColumnKind,
    /// The declared type (INTEGER, REAL, TEXT, BLOB, ANY), upper case.
    pub decl: String,
}

/// How a row of a table is recognised in another database.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Identity {
    /// By its `uuid` column.
    Uuid,
    /// By these columns (indexes into `columns`): a primary key that is not a row number, or
    /// the table's first unique constraint.
    Key(Vec<usize>),
    /// By all its carried values: the table has no key of its own (events, observations).
    Content,
}

/// A carried table: every column but the row number (`INTEGER PRIMARY KEY`), which is this
/// database's own and is given afresh where the row lands.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TableSchema {
    pub name: String,
    pub columns: Vec<ColumnSchema>,
    pub identity: Identity,
}

impl TableSchema {
    pub fn has_uuid(&self) -> bool {
        self.identity == Identity::Uuid
    }

    pub fn column(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c.name == name)
    }
}

/// Quote an identifier for SQL (names come from the schema, never from the archive, but are
/// quoted all the same).
pub(super) fn quote(name: &str) -> String {
    format!("\"{}\"", name.replace('"', "\"\""))
}

/// A value copied out of a row.
pub fn owned(v: ValueRef) -> Value {
    match v {
        ValueRef::Null => Value::Null,
        ValueRef::Integer(i) => Value::Integer(i),
        ValueRef::Real(r) => Value::Real(r),
        ValueRef::Text(t) => Value::Text(String::from_utf8_lossy(t).into_owned()),
        ValueRef::Blob(b) => Value::Blob(b.to_vec()),
    }
}

impl Store {
    /// Every table of the database except SQLite's own and [`MACHINE_STATE_TABLES`], with
    /// its columns and identity, referenced tables before the tables that refer to them.
    pub fn archive_schema(&self) -> Result<Vec<TableSchema>> {
        let names: Vec<String> = self
            .conn
            .prepare(
                "SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%'
                 ORDER BY name",
            )?
            .query_map([], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?;
        let mut tables = BTreeMap::new();
        for name in names {
            if MACHINE_STATE_TABLES.contains(&name.as_str()) {
                continue;
            }
            let t = self.table_schema(&name)?;
            tables.insert(name, t);
        }
        for t in tables.values() {
            for c in &t.columns {
                if let ColumnKind::Ref { table } = &c.kind
                    && !tables.contains_key(table)
                {
                    return Err(Error::invalid(format!(
                        "{}.{} refers to table {table}, which the archive does not carry",
                        t.name, c.name
                    )));
                }
            }
        }
        // Referenced tables first (a table's references to itself aside); ties by name.
        let mut order = Vec::new();
        let mut placed = std::collections::BTreeSet::new();
        while placed.len() < tables.len() {
            let before = placed.len();
            for (name, t) in &tables {
                if placed.contains(name) {
                    continue;
                }
                let ready = t.columns.iter().all(|c| match &c.kind {
                    ColumnKind::Ref { table } => table == name || placed.contains(table),
                    _ => true,
                });
                if ready {
                    placed.insert(name.clone());
                    order.push(t.clone());
                }
            }
            if placed.len() == before {
                return Err(Error::invalid(
                    "the tables refer to each other in a cycle: the archive cannot order them",
                ));
            }
        }
        Ok(order)
    }

    fn table_schema(&self, table: &str) -> Result<TableSchema> {
        let mut st = self
            .conn
            .prepare("SELECT name, upper(type), pk FROM pragma_table_info(?1) ORDER BY cid")?;
        let cols: Vec<(String, String, i64)> = st
            .query_map([table], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
            .collect::<rusqlite::Result<_>>()?;
        let pk: Vec<&(String, String, i64)> = cols.iter().filter(|c| c.2 > 0).collect();
        let row_number = match pk.as_slice() {
            [only] if only.1 == "INTEGER" => Some(only.0.clone()),
            _ => None,
        };
        let mut fks: HashMap<String, String> = HashMap::new();
        let mut st = self
            .conn
            .prepare("SELECT id, \"from\", \"table\", \"to\" FROM pragma_foreign_key_list(?1)")?;
        let rows: Vec<(i64, String, String, Option<String>)> = st
            .query_map([table], |r| {
                Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?))
            })?
            .collect::<rusqlite::Result<_>>()?;
        for (id, from, to_table, to_col) in &rows {
            if rows.iter().filter(|r| r.0 == *id).count() > 1 {
                return Err(Error::invalid(format!(
                    "{table}.{from}: a foreign key of several columns cannot be carried"
                )));
            }
            let target_pk = self.row_number_column(to_table)?;
            if to_col.is_some() && to_col.as_deref() != target_pk.as_deref() {
                return Err(Error::invalid(format!(
                    "{table}.{from} refers to {to_table}.{} rather than its row number: not carried",
                    to_col.as_deref().unwrap_or("?")
                )));
            }
            fks.insert(from.clone(), to_table.clone());
        }
        let columns: Vec<ColumnSchema> = cols
            .iter()
            .filter(|c| Some(&c.0) != row_number.as_ref())
            .map(|(name, decl, _)| ColumnSchema {
                name: name.clone(),
                kind: if name == UUID_COLUMN {
                    ColumnKind::Uuid
                } else if let Some(t) = fks.get(name) {
                    ColumnKind::Ref { table: t.clone() }
                } else {
                    ColumnKind::Value
                },
                decl: decl.clone(),
            })
            .collect();
        let index_of = |names: &[String]| -> Option<Vec<usize>> {
            names
                .iter()
                .map(|n| columns.iter().position(|c| &c.name == n))
                .collect()
        };
        let identity = if columns.iter().any(|c| c.kind == ColumnKind::Uuid) {
            Identity::Uuid
        } else if row_number.is_none() && !pk.is_empty() {
            let mut keyed: Vec<&(String, String, i64)> = pk.clone();
            keyed.sort_by_key(|c| c.2);
            let names: Vec<String> = keyed.iter().map(|c| c.0.clone()).collect();
            Identity::Key(index_of(&names).unwrap_or_default())
        } else {
            match self
                .unique_keys(table)?
                .into_iter()
                .find_map(|k| index_of(&k))
            {
                Some(k) => Identity::Key(k),
                None => Identity::Content,
            }
        };
        Ok(TableSchema {
            name: table.to_string(),
            columns,
            identity,
        })
    }

    /// The table's `INTEGER PRIMARY KEY` column (its row number), if it has one.
    fn row_number_column(&self, table: &str) -> Result<Option<String>> {
        let mut st = self
            .conn
            .prepare("SELECT name, upper(type) FROM pragma_table_info(?1) WHERE pk > 0")?;
        let pk: Vec<(String, String)> = st
            .query_map([table], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<rusqlite::Result<_>>()?;
        Ok(match pk.as_slice() {
            [(name, t)] if t == "INTEGER" => Some(name.clone()),
            _ => None,
        })
    }

    /// The columns of each full (not partial) unique index of a table, oldest first.
    pub(super) fn unique_keys(&self, table: &str) -> Result<Vec<Vec<String>>> {
        let mut st = self.conn.prepare(
            "SELECT name FROM pragma_index_list(?1) WHERE \"unique\" = 1 AND partial = 0
             ORDER BY name",
        )?;
        let indexes: Vec<String> = st
            .query_map([table], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?;
        let mut out = Vec::new();
        for index in indexes {
            let cols = self.index_columns(&index)?;
            if !cols.is_empty() && !cols.iter().any(|c| c == UUID_COLUMN) {
                out.push(cols);
            }
        }
        Ok(out)
    }

    /// The columns of an index, in order; empty when one of them is an expression.
    pub(super) fn index_columns(&self, index: &str) -> Result<Vec<String>> {
        let mut st = self
            .conn
            .prepare("SELECT name FROM pragma_index_info(?1) ORDER BY seqno")?;
        let cols: Vec<Option<String>> = st
            .query_map([index], |r| r.get(0))?
            .collect::<rusqlite::Result<_>>()?;
        Ok(cols
            .into_iter()
            .collect::<Option<Vec<_>>>()
            .unwrap_or_default())
    }

    /// Visits being recorded on site, as (property reference, date): the archive is not
    /// written while one is open, since changes made at it are already in the register.
    pub fn archive_pending(&self) -> Result<Vec<(String, String)>> {
        let mut st = self.conn.prepare(
            "SELECT p.ref, v.date FROM visit v JOIN property p ON p.id = v.property_id
             WHERE v.state = 'pending' ORDER BY p.ref, v.date",
        )?;
        let rows = st.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Call `f` with the row number and the carried values of every row of `table`, in the
    /// order of the row numbers (so a board comes after the board feeding it and a circuit
    /// after the one it replaced, as they were added).
    pub fn archive_scan(
        &self,
        table: &TableSchema,
        mut f: impl FnMut(i64, &[ValueRef]) -> Result<()>,
    ) -> Result<()> {
        let cols: Vec<String> = table.columns.iter().map(|c| quote(&c.name)).collect();
        let sql = format!(
            "SELECT rowid, {} FROM {} ORDER BY rowid",
            if cols.is_empty() {
                "NULL".to_string()
            } else {
                cols.join(", ")
            },
            quote(&table.name)
        );
        let mut st = self.conn.prepare(&sql)?;
        let mut rows = st.query([])?;
        let n = table.columns.len();
        while let Some(r) = rows.next()? {
            let buf: Vec<ValueRef> = (1..=n)
                .map(|i| r.get_ref(i))
                .collect::<rusqlite::Result<_>>()?;
            f(r.get(0)?, &buf)?;
        }
        Ok(())
    }

    /// Every row number of a table in order, with the row's identifier when the table has
    /// them: how the archive writes references to its rows (a row may refer to a later row
    /// of its own table, so these are known before the table is written).
    pub fn archive_ids(&self, table: &TableSchema) -> Result<Vec<(i64, Option<[u8; 16]>)>> {
        let sql = if table.has_uuid() {
            format!(
                "SELECT rowid, {UUID_COLUMN} FROM {} ORDER BY rowid",
                quote(&table.name)
            )
        } else {
            format!(
                "SELECT rowid, NULL FROM {} ORDER BY rowid",
                quote(&table.name)
            )
        };
        let mut st = self.conn.prepare(&sql)?;
        let rows = st.query_map([], |r| {
            let u: Option<Vec<u8>> = r.get(1)?;
            Ok((
                r.get(0)?,
                u.and_then(|u| <[u8; 16]>::try_from(u.as_slice()).ok()),
            ))
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Every row of a table as (row number, carried values), in row-number order: for tests
    /// and for comparing databases.
    pub fn archive_rows(&self, table: &TableSchema) -> Result<Vec<(i64, Vec<Value>)>> {
        let mut out = Vec::new();
        self.archive_scan(table, |id, vals| {
            out.push((id, vals.iter().map(|v| owned(*v)).collect()));
            Ok(())
        })?;
        Ok(out)
    }
}
