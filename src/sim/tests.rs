//! The simulator checked against its own stated model: invented data, judged by the figures
//! the model documents (see `noise.rs` and `faults.rs`), and by the visit file's rules.

use super::faults::{FaultKind, FaultSize};
use super::home::{Earthing, first_possible, last_possible};
use super::noise::{HEALTHY_IR_FLOOR_MOHM, IR_ERROR, IrReading};
use super::*;
use crate::limits::to_r20;

fn csv_bytes(p: &Portfolio) -> Vec<u8> {
    let mut out = Vec::new();
    p.write_csv(&mut out).unwrap();
    out
}

#[test]
fn the_same_config_gives_byte_identical_output() {
    let cfg = SimConfig::new(40, 7, 1.0);
    let (a, b) = (generate(&cfg), generate(&cfg));
    assert_eq!(csv_bytes(&a), csv_bytes(&b));
    assert_eq!(a.truth, b.truth);
    let other = generate(&SimConfig::new(40, 8, 1.0));
    assert_ne!(csv_bytes(&a), csv_bytes(&other));
}

#[test]
fn a_home_is_the_same_whatever_the_portfolio_size() {
    let small = generate(&SimConfig::new(5, 11, 1.0));
    let large = generate(&SimConfig::new(12, 11, 1.0));
    let rows = |p: &Portfolio| -> Vec<[String; 31]> {
        p.rows
            .iter()
            .filter(|r| r.home < 5)
            .map(SimRow::cells)
            .collect()
    };
    assert_eq!(rows(&small), rows(&large));
}

#[test]
fn a_lead_offset_visit_moves_every_continuity_reading_by_the_same_amount() {
    let cfg = SimConfig::new(150, 3, 1.0);
    let drawn = generate(&cfg);
    let nulled = generate_with(&cfg, Leads::AlwaysNulled);
    let mut offset_visits = 0;
    for (a, b) in drawn.rows.iter().zip(&nulled.rows) {
        let lead = drawn.truth.homes[a.home].visits[a.visit].lead_offset_ohm;
        let pairs = [
            (Some(a.r1r2_ohm), Some(b.r1r2_ohm)),
            (a.r1rn_ohm, b.r1rn_ohm),
            (a.r2_ohm, b.r2_ohm),
            (a.ring_r1_ohm, b.ring_r1_ohm),
            (a.ring_rn_ohm, b.ring_rn_ohm),
            (a.ring_r2_ohm, b.ring_r2_ohm),
        ];
        for (x, y) in pairs {
            assert_eq!(x.is_some(), y.is_some());
            if let (Some(x), Some(y)) = (x, y) {
                // The same offset on every reading, to the 0.01 Ω display (each side rounded).
                assert!((x - y - lead).abs() <= 0.01 + 1e-9, "{x} {y} {lead}");
            }
        }
        // The loop tester does not use the continuity leads' null.
        assert_eq!(a.zs_ohm, b.zs_ohm);
        assert_eq!(a.ze_ohm, b.ze_ohm);
        if lead > 0.0 && a.circuit_index == 0 {
            offset_visits += 1;
            assert!((0.05..=0.2).contains(&lead), "{lead}");
        }
    }
    // About 8 % of some 650 visits.
    assert!((25..=85).contains(&offset_visits), "{offset_visits}");
}

#[test]
fn healthy_insulation_stays_above_the_models_floor() {
    for noise in [1.0, 1.5] {
        let p = generate(&SimConfig::new(200, 5, noise));
        let floor = HEALTHY_IR_FLOOR_MOHM * (1.0 - IR_ERROR * noise);
        let mut checked = 0;
        for r in &p.rows {
            let c = &p.truth.homes[r.home].circuits[r.circuit_index];
            let ir_fault = c
                .faults
                .iter()
                .any(|&id| p.truth.faults[id].kind == FaultKind::InsulationFalling);
            if ir_fault {
                continue;
            }
            for ir in [r.ir_le, r.ir_ll] {
                assert!(ir.value() >= floor, "{ir:?} at noise {noise}");
                assert!(ir.value() > 2.0);
                checked += 1;
            }
        }
        assert!(checked > 10_000);
    }
}

