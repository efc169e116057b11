//! Accuracy floors: a lower bound on the total error the analysis reports
//! for any design whose first stage uses a given amplifier part, whatever
//! its resistors, offset network and later stages. A part whose floor is
//! over the target cannot be in a design that meets the need, so the space
//! bound (`bounds`) leaves it out of the least cost.
//!
//! The floor rests on one fact of the netlist and one of the budget.
//!
//! **The netlist.** Every amplifier section (`topology::Builder::section`,
//! and the integrated in-amp's template) has its offset source `VOS` in
//! series with its + pin: the gain block sees `pi = plus + vos`, and no
//! current flows into `pi` (the gain block is a voltage-controlled source;
//! the bias currents are fixed sources). The sensor `VSENSE` moves only the
//! node `inp` (the - leg is held by `VCM`). In the first stage, the
//! sensor reaches a section either through its + pin or through its - pin:
//! - through the + pin (non-inverting, summed, difference, the discrete
//!   instrumentation stage's input section on the sensor's leg, the
//!   integrated in-amp): the + pin is a node of a resistive network driven
//!   by fixed sources and `inp` that draws no current, so
//!   `plus = a inp + c` with `0 <= a <= 1` (a node of a passive network
//!   is a convex combination of its source voltages); the circuit sees
//!   `inp` and `vos` only through `pi`, so `d out / d vos = d out / d pi`
//!   and `|d out / d inp| = a |d out / d pi| <= |d out / d vos|`. For the
//!   integrated in-amp with the sensor on its - pin, the part's inside is
//!   symmetric (equal input resistors and difference resistors), so
//!   `|d out / d vin_n| = |d out / d vin|` and the same holds.
//! - through the - pin (inverting, a difference stage taking the sensor on
//!   its - side): with the gain block `out1 = A (pi - minus)` and the -
//!   pin a node of the resistive network `minus = b1 u + b2 out1 + c`
//!   (`u` the sensor's share, `b1, b2 >= 0`, `b1 + b2 <= 1`),
//!   `out1 (1 + A b2) = A pi - A b1 u`, so `|d out1 / d u| <= |d out1 / d
//!   pi|`; later stages take `out1` (an ideal source output) and scale
//!   both alike.
//!
//! So some section of the first stage has `|d out / d vos| >= |K_act|`,
//! where `K_act` is the design's real gain (its output over the span is
//! linear in the signal: `out = K_act s + B_act`).
//!
//! **The budget.** The offset source carries the offset parameter (initial
//! `vos_max`, drift `vos_drift x max_delta_t`) and the supply-rejection
//! parameter (`supply tolerance / psrr`, not calibrated), both with the flat
//! sensitivity `d out / d vos` (`analysis/params.rs`). Offset calibration
//! removes a flat initial term (`[0, 0]`); drift and supply rejection stay
//! at both ends. The systematic lines (rounding and finite gain) add up to
//! the output error `e = out - ideal = (K_act - K) s + (B_act - B)`, so
//! with offset calibration the high end carries at least
//! `|K_act - K| S` (`S` the signal span), and without calibration the two
//! ends together carry at least that. With `x = |K_act|` and `C` the
//! combination of the section's input-referred limits on the basis (sum
//! on the worst case, root-sum-square on RSS), the reported total (worst
//! case: at least the first-order sum at each end; RSS: the RSS total at
//! each end) is at least
//! - offset calibration: `|x - |K|| S + x C` (at the high end);
//! - none: `|x - |K|| S / 2 + x C` (the larger end is at least the mean);
//!
//! whose least over `x >= 0` is `|K| min(S, C)` (or `|K| min(S/2, C)`): a
//! function linear on each side of `x = |K|`. A two-point trim rescales
//! by the measured slope and the yield basis judges by builds, so neither
//! gets a floor.
//!
//! **The ADC window.** The same sensitivity widens the output's untrimmed
//! range, which the ADC-window check keeps inside the ADC: no design of
//! the part has a real gain above [`gain_cap`], and where that cap is
//! below `|K|` the least is taken over `x <= cap` only.

use crate::analysis::feasibility::{output_swing, VOLTAGE_SLACK};
use crate::design::Shape;
use crate::need::{Basis, Calibration, Excitation, Need, SensorOutput};
use crate::stock::Stock;
use crate::topology::AmplifierKind;

/// Relative margin taken off every floor before it rules anything out
/// (rounding in the analysis's own sums).
const FLOOR_MARGIN: f64 = 1e-6;

/// The input-referred limits of one part that reach the output through
/// `d out / d vos` as separate budget terms, volts: the initial offset
/// where no calibration removes it, the offset drift over the largest
/// excursion, and the supply rejection.
pub(super) fn input_referred_limits(need: &Need, stock: &Stock, kind: AmplifierKind) -> [f64; 3] {
    let delta_t = need.max_delta_t();
    let (vos_uv, drift_uv, psrr) = match kind {
        AmplifierKind::OpAmp(i) => {
            let p = &stock.opamps[i];
            (p.vos_max_uv, p.vos_drift_uv_per_c, p.psrr_min.ratio())
        }
        AmplifierKind::InAmp(i) => {
            let p = &stock.inamps[i];
            (
                p.input_offset_uv,
                p.offset_drift_uv_per_c,
                p.psrr_min.ratio(),
            )
        }
    };
    let initial = match need.accuracy.calibration {
        Calibration::None => vos_uv.abs() * 1e-6,
        Calibration::Offset | Calibration::TwoPoint => 0.0,
    };
    let supply_range = need.supply.positive.0.abs() * need.supply.tolerance.fraction();
    let rejection = if supply_range > 0.0 && psrr > 0.0 && psrr.is_finite() {
        supply_range / psrr
    } else {
        0.0
    };
    [initial, (drift_uv * 1e-6 * delta_t).abs(), rejection]
}

/// The least total error, volts at the output, the analysis can report on
/// the need's basis for any design whose first stage has a section with
/// these input-referred limits (module notes). Zero where no floor holds.
/// `cap` bounds the real gain `x` from above ([`gain_cap`]; infinite for
/// none).
pub(super) fn error_floor_v(need: &Need, limits: &[f64], cap: f64) -> f64 {
    let combined = match need.accuracy.basis {
        Basis::WorstCase => limits.iter().map(|l| l.abs()).sum::<f64>(),
        Basis::Rss => limits.iter().map(|l| l * l).sum::<f64>().sqrt(),
        Basis::Yield => return 0.0,
    };
    combined_floor_v(need, combined, cap)
}

/// The least over every real gain `0 <= x <= cap` of the floor
/// `share |x - |K|| S + x C` (module notes) for the combined input-referred limits
/// `C` on the need's basis (zero on the yield basis or with a two-point
/// trim). The function is linear on each side of `|K|`, so its least is
/// at `x = 0` or at `min(|K|, cap)`.
fn combined_floor_v(need: &Need, combined: f64, cap: f64) -> f64 {
    let Some(share) = trim_share(need) else {
        return 0.0;
    };
    let (k, _) = need.ideal_transfer();
    let k = k.abs();
    let span = sensor_span(need);
    let top = k.min(cap.max(0.0));
    let floor = (share * k * span).min(share * (k - top) * span + top * combined);
    if floor.is_finite() {
        floor * (1.0 - FLOOR_MARGIN)
    } else {
        0.0
    }
}

/// The error floor of a first-stage part, volts at the output.
pub(super) fn part_floor_v(need: &Need, stock: &Stock, kind: AmplifierKind) -> f64 {
    let cap = gain_cap(need, stock, kind, 0.0);
    error_floor_v(need, &input_referred_limits(need, stock, kind), cap)
}

/// The untrimmed limits of a part that reach the output through `d out /
/// d vos`, summed, volts: the initial offset (trim or not), the drift over
/// the largest excursion and the supply rejection (`extremes::raw_limit`
/// of the same parameters).
fn raw_limit_sum(need: &Need, stock: &Stock, kind: AmplifierKind) -> f64 {
    let vos_uv = match kind {
        AmplifierKind::OpAmp(i) => stock.opamps[i].vos_max_uv,
        AmplifierKind::InAmp(i) => stock.inamps[i].input_offset_uv,
    };
    let [_, drift, rejection] = input_referred_limits(need, stock, kind);
    vos_uv.abs() * 1e-6 + drift.abs() + rejection.abs()
}

/// The largest real gain `x = |K_act|` any design whose first stage has a
/// section of part `kind` can have and pass the ADC-window check; `extra`
/// adds to the part's untrimmed limits what more the output must carry per
/// unit of `x` (the instrumentation floor's second input section).
///
/// Proof. The window check (`analysis/feasibility.rs::adc_window`) asks
/// the nominal outputs at both span ends, each widened by at least its
/// untrimmed half-range `w` (`extremes::output_half_range`: every
/// parameter's output sensitivity times its initial plus drift limit), to
/// lie within the ADC's range `W` (plus 1e-12 V). The widened ends span at
/// least `|out_hi - out_lo| + w_lo + w_hi = x S + w_lo + w_hi`. The part's
/// offset and supply-rejection parameters reach the output with `|d out /
/// d vos| >= x` (module notes), so each `w >= x L` with `L` their summed
/// untrimmed limits ([`raw_limit_sum`]): `x (S + 2 L) <= W`. The check
/// holds on every basis and calibration.
pub(super) fn gain_cap(need: &Need, stock: &Stock, kind: AmplifierKind, extra: f64) -> f64 {
    let span = sensor_span(need);
    let width = (need.adc.high.0 - need.adc.low.0).abs() + 2e-12;
    let per_x = span + 2.0 * (raw_limit_sum(need, stock, kind) + extra.max(0.0));
    if per_x > 0.0 && width.is_finite() {
        // Margin for the rounding of the check's own sums.
        width / per_x * (1.0 + FLOOR_MARGIN)
    } else {
        f64::INFINITY
    }
}

