//! Recorded facts (polarity, RCD test button), the RCD the register names, and the insulation
//! test voltage, on invented histories with ordinary noise in the readings beside them.

use super::tests::{d, flags_of, home, loops, settings, visit};
use super::*;
use crate::model::{ButtonTest, CircuitKind, Megohms, Polarity, Readings};
use crate::store::CircuitDetails;

/// Noisy loop readings for visit `i`: a few hundredths apart, as a site gives them.
fn noisy(i: usize) -> Readings {
    let wobble = [0.0, 0.02, -0.01, 0.03, 0.01][i % 5];
    loops(0.46 + wobble, 0.35 + wobble * 0.8)
}

#[test]
fn polarity_recorded_incorrect_at_the_latest_visit_is_a_finding_a_later_correct_clears() {
    // A recorded fact (BS 7671:2018 Regulation 643.6, from memory for the number): no noise
    // floor, the latest visit that recorded it decides.
    let s = home();
    let dates = [d(2016, 4, 2), d(2019, 5, 3), d(2022, 6, 4)];
    let recorded = [Some(Polarity::Correct), Some(Polarity::Incorrect), None];
    for (i, (&date, p)) in dates.iter().zip(recorded).enumerate() {
        let r = Readings {
            polarity: p,
            ..noisy(i)
        };
        visit(
            &s,
            date,
            Some(11.0 + 4.0 * i as f64),
            0.21,
            &[("CU1", "1", r)],
        );
    }
    // The last visit did not record polarity: the 2019 record stands.
    let rows = flags_of(&s);
    let f = rows
        .iter()
        .flat_map(|r| &r.findings)
        .find(|f| f.quantity == "polarity")
        .expect("a polarity finding");
    assert_eq!(f.kind, "polarity_incorrect");
    assert_eq!(f.severity, "exceeds");
    assert_eq!(f.last_date, d(2019, 5, 3));
    assert_eq!(
        f.reason,
        "Polarity was recorded incorrect at the visit of 2019-05-03, the latest visit to record it"
    );
    let a = analyse_property(&s, "T-1", &settings()).unwrap();
    assert_eq!(a.counts.exceeds, 1, "{:?}", a.counts);

    // Recorded correct at a later visit, it is cleared.
    visit(
        &s,
        d(2024, 7, 5),
        Some(16.0),
        0.22,
        &[(
            "CU1",
            "1",
            Readings {
                polarity: Some(Polarity::Correct),
                ..noisy(3)
            },
        )],
    );
    assert!(
        !flags_of(&s)
            .iter()
            .flat_map(|r| &r.findings)
            .any(|f| f.quantity == "polarity")
    );
}

#[test]
fn a_failed_test_button_is_a_finding_until_it_operates() {
    // Common practice, no source: an RCD that does not trip on its own test button is reported.
    let s = home();
    for (i, (date, b)) in [
        (d(2018, 3, 1), Some(ButtonTest::Operates)),
        (d(2021, 3, 9), Some(ButtonTest::Failed)),
    ]
    .into_iter()
    .enumerate()
    {
        let r = Readings {
            rcd_ms: Some(24.0 + 3.0 * i as f64),
            rcd_button: b,
            ..noisy(i)
        };
        visit(&s, date, Some(13.0), 0.2, &[("CU1", "1", r)]);
    }
    let f = flags_of(&s)
        .into_iter()
        .flat_map(|r| r.findings)
        .find(|f| f.quantity == "rcd_button")
        .expect("a test button finding");
    assert_eq!(f.kind, "button_failed");
    assert_eq!(f.last_date, d(2021, 3, 9));
    assert!(f.reason.contains("2021-03-09"), "{}", f.reason);
    visit(
        &s,
        d(2023, 3, 1),
        Some(9.0),
        0.21,
        &[(
            "CU1",
            "1",
            Readings {
                rcd_ms: Some(26.0),
                rcd_button: Some(ButtonTest::Operates),
                ..noisy(2)
            },
        )],
    );
    assert!(
        !flags_of(&s)
            .iter()
            .flat_map(|r| &r.findings)
            .any(|f| f.quantity == "rcd_button")
    );
}

