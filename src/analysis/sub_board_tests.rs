//! Zs on a board fed from another: Zdb when recorded, else Ze at the origin plus the sub-main's
//! R1+R2, else a plain note that the sub-main is left out. Exact arithmetic, so clean numbers.

use super::tests::{d, settings};
use super::*;
use crate::model::{CircuitKind, Earthing, Readings, VisitState};
use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

/// CU1 at the origin (TN-C-S) feeding DB2, with circuit DB2/1: a 2.5/1.5 radial on a B32.
fn sub_board_home() -> Store {
    let s = Store::open_in_memory().unwrap();
    s.add_property(&NewProperty {
        reference: "S-1".into(),
        ..Default::default()
    })
    .unwrap();
    for (name, fed_from) in [("CU1", None), ("DB2", Some("CU1"))] {
        s.add_board(
            "S-1",
            &NewBoard {
                designation: name.into(),
                fed_from: fed_from.map(Into::into),
                earthing: Some(Earthing::TnCS),
                ..Default::default()
            },
        )
        .unwrap();
    }
    s.add_circuit(
        "S-1",
        "DB2",
        "1",
        &CircuitDetails {
            kind: Some(CircuitKind::Radial),
            live_mm2: Some(2.5),
            cpc_mm2: Some(1.5),
            device: Some("B32".parse().unwrap()),
            insulation: Some(crate::model::Insulation::Thermoplastic70),
            ..Default::default()
        },
    )
    .unwrap();
    s
}

/// One visit at 20 °C (no temperature correction): Ze 0.28 Ω at the origin, R1+R2 0.78 Ω on
/// DB2/1 and Zs not measured, with Zdb and the sub-main's R1+R2 at DB2 as given.
fn analysed(zdb: Option<f64>, submain: Option<f64>) -> PropertyAnalysis {
    let s = sub_board_home();
    let p = s.property("S-1").unwrap();
    let v = s
        .add_visit(
            p.id,
            &NewVisit {
                date: Some(d(2025, 3, 1)),
                ambient_c: Some(20.0),
                ze_ohm: Some(0.28),
                ..Default::default()
            },
            VisitState::Complete,
        )
        .unwrap();
    let db2 = s.board(p.id, "S-1", "DB2").unwrap();
    if zdb.is_some() || submain.is_some() {
        s.set_board_submain(v.id, db2.id, zdb, submain).unwrap();
    }
    let c = s.find_circuit("S-1", "DB2", "1").unwrap();
    s.put_test_record(
        v.id,
        c.id,
        &Readings {
            r1r2_ohm: Some(0.78),
            ..Default::default()
        },
    )
    .unwrap();
    analyse(&s.history(p.id).unwrap(), &settings())
}

fn zs_flag(a: &PropertyAnalysis) -> Option<&Flag> {
    a.flags.iter().find(|f| f.quantity == "zs")
}

#[test]
fn a_sub_board_takes_zdb_when_recorded() {
    // B32: BS 7671:2018+A2:2022 Table 41.3 1.37 Ω; measured-value limit at 20 °C for 70 °C
    // thermoplastic 1.37 / 1.20 = 1.141 → 1.14 Ω (rounded down; On-Site Guide Appendix I
    // multiplier, from memory). Zs = Zdb 0.41 + R1+R2 0.78 = 1.19 Ω > 1.14 Ω. Taking the
    // origin's Ze instead would give 0.28 + 0.78 = 1.06 Ω, inside the limit: understated.
    let a = analysed(Some(0.41), None);
    let f = zs_flag(&a).expect("a Zs flag");
    assert_eq!(f.severity, "exceeds");
    assert_eq!(f.limit, Some(1.14));
    assert!((f.last_value - 1.19).abs() < 1e-9, "{}", f.last_value);
    assert!(
        f.reason
            .contains("Zs here is Zdb 0.41 Ω measured at DB2 + R1+R2 0.78 Ω = 1.19 Ω"),
        "{}",
        f.reason
    );
}

#[test]
fn without_zdb_the_sub_main_is_added_to_ze_at_the_origin() {
    // Ze 0.28 + sub-main R1+R2 0.10 + R1+R2 0.78 = 1.16 Ω > 1.14 Ω (limit as above).
    let a = analysed(None, Some(0.10));
    let f = zs_flag(&a).expect("a Zs flag");
    assert_eq!(f.severity, "exceeds");
    assert!((f.last_value - 1.16).abs() < 1e-9, "{}", f.last_value);
    assert!(
        f.reason.contains(
            "Zs here is Ze 0.28 Ω at the origin + sub-main R1+R2 0.10 Ω + R1+R2 0.78 Ω = 1.16 Ω"
        ),
        "{}",
        f.reason
    );
    // Zdb, when recorded as well, decides: 0.30 + 0.78 = 1.08 Ω, inside 1.14 Ω.
    assert!(zs_flag(&analysed(Some(0.30), Some(0.10))).is_none());
}

