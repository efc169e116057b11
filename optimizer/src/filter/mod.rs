//! The filter and drive at the ADC input: a series resistor from the last
//! amplifier's output to the ADC pin and a shunt capacitor from the pin to
//! ground, chosen from the stock, and the figures that prove it.
//!
//! The choice ([`choose`]) is closed-form: every constraint on the pair is
//! a bound on `R`, `C` or `R C` written out below, and the cheapest stock
//! pair that meets all of them is taken (a linear pass over the stock; no
//! iteration over analyses). The search counts the pair each design will
//! get in its cost (`search/pair.rs`: chosen once per driving part, or
//! per noise gain with a sampling input); the figures are worked out only
//! for designs that are reported.
//!
//! The figures ([`response`]) come from the AC analysis of the whole
//! chain with the pair in its netlist ([`crate::mna_ac`]): corner, droop
//! at `accuracy.bandwidth_hz`, rejection at half the sample rate, noise
//! bandwidth, Bode data; plus the closed forms of the drive (phase margin
//! of the last op-amp into the capacitor, kickback and settling of a
//! sampling input). `docs/filter.md` gives every rule and its source.

pub mod feedback;
mod response;

pub use feedback::FeedbackPole;
pub(crate) use response::rejection_db;
pub use response::{
    amplifiers, analyse, FilterCheck, FilterReport, FilterStatus, INAMP_OUTPUT_GBW_FACTOR,
};

use crate::design::Resistor;
use crate::mna::DcSolution;
use crate::need::Need;
use crate::stock::{CapacitorPart, Stock, DEFAULT_OUTPUT_OHMS};
use crate::topology::{AmplifierKind, Built, PlacedFilter, Section};
use std::borrow::Cow;
use std::collections::BTreeMap;

/// Share of the error target the droop at `accuracy.bandwidth_hz` may
/// take, with the pair at its tolerance limits (our rule: a tenth).
pub const DROOP_SHARE_OF_TARGET: f64 = 0.1;

/// The corner is kept within this factor of the lowest corner the droop
/// rule allows (nominal values), so the noise bandwidth is not wasted
/// (our rule).
pub const CORNER_SPREAD: f64 = 3.0;

/// The filter capacitor is at least this many times the ADC's sampling
/// capacitance, so one sample's kickback moves it little (common practice:
/// ten to a few tens of times; we take 20).
pub const RESERVOIR_RATIO: f64 = 20.0;

/// Phase margin asked of the last op-amp driving the capacitor (common
/// practice: 45 degrees or more).
pub const PHASE_MARGIN_TARGET_DEG: f64 = 45.0;

/// Share of the driving amplifier's output current (`output_current_ma`)
/// the recharge of the capacitor may take: the whole ADC window across
/// the series resistor (the capacitor left at the other extreme) draws at
/// most this share, the rest stays for the feedback network and what else
/// the output drives (our rule: a half).
pub const RECHARGE_SHARE: f64 = 0.5;

/// The amplifier that drives the filter: the section whose output is the
/// chain's output, with its single-pole model.
#[derive(Debug, Clone, PartialEq)]
pub struct Driver {
    /// Its designator (`U1B`).
    pub designator: String,
    /// Gain-bandwidth product, Hz.
    pub gbw_hz: f64,
    /// Open-loop output resistance, ohms.
    pub output_ohms: f64,
    /// Noise gain (1/feedback factor) of the section, from the DC adjoint.
    pub noise_gain: f64,
    /// Largest output current, amperes (`output_current_ma`).
    pub output_amps: f64,
    /// The widest step its output can make in a design that passes the
    /// ADC-window check: the ADC's input range, volts (the recharge rule).
    pub step_v: f64,
    /// The poles in the design's stage feedback (capacitors across `rf`),
    /// which share the droop and alias rules with the pair
    /// ([`tau_limits_with`]); empty without one.
    pub feedback: Vec<FeedbackCorner>,
}

/// A pole in a stage's feedback (a capacitor across `rf`) as the pair's
/// rules see it, at the tolerance limits that make each rule hardest.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FeedbackCorner {
    /// Its corner with `rf` and the capacitor at their upper tolerance
    /// limits, Hz: the lowest it can be (the droop rule).
    pub low_hz: f64,
    /// Its corner with both at their lower tolerance limits, Hz: the
    /// highest it can be (the alias rule).
    pub high_hz: f64,
    /// The stage's DC noise gain (at least 1).
    pub noise_gain: f64,
}

