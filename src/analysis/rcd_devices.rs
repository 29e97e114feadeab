//! One RCD, one finding. On a split-load board one RCD protects several circuits, and the
//! inspector tests it once and writes the same trip time against every circuit it protects
//! (common practice, no source). Judged circuit by circuit, one slow RCD would be as many
//! findings as it has circuits.
//!
//! Where the register names the RCD protecting each circuit (`rcd_id`, e.g. `RCD1`), that
//! linkage decides: the RCD's trip times and test button results are one series, made of what
//! was recorded against every circuit it protects and judged once, on the first of them
//! ([`RecordedRcds`], used by the series). Where it does not, circuits of one board with the
//! same rated residual current and the same 1 × IΔn time at the same last visit are taken as
//! one device: its finding is kept once, on the first of them, and names the others. Each
//! sentence says which basis it rests on.

use chrono::NaiveDate;
use foldhash::{HashMap, HashMapExt};

use super::CircuitAnalysis;
use super::facts::RCD_BUTTON;
use super::series::Index;
use crate::model::{BreakerStandard, ButtonTest, Circuit, Device, Readings, Status};
use crate::store::PropertyHistory;

/// An RCD the register names on a board, with the circuits in service it protects.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct RecordedRcd {
    pub designation: String,
    /// (circuit id, number) in register order.
    pub members: Vec<(i64, String)>,
}

/// The RCDs the register names, found by the circuits they protect.
#[derive(Debug, Default)]
pub(super) struct RecordedRcds {
    rcds: Vec<RecordedRcd>,
    by_circuit: HashMap<i64, usize>,
}

impl RecordedRcds {
    pub(super) fn new(h: &PropertyHistory) -> RecordedRcds {
        let mut out = RecordedRcds::default();
        let mut by_key: HashMap<(i64, &str), usize> = HashMap::new();
        // Circuits arrive in register order, so each RCD's members do too.
        for c in h.circuits.iter().filter(|c| c.status == Status::InService) {
            let Some(id) = c.rcd_id.as_deref() else {
                continue;
            };
            let i = *by_key.entry((c.board_id, id)).or_insert_with(|| {
                out.rcds.push(RecordedRcd {
                    designation: id.to_string(),
                    members: Vec::new(),
                });
                out.rcds.len() - 1
            });
            out.rcds[i].members.push((c.id, c.number.clone()));
            out.by_circuit.insert(c.id, i);
        }
        out
    }

    /// The RCD protecting this circuit when the register names one shared with another
    /// circuit in service.
    pub(super) fn shared(&self, circuit_id: i64) -> Option<&RecordedRcd> {
        self.by_circuit
            .get(&circuit_id)
            .map(|&i| &self.rcds[i])
            .filter(|r| r.members.len() >= 2)
    }
}

impl RecordedRcd {
    /// The circuit the RCD's series and findings are kept on: the first it protects.
    pub(super) fn keeper(&self) -> i64 {
        self.members[0].0
    }

    pub(super) fn numbers(&self) -> Vec<&str> {
        self.members.iter().map(|(_, n)| n.as_str()).collect()
    }

    /// How the RCD's findings begin: the device and the recorded linkage they rest on.
    pub(super) fn prefix(&self) -> String {
        format!(
            "{}, recorded as protecting circuits {}: ",
            self.designation,
            list_words(&self.numbers())
        )
    }
}

/// One visit's RCD results, as one device gives them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct RcdVisit {
    pub date: NaiveDate,
    pub rated_ms: Option<f64>,
    pub five_ms: Option<f64>,
    pub button: Option<ButtonTest>,
}

impl RcdVisit {
    pub(super) fn of(date: NaiveDate, r: &Readings) -> RcdVisit {
        RcdVisit {
            date,
            rated_ms: r.rcd_ms,
            five_ms: r.rcd_5x_ms,
            button: r.rcd_button,
        }
    }
}

/// What several circuits recorded of one RCD, visit by visit, oldest first: at each visit the
/// slowest trip time recorded against any of them (the device's worst showing), and a failed
/// test button if any recorded one.
pub(super) fn merge_visits(mut all: Vec<RcdVisit>) -> Vec<RcdVisit> {
    all.sort_by_key(|v| v.date);
    let slower = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(x), Some(y)) => Some(x.max(y)),
        (x, y) => x.or(y),
    };
    let mut out: Vec<RcdVisit> = Vec::with_capacity(all.len());
    for v in all {
        match out.last_mut() {
            Some(last) if last.date == v.date => {
                last.rated_ms = slower(last.rated_ms, v.rated_ms);
                last.five_ms = slower(last.five_ms, v.five_ms);
                last.button = match (last.button, v.button) {
                    (Some(ButtonTest::Failed), _) | (_, Some(ButtonTest::Failed)) => {
                        Some(ButtonTest::Failed)
                    }
                    (a, b) => a.or(b),
                };
            }
            _ => out.push(v),
        }
    }
    out
}

