//! The SQL that bulk import and export need: small lookups and inserts through cached
//! statements, so a file of many thousand rows costs one prepare per statement, not per row.

use std::collections::HashMap;

use chrono::NaiveDate;
use rusqlite::config::DbConfig;
use rusqlite::{OptionalExtension, Row, Statement, params};

use super::record::{RECORD_VALUE_COUNT, RECORD_VALUES, execute_record, readings_at};
use super::{CircuitDetails, Store};
use crate::error::Result;
use crate::model::Readings;

/// The register columns of a circuit `c` that [`details_at`] decodes, in order.
macro_rules! details_cols {
    () => {
        "c.description, c.kind, c.live_mm2, c.cpc_mm2, c.length_m, c.device, c.rcd_ma,
         c.rcd_type, c.rcd_delay, c.insulation, c.wiring_type, c.ref_method, c.points,
         c.breaking_ka, c.afdd, (SELECT r.designation FROM rcd_device r WHERE r.id = c.rcd_device_id)"
    };
}

/// What a register change dated earlier would alter in a circuit's history.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LaterHistory {
    /// A test record at a visit of this date.
    Visit(NaiveDate),
    /// A change of this register field recorded on this date.
    Change { date: NaiveDate, field: String },
}

impl std::fmt::Display for LaterHistory {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LaterHistory::Visit(d) => write!(f, "later visit ({d})"),
            LaterHistory::Change { date, field } => write!(f, "later change of {field} ({date})"),
        }
    }
}

/// A property as import compares it.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestProperty {
    pub id: i64,
    pub address: Option<String>,
}

/// A board as import compares it.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestBoard {
    pub id: i64,
    pub earthing: Option<String>,
}

/// A visit's own fields as import compares them.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestVisit {
    pub id: i64,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
}

/// A recorded change as import needs it to know the register at an earlier date.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestChange {
    pub date: NaiveDate,
    pub field: Option<String>,
    pub old_value: Option<String>,
}

/// See [`Store::ingest_latest_record`].
const LATEST_RECORD_SQL: &str = "SELECT max(v.date) FROM circuit c
     CROSS JOIN board b CROSS JOIN visit v CROSS JOIN test_record t
     WHERE c.id = ?1 AND b.id = c.board_id AND v.property_id = b.property_id
       AND t.visit_id = v.id AND t.circuit_id = c.id";

/// One test record with everything export writes beside it.
#[derive(Debug, Clone, PartialEq)]
pub struct ExportRecord {
    pub property_ref: String,
    pub address: Option<String>,
    pub board: String,
    pub earthing: Option<String>,
    pub circuit_id: i64,
    pub circuit: String,
    pub details: CircuitDetails,
    pub visit_date: NaiveDate,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
    pub ze_ohm: Option<f64>,
    /// The board feeding the record's board, by designation.
    pub fed_from: Option<String>,
    /// Zdb, the sub-main's R1+R2 and the fault current at the board (its Ze is `ze_ohm`).
    pub board_test: crate::model::BoardTest,
    pub report: crate::model::VisitReport,
    pub supply: crate::model::SupplyRecord,
    pub readings: Readings,
}

/// One observation as export writes it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ExportObservation {
    pub property_ref: String,
    pub visit_date: NaiveDate,
    pub board: Option<String>,
    pub circuit: Option<String>,
    pub code: String,
    pub text: String,
}

/// The inserts an import runs for most of its rows, prepared once and held for the whole file:
/// finding a statement in the connection's cache hashes and compares its whole SQL text on
/// every call, which cost an import about a twentieth of its time.
pub struct HeldInserts<'s> {
    record: Statement<'s>,
    circuit: Statement<'s>,
}

