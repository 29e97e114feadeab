//! Invented histories with known answers. The arithmetic is in the comments; the floors are
//! the documented defaults of `TrendConfig` (resistance: 0.01 + 0.03 Ω + 6 %).

use chrono::NaiveDate;

use super::*;

fn d(y: i32, m: u32, day: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, day).unwrap()
}

fn raw_series(q: Quantity, pts: &[(NaiveDate, f64)]) -> Series {
    Series::new(q, pts.iter().map(|&(d, v)| Point::raw(d, v)).collect())
}

fn kinds(r: &SeriesReport) -> Vec<FindingKind> {
    r.findings.iter().map(|f| f.kind).collect()
}

fn cfg() -> TrendConfig {
    TrendConfig::default()
}

const FAR: fn() -> NaiveDate = || d(2099, 1, 1);

/// Copper, α = 0.00393 per K at 20 °C (IEC 60228, as used by BS 7671 guidance).
const ALPHA: f64 = 0.00393;

#[test]
fn termination_loosening_at_the_third_visit_is_one_step() {
    // 0.48, 0.49, then 0.85 Ω. The jump 0.49 → 0.85 = 0.36 Ω; floor at 0.49 Ω is
    // 0.01 + 0.03 + 0.0294 = 0.0694 Ω. The earlier line rises 0.01 Ω in 5 years, so it
    // predicts about 0.50 Ω at 2022: 0.35 Ω unexplained, a step. The fourth visit (0.86)
    // continues from the new level, so it is neither a second step nor a drift. No ambient
    // was recorded, so the floor gains 4 % of the larger reading for the unknown conductor
    // temperature: 0.0694 + 0.04 × 0.85 = 0.1034 Ω.
    let s = raw_series(
        Quantity::R1r2,
        &[
            (d(2012, 3, 1), 0.48),
            (d(2017, 3, 1), 0.49),
            (d(2022, 3, 1), 0.85),
            (d(2024, 3, 1), 0.86),
        ],
    );
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Step], "{:#?}", r.findings);
    let f = &r.findings[0];
    assert_eq!(f.date, d(2022, 3, 1));
    assert_eq!(f.from_date, Some(d(2017, 3, 1)));
    assert_eq!(f.severity, Severity::Changed);
    let change = f.change.unwrap();
    assert!((change - 0.35).abs() < 0.005, "{change}");
    assert!((f.floor.unwrap() - 0.1034).abs() < 1e-9);
    assert!(f.sentence.contains("0.49 Ω to 0.85 Ω"), "{}", f.sentence);
    assert!(f.sentence.contains("termination"), "{}", f.sentence);
    assert_eq!(f.last_value, 0.86);

    // The same circuit without the fault: 0.48, 0.49, 0.50 — nothing to report.
    let calm = raw_series(
        Quantity::R1r2,
        &[
            (d(2012, 3, 1), 0.48),
            (d(2017, 3, 1), 0.49),
            (d(2022, 3, 1), 0.50),
        ],
    );
    assert!(analyse(&calm, FAR(), &cfg()).unwrap().findings.is_empty());
}

