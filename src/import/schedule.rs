//! The rest of a visit's schedule in a visit file: the board feeding a board, what was measured
//! at the board (Zdb, the sub-main's R1+R2, the prospective fault current), and the visit's
//! supply characteristics, main bonding and report as the inspector recorded them. Every row of
//! a board (or a visit) repeats them: a row that gives another value than an earlier row of
//! the file is refused, with or without `--replace`, as for a visit's inspector.

use foldhash::{HashMap, HashMapExt, HashSet, HashSetExt};

use super::apply::Importer;
use super::fault::{Effect, Fault, Faults, RowResult, conflict, fault, in_file_conflict};
use super::state::BoardState;
use super::{Column, VisitRow, format_number};
use crate::model::{BoardTest, SupplyRecord, VisitReport};

/// A visit's recorded report and supply, and its boards' measurements, as stored and as this
/// file has set them so far.
pub(super) struct Recorded {
    report: VisitReport,
    supply: SupplyRecord,
    /// Visit-level columns a row of this file gave.
    from_file: HashSet<Column>,
    boards: HashMap<i64, BoardTest>,
    /// (board, column) a row of this file gave.
    board_from_file: HashSet<(i64, Column)>,
}

/// The visit-level columns and their values as text, for comparing a row with what is stored.
fn visit_fields(r: &VisitReport, s: &SupplyRecord) -> [(Column, Option<String>); 11] {
    let num = |v: Option<f64>| v.map(format_number);
    let bond = |b: Option<crate::model::Bonding>| b.map(|b| b.as_str().to_string());
    [
        (Column::U0V, num(s.u0_v)),
        (Column::RaOhm, num(s.ra_ohm)),
        (Column::BondingCsaMm2, num(s.bonding_csa_mm2)),
        (Column::BondingWater, bond(s.bonding_water)),
        (Column::BondingGas, bond(s.bonding_gas)),
        (Column::BondingOther, bond(s.bonding_other)),
        (Column::ReportRef, r.report_ref.clone()),
        (Column::Outcome, r.outcome.clone()),
        (
            Column::IntervalMonths,
            r.interval_months.map(|m| m.to_string()),
        ),
        (Column::Extent, r.extent.clone()),
        (Column::Limitations, r.limitations.clone()),
    ]
}

/// Copy one visit-level column from the row.
fn set_visit_field(r: &mut VisitReport, s: &mut SupplyRecord, row: &VisitRow, col: Column) {
    let (fr, fs) = (&row.report, &row.supply);
    match col {
        Column::U0V => s.u0_v = fs.u0_v,
        Column::RaOhm => s.ra_ohm = fs.ra_ohm,
        Column::BondingCsaMm2 => s.bonding_csa_mm2 = fs.bonding_csa_mm2,
        Column::BondingWater => s.bonding_water = fs.bonding_water,
        Column::BondingGas => s.bonding_gas = fs.bonding_gas,
        Column::BondingOther => s.bonding_other = fs.bonding_other,
        Column::ReportRef => r.report_ref = fr.report_ref.clone(),
        Column::Outcome => r.outcome = fr.outcome.clone(),
        Column::IntervalMonths => r.interval_months = fr.interval_months,
        Column::Extent => r.extent = fr.extent.clone(),
        _ => r.limitations = fr.limitations.clone(),
    }
}

fn board_fields(t: &BoardTest) -> [(Column, Option<String>); 3] {
    [
        (Column::ZdbOhm, t.zdb_ohm.map(format_number)),
        (
            Column::SubmainR1r2Ohm,
            t.submain_r1r2_ohm.map(format_number),
        ),
        (Column::PfcKa, t.pfc_ka.map(format_number)),
    ]
}

/// One field as a row gives it against the stored value: unchanged, set, or a fault.
enum Outcome {
    Same,
    Set { overwrote: bool },
}

fn judge(
    what: &str,
    col: Column,
    stored: &Option<String>,
    file: &Option<String>,
    given_earlier: bool,
    replace: bool,
) -> Result<Outcome, Fault> {
    if stored == file {
        return Ok(Outcome::Same);
    }
    let message = if given_earlier {
        // Two rows of this file disagree: --replace cannot say which one is right.
        in_file_conflict(what, stored, file)
    } else if stored.is_none() || replace {
        return Ok(Outcome::Set {
            overwrote: stored.is_some(),
        });
    } else {
        conflict(what, stored, file)
    };
    Err(Fault {
        column: Some(col),
        message,
    })
}

