//! The least csa of a main protective bonding conductor (copper), by the supply's earthing.
//!
//! TN-C-S (PME): BS 7671 Table 54.8 sets it by the supply neutral's csa: 10 mm² for a neutral
//! up to 35 mm², 16 mm² over 35 up to 50, 25 mm² over 50 up to 95, 35 mm² over 95 up to 150,
//! 50 mm² over 150 (from memory: the team's reference sheet does not hold the table). A home's
//! supply neutral is almost always 35 mm² or less and is not recorded, so the first row is
//! used and the rule says so. TN-S and TT: Regulation 544.1.1 asks for at least half the
//! earthing conductor's csa and never less than 6 mm² (from memory); the earthing
//! conductor's csa is not recorded either, so only the 6 mm² floor is judged.

use serde::{Deserialize, Serialize};

use super::source::{Source, SourceStatus};
use crate::model::Earthing;

/// The least main bonding csa that can be judged for an earthing arrangement, with its source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BondingMinimum {
    pub earthing: Earthing,
    pub min_mm2: f64,
    /// What the minimum assumes, in words, e.g. "a supply neutral of 35 mm² or less".
    pub assumes: &'static str,
    pub source: Source,
}

/// Table 54.8 as remembered: (largest supply neutral csa of the row, mm²; bonding csa, mm²).
pub const PME_BONDING_MM2: [(f64, f64); 5] = [
    (35.0, 10.0),
    (50.0, 16.0),
    (95.0, 25.0),
    (150.0, 35.0),
    (f64::INFINITY, 50.0),
];

/// The least main bonding csa for a supply, assuming a home's supply neutral of 35 mm² or less
/// on PME.
pub fn min_main_bonding(earthing: Earthing) -> BondingMinimum {
    match earthing {
        Earthing::TnCS => BondingMinimum {
            earthing,
            min_mm2: PME_BONDING_MM2[0].1,
            assumes: "a supply neutral of 35 mm² or less, as in most homes (not recorded)",
            source: Source::new(
                "BS 7671:2018+A2:2022 Table 54.8",
                SourceStatus::FromMemory,
                "main protective bonding on a PME supply: 10 mm² copper for a supply neutral up to 35 mm² (16, 25, 35, 50 mm² for larger neutrals)",
            ),
        },
        Earthing::TnS | Earthing::Tt => BondingMinimum {
            earthing,
            min_mm2: 6.0,
            assumes: "the earthing conductor's csa not recorded, so only the 6 mm² floor is judged",
            source: Source::new(
                "BS 7671:2018+A2:2022 Regulation 544.1.1",
                SourceStatus::FromMemory,
                "main protective bonding: at least half the earthing conductor's csa and not less than 6 mm² copper",
            ),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pme_asks_for_10_mm2_and_the_others_for_6() {
        // BS 7671:2018+A2:2022 Table 54.8, first row (supply neutral ≤ 35 mm²: 10 mm²), and
        // Regulation 544.1.1 (not less than 6 mm²): both from memory, not on the reference
        // sheet.
        let pme = min_main_bonding(Earthing::TnCS);
        assert_eq!(pme.min_mm2, 10.0);
        assert_eq!(pme.source.status, SourceStatus::FromMemory);
        assert!(pme.source.citation.contains("Table 54.8"));
        assert_eq!(min_main_bonding(Earthing::TnS).min_mm2, 6.0);
        assert_eq!(min_main_bonding(Earthing::Tt).min_mm2, 6.0);
        // The table as remembered rises with the supply neutral: 10, 16, 25, 35, 50 mm².
        let bonding: Vec<f64> = PME_BONDING_MM2.iter().map(|r| r.1).collect();
        assert_eq!(bonding, [10.0, 16.0, 25.0, 35.0, 50.0]);
    }
}
