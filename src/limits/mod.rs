//! Published limits and the rules that apply them. Pure: no SQL, no I/O.
//!
//! Every figure comes back with a [`Source`] naming the table, regulation or practice it rests
//! on and how sure that is, so a report can cite it. Anything not tabulated here is refused
//! with an error, never guessed.
//!
//! - [`zs`]: maximum earth fault loop impedance (BS 7671 Tables 41.2, 41.3, 41.5) and the
//!   circuit's disconnection time.
//! - [`measured`]: the limit for a cold test reading (80 % rule, temperature correction).
//! - [`fault`]: both fault paths of one circuit judged against its device.
//! - [`conductors`]: copper resistance per metre, expected R1+R2 and R1+Rn, ring checks.
//! - [`temperature`]: normalising a resistance to 20 °C and back.
//! - [`ir`], [`rcd`], [`supply`]: insulation resistance minima, RCD times, typical Ze.

pub mod bonding;
pub mod conductors;
pub mod fault;
pub mod ir;
pub mod measured;
pub mod rcd;
pub mod source;
pub mod supply;
pub mod temperature;
pub mod zs;

pub use bonding::{BondingMinimum, min_main_bonding};
pub use conductors::{
    Cable, PerMetre, RadialExpectation, RingCheck, RingExpectation, RingFinding, RingFindingKind,
    RingReadings, RingTolerance, check_ring, copper_mohm_per_m, expected_radial, expected_ring,
    r1r2_mohm_per_m,
};
pub use fault::{
    FaultPath, FaultPathInputs, FaultPathReport, PathOutcome, PathResult, evaluate_fault_paths,
};
pub use ir::{
    IrCircuit, IrJudgement, IrMinimum, IrOutcome, ir_minimum, ir_minimum_tested_at, judge_ir,
};
pub use measured::{
    DEFAULT_ASSUMED_INSULATION, LimitsConfig, MeasuredLimit, MeasuredRule, TestConditions,
    hot_factor, insulation_words, measured_limit, measured_loop_limit,
};
pub use rcd::{
    RcdJudgement, RcdMax, RcdReadings, RcdTest, RcdTestResult, RcdTiming, judge_rcd, rcd_max_ms,
};
pub use source::{Source, SourceStatus};
pub use supply::{SupplyAdvisory, typical_max_ze};
pub use temperature::{ALPHA_CU, factor as temperature_factor, from_r20, to_r20};
pub use zs::{
    CMIN, CircuitFacts, CircuitUse, DisconnectionChoice, DisconnectionTime, RcdZsLimit, U0_V,
    ZsLimit, default_disconnection, max_zs, tt_rcd_zs_max,
};

/// Why a limit could not be given. Messages name the value at fault and what is known.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LimitsError {
    #[error("{device} is not in {table}: {known}")]
    UnknownRating {
        device: String,
        table: &'static str,
        known: String,
    },
    #[error("no maximum Zs is tabulated here for {device} at {time} ({table}): {why}")]
    NotTabulated {
        device: String,
        time: &'static str,
        table: &'static str,
        why: String,
    },
    #[error("{csa} mm² is not in the IEC 60228 copper table: known sizes are {known} mm²")]
    UnknownCsa { csa: f64, known: String },
    #[error("{what} {value} is not usable: expected {expected}")]
    BadValue {
        what: &'static str,
        value: f64,
        expected: &'static str,
    },
    #[error(
        "the temperature-corrected rule needs the test temperature: give it, or choose the rule_of_thumb_80 rule"
    )]
    MissingTemperature,
    #[error(
        "unknown measured-value rule {0:?}: expected temperature_corrected or rule_of_thumb_80"
    )]
    UnknownRule(String),
    #[error("unknown disconnection time {0:?}: expected 0.4 or 5 (seconds)")]
    UnknownDisconnection(String),
    #[error("{ma} mA is not a rated residual current: expected one of {known}")]
    UnknownRcdRating { ma: u16, known: String },
    #[error(
        "a TT circuit without an RCD cannot be judged here: TT needs 0.2 s or 1 s (Table 41.1), which no device table here covers; record the RCD rating or judge by hand"
    )]
    TtWithoutRcd,
    #[error("unknown insulation test circuit {0:?}: expected selv_pelv, up_to_500v or above_500v")]
    UnknownIrCircuit(String),
    #[error("nothing to judge: {0}")]
    NothingToJudge(&'static str),
}