#[test]
fn neutral_going_high_while_r1r2_stays_diverges() {
    // Expected ratio for 2.5/1.5 cable: (7.41 + 7.41) / (7.41 + 12.10) = 0.7596
    // (IEC 60228 conductor resistances; derived). Excess = R1+Rn − ratio × R1+R2:
    // 0.46 − 0.4558 = 0.004, 0.46 − 0.4634 = −0.003, 0.47 − 0.4558 = 0.014; median 0.004.
    // Last: 0.70 − 0.4634 = 0.237, a rise of 0.233 Ω. Gap R1+Rn − R1+R2: −0.14, −0.15, −0.13,
    // median −0.14; last 0.70 − 0.61 = 0.09, a rise of 0.23 Ω. The smaller, 0.23 Ω, is over
    // the floor at 0.46 Ω (0.01 + 0.03 + 0.0276 = 0.0676 Ω).
    let ratio = (7.41 + 7.41) / (7.41 + 12.10);
    let dates = [d(2012, 5, 1), d(2016, 5, 1), d(2020, 5, 1), d(2024, 5, 1)];
    let r1r2 = raw_series(
        Quantity::R1r2,
        &dates
            .iter()
            .copied()
            .zip([0.60, 0.61, 0.60, 0.61])
            .collect::<Vec<_>>(),
    );
    let r1rn = raw_series(
        Quantity::R1rn,
        &dates
            .iter()
            .copied()
            .zip([0.46, 0.46, 0.47, 0.70])
            .collect::<Vec<_>>(),
    );
    let f = neutral_divergence(&r1r2, &r1rn, ratio, &cfg())
        .unwrap()
        .expect("divergence");
    assert_eq!(f.kind, FindingKind::NeutralDivergence);
    assert_eq!(f.quantity, Quantity::R1rn);
    assert!((f.change.unwrap() - 0.23).abs() < 0.001, "{:?}", f.change);
    assert!(f.sentence.contains("neutral"), "{}", f.sentence);
    // R1+R2 alone shows nothing.
    assert!(analyse(&r1r2, FAR(), &cfg()).unwrap().findings.is_empty());

    // A line termination working loose raises both loops by the same 0.30 Ω: the gap
    // R1+Rn − R1+R2 stays at about −0.14, so the neutral is not blamed (common practice, no
    // source: the line conductor is common to both loops).
    let line_fault_r1r2 = raw_series(
        Quantity::R1r2,
        &dates
            .iter()
            .copied()
            .zip([0.60, 0.61, 0.60, 0.91])
            .collect::<Vec<_>>(),
    );
    let line_fault_r1rn = raw_series(
        Quantity::R1rn,
        &dates
            .iter()
            .copied()
            .zip([0.46, 0.46, 0.47, 0.76])
            .collect::<Vec<_>>(),
    );
    assert!(
        neutral_divergence(&line_fault_r1r2, &line_fault_r1rn, ratio, &cfg())
            .unwrap()
            .is_none()
    );

    // Both loops rising in proportion (a longer run, warmer cable): no divergence.
    let r1r2 = raw_series(
        Quantity::R1r2,
        &dates
            .iter()
            .copied()
            .zip([0.60, 0.66, 0.72, 0.80])
            .collect::<Vec<_>>(),
    );
    let prop: Vec<f64> = [0.60, 0.66, 0.72, 0.80].iter().map(|v| v * ratio).collect();
    let r1rn = raw_series(
        Quantity::R1rn,
        &dates.iter().copied().zip(prop).collect::<Vec<_>>(),
    );
    assert!(
        neutral_divergence(&r1r2, &r1rn, ratio, &cfg())
            .unwrap()
            .is_none()
    );

    // A constant offset from the first visit is not a rise.
    let r1rn = raw_series(
        Quantity::R1rn,
        &dates
            .iter()
            .copied()
            .zip([0.60, 0.61, 0.60, 0.61])
            .collect::<Vec<_>>(),
    );
    assert!(
        neutral_divergence(&r1r2, &r1rn, ratio, &cfg())
            .unwrap()
            .is_none()
    );

    // Wrong series or ratio: a clear error, not a panic.
    let e = neutral_divergence(&r1rn, &r1rn, ratio, &cfg()).unwrap_err();
    assert_eq!(e.to_string(), "expected a R1+R2 series, found R1+Rn");
    assert!(matches!(
        neutral_divergence(&r1r2, &r1rn, f64::NAN, &cfg()),
        Err(TrendError::BadRatio { .. })
    ));
}