/// What a resistor role can hold: every stocked resistor and every
/// matched network's element, as (relative tolerance the analysis gives
/// it, unit cost, on the shelf). A network element carries half its
/// package's ratio tolerance (`analysis/params.rs`) at its package's
/// price per element.
fn role_parts(stock: &Stock) -> impl Iterator<Item = (f64, f64, bool)> + '_ {
    let resistors = stock
        .resistors
        .iter()
        .map(|r| (r.tolerance.0, r.unit_cost, r.stock_qty != Some(0)));
    let elements = stock
        .networks
        .iter()
        .filter(|n| !n.values.is_empty())
        .map(|n| {
            (
                0.5 * n.ratio_tolerance.0,
                n.unit_cost / n.values.len() as f64,
                n.stock_qty != Some(0),
            )
        });
    resistors
        .chain(elements)
        .map(|(pct, cost, shelf)| (pct.abs() / 100.0, cost, shelf))
}

/// The least relative tolerance any resistor role can carry (over every
/// row of the stock, [`role_parts`]).
fn least_tolerance(stock: &Stock) -> f64 {
    role_parts(stock)
        .map(|(tol, _, _)| tol)
        .fold(f64::INFINITY, f64::min)
        .min(1.0)
}

/// The share of the gain error's move over the span that the reported
/// total carries at its worse end (module notes): 1 with an offset trim,
/// 1/2 without; `None` where no floor holds (a two-point trim, or the
/// yield basis).
fn trim_share(need: &Need) -> Option<f64> {
    if need.accuracy.basis == Basis::Yield {
        return None;
    }
    match need.accuracy.calibration {
        Calibration::Offset => Some(1.0),
        Calibration::None => Some(0.5),
        Calibration::TwoPoint => None,
    }
}

/// The sensor's span `S`, volts.
fn sensor_span(need: &Need) -> f64 {
    (need.sensor.signal_high.0 - need.sensor.signal_low.0).abs()
}

/// The loop-gain floor: a lower bound on the total error the analysis can
/// report for any design whose stages are the `shapes` and whose first
/// stage's section is the op-amp `kind`, volts at the output. At least
/// [`part_floor_v`]; it adds what every stage's finite open-loop gain and
/// feedback resistor must cost. Sequences with an instrumentation stage
/// (three sections, or an integrated in-amp) get the part floor alone.
///
/// Proof (every stage a single-section shape: non-inverting, summed,
/// inverting, difference). Each stage `j` has one section whose output
/// `o` is its gain block (`o = A (pi - m)`, `A` the part's minimum
/// open-loop gain, an ideal source at DC), and one feedback resistor `rf`
/// from `o` to the - pin `m`; the rest of the - pin's network reaches
/// neither `o` nor the + pin's network (shape `build`s), and the stage's
/// input moves only one of the two pins' networks (the sensor moves only
/// `inp`; later stages take the previous output and ground). Seen from `m`
/// the rest is a Thevenin source `V_r` behind `R_r`, so
/// `m = beta o + (1 - beta) V_r` with `beta = R_r / (R_r + rf)`, and
/// `o = A (pi - (1 - beta) V_r) / (1 + A beta)`: the stage gives `T = A
/// beta / (1 + A beta)` of what it would with an ideal part. Write `D` for
/// a change over the span (high end less low end), `g = Do / D(input)` for
/// the stage's real gain, `x = |K_act|` for the chain's (the product of
/// the `|g|`), `S` the sensor span, `Dy = K_act S` the output's move.
/// - **Finite gain.** The input moves `pi` or `V_r` by at most its own
///   move (a node of a passive network is a convex combination of its
///   sources), so `|Do| (1 + A beta) <= A |D(input)|`: `1 - T >= |g| / A`.
///   The finite-gain line (`analysis/systematic.rs`, first order in `1/A`
///   or exact) moves over the span by `|Dy| sum(1 - T_j)` (first order) or
///   `|Dy| (1 / prod T_j - 1)` (exact), both at least `tau |Dy|` with
///   `tau = sum(1 - T_j) >= sum |g_j| / A_j >= n x^(1/n) / A_hi` (AM-GM;
///   `A_hi` the largest gain of the stock, or the first part's alone with
///   one stage).
/// - **Feedback resistor.** A relative change of `rf` acts as a source in
///   series with it of `(o - m)` times the change, which reaches `o` times
///   `T` and the output times the later stages' gain `Dy / Do`. Since
///   `o - m = o (1 + 1/A) - pi`, its sensitivity moves over the span by
///   `T |Dy| |1 + 1/A - D(pi) / Do|`, at least `T |Dy| (1 - 1/|g|)` (the
///   plus pin moves at most the input's move; an inverting stage's not
///   at all). The `(1 - 1/|g_j|)` sum to at least `1 - 1/x` (with every
///   `1/|g_j| <= 1` taken, `1 - prod <= sum(1 - .)`), and every `T_j >= 1 -
///   tau`. Each resistor's tolerance line after an offset trim is
///   `tol |s_hi - s_lo|` with `tol` at least [`least_tolerance`], so the
///   tolerance line holds at least `tol |Dy| (1 - tau) (1 - 1/x)`.
/// - **The total.** On the worst case with an offset trim the high end
///   carries the systematic lines, at least `max(|x - |K|| S, tau x S)`
///   (they sum to the error `e`, whose move is `(K_act - K) S`, and one of
///   them is the finite-gain line), the first part's input-referred limits
///   through `|d out / d vos| >= x` (`x C`, the part floor's argument),
///   and the tolerance line. Without calibration the two ends together
///   carry the same moves (`|a| + |b| >= |b - a|`, and every tolerance
///   line holds `tol (|s_lo| + |s_hi|)`), and the larger end half of it.
///   On RSS the resistor limits join the root-sum-square, where this
///   floor does not count them (`tol = 0`); the finite-gain line is
///   systematic and counts.
///
/// The least over every `x` up to [`gain_cap`] and `tau >= n x^(1/n) /
/// A_hi` is taken
/// interval by interval: on `x in [a, b]` every term is at least its value
/// at `a` (or the distance from `|K|` to the interval), a function of
/// `tau` alone that is piecewise linear with its least at `tau_min` or a
/// corner (`|x - |K|| / a`, 1).
pub(super) fn sequence_floor_v(
    need: &Need,
    stock: &Stock,
    shapes: &[Shape],
    kind: AmplifierKind,
) -> f64 {
    match floor_rule(shapes, kind) {
        FloorRule::LoopGain { stages, part } => loop_gain_floor_v(need, stock, stages, part),
        FloorRule::Instrumentation(part) => instrumentation_floor_v(need, stock, part),
        FloorRule::Part(kind) => part_floor_v(need, stock, kind),
    }
}

/// Which floor of [`sequence_floor_v`] holds for a sequence and the part
/// of its first stage.
enum FloorRule {
    /// Every stage one op-amp section, the first on `part`.
    LoopGain { stages: usize, part: usize },
    /// A first discrete instrumentation stage on the op-amp.
    Instrumentation(usize),
    /// The part floor alone.
    Part(AmplifierKind),
}

fn floor_rule(shapes: &[Shape], kind: AmplifierKind) -> FloorRule {
    match kind {
        AmplifierKind::OpAmp(part) if loop_gain_applies(shapes) => FloorRule::LoopGain {
            stages: shapes.len(),
            part,
        },
        AmplifierKind::OpAmp(part) if shapes.first() == Some(&Shape::InstrumentationDiscrete) => {
            FloorRule::Instrumentation(part)
        }
        _ => FloorRule::Part(kind),
    }
}

