//! The rest of a circuit's line on the schedule of test results, as plain values: the
//! reference method, the facts a visit records (polarity, the RCD's test button) and the
//! checks on the register's numbers and short codes.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::check_text;

/// The reference method of a circuit's installation, as BS 7671:2018 Appendix 4 names them
/// for current-carrying capacity: A to G (Table 4A2), and 100 to 103 for flat twin and earth
/// cable in contact with thermal insulation (Table 4D5). Recorded as the schedule gives it;
/// ohmtrail does not compute current-carrying capacity from it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum RefMethod {
    A,
    B,
    C,
    D,
    E,
    F,
    G,
    #[serde(rename = "100")]
    M100,
    #[serde(rename = "101")]
    M101,
    #[serde(rename = "102")]
    M102,
    #[serde(rename = "103")]
    M103,
}

impl RefMethod {
    pub const ALL: [RefMethod; 11] = [
        RefMethod::A,
        RefMethod::B,
        RefMethod::C,
        RefMethod::D,
        RefMethod::E,
        RefMethod::F,
        RefMethod::G,
        RefMethod::M100,
        RefMethod::M101,
        RefMethod::M102,
        RefMethod::M103,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            RefMethod::A => "A",
            RefMethod::B => "B",
            RefMethod::C => "C",
            RefMethod::D => "D",
            RefMethod::E => "E",
            RefMethod::F => "F",
            RefMethod::G => "G",
            RefMethod::M100 => "100",
            RefMethod::M101 => "101",
            RefMethod::M102 => "102",
            RefMethod::M103 => "103",
        }
    }
}

impl fmt::Display for RefMethod {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for RefMethod {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let t = s.trim();
        RefMethod::ALL
            .into_iter()
            .find(|m| m.as_str().eq_ignore_ascii_case(t))
            .ok_or_else(|| {
                format!(
                    "unknown reference method {s:?}: expected one of {} (BS 7671 Appendix 4)",
                    RefMethod::ALL.map(|m| m.as_str()).join(", ")
                )
            })
    }
}

/// A pass or fail as the trade writes it on a schedule: the plain word, or a tick or a cross.
fn tick_or_cross(s: &str) -> Option<bool> {
    match s.trim() {
        "✓" | "✔" => Some(true),
        "✗" | "✘" => Some(false),
        _ => None,
    }
}

/// Polarity as recorded at a visit (BS 7671 Regulation 643.6): correct or incorrect.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Polarity {
    Correct,
    Incorrect,
}

impl Polarity {
    pub fn as_str(self) -> &'static str {
        match self {
            Polarity::Correct => "correct",
            Polarity::Incorrect => "incorrect",
        }
    }
}

impl FromStr for Polarity {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        if let Some(ok) = tick_or_cross(s) {
            return Ok(if ok {
                Polarity::Correct
            } else {
                Polarity::Incorrect
            });
        }
        match s.trim().to_ascii_lowercase().as_str() {
            "correct" => Ok(Polarity::Correct),
            "incorrect" => Ok(Polarity::Incorrect),
            _ => Err(format!(
                "unknown polarity {s:?}: expected correct or incorrect (or ✓ / ✗)"
            )),
        }
    }
}

/// Whether an RCD operated when its own test button was pressed, as recorded at a visit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ButtonTest {
    Operates,
    Failed,
}

impl ButtonTest {
    pub fn as_str(self) -> &'static str {
        match self {
            ButtonTest::Operates => "operates",
            ButtonTest::Failed => "failed",
        }
    }
}

impl FromStr for ButtonTest {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        if let Some(ok) = tick_or_cross(s) {
            return Ok(if ok {
                ButtonTest::Operates
            } else {
                ButtonTest::Failed
            });
        }
        match s.trim().to_ascii_lowercase().as_str() {
            "operates" => Ok(ButtonTest::Operates),
            "failed" => Ok(ButtonTest::Failed),
            _ => Err(format!(
                "unknown RCD test button result {s:?}: expected operates or failed (or ✓ / ✗)"
            )),
        }
    }
}

/// The d.c. test voltages of BS 7671:2018 Table 64, in volts.
pub const IR_TEST_VOLTAGES: [u16; 3] = [250, 500, 1000];