#[test]
fn insulation_falling_from_over_range_to_two_megohms() {
    // Minimum 1.0 MΩ for circuits up to 500 V (BS 7671:2018 Table 64).
    let limit = Limit::min(1.0);
    let s = Series::new(
        Quantity::IrLe,
        vec![
            Point::over_range(d(2010, 6, 1), 200.0),
            Point::over_range(d(2015, 6, 1), 200.0),
            Point::over_range(d(2020, 6, 1), 200.0),
            Point::raw(d(2025, 6, 1), 2.0),
        ],
    )
    .with_limit(limit);
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    // log10(200) − log10(2) = 2 decades at least, against a floor of 0.3 decades: a step.
    // 2.0 MΩ is still above the minimum, and one uncensored reading fits no line.
    assert_eq!(kinds(&r), vec![FindingKind::Step], "{:#?}", r.findings);
    let f = &r.findings[0];
    assert!((f.change.unwrap() - 2.0).abs() < 1e-12);
    assert!(
        f.sentence
            .contains("from more than 200 MΩ to 2.0 MΩ between the visits of 2020-06-01 and 2025-06-01, at least a 100-fold fall"),
        "{}",
        f.sentence
    );
    assert!(r.fit.is_none() && r.projection.is_none());
    assert!((f.margin_used.unwrap() - 0.5).abs() < 1e-12);

    // Two visits, >200 then 2: no history to call it a step, but a fall of at least
    // 100-fold over the span is a drift.
    let two = Series::new(
        Quantity::IrLe,
        vec![
            Point::over_range(d(2020, 6, 1), 200.0),
            Point::raw(d(2025, 6, 1), 2.0),
        ],
    );
    let r = analyse(&two, FAR(), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Drift]);
    assert!(r.findings[0].sentence.contains("at least 100-fold"));

    // Censored readings only: no trend, nothing to report.
    let flat = Series::new(
        Quantity::IrLe,
        vec![
            Point::over_range(d(2015, 6, 1), 999.0),
            Point::over_range(d(2020, 6, 1), 200.0),
            Point::over_range(d(2025, 6, 1), 200.0),
        ],
    )
    .with_limit(limit);
    let r = analyse(&flat, FAR(), &cfg()).unwrap();
    assert!(r.findings.is_empty(), "{:#?}", r.findings);

    // A fall below the minimum: 50 → 0.8 MΩ exceeds (and is a change).
    let low = Series::new(
        Quantity::IrLl,
        vec![
            Point::raw(d(2020, 6, 1), 50.0),
            Point::raw(d(2025, 6, 1), 0.8),
        ],
    )
    .with_limit(limit);
    let r = analyse(&low, FAR(), &cfg()).unwrap();
    assert_eq!(r.findings[0].kind, FindingKind::Exceeds);
    assert!(
        r.findings[0]
            .sentence
            .contains("was 0.80 MΩ, below the minimum of 1.0 MΩ")
    );
}

#[test]
fn ze_rising_is_a_supply_matter() {
    // Ze 0.20, 0.24, 0.30, 0.36 Ω at five-year visits. Each jump is explained by the
    // earlier line (at 2020 the line through 0.20 and 0.24 predicts 0.28; at 2025 the
    // robust line, slope 0.01 Ω/yr and intercept 0.20, predicts 0.35), so no step.
    // Theil–Sen: pair slopes 0.008, 0.010, 0.0107, 0.012, 0.012, 0.012 per year → median
    // 0.01133; × 15 years = 0.17 Ω against a floor of 0.01 + 0.03 + 35 % × 0.20 = 0.11 Ω.
    // Against the 0.80 Ω typical TN-S maximum (network operators; common practice, advisory)
    // the line reaches it some 40 years on: not approaching.
    let s = raw_series(
        Quantity::Ze,
        &[
            (d(2010, 4, 1), 0.20),
            (d(2015, 4, 1), 0.24),
            (d(2020, 4, 1), 0.30),
            (d(2025, 4, 1), 0.36),
        ],
    )
    .with_limit(Limit::max(0.80));
    let r = analyse(&s, d(2030, 4, 1), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::ZeRise], "{:#?}", r.findings);
    let f = &r.findings[0];
    assert!((f.slope_per_year.unwrap() - 0.011333).abs() < 1e-4);
    assert!((f.change.unwrap() - 0.17).abs() < 1e-3);
    assert!(f.sentence.contains("network operator"), "{}", f.sentence);
    assert!(r.projection.unwrap().date > d(2060, 1, 1));
}