/// The floor of a sequence whose first stage is the discrete
/// instrumentation stage on the op-amp `part`, volts: at least
/// [`part_floor_v`], and more where the sensor's common mode is uncertain.
///
/// Proof. The stage's two input sections take the sensor's legs on their
/// plus pins: `sp` (behind `RSENSE_P` from `inp`) and `sn` (behind
/// `RSENSE_N` from `inn`), each pin drawing only its fixed bias current,
/// and neither leg reaches anything else. With `inn = VCM` and
/// `inp = VCM + VSENSE`, the output is `f(pi_a, pi_b)` of the two gain blocks' inputs
/// `pi_a = sp + vos_a`, `pi_b = sn + vos_b`, so `d out / d vos_a = d out /
/// d VSENSE = K_act` (`|.| = x`), `d out / d vos_b = u` for some `u`, and
/// `d out / d VCM = K_act + u`. Both input sections are the same part,
/// each with the limits `C` on `d out / d vos` (the part floor's budget
/// argument), and the common-mode line (`analysis/params.rs`, a sensor
/// with its own excitation) holds `|K_act + u| r` at both ends, `r` the
/// common mode's tolerance in volts, calibration leaving it. On the worst
/// case the random part is then at least `x C + |u| C + |K_act + u| r >=
/// x (C + min(C, r))`; on RSS the root-sum-square of the same limits is
/// at least `x sqrt(C^2 + C^2 r^2 / (C^2 + r^2))` (its least over `u`).
/// The part floor's least over `x` then holds with that combination.
fn instrumentation_floor_v(need: &Need, stock: &Stock, part: usize) -> f64 {
    let kind = AmplifierKind::OpAmp(part);
    let plain = part_floor_v(need, stock, kind);
    let independent = need.sensor.output == SensorOutput::Differential
        && need.sensor.excitation == Excitation::Independent;
    let r = if independent {
        need.sensor.common_mode_tolerance.fraction() * need.sensor.common_mode.0.abs()
    } else {
        0.0
    };
    let limits = input_referred_limits(need, stock, kind);
    let combined = match need.accuracy.basis {
        Basis::WorstCase => {
            let c = limits.iter().map(|l| l.abs()).sum::<f64>();
            c + c.min(r)
        }
        Basis::Rss => {
            let c2 = limits.iter().map(|l| l * l).sum::<f64>();
            let r2 = r * r;
            if c2 + r2 > 0.0 {
                (c2 + c2 * r2 / (c2 + r2)).sqrt()
            } else {
                0.0
            }
        }
        Basis::Yield => return plain,
    };
    // The second input section and the common mode widen the untrimmed
    // output range too: `|u| L + |K_act + u| r >= x min(L, r)`.
    let raw = raw_limit_sum(need, stock, kind);
    let cap = gain_cap(need, stock, kind, raw.min(r));
    combined_floor_v(need, combined, cap).max(plain)
}

/// Whether the loop-gain floor holds for a sequence: every stage one
/// op-amp section ([`sequence_floor_v`]).
pub(super) fn loop_gain_applies(shapes: &[Shape]) -> bool {
    !shapes.is_empty() && shapes.iter().all(|s| !s.integrated() && s.sections() == 1)
}

/// [`sequence_floor_v`] for `n` single-section stages whose first is the
/// op-amp `part`.
fn loop_gain_floor_v(need: &Need, stock: &Stock, n: usize, part: usize) -> f64 {
    loop_gain_floor_with_v(need, stock, n, part, least_tolerance(stock))
}

/// [`loop_gain_floor_v`] with the feedback resistors' least tolerance
/// `tol` (a fraction) given: the stock's least, or the least a design's
/// feedback resistors have.
fn loop_gain_floor_with_v(need: &Need, stock: &Stock, n: usize, part: usize, tol: f64) -> f64 {
    let kind = AmplifierKind::OpAmp(part);
    let plain = part_floor_v(need, stock, kind);
    let Some(share) = trim_share(need) else {
        return plain;
    };
    let limits = input_referred_limits(need, stock, kind);
    let (combined, tol) = match need.accuracy.basis {
        Basis::WorstCase => (limits.iter().map(|l| l.abs()).sum::<f64>(), tol.max(0.0)),
        Basis::Rss => (limits.iter().map(|l| l * l).sum::<f64>().sqrt(), 0.0),
        Basis::Yield => return plain,
    };
    let (k, _) = need.ideal_transfer();
    let k = k.abs();
    let span = sensor_span(need);
    let first_gain = stock.opamps[part].aol_min.ratio();
    let gain_hi = if n == 1 {
        first_gain
    } else {
        stock
            .opamps
            .iter()
            .map(|p| p.aol_min.ratio())
            .fold(first_gain, f64::max)
    };
    if !(k > 0.0 && span > 0.0 && gain_hi.is_finite() && gain_hi > 0.0) {
        return plain;
    }
    let stages = n as f64;
    let cap = gain_cap(need, stock, kind, 0.0);
    // The bound on x in [a, b] (b may be infinite), none past the cap.
    let interval = |a: f64, b: f64| -> f64 {
        if a > cap {
            return f64::INFINITY;
        }
        let b = b.min(cap);
        let distance = if b < k {
            k - b
        } else if a > k {
            a - k
        } else {
            0.0
        };
        if a <= 0.0 {
            return share * distance * span;
        }
        let tau_min = stages * a.powf(1.0 / stages) / gain_hi;
        let resistor_share = if a > 1.0 { 1.0 - 1.0 / a } else { 0.0 };
        let h = |tau: f64| {
            let systematic = (distance * span).max(tau * a * span);
            let resistors = tol * a * span * (1.0 - tau).max(0.0) * resistor_share;
            share * (systematic + resistors) + a * combined
        };
        [tau_min, (distance / a).max(tau_min), tau_min.max(1.0)]
            .into_iter()
            .map(h)
            .fold(f64::INFINITY, f64::min)
    };
    // Breakpoints: fine near |K|, coarser away from it, out to 1e6 either
    // side; the end intervals reach 0 and infinity.
    let mut points = vec![0.0];
    let mut x = k * 1e-6;
    while x < k * 1e6 {
        points.push(x);
        let ratio = if x > k / 1.05 && x < k * 1.05 {
            1.0002
        } else if x > k / 10.0 && x < k * 10.0 {
            1.01
        } else {
            1.5
        };
        x *= ratio;
    }
    points.push(k * 1e6);
    let mut least = interval(k * 1e6, f64::INFINITY);
    for pair in points.windows(2) {
        least = least.min(interval(pair[0], pair[1]));
    }
    let floor = least * (1.0 - FLOOR_MARGIN);
    if floor.is_finite() {
        floor.max(plain)
    } else {
        plain
    }
}

/// The sequence floors of a need and a stock, worked out once: the
/// loop-gain floor of every stocked op-amp for every stage count up to
/// the need's `max_stages`, and the part floor of every amplifier.
pub(super) struct SequenceFloors {
    /// `[stages - 1][op-amp]`.
    loop_gain: Vec<Vec<f64>>,
    /// Part floors of the op-amps.
    opamps: Vec<f64>,
    /// Part floors of the in-amps.
    inamps: Vec<f64>,
    /// Floors of the op-amps in a first discrete instrumentation stage.
    instrumentation: Vec<f64>,
}

impl SequenceFloors {
    /// Every floor of the need and stock.
    pub(super) fn new(need: &Need, stock: &Stock) -> SequenceFloors {
        let stages = need.search.max_stages.max(1);
        SequenceFloors {
            loop_gain: (1..=stages)
                .map(|n| {
                    (0..stock.opamps.len())
                        .map(|i| loop_gain_floor_v(need, stock, n, i))
                        .collect()
                })
                .collect(),
            opamps: (0..stock.opamps.len())
                .map(|i| part_floor_v(need, stock, AmplifierKind::OpAmp(i)))
                .collect(),
            inamps: (0..stock.inamps.len())
                .map(|i| part_floor_v(need, stock, AmplifierKind::InAmp(i)))
                .collect(),
            instrumentation: (0..stock.opamps.len())
                .map(|i| instrumentation_floor_v(need, stock, i))
                .collect(),
        }
    }

    /// [`sequence_floor_v`] of a sequence and its first stage's part.
    pub(super) fn get(&self, shapes: &[Shape], kind: AmplifierKind) -> f64 {
        match floor_rule(shapes, kind) {
            // Past `max_stages` (never walked) the part floor still holds.
            FloorRule::LoopGain { stages, part } => self
                .loop_gain
                .get(stages - 1)
                .and_then(|row| row.get(part))
                .copied()
                .unwrap_or_else(|| self.part(AmplifierKind::OpAmp(part))),
            FloorRule::Instrumentation(part) => {
                self.instrumentation.get(part).copied().unwrap_or(0.0)
            }
            FloorRule::Part(kind) => self.part(kind),
        }
    }

    /// The part floor of an amplifier ([`part_floor_v`]).
    pub(super) fn part(&self, kind: AmplifierKind) -> f64 {
        let floor = match kind {
            AmplifierKind::OpAmp(i) => self.opamps.get(i),
            AmplifierKind::InAmp(i) => self.inamps.get(i),
        };
        floor.copied().unwrap_or(0.0)
    }
}

/// The least unit cost of the finest feedback resistor (`rf`; the
/// difference stage's `r2`) of a design of `stages` single-section stages
/// whose first section is the op-amp `part`: the cheapest stocked
/// resistor, or matched-network element at its package's price per
/// element, whose tolerance leaves the loop-gain floor at or under
/// `target_v`. `None` when none does: no such design meets the need.
///
/// Proof. The loop-gain floor's resistor term ([`sequence_floor_v`]) is
/// the feedback resistors' own tolerance lines, `sum tol_j T_j |Dy| (1 -
/// 1/|g_j|)`, at least `min_j tol_j` times the sum the floor takes, every
/// other line at its floor. A network element carries half its package's
/// ratio tolerance (`analysis/params.rs`). So in a design that meets the
/// need some feedback resistor has a tolerance that keeps the floor at or
/// under the target, and costs at least the cheapest such part.
pub(super) fn feedback_cost_floor(
    need: &Need,
    stock: &Stock,
    stages: usize,
    part: usize,
    target_v: f64,
) -> Option<f64> {
    // Few distinct tolerances: the floor once per tolerance.
    let mut judged: Vec<(f64, bool)> = Vec::new();
    let mut passes = |tol: f64| {
        if let Some(&(_, ok)) = judged.iter().find(|(t, _)| *t == tol) {
            return ok;
        }
        let ok = loop_gain_floor_with_v(need, stock, stages, part, tol) <= target_v;
        judged.push((tol, ok));
        ok
    };
    role_parts(stock)
        .filter(|&(tol, _, shelf)| shelf && passes(tol))
        .map(|(_, cost, _)| cost)
        .reduce(f64::min)
}