impl FeedbackCorner {
    /// The corner of `ohms` (tolerance `r_tol_pct`) across `farads`
    /// (tolerance `c_tol_pct`) in a stage of DC noise gain `noise_gain`.
    pub fn new(ohms: f64, r_tol_pct: f64, farads: f64, c_tol_pct: f64, noise_gain: f64) -> Self {
        let (tr, tc) = (r_tol_pct / 100.0, c_tol_pct / 100.0);
        let nominal = ohms * farads;
        FeedbackCorner {
            low_hz: feedback::corner_hz(1.0, nominal * (1.0 + tr) * (1.0 + tc)),
            high_hz: feedback::corner_hz(
                1.0,
                nominal * (1.0 - tr).max(1e-9) * (1.0 - tc).max(1e-9),
            ),
            noise_gain: noise_gain.max(1.0),
        }
    }

    /// The least `|H(f)/H(0)|` the stage keeps at `f`: at most one real
    /// pole's loss at the lowest corner. An inverting stage's gain
    /// `rf/rin / (1 + j f/fp)` is that pole; a non-inverting stage's
    /// `(NG + j f/fp) / (1 + j f/fp)` loses less (it levels off at 1).
    pub fn least_gain(&self, f: f64) -> f64 {
        let x = f / self.low_hz;
        1.0 / (1.0 + x * x).sqrt()
    }

    /// The least `|H(0)/H(f)|^2` the stage gives at `f`: the non-inverting
    /// form `NG^2 (1 + x^2) / (NG^2 + x^2)` at the highest corner
    /// (`x = f/fp`), which falls as `fp` rises and is at most the
    /// inverting stage's true pole `1 + x^2` (handbook closed forms,
    /// common practice).
    pub fn least_rejection_power(&self, f: f64) -> f64 {
        let x = f / self.high_hz;
        let ng2 = self.noise_gain * self.noise_gain;
        ng2 * (1.0 + x * x) / (ng2 + x * x)
    }
}

/// A driving part's figures for [`Driver`] with noise gain 1: its
/// gain-bandwidth, output resistance, output current and widest step. An
/// in-amp drives through its output amplifier, whose loop gain
/// (`INAMP_OUTPUT_GBW_FACTOR` GBW over its noise gain of 2) is the part's
/// GBW over `f` whatever the in-amp's gain: its driver keeps noise gain 1.
pub fn driver_of(need: &Need, stock: &Stock, kind: AmplifierKind) -> Option<Driver> {
    let (gbw_mhz, output_ohms, output_ma) = match kind {
        AmplifierKind::OpAmp(i) => {
            let p = stock.opamps.get(i)?;
            (p.gbw_mhz, p.output_ohms, p.output_current_ma)
        }
        AmplifierKind::InAmp(i) => {
            let p = stock.inamps.get(i)?;
            (p.gbw_mhz, DEFAULT_OUTPUT_OHMS, p.output_current_ma)
        }
    };
    Some(Driver {
        designator: String::new(),
        gbw_hz: gbw_mhz * 1e6,
        output_ohms,
        noise_gain: 1.0,
        output_amps: output_ma * 1e-3,
        // The driver's output equals the ADC pin at DC (the pin draws
        // nothing), so a design passing the ADC-window check keeps its raw
        // range inside the window.
        step_v: need.full_scale(),
        feedback: Vec::new(),
    })
}

/// The chosen pair.
#[derive(Debug, Clone, PartialEq)]
pub struct FilterParts {
    /// Series resistor, amplifier output to ADC pin.
    pub series: Resistor,
    /// Shunt capacitor, ADC pin to ground.
    pub shunt: CapacitorPart,
}

/// The bounds the pair must meet, from the need and the driver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bounds {
    /// Largest `R C` (at the pair's upper tolerance limits), seconds: the
    /// droop rule.
    pub max_tau_s: f64,
    /// Smallest nominal `R C`, seconds ([`CORNER_SPREAD`]); raised by the
    /// alias rule when a rejection is asked.
    pub min_tau_s: f64,
    /// Smallest `R C` at the pair's lower tolerance limits for the wanted
    /// rejection at half the sample rate, seconds (0 without one).
    pub alias_tau_s: f64,
    /// Smallest capacitor, farads (reservoir rule; 0 without a sampling
    /// input).
    pub min_farads: f64,
    /// Smallest series resistor, ohms (phase-margin rule).
    pub min_ohms: f64,
    /// Smallest series resistor at its lower tolerance limit, ohms (the
    /// recharge rule, [`RECHARGE_SHARE`]; 0 without a current limit).
    pub min_recharge_ohms: f64,
    /// Largest `R (C + Cs)` for settling in the acquisition time at the
    /// smallest capacitor, seconds (infinite without a sampling input or
    /// when that capacitor's kickback is already under 1/2 LSB; a larger
    /// capacitor has a smaller kickback, so each pair is also checked on
    /// its own).
    pub max_settle_tau_s: f64,
}

