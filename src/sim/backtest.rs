//! The visit brief's band, backtested: each home's last visit is held out, the history before
//! it imported, and the brief asked for the held-out visit's date and recorded ambient (15 °C
//! where none was recorded, the brief's own default). Each held-out reading, as read, is then
//! compared with the band.
//!
//! Per quantity: the share of healthy readings inside the band, the median band width as a
//! share of the expected value, and the share of faults first appearing at the held-out visit
//! whose reading falls outside it. A reading is healthy when its circuit has no planted fault
//! at all (and, for Ze and Zs, the home's supply has none). A fault counts on a quantity when
//! it is one of the fault's quantities and the fault moves that reading (a ring joint counts on
//! its own leg only). An over-range insulation reading is inside when its bound is at or above
//! the band's low end, and left out when the band starts above it (it cannot be told).
//! Continuity readings of a held-out visit whose test leads were not nulled are wrong readings,
//! not a circuit's: they are kept out of the coverage and counted on their own.

use std::path::Path;

use serde::Serialize;

use super::faults::{Conductor, FaultSize, PlantedFault, RingLegName};
use super::noise::IrReading;
use super::{BOARD, Portfolio, SimRow, run};
use crate::analysis::{Settings, analyse_property};
use crate::error::Result;
use crate::onsite::{Band, Expectation, Field, brief};

/// The quantities the backtest reports, with the brief's fields behind each.
pub const QUANTITIES: [(&str, &[Field]); 6] = [
    ("r1r2", &[Field::R1r2]),
    ("r1rn", &[Field::R1rn]),
    ("zs", &[Field::Zs]),
    ("ze", &[Field::Ze]),
    ("ir_le", &[Field::IrLe]),
    ("ring", &[Field::RingR1, Field::RingRn, Field::RingR2]),
];

/// The backtest of one quantity.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct QuantityBacktest {
    pub quantity: &'static str,
    /// Healthy held-out readings with a band to compare with.
    pub healthy: usize,
    pub healthy_inside: usize,
    pub coverage: Option<f64>,
    /// Healthy readings the brief gave no band for.
    pub no_band: usize,
    /// Median (high − low) / expected, for bands with both ends.
    pub median_width: Option<f64>,
    /// Faults first appearing at the held-out visit, on this quantity, with a band.
    pub new_faults: usize,
    pub new_faults_outside: usize,
    pub new_outside_share: Option<f64>,
    /// Continuity readings of sound circuits taken with the leads not nulled at the held-out
    /// visit: kept out of `coverage` (the reading is wrong, not the circuit), and counted here
    /// with how many the band put outside (a band that catches them is doing its job).
    pub unnulled: usize,
    pub unnulled_outside: usize,
}

/// The backtest over the whole portfolio.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Backtest {
    pub homes: usize,
    pub quantities: Vec<QuantityBacktest>,
}

/// Whether a planted fault moves the reading of `field`.
fn moves(f: &PlantedFault, field: Field) -> bool {
    let q = match field {
        Field::RingR1 | Field::RingRn | Field::RingR2 => "ring",
        Field::R1r2 => "r1r2",
        Field::R1rn => "r1rn",
        Field::R2 => "r2",
        Field::Zs => "zs",
        Field::Ze => "ze",
        Field::IrLe => "ir_le",
        Field::IrLl => "ir_ll",
        Field::Rcd | Field::Rcd5x => "rcd",
    };
    if !f.quantities.contains(&q) {
        return false;
    }
    match (f.size, field) {
        (FaultSize::RingJoint { leg, .. }, _) => matches!(
            (leg, field),
            (RingLegName::R1, Field::RingR1)
                | (RingLegName::Rn, Field::RingRn)
                | (RingLegName::R2, Field::RingR2)
        ),
        (FaultSize::Step { conductor, .. } | FaultSize::Growing { conductor, .. }, _) => {
            match field {
                Field::R1r2 | Field::Zs => conductor != Conductor::Neutral,
                Field::R2 => conductor == Conductor::Cpc,
                Field::R1rn => conductor != Conductor::Cpc,
                _ => false,
            }
        }
        (FaultSize::Insulation { line_line_too, .. }, Field::IrLl) => line_line_too,
        _ => true,
    }
}

