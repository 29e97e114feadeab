//! Scoring a worklist against the simulator's truth.
//!
//! A row counts for a planted fault only when it is on that fault's circuit (any circuit a
//! slow RCD protects; the home's supply, circuit `None`, for a supply fault) and one of its
//! findings (the row's own or a supporting one: the worklist gives a circuit one row) is on one
//! of the fault's quantities ([`super::faults::FaultKind::quantities`]). Every other row is
//! classed by its own quantity:
//!
//! - `true`: counts for a fault as above;
//! - `consequence`: Zs or R1+Rn on a circuit of a home whose supply fault is present (the
//!   supply moved, not the circuit): not a false alarm, but a row;
//! - `wrong_quantity`: on a circuit that has a planted fault, but on a quantity that fault
//!   does not move: not a false alarm on a healthy circuit, but a row the fault does not earn;
//! - `property`: a row with no circuit on a quantity other than Ze or Ra (not a circuit's
//!   finding: main bonding);
//! - `false`: on a healthy circuit, or Ze or Ra on a home whose supply is healthy.
//!
//! The false-alarm rate is the share of healthy circuits (no planted fault, RCD faults
//! included) with at least one `false` row.

use std::collections::{BTreeMap, HashMap, HashSet};

use serde::Serialize;

use super::Truth;
use super::faults::{FaultKind, PlantedFault};
use crate::analysis::Flag;

/// What the scorer reads of a worklist row: where it is, on what, and why.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct FlagKey {
    pub property_ref: String,
    pub board: String,
    pub circuit: Option<String>,
    pub quantity: String,
    pub kind: String,
    pub reason: String,
    /// The quantities of every finding grouped in the row, its own first.
    pub quantities: Vec<String>,
}

impl From<&Flag> for FlagKey {
    fn from(f: &Flag) -> FlagKey {
        FlagKey {
            property_ref: f.property_ref.clone(),
            board: f.board.clone(),
            circuit: f.circuit.clone(),
            quantity: f.quantity.to_string(),
            kind: f.kind.to_string(),
            reason: f.reason.clone(),
            quantities: if f.findings.is_empty() {
                vec![f.quantity.to_string()]
            } else {
                f.findings.iter().map(|g| g.quantity.to_string()).collect()
            },
        }
    }
}

/// How a worklist row stands against the truth.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RowClass {
    True,
    Consequence,
    WrongQuantity,
    Property,
    False,
}

/// Recall for one kind of fault.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct KindScore {
    pub planted: usize,
    pub found: usize,
    /// `None` when none was planted.
    pub recall: Option<f64>,
}

/// Rows of one flag kind on one quantity, by class.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct RowTally {
    pub kind: String,
    pub quantity: String,
    pub true_rows: usize,
    pub false_rows: usize,
    pub consequence_rows: usize,
    pub wrong_quantity_rows: usize,
    pub property_rows: usize,
}

/// The worklist judged against the truth.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Scorecard {
    pub homes: usize,
    pub circuits: usize,
    pub faults: usize,
    pub found: usize,
    pub recall: f64,
    pub per_kind: BTreeMap<&'static str, KindScore>,
    pub healthy_circuits: usize,
    pub healthy_circuits_flagged: usize,
    /// Healthy circuits with any false row / healthy circuits.
    pub false_alarm_rate: f64,
    pub healthy_supplies: usize,
    /// Homes with a healthy supply that got a Ze row.
    pub supply_false_alarms: usize,
    pub supply_false_alarm_rate: f64,
    pub rows: usize,
    pub rows_per_fault: f64,
    pub rows_by_class: BTreeMap<RowClass, usize>,
    /// Per flag kind and quantity, sorted by kind then quantity.
    pub rows_by_kind: Vec<RowTally>,
}

/// The scorecard with the class of every row (in the worklist's order) and the faults missed.
#[derive(Debug, Clone, PartialEq)]
pub struct Scored {
    pub card: Scorecard,
    pub classes: Vec<RowClass>,
    /// Ids of the faults no row counted for.
    pub missed: Vec<usize>,
}

