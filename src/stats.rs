//! Small statistics shared across the crate: order statistics of `f32` data by the IEEE 754
//! total order (the order of `f32::total_cmp`), medians and quantiles of `f64` data, mean
//! and standard deviation, and the power of two nearest a length. Each has one home here;
//! the conventions (even-count medians, sample or population deviation) are written on
//! each function.
//!
//! The `f32` selections map each value to the integer key whose signed order is the
//! total order (the transformation `f32::total_cmp` itself applies to both operands of every
//! comparison), and select on the integers: the same element as a selection with
//! `total_cmp`, found with plain integer comparisons.

/// The integer key of `x` whose signed order is `f32::total_cmp`'s order of the values.
#[inline]
pub fn total_key(x: f32) -> i32 {
    let b = x.to_bits() as i32;
    b ^ ((((b >> 31) as u32) >> 1) as i32)
}

/// The value of a key made by [`total_key`] (the map is its own inverse).
#[inline]
pub fn from_total_key(k: i32) -> f32 {
    f32::from_bits((k ^ ((((k >> 31) as u32) >> 1) as i32)) as u32)
}

/// The `rank`-th smallest (0-based) of the keys; reorders `keys`. `rank < keys.len()`.
#[inline]
pub fn select_key(keys: &mut [i32], rank: usize) -> f32 {
    let (_, &mut k, _) = keys.select_nth_unstable(rank);
    from_total_key(k)
}

/// Median of the values behind `keys` (mean of the two middle values for an even count;
/// 0 for none); reorders `keys`.
pub fn median_of_keys(keys: &mut [i32]) -> f32 {
    let n = keys.len();
    if n == 0 {
        return 0.0;
    }
    let hi = select_key(keys, n / 2);
    if n % 2 == 1 {
        hi
    } else {
        let lo = keys[..n / 2]
            .iter()
            .copied()
            .max()
            .map_or(hi, from_total_key);
        0.5 * (lo + hi)
    }
}

/// [`median_of_keys`] with a guess: `[lo, hi)` is a band of keys expected to hold the
/// median (e.g. around the last estimate of a slowly changing one). One pass counts the
/// keys below the band and copies those inside it; when the median's rank (both middle
/// ranks for an even count) falls inside, the selection runs on the band alone, else on
/// everything. The result is the same either way; `keys` is left unchanged or reordered.
pub fn median_of_keys_in_band(keys: &mut [i32], lo: i32, hi: i32, band: &mut Vec<i32>) -> f32 {
    match try_median_of_keys_in_band(keys, lo, hi, band) {
        Some(m) => m,
        None => median_of_keys(keys),
    }
}

/// The median of the keys when the band `[lo, hi)` holds it (see
/// [`median_of_keys_in_band`]), else `None`; `keys` is left unchanged.
pub fn try_median_of_keys_in_band(
    keys: &[i32],
    lo: i32,
    hi: i32,
    band: &mut Vec<i32>,
) -> Option<f32> {
    let n = keys.len();
    if n == 0 {
        return Some(0.0);
    }
    let upper = n / 2;
    let lower = if n % 2 == 0 { upper - 1 } else { upper };
    // Branch-free: every key is written at the band's end, which only advances for keys
    // inside it (an unsigned compare of the offset from `lo` tests lo <= k < hi).
    if band.len() < n {
        band.resize(n, 0);
    }
    let width = hi.wrapping_sub(lo) as u32;
    let (mut below, mut inside) = (0usize, 0usize);
    if lo <= hi {
        for &k in keys.iter() {
            below += usize::from(k < lo);
            band[inside] = k;
            inside += usize::from((k.wrapping_sub(lo) as u32) < width);
        }
    }
    let band = &mut band[..inside];
    if below <= lower && upper < below + band.len() {
        let j = upper - below;
        let hi_value = select_key(band, j);
        if n % 2 == 1 {
            return Some(hi_value);
        }
        // even: the lower middle is the largest key ranked below j (j >= 1 here)
        let lo_value = band[..j]
            .iter()
            .copied()
            .max()
            .map_or(hi_value, from_total_key);
        return Some(0.5 * (lo_value + hi_value));
    }
    None
}

/// [`median_of_keys`] with several nested guesses: `bands` are bands of keys, narrowest
/// first, each expected to hold the median. One pass counts the keys below every band
/// edge (branch-free, it vectorises); the selection then runs on the keys of the narrowest
/// band that holds the median's rank(s), copied out in a second pass, or on everything
/// when none does. The result is the same whichever answers.
pub fn median_of_keys_guessed(
    keys: &mut [i32],
    bands: &[(i32, i32); 3],
    band: &mut Vec<i32>,
) -> f32 {
    let n = keys.len();
    if n == 0 {
        return 0.0;
    }
    let upper = n / 2;
    let lower = if n % 2 == 0 { upper - 1 } else { upper };
    let mut below = [0u32; 6];
    for &k in keys.iter() {
        below[0] += u32::from(k < bands[0].0);
        below[1] += u32::from(k < bands[0].1);
        below[2] += u32::from(k < bands[1].0);
        below[3] += u32::from(k < bands[1].1);
        below[4] += u32::from(k < bands[2].0);
        below[5] += u32::from(k < bands[2].1);
    }
    for (i, &(lo, hi)) in bands.iter().enumerate() {
        let (b_lo, b_hi) = (below[2 * i] as usize, below[2 * i + 1] as usize);
        // keys in [lo, hi) hold ranks b_lo..b_hi
        if lo <= hi && b_lo <= lower && upper < b_hi {
            if let Some(m) = try_median_of_keys_in_band(keys, lo, hi, band) {
                return m;
            }
        }
    }
    median_of_keys(keys)
}