#[test]
fn healthy_readings_wander_and_go_over_range() {
    let p = generate(&SimConfig::new(200, 5, 1.0));
    let over = p
        .rows
        .iter()
        .filter(|r| matches!(r.ir_le, IrReading::OverRange(_)))
        .count();
    let share = over as f64 / p.rows.len() as f64;
    // Healthy insulation is mostly above the instrument's top, but far from always.
    assert!((0.3..0.9).contains(&share), "{share}");
    let tops: std::collections::BTreeSet<String> = p
        .rows
        .iter()
        .filter_map(|r| match r.ir_le {
            IrReading::OverRange(t) => Some(format!("{t:.0}")),
            IrReading::Value(_) => None,
        })
        .collect();
    assert_eq!(tops.len(), 4, "{tops:?}");
}

/// Rows of one home's circuit, visit by visit.
fn series<'a>(p: &'a Portfolio, home: usize, circuit: &str) -> Vec<&'a SimRow> {
    p.rows
        .iter()
        .filter(|r| r.home == home && r.circuit == circuit)
        .collect()
}

fn at20(p: &Portfolio, r: &SimRow, v: f64) -> f64 {
    to_r20(v, p.truth.homes[r.home].visits[r.visit].conductor_c).unwrap()
}

#[test]
fn planted_faults_have_their_stated_size() {
    // Without noise, what a fault adds is exactly what the truth says, to the display's 0.01 Ω.
    let p = generate(&SimConfig::new(600, 9, 0.0));
    let mut seen = std::collections::BTreeMap::new();
    for f in &p.truth.faults {
        *seen.entry(f.kind).or_insert(0) += 1;
        let h = p
            .truth
            .homes
            .iter()
            .position(|h| h.property_ref == f.property_ref)
            .unwrap();
        let last = p.truth.homes[h].visits.len() - 1;
        let tol = 0.03;
        match (f.kind, f.size) {
            (FaultKind::LooseCpc | FaultKind::NeutralPath, FaultSize::Step { ohm, .. })
            | (FaultKind::WorseningTermination, FaultSize::Growing { ohm, .. }) => {
                if f.kind == FaultKind::WorseningTermination {
                    assert!((0.25..=0.8).contains(&ohm));
                } else {
                    assert!((0.1..=0.5).contains(&ohm));
                }
                let s = series(&p, h, &f.circuits[0]);
                let before = s[0];
                let after = s[last];
                // The added resistance is a termination's: it does not move with temperature,
                // so it comes off before the conductors are taken to 20 °C.
                let rise = |get: fn(&SimRow) -> Option<f64>, added: f64| {
                    Some(at20(&p, after, get(after)? - added) - at20(&p, before, get(before)?))
                };
                match f.kind {
                    FaultKind::NeutralPath => {
                        let r1r2 = rise(|r| Some(r.r1r2_ohm), 0.0).unwrap();
                        assert!(r1r2.abs() <= tol, "R1+R2 steady: {r1r2}");
                        let r1rn = rise(|r| r.r1rn_ohm, ohm).unwrap();
                        assert!(r1rn.abs() <= tol, "R1+Rn up by the fault: {r1rn}");
                    }
                    _ => {
                        let r1r2 = rise(|r| Some(r.r1r2_ohm), ohm).unwrap();
                        assert!(r1r2.abs() <= tol, "R1+R2 up by the fault: {r1r2}");
                    }
                }
            }
            (FaultKind::RingLeg, FaultSize::RingJoint { leg, ohm }) => {
                assert!((0.3..=1.5).contains(&ohm));
                let s = series(&p, h, &f.circuits[0]);
                let leg_of = |r: &SimRow| match leg {
                    faults::RingLegName::R1 => r.ring_r1_ohm.unwrap(),
                    faults::RingLegName::Rn => r.ring_rn_ohm.unwrap(),
                    faults::RingLegName::R2 => r.ring_r2_ohm.unwrap(),
                };
                let rise = at20(&p, s[last], leg_of(s[last]) - ohm) - at20(&p, s[0], leg_of(s[0]));
                assert!(rise.abs() <= tol, "leg up by the joint: {rise}");
            }
            (FaultKind::InsulationFalling, FaultSize::Insulation { last_mohm, .. }) => {
                let r = series(&p, h, &f.circuits[0])[last];
                assert!((0.3..=3.0).contains(&r.ir_le.value()), "{:?}", r.ir_le);
                assert!((r.ir_le.value() - last_mohm).abs() <= 0.01);
            }
            (FaultKind::RcdSlowing, FaultSize::Rcd { last_ms }) => {
                for c in &f.circuits {
                    let t = series(&p, h, c)[last].rcd_ms.unwrap();
                    assert!((t - last_ms).abs() <= 0.5 && (150.0..=400.0).contains(&t));
                }
            }
            (FaultKind::PenDeterioration, FaultSize::Ze { last_ohm }) => {
                let s = series(&p, h, "1");
                assert!((s[last].ze_ohm - last_ohm).abs() <= 0.006);
                assert!(s[last].ze_ohm >= 0.4 && s[last].ze_ohm >= s[0].ze_ohm + 0.2);
            }
            (FaultKind::TtElectrode, FaultSize::Ze { last_ohm }) => {
                let s = series(&p, h, "1");
                assert!((300.0..=600.0).contains(&last_ohm));
                assert!((s[last].ze_ohm - last_ohm - noise::TT_SUPPLY_OHM).abs() <= 0.5);
                assert!(s[last].ze_ohm >= 3.0 * s[0].ze_ohm, "beyond seasonal swing");
            }
            other => panic!("a fault with a size of another kind: {other:?}"),
        }
    }
    for k in FaultKind::ALL {
        assert!(seen.get(&k).copied().unwrap_or(0) >= 3, "{k:?}: {seen:?}");
    }
}

