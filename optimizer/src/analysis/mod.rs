//! The error budget of one design: the one analysis every number a user
//! sees comes from.
//!
//! The netlist of the design is solved once at each end of the sensor
//! span; the adjoint solution gives the sensitivity of the output to every
//! part at once. Each imperfection (resistor tolerance and TCR, op-amp
//! offset, drift, bias and offset current, CMRR, reference accuracy and
//! tempco, supply tolerance, in-amp gain error ...) becomes a *parameter*
//! with an initial range and a drift range and its output-referred effect
//! at both ends. From that linear model come the worst-case and RSS totals
//! and the Monte Carlo yield; the worst case is then confirmed by a search
//! for the worst corner on the full netlist. Finite open-loop gain and the
//! rounding of values are exact systematic terms.
//!
//! The pipeline, one module a step ([`Model::new`] runs it):
//!
//! 1. `mna::DcSolution`: forward solution at both span ends and the
//!    output adjoint;
//! 2. `params`: every imperfection as a parameter with its sensitivity;
//! 3. `systematic`: rounding and finite open-loop gain;
//! 4. `noise`: output noise and the gain droop at the signal bandwidth
//!    (from the AC response of the chain as built, or the bounds the
//!    filter rules allow for a search candidate);
//! 5. `ranges`: each stage's gain, offset and output range;
//! 6. `feasibility`: the checks ([`Check`]), with every node taken at
//!    its raw extremes (`extremes`: every part at its limits, untrimmed);
//!
//! and on the model: `budget` (lines and totals), `corners` (the worst
//! corner found on the full netlist), `monte_carlo` (yield), with `accuracy` holding how
//! calibration and the basis combine numbers. Budget lines and their
//! formulas are described in `docs/error-budget.md`.

mod accuracy;
mod budget;
mod contributor;
mod corners;
mod explain;
mod extremes;
pub(crate) mod feasibility;
mod monte_carlo;
mod noise;
mod params;
mod ranges;
mod systematic;

pub use accuracy::{yield_k_sigma, Spread};
pub use budget::{BudgetLine, RandomSplit, StageUnitSums};
pub use contributor::Contributor;
/// The former name of [`Contributor`], kept for existing callers.
pub use contributor::Contributor as Line;
pub use explain::{ExplainInput, LineExplain};
pub use feasibility::{part_count, Check, Finding, RawFinding};
pub use monte_carlo::{Histogram, YieldResult};
pub use noise::NoiseSummary;
pub use ranges::StageReport;

use crate::design::Design;
use crate::error::{Error, Result};
use crate::mna::{DcFailure, DcSolution};
use crate::montecarlo::YIELD_BASIS_BUILDS;
use crate::need::{Basis, Calibration, Need};
use crate::stock::Stock;
use crate::topology::{build, Built};
use params::Parameter;
use serde::Serialize;
use systematic::SystematicTerm;

/// Realised transfer of the design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transfer {
    /// Realised gain K (nominal values, op-amps at minimum open-loop gain).
    pub gain: f64,
    /// Realised offset B in volts.
    pub offset_v: f64,
    /// Ideal K.
    pub ideal_gain: f64,
    /// Ideal B.
    pub ideal_offset_v: f64,
    /// Output at the low and high end of the sensor span.
    pub output_at_ends_v: [f64; 2],
    /// Ideal output at the ends.
    pub ideal_at_ends_v: [f64; 2],
}

/// The full analysis of one design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Analysis {
    /// Transfer.
    pub transfer: Transfer,
    /// Stages.
    pub stages: Vec<StageReport>,
    /// Budget lines (the ones present, report order).
    pub budget: Vec<BudgetLine>,
    /// Worst-case total, % FS.
    pub worst_case_pct_fs: f64,
    /// First-order worst-case sum before the corner check, % FS.
    pub first_order_pct_fs: f64,
    /// Error of the full netlist solved at the extreme corner, % FS.
    pub corner_check_pct_fs: f64,
    /// RSS total, % FS.
    pub rss_pct_fs: f64,
    /// Total on the need's basis, % FS (yield basis: the k-sigma RSS
    /// screen; see `yield_result` for the confirmation).
    pub basis_pct_fs: f64,
    /// Quantisation, +/-0.5 LSB in % FS (reported apart, not in totals).
    pub quantisation_pct_fs: f64,
    /// The ADC full-scale span the percentages refer to, volts.
    pub full_scale_v: f64,
    /// Noise.
    pub noise: NoiseSummary,
    /// Monte Carlo, where computed.
    pub yield_result: Option<YieldResult>,
    /// Feasibility findings.
    pub findings: Vec<Finding>,
    /// All findings pass.
    pub feasible: bool,
    /// Feasible and within the target on the need's basis.
    pub meets_target: bool,
    /// End of the span (0 low, 1 high) where the worst case binds.
    pub binding_end: usize,
    /// How far a 1 % change of the sensor's own resistance moves the
    /// output, % FS, the larger of the span ends, before any calibration
    /// (`None` without a sensor resistance): what the design leans on the
    /// resistance the need states.
    pub sensor_resistance_pct_fs_per_pct: Option<f64>,
}

