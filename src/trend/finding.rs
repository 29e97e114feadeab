//! The output side: what was found, in one sentence with its figures, and how urgent it is.

use std::cmp::Ordering;

use chrono::NaiveDate;
use serde::Serialize;

use super::{Limit, Quantity};

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FindingKind {
    /// A jump between consecutive visits that the earlier history does not explain.
    Step,
    /// A steady change over the baseline beyond the noise floor.
    Drift,
    /// R1+Rn rising relative to R1+R2 beyond what the conductor sizes predict.
    NeutralDivergence,
    /// Ze rising (step or drift): a supply or earthing matter for the network operator.
    ZeRise,
    /// The last reading is past its limit.
    Exceeds,
    /// The fitted line reaches the limit before the next due inspection.
    Approaching,
    /// Past a level that calls for investigation, though inside the limit (insulation below
    /// 2 MΩ, a TT installation's Ze above 200 Ω).
    Investigate,
}

/// How a finding ranks on the worklist. Ordered so that `Exceeds` is the greatest.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    /// A step, divergence or drift beyond the noise floor while still inside the limit.
    Changed,
    /// Projected to cross the limit before the next due inspection.
    Approaching,
    /// Past its limit at the last visit.
    Exceeds,
}

impl FindingKind {
    pub fn severity(self) -> Severity {
        match self {
            FindingKind::Exceeds => Severity::Exceeds,
            FindingKind::Approaching | FindingKind::Investigate => Severity::Approaching,
            _ => Severity::Changed,
        }
    }
}

/// When the fitted line reaches the limit, with a range from the slope's standard error.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Projection {
    /// Where the least-squares line reaches the limit (never before the last visit).
    pub date: NaiveDate,
    /// With the slope `projection_k` standard errors steeper towards the limit.
    pub earliest: NaiveDate,
    /// With the slope that much shallower; `None` when that slope no longer reaches the limit
    /// within the horizon.
    pub latest: Option<NaiveDate>,
    /// Least-squares slope per year in the working scale (decades per year for IR).
    pub slope_per_year: f64,
    /// The standard error used for the range, per year, working scale.
    pub slope_se_per_year: f64,
    pub limit: f64,
}

/// One thing worth telling the inspector about a series.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    pub kind: FindingKind,
    pub severity: Severity,
    pub quantity: Quantity,
    /// The quantity in words, e.g. `ring rn` where `quantity` is only `ring`.
    pub label: &'static str,
    /// One plain sentence with the figures.
    pub sentence: String,
    /// The visit the finding rests on: the step's visit, or the last visit.
    pub date: NaiveDate,
    /// Where a change is measured from (the earlier visit), when it is a change.
    pub from_date: Option<NaiveDate>,
    pub from_value: Option<f64>,
    /// The reading the change is measured to.
    pub to_value: Option<f64>,
    /// The series' last reading (normalised value) and whether it is only a lower bound.
    pub last_value: f64,
    pub last_censored: bool,
    /// Worsening beyond noise, in the working scale: Ω or ms, or decades for IR. At least
    /// this much when a censored reading is involved.
    pub change: Option<f64>,
    /// The noise floor the change was compared with, same scale.
    pub floor: Option<f64>,
    pub slope_per_year: Option<f64>,
    pub limit: Option<Limit>,
    /// The last reading as a share of its limit (value / max, or min / value); above 1 is past.
    pub margin_used: Option<f64>,
    pub projection: Option<Projection>,
    /// A shorter inspection interval that re-tests before the earliest projected crossing.
    pub recommended_interval_months: Option<u32>,
}

impl Finding {
    pub(crate) fn new(
        kind: FindingKind,
        quantity: Quantity,
        date: NaiveDate,
        sentence: String,
    ) -> Finding {
        Finding {
            kind,
            severity: kind.severity(),
            quantity,
            label: quantity.label(),
            sentence,
            date,
            from_date: None,
            from_value: None,
            to_value: None,
            last_value: 0.0,
            last_censored: false,
            change: None,
            floor: None,
            slope_per_year: None,
            limit: None,
            margin_used: None,
            projection: None,
            recommended_interval_months: None,
        }
    }

    /// How far past the noise floor a change goes, as a multiple of the floor.
    fn change_over_floor(&self) -> f64 {
        match (self.change, self.floor) {
            (Some(c), Some(f)) if f > 0.0 => c / f,
            _ => 0.0,
        }
    }
}

