//! The verdict on a reading the moment it is typed: within the band, outside it (by how much,
//! and what that usually means), or past the limit. Always in words, never colour alone.

use serde::Serialize;

use super::brief::{Expectation, LimitAt};
use super::entry::{Entry, Field, Unit, as_shown, fmt_in};
use crate::trend::LimitKind;

/// Which way the verdict went.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    Within,
    /// Outside the band on the worse side.
    Worse,
    /// Outside the band on the better side (lower resistance, faster trip).
    Better,
    /// Past the limit.
    ExceedsLimit,
    /// Past an advisory figure (Ze above the typical declared maximum).
    AboveAdvisory,
    /// Nothing to compare with: no band, and within any limit.
    NoBand,
    /// Over range below the band's bottom: cannot be compared.
    Indeterminate,
    Limitation,
    NotApplicable,
    Skipped,
}

/// A verdict and the sentence that says it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Judgement {
    pub verdict: Verdict,
    pub sentence: String,
}

/// What a reading worse than expected usually means, by quantity (common practice, no source).
pub fn worse_means(f: Field) -> &'static str {
    match f {
        Field::R1r2 | Field::R2 => {
            "a rise usually means a loose or corroded termination on the line or protective conductor, at the board or an accessory: check the terminations now, while the board is open"
        }
        Field::RingR1 | Field::RingR2 => {
            "on a ring, a rise in an end-to-end reading usually means a loose termination or a break in the ring: check the connections at the board and the sockets"
        }
        Field::RingRn | Field::R1rn => {
            "a rise usually means a loose or high-resistance neutral termination: check the neutral bar and the accessories' neutrals"
        }
        Field::Zs => {
            "a rise usually means a termination in the circuit; if Ze has risen too, look at the supply and the main earthing"
        }
        Field::Ze => {
            "a rise is a supply or earthing matter: check the main earthing terminal and the earthing conductor, and tell the network operator"
        }
        Field::IrLl | Field::IrLe => {
            "a fall usually means damp, damaged insulation or equipment left connected: check what is connected and the accessories, then test again"
        }
        Field::Rcd5x | Field::Rcd => {
            "a slower trip usually means the device is ageing or sticking: operate its test button and test again"
        }
    }
}

/// What a reading better than expected usually means.
pub fn better_means(f: Field) -> &'static str {
    match f {
        Field::Rcd5x | Field::Rcd => "a faster trip is no concern on its own",
        Field::IrLl | Field::IrLe => "higher insulation resistance is no concern",
        _ => {
            "a fall usually means a parallel path (bonding, another circuit), test leads not nulled, or work on the circuit since the last visit"
        }
    }
}

fn band_text(e: &Expectation) -> Option<String> {
    let b = e.band?;
    let u = e.unit();
    Some(match (b.low, b.high) {
        (Some(lo), Some(hi)) => format!("{}–{}", super::entry::fmt_num(u, lo), fmt_in(u, hi)),
        (Some(lo), None) => format!("at least {}", fmt_in(u, lo)),
        (None, Some(hi)) => format!("at most {}", fmt_in(u, hi)),
        (None, None) => return None,
    })
}

/// The expectation as one line for a prompt: "expect 0.48 Ω, band 0.43–0.53 Ω; limit 1.09 Ω".
pub fn expectation_text(e: &Expectation) -> String {
    let u = e.unit();
    let mut parts = Vec::new();
    match (e.expected, band_text(e)) {
        (Some(x), Some(b)) => parts.push(format!("expect {}, band {b}", fmt_in(u, x))),
        (None, Some(b)) => parts.push(format!("expect {b}")),
        (Some(x), None) => parts.push(format!("expect {}", fmt_in(u, x))),
        (None, None) => parts.push("no history".into()),
    }
    if let Some(w) = &e.wide {
        parts.push(format!("band {w}"));
    }
    if let Some(l) = &e.limit {
        parts.push(limit_text(u, l));
    }
    parts.join("; ")
}

fn limit_text(u: Unit, l: &LimitAt) -> String {
    let word = match (l.kind, l.advisory) {
        (_, true) => "advisory",
        (LimitKind::Max, false) => "limit",
        (LimitKind::Min, false) => "minimum",
    };
    format!("{word} {}", fmt_in(u, l.value))
}

fn past(l: &LimitAt, v: f64) -> bool {
    match l.kind {
        LimitKind::Max => v > l.value + 1e-9,
        LimitKind::Min => v < l.value - 1e-9,
    }
}

