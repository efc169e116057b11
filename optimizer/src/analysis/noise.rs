//! Noise at the output and the gain droop at the signal bandwidth: the
//! two budget lines that depend on the chain's frequency response.
//!
//! The sources are resistor Johnson noise at the hot end of the
//! temperature range (white), op-amp and in-amp voltage noise with its 1/f
//! part, density squared `en^2 (1 + fc/f)` (`fc` the part's
//! `en_corner_hz`), and op-amp current noise with its 1/f part, `in^2 (1 +
//! fc/f)` (`fc` the part's `in_corner_hz`, 0 by default: white); each is
//! referred to the output and summed in power, from the need's lowest noise frequency
//! `f_L` (`accuracy.noise_low_hz`) up. Reference noise is taken as its
//! stated RMS, referred to the output at DC.
//!
//! How far up in frequency each source counts depends on what is known of
//! the response ([`Response`]):
//! - a design analysed **as built** with its filter at the ADC input (a
//!   reported design): each source's output density is integrated over
//!   the real response from the one AC solver ([`crate::mna_ac`]): every
//!   stage's single pole at its GBW behind its output resistance, and the
//!   filter pair, whose series resistor's own noise counts too. One
//!   adjoint solve a frequency gives every source's transfer at once;
//! - a design analysed **as built** without a pair (none fits): the
//!   closed form below with the stage pole only;
//! - a **search candidate** (no pair yet): a bound that can only overstate
//!   the noise of the design once it gets its pair: every source passes
//!   through the last section's closed-loop pole (at most `GBW / NG`, its
//!   noise gain from the DC adjoint; the output resistance only lowers
//!   it) and, when the design will get a pair (the caller says so,
//!   [`Response::Bounded`]), through the filter, whose corner is at most
//!   the highest the filter rules allow
//!   ([`crate::filter::highest_corner_hz`]); a chain of real poles passes
//!   at most what its lowest pole `p` passes, `|H(f)|^2 <= |H(0)|^2 / (1 +
//!   (f/p)^2)`. Over one pole, from `f_L` up (handbook closed forms):
//!   white `en^2 p (pi/2 - atan(f_L/p))` (`pi/2 p` for `f_L` far below
//!   `p`), 1/f `en^2 fc ln(1 + (p/f_L)^2) / 2` (`en^2 fc ln(p/f_L)` for
//!   `f_L` far below `p`); both grow with `p`, so the lower of the two
//!   poles' bounds is a bound. A current-noise source takes the same forms
//!   with its output density at DC and its own corner (`in_corner_hz`).
//!
//! The droop: as built, `1 - |H(f_b)/H(0)|` from the AC solver at
//! `accuracy.bandwidth_hz`; for a search candidate, the droop the filter
//! rules allow the pair (at its tolerance limits) plus the droop of every
//! section's pole at `GBW / NG` (each section's own noise gain, from one
//! more adjoint solve of the DC factors). Both as an error at the top of
//! the output span, as in `docs/filter.md`.

use crate::mna::{element_value, DcSolution};
use crate::mna_ac::AcSolver;
use crate::need::Need;
use crate::netlist::{Netlist, Node};
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built};
use crate::units::{johnson_noise_density, Celsius, Ohms, PEAK_TO_PEAK_PER_RMS};
use serde::Serialize;
use std::f64::consts::{FRAC_PI_2, PI};

/// Noise summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseSummary {
    /// Output RMS noise, volts.
    pub rms_v: f64,
    /// Peak-to-peak (6.6 sigma), volts.
    pub peak_to_peak_v: f64,
    /// The noise bandwidth the white parts of the sources saw, Hz: their
    /// output noise power over their output density at DC (for a chain of
    /// one pole, `pi/2` times its corner, less the band below
    /// `accuracy.noise_low_hz`).
    pub noise_bandwidth_hz: f64,
    /// Share of the RMS power from resistor thermal noise, op-amp voltage
    /// noise (its 1/f part included), op-amp current noise (its 1/f part
    /// included) and reference noise (fractions).
    pub shares: [f64; 4],
    /// Share of the RMS power from the amplifiers' 1/f noise, voltage
    /// (`en_corner_hz`) and current (`in_corner_hz`) (fraction).
    pub flicker_share: f64,
}

