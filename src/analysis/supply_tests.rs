//! The earth electrode's Ra and the main bonding, as recorded visit by visit.

use chrono::NaiveDate;

use super::tests::{d, settings};
use super::*;
use crate::model::{Bonding, CircuitKind, Earthing, Readings, SupplyRecord, VisitState};
use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

/// A home on `earthing` with one RCD-protected radial, and one visit per entry with the given
/// supply record (R1+R2 read with a hundredth or so of noise).
fn home(earthing: Earthing, visits: &[(NaiveDate, SupplyRecord)]) -> PropertyAnalysis {
    let s = Store::open_in_memory().unwrap();
    s.add_property(&NewProperty {
        reference: "E-1".into(),
        ..Default::default()
    })
    .unwrap();
    s.add_board(
        "E-1",
        &NewBoard {
            designation: "CU1".into(),
            earthing: Some(earthing),
            ..Default::default()
        },
    )
    .unwrap();
    let c = s
        .add_circuit(
            "E-1",
            "CU1",
            "1",
            &CircuitDetails {
                kind: Some(CircuitKind::Radial),
                live_mm2: Some(2.5),
                cpc_mm2: Some(1.5),
                device: Some("B16".parse().unwrap()),
                rcd_ma: Some(30),
                ..Default::default()
            },
        )
        .unwrap();
    let p = s.property("E-1").unwrap();
    for (i, (date, supply)) in visits.iter().enumerate() {
        let ze = if earthing == Earthing::Tt {
            0.3 + supply.ra_ohm.unwrap_or(60.0)
        } else {
            0.21
        };
        let v = s
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(*date),
                    ambient_c: Some(15.0),
                    ze_ohm: Some(ze),
                    supply: supply.clone(),
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
        let r = 0.48 + [0.0, 0.01, -0.01][i % 3];
        s.put_test_record(
            v.id,
            c.id,
            &Readings {
                r1r2_ohm: Some(r),
                ..Default::default()
            },
        )
        .unwrap();
    }
    analyse(&s.history(p.id).unwrap(), &settings())
}

fn ra(ohm: f64) -> SupplyRecord {
    SupplyRecord {
        ra_ohm: Some(ohm),
        ..Default::default()
    }
}

#[test]
fn an_electrode_swinging_with_the_seasons_stays_quiet() {
    // Ra 61 Ω in a wet winter, 108 Ω in a dry summer, and back, with the odd ohm of
    // instrument scatter: an electrode's seasonal swing (common practice, no source), below
    // the 200 Ω above which it may not be stable (common practice, the team's reference sheet).
    let a = home(
        Earthing::Tt,
        &[
            (d(2010, 1, 20), ra(61.0)),
            (d(2014, 7, 28), ra(108.0)),
            (d(2018, 2, 11), ra(66.0)),
            (d(2021, 8, 5), ra(101.0)),
            (d(2025, 1, 15), ra(57.0)),
        ],
    );
    assert!(a.electrode.is_some());
    assert!(
        !a.flags.iter().any(|f| f.quantity == "ra"),
        "{:#?}",
        a.flags
    );
}

#[test]
fn an_electrode_rising_beyond_the_seasons_is_flagged_on_ra() {
    // 58 → 77 → 149 → 410 Ω: a rise far beyond seasonal swing, past 200 Ω.
    let a = home(
        Earthing::Tt,
        &[
            (d(2012, 1, 20), ra(58.0)),
            (d(2016, 7, 28), ra(77.0)),
            (d(2020, 2, 11), ra(149.0)),
            (d(2024, 8, 5), ra(410.0)),
        ],
    );
    let s = a.electrode.as_ref().unwrap();
    let kinds: Vec<_> = s.report.findings.iter().map(|f| f.kind).collect();
    assert!(
        kinds.contains(&crate::trend::FindingKind::Investigate),
        "{kinds:?}"
    );
    // One supply row: Ze and Ra findings share the origin's row.
    let supply_rows: Vec<&Flag> = a.flags.iter().filter(|f| f.circuit.is_none()).collect();
    assert_eq!(supply_rows.len(), 1, "{supply_rows:#?}");
    let row = supply_rows[0];
    assert!(row.findings.iter().any(|f| f.quantity == "ra"), "{row:#?}");
    let investigate = row
        .findings
        .iter()
        .find(|f| f.quantity == "ra" && f.kind == "investigate")
        .unwrap();
    assert!(investigate.reason.contains("410"), "{}", investigate.reason);
    assert!(investigate.reason.contains("200"), "{}", investigate.reason);
}

