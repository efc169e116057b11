//! The filter's figures from the AC analysis of the whole chain (stage
//! amplifiers as single-pole models, the chosen pair in the netlist) and
//! from the closed forms of the drive.

use super::{
    bounds, choose_preferring, driver, kickback, with_filter, Driver, FilterParts,
    DROOP_SHARE_OF_TARGET, PHASE_MARGIN_TARGET_DEG, RESERVOIR_RATIO,
};
use crate::mna_ac::{bode, log_frequencies, AcAmplifier, AcSolver, BodePoint};
use crate::need::Need;
use crate::stock::{Stock, DEFAULT_OUTPUT_OHMS};
use crate::topology::{AmplifierKind, Built};
use serde::Serialize;
use std::collections::BTreeMap;
use std::f64::consts::PI;

/// Points of the reported Bode data (six decades, ten a decade, ends
/// included).
pub const BODE_POINTS: usize = 61;

/// Points a decade of the noise-bandwidth integral.
const NOISE_POINTS_PER_DECADE: usize = 20;

/// One check of the filter and drive.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FilterCheck {
    /// `droop`, `alias-rejection`, `reservoir`, `settling`,
    /// `phase-margin` or `feedback-pole`.
    pub check: &'static str,
    /// What was found against what was asked.
    pub detail: String,
    /// Whether it passes.
    pub pass: bool,
}

/// The filter of a reported design and its figures (`design.filter`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FilterReport {
    /// The chain's response from the sensor to the ADC pin.
    pub bode: Vec<BodePoint>,
    /// The checks.
    pub checks: Vec<FilterCheck>,
    /// -3 dB frequency of the whole chain, Hz.
    pub corner_hz: f64,
    /// The amplifier section driving the pair.
    pub driver: String,
    /// Loss of gain at `accuracy.bandwidth_hz`, as an error at the top of
    /// the output span, % of full scale.
    pub droop_pct_fs: f64,
    /// The poles in stages' feedback (a capacitor across `rf`), with their
    /// stability figures; empty when the design has none.
    pub feedback_poles: Vec<super::feedback::FeedbackPole>,
    /// The kickback droop on the capacitor at the start of an
    /// acquisition, volts.
    pub kickback_v: Option<f64>,
    /// Noise bandwidth of the whole chain's transfer: the integral of
    /// `|H(f)/H(0)|^2` from 0 to infinity, Hz.
    pub noise_bandwidth_hz: f64,
    /// Phase margin of the driving section into the pair, degrees.
    pub phase_margin_deg: Option<f64>,
    /// Attenuation at half the sample rate, dB (with `adc.sample_rate_hz`).
    pub rejection_at_nyquist_db: Option<f64>,
    /// Designator of the series resistor.
    pub series_ref: String,
    /// What is left of the kickback at the end of the acquisition time,
    /// LSB.
    pub settling_error_lsb: Option<f64>,
    /// Time for the ADC pin to recover to 1/2 LSB after the kickback of a
    /// sampling input, ns.
    pub settling_ns: Option<f64>,
    /// Designator of the shunt capacitor.
    pub shunt_ref: String,
}

/// What became of the filter of one design.
#[derive(Debug, Clone)]
pub enum FilterStatus {
    /// A pair was chosen; the chain with it, and its report.
    Designed {
        /// The pair.
        parts: FilterParts,
        /// The design's netlist with the pair added.
        built: Box<Built>,
        /// Its figures.
        report: Box<FilterReport>,
    },
    /// No pair: why.
    NotDesigned {
        /// The reason, a sentence.
        reason: String,
    },
}

/// The unity-gain frequency of an in-amp model's output (difference)
/// amplifier, as a multiple of the part's `gbw_mhz`: its noise gain is 2
/// (four equal resistors), so its closed-loop pole sits at `gbw_mhz`, the
/// part's bandwidth at gain 1 (our model of a three-amplifier in-amp, from
/// memory: the output stage is as fast as the input stage at unity gain).
pub const INAMP_OUTPUT_GBW_FACTOR: f64 = 2.0;