fn ratio(a: usize, b: usize) -> f64 {
    if b == 0 { 0.0 } else { a as f64 / b as f64 }
}

/// Score a worklist against the truth. Faults count as planted when present at the home's last
/// visit (every planted fault is: none is repaired).
pub fn score(truth: &Truth, flags: &[FlagKey]) -> Scored {
    // (property, board, circuit or None) → faults there.
    let mut at: HashMap<(&str, &str, Option<&str>), Vec<&PlantedFault>> = HashMap::new();
    let mut home_of: HashMap<&str, usize> = HashMap::new();
    for (h, home) in truth.homes.iter().enumerate() {
        home_of.insert(&home.property_ref, h);
        for c in &home.circuits {
            at.entry((&home.property_ref, home.board, Some(&c.number)))
                .or_default()
                .extend(c.faults.iter().map(|&id| &truth.faults[id]));
        }
        if let Some(id) = home.supply_fault {
            at.entry((&home.property_ref, home.board, None))
                .or_default()
                .push(&truth.faults[id]);
        }
    }
    let present = |f: &PlantedFault| f.present.last().copied().unwrap_or(false);

    let mut found: HashSet<usize> = HashSet::new();
    let mut classes = Vec::with_capacity(flags.len());
    let mut healthy_flagged: HashSet<(&str, &str, &str)> = HashSet::new();
    let mut supply_false: HashSet<&str> = HashSet::new();
    let mut tallies: BTreeMap<(String, String), RowTally> = BTreeMap::new();
    for f in flags {
        let key = (
            f.property_ref.as_str(),
            f.board.as_str(),
            f.circuit.as_deref(),
        );
        let here: &[&PlantedFault] = at.get(&key).map_or(&[], |v| v.as_slice());
        let matching: Vec<usize> = here
            .iter()
            .filter(|p| {
                present(p)
                    && f.quantities
                        .iter()
                        .any(|q| p.quantities.contains(&q.as_str()))
            })
            .map(|p| p.id)
            .collect();
        let supply_fault_present = home_of
            .get(f.property_ref.as_str())
            .and_then(|&h| truth.supply_fault(h))
            .is_some_and(present);
        let class = if !matching.is_empty() {
            found.extend(matching);
            RowClass::True
        } else if f.circuit.is_some()
            && supply_fault_present
            && matches!(f.quantity.as_str(), "zs" | "r1rn")
        {
            RowClass::Consequence
        } else if !here.is_empty() && f.circuit.is_some() {
            RowClass::WrongQuantity
        } else if f.circuit.is_none() && !matches!(f.quantity.as_str(), "ze" | "ra") {
            RowClass::Property
        } else {
            match &f.circuit {
                Some(c) => {
                    healthy_flagged.insert((&f.property_ref, &f.board, c));
                }
                None => {
                    supply_false.insert(&f.property_ref);
                }
            }
            RowClass::False
        };
        classes.push(class);
        let t = tallies
            .entry((f.kind.clone(), f.quantity.clone()))
            .or_insert_with(|| RowTally {
                kind: f.kind.clone(),
                quantity: f.quantity.clone(),
                ..RowTally::default()
            });
        match class {
            RowClass::True => t.true_rows += 1,
            RowClass::False => t.false_rows += 1,
            RowClass::Consequence => t.consequence_rows += 1,
            RowClass::WrongQuantity => t.wrong_quantity_rows += 1,
            RowClass::Property => t.property_rows += 1,
        }
    }

    let planted: Vec<&PlantedFault> = truth.faults.iter().filter(|f| present(f)).collect();
    let mut per_kind: BTreeMap<&'static str, KindScore> = FaultKind::ALL
        .iter()
        .map(|k| (k.key(), KindScore::default()))
        .collect();
    for f in &planted {
        let k = per_kind.entry(f.kind.key()).or_default();
        k.planted += 1;
        if found.contains(&f.id) {
            k.found += 1;
        }
    }
    for k in per_kind.values_mut() {
        k.recall = (k.planted > 0).then(|| ratio(k.found, k.planted));
    }
    let circuits = truth.circuits();
    let healthy_circuits = truth
        .homes
        .iter()
        .flat_map(|h| &h.circuits)
        .filter(|c| c.faults.is_empty())
        .count();
    let healthy_supplies = truth
        .homes
        .iter()
        .filter(|h| h.supply_fault.is_none())
        .count();
    let mut rows_by_class = BTreeMap::new();
    for c in &classes {
        *rows_by_class.entry(*c).or_insert(0) += 1;
    }
    let n_found = planted.iter().filter(|f| found.contains(&f.id)).count();
    let card = Scorecard {
        homes: truth.homes.len(),
        circuits,
        faults: planted.len(),
        found: n_found,
        recall: ratio(n_found, planted.len()),
        per_kind,
        healthy_circuits,
        healthy_circuits_flagged: healthy_flagged.len(),
        false_alarm_rate: ratio(healthy_flagged.len(), healthy_circuits),
        healthy_supplies,
        supply_false_alarms: supply_false.len(),
        supply_false_alarm_rate: ratio(supply_false.len(), healthy_supplies),
        rows: flags.len(),
        rows_per_fault: ratio(flags.len(), planted.len()),
        rows_by_class,
        rows_by_kind: tallies.into_values().collect(),
    };
    let missed = planted
        .iter()
        .filter(|f| !found.contains(&f.id))
        .map(|f| f.id)
        .collect();
    Scored {
        card,
        classes,
        missed,
    }
}

