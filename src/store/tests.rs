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
