//! How the need's `[accuracy]` settings turn error terms into totals:
//! calibration removes what a trim removes ([`Calibration::apply`] for
//! linear terms, [`Calibration::apply_exact`] for full netlist solves), and
//! a basis combines the random spread into one number
//! ([`Basis::random_total`], over a [`Spread`]). These are the only places
//! that do either, for the analysis and the search alike.

use crate::error::Result;
use crate::need::{Basis, Calibration};

impl Calibration {
    /// The error left after this calibration of a term that is linear in
    /// the deviation behind it, given its error at the low and high end of
    /// the span (volts): a one-point trim at the low end removes the
    /// offset, a two-point trim removes offset and gain.
    #[inline]
    pub fn apply(self, error: [f64; 2]) -> [f64; 2] {
        match self {
            Calibration::None => error,
            Calibration::Offset => [0.0, error[1] - error[0]],
            Calibration::TwoPoint => [0.0, 0.0],
        }
    }

    /// The error left after this calibration of a board whose outputs are
    /// `reading` at the span ends in service, when the trim was measured
    /// on the same board at calibration (`at_calibration`, asked only if
    /// the calibration needs it). `ideal` is the target output at the ends.
    pub fn apply_exact(
        self,
        ideal: [f64; 2],
        reading: [f64; 2],
        at_calibration: impl FnOnce() -> Result<[f64; 2]>,
    ) -> Result<[f64; 2]> {
        let error = [reading[0] - ideal[0], reading[1] - ideal[1]];
        Ok(match self {
            Calibration::None => error,
            Calibration::Offset => {
                let trimmed = at_calibration()?;
                let trim = trimmed[0] - ideal[0];
                [error[0] - trim, error[1] - trim]
            }
            Calibration::TwoPoint => {
                let trimmed = at_calibration()?;
                let slope = (ideal[1] - ideal[0]) / (trimmed[1] - trimmed[0]);
                let map = |v: f64| ideal[0] + (v - trimmed[0]) * slope;
                [map(reading[0]) - ideal[0], map(reading[1]) - ideal[1]]
            }
        })
    }
}

/// The random spread of a budget at one end of the span, volts.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Spread {
    /// Sum of the limits `|sensitivity x deviation|` of the bounded terms
    /// (each taken as uniform inside its limit).
    pub limit_sum: f64,
    /// Sum of the squares of the same limits.
    pub limit_squares: f64,
    /// RMS of the Gaussian terms (noise), for the yield basis.
    pub noise_rms: f64,
    /// The peak the worst-case and RSS bases take for the Gaussian terms.
    pub noise_peak: f64,
}

impl Spread {
    /// Standard deviation: a uniform term inside `+/-L` has variance
    /// `L^2/3` (common practice); noise adds its RMS in quadrature.
    #[inline]
    pub fn sigma(&self) -> f64 {
        (self.limit_squares / 3.0 + self.noise_rms * self.noise_rms).sqrt()
    }
}

impl Basis {
    /// The random part of a budget on this basis: worst case, the sum of
    /// the limits plus the noise peak; RSS, the root-sum-square of limits
    /// and noise peak; yield, `k` sigma for a two-sided yield of
    /// `yield_pct` plus the noise peak (the screen a Monte Carlo run then
    /// confirms). With `noise_rms` and `noise_peak` zero, the bare sums:
    /// `limit_sum`, `sqrt(limit_squares)`, `k sqrt(limit_squares/3)`.
    pub fn random_total(self, spread: &Spread, yield_pct: f64) -> f64 {
        match self {
            Basis::WorstCase => spread.limit_sum + spread.noise_peak,
            Basis::Rss => (spread.limit_squares + spread.noise_peak * spread.noise_peak).sqrt(),
            Basis::Yield => yield_k_sigma(yield_pct) * spread.sigma() + spread.noise_peak,
        }
    }
}