impl NoiseSummary {
    /// The peak the budget takes for noise: half the peak-to-peak, volts.
    pub fn peak_v(&self) -> f64 {
        0.5 * self.peak_to_peak_v
    }
}

/// What is known of the chain's frequency response.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Response {
    /// A search candidate: the filter pair is not chosen yet; bounds.
    /// `pair`: whether the design will get one when reported (only then
    /// may the bound count on the filter's pole).
    Bounded {
        /// The design gets a pair when reported.
        pair: bool,
    },
    /// The design as built (with its pair if it has one): the response
    /// itself.
    AsBuilt,
}

/// The frequency-dependent lines of one design.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Dynamic {
    /// The output noise.
    pub noise: NoiseSummary,
    /// Gain droop at `accuracy.bandwidth_hz` as an error at the top of the
    /// output span, volts (non-negative).
    pub droop_v: f64,
}

/// Where a source enters the circuit.
#[derive(Debug, Clone, Copy)]
enum Entry {
    /// A current between two nodes (a resistor's noise current).
    Across(Node, Node),
    /// A current into one node (an input's noise current).
    Into(Node),
    /// The value of a voltage source (an op-amp's `VOS_<ref>`).
    Branch(usize),
}

/// One source: its category (0 resistor, 1 op-amp voltage, 2 op-amp
/// current), where it enters, its white density, its 1/f corner (Hz, 0
/// for none: density squared `density^2 (1 + corner_hz / f)`), and its
/// transfer to the output at DC.
#[derive(Debug, Clone, Copy)]
struct WhiteSource {
    category: usize,
    entry: Entry,
    density: f64,
    corner_hz: f64,
    dc_gain: f64,
}

/// `integral from low to infinity of df / (1 + (f/pole)^2)`, Hz: the
/// white noise bandwidth of one pole counted from `low` (handbook closed
/// form; `pi/2 pole` from 0).
pub(crate) fn white_band_hz(pole: f64, low: f64) -> f64 {
    pole * (FRAC_PI_2 - (low / pole).atan())
}

/// `integral from low to infinity of df / (f (1 + (f/pole)^2))`: the
/// weight of a 1/f corner over one pole counted from `low` (handbook
/// closed form, `ln(pole/low)` for `low` far below the pole). Times
/// `en^2 fc` it is the 1/f part of the output power.
pub(crate) fn flicker_band(pole: f64, low: f64) -> f64 {
    0.5 * (pole / low).powi(2).ln_1p()
}

/// Points a decade of the noise integral (trapezoids in `ln f`; for one
/// pole the rule is within 0.1 % of the closed form, checked in the unit
/// tests).
const POINTS_PER_DECADE: f64 = 12.0;

