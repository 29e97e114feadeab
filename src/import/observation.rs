//! Applying an observation row: it names a property, visit, board and circuit already
//! stored, never adds one; and running any row, inside a savepoint with `skip_invalid`.

use super::apply::Importer;
use super::fault::{Effect, Faults, RowResult, fault};
use super::state::{ambiguous_circuit, stored_board, visit_state};
use super::{Column, Header, ImportOptions, Located, ObservationRow};
use crate::error::{Error, Result};
use crate::store::{IngestVisit, Store};

impl Importer<'_> {
    pub(super) fn apply_observation(&mut self, row: &ObservationRow) -> RowResult<Effect> {
        let s = self.store;
        let mut eff = Effect::default();
        // An observation belongs to a property's inspection: it never adds a property.
        if !self.cache.properties.contains_key(&row.property_ref)
            && s.ingest_property(&row.property_ref)?.is_none()
        {
            return fault(
                Column::PropertyRef,
                format!(
                    "property {:?} not found: import its visit file first",
                    row.property_ref
                ),
            );
        }
        let p = self.cache.property(s, &row.property_ref, None, &mut eff)?;
        let property_id = p.id;
        let blank = IngestVisit {
            id: 0,
            inspector: None,
            instrument: None,
            ambient_c: None,
        };
        let visit_id = visit_state(s, p, row.visit_date, &blank, None, &mut eff)?
            .v
            .id;
        let mut board_id = None;
        let mut circuit_id = None;
        if let Some(board) = &row.board {
            // The board's circuits as a visit file's rows find them: by number as import reads
            // it, so `01` and `1.0` find circuit 1 however it was stored.
            if !p.boards.contains_key(board) {
                let Some(stored) = s.ingest_board(property_id, board)? else {
                    return fault(
                        Column::Board,
                        format!(
                            "board {board:?} not found at property {}: import its visit file first",
                            row.property_ref
                        ),
                    );
                };
                p.boards.insert(board.clone(), stored_board(s, stored)?);
            }
            let b = &p.boards[board];
            board_id = Some(b.id);
            if let Some(number) = &row.circuit {
                if let Some(stored) = b.ambiguous.get(number) {
                    return fault(
                        Column::Circuit,
                        ambiguous_circuit(number, board, &row.property_ref, stored),
                    );
                }
                let Some(c) = b.circuits.get(number) else {
                    return fault(
                        Column::Circuit,
                        format!(
                            "circuit {number:?} not found in service on board {board} at property {}: import its visit file first",
                            row.property_ref
                        ),
                    );
                };
                circuit_id = Some(c.id);
            }
        }
        let code = row.code.as_str();
        if s.ingest_has_observation(visit_id, board_id, circuit_id, code, &row.text)? {
            eff.observations_unchanged += 1;
        } else {
            s.add_observation(visit_id, board_id, circuit_id, row.code, &row.text)?;
            eff.observations += 1;
            eff.wrote = true;
        }
        Ok(eff)
    }
}

/// Apply a row; with `skip_invalid` inside a savepoint so a refused row leaves no trace.
/// The outer `Err` is a database failure that must stop the whole file.
pub(super) fn run_row(
    s: &Store,
    opts: &ImportOptions,
    header: &Header,
    apply: impl FnOnce(&Store) -> RowResult<Effect>,
) -> Result<std::result::Result<Effect, Located>> {
    let result = if opts.skip_invalid {
        let mut faults = None;
        let r = s.atomic(|s| match apply(s) {
            Ok(e) => Ok(e),
            Err(Faults::Fatal(e)) => Err(e),
            Err(Faults::Row(f)) => {
                faults = Some(f);
                Err(Error::invalid("row refused"))
            }
        });
        match (r, faults) {
            (Ok(e), _) => Ok(e),
            (Err(_), Some(f)) => Err(Faults::Row(f)),
            (Err(e), None) => Err(Faults::from(e)),
        }
    } else {
        apply(s)
    };
    let list = match result {
        Ok(e) => return Ok(Ok(e)),
        Err(Faults::Fatal(e)) => return Err(e),
        Err(Faults::Row(list)) => list,
    };
    // A fault about no particular column points at the first.
    Ok(Err(list
        .into_iter()
        .map(|f| {
            let at = f.column.and_then(|c| header.position(c)).unwrap_or(1);
            (at, f.column.map(|c| c.name().to_string()), f.message)
        })
        .collect()))
}
