//! Order statistics for validation errors: quantiles by linear interpolation between order
//! statistics (Hyndman & Fan 1996, "Sample quantiles in statistical packages", The American
//! Statistician 50(4), definition 7; numpy's default `percentile`), the median and the
//! interquartile range. Unitless: the values keep whatever unit the caller gives them.

use serde::Serialize;

/// The p-quantile (0 <= p <= 1) of already sorted, finite values by Hyndman & Fan type 7:
/// h = (n - 1) p, Q = x[floor h] + (h - floor h) (x[floor h + 1] - x[floor h]).
/// `None` for an empty slice.
pub fn quantile_sorted(sorted: &[f64], p: f64) -> Option<f64> {
    let n = sorted.len();
    let last = n.checked_sub(1)?;
    let h = last as f64 * p.clamp(0.0, 1.0);
    let lo = (h.floor() as usize).min(last);
    let hi = (lo + 1).min(last);
    Some(sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]))
}

/// Median, lower and upper quartile of a sample.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Spread {
    pub median: f64,
    pub q25: f64,
    pub q75: f64,
}

impl Spread {
    /// Median and quartiles (type 7) of the finite values in `values`; `None` if there are none.
    pub fn of(values: impl IntoIterator<Item = f64>) -> Option<Spread> {
        let mut v: Vec<f64> = values.into_iter().filter(|x| x.is_finite()).collect();
        v.sort_by(f64::total_cmp);
        Some(Spread {
            median: quantile_sorted(&v, 0.5)?,
            q25: quantile_sorted(&v, 0.25)?,
            q75: quantile_sorted(&v, 0.75)?,
        })
    }

    /// Interquartile range, q75 - q25.
    pub fn iqr(&self) -> f64 {
        self.q75 - self.q25
    }

    /// The same spread with every value multiplied by `k` (k >= 0), e.g. to percent.
    pub fn scaled(&self, k: f64) -> Spread {
        Spread { median: self.median * k, q25: self.q25 * k, q75: self.q75 * k }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn quartiles_of_one_to_ten_reference() {
        // Hyndman & Fan 1996, definition 7, which is numpy's default:
        // numpy.percentile(numpy.arange(1, 11), [25, 50, 75]) -> [3.25, 5.5, 7.75].
        let s = Spread::of((1..=10).map(f64::from)).expect("non-empty");
        assert_relative_eq!(s.q25, 3.25, epsilon = 1e-12);
        assert_relative_eq!(s.median, 5.5, epsilon = 1e-12);
        assert_relative_eq!(s.q75, 7.75, epsilon = 1e-12);
        assert_relative_eq!(s.iqr(), 4.5, epsilon = 1e-12);
    }

    #[test]
    fn order_does_not_matter_and_edges_are_the_extremes() {
        let v = [9.0, 1.0, 4.0, 7.0];
        let s = Spread::of(v).expect("non-empty");
        // Definition 7 on [1, 4, 7, 9]: h = 0.75 -> 1 + 0.75 * 3 = 3.25; median 5.5.
        assert_relative_eq!(s.q25, 3.25, epsilon = 1e-12);
        assert_relative_eq!(s.median, 5.5, epsilon = 1e-12);
        let mut sorted = v;
        sorted.sort_by(f64::total_cmp);
        assert_eq!(quantile_sorted(&sorted, 0.0), Some(1.0));
        assert_eq!(quantile_sorted(&sorted, 1.0), Some(9.0));
    }

    #[test]
    fn empty_and_single() {
        assert!(Spread::of(Vec::<f64>::new()).is_none());
        assert!(Spread::of([f64::NAN]).is_none());
        let s = Spread::of([2.0]).expect("one value");
        assert_eq!((s.q25, s.median, s.q75), (2.0, 2.0, 2.0));
    }
}
