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
    /// given point in its range (`x` initial, `y` drift, each in -1..1);
    /// for tests of the worst-case claim.
    pub fn error_at(&self, x: &[f64], y: &[f64]) -> Result<[f64; 2]> {
        if x.len() != self.params.len() || y.len() != self.params.len() {
            return Err(Error::design("wrong number of parameter deviations"));
        }
        self.exact_error(x, y)
    }

    /// Solve the full netlist with every parameter at `x` (initial, in
    /// units of its range) and `y` (drift), and return the calibrated
    /// error at each end in volts.
    pub(crate) fn exact_error(&self, x: &[f64], y: &[f64]) -> Result<[f64; 2]> {
        let in_service = self.outputs_at(x, y, true)?;
        self.calibration
            .apply_exact(self.ideal, in_service, || self.outputs_at(x, y, false))
    }

    /// The output at both span ends with the parameters at `x` (and at `y`
    /// when `with_drift`: in service; without, the board as calibrated,
    /// where a deviation that calibration cannot remove, the supply moving
    /// in service, is absent).
    fn outputs_at(&self, x: &[f64], y: &[f64], with_drift: bool) -> Result<[f64; 2]> {
        let deviation = |i: usize, p: &Parameter, end: usize| {
            let initial = if p.calibratable || with_drift {
                x[i] * p.initial[end]
            } else {
                0.0
            };
            initial + if with_drift { y[i] * p.drift } else { 0.0 }
        };
        // Resistors set the matrix (the same at both ends); sources set the
        // right-hand side, end by end.
        let nominal = &self.built.netlist;
        let mut netlist = nominal.clone();
        for (i, p) in self.params.iter().enumerate() {
            if let Target::Resistors(elements) = &p.target {
                let d = deviation(i, p, 0);
                for &e in elements {
                    let v = element_value(&netlist, e);
                    set_element_value(&mut netlist, e, v * (1.0 + d));
                }
            }
        }
        let mut solver = Solver::new(&netlist);
        solver
            .factor(&netlist)
            .map_err(|e| Error::design(format!("corner has no DC solution ({})", e.unknown)))?;
        let mut result = [0.0; 2];
        let mut unknowns = vec![0.0; solver.size()];
        for (end, r) in result.iter_mut().enumerate() {
            // Sources back to nominal, then every deviation added.
            let mut supply_deviation = 0.0;
            for (i, p) in self.params.iter().enumerate() {
                match &p.target {
                    Target::Resistors(_) | Target::AdcScale => {}
                    Target::Source(e) => {
                        set_element_value(&mut netlist, *e, element_value(nominal, *e))
                    }
                    Target::BiasCommon(a, b) | Target::BiasOffset(a, b) => {
                        set_element_value(&mut netlist, *a, element_value(nominal, *a));
                        set_element_value(&mut netlist, *b, element_value(nominal, *b));
                    }
                }
                if p.initial_contributor == Contributor::SupplyTolerance {
                    supply_deviation = deviation(i, p, end);
                }
            }
            for (i, p) in self.params.iter().enumerate() {
                let d = deviation(i, p, end);
                let mut add = |e: usize, delta: f64| {
                    let v = element_value(&netlist, e);
                    set_element_value(&mut netlist, e, v + delta);
                };
                match &p.target {
                    Target::Resistors(_) | Target::AdcScale => {}
                    Target::Source(e) => add(*e, d),
                    Target::BiasCommon(a, b) => {
                        add(*a, d);
                        add(*b, d);
                    }
                    Target::BiasOffset(a, b) => {
                        add(*a, 0.5 * d);
                        add(*b, -0.5 * d);
                    }
                }
            }
            set_element_value(&mut netlist, self.built.vsense, self.signal[end]);
            solver.rhs(&netlist, &mut unknowns);
            solver.solve_in_place(&mut unknowns);
            let mut v = solver.voltage(&unknowns, self.built.out);
            if self.ratiometric {
                // The ADC window scales with the supply: refer the reading
                // back to the nominal window.
                let low = self.adc_low;
                v = low
                    + (v - low) * self.supply_nominal / (self.supply_nominal + supply_deviation);
            }
            *r = v;
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
            let x: Vec<f64> = self
                .params
                .iter()
                .map(|p| sign * signum0(p.initial_error(self.calibration, end)))
                .collect();
            let y: Vec<f64> = self
                .params
                .iter()
                .map(|p| sign * signum0(p.drift_error(end)))
                .collect();
            worst = worst.max(self.exact_error(&x, &y)?[end].abs());
        }
        Ok(worst + self.noise_peak)
    }
}
