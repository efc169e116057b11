//! Corners: the full netlist solved with every parameter at a chosen point
//! of its range, and the worst-case corner searched on the full netlist.
//!
//! The search solves the corner the linear model says is worst and its
//! mirror, and climbs from the worse of the two. At a corner the exact
//! calibrated error and its
//! gradient with respect to every deviation come from one factorisation
//! per board state (in service, and as calibrated) and one adjoint solve;
//! every deviation is then put on the side its exact gradient says adds
//! to the error, and the new corner is kept while the error grows. This
//! catches the cross terms a first-order sign misses (a divider tolerance
//! whose own effect a trim removes, against the supply that moves after
//! the trim).

use super::contributor::Contributor;
use super::extremes::sensitivity_with;
use super::params::{Parameter, Target};
use super::Model;
use crate::error::{Error, Result};
use crate::mna::{element_value, set_element_value, Solver};
use crate::need::Calibration;
use crate::netlist::Netlist;

/// Most gradient steps of the corner search (each step costs two
/// factorisations; the search stops as soon as a step does not raise the
/// error). One step is what the search's time budget allows per verified
/// design; the property test in `tests/sound_verdicts.rs` holds with it.
const CLIMB_STEPS: usize = 1;

/// A working copy of the netlist and its solver, made once per corner
/// search and reset from the nominal values at each corner (a fresh copy
/// per corner costs more than the solve).
struct Scratch {
    netlist: Netlist,
    solver: Solver,
}

