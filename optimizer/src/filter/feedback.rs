//! Poles in a stage's feedback: a capacitor across the feedback resistor
//! `rf` of a non-inverting, summed non-inverting or inverting stage
//! ([`crate::design::Stage::feedback_capacitor`]).
//!
//! The capacitor is an element of the netlist like any other, so the AC
//! analysis of the chain (corner, droop at `accuracy.bandwidth_hz`,
//! rejection at half the sample rate, noise integral, Bode data) has its
//! pole wherever it sits. This module adds what is particular to it:
//!
//! - its corner, `1 / (2 pi rf C)` (handbook closed form of a resistor
//!   and a capacitor in parallel; common practice), where the stage's
//!   gain from its input starts to fall;
//! - the stability check. With `C` across `rf` and the rest of the
//!   network resistive, the stage's noise gain (1/feedback factor, from
//!   the - input) is `1/beta(f) = (NG + j f/fp) / (1 + j f/fp)`, with `NG`
//!   its DC noise gain (from the DC adjoint of the section's offset
//!   source) and `fp` the corner above: it falls from `NG` to 1 and never
//!   below 1, for a non-inverting and an inverting stage alike (the
//!   capacitor shorts `rf`, leaving the follower's `1/beta = 1`). The
//!   feedback factor thus only gains phase (`arg beta = atan(f/fp) -
//!   atan(f/(NG fp)) >= 0`), so a single-pole amplifier's loop
//!   `GBW/(j f) beta(f)` keeps a phase margin of `90 + arg beta(fc)`
//!   degrees at its crossover `fc`, at least 90. The check computes that
//!   margin and asks [`super::PHASE_MARGIN_TARGET_DEG`]; what it rests on
//!   is that the part is stable at a noise gain of 1 (unity-gain stable),
//!   which every op-amp of the stock is in the single-pole model spanfit
//!   uses. A part that needs a higher noise gain would fail here in
//!   reality: the model cannot tell (said in `docs/filter.md`).

use super::{FilterCheck, PHASE_MARGIN_TARGET_DEG};
use crate::mna::DcSolution;
use crate::need::Need;
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built};
use serde::Serialize;
use std::f64::consts::PI;

/// One pole in a stage's feedback, as reported (`design.filter.feedback_poles[]`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FeedbackPole {
    /// The feedback resistor it is across (`R1`).
    pub across: String,
    /// `1 / (2 pi rf C)`, Hz.
    pub corner_hz: f64,
    /// The capacitor, farads.
    pub farads: f64,
    /// The stage's noise gain at DC (1/feedback factor).
    pub noise_gain_dc: f64,
    /// Its noise gain far above the corner (1: the capacitor shorts `rf`).
    pub noise_gain_hf: f64,
    /// Phase margin of the stage's section with the capacitor in its
    /// feedback (single-pole model), degrees.
    pub phase_margin_deg: f64,
    /// Designator of the capacitor (`C2`).
    #[serde(rename = "ref")]
    pub reference: String,
    /// The section whose feedback it is in (`U1A`).
    pub section: String,
    /// 0-based stage index.
    pub stage: usize,
}

/// The corner of a capacitor across a resistor: `1 / (2 pi R C)`, Hz
/// (handbook closed form; common practice).
pub fn corner_hz(ohms: f64, farads: f64) -> f64 {
    1.0 / (2.0 * PI * ohms * farads)
}

/// The lowest corner of the design's feedback poles, Hz (infinite without
/// one).
pub fn lowest_corner_hz(built: &Built) -> f64 {
    built
        .feedback_capacitors
        .iter()
        .filter_map(|c| {
            let ohms = crate::mna::element_value(&built.netlist, c.across);
            let f = corner_hz(ohms, c.part.value.0);
            f.is_finite().then_some(f)
        })
        .fold(f64::INFINITY, f64::min)
}

/// The phase margin of a single-pole amplifier of gain-bandwidth `gbw_hz`
/// whose feedback has DC noise gain `noise_gain` and a capacitor pole at
/// `pole_hz` (`1/beta = (NG + j f/fp) / (1 + j f/fp)`): `90 + arg beta` at
/// the crossover of `|GBW/(j f) beta(f)| = 1`, found by bisection (the
/// magnitude falls with f: `|beta|` rises at most as fast as `f` does),
/// degrees.
pub fn phase_margin_deg(gbw_hz: f64, noise_gain: f64, pole_hz: f64) -> f64 {
    let ng = noise_gain.max(1.0);
    let beta = |f: f64| {
        let x = f / pole_hz;
        let magnitude = ((1.0 + x * x) / (ng * ng + x * x)).sqrt();
        let phase = x.atan() - (x / ng).atan();
        (magnitude, phase)
    };
    let loop_gain = |f: f64| gbw_hz / f * beta(f).0;
    let (mut low, mut high) = (gbw_hz * 1e-9, gbw_hz * 10.0);
    for _ in 0..100 {
        let mid = (low * high).sqrt();
        if loop_gain(mid) > 1.0 {
            low = mid;
        } else {
            high = mid;
        }
    }
    90.0 + beta((low * high).sqrt()).1.to_degrees()
}

