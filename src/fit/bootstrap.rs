//! Paired block bootstrap of median validation errors (Efron & Tibshirani 1993, "An
//! Introduction to the Bootstrap", Chapman & Hall: the bootstrap of a statistic by resampling,
//! ch. 6; percentile intervals, ch. 13; resampling blocks of dependent data, ch. 8.6).
//!
//! Windows of one validation block (a held-out block of moving time, `windows::BLOCK_S`)
//! overlap and share conditions, so they are not independent; blocks are. A resample draws as
//! many blocks as there are, with replacement, and takes every window of each drawn block. The
//! resampling is *paired*: every family is evaluated on the same resampled windows, so the
//! differences between families keep the correlation of their errors on the same windows.
//! [`RESAMPLES`] resamples, each from its own ChaCha8 stream of a fixed seed, so the result is the
//! same on any number of threads. Values are fractions (relative translation error).

use rand::rngs::ChaCha8Rng;
use rand::{RngExt, SeedableRng};
use rayon::prelude::*;
use serde::Serialize;

use super::stats::quantile_sorted;

/// Bootstrap resamples (Efron & Tibshirani 1993, ch. 13, recommend about 1000 for percentile
/// intervals).
pub const RESAMPLES: usize = 1000;
/// Seed of the resampling streams (a constant: the same data give the same intervals).
pub const SEED: u64 = 0x0b00_75ea;
/// Coverage of the reported percentile intervals.
pub const INTERVAL: f64 = 0.95;

/// A two-sided percentile interval [lo, hi].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Interval {
    pub lo: f64,
    pub hi: f64,
}

/// Per family (columns of `values`) the median over the resampled windows, for every resample.
#[derive(Debug, Clone, PartialEq)]
pub struct Resampled {
    /// `medians[r][f]`: median of family f in resample r (NaN when the resample has no value).
    pub medians: Vec<Vec<f64>>,
    /// Blocks resampled.
    pub blocks: usize,
}

impl Resampled {
    /// The [`INTERVAL`] percentile interval of family `f`'s median.
    pub fn interval(&self, f: usize) -> Option<Interval> {
        let mut v: Vec<f64> = self.medians.iter().filter_map(|m| m.get(f).copied()).filter(|x| x.is_finite()).collect();
        v.sort_by(f64::total_cmp);
        let tail = 0.5 * (1.0 - INTERVAL);
        Some(Interval { lo: quantile_sorted(&v, tail)?, hi: quantile_sorted(&v, 1.0 - tail)? })
    }

    /// Fraction of resamples in which family `f`'s median exceeds `factor` times family `g`'s.
    pub fn fraction_above(&self, f: usize, g: usize, factor: f64) -> f64 {
        let pairs: Vec<(f64, f64)> = self
            .medians
            .iter()
            .filter_map(|m| Some((*m.get(f)?, *m.get(g)?)))
            .filter(|(a, b)| a.is_finite() && b.is_finite())
            .collect();
        if pairs.is_empty() {
            return 0.0;
        }
        pairs.iter().filter(|(a, b)| *a > factor * *b).count() as f64 / pairs.len() as f64
    }
}