/// Most urgent first: `Exceeds` before `Approaching` before `Changed`. Within `Exceeds`, the
/// largest share of the limit used; within `Approaching`, the earliest possible crossing;
/// within `Changed`, the change that is the largest multiple of its noise floor.
pub fn compare_urgency(a: &Finding, b: &Finding) -> Ordering {
    b.severity.cmp(&a.severity).then_with(|| match a.severity {
        Severity::Exceeds => desc(a.margin_used, b.margin_used),
        Severity::Approaching => {
            let key = |f: &Finding| f.projection.map(|p| (p.earliest, p.date));
            match (key(a), key(b)) {
                (Some(x), Some(y)) => x.cmp(&y),
                (Some(_), None) => Ordering::Less,
                (None, Some(_)) => Ordering::Greater,
                (None, None) => Ordering::Equal,
            }
        }
        Severity::Changed => b.change_over_floor().total_cmp(&a.change_over_floor()),
    })
}

fn desc(a: Option<f64>, b: Option<f64>) -> Ordering {
    b.unwrap_or(f64::NEG_INFINITY)
        .total_cmp(&a.unwrap_or(f64::NEG_INFINITY))
}

/// Sorts findings most urgent first (stable, so equal findings keep their order).
pub fn rank(findings: &mut [Finding]) {
    findings.sort_by(compare_urgency);
}

/// A reading or amount in words: `0.52 Ω`, `0.055 Ω`, `2.0 MΩ`, `more than 200 MΩ`, `28 ms`.
pub(crate) fn fmt_value(q: Quantity, v: f64, censored: bool) -> String {
    let n = match q.unit() {
        "MΩ" if v >= 100.0 => format!("{v:.0}"),
        "MΩ" if v >= 1.0 => format!("{v:.1}"),
        "ms" => format!("{v:.0}"),
        _ if v >= 10.0 => format!("{v:.1}"),
        // Floors and yearly slopes are often a few hundredths: keep a third place for them.
        _ if v.abs() < 0.1 => format!("{v:.3}"),
        _ => format!("{v:.2}"),
    };
    if censored {
        format!("more than {n} {}", q.unit())
    } else {
        format!("{n} {}", q.unit())
    }
}

/// A rate per year in words, one place finer than [`fmt_value`] so that rate × years gives
/// back the change: `0.031 Ω`, `0.6 ms`.
pub(crate) fn fmt_rate(q: Quantity, v: f64) -> String {
    let n = match q.unit() {
        "ms" => format!("{v:.1}"),
        _ if v.abs() >= 10.0 => format!("{v:.1}"),
        _ => format!("{v:.3}"),
    };
    format!("{n} {}", q.unit())
}

/// A ratio in words: `12.5-fold`, `100-fold`.
pub(crate) fn fmt_fold(ratio: f64) -> String {
    if ratio >= 10.0 {
        format!("{ratio:.0}-fold")
    } else {
        format!("{ratio:.1}-fold")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    fn finding(kind: FindingKind) -> Finding {
        Finding::new(kind, Quantity::Zs, d(2024, 1, 1), String::new())
    }

    #[test]
    fn severity_then_urgency() {
        let mut small = finding(FindingKind::Exceeds);
        small.margin_used = Some(1.05);
        let mut big = finding(FindingKind::Exceeds);
        big.margin_used = Some(1.40);
        let proj = |earliest| Projection {
            date: d(2027, 1, 1),
            earliest,
            latest: None,
            slope_per_year: 0.1,
            slope_se_per_year: 0.01,
            limit: 1.37,
        };
        let mut soon = finding(FindingKind::Approaching);
        soon.projection = Some(proj(d(2025, 1, 1)));
        let mut later = finding(FindingKind::Approaching);
        later.projection = Some(proj(d(2026, 1, 1)));
        let mut step = finding(FindingKind::Step);
        step.change = Some(0.30);
        step.floor = Some(0.06);
        let mut drift = finding(FindingKind::Drift);
        drift.change = Some(0.08);
        drift.floor = Some(0.06);

        let mut all = vec![
            drift.clone(),
            later.clone(),
            small.clone(),
            step.clone(),
            soon.clone(),
            big.clone(),
        ];
        rank(&mut all);
        assert_eq!(all, vec![big, small, soon, later, step, drift]);
    }

    #[test]
    fn values_in_words() {
        assert_eq!(fmt_value(Quantity::R1r2, 0.524, false), "0.52 Ω");
        assert_eq!(fmt_value(Quantity::R1r2, 0.0551, false), "0.055 Ω");
        assert_eq!(fmt_value(Quantity::IrLe, 200.0, true), "more than 200 MΩ");
        assert_eq!(fmt_value(Quantity::IrLe, 2.0, false), "2.0 MΩ");
        assert_eq!(fmt_value(Quantity::IrLe, 0.4, false), "0.40 MΩ");
        assert_eq!(fmt_value(Quantity::Rcd, 28.4, false), "28 ms");
        assert_eq!(fmt_value(Quantity::Zs, 150.0, false), "150.0 Ω");
        assert_eq!(fmt_fold(100.0), "100-fold");
        assert_eq!(fmt_fold(2.54), "2.5-fold");
    }
}