/// The feedback poles of a built design as the pair's rules see them
/// ([`super::FeedbackCorner`]): each capacitor's corner across its `rf`
/// at the tolerance limits, and its stage's DC noise gain from `dc`'s
/// adjoint of that section's output (empty without one).
pub fn corners(built: &Built, dc: &DcSolution) -> Vec<super::FeedbackCorner> {
    let mut out = Vec::new();
    for c in &built.feedback_capacitors {
        let Some(element) = built.netlist.elements.get(c.across) else {
            continue;
        };
        let ends = [element.nodes[0], element.nodes[1]];
        let noise_gain = built
            .sections
            .iter()
            .find(|s| ends.contains(&s.out) && ends.contains(&s.minus))
            .map_or(1.0, |section| {
                let adjoint = dc.adjoint_of(section.out);
                dc.solver()
                    .branch_unknown(section.vos)
                    .and_then(|k| adjoint.get(k))
                    .map_or(1.0, |g| g.abs())
            });
        let ohms = crate::mna::element_value(&built.netlist, c.across);
        let r_tol = built
            .resistors
            .iter()
            .find(|r| r.element == c.across)
            .map_or(0.0, |r| r.part.tolerance_pct);
        out.push(super::FeedbackCorner::new(
            ohms,
            r_tol,
            c.part.value.0,
            c.part.tolerance.0,
            noise_gain,
        ));
    }
    out
}

/// Gain-bandwidth of a section's part, Hz.
fn gbw_hz(stock: &Stock, kind: AmplifierKind) -> f64 {
    match kind {
        AmplifierKind::OpAmp(i) => stock.opamps.get(i).map_or(0.0, |p| p.gbw_mhz * 1e6),
        AmplifierKind::InAmp(i) => stock.inamps.get(i).map_or(0.0, |p| p.gbw_mhz * 1e6),
    }
}

/// The feedback poles of a built design and their stability checks (none
/// without a feedback capacitor).
pub fn feedback_poles(
    need: &Need,
    stock: &Stock,
    built: &Built,
) -> (Vec<FeedbackPole>, Vec<FilterCheck>) {
    let (mut poles, mut checks) = (Vec::new(), Vec::new());
    if built.feedback_capacitors.is_empty() {
        return (poles, checks);
    }
    let mut netlist = built.netlist.clone();
    let low = need.sensor.signal_low.0;
    let Ok(dc) = DcSolution::solve(&mut netlist, built.vsense, [low, low], built.out) else {
        return (poles, checks);
    };
    for c in &built.feedback_capacitors {
        let Some(element) = built.netlist.elements.get(c.across) else {
            continue;
        };
        let ends = [element.nodes[0], element.nodes[1]];
        let Some(section) = built
            .sections
            .iter()
            .find(|s| ends.contains(&s.out) && ends.contains(&s.minus))
        else {
            continue;
        };
        let across = built
            .resistors
            .iter()
            .find(|r| r.element == c.across)
            .map(|r| r.designator.clone())
            .unwrap_or_default();
        let ohms = crate::mna::element_value(&built.netlist, c.across);
        let farads = c.part.value.0;
        let pole = corner_hz(ohms, farads);
        let adjoint = dc.adjoint_of(section.out);
        let noise_gain = dc
            .solver()
            .branch_unknown(section.vos)
            .and_then(|k| adjoint.get(k))
            .map_or(1.0, |g| g.abs())
            .max(1.0);
        let gbw = gbw_hz(stock, section.kind);
        let margin = phase_margin_deg(gbw, noise_gain, pole);
        checks.push(FilterCheck {
            check: "feedback-pole",
            pass: margin >= PHASE_MARGIN_TARGET_DEG - 1e-9,
            detail: format!(
                "{} ({farads:.3e} F across {across}, corner {pole:.4e} Hz): noise gain of {} \
                 falls from {noise_gain:.3} to 1, never below 1; phase margin {margin:.1} \
                 degrees (single pole at GBW {gbw:.3e} Hz, unity-gain stable); asked at least \
                 {PHASE_MARGIN_TARGET_DEG}",
                c.designator, section.designator
            ),
        });
        poles.push(FeedbackPole {
            across,
            corner_hz: pole,
            farads,
            noise_gain_dc: noise_gain,
            noise_gain_hf: 1.0,
            phase_margin_deg: margin,
            reference: c.designator.clone(),
            section: section.designator.clone(),
            stage: c.stage,
        });
    }
    (poles, checks)
}