#[test]
fn seasonal_swing_is_not_flagged_once_normalised() {
    // A sound circuit, R1+R2 = 0.80 Ω at 20 °C throughout. Tested alternately in winter and
    // summer at 0–40 °C, the display reads R20 × (1 + α(t − 20)) rounded to 0.01 Ω:
    // at 2 °C × 0.929, at 38 °C × 1.071, at 0 °C × 0.921, at 40 °C × 1.079 — a ±8 % swing.
    // The caller normalises back with R20 = Rt / (1 + α(t − 20)) (IEC 60228 coefficient).
    let r20 = 0.80;
    let visits = [
        (d(2016, 1, 10), 2.0),
        (d(2017, 7, 10), 38.0),
        (d(2018, 1, 10), 4.0),
        (d(2019, 7, 10), 36.0),
        (d(2020, 1, 10), 0.0),
        (d(2021, 7, 10), 40.0),
    ];
    let mut normalised = Vec::new();
    let mut raw_only = Vec::new();
    for &(date, t) in &visits {
        let factor = 1.0 + ALPHA * (t - 20.0);
        let raw = (r20 * factor * 100.0).round() / 100.0;
        normalised.push(Point::normalised(date, raw, raw / factor, t));
        raw_only.push(Point::raw(date, raw));
    }
    let raws: Vec<f64> = raw_only.iter().map(|p| p.raw).collect();
    assert_eq!(raws, vec![0.74, 0.86, 0.75, 0.85, 0.74, 0.86]);

    let s = Series::new(Quantity::R1r2, normalised).with_limit(Limit::max(1.20));
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    assert!(r.findings.is_empty(), "{:#?}", r.findings);
    assert_eq!(r.not_normalised, 0);

    // Control: the raw readings, uncorrected, do look like a step (0.74 → 0.86 = 0.12 Ω
    // against a floor of 0.01 + 0.03 + 0.06 × 0.74 = 0.0844 Ω, plus 0.04 × 0.86 = 0.0344 Ω
    // for the unknown temperature: 0.1188 Ω), so the test above can fail.
    let s = Series::new(Quantity::R1r2, raw_only);
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    assert!(kinds(&r).contains(&FindingKind::Step), "{:#?}", r.findings);
    assert_eq!(r.not_normalised, 6);
}

#[test]
fn repair_resets_the_baseline() {
    // 0.50, 0.52, 0.95 (a loose termination), remade on 2021-06-01, then 0.51, 0.52.
    let pts = [
        (d(2012, 6, 1), 0.50),
        (d(2016, 6, 1), 0.52),
        (d(2020, 6, 1), 0.95),
        (d(2021, 6, 1), 0.51),
        (d(2025, 6, 1), 0.52),
    ];
    let repaired = raw_series(Quantity::R1r2, &pts).with_reset(d(2021, 6, 1));
    let r = analyse(&repaired, FAR(), &cfg()).unwrap();
    // Only 0.51 and 0.52 remain in the baseline: 0.01 Ω is inside the floor.
    assert!(r.findings.is_empty(), "{:#?}", r.findings);
    assert_eq!(r.baseline_len, 2);
    assert_eq!(r.baseline_start, Some(d(2021, 6, 1)));
    assert_eq!(r.points.len(), 5);

    // Without the reset the old step still shows, and the drop is not called anything.
    let unrecorded = raw_series(Quantity::R1r2, &pts);
    let r = analyse(&unrecorded, FAR(), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Step]);
    assert_eq!(r.findings[0].date, d(2020, 6, 1));

    // A replaced circuit reading higher than the old one: its first reading is not a step.
    let replaced = raw_series(
        Quantity::R1r2,
        &[
            (d(2014, 6, 1), 0.40),
            (d(2018, 6, 1), 0.41),
            (d(2022, 6, 1), 0.90),
            (d(2025, 6, 1), 0.91),
        ],
    )
    .with_reset(d(2022, 1, 1));
    assert!(
        analyse(&replaced, FAR(), &cfg())
            .unwrap()
            .findings
            .is_empty()
    );

    // A reset after the last reading: that reading is of wiring since repaired.
    let pending = raw_series(Quantity::Zs, &[(d(2024, 6, 1), 2.0)])
        .with_limit(Limit::max(1.09))
        .with_reset(d(2024, 9, 1));
    let r = analyse(&pending, FAR(), &cfg()).unwrap();
    assert!(r.findings.is_empty());
    assert_eq!(
        r.note.as_deref(),
        Some("no reading since the baseline was reset on 2024-09-01")
    );
}

