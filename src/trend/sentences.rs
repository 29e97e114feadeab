//! The findings of one series in words: every figure in a sentence is the figure computed, on
//! the basis the sentence names (a reading as measured, its value at 20 °C, a prediction, a
//! rate and its span).

use chrono::NaiveDate;

use super::detect::Work;
use super::finding::{Finding, FindingKind, Projection, fmt_fold, fmt_rate, fmt_value};
use super::project::recommended_interval;
use super::{LimitKind, Point, Quantity, Scale, Series, Worse};

pub(super) fn limit_check(series: &Series, last: &Point) -> Option<Finding> {
    let q = series.quantity;
    let limit = series.limit?;
    let past = match limit.kind {
        // A lower bound above a maximum is past it; one below says nothing.
        LimitKind::Max => last.value > limit.value,
        // A lower bound can never show a reading below a minimum.
        LimitKind::Min => !last.censored && last.value < limit.value,
    };
    if !past {
        return None;
    }
    let (word, side) = match limit.kind {
        LimitKind::Max => ("maximum", "above"),
        LimitKind::Min => ("minimum", "below"),
    };
    let sentence = format!(
        "{} at the last visit ({}) was {}, {side} the {word} of {}{}.",
        q.label(),
        last.date,
        reading_words(q, last),
        fmt_value(q, limit.value, false),
        if q.temperature_sensitive() {
            " at 20 °C"
        } else {
            ""
        },
    );
    let mut f = Finding::new(FindingKind::Exceeds, q, last.date, sentence);
    f.to_value = Some(last.value);
    Some(f)
}

/// The last reading past the series' level of concern (inside its limit is the caller's
/// business: this is not asked when the limit is already exceeded).
pub(super) fn concern_check(series: &Series, last: &Point) -> Option<Finding> {
    let q = series.quantity;
    let c = series.concern?;
    let past = match c.level.kind {
        LimitKind::Max => last.value > c.level.value,
        LimitKind::Min => !last.censored && last.value < c.level.value,
    };
    if !past {
        return None;
    }
    let side = match c.level.kind {
        LimitKind::Max => "above",
        LimitKind::Min => "below",
    };
    let sentence = format!(
        "{} at the last visit ({}) was {}, {side} {} of {}; {}.",
        q.label(),
        last.date,
        fmt_value(q, last.value, last.censored),
        c.words,
        fmt_value(q, c.level.value, false),
        c.advice,
    );
    let mut f = Finding::new(FindingKind::Investigate, q, last.date, sentence);
    f.to_value = Some(last.value);
    Some(f)
}

pub(super) fn step_finding(
    q: Quantity,
    from: &Point,
    to: &Point,
    predicted: f64,
    unexplained: f64,
    floor: f64,
) -> Finding {
    let (verb, noun) = match q.worse() {
        Worse::Higher => ("rose", "rise"),
        Worse::Lower => ("fell", "fall"),
    };
    let (a, b) = (
        fmt_value(q, from.value, from.censored),
        fmt_value(q, to.value, to.censored),
    );
    let basis = basis_words(q, &[from, to]);
    let sentence = match q.scale() {
        Scale::Log10 => format!(
            "{} {verb} from {a} to {b} between the visits of {} and {}, {} {} {noun} from what the earlier readings predicted (about {}), beyond the noise floor of a factor of {:.1}{}.",
            q.label(),
            from.date,
            to.date,
            if from.censored { "at least a" } else { "a" },
            fmt_fold(10f64.powf(unexplained)),
            fmt_value(q, predicted, from.censored),
            10f64.powf(floor),
            meaning_tail(q),
        ),
        Scale::Linear => format!(
            "{} {verb} from {a} to {b}{basis} between the visits of {} and {}, {} more than the earlier readings predicted (about {}), beyond the noise floor of {}{}.",
            q.label(),
            from.date,
            to.date,
            fmt_value(q, unexplained, false),
            fmt_value(q, predicted, false),
            fmt_value(q, floor, false),
            meaning_tail(q),
        ),
    };
    let kind = if matches!(q, Quantity::Ze | Quantity::ZeTt) {
        FindingKind::ZeRise
    } else {
        FindingKind::Step
    };
    let mut f = Finding::new(kind, q, to.date, sentence);
    f.from_date = Some(from.date);
    f.from_value = Some(from.value);
    f.to_value = Some(to.value);
    f.change = Some(unexplained);
    f.floor = Some(floor);
    f
}

/// A reading in words on the basis it is judged: for a conductor resistance, as measured and
/// at 20 °C (or as measured only, with no ambient to correct it by).
fn reading_words(q: Quantity, p: &Point) -> String {
    let v = fmt_value(q, p.value, p.censored);
    if !q.temperature_sensitive() {
        return v;
    }
    match p.ambient_c {
        Some(_) => format!(
            "{} as measured, {v} at 20 °C",
            fmt_value(q, p.raw, p.censored)
        ),
        None => format!("{v} as measured (no ambient recorded, so not corrected to 20 °C)"),
    }
}

