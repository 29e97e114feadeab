//! RCD operating times (BS EN 61008-1 / 61009-1) and which test is judged.
//!
//! BS 7671:2018+A2:2022 Regulation 643.8 verifies an RCD by a test at its rated residual
//! operating current IΔn, against the maximum time for its type (300 ms general, 500 ms type S).
//! The test at 5 × IΔn is no longer required; when it was recorded it is judged too, as a
//! supplementary result, and it never hides the 1 × IΔn result.

use std::fmt;

use serde::{Deserialize, Serialize};

use super::LimitsError;
use super::source::{Source, SourceStatus};
use crate::model::{RcdDelay, RcdType};

/// General (non-delayed) or time-delayed (type S) operation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RcdTiming {
    General,
    Delayed,
}

impl RcdTiming {
    /// The times follow the delay, whatever the waveform type: type S is delayed.
    pub fn of(delay: RcdDelay) -> RcdTiming {
        match delay {
            RcdDelay::S => RcdTiming::Delayed,
            RcdDelay::General => RcdTiming::General,
        }
    }
}

/// The test current as a multiple of IΔn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RcdTest {
    AtRated,
    AtTwice,
    AtFive,
}

impl RcdTest {
    pub fn as_str(self) -> &'static str {
        match self {
            RcdTest::AtRated => "1 × IΔn",
            RcdTest::AtTwice => "2 × IΔn",
            RcdTest::AtFive => "5 × IΔn",
        }
    }
}

impl fmt::Display for RcdTest {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RcdMax {
    pub timing: RcdTiming,
    pub test: RcdTest,
    pub max_ms: f64,
    pub source: Source,
}

impl RcdMax {
    /// The limit in words, e.g. "maximum for a general RCD at 5 × IΔn".
    pub fn words(&self) -> String {
        let kind = match self.timing {
            RcdTiming::General => "general",
            RcdTiming::Delayed => "time-delayed (S)",
        };
        format!("maximum for a {kind} RCD at {}", self.test)
    }
}

/// Maximum operating time: general 300 / 150 / 40 ms, type S 500 / 200 / 150 ms at 1, 2, 5 × IΔn.
pub fn rcd_max_ms(timing: RcdTiming, test: RcdTest) -> RcdMax {
    let max_ms = match (timing, test) {
        (RcdTiming::General, RcdTest::AtRated) => 300.0,
        (RcdTiming::General, RcdTest::AtTwice) => 150.0,
        (RcdTiming::General, RcdTest::AtFive) => 40.0,
        (RcdTiming::Delayed, RcdTest::AtRated) => 500.0,
        (RcdTiming::Delayed, RcdTest::AtTwice) => 200.0,
        (RcdTiming::Delayed, RcdTest::AtFive) => 150.0,
    };
    // The rule as fixed text, so the worklist's many copies of it cost no allocation.
    let rule = match (timing, test) {
        (RcdTiming::General, RcdTest::AtRated) => {
            "general (non-delayed) type: at most 300 ms at 1 × IΔn"
        }
        (RcdTiming::General, RcdTest::AtTwice) => {
            "general (non-delayed) type: at most 150 ms at 2 × IΔn"
        }
        (RcdTiming::General, RcdTest::AtFive) => {
            "general (non-delayed) type: at most 40 ms at 5 × IΔn"
        }
        (RcdTiming::Delayed, RcdTest::AtRated) => {
            "type S (time-delayed): at most 500 ms at 1 × IΔn"
        }
        (RcdTiming::Delayed, RcdTest::AtTwice) => {
            "type S (time-delayed): at most 200 ms at 2 × IΔn"
        }
        (RcdTiming::Delayed, RcdTest::AtFive) => "type S (time-delayed): at most 150 ms at 5 × IΔn",
    };
    RcdMax {
        timing,
        test,
        max_ms,
        source: Source::new(
            "BS EN 61008-1 / BS EN 61009-1",
            SourceStatus::Published,
            rule,
        ),
    }
}

/// RCD results for one circuit.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct RcdReadings {
    pub rcd_type: Option<RcdType>,
    /// General or type S; with a waveform type recorded and no delay, general.
    pub rcd_delay: Option<RcdDelay>,
    pub at_rated_ms: Option<f64>,
    pub at_five_ms: Option<f64>,
}