/// The section driving the chain's output, with its noise gain.
pub fn driver(need: &Need, stock: &Stock, built: &Built) -> Option<Driver> {
    let mut netlist = built.netlist.clone();
    let low = need.sensor.signal_low.0;
    let dc = DcSolution::solve(&mut netlist, built.vsense, [low, low], built.out).ok()?;
    driver_from(need, stock, built, &dc)
}

/// [`driver`] from a DC solution of the design already at hand (its
/// output adjoint gives the noise gain; an in-amp's stays 1, see
/// [`driver_of`]).
pub fn driver_from(need: &Need, stock: &Stock, built: &Built, dc: &DcSolution) -> Option<Driver> {
    let section: &Section = built.sections.iter().find(|s| s.out == built.out)?;
    let part = driver_of(need, stock, section.kind)?;
    let noise_gain = match section.kind {
        AmplifierKind::OpAmp(_) => dc.branch_adjoint(section.vos).abs().max(1.0),
        AmplifierKind::InAmp(_) => 1.0,
    };
    Some(Driver {
        designator: section.designator.clone(),
        noise_gain,
        feedback: feedback::corners(built, dc),
        ..part
    })
}

/// Whether a built design without a pair gets one when reported, as
/// [`attach`] chooses it (the driver from `dc`, the parts the design's own
/// resistors leave on the shelf).
pub fn gets_pair(need: &Need, stock: &Stock, built: &Built, dc: &DcSolution) -> bool {
    if built.filter.is_some() {
        return true;
    }
    if stock.capacitors.is_empty() {
        return false;
    }
    driver_from(need, stock, built, dc)
        .is_some_and(|d| choose_within(need, stock, &d, &resistors_used(built)).is_some())
}

/// The worst-case step a sampling capacitor meets at the start of an
/// acquisition: the whole ADC window (it may hold the last sample from the
/// other end), volts.
pub fn kickback_step_v(need: &Need) -> f64 {
    need.full_scale()
}

/// Settling closed form: the kickback droop `dV0 = step Cs / (C + Cs)`
/// (charge sharing), recovered with the time constant
/// `tau = R (C + Cs) + NG / (2 pi GBW)` (the sum of the two time
/// constants, an Elmore estimate; from memory). Returns `(dV0, tau)`.
pub fn kickback(need: &Need, driver: &Driver, ohms: f64, farads: f64) -> Option<(f64, f64)> {
    let cs = need.adc.sample_capacitance?.0;
    let dv0 = kickback_step_v(need) * cs / (farads + cs);
    let tau =
        ohms * (farads + cs) + driver.noise_gain / (2.0 * std::f64::consts::PI * driver.gbw_hz);
    Some((dv0, tau))
}

/// The `R C` limits that depend on the need alone (no pole in a stage's
/// feedback): [`tau_limits_with`] without feedback poles.
pub fn tau_limits(need: &Need) -> (f64, f64, f64) {
    tau_limits_with(need, &[])
}

/// The droop rule's largest `R C` of one pole alone (at the pair's upper
/// tolerance limits) and the alias rule's smallest (at its lower limits),
/// seconds (the latter 0 without a rejection asked).
fn single_pole_limits(need: &Need) -> (f64, f64) {
    let two_pi = 2.0 * std::f64::consts::PI;
    let ratio = ((1.0 / (1.0 - relative_droop(need))).powi(2) - 1.0).sqrt();
    let max_tau_s = ratio / (two_pi * need.accuracy.bandwidth.0);
    let alias_tau_s = match (need.adc.sample_rate, need.adc.alias_rejection) {
        (Some(rate), Some(rejection)) => {
            let power = 10f64.powf(rejection.0 / 10.0);
            alias_tau(rate.0 / 2.0, power)
        }
        _ => 0.0,
    };
    (max_tau_s, alias_tau_s)
}

