//! IEC 60063 preferred-number series E6 to E192, held once here.
//!
//! Each series is a table of mantissas with three significant digits
//! (`100` stands for 1.00, 10.0, 100 ... ohms). E6, E12 and E24 are
//! published with two digits; they are held here times ten (`470` for 4.7)
//! so that every series has the same shape. The tables are typed in, not
//! computed from `10^(i/n)`: the published values differ from that formula
//! in places (E24 2.7 ... 4.7 and 8.2; E192 9.20, where the formula gives
//! 9.19).
//!
//! Series values are built as an integer mantissa times an exact power of
//! ten, so `E96` gives exactly `10.0`, `4990.0` and `1.0e6`, never
//! `9.999999999`.
//!
//! ```
//! use spanfit::series::Series;
//! let values = Series::E24.values_in(1000.0, 10_000.0);
//! assert_eq!(values.first(), Some(&1000.0));
//! assert_eq!(values.last(), Some(&10_000.0));
//! assert_eq!(values.len(), 25);
//! assert_eq!(Series::E96.nearest(4_987.0), 4_990.0);
//! ```

use serde::{Deserialize, Serialize};

/// A standard resistor series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Series {
    /// 6 values per decade.
    E6,
    /// 12 values per decade.
    E12,
    /// 24 values per decade.
    E24,
    /// 48 values per decade.
    E48,
    /// 96 values per decade.
    E96,
    /// 192 values per decade.
    E192,
}

/// E6 mantissas (published two-digit values, times ten).
const E6: [u16; 6] = [100, 150, 220, 330, 470, 680];

/// E12 mantissas (published two-digit values, times ten).
const E12: [u16; 12] = [100, 120, 150, 180, 220, 270, 330, 390, 470, 560, 680, 820];

/// E24 mantissas (published two-digit values, times ten).
const E24: [u16; 24] = [
    100, 110, 120, 130, 150, 160, 180, 200, 220, 240, 270, 300, 330, 360, 390, 430, 470, 510, 560,
    620, 680, 750, 820, 910,
];

/// E48 mantissas.
const E48: [u16; 48] = [
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205, 215, 226, 237,
    249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536, 562, 590,
    619, 649, 681, 715, 750, 787, 825, 866, 909, 953,
];

/// E96 mantissas.
const E96: [u16; 96] = [
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154,
    158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232, 237, 243,
    249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383,
    392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604,
    619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953,
    976,
];

/// E192 mantissas.
const E192: [u16; 192] = [
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123, 124,
    126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152, 154, 156,
    158, 160, 162, 164, 165, 167, 169, 172, 174, 176, 178, 180, 182, 184, 187, 189, 191, 193, 196,
    198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246,
    249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309,
    312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379, 383, 388,
    392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481, 487,
    493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556, 562, 569, 576, 583, 590, 597, 604, 612,
    619, 626, 634, 642, 649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768,
    777, 787, 796, 806, 816, 825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965,
    976, 988,
];

/// Exact powers of ten `10^0 ..= 10^22` (every one is exactly representable
/// in an `f64`).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Relative slack used when comparing a series value with a range bound,
/// so that `10.0` counts as inside `[10.0, ...]` however the bound was
/// computed.
const RANGE_SLACK: f64 = 1e-9;

/// Decade exponents outside this range give values that underflow or
/// overflow an `f64`; they are never generated.
const EXPONENT_RANGE: std::ops::RangeInclusive<i32> = -300..=300;

/// `mantissa * 10^exponent`, rounded once (a multiplication or division by
/// an exact power of ten), so the result is the `f64` nearest to the
/// decimal value for every exponent up to +/-22.
fn scaled(mantissa: u16, exponent: i32) -> f64 {
    let m = f64::from(mantissa);
    let e = exponent.unsigned_abs() as usize;
    match POW10.get(e) {
        Some(&p) if exponent >= 0 => m * p,
        Some(&p) => m / p,
        None => m * 10f64.powi(exponent),
    }
}

