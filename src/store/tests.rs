use super::*;

fn store_with_property() -> Store {
    let s = Store::open_in_memory().unwrap();
    s.add_property(&NewProperty {
        reference: "P1".into(),
        client: Some("Agent".into()),
        ..Default::default()
    })
    .unwrap();
    s.add_board(
        "P1",
        &NewBoard {
            designation: "DB1".into(),
            ..Default::default()
        },
    )
    .unwrap();
    s
}

/// The case-blind lookup is a search of its own index, not a scan of every property: the
/// import runs it once for every property a file names.
#[test]
fn the_reference_lookup_searches_its_index() {
    let s = store_with_property();
    let mut st = s
        .conn
        .prepare(&format!("EXPLAIN QUERY PLAN {PROPERTY_REF_SQL}"))
        .unwrap();
    let plan: Vec<String> = st
        .query_map(["p1"], |r| r.get(3))
        .unwrap()
        .collect::<rusqlite::Result<_>>()
        .unwrap();
    assert!(
        plan.iter()
            .any(|p| p.starts_with("SEARCH") && p.contains("property_ref_nocase")),
        "{plan:?}"
    );
    assert!(!plan.iter().any(|p| p.starts_with("SCAN")), "{plan:?}");
}

#[test]
fn references_match_without_regard_to_case_and_an_exact_twin_wins() {
    let s = store_with_property();
    assert_eq!(s.property("p1").unwrap().reference, "P1");
    let err = s
        .add_property(&NewProperty {
            reference: "p1".into(),
            ..Default::default()
        })
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("\"P1\"") && err.contains("only in case"),
        "{err}"
    );
    // A database made before such pairs were refused may hold both: the exact spelling
    // finds its own, and a third spelling is refused as ambiguous, naming both.
    s.conn
        .execute("INSERT INTO property (ref) VALUES ('qa-1'), ('QA-1')", [])
        .unwrap();
    assert_eq!(s.property("qa-1").unwrap().reference, "qa-1");
    assert_eq!(s.property("QA-1").unwrap().reference, "QA-1");
    let err = s.property("Qa-1").unwrap_err().to_string();
    assert!(
        err.contains("\"QA-1\" and \"qa-1\"") && err.contains("only in case"),
        "{err}"
    );
}

fn day(s: &str) -> NaiveDate {
    s.parse().unwrap()
}

#[test]
fn duplicate_circuit_number_is_refused_and_nothing_written() {
    let s = store_with_property();
    s.add_circuit("P1", "DB1", "1", &CircuitDetails::default())
        .unwrap();
    let err = s
        .add_circuit("P1", "DB1", "1", &CircuitDetails::default())
        .unwrap_err();
    assert!(err.to_string().contains("already has a circuit 1"), "{err}");
    let board = s.board_opt(1, "DB1").unwrap().unwrap();
    assert_eq!(s.circuits(board.id).unwrap().len(), 1);
}

#[test]
fn edit_records_each_changed_field() {
    let s = store_with_property();
    let c = s
        .add_circuit(
            "P1",
            "DB1",
            "3",
            &CircuitDetails {
                device: Some("B32".parse().unwrap()),
                live_mm2: Some(2.5),
                ..Default::default()
            },
        )
        .unwrap();
    let changes = s
        .edit_circuit(
            c.id,
            &CircuitDetails {
                device: Some("B20".parse().unwrap()),
                live_mm2: Some(2.5),
                ..Default::default()
            },
            day("2024-03-01"),
            None,
            None,
            None,
        )
        .unwrap();
    assert_eq!(changes.len(), 1);
    assert_eq!(changes[0].kind, ChangeKind::DeviceChanged);
    assert_eq!(changes[0].old_value.as_deref(), Some("B32"));
    assert_eq!(changes[0].new_value.as_deref(), Some("B20"));
    assert_eq!(
        s.circuit_by_id(c.id).unwrap().device.unwrap().to_string(),
        "B20"
    );
}

#[test]
fn replace_keeps_lineage_across_boards() {
    let s = store_with_property();
    s.add_board(
        "P1",
        &NewBoard {
            designation: "DB2".into(),
            ..Default::default()
        },
    )
    .unwrap();
    let old = s
        .add_circuit("P1", "DB1", "4", &CircuitDetails::default())
        .unwrap();
    let new = s
        .replace_circuit(
            old.id,
            Some("DB2"),
            Some("7"),
            &CircuitDetails::default(),
            day("2020-01-01"),
            ChangeKind::BoardReplaced,
            None,
        )
        .unwrap();
    // The lineage link: the new circuit names the one it replaced.
    assert_eq!(new.replaces, Some(old.id));
    assert_eq!(s.circuit_by_id(new.id).unwrap().replaces, Some(old.id));
    assert_eq!(s.circuit_by_id(old.id).unwrap().status, Status::Retired);
    // The number is free again on the old board.
    s.add_circuit("P1", "DB1", "4", &CircuitDetails::default())
        .unwrap();
}

#[test]
fn atomic_rolls_back_on_error() {
    let s = Store::open_in_memory().unwrap();
    let r: Result<()> = s.atomic(|s| {
        s.add_property(&NewProperty {
            reference: "X".into(),
            ..Default::default()
        })?;
        Err(Error::invalid("stop"))
    });
    assert!(r.is_err());
    assert!(s.property_id("X").unwrap().is_none());
}

