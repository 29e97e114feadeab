//! Layouts kept by name: the text of each, as the user wrote or `layout guess` proposed it.
//! What a layout means is `import::layout`'s business; here it is only stored.

use rusqlite::{OptionalExtension, params};

use super::Store;
use crate::error::{Error, Result};

/// A stored layout's name, when it was saved, and its text.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StoredLayout {
    pub name: String,
    pub saved_at: String,
    pub definition: String,
}

impl Store {
    /// Keep a layout under `name`, replacing one of that name (in any case); whether one was
    /// replaced.
    pub fn save_layout(&self, name: &str, definition: &str, saved_at: &str) -> Result<bool> {
        let name = name.trim();
        if name.is_empty() {
            return Err(Error::invalid("a layout needs a name"));
        }
        self.atomic(|s| {
            let replaced = s
                .conn
                .execute("DELETE FROM layout WHERE name = ?1", [name])?
                > 0;
            s.conn.execute(
                "INSERT INTO layout (name, definition, saved_at) VALUES (?1, ?2, ?3)",
                params![name, definition, saved_at],
            )?;
            Ok(replaced)
        })
    }

    /// The layout of this name (in any case), if one is kept.
    pub fn layout(&self, name: &str) -> Result<Option<StoredLayout>> {
        Ok(self
            .conn
            .query_row(
                "SELECT name, saved_at, definition FROM layout WHERE name = ?1",
                [name.trim()],
                |r| {
                    Ok(StoredLayout {
                        name: r.get(0)?,
                        saved_at: r.get(1)?,
                        definition: r.get(2)?,
                    })
                },
            )
            .optional()?)
    }

    /// Every kept layout, by name.
    pub fn layouts(&self) -> Result<Vec<StoredLayout>> {
        let mut st = self
            .conn
            .prepare("SELECT name, saved_at, definition FROM layout ORDER BY name")?;
        let rows = st.query_map([], |r| {
            Ok(StoredLayout {
                name: r.get(0)?,
                saved_at: r.get(1)?,
                definition: r.get(2)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<Vec<_>>>()?)
    }

    /// Forget a layout; whether there was one.
    pub fn delete_layout(&self, name: &str) -> Result<bool> {
        Ok(self
            .conn
            .execute("DELETE FROM layout WHERE name = ?1", [name.trim()])?
            > 0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn layouts_are_kept_by_name_in_any_case() {
        let s = Store::open_in_memory().unwrap();
        assert!(!s.save_layout("Northfield", "a = 1", "2025-06-14").unwrap());
        assert!(s.save_layout("northfield", "a = 2", "2025-06-15").unwrap());
        let l = s.layout("NORTHFIELD").unwrap().unwrap();
        assert_eq!(
            (l.name.as_str(), l.definition.as_str()),
            ("northfield", "a = 2")
        );
        assert_eq!(s.layouts().unwrap().len(), 1);
        assert!(s.delete_layout("Northfield").unwrap());
        assert!(s.layout("northfield").unwrap().is_none());
        assert!(s.save_layout("  ", "a = 1", "2025-06-14").is_err());
    }
}