#[test]
fn the_truth_agrees_with_the_rows() {
    let p = generate(&SimConfig::new(300, 2, 1.0));
    let t = &p.truth;
    let expected_rows: usize = t
        .homes
        .iter()
        .map(|h| h.circuits.len() * h.visits.len())
        .sum();
    assert_eq!(p.rows.len(), expected_rows);
    for r in &p.rows {
        let h = &t.homes[r.home];
        assert_eq!(r.property_ref, h.property_ref);
        assert_eq!(r.visit_date, h.visits[r.visit].date);
        assert_eq!(r.circuit, h.circuits[r.circuit_index].number);
        assert_eq!(r.ambient_c, h.visits[r.visit].ambient_recorded);
        assert_eq!(r.instrument, h.visits[r.visit].instrument);
        assert_eq!(
            r.rcd_ma.is_some(),
            h.circuits[r.circuit_index].rcd.is_some()
        );
    }
    for (id, f) in t.faults.iter().enumerate() {
        assert_eq!(f.id, id);
        let h = t
            .homes
            .iter()
            .find(|h| h.property_ref == f.property_ref)
            .unwrap();
        assert_eq!(f.present.len(), h.visits.len());
        assert_eq!(f.first_date, h.visits[f.first_visit].date);
        assert!(f.first_visit >= 1, "a fault appears after the first visit");
        for (v, &present) in f.present.iter().enumerate() {
            assert_eq!(present, v >= f.first_visit);
        }
        if f.kind.is_supply() {
            assert!(f.circuits.is_empty());
            assert_eq!(h.supply_fault, Some(id));
        } else {
            for c in &f.circuits {
                let ct = h.circuits.iter().find(|x| &x.number == c).unwrap();
                assert!(ct.faults.contains(&id));
            }
        }
        if f.kind == FaultKind::RcdSlowing {
            // Every circuit the RCD protects, and no other.
            let members: Vec<Vec<String>> = h
                .rcds
                .iter()
                .map(|m| m.iter().map(|&i| h.circuits[i].number.clone()).collect())
                .collect();
            assert!(members.contains(&f.circuits));
        }
    }
    // An RCD is tested once a visit: every circuit it protects carries the same times.
    for (hi, h) in t.homes.iter().enumerate() {
        for (v, _) in h.visits.iter().enumerate() {
            for members in &h.rcds {
                let times: std::collections::BTreeSet<String> = p
                    .rows
                    .iter()
                    .filter(|r| r.home == hi && r.visit == v && members.contains(&r.circuit_index))
                    .map(|r| format!("{:?}/{:?}", r.rcd_ms, r.rcd_5x_ms))
                    .collect();
                assert_eq!(times.len(), 1, "{times:?}");
            }
        }
    }
}