/// The basis of values shown side by side: at 20 °C, as measured, or a mix.
fn basis_words(q: Quantity, pts: &[&Point]) -> &'static str {
    if !q.temperature_sensitive() {
        return "";
    }
    let with = pts.iter().filter(|p| p.ambient_c.is_some()).count();
    if with == pts.len() {
        " at 20 °C"
    } else if with == 0 {
        " as measured, no ambient recorded"
    } else {
        " at 20 °C where the ambient was recorded"
    }
}

/// What a worsening of the quantity usually means, as the end of a sentence.
fn meaning_tail(q: Quantity) -> String {
    match q {
        Quantity::Ze => "; a rise in Ze is a supply or earthing matter to report to the network operator".into(),
        Quantity::ZeTt => "; on a TT installation Ze includes the installation's own earth electrode, so a rise like this points to the electrode or its connection, the landlord's to put right".into(),
        Quantity::Ra => "; a rise in the earth electrode's resistance beyond its seasonal swing points to the electrode or its connection, the landlord's to put right".into(),
        Quantity::IrLl | Quantity::IrLe => String::new(),
        _ => format!("; {}", step_meaning(q)),
    }
}

pub(super) fn drift_finding(
    w: &Work<'_>,
    adjusted: &[f64],
    floor: &super::NoiseFloor,
    slope: f64,
) -> Option<Finding> {
    let q = w.q;
    let n = adjusted.len();
    let years = w.x[n - 1] - w.x[0];
    let change = w.sign * slope * years;
    let f = floor.at(adjusted[0]) + w.unknown_temperature(&[0, n - 1]);
    if change <= f {
        return None;
    }
    let (first, last) = (&w.pts[0], &w.pts[n - 1]);
    let verb = match q.worse() {
        Worse::Higher => "risen",
        Worse::Lower => "fallen",
    };
    let (a, b) = (
        fmt_value(q, first.value, first.censored),
        fmt_value(q, last.value, last.censored),
    );
    let sentence = match q.scale() {
        Scale::Log10 => format!(
            "{} has {verb} {} {} over {years:.1} years on its fitted trend (readings from {a} to {b}), beyond the noise floor of a factor of {:.1}{}.",
            q.label(),
            if first.censored { "at least" } else { "about" },
            fmt_fold(10f64.powf(change)),
            10f64.powf(f),
            meaning_tail(q),
        ),
        Scale::Linear => format!(
            "{} has {verb} by {} over {years:.1} years, {} a year on its fitted trend (readings from {a} to {b}{}), beyond the noise floor of {}{}.",
            q.label(),
            fmt_value(q, change, false),
            fmt_rate(q, w.sign * slope),
            basis_words(q, &[first, last]),
            fmt_value(q, f, false),
            if q == Quantity::Rcd {
                String::new()
            } else {
                meaning_tail(q)
            }
            .replace("a sudden rise", "a rise"),
        ),
    };
    let kind = if matches!(q, Quantity::Ze | Quantity::ZeTt) {
        FindingKind::ZeRise
    } else {
        FindingKind::Drift
    };
    let mut out = Finding::new(kind, q, last.date, sentence);
    out.from_date = Some(first.date);
    out.from_value = Some(first.value);
    out.to_value = Some(last.value);
    out.change = Some(change);
    out.floor = Some(f);
    out.slope_per_year = Some(slope);
    Some(out)
}

pub(super) fn approaching(
    q: Quantity,
    last: &Point,
    (limit, words): (f64, Option<&'static str>),
    p: &Projection,
    next_due: NaiveDate,
) -> Finding {
    let months = recommended_interval(last.date, p.earliest, next_due);
    let word = words.unwrap_or(match q.worse() {
        Worse::Higher => "its maximum",
        Worse::Lower => "its minimum",
    });
    let latest = p
        .latest
        .map_or("later".to_string(), |d| d.format("%Y-%m").to_string());
    let advice = if p.earliest <= last.date {
        "the earliest projected crossing is already past, so it should be re-tested promptly"
            .to_string()
    } else if months <= 1 {
        "a re-test within a month would come before the earliest projected crossing".to_string()
    } else {
        format!(
            "an interval of {months} months would re-test before the earliest projected crossing"
        )
    };
    let sentence = format!(
        "{} is projected to reach {word} of {} around {} (between {} and {}), before the next inspection due {next_due}; {advice}.",
        q.label(),
        fmt_value(q, limit, false),
        p.date.format("%Y-%m"),
        p.earliest.format("%Y-%m"),
        latest,
    );
    let mut f = Finding::new(FindingKind::Approaching, q, last.date, sentence);
    f.to_value = Some(last.value);
    f.slope_per_year = Some(p.slope_per_year);
    f.projection = Some(*p);
    f.recommended_interval_months = Some(months);
    f
}

/// What a sudden rise in a quantity usually means on site, in words.
fn step_meaning(q: Quantity) -> &'static str {
    match q {
        Quantity::Rcd => {
            "an RCD that has become slower to operate should be tested again and its condition checked"
        }
        Quantity::R1rn => {
            "a sudden rise like this often means a line or neutral termination working loose"
        }
        Quantity::R2 => {
            "a sudden rise like this often means a protective conductor connection working loose"
        }
        _ => "a sudden rise like this often means a termination working loose",
    }
}
