//! A 30-circuit home for the print tests, made from the simulator's invented portfolio
//! (`ohmtrail::sim`: site noise and planted faults): the circuits of several simulated homes
//! gathered onto one property's visits, numbered 1 to 30.

use std::path::{Path, PathBuf};

use ohmtrail::sim::{self, SimConfig, SimRow};

pub const THIRTY: usize = 30;

/// Build the home in a new database in `dir`; returns the database and the reference.
pub fn thirty_circuit_home(dir: &Path) -> (PathBuf, String) {
    let p = sim::generate(&SimConfig::new(12, 5, 1.0));
    let base_home = p.rows[0].home;
    let base: Vec<&SimRow> = p.rows.iter().filter(|r| r.home == base_home).collect();
    // The base home's visits, by index: every row taken onto the property takes its visit's
    // date, ambient, Ze, inspector and instrument.
    let visit = |k: usize| base.iter().find(|r| r.visit == k).copied();
    let mut rows: Vec<SimRow> = Vec::new();
    let mut next_number = 0usize;
    let mut homes: Vec<usize> = p.rows.iter().map(|r| r.home).collect();
    homes.dedup();
    for h in homes {
        if next_number >= THIRTY {
            break;
        }
        let mut circuits: Vec<usize> = p
            .rows
            .iter()
            .filter(|r| r.home == h)
            .map(|r| r.circuit_index)
            .collect();
        circuits.sort_unstable();
        circuits.dedup();
        for c in circuits {
            if next_number >= THIRTY {
                break;
            }
            next_number += 1;
            for r in p
                .rows
                .iter()
                .filter(|r| r.home == h && r.circuit_index == c)
            {
                let Some(v) = visit(r.visit) else {
                    continue;
                };
                let mut row = r.clone();
                row.home = v.home;
                row.property_ref = v.property_ref.clone();
                row.address = v.address.clone();
                row.earthing = v.earthing;
                row.visit_date = v.visit_date;
                row.inspector = v.inspector.clone();
                row.instrument = v.instrument.clone();
                row.ambient_c = v.ambient_c;
                row.ze_ohm = v.ze_ohm;
                row.circuit = next_number.to_string();
                rows.push(row);
            }
        }
    }
    assert_eq!(next_number, THIRTY, "the simulated homes hold 30 circuits");
    let reference = base[0].property_ref.clone();
    let merged = sim::Portfolio {
        config: p.config,
        rows,
        truth: p.truth,
    };
    let (csv, db) = sim::run::paths(dir, "thirty");
    sim::run::write_visit_file(&merged, &csv, |_| true).unwrap();
    sim::run::import_into_new(&csv, &db).unwrap();
    (db, reference)
}
