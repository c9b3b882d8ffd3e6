//! Numeric helpers every room shares: the one percentile (and median) behind every statistic
//! the product prints, and the short form of a number for messages.

/// The p-th percentile (p in 0–100) of `v`, by linear interpolation between the closest ranks:
/// the same definition as `numpy.percentile`'s default (`method="linear"`; docs/REFERENCES.md
/// §11). `v` is sorted in
/// place; NaN values sort last (`f64::total_cmp`). An empty slice, or a `p` outside 0–100, gives
/// NaN.
pub fn percentile(v: &mut [f64], p: f64) -> f64 {
    if v.is_empty() || !(0.0..=100.0).contains(&p) {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    percentile_sorted(v, p)
}

/// [`percentile`] of data already sorted ascending.
pub fn percentile_sorted(v: &[f64], p: f64) -> f64 {
    if v.is_empty() || !(0.0..=100.0).contains(&p) {
        return f64::NAN;
    }
    let x = p / 100.0 * (v.len() - 1) as f64;
    let i = (x.floor() as usize).min(v.len() - 1);
    let f = x - i as f64;
    if i + 1 < v.len() {
        // numpy's form: a + (b − a)·f, exact at both ends.
        v[i] + (v[i + 1] - v[i]) * f
    } else {
        v[i]
    }
}

/// The median (the 50th [`percentile`]) of any values, without changing them.
pub fn median<'a>(values: impl IntoIterator<Item = &'a f64>) -> f64 {
    let mut v: Vec<f64> = values.into_iter().copied().collect();
    percentile(&mut v, 50.0)
}

/// A short form of a number for messages: `125`, `0.01`, `1e-12`, never 309 digits.
pub fn short(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let a = v.abs();
    if !(1e-3..1e7).contains(&a) {
        return format!("{v:e}");
    }
    let s = format!("{v:.6}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentiles_by_hand() {
        // By hand: for [1, 2, 3, 4] the 25th percentile sits at rank 0.75 → 1.75.
        let mut v = vec![4.0, 1.0, 3.0, 2.0];
        assert_eq!(percentile(&mut v, 25.0), 1.75);
        assert_eq!(percentile(&mut v, 50.0), 2.5);
        assert_eq!(percentile(&mut v, 0.0), 1.0);
        assert_eq!(percentile(&mut v, 100.0), 4.0);
        assert!(percentile(&mut [], 50.0).is_nan());
        assert!(percentile(&mut v, 101.0).is_nan());
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(short(1e308), "1e308");
        assert_eq!(short(49.5), "49.5");
    }
}