/// The white sources of a built design, with their DC transfers.
fn white_sources(
    need: &Need,
    stock: &Stock,
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
) -> Vec<WhiteSource> {
    let t_hot = Celsius(need.accuracy.temp_max.0);
    let mut sources = Vec::new();
    let mut resistor_elements: Vec<usize> = built.resistors.iter().map(|r| r.element).collect();
    resistor_elements.extend(&built.source_resistors);
    resistor_elements.extend(&built.internal_resistors);
    if let Some(f) = &built.filter {
        resistor_elements.push(f.series_element);
    }
    for &e in &resistor_elements {
        let element = &netlist.elements[e];
        let ohms = element_value(netlist, e);
        let (a, b) = (element.nodes[0], element.nodes[1]);
        // Current-noise density of the resistor, A/rtHz.
        sources.push(WhiteSource {
            category: 0,
            entry: Entry::Across(a, b),
            density: johnson_noise_density(Ohms(ohms), t_hot) / ohms,
            corner_hz: 0.0,
            dc_gain: dc.node_adjoint(a) - dc.node_adjoint(b),
        });
    }
    for section in &built.sections {
        let (voltage_density, corner_hz, current_density, current_corner_hz) = match section.kind {
            AmplifierKind::OpAmp(i) => (
                stock.opamps[i].en_nv_rthz * 1e-9,
                stock.opamps[i].en_corner_hz,
                stock.opamps[i].in_pa_rthz * 1e-12,
                stock.opamps[i].in_corner_hz,
            ),
            AmplifierKind::InAmp(i) => (
                stock.inamps[i].en_nv_rthz * 1e-9,
                stock.inamps[i].en_corner_hz,
                0.0,
                0.0,
            ),
        };
        sources.push(WhiteSource {
            category: 1,
            entry: Entry::Branch(section.vos),
            density: voltage_density,
            corner_hz: corner_hz.max(0.0),
            dc_gain: dc.branch_adjoint(section.vos),
        });
        for node in [section.plus, section.minus] {
            if current_density > 0.0 {
                sources.push(WhiteSource {
                    category: 2,
                    entry: Entry::Into(node),
                    density: current_density,
                    corner_hz: current_corner_hz.max(0.0),
                    dc_gain: dc.node_adjoint(node),
                });
            }
        }
    }
    sources
}

/// The reference noise at the output, volts RMS squared (broadband as
/// stated, referred at DC).
fn reference_power(stock: &Stock, built: &Built, dc: &DcSolution) -> f64 {
    built
        .sources
        .iter()
        .filter_map(|source| {
            let i = source.reference?;
            let rms = stock.references[i].noise_uv_pp * 1e-6 / PEAK_TO_PEAK_PER_RMS;
            Some((dc.branch_adjoint(source.element) * rms).powi(2))
        })
        .sum()
}

/// Gain-bandwidth product of a section's part, Hz.
fn section_gbw_hz(stock: &Stock, kind: AmplifierKind) -> f64 {
    match kind {
        AmplifierKind::OpAmp(i) => stock.opamps.get(i).map_or(0.0, |p| p.gbw_mhz * 1e6),
        AmplifierKind::InAmp(i) => stock.inamps.get(i).map_or(0.0, |p| p.gbw_mhz * 1e6),
    }
}

/// The closed-loop pole of the section driving the output, at most
/// `GBW / NG` (NG from the output adjoint of its offset source), Hz; or
/// infinite when the design has no such section.
fn driver_pole_hz(stock: &Stock, built: &Built, dc: &DcSolution) -> f64 {
    let node = driver_node(built);
    built
        .sections
        .iter()
        .find(|s| s.out == node)
        .map_or(f64::INFINITY, |s| {
            let gbw = section_gbw_hz(stock, s.kind);
            let noise_gain = dc.branch_adjoint(s.vos).abs().max(1.0);
            if gbw > 0.0 {
                gbw / noise_gain
            } else {
                f64::INFINITY
            }
        })
}

/// The node the last section drives: the chain's output, or with a pair
/// the series resistor's amplifier end.
fn driver_node(built: &Built) -> Node {
    built
        .filter
        .as_ref()
        .and_then(|f| built.netlist.elements.get(f.series_element))
        .map_or(built.out, |e| {
            if e.nodes[0] == built.out {
                e.nodes[1]
            } else {
                e.nodes[0]
            }
        })
}