impl HeldInserts<'_> {
    /// Write a test record for a circuit that has none at the visit; a stored one is a
    /// constraint error. A plain insert needs no statement journal, unlike a replace.
    pub fn record(&mut self, visit_id: i64, circuit_id: i64, r: &Readings) -> Result<()> {
        execute_record(&mut self.record, visit_id, circuit_id, r)
    }

    /// Add a circuit to a board; returns its id. `rcd_device_id` is the id of the RCD the
    /// details name ([`Store::ingest_rcd_device`]).
    pub fn circuit(
        &mut self,
        board_id: i64,
        number: &str,
        d: &CircuitDetails,
        rcd_device_id: Option<i64>,
    ) -> Result<i64> {
        d.validate()?;
        Ok(self.circuit.insert(params![
            board_id,
            number,
            d.description,
            d.kind.unwrap_or(crate::model::CircuitKind::Radial).as_str(),
            d.live_mm2,
            d.cpc_mm2,
            d.length_m,
            d.device.map(|x| x.to_string()),
            d.rcd_ma,
            d.rcd_type.map(|t| t.as_str()),
            d.rcd_delay.map(|t| t.as_str()),
            d.insulation.map(|i| i.as_str()),
            d.wiring_type.as_deref().map(str::trim),
            d.ref_method.map(|m| m.as_str()),
            d.points,
            d.breaking_ka,
            d.afdd,
            rcd_device_id,
        ])?)
    }
}