/// The held-out reading of a field, as read: (value, over range).
fn reading(r: &SimRow, field: Field) -> Option<(f64, bool)> {
    let ir = |x: IrReading| match x {
        IrReading::Value(v) => (v, false),
        IrReading::OverRange(v) => (v, true),
    };
    match field {
        Field::Ze => Some((r.ze_ohm, false)),
        Field::RingR1 => r.ring_r1_ohm.map(|v| (v, false)),
        Field::RingRn => r.ring_rn_ohm.map(|v| (v, false)),
        Field::RingR2 => r.ring_r2_ohm.map(|v| (v, false)),
        Field::R1r2 => Some((r.r1r2_ohm, false)),
        Field::R2 => r.r2_ohm.map(|v| (v, false)),
        Field::R1rn => r.r1rn_ohm.map(|v| (v, false)),
        Field::Zs => r.zs_ohm.map(|v| (v, false)),
        Field::IrLe => Some(ir(r.ir_le)),
        Field::IrLl => Some(ir(r.ir_ll)),
        Field::Rcd => r.rcd_ms.map(|v| (v, false)),
        Field::Rcd5x => r.rcd_5x_ms.map(|v| (v, false)),
    }
}

/// Inside the band: `Some(true/false)`, or `None` when it cannot be told (an over-range
/// reading below the band's low end).
fn inside(b: &Band, value: f64, over_range: bool) -> Option<bool> {
    let above_low = b.low.is_none_or(|l| value >= l - 1e-9);
    if over_range {
        return above_low.then_some(true);
    }
    Some(above_low && b.high.is_none_or(|h| value <= h + 1e-9))
}

fn width(e: &Expectation) -> Option<f64> {
    let b = e.band?;
    let x = e.expected.filter(|x| *x > 0.0)?;
    Some((b.high? - b.low?) / x)
}

#[derive(Default)]
struct Tally {
    healthy: usize,
    inside: usize,
    no_band: usize,
    widths: Vec<f64>,
    new_faults: usize,
    new_outside: usize,
    unnulled: usize,
    unnulled_outside: usize,
}

impl Tally {
    fn healthy(&mut self, e: Option<&Expectation>, value: f64, over: bool) {
        let Some(e) = e else {
            self.no_band += 1;
            return;
        };
        let Some(b) = e.band else {
            self.no_band += 1;
            return;
        };
        let Some(ok) = inside(&b, value, over) else {
            return;
        };
        self.healthy += 1;
        self.inside += usize::from(ok);
        if let Some(w) = width(e) {
            self.widths.push(w);
        }
    }

    fn unnulled(&mut self, e: Option<&Expectation>, value: f64) {
        let Some(b) = e.and_then(|e| e.band) else {
            return;
        };
        let Some(ok) = inside(&b, value, false) else {
            return;
        };
        self.unnulled += 1;
        self.unnulled_outside += usize::from(!ok);
    }

    fn new_fault(&mut self, e: Option<&Expectation>, value: f64, over: bool) {
        let Some(b) = e.and_then(|e| e.band) else {
            return;
        };
        let Some(ok) = inside(&b, value, over) else {
            return;
        };
        self.new_faults += 1;
        self.new_outside += usize::from(!ok);
    }

