//! Ratio searches over a sorted value list: the pairs whose ratio comes
//! nearest a target, the values nearest a target, with no allocation in
//! the inner loop. Shapes' value-set generators (`crate::shape`) use them.

/// Best pairs kept per target ratio.
pub(crate) const PAIRS_PER_RATIO: usize = 3;
/// Impedance band of the base resistor of a ratio pair, ohms.
pub(crate) const BAND: (f64, f64) = (1_000.0, 100_000.0);

/// Best pairs `(x, y)` from `values` with `y / x` near `ratio`, `x` in
/// the impedance band: a binary search per `x` over the sorted list.
pub(crate) fn ratio_pairs(
    values: &[f64],
    ratio: f64,
    band: (f64, f64),
    keep: usize,
) -> Vec<(usize, usize, f64)> {
    if !(ratio.is_finite() && ratio > 0.0) {
        return Vec::new();
    }
    // The dedupe below may need a few spares.
    let best = bracketed_pairs(
        values,
        band,
        keep * 4,
        |x| x * ratio,
        |x, y| (y / x / ratio - 1.0).abs(),
    );
    let mut out: Vec<(usize, usize, f64)> = Vec::new();
    for b in best {
        if out
            .iter()
            .any(|o| (values[o.1] / values[o.0] - values[b.1] / values[b.0]).abs() < 1e-12 * ratio)
        {
            continue;
        }
        out.push(b);
        if out.len() >= keep {
            break;
        }
    }
    out
}

/// The indices of the values just below and just above `target` in a
/// sorted list (no allocation: the inner loop of the ratio searches).
pub(crate) fn bracket(values: &[f64], target: f64) -> impl Iterator<Item = usize> {
    let ok = target.is_finite() && target > 0.0;
    let j = if ok {
        values.partition_point(|&v| v < target)
    } else {
        0
    };
    let n = if ok { values.len() } else { 0 };
    [j.wrapping_sub(1), j].into_iter().filter(move |&k| k < n)
}

/// Pairs `(base, partner, error)` from one sorted value list: for every
/// base value inside `band`, the two values bracketing `partner_for(base)`,
/// scored by `error(base, partner)`; the `keep` best, best first.
pub(crate) fn bracketed_pairs(
    values: &[f64],
    band: (f64, f64),
    keep: usize,
    partner_for: impl Fn(f64) -> f64,
    error: impl Fn(f64, f64) -> f64,
) -> Vec<(usize, usize, f64)> {
    let mut out = Vec::new();
    for (i, &x) in values.iter().enumerate() {
        if x < band.0 || x > band.1 {
            continue;
        }
        for k in bracket(values, partner_for(x)) {
            out.push((i, k, error(x, values[k])));
        }
    }
    keep_best(&mut out, keep);
    out
}

/// Pairs `(small, partner, score)` for an input resistor in series with
/// a source resistance `source`: `small` from `small_values` up to
/// `source` (at most half the input resistance), its partner from
/// `values` bracketing `gain (small + source)`; scored by the ratio error
/// plus `tolerance` times the small resistor's share of the input
/// resistance (what its own tolerance moves the gain by); the `keep`
/// best, best first.
pub(crate) fn carried_pairs(
    small_values: &[f64],
    values: &[f64],
    gain: f64,
    source: f64,
    tolerance: f64,
    keep: usize,
) -> Vec<(usize, usize, f64)> {
    let mut out = Vec::new();
    if !(gain.is_finite() && gain > 0.0 && source.is_finite() && source > 0.0) {
        return out;
    }
    for (i, &small) in small_values.iter().enumerate() {
        if small > source {
            break;
        }
        let input = small + source;
        for k in bracket(values, gain * input) {
            let ratio_error = (values[k] / input / gain - 1.0).abs();
            out.push((i, k, ratio_error + tolerance * small / input));
        }
    }
    keep_best(&mut out, keep);
    out
}

/// Keep the `k` entries of lowest error (third field), in order, ties by
/// index so the result does not depend on the sort.
pub(crate) fn keep_best(items: &mut Vec<(usize, usize, f64)>, k: usize) {
    let cmp = |a: &(usize, usize, f64), b: &(usize, usize, f64)| {
        a.2.total_cmp(&b.2).then(a.0.cmp(&b.0)).then(a.1.cmp(&b.1))
    };
    if items.len() > k && k > 0 {
        items.select_nth_unstable_by(k - 1, cmp);
        items.truncate(k);
    }
    items.sort_unstable_by(cmp);
}

/// Indices of the values nearest `target` (up to `keep`, both sides).
pub(crate) fn nearest_values(values: &[f64], target: f64, keep: usize) -> Vec<usize> {
    if !(target.is_finite() && target > 0.0) {
        return Vec::new();
    }
    let j = values.partition_point(|&v| v < target);
    let lo = j.saturating_sub(keep / 2 + 1);
    let hi = (j + keep / 2 + 1).min(values.len());
    let mut idx: Vec<usize> = (lo..hi).collect();
    // max(v/t, t/v) orders like |ln(v/t)| without the logarithm.
    let off = |v: f64| (v / target).max(target / v);
    idx.sort_unstable_by(|a, b| off(values[*a]).total_cmp(&off(values[*b])));
    idx.truncate(keep);
    idx
}
