//! One RCD, one finding. On a split-load board one RCD protects several circuits, and the
//! inspector tests it once and writes the same trip time against every circuit it protects
//! (common practice, no source). Judged circuit by circuit, one slow RCD would be as many
//! findings as it has circuits. Circuits of one board with the same rated residual current and
//! the same 1 × IΔn time at the same last visit are taken as one device: its finding is kept
//! once, on the first of them, and names the others.

use foldhash::{HashMap, HashMapExt};

use super::CircuitAnalysis;
use crate::model::{BreakerStandard, Device};

/// Circuits that share one RCD, by the key they were grouped on.
type Key = (String, u16, chrono::NaiveDate, u64);

fn key(c: &CircuitAnalysis) -> Option<Key> {
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

/// Keeps each shared RCD's flag on the first circuit it protects, naming the others, and
/// drops it from the rest. Circuits are in register order.
pub(super) fn merge_shared_rcds(circuits: &mut [CircuitAnalysis]) {
    let mut groups: HashMap<Key, Vec<usize>> = HashMap::new();
    for (i, c) in circuits.iter().enumerate() {
        if let Some(k) = key(c) {
            groups.entry(k).or_default().push(i);
        }
    }
    for members in groups.values().filter(|m| m.len() >= 2) {
        let Some(&keeper) = members
            .iter()
            .find(|&&i| circuits[i].flags.iter().any(|f| f.quantity == "rcd"))
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
            .filter(|f| f.quantity == "rcd")
        {
            f.reason.insert_str(0, &prefix);
        }
        for &i in members.iter().filter(|&&i| i != keeper) {
            circuits[i].flags.retain(|f| f.quantity != "rcd");
        }
    }
}

/// `1, 2 and 4`.
fn list_words(items: &[&str]) -> String {
    match items {
        [] => String::new(),
        [one] => one.to_string(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}
