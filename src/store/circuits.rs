//! The register: circuits, their changes, instruments and the list of visits.

use super::*;

impl Store {
    // ----- circuits -----

    pub(super) const CIRCUIT_COLS: &'static str =
        "id, board_id, number, description, kind, live_mm2, cpc_mm2,
        length_m, device, rcd_ma, rcd_type, insulation, disconnect_s, status, replaces_circuit_id,
        rcd_delay, wiring_type, ref_method, points, breaking_ka, afdd,
        (SELECT r.designation FROM rcd_device r WHERE r.id = rcd_device_id)";

    /// How many columns [`Self::CIRCUIT_COLS`] names.
    pub(super) const CIRCUIT_COL_COUNT: usize = 22;

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
            wiring_type: r.get(16)?,
            ref_method: text(17)?.and_then(|t| t.parse().ok()),
            points: r.get(18)?,
            breaking_ka: r.get(19)?,
            afdd: r.get::<_, Option<i64>>(20)?.map(|v| v != 0),
            rcd_id: r.get(21)?,
        })
    }

    /// The RCD known by `designation` on a board (without regard to case), added on first
    /// sight: its id and its designation as stored.
    pub(super) fn rcd_device(&self, board_id: i64, designation: &str) -> Result<(i64, String)> {
        let designation = designation.trim();
        let mut find = self.conn.prepare_cached(
            "SELECT id, designation FROM rcd_device WHERE board_id = ?1 AND designation = ?2",
        )?;
        if let Some(found) = find
            .query_row(params![board_id, designation], |r| {
                Ok((r.get(0)?, r.get(1)?))
            })
            .optional()?
        {
            return Ok(found);
        }
        let mut ins = self
            .conn
            .prepare_cached("INSERT INTO rcd_device (board_id, designation) VALUES (?1, ?2)")?;
        ins.execute(params![board_id, designation])?;
        Ok((self.conn.last_insert_rowid(), designation.to_string()))
    }

    /// The id of the RCD a circuit's details name on a board, added on first sight.
    pub(super) fn rcd_device_id(&self, board_id: i64, d: &CircuitDetails) -> Result<Option<i64>> {
        d.rcd_id
            .as_deref()
            .map(|r| self.rcd_device(board_id, r).map(|(id, _)| id))
            .transpose()
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
        let rcd_device_id = self.rcd_device_id(board.id, d)?;
        self.conn.execute(
            "INSERT INTO circuit (board_id, number, description, kind, live_mm2, cpc_mm2, length_m,
                 device, rcd_ma, rcd_type, insulation, disconnect_s, replaces_circuit_id, rcd_delay,
                 wiring_type, ref_method, points, breaking_ka, afdd, rcd_device_id)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17,
                 ?18, ?19, ?20)",
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
                d.wiring_type.as_deref().map(str::trim),
                d.ref_method.map(|m| m.as_str()),
                d.points,
                d.breaking_ka,
                d.afdd,
                rcd_device_id,
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
            let wiring = new.wiring_type.as_deref().map(|w| w.trim().to_string());
            diff(
                "wiring_type",
                "wiring_type",
                old.wiring_type.clone(),
                wiring.clone(),
                text(wiring),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "ref_method",
                "ref_method",
                old.ref_method.map(|m| m.as_str().into()),
                new.ref_method.map(|m| m.as_str().into()),
                text(new.ref_method.map(|m| m.as_str().into())),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "points",
                "points",
                old.points.map(|n| n.to_string()),
                new.points.map(|n| n.to_string()),
                new.points
                    .map(|n| Value::Integer(n.into()))
                    .unwrap_or(Value::Null),
                ChangeKind::RegisterCorrected,
            )?;
            diff(
                "breaking_ka",
                "breaking_ka",
                num(old.breaking_ka),
                num(new.breaking_ka),
                real(new.breaking_ka),
                ChangeKind::DeviceChanged,
            )?;
            diff(
                "afdd",
                "afdd",
                old.afdd.map(|a| yes_no(a).into()),
                new.afdd.map(|a| yes_no(a).into()),
                new.afdd
                    .map(|a| Value::Integer(a.into()))
                    .unwrap_or(Value::Null),
                ChangeKind::DeviceChanged,
            )?;
            // The RCD by its identifier as stored, so that rcd1 names the board's RCD1 and is
            // no change.
            let rcd = match new.rcd_id.as_deref() {
                Some(r) => Some(s.rcd_device(old.board_id, r)?),
                None => None,
            };
            diff(
                "rcd_id",
                "rcd_device_id",
                old.rcd_id.clone(),
                rcd.as_ref().map(|(_, d)| d.clone()),
                rcd.as_ref()
                    .map(|(id, _)| Value::Integer(*id))
                    .unwrap_or(Value::Null),
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
                wiring_type: details.wiring_type.clone().or(old.wiring_type.clone()),
                ref_method: details.ref_method.or(old.ref_method),
                points: details.points.or(old.points),
                breaking_ka: details.breaking_ka.or(old.breaking_ka),
                afdd: details.afdd.or(old.afdd),
                // An RCD belongs to its board: carried over only when the board stays.
                rcd_id: details.rcd_id.clone().or_else(|| {
                    (new_board.id == old.board_id)
                        .then(|| old.rcd_id.clone())
                        .flatten()
                }),
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
                    (SELECT count(*) FROM observation o WHERE o.visit_id = v.id),
                    v.report_ref, v.outcome, v.interval_months
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
                report_ref: r.get(9)?,
                outcome: r.get(10)?,
                interval_months: r.get(11)?,
            })
        })?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }
}

/// A yes/no register value as a change records it.
pub(crate) fn yes_no(v: bool) -> &'static str {
    if v { "yes" } else { "no" }
}