/// Check an insulation resistance test voltage against Table 64's.
pub fn validate_ir_test_v(v: u16) -> Result<u16, String> {
    if IR_TEST_VOLTAGES.contains(&v) {
        Ok(v)
    } else {
        Err(format!(
            "{v} V is not an insulation test voltage: expected 250, 500 or 1000 V (BS 7671 Table 64)"
        ))
    }
}

/// Check a breaking capacity in kA: positive and at most 200 kA (a bound of our own, wide
/// enough for any fuse or breaker on a domestic board: common practice, no source).
pub fn validate_breaking_ka(ka: f64) -> Result<f64, String> {
    if !ka.is_finite() || ka <= 0.0 {
        return Err(format!(
            "breaking capacity {ka} kA is not a capacity: expected a positive number of kA such as 6 or 10"
        ));
    }
    if ka > 200.0 {
        return Err(format!(
            "breaking capacity {ka} kA is out of range: expected at most 200 kA"
        ));
    }
    Ok(ka)
}

/// The most points a circuit is taken to serve (a bound of our own against slips: common
/// practice, no source).
pub const MAX_POINTS: u32 = 999;

/// Check a number of points served by a circuit.
pub fn validate_points(n: u32) -> Result<u32, String> {
    if n > MAX_POINTS {
        Err(format!(
            "{n} points is out of range: expected at most {MAX_POINTS}"
        ))
    } else {
        Ok(n)
    }
}

/// The longest wiring type or RCD identifier kept: both are short codes as recorded.
pub const MAX_CODE_LEN: usize = 40;

/// Check a short code as recorded (a wiring type, an RCD's identifier on its board): not
/// empty, no control characters, at most [`MAX_CODE_LEN`] characters.
pub fn validate_code(what: &str, text: &str) -> Result<(), String> {
    if text.trim().is_empty() {
        return Err(format!("{what} is empty"));
    }
    check_text(what, text)?;
    let n = text.chars().count();
    if n > MAX_CODE_LEN {
        return Err(format!(
            "{what} is {n} characters long: expected a short code of at most {MAX_CODE_LEN}"
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn schedule_words_parse_as_the_trade_writes_them() {
        // BS 7671:2018 Appendix 4: reference methods A to G, and 100 to 103 for flat twin and
        // earth in thermal insulation (from memory for the table numbers, 4A2 and 4D5).
        assert_eq!("c".parse::<RefMethod>(), Ok(RefMethod::C));
        assert_eq!(" 102 ".parse::<RefMethod>(), Ok(RefMethod::M102));
        for bad in ["H", "104", "99", "", "C1"] {
            let e = bad.parse::<RefMethod>().unwrap_err();
            assert!(e.contains("A, B, C, D, E, F, G, 100, 101, 102, 103"), "{e}");
        }
        // Polarity and the test button: the plain words, or a tick and a cross (common
        // practice, no source).
        assert_eq!("✓".parse::<Polarity>(), Ok(Polarity::Correct));
        assert_eq!("✗".parse::<Polarity>(), Ok(Polarity::Incorrect));
        assert_eq!("Incorrect".parse::<Polarity>(), Ok(Polarity::Incorrect));
        assert!("yes".parse::<Polarity>().is_err());
        assert_eq!("✓".parse::<ButtonTest>(), Ok(ButtonTest::Operates));
        assert_eq!("FAILED".parse::<ButtonTest>(), Ok(ButtonTest::Failed));
        assert!("ok".parse::<ButtonTest>().is_err());
        // BS 7671:2018 Table 64 test voltages.
        assert_eq!(validate_ir_test_v(500), Ok(500));
        assert!(validate_ir_test_v(400).is_err());
        assert!(validate_breaking_ka(6.0).is_ok());
        assert!(validate_breaking_ka(0.0).is_err());
        assert!(validate_breaking_ka(f64::NAN).is_err());
        assert!(validate_points(1000).is_err());
        assert!(validate_code("RCD identifier", "RCD\u{1b}1").is_err());
        assert!(validate_code("RCD identifier", "RCD1").is_ok());
    }
}