#[test]
fn the_portfolio_has_the_stated_shape() {
    let p = generate(&SimConfig::new(1000, 1, 1.0));
    let t = &p.truth;
    let homes = t.homes.len() as f64;
    let tt = t
        .homes
        .iter()
        .filter(|h| h.earthing == Earthing::Tt)
        .count() as f64;
    assert!((0.07..=0.11).contains(&(tt / homes)), "TT share {tt}");
    for (hi, h) in t.homes.iter().enumerate() {
        assert!((6..=14).contains(&h.circuits.len()));
        assert!((3..=6).contains(&h.visits.len()));
        assert!(h.visits.windows(2).all(|w| w[0].date < w[1].date));
        assert!(h.visits[0].date >= first_possible());
        assert!(h.visits.last().unwrap().date <= last_possible());
        if h.earthing == Earthing::Tt {
            assert!(h.circuits.iter().all(|c| c.rcd.is_some()), "{hi}");
        }
    }
    let no_ambient = t
        .homes
        .iter()
        .flat_map(|h| &h.visits)
        .filter(|v| v.ambient_recorded.is_none())
        .count() as f64;
    let visits = t.homes.iter().map(|h| h.visits.len()).sum::<usize>() as f64;
    assert!((0.10..=0.15).contains(&(no_ambient / visits)));
    let circuit_faults = t.faults.iter().filter(|f| !f.kind.is_supply()).count() as f64;
    let share = circuit_faults / t.circuits() as f64;
    assert!((0.05..=0.08).contains(&share), "fault share {share}");
    let faulty = t
        .homes
        .iter()
        .flat_map(|h| &h.circuits)
        .filter(|c| !c.faults.is_empty())
        .count() as f64;
    assert!((0.05..=0.10).contains(&(faulty / t.circuits() as f64)));
    let supply = t.faults.iter().filter(|f| f.kind.is_supply()).count() as f64;
    assert!((0.01..=0.06).contains(&(supply / homes)), "{supply}");
    let new_at_last = t.faults.iter().filter(|f| f.new_at_last_visit()).count();
    assert!(new_at_last as f64 >= 0.25 * t.faults.len() as f64);
    // Some visits record a 5 × IΔn time, many do not.
    let with_5x = p.rows.iter().filter(|r| r.rcd_5x_ms.is_some()).count() as f64;
    let with_1x = p.rows.iter().filter(|r| r.rcd_ms.is_some()).count() as f64;
    assert!((0.3..=0.5).contains(&(with_5x / with_1x)));
}

#[test]
fn a_spur_raises_r1r2_above_a_quarter_of_the_ends_without_a_fault() {
    let p = generate(&SimConfig::new(300, 4, 0.0));
    let mut spurs = 0;
    for r in &p.rows {
        let c = &p.truth.homes[r.home].circuits[r.circuit_index];
        if !c.ring || !c.faults.is_empty() {
            continue;
        }
        let quarter = (r.ring_r1_ohm.unwrap() + r.ring_r2_ohm.unwrap()) / 4.0;
        if c.spur {
            spurs += 1;
            assert!(r.r1r2_ohm >= quarter + 0.02, "{} {quarter}", r.r1r2_ohm);
        } else {
            assert!(
                (r.r1r2_ohm - quarter).abs() <= 0.011,
                "{} {quarter}",
                r.r1r2_ohm
            );
        }
    }
    assert!(spurs > 100);
}

#[test]
fn the_visit_file_imports_whole() {
    let p = generate(&SimConfig::new(15, 6, 1.0));
    let dir = tempfile::tempdir().unwrap();
    let (csv, db) = run::paths(dir.path(), "portfolio");
    run::write_visit_file(&p, &csv, |_| true).unwrap();
    let store = run::import_into_new(&csv, &db).unwrap();
    let visits: usize = p.truth.homes.iter().map(|h| h.visits.len()).sum();
    let stored: usize = p
        .truth
        .homes
        .iter()
        .map(|h| {
            let id = store.property(&h.property_ref).unwrap().id;
            store.history(id).unwrap().visits.len()
        })
        .sum();
    assert_eq!(stored, visits);
}
