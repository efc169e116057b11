//! Corners: the full netlist solved with every parameter at a chosen point
//! of its range, and the worst-case corner the linear model predicts,
//! solved exactly to confirm the first-order worst case.

use super::contributor::Contributor;
use super::params::{Parameter, Target};
use super::Model;
use crate::error::{Error, Result};
use crate::mna::{element_value, set_element_value, Solver};

/// Sign with zero kept as zero.
#[inline]
fn signum0(v: f64) -> f64 {
    if v > 0.0 {
        1.0
    } else if v < 0.0 {
        -1.0
    } else {
        0.0
    }
}

impl Model {
    /// Exact calibrated error (volts, both ends) with each parameter at the
    /// given point in its range (`initial` and `drift`, each in -1..1, in
    /// the order of the model's parameters); for tests of the worst-case
    /// claim and of the Monte Carlo spread.
    pub fn error_at(&self, initial: &[f64], drift: &[f64]) -> Result<[f64; 2]> {
        if initial.len() != self.params.len() || drift.len() != self.params.len() {
            return Err(Error::design("wrong number of parameter deviations"));
        }
        self.exact_error(initial, drift)
    }

    /// Solve the full netlist with every parameter at `initial` and
    /// `drift` (each in units of its range), and return the calibrated
    /// error at each end in volts.
    pub(crate) fn exact_error(&self, initial: &[f64], drift: &[f64]) -> Result<[f64; 2]> {
        let in_service = self.outputs_at(initial, drift, true)?;
        self.calibration.apply_exact(self.ideal, in_service, || {
            self.outputs_at(initial, drift, false)
        })
    }

    /// The output at both span ends with the parameters at `initial` (and
    /// at `drift` when `with_drift`: in service; without, the board as
    /// calibrated, where a deviation that calibration cannot remove, the
    /// supply moving in service, is absent).
    fn outputs_at(&self, initial: &[f64], drift: &[f64], with_drift: bool) -> Result<[f64; 2]> {
        let deviation = |i: usize, parameter: &Parameter, end: usize| {
            let initial_part = if parameter.calibratable || with_drift {
                initial[i] * parameter.initial[end]
            } else {
                0.0
            };
            initial_part
                + if with_drift {
                    drift[i] * parameter.drift
                } else {
                    0.0
                }
        };
        // Resistors set the matrix (the same at both ends); sources set the
        // right-hand side, end by end.
        let nominal = &self.built.netlist;
        let mut netlist = nominal.clone();
        for (i, parameter) in self.params.iter().enumerate() {
            if let Target::Resistors(elements) = &parameter.target {
                let relative = deviation(i, parameter, 0);
                for &e in elements {
                    let ohms = element_value(&netlist, e);
                    set_element_value(&mut netlist, e, ohms * (1.0 + relative));
                }
            }
        }
        let mut solver = Solver::new(&netlist);
        solver
            .factor(&netlist)
            .map_err(|e| Error::design(format!("corner has no DC solution ({})", e.unknown)))?;
        let mut result = [0.0; 2];
        let mut unknowns = vec![0.0; solver.size()];
        for (end, reading) in result.iter_mut().enumerate() {
            // Sources back to nominal, then every deviation added.
            let mut supply_deviation = 0.0;
            for (i, parameter) in self.params.iter().enumerate() {
                match &parameter.target {
                    Target::Resistors(_) | Target::AdcScale => {}
                    Target::Source(e) => {
                        set_element_value(&mut netlist, *e, element_value(nominal, *e))
                    }
                    Target::BiasCommon(a, b) | Target::BiasOffset(a, b) => {
                        set_element_value(&mut netlist, *a, element_value(nominal, *a));
                        set_element_value(&mut netlist, *b, element_value(nominal, *b));
                    }
                }
                if parameter.initial_contributor == Contributor::SupplyTolerance {
                    supply_deviation = deviation(i, parameter, end);
                }
            }
            for (i, parameter) in self.params.iter().enumerate() {
                let delta = deviation(i, parameter, end);
                let mut add = |e: usize, delta: f64| {
                    let value = element_value(&netlist, e);
                    set_element_value(&mut netlist, e, value + delta);
                };
                match &parameter.target {
                    Target::Resistors(_) | Target::AdcScale => {}
                    Target::Source(e) => add(*e, delta),
                    Target::BiasCommon(a, b) => {
                        add(*a, delta);
                        add(*b, delta);
                    }
                    Target::BiasOffset(a, b) => {
                        add(*a, 0.5 * delta);
                        add(*b, -0.5 * delta);
                    }
                }
            }
            set_element_value(&mut netlist, self.built.vsense, self.signal[end]);
            solver.rhs(&netlist, &mut unknowns);
            solver.solve_in_place(&mut unknowns);
            let mut output = solver.voltage(&unknowns, self.built.out);
            if self.ratiometric {
                // The ADC window scales with the supply: refer the reading
                // back to the nominal window.
                let low = self.adc_low;
                output = low
                    + (output - low) * self.supply_nominal
                        / (self.supply_nominal + supply_deviation);
            }
            *reading = output;
        }
        Ok(result)
    }

    /// The corner that the linear model says is worst at `end`, solved
    /// exactly: error in volts (noise peak added).
    pub(crate) fn corner_check(&self, end: usize) -> Result<f64> {
        // Each contribution is linear in its deviation, so x = +/-sign(u)
        // puts every one the same way; both mirror corners are solved, as
        // second-order terms may favour either.
        let mut worst = 0.0f64;
        for sign in [1.0, -1.0] {
            let initial: Vec<f64> = self
                .params
                .iter()
                .map(|parameter| sign * signum0(parameter.initial_error(self.calibration, end)))
                .collect();
            let drift: Vec<f64> = self
                .params
                .iter()
                .map(|parameter| sign * signum0(parameter.drift_error(end)))
                .collect();
            worst = worst.max(self.exact_error(&initial, &drift)?[end].abs());
        }
        Ok(worst + self.noise_peak)
    }
}
