//! Small numerical kernels more than one stage uses, in one place.

/// The `k`-th smallest value of `v` (0-based; `k` clamped to the last), by
/// selection in place (O(n)); `None` for an empty slice. Values compare by
/// `f64::total_cmp`, so a NaN sorts last rather than panicking.
///
/// # Examples
/// ```
/// use chordline::numeric::order_statistic;
/// let mut v = [5.0, 1.0, 4.0, 2.0, 3.0];
/// assert_eq!(order_statistic(&mut v, 1), Some(2.0));
/// assert_eq!(order_statistic(&mut [], 0), None);
/// ```
pub fn order_statistic(v: &mut [f64], k: usize) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    let k = k.min(v.len() - 1);
    let (_, x, _) = v.select_nth_unstable_by(k, f64::total_cmp);
    Some(*x)
}

/// The median of `v` as the upper middle value (`v[n/2]` once sorted; no
/// averaging, so the result is always one of the values), by selection in
/// place; `None` for an empty slice.
///
/// # Examples
/// ```
/// use chordline::numeric::median_in_place;
/// assert_eq!(median_in_place(&mut [3.0, 1.0, 2.0]), Some(2.0));
/// assert_eq!(median_in_place(&mut [4.0, 1.0, 3.0, 2.0]), Some(3.0));
/// ```
pub fn median_in_place(v: &mut [f64]) -> Option<f64> {
    let mid = v.len() / 2;
    order_statistic(v, mid)
}

/// The `q` quantile of `v` (0 ≤ q ≤ 1) as the value at rank
/// `round((n − 1) q)`, by selection in place; `None` for an empty slice.
///
/// # Examples
/// ```
/// use chordline::numeric::quantile_in_place;
/// let mut v: Vec<f64> = (0..=10).map(f64::from).collect();
/// assert_eq!(quantile_in_place(&mut v, 0.9), Some(9.0));
/// ```
pub fn quantile_in_place(v: &mut [f64], q: f64) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    let k = ((v.len() - 1) as f64 * q.clamp(0.0, 1.0)).round() as usize;
    order_statistic(v, k)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn selection_agrees_with_sorting() {
        // A fixed scramble of 0..101: the selection must find what a sort finds.
        let mut v: Vec<f64> = (0..101).map(|i| f64::from((i * 37) % 101)).collect();
        let mut sorted = v.clone();
        sorted.sort_by(f64::total_cmp);
        assert_eq!(median_in_place(&mut v), Some(sorted[50]));
        assert_eq!(quantile_in_place(&mut v, 0.25), Some(sorted[25]));
        assert_eq!(order_statistic(&mut v, 500), Some(sorted[100]));
    }

    #[test]
    fn nan_does_not_panic() {
        let mut v = [1.0, f64::NAN, 0.5];
        assert_eq!(median_in_place(&mut v), Some(1.0));
    }
}