/// The droop the rule allows, as a share of the signal at the top of the
/// output span (capped at a half).
fn relative_droop(need: &Need) -> f64 {
    let (low, high) = need.target_window();
    let span_share = ((high - low) / need.full_scale()).max(1e-12);
    (DROOP_SHARE_OF_TARGET * (need.accuracy.filter_target_pct_fs() / 100.0) / span_share).min(0.5)
}

/// The smallest `R C` of one pole rejecting `power` (`|H(0)/H(f)|^2`) at
/// `nyquist`: `sqrt(power - 1) / (2 pi nyquist)` (0 when `power <= 1`).
fn alias_tau(nyquist: f64, power: f64) -> f64 {
    if power <= 1.0 {
        return 0.0;
    }
    (power - 1.0).sqrt() / (2.0 * std::f64::consts::PI * nyquist)
}

/// Whether one pole cannot give the need's alias rejection within the
/// droop rule even with exact parts (the alias rule's smallest `R C` is
/// above the droop rule's largest): then no pair alone meets the rules,
/// and a pole in a stage's feedback may (the search places one,
/// `search/pair.rs`).
pub fn needs_second_pole(need: &Need) -> bool {
    let (max_tau_s, alias_tau_s) = single_pole_limits(need);
    alias_tau_s > max_tau_s
}

/// The smallest nominal `R C` of any pair, whatever the feedback poles:
/// a third of one pole's droop bound ([`CORNER_SPREAD`]), and the alias
/// rule's bound too where one pole can meet it ([`needs_second_pole`]
/// false), seconds.
fn pair_tau_floor(need: &Need) -> f64 {
    let (max_tau_s, alias_tau_s) = single_pole_limits(need);
    let spread = max_tau_s / CORNER_SPREAD;
    if alias_tau_s > max_tau_s {
        spread
    } else {
        spread.max(alias_tau_s)
    }
}

/// The `R C` limits of the pair with the design's feedback poles: the
/// droop rule's largest `R C` (at the pair's upper tolerance limits), the
/// smallest nominal `R C` (the corner-spread and alias rules) and the
/// alias rule's smallest `R C` at the lower tolerance limits, seconds.
///
/// The feedback poles share the rules with the pair: the droop is judged
/// on the product of their least gains ([`FeedbackCorner::least_gain`])
/// and the pair's, and the rejection on the product of their least
/// rejections ([`FeedbackCorner::least_rejection_power`]) and the
/// pair's; so the pair takes the droop they leave and the rejection they
/// do not give. The corner-spread floor stays that of one pole
/// ([`pair_tau_floor`]), so the pair's corner never rises above
/// [`highest_corner_hz`].
pub fn tau_limits_with(need: &Need, feedback: &[FeedbackCorner]) -> (f64, f64, f64) {
    let two_pi = 2.0 * std::f64::consts::PI;
    let bandwidth = need.accuracy.bandwidth.0;
    let kept: f64 = feedback.iter().map(|c| c.least_gain(bandwidth)).product();
    // The pair keeps at least (1 - droop) / kept: one pole at f loses
    // 1 - 1/sqrt(1 + (f/fc)^2).
    let ratio = ((kept / (1.0 - relative_droop(need))).powi(2) - 1.0)
        .max(0.0)
        .sqrt();
    let max_tau_s = ratio / (two_pi * bandwidth);
    let mut min_tau_s = pair_tau_floor(need);
    let mut alias_tau_s = 0.0;
    if let (Some(rate), Some(rejection)) = (need.adc.sample_rate, need.adc.alias_rejection) {
        let nyquist = rate.0 / 2.0;
        let given: f64 = feedback
            .iter()
            .map(|c| c.least_rejection_power(nyquist))
            .product();
        alias_tau_s = alias_tau(nyquist, 10f64.powf(rejection.0 / 10.0) / given);
        min_tau_s = min_tau_s.max(alias_tau_s);
    }
    (max_tau_s, min_tau_s, alias_tau_s)
}

/// The highest corner any pair the rules allow can have (nominal
/// values): `1 / (2 pi min R C)` over every feedback pole a design may
/// carry, Hz. A design that gets a pair has its filter's own corner at or
/// below this.
pub fn highest_corner_hz(need: &Need) -> f64 {
    1.0 / (2.0 * std::f64::consts::PI * pair_tau_floor(need))
}