/// Whether a built design gets a filter pair when reported, given its DC
/// solution (see [`Model::candidate`]).
pub(crate) type GetsPair<'a> = dyn Fn(&Built, &DcSolution) -> bool + 'a;

/// The linear error model of a design (kept for fast re-use: Monte Carlo,
/// the optimiser's verification).
#[derive(Debug, Clone)]
pub struct Model {
    built: Built,
    /// ADC full-scale span, volts.
    full_scale: f64,
    params: Vec<Parameter>,
    /// Systematic lines, calibrated.
    systematic: Vec<SystematicTerm>,
    /// Noise peak at the output, volts.
    noise_peak: f64,
    noise: NoiseSummary,
    /// Gain droop at `accuracy.bandwidth_hz`, as an error at the top of the
    /// output span, volts (non-negative; a bound for a search candidate).
    droop: f64,
    /// Output with nominal values, each end.
    nominal_output: [f64; 2],
    /// Output sensitivity to a relative change of the sensor's own
    /// resistance (all legs together), volts per unit, each end; `None`
    /// without one.
    source_sensitivity: Option<[f64; 2]>,
    /// Half-width of the output's raw range (every part at its limits,
    /// untrimmed, noise peak included), each end, volts.
    raw_output_half: [f64; 2],
    /// Ideal output at each end.
    ideal: [f64; 2],
    /// Sensor signal at each end.
    signal: [f64; 2],
    calibration: Calibration,
    /// Drift at the temperature end with the smaller excursion, as a
    /// signed fraction of the drift at the larger one (for yield).
    other_end_drift_ratio: f64,
    ratiometric: bool,
    supply_nominal: f64,
    adc_low: f64,
    stages: Vec<StageReport>,
    findings: Vec<RawFinding>,
}

/// The analysis's error for a failed DC solution.
fn dc_error(failure: DcFailure) -> Error {
    match failure {
        DcFailure::Singular(s) => {
            Error::design(format!("the circuit has no DC solution ({})", s.unknown))
        }
        DcFailure::GroundedOutput => Error::design("output is ground"),
    }
}

impl Model {
    /// Build the linear model of a design as the search sees it: without
    /// the filter pair at the ADC input, whose noise and droop are taken
    /// at the bounds the filter rules allow (`noise.rs`). Solve it, then
    /// collect its parameters, systematic terms, noise, stage ranges and
    /// findings.
    ///
    /// The noise bound counts on the pair's pole only when the design gets
    /// a pair once reported ([`crate::filter::gets_pair`], decided here);
    /// the search, which knows its pairs, calls [`Model::candidate`].
    pub fn new(need: &Need, stock: &Stock, design: &Design) -> Result<Model> {
        let gets_pair =
            |built: &Built, dc: &DcSolution| crate::filter::gets_pair(need, stock, built, dc);
        Model::candidate(need, stock, design, &gets_pair)
    }

    /// [`Model::new`] with whether the design gets a pair decided by
    /// `gets_pair` (given the built design and its DC solution).
    pub(crate) fn candidate(
        need: &Need,
        stock: &Stock,
        design: &Design,
        gets_pair: &GetsPair<'_>,
    ) -> Result<Model> {
        let built = build(need, stock, design)?;
        Model::of_built(need, stock, design, built, Some(gets_pair))
    }

    /// Build the linear model of a design as it is reported: with the
    /// filter pair at the ADC input chosen for it (`crate::filter`), or
    /// with none where no pair fits, and its noise and droop from that
    /// chain's own response.
    pub fn reported(need: &Need, stock: &Stock, design: &Design) -> Result<Model> {
        let built = build(need, stock, design)?;
        Model::attached(need, stock, design, &built, stock)
    }