#[test]
fn the_schedule_attributes_are_kept_and_their_edits_are_dated_changes() {
    let s = store_with_property();
    let details = CircuitDetails {
        wiring_type: Some("A".into()),
        ref_method: Some(RefMethod::M101),
        points: Some(8),
        breaking_ka: Some(6.0),
        afdd: Some(false),
        rcd_id: Some("RCD1".into()),
        ..Default::default()
    };
    let c = s.add_circuit("P1", "DB1", "1", &details).unwrap();
    assert_eq!(c.wiring_type.as_deref(), Some("A"));
    assert_eq!(c.ref_method, Some(RefMethod::M101));
    assert_eq!(
        (c.points, c.breaking_ka, c.afdd),
        (Some(8), Some(6.0), Some(false))
    );
    assert_eq!(c.rcd_id.as_deref(), Some("RCD1"));
    // A second circuit naming the RCD in another case shares the one device.
    let c2 = s
        .add_circuit(
            "P1",
            "DB1",
            "2",
            &CircuitDetails {
                rcd_id: Some("rcd1".into()),
                ..Default::default()
            },
        )
        .unwrap();
    assert_eq!(c2.rcd_id.as_deref(), Some("RCD1"));
    let devices: i64 = s
        .conn
        .query_row("SELECT count(*) FROM rcd_device", [], |r| r.get(0))
        .unwrap();
    assert_eq!(devices, 1);

    let date = NaiveDate::from_ymd_opt(2025, 3, 1).unwrap();
    let changes = s
        .edit_circuit(
            c.id,
            &CircuitDetails {
                points: Some(9),
                afdd: Some(true),
                rcd_id: Some("rcd1".into()),
                breaking_ka: Some(10.0),
                ..Default::default()
            },
            date,
            None,
            None,
            None,
        )
        .unwrap();
    type Change<'a> = (
        Option<&'a str>,
        Option<&'a str>,
        Option<&'a str>,
        ChangeKind,
    );
    let got: Vec<Change> = changes
        .iter()
        .map(|ch| {
            (
                ch.field.as_deref(),
                ch.old_value.as_deref(),
                ch.new_value.as_deref(),
                ch.kind,
            )
        })
        .collect();
    // The same RCD in another case is no change.
    assert_eq!(
        got,
        [
            (
                Some("points"),
                Some("8"),
                Some("9"),
                ChangeKind::RegisterCorrected
            ),
            (
                Some("breaking_ka"),
                Some("6"),
                Some("10"),
                ChangeKind::DeviceChanged
            ),
            (
                Some("afdd"),
                Some("no"),
                Some("yes"),
                ChangeKind::DeviceChanged
            ),
        ]
    );
    let moved = s
        .edit_circuit(
            c.id,
            &CircuitDetails {
                rcd_id: Some("RCD2".into()),
                ..Default::default()
            },
            date,
            None,
            None,
            None,
        )
        .unwrap();
    assert_eq!(moved[0].old_value.as_deref(), Some("RCD1"));
    assert_eq!(moved[0].new_value.as_deref(), Some("RCD2"));
    let c = s.circuit_by_id(c.id).unwrap();
    assert_eq!(
        (c.points, c.afdd, c.rcd_id.as_deref()),
        (Some(9), Some(true), Some("RCD2"))
    );

    // Nonsense is refused before anything is written.
    for bad in [
        CircuitDetails {
            points: Some(5000),
            ..Default::default()
        },
        CircuitDetails {
            breaking_ka: Some(0.0),
            ..Default::default()
        },
        CircuitDetails {
            rcd_id: Some(" ".into()),
            ..Default::default()
        },
        CircuitDetails {
            wiring_type: Some("x".repeat(41)),
            ..Default::default()
        },
    ] {
        assert!(s.add_circuit("P1", "DB1", "9", &bad).is_err(), "{bad:?}");
    }
    assert!(
        s.circuit_opt(s.board(1, "P1", "DB1").unwrap().id, "9")
            .unwrap()
            .is_none()
    );
}

#[test]
fn the_visit_facts_are_kept_on_the_test_record() {
    use crate::model::{ButtonTest, Polarity, VisitState};
    let s = store_with_property();
    let c = s
        .add_circuit("P1", "DB1", "1", &CircuitDetails::default())
        .unwrap();
    let v = s
        .add_visit(
            1,
            &NewVisit {
                date: NaiveDate::from_ymd_opt(2025, 3, 1),
                ..Default::default()
            },
            VisitState::Complete,
        )
        .unwrap();
    let r = crate::model::Readings {
        polarity: Some(Polarity::Incorrect),
        ir_test_v: Some(250),
        rcd_button: Some(ButtonTest::Failed),
        ..Default::default()
    };
    s.put_test_record(v.id, c.id, &r).unwrap();
    assert_eq!(s.test_record(v.id, c.id).unwrap().unwrap().readings, r);
    // Replaced, the facts are replaced with the readings.
    let r2 = crate::model::Readings {
        polarity: Some(Polarity::Correct),
        ..Default::default()
    };
    s.put_test_record(v.id, c.id, &r2).unwrap();
    assert_eq!(s.test_record(v.id, c.id).unwrap().unwrap().readings, r2);
    // A test voltage Table 64 does not have is refused (BS 7671:2018 Table 64).
    let bad = crate::model::Readings {
        ir_test_v: Some(400),
        ..Default::default()
    };
    let e = s.put_test_record(v.id, c.id, &bad).unwrap_err().to_string();
    assert!(e.contains("250, 500 or 1000"), "{e}");
}

#[test]
fn the_column_counts_match_the_column_lists() {
    // Streams find the property id just after these lists: a miscount reads the wrong column.
    let count = |cols: &str| {
        let mut depth = 0;
        1 + cols
            .chars()
            .filter(|&c| {
                match c {
                    '(' => depth += 1,
                    ')' => depth -= 1,
                    _ => {}
                }
                c == ',' && depth == 0
            })
            .count()
    };
    assert_eq!(count(Store::CIRCUIT_COLS), Store::CIRCUIT_COL_COUNT);
    assert_eq!(count(Store::RECORD_COLS), Store::RECORD_COL_COUNT);
}