/// A reason with its figures taken out, so reasons that differ only in figures group together.
pub fn reason_pattern(reason: &str) -> String {
    let mut out = String::with_capacity(reason.len());
    let mut in_number = false;
    for ch in reason.chars() {
        if ch.is_ascii_digit() || (in_number && ch == '.') {
            if !in_number {
                out.push('#');
            }
            in_number = true;
        } else {
            in_number = false;
            out.push(ch);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::faults::{Conductor, FaultSize};
    use crate::sim::home::{BoardStyle, Earthing};
    use crate::sim::{CircuitTruth, HomeTruth, VisitTruth};
    use chrono::NaiveDate;

    fn day(s: &str) -> NaiveDate {
        s.parse().unwrap()
    }

    fn fault(id: usize, kind: FaultKind, circuits: &[&str]) -> PlantedFault {
        PlantedFault {
            id,
            property_ref: "SIM-00001".into(),
            board: "DB1".into(),
            circuits: circuits.iter().map(|c| c.to_string()).collect(),
            kind,
            size: FaultSize::Step {
                conductor: Conductor::Cpc,
                ohm: 0.3,
            },
            first_visit: 2,
            first_date: day("2020-01-01"),
            present: vec![false, false, true],
            quantities: kind.quantities().to_vec(),
        }
    }

    fn circuit(n: &str, rcd: Option<usize>, faults: Vec<usize>) -> CircuitTruth {
        CircuitTruth {
            number: n.into(),
            description: "Sockets",
            ring: false,
            spur: false,
            rcd,
            faults,
        }
    }

    /// One invented home, four circuits: 1 has a loose cpc, 2 and 3 share an RCD that slows,
    /// 4 is healthy; the supply is healthy.
    fn tiny() -> Truth {
        let v = |d: &str| VisitTruth {
            date: day(d),
            instrument: "X".into(),
            ambient_recorded: Some(15.0),
            conductor_c: 15.0,
            lead_offset_ohm: 0.0,
        };
        Truth {
            homes: vec![HomeTruth {
                property_ref: "SIM-00001".into(),
                board: "DB1",
                earthing: Earthing::TnCS,
                style: BoardStyle::SplitLoad,
                visits: vec![v("2010-01-01"), v("2015-01-01"), v("2020-01-01")],
                circuits: vec![
                    circuit("1", None, vec![0]),
                    circuit("2", Some(0), vec![1]),
                    circuit("3", Some(0), vec![1]),
                    circuit("4", None, vec![]),
                ],
                rcds: vec![vec![1, 2]],
                supply_fault: None,
            }],
            faults: vec![
                fault(0, FaultKind::LooseCpc, &["1"]),
                fault(1, FaultKind::RcdSlowing, &["2", "3"]),
            ],
        }
    }

    fn flag(circuit: Option<&str>, quantity: &str) -> FlagKey {
        FlagKey {
            property_ref: "SIM-00001".into(),
            board: "DB1".into(),
            circuit: circuit.map(str::to_string),
            quantity: quantity.into(),
            kind: "step".into(),
            reason: "r".into(),
            quantities: vec![quantity.into()],
        }
    }

    #[test]
    fn a_hand_made_worklist_scores_as_counted_by_hand() {
        let t = tiny();
        let flags = vec![
            flag(Some("1"), "zs"),    // true: loose cpc on Zs
            flag(Some("1"), "ir_le"), // wrong quantity on a faulty circuit
            flag(Some("2"), "rcd"),   // true: the slow RCD
            flag(Some("3"), "rcd"),   // true row too: the same RCD, a second row
            flag(Some("4"), "r1r2"),  // false: a healthy circuit
            flag(Some("4"), "ir_le"), // false again, the same healthy circuit
            flag(None, "ze"),         // false: the supply is healthy
        ];
        let s = score(&t, &flags);
        use RowClass::*;
        assert_eq!(
            s.classes,
            vec![True, WrongQuantity, True, True, False, False, False]
        );
        let c = &s.card;
        assert_eq!((c.faults, c.found), (2, 2));
        assert_eq!(c.recall, 1.0);
        // Circuits 2 and 3 carry the RCD fault, so only circuit 4 is healthy, and it is flagged.
        assert_eq!((c.healthy_circuits, c.healthy_circuits_flagged), (1, 1));
        assert_eq!(c.false_alarm_rate, 1.0);
        assert_eq!((c.healthy_supplies, c.supply_false_alarms), (1, 1));
        assert_eq!(c.rows, 7);
        assert_eq!(c.rows_per_fault, 3.5);
        assert_eq!(c.per_kind["rcd_slowing"].recall, Some(1.0));
        assert_eq!(c.per_kind["ring_leg"].recall, None);
        assert!(s.missed.is_empty());
    }

    #[test]
    fn a_row_counts_for_a_fault_on_a_supporting_finding() {
        let t = tiny();
        // Circuit 1's row is led by its IR finding; the loose cpc shows on its Zs, supporting.
        let mut row = flag(Some("1"), "ir_le");
        row.quantities = vec!["ir_le".into(), "zs".into()];
        let s = score(&t, &[row]);
        assert_eq!(s.classes, vec![RowClass::True]);
        assert_eq!(s.card.found, 1);
        assert_eq!(s.missed, vec![1]);
    }

    #[test]
    fn a_flag_elsewhere_or_on_the_wrong_quantity_finds_nothing() {
        let t = tiny();
        let flags = vec![
            flag(Some("4"), "zs"),  // the loose cpc is on circuit 1, not 4
            flag(Some("1"), "rcd"), // circuit 1 is not behind the slow RCD
            flag(None, "rcd"),      // a row with no circuit finds no circuit fault
        ];
        let s = score(&t, &flags);
        assert_eq!(s.card.found, 0);
        assert_eq!(s.missed, vec![0, 1]);
        assert_eq!(
            s.classes,
            vec![RowClass::False, RowClass::WrongQuantity, RowClass::Property]
        );
    }

    #[test]
    fn reasons_group_without_their_figures() {
        assert_eq!(
            reason_pattern("risen by 0.13 Ω over 5.2 years (from 18 ms to 31 ms)"),
            "risen by # Ω over # years (from # ms to # ms)"
        );
    }
}
