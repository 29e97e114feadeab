//! The per-file cache of what rows refer to: properties, their boards, circuits and visits.

use std::borrow::Cow;

use chrono::NaiveDate;
// The per-file caches are looked up several times a row; a fast hasher shows in the profile.
use foldhash::{HashMap, HashMapExt, HashSet, HashSetExt};

use super::fault::{Effect, Faults, RowResult};
use super::normalise_circuit;
use crate::error::{Error, Result};
use crate::store::{CircuitDetails, IngestBoard, IngestChange, IngestVisit, Store};

pub(super) struct CircuitState {
    pub(super) id: i64,
    /// The register now, typed for the common case of a row that agrees with it.
    pub(super) details: CircuitDetails,
    /// The register now as text, made when a row first disagrees with `details`.
    pub(super) current: Option<[Option<String>; 16]>,
    pub(super) changes: Vec<IngestChange>,
    /// The date of the circuit's latest test record, once looked up: only a row that
    /// disagrees with the register needs it, so most rows never ask.
    pub(super) latest: Option<Option<NaiveDate>>,
}

pub(super) struct BoardState {
    pub(super) id: i64,
    pub(super) earthing: Option<String>,
    /// Every circuit in service on the board, by its number as import reads it: read whole
    /// when the board is first met, so a number missing here is a new circuit.
    pub(super) circuits: HashMap<String, CircuitState>,
    /// Numbers that two stored circuits share once read as import reads them (`1` and `01`
    /// stored before numbers were normalised), with the stored numbers: rows cannot say which.
    pub(super) ambiguous: HashMap<String, Vec<String>>,
    /// The board feeding it as a row of this file gave it.
    pub(super) feed_from_file: Option<String>,
}

pub(super) struct VisitState {
    pub(super) v: IngestVisit,
    /// Ze stored at each board at this visit, as far as this import knows.
    pub(super) ze: HashMap<i64, Option<f64>>,
    /// Created by this import, so it holds only records this import wrote.
    pub(super) created: bool,
    pub(super) written: HashSet<i64>,
    /// Inspector, instrument and ambient as set by a row of this file, not found stored.
    pub(super) from_file: [bool; 3],
    /// Boards whose Ze a row of this file set.
    pub(super) ze_from_file: HashSet<i64>,
    /// The visit's report, supply and board measurements as stored and as this file set them,
    /// read when a row first gives one (most files give none).
    pub(super) recorded: Option<Box<super::schedule::Recorded>>,
}

pub(super) struct PropertyState {
    pub(super) id: i64,
    /// Created by this import, so its only boards and visits are the ones cached here.
    pub(super) created: bool,
    pub(super) address: Option<String>,
    pub(super) boards: HashMap<String, BoardState>,
    pub(super) visits: HashMap<NaiveDate, VisitState>,
}

/// Keeps recently used properties so most rows need no lookup. Bounded, so memory does not
/// grow with the file; a property dropped from it is read again from the database.
#[derive(Default)]
pub(super) struct Cache {
    pub(super) properties: HashMap<String, PropertyState>,
    pub(super) instruments: HashMap<String, i64>,
}

pub(super) const CACHE_PROPERTIES: usize = 2_000;

impl Cache {
    pub(super) fn property(
        &mut self,
        s: &Store,
        reference: &str,
        address: Option<&str>,
        eff: &mut Effect,
    ) -> RowResult<&mut PropertyState> {
        if self.properties.len() >= CACHE_PROPERTIES && !self.properties.contains_key(reference) {
            self.properties.clear();
        }
        if !self.properties.contains_key(reference) {
            let state = match s.ingest_property(reference)? {
                Some(p) => PropertyState {
                    id: p.id,
                    created: false,
                    address: p.address,
                    boards: HashMap::new(),
                    visits: HashMap::new(),
                },
                None => {
                    let id = s.ingest_insert_property(reference, address)?;
                    eff.properties += 1;
                    eff.wrote = true;
                    PropertyState {
                        id,
                        created: true,
                        address: address.map(String::from),
                        boards: HashMap::new(),
                        visits: HashMap::new(),
                    }
                }
            };
            self.properties.insert(reference.to_string(), state);
        }
        Ok(self.properties.get_mut(reference).expect("just inserted"))
    }