/// One test result against its maximum.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RcdTestResult {
    pub time_ms: f64,
    pub max: RcdMax,
    pub within: bool,
    pub text: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RcdJudgement {
    pub timing: RcdTiming,
    /// True when the type was not recorded and the stricter general times were used.
    pub timing_assumed: bool,
    /// The test the judgement rests on: 1 × IΔn when recorded (Reg 643.8), else 5 × IΔn.
    pub judged: RcdTest,
    pub result: RcdTestResult,
    /// The supplementary 5 × IΔn test when both were recorded, judged too but not the basis.
    pub also: Option<RcdTestResult>,
    pub notes: Vec<String>,
    pub source: Source,
}

fn check_ms(what: &'static str, v: f64) -> Result<f64, LimitsError> {
    if v.is_finite() && (0.0..=10_000.0).contains(&v) {
        Ok(v)
    } else {
        Err(LimitsError::BadValue {
            what,
            value: v,
            expected: "a trip time in milliseconds from 0 to 10000",
        })
    }
}

fn result(timing: RcdTiming, test: RcdTest, ms: f64) -> RcdTestResult {
    let max = rcd_max_ms(timing, test);
    let within = ms <= max.max_ms;
    let text = if within {
        format!("{ms} ms at {test} is within {} ms", max.max_ms)
    } else {
        format!(
            "{ms} ms at {test} is over {} ms: the RCD may be too slow to give the protection expected of it",
            max.max_ms
        )
    };
    RcdTestResult {
        time_ms: ms,
        max,
        within,
        text,
    }
}