/// The discrete resistors on the shelf as a role sees them: (relative
/// tolerance, TCR as a fraction per degC, unit cost), one row per distinct
/// triple.
fn discrete_grades(stock: &Stock) -> Vec<(f64, f64, f64)> {
    let mut rows: Vec<(f64, f64, f64)> = Vec::new();
    for r in stock.resistors.iter().filter(|r| r.stock_qty != Some(0)) {
        let row = (
            r.tolerance.0.abs() / 100.0,
            r.tcr.0.abs() * 1e-6,
            r.unit_cost,
        );
        if !rows.contains(&row) {
            rows.push(row);
        }
    }
    rows
}

/// The least value a discrete resistor on the shelf has, ohms.
fn least_discrete_value(stock: &Stock) -> f64 {
    stock
        .resistors
        .iter()
        .filter(|r| r.stock_qty != Some(0))
        .map(|r| r.value.0)
        .fold(f64::INFINITY, f64::min)
        .max(0.0)
}

/// The common-mode chain floor of a one-stage difference design: a lower
/// bound, volts at the output, on the total the analysis reports for any
/// design whose only stage is a difference stage on the op-amp `part`
/// with discrete resistors in its four matched roles (no network
/// package), whose offset node takes no stocked reference (grounded, or
/// driven by the supply, straight or through a divider, buffered or not),
/// and whose *chain* (`r4` and the offset divider's resistors) has least
/// relative tolerance `chain_tol` and least TCR `chain_tcr` (a fraction
/// per degC) over its resistors. `0` where the proof below does not
/// apply (it needs the worst-case basis, an offset trim, a differential
/// sensor with its own excitation and a common-mode tolerance, a supply
/// that is not the ADC's reference, a span starting at or above zero and
/// a positive gain).
///
/// Proof. The netlist (`shape/difference.rs`, `topology.rs`): `VCM` holds
/// `inn` at the common mode `Vcm`, `VSENSE` puts `inp` at `Vcm + s`; the
/// sensor's legs `Lp`, `Ln` lead to `r3` (to the + pin `q`) and `r1` (to
/// the - pin `m`); `r2` runs from `m` to the output, `r4` from `q` to the
/// offset node; the section is `out = A (q + vos - m)` (`A` the part's
/// minimum open-loop gain, an ideal source at DC) with `vos` and the bias
/// currents zero in the nominal solution. Write `R3 = Lp + r3`, `R1 = Ln +
/// r1`, `R4 = r4 + Rth` (`Rth` the Thevenin resistance of an unbuffered
/// divider, else 0, the node behind it a fixed `Vth`), `beta = R4 / (R3 +
/// R4)`, `gamma = R1 / (R1 + r2)`, `Gp = A / (1 + A gamma)` and `T = Gp
/// gamma`. Then `q = beta (Vcm + s) + (1 - beta) Vth`, `m = gamma out +
/// (1 - gamma) Vcm`, and `out = Gp (q - (1 - gamma) Vcm)`, so:
/// - the real gain is `x = Gp beta`, the common-mode gain
///   `Gcm = Gp (beta - 1 + gamma)` and `d out / d vos = Gp >= x`;
/// - scaling `r4` and the divider together scales `R4` alone (a buffered
///   divider's tap does not move), so the chain's sensitivities (output per
///   relative change) sum to `Sc = d out / d ln R4 = Gp beta (1 - beta)
///   (Vcm + s - Vth) = beta (Gp s + T Vcm - out)`, using `Gp (1 - beta)
///   (Vcm + s - Vth) = Gp (Vcm + s) - Gp q` and `Gp q = out + Gp (1 -
///   gamma) Vcm`;
/// - `S2 = d out / d ln r2 = -T (1 - gamma) (Vcm - out)` (from `d out / d
///   gamma = Gp (Vcm - out)`), and `R1` and `r2` scaled together change
///   nothing, so `d out / d ln r1 = (r1 / R1) (-S2)`; likewise `d out / d
///   ln r3 = -(r3 / R3) Sc`.
///
/// Bounds on the unknowns, for a design that meets the need: the
/// systematic lines carry `|x - K| S` at the high end (`least_real_gain`),
/// so `x` is in `[x_lo, x_hi] = K -/+ target / S`; the common-mode line is
/// `|Gcm| eps_cm Vcm`, so `|Gcm| <= g = target / (eps_cm Vcm)`. From `Gp
/// (1 - gamma - beta) <= g` and `Gp = A (1 - T)`: `T >= (A - x - g) / (A +
/// 1)` and `beta = x / Gp >= x / (x + g + 1)`; `gamma = T / Gp <= 1 / x`.
/// The ADC-window check keeps `out1 <= adc_high`, so `out0 <= adc_high -
/// x_lo S =: o_max`; with `s >= 0`, `Sc >= beta (T Vcm - out0) >= Sig :=
/// beta_min (T_min Vcm - o_max)` at both ends (at the high end `Sc` adds
/// `x (s0 + (1 - beta) S) >= 0`).
///
/// The lines the reported worst case sums at the high end (each a
/// different parameter, each at least as below; drift is not trimmed):
/// the chain's TCR `chain_tcr dT Sig`; the finite-gain line
/// `(1 - T) x S >= x^2 S / A`; the part's drift and supply rejection through `Gp >= x`;
/// `r2`'s tolerance `tol |S2(1) - S2(0)| = tol T (1 - gamma) x S` and TCR
/// `tcr T (1 - gamma) |Vcm - out1|`; `r1`'s share `r1 / R1 >= rmin /
/// (rmin + Ln)` of both, and `r3`'s share of the chain's TCR; and the
/// common-mode and supply lines, `eps_cm |Gcm| Vcm + eps_s |Gs| Vs >=
/// eps |out0 - x s0|` (superposition: with no reference, `out0 = x s0 +
/// Gcm Vcm + Gs Vs`; `eps` the lesser tolerance). The output-swing check asks
/// `out0` less its raw half-range to stay above the part's low swing
/// (and the window check above `adc_low`); that half-range holds the
/// chain's `(tol + tcr dT) Sig`, `r2`'s `(tol + tcr dT) |S2(0)|` and the
/// offset's `x (vos + drift dT + rejection)` untrimmed, which bounds
/// `out0` from below.
pub(super) fn difference_chain_floor_v(
    need: &Need,
    stock: &Stock,
    part: usize,
    target_v: f64,
    chain_tol: f64,
    chain_tcr: f64,
) -> f64 {
    DifferenceStage::new(need, stock, part, target_v)
        .map_or(0.0, |d| d.floor(chain_tol, chain_tcr, None, true))
}

/// The floor of [`difference_chain_floor_v`] for a design whose `r1` has
/// relative tolerance `tol`, TCR `tcr` (per degC) and value `ohms`, its
/// chain anything on the shelf, its offset node anything (a reference
/// too): the chain at the shelf's least figures, and without the
/// common-mode and supply term (the one step of the proof that needs no
/// reference). `0` where the proof does not apply. ([`difference_lines`]
/// judges by the same floor, built once.)
#[cfg(test)]
pub(super) fn difference_r1_floor_v(
    need: &Need,
    stock: &Stock,
    part: usize,
    target_v: f64,
    r1: (f64, f64, f64),
) -> f64 {
    DifferenceStage::new(need, stock, part, target_v)
        .map_or(0.0, |d| d.floor(d.least_tol, d.least_tcr, Some(r1), false))
}

/// What the proof of [`difference_chain_floor_v`] knows of every design
/// that meets the need with one difference stage on one op-amp part.
struct DifferenceStage<'a> {
    need: &'a Need,
    stock: &'a Stock,
    part: usize,
    /// The op-amp's minimum open-loop gain.
    a: f64,
    /// Common mode, its tolerance (a fraction), the low end of the signal
    /// and the span.
    vcm: f64,
    eps_cm: f64,
    s0: f64,
    span: f64,
    /// The real gain's range, and the most the common-mode gain can be.
    x_lo: f64,
    x_hi: f64,
    g: f64,
    t_min: f64,
    beta_min: f64,
    /// The most the low-end output can be (the ADC-window check).
    o_max: f64,
    /// The least the chain's sensitivities sum to, at both ends.
    sig: f64,
    /// The discrete shelf's grades ([`discrete_grades`]).
    grades: Vec<(f64, f64, f64)>,
    /// The discrete shelf's least tolerance, TCR and value.
    least_tol: f64,
    least_tcr: f64,
    r_min: f64,
    /// The sensor's legs (+, -).
    legs: (f64, f64),
}

