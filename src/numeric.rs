//! Numeric helpers every room shares, each tested once here: the one percentile (and median)
//! behind every statistic the product prints, the one min/max decimator behind every plotted
//! signal, golden-section search, decibels, and the short form of a number for messages.

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

/// The lowest and highest value of each run of `per` consecutive values (the last run may be
/// shorter): the one min/max decimator behind every trace, envelope and plotted signal. Exact
/// at the extremes: every value lies within its run's pair, and each pair's ends are values of
/// the run, so no peak is lost. NaN values are skipped (a run of only NaN gives NaN, NaN).
pub fn minmax_runs(x: &[f64], per: usize) -> (Vec<f64>, Vec<f64>) {
    let per = per.max(1);
    let n = x.len().div_ceil(per);
    let (mut lo, mut hi) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for run in x.chunks(per) {
        let (a, b) = run
            .iter()
            .filter(|v| !v.is_nan())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        if a > b {
            lo.push(f64::NAN);
            hi.push(f64::NAN);
        } else {
            lo.push(a);
            hi.push(b);
        }
    }
    (lo, hi)
}

/// Reduces a polyline sorted by x to at most two points for each of `columns` equal x-intervals:
/// the lowest and the highest, in x order (so the line's shape is kept). Exact at the extremes
/// like [`minmax_runs`]. A line already that short is returned as it is.
pub fn decimate_xy(pts: &[[f64; 2]], columns: usize) -> Vec<[f64; 2]> {
    let (Some(first), Some(last)) = (pts.first(), pts.last()) else {
        return Vec::new();
    };
    if pts.len() <= 2 * columns || columns == 0 {
        return pts.to_vec();
    }
    let (x0, span) = (first[0], (last[0] - first[0]).max(f64::MIN_POSITIVE));
    // The last point sits on the far edge: it belongs to the last column, not one past it.
    let column = |x: f64| ((((x - x0) / span) * columns as f64) as usize).min(columns - 1);
    let mut out = Vec::with_capacity(2 * columns + 2);
    let mut i = 0;
    while i < pts.len() {
        let col = column(pts[i][0]);
        let (mut lo, mut hi) = (pts[i], pts[i]);
        let mut j = i + 1;
        while j < pts.len() && column(pts[j][0]) == col {
            if pts[j][1] < lo[1] {
                lo = pts[j];
            }
            if pts[j][1] > hi[1] {
                hi = pts[j];
            }
            j += 1;
        }
        if lo[0] <= hi[0] {
            out.push(lo);
            if hi != lo {
                out.push(hi);
            }
        } else {
            out.push(hi);
            out.push(lo);
        }
        i = j;
    }
    out
}

/// Decibels of an amplitude ratio: 20·log10(r).
pub fn db20(r: f64) -> f64 {
    20.0 * r.log10()
}

/// Decibels of a power ratio: 10·log10(r).
pub fn db10(r: f64) -> f64 {
    10.0 * r.log10()
}

/// The maximum of a unimodal `f` on [lo, hi] by golden-section search (40 steps: to about 1e-9
/// of the interval). Returns where it is.
pub fn golden_max(lo: f64, hi: f64, f: impl Fn(f64) -> f64) -> f64 {
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let (mut a, mut b) = (lo, hi);
    let mut c = b - g * (b - a);
    let mut d = a + g * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..40 {
        if fc > fd {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = f(d);
        }
    }
    (a + b) / 2.0
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

    #[test]
    fn min_max_runs_keep_every_extreme() {
        // Random signals of awkward lengths, and a lone one-sample spike: every run's pair
        // holds exactly the run's extremes, computed here the slow way.
        let mut rng = crate::rng::Rng::new(4);
        for (len, per) in [(1000, 7), (1001, 10), (5, 9), (4096, 1), (333, 333)] {
            let mut x: Vec<f64> = (0..len).map(|_| rng.normal() * 100.0).collect();
            x[len / 3] = 1e4;
            let (lo, hi) = minmax_runs(&x, per);
            assert_eq!(lo.len(), len.div_ceil(per));
            for (k, run) in x.chunks(per).enumerate() {
                let want_lo = run.iter().copied().fold(f64::MAX, f64::min);
                let want_hi = run.iter().copied().fold(f64::MIN, f64::max);
                assert_eq!((lo[k], hi[k]), (want_lo, want_hi));
            }
            assert_eq!(hi.iter().copied().fold(f64::MIN, f64::max), 1e4);
        }
        // The same for a polyline: a one-sample spike survives 10 000 → 100 columns.
        let pts: Vec<[f64; 2]> = (0..10_000)
            .map(|i| {
                let y = if i == 4321 {
                    5.0
                } else {
                    (f64::from(i) * 0.01).sin()
                };
                [f64::from(i), y]
            })
            .collect();
        let d = decimate_xy(&pts, 100);
        assert!(d.len() <= 200, "{}", d.len());
        assert!(d.contains(&[4321.0, 5.0]));
        let low = pts.iter().map(|p| p[1]).fold(f64::MAX, f64::min);
        assert!(d.iter().any(|p| p[1] == low));
    }

    #[test]
    fn decibels_and_golden_section_by_hand() {
        // By hand: 20·log10(10) = 20, 10·log10(2) = 3.0103, a half is −6.0206 dB.
        assert_eq!(db20(10.0), 20.0);
        assert!((db10(2.0) - 3.010_299_956_6).abs() < 1e-9);
        assert!((db20(0.5) + 6.020_599_913_3).abs() < 1e-9);
        // −(x − 0.3)² peaks at 0.3; a sine's peak on [0, π] at π/2.
        assert!((golden_max(0.0, 1.0, |x| -(x - 0.3) * (x - 0.3)) - 0.3).abs() < 1e-7);
        assert!((golden_max(0.0, 3.0, f64::sin) - std::f64::consts::FRAC_PI_2).abs() < 1e-7);
    }
}