/// Round half-up to two decimal places, as BS 7671 Table 41.3 is printed.
/// The small nudge keeps a value like 2.185 (stored as 2.18499…) from rounding down.
pub fn round_half_up_2dp(x: f64) -> f64 {
    (x * 100.0 + 0.5 + ROUNDING_EPSILON).floor() / 100.0
}

/// Round down to two decimal places, as published measured-value tables do (conservative).
/// The small nudge keeps an exact 0.28 (stored as 0.27999…) at 0.28; a real 1.0999999 still
/// becomes 1.09.
pub fn round_down_2dp(x: f64) -> f64 {
    (x * 100.0 + ROUNDING_EPSILON).floor() / 100.0
}

/// A limit less a Ze, rounded down to 2 dp: the one place a check value on R1+R2 or R1+Rn
/// alone is rounded. Ze is recorded in hundredths, so taking it off a limit already rounded
/// down gives the same hundredths as taking it off the exact limit; the nudge keeps float
/// error (1.14 − 0.30 = 0.8399999…) from costing a hundredth.
pub fn less_ze(limit_ohm: f64, ze_ohm: f64) -> f64 {
    round_down_2dp(limit_ohm - ze_ohm)
}

/// Far below any meaningful hundredth of an ohm, far above f64 error on values under 10⁵ Ω.
const ROUNDING_EPSILON: f64 = 1e-7;

/// Check a resistance or impedance reading: finite, not negative, not absurd.
pub(crate) fn check_ohms(what: &'static str, value: f64) -> Result<f64, LimitsError> {
    if value.is_finite() && (0.0..=100_000.0).contains(&value) {
        Ok(value)
    } else {
        Err(LimitsError::BadValue {
            what,
            value,
            expected: "a resistance in ohms from 0 to 100000",
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounding_down_keeps_exact_values_and_cuts_the_rest() {
        // 0.8 × 1.37 = 1.096 → 1.09 (reference: published measured-value tables round down).
        assert_eq!(round_down_2dp(0.8 * 1.37), 1.09);
        // 0.8 × 0.35 = 0.28 exactly, though f64 gives 0.27999999999999997.
        assert!(std::hint::black_box(0.8) * 0.35 < 0.28);
        assert_eq!(round_down_2dp(0.8 * 0.35), 0.28);
        // A true 1.0999999 is below 1.10 and must not be rounded up.
        assert_eq!(round_down_2dp(1.0999999), 1.09);
        assert_eq!(round_down_2dp(1.1), 1.1);
    }

    #[test]
    fn rounding_half_up_takes_the_half_upwards() {
        // 218.5 / 100 = 2.185 → 2.19 in Table 41.3 (B20, C10), though f64 stores 2.18499….
        assert_eq!(round_half_up_2dp(218.5 / 100.0), 2.19);
        assert_eq!(round_half_up_2dp(2.1849), 2.18);
        assert_eq!(round_half_up_2dp(1.748), 1.75);
    }

    #[test]
    fn a_limit_less_ze_keeps_its_hundredths() {
        // Exact arithmetic: 1.14 − 0.30 = 0.84, though f64 gives 0.8399999999999999 and a
        // plain floor showed 0.83.
        let raw: f64 = std::hint::black_box(1.14) - 0.30;
        assert_eq!((raw * 100.0).floor() / 100.0, 0.83);
        assert_eq!(less_ze(1.14, 0.30), 0.84);
        assert_eq!(less_ze(1.09, 0.35), 0.74);
        assert_eq!(less_ze(2.185, 0.30), 1.88);
    }

    #[test]
    fn readings_must_be_sane() {
        assert!(check_ohms("Ze", -0.1).is_err());
        assert!(check_ohms("Ze", f64::NAN).is_err());
        assert_eq!(check_ohms("Ze", 0.35), Ok(0.35));
    }
}