fn bonding(csa: Option<f64>, gas: Option<Bonding>) -> SupplyRecord {
    SupplyRecord {
        bonding_csa_mm2: csa,
        bonding_water: Some(Bonding::Yes),
        bonding_gas: gas,
        ..Default::default()
    }
}

#[test]
fn main_bonding_below_the_minimum_is_a_row() {
    // PME: 10 mm² for a supply neutral up to 35 mm² (BS 7671 Table 54.8, from memory). A
    // 6 mm² bond is below it: 10 / 6 = 166.7 % of the csa, as for a minimum.
    let a = home(Earthing::TnCS, &[(d(2025, 3, 1), bonding(Some(6.0), None))]);
    let row = a
        .flags
        .iter()
        .find(|f| f.quantity == "bonding")
        .expect("a bonding row");
    assert_eq!((row.severity, row.kind), ("exceeds", "exceeds"));
    assert_eq!((row.last_value, row.limit), (6.0, Some(10.0)));
    assert_eq!(row.margin_used_pct, Some(166.7));
    assert!(row.circuit.is_none());
    assert!(
        row.reason.starts_with(
            "main protective bonding was 6 mm² at the visit of 2025-03-01, below the minimum of 10 mm² for a TN-C-S supply (BS 7671:2018+A2:2022 Table 54.8, from memory;"
        ),
        "{}",
        row.reason
    );
    // 10 mm² on PME, and 6 mm² on TN-S (Regulation 544.1.1: not less than 6 mm², from
    // memory), are not below.
    let ok = home(
        Earthing::TnCS,
        &[(d(2025, 3, 1), bonding(Some(10.0), None))],
    );
    assert!(!ok.flags.iter().any(|f| f.quantity == "bonding"));
    let tns = home(Earthing::TnS, &[(d(2025, 3, 1), bonding(Some(6.0), None))]);
    assert!(!tns.flags.iter().any(|f| f.quantity == "bonding"));
    let tns = home(Earthing::TnS, &[(d(2025, 3, 1), bonding(Some(4.0), None))]);
    let row = tns.flags.iter().find(|f| f.quantity == "bonding").unwrap();
    assert_eq!(row.limit, Some(6.0));
    // The latest visit that recorded the csa decides: replaced with 10 mm² since.
    let fixed = home(
        Earthing::TnCS,
        &[
            (d(2020, 3, 1), bonding(Some(6.0), None)),
            (d(2025, 3, 1), bonding(Some(10.0), None)),
        ],
    );
    assert!(!fixed.flags.iter().any(|f| f.quantity == "bonding"));
}

#[test]
fn bonding_not_confirmed_is_a_note_until_a_later_visit_confirms_it() {
    // A bond whose continuity was not confirmed is noted (common practice, no source); the
    // tool assigns it no code.
    let a = home(
        Earthing::TnCS,
        &[(d(2025, 3, 1), bonding(Some(10.0), Some(Bonding::No)))],
    );
    assert_eq!(
        a.supply_notes,
        [
            "main bonding to gas: continuity not confirmed at the visit of 2025-03-01, as recorded by the inspector; the bond should be found, connected and tested"
        ]
    );
    assert!(!a.flags.iter().any(|f| f.quantity == "bonding"));
    let later = home(
        Earthing::TnCS,
        &[
            (d(2020, 3, 1), bonding(Some(10.0), Some(Bonding::No))),
            (d(2025, 3, 1), bonding(Some(10.0), Some(Bonding::Yes))),
        ],
    );
    assert!(later.supply_notes.is_empty(), "{:?}", later.supply_notes);
    // No such service is not a fault.
    let none = home(
        Earthing::TnCS,
        &[(d(2025, 3, 1), bonding(Some(10.0), Some(Bonding::None)))],
    );
    assert!(none.supply_notes.is_empty());
}