    fn finish(mut self, quantity: &'static str) -> QuantityBacktest {
        self.widths.sort_by(f64::total_cmp);
        let share = |a: usize, b: usize| (b > 0).then(|| a as f64 / b as f64);
        QuantityBacktest {
            quantity,
            healthy: self.healthy,
            healthy_inside: self.inside,
            coverage: share(self.inside, self.healthy),
            no_band: self.no_band,
            median_width: (!self.widths.is_empty()).then(|| {
                let n = self.widths.len();
                if n % 2 == 1 {
                    self.widths[n / 2]
                } else {
                    (self.widths[n / 2 - 1] + self.widths[n / 2]) / 2.0
                }
            }),
            new_faults: self.new_faults,
            new_faults_outside: self.new_outside,
            new_outside_share: share(self.new_outside, self.new_faults),
            unnulled: self.unnulled,
            unnulled_outside: self.unnulled_outside,
        }
    }
}

/// Hold out every home's last visit, import the rest into `dir/history.db`, and judge the
/// brief's band against the held-out readings.
pub fn backtest(p: &Portfolio, dir: &Path) -> Result<Backtest> {
    let (csv, db) = run::paths(dir, "history");
    run::write_visit_file(p, &csv, |r| !p.is_last_visit(r))?;
    let store = run::import_into_new(&csv, &db)?;
    let settings = Settings::load(&store, super::as_of())?;
    let instruments = store.instruments()?;
    let mut tallies: Vec<Tally> = QUANTITIES.iter().map(|_| Tally::default()).collect();
    let truth = &p.truth;
    let held: Vec<&SimRow> = p.rows.iter().filter(|r| p.is_last_visit(r)).collect();
    let mut by_home: Vec<Vec<&SimRow>> = vec![Vec::new(); truth.homes.len()];
    for r in held {
        by_home[r.home].push(r);
    }
    for (h, home) in truth.homes.iter().enumerate() {
        let Some(last) = home.visits.last() else {
            continue;
        };
        let analysis = analyse_property(&store, &home.property_ref, &settings)?;
        let temp = last
            .ambient_recorded
            .unwrap_or(crate::onsite::DEFAULT_TEMP_C);
        let b = brief(&analysis, last.date, Some(temp), &instruments);
        let Some(board) = b.boards.iter().find(|x| x.designation == BOARD) else {
            continue;
        };
        let supply = truth.supply_fault(h);
        let supply_healthy = supply.is_none();
        for row in &by_home[h] {
            let c = &home.circuits[row.circuit_index];
            let cb = board.circuits.iter().find(|x| x.number == c.number);
            let faults: Vec<&PlantedFault> = c.faults.iter().map(|&id| &truth.faults[id]).collect();
            for (qi, (_, fields)) in QUANTITIES.iter().enumerate() {
                for &field in *fields {
                    let Some((value, over)) = reading(row, field) else {
                        continue;
                    };
                    let e = if field == Field::Ze {
                        // Ze is the board's: judge it once, on the first circuit's row.
                        if row.circuit_index != 0 {
                            continue;
                        }
                        Some(&board.ze)
                    } else {
                        cb.and_then(|cb| cb.expectations.iter().find(|e| e.field == field))
                    };
                    let on_supply = matches!(field, Field::Ze | Field::Zs);
                    let candidates: Vec<&PlantedFault> = if field == Field::Ze {
                        supply.into_iter().collect()
                    } else {
                        faults.clone()
                    };
                    let healthy = if field == Field::Ze {
                        supply_healthy
                    } else {
                        faults.is_empty() && (supply_healthy || !on_supply)
                    };
                    let continuity = matches!(
                        field,
                        Field::R1r2 | Field::R1rn | Field::RingR1 | Field::RingRn | Field::RingR2
                    );
                    if healthy && continuity && last.lead_offset_ohm > 0.0 {
                        tallies[qi].unnulled(e, value);
                    } else if healthy {
                        tallies[qi].healthy(e, value, over);
                    } else if candidates
                        .iter()
                        .any(|f| f.new_at_last_visit() && moves(f, field))
                    {
                        tallies[qi].new_fault(e, value, over);
                    }
                }
            }
        }
    }
    Ok(Backtest {
        homes: truth.homes.len(),
        quantities: QUANTITIES
            .iter()
            .zip(tallies)
            .map(|((q, _), t)| t.finish(q))
            .collect(),
    })
}