/// Judge recorded RCD times on the 1 × IΔn test (Reg 643.8); 5 × IΔn is supplementary.
pub fn judge_rcd(r: &RcdReadings) -> Result<RcdJudgement, LimitsError> {
    let rated = r
        .at_rated_ms
        .map(|v| check_ms("RCD time at 1 × IΔn", v))
        .transpose()?;
    let five = r
        .at_five_ms
        .map(|v| check_ms("RCD time at 5 × IΔn", v))
        .transpose()?;
    let (timing, timing_assumed) = match (r.rcd_delay, r.rcd_type) {
        (Some(d), _) => (RcdTiming::of(d), false),
        (None, Some(_)) => (RcdTiming::General, false),
        (None, None) => (RcdTiming::General, true),
    };
    let mut notes = Vec::new();
    if timing_assumed {
        notes.push(
            "RCD type not recorded: the stricter general (non-delayed) times are used".to_string(),
        );
    }
    let (judged, res, also) = match (rated, five) {
        (Some(x), five) => (
            RcdTest::AtRated,
            result(timing, RcdTest::AtRated, x),
            five.map(|f| result(timing, RcdTest::AtFive, f)),
        ),
        (None, Some(f)) => {
            notes.push("only the 5 × IΔn test was recorded; BS 7671:2018+A2:2022 Reg 643.8 verifies an RCD at 1 × IΔn, so the RCD has not been verified by the required test".to_string());
            (RcdTest::AtFive, result(timing, RcdTest::AtFive, f), None)
        }
        (None, None) => return Err(LimitsError::NothingToJudge("no RCD trip time recorded")),
    };
    if also.as_ref().is_some_and(|a| !a.within) {
        notes.push(
            "the supplementary 5 × IΔn result is over its maximum: the RCD should be checked"
                .to_string(),
        );
    }
    // Minimum non-actuating time for type S at 1 × IΔn, 130 ms (from memory).
    if timing == RcdTiming::Delayed && rated.is_some_and(|x| x < 130.0) {
        notes.push("a type S RCD tripped at 1 × IΔn in under 130 ms, its minimum non-actuating time (from memory): check the device is type S".to_string());
    }
    Ok(RcdJudgement {
        timing,
        timing_assumed,
        judged,
        result: res,
        also,
        notes,
        source: Source::new(
            "BS 7671:2018+A2:2022 Regulation 643.8",
            SourceStatus::Published,
            "an RCD is verified by a test at 1 × IΔn against the maximum for its type; 5 × IΔn is supplementary",
        ),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn maximum_times() {
        // BS EN 61008-1 / 61009-1 (reference): general 300 / 150 / 40 ms; type S 500 / 200 / 150 ms.
        use RcdTest::*;
        use RcdTiming::*;
        for (timing, test, want) in [
            (General, AtRated, 300.0),
            (General, AtTwice, 150.0),
            (General, AtFive, 40.0),
            (Delayed, AtRated, 500.0),
            (Delayed, AtTwice, 200.0),
            (Delayed, AtFive, 150.0),
        ] {
            let m = rcd_max_ms(timing, test);
            assert_eq!(m.max_ms, want);
            // The rule in words carries the same figure and test.
            assert!(
                m.source
                    .rule
                    .contains(&format!("at most {want} ms at {test}"))
            );
        }
        assert_eq!(RcdTiming::of(RcdDelay::S), Delayed);
        assert_eq!(RcdTiming::of(RcdDelay::General), General);
    }

    #[test]
    fn rated_current_decides_and_five_times_never_hides_it() {
        // BS 7671:2018+A2:2022 Regulation 643.8: an RCD is verified at IΔn, at most 300 ms for a
        // general type (Appendix 3 Table 3A); the 5 × IΔn test is no longer required.
        // Invented readings: type A, 1 × 350 ms (over 300) with 5 × 18 ms (within 40).
        let j = judge_rcd(&RcdReadings {
            rcd_type: Some(RcdType::A),
            rcd_delay: None,
            at_rated_ms: Some(350.0),
            at_five_ms: Some(18.0),
        })
        .unwrap();
        assert_eq!(j.judged, RcdTest::AtRated);
        assert!(!j.result.within, "350 ms at 1 × IΔn is over 300 ms");
        assert!(j.also.as_ref().unwrap().within);
        // 1 × within, 5 × over its 40 ms: judged on 1 ×, with the 5 × result noted.
        let j = judge_rcd(&RcdReadings {
            rcd_type: Some(RcdType::AC),
            rcd_delay: None,
            at_rated_ms: Some(250.0),
            at_five_ms: Some(45.0),
        })
        .unwrap();
        assert_eq!(j.judged, RcdTest::AtRated);
        assert!(j.result.within);
        assert!(j.notes.iter().any(|n| n.contains("5 × IΔn")));
        // Only 5 ×: judged, with a note that the required test is missing.
        let j = judge_rcd(&RcdReadings {
            rcd_type: Some(RcdType::AC),
            rcd_delay: None,
            at_rated_ms: None,
            at_five_ms: Some(20.0),
        })
        .unwrap();
        assert_eq!(j.judged, RcdTest::AtFive);
        assert!(j.notes[0].contains("643.8"));
    }

    #[test]
    fn type_s_gets_the_delayed_times() {
        // Invented type S: 5 × 120 ms is within 150 ms; a general device would be over 40 ms.
        let s = RcdReadings {
            rcd_type: None,
            rcd_delay: Some(RcdDelay::S),
            at_rated_ms: None,
            at_five_ms: Some(120.0),
        };
        assert!(judge_rcd(&s).unwrap().result.within);
        let unknown = RcdReadings {
            rcd_delay: None,
            ..s
        };
        let j = judge_rcd(&unknown).unwrap();
        assert!(!j.result.within);
        assert!(j.timing_assumed);
    }

    #[test]
    fn type_a_s_is_judged_on_its_delay_not_its_waveform() {
        // BS EN 61008-1 / 61009-1 (reference sheet, RCD operating times): at 1 × IΔn at most
        // 500 ms for type S, 300 ms for a general device. Type A S 100 mA, 1 × IΔn 400 ms:
        // 400 <= 500, within; the same reading on a general type A: 400 > 300, over.
        let a_s = RcdReadings {
            rcd_type: Some(RcdType::A),
            rcd_delay: Some(RcdDelay::S),
            at_rated_ms: Some(400.0),
            at_five_ms: None,
        };
        let j = judge_rcd(&a_s).unwrap();
        assert_eq!(j.timing, RcdTiming::Delayed);
        assert_eq!(j.result.max.max_ms, 500.0);
        assert!(j.result.within, "{}", j.result.text);
        for delay in [Some(RcdDelay::General), None] {
            let j = judge_rcd(&RcdReadings {
                rcd_delay: delay,
                ..a_s
            })
            .unwrap();
            assert_eq!(j.result.max.max_ms, 300.0);
            assert!(!j.result.within, "{}", j.result.text);
            assert!(!j.timing_assumed, "the waveform type was recorded");
        }
        // BS EN 61008-1 / 61009-1: type S at most 200 ms at 2 × IΔn and 150 ms at 5 × IΔn.
        assert_eq!(
            rcd_max_ms(RcdTiming::of(RcdDelay::S), RcdTest::AtTwice).max_ms,
            200.0
        );
        assert_eq!(
            rcd_max_ms(RcdTiming::of(RcdDelay::S), RcdTest::AtFive).max_ms,
            150.0
        );
    }

    #[test]
    fn refuses_nothing_and_nonsense() {
        assert!(judge_rcd(&RcdReadings::default()).is_err());
        assert!(
            judge_rcd(&RcdReadings {
                at_five_ms: Some(-3.0),
                ..RcdReadings::default()
            })
            .is_err()
        );
    }
}