impl Series {
    /// Every series, from the coarsest to the finest.
    pub const ALL: [Series; 6] = [
        Series::E6,
        Series::E12,
        Series::E24,
        Series::E48,
        Series::E96,
        Series::E192,
    ];

    /// The mantissas of one decade with three significant digits, ascending
    /// from `100` (E6, E12 and E24 as their two-digit values times ten).
    pub fn mantissas(self) -> &'static [u16] {
        match self {
            Series::E6 => &E6,
            Series::E12 => &E12,
            Series::E24 => &E24,
            Series::E48 => &E48,
            Series::E96 => &E96,
            Series::E192 => &E192,
        }
    }

    /// How many values the series has in each decade (6 ... 192).
    pub fn values_per_decade(self) -> usize {
        self.mantissas().len()
    }

    /// The name used in specs and stock files (`"E6"` ... `"E192"`).
    pub fn name(self) -> &'static str {
        match self {
            Series::E6 => "E6",
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// The series with this name, exactly as [`Series::name`] writes it
    /// (`"E96"`); `None` for anything else.
    pub fn from_name(name: &str) -> Option<Series> {
        Series::ALL.into_iter().find(|s| s.name() == name)
    }

    /// Every series value in `[min_ohms, max_ohms]`, bounds included (with
    /// a relative slack of 1e-9, so a bound computed as `9.999999999` still
    /// takes `10`), ascending. Values are exact decimals: an integer
    /// mantissa times a power of ten. Empty when either bound is not a
    /// positive finite number or `min_ohms > max_ohms`.
    pub fn values_in(self, min_ohms: f64, max_ohms: f64) -> Vec<f64> {
        let valid = |x: f64| x.is_finite() && x > 0.0;
        if !valid(min_ohms) || !valid(max_ohms) || min_ohms > max_ohms {
            return Vec::new();
        }
        let low = min_ohms * (1.0 - RANGE_SLACK);
        let high = max_ohms * (1.0 + RANGE_SLACK);
        // A mantissa m (100..=999) times 10^e lies in [10^(e+2), 10^(e+3)).
        let first = (low.log10().floor() as i32 - 3).max(*EXPONENT_RANGE.start());
        let last = (high.log10().ceil() as i32).min(*EXPONENT_RANGE.end());
        let mut values = Vec::new();
        for exponent in first..=last {
            for &m in self.mantissas() {
                let v = scaled(m, exponent);
                if v >= low && v <= high {
                    values.push(v);
                }
            }
        }
        values
    }

    /// The series value nearest to `ohms` on a logarithmic scale (the
    /// smallest ratio `max(v/ohms, ohms/v)`, which is how the series are
    /// spaced); the lower value wins an exact tie. `NaN` when `ohms` is not
    /// a positive finite number.
    pub fn nearest(self, ohms: f64) -> f64 {
        if !(ohms.is_finite() && ohms > 0.0) {
            return f64::NAN;
        }
        let decade = ohms.log10().floor() as i32;
        let mut best = f64::NAN;
        let mut best_distance = f64::INFINITY;
        // Look one decade either side so rounding in log10 cannot matter.
        for exponent in (decade - 3)..=(decade - 1) {
            for &m in self.mantissas() {
                let v = scaled(m, exponent);
                let distance = (v / ohms).ln().abs();
                if distance < best_distance {
                    best_distance = distance;
                    best = v;
                }
            }
        }
        best
    }
}