/// The board solved at one corner: the reading at both span ends and,
/// when asked, its gradient with respect to every deviation (in units of
/// its range), per end.
struct State {
    reading: [f64; 2],
    d_initial: [Vec<f64>; 2],
    d_drift: [Vec<f64>; 2],
}

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
        let mut scratch = self.scratch();
        self.exact_error_in(&mut scratch, initial, drift)
    }

    /// [`Model::exact_error`] on a working copy made already.
    fn exact_error_in(
        &self,
        scratch: &mut Scratch,
        initial: &[f64],
        drift: &[f64],
    ) -> Result<[f64; 2]> {
        let in_service = self
            .state_at(scratch, initial, drift, true, [false; 2])?
            .reading;
        self.calibration.apply_exact(self.ideal, in_service, || {
            Ok(self
                .state_at(scratch, initial, drift, false, [false; 2])?
                .reading)
        })
    }

    /// A working copy of the nominal netlist with its solver.
    fn scratch(&self) -> Scratch {
        let netlist = self.built.netlist.clone();
        let solver = Solver::new(&netlist);
        Scratch { netlist, solver }
    }

    /// The calibrated error at `end` with the parameters at `initial` and
    /// `drift`, and its gradient with respect to each initial and each
    /// drift deviation (the chain rule through [`Calibration::apply_exact`]).
    fn error_and_gradient(
        &self,
        scratch: &mut Scratch,
        initial: &[f64],
        drift: &[f64],
        end: usize,
    ) -> Result<(f64, Vec<f64>, Vec<f64>)> {
        let mut wanted = [false; 2];
        wanted[end] = true;
        let service = self.state_at(scratch, initial, drift, true, wanted)?;
        let ideal = self.ideal;
        let e_raw = service.reading[end] - ideal[end];
        let mut gx = service.d_initial[end].clone();
        let mut gy = service.d_drift[end].clone();
        let error = match self.calibration {
            Calibration::None => e_raw,
            Calibration::Offset => {
                let trimmed = self.state_at(scratch, initial, drift, false, [true, false])?;
                for (g, d) in gx.iter_mut().zip(&trimmed.d_initial[0]) {
                    *g -= d;
                }
                e_raw - (trimmed.reading[0] - ideal[0])
            }
            Calibration::TwoPoint => {
                let trimmed = self.state_at(scratch, initial, drift, false, [true; 2])?;
                let span_ideal = ideal[1] - ideal[0];
                let span = trimmed.reading[1] - trimmed.reading[0];
                let slope = span_ideal / span;
                let above = service.reading[end] - trimmed.reading[0];
                // e = ideal0 + (r - t0) * D / (t1 - t0) - ideal_end
                let k = above * span_ideal / (span * span);
                for (i, g) in gx.iter_mut().enumerate() {
                    let d0 = trimmed.d_initial[0][i];
                    let d1 = trimmed.d_initial[1][i];
                    *g = (*g - d0) * slope - k * (d1 - d0);
                }
                for g in gy.iter_mut() {
                    *g *= slope;
                }
                ideal[0] + above * slope - ideal[end]
            }
        };
        Ok((error, gx, gy))
    }

    /// The board at `initial` and `drift` (in service with `with_drift`;
    /// without, as calibrated: a deviation that calibration cannot remove,
    /// the supply moving in service, is absent), with the gradient of its
    /// reading at the ends marked in `gradients`.
    fn state_at(
        &self,
        scratch: &mut Scratch,
        initial: &[f64],
        drift: &[f64],
        with_drift: bool,
        gradients: [bool; 2],
    ) -> Result<State> {
        let applies = |parameter: &Parameter| parameter.calibratable || with_drift;
        let deviation = |i: usize, parameter: &Parameter, end: usize| {
            let initial_part = if applies(parameter) {
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
        let Scratch { netlist, solver } = scratch;
        for (i, parameter) in self.params.iter().enumerate() {
            if let Target::Resistors(elements) = &parameter.target {
                let relative = deviation(i, parameter, 0);
                for &e in elements {
                    let ohms = element_value(nominal, e);
                    set_element_value(netlist, e, ohms * (1.0 + relative));
                }
            }
        }
        solver
            .factor(netlist)
            .map_err(|e| Error::design(format!("corner has no DC solution ({})", e.unknown)))?;
        let n = self.params.len();
        let mut d_initial = [Vec::new(), Vec::new()];
        let mut d_drift = [Vec::new(), Vec::new()];
        // The output's adjoint: the same matrix at both ends.
        let adjoint = if gradients[0] || gradients[1] {
            let mut adjoint = vec![0.0; solver.size()];
            if let Some(k) = solver.node_unknown(self.built.out) {
                adjoint[k] = 1.0;
            }
            solver.solve_transposed_in_place(&mut adjoint);
            adjoint
        } else {
            Vec::new()
        };
        let mut result = [0.0; 2];
        let mut unknowns = vec![0.0; solver.size()];
        for (end, reading) in result.iter_mut().enumerate() {
            // Sources back to nominal, then every deviation added.
            let mut supply_deviation = 0.0;
            let mut supply_index = None;
            for (i, parameter) in self.params.iter().enumerate() {
                match &parameter.target {
                    Target::Resistors(_) | Target::AdcScale => {}
                    Target::Source(e) => set_element_value(netlist, *e, element_value(nominal, *e)),
                    Target::BiasCommon(a, b) | Target::BiasOffset(a, b) => {
                        set_element_value(netlist, *a, element_value(nominal, *a));
                        set_element_value(netlist, *b, element_value(nominal, *b));
                    }
                    Target::Sources(list) => {
                        for (e, _) in list {
                            set_element_value(netlist, *e, element_value(nominal, *e));
                        }
                    }
                }
                if parameter.initial_contributor == Contributor::SupplyTolerance {
                    supply_deviation = deviation(i, parameter, end);
                    supply_index = Some(i);
                }
            }
            // The sensor at this end before the deviations, which may move
            // it too (a sensor excited from the supply).
            set_element_value(netlist, self.built.vsense, self.signal[end]);
            for (i, parameter) in self.params.iter().enumerate() {
                let delta = deviation(i, parameter, end);
                let mut add = |e: usize, delta: f64| {
                    let value = element_value(netlist, e);
                    set_element_value(netlist, e, value + delta);
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
                    Target::Sources(list) => {
                        for (e, w) in list {
                            add(*e, w[end] * delta);
                        }
                    }
                }
            }
            solver.rhs(netlist, &mut unknowns);
            solver.solve_in_place(&mut unknowns);
            let mut output = solver.voltage(&unknowns, self.built.out);
            // d(reading)/d(output), and d(reading)/d(supply deviation)
            // beyond what passes through the output.
            let (mut scale, mut supply_term) = (1.0, 0.0);
            if self.ratiometric {
                // The ADC window scales with the supply: refer the reading
                // back to the nominal window.
                let low = self.adc_low;
                let supply = self.supply_nominal + supply_deviation;
                scale = self.supply_nominal / supply;
                supply_term = -(output - low) * self.supply_nominal / (supply * supply);
                output = low + (output - low) * scale;
            }
            *reading = output;
            if gradients[end] {
                let voltage = |node| solver.voltage(&unknowns, node);
                let mut gx = vec![0.0; n];
                let mut gy = vec![0.0; n];
                for (i, parameter) in self.params.iter().enumerate() {
                    let mut g = scale
                        * sensitivity_with(
                            netlist,
                            solver,
                            &adjoint,
                            &parameter.target,
                            &voltage,
                            Some(nominal),
                            end,
                        );
                    if supply_index == Some(i) {
                        g += supply_term;
                    }
                    if applies(parameter) {
                        gx[i] = g * parameter.initial[end];
                    }
                    if with_drift {
                        gy[i] = g * parameter.drift;
                    }
                }
                d_initial[end] = gx;
                d_drift[end] = gy;
            }
        }
        Ok(State {
            reading: result,
            d_initial,
            d_drift,
        })
    }

    /// The worst corner found at `end`, solved exactly: error in volts
    /// (noise peak and the droop at the signal bandwidth added). The first-order corner and its mirror are
    /// solved; from the worse of the two, every deviation goes to the side
    /// its exact gradient at the current corner says adds to the error; a
    /// step is kept while the error grows (at most [`CLIMB_STEPS`] steps).
    pub(crate) fn corner_check(&self, end: usize) -> Result<f64> {
        let side = |v: f64, sign: f64| {
            let s = signum0(v);
            sign * if s == 0.0 { 1.0 } else { s }
        };
        let mut scratch = self.scratch();
        let mut starts = Vec::with_capacity(2);
        for sign in [1.0, -1.0] {
            let x: Vec<f64> = self
                .params
                .iter()
                .map(|p| side(p.initial_error(self.calibration, end), sign))
                .collect();
            let y: Vec<f64> = self
                .params
                .iter()
                .map(|p| side(p.drift_error(end), sign))
                .collect();
            let error = self.exact_error_in(&mut scratch, &x, &y)?[end].abs();
            starts.push((error, x, y));
        }
        let first_worse = starts[0].0 >= starts[1].0;
        let (_, x, y) = starts.swap_remove(if first_worse { 0 } else { 1 });
        let start = self.error_and_gradient(&mut scratch, &x, &y, end)?;
        let worst = self.climb(&mut scratch, x, y, start, end)?;
        Ok(worst + self.noise_peak + self.droop)
    }

    /// The greedy climb from one corner (see [`Model::corner_check`]):
    /// the largest exact error reached, volts.
    fn climb(
        &self,
        scratch: &mut Scratch,
        mut x: Vec<f64>,
        mut y: Vec<f64>,
        start: (f64, Vec<f64>, Vec<f64>),
        end: usize,
    ) -> Result<f64> {
        let (mut error, mut gx, mut gy) = start;
        for _ in 0..CLIMB_STEPS {
            let toward = if error < 0.0 { -1.0 } else { 1.0 };
            let step = |point: &[f64], gradient: &[f64]| -> Vec<f64> {
                point
                    .iter()
                    .zip(gradient)
                    .map(|(&p, &g)| {
                        let s = signum0(g * toward);
                        if s == 0.0 {
                            p
                        } else {
                            s
                        }
                    })
                    .collect()
            };
            let (nx, ny) = (step(&x, &gx), step(&y, &gy));
            if nx == x && ny == y {
                break;
            }
            let (e, ngx, ngy) = self.error_and_gradient(scratch, &nx, &ny, end)?;
            if e.abs() <= error.abs() {
                break;
            }
            (x, y, error, gx, gy) = (nx, ny, e, ngx, ngy);
        }
        Ok(error.abs())
    }
}