/// Circuits 2, 3 and 4 on the RCD the register calls RCD1; circuit 1 (of `home`) on none.
fn with_rcd1(s: &crate::store::Store) {
    for n in ["2", "3", "4"] {
        s.add_circuit(
            "T-1",
            "CU1",
            n,
            &CircuitDetails {
                kind: Some(CircuitKind::Radial),
                live_mm2: Some(1.5),
                cpc_mm2: Some(1.0),
                device: Some("B6".parse().unwrap()),
                rcd_ma: Some(30),
                rcd_id: Some("RCD1".into()),
                ..Default::default()
            },
        )
        .unwrap();
    }
}

#[test]
fn an_rcd_the_register_names_is_one_series_judged_once() {
    // BS 7671:2018+A2:2022 Regulation 643.8 and Appendix 3: a general type RCD trips within
    // 300 ms at IΔn. RCD1 was tested from a different circuit at each visit, so each visit's
    // time is recorded against one of its circuits only, and the times differ from one
    // another by a few ms; the last, 342 ms, is past the maximum.
    let s = home();
    with_rcd1(&s);
    let times = [("2", 23.0), ("3", 26.0), ("4", 24.0), ("3", 342.0)];
    for (i, (n, ms)) in times.into_iter().enumerate() {
        let date = d(2014 + 3 * i as i32, 5, 10 + i as u32);
        let mut rows = vec![("CU1", "1", noisy(i))];
        for other in ["2", "3", "4"] {
            let mut r = noisy(i + 1);
            if other == n {
                r.rcd_ms = Some(ms);
            }
            if i == 3 && other == "4" {
                r.rcd_button = Some(ButtonTest::Failed);
            }
            rows.push(("CU1", other, r));
        }
        let rows: Vec<(&str, &str, Readings)> = rows;
        visit(&s, date, Some(12.0 + i as f64), 0.23, &rows);
    }
    let rows = flags_of(&s);
    let rcd: Vec<&Flag> = rows
        .iter()
        .flat_map(|r| &r.findings)
        .filter(|f| f.quantity == "rcd")
        .collect();
    assert_eq!(rcd.len(), 1, "{rcd:#?}");
    let f = rcd[0];
    // Kept on the first circuit RCD1 protects, whichever circuit the slow time was written on.
    assert_eq!(f.circuit.as_deref(), Some("2"));
    assert_eq!(f.limit, Some(300.0));
    assert_eq!(f.last_value, 342.0);
    assert!(
        f.reason
            .starts_with("RCD1, recorded as protecting circuits 2, 3 and 4: "),
        "{}",
        f.reason
    );
    // The failed button recorded against circuit 4 is RCD1's, judged once too, on circuit 2.
    let buttons: Vec<&Flag> = rows
        .iter()
        .flat_map(|r| &r.findings)
        .filter(|f| f.quantity == "rcd_button")
        .collect();
    assert_eq!(buttons.len(), 1, "{buttons:#?}");
    assert_eq!(buttons[0].circuit.as_deref(), Some("2"));
    assert!(
        buttons[0]
            .reason
            .starts_with("RCD1, recorded as protecting")
    );
    // One series of four points, one per visit, on circuit 2; the others say where it is.
    let a = analyse_property(&s, "T-1", &settings()).unwrap();
    let c2 = a.circuits.iter().find(|c| c.circuit.number == "2").unwrap();
    let series = c2
        .series
        .iter()
        .find(|x| x.quantity == "rcd" && !x.label.ends_with("(supplementary)"))
        .unwrap();
    let points: Vec<f64> = series.report.points.iter().map(|p| p.raw).collect();
    assert_eq!(points, [23.0, 26.0, 24.0, 342.0]);
    assert!(
        series
            .basis
            .as_deref()
            .is_some_and(|b| b.contains("circuits 2, 3 and 4, which RCD1 protects"))
    );
    for n in ["3", "4"] {
        let c = a.circuits.iter().find(|c| c.circuit.number == n).unwrap();
        assert!(!c.series.iter().any(|x| x.quantity == "rcd"));
        assert!(
            c.notes
                .iter()
                .any(|m| m.contains("RCD1 is judged once, with circuit 2")),
            "{:?}",
            c.notes
        );
    }
}

