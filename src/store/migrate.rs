//! Schema migrations: the numbered files in `schema/`, applied in order, tracked with
//! `PRAGMA user_version`. Append-only: a released migration is never edited.

use rusqlite::Connection;

/// Every migration, in order. Migration `i` (1-based) brings the schema to version `i`.
pub const MIGRATIONS: &[(&str, &str)] = &[
    ("001_init", include_str!("../../schema/001_init.sql")),
    (
        "002_circuit_board_index",
        include_str!("../../schema/002_circuit_board_index.sql"),
    ),
    (
        "003_drop_record_circuit_index",
        include_str!("../../schema/003_drop_record_circuit_index.sql"),
    ),
];

/// The schema version this build writes and understands.
pub fn latest_version() -> i64 {
    MIGRATIONS.len() as i64
}

pub fn user_version(conn: &Connection) -> rusqlite::Result<i64> {
    conn.query_row("PRAGMA user_version", [], |r| r.get(0))
}

/// Apply every migration newer than the database's version, each in its own transaction
/// together with its version stamp, so a crash leaves the database at a whole version.
/// The caller has already refused databases newer than [`latest_version`].
pub fn apply(conn: &mut Connection) -> rusqlite::Result<Vec<&'static str>> {
    let current = user_version(conn)?;
    let mut applied = Vec::new();
    for (i, (name, sql)) in MIGRATIONS.iter().enumerate() {
        let version = i as i64 + 1;
        if version <= current {
            continue;
        }
        let tx = conn.transaction_with_behavior(rusqlite::TransactionBehavior::Immediate)?;
        // Another process may have migrated while we waited for the write lock.
        if user_version(&tx)? >= version {
            continue;
        }
        tx.execute_batch(sql)?;
        tx.pragma_update(None, "user_version", version)?;
        tx.commit()?;
        applied.push(*name);
    }
    Ok(applied)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_to_latest_and_again_is_a_no_op() {
        let mut conn = Connection::open_in_memory().unwrap();
        let applied = apply(&mut conn).unwrap();
        assert_eq!(applied.len(), MIGRATIONS.len());
        assert_eq!(user_version(&conn).unwrap(), latest_version());
        assert!(apply(&mut conn).unwrap().is_empty());
    }

    #[test]
    fn migration_names_are_numbered_in_order() {
        for (i, (name, _)) in MIGRATIONS.iter().enumerate() {
            assert!(name.starts_with(&format!("{:03}_", i + 1)), "{name}");
        }
    }
}
