//! Applying a parsed row to the history: what it means for the property, board, circuit,
//! visit and test record, and what to ask the store to write.

use foldhash::{HashMap, HashMapExt};

use super::fault::{Effect, Fault, Faults, RowResult, conflict, fault, in_file_conflict, shown};
use super::reading::{copy_reading, same_reading};
use super::register::{
    REGISTER, apply_text, register_agrees, register_at, register_texts, row_register_details,
};
use super::state::{BoardState, Cache, CircuitState, ambiguous_circuit, stored_board, visit_state};
use super::{
    Column, Header, ImportOptions, READING_COLUMNS, RegisterChange, VisitRow, format_number,
    reading_text,
};
use crate::error::Error;
use crate::store::{CircuitDetails, IngestChange, IngestVisit, Store};

pub(super) struct Importer<'a> {
    pub(super) store: &'a Store,
    pub(super) inserts: crate::store::HeldInserts<'a>,
    pub(super) opts: &'a ImportOptions,
    pub(super) header: &'a Header,
    pub(super) cache: Cache,
}

impl Importer<'_> {
    pub(super) fn apply_visit(&mut self, row: &VisitRow, line: u64) -> RowResult<Effect> {
        let mut eff = Effect::default();
        // The visit's own fields, resolved before borrowing the property's state.
        let instrument_id = match &row.instrument {
            Some(serial) => Some(self.cache.instrument(self.store, serial)?),
            None => None,
        };
        let wanted = IngestVisit {
            id: 0,
            inspector: row.inspector.clone(),
            instrument: row.instrument.clone(),
            ambient_c: row.ambient_c,
        };
        self.property(row, &mut eff)?;
        let board_id = self.board(row, &mut eff)?;
        let circuit = self.circuit(row, board_id, &mut eff)?;
        let visit_id = self.visit(row, &wanted, instrument_id, &mut eff)?;
        // The board's feed first, so a board fed from another does not give the visit its Ze.
        self.schedule(row, visit_id, board_id, &mut eff)?;
        self.board_ze(row, visit_id, board_id, &mut eff)?;
        self.register_changes(row, line, &circuit, visit_id, &mut eff)?;
        self.test_record(row, visit_id, circuit.id, &mut eff)?;
        Ok(eff)
    }

    /// The property, found or added, and its address.
    fn property(&mut self, row: &VisitRow, eff: &mut Effect) -> RowResult<()> {
        let s = self.store;
        let replace = self.opts.replace;
        let p = self
            .cache
            .property(s, &row.property_ref, row.address.as_deref(), eff)?;
        if let Some(a) = &row.address
            && p.address.as_ref() != Some(a)
        {
            if p.address.is_none() || replace {
                if p.address.is_some() {
                    eff.details_replaced += 1;
                }
                s.ingest_set_address(p.id, a)?;
                p.address = Some(a.clone());
                eff.wrote = true;
            } else {
                return fault(
                    Column::Address,
                    conflict(
                        &format!("the address of property {}", row.property_ref),
                        &p.address,
                        &row.address,
                    ),
                );
            }
        }
        Ok(())
    }

    /// The board, found or added, and its earthing; its id.
    fn board(&mut self, row: &VisitRow, eff: &mut Effect) -> RowResult<i64> {
        let s = self.store;
        let replace = self.opts.replace;
        let p = self.cache.cached(&row.property_ref)?;
        let property_id = p.id;
        if !p.boards.contains_key(&row.board) {
            let stored = if p.created {
                None
            } else {
                s.ingest_board(property_id, &row.board)?
            };
            let state = match stored {
                Some(b) => stored_board(s, b)?,
                None => {
                    let e = row.earthing.map(|e| e.as_str());
                    let id = s.ingest_insert_board(property_id, &row.board, e)?;
                    eff.boards += 1;
                    eff.wrote = true;
                    BoardState {
                        id,
                        earthing: e.map(String::from),
                        circuits: HashMap::new(),
                        ambiguous: HashMap::new(),
                        feed_from_file: None,
                    }
                }
            };
            p.boards.insert(row.board.clone(), state);
        }
        let b = p.boards.get_mut(&row.board).expect("just inserted");
        if let Some(e) = row.earthing.map(|e| e.as_str().to_string())
            && b.earthing.as_ref() != Some(&e)
        {
            if b.earthing.is_none() || replace {
                if b.earthing.is_some() {
                    eff.details_replaced += 1;
                }
                s.ingest_set_earthing(b.id, &e)?;
                b.earthing = Some(e);
                eff.wrote = true;
            } else {
                return fault(
                    Column::Earthing,
                    conflict(
                        &format!(
                            "the earthing of board {} at {}",
                            row.board, row.property_ref
                        ),
                        &b.earthing,
                        &Some(e),
                    ),
                );
            }
        }
        let board_id = b.id;
        if !b.ambiguous.is_empty()
            && let Some(numbers) = b.ambiguous.get(&row.circuit)
        {
            return fault(
                Column::Circuit,
                ambiguous_circuit(&row.circuit, &row.board, &row.property_ref, numbers),
            );
        }

        Ok(board_id)
    }

    /// The circuit, found or added, and which register fields the row changes from the date
    /// on; a row that disagrees with the register before a later visit is refused.
    fn circuit(
        &mut self,
        row: &VisitRow,
        board_id: i64,
        eff: &mut Effect,
    ) -> RowResult<RowCircuit> {
        let s = self.store;
        let date = row.visit_date;
        let where_ = || format!("{} {}/{}", row.property_ref, row.board, row.circuit);
        let p = self.cache.cached(&row.property_ref)?;
        let Some(b) = p.boards.get_mut(&row.board) else {
            return Err(Faults::Fatal(Error::invalid(format!(
                "board {} left the import's cache while its row was applied",
                row.board
            ))));
        };
        debug_assert_eq!(b.id, board_id);
        let row_details = row_register_details(&row.register);
        if !b.circuits.contains_key(&row.circuit) {
            let rcd_device = match row_details.rcd_id.as_deref() {
                Some(r) => Some(self.store.ingest_rcd_device(board_id, r)?.0),
                None => None,
            };
            let id = self
                .inserts
                .circuit(board_id, &row.circuit, &row_details, rcd_device)?;
            eff.circuits += 1;
            eff.wrote = true;
            let mut details = row_details.clone();
            details.kind = Some(details.kind.unwrap_or(crate::model::CircuitKind::Radial));
            let state = CircuitState {
                id,
                current: None,
                details,
                changes: Vec::new(),
                latest: Some(None),
            };
            b.circuits.insert(row.circuit.clone(), state);
        }
        let c = b.circuits.get_mut(&row.circuit).expect("just inserted");
        let circuit_id = c.id;
        let mut differing = Vec::new();
        let mut faults = Vec::new();
        // Most rows agree with a register that never changed: no text to build.
        let agrees = c.changes.is_empty() && register_agrees(&c.details, &row.register);
        let (then, row_texts) = if agrees {
            (Default::default(), Default::default())
        } else {
            (
                register_at(
                    c.current.get_or_insert_with(|| register_texts(&c.details)),
                    &c.changes,
                    date,
                ),
                register_texts(&row_details),
            )
        };
        for (i, (col, field)) in REGISTER.iter().enumerate() {
            if agrees {
                break;
            }
            let Some(new) = &row_texts[i] else { continue };
            // An RCD's identifier matches without regard to case, as the register keeps it.
            if then[i]
                .as_ref()
                .is_some_and(|t| t == new || (*col == Column::RcdId && t.eq_ignore_ascii_case(new)))
            {
                continue;
            }
            let later_change = c
                .changes
                .iter()
                .find(|ch| ch.date > date && ch.field.as_deref() == Some(field))
                .map(|ch| ch.date);
            let latest = match c.latest {
                Some(known) => known,
                None => *c.latest.insert(s.ingest_latest_record(circuit_id)?),
            };
            let later = later_change.or(latest.filter(|d| *d > date));
            if let Some(later) = later {
                faults.push(Fault {
                    column: Some(*col),
                    message: format!(
                        "{} on {date} has {new:?} but the register has {} and a later visit ({later}) is already recorded: import visit files oldest first, or record the change with `ohmtrail circuit edit`",
                        where_(),
                        shown(&then[i])
                    ),
                });
            } else {
                differing.push(i);
            }
        }
        if !faults.is_empty() {
            return Err(Faults::Row(faults));
        }

        Ok(RowCircuit {
            id: circuit_id,
            details: row_details,
            differing,
        })
    }

    /// The visit, found or added, and its inspector, instrument and ambient; its id.
    fn visit(
        &mut self,
        row: &VisitRow,
        wanted: &IngestVisit,
        instrument_id: Option<i64>,
        eff: &mut Effect,
    ) -> RowResult<i64> {
        let s = self.store;
        let replace = self.opts.replace;
        let date = row.visit_date;
        let p = self.cache.cached(&row.property_ref)?;
        let v = visit_state(s, p, date, wanted, instrument_id, eff)?;
        let visit_id = v.v.id;
        // The visit's own fields: cheap comparisons first, since almost every row agrees.
        let ambient_differs = row.ambient_c.is_some()
            && row.ambient_c.map(f64::to_bits) != v.v.ambient_c.map(f64::to_bits)
            && row.ambient_c.map(format_number) != v.v.ambient_c.map(format_number);
        let differs = [
            row.inspector.is_some() && row.inspector != v.v.inspector,
            row.instrument.is_some() && row.instrument != v.v.instrument,
            ambient_differs,
        ];
        if differs.contains(&true) {
            let mut next = v.v.clone();
            let mut faults = Vec::new();
            let fields = [
                (
                    Column::Inspector,
                    v.v.inspector.clone(),
                    row.inspector.clone(),
                ),
                (
                    Column::Instrument,
                    v.v.instrument.clone(),
                    row.instrument.clone(),
                ),
                (
                    Column::AmbientC,
                    v.v.ambient_c.map(format_number),
                    row.ambient_c.map(format_number),
                ),
            ];
            let mut dirty = false;
            let mut overwrote = false;
            for (i, (col, stored, file)) in fields.into_iter().enumerate() {
                if !differs[i] {
                    continue;
                }
                let what = format!("the visit to {} on {date}", row.property_ref);
                if stored.is_some() && (v.created || v.from_file[i]) {
                    // Two rows of this file disagree: --replace cannot say which one is right.
                    faults.push(Fault {
                        column: Some(col),
                        message: in_file_conflict(&what, &stored, &file),
                    });
                } else if stored.is_none() || replace {
                    overwrote |= stored.is_some();
                    match col {
                        Column::Inspector => next.inspector = file,
                        Column::Instrument => next.instrument = file,
                        _ => next.ambient_c = row.ambient_c,
                    }
                    dirty = true;
                } else {
                    faults.push(Fault {
                        column: Some(col),
                        message: conflict(&what, &stored, &file),
                    });
                }
            }
            if !faults.is_empty() {
                return Err(Faults::Row(faults));
            }
            if dirty {
                let instrument_id = match &next.instrument {
                    Some(serial) => Some(self.cache.instrument(s, serial)?),
                    None => None,
                };
                s.ingest_update_visit(&next, instrument_id)?;
                eff.wrote = true;
                if overwrote {
                    eff.details_replaced += 1;
                }
                // The cache borrow ended above; look the visit up again to keep it current.
                if let Some(p) = self.cache.properties.get_mut(&row.property_ref)
                    && let Some(v) = p.visits.get_mut(&date)
                {
                    v.v = next;
                    for (i, d) in differs.iter().enumerate() {
                        v.from_file[i] |= *d;
                    }
                }
            }
        }

        Ok(visit_id)
    }

    /// Ze at this board on this visit, if the row gives it.
    fn board_ze(
        &mut self,
        row: &VisitRow,
        visit_id: i64,
        board_id: i64,
        eff: &mut Effect,
    ) -> RowResult<()> {
        let s = self.store;
        let replace = self.opts.replace;
        let date = row.visit_date;
        if let Some(ze) = row.ze_ohm {
            let v = self
                .cache
                .properties
                .get_mut(&row.property_ref)
                .and_then(|p| p.visits.get_mut(&date));
            let known = v.as_ref().and_then(|v| {
                v.ze.get(&board_id)
                    .copied()
                    .or(if v.created { Some(None) } else { None })
            });
            let stored = match known {
                Some(z) => z,
                None => s.ingest_board_ze(visit_id, board_id)?.flatten(),
            };
            let set_by_file = v
                .as_ref()
                .is_some_and(|v| v.created || v.ze_from_file.contains(&board_id));
            if stored != Some(ze) {
                if stored.is_some() && set_by_file {
                    return fault(
                        Column::ZeOhm,
                        in_file_conflict(
                            &format!("Ze at board {} on {date}", row.board),
                            &stored.map(format_number),
                            &Some(format_number(ze)),
                        ),
                    );
                }
                if stored.is_none() || replace {
                    if stored.is_some() {
                        eff.details_replaced += 1;
                    }
                    s.ingest_set_board_ze(visit_id, board_id, ze)?;
                    eff.wrote = true;
                } else {
                    return fault(
                        Column::ZeOhm,
                        conflict(
                            &format!("Ze at board {} on {date}", row.board),
                            &stored.map(format_number),
                            &Some(format_number(ze)),
                        ),
                    );
                }
            }
            if let Some(v) = self
                .cache
                .properties
                .get_mut(&row.property_ref)
                .and_then(|p| p.visits.get_mut(&date))
            {
                v.ze.insert(board_id, Some(ze));
                v.ze_from_file.insert(board_id);
            }
        }

        Ok(())
    }

    /// Register changes, effective from this visit.
    fn register_changes(
        &mut self,
        row: &VisitRow,
        line: u64,
        circuit: &RowCircuit,
        visit_id: i64,
        eff: &mut Effect,
    ) -> RowResult<()> {
        let s = self.store;
        let date = row.visit_date;
        let (circuit_id, differing, row_details) =
            (circuit.id, &circuit.differing, &circuit.details);
        if !differing.is_empty() {
            let mut d = CircuitDetails::default();
            for i in differing {
                match REGISTER[*i].0 {
                    Column::Description => d.description = row_details.description.clone(),
                    Column::Ring => d.kind = row_details.kind,
                    Column::Device => d.device = row_details.device,
                    Column::RcdMa => d.rcd_ma = row_details.rcd_ma,
                    Column::LiveMm2 => d.live_mm2 = row_details.live_mm2,
                    Column::CpcMm2 => d.cpc_mm2 = row_details.cpc_mm2,
                    Column::RcdType => d.rcd_type = row_details.rcd_type,
                    Column::RcdDelay => d.rcd_delay = row_details.rcd_delay,
                    Column::Insulation => d.insulation = row_details.insulation,
                    Column::WiringType => d.wiring_type = row_details.wiring_type.clone(),
                    Column::RefMethod => d.ref_method = row_details.ref_method,
                    Column::Points => d.points = row_details.points,
                    Column::BreakingKa => d.breaking_ka = row_details.breaking_ka,
                    Column::Afdd => d.afdd = row_details.afdd,
                    Column::RcdId => d.rcd_id = row_details.rcd_id.clone(),
                    _ => d.length_m = row_details.length_m,
                }
            }
            let made = s.edit_circuit(circuit_id, &d, date, None, Some(visit_id), None)?;
            let mut c = self.circuit_state(&row.property_ref, &row.board, &row.circuit);
            for ch in made {
                if let (Some(c), Some(field)) = (c.as_deref_mut(), ch.field.as_deref())
                    && let Some(i) = REGISTER.iter().position(|(_, f)| *f == field)
                {
                    c.current.get_or_insert_with(|| register_texts(&c.details))[i] =
                        ch.new_value.clone();
                    apply_text(&mut c.details, field, ch.new_value.as_deref());
                    c.changes.push(IngestChange {
                        date,
                        field: ch.field.clone(),
                        old_value: ch.old_value.clone(),
                    });
                }
                eff.changes.push(RegisterChange {
                    line,
                    property_ref: row.property_ref.clone(),
                    board: row.board.clone(),
                    circuit: row.circuit.clone(),
                    date,
                    kind: ch.kind.as_str().to_string(),
                    field: ch.field.unwrap_or_default(),
                    old_value: ch.old_value,
                    new_value: ch.new_value,
                });
            }
            eff.wrote = true;
        }

        Ok(())
    }

    /// The test record: written, unchanged, replaced or a conflict.
    fn test_record(
        &mut self,
        row: &VisitRow,
        visit_id: i64,
        circuit_id: i64,
        eff: &mut Effect,
    ) -> RowResult<()> {
        let s = self.store;
        let replace = self.opts.replace;
        let date = row.visit_date;
        let where_ = || format!("{} {}/{}", row.property_ref, row.board, row.circuit);
        let (fresh, by_file) = self
            .cache
            .properties
            .get(&row.property_ref)
            .and_then(|p| p.visits.get(&date))
            .map_or((false, false), |v| {
                let by_file = v.written.contains(&circuit_id);
                (v.created && !by_file, by_file)
            });
        let stored = if fresh {
            None
        } else {
            s.ingest_record(visit_id, circuit_id)?
        };
        match stored {
            None => {
                self.inserts.record(visit_id, circuit_id, &row.readings)?;
                eff.written += 1;
                eff.wrote = true;
            }
            Some(stored) => {
                let present: Vec<Column> = READING_COLUMNS
                    .iter()
                    .copied()
                    .filter(|c| self.header.has(*c))
                    .collect();
                let differ: Vec<Column> = present
                    .iter()
                    .copied()
                    .filter(|c| !same_reading(&stored, &row.readings, *c))
                    .collect();
                if differ.is_empty() {
                    eff.unchanged += 1;
                } else if by_file {
                    // Two rows of this file for one circuit and visit: --replace cannot say
                    // which one is right.
                    return Err(Faults::Row(
                        differ
                            .iter()
                            .map(|c| Fault {
                                column: Some(*c),
                                message: in_file_conflict(
                                    &format!("{} on {date}", where_()),
                                    &reading_text(&stored, *c),
                                    &reading_text(&row.readings, *c),
                                ),
                            })
                            .collect(),
                    ));
                } else if replace {
                    let mut merged = stored.clone();
                    for c in &present {
                        copy_reading(&mut merged, &row.readings, *c);
                    }
                    s.ingest_put_record(visit_id, circuit_id, &merged)?;
                    eff.replaced += 1;
                    eff.wrote = true;
                } else {
                    return Err(Faults::Row(
                        differ
                            .iter()
                            .map(|c| Fault {
                                column: Some(*c),
                                message: conflict(
                                    &format!("the stored record for {} on {date}", where_()),
                                    &reading_text(&stored, *c),
                                    &reading_text(&row.readings, *c),
                                ),
                            })
                            .collect(),
                    ));
                }
            }
        }
        if let Some(p) = self.cache.properties.get_mut(&row.property_ref) {
            if let Some(v) = p.visits.get_mut(&date) {
                v.written.insert(circuit_id);
            }
            if let Some(c) = p
                .boards
                .get_mut(&row.board)
                .and_then(|b| b.circuits.get_mut(&row.circuit))
            {
                // Unknown stays unknown: the stored records may be later than this one.
                if let Some(known) = c.latest.as_mut() {
                    *known = (*known).max(Some(date));
                }
            }
        }
        Ok(())
    }

    fn circuit_state(&mut self, p: &str, b: &str, c: &str) -> Option<&mut CircuitState> {
        self.cache
            .properties
            .get_mut(p)?
            .boards
            .get_mut(b)?
            .circuits
            .get_mut(c)
    }
}

/// The circuit a visit row names, and the register fields (indexes into [`REGISTER`]) it
/// changes from its date on.
struct RowCircuit {
    id: i64,
    details: CircuitDetails,
    differing: Vec<usize>,
}
