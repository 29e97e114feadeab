//! The register: settings, clients, properties and boards.

use super::*;

impl Store {
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

    /// The client's id, creating the client on first sight. A new name that differs from a
    /// stored one only in case (`acme` when `Acme` is stored) is refused with the stored
    /// spelling, never merged into it nor stored beside it: the exact spelling is needed.
    pub fn ensure_client(&self, name: &str) -> Result<i64> {
        let name = name.trim();
        if name.is_empty() {
            return Err(Error::invalid("client name is empty"));
        }
        let clients = self
            .conn
            .prepare("SELECT id, name FROM client ORDER BY name")?
            .query_map([], |r| Ok((r.get::<_, i64>(0)?, r.get::<_, String>(1)?)))?
            .collect::<rusqlite::Result<Vec<_>>>()?;
        if let Some((id, _)) = clients.iter().find(|(_, n)| n == name) {
            return Ok(*id);
        }
        let folded = name.to_lowercase();
        let alike: Vec<String> = clients
            .iter()
            .filter(|(_, n)| n.to_lowercase() == folded)
            .map(|(_, n)| format!("{n:?}"))
            .collect();
        if !alike.is_empty() {
            return Err(Error::invalid(format!(
                "client {name:?} differs from the stored {} only in case: give {} exactly to use that client, or a name that differs in more than case for a new one",
                alike.join(" and "),
                if alike.len() == 1 {
                    "it"
                } else {
                    "one of them"
                }
            )));
        }
        self.conn
            .execute("INSERT INTO client (name) VALUES (?1)", [name])?;
        Ok(self.conn.last_insert_rowid())
    }

    /// The client called `name` without regard to ASCII case (an exact match wins over a
    /// client differing only in case), as stored, with its properties' ids in reference order.
    /// An unknown name is an error listing the known clients, or saying there are none.
    pub fn client_properties(&self, name: &str) -> Result<(String, Vec<i64>)> {
        let name = name.trim();
        let mut st = self
            .conn
            .prepare("SELECT id, name FROM client WHERE name = ?1 COLLATE NOCASE ORDER BY name")?;
        let found = st
            .query_map([name], |r| {
                Ok((r.get::<_, i64>(0)?, r.get::<_, String>(1)?))
            })?
            .collect::<rusqlite::Result<Vec<_>>>()?;
        let (id, stored) = match found.iter().find(|(_, n)| n == name) {
            Some(exact) => exact.clone(),
            None if found.len() == 1 => found[0].clone(),
            None if found.is_empty() => {
                let known = self
                    .conn
                    .prepare("SELECT name FROM client ORDER BY name")?
                    .query_map([], |r| r.get::<_, String>(0))?
                    .collect::<rusqlite::Result<Vec<_>>>()?;
                let hint = if known.is_empty() {
                    "the register has no clients yet; give a property one with `ohmtrail property add REF --client NAME`".to_string()
                } else {
                    let names: Vec<String> = known.iter().map(|n| format!("{n:?}")).collect();
                    format!("known clients are {}", names.join(", "))
                };
                return Err(Error::not_found_hint("client", name, hint));
            }
            None => {
                let names: Vec<String> = found.iter().map(|(_, n)| format!("{n:?}")).collect();
                return Err(Error::invalid(format!(
                    "client {name:?} matches {}, which differ only in case: give the name exactly",
                    names.join(" and ")
                )));
            }
        };
        let ids = self
            .conn
            .prepare("SELECT id FROM property WHERE client_id = ?1 ORDER BY ref")?
            .query_map([id], |r| r.get::<_, i64>(0))?
            .collect::<rusqlite::Result<Vec<_>>>()?;
        Ok((stored, ids))
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
                "INSERT INTO property (ref, address, client_id, interval_months, notes, uuid)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                params![reference, p.address, client_id, interval, p.notes, new_uuid()],
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
                "INSERT INTO board (property_id, designation, location, fed_from_board_id, earthing, uuid)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                params![
                    property.id,
                    designation,
                    b.location,
                    fed_from,
                    b.earthing.map(|e| e.as_str()),
                    new_uuid()
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
}
