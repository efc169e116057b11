//! Monte Carlo yield over the linear model: each build draws every
//! parameter's initial deviation and drift uniformly inside its limits
//! (seeded generator of [`crate::montecarlo`]), evaluates the error at both
//! ends of the span and both ends of the temperature range, and keeps the
//! worst of the four. Every statistic it gives is of that worst-of-four
//! error of a build: the yield, the standard deviation, the histogram, and
//! the share of builds the RSS total covers.

use super::{Analysis, Model};
use crate::montecarlo::{wilson_interval, Rng};
use crate::need::{Basis, Need};
use serde::Serialize;

/// Bins of the reported histogram.
const HISTOGRAM_BINS: usize = 40;

/// Monte Carlo result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct YieldResult {
    /// Builds drawn.
    pub builds: u64,
    /// Seed used.
    pub seed: u64,
    /// Share of builds whose error (the worst of the four conditions, plus
    /// the noise peak) is inside the target, in %.
    pub yield_pct: f64,
    /// 95 % confidence interval (Wilson), in %.
    pub confidence_pct: [f64; 2],
    /// Standard deviation of each build's signed error at its worst
    /// condition (the largest in magnitude of both span ends at both
    /// temperature ends), % FS.
    pub sigma_pct_fs: f64,
    /// Share of builds whose error (worst of the four conditions, plus the
    /// noise peak) is inside the RSS total, in %: the yield a target equal
    /// to the RSS total would have. It says what the RSS total covers; it
    /// is not a fixed number of sigma.
    pub rss_coverage_pct: f64,
    /// Histogram of each build's signed error at its worst condition.
    pub histogram: Histogram,
}

/// A histogram with equal bins.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Histogram {
    /// Bin edges in % FS (`counts.len() + 1` of them).
    pub bin_edges_pct_fs: Vec<f64>,
    /// Builds in each bin.
    pub counts: Vec<u64>,
}

/// The drift at the end of the temperature range with the smaller
/// excursion from 25 degC, as a signed fraction of the drift at the end
/// with the larger one (the parameters' drift limits are taken there).
/// Drift is linear in `T - 25 degC` (TCR and tempco are specified against
/// 25 degC; common practice), so the ratio is the smaller excursion over
/// the larger, signs kept: negative when the range straddles 25 degC,
/// whichever end is the farther.
pub(crate) fn other_end_drift_ratio(need: &Need) -> f64 {
    let cold = need.accuracy.temp_min.0 - 25.0;
    let hot = need.accuracy.temp_max.0 - 25.0;
    if need.max_delta_t() > 0.0 {
        if hot.abs() >= cold.abs() {
            cold / hot
        } else {
            hot / cold
        }
    } else {
        0.0
    }
}

impl Model {
    /// Monte Carlo over the linear model: `builds` draws from `seed`; a
    /// build passes when its error (plus the noise peak) is within
    /// `limit_v` at every end of span and temperature.
    pub fn monte_carlo(&self, builds: u64, seed: u64, limit_v: f64) -> YieldResult {
        // Per parameter, its initial and drift error at each span end.
        let initial: Vec<[f64; 2]> = self
            .params
            .iter()
            .map(|parameter| [0, 1].map(|end| parameter.initial_error(self.calibration, end)))
            .collect();
        let drift: Vec<[f64; 2]> = self
            .params
            .iter()
            .map(|parameter| [0, 1].map(|end| parameter.drift_error(end)))
            .collect();
        let systematic: [f64; 2] = [
            self.systematic.iter().map(|term| term.error[0]).sum(),
            self.systematic.iter().map(|term| term.error[1]).sum(),
        ];
        let other_end = self.other_end_drift_ratio;
        // The noise peak and the droop at the signal bandwidth are taken
        // whole, out of the limit, in every build.
        let limit = limit_v - self.noise_peak - self.droop;
        // The RSS total as reported (the larger end), less the noise peak
        // and the droop each build carries on top of its drawn error.
        let rss = self.rss_at_ends();
        let rss_limit = rss[0].max(rss[1]) - self.noise_peak - self.droop;
        let mut rng = Rng::new(seed);
        let mut pass = 0u64;
        let mut inside_rss = 0u64;
        let mut worst = Vec::with_capacity(builds as usize);
        let (mut sum, mut sum_squares) = (0.0, 0.0);
        for _ in 0..builds {
            let mut at_25 = systematic;
            let mut drifted = [0.0; 2];
            for (initial, drift) in initial.iter().zip(&drift) {
                let x = rng.symmetric();
                let y = rng.symmetric();
                at_25[0] += initial[0] * x;
                at_25[1] += initial[1] * x;
                drifted[0] += drift[0] * y;
                drifted[1] += drift[1] * y;
            }
            // Both span ends at the larger excursion, then at the other end
            // of the temperature range.
            let conditions = [
                at_25[0] + drifted[0],
                at_25[1] + drifted[1],
                at_25[0] + other_end * drifted[0],
                at_25[1] + other_end * drifted[1],
            ];
            let mut m = conditions[0];
            for v in &conditions[1..] {
                if v.abs() > m.abs() {
                    m = *v;
                }
            }
            if m.abs() <= limit {
                pass += 1;
            }
            if m.abs() <= rss_limit {
                inside_rss += 1;
            }
            sum += m;
            sum_squares += m * m;
            worst.push(m);
        }
        let n = builds.max(1) as f64;
        let mean = sum / n;
        let sigma = (sum_squares / n - mean * mean).max(0.0).sqrt();
        let (low, high) = wilson_interval(pass, builds);
        let pct = 100.0 / self.full_scale;
        YieldResult {
            builds,
            seed,
            yield_pct: 100.0 * pass as f64 / n,
            confidence_pct: [100.0 * low, 100.0 * high],
            sigma_pct_fs: sigma * pct,
            rss_coverage_pct: 100.0 * inside_rss as f64 / n,
            histogram: histogram(&worst, limit_v, pct),
        }
    }
}