/// The two-sided normal quantile for a yield in %, used to screen the
/// yield basis as RSS at k sigma (Acklam's rational approximation of the
/// inverse normal, from memory; accurate to about 1e-9).
pub fn yield_k_sigma(yield_pct: f64) -> f64 {
    let p = 0.5 + 0.5 * (yield_pct / 100.0).clamp(1e-9, 1.0 - 1e-12);
    inverse_normal(p)
}

#[allow(clippy::excessive_precision)]
fn inverse_normal(p: f64) -> f64 {
    let a = [
        -3.969683028665376e+01,
        2.209460984245205e+02,
        -2.759285104469687e+02,
        1.383577518672690e+02,
        -3.066479806614716e+01,
        2.506628277459239e+00,
    ];
    let b = [
        -5.447609879822406e+01,
        1.615858368580409e+02,
        -1.556989798598866e+02,
        6.680131188771972e+01,
        -1.328068155288572e+01,
    ];
    let c = [
        -7.784894002430293e-03,
        -3.223964580411365e-01,
        -2.400758277161838e+00,
        -2.549732539343734e+00,
        4.374664141464968e+00,
        2.938163982698783e+00,
    ];
    let d = [
        7.784695709041462e-03,
        3.224671290700398e-01,
        2.445134137142996e+00,
        3.754408661907416e+00,
    ];
    let plow = 0.02425;
    if p < plow {
        let q = (-2.0 * p.ln()).sqrt();
        (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5])
            / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1.0)
    } else if p <= 1.0 - plow {
        let q = p - 0.5;
        let r = q * q;
        (((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q
            / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1.0)
    } else {
        -inverse_normal(1.0 - p)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The two-sided 99 % normal quantile is 2.5758 (normal tables, common
    /// practice).
    #[test]
    fn yield_k_sigma_matches_normal_table() {
        assert!((yield_k_sigma(99.0) - 2.575_829).abs() < 1e-5);
        assert!((yield_k_sigma(95.0) - 1.959_964).abs() < 1e-5);
    }

    /// Each basis combines a spread as its definition says.
    #[test]
    fn bases_combine_a_spread() {
        let spread = Spread {
            limit_sum: 7.0,
            limit_squares: 25.0,
            noise_rms: 1.0,
            noise_peak: 3.3,
        };
        assert_eq!(Basis::WorstCase.random_total(&spread, 99.0), 10.3);
        let rss = (25.0f64 + 3.3 * 3.3).sqrt();
        assert!((Basis::Rss.random_total(&spread, 99.0) - rss).abs() < 1e-15);
        let sigma = (25.0f64 / 3.0 + 1.0).sqrt();
        let want = yield_k_sigma(99.0) * sigma + 3.3;
        assert!((Basis::Yield.random_total(&spread, 99.0) - want).abs() < 1e-12);
        // Without noise, the bare sums.
        let bare = Spread {
            limit_sum: 7.0,
            limit_squares: 25.0,
            ..Spread::default()
        };
        assert_eq!(Basis::WorstCase.random_total(&bare, 99.0), 7.0);
        assert_eq!(Basis::Rss.random_total(&bare, 99.0), 5.0);
        assert_eq!(
            Basis::Yield.random_total(&bare, 99.0),
            yield_k_sigma(99.0) * (25.0f64 / 3.0).sqrt()
        );
    }

    /// On a board whose error is the same in service as at calibration,
    /// the exact trim agrees with the linear rule.
    #[test]
    fn exact_trim_agrees_with_linear_rule_without_drift() {
        let ideal = [0.5, 2.5];
        let reading = [0.503, 2.49];
        let error = [reading[0] - ideal[0], reading[1] - ideal[1]];
        for calibration in [
            Calibration::None,
            Calibration::Offset,
            Calibration::TwoPoint,
        ] {
            let exact = calibration
                .apply_exact(ideal, reading, || Ok(reading))
                .expect("no solve fails here");
            let linear = calibration.apply(error);
            for end in 0..2 {
                assert!(
                    (exact[end] - linear[end]).abs() < 1e-12,
                    "{calibration:?}: {exact:?} vs {linear:?}"
                );
            }
        }
    }
}
