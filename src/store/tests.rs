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

/// Every statement in `store` that adds a property, board, circuit or visit gives it an
/// identifier (migration 011): the archive and the merge recognise rows by it. Read from the
/// source, so a new insert path that forgets it fails here rather than in a merge.
#[test]
fn every_insert_of_an_identified_row_sets_its_uuid() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src/store");
    let mut found = 0;
    for entry in std::fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        if path.file_name().is_some_and(|n| n == "tests.rs") {
            continue;
        }
        let text = std::fs::read_to_string(&path).unwrap();
        // Tests build old databases by hand; only the code above them counts.
        let code = text.split("#[cfg(test)]").next().unwrap();
        for table in ["property", "board", "circuit", "visit"] {
            let needle = format!("INSERT INTO {table} (");
            for (at, _) in code.match_indices(&needle) {
                let cols = &code[at + needle.len()..];
                let cols = &cols[..cols.find(')').unwrap()];
                assert!(
                    cols.split(',').any(|c| c.trim() == "uuid"),
                    "{}: INSERT INTO {table} ({cols}) sets no uuid",
                    path.display()
                );
                found += 1;
            }
        }
    }
    // The register commands, the import and the on-site visit: eight statements today.
    assert!(found >= 8, "found only {found} inserts");
}

/// The insert paths, run: every row they make carries a version 4 identifier.
#[test]
fn register_and_import_paths_give_every_row_a_uuid() {
    let s = Store::open_in_memory().unwrap();
    s.add_property(&NewProperty {
        reference: "P1".into(),
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
    let c = s
        .add_circuit("P1", "DB1", "1", &CircuitDetails::default())
        .unwrap();
    s.replace_circuit(
        c.id,
        None,
        None,
        &CircuitDetails::default(),
        day("2021-01-01"),
        ChangeKind::CircuitReplaced,
        None,
    )
    .unwrap();
    let p = s.property_id("P1").unwrap().unwrap();
    s.add_visit(
        p,
        &crate::store::NewVisit {
            date: Some(day("2022-02-02")),
            ..Default::default()
        },
        crate::model::VisitState::Pending,
    )
    .unwrap();
    let q = s.ingest_insert_property("P2", None).unwrap();
    let b = s.ingest_insert_board(q, "CU", None).unwrap();
    s.ingest_inserts()
        .unwrap()
        .circuit(b, "1", &CircuitDetails::default())
        .unwrap();
    let v = crate::store::IngestVisit {
        id: 0,
        inspector: None,
        instrument: None,
        ambient_c: None,
    };
    s.ingest_insert_visit(q, day("2023-03-03"), &v, None)
        .unwrap();
    for t in ["property", "board", "circuit", "visit"] {
        let (rows, good): (i64, i64) = s
            .conn
            .query_row(
                &format!(
                    "SELECT count(*), count(*) FILTER (WHERE length(uuid) = 16
                       AND substr(hex(uuid), 13, 1) = '4') FROM {t}"
                ),
                [],
                |r| Ok((r.get(0)?, r.get(1)?)),
            )
            .unwrap();
        assert!(rows >= 2, "{t}");
        assert_eq!(good, rows, "{t}");
    }
}
