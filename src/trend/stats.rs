//! Plain statistics on (x, y) pairs: least squares with standard errors, and the Theil–Sen
//! robust slope. No knowledge of quantities or limits lives here.

use serde::Serialize;

/// An ordinary least-squares line `y = intercept + slope × x` and its uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LeastSquares {
    pub n: usize,
    pub slope: f64,
    pub intercept: f64,
    pub x_mean: f64,
    pub y_mean: f64,
    /// Σ(x − x̄)²; the slope's standard error scales with 1/√sxx.
    pub sxx: f64,
    /// √(Σ residual² / (n − 2)); `None` with two points, where the line fits exactly.
    pub residual_se: Option<f64>,
    /// residual_se / √sxx; `None` with two points.
    pub slope_se: Option<f64>,
}

impl LeastSquares {
    pub fn at(&self, x: f64) -> f64 {
        self.intercept + self.slope * x
    }
}

/// Least squares over `xs`, `ys` (equal lengths). `None` with fewer than two points or when
/// all x are equal, since no slope is defined then.
pub fn least_squares(xs: &[f64], ys: &[f64]) -> Option<LeastSquares> {
    let n = xs.len().min(ys.len());
    if n < 2 {
        return None;
    }
    let nf = n as f64;
    let x_mean = xs[..n].iter().sum::<f64>() / nf;
    let y_mean = ys[..n].iter().sum::<f64>() / nf;
    let mut sxx = 0.0;
    let mut sxy = 0.0;
    for (x, y) in xs[..n].iter().zip(&ys[..n]) {
        sxx += (x - x_mean) * (x - x_mean);
        sxy += (x - x_mean) * (y - y_mean);
    }
    if sxx <= 0.0 || !sxx.is_finite() {
        return None;
    }
    let slope = sxy / sxx;
    let intercept = y_mean - slope * x_mean;
    let (residual_se, slope_se) = if n > 2 {
        let ssr: f64 = xs[..n]
            .iter()
            .zip(&ys[..n])
            .map(|(x, y)| {
                let r = y - (intercept + slope * x);
                r * r
            })
            .sum();
        let s = (ssr / (nf - 2.0)).sqrt();
        (Some(s), Some(s / sxx.sqrt()))
    } else {
        (None, None)
    };
    Some(LeastSquares {
        n,
        slope,
        intercept,
        x_mean,
        y_mean,
        sxx,
        residual_se,
        slope_se,
    })
}

/// Median of finite values; `None` when empty. Sorts the slice in place.
pub fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let m = values.len() / 2;
    Some(if values.len().is_multiple_of(2) {
        (values[m - 1] + values[m]) / 2.0
    } else {
        values[m]
    })
}

/// Slopes between every pair of points with distinct x.
pub fn pairwise_slopes(xs: &[f64], ys: &[f64]) -> Vec<f64> {
    let n = xs.len().min(ys.len());
    let mut out = Vec::with_capacity(n * n.saturating_sub(1) / 2);
    pairwise_slopes_into(xs, ys, &mut out);
    out
}

/// [`pairwise_slopes`] appended to `out`.
fn pairwise_slopes_into(xs: &[f64], ys: &[f64], out: &mut Vec<f64>) {
    let n = xs.len().min(ys.len());
    for i in 0..n {
        for j in i + 1..n {
            let dx = xs[j] - xs[i];
            if dx != 0.0 {
                out.push((ys[j] - ys[i]) / dx);
            }
        }
    }
}

/// Theil–Sen slope: the median of all pairwise slopes. One wild reading moves it little,
/// unlike least squares. `None` when no pair has distinct x.
pub fn theil_sen(xs: &[f64], ys: &[f64]) -> Option<f64> {
    median(&mut pairwise_slopes(xs, ys))
}

/// [`theil_sen`] with the pairwise slopes gathered in `buf` (cleared first), so a caller
/// fitting many short series need not allocate for each.
pub fn theil_sen_in(xs: &[f64], ys: &[f64], buf: &mut Vec<f64>) -> Option<f64> {
    buf.clear();
    pairwise_slopes_into(xs, ys, buf);
    median(buf)
}