#[test]
fn with_neither_zs_says_it_leaves_out_the_sub_main() {
    // Only Ze 0.28 at the origin + R1+R2 0.78 = 1.06 Ω: inside 1.14 Ω, so no flag, but the
    // circuit says plainly that the figure leaves the sub-main out.
    let a = analysed(None, None);
    assert!(zs_flag(&a).is_none(), "{:#?}", a.flags);
    let c = &a.circuits[0];
    assert!(
        c.notes.iter().any(|n| n
            == "Zs here leaves out the sub-main: no Zdb and no sub-main R1+R2 recorded at DB2 on 2025-03-01, so it is Ze 0.28 Ω at the origin + R1+R2 0.78 Ω = 1.06 Ω, and the true Zs is higher."),
        "{:#?}",
        c.notes
    );
    // With a Zdb, no such note.
    assert!(
        !analysed(Some(0.30), None).circuits[0]
            .notes
            .iter()
            .any(|n| n.contains("leaves out"))
    );
}

#[test]
fn on_noisy_readings_the_sub_board_rule_flags_the_circuit_past_its_limit_only() {
    // Five visits with ordinary site noise (R1+R2 a few hundredths apart, Zdb moving with the
    // supply by about 10 %, ambients 9–21 °C): DB2/1 (B32, limit 1.14 Ω at 20 °C, Table 41.3
    // 1.37 / 1.20) with R1+R2 about 0.55 Ω and Zdb about 0.40 Ω stays well inside; DB2/2
    // (B32) with R1+R2 about 0.80 Ω is past it at every visit once Zdb is counted
    // (0.40 + 0.80 = 1.20 Ω), though Ze at the origin (about 0.25 Ω) would have kept it inside.
    let s = sub_board_home();
    s.add_circuit(
        "S-1",
        "DB2",
        "2",
        &CircuitDetails {
            kind: Some(CircuitKind::Radial),
            live_mm2: Some(2.5),
            cpc_mm2: Some(1.5),
            device: Some("B32".parse().unwrap()),
            insulation: Some(crate::model::Insulation::Thermoplastic70),
            ..Default::default()
        },
    )
    .unwrap();
    let p = s.property("S-1").unwrap();
    let db2 = s.board(p.id, "S-1", "DB2").unwrap();
    let c1 = s.find_circuit("S-1", "DB2", "1").unwrap();
    let c2 = s.find_circuit("S-1", "DB2", "2").unwrap();
    // (date, ambient, Ze at the origin, Zdb, R1+R2 of DB2/1, of DB2/2), as read.
    for (date, t, ze, zdb, a, b) in [
        (d(2006, 2, 10), 9.0, 0.24, 0.38, 0.53, 0.77),
        (d(2011, 6, 3), 19.0, 0.27, 0.43, 0.56, 0.81),
        (d(2015, 11, 21), 12.0, 0.23, 0.39, 0.54, 0.79),
        (d(2020, 7, 14), 21.0, 0.26, 0.42, 0.57, 0.82),
        (d(2025, 3, 1), 14.0, 0.25, 0.40, 0.55, 0.80),
    ] {
        let v = s
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(date),
                    ambient_c: Some(t),
                    ze_ohm: Some(ze),
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
        s.set_board_submain(v.id, db2.id, Some(zdb), None).unwrap();
        for (c, r) in [(&c1, a), (&c2, b)] {
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
    }
    let a = analyse(&s.history(p.id).unwrap(), &settings());
    let zs: Vec<&Flag> = a.flags.iter().filter(|f| f.quantity == "zs").collect();
    assert_eq!(zs.len(), 1, "{zs:#?}");
    assert_eq!(zs[0].circuit.as_deref(), Some("2"));
    assert_eq!(zs[0].severity, "exceeds");
    // At 14 °C the circuit's part 0.80 Ω is 0.80 / (1 + 0.00393 × (14 − 20)) = 0.819 Ω at
    // 20 °C (IEC 60228 α), with Zdb 0.40 Ω as measured: 1.22 Ω against 1.14 Ω.
    assert!(
        (zs[0].last_value - 1.219).abs() < 0.002,
        "{}",
        zs[0].last_value
    );
    assert!(
        zs[0]
            .reason
            .contains("Zs here is Zdb 0.40 Ω measured at DB2 + R1+R2 0.80 Ω = 1.20 Ω"),
        "{}",
        zs[0].reason
    );
    // No other row on the sub-board: the scatter stays inside the noise floors.
    assert!(
        a.flags.iter().all(|f| f.circuit.as_deref() != Some("1")),
        "{:#?}",
        a.flags
    );
}