#[test]
fn the_slowest_time_of_a_visit_speaks_for_the_rcd() {
    // Two times recorded for RCD1 at one visit: the device is judged on the slower (its worst
    // showing, common practice, no source); a failed button anywhere wins.
    use super::rcd_devices::{RcdVisit, merge_visits};
    let v = |day: u32, ms: Option<f64>, b: Option<ButtonTest>| RcdVisit {
        date: d(2024, 1, day),
        rated_ms: ms,
        five_ms: None,
        button: b,
    };
    let merged = merge_visits(vec![
        v(2, Some(31.0), Some(ButtonTest::Operates)),
        v(1, Some(22.0), None),
        v(2, Some(29.0), Some(ButtonTest::Failed)),
        v(1, None, Some(ButtonTest::Operates)),
    ]);
    assert_eq!(
        merged,
        [
            v(1, Some(22.0), Some(ButtonTest::Operates)),
            v(2, Some(31.0), Some(ButtonTest::Failed))
        ]
    );
}

#[test]
fn insulation_tested_at_250_v_is_still_held_to_1_megohm() {
    // BS 7671:2018 Table 64 and Regulation 643.3.3 (from memory): a 230 V circuit tested at
    // the reduced 250 V must still show 1.0 MΩ, not the 0.5 MΩ of the SELV row. 0.82 MΩ is
    // past it.
    let s = home();
    for (i, (date, mohm)) in [(d(2017, 2, 1), 180.0), (d(2021, 2, 3), 0.82)]
        .into_iter()
        .enumerate()
    {
        let r = Readings {
            ir_le: Some(Megohms {
                value: mohm,
                over_range: false,
            }),
            ir_test_v: Some(250),
            ..noisy(i)
        };
        visit(&s, date, Some(10.0), 0.24, &[("CU1", "1", r)]);
    }
    let f = flags_of(&s)
        .into_iter()
        .flat_map(|r| r.findings)
        .find(|f| f.quantity == "ir_le" && f.kind == "exceeds")
        .expect("IR past its minimum");
    assert_eq!(f.limit, Some(1.0));
    let a = analyse_property(&s, "T-1", &settings()).unwrap();
    let series = a.circuits[0]
        .series
        .iter()
        .find(|x| x.quantity == "ir_le")
        .unwrap();
    assert!(
        series
            .limit_words
            .as_deref()
            .is_some_and(|w| w.contains("250 V test")),
        "{:?}",
        series.limit_words
    );
    let src = series.limit_source.as_ref().unwrap();
    assert!(src.rule.contains("643.3.3"), "{}", src.rule);
}

#[test]
fn a_named_rcd_whose_circuits_disagree_on_its_delay_says_how_it_was_judged() {
    // One device has one delay (BS EN 61008-1: general or S); the register says otherwise for
    // one of RCD1's circuits, so the judgement names the basis it took.
    let s = home();
    with_rcd1(&s);
    let c4 = s.find_circuit("T-1", "CU1", "4").unwrap();
    s.edit_circuit(
        c4.id,
        &CircuitDetails {
            rcd_delay: Some(crate::model::RcdDelay::S),
            ..Default::default()
        },
        d(2010, 1, 1),
        None,
        None,
        None,
    )
    .unwrap();
    visit(
        &s,
        d(2020, 5, 1),
        Some(14.0),
        0.22,
        &[(
            "CU1",
            "2",
            Readings {
                rcd_ms: Some(27.0),
                ..noisy(1)
            },
        )],
    );
    let a = analyse_property(&s, "T-1", &settings()).unwrap();
    let c2 = a.circuits.iter().find(|c| c.circuit.number == "2").unwrap();
    assert!(
        c2.notes.iter().any(|n| n
            == "RCD1: circuit 4 records a different delay from this circuit's (not recorded); it is judged as this circuit records it"),
        "{:?}",
        c2.notes
    );
    assert!(
        !c2.notes.iter().any(|n| n.contains("IΔn")),
        "{:?}",
        c2.notes
    );
}
