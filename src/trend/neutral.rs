//! The neutral check over a pair of series: R1+Rn gaining on R1+R2 beyond what the conductor
//! sizes predict.

use chrono::NaiveDate;

use super::finding::{Finding, FindingKind, fmt_value};
use super::series::current_baseline;
use super::stats::median;
use super::{Point, Quantity, Series, TrendConfig, TrendError};

/// R1+Rn rising relative to R1+R2 beyond what the conductor sizes predict.
///
/// `expected_ratio` is R1+Rn / R1+R2 for sound conductors, from their cross-sectional areas
/// (for 2.5/1.5 cable (7.41 + 7.41) / (7.41 + 12.10) = 0.76 from IEC 60228). At each visit
/// where both were read in both current baselines, two excesses are formed: `R1+Rn − ratio ×
/// R1+R2` (steady when both loops scale together) and `R1+Rn − R1+R2` = Rn − R2 (steady when
/// only the shared line conductor changes). A neutral working loose raises both while R1+R2
/// stays. Flagged when the smaller of the two rises, last excess over the median of the earlier
/// ones, is more than the noise floor at the first R1+Rn reading. A constant offset from the first visit
/// (a different route, an approximate ratio) is not flagged: only a rise is.
pub fn neutral_divergence(
    r1r2: &Series,
    r1rn: &Series,
    expected_ratio: f64,
    cfg: &TrendConfig,
) -> Result<Option<Finding>, TrendError> {
    cfg.validate()?;
    for (s, want) in [(r1r2, Quantity::R1r2), (r1rn, Quantity::R1rn)] {
        if s.quantity != want {
            return Err(TrendError::WrongQuantity {
                expected: want,
                found: s.quantity,
            });
        }
    }
    if !expected_ratio.is_finite() || expected_ratio <= 0.0 {
        return Err(TrendError::BadRatio {
            value: expected_ratio,
        });
    }
    let a = r1r2.sorted_points()?;
    let b = r1rn.sorted_points()?;
    let reset = r1r2.last_reset().max(r1rn.last_reset());
    Ok(divergence_sorted(
        (&a, &b),
        reset,
        expected_ratio,
        r1rn.limit,
        cfg,
    ))
}

/// [`neutral_divergence`] over points already sorted and checked (as a [`SeriesReport`] holds
/// them), with the latest reset of either series.
pub(crate) fn divergence_sorted(
    (a, b): (&[Point], &[Point]),
    reset: Option<NaiveDate>,
    expected_ratio: f64,
    limit: Option<super::Limit>,
    cfg: &TrendConfig,
) -> Option<Finding> {
    let (a, b) = (current_baseline(a, reset), current_baseline(b, reset));
    let pairs: Vec<(&Point, &Point)> = b
        .iter()
        .filter(|p| !p.censored)
        .filter_map(|pn| {
            a.iter()
                .find(|p2| p2.date == pn.date && !p2.censored)
                .map(|p2| (p2, pn))
        })
        .collect();
    let ((last2, lastn), earlier) = pairs.split_last()?;
    if earlier.is_empty() {
        return None;
    }
    // Two views of the same question, and the neutral is blamed only when both agree:
    // - against the csa ratio, R1+Rn − ratio × R1+R2 stays put when both loops scale together
    //   (a longer route, a warmer cable);
    // - the gap R1+Rn − R1+R2 is Rn − R2: a fault on the shared line conductor raises both
    //   loops alike and cancels there, where the ratio view would leak (1 − ratio) of it.
    // A neutral working loose raises both views by the same amount.
    // Each view as (median of the earlier visits, last visit).
    let view = |excess: &dyn Fn(&Point, &Point) -> f64| -> Option<(f64, f64)> {
        let mut before: Vec<f64> = earlier.iter().map(|(p2, pn)| excess(p2, pn)).collect();
        Some((median(&mut before)?, excess(last2, lastn)))
    };
    let (Some(ratio_view), Some(gap_view)) = (
        view(&|p2, pn| pn.value - expected_ratio * p2.value),
        view(&|p2, pn| pn.value - p2.value),
    ) else {
        return None;
    };
    let (by_ratio, by_gap) = (ratio_view.1 - ratio_view.0, gap_view.1 - gap_view.0);
    let rise = by_ratio.min(by_gap);
    let (first2, firstn) = earlier[0];
    let floor = cfg.floor_for(Quantity::R1rn).at(firstn.value);
    if rise <= floor {
        return None;
    }
    let q = Quantity::R1rn;
    // The sentence names the smaller of the two views, with the figures it was worked from.
    let (what, (before, after)) = if by_gap <= by_ratio {
        ("R1+Rn − R1+R2".to_string(), gap_view)
    } else {
        (format!("R1+Rn − {expected_ratio:.2} × R1+R2"), ratio_view)
    };
    let sentence = format!(
        "R1+Rn rose from {} to {} between {} and {} while R1+R2 went from {} to {}: {what} went from {} ({}) to {} at the last visit, a rise of {} beyond the noise floor of {} (for sound conductors of these sizes R1+Rn ≈ {:.2} × R1+R2), which points to the neutral path.",
        fmt_value(q, firstn.value, false),
        fmt_value(q, lastn.value, false),
        firstn.date,
        lastn.date,
        fmt_value(q, first2.value, false),
        fmt_value(q, last2.value, false),
        fmt_signed(q, before),
        if earlier.len() == 1 {
            "the earlier visit".to_string()
        } else {
            format!("the median of the {} earlier visits", earlier.len())
        },
        fmt_signed(q, after),
        fmt_value(q, rise, false),
        fmt_value(q, floor, false),
        expected_ratio,
    );
    let mut f = Finding::new(FindingKind::NeutralDivergence, q, lastn.date, sentence);
    f.from_date = Some(firstn.date);
    f.from_value = Some(firstn.value);
    f.to_value = Some(lastn.value);
    let last = b.last().unwrap_or(lastn);
    f.last_value = last.value;
    f.last_censored = last.censored;
    f.change = Some(rise);
    f.floor = Some(floor);
    f.limit = limit;
    Some(f)
}

/// A difference that may be negative, in words: `−0.14 Ω`.
fn fmt_signed(q: Quantity, v: f64) -> String {
    if v < 0.0 {
        format!("−{}", fmt_value(q, -v, false))
    } else {
        fmt_value(q, v, false)
    }
}