#[test]
fn single_visit_has_no_trend_but_is_judged() {
    // B32 circuit-breaker: Table 41.3 gives 1.37 Ω (BS 7671:2018+A2:2022); the measured-value
    // rule of thumb 0.8 × 1.37 = 1.096, rounded down to 1.09 Ω (IET On-Site Guide Appendix B).
    let over = raw_series(Quantity::Zs, &[(d(2024, 3, 5), 1.20)]).with_limit(Limit::max(1.09));
    let r = analyse(&over, d(2029, 3, 5), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Exceeds]);
    assert!(r.fit.is_none() && r.projection.is_none());
    assert_eq!(
        r.note.as_deref(),
        Some("one visit in this baseline: no trend yet")
    );
    let f = &r.findings[0];
    assert_eq!(f.severity, Severity::Exceeds);
    assert_eq!(
        f.sentence,
        "Zs at the last visit (2024-03-05) was 1.20 Ω as measured (no ambient recorded, so not corrected to 20 °C), above the maximum of 1.09 Ω at 20 °C."
    );
    assert!((f.margin_used.unwrap() - 1.20 / 1.09).abs() < 1e-12);

    let within = raw_series(Quantity::Zs, &[(d(2024, 3, 5), 0.90)]).with_limit(Limit::max(1.09));
    assert!(
        analyse(&within, d(2029, 3, 5), &cfg())
            .unwrap()
            .findings
            .is_empty()
    );
    // Exactly at the limit is within it (the tables are maxima).
    let at = raw_series(Quantity::Zs, &[(d(2024, 3, 5), 1.09)]).with_limit(Limit::max(1.09));
    assert!(
        analyse(&at, d(2029, 3, 5), &cfg())
            .unwrap()
            .findings
            .is_empty()
    );
    // An over-range loop reading (a lower bound) past the maximum still exceeds it.
    let open = Series::new(Quantity::Zs, vec![Point::over_range(d(2024, 3, 5), 20.0)])
        .with_limit(Limit::max(1.09));
    let r = analyse(&open, d(2029, 3, 5), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Exceeds]);
    assert!(r.findings[0].sentence.contains("more than 20.0 Ω"));
}

#[test]
fn approaching_the_limit_before_the_next_inspection() {
    // Zs 0.50, 0.70, 0.90 Ω at 2014, 2019, 2024 (x = 0, 4.9993, 9.9986 years): slope 0.0400
    // Ω/yr. Limit 1.09 Ω (0.8 × 1.37 for B32; BS 7671 Table 41.3, IET On-Site Guide).
    // The line meets it at x = x̄ + (1.09 − ȳ) / b = 5.0 + 0.39 / 0.04 = 14.75 years → 2028-10-01,
    // before the next inspection due 2029-01-01.
    // Spread: residuals are ~0, so σ = floor(ȳ = 0.70) / 2 = (0.01 + 0.03 + 0.042) / 2 = 0.041;
    // sxx = 49.986, slope se = 0.041 / 7.070 = 0.005799; ± 2 se → 0.05160 and 0.02841 Ω/yr:
    // earliest x = 5.0 + 0.39 / 0.0516 = 12.557 → 2026-07-23, latest 18.728 → 2032-09-23.
    // Interval: whole months from 2024-01-01 to 2026-07-23 = 30.
    let s = raw_series(
        Quantity::Zs,
        &[
            (d(2014, 1, 1), 0.50),
            (d(2019, 1, 1), 0.70),
            (d(2024, 1, 1), 0.90),
        ],
    )
    .with_limit(Limit::max(1.09));
    let r = analyse(&s, d(2029, 1, 1), &cfg()).unwrap();
    assert_eq!(
        kinds(&r),
        vec![FindingKind::Approaching, FindingKind::Drift],
        "{:#?}",
        r.findings
    );
    let p = r.projection.unwrap();
    assert_eq!(p.date, d(2028, 10, 1));
    assert_eq!(p.earliest, d(2026, 7, 23));
    assert_eq!(p.latest, Some(d(2032, 9, 23)));
    let f = &r.findings[0];
    assert_eq!(f.recommended_interval_months, Some(30));
    assert!(f.sentence.contains("around 2028-10"), "{}", f.sentence);
    let fit = r.fit.unwrap();
    assert!((fit.least_squares_per_year - 0.04).abs() < 1e-4);
    assert_eq!(fit.n, 3);

    // Approaching only when the crossing comes before the due date: a day after, it is; on
    // the day itself, it is not.
    let r = analyse(&s, d(2028, 10, 2), &cfg()).unwrap();
    assert_eq!(kinds(&r)[0], FindingKind::Approaching);
    let r = analyse(&s, d(2028, 10, 1), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Drift]);
}