impl Analysis {
    /// Plain-language warnings about how far the verdict on the need's
    /// basis can be trusted: a design judged on the `rss` basis whose Monte
    /// Carlo yield is under the need's `yield_pct` is flagged, with the
    /// share of builds the RSS total covers; so is a design whose output a
    /// 1 % change of the sensor's own resistance moves by more than a
    /// tenth of the target where the need states that resistance without
    /// tolerance or tempco (the verdict then holds only if it really is
    /// that exact).
    pub fn warnings(&self, need: &Need) -> Vec<String> {
        let mut out = Vec::new();
        let sensor = &need.sensor;
        if let Some(moved) = self.sensor_resistance_pct_fs_per_pct {
            let target = need.accuracy.max_error_pct_fs;
            if sensor.source_tolerance.0 == 0.0
                && sensor.source_tempco.0 == 0.0
                && moved > 0.1 * target
            {
                out.push(format!(
                    "the design leans on the sensor's own resistance ({} ohm): a 1 % change in \
                     it moves the output by up to {moved:.3} % FS before calibration (the \
                     target is {target} % FS), and the need states it without tolerance or \
                     tempco, so the verdict holds only if it is that exact. Give \
                     sensor.source_tolerance_pct and sensor.source_tempco_ppm_per_c as the \
                     sensor really has them.",
                    sensor.source.0,
                ));
            }
        }
        if let (Basis::Rss, Some(y)) = (need.accuracy.basis, &self.yield_result) {
            if y.yield_pct < need.accuracy.yield_pct {
                out.push(format!(
                    "judged on the rss basis: only {:.2} % of {} Monte Carlo builds stay within \
                     the target of {} % FS (the need's yield_pct is {} %); the RSS total \
                     ({:.4} % FS) covers {:.2} % of builds, not every build. Use basis = \
                     \"yield\" or \"worst-case\" for a verdict that holds at that yield.",
                    y.yield_pct,
                    y.builds,
                    need.accuracy.max_error_pct_fs,
                    need.accuracy.yield_pct,
                    self.rss_pct_fs,
                    y.rss_coverage_pct,
                ));
            }
        }
        out
    }
}

/// Equal bins over +/-(the largest error or the limit, plus 5 %).
fn histogram(errors: &[f64], limit_v: f64, pct: f64) -> Histogram {
    let span = errors.iter().fold(limit_v, |a, v| a.max(v.abs())) * 1.05;
    let bins = HISTOGRAM_BINS;
    let mut counts = vec![0u64; bins];
    for v in errors {
        let k = (((v + span) / (2.0 * span)) * bins as f64).floor() as isize;
        counts[k.clamp(0, bins as isize - 1) as usize] += 1;
    }
    Histogram {
        bin_edges_pct_fs: (0..=bins)
            .map(|k| (-span + 2.0 * span * k as f64 / bins as f64) * pct)
            .collect(),
        counts,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn need(temp_min: f64, temp_max: f64) -> Need {
        crate::need::parse_need(
            format!(
                "[sensor]\nsignal_low_v = 0\nsignal_high_v = 0.1\n\
                 [adc]\nlow_v = 0\nhigh_v = 3\nbits = 12\n[supply]\npositive_v = 5\n\
                 [accuracy]\nmax_error_pct_fs = 1\ntemp_min_c = {temp_min}\ntemp_max_c = {temp_max}\n"
            )
            .as_bytes(),
            "ratio.toml",
        )
        .expect("the test need parses")
    }

    /// Drift linear in T - 25 degC: the nearer end's drift over the
    /// farther end's is the ratio of the signed excursions.
    #[test]
    fn drift_ratio_is_the_ratio_of_signed_excursions() {
        for (low, high, want) in [
            (-40.0, 50.0, 25.0 / -65.0),
            (-10.0, 85.0, -35.0 / 60.0),
            (30.0, 85.0, 5.0 / 60.0),
            (-40.0, 0.0, -25.0 / -65.0),
            (25.0, 25.0, 0.0),
        ] {
            let got = other_end_drift_ratio(&need(low, high));
            assert!((got - want).abs() < 1e-15, "{low}..{high}: {got} vs {want}");
        }
    }
}