/// The droop the rules allow a pair at `accuracy.bandwidth_hz`, at its
/// tolerance limits, as an error at the top of the output span, volts
/// ([`DROOP_SHARE_OF_TARGET`] of the target).
pub fn droop_allowance_v(need: &Need) -> f64 {
    let (low, high) = need.target_window();
    // The rule's relative loss is capped at a half (see `tau_limits`).
    (DROOP_SHARE_OF_TARGET * need.accuracy.filter_target_pct_fs() / 100.0 * need.full_scale())
        .min(0.5 * (high - low).abs())
}

/// Whether the stock has a capacitor on the shelf, so a pair may be
/// chosen at all.
pub fn stock_has_capacitors(stock: &Stock) -> bool {
    stock.capacitors.iter().any(|c| c.stock_qty != Some(0))
}

/// The bounds of [`Bounds`] for this need and driver (closed forms; see
/// the module header and `docs/filter.md`).
pub fn bounds(need: &Need, driver: &Driver) -> Bounds {
    let two_pi = 2.0 * std::f64::consts::PI;
    let (max_tau_s, min_tau_s, alias_tau_s) = tau_limits_with(need, &driver.feedback);
    // Phase margin: the load's pole-zero pair lags at most
    // atan(Ro / (2 sqrt(R (R + Ro)))) at any frequency; keeping that lag
    // under 90 - target leaves the target margin over a single-pole
    // amplifier's 90 degrees, whatever the crossover.
    let t = (90.0 - PHASE_MARGIN_TARGET_DEG).to_radians().tan();
    let ro = driver.output_ohms;
    let phase_ohms = ro * ((1.0 + 1.0 / (t * t)).sqrt() - 1.0) / 2.0;
    // Recharge: the widest step across the series resistor draws at most
    // RECHARGE_SHARE of the output current.
    let recharge_ohms = if driver.output_amps > 0.0 {
        driver.step_v / (RECHARGE_SHARE * driver.output_amps)
    } else {
        0.0
    };
    let min_ohms = phase_ohms;
    let min_recharge_ohms = recharge_ohms;
    let (min_farads, max_settle_tau_s) =
        match (need.adc.sample_capacitance, need.adc.acquisition_time) {
            (Some(cs), Some(t_acq)) => {
                let half_lsb = 0.5 * need.lsb();
                // dV0 exp(-t/tau) <= LSB/2 with dV0 at the smallest C.
                let min_c = RESERVOIR_RATIO * cs.0;
                let dv0 = kickback_step_v(need) * cs.0 / (min_c + cs.0);
                let amp_tau = driver.noise_gain / (two_pi * driver.gbw_hz);
                let settle = t_acq.0 / (dv0 / half_lsb).ln().max(1e-12) - amp_tau;
                (min_c, settle)
            }
            _ => (0.0, f64::INFINITY),
        };
    Bounds {
        max_tau_s,
        min_tau_s,
        alias_tau_s,
        min_farads,
        min_ohms,
        min_recharge_ohms,
        max_settle_tau_s,
    }
}

/// Whether a pair meets the bounds.
fn meets(bounds: &Bounds, need: &Need, driver: &Driver, r: &Resistor, c: &CapacitorPart) -> bool {
    let (ohms, farads) = (r.ohms, c.value.0);
    let (tr, tc) = (r.tolerance_pct / 100.0, c.tolerance.0 / 100.0);
    let tau = ohms * farads;
    if ohms < bounds.min_ohms || ohms * (1.0 - tr) < bounds.min_recharge_ohms {
        return false;
    }
    if farads < bounds.min_farads {
        return false;
    }
    if tau * (1.0 + tr) * (1.0 + tc) > bounds.max_tau_s || tau < bounds.min_tau_s {
        return false;
    }
    if tau * (1.0 - tr) * (1.0 - tc) < bounds.alias_tau_s {
        return false;
    }
    if let Some((dv0, settle_tau)) = kickback(need, driver, ohms, farads) {
        let t_acq = need.adc.acquisition_time.map_or(0.0, |t| t.0);
        if dv0 * (-t_acq / settle_tau).exp() > 0.5 * need.lsb() {
            return false;
        }
    }
    true
}