    /// A property [`Cache::property`] found or made for the row being applied.
    pub(super) fn cached(&mut self, reference: &str) -> RowResult<&mut PropertyState> {
        match self.properties.get_mut(reference) {
            Some(p) => Ok(p),
            None => Err(Faults::Fatal(Error::invalid(format!(
                "property {reference:?} left the import's cache while its row was applied"
            )))),
        }
    }

    pub(super) fn instrument(&mut self, s: &Store, serial: &str) -> Result<i64> {
        if let Some(id) = self.instruments.get(serial) {
            return Ok(*id);
        }
        let id = s.ingest_instrument(serial)?;
        self.instruments.insert(serial.to_string(), id);
        Ok(id)
    }
}

/// A board already stored, with every circuit in service on it keyed by its number as import
/// reads it (`normalise_circuit`); two stored numbers that read alike are kept aside as
/// ambiguous.
pub(super) fn stored_board(s: &Store, b: IngestBoard) -> RowResult<BoardState> {
    let rows = s.ingest_board_circuits(b.id)?;
    let mut circuits = HashMap::with_capacity(rows.len());
    let mut ambiguous: HashMap<String, Vec<String>> = HashMap::new();
    // Stored numbers that read differently (stored before numbers were
    // normalised), by how they read now: rare, so only those are kept.
    let mut unusual: HashMap<String, String> = HashMap::new();
    for (number, id, details, changed) in rows {
        let normal = match normalise_circuit(&number) {
            Cow::Borrowed(_) => None,
            Cow::Owned(k) => Some(k),
        };
        let (key, original) = match normal {
            None => (number, None),
            Some(k) => (k, Some(number)),
        };
        if circuits.contains_key(&key) {
            let both = ambiguous.entry(key.clone()).or_default();
            if both.is_empty() {
                both.push(unusual.get(&key).unwrap_or(&key).clone());
            }
            both.push(original.unwrap_or_else(|| key.clone()));
            continue;
        }
        if let Some(o) = original {
            unusual.insert(key.clone(), o);
        }
        let number = key;
        let changes = if changed {
            s.ingest_changes(id)?
        } else {
            Vec::new()
        };
        let state = CircuitState {
            id,
            current: None,
            details,
            changes,
            latest: None,
        };
        circuits.insert(number, state);
    }
    Ok(BoardState {
        id: b.id,
        earthing: b.earthing,
        circuits,
        ambiguous,
        feed_from_file: None,
    })
}

/// Why a row cannot name a circuit whose number two stored circuits share once read as import
/// reads it.
pub(super) fn ambiguous_circuit(
    number: &str,
    board: &str,
    property_ref: &str,
    stored: &[String],
) -> String {
    format!(
        "circuit {number:?} of board {board} at {property_ref} could be any of the stored circuits {}: circuit numbers are now read as numbers (01 and 1.0 are 1); renumber all but one with `ohmtrail circuit replace`",
        stored
            .iter()
            .map(|n| format!("{n:?}"))
            .collect::<Vec<_>>()
            .join(", ")
    )
}

pub(super) fn visit_state<'a>(
    s: &Store,
    p: &'a mut PropertyState,
    date: NaiveDate,
    wanted: &IngestVisit,
    instrument_id: Option<i64>,
    eff: &mut Effect,
) -> Result<&'a mut VisitState> {
    if !p.visits.contains_key(&date) {
        let stored = if p.created {
            None
        } else {
            s.ingest_visit(p.id, date)?
        };
        let state = match stored {
            Some(v) => VisitState {
                v,
                ze: HashMap::new(),
                created: false,
                written: HashSet::new(),
                from_file: [false; 3],
                ze_from_file: HashSet::new(),
                recorded: None,
            },
            None => {
                let id = s.ingest_insert_visit(p.id, date, wanted, instrument_id)?;
                eff.visits += 1;
                eff.wrote = true;
                VisitState {
                    v: IngestVisit {
                        id,
                        ..wanted.clone()
                    },
                    ze: HashMap::new(),
                    created: true,
                    written: HashSet::new(),
                    from_file: [false; 3],
                    ze_from_file: HashSet::new(),
                    recorded: None,
                }
            }
        };
        p.visits.insert(date, state);
    }
    Ok(p.visits.get_mut(&date).expect("just inserted"))
}