impl<'a> DifferenceStage<'a> {
    /// `None` where the proof does not apply.
    fn new(need: &'a Need, stock: &'a Stock, part: usize, target_v: f64) -> Option<Self> {
        let sensor = &need.sensor;
        let applies = need.accuracy.basis == Basis::WorstCase
            && need.accuracy.calibration == Calibration::Offset
            && sensor.output == SensorOutput::Differential
            && sensor.excitation == Excitation::Independent
            && !need.supply.ratiometric;
        let opamp = stock.opamps.get(part)?;
        let vcm = sensor.common_mode.0;
        let eps_cm = sensor.common_mode_tolerance.fraction();
        let (s0, s1) = (sensor.signal_low.0, sensor.signal_high.0);
        let span = s1 - s0;
        let (k, _) = need.ideal_transfer();
        let a = opamp.aol_min.ratio();
        if !(applies && vcm > 0.0 && eps_cm > 0.0 && s0 >= 0.0 && span > 0.0 && k > 0.0) {
            return None;
        }
        let x_lo = k - target_v / span;
        let x_hi = k + target_v / span;
        let g = target_v / (eps_cm * vcm);
        if !(x_lo > 1.0 && a.is_finite() && a > x_hi + g) {
            return None;
        }
        let t_min = (a - x_hi - g) / (a + 1.0);
        let beta_min = x_lo / (x_lo + g + 1.0);
        let o_max = need.adc.high.0 + 1e-12 - x_lo * span;
        let sig = beta_min * (t_min * vcm - o_max);
        if sig.is_nan() || sig <= 0.0 {
            return None;
        }
        // The other roles hold discrete resistors: their least figures.
        let grades = discrete_grades(stock);
        let least = |f: fn(&(f64, f64, f64)) -> f64| {
            let v = grades.iter().map(f).fold(f64::INFINITY, f64::min);
            if v.is_finite() {
                v
            } else {
                0.0
            }
        };
        let (least_tol, least_tcr) = (least(|r| r.0), least(|r| r.1));
        Some(DifferenceStage {
            need,
            stock,
            part,
            a,
            vcm,
            eps_cm,
            s0,
            span,
            x_lo,
            x_hi,
            g,
            t_min,
            beta_min,
            o_max,
            sig,
            grades,
            least_tol,
            least_tcr,
            r_min: least_discrete_value(stock),
            legs: sensor.leg_ohms(),
        })
    }

    /// `r / (r + leg)`, 1 with both zero.
    fn share(r: f64, leg: f64) -> f64 {
        if r + leg > 0.0 {
            r / (r + leg)
        } else {
            1.0
        }
    }

    /// The floor with the chain at `chain_tol`, `chain_tcr`, `r1` at
    /// `(tol, tcr, ohms)` (the shelf's least figures and value when
    /// `None`), with the common-mode and supply term where `no_reference`.
    fn floor(
        &self,
        chain_tol: f64,
        chain_tcr: f64,
        r1: Option<(f64, f64, f64)>,
        no_reference: bool,
    ) -> f64 {
        let need = self.need;
        let (vcm, x_lo, x_hi, span, sig) = (self.vcm, self.x_lo, self.x_hi, self.span, self.sig);
        let (least_tol, least_tcr) = (self.least_tol, self.least_tcr);
        let delta_t = need.max_delta_t();
        let (leg_p, leg_n) = self.legs;
        let (r1_tol, r1_tcr, r1_ohms) = r1.unwrap_or((least_tol, least_tcr, self.r_min));
        let feedback = self.t_min * (1.0 - 1.0 / x_lo);
        // The offset's limits through `Gp >= x`, trimmed (drift and
        // rejection) and untrimmed (with the initial offset).
        let kind = AmplifierKind::OpAmp(self.part);
        let [_, drift, rejection] = input_referred_limits(need, self.stock, kind);
        let vos = self.stock.opamps[self.part].vos_max_uv.abs() * 1e-6;
        // The low end's raw half-range and so the least `out0`.
        let s2_low = feedback * (vcm - self.o_max).max(0.0);
        let raw_low = (chain_tol + chain_tcr * delta_t) * sig
            + (least_tol + least_tcr * delta_t) * s2_low
            + x_lo * (vos + drift + rejection);
        let (swing_low, _) = output_swing(need, self.stock, kind);
        let out0_min = (swing_low - 2.0 * VOLTAGE_SLACK).max(need.adc.low.0 - 1e-12) + raw_low;
        let out1_min = out0_min + x_lo * span;
        let far_from_cm = if out1_min > vcm {
            out1_min - vcm
        } else if need.adc.high.0 < vcm {
            vcm - need.adc.high.0
        } else {
            0.0
        };
        // `r2`'s tolerance and TCR lines per unit of each, and `r1`'s
        // share of them.
        let (span_move, end_move) = (feedback * x_lo * span, delta_t * feedback * far_from_cm);
        let r2_lines = least_tol * span_move + least_tcr * end_move;
        let r1_lines = Self::share(r1_ohms, leg_n) * (r1_tol * span_move + r1_tcr * end_move);
        let common = if no_reference {
            let eps = self.eps_cm.min(need.supply.tolerance.fraction().max(0.0));
            eps * (out0_min - x_hi * self.s0).max(0.0)
        } else {
            0.0
        };
        let floor = chain_tcr * delta_t * sig
            + x_lo * x_lo * span / self.a
            + x_lo * (drift + rejection)
            + r2_lines
            + r1_lines
            + Self::share(self.r_min, leg_p) * least_tcr * delta_t * sig
            + common;
        if floor.is_finite() {
            floor * (1.0 - FLOOR_MARGIN)
        } else {
            0.0
        }
    }
}

/// The BOM lines of a one-stage difference design on the op-amp `part`
/// whose resistors are all discrete, given the filter pair's series
/// resistor rows `tied` (every row the pair rule may take for the part:
/// relative tolerance, TCR per degC, value): `Some(extra)` where `r1`,
/// `r2` and the pair's resistor are proven three different rows (three
/// BOM lines), `extra` being what a design with no offset divider and no
/// reference (grounded or straight from the supply) adds beyond them, the
/// least-cost roles and the finest `r2` and chain part (one more line, or
/// the dearer `r1` that the one way left to three rows asks); `None`
/// where nothing is proven.
///
/// Proof (the netlist and bounds of [`difference_chain_floor_v`]). Write
/// `P1`, `P2`, `P3` for the rows of `r1`, `r2` and the pair's resistor.
/// - `P1 != P2`: one value in `r1` and `r2` gives
///   `gamma = R1 / (R1 + r2) >= 1/2` and `x <= Gp <= 1 / gamma <= 2`,
///   under `x_lo` when that is over 2.
/// - `P2 != P3`: `r2` is the stage's feedback resistor, and the
///   loop-gain floor at a tied row's tolerance is over the target.
/// - `P1 != P3`: the `r1` floor (`DifferenceStage::floor` with `r1`'s
///   figures, without the common-mode and supply term) at a tied row's
///   figures and value is over the target.
///
/// With exactly those three rows and no divider (so `R4 = r4`), `r3` and
/// `r4` take rows among them:
/// - `r4 = P3`: only where a tied row passes the chain floor;
/// - `r4 = P1` (`r4` and `r1` one value `v`): `1 - beta <= (1 + g) / x_lo`
///   (from `Gp (1 - gamma - beta) <= g`, `Gp >= x_lo`, `gamma <= 1 / x_lo`)
///   asks `v >= R3 (x_lo / (1 + g) - 1)` with `R3 >= leg + rmin`, and
///   `gamma <= 1 / x_lo` asks `r2 >= (v + leg) (x_lo - 1)`: impossible
///   when that is over the shelf's largest value;
/// - `r4 = P2, r3 = P1`: `R1 = R3` and `r2 = r4` make `beta = 1 - gamma`,
///   a common-mode gain of exactly 0, so the low-end output is `x s0`
///   grounded (under the swing and window limits when `x_hi s0` is) or
///   `x s0 + T Vs` from the supply (over `o_max` when `T_min Vs` is);
/// - `r4 = P2, r3 = P2`: `R3 >= r2 = R4`, so `beta <= 1/2` and `|Gcm| =
///   Gp (1 - gamma - beta) >= x_lo / 2 - 1`, over `g` when that is;
/// - `r4 = P2, r3 = P3`: `Gcm = x gamma (1 - R3 / R1)` and `x gamma = T
///   beta`, so `R1 >= R3 / (1 + g / (T_min beta_min))` with `R3` at least
///   the least tied value plus the leg: `r1` at least that less its leg,
///   of a grade whose `r1` floor at that value passes.
pub(super) fn difference_lines(
    need: &Need,
    stock: &Stock,
    part: usize,
    target_v: f64,
    tied: &[(f64, f64, f64)],
    least_per_role: f64,
    line: f64,
) -> Option<f64> {
    let d = DifferenceStage::new(need, stock, part, target_v)?;
    if tied.is_empty() || d.x_lo <= 2.0 {
        return None;
    }
    // The floors rise with the tolerance, the TCR and `r1`'s value: each
    // grade of the tied rows is judged once, at its least value.
    let r1_fails = |tol: f64, tcr: f64, ohms: f64| {
        d.floor(d.least_tol, d.least_tcr, Some((tol, tcr, ohms)), false) > target_v
    };
    let mut tied_grades: Vec<(f64, f64, f64)> = Vec::new();
    for &(tol, tcr, ohms) in tied {
        match tied_grades.iter_mut().find(|g| g.0 == tol && g.1 == tcr) {
            Some(g) => g.2 = g.2.min(ohms),
            None => tied_grades.push((tol, tcr, ohms)),
        }
    }
    let three_rows = tied_grades.iter().all(|&(tol, tcr, ohms)| {
        loop_gain_floor_with_v(need, stock, 1, part, tol) > target_v && r1_fails(tol, tcr, ohms)
    });
    if !three_rows {
        return None;
    }
    let (leg_p, leg_n) = d.legs;
    let r_max = stock
        .resistors
        .iter()
        .filter(|r| r.stock_qty != Some(0))
        .map(|r| r.value.0)
        .fold(0.0, f64::max);
    // Each way to three rows left open adds what it must (0: nothing
    // proven).
    let mut extra = line;
    // r4 = P3.
    if tied_grades
        .iter()
        .any(|&(tol, tcr, _)| d.floor(tol, tcr, None, true) <= target_v)
    {
        extra = 0.0;
    }
    // r4 = P1.
    let c = (1.0 + d.g) / d.x_lo;
    let v_min = (leg_p + d.r_min) * (1.0 / c - 1.0);
    if !(c < 1.0 && (v_min + leg_n) * (d.x_lo - 1.0) > r_max) {
        extra = 0.0;
    }
    // r4 = P2, r3 = P1: grounded, or straight from the supply.
    let (swing_low, _) = output_swing(need, stock, AmplifierKind::OpAmp(part));
    let floor_low = (swing_low - 2.0 * VOLTAGE_SLACK).max(need.adc.low.0 - 1e-12);
    let grounded_fails = d.x_hi * d.s0 < floor_low;
    let supply_v = need.supply.positive.0 * (1.0 - need.supply.tolerance.fraction().abs());
    let supplied_fails = d.t_min * supply_v + d.x_lo * d.s0 > d.o_max;
    if !(grounded_fails && supplied_fails) {
        extra = 0.0;
    }
    // r4 = P2, r3 = P2.
    if d.x_lo / 2.0 - 1.0 <= d.g {
        extra = 0.0;
    }
    // r4 = P2, r3 = P3: r1 at least `r1_lo`, of a grade that passes there.
    let least_tied = tied.iter().map(|t| t.2).fold(f64::INFINITY, f64::min);
    let delta = d.g / (d.t_min * d.beta_min);
    let r1_lo = ((least_tied + leg_p) / (1.0 + delta) - leg_n).max(d.r_min);
    // Judged at `r1_lo` itself, below every value it may take: a grade
    // whose floor passes there is kept.
    let r1_cost = d
        .grades
        .iter()
        .filter(|&&(tol, tcr, _)| !r1_fails(tol, tcr, r1_lo))
        .map(|g| g.2)
        .fold(f64::INFINITY, f64::min);
    extra = extra.min((r1_cost - least_per_role).max(0.0));
    Some(extra)
}

