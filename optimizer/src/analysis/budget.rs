//! The budget of the linear model: the lines a report shows, the
//! worst-case, RSS and sigma totals at each end of the span, and the split
//! of the random part the search rescales by resistor grade. Totals on a
//! basis come from [`Basis::random_total`] over a [`Spread`].

use super::accuracy::Spread;
use super::contributor::Contributor;
use super::explain::LineExplain;
use super::params::Target;
use super::Model;
use crate::need::{Basis, Need};
use serde::Serialize;

/// One line of the reported budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetLine {
    /// Which contributor (`line` in the JSON).
    pub line: Contributor,
    /// Its label (`source` in JSON).
    pub source: String,
    /// Contribution at the binding end, % of ADC full scale.
    pub pct_fs: f64,
    /// The same in LSB.
    pub lsb: f64,
    /// The same in the sensor's unit, where the need gives one.
    pub units: Option<f64>,
    /// Contribution at the low and high end of the span, % FS.
    pub at_ends_pct_fs: [f64; 2],
    /// Systematic or random.
    pub systematic: bool,
    /// How the line is worked out at the binding end: a formula over
    /// named inputs whose value is `pct_fs`.
    pub explain: LineExplain,
}

/// Per-unit resistor sums of one stage (see [`Model::random_split`]).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StageUnitSums {
    /// Sum of |contribution| per unit tolerance, each end.
    pub tolerance_worst: [f64; 2],
    /// Sum of squared contributions per unit tolerance squared.
    pub tolerance_squares: [f64; 2],
    /// Sum of |contribution| per unit TCR.
    pub tcr_worst: [f64; 2],
    /// Sum of squared contributions per unit TCR squared.
    pub tcr_squares: [f64; 2],
}

/// The random part of a budget split for rescaling by resistor grade.
#[derive(Debug, Clone, PartialEq)]
pub struct RandomSplit {
    /// Resistor sums per stage: index `2 * stage` for the stage's own
    /// network, `2 * stage + 1` for its offset or bias divider.
    pub per_stage: Vec<StageUnitSums>,
    /// Worst-case sum of all non-resistor random terms and the noise peak.
    pub other_worst: [f64; 2],
    /// Sum of squares of the same.
    pub other_squares: [f64; 2],
}

impl Model {
    /// The random spread at `end`: every parameter's initial and drift
    /// limits, and the noise.
    pub(crate) fn spread_at(&self, end: usize) -> Spread {
        let mut spread = Spread {
            noise_rms: self.noise.rms_v,
            noise_peak: self.noise_peak,
            ..Spread::default()
        };
        for parameter in &self.params {
            let initial = parameter.initial_error(self.calibration, end);
            let drift = parameter.drift_error(end);
            spread.limit_sum += initial.abs() + drift.abs();
            spread.limit_squares += initial * initial + drift * drift;
        }
        spread
    }

    /// First-order worst case at each end, volts: systematic plus the
    /// random part on the worst-case basis.
    pub(crate) fn worst_at_ends(&self) -> [f64; 2] {
        self.total_at_ends(Basis::WorstCase)
    }

    /// RSS at each end, volts: systematic part plus root-sum-square of the
    /// rest.
    pub(crate) fn rss_at_ends(&self) -> [f64; 2] {
        self.total_at_ends(Basis::Rss)
    }

    fn total_at_ends(&self, basis: Basis) -> [f64; 2] {
        let systematic = self.systematic_at_ends();
        // The yield percentage only matters to the yield basis.
        [0, 1].map(|end| systematic[end] + basis.random_total(&self.spread_at(end), 0.0))
    }

    /// A lower bound on the first-order total as the design will be
    /// reported on the worst-case or RSS basis, volts, each end: the total
    /// without the noise and the droop. A search candidate takes those two
    /// at bounds its filter pair can only improve on (`noise.rs`), and
    /// neither is negative as reported, while every other line is the
    /// same with the pair in (the pair's resistor carries no DC current
    /// into the ADC input).
    pub(crate) fn floor_at_ends(&self, basis: Basis) -> [f64; 2] {
        let systematic = self.systematic_at_ends();
        [0, 1].map(|end| {
            let spread = Spread {
                noise_rms: 0.0,
                noise_peak: 0.0,
                ..self.spread_at(end)
            };
            systematic[end] - self.droop.max(0.0) + basis.random_total(&spread, 0.0)
        })
    }

    /// Random-part standard deviation at each end, volts, treating every
    /// limit as the edge of a uniform distribution and noise as Gaussian.
    pub(crate) fn sigma_at_ends(&self) -> [f64; 2] {
        [0, 1].map(|end| self.spread_at(end).sigma())
    }

    /// Worst-case, RSS and sigma totals at the ends in % FS (fast; no corner check).
    pub fn quick_totals(&self) -> (f64, f64, f64) {
        let pct = 100.0 / self.full_scale;
        let worst = self.worst_at_ends();
        let rss = self.rss_at_ends();
        let sigma = self.sigma_at_ends();
        (
            worst[0].max(worst[1]) * pct,
            rss[0].max(rss[1]) * pct,
            sigma[0].max(sigma[1]) * pct,
        )
    }

    /// The random part of the total on a basis at each end, volts: what
    /// remains of the budget once the systematic lines are taken out
    /// (worst case: sum of limits plus noise peak; RSS: root-sum-square;
    /// yield: k sigma for the yield plus the noise peak).
    pub fn random_at_ends(&self, basis: Basis, yield_pct: f64) -> [f64; 2] {
        [0, 1].map(|end| basis.random_total(&self.spread_at(end), yield_pct))
    }