/// Intercept to go with a robust slope: the median of `y − slope × x`.
pub fn median_intercept(xs: &[f64], ys: &[f64], slope: f64) -> Option<f64> {
    let mut r: Vec<f64> = xs.iter().zip(ys).map(|(x, y)| y - slope * x).collect();
    median(&mut r)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Reference: the `linregress` crate (crates.io) fitting the same data by OLS.
    fn reference_fit(xs: &[f64], ys: &[f64]) -> (f64, f64, f64) {
        use linregress::{FormulaRegressionBuilder, RegressionDataBuilder};
        let data = RegressionDataBuilder::new()
            .build_from(vec![("Y", ys.to_vec()), ("X", xs.to_vec())])
            .unwrap();
        let model = FormulaRegressionBuilder::new()
            .data(&data)
            .formula("Y ~ X")
            .fit()
            .unwrap();
        let p = model.parameters();
        let se = model.se();
        (p[1], p[0], se[1])
    }

    #[test]
    fn least_squares_agrees_with_linregress() {
        // An uneven visit history in years and R1+R2 readings in Ω (invented).
        let xs = [0.0, 1.1, 2.9, 4.2, 5.0, 7.3];
        let ys = [0.52, 0.55, 0.54, 0.61, 0.60, 0.68];
        let ours = least_squares(&xs, &ys).unwrap();
        let (slope, intercept, slope_se) = reference_fit(&xs, &ys);
        assert!(
            (ours.slope - slope).abs() < 1e-12,
            "{} vs {slope}",
            ours.slope
        );
        assert!((ours.intercept - intercept).abs() < 1e-12);
        assert!((ours.slope_se.unwrap() - slope_se).abs() < 1e-12);
    }

    #[test]
    fn least_squares_hand_worked() {
        // x = 0, 1, 2; y = 1, 2, 4. x̄ = 1, ȳ = 7/3, sxx = 2, sxy = (−1)(−4/3) + 0 + (1)(5/3) = 3,
        // slope = 1.5, intercept = 7/3 − 1.5 = 5/6. Residuals −1/6, 1/3, −1/6: SSR = 1/6,
        // s = √(1/6 / 1) = 0.4082, slope se = s / √2 = 0.2887.
        let f = least_squares(&[0.0, 1.0, 2.0], &[1.0, 2.0, 4.0]).unwrap();
        assert!((f.slope - 1.5).abs() < 1e-12);
        assert!((f.intercept - 5.0 / 6.0).abs() < 1e-12);
        assert!((f.residual_se.unwrap() - (1.0f64 / 6.0).sqrt()).abs() < 1e-12);
        assert!((f.slope_se.unwrap() - (1.0f64 / 12.0).sqrt()).abs() < 1e-12);
    }

    #[test]
    fn least_squares_needs_two_distinct_x() {
        assert!(least_squares(&[1.0], &[2.0]).is_none());
        assert!(least_squares(&[1.0, 1.0], &[2.0, 3.0]).is_none());
        let two = least_squares(&[0.0, 2.0], &[1.0, 2.0]).unwrap();
        assert_eq!(two.slope, 0.5);
        assert!(two.slope_se.is_none());
    }

    #[test]
    fn theil_sen_hand_worked() {
        // Points (0,1) (1,3) (2,2) (3,6) (4,5). The ten pairwise slopes:
        // (0,1): 2, (0,2): 0.5, (0,3): 5/3, (0,4): 1, (1,2): −1,
        // (1,3): 1.5, (1,4): 2/3, (2,3): 4, (2,4): 1.5, (3,4): −1.
        // Sorted: −1, −1, 0.5, 0.667, 1, 1.5, 1.5, 1.667, 2, 4; median = (1 + 1.5) / 2 = 1.25.
        // Intercept: y − 1.25x = 1, 1.75, −0.5, 2.25, 0 → median 1.
        let xs = [0.0, 1.0, 2.0, 3.0, 4.0];
        let ys = [1.0, 3.0, 2.0, 6.0, 5.0];
        let b = theil_sen(&xs, &ys).unwrap();
        assert!((b - 1.25).abs() < 1e-12);
        assert!((median_intercept(&xs, &ys, b).unwrap() - 1.0).abs() < 1e-12);
    }

    #[test]
    fn median_odd_even_empty() {
        assert_eq!(median(&mut [3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(&mut [4.0, 1.0, 2.0, 3.0]), Some(2.5));
        assert_eq!(median(&mut []), None);
    }

    proptest! {
        #[test]
        fn linear_series_recovers_its_slope(
            a in -10.0f64..10.0,
            b in -5.0f64..5.0,
            steps in proptest::collection::vec(0.1f64..3.0, 2..12),
        ) {
            let mut x = 0.0;
            let mut xs = Vec::new();
            for s in &steps { xs.push(x); x += s; }
            let ys: Vec<f64> = xs.iter().map(|x| a + b * x).collect();
            let ls = least_squares(&xs, &ys).unwrap();
            prop_assert!((ls.slope - b).abs() < 1e-9);
            let ts = theil_sen(&xs, &ys).unwrap();
            prop_assert!((ts - b).abs() < 1e-9);
            // The buffered form gives the very same slope, whatever the buffer held.
            let mut buf = vec![f64::NAN; 7];
            prop_assert_eq!(theil_sen_in(&xs, &ys, &mut buf), Some(ts));
        }

        #[test]
        fn theil_sen_shrugs_off_one_outlier(
            b in -2.0f64..2.0,
            n in 5usize..12,
            which in 0usize..12,
            jump in 50.0f64..500.0,
        ) {
            // With n ≥ 5 evenly spaced points, one corrupted point spoils n − 1 of the
            // n(n − 1)/2 pairwise slopes, fewer than half, so the median is an exact slope.
            let xs: Vec<f64> = (0..n).map(|i| i as f64).collect();
            let mut ys: Vec<f64> = xs.iter().map(|x| 1.0 + b * x).collect();
            ys[which % n] += jump;
            let ts = theil_sen(&xs, &ys).unwrap();
            prop_assert!((ts - b).abs() < 1e-9, "ts {} b {}", ts, b);
            // Least squares moves unless the outlier sits at x̄, where it has no leverage.
            let x_mean = (n - 1) as f64 / 2.0;
            if ((which % n) as f64 - x_mean).abs() > 0.4 {
                let ls = least_squares(&xs, &ys).unwrap();
                prop_assert!((ls.slope - b).abs() > 1e-3);
            }
        }
    }
}