impl std::fmt::Display for Series {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// The letter-and-digit code of a resistance with three significant digits
/// (the RKM code of IEC 60062): the multiplier letter `R`, `K`, `M` or `G`
/// stands where the decimal point would be, so 49.9 ohms is `49R9`,
/// 4.99 kohm is `4K99`, 10 kohm is `10K0`, 1 Mohm is `1M00` and 100 ohms is
/// `100R`. Values below one ohm start with `R` (`R470`). Used to name the
/// parts a resistor family stands for. A value that is not a positive
/// finite number gives `"?"`.
pub fn value_code(ohms: f64) -> String {
    if !(ohms.is_finite() && ohms > 0.0) {
        return "?".to_string();
    }
    // ohms = mantissa * 10^exponent with mantissa in 100..=999.
    let mut exponent = ohms.log10().floor() as i32 - 2;
    let mut mantissa = (ohms / 10f64.powi(exponent)).round() as i64;
    if mantissa >= 1000 {
        mantissa /= 10;
        exponent += 1;
    } else if mantissa < 100 {
        mantissa *= 10;
        exponent -= 1;
    }
    let digits = mantissa.to_string();
    // Decimal exponent of the leading digit, then the multiplier group.
    let lead = exponent + 2;
    let group = lead.div_euclid(3).clamp(0, 3);
    let letter = ['R', 'K', 'M', 'G'][group as usize];
    // How many digits stand before the letter.
    let before = lead - 3 * group + 1;
    if before <= 0 {
        let zeros = "0".repeat((-before) as usize);
        format!("{letter}{zeros}{digits}")
    } else if before >= 3 {
        let zeros = "0".repeat((before - 3) as usize);
        format!("{digits}{zeros}{letter}")
    } else {
        let (head, tail) = digits.split_at(before as usize);
        format!("{head}{letter}{tail}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The published IEC 60063:2015 tables, written out a second time as the
    // decimal values the standard prints, one decade per string. Transcribed
    // from memory of the standard's tables, and cross-checked below against
    // the generating formula (which must disagree exactly where the
    // standard is known to deviate).
    const PUBLISHED_E6: &str = "1.0 1.5 2.2 3.3 4.7 6.8";
    const PUBLISHED_E12: &str = "1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2";
    const PUBLISHED_E24: &str = "1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 \
                                 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1";
    const PUBLISHED_E48: &str = "1.00 1.05 1.10 1.15 1.21 1.27 1.33 1.40 1.47 1.54 1.62 1.69 \
                                 1.78 1.87 1.96 2.05 2.15 2.26 2.37 2.49 2.61 2.74 2.87 3.01 \
                                 3.16 3.32 3.48 3.65 3.83 4.02 4.22 4.42 4.64 4.87 5.11 5.36 \
                                 5.62 5.90 6.19 6.49 6.81 7.15 7.50 7.87 8.25 8.66 9.09 9.53";
    const PUBLISHED_E96: &str = "1.00 1.02 1.05 1.07 1.10 1.13 1.15 1.18 1.21 1.24 1.27 1.30 \
                                 1.33 1.37 1.40 1.43 1.47 1.50 1.54 1.58 1.62 1.65 1.69 1.74 \
                                 1.78 1.82 1.87 1.91 1.96 2.00 2.05 2.10 2.15 2.21 2.26 2.32 \
                                 2.37 2.43 2.49 2.55 2.61 2.67 2.74 2.80 2.87 2.94 3.01 3.09 \
                                 3.16 3.24 3.32 3.40 3.48 3.57 3.65 3.74 3.83 3.92 4.02 4.12 \
                                 4.22 4.32 4.42 4.53 4.64 4.75 4.87 4.99 5.11 5.23 5.36 5.49 \
                                 5.62 5.76 5.90 6.04 6.19 6.34 6.49 6.65 6.81 6.98 7.15 7.32 \
                                 7.50 7.68 7.87 8.06 8.25 8.45 8.66 8.87 9.09 9.31 9.53 9.76";
    const PUBLISHED_E192: &str = "1.00 1.01 1.02 1.04 1.05 1.06 1.07 1.09 1.10 1.11 1.13 1.14 \
                                  1.15 1.17 1.18 1.20 1.21 1.23 1.24 1.26 1.27 1.29 1.30 1.32 \
                                  1.33 1.35 1.37 1.38 1.40 1.42 1.43 1.45 1.47 1.49 1.50 1.52 \
                                  1.54 1.56 1.58 1.60 1.62 1.64 1.65 1.67 1.69 1.72 1.74 1.76 \
                                  1.78 1.80 1.82 1.84 1.87 1.89 1.91 1.93 1.96 1.98 2.00 2.03 \
                                  2.05 2.08 2.10 2.13 2.15 2.18 2.21 2.23 2.26 2.29 2.32 2.34 \
                                  2.37 2.40 2.43 2.46 2.49 2.52 2.55 2.58 2.61 2.64 2.67 2.71 \
                                  2.74 2.77 2.80 2.84 2.87 2.91 2.94 2.98 3.01 3.05 3.09 3.12 \
                                  3.16 3.20 3.24 3.28 3.32 3.36 3.40 3.44 3.48 3.52 3.57 3.61 \
                                  3.65 3.70 3.74 3.79 3.83 3.88 3.92 3.97 4.02 4.07 4.12 4.17 \
                                  4.22 4.27 4.32 4.37 4.42 4.48 4.53 4.59 4.64 4.70 4.75 4.81 \
                                  4.87 4.93 4.99 5.05 5.11 5.17 5.23 5.30 5.36 5.42 5.49 5.56 \
                                  5.62 5.69 5.76 5.83 5.90 5.97 6.04 6.12 6.19 6.26 6.34 6.42 \
                                  6.49 6.57 6.65 6.73 6.81 6.90 6.98 7.06 7.15 7.23 7.32 7.41 \
                                  7.50 7.59 7.68 7.77 7.87 7.96 8.06 8.16 8.25 8.35 8.45 8.56 \
                                  8.66 8.76 8.87 8.98 9.09 9.20 9.31 9.42 9.53 9.65 9.76 9.88";

    fn published(series: Series) -> Vec<f64> {
        let text = match series {
            Series::E6 => PUBLISHED_E6,
            Series::E12 => PUBLISHED_E12,
            Series::E24 => PUBLISHED_E24,
            Series::E48 => PUBLISHED_E48,
            Series::E96 => PUBLISHED_E96,
            Series::E192 => PUBLISHED_E192,
        };
        text.split_whitespace()
            .map(|t| t.parse::<f64>().unwrap())
            .collect()
    }

    /// `round(10^(i/n))` to the series' printed digits, scaled to the
    /// three-digit mantissa convention.
    fn formula(series: Series, i: usize) -> u16 {
        let n = series.values_per_decade() as f64;
        let x = 10f64.powf(i as f64 / n);
        if series.values_per_decade() <= 24 {
            ((x * 10.0).round() * 10.0) as u16
        } else {
            (x * 100.0).round() as u16
        }
    }

    fn deviating_indices(series: Series) -> Vec<usize> {
        series
            .mantissas()
            .iter()
            .enumerate()
            .filter(|&(i, &m)| formula(series, i) != m)
            .map(|(i, _)| i)
            .collect()
    }

    /// Every mantissa equals the published IEC 60063:2015 value.
    #[test]
    fn every_mantissa_matches_the_published_table() {
        for series in Series::ALL {
            let table = published(series);
            assert_eq!(table.len(), series.mantissas().len(), "{series}");
            for (i, (&m, &p)) in series.mantissas().iter().zip(&table).enumerate() {
                assert_eq!(
                    f64::from(m),
                    (p * 100.0).round(),
                    "{series} index {i}: table {m}, published {p}"
                );
            }
        }
    }

    #[test]
    fn counts_per_decade() {
        let counts: Vec<usize> = Series::ALL.iter().map(|s| s.values_per_decade()).collect();
        assert_eq!(counts, vec![6, 12, 24, 48, 96, 192]);
        for series in Series::ALL {
            let m = series.mantissas();
            assert_eq!(m[0], 100, "{series} starts at 1.00");
            assert!(m.windows(2).all(|w| w[0] < w[1]), "{series} ascends");
            assert!(*m.last().unwrap() < 1000, "{series} stays in one decade");
        }
    }

    /// IEC 60063:2015 keeps the older E24 values 2.7 ... 4.7 and 8.2 where
    /// `round(10^(i/24))` gives 2.6 ... 4.6 and 8.3; the set of deviating
    /// indices is computed here, not assumed.
    #[test]
    fn irregular_e24_values() {
        let deviating = deviating_indices(Series::E24);
        assert_eq!(deviating, vec![10, 11, 12, 13, 14, 15, 16, 22]);
        let values: Vec<u16> = deviating.iter().map(|&i| E24[i]).collect();
        assert_eq!(values, vec![270, 300, 330, 360, 390, 430, 470, 820]);
        let formula_values: Vec<u16> = deviating.iter().map(|&i| formula(Series::E24, i)).collect();
        assert_eq!(formula_values, vec![260, 290, 320, 350, 380, 420, 460, 830]);
        // The coarser series inherit the same deviations.
        let e12: Vec<u16> = deviating_indices(Series::E12)
            .iter()
            .map(|&i| E12[i])
            .collect();
        assert_eq!(e12, vec![270, 330, 390, 470, 820]);
        let e6: Vec<u16> = deviating_indices(Series::E6)
            .iter()
            .map(|&i| E6[i])
            .collect();
        assert_eq!(e6, vec![330, 470]);
    }

    /// E48 and E96 follow the formula everywhere; E192 deviates only at
    /// 9.20, where `round(100 * 10^(185/192))` is 919 (IEC 60063:2015).
    #[test]
    fn e192_exception_at_9_20() {
        assert!(deviating_indices(Series::E48).is_empty());
        assert!(deviating_indices(Series::E96).is_empty());
        assert_eq!(deviating_indices(Series::E192), vec![185]);
        assert_eq!(E192[185], 920);
        assert_eq!(formula(Series::E192, 185), 919);
    }

    #[test]
    fn coarser_series_are_subsets() {
        let subset = |a: Series, b: Series| a.mantissas().iter().all(|m| b.mantissas().contains(m));
        assert!(subset(Series::E6, Series::E12));
        assert!(subset(Series::E12, Series::E24));
        assert!(subset(Series::E48, Series::E96));
        assert!(subset(Series::E96, Series::E192));
        // Every other value, in fact.
        let every_other = |s: &[u16]| s.iter().step_by(2).copied().collect::<Vec<_>>();
        assert_eq!(every_other(&E192), E96.to_vec());
        assert_eq!(every_other(&E96), E48.to_vec());
        assert_eq!(every_other(&E24), E12.to_vec());
        assert_eq!(every_other(&E12), E6.to_vec());
        // E24 and E48 are different families: 1.1 is not an E48 value.
        assert!(!subset(Series::E24, Series::E48));
    }

    #[test]
    fn values_in_over_several_decades() {
        // 10 ohms to 1 Mohm is five decades; 10 ohms to 10 Mohm six; seven
        // decades (1 ohm to 10 Mohm) give 7 x 96 + 1 = 673 values.
        let v = Series::E96.values_in(10.0, 1.0e6);
        assert_eq!(v.len(), 5 * 96 + 1);
        assert_eq!(Series::E96.values_in(10.0, 1.0e7).len(), 577);
        assert_eq!(Series::E96.values_in(1.0, 1.0e7).len(), 673);
        assert_eq!(v[0], 10.0);
        assert_eq!(v[96], 100.0);
        assert_eq!(*v.last().unwrap(), 1.0e6);
        assert!(v.windows(2).all(|w| w[0] < w[1]));
        assert!(v.contains(&4990.0));
        assert!(v.contains(&49.9));
        assert!(v.contains(&499_000.0));
        // Bounds that are not series values.
        let v = Series::E12.values_in(5.0, 50.0);
        assert_eq!(
            v,
            vec![5.6, 6.8, 8.2, 10.0, 12.0, 15.0, 18.0, 22.0, 27.0, 33.0, 39.0, 47.0]
        );
        // Sub-ohm and gigaohm decades are exact decimals too.
        let v = Series::E6.values_in(0.01, 0.1);
        assert_eq!(v, vec![0.01, 0.015, 0.022, 0.033, 0.047, 0.068, 0.1]);
        let v = Series::E6.values_in(1.0e9, 1.0e10);
        assert_eq!(v, vec![1.0e9, 1.5e9, 2.2e9, 3.3e9, 4.7e9, 6.8e9, 1.0e10]);
        // A bound a hair inside a series value still takes it.
        let v = Series::E24.values_in(10.0 * (1.0 + 1e-12), 100.0 * (1.0 - 1e-12));
        assert_eq!(v.len(), 25);
        // Degenerate ranges.
        assert!(Series::E96.values_in(100.0, 10.0).is_empty());
        assert!(Series::E96.values_in(0.0, 10.0).is_empty());
        assert!(Series::E96.values_in(f64::NAN, 10.0).is_empty());
        assert!(Series::E96.values_in(10.0, f64::INFINITY).is_empty());
        assert!(Series::E96.values_in(101.0, 101.5).is_empty());
        assert_eq!(Series::E96.values_in(100.0, 100.0), vec![100.0]);
    }

    #[test]
    fn every_value_is_the_nearest_f64_to_its_decimal() {
        for series in Series::ALL {
            for v in series.values_in(1.0e-3, 1.0e12) {
                // Formatting to 3 significant digits and parsing back must
                // give the same bits: the value is the decimal, exactly.
                let text = format!("{v:.2e}");
                assert_eq!(text.parse::<f64>().unwrap(), v, "{series} {text}");
            }
        }
    }

    #[test]
    fn names_round_trip() {
        for series in Series::ALL {
            assert_eq!(Series::from_name(series.name()), Some(series));
            assert_eq!(series.to_string(), series.name());
            let json = serde_json::to_string(&series).unwrap();
            assert_eq!(json, format!("\"{}\"", series.name()));
            let back: Series = serde_json::from_str(&json).unwrap();
            assert_eq!(back, series);
        }
        assert_eq!(Series::from_name("E97"), None);
        assert_eq!(Series::from_name("e96"), None);
        assert_eq!(Series::from_name(""), None);
    }

    #[test]
    fn nearest_value() {
        assert_eq!(Series::E96.nearest(4_987.0), 4_990.0);
        assert_eq!(Series::E24.nearest(2.65), 2.7);
        assert_eq!(Series::E12.nearest(9.3), 10.0);
        assert_eq!(Series::E12.nearest(9.0), 8.2);
        assert_eq!(Series::E6.nearest(1.0e6), 1.0e6);
        assert_eq!(Series::E192.nearest(0.0919), 0.092);
        assert!(Series::E96.nearest(0.0).is_nan());
        assert!(Series::E96.nearest(-5.0).is_nan());
        // Every series value is its own nearest value.
        for series in Series::ALL {
            for v in series.values_in(1.0, 1000.0) {
                assert_eq!(series.nearest(v), v, "{series}");
            }
        }
    }

    #[test]
    fn value_codes() {
        let cases = [
            (10_000.0, "10K0"),
            (4_990.0, "4K99"),
            (1.0e6, "1M00"),
            (49.9, "49R9"),
            (100.0, "100R"),
            (10.0, "10R0"),
            (1.0, "1R00"),
            (0.47, "R470"),
            (0.047, "R0470"),
            (499_000.0, "499K"),
            (2.2e9, "2G20"),
            (1.0e12, "1000G"),
        ];
        for (ohms, code) in cases {
            assert_eq!(value_code(ohms), code, "{ohms}");
        }
        assert_eq!(value_code(0.0), "?");
        // Codes of one family's values are distinct.
        let values = Series::E192.values_in(0.1, 1.0e9);
        let mut codes: Vec<String> = values.iter().map(|&v| value_code(v)).collect();
        codes.sort();
        codes.dedup();
        assert_eq!(codes.len(), values.len());
    }
}