impl Importer<'_> {
    /// The board's feed, its measurements and the visit's recorded report and supply, for a
    /// file that has any of their columns.
    pub(super) fn schedule(
        &mut self,
        row: &VisitRow,
        visit_id: i64,
        board_id: i64,
        eff: &mut Effect,
    ) -> RowResult<()> {
        if !self.header.columns.iter().flatten().any(|c| c.per_visit()) {
            return Ok(());
        }
        if let Some(parent) = &row.board_test.fed_from {
            self.feed(row, parent, board_id, eff)?;
        }
        let s = self.store;
        let replace = self.opts.replace;
        let date = row.visit_date;
        let Some(v) = self
            .cache
            .properties
            .get_mut(&row.property_ref)
            .and_then(|p| p.visits.get_mut(&date))
        else {
            return Err(Faults::Fatal(crate::Error::invalid(format!(
                "the visit on {date} left the import's cache while its row was applied"
            ))));
        };
        let rec = match &mut v.recorded {
            Some(r) => r,
            None => {
                let (report, supply) = if v.created {
                    Default::default()
                } else {
                    let stored = s.visit_by_id(visit_id)?;
                    (stored.report, stored.supply)
                };
                v.recorded.insert(Box::new(Recorded {
                    report,
                    supply,
                    from_file: HashSet::new(),
                    boards: HashMap::new(),
                    board_from_file: HashSet::new(),
                }))
            }
        };
        let mut faults = Vec::new();

        // The visit's own fields.
        let what = format!("the visit to {} on {date}", row.property_ref);
        let stored = visit_fields(&rec.report, &rec.supply);
        let given = visit_fields(&row.report, &row.supply);
        let (mut report, mut supply) = (rec.report.clone(), rec.supply.clone());
        let (mut dirty, mut overwrote) = (false, 0);
        for ((col, stored), (_, file)) in stored.iter().zip(&given) {
            if file.is_none() {
                continue;
            }
            match judge(
                &what,
                *col,
                stored,
                file,
                rec.from_file.contains(col),
                replace,
            ) {
                Ok(Outcome::Same) => {}
                Ok(Outcome::Set { overwrote: o }) => {
                    set_visit_field(&mut report, &mut supply, row, *col);
                    dirty = true;
                    overwrote += u64::from(o);
                }
                Err(f) => faults.push(f),
            }
            rec.from_file.insert(*col);
        }

        // What was measured at the board.
        let test = match rec.boards.get(&board_id) {
            Some(t) => *t,
            None if v.created => BoardTest {
                visit_id,
                board_id,
                ..Default::default()
            },
            None => s.board_test_record(visit_id, board_id)?,
        };
        let what_board = format!("board {} at {} on {date}", row.board, row.property_ref);
        let row_test = BoardTest {
            visit_id,
            board_id,
            ze_ohm: None,
            zdb_ohm: row.board_test.zdb_ohm,
            submain_r1r2_ohm: row.board_test.submain_r1r2_ohm,
            pfc_ka: row.board_test.pfc_ka,
        };
        let mut next = test;
        let mut board_dirty = false;
        for ((col, stored), (_, file)) in board_fields(&test).iter().zip(&board_fields(&row_test)) {
            if file.is_none() {
                continue;
            }
            let earlier = rec.board_from_file.contains(&(board_id, *col));
            match judge(&what_board, *col, stored, file, earlier, replace) {
                Ok(Outcome::Same) => {}
                Ok(Outcome::Set { overwrote: o }) => {
                    match col {
                        Column::ZdbOhm => next.zdb_ohm = row_test.zdb_ohm,
                        Column::SubmainR1r2Ohm => next.submain_r1r2_ohm = row_test.submain_r1r2_ohm,
                        _ => next.pfc_ka = row_test.pfc_ka,
                    }
                    board_dirty = true;
                    overwrote += u64::from(o);
                }
                Err(f) => faults.push(f),
            }
            rec.board_from_file.insert((board_id, *col));
        }
        if !faults.is_empty() {
            let header = self.header;
            faults.sort_by_key(|f| f.column.and_then(|c| header.position(c)));
            return Err(Faults::Row(faults));
        }
        if dirty {
            s.set_visit_report_supply(visit_id, &report, &supply)?;
            rec.report = report;
            rec.supply = supply;
        }
        if board_dirty {
            s.set_board_measured(&next)?;
        }
        rec.boards.insert(board_id, next);
        if dirty || board_dirty {
            eff.wrote = true;
            eff.details_replaced += overwrote;
        }
        Ok(())
    }

    /// The board feeding the row's board: found or added to the register, and set as its
    /// feed when the register has none (or with `--replace`).
    fn feed(
        &mut self,
        row: &VisitRow,
        parent: &str,
        board_id: i64,
        eff: &mut Effect,
    ) -> RowResult<()> {
        let s = self.store;
        let replace = self.opts.replace;
        let p = self.cache.cached(&row.property_ref)?;
        let property_id = p.id;
        if !p.boards.contains_key(parent) {
            let stored = if p.created {
                None
            } else {
                s.ingest_board(property_id, parent)?
            };
            let state = match stored {
                Some(b) => super::state::stored_board(s, b)?,
                None => {
                    let id = s.ingest_insert_board(property_id, parent, None)?;
                    eff.boards += 1;
                    eff.wrote = true;
                    BoardState {
                        id,
                        earthing: None,
                        circuits: HashMap::new(),
                        ambiguous: HashMap::new(),
                        feed_from_file: None,
                    }
                }
            };
            p.boards.insert(parent.to_string(), state);
        }
        let parent_id = p.boards[parent].id;
        let Some(b) = p.boards.get_mut(&row.board) else {
            return Ok(());
        };
        let what = format!(
            "the board feeding board {} at {}",
            row.board, row.property_ref
        );
        let file = Some(parent.to_string());
        if let Some(earlier) = &b.feed_from_file {
            if earlier != parent {
                return fault(
                    Column::FedFrom,
                    in_file_conflict(&what, &Some(earlier.clone()), &file),
                );
            }
            return Ok(());
        }
        match s.board_feed(board_id)? {
            Some((id, _)) if id == parent_id => {}
            Some((_, name)) if !replace => {
                return fault(Column::FedFrom, conflict(&what, &Some(name), &file));
            }
            stored => {
                if stored.is_some() {
                    eff.details_replaced += 1;
                }
                s.set_board_feed(board_id, parent_id)?;
                eff.wrote = true;
            }
        }
        b.feed_from_file = Some(parent.to_string());
        Ok(())
    }
}