/// The output noise and droop of a solved design (see the module header
/// for how `response` decides what is integrated).
pub(crate) fn dynamic(
    need: &Need,
    stock: &Stock,
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
    response: Response,
) -> Dynamic {
    let sources = white_sources(need, stock, built, netlist, dc);
    let reference2 = reference_power(stock, built, dc);
    let low = need.accuracy.noise_low.0;
    let mut white = [0.0f64; 3];
    let mut flicker = [0.0f64; 3];
    let mut dc_density2 = 0.0;
    for s in &sources {
        dc_density2 += (s.dc_gain * s.density).powi(2);
    }
    let span = {
        let (low, high) = need.target_window();
        (high - low).abs()
    };
    let bandwidth = need.accuracy.bandwidth.0;
    let integrated = match response {
        Response::AsBuilt if built.filter.is_some() => integrate(stock, built, &sources, low),
        _ => None,
    };
    let droop_v = match response {
        Response::Bounded { pair } => {
            let filter = if crate::filter::stock_has_capacitors(stock) {
                crate::filter::droop_allowance_v(need)
            } else {
                0.0
            };
            // The pair's rules share the allowance with the poles in the
            // stages' feedback (`crate::filter::tau_limits_with`); without
            // a pair those poles droop on their own, each at most a real
            // pole's loss at its corner.
            let feedback = if pair {
                0.0
            } else {
                feedback_droop(built, bandwidth) * span
            };
            filter + feedback + stage_droop(stock, built, dc, bandwidth) * span
        }
        Response::AsBuilt => as_built_droop(stock, built, bandwidth) * span,
    };
    match integrated {
        Some(powers) => (white, flicker) = powers,
        None => {
            // One bound for every source: the lowest pole all of them pass.
            let mut corner = driver_pole_hz(stock, built, dc);
            if response == (Response::Bounded { pair: true })
                && crate::filter::stock_has_capacitors(stock)
            {
                corner = corner.min(crate::filter::highest_corner_hz(need));
            }
            if !corner.is_finite() {
                // No section drives the output (not a design the builder
                // makes): the fastest amplifier's GBW, else the signal
                // bandwidth.
                corner = built
                    .sections
                    .iter()
                    .map(|s| section_gbw_hz(stock, s.kind))
                    .fold(0.0, f64::max);
                if corner <= 0.0 {
                    corner = need.accuracy.bandwidth.0;
                }
            }
            let enbw = white_band_hz(corner, low);
            let weight = flicker_band(corner, low);
            for s in &sources {
                let p = (s.dc_gain * s.density).powi(2);
                white[s.category] += p * enbw;
                flicker[s.category] += p * s.corner_hz * weight;
            }
        }
    }
    let flicker_total: f64 = flicker.iter().sum();
    for (w, f) in white.iter_mut().zip(flicker) {
        // From here on a category's power holds its 1/f part.
        *w += f;
    }
    let total2 = white.iter().sum::<f64>() + reference2;
    let rms = total2.sqrt();
    let share = |x: f64| if total2 > 0.0 { x / total2 } else { 0.0 };
    let white_total: f64 = white.iter().sum::<f64>() - flicker_total;
    let noise = NoiseSummary {
        rms_v: rms,
        peak_to_peak_v: rms * PEAK_TO_PEAK_PER_RMS,
        noise_bandwidth_hz: if dc_density2 > 0.0 {
            white_total / dc_density2
        } else {
            0.0
        },
        shares: [
            share(white[0]),
            share(white[1]),
            share(white[2]),
            share(reference2),
        ],
        flicker_share: share(flicker_total),
    };
    Dynamic {
        noise,
        droop_v: droop_v.max(0.0),
    }
}

/// The droop of every section's closed-loop pole at `frequency`, each at
/// no lower than `GBW / NG` with its own noise gain (one more adjoint solve
/// of the DC factors a section; an in-amp's `NG` is its gain, and its
/// output amplifier adds a pole at its GBW), as a fraction of the signal:
/// `1 - prod 1/sqrt(1 + (f NG / GBW)^2)`.
fn stage_droop(stock: &Stock, built: &Built, dc: &DcSolution, frequency: f64) -> f64 {
    let mut pass = 1.0f64;
    for s in &built.sections {
        let gbw = section_gbw_hz(stock, s.kind);
        if gbw <= 0.0 {
            continue;
        }
        let noise_gain = if s.out == built.out {
            dc.branch_adjoint(s.vos)
        } else {
            let adjoint = dc.adjoint_of(s.out);
            dc.solver()
                .branch_unknown(s.vos)
                .map_or(1.0, |k| adjoint[k])
        }
        .abs()
        .max(1.0);
        let x = frequency * noise_gain / gbw;
        pass /= (1.0 + x * x).sqrt();
        if let AmplifierKind::InAmp(_) = s.kind {
            // The in-amp's output amplifier: a second pole at its GBW
            // (`crate::filter::amplifiers`).
            let y = frequency / gbw;
            pass /= (1.0 + y * y).sqrt();
        }
    }
    1.0 - pass
}