    /// The model of a search candidate's built design (without its pair)
    /// as the report analyses it: with the filter pair the report attaches
    /// from `pair_stock` (the user's stock; [`crate::filter::attach`]).
    pub(crate) fn attached(
        need: &Need,
        stock: &Stock,
        design: &Design,
        built: &Built,
        pair_stock: &Stock,
    ) -> Result<Model> {
        let (filtered, _) = crate::filter::attach(need, pair_stock, built);
        Model::of_built(need, stock, design, filtered, None)
    }

    /// The model of a built design: a search candidate when `gets_pair`
    /// is given (the noise and droop at bounds), else as built.
    fn of_built(
        need: &Need,
        stock: &Stock,
        design: &Design,
        built: Built,
        gets_pair: Option<&GetsPair<'_>>,
    ) -> Result<Model> {
        let mut netlist = built.netlist.clone();
        let signal = [need.sensor.signal_low.0, need.sensor.signal_high.0];
        let ideal = need.ideal_outputs();
        let dc =
            DcSolution::solve(&mut netlist, built.vsense, signal, built.out).map_err(dc_error)?;
        let response = match gets_pair {
            Some(f) => noise::Response::Bounded {
                pair: f(&built, &dc),
            },
            None => noise::Response::AsBuilt,
        };
        let params = params::collect(need, stock, &built, &netlist, &dc);
        let source_sensitivity = (!built.source_resistors.is_empty()).then(|| {
            built.source_resistors.iter().fold([0.0; 2], |sum, &e| {
                let s = dc.resistor_sensitivity(&netlist, e);
                [sum[0] + s[0], sum[1] + s[1]]
            })
        });
        let systematic = systematic::terms(need, &built, &netlist, &dc, ideal, signal)?;
        let dynamic = noise::dynamic(need, stock, &built, &netlist, &dc, response);
        let noise = dynamic.noise;
        let stages = ranges::stage_reports(design, &built, &dc);
        let mut findings = feasibility::findings(
            need,
            stock,
            &built,
            &netlist,
            &dc,
            &params,
            response != noise::Response::AsBuilt,
        );
        let pair_coming = response == noise::Response::Bounded { pair: true };
        findings.extend(feasibility::alias_finding(need, stock, &built, pair_coming));
        let raw = extremes::output_half_range(&params);
        let raw_output_half = [raw[0] + noise.peak_v(), raw[1] + noise.peak_v()];
        Ok(Model {
            full_scale: need.full_scale(),
            params,
            systematic,
            noise_peak: noise.peak_v(),
            noise,
            droop: dynamic.droop_v,
            nominal_output: dc.output(),
            source_sensitivity,
            raw_output_half,
            ideal,
            signal,
            calibration: need.accuracy.calibration,
            other_end_drift_ratio: monte_carlo::other_end_drift_ratio(need),
            ratiometric: need.supply.ratiometric,
            supply_nominal: need.supply.positive.0,
            adc_low: need.adc.low.0,
            stages,
            findings,
            built,
        })
    }

    /// The netlist and part map.
    pub fn built(&self) -> &Built {
        &self.built
    }

    /// Feasibility findings, with their text.
    pub fn findings(&self) -> Vec<Finding> {
        self.findings.iter().map(RawFinding::finding).collect()
    }

    /// Whether every feasibility check of the model passes (the ADC-window
    /// check needs the worst case and is made in [`Model::report`]).
    pub fn feasible(&self) -> bool {
        self.findings.iter().all(|f| f.ok())
    }

    /// Number of parameters in the linear model.
    pub fn parameter_count(&self) -> usize {
        self.params.len()
    }

    /// The noise peak at the output, volts.
    pub fn noise_peak_v(&self) -> f64 {
        self.noise_peak
    }

    /// The gain droop at `accuracy.bandwidth_hz` as an error at the top of
    /// the output span, volts.
    pub fn droop_v(&self) -> f64 {
        self.droop
    }

    /// Full report on a need's basis. `mc_builds` sets the Monte Carlo size
    /// for the yield basis (and is run for every basis when non-zero).
    pub fn report(&self, need: &Need, mc_builds: u64, seed: u64) -> Result<Analysis> {
        self.report_with(need, mc_builds, seed, true)
    }