/// The AC model of every amplifier section of a built design: its gain
/// element with the part's GBW and output resistance. An in-amp's model
/// has three: both input amplifiers at the part's GBW with no output
/// resistance (in differential mode each has noise gain `G`, so the input
/// stage's closed-loop pole is at `GBW / G`, falling with the gain as a
/// real in-amp's bandwidth does), and the output amplifier at
/// [`INAMP_OUTPUT_GBW_FACTOR`] times it behind [`DEFAULT_OUTPUT_OHMS`]
/// (a second pole at the GBW).
pub fn amplifiers(stock: &Stock, built: &Built) -> Vec<AcAmplifier> {
    let mut out = Vec::with_capacity(built.sections.len());
    for s in &built.sections {
        match s.kind {
            AmplifierKind::OpAmp(i) => {
                if let Some(p) = stock.opamps.get(i) {
                    out.push(AcAmplifier {
                        element: s.gain_element,
                        gbw_hz: p.gbw_mhz * 1e6,
                        output_ohms: p.output_ohms,
                    });
                }
            }
            AmplifierKind::InAmp(i) => {
                let Some(p) = stock.inamps.get(i) else {
                    continue;
                };
                let gbw_hz = p.gbw_mhz * 1e6;
                let inside =
                    |name: &str| built.netlist.element(&format!("{}.{name}", s.designator));
                for element in [Some(s.gain_element), inside("EA2")].into_iter().flatten() {
                    out.push(AcAmplifier {
                        element,
                        gbw_hz,
                        output_ohms: 0.0,
                    });
                }
                if let Some(element) = inside("EA3") {
                    out.push(AcAmplifier {
                        element,
                        gbw_hz: INAMP_OUTPUT_GBW_FACTOR * gbw_hz,
                        output_ohms: DEFAULT_OUTPUT_OHMS,
                    });
                }
            }
        }
    }
    out
}

/// The rejection of a built chain (as built: its pair and feedback poles
/// where it has them, every amplifier's closed-loop pole) at `f`, in dB
/// below its DC transfer, with nominal values; `None` where the AC
/// analysis finds no DC transfer or fails.
pub(crate) fn rejection_db(stock: &Stock, built: &Built, f: f64) -> Option<f64> {
    Chain::new(stock, built)?.rejection_db(f)
}

/// The chain's response, normalised to DC: `|H(f)/H(0)|^2`.
struct Chain<'a> {
    solver: AcSolver,
    built: &'a Built,
    dc: f64,
}