#[test]
fn a_slope_inside_the_noise_projects_nothing() {
    // Zs 1.00, 1.02, 1.03 Ω near a 1.09 Ω limit: the fitted line reaches it soon, but a
    // 0.03 Ω change is inside the floor (0.01 + 0.03 + 0.06 = 0.10 Ω), so not approaching.
    let s = raw_series(
        Quantity::Zs,
        &[
            (d(2014, 1, 1), 1.00),
            (d(2019, 1, 1), 1.02),
            (d(2024, 1, 1), 1.03),
        ],
    )
    .with_limit(Limit::max(1.09));
    let r = analyse(&s, d(2029, 1, 1), &cfg()).unwrap();
    assert!(r.findings.is_empty(), "{:#?}", r.findings);
    assert!(r.projection.is_some());
}

#[test]
fn rcd_times_step_and_exceed() {
    // 1 × IΔn times of a general type RCD, at most 300 ms (BS 7671:2018+A2:2022 Reg 643.8;
    // BS EN 61008-1 / 61009-1). Invented readings with ordinary point-on-wave scatter.
    // Floor at 19 ms: 1 + 40 + 0.20 × 19 = 44.8 ms; 18 → 31 ms is scatter, not a finding.
    let quiet = raw_series(
        Quantity::Rcd,
        &[
            (d(2012, 2, 1), 18.0),
            (d(2016, 2, 1), 22.0),
            (d(2020, 2, 1), 19.0),
            (d(2024, 2, 1), 31.0),
        ],
    )
    .with_limit(Limit::max(300.0));
    let r = analyse(&quiet, d(2029, 2, 1), &cfg()).unwrap();
    assert!(r.findings.is_empty(), "{:#?}", r.findings);
    // A jump to 150 ms is 131 ms over the earlier readings: a step, still within 300 ms.
    let slow = raw_series(
        Quantity::Rcd,
        &[
            (d(2012, 2, 1), 18.0),
            (d(2016, 2, 1), 22.0),
            (d(2020, 2, 1), 19.0),
            (d(2024, 2, 1), 150.0),
        ],
    )
    .with_limit(Limit::max(300.0));
    let r = analyse(&slow, d(2029, 2, 1), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Step]);
    // 5 × IΔn at 45 ms is past its 40 ms maximum (general type).
    let five = raw_series(Quantity::Rcd, &[(d(2024, 2, 1), 45.0)]).with_limit(Limit::max(40.0));
    let r = analyse(&five, d(2029, 2, 1), &cfg()).unwrap();
    assert_eq!(kinds(&r), vec![FindingKind::Exceeds]);
    assert!(
        r.findings[0]
            .sentence
            .contains("was 45 ms, above the maximum of 40 ms")
    );
}