/// How many of each resistor and capacitor part a built design places
/// already (its own resistors and feedback capacitors, not a filter
/// pair), by part id.
pub fn resistors_used(built: &Built) -> BTreeMap<&str, u32> {
    let mut used: BTreeMap<&str, u32> = BTreeMap::new();
    for r in &built.resistors {
        *used.entry(r.part.part_id.as_str()).or_default() += 1;
    }
    for c in &built.feedback_capacitors {
        *used.entry(c.part.part_id.as_str()).or_default() += 1;
    }
    used
}

/// Whether one more of a part fits on the shelf when `used` are placed
/// already (`None`: unlimited).
fn one_more_fits(stock_qty: Option<u32>, used: u32) -> bool {
    stock_qty.is_none_or(|q| q > used)
}

/// The cheapest stock pair meeting every bound (ties: the larger `R C`,
/// then the smaller resistor), or `None` when the stock has none; every
/// stocked part counts (see [`choose_within`] for a design's own use).
pub fn choose(need: &Need, stock: &Stock, driver: &Driver) -> Option<FilterParts> {
    choose_within(need, stock, driver, &BTreeMap::new())
}

/// The cheapest stock pair meeting every bound, as [`choose`], among the
/// parts of which one more is on the shelf once the design's own use
/// (`used`, part id to count) is taken: a part with `stock_qty` 0, or
/// with as many placed as the stock holds, is not chosen. Among pairs of
/// the least price, one whose resistor the design already places (in
/// `used`) comes first: it adds no BOM line.
pub fn choose_within(
    need: &Need,
    stock: &Stock,
    driver: &Driver,
    used: &BTreeMap<&str, u32>,
) -> Option<FilterParts> {
    let placed = |id: &str| used.get(id).is_some_and(|&n| n > 0);
    choose_preferring(need, stock, driver, used, &placed).map(|c| c.parts)
}

/// A pair [`choose_preferring`] takes, with every pair that ties with it
/// on price.
#[derive(Debug, Clone, PartialEq)]
pub struct Choice {
    /// The pair taken.
    pub parts: FilterParts,
    /// Every allowed pair of the least price (the taken one included),
    /// in the order of the rule's later ties (the larger `R C`, then the
    /// smaller resistor): a design placing the resistor of one of them
    /// gets the first such pair, sharing its BOM line.
    pub tied: Vec<FilterParts>,
}

/// The pair rule in full: among the pairs meeting every bound whose parts
/// fit on the shelf after `used`, the least unit prices; ties: a
/// resistor `placed` by the design (its BOM line is shared), then the
/// larger `R C`, then the smaller resistor.
pub fn choose_preferring(
    need: &Need,
    stock: &Stock,
    driver: &Driver,
    used: &BTreeMap<&str, u32>,
    placed: &dyn Fn(&str) -> bool,
) -> Option<Choice> {
    let b = bounds(need, driver);
    let fits = |id: &str, qty: Option<u32>| one_more_fits(qty, used.get(id).copied().unwrap_or(0));
    // (tau, ohms, resistor, capacitor) of the pairs at the least price.
    let mut least: Option<f64> = None;
    let mut tied: Vec<(f64, f64, usize, usize)> = Vec::new();
    for (ci, c) in stock.capacitors.iter().enumerate() {
        if !fits(&c.part_id, c.stock_qty) || c.value.0 < b.min_farads {
            continue;
        }
        // R from the R C bounds for this C, widened by the tolerances.
        let r_low = (b.min_tau_s / c.value.0)
            .max(b.min_ohms)
            .max(b.min_recharge_ohms)
            * (1.0 - 1e-9);
        let r_high = b.max_tau_s / c.value.0 * (1.0 + 1e-9);
        let start = stock.resistors.partition_point(|r| r.value.0 < r_low);
        for (ri, part) in stock.resistors.iter().enumerate().skip(start) {
            if part.value.0 > r_high {
                break;
            }
            if !fits(&part.part_id, part.stock_qty) {
                continue;
            }
            let cost = part.unit_cost + c.unit_cost;
            if least.is_some_and(|l| cost > l + 1e-12) {
                continue;
            }
            let r = Resistor::from(part);
            if !meets(&b, need, driver, &r, c) {
                continue;
            }
            if least.is_none_or(|l| cost < l - 1e-12) {
                least = Some(cost);
                tied.clear();
            }
            tied.push((r.ohms * c.value.0, r.ohms, ri, ci));
        }
    }
    // The later ties: the larger R C (compared on a grid of a relative
    // 1e-9, so products of one value in two ways tie), then the smaller
    // resistor, then stock order.
    let grid = |tau: f64| (tau.max(f64::MIN_POSITIVE).log10() * 1e9).round() as i64;
    tied.sort_by(|a, b| {
        grid(b.0)
            .cmp(&grid(a.0))
            .then(a.1.total_cmp(&b.1))
            .then(a.2.cmp(&b.2))
            .then(a.3.cmp(&b.3))
    });
    let tied: Vec<FilterParts> = tied
        .into_iter()
        .map(|(_, _, ri, ci)| FilterParts {
            series: Resistor::from(&stock.resistors[ri]),
            shunt: stock.capacitors[ci].clone(),
        })
        .collect();
    let parts = tied
        .iter()
        .find(|p| placed(&p.series.part_id))
        .or_else(|| tied.first())?
        .clone();
    Some(Choice { parts, tied })
}