/// The least unit cost of the finest part in the chain (`r4` and the
/// offset divider) of a one-stage difference design on the op-amp `part`
/// with discrete matched roles and no stocked reference at its offset
/// node: by
/// [`difference_chain_floor_v`], some chain resistor has the least
/// tolerance of the chain and some the least TCR (perhaps one), with the
/// floor at those two figures at or under the target, so the chain holds
/// a part at least as dear as the cheaper of any two stock grades `(p, q)`
/// with `floor(tol_p, tcr_q) <= target`, taken at the dearer of the two.
/// The unit cost of that part; `None` when no pair of grades passes
/// (such designs all need a reference). Where the floor does not apply
/// every grade passes, and this is the least.
pub(super) fn difference_chain_cost(
    need: &Need,
    stock: &Stock,
    part: usize,
    target_v: f64,
) -> Option<f64> {
    let grades = discrete_grades(stock);
    let mut best: Option<f64> = None;
    for p in &grades {
        for q in &grades {
            let cost = p.2.max(q.2);
            if best.is_some_and(|b| cost >= b) {
                continue;
            }
            if difference_chain_floor_v(need, stock, part, target_v, p.0, q.1) <= target_v {
                best = Some(cost);
            }
        }
    }
    best
}

/// The least real gain `|K_act|` of any design that meets the need, from
/// the systematic lines alone: they carry at least `share | |K_act| - |K| |
/// S` (the part floor's argument; `share` 1 with an offset trim, 1/2
/// without), so `|K_act| >= |K| - target / (share S)`. Zero with a
/// two-point trim or on the yield basis.
pub(super) fn least_real_gain(need: &Need, target_v: f64) -> f64 {
    let Some(share) = trim_share(need) else {
        return 0.0;
    };
    let (k, _) = need.ideal_transfer();
    let span = sensor_span(need);
    if span > 0.0 {
        ((k.abs() - target_v / (share * span)) * (1.0 - FLOOR_MARGIN)).max(0.0)
    } else {
        0.0
    }
}