#[test]
fn bad_input_is_an_error_not_a_panic() {
    let s = raw_series(Quantity::R1r2, &[(d(2020, 1, 1), -0.1)]);
    let e = analyse(&s, FAR(), &cfg()).unwrap_err();
    assert_eq!(
        e.to_string(),
        "R1+R2 reading of 2020-01-01 is -0.1; expected 0 or more"
    );
    let s = raw_series(Quantity::Zs, &[(d(2020, 1, 1), 0.5)]).with_limit(Limit::max(f64::NAN));
    assert!(matches!(
        analyse(&s, FAR(), &cfg()),
        Err(TrendError::BadLimit { .. })
    ));
    let mut c = cfg();
    c.projection_k = -1.0;
    let s = raw_series(Quantity::Zs, &[(d(2020, 1, 1), 0.5)]);
    assert_eq!(
        analyse(&s, FAR(), &c).unwrap_err().to_string(),
        "trend setting projection_k: expected finite and 0 or more"
    );
    // No points at all: a report with a note, not an error.
    let r = analyse(&Series::new(Quantity::Ze, vec![]), FAR(), &cfg()).unwrap();
    assert_eq!(r.note.as_deref(), Some("no readings"));
}

#[test]
fn report_serialises_with_stable_keys() {
    let s = raw_series(
        Quantity::Ring(RingLeg::Rn),
        &[
            (d(2012, 3, 1), 0.30),
            (d(2017, 3, 1), 0.30),
            (d(2022, 3, 1), 0.60),
        ],
    );
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    let v = serde_json::to_value(&r).unwrap();
    assert_eq!(v["quantity"], "ring");
    assert_eq!(v["label"], "ring rn");
    assert_eq!(v["findings"][0]["kind"], "step");
    assert_eq!(v["findings"][0]["severity"], "changed");
    assert_eq!(v["points"][0]["date"], "2012-03-01");
    assert!(v["findings"][0]["projection"].is_null());
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    fn dates(gaps: &[u32]) -> Vec<NaiveDate> {
        let mut day = d(2000, 1, 1);
        gaps.iter()
            .map(|g| {
                day += chrono::Duration::days(i64::from(*g));
                day
            })
            .collect()
    }

    proptest! {
        // Readings that never get worse give no step, drift or projection, whatever their
        // spacing: a sign error in any detector would show here.
        #[test]
        fn readings_that_only_improve_are_never_flagged(
            start in 0.1f64..5.0,
            falls in proptest::collection::vec(0.0f64..0.5, 1..8),
            gaps in proptest::collection::vec(30u32..3000, 8),
        ) {
            let ds = dates(&gaps);
            let mut v = start;
            let mut pts = vec![Point::raw(ds[0], v)];
            for (i, f) in falls.iter().enumerate() {
                v *= 1.0 - f;
                pts.push(Point::raw(ds[i + 1], v));
            }
            let zs = Series::new(Quantity::Zs, pts.clone()).with_limit(Limit::max(start * 2.0));
            let r = analyse(&zs, d(2100, 1, 1), &cfg()).unwrap();
            prop_assert!(r.findings.is_empty(), "{:#?}", r.findings);

            // The mirror image for insulation resistance: only rising.
            let ir: Vec<Point> = pts.iter().map(|p| Point::raw(p.date, 10.0 / p.value)).collect();
            let ir = Series::new(Quantity::IrLe, ir).with_limit(Limit::min(0.5));
            let r = analyse(&ir, d(2100, 1, 1), &cfg()).unwrap();
            prop_assert!(r.findings.is_empty(), "{:#?}", r.findings);
        }

        // Analysis does not panic on any finite, valid input.
        #[test]
        fn any_valid_series_is_analysed(
            values in proptest::collection::vec((0.001f64..1000.0, any::<bool>()), 0..10),
            gaps in proptest::collection::vec(1u32..5000, 10),
            limit in 0.01f64..100.0,
            reset in proptest::option::of(0usize..10),
        ) {
            let ds = dates(&gaps);
            let pts: Vec<Point> = values
                .iter()
                .zip(&ds)
                .map(|(&(v, c), &date)| if c { Point::over_range(date, v) } else { Point::raw(date, v) })
                .collect();
            for (q, l) in [(Quantity::R1r2, Limit::max(limit)), (Quantity::IrLl, Limit::min(limit))] {
                let mut s = Series::new(q, pts.clone()).with_limit(l);
                if let Some(i) = reset {
                    s = s.with_reset(ds[i]);
                }
                let r = analyse(&s, d(2040, 1, 1), &cfg()).unwrap();
                prop_assert!(r.findings.iter().all(|f| !f.sentence.is_empty()));
            }
        }
    }
}