/// The stock as the pair sees it once a design's own resistors (and
/// feedback capacitors) are placed: each limited part's `stock_qty`
/// lowered by the design's use
/// (so [`choose`] on it is [`choose_within`] with that use). Borrowed
/// when the design places no limited resistor.
pub fn stock_left<'s>(stock: &'s Stock, built: &Built) -> Cow<'s, Stock> {
    let used = resistors_used(built);
    let limited = |id: &str, ohms: f64| {
        stock
            .resistor_valued(id, ohms)
            .is_some_and(|p| p.stock_qty.is_some())
    };
    let limited_capacitor = built
        .feedback_capacitors
        .iter()
        .any(|c| c.part.stock_qty.is_some());
    if !limited_capacitor
        && !built
            .resistors
            .iter()
            .any(|r| limited(&r.part.part_id, r.part.ohms))
    {
        return Cow::Borrowed(stock);
    }
    let mut left = stock.clone();
    for part in &mut left.resistors {
        if let (Some(q), Some(n)) = (part.stock_qty, used.get(part.part_id.as_str())) {
            part.stock_qty = Some(q.saturating_sub(*n));
        }
    }
    for part in &mut left.capacitors {
        if let (Some(q), Some(n)) = (part.stock_qty, used.get(part.part_id.as_str())) {
            part.stock_qty = Some(q.saturating_sub(*n));
        }
    }
    Cow::Owned(left)
}

/// The built design with its filter placed and reported, when one can be
/// chosen; otherwise the design as it is, with the reason.
pub fn attach(need: &Need, stock: &Stock, built: &Built) -> (Built, Option<String>) {
    if built.filter.is_some() {
        return (built.clone(), None);
    }
    // The pair is chosen from what the design's own resistors leave on
    // the shelf.
    let left = stock_left(stock, built);
    match analyse(need, &left, built) {
        FilterStatus::Designed {
            parts,
            built: mut filtered,
            report,
        } => {
            let find = |name: &str| filtered.netlist.element(name).unwrap_or(0);
            let placed = PlacedFilter {
                series_element: find(&report.series_ref),
                series_ref: report.series_ref.clone(),
                series: parts.series,
                shunt_element: find(&report.shunt_ref),
                shunt_ref: report.shunt_ref.clone(),
                shunt: parts.shunt,
                report,
            };
            filtered.filter = Some(placed);
            (*filtered, None)
        }
        FilterStatus::NotDesigned { reason } => (built.clone(), Some(reason)),
    }
}

/// The chain with the filter: the last amplifier's output node is renamed
/// `drv`, the series resistor runs from it to a new `out` (the ADC pin) and
/// the capacitor from `out` to ground. Returns the built design with the
/// filter and the designators given to the two parts.
pub fn with_filter(built: &Built, parts: &FilterParts) -> (Built, String, String) {
    let mut b = built.clone();
    let number = b
        .resistors
        .iter()
        .filter_map(|r| r.designator.strip_prefix('R')?.parse::<usize>().ok())
        .max()
        .unwrap_or(0)
        + 1;
    let r_ref = format!("R{number}");
    let c_ref = "C1".to_string();
    let drv = b.out;
    b.netlist.rename_node(drv, "drv");
    let out = b.netlist.node("out");
    b.netlist.resistor(&r_ref, drv, out, parts.series.ohms);
    b.netlist.capacitor(&c_ref, out, 0, parts.shunt.value.0);
    b.out = out;
    (b, r_ref, c_ref)
}

#[cfg(test)]
mod tests;