    /// The same report with every budget line's explanation left
    /// unwritten (empty): every number is the same, only the words that
    /// show how each line is worked out are missing. For the search, which
    /// ranks many designs and reports few; a design it reports is analysed
    /// again in full (`api`), explanations included.
    pub(crate) fn report_unexplained(
        &self,
        need: &Need,
        mc_builds: u64,
        seed: u64,
    ) -> Result<Analysis> {
        self.report_with(need, mc_builds, seed, false)
    }

    fn report_with(
        &self,
        need: &Need,
        mc_builds: u64,
        seed: u64,
        explained: bool,
    ) -> Result<Analysis> {
        let pct = 100.0 / self.full_scale;
        let worst_ends = self.worst_at_ends();
        let first_order = worst_ends[0].max(worst_ends[1]);
        let binding_end = if worst_ends[1] > worst_ends[0] { 1 } else { 0 };
        let corner = self.corner_check(0)?.max(self.corner_check(1)?);
        let worst = first_order.max(corner);
        let rss_ends = self.rss_at_ends();
        let rss = rss_ends[0].max(rss_ends[1]);
        let target_v = need.accuracy.max_error_pct_fs / pct;
        let yield_result = (mc_builds > 0).then(|| self.monte_carlo(mc_builds, seed, target_v));
        let basis_pct_fs = match need.accuracy.basis {
            Basis::WorstCase => worst * pct,
            Basis::Rss => rss * pct,
            // The k-sigma screen: the larger systematic error of the two
            // ends plus the larger random part.
            Basis::Yield => {
                let systematic = self.systematic_at_ends();
                let random = self.random_at_ends(Basis::Yield, need.accuracy.yield_pct);
                (systematic[0].max(systematic[1]) + random[0].max(random[1])) * pct
            }
        };
        let within = match (need.accuracy.basis, &yield_result) {
            (Basis::Yield, Some(y)) => y.yield_pct >= need.accuracy.yield_pct,
            _ => basis_pct_fs <= need.accuracy.max_error_pct_fs,
        };
        let gain =
            (self.nominal_output[1] - self.nominal_output[0]) / (self.signal[1] - self.signal[0]);
        // The droop at the signal bandwidth shrinks a signal toward its
        // mean; it never takes the output out of the ADC window, so the
        // window is widened by the worst case without it.
        let window = feasibility::adc_window(
            need,
            self.nominal_output,
            worst - self.droop,
            self.raw_output_half,
        );
        let feasible = self.feasible() && window.ok();
        let mut findings = self.findings();
        findings.push(window.finding());
        let (k, b) = need.ideal_transfer();
        Ok(Analysis {
            transfer: Transfer {
                gain,
                offset_v: self.nominal_output[0] - gain * self.signal[0],
                ideal_gain: k,
                ideal_offset_v: b,
                output_at_ends_v: self.nominal_output,
                ideal_at_ends_v: self.ideal,
            },
            stages: self.stages.clone(),
            budget: self.budget_lines(need, binding_end, explained),
            worst_case_pct_fs: worst * pct,
            first_order_pct_fs: first_order * pct,
            corner_check_pct_fs: corner * pct,
            rss_pct_fs: rss * pct,
            basis_pct_fs,
            quantisation_pct_fs: 0.5 * need.lsb() * pct,
            full_scale_v: self.full_scale,
            noise: self.noise.clone(),
            yield_result,
            findings,
            feasible,
            meets_target: feasible && within,
            binding_end,
            sensor_resistance_pct_fs_per_pct: self
                .source_sensitivity
                .map(|s| s[0].abs().max(s[1].abs()) * 0.01 * pct),
        })
    }
}

/// Analyse a design against a need as it is reported (with its filter
/// pair, [`Model::reported`]): the budget on the need's basis, with a
/// Monte Carlo run of `mc_builds` (seeded) when the basis is `yield` or
/// `mc_builds` is non-zero (a yield basis with `mc_builds` zero runs
/// [`YIELD_BASIS_BUILDS`]).
pub fn analyze(
    need: &Need,
    stock: &Stock,
    design: &Design,
    mc_builds: u64,
    seed: u64,
) -> Result<(Model, Analysis)> {
    let model = Model::reported(need, stock, design)?;
    let builds = if need.accuracy.basis == Basis::Yield && mc_builds == 0 {
        YIELD_BASIS_BUILDS
    } else {
        mc_builds
    };
    let report = model.report(need, builds, seed)?;
    Ok((model, report))
}