#[test]
fn fitted_line_passes_through_two_points_and_follows_the_log_scale() {
    // Two readings fix the least-squares line exactly: it must return them on their dates
    // and the midpoint halfway between (arithmetic of a straight line, no source needed).
    let s = raw_series(
        Quantity::R1r2,
        &[(d(2016, 1, 1), 0.40), (d(2020, 1, 1), 0.60)],
    );
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    assert!((r.fitted_at(d(2016, 1, 1)).unwrap() - 0.40).abs() < 1e-9);
    assert!((r.fitted_at(d(2020, 1, 1)).unwrap() - 0.60).abs() < 1e-9);
    let mid = r.fitted_at(d(2018, 1, 1)).unwrap();
    assert!((mid - 0.50).abs() < 0.001, "{mid}");
    // Insulation resistance is fitted in decades: 100 MΩ and 1 MΩ meet at 10 MΩ halfway.
    let ir = raw_series(
        Quantity::IrLe,
        &[(d(2016, 1, 1), 100.0), (d(2020, 1, 1), 1.0)],
    );
    let r = analyse(&ir, FAR(), &cfg()).unwrap();
    let mid = r.fitted_at(d(2018, 1, 1)).unwrap();
    assert!((mid - 10.0).abs() < 0.05, "{mid}");
    // One reading: no line.
    let one = raw_series(Quantity::R1r2, &[(d(2016, 1, 1), 0.40)]);
    assert!(
        analyse(&one, FAR(), &cfg())
            .unwrap()
            .fitted_at(d(2016, 1, 1))
            .is_none()
    );
}

#[test]
fn one_low_insulation_reading_between_over_range_ones_is_no_drift() {
    // >200, 27, >200, >200, >200 MΩ: the one reading of 27 MΩ recovered. The pairs that fix a
    // direction are >200 → 27 (a fall) and 27 → each later >200 (three rises), so the median
    // slope is a rise and nothing has fallen (common practice, no source: an over-range
    // reading is a lower bound).
    let dates = [
        d(2005, 5, 1),
        d(2010, 5, 1),
        d(2015, 5, 1),
        d(2020, 5, 1),
        d(2025, 5, 1),
    ];
    let points = vec![
        Point::over_range(dates[0], 200.0),
        Point::raw(dates[1], 27.0),
        Point::over_range(dates[2], 200.0),
        Point::over_range(dates[3], 200.0),
        Point::over_range(dates[4], 200.0),
    ];
    let s = Series::new(Quantity::IrLe, points).with_limit(Limit::min(1.0));
    let r = analyse(&s, FAR(), &cfg()).unwrap();
    assert!(
        !r.findings.iter().any(|f| f.kind == FindingKind::Drift),
        "{:#?}",
        r.findings
    );
}

/// The by-value form the worklist uses gives the same report as `analyse`, points given in
/// any order.
#[test]
fn analysing_by_value_gives_the_same_report() {
    let mut s = raw_series(
        Quantity::R1r2,
        &[
            (d(2022, 3, 1), 0.85),
            (d(2012, 3, 1), 0.48),
            (d(2024, 3, 1), 0.86),
            (d(2017, 3, 1), 0.49),
        ],
    );
    s.baseline_resets.push(d(2013, 1, 1));
    let ir = Series::new(
        Quantity::IrLe,
        vec![
            Point::over_range(d(2015, 1, 1), 200.0),
            Point::raw(d(2020, 1, 1), 20.0),
            Point::raw(d(2025, 1, 1), 2.0),
        ],
    )
    .with_limit(Limit::min(1.0));
    let c = cfg();
    for s in [s, ir] {
        let by_ref = analyse(&s, d(2027, 1, 1), &c).unwrap();
        let by_value = analyse_series(s, d(2027, 1, 1), c.checked().unwrap()).unwrap();
        assert_eq!(by_ref, by_value);
    }
    // A bad configuration is refused before any series is looked at.
    let bad = TrendConfig {
        projection_k: -1.0,
        ..cfg()
    };
    assert!(bad.checked().is_err());
}