/// The RCD results a circuit's RCD series and test button finding are made of, oldest first.
/// A circuit on no RCD the register names shared: its own (`own`). The first circuit of a
/// shared one: every circuit's, merged by [`merge_visits`], with a note where its circuits
/// record the device's IΔn or delay differently. Any other circuit of a shared one: none, with
/// a note saying where the RCD is judged.
pub(super) fn device_visits(
    c: &Circuit,
    shared: Option<&RecordedRcd>,
    own: impl Iterator<Item = RcdVisit>,
    idx: &Index,
    notes: &mut Vec<String>,
) -> Vec<RcdVisit> {
    let Some(rcd) = shared else {
        return own.collect();
    };
    if rcd.keeper() != c.id {
        notes.push(format!(
            "RCD trip times and test button: {} is judged once, with circuit {}",
            rcd.designation, rcd.members[0].1
        ));
        return Vec::new();
    }
    // One device has one rating and one delay: where its circuits record them differently,
    // it is judged as this circuit records them, and says so.
    let others: Vec<&Circuit> = rcd.members[1..]
        .iter()
        .filter_map(|(id, _)| idx.by_id.get(id).copied())
        .collect();
    let disagree = |what: &str, mine: String, theirs: &dyn Fn(&Circuit) -> String| {
        let odd: Vec<&str> = others
            .iter()
            .filter(|o| theirs(o) != mine)
            .map(|o| o.number.as_str())
            .collect();
        (!odd.is_empty()).then(|| {
            format!(
                "{}: circuit {} records a different {what} from this circuit's ({mine}); it is judged as this circuit records it",
                rcd.designation,
                list_words(&odd)
            )
        })
    };
    let ma = |c: &Circuit| {
        c.rcd_ma
            .map_or("not recorded".into(), |m| format!("{m} mA"))
    };
    let delay = |c: &Circuit| {
        c.rcd_delay
            .map_or("not recorded", |d| d.as_str())
            .to_string()
    };
    notes.extend(disagree("IΔn", ma(c), &ma));
    notes.extend(disagree("delay", delay(c), &delay));
    let mut all: Vec<RcdVisit> = own.collect();
    for (id, _) in &rcd.members[1..] {
        all.extend(
            idx.records
                .get(id)
                .into_iter()
                .flatten()
                .filter_map(|t| Some(RcdVisit::of(idx.visits.get(&t.visit_id)?.date, &t.readings))),
        );
    }
    merge_visits(all)
}

/// Whether a flag is the RCD's own, not its circuit's.
fn rcd_owned(quantity: &str) -> bool {
    quantity == "rcd" || quantity == RCD_BUTTON
}

/// Circuits that share one RCD, by the key they were grouped on.
type Key = (String, u16, chrono::NaiveDate, u64);

fn key(c: &CircuitAnalysis) -> Option<Key> {
    // A recorded linkage is never second-guessed.
    if c.circuit.rcd_id.is_some() {
        return None;
    }
    // An RCBO is its own RCD.
    if matches!(
        c.circuit.device,
        Some(Device::Breaker {
            standard: BreakerStandard::En61009,
            ..
        })
    ) {
        return None;
    }
    let ms = c.last_readings.as_ref()?.rcd_ms?;
    Some((
        c.board.clone(),
        c.circuit.rcd_ma?,
        c.last_visit?,
        ms.to_bits(),
    ))
}

/// Keeps each shared RCD's flags on the first circuit it protects, naming the others, and
/// drops them from the rest. Circuits are in register order. An RCD the register names has
/// its series and findings on its first circuit already; they are only named here.
pub(super) fn merge_shared_rcds(circuits: &mut [CircuitAnalysis], recorded: &RecordedRcds) {
    for c in circuits.iter_mut() {
        if let Some(rcd) = recorded.shared(c.circuit.id)
            && rcd.keeper() == c.circuit.id
        {
            let prefix = rcd.prefix();
            for f in c.flags.iter_mut().filter(|f| rcd_owned(f.quantity)) {
                f.reason.insert_str(0, &prefix);
            }
        }
    }
    let mut groups: HashMap<Key, Vec<usize>> = HashMap::new();
    for (i, c) in circuits.iter().enumerate() {
        if let Some(k) = key(c) {
            groups.entry(k).or_default().push(i);
        }
    }
    for members in groups.values().filter(|m| m.len() >= 2) {
        let Some(&keeper) = members
            .iter()
            .find(|&&i| circuits[i].flags.iter().any(|f| rcd_owned(f.quantity)))
        else {
            continue;
        };
        let numbers: Vec<&str> = members
            .iter()
            .map(|&i| circuits[i].circuit.number.as_str())
            .collect();
        let prefix = format!(
            "One RCD, tested once for circuits {} (the same 1 × IΔn time recorded on each): ",
            list_words(&numbers)
        );
        for f in circuits[keeper]
            .flags
            .iter_mut()
            .filter(|f| rcd_owned(f.quantity))
        {
            f.reason.insert_str(0, &prefix);
        }
        for &i in members.iter().filter(|&&i| i != keeper) {
            circuits[i].flags.retain(|f| !rcd_owned(f.quantity));
        }
    }
}

/// `1, 2 and 4`.
pub(super) fn list_words(items: &[&str]) -> String {
    match items {
        [] => String::new(),
        [one] => one.to_string(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}
