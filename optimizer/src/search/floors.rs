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

use crate::analysis::feasibility::{output_swing, VOLTAGE_SLACK};
use crate::need::{Basis, Calibration, Need};
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
pub(super) fn error_floor_v(need: &Need, limits: &[f64]) -> f64 {
    let (k, _) = need.ideal_transfer();
    let span = (need.sensor.signal_high.0 - need.sensor.signal_low.0).abs();
    let combined = match need.accuracy.basis {
        Basis::WorstCase => limits.iter().map(|l| l.abs()).sum::<f64>(),
        Basis::Rss => limits.iter().map(|l| l * l).sum::<f64>().sqrt(),
        Basis::Yield => return 0.0,
    };
    let rounding = match need.accuracy.calibration {
        Calibration::Offset => span,
        Calibration::None => span / 2.0,
        Calibration::TwoPoint => return 0.0,
    };
    let floor = k.abs() * rounding.min(combined);
    if floor.is_finite() {
        floor * (1.0 - FLOOR_MARGIN)
    } else {
        0.0
    }
}

/// The error floor of a first-stage part, volts at the output.
pub(super) fn part_floor_v(need: &Need, stock: &Stock, kind: AmplifierKind) -> f64 {
    error_floor_v(need, &input_referred_limits(need, stock, kind))
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
        let got = error_floor_v(&n, &limits);
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
        let got = error_floor_v(&n, &limits);
        assert!(
            (got - 100.0 * 5e-4).abs() <= 2.0 * FLOOR_MARGIN * 0.05,
            "{got}"
        );
        // The floor never passes what the rounding alone could show: a
        // huge limit gives |K| S / 2 without calibration.
        let huge = error_floor_v(&n, &[1.0, 0.0, 0.0]);
        assert!((huge - 100.0 * 0.01).abs() <= 2.0 * FLOOR_MARGIN, "{huge}");
    }

    /// A two-point trim and the yield basis get no floor.
    #[test]
    fn two_point_and_yield_have_no_floor() {
        let limits = [1e-3, 1e-3, 1e-3];
        assert_eq!(
            error_floor_v(&need("two-point", "worst-case"), &limits),
            0.0
        );
        assert_eq!(error_floor_v(&need("offset", "yield"), &limits), 0.0);
        assert!(error_floor_v(&need("offset", "worst-case"), &limits) > 0.0);
    }

    /// The floor is the least over every real gain of the bound it rests
    /// on: scanning `x` finds nothing below it.
    #[test]
    fn floor_is_the_least_over_every_real_gain() {
        for (calibration, share) in [("offset", 1.0), ("none", 0.5)] {
            let n = need(calibration, "worst-case");
            for c in [1e-6, 1e-4, 1e-3, 0.05] {
                let floor = error_floor_v(&n, &[c, 0.0, 0.0]);
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
}
