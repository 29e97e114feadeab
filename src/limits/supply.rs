//! Typical maximum Ze declared by network operators: advice for reading a Ze, not a limit.

use serde::{Deserialize, Serialize};

use super::source::{Source, SourceStatus};
use crate::model::Earthing;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SupplyAdvisory {
    pub earthing: Earthing,
    pub typical_max_ze_ohm: f64,
    pub source: Source,
}

impl SupplyAdvisory {
    /// A note when a measured Ze is above the typical figure; `None` when it is not.
    pub fn note_for(&self, ze_ohm: f64) -> Option<String> {
        (ze_ohm > self.typical_max_ze_ohm + 1e-9).then(|| {
            format!(
                "Ze {ze_ohm:.2} Ω is above the {:.2} Ω typically declared for {} (advisory, not a limit)",
                self.typical_max_ze_ohm, self.earthing
            )
        })
    }
}

/// Typical maximum Ze: TN-S 0.80 Ω, TN-C-S 0.35 Ω, TT 21 Ω excluding the installation's
/// electrode.
pub fn typical_max_ze(earthing: Earthing) -> SupplyAdvisory {
    let (ze, rule) = match earthing {
        Earthing::TnS => (
            0.80,
            "typical maximum Ze declared for TN-S: 0.80 Ω; advisory, not a limit",
        ),
        Earthing::TnCS => (
            0.35,
            "typical maximum Ze declared for TN-C-S: 0.35 Ω; advisory, not a limit",
        ),
        Earthing::Tt => (
            21.0,
            "typical maximum Ze declared for TT: 21 Ω, excluding the installation's electrode; advisory, not a limit",
        ),
    };
    SupplyAdvisory {
        earthing,
        typical_max_ze_ohm: ze,
        source: Source::new(
            "network operators' declared values",
            SourceStatus::CommonPractice,
            rule,
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn typical_values_are_advisory() {
        // Common practice, no source: TN-S 0.8, TN-C-S 0.35, TT 21 Ω.
        assert_eq!(typical_max_ze(Earthing::TnS).typical_max_ze_ohm, 0.80);
        assert_eq!(typical_max_ze(Earthing::TnCS).typical_max_ze_ohm, 0.35);
        assert_eq!(typical_max_ze(Earthing::Tt).typical_max_ze_ohm, 21.0);
        let a = typical_max_ze(Earthing::TnCS);
        assert_eq!(a.note_for(0.35), None);
        assert!(a.note_for(0.42).unwrap().contains("advisory"));
    }
}