/// At least the loss of the poles in the stages' feedback at `frequency`:
/// each a real pole at its nominal corner (an inverting stage's is one; a
/// non-inverting stage's gain levels off at 1 and loses less).
fn feedback_droop(built: &Built, frequency: f64) -> f64 {
    let mut pass = 1.0f64;
    for c in &built.feedback_capacitors {
        let ohms = crate::mna::element_value(&built.netlist, c.across);
        let x = frequency / crate::filter::feedback::corner_hz(ohms, c.part.value.0);
        if x.is_finite() {
            pass /= (1.0 + x * x).sqrt();
        }
    }
    1.0 - pass
}

/// `1 - |H(f)/H(0)|` of the chain as built, from the AC solver (0 when the
/// solve fails: the DC analysis reports the circuit's faults).
fn as_built_droop(stock: &Stock, built: &Built, frequency: f64) -> f64 {
    let amplifiers = crate::filter::amplifiers(stock, built);
    let mut solver = AcSolver::new(&built.netlist, &amplifiers);
    let mut at = |f: f64| {
        solver
            .transfer(&built.netlist, built.vsense, built.out, f)
            .map(|h| h.abs())
            .unwrap_or(0.0)
    };
    let h0 = at(0.0);
    if h0 > 0.0 {
        (1.0 - at(frequency) / h0).max(0.0)
    } else {
        0.0
    }
}