/// The least error, volts at the output, the analysis can report on the
/// need's basis for any design whose last stage's output comes from this
/// part (an op-amp section, or an integrated in-amp), from its output
/// swing alone; `ideal` is the ideal output at the two span ends.
///
/// Proof. The output-swing check (`analysis/feasibility.rs`) asks the
/// output node of every section to stay, at both span ends and every part
/// at its limits, within `[negative + h_low, positive (1 - tolerance) -
/// h_high]` (plus the check's 1 nV slack), so the nominal outputs `out0`,
/// `out1` of a design that passes lie in that interval. The last
/// section's output is the chain's output at DC (the filter pair's series
/// resistor carries no DC current: its capacitor and the ADC pin draw
/// none). The systematic lines add up to the output error
/// `e = out - ideal` (the floor above), and the reported total at an end
/// is at least the sum of their magnitudes after calibration, so at least
/// `|e|` (uncalibrated) or `|e1 - e0|` (offset calibration, which leaves
/// `[0, e1 - e0]`), random and droop terms being non-negative:
/// - no calibration: at an end whose ideal output is outside the
///   interval, `|e|` is at least the distance from the ideal to it;
/// - offset calibration: `|out1 - out0|` is at most the interval's width,
///   so `|e1 - e0|` is at least the ideal span less that width.
///
/// A two-point trim maps any two outputs onto the ideal, and the yield
/// basis judges random builds whose draws may offset the nominal error,
/// so neither gets a floor.
pub(super) fn swing_floor_v(
    need: &Need,
    stock: &Stock,
    kind: AmplifierKind,
    ideal: [f64; 2],
) -> f64 {
    if need.accuracy.basis == Basis::Yield {
        return 0.0;
    }
    // The check's interval, widened by twice its slack.
    let (low, high) = output_swing(need, stock, kind);
    let (low, high) = (low - 2.0 * VOLTAGE_SLACK, high + 2.0 * VOLTAGE_SLACK);
    let floor = match need.accuracy.calibration {
        Calibration::TwoPoint => return 0.0,
        // No output passes an empty interval: nothing meets the need.
        _ if low > high => return f64::INFINITY,
        Calibration::None => ideal
            .iter()
            .map(|&y| (low - y).max(y - high).max(0.0))
            .fold(0.0, f64::max),
        Calibration::Offset => ((ideal[1] - ideal[0]).abs() - (high - low)).max(0.0),
    };
    if floor.is_finite() {
        floor * (1.0 - FLOOR_MARGIN)
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::need::parse_need;

    /// [`need`] with 5 % of ADC margin each end (K = 90), so the window
    /// cap on the real gain stays above `K`.
    fn need_with_margin(calibration: &str, basis: &str) -> Need {
        let mut n = need(calibration, basis);
        n.adc.margin = crate::units::Percent(5.0);
        n
    }

    fn need(calibration: &str, basis: &str) -> Need {
        let text = format!(
            "[sensor]\nsignal_low_v = 0.0\nsignal_high_v = 0.02\noutput = \"single-ended\"\n\
             [adc]\nlow_v = 0.0\nhigh_v = 2.0\nbits = 12\nmargin_pct = 0.0\n\
             [supply]\npositive_v = 5.0\nnegative_v = 0.0\ntolerance_pct = 2.0\n\
             [accuracy]\nmax_error_pct_fs = 1.0\ncalibration = \"{calibration}\"\n\
             basis = \"{basis}\"\ntemp_min_c = -15.0\ntemp_max_c = 45.0\n"
        );
        parse_need(text.as_bytes(), "floor.toml").expect("the test need parses")
    }

    /// Worst case with offset calibration: `|K| x (drift + rejection)`,
    /// the initial offset taken out by the trim (K = 100 here, excursion
    /// 40 degC).
    #[test]
    fn worst_case_offset_floor_is_gain_times_the_sum() {
        let n = need("offset", "worst-case");
        let limits = [0.0, 3e-6 * 40.0, 1e-5];
        let want = 100.0 * (1.2e-4 + 1e-5);
        let got = error_floor_v(&n, &limits, f64::INFINITY);
        assert!(
            (got - want).abs() <= 2.0 * FLOOR_MARGIN * want,
            "{got} vs {want}"
        );
    }

    /// RSS takes the root-sum-square of the same limits; no calibration
    /// keeps the initial offset among them.
    #[test]
    fn rss_and_uncalibrated_floors() {
        let n = need("none", "rss");
        let limits = [3e-4, 4e-4, 0.0];
        let got = error_floor_v(&n, &limits, f64::INFINITY);
        assert!(
            (got - 100.0 * 5e-4).abs() <= 2.0 * FLOOR_MARGIN * 0.05,
            "{got}"
        );
        // The floor never passes what the rounding alone could show: a
        // huge limit gives |K| S / 2 without calibration.
        let huge = error_floor_v(&n, &[1.0, 0.0, 0.0], f64::INFINITY);
        assert!((huge - 100.0 * 0.01).abs() <= 2.0 * FLOOR_MARGIN, "{huge}");
    }

    /// A two-point trim and the yield basis get no floor.
    #[test]
    fn two_point_and_yield_have_no_floor() {
        let limits = [1e-3, 1e-3, 1e-3];
        assert_eq!(
            error_floor_v(&need("two-point", "worst-case"), &limits, f64::INFINITY),
            0.0
        );
        assert_eq!(
            error_floor_v(&need("offset", "yield"), &limits, f64::INFINITY),
            0.0
        );
        assert!(error_floor_v(&need("offset", "worst-case"), &limits, f64::INFINITY) > 0.0);
    }

    /// The floor is the least over every real gain of the bound it rests
    /// on: scanning `x` finds nothing below it.
    #[test]
    fn floor_is_the_least_over_every_real_gain() {
        for (calibration, share) in [("offset", 1.0), ("none", 0.5)] {
            let n = need(calibration, "worst-case");
            for c in [1e-6, 1e-4, 1e-3, 0.05] {
                let floor = error_floor_v(&n, &[c, 0.0, 0.0], f64::INFINITY);
                for i in 0..=400 {
                    let x = f64::from(i) * 0.5;
                    let bound = (x - 100.0).abs() * 0.02 * share + x * c;
                    assert!(floor <= bound * (1.0 + 1e-12), "{calibration} c {c} x {x}");
                }
            }
        }
    }

    /// The part's limits are read as the analysis reads them: the drift
    /// over the largest excursion from 25 degC, and the supply's range over
    /// the rejection.
    #[test]
    fn limits_follow_the_parameters() {
        let n = need("offset", "worst-case");
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).expect("demo stock");
        let i = stock
            .opamps
            .iter()
            .position(|p| p.part_id == "OA-RR1")
            .expect("OA-RR1 in the demo stock");
        let limits = input_referred_limits(&n, &stock, AmplifierKind::OpAmp(i));
        let p = &stock.opamps[i];
        assert_eq!(limits[0], 0.0);
        assert!((limits[1] - p.vos_drift_uv_per_c * 1e-6 * 40.0).abs() < 1e-15);
        assert!((limits[2] - 0.1 / p.psrr_min.ratio()).abs() < 1e-15);
    }
    /// A stock of one resistor row (1 %) and one op-amp row with the
    /// given open-loop gain (dB) and offset drift (uV/degC).
    fn loop_stock(aol_db: f64, drift: f64) -> Stock {
        crate::stock::parse_stock(&[
            crate::stock::StockFile {
                name: "resistors.csv".into(),
                bytes: b"part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\nT-R,1000,1,100,0603,0.01,\n".to_vec(),
            },
            crate::stock::StockFile {
                name: "opamps.csv".into(),
                bytes: format!(
                    "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
                     T-LG,1,2.7,12,0,0,0.05,0.1,10,{drift},0.1,0.1,{aol_db},2,20,0.1,110,0.1,\n"
                )
                .into_bytes(),
            },
        ])
        .expect("the test stock parses")
    }

    /// The loop-gain floor is the least of the bound it rests on: a scan
    /// of the real gain `x` and the finite-gain share `tau` (at least its
    /// least, `n x^(1/n) / A`) finds nothing below it, and comes within a
    /// hair of it; with a low open-loop gain it passes the part floor.
    #[test]
    fn loop_gain_floor_is_the_least_of_its_bound() {
        let stock = loop_stock(80.0, 0.5);
        let gain = 1e4;
        for (calibration, share) in [("offset", 1.0), ("none", 0.5)] {
            let n = need_with_margin(calibration, "worst-case");
            let limits = input_referred_limits(&n, &stock, AmplifierKind::OpAmp(0));
            let c: f64 = limits.iter().sum();
            let (k, s, tol) = (90.0, 0.02, 0.01);
            for stages in 1..=2usize {
                let floor = loop_gain_floor_v(&n, &stock, stages, 0);
                let mut least = f64::INFINITY;
                for i in 1..=6000 {
                    let x = f64::from(i) * 0.05;
                    let tau_min = stages as f64 * x.powf(1.0 / stages as f64) / gain;
                    for j in 0..=200 {
                        let tau = tau_min + f64::from(j) * 0.002;
                        let resistors =
                            tol * x * s * (1.0 - tau).max(0.0) * (1.0 - 1.0 / x).max(0.0);
                        let g = share * ((x - k).abs() * s).max(tau * x * s)
                            + share * resistors
                            + x * c;
                        assert!(
                            floor <= g * (1.0 + 1e-12),
                            "{calibration} {stages}: floor {floor} over {g} at x {x} tau {tau}"
                        );
                        least = least.min(g);
                    }
                }
                assert!(
                    floor >= 0.995 * least,
                    "{calibration} {stages}: {floor} vs {least}"
                );
            }
            let one = loop_gain_floor_v(&n, &stock, 1, 0);
            let plain = part_floor_v(&n, &stock, AmplifierKind::OpAmp(0));
            assert!(one > 1.5 * plain, "{calibration}: {one} vs {plain}");
        }
    }

    /// The finest feedback resistor: the cheap 1 % row while its floor is
    /// under the target, the dear 0.1 % row when only its floor is, none
    /// when neither is; the floor grows with the tolerance.
    #[test]
    fn feedback_cost_floor_picks_the_grade_the_target_allows() {
        let mut stock = loop_stock(120.0, 0.05);
        let mut fine = stock.resistors[0].clone();
        fine.part_id = "T-R01".into();
        fine.tolerance = crate::units::Percent(0.1);
        fine.unit_cost = 0.05;
        stock.resistors.push(fine);
        let n = need_with_margin("offset", "worst-case");
        let coarse = loop_gain_floor_with_v(&n, &stock, 1, 0, 0.01);
        let finer = loop_gain_floor_with_v(&n, &stock, 1, 0, 0.001);
        assert!(finer < coarse, "{finer} vs {coarse}");
        // The resistor term is about tol |K| S: 1 % of 1.8 V.
        assert!(coarse - finer > 0.8 * 0.009 * 1.8, "{coarse} {finer}");
        let pick = |target: f64| feedback_cost_floor(&n, &stock, 1, 0, target);
        assert_eq!(pick(coarse * 1.01), Some(0.01));
        assert_eq!(pick(0.5 * (coarse + finer)), Some(0.05));
        assert_eq!(pick(finer * 0.99), None);
        // Two stages: the same rule on the two-stage floor.
        assert!(feedback_cost_floor(&n, &stock, 2, 0, coarse * 1.01).is_some());
    }

    /// The least real gain: `|K|` less the target over the span (offset
    /// trim), or over half the span (no trim); nothing with a two-point
    /// trim or on the yield basis.
    #[test]
    fn least_real_gain_by_calibration() {
        let near = |a: f64, b: f64| (a - b).abs() < 1e-4;
        assert!(near(
            least_real_gain(&need("offset", "worst-case"), 0.2),
            90.0
        ));
        assert!(near(least_real_gain(&need("none", "rss"), 0.2), 80.0));
        assert_eq!(least_real_gain(&need("two-point", "worst-case"), 0.2), 0.0);
        assert_eq!(least_real_gain(&need("offset", "yield"), 0.2), 0.0);
        assert_eq!(least_real_gain(&need("offset", "worst-case"), 5.0), 0.0);
    }

    /// Sequences with an integrated in-amp or a three-section stage after
    /// the first get the part floor alone; a first discrete
    /// instrumentation stage gets the common-mode floor, which is the part
    /// floor for a single-ended sensor.
    #[test]
    fn sequence_floor_by_shapes() {
        let stock = loop_stock(80.0, 0.5);
        let n = need("offset", "worst-case");
        let part = AmplifierKind::OpAmp(0);
        let plain = part_floor_v(&n, &stock, part);
        let one = sequence_floor_v(&n, &stock, &[Shape::NonInverting], part);
        assert!(one > plain);
        let mixed = [Shape::NonInverting, Shape::InstrumentationDiscrete];
        assert_eq!(sequence_floor_v(&n, &stock, &mixed, part), plain);
        let first = [Shape::InstrumentationDiscrete];
        assert_eq!(sequence_floor_v(&n, &stock, &first, part), plain);
        let floors = SequenceFloors::new(&n, &stock);
        for shapes in [&[Shape::NonInverting][..], &mixed, &first] {
            assert_eq!(
                floors.get(shapes, part),
                sequence_floor_v(&n, &stock, shapes, part)
            );
        }
    }

    /// A first discrete instrumentation stage on a differential sensor
    /// whose common mode is uncertain by far more than the part's limits
    /// pays the limits twice (both input sections): `|K| 2 C`.
    #[test]
    fn instrumentation_floor_counts_both_input_sections() {
        let stock = loop_stock(120.0, 0.5);
        let text =
            "[sensor]\nsignal_low_v = 0.0\nsignal_high_v = 0.02\noutput = \"differential\"\n\
             common_mode_v = 2.5\ncommon_mode_tolerance_pct = 2.0\nexcitation = \"independent\"\n\
             [adc]\nlow_v = 0.0\nhigh_v = 2.0\nbits = 12\nmargin_pct = 5.0\n\
             [supply]\npositive_v = 5.0\nnegative_v = 0.0\ntolerance_pct = 2.0\n\
             [accuracy]\nmax_error_pct_fs = 1.0\ncalibration = \"offset\"\n\
             basis = \"worst-case\"\ntemp_min_c = -15.0\ntemp_max_c = 45.0\n";
        let n = parse_need(text.as_bytes(), "floor.toml").expect("the test need parses");
        let part = AmplifierKind::OpAmp(0);
        let c: f64 = input_referred_limits(&n, &stock, part).iter().sum();
        let got = sequence_floor_v(&n, &stock, &[Shape::InstrumentationDiscrete], part);
        let want = 90.0 * 2.0 * c;
        assert!(
            (got - want).abs() <= 2.0 * FLOOR_MARGIN * want,
            "{got} vs {want}"
        );
    }

    /// The swing floor: the distance from the ideal outputs to what the
    /// part can reach without calibration, the ideal span beyond its reach
    /// with an offset trim, nothing with a two-point trim or on the yield
    /// basis (single 5 V rail within 2 %, so the part reaches 0.05 V to
    /// 4.9 V - 0.1 V = 4.8 V).
    #[test]
    fn swing_floor_by_calibration() {
        let stock = crate::stock::parse_stock(&[
            crate::stock::StockFile {
                name: "resistors.csv".into(),
                bytes: b"part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\nT-R,1000,1,100,0603,0.01,\n".to_vec(),
            },
            crate::stock::StockFile {
            name: "opamps.csv".into(),
            bytes: "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
                    T-SW,1,2.7,12,0,0,0.05,0.1,10,0.05,0.1,0.1,120,2,20,0.1,110,0.1,\n"
                .as_bytes()
                .to_vec(),
        }
        ])
        .expect("the test stock parses");
        let part = AmplifierKind::OpAmp(0);
        let near = |a: f64, b: f64| (a - b).abs() <= 1e-6;
        // Ideal 0 V to 2 V: 50 mV short at the low end.
        let none = swing_floor_v(&need("none", "worst-case"), &stock, part, [0.0, 2.0]);
        assert!(near(none, 0.05), "{none}");
        // Ideal 0.01 V to 4.85 V: 50 mV over at the high end, 40 mV short
        // at the low end; the larger counts.
        let none = swing_floor_v(&need("none", "rss"), &stock, part, [0.01, 4.85]);
        assert!(near(none, 0.05), "{none}");
        // Offset trim: a 4.85 V span against 4.75 V of reach.
        let offset = swing_floor_v(&need("offset", "worst-case"), &stock, part, [0.0, 4.85]);
        assert!(near(offset, 0.1), "{offset}");
        let inside = swing_floor_v(&need("offset", "worst-case"), &stock, part, [0.0, 2.0]);
        assert_eq!(inside, 0.0);
        assert_eq!(
            swing_floor_v(&need("two-point", "worst-case"), &stock, part, [0.0, 4.85]),
            0.0
        );
        assert_eq!(
            swing_floor_v(&need("none", "yield"), &stock, part, [0.0, 4.85]),
            0.0
        );
    }

    /// The demo need and stock, the precise op-amp's index and the target
    /// in volts.
    fn demo_zd1() -> (Need, Stock, usize, f64) {
        let need =
            crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo").expect("demo need");
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).expect("demo stock");
        let part = stock
            .opamps
            .iter()
            .position(|p| p.part_id == "OA-ZD1")
            .expect("OA-ZD1");
        let target = need.accuracy.max_error_pct_fs / 100.0 * need.full_scale();
        (need, stock, part, target)
    }

    /// The chain floor of a one-stage difference design against the
    /// analysis itself: over a grid of demo designs (grounded and
    /// supply-divider offsets, every grade mix of the chain), each design
    /// that passes its checks with a high-end total within a target has a
    /// total at least the floor at its chain's least figures, for targets
    /// from the demo's to four times it; and at the demo's target the
    /// floor rules the coarse grade out of the chain and lets the fine one
    /// in.
    #[test]
    fn difference_chain_floor_is_below_every_analysed_design() {
        use crate::analysis::Model;
        use crate::series::value_code;
        use crate::shape::Role;
        let (need, stock, part, target) = demo_zd1();
        let (coarse, fine) = ((0.01, 100e-6), (0.001, 25e-6));
        assert!(difference_chain_floor_v(&need, &stock, part, target, coarse.0, coarse.1) > target);
        assert!(difference_chain_floor_v(&need, &stock, part, target, fine.0, fine.1) <= target);
        let id = |grade: &str, ohms: f64| format!("\"HR-{grade}-{}\"", value_code(ohms));
        let grade = |fine: bool| if fine { "F01" } else { "F1" };
        let mut checked = 0;
        let r1s = [10.0, 16.9, 34.8, 100.0, 301.0, 1000.0];
        for &r1 in &r1s {
            for mask in 0..16u32 {
                let fine_at = |bit: u32| mask & (1 << bit) != 0;
                // r2 from the gain, r4 from a common-mode gain of about
                // 0.02 to 0.04 (a grounded offset) or about 0 (a divider).
                let leg = 175.0;
                let r2 = crate::series::Series::E96.nearest(115.2 * (r1 + leg));
                for (divider, spread, source) in [
                    (false, 1.02, "supply"),
                    (false, 1.035, "supply"),
                    (true, 1.0, "supply"),
                    (true, 1.0, "VR-125"),
                ] {
                    let r3 = r1;
                    let r4 = crate::series::Series::E96.nearest(r2 * spread);
                    let offset = if divider {
                        let top = if source == "supply" { 82500.0 } else { 20000.0 };
                        format!(
                            r#"{{"kind": "divider", "source": "{source}", "top": {}, "bottom": {}, "buffered": false}}"#,
                            id(grade(fine_at(2)), top),
                            id(grade(fine_at(3)), 1000.0)
                        )
                    } else {
                        r#"{"kind": "ground"}"#.to_string()
                    };
                    let text = format!(
                        r#"{{"format": "spanfit-design-1", "stages": [{{"shape": "difference", "amplifier": "OA-ZD1", "offset": {offset}, "resistors": {{"r1": {}, "r2": {}, "r3": {}, "r4": {}}}}}]}}"#,
                        id(grade(fine_at(0)), r1),
                        id("F01", r2),
                        id(grade(fine_at(1)), r3),
                        id(grade(fine_at(0) || !divider && fine_at(2)), r4),
                    );
                    let design = crate::design::parse_design(text.as_bytes(), "grid", &stock)
                        .expect("grid design");
                    let model = Model::new(&need, &stock, &design).expect("model");
                    if !model.feasible() {
                        continue;
                    }
                    let total = model.floor_at_ends(Basis::WorstCase)[1];
                    let chain: Vec<(f64, f64)> = design.stages[0]
                        .resistors
                        .iter()
                        .filter(|(role, _)| {
                            matches!(role, Role::R4 | Role::OffsetTop | Role::OffsetBottom)
                        })
                        .map(|(_, r)| (r.tolerance_pct / 100.0, r.tcr_ppm_per_c * 1e-6))
                        .chain(match &design.stages[0].offset {
                            crate::design::Injection::Divider { top, bottom, .. } => vec![
                                (top.tolerance_pct / 100.0, top.tcr_ppm_per_c * 1e-6),
                                (bottom.tolerance_pct / 100.0, bottom.tcr_ppm_per_c * 1e-6),
                            ],
                            _ => Vec::new(),
                        })
                        .collect();
                    let tol = chain.iter().map(|c| c.0).fold(f64::INFINITY, f64::min);
                    let tcr = chain.iter().map(|c| c.1).fold(f64::INFINITY, f64::min);
                    let r1 = &design.stages[0].resistors[&Role::R1];
                    let r1_figures = (r1.tolerance_pct / 100.0, r1.tcr_ppm_per_c * 1e-6, r1.ohms);
                    let referenced = source != "supply" && divider;
                    for scale in [1.0, 1.5, 2.0, 3.0, 4.0] {
                        let t = target * scale;
                        if total <= t {
                            // The chain floor holds without a reference.
                            if !referenced {
                                let floor =
                                    difference_chain_floor_v(&need, &stock, part, t, tol, tcr);
                                assert!(
                                    floor <= total * (1.0 + 1e-9),
                                    "floor {floor} over the total {total} at target {t}: {text}"
                                );
                            }
                            // The r1 floor holds whatever the offset.
                            let floor = difference_r1_floor_v(&need, &stock, part, t, r1_figures);
                            assert!(
                                floor <= total * (1.0 + 1e-9),
                                "r1 floor {floor} over the total {total} at target {t}: {text}"
                            );
                            checked += 1;
                        }
                    }
                }
            }
        }
        assert!(checked > 100, "only {checked} designs checked");
    }

    /// The demo's lines: `r1`, `r2` and the filter's resistor on three
    /// rows, and a design with neither divider nor reference either takes
    /// a fourth line or a fine `r1` (the one way left to three rows with
    /// `r3` on the filter's row asks `r1` near the bridge's leg and more).
    #[test]
    fn the_demo_difference_stage_holds_three_rows() {
        let (need, stock, part, target) = demo_zd1();
        let pairs = super::super::pair::FilterPairs::new(&need, &stock);
        let tied = pairs.tied_series(part).expect("the demo's pair is fixed");
        assert!(!tied.is_empty());
        assert!(tied.iter().all(|t| t.2 >= 300.0 * 0.99), "{tied:?}");
        let least = stock
            .resistors
            .iter()
            .map(|r| r.unit_cost)
            .fold(f64::INFINITY, f64::min);
        let extra = difference_lines(&need, &stock, part, target, &tied, least, 0.05)
            .expect("three rows proven on the demo");
        let fine_extra = 0.045 - 0.004;
        assert!((extra - fine_extra).abs() < 1e-9, "{extra}");
        // A coarse r1 at the filter's least value would miss by far.
        let coarse = (0.01, 100e-6, 300.0);
        assert!(difference_r1_floor_v(&need, &stock, part, target, coarse) > 1.3 * target);
    }
}