impl<'a> Chain<'a> {
    /// The chain of a built design, normalised to its DC transfer; `None`
    /// where the AC analysis finds no finite, non-zero DC transfer.
    fn new(stock: &Stock, built: &'a Built) -> Option<Chain<'a>> {
        let mut chain = Chain {
            solver: AcSolver::new(&built.netlist, &amplifiers(stock, built)),
            built,
            dc: 1.0,
        };
        let dc = chain
            .solver
            .transfer(&built.netlist, built.vsense, built.out, 0.0)
            .map(|h| h.abs())
            .unwrap_or(0.0);
        if !(dc.is_finite() && dc > 0.0) {
            return None;
        }
        chain.dc = dc;
        Some(chain)
    }

    fn power(&mut self, f: f64) -> Option<f64> {
        let h = self
            .solver
            .transfer(&self.built.netlist, self.built.vsense, self.built.out, f)
            .ok()?;
        Some((h.abs() / self.dc).powi(2))
    }

    /// The rejection at `f`, dB below the DC transfer; `None` where the
    /// AC analysis fails or the power is not finite and positive. The
    /// alias check ([`rejection_db`]) and the filter report both read it.
    fn rejection_db(&mut self, f: f64) -> Option<f64> {
        let p = self.power(f)?;
        (p.is_finite() && p > 0.0).then(|| -10.0 * p.log10())
    }

    /// The first -3 dB frequency above `start`, by a log scan then
    /// bisection.
    fn corner(&mut self, start: f64, stop: f64) -> Option<f64> {
        let mut low = start;
        if self.power(low)? <= 0.5 {
            return Some(low);
        }
        let step = 10f64.powf(0.1);
        let mut high = low * step;
        while self.power(high)? > 0.5 {
            low = high;
            high *= step;
            if high > stop {
                return None;
            }
        }
        for _ in 0..40 {
            let mid = (low * high).sqrt();
            if self.power(mid)? > 0.5 {
                low = mid;
            } else {
                high = mid;
            }
        }
        Some((low * high).sqrt())
    }

    /// `integral |H/H0|^2 df` over a log grid around `corner`, with the
    /// flat part below and a first-order tail above (trapezoids in ln f).
    fn noise_bandwidth(&mut self, corner: f64) -> Option<f64> {
        let (a, b) = (corner * 1e-4, corner * 1e4);
        let grid = log_frequencies(a, b, 8 * NOISE_POINTS_PER_DECADE + 1);
        let mut total = a * self.power(a)?;
        let mut last = (a, self.power(a)? * a);
        for &f in &grid[1..] {
            let y = self.power(f)? * f;
            total += 0.5 * (y + last.1) * (f / last.0).ln();
            last = (f, y);
        }
        // Beyond b the response falls at least as fast as one pole:
        // integral of g(b) (b/f)^2 from b to infinity is g(b) b.
        total += last.1;
        Some(total)
    }
}

/// The exact phase margin of a single-pole amplifier of noise gain `NG`
/// driving `R` in series with `C` through its output resistance `Ro`:
/// the loop gain `GBW/(j f NG) (1 + j f R C 2 pi)/(1 + j f (Ro+R) C 2 pi)`
/// crosses unity (found by bisection; its magnitude falls with f) where
/// the margin is `90 + atan(f/fz) - atan(f/fp)` degrees.
pub fn phase_margin_deg(driver: &Driver, ohms: f64, farads: f64) -> f64 {
    let wz = |f: f64| 2.0 * PI * f * ohms * farads;
    let wp = |f: f64| 2.0 * PI * f * (driver.output_ohms + ohms) * farads;
    let loop_gain = |f: f64| {
        driver.gbw_hz / (f * driver.noise_gain)
            * ((1.0 + wz(f).powi(2)) / (1.0 + wp(f).powi(2))).sqrt()
    };
    let (mut low, mut high) = (driver.gbw_hz * 1e-6, driver.gbw_hz * 10.0);
    for _ in 0..80 {
        let mid = (low * high).sqrt();
        if loop_gain(mid) > 1.0 {
            low = mid;
        } else {
            high = mid;
        }
    }
    let f = (low * high).sqrt();
    90.0 + wz(f).atan().to_degrees() - wp(f).atan().to_degrees()
}

/// Choose the pair for a built design and work out its figures.
// Long because it lists each figure and its check in report order; each
// figure is a call or a closed form.
pub fn analyse(need: &Need, stock: &Stock, built: &Built) -> FilterStatus {
    let not = |reason: &str| FilterStatus::NotDesigned {
        reason: reason.to_string(),
    };
    if stock.capacitors.is_empty() {
        return not("the stock has no capacitors (capacitors.csv)");
    }
    let Some(driver) = driver(need, stock, built) else {
        return not("the design has no amplifier driving its output");
    };
    // The stock is what the design's own parts leave (`stock_left`); a
    // resistor the design places is preferred among pairs of one price.
    let placed = |id: &str| built.resistors.iter().any(|r| r.part.part_id == id);
    let chosen = choose_preferring(need, stock, &driver, &BTreeMap::new(), &placed);
    let Some(parts) = chosen.map(|c| c.parts) else {
        let b = bounds(need, &driver);
        return FilterStatus::NotDesigned {
            reason: format!(
                "no resistor and capacitor in stock meet every rule at once (R C from {:.3e} \
                 to {:.3e} s, R at least {:.3} ohm, C at least {:.3e} F, R (C + Cs) at most \
                 {:.3e} s)",
                b.min_tau_s, b.max_tau_s, b.min_ohms, b.min_farads, b.max_settle_tau_s
            ),
        };
    };
    let (filtered, series_ref, shunt_ref) = with_filter(built, &parts);
    let Some(mut chain) = Chain::new(stock, &filtered) else {
        return not("the AC analysis of the chain with the filter found no DC transfer");
    };
    let bandwidth = need.accuracy.bandwidth.0;
    let Some(corner) = chain.corner(
        bandwidth
            .min(1.0 / (2.0 * PI * parts.series.ohms * parts.shunt.value.0))
            .min(super::feedback::lowest_corner_hz(&filtered))
            * 1e-3,
        1e12,
    ) else {
        return not("the chain's response does not fall to -3 dB below 1 THz");
    };
    let Some(noise_bandwidth) = chain.noise_bandwidth(corner) else {
        return not("the AC analysis failed inside the noise-bandwidth integral");
    };
    let (low, high) = need.target_window();
    let span_share = (high - low) / need.full_scale();
    let at_band = chain.power(bandwidth).unwrap_or(0.0).sqrt();
    let droop_pct_fs = (1.0 - at_band) * span_share * 100.0;
    let mut checks = Vec::new();
    let droop_limit = DROOP_SHARE_OF_TARGET * need.accuracy.filter_target_pct_fs();
    checks.push(FilterCheck {
        check: "droop",
        pass: droop_pct_fs <= droop_limit * (1.0 + 1e-9),
        detail: format!(
            "gain loss at {bandwidth} Hz is {droop_pct_fs:.3e} % FS (nominal values); allowed \
             {droop_limit:.3e} % FS, a tenth of the target"
        ),
    });
    let rejection_at_nyquist_db = need
        .adc
        .sample_rate
        .and_then(|rate| chain.rejection_db(rate.0 / 2.0));
    if let (Some(asked), Some(got)) = (need.adc.alias_rejection, rejection_at_nyquist_db) {
        checks.push(FilterCheck {
            check: "alias-rejection",
            pass: got >= asked.0,
            detail: format!(
                "rejection at half the sample rate is {got:.2} dB (nominal values); asked {} dB",
                asked.0
            ),
        });
    }
    let farads = parts.shunt.value.0;
    let ohms = parts.series.ohms;
    let (mut settling_ns, mut settling_error_lsb, mut kickback_v) = (None, None, None);
    if let (Some(cs), Some(t_acq), Some((dv0, tau))) = (
        need.adc.sample_capacitance,
        need.adc.acquisition_time,
        kickback(need, &driver, ohms, farads),
    ) {
        let half_lsb = 0.5 * need.lsb();
        let settle = if dv0 > half_lsb {
            tau * (dv0 / half_lsb).ln()
        } else {
            0.0
        };
        let left = dv0 * (-t_acq.0 / tau).exp() / need.lsb();
        settling_ns = Some(settle * 1e9);
        settling_error_lsb = Some(left);
        kickback_v = Some(dv0);
        checks.push(FilterCheck {
            check: "reservoir",
            pass: farads >= RESERVOIR_RATIO * cs.0 * (1.0 - 1e-9),
            detail: format!(
                "{farads:.3e} F is {:.1} times the sampling capacitance; asked at least \
                 {RESERVOIR_RATIO}",
                farads / cs.0
            ),
        });
        checks.push(FilterCheck {
            check: "settling",
            pass: left <= 0.5,
            detail: format!(
                "a kickback of {dv0:.3e} V recovers with tau {:.3e} s to {left:.3e} LSB in \
                 the {:.3e} s acquisition; asked at most 0.5 LSB",
                tau, t_acq.0
            ),
        });
    }
    let (feedback_poles, feedback_checks) = super::feedback::feedback_poles(need, stock, &filtered);
    checks.extend(feedback_checks);
    let margin = phase_margin_deg(&driver, ohms, farads);
    checks.push(FilterCheck {
        check: "phase-margin",
        pass: margin >= PHASE_MARGIN_TARGET_DEG - 1e-9,
        detail: format!(
            "{} (noise gain {:.3}, GBW {:.3e} Hz, output {} ohm) into {ohms} ohm and \
             {farads:.3e} F: {margin:.1} degrees; asked at least {PHASE_MARGIN_TARGET_DEG}",
            driver.designator, driver.noise_gain, driver.gbw_hz, driver.output_ohms
        ),
    });
    let frequencies = log_frequencies(corner * 1e-3, corner * 1e3, BODE_POINTS);
    let bode = bode(
        &mut chain.solver,
        &filtered.netlist,
        filtered.vsense,
        filtered.out,
        &frequencies,
    )
    .unwrap_or_default();
    let report = FilterReport {
        series_ref,
        shunt_ref,
        driver: driver.designator.clone(),
        corner_hz: corner,
        noise_bandwidth_hz: noise_bandwidth,
        droop_pct_fs,
        feedback_poles,
        rejection_at_nyquist_db,
        settling_ns,
        settling_error_lsb,
        kickback_v,
        phase_margin_deg: Some(margin),
        checks,
        bode,
    };
    FilterStatus::Designed {
        parts,
        built: Box::new(filtered),
        report: Box::new(report),
    }
}