/// Judge a typed entry against what was expected.
pub fn judge(e: &Expectation, entry: &Entry) -> Judgement {
    let f = e.field;
    let u = e.unit();
    let j = |verdict, sentence: String| Judgement { verdict, sentence };
    let (v, over) = match *entry {
        Entry::Skip => return j(Verdict::Skipped, format!("{f} skipped: nothing stored")),
        Entry::NotApplicable => {
            return j(
                Verdict::NotApplicable,
                format!("{f} not applicable: nothing stored"),
            );
        }
        Entry::Limitation => {
            return j(
                Verdict::Limitation,
                format!("{f} recorded as a limitation (LIM)"),
            );
        }
        Entry::Value(v) => (v, false),
        Entry::OverRange(v) => (v, true),
    };
    let shown = if over {
        format!(">{} (over range: at least {})", fmt_in(u, v), fmt_in(u, v))
    } else {
        fmt_in(u, v)
    };
    let expected = match (e.expected, band_text(e)) {
        (Some(x), Some(b)) => format!("expected {}, band {b}", fmt_in(u, x)),
        (None, Some(b)) => format!("band {b}"),
        _ => String::new(),
    };

    // The limit first: past it is what matters most. A lower bound only fails a maximum.
    if let Some(l) = &e.limit
        && past(l, v)
        && !(over && l.kind == LimitKind::Min)
    {
        let side = match l.kind {
            LimitKind::Max => "above",
            LimitKind::Min => "below",
        };
        if l.advisory {
            return j(
                Verdict::AboveAdvisory,
                format!(
                    "ABOVE THE ADVISORY FIGURE: {f} {shown} is {side} the {} of {}; {}",
                    l.words,
                    fmt_in(u, l.value),
                    worse_means(f)
                ),
            );
        }
        return j(
            Verdict::ExceedsLimit,
            format!(
                "EXCEEDS THE LIMIT: {f} {shown} is {side} the {} of {}{}: look at it now, before leaving the board; {}",
                l.words,
                fmt_in(u, l.value),
                if expected.is_empty() {
                    String::new()
                } else {
                    format!(" ({expected})")
                },
                worse_means(f)
            ),
        );
    }
    let within_limit = e
        .limit
        .as_ref()
        .map(|l| format!("; within the {}", limit_text(u, l)))
        .unwrap_or_default();

    let Some(b) = e.band else {
        return j(
            Verdict::NoBand,
            format!("STORED: {f} {shown}; no history to compare with{within_limit}"),
        );
    };
    let insulation = f.is_insulation();
    // Judge against the band as printed: a reading equal to a shown end is within.
    let (low, high) = (
        b.low.map(|x| as_shown(u, x)),
        b.high.map(|x| as_shown(u, x)),
    );
    let v = as_shown(u, v);
    if let Some(lo) = low
        && v < lo - 1e-9
    {
        // Two over-range readings are two lower bounds: an instrument with a lower top of
        // range today says nothing against the last visit's (common practice, no source).
        if over && let Some(last) = e.last.as_ref().filter(|l| l.over_range) {
            return j(
                Verdict::Within,
                format!(
                    "OVER RANGE AS BEFORE: {f} {shown}; over range at the last visit too (>{}), and two lower bounds agree{within_limit}",
                    fmt_in(u, last.raw)
                ),
            );
        }
        if over {
            return j(
                Verdict::Indeterminate,
                format!(
                    "CANNOT COMPARE: {f} {shown} is a lower bound below the band ({expected}); test on a higher range if the instrument has one"
                ),
            );
        }
        let by = if insulation {
            format!("{:.1} times lower than the band's bottom", lo / v.max(1e-9))
        } else {
            format!("{} below the band", fmt_in(u, lo - v))
        };
        let (verdict, means) = if insulation {
            (Verdict::Worse, worse_means(f))
        } else {
            (Verdict::Better, better_means(f))
        };
        return j(
            verdict,
            format!("OUTSIDE THE BAND: {f} {shown} is {by} ({expected}); {means}{within_limit}"),
        );
    }
    if let Some(hi) = high
        && v > hi + 1e-9
    {
        return j(
            Verdict::Worse,
            format!(
                "OUTSIDE THE BAND: {f} {shown} is {} above the band ({expected}); {}{within_limit}",
                fmt_in(u, v - hi),
                worse_means(f)
            ),
        );
    }
    j(
        Verdict::Within,
        format!("WITHIN THE BAND: {f} {shown} ({expected}){within_limit}"),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::onsite::brief::Band;

    fn exp(
        f: Field,
        expected: f64,
        lo: f64,
        hi: Option<f64>,
        limit: Option<LimitAt>,
    ) -> Expectation {
        Expectation {
            field: f,
            last: None,
            expected: Some(expected),
            band: Some(Band {
                low: Some(lo),
                high: hi,
            }),
            basis: String::new(),
            wide: None,
            limit,
        }
    }

    fn max(v: f64) -> Option<LimitAt> {
        Some(LimitAt {
            value: v,
            kind: LimitKind::Max,
            words: "measured-value maximum Zs".into(),
            advisory: false,
        })
    }

    #[test]
    fn within_outside_and_past_the_limit_in_words() {
        let e = exp(Field::Zs, 0.48, 0.43, Some(0.53), max(1.09));
        let w = judge(&e, &Entry::Value(0.50));
        assert_eq!(w.verdict, Verdict::Within);
        assert!(w.sentence.starts_with("WITHIN THE BAND"), "{}", w.sentence);
        assert!(
            w.sentence.contains("within the limit 1.09 Ω"),
            "{}",
            w.sentence
        );

        // 0.86 − 0.53 = 0.33 Ω above the band's top.
        let o = judge(&e, &Entry::Value(0.86));
        assert_eq!(o.verdict, Verdict::Worse);
        assert!(
            o.sentence.contains("0.33 Ω above the band"),
            "{}",
            o.sentence
        );
        assert!(o.sentence.contains("termination"), "{}", o.sentence);

        let x = judge(&e, &Entry::Value(1.20));
        assert_eq!(x.verdict, Verdict::ExceedsLimit);
        assert!(
            x.sentence.starts_with("EXCEEDS THE LIMIT"),
            "{}",
            x.sentence
        );

        // A reading equal to the band's end as shown is within, though the end is 0.5349.
        let shown = Expectation {
            band: Some(Band {
                low: Some(0.43),
                high: Some(0.5349),
            }),
            ..e.clone()
        };
        assert_eq!(judge(&shown, &Entry::Value(0.53)).verdict, Verdict::Within);
        assert_eq!(judge(&shown, &Entry::Value(0.54)).verdict, Verdict::Worse);

        let lower = judge(&e, &Entry::Value(0.30));
        assert_eq!(lower.verdict, Verdict::Better);
        assert!(
            lower.sentence.contains("0.13 Ω below the band"),
            "{}",
            lower.sentence
        );
    }

    #[test]
    fn neutral_and_insulation_meanings() {
        let e = exp(Field::R1rn, 0.50, 0.45, Some(0.55), None);
        assert!(judge(&e, &Entry::Value(0.9)).sentence.contains("neutral"));
        let ir = Expectation {
            limit: Some(LimitAt {
                value: 1.0,
                kind: LimitKind::Min,
                words: "minimum".into(),
                advisory: false,
            }),
            ..exp(Field::IrLe, 200.0, 100.0, None, None)
        };
        let j = judge(&ir, &Entry::Value(20.0));
        assert_eq!(j.verdict, Verdict::Worse);
        // 100 / 20 = 5.0 times lower.
        assert!(j.sentence.contains("5.0 times lower"), "{}", j.sentence);
        assert!(j.sentence.contains("insulation"), "{}", j.sentence);
        assert_eq!(
            judge(&ir, &Entry::OverRange(200.0)).verdict,
            Verdict::Within
        );
        assert_eq!(judge(&ir, &Entry::Value(5000.0)).verdict, Verdict::Within);
        assert_eq!(
            judge(&ir, &Entry::Value(0.5)).verdict,
            Verdict::ExceedsLimit
        );
        // A lower bound never fails a minimum, but one below the band cannot be compared.
        assert_eq!(
            judge(&ir, &Entry::OverRange(50.0)).verdict,
            Verdict::Indeterminate
        );
        // Unless the last reading was over range too: two lower bounds agree, whatever each
        // instrument's top of range.
        let after_over = Expectation {
            last: Some(crate::onsite::brief::LastReading {
                date: chrono::NaiveDate::from_ymd_opt(2024, 5, 1).unwrap(),
                raw: 999.0,
                over_range: true,
                ambient_c: Some(14.0),
            }),
            ..ir.clone()
        };
        let j = judge(&after_over, &Entry::OverRange(50.0));
        assert_eq!(j.verdict, Verdict::Within, "{}", j.sentence);
        assert!(!j.sentence.contains("CANNOT COMPARE"), "{}", j.sentence);
        assert!(j.sentence.contains("(>999 MΩ)"), "{}", j.sentence);
        // A reading below the band is still judged as such.
        assert_eq!(
            judge(&after_over, &Entry::Value(20.0)).verdict,
            Verdict::Worse
        );
        assert_eq!(judge(&ir, &Entry::Limitation).verdict, Verdict::Limitation);
        assert_eq!(judge(&ir, &Entry::Skip).verdict, Verdict::Skipped);
    }
}