impl Store {
    /// Prepare the inserts an import holds for the whole file.
    pub fn ingest_inserts(&self) -> Result<HeldInserts<'_>> {
        Ok(HeldInserts {
            record: self.conn.prepare(concat!(
                "INSERT INTO test_record (visit_id, circuit_id, ",
                record_values!(),
                ") VALUES (",
                record_placeholders!(),
                ")"
            ))?,
            circuit: self.conn.prepare(
                "INSERT INTO circuit (board_id, number, description, kind, live_mm2, cpc_mm2, length_m,
                     device, rcd_ma, rcd_type, rcd_delay, insulation, wiring_type, ref_method,
                     points, breaking_ka, afdd, rcd_device_id)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16,
                     ?17, ?18)",
            )?,
        })
    }

    /// Make room for every statement an import caches, so none is prepared twice, and give
    /// the page cache enough memory that index pages stay in it during a large file.
    pub fn ingest_prepare(&self) -> Result<()> {
        self.conn.set_prepared_statement_cache_capacity(64);
        self.conn.pragma_update(None, "cache_size", -16_384)?;
        // Statement journals of a large file stay in memory rather than in temporary files.
        self.conn.pragma_update(None, "temp_store", "MEMORY")?;
        // Keep each lookup's plan: without this SQLite prepares the visit lookup again on
        // every new date bound to it, which costs more than the lookup itself.
        self.conn
            .set_db_config(DbConfig::SQLITE_DBCONFIG_ENABLE_QPSG, true)?;
        Ok(())
    }

    pub fn ingest_property(&self, reference: &str) -> Result<Option<IngestProperty>> {
        // References match without regard to ASCII case, as everywhere else.
        let Some((id, _)) = self.property_ref_lookup(reference)? else {
            return Ok(None);
        };
        let mut st = self
            .conn
            .prepare_cached("SELECT id, address FROM property WHERE id = ?1")?;
        Ok(st
            .query_row([id], |r| {
                Ok(IngestProperty {
                    id: r.get(0)?,
                    address: r.get(1)?,
                })
            })
            .optional()?)
    }

    pub fn ingest_insert_property(&self, reference: &str, address: Option<&str>) -> Result<i64> {
        let mut st = self
            .conn
            .prepare_cached("INSERT INTO property (ref, address) VALUES (?1, ?2)")?;
        st.execute(params![reference, address])?;
        Ok(self.conn.last_insert_rowid())
    }

    pub fn ingest_set_address(&self, property_id: i64, address: &str) -> Result<()> {
        let mut st = self
            .conn
            .prepare_cached("UPDATE property SET address = ?2 WHERE id = ?1")?;
        st.execute(params![property_id, address])?;
        Ok(())
    }

    pub fn ingest_board(&self, property_id: i64, designation: &str) -> Result<Option<IngestBoard>> {
        let mut st = self.conn.prepare_cached(
            "SELECT id, earthing FROM board WHERE property_id = ?1 AND designation = ?2",
        )?;
        Ok(st
            .query_row(params![property_id, designation], |r| {
                Ok(IngestBoard {
                    id: r.get(0)?,
                    earthing: r.get(1)?,
                })
            })
            .optional()?)
    }

    pub fn ingest_insert_board(
        &self,
        property_id: i64,
        designation: &str,
        earthing: Option<&str>,
    ) -> Result<i64> {
        let mut st = self.conn.prepare_cached(
            "INSERT INTO board (property_id, designation, earthing) VALUES (?1, ?2, ?3)",
        )?;
        st.execute(params![property_id, designation, earthing])?;
        Ok(self.conn.last_insert_rowid())
    }

    pub fn ingest_set_earthing(&self, board_id: i64, earthing: &str) -> Result<()> {
        let mut st = self
            .conn
            .prepare_cached("UPDATE board SET earthing = ?2 WHERE id = ?1")?;
        st.execute(params![board_id, earthing])?;
        Ok(())
    }

    /// The id of the RCD known by `designation` on a board (without regard to case), added on
    /// first sight, and its designation as stored.
    pub fn ingest_rcd_device(&self, board_id: i64, designation: &str) -> Result<(i64, String)> {
        self.rcd_device(board_id, designation)
    }

    /// Every circuit in service on a board, with its number, id, register details and whether
    /// any change is recorded on it: one query for a board's circuits instead of two for each.
    pub fn ingest_board_circuits(
        &self,
        board_id: i64,
    ) -> Result<Vec<(String, i64, CircuitDetails, bool)>> {
        let mut st = self.conn.prepare_cached(concat!(
            "SELECT c.number, c.id, ",
            details_cols!(),
            ", EXISTS (SELECT 1 FROM circuit_change ch WHERE ch.circuit_id = c.id)
             FROM circuit c WHERE c.board_id = ?1 AND c.status = 'in_service' ORDER BY c.id"
        ))?;
        let rows = st.query_map([board_id], |r| {
            Ok((
                r.get(0)?,
                r.get(1)?,
                details_at(r, 2)?,
                r.get(2 + DETAILS_COLS)?,
            ))
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Every change recorded on a circuit, oldest first.
    pub fn ingest_changes(&self, circuit_id: i64) -> Result<Vec<IngestChange>> {
        let mut st = self.conn.prepare_cached(
            "SELECT date, field, old_value FROM circuit_change WHERE circuit_id = ?1 ORDER BY date, id",
        )?;
        let rows = st.query_map([circuit_id], |r| {
            Ok(IngestChange {
                date: r.get(0)?,
                field: r.get(1)?,
                old_value: r.get(2)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// The date of the latest visit with a test record for this circuit.
    ///
    /// Reached through the property's visits (the unique index on visit's property and date)
    /// and the unique (visit, circuit) index on test records, so it costs one probe per visit
    /// of the property whatever the size of the history: test records have no index on the
    /// circuit alone (migration 003), and a lookup by circuit would scan them all. `CROSS
    /// JOIN` keeps SQLite from choosing another order.
    pub fn ingest_latest_record(&self, circuit_id: i64) -> Result<Option<NaiveDate>> {
        let mut st = self.conn.prepare_cached(LATEST_RECORD_SQL)?;
        Ok(st.query_row([circuit_id], |r| r.get(0))?)
    }

    /// The earliest thing after `date` in the circuit's history that a register change dated
    /// `date` would alter: a test record at a later visit, or a later recorded change of one of
    /// `fields` (a visit first when both fall on one day). `None` when the change would be the
    /// latest word.
    pub fn later_history(
        &self,
        circuit_id: i64,
        date: NaiveDate,
        fields: &[&str],
    ) -> Result<Option<LaterHistory>> {
        let mut st = self.conn.prepare_cached(
            "SELECT min(v.date) FROM circuit c
             CROSS JOIN board b CROSS JOIN visit v CROSS JOIN test_record t
             WHERE c.id = ?1 AND b.id = c.board_id AND v.property_id = b.property_id
               AND v.date > ?2 AND t.visit_id = v.id AND t.circuit_id = c.id",
        )?;
        let record: Option<NaiveDate> = st.query_row(params![circuit_id, date], |r| r.get(0))?;
        let change = self
            .ingest_changes(circuit_id)?
            .into_iter()
            .filter_map(|ch| match ch.field {
                Some(f) if ch.date > date && fields.contains(&f.as_str()) => Some((ch.date, f)),
                _ => None,
            })
            .min_by_key(|(d, _)| *d);
        Ok(match (record, change) {
            (Some(v), Some((c, _))) if v <= c => Some(LaterHistory::Visit(v)),
            (_, Some((date, field))) => Some(LaterHistory::Change { date, field }),
            (Some(v), None) => Some(LaterHistory::Visit(v)),
            (None, None) => None,
        })
    }

    pub fn ingest_visit(&self, property_id: i64, date: NaiveDate) -> Result<Option<IngestVisit>> {
        let mut st = self.conn.prepare_cached(
            "SELECT v.id, v.inspector, i.serial, v.ambient_c FROM visit v
             LEFT JOIN instrument i ON i.id = v.instrument_id
             WHERE v.property_id = ?1 AND v.date = ?2",
        )?;
        Ok(st
            .query_row(params![property_id, date], |r| {
                Ok(IngestVisit {
                    id: r.get(0)?,
                    inspector: r.get(1)?,
                    instrument: r.get(2)?,
                    ambient_c: r.get(3)?,
                })
            })
            .optional()?)
    }

    /// The instrument's id, adding it to the register on first sight.
    pub fn ingest_instrument(&self, serial: &str) -> Result<i64> {
        let mut st = self
            .conn
            .prepare_cached("SELECT id FROM instrument WHERE serial = ?1")?;
        if let Some(id) = st.query_row([serial], |r| r.get(0)).optional()? {
            return Ok(id);
        }
        let mut ins = self
            .conn
            .prepare_cached("INSERT INTO instrument (serial) VALUES (?1)")?;
        ins.execute([serial])?;
        Ok(self.conn.last_insert_rowid())
    }

    pub fn ingest_insert_visit(
        &self,
        property_id: i64,
        date: NaiveDate,
        v: &IngestVisit,
        instrument_id: Option<i64>,
    ) -> Result<i64> {
        let mut st = self.conn.prepare_cached(
            "INSERT INTO visit (property_id, date, inspector, instrument_id, ambient_c)
             VALUES (?1, ?2, ?3, ?4, ?5)",
        )?;
        st.execute(params![
            property_id,
            date,
            v.inspector,
            instrument_id,
            v.ambient_c
        ])?;
        Ok(self.conn.last_insert_rowid())
    }

    pub fn ingest_update_visit(&self, v: &IngestVisit, instrument_id: Option<i64>) -> Result<()> {
        let mut st = self.conn.prepare_cached(
            "UPDATE visit SET inspector = ?2, instrument_id = ?3, ambient_c = ?4 WHERE id = ?1",
        )?;
        st.execute(params![v.id, v.inspector, instrument_id, v.ambient_c])?;
        Ok(())
    }

    /// Ze measured at a board at a visit: `None` when no board test is stored.
    pub fn ingest_board_ze(&self, visit_id: i64, board_id: i64) -> Result<Option<Option<f64>>> {
        let mut st = self.conn.prepare_cached(
            "SELECT ze_ohm FROM board_test WHERE visit_id = ?1 AND board_id = ?2",
        )?;
        Ok(st
            .query_row(params![visit_id, board_id], |r| r.get(0))
            .optional()?)
    }

    /// Store Ze at a board; the visit's own Ze (at the origin) is filled when still empty from
    /// a board fed from no other (at a sub-board the figure is its Zdb).
    pub fn ingest_set_board_ze(&self, visit_id: i64, board_id: i64, ze: f64) -> Result<()> {
        let mut st = self.conn.prepare_cached(
            "INSERT INTO board_test (visit_id, board_id, ze_ohm) VALUES (?1, ?2, ?3)
             ON CONFLICT (visit_id, board_id) DO UPDATE SET ze_ohm = excluded.ze_ohm",
        )?;
        st.execute(params![visit_id, board_id, ze])?;
        let mut v = self.conn.prepare_cached(
            "UPDATE visit SET ze_ohm = ?2 WHERE id = ?1 AND ze_ohm IS NULL
                 AND (SELECT fed_from_board_id FROM board WHERE id = ?3) IS NULL",
        )?;
        v.execute(params![visit_id, ze, board_id])?;
        Ok(())
    }

    pub fn ingest_record(&self, visit_id: i64, circuit_id: i64) -> Result<Option<Readings>> {
        let mut st = self.conn.prepare_cached(concat!(
            "SELECT ",
            record_values!(),
            " FROM test_record WHERE visit_id = ?1 AND circuit_id = ?2"
        ))?;
        Ok(st
            .query_row(params![visit_id, circuit_id], |r| readings_at(r, 0))
            .optional()?)
    }

    /// Write a test record, replacing one already stored for the circuit at the visit.
    pub fn ingest_put_record(&self, visit_id: i64, circuit_id: i64, r: &Readings) -> Result<()> {
        self.write_record(
            concat!(
                "INSERT OR REPLACE INTO test_record (visit_id, circuit_id, ",
                record_values!(),
                ") VALUES (",
                record_placeholders!(),
                ")"
            ),
            visit_id,
            circuit_id,
            r,
        )
    }

    /// Whether the visit already holds this exact observation.
    pub fn ingest_has_observation(
        &self,
        visit_id: i64,
        board_id: Option<i64>,
        circuit_id: Option<i64>,
        code: &str,
        text: &str,
    ) -> Result<bool> {
        let mut st = self.conn.prepare_cached(
            "SELECT 1 FROM observation WHERE visit_id = ?1 AND board_id IS ?2 AND circuit_id IS ?3
             AND code = ?4 AND text = ?5",
        )?;
        Ok(st
            .query_row(params![visit_id, board_id, circuit_id, code, text], |_| {
                Ok(())
            })
            .optional()?
            .is_some())
    }

    /// Rows in each table, for a summary or to show that nothing was written.
    pub fn row_counts(&self) -> Result<Vec<(&'static str, i64)>> {
        const TABLES: [&str; 11] = [
            "client",
            "property",
            "board",
            "rcd_device",
            "circuit",
            "instrument",
            "visit",
            "board_test",
            "test_record",
            "circuit_change",
            "observation",
        ];
        let mut out = Vec::new();
        for t in TABLES {
            let n = self
                .conn
                .query_row(&format!("SELECT count(*) FROM {t}"), [], |r| r.get(0))?;
            out.push((t, n));
        }
        Ok(out)
    }

    /// Every change of every circuit, by circuit, oldest first, for export.
    pub fn export_changes(&self) -> Result<HashMap<i64, Vec<IngestChange>>> {
        let mut st = self.conn.prepare(
            "SELECT circuit_id, date, field, old_value FROM circuit_change ORDER BY circuit_id, date, id",
        )?;
        let mut out: HashMap<i64, Vec<IngestChange>> = HashMap::new();
        let mut rows = st.query([])?;
        while let Some(r) = rows.next()? {
            out.entry(r.get(0)?).or_default().push(IngestChange {
                date: r.get(1)?,
                field: r.get(2)?,
                old_value: r.get(3)?,
            });
        }
        Ok(out)
    }

    /// Call `f` with every test record, optionally of one property, ordered by property,
    /// visit date, board and circuit. Rows are streamed, not collected.
    pub fn export_records(
        &self,
        property_ref: Option<&str>,
        mut f: impl FnMut(ExportRecord) -> Result<()>,
    ) -> Result<()> {
        // The reference as stored, whatever its case as given.
        let canonical = property_ref.map(|r| self.property(r)).transpose()?;
        let property_ref = canonical.as_ref().map(|p| p.reference.as_str());
        let sql = format!(
            "SELECT p.ref, p.address, b.designation, b.earthing, c.id, c.number,
                    {}, v.date, v.inspector, i.serial, v.ambient_c, bt.ze_ohm,
                    {},
                    (SELECT f.designation FROM board f WHERE f.id = b.fed_from_board_id),
                    bt.zdb_ohm, bt.submain_r1r2_ohm, bt.pfc_ka, v.report_ref, v.outcome,
                    v.interval_months, v.extent, v.agreed_limitations, v.u0_v, v.ra_ohm,
                    v.bonding_csa_mm2, v.bonding_water, v.bonding_gas, v.bonding_other
             FROM test_record t
             JOIN visit v ON v.id = t.visit_id
             JOIN circuit c ON c.id = t.circuit_id
             JOIN board b ON b.id = c.board_id
             JOIN property p ON p.id = b.property_id
             LEFT JOIN instrument i ON i.id = v.instrument_id
             LEFT JOIN board_test bt ON bt.visit_id = v.id AND bt.board_id = b.id
             WHERE ?1 IS NULL OR p.ref = ?1
             ORDER BY p.ref, v.date, b.designation, CAST(c.number AS INTEGER), c.number, c.id",
            details_cols!(),
            RECORD_VALUES
                .split(',')
                .map(|c| format!("t.{}", c.trim()))
                .collect::<Vec<_>>()
                .join(", ")
        );
        // The board and visit columns that follow the test record's values.
        const AFTER: usize = 11 + DETAILS_COLS + RECORD_VALUE_COUNT;
        let mut st = self.conn.prepare(&sql)?;
        let mut rows = st.query([property_ref])?;
        while let Some(r) = rows.next()? {
            let rec = ExportRecord {
                property_ref: r.get(0)?,
                address: r.get(1)?,
                board: r.get(2)?,
                earthing: r.get(3)?,
                circuit_id: r.get(4)?,
                circuit: r.get(5)?,
                details: details_at(r, 6)?,
                visit_date: r.get(6 + DETAILS_COLS)?,
                inspector: r.get(7 + DETAILS_COLS)?,
                instrument: r.get(8 + DETAILS_COLS)?,
                ambient_c: r.get(9 + DETAILS_COLS)?,
                ze_ohm: r.get(10 + DETAILS_COLS)?,
                readings: readings_at(r, 11 + DETAILS_COLS)?,
                fed_from: r.get(AFTER)?,
                board_test: crate::model::BoardTest {
                    zdb_ohm: r.get(AFTER + 1)?,
                    submain_r1r2_ohm: r.get(AFTER + 2)?,
                    pfc_ka: r.get(AFTER + 3)?,
                    ..Default::default()
                },
                report: crate::model::VisitReport {
                    report_ref: r.get(AFTER + 4)?,
                    outcome: r.get(AFTER + 5)?,
                    interval_months: r.get(AFTER + 6)?,
                    extent: r.get(AFTER + 7)?,
                    limitations: r.get(AFTER + 8)?,
                },
                supply: crate::model::SupplyRecord {
                    u0_v: r.get(AFTER + 9)?,
                    ra_ohm: r.get(AFTER + 10)?,
                    bonding_csa_mm2: r.get(AFTER + 11)?,
                    bonding_water: bonding_text(r.get(AFTER + 12)?),
                    bonding_gas: bonding_text(r.get(AFTER + 13)?),
                    bonding_other: bonding_text(r.get(AFTER + 14)?),
                },
            };
            f(rec)?;
        }
        Ok(())
    }

    /// Every observation, optionally of one property, in the order recorded per visit.
    pub fn export_observations(
        &self,
        property_ref: Option<&str>,
    ) -> Result<Vec<ExportObservation>> {
        let mut st = self.conn.prepare(
            "SELECT p.ref, v.date, b.designation, c.number, o.code, o.text
             FROM observation o JOIN visit v ON v.id = o.visit_id
             JOIN property p ON p.id = v.property_id
             LEFT JOIN board b ON b.id = o.board_id
             LEFT JOIN circuit c ON c.id = o.circuit_id
             WHERE ?1 IS NULL OR p.ref = ?1
             ORDER BY p.ref, v.date, o.id",
        )?;
        let rows = st.query_map([property_ref], |r| {
            Ok(ExportObservation {
                property_ref: r.get(0)?,
                visit_date: r.get(1)?,
                board: r.get(2)?,
                circuit: r.get(3)?,
                code: r.get(4)?,
                text: r.get(5)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }
}

/// A main bond's recorded state, as stored; a value this build does not know reads as none.
fn bonding_text(t: Option<String>) -> Option<crate::model::Bonding> {
    t.and_then(|t| t.parse().ok())
}

/// How many columns [`details_cols`] names.
const DETAILS_COLS: usize = 16;

/// Decode the [`details_cols`] starting at `o`. A type 'S' from before migration 008 is read
/// as the delay.
fn details_at(r: &Row, o: usize) -> rusqlite::Result<CircuitDetails> {
    let kind: String = r.get(o + 1)?;
    let device: Option<String> = r.get(o + 5)?;
    let marking = r
        .get::<_, Option<String>>(o + 7)?
        .and_then(|t| t.parse::<crate::model::RcdMarking>().ok())
        .unwrap_or_default();
    let delay: Option<String> = r.get(o + 8)?;
    let parsed = |i: usize| -> rusqlite::Result<Option<String>> { r.get(o + i) };
    Ok(CircuitDetails {
        rcd_type: marking.waveform,
        rcd_delay: delay.and_then(|t| t.parse().ok()).or(marking.delay),
        description: r.get(o)?,
        kind: kind.parse().ok(),
        live_mm2: r.get(o + 2)?,
        cpc_mm2: r.get(o + 3)?,
        length_m: r.get(o + 4)?,
        device: device.and_then(|d| d.parse().ok()),
        rcd_ma: r.get(o + 6)?,
        insulation: parsed(9)?.and_then(|t| t.parse().ok()),
        disconnect_s: None,
        wiring_type: r.get(o + 10)?,
        ref_method: parsed(11)?.and_then(|t| t.parse().ok()),
        points: r.get(o + 12)?,
        breaking_ka: r.get(o + 13)?,
        afdd: r.get::<_, Option<i64>>(o + 14)?.map(|v| v != 0),
        rcd_id: r.get(o + 15)?,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::store::Store;

    /// Every step of the circuit's-latest-record lookup is a search through an index: a scan
    /// of test records would make each lookup cost as much as the whole history.
    #[test]
    fn the_latest_record_lookup_searches_indexes_only() {
        let s = Store::open_in_memory().unwrap();
        let mut st = s
            .conn
            .prepare(&format!("EXPLAIN QUERY PLAN {LATEST_RECORD_SQL}"))
            .unwrap();
        let plan: Vec<String> = st
            .query_map([1], |r| r.get(3))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        // SQLite calls a walk of a whole index without a bound value a SEARCH too, as it did
        // for the lookup by circuit alone; a bounded step names its bound column as `col=?`.
        assert_eq!(plan.len(), 4, "{plan:?}");
        for step in &plan {
            assert!(
                step.starts_with("SEARCH") && step.contains("=?"),
                "{plan:?}"
            );
        }
        assert!(
            plan.iter()
                .any(|p| p.starts_with("SEARCH t USING")
                    && p.contains("visit_id=? AND circuit_id=?")),
            "{plan:?}"
        );
    }

    #[test]
    fn the_latest_record_is_the_latest_visit_holding_one_for_the_circuit() {
        let s = Store::open_in_memory().unwrap();
        let p = s.ingest_insert_property("P-1", None).unwrap();
        let b = s.ingest_insert_board(p, "DB1", None).unwrap();
        let mut ins = s.ingest_inserts().unwrap();
        let c1 = ins
            .circuit(b, "1", &CircuitDetails::default(), None)
            .unwrap();
        let c2 = ins
            .circuit(b, "2", &CircuitDetails::default(), None)
            .unwrap();
        let day = |d: &str| d.parse::<NaiveDate>().unwrap();
        let visit = |d: &str| {
            let v = IngestVisit {
                id: 0,
                inspector: None,
                instrument: None,
                ambient_c: None,
            };
            s.ingest_insert_visit(p, day(d), &v, None).unwrap()
        };
        let (v1, v2) = (visit("2020-01-02"), visit("2023-04-05"));
        assert_eq!(s.ingest_latest_record(c1).unwrap(), None);
        ins.record(v1, c1, &Readings::default()).unwrap();
        ins.record(v2, c2, &Readings::default()).unwrap();
        assert_eq!(s.ingest_latest_record(c1).unwrap(), Some(day("2020-01-02")));
        assert_eq!(s.ingest_latest_record(c2).unwrap(), Some(day("2023-04-05")));
    }
}
