//! The worklist judged on a simulated portfolio with realistic site noise and planted faults
//! (`ohmtrail::sim`; invented data, as simulations are). The targets are the project's own
//! (issue 13): recall of planted faults at least 95 %, healthy circuits flagged at most 2 %,
//! worklist rows at most 1.5 per real fault. `bench/calibrate.sh` measures the same on 1,000
//! homes over several seeds and noise levels.

use ohmtrail::sim::{self, FlagKey, SimConfig};

/// A fixed seed, not one of the benchmark's tuning seeds (1, 2, 3) nor its held-out one.
const SEED: u64 = 424_242;
const HOMES: usize = 200;

fn scorecard(homes: usize) -> sim::Scorecard {
    let p = sim::generate(&SimConfig::new(homes, SEED, 1.0));
    let dir = tempfile::tempdir().unwrap();
    let flags = sim::run::portfolio_worklist(&p, dir.path()).unwrap();
    let keys: Vec<FlagKey> = flags.iter().map(FlagKey::from).collect();
    sim::score(&p.truth, &keys).card
}

#[test]
fn the_pipeline_finds_most_planted_faults() {
    // Whatever the rules, a worklist that misses half the planted faults, each of a size a
    // contractor wants to know about, is broken.
    let c = scorecard(60);
    assert!(c.faults >= 20, "{c:?}");
    assert!(c.recall >= 0.5, "recall {}", c.recall);
}

#[test]
fn the_worklist_meets_the_calibration_targets() {
    let c = scorecard(HOMES);
    let per_kind: Vec<String> = c
        .per_kind
        .iter()
        .map(|(k, s)| format!("{k} {}/{}", s.found, s.planted))
        .collect();
    let summary = format!(
        "recall {:.3} ({}), healthy circuits flagged {:.3} ({}/{}), rows per fault {:.2} ({} rows, {} faults)",
        c.recall,
        per_kind.join(", "),
        c.false_alarm_rate,
        c.healthy_circuits_flagged,
        c.healthy_circuits,
        c.rows_per_fault,
        c.rows,
        c.faults
    );
    assert!(c.recall >= 0.95, "{summary}");
    assert!(c.false_alarm_rate <= 0.02, "{summary}");
    assert!(c.rows_per_fault <= 1.5, "{summary}");
}

#[test]
fn the_brief_s_band_holds_ordinary_readings_and_catches_new_faults() {
    // Issue 18's targets, on a smaller portfolio than the benchmark's (so with a little more
    // sampling slack): healthy R1+R2 and R1+Rn readings inside the band about 95 % of the
    // time, the band at most a fifth of the expected value wide, and continuity faults that
    // first appear at the held-out visit outside it.
    let p = sim::generate(&SimConfig::new(HOMES, SEED, 1.0));
    let dir = tempfile::tempdir().unwrap();
    let bt = sim::backtest(&p, dir.path()).unwrap();
    for q in bt
        .quantities
        .iter()
        .filter(|q| matches!(q.quantity, "r1r2" | "r1rn"))
    {
        let coverage = q.coverage.unwrap();
        assert!((0.91..=0.985).contains(&coverage), "{q:?}");
        assert!(q.median_width.unwrap() <= 0.20, "{q:?}");
        if q.new_faults >= 5 {
            assert!(q.new_outside_share.unwrap() >= 0.9, "{q:?}");
        }
    }
}
