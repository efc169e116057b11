//! The error of one design across the temperature range: the core's
//! analysis ([`crate::analysis::Model`]) run again with the operating
//! range shrunk to a single temperature at each of a few points, worst
//! case and RSS only (no Monte Carlo), so it stays cheap enough to run
//! after every search in the page.
//!
//! Part limits are stated at 25 degC (see `docs/error-budget.md`), so the
//! drift terms grow with the distance from 25 degC; the point nearest
//! 25 degC shows the error without drift. A reference's tempco is a
//! box-method figure over the whole range, so every point away from
//! 25 degC keeps the whole box for it.

use crate::analysis::Model;
use crate::design::Design;
use crate::need::{Basis, Need};
use crate::stock::Stock;
use crate::units::Celsius;
use crate::Result;
use serde::Serialize;

/// The most temperatures of a sweep.
pub const MAX_POINTS: usize = 9;

/// The error of a design at one temperature.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepPoint {
    /// The temperature, degrees Celsius.
    pub temp_c: f64,
    /// Worst-case error there, % of full scale.
    pub worst_case_pct_fs: f64,
    /// RSS error there, % of full scale.
    pub rss_pct_fs: f64,
}

/// The error over the need's temperature range.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sweep {
    /// The points, from the lowest temperature to the highest.
    pub points: Vec<SweepPoint>,
    /// The need's error target, % of full scale.
    pub target_pct_fs: f64,
}

/// The temperatures of a sweep: `points` evenly spaced from the lowest to
/// the highest temperature of the need (one when they are equal), with
/// 25 degC added where it lies inside the range; at most [`MAX_POINTS`].
pub fn temperatures(need: &Need, points: usize) -> Vec<f64> {
    let lo = need.accuracy.temp_min.0;
    let hi = need.accuracy.temp_max.0;
    let n = points.clamp(1, MAX_POINTS - 1);
    let mut temps: Vec<f64> = if hi > lo && n > 1 {
        (0..n)
            .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
            .collect()
    } else {
        vec![lo]
    };
    if lo < 25.0 && 25.0 < hi && temps.iter().all(|t| (t - 25.0).abs() > 1e-9) {
        temps.push(25.0);
        temps.sort_by(f64::total_cmp);
    }
    temps
}

/// Analyse `design` at each temperature of [`temperatures`] (worst case
/// and RSS from the core's analysis, Monte Carlo off).
pub fn temperature_sweep(
    need: &Need,
    stock: &Stock,
    design: &Design,
    points: usize,
) -> Result<Sweep> {
    let mut out = Vec::new();
    for t in temperatures(need, points) {
        let mut at = need.clone();
        at.accuracy.temp_min = Celsius(t);
        at.accuracy.temp_max = Celsius(t);
        // A reference's tempco is a box over the whole range: at any one
        // temperature of it the reference may sit anywhere in that box.
        at.accuracy.reference_box_c =
            Some((need.accuracy.temp_max.0 - need.accuracy.temp_min.0).max(0.0));
        // The worst-case basis: a yield basis would start a Monte Carlo run.
        at.accuracy.basis = Basis::WorstCase;
        let model = Model::reported(&at, stock, design)?;
        let analysis = model.report(&at, 0, 1)?;
        out.push(SweepPoint {
            temp_c: t,
            worst_case_pct_fs: analysis.worst_case_pct_fs,
            rss_pct_fs: analysis.rss_pct_fs,
        });
    }
    Ok(Sweep {
        points: out,
        target_pct_fs: need.accuracy.max_error_pct_fs,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> (Need, Stock, Design) {
        let (need, stock) =
            crate::api::load(crate::demo::NEED_TOML.as_bytes(), "demo.toml", &[]).unwrap();
        let design = crate::api::read_design(
            include_bytes!("../../examples/demo-design.json"),
            "demo-design.json",
            &stock,
        )
        .unwrap();
        (need, stock, design)
    }

    #[test]
    fn temperatures_span_the_range_and_hold_25() {
        let (mut need, _, _) = demo();
        need.accuracy.temp_min = Celsius(-40.0);
        need.accuracy.temp_max = Celsius(85.0);
        let t = temperatures(&need, 6);
        assert_eq!(t.first(), Some(&-40.0));
        assert_eq!(t.last(), Some(&85.0));
        assert!(t.contains(&25.0));
        assert!(t.len() <= MAX_POINTS);
        assert!(t.windows(2).all(|w| w[0] < w[1]));
        need.accuracy.temp_max = Celsius(-40.0);
        assert_eq!(temperatures(&need, 6), vec![-40.0]);
    }

    #[test]
    fn the_far_end_of_the_sweep_is_the_analysis_of_the_whole_range() {
        let (need, stock, design) = demo();
        let sweep = temperature_sweep(&need, &stock, &design, 5).unwrap();
        let (_, whole) = crate::analysis::analyze(&need, &stock, &design, 0, 1).unwrap();
        // The whole range counts drift to its farther end from 25 degC, so
        // the largest worst case of the sweep is close to the whole
        // range's (the corner check of the whole range also sees the
        // other end of the range, a difference of a few parts per million
        // here).
        let largest = sweep
            .points
            .iter()
            .map(|p| p.worst_case_pct_fs)
            .fold(f64::MIN, f64::max);
        assert!(
            (largest - whole.worst_case_pct_fs).abs() <= 1e-4 * whole.worst_case_pct_fs,
            "{largest} against {}, {sweep:?}",
            whole.worst_case_pct_fs
        );
        // Drift grows away from 25 degC: the point at 25 degC is the least.
        let at25 = sweep.points.iter().find(|p| p.temp_c == 25.0).unwrap();
        assert!(sweep
            .points
            .iter()
            .all(|p| p.worst_case_pct_fs >= at25.worst_case_pct_fs - 1e-12));
        assert!(largest > at25.worst_case_pct_fs);
    }
}