    /// Signed error of one systematic line at each end, volts, after
    /// calibration (zero if the design has no such line).
    fn systematic_error(&self, contributor: Contributor) -> [f64; 2] {
        self.systematic
            .iter()
            .find(|term| term.contributor == contributor)
            .map(|term| term.error)
            .unwrap_or([0.0; 2])
    }

    /// Signed finite-gain error at each end, volts, after calibration.
    pub fn open_loop_gain_error(&self) -> [f64; 2] {
        self.systematic_error(Contributor::OpenLoopGain)
    }

    /// Signed rounding error at each end, volts, after calibration.
    pub fn rounding_error(&self) -> [f64; 2] {
        self.systematic_error(Contributor::NominalRounding)
    }

    /// Systematic error at each end (rounding plus finite gain), volts,
    /// after calibration.
    pub fn systematic_at_ends(&self) -> [f64; 2] {
        // The droop at the signal bandwidth is a one-sided loss no trim
        // removes; it counts at its size at both ends.
        let mut total = [self.droop; 2];
        for term in &self.systematic {
            total[0] += term.error[0].abs();
            total[1] += term.error[1].abs();
        }
        total
    }

    /// The budget lines that are present, in report order, with their
    /// value at `binding_end` (and their explanations where `explained`).
    pub(crate) fn budget_lines(
        &self,
        need: &Need,
        binding_end: usize,
        explained: bool,
    ) -> Vec<BudgetLine> {
        let pct = 100.0 / self.full_scale;
        let lsb = need.lsb();
        let volts_per_unit = need.volts_per_unit();
        let mut budget = Vec::new();
        for line in Contributor::ALL {
            let Some(at) = self.line_at_ends(line) else {
                continue;
            };
            let volts = at[binding_end];
            budget.push(BudgetLine {
                line,
                source: line.label().to_string(),
                pct_fs: volts * pct,
                lsb: volts / lsb,
                units: volts_per_unit.map(|per_unit| volts / per_unit.abs()),
                at_ends_pct_fs: [at[0] * pct, at[1] * pct],
                systematic: line.systematic(),
                explain: if explained {
                    self.explain_line(need, line, binding_end)
                } else {
                    LineExplain::unwritten()
                },
            });
        }
        budget
    }

    /// One line's size at each end, volts (sum of the magnitudes of its
    /// terms), or `None` when no term belongs to it.
    fn line_at_ends(&self, line: Contributor) -> Option<[f64; 2]> {
        if line == Contributor::Noise {
            return Some([self.noise_peak; 2]);
        }
        if line == Contributor::Droop {
            return (self.droop > 0.0).then_some([self.droop; 2]);
        }
        let mut at = [0.0f64; 2];
        let mut any = false;
        for (end, size) in at.iter_mut().enumerate() {
            for term in &self.systematic {
                if term.contributor == line {
                    *size += term.error[end].abs();
                    any = true;
                }
            }
            for parameter in &self.params {
                if parameter.initial_contributor == line {
                    *size += parameter.initial_error(self.calibration, end).abs();
                    any = true;
                }
                if parameter.drift_contributor == line && parameter.drift != 0.0 {
                    *size += parameter.drift_error(end).abs();
                    any = true;
                }
            }
        }
        any.then_some(at)
    }

    /// Split of the random part of the budget for the optimiser: for each
    /// stage, the worst-case and squared contributions of its resistors per
    /// unit of tolerance (fraction) and per unit of TCR (1/degC, already
    /// times the largest excursion), and the worst-case and squared sums of
    /// everything that is not a resistor. All at each end, in volts.
    pub fn random_split(&self, stages: usize) -> RandomSplit {
        let mut split = RandomSplit {
            per_stage: vec![StageUnitSums::default(); 2 * stages],
            other_worst: [self.noise_peak; 2],
            other_squares: [self.noise_peak * self.noise_peak; 2],
        };
        // The slot of a placed resistor, with its tolerance and TCR.
        let resistor_slot = |element: usize| {
            self.built
                .resistors
                .iter()
                .find(|placed| placed.element == element)
                // An element of a matched network carries its ratio
                // figures, not a grade the search may rescale.
                .filter(|placed| placed.part.network.is_none())
                .map(|placed| {
                    let divider = placed.role.is_divider();
                    (
                        2 * placed.stage + usize::from(divider),
                        placed.part.tolerance_pct / 100.0,
                        placed.part.tcr_ppm_per_c * 1e-6,
                    )
                })
        };
        for parameter in &self.params {
            let slot = match (&parameter.target, parameter.initial_contributor) {
                (Target::Resistors(elements), Contributor::ResistorTolerance)
                    if elements.len() == 1 =>
                {
                    resistor_slot(elements[0])
                }
                _ => None,
            };
            for end in 0..2 {
                let initial = parameter.initial_error(self.calibration, end);
                let drift = parameter.drift_error(end);
                match slot {
                    Some((slot, tolerance, tcr)) if slot < 2 * stages => {
                        let sums = &mut split.per_stage[slot];
                        if tolerance > 0.0 {
                            sums.tolerance_worst[end] += initial.abs() / tolerance;
                            sums.tolerance_squares[end] += (initial / tolerance).powi(2);
                        }
                        if tcr > 0.0 {
                            sums.tcr_worst[end] += drift.abs() / tcr;
                            sums.tcr_squares[end] += (drift / tcr).powi(2);
                        }
                    }
                    _ => {
                        split.other_worst[end] += initial.abs() + drift.abs();
                        split.other_squares[end] += initial * initial + drift * drift;
                    }
                }
            }
        }
        split
    }
}