/// Median of the finite values, by selection (the slice is reordered).
fn median_of(v: &mut [f64]) -> f64 {
    let n = v.len();
    if n == 0 {
        return f64::NAN;
    }
    let (_, upper, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    let upper = *upper;
    if n % 2 == 1 {
        return upper;
    }
    // Type 7 median of an even count: the mean of the two middle values.
    let lower = v[..n / 2].iter().copied().fold(f64::NEG_INFINITY, f64::max);
    0.5 * (lower + upper)
}

/// Resamples blocks of windows: `values[f][w]` is family f's error on window w (`None` where the
/// window does not count, e.g. too short for a translation error), `blocks[w]` the window's
/// block. `None` when there are no blocks.
pub fn resample_medians(values: &[Vec<Option<f64>>], blocks: &[u32]) -> Option<Resampled> {
    let mut ids: Vec<u32> = blocks.to_vec();
    ids.sort_unstable();
    ids.dedup();
    if ids.is_empty() {
        return None;
    }
    let members: Vec<Vec<usize>> =
        ids.iter().map(|id| (0..blocks.len()).filter(|w| blocks[*w] == *id).collect()).collect();
    let nb = members.len();
    let medians = (0..RESAMPLES)
        .into_par_iter()
        .map(|r| {
            let mut rng = ChaCha8Rng::seed_from_u64(SEED);
            rng.set_stream(r as u64);
            let drawn: Vec<usize> = (0..nb).map(|_| rng.random_range(0..nb)).collect();
            values
                .iter()
                .map(|family| {
                    let mut v: Vec<f64> = drawn
                        .iter()
                        .flat_map(|b| members[*b].iter())
                        .filter_map(|w| family.get(*w).copied().flatten())
                        .filter(|x| x.is_finite())
                        .collect();
                    median_of(&mut v)
                })
                .collect()
        })
        .collect();
    Some(Resampled { medians, blocks: nb })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use rand_distr::{Distribution, Normal};

    #[test]
    fn median_by_selection_is_type_7() {
        // numpy.median([3, 1, 2]) = 2 and numpy.median([4, 1, 3, 2]) = 2.5 (numpy's default,
        // Hyndman & Fan 1996 type 7).
        assert_eq!(median_of(&mut [3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median_of(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
        assert!(median_of(&mut []).is_nan());
    }

    #[test]
    fn percentile_interval_of_a_median_covers_at_its_rate() {
        // Each of 40 blocks holds 5 windows sharing a block effect (sd 1) plus window noise
        // (sd 0.2), mean 10. The 95 % interval of the median must cover the population median
        // (10) in about 95 % of 60 data sets; with 60 trials a binomial count below 49 has
        // probability under 0.1 % at a true rate of 0.95 (common practice, no source).
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let block_effect = Normal::new(0.0, 1.0).expect("normal");
        let noise = Normal::new(0.0, 0.2).expect("normal");
        let mut covered = 0;
        for _ in 0..60 {
            let mut values = Vec::new();
            let mut blocks = Vec::new();
            for b in 0..40u32 {
                let e: f64 = block_effect.sample(&mut rng);
                for _ in 0..5 {
                    values.push(Some(10.0 + e + noise.sample(&mut rng)));
                    blocks.push(b);
                }
            }
            let r = resample_medians(&[values], &blocks).expect("blocks");
            assert_eq!(r.blocks, 40);
            let i = r.interval(0).expect("interval");
            if i.lo <= 10.0 && 10.0 <= i.hi {
                covered += 1;
            }
        }
        assert!(covered >= 49, "covered {covered} of 60");
    }

    #[test]
    fn paired_resampling_sees_a_difference_that_shared_noise_hides() {
        // Family 1's error is family 0's plus 0.02 on every window; block effects (sd 0.5) swamp
        // the difference in either family's own interval, but not in the paired comparison.
        let mut rng = ChaCha8Rng::seed_from_u64(9);
        let effect = Normal::new(0.0, 0.5).expect("normal");
        let (mut a, mut b, mut blocks) = (Vec::new(), Vec::new(), Vec::new());
        for k in 0..30u32 {
            let e: f64 = effect.sample(&mut rng);
            for j in 0..4 {
                let x = 1.0 + e.abs() + 0.01 * j as f64;
                a.push(Some(x));
                b.push(Some(x + 0.02));
                blocks.push(k);
            }
        }
        let r = resample_medians(&[a, b], &blocks).expect("blocks");
        let (ia, ib) = (r.interval(0).expect("a"), r.interval(1).expect("b"));
        assert!(ib.lo < ia.hi, "the intervals overlap: {ia:?} {ib:?}");
        assert_relative_eq!(r.fraction_above(1, 0, 1.0), 1.0);
        assert_relative_eq!(r.fraction_above(0, 1, 1.0), 0.0);
    }

    #[test]
    fn the_same_data_give_the_same_intervals_on_any_thread_count() {
        let values: Vec<Option<f64>> = (0..200).map(|i| Some(((i * 37) % 101) as f64)).collect();
        let blocks: Vec<u32> = (0..200).map(|i| i / 10).collect();
        let run = |threads| {
            let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
            pool.install(|| resample_medians(std::slice::from_ref(&values), &blocks))
        };
        assert_eq!(run(1), run(2));
    }
}