/// Integrate every source's output density over the chain's AC response
/// (with the filter pair) from `low` up: per category, the output power of
/// the white parts and of the 1/f parts, volts squared. Returns `None`
/// when the AC solve fails.
fn integrate(
    stock: &Stock,
    built: &Built,
    sources: &[WhiteSource],
    low: f64,
) -> Option<([f64; 3], [f64; 3])> {
    let amplifiers = crate::filter::amplifiers(stock, built);
    let netlist = &built.netlist;
    let mut solver = AcSolver::new(netlist, &amplifiers);
    let filter = built.filter.as_ref()?;
    let rc = filter.series.ohms * filter.shunt.value.0;
    let filter_corner = 1.0 / (2.0 * PI * rc);
    let top_gbw = amplifiers.iter().map(|a| a.gbw_hz).fold(0.0, f64::max);
    // The grid starts a thousandth of the lowest corner (the pair's or
    // a feedback capacitor's) down, or at the
    // low limit when that is higher.
    let start =
        (filter_corner.min(crate::filter::feedback::lowest_corner_hz(built)) * 1e-3).max(low);
    let high = top_gbw.max(filter_corner).max(start) * 10.0;
    let count = ((high / start).log10() * POINTS_PER_DECADE).ceil().max(2.0) as usize + 1;
    let grid = crate::mna_ac::log_frequencies(start, high, count);
    // Per category: the white density at the output, and the 1/f
    // density times f (each source's `|h|^2 density^2 corner_hz`).
    let density = |solver: &mut AcSolver, f: f64| -> Option<[[f64; 3]; 2]> {
        solver.solve_adjoint(netlist, built.out, f).ok()?;
        let mut p = [[0.0; 3]; 2];
        for s in sources {
            let h = match s.entry {
                Entry::Across(a, b) => {
                    let (x, y) = (solver.node_transfer(a), solver.node_transfer(b));
                    (x.re - y.re).hypot(x.im - y.im)
                }
                Entry::Into(n) => solver.node_transfer(n).abs(),
                Entry::Branch(e) => solver.branch_transfer(e).abs(),
            };
            let g = (h * s.density).powi(2);
            p[0][s.category] += g;
            p[1][s.category] += g * s.corner_hz;
        }
        Some(p)
    };
    // From `low` to the grid the response is flat (no coupling
    // capacitors): white `g (start - low)`, 1/f `g fc ln(start/low)`.
    let first = density(&mut solver, grid[0])?;
    let mut white = first[0].map(|p| p * (grid[0] - low));
    let mut flicker = first[1].map(|p| p * (grid[0] / low).ln());
    let mut last = (grid[0], first);
    // Trapezoids in ln f: white `g f`, 1/f `g fc`.
    for &f in &grid[1..] {
        let p = density(&mut solver, f)?;
        let step = (f / last.0).ln();
        for c in 0..3 {
            white[c] += 0.5 * (p[0][c] * f + last.1[0][c] * last.0) * step;
            flicker[c] += 0.5 * (p[1][c] + last.1[1][c]) * step;
        }
        last = (f, p);
    }
    // Above the grid every path ends in the pair's pole: the density falls
    // at least as 1/f^2, so the white tail is at most g(b) b and the 1/f
    // tail at most g(b) fc / 2.
    for c in 0..3 {
        white[c] += last.1[0][c] * last.0;
        flicker[c] += 0.5 * last.1[1][c];
    }
    Some((white, flicker))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The trapezoid rule in `ln f` at [`POINTS_PER_DECADE`] over one pole,
    /// with the flat part below and the `g(b) b` tail above, gives
    /// `pi/2 f_c` (handbook closed form) within 0.5 %.
    #[test]
    fn the_integration_rule_meets_the_one_pole_closed_form() {
        let fc: f64 = 1234.0;
        let (low, high) = (fc * 1e-3, fc * 1e4);
        let count = ((high / low).log10() * POINTS_PER_DECADE).ceil() as usize + 1;
        let grid = crate::mna_ac::log_frequencies(low, high, count);
        let g = |f: f64| 1.0 / (1.0 + (f / fc).powi(2));
        let mut total = g(low) * low;
        for w in grid.windows(2) {
            total += 0.5 * (g(w[1]) * w[1] + g(w[0]) * w[0]) * (w[1] / w[0]).ln();
        }
        total += g(high) * high;
        let want = FRAC_PI_2 * fc;
        assert!((total / want - 1.0).abs() < 5e-3, "{total} against {want}");
    }

    /// The same rule for the 1/f part over one pole, as [`integrate`] runs
    /// it (a flat part from `f_L` to the grid, trapezoids of `g fc` in
    /// `ln f`, the `g(b) fc / 2` tail), against the closed form
    /// `fc ln(1 + (p/f_L)^2) / 2`, and that against the handbook's
    /// `fc ln(p/f_L)` (common practice) for `f_L` far below the pole.
    #[test]
    fn the_flicker_rule_meets_the_handbook_closed_form() {
        let (p, fc, low): (f64, f64, f64) = (1234.0, 100.0, 0.1);
        let (start, high) = (p * 1e-3, p * 1e4);
        let count = ((high / start).log10() * POINTS_PER_DECADE).ceil() as usize + 1;
        let grid = crate::mna_ac::log_frequencies(start, high, count);
        let g = |f: f64| 1.0 / (1.0 + (f / p).powi(2));
        let mut total = g(start) * fc * (start / low).ln();
        for w in grid.windows(2) {
            total += 0.5 * (g(w[1]) + g(w[0])) * fc * (w[1] / w[0]).ln();
        }
        total += 0.5 * g(high) * fc;
        let want = fc * flicker_band(p, low);
        assert!((total / want - 1.0).abs() < 1e-3, "{total} against {want}");
        let handbook = fc * (p / low).ln();
        assert!(
            (want / handbook - 1.0).abs() < 1e-6,
            "{want} against {handbook}"
        );
        // The white band from f_L: pi/2 p less about f_L.
        let white = white_band_hz(p, low);
        assert!((white - (FRAC_PI_2 * p - low)).abs() < 1e-6 * p, "{white}");
    }
}