/// Median of `v` by the total order (mean of the two middle values for an even count; 0
/// for none); reorders `v`.
pub fn median_f32_in_place(v: &mut [f32]) -> f32 {
    let n = v.len();
    if n == 0 {
        return 0.0;
    }
    let (_, &mut hi, _) = v.select_nth_unstable_by(n / 2, f32::total_cmp);
    if n % 2 == 1 {
        hi
    } else {
        let lo = v[..n / 2].iter().copied().fold(f32::NEG_INFINITY, f32::max);
        0.5 * (lo + hi)
    }
}

/// Median of `x` as numpy defines it (`numpy.median`: the middle value, or the mean of the
/// two middle values for an even count), by `f64::total_cmp`'s order; 0 for none.
pub fn median(x: &[f64]) -> f64 {
    median_in_place(&mut x.to_vec())
}

/// [`median`] of `v` without a copy; reorders `v`.
pub fn median_in_place(v: &mut [f64]) -> f64 {
    let n = v.len();
    if n == 0 {
        return 0.0;
    }
    let (lower, &mut hi, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    if n % 2 == 1 {
        hi
    } else {
        let lo = lower.iter().copied().max_by(f64::total_cmp).unwrap_or(hi);
        0.5 * (lo + hi)
    }
}

/// The high median of `x` (Python's `statistics.median_high`): the middle value, or the
/// larger of the two middle values for an even count — always one of the data, never a
/// mean of two; by `f64::total_cmp`'s order; 0 for none.
pub fn median_high(x: &[f64]) -> f64 {
    if x.is_empty() {
        return 0.0;
    }
    let mut v = x.to_vec();
    let k = v.len() / 2;
    *v.select_nth_unstable_by(k, f64::total_cmp).1
}

/// [`median_high`] of `f32` data by `f32::total_cmp`'s order (0 for none); reorders `v`.
pub fn median_high_f32_in_place(v: &mut [f32]) -> f32 {
    if v.is_empty() {
        return 0.0;
    }
    let k = v.len() / 2;
    *v.select_nth_unstable_by(k, f32::total_cmp).1
}

/// The `q` quantile (0..1) of `v`, sorted ascending and non-empty: linear interpolation
/// between order statistics at position `q (n - 1)` (numpy's default `method='linear'`,
/// Hyndman & Fan 1996 definition 7).
pub fn quantile_sorted(v: &[f64], q: f64) -> f64 {
    let pos = q * (v.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = (lo + 1).min(v.len() - 1);
    v[lo] + (v[hi] - v[lo]) * (pos - lo as f64)
}

/// [`quantile_sorted`] of unsorted data (sorted by `f64::total_cmp`); 0 for none.
pub fn quantile(x: &[f64], q: f64) -> f64 {
    if x.is_empty() {
        return 0.0;
    }
    let mut v = x.to_vec();
    v.sort_unstable_by(f64::total_cmp);
    quantile_sorted(&v, q)
}

/// Mean and *sample* standard deviation of `x` (divisor n - 1: numpy `std(ddof=1)`); the
/// deviation is 0 for fewer than two values, the mean 0 for none.
pub fn mean_std(x: &[f64]) -> (f64, f64) {
    if x.is_empty() {
        return (0.0, 0.0);
    }
    let m = x.iter().sum::<f64>() / x.len() as f64;
    if x.len() < 2 {
        return (m, 0.0);
    }
    let ss = x.iter().map(|a| (a - m) * (a - m)).sum::<f64>();
    (m, (ss / (x.len() - 1) as f64).sqrt())
}

/// The power of two nearest `n` in log scale (`2^round(log2 n)`, so 362 -> 256 and
/// 363 -> 512), `n` taken as at least 1, clamped to `[lo, hi]`.
pub fn nearest_power_of_two(n: f64, lo: usize, hi: usize) -> usize {
    let n = n.max(1.0);
    let p = 2f64.powf(n.log2().round()) as usize;
    p.clamp(lo, hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The key order is `f32::total_cmp`'s (IEEE 754-2008 §5.10 totalOrder), checked on
    /// values across signs, zeros, subnormals, infinities and NaNs.
    #[test]
    fn keys_follow_total_order() {
        let v = [
            f32::NEG_INFINITY,
            -1e30,
            -1.0,
            -f32::MIN_POSITIVE / 4.0,
            -0.0,
            0.0,
            f32::MIN_POSITIVE / 4.0,
            1.0,
            3.0e38,
            f32::INFINITY,
            f32::NAN,
            -f32::NAN,
        ];
        for &a in &v {
            assert_eq!(from_total_key(total_key(a)).to_bits(), a.to_bits());
            for &b in &v {
                assert_eq!(total_key(a).cmp(&total_key(b)), a.total_cmp(&b), "{a} {b}");
            }
        }
    }

    /// Medians as numpy defines them (`numpy.median`: middle value, or the mean of the two
    /// middle values): median([3, 1, 2]) = 2, median([4, 1, 3, 2]) = 2.5.
    #[test]
    fn medians_match_numpy_definition() {
        let mut k: Vec<i32> = [3.0f32, 1.0, 2.0].iter().map(|&x| total_key(x)).collect();
        assert_eq!(median_of_keys(&mut k), 2.0);
        let mut k: Vec<i32> = [4.0f32, 1.0, 3.0, 2.0]
            .iter()
            .map(|&x| total_key(x))
            .collect();
        assert_eq!(median_of_keys(&mut k), 2.5);
        assert_eq!(median_f32_in_place(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median_of_keys(&mut []), 0.0);
        // Keys and total_cmp select the same element on random data.
        let mut x = 12345u32;
        let v: Vec<f32> = (0..301)
            .map(|_| {
                x = x.wrapping_mul(1664525).wrapping_add(1013904223);
                (x >> 8) as f32 / 1e5
            })
            .collect();
        let mut band = Vec::new();
        for n in [300usize, 301] {
            let mut a = v[..n].to_vec();
            let mut k: Vec<i32> = a.iter().map(|&x| total_key(x)).collect();
            let want = median_f32_in_place(&mut a);
            let mut k2 = k.clone();
            assert_eq!(median_of_keys(&mut k), want);
            // any band, right or wrong, gives the same median
            for (lo, hi) in [
                (0.0f32, 1e9),
                (want * 0.9, want * 1.1),
                (want, want * 1.0001),
                (want * 1.01, want * 2.0),
                (0.0, want * 0.5),
                (want * 0.999, want),
            ] {
                let got = median_of_keys_in_band(&mut k2, total_key(lo), total_key(hi), &mut band);
                assert_eq!(got, want, "n {n} band {lo}..{hi}");
            }
            // nested guesses, right, wrong or empty, give the same median too
            let key = |x: f32| total_key(x);
            for bands in [
                [
                    (key(want * 0.95), key(want * 1.05)),
                    (key(0.0), key(1e9)),
                    (key(0.0), key(1e9)),
                ],
                [
                    (key(want * 1.2), key(want * 1.3)),
                    (key(want * 0.5), key(want * 0.9)),
                    (key(want), key(want * 1.5)),
                ],
                [
                    (key(2.0), key(1.0)),
                    (key(want * 0.999), key(want)),
                    (key(0.0), key(want * 0.5)),
                ],
            ] {
                let mut k3: Vec<i32> = v[..n].iter().map(|&x| total_key(x)).collect();
                assert_eq!(
                    median_of_keys_guessed(&mut k3, &bands, &mut band),
                    want,
                    "n {n}"
                );
            }
        }
    }

    /// numpy's values: median([3, 1, 2]) = 2, median([4, 1, 3, 2]) = 2.5, high median 3
    /// (Python statistics.median_high); np.quantile([1, 2, 3, 4], 0.25) = 1.75 and 0.995
    /// -> 3.985 (method 'linear'); np.std([2, 4, 4, 4, 5, 5, 7, 9], ddof=1) = 2.13809
    /// (sqrt(32 / 7)), mean 5.
    #[test]
    fn f64_statistics_match_numpy_definitions() {
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&[4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median(&[]), 0.0);
        assert_eq!(median_high(&[4.0, 1.0, 3.0, 2.0]), 3.0);
        assert_eq!(median_high(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median_high_f32_in_place(&mut [4.0, 1.0, 3.0, 2.0]), 3.0);
        assert!((quantile(&[4.0, 1.0, 3.0, 2.0], 0.25) - 1.75).abs() < 1e-12);
        assert!((quantile_sorted(&[1.0, 2.0, 3.0, 4.0], 0.995) - 3.985).abs() < 1e-12);
        assert_eq!(quantile_sorted(&[5.0], 0.5), 5.0);
        let (m, s) = mean_std(&[2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0]);
        assert_eq!(m, 5.0);
        assert!((s - (32.0f64 / 7.0).sqrt()).abs() < 1e-12);
        assert_eq!(mean_std(&[3.0]), (3.0, 0.0));
        assert_eq!(nearest_power_of_two(362.0, 1, 1 << 20), 256);
        assert_eq!(nearest_power_of_two(363.0, 1, 1 << 20), 512);
        assert_eq!(nearest_power_of_two(0.0, 16, 4096), 16);
        assert_eq!(nearest_power_of_two(1e9, 16, 4096), 4096);
    }
}
