//! The error budget of one design: the one analysis every number a user
//! sees comes from.
//!
//! The netlist of the design is solved once at each end of the sensor
//! span; the adjoint solution gives the sensitivity of the output to every
//! part at once. Each imperfection (resistor tolerance and TCR, op-amp
//! offset, drift, bias and offset current, CMRR, reference accuracy and
//! tempco, supply tolerance, in-amp gain error ...) becomes a *parameter*
//! with an initial range and a drift range and its output-referred effect
//! at both ends. From that linear model come the worst-case and RSS totals
//! and the Monte Carlo yield; the worst case is then confirmed by solving
//! the full netlist at its extreme corner. Finite open-loop gain and the
//! rounding of values are exact systematic terms.

use crate::design::Design;
use crate::error::{Error, Result};
use crate::mna::Solver;
use crate::montecarlo::{wilson_interval, Rng};
use crate::need::{Basis, Calibration, Need};
use crate::netlist::{ElementKind, Netlist};
use crate::stock::Stock;
use crate::topology::{build, AmplifierKind, Built};
use crate::units::{johnson_noise_density, Celsius, Ohms, PEAK_TO_PEAK_PER_RMS};
use serde::Serialize;

/// The lines of an error budget, each one contributor kind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Line {
    /// Nominal gain and offset after rounding to real values.
    NominalRounding,
    /// Finite open-loop gain of the op-amps (at their minimum).
    OpenLoopGain,
    /// Resistor initial tolerance.
    ResistorTolerance,
    /// Resistor TCR over the temperature range.
    ResistorTcr,
    /// Op-amp input offset times noise gain.
    OffsetVoltage,
    /// Offset drift over temperature.
    OffsetDrift,
    /// Bias current through the network resistances.
    BiasCurrent,
    /// Offset current (the unbalanced part).
    OffsetCurrent,
    /// Common-mode rejection.
    Cmrr,
    /// Reference initial accuracy.
    ReferenceInitial,
    /// Reference tempco.
    ReferenceTempco,
    /// Supply tolerance (where the supply sets offset or ADC scale).
    SupplyTolerance,
    /// In-amp gain error.
    InAmpGainError,
    /// In-amp gain drift.
    InAmpGainDrift,
    /// In-amp output offset.
    InAmpOutputOffset,
    /// Noise over the bandwidth, as the peak (half of 6.6-sigma p-p).
    Noise,
}

impl Line {
    /// Every line in report order.
    pub const ALL: [Line; 16] = [
        Line::NominalRounding,
        Line::OpenLoopGain,
        Line::ResistorTolerance,
        Line::ResistorTcr,
        Line::OffsetVoltage,
        Line::OffsetDrift,
        Line::BiasCurrent,
        Line::OffsetCurrent,
        Line::Cmrr,
        Line::ReferenceInitial,
        Line::ReferenceTempco,
        Line::SupplyTolerance,
        Line::InAmpGainError,
        Line::InAmpGainDrift,
        Line::InAmpOutputOffset,
        Line::Noise,
    ];

    /// The label shown in reports (`source` in the JSON budget).
    pub fn label(self) -> &'static str {
        match self {
            Line::NominalRounding => "nominal rounding of gain and offset",
            Line::OpenLoopGain => "finite open-loop gain",
            Line::ResistorTolerance => "resistor tolerance",
            Line::ResistorTcr => "resistor TCR over temperature",
            Line::OffsetVoltage => "op-amp offset voltage x noise gain",
            Line::OffsetDrift => "op-amp offset drift",
            Line::BiasCurrent => "bias current x network resistance",
            Line::OffsetCurrent => "offset current x network resistance",
            Line::Cmrr => "CMRR x common-mode voltage",
            Line::ReferenceInitial => "reference initial accuracy",
            Line::ReferenceTempco => "reference tempco",
            Line::SupplyTolerance => "supply tolerance",
            Line::InAmpGainError => "in-amp gain error",
            Line::InAmpGainDrift => "in-amp gain drift",
            Line::InAmpOutputOffset => "in-amp output offset",
            Line::Noise => "noise (peak, 3.3 sigma)",
        }
    }

    /// Whether the line is a fixed (systematic) error rather than a
    /// random spread.
    pub fn systematic(self) -> bool {
        matches!(self, Line::NominalRounding | Line::OpenLoopGain)
    }
}

/// What one parameter perturbs in the netlist.
#[derive(Debug, Clone, PartialEq)]
enum Target {
    /// Relative change of these resistor elements (all together).
    Resistors(Vec<usize>),
    /// Absolute change of a source value.
    Source(usize),
    /// Absolute change of both bias sources (common bias current).
    BiasCommon(usize, usize),
    /// Absolute change +d/2 on the first, -d/2 on the second.
    BiasOffset(usize, usize),
    /// Nothing in the circuit: the ADC scale itself (ratiometric supply).
    AdcScale,
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

/// One imperfection, linearised.
#[derive(Debug, Clone, PartialEq)]
struct Param {
    init_line: Line,
    drift_line: Line,
    target: Target,
    /// Half-range of the initial deviation at each end (target units).
    init: [f64; 2],
    /// Half-range of the drift at the largest temperature excursion.
    drift: f64,
    /// d(output)/d(target) at each end.
    s: [f64; 2],
    /// Removed by calibration (the supply is not: it moves in service).
    calibratable: bool,
}

/// One line of the reported budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetLine {
    /// Which contributor.
    pub line: Line,
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
}

/// A feasibility check and its outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// Which check (`output swing`, `input common mode`, ...).
    pub check: String,
    /// The part or node it concerns.
    pub subject: String,
    /// Passed.
    pub ok: bool,
    /// What was found against what was allowed.
    pub detail: String,
}

/// A finding kept as numbers until it is shown (formatting text costs more
/// than the checks themselves on the optimiser's hot path).
#[derive(Debug, Clone, PartialEq)]
pub struct RawFinding {
    check: &'static str,
    subject: String,
    ok: bool,
    numbers: [f64; 4],
}

impl RawFinding {
    /// Whether the check passed.
    pub fn ok(&self) -> bool {
        self.ok
    }

    /// The finding with its text.
    pub fn finding(&self) -> Finding {
        let [a, b, c, d] = self.numbers;
        let detail = match self.check {
            "supply range" => format!("rails span {a:.3} V; the part runs from {b:.3} V to {c:.3} V"),
            "input common mode" => format!("inputs sit at {a:.4} V to {b:.4} V; the part accepts {c:.4} V to {d:.4} V"),
            "output swing" => format!("output moves {a:.4} V to {b:.4} V; the part swings {c:.4} V to {d:.4} V"),
            "gain-bandwidth" => format!("noise gain {a:.1} leaves {b:.0} Hz closed-loop bandwidth; the need asks 10 x {c:.1} Hz"),
            "reference headroom" => format!("the reference needs {a:.3} V above ground; the positive rail is {b:.3} V"),
            "part count" => format!("{a:.0} parts; the need allows {b:.0}"),
            _ => String::new(),
        };
        Finding {
            check: self.check.to_string(),
            subject: self.subject.clone(),
            ok: self.ok,
            detail,
        }
    }
}

/// Monte Carlo result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct YieldResult {
    /// Builds drawn.
    pub builds: u64,
    /// Seed used.
    pub seed: u64,
    /// Fraction inside the target, in %.
    pub yield_pct: f64,
    /// 95 % confidence interval (Wilson), in %.
    pub confidence_pct: [f64; 2],
    /// Standard deviation of the error at the binding end, % FS.
    pub sigma_pct_fs: f64,
    /// Histogram of the signed error at the worse end of each build.
    pub histogram: Histogram,
}

/// A histogram with equal bins.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Histogram {
    /// Bin edges in % FS (`counts.len() + 1` of them).
    pub bin_edges_pct_fs: Vec<f64>,
    /// Builds in each bin.
    pub counts: Vec<u64>,
}

/// Realised transfer of the design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transfer {
    /// Realised gain K (nominal values, op-amps at minimum open-loop gain).
    pub gain: f64,
    /// Realised offset B in volts.
    pub offset_v: f64,
    /// Ideal K.
    pub ideal_gain: f64,
    /// Ideal B.
    pub ideal_offset_v: f64,
    /// Output at the low and high end of the sensor span.
    pub output_at_ends_v: [f64; 2],
    /// Ideal output at the ends.
    pub ideal_at_ends_v: [f64; 2],
}

/// Per-stage transfer and node range.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageReport {
    /// 0-based index.
    pub index: usize,
    /// Shape name.
    pub shape: String,
    /// Amplifier part id.
    pub amplifier: String,
    /// Stage gain `a_i`.
    pub gain: f64,
    /// Stage offset `c_i` in volts.
    pub offset_v: f64,
    /// Stage output at the low and high end of the span.
    pub output_range_v: [f64; 2],
    /// Designators of the stage's parts.
    pub parts: Vec<String>,
}

/// Noise summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseSummary {
    /// Output RMS noise over the noise bandwidth, volts.
    pub rms_v: f64,
    /// Peak-to-peak (6.6 sigma), volts.
    pub peak_to_peak_v: f64,
    /// Noise bandwidth used (pi/2 times the signal bandwidth), Hz.
    pub noise_bandwidth_hz: f64,
    /// Share of the RMS power from resistor thermal noise, op-amp voltage
    /// noise, op-amp current noise and reference noise (fractions).
    pub shares: [f64; 4],
}

/// The full analysis of one design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Analysis {
    /// Transfer.
    pub transfer: Transfer,
    /// Stages.
    pub stages: Vec<StageReport>,
    /// Budget lines (non-zero ones, report order).
    pub budget: Vec<BudgetLine>,
    /// Worst-case total, % FS.
    pub worst_case_pct_fs: f64,
    /// First-order worst-case sum before the corner check, % FS.
    pub first_order_pct_fs: f64,
    /// Error of the full netlist solved at the extreme corner, % FS.
    pub corner_check_pct_fs: f64,
    /// RSS total, % FS.
    pub rss_pct_fs: f64,
    /// Total on the need's basis, % FS (yield basis: the k-sigma RSS
    /// screen; see `yield_result` for the confirmation).
    pub basis_pct_fs: f64,
    /// Quantisation, +/-0.5 LSB in % FS (reported apart, not in totals).
    pub quantisation_pct_fs: f64,
    /// The ADC full-scale span the percentages refer to, volts.
    pub full_scale_v: f64,
    /// Noise.
    pub noise: NoiseSummary,
    /// Monte Carlo, where computed.
    pub yield_result: Option<YieldResult>,
    /// Feasibility findings.
    pub findings: Vec<Finding>,
    /// All findings pass.
    pub feasible: bool,
    /// Feasible and within the target on the need's basis.
    pub meets_target: bool,
    /// End of the span (0 low, 1 high) where the worst case binds.
    pub binding_end: usize,
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

/// The linear error model of a design (kept for fast re-use: Monte Carlo,
/// the optimiser's verification).
#[derive(Debug, Clone)]
pub struct Model {
    built: Built,
    fs: f64,
    params: Vec<Param>,
    /// Systematic lines: (line, error at each end in volts), calibrated.
    systematic: Vec<(Line, [f64; 2])>,
    /// Noise peak at the output, volts.
    noise_peak: f64,
    noise: NoiseSummary,
    /// Output with nominal values, each end.
    out: [f64; 2],
    ideal: [f64; 2],
    signal: [f64; 2],
    calibration: Calibration,
    /// Ratio of the cold excursion to the hot one (signed), for yield.
    cold_ratio: f64,
    ratiometric: bool,
    supply_nominal: f64,
    adc_low: f64,
    stages: Vec<StageReport>,
    findings: Vec<RawFinding>,
}

fn set_value(n: &mut Netlist, e: usize, v: f64) {
    match &mut n.elements[e].kind {
        ElementKind::Resistor { ohms } => *ohms = v,
        ElementKind::VoltageSource { volts } => *volts = v,
        ElementKind::CurrentSource { amps } => *amps = v,
        ElementKind::OpAmp { inverse_gain } => *inverse_gain = v,
    }
}

fn value(n: &Netlist, e: usize) -> f64 {
    match n.elements[e].kind {
        ElementKind::Resistor { ohms } => ohms,
        ElementKind::VoltageSource { volts } => volts,
        ElementKind::CurrentSource { amps } => amps,
        ElementKind::OpAmp { inverse_gain } => inverse_gain,
    }
}

/// Solve the netlist at both span ends; returns all unknowns per end.
fn solve_ends(
    solver: &mut Solver,
    netlist: &mut Netlist,
    vsense: usize,
    signal: [f64; 2],
) -> Result<[Vec<f64>; 2]> {
    solver
        .factor(netlist)
        .map_err(|s| Error::design(format!("the circuit has no DC solution ({})", s.unknown)))?;
    let mut xs = [vec![0.0; solver.size()], vec![0.0; solver.size()]];
    for (end, x) in xs.iter_mut().enumerate() {
        set_value(netlist, vsense, signal[end]);
        solver.rhs(netlist, x);
        solver.solve_in_place(x);
    }
    set_value(netlist, vsense, signal[0]);
    Ok(xs)
}

impl Model {
    /// Build the linear model of a design.
    pub fn new(need: &Need, stock: &Stock, design: &Design) -> Result<Model> {
        let built = build(need, stock, design)?;
        let mut netlist = built.netlist.clone();
        let mut solver = Solver::new(&netlist);
        let signal = [need.sensor.signal_low.0, need.sensor.signal_high.0];
        let (k, b) = need.ideal_transfer();
        let ideal = [k * signal[0] + b, k * signal[1] + b];
        let fs = need.full_scale();
        let xs = solve_ends(&mut solver, &mut netlist, built.vsense, signal)?;
        let out_u = solver
            .node_unknown(built.out)
            .ok_or_else(|| Error::design("output is ground"))?;
        let out = [xs[0][out_u], xs[1][out_u]];
        // Adjoint for the output.
        let mut lambda = vec![0.0; solver.size()];
        lambda[out_u] = 1.0;
        solver.solve_transposed_in_place(&mut lambda);
        let lam = |node: usize| solver.node_unknown(node).map(|i| lambda[i]).unwrap_or(0.0);
        let branch = |e: usize| solver.branch_unknown(e).map(|i| lambda[i]).unwrap_or(0.0);
        let volt = |x: &[f64], node: usize| solver.voltage(x, node);

        // Sensitivity of the output to a relative change of a resistor at each end.
        let res_sens = |e: usize| -> [f64; 2] {
            let el = &netlist.elements[e];
            let r = value(&netlist, e);
            let (a, bnode) = (el.nodes[0], el.nodes[1]);
            let dl = lam(a) - lam(bnode);
            let mut s = [0.0; 2];
            for (end, x) in xs.iter().enumerate() {
                let dv = volt(x, a) - volt(x, bnode);
                // d out / d G = -dl * dv ; d out / (dR/R) = -G * d out/dG
                s[end] = dl * dv / r;
            }
            s
        };

        let dt = need.max_delta_t();
        let mut params = Vec::new();
        for pr in &built.resistors {
            let s = res_sens(pr.element);
            let tol = pr.part.tolerance_pct / 100.0;
            params.push(Param {
                init_line: Line::ResistorTolerance,
                drift_line: Line::ResistorTcr,
                target: Target::Resistors(vec![pr.element]),
                init: [tol, tol],
                drift: pr.part.tcr_ppm_per_c * 1e-6 * dt,
                s,
                calibratable: true,
            });
        }
        let mid = 0.5 * (need.supply.positive.0 + need.supply.negative.0);
        for sec in &built.sections {
            let s_vos = branch(sec.vos);
            let s_ibp = -lam(sec.plus);
            let s_ibn = -lam(sec.minus);
            let (vos, drift, ib, ios, cmrr) = match sec.kind {
                AmplifierKind::OpAmp(i) => {
                    let p = &stock.opamps[i];
                    (
                        p.vos_max_uv * 1e-6,
                        p.vos_drift_uv_per_c * 1e-6 * dt,
                        p.ib_max_na * 1e-9,
                        p.ios_max_na * 1e-9,
                        p.cmrr_min.ratio(),
                    )
                }
                AmplifierKind::InAmp(i) => {
                    let p = &stock.inamps[i];
                    (
                        p.input_offset_uv * 1e-6,
                        p.offset_drift_uv_per_c * 1e-6 * dt,
                        p.ib_max_na * 1e-9,
                        0.0,
                        p.cmrr_min.ratio(),
                    )
                }
            };
            params.push(Param {
                init_line: Line::OffsetVoltage,
                drift_line: Line::OffsetDrift,
                target: Target::Source(sec.vos),
                init: [vos, vos],
                drift,
                s: [s_vos, s_vos],
                calibratable: true,
            });
            params.push(Param {
                init_line: Line::BiasCurrent,
                drift_line: Line::BiasCurrent,
                target: Target::BiasCommon(sec.ibp, sec.ibn),
                init: [ib, ib],
                drift: 0.0,
                s: [s_ibp + s_ibn; 2],
                calibratable: true,
            });
            if ios > 0.0 {
                params.push(Param {
                    init_line: Line::OffsetCurrent,
                    drift_line: Line::OffsetCurrent,
                    target: Target::BiasOffset(sec.ibp, sec.ibn),
                    init: [ios, ios],
                    drift: 0.0,
                    s: [0.5 * (s_ibp - s_ibn); 2],
                    calibratable: true,
                });
            }
            // Common mode at the inputs against the mid-supply point where
            // offset is specified (common practice for datasheet limits).
            let cm_at = |x: &[f64]| match sec.kind {
                AmplifierKind::InAmp(_) => 0.5 * (volt(x, sec.plus) + volt(x, sec.minus)),
                AmplifierKind::OpAmp(_) => volt(x, sec.plus),
            };
            let cm = [cm_at(&xs[0]) - mid, cm_at(&xs[1]) - mid];
            params.push(Param {
                init_line: Line::Cmrr,
                drift_line: Line::Cmrr,
                target: Target::Source(sec.vos),
                init: [cm[0] / cmrr, cm[1] / cmrr],
                drift: 0.0,
                s: [s_vos, s_vos],
                calibratable: true,
            });
            if let (AmplifierKind::InAmp(i), Some(int)) = (sec.kind, &sec.inamp) {
                let p = &stock.inamps[i];
                let s_g = {
                    let mut acc = [0.0; 2];
                    for &e in &int.gain_resistors {
                        let s = res_sens(e);
                        acc[0] += s[0];
                        acc[1] += s[1];
                    }
                    acc
                };
                params.push(Param {
                    init_line: Line::InAmpGainError,
                    drift_line: Line::InAmpGainDrift,
                    target: Target::Resistors(int.gain_resistors.clone()),
                    init: [p.gain_error.fraction(); 2],
                    drift: p.gain_drift.fraction_per_c() * dt,
                    s: s_g,
                    calibratable: true,
                });
                let s_o = branch(int.output_offset);
                params.push(Param {
                    init_line: Line::InAmpOutputOffset,
                    drift_line: Line::InAmpOutputOffset,
                    target: Target::Source(int.output_offset),
                    init: [p.output_offset_uv * 1e-6; 2],
                    drift: 0.0,
                    s: [s_o, s_o],
                    calibratable: true,
                });
            }
        }
        let supply_nominal = need.supply.positive.0;
        let ratiometric = need.supply.ratiometric;
        for src in &built.sources {
            let s = branch(src.element);
            if let Some(i) = src.reference {
                let r = &stock.references[i];
                params.push(Param {
                    init_line: Line::ReferenceInitial,
                    drift_line: Line::ReferenceTempco,
                    target: Target::Source(src.element),
                    init: [r.volts.0 * r.initial.fraction(); 2],
                    drift: r.volts.0 * r.tempco.fraction_per_c() * dt,
                    s: [s, s],
                    calibratable: true,
                });
            }
        }
        // The supply: as an offset source, and as the ADC scale when ratiometric.
        let supply_elem = built
            .sources
            .iter()
            .find(|s| s.reference.is_none())
            .map(|s| s.element);
        if supply_elem.is_some() || ratiometric {
            let s_sup = supply_elem.map(branch).unwrap_or(0.0);
            let s = if ratiometric {
                [
                    s_sup - (out[0] - need.adc.low.0) / supply_nominal,
                    s_sup - (out[1] - need.adc.low.0) / supply_nominal,
                ]
            } else {
                [s_sup, s_sup]
            };
            let range = need.supply.tolerance.fraction() * supply_nominal;
            params.push(Param {
                init_line: Line::SupplyTolerance,
                drift_line: Line::SupplyTolerance,
                target: match supply_elem {
                    Some(e) => Target::Source(e),
                    None => Target::AdcScale,
                },
                init: [range, range],
                drift: 0.0,
                s,
                calibratable: false,
            });
        }

        // Systematic: rounding (ideal op-amps) and finite gain. The output
        // with every gain block ideal (g = 1/Aol = 0) follows from the
        // adjoint to first order in g: d out/d g_k = -lambda_k * V(out_k);
        // the neglected term is of order (noise gain / Aol)^2.
        let mut out_ideal_opamps = out;
        for (e, el) in netlist.elements.iter().enumerate() {
            if let ElementKind::OpAmp { inverse_gain } = el.kind {
                let lk = branch(e);
                for (end, x) in xs.iter().enumerate() {
                    out_ideal_opamps[end] += lk * volt(x, el.nodes[2]) * inverse_gain;
                }
            }
        }
        // Where the neglected term could reach 1e-7 of full scale (low
        // open-loop gain against a high noise gain), solve exactly instead.
        let second_order = (0..2)
            .map(|e| (out[e] - out_ideal_opamps[e]).powi(2) / out[e].abs().max(1e-3))
            .fold(0.0, f64::max);
        if second_order > 1e-7 * fs {
            let mut ideal_net = netlist.clone();
            for e in 0..ideal_net.elements.len() {
                if let ElementKind::OpAmp { .. } = ideal_net.elements[e].kind {
                    set_value(&mut ideal_net, e, 0.0);
                }
            }
            let mut ideal_solver = Solver::new(&ideal_net);
            let xi = solve_ends(&mut ideal_solver, &mut ideal_net, built.vsense, signal)?;
            out_ideal_opamps = [xi[0][out_u], xi[1][out_u]];
        }
        let rounding = [
            out_ideal_opamps[0] - ideal[0],
            out_ideal_opamps[1] - ideal[1],
        ];
        let aol = [out[0] - out_ideal_opamps[0], out[1] - out_ideal_opamps[1]];
        let calibration = need.accuracy.calibration;
        let calibrate = |v: [f64; 2]| match calibration {
            Calibration::None => v,
            Calibration::Offset => [0.0, v[1] - v[0]],
            Calibration::TwoPoint => [0.0, 0.0],
        };
        let systematic = vec![
            (Line::NominalRounding, calibrate(rounding)),
            (Line::OpenLoopGain, calibrate(aol)),
        ];

        // Noise at the output.
        let t_hot = Celsius(need.accuracy.temp_max.0);
        let mut johnson2 = 0.0;
        let mut resistor_elems: Vec<usize> = built.resistors.iter().map(|r| r.element).collect();
        resistor_elems.extend(&built.source_resistors);
        resistor_elems.extend(&built.internal_resistors);
        for &e in &resistor_elems {
            let el = &netlist.elements[e];
            let r = value(&netlist, e);
            let dl = lam(el.nodes[0]) - lam(el.nodes[1]);
            let density = johnson_noise_density(Ohms(r), t_hot) / r; // current density A/rtHz
            johnson2 += (dl * density).powi(2);
        }
        let mut en2 = 0.0;
        let mut in2 = 0.0;
        for sec in &built.sections {
            let (en, inn) = match sec.kind {
                AmplifierKind::OpAmp(i) => (
                    stock.opamps[i].en_nv_rthz * 1e-9,
                    stock.opamps[i].in_pa_rthz * 1e-12,
                ),
                AmplifierKind::InAmp(i) => (stock.inamps[i].en_nv_rthz * 1e-9, 0.0),
            };
            en2 += (branch(sec.vos) * en).powi(2);
            in2 += (lam(sec.plus) * inn).powi(2) + (lam(sec.minus) * inn).powi(2);
        }
        let enbw = std::f64::consts::FRAC_PI_2 * need.accuracy.bandwidth.0;
        let mut ref2 = 0.0;
        for src in &built.sources {
            if let Some(i) = src.reference {
                let rms = stock.references[i].noise_uv_pp * 1e-6 / PEAK_TO_PEAK_PER_RMS;
                ref2 += (branch(src.element) * rms).powi(2);
            }
        }
        let total2 = (johnson2 + en2 + in2) * enbw + ref2;
        let rms = total2.sqrt();
        let share = |x: f64| if total2 > 0.0 { x / total2 } else { 0.0 };
        let noise = NoiseSummary {
            rms_v: rms,
            peak_to_peak_v: rms * PEAK_TO_PEAK_PER_RMS,
            noise_bandwidth_hz: enbw,
            shares: [
                share(johnson2 * enbw),
                share(en2 * enbw),
                share(in2 * enbw),
                share(ref2),
            ],
        };
        let noise_peak = 0.5 * noise.peak_to_peak_v;

        // Stages.
        let differential_in = |x: &[f64]| -> f64 {
            let sp = built
                .netlist
                .find_node("sp")
                .or_else(|| built.netlist.find_node("inp"))
                .unwrap_or(0);
            let sn = built
                .netlist
                .find_node("sn")
                .or_else(|| built.netlist.find_node("inn"))
                .unwrap_or(0);
            volt(x, sp) - volt(x, sn)
        };
        let mut stages = Vec::new();
        for (i, st) in design.stages.iter().enumerate() {
            let o = built.stage_outputs[i];
            let vo = [volt(&xs[0], o), volt(&xs[1], o)];
            let vi = if i == 0 {
                [differential_in(&xs[0]), differential_in(&xs[1])]
            } else {
                let p = built.stage_outputs[i - 1];
                [volt(&xs[0], p), volt(&xs[1], p)]
            };
            let gain = if (vi[1] - vi[0]).abs() > 0.0 {
                (vo[1] - vo[0]) / (vi[1] - vi[0])
            } else {
                0.0
            };
            let mut parts: Vec<String> = built
                .resistors
                .iter()
                .filter(|r| r.stage == i)
                .map(|r| r.designator.clone())
                .collect();
            parts.extend(
                built
                    .sections
                    .iter()
                    .filter(|s| s.stage == i)
                    .map(|s| s.designator.clone()),
            );
            stages.push(StageReport {
                index: i,
                shape: st.shape.name().to_string(),
                amplifier: st.amplifier.clone(),
                gain,
                offset_v: vo[0] - gain * vi[0],
                output_range_v: vo,
                parts,
            });
        }

        let output_adjoint = lambda.clone();
        let findings = feasibility(need, stock, &built, &mut solver, &xs, output_adjoint);
        let cold = need.accuracy.temp_min.0 - 25.0;
        let hot = need.accuracy.temp_max.0 - 25.0;
        let cold_ratio = if dt > 0.0 {
            if hot.abs() >= cold.abs() {
                cold / hot.abs()
            } else {
                hot / cold.abs()
            }
        } else {
            0.0
        };
        Ok(Model {
            built,
            fs,
            params,
            systematic,
            noise_peak,
            noise,
            out,
            ideal,
            signal,
            calibration,
            cold_ratio,
            ratiometric,
            supply_nominal,
            adc_low: need.adc.low.0,
            stages,
            findings,
        })
    }

    /// The netlist and part map.
    pub fn built(&self) -> &Built {
        &self.built
    }

    /// Initial contribution of a parameter at an end, after calibration.
    #[inline]
    fn u(&self, p: &Param, end: usize) -> f64 {
        let raw = |e: usize| p.s[e] * p.init[e];
        if !p.calibratable {
            return raw(end);
        }
        match self.calibration {
            Calibration::None => raw(end),
            Calibration::Offset => raw(end) - raw(0),
            Calibration::TwoPoint => 0.0,
        }
    }

    #[inline]
    fn w(&self, p: &Param, end: usize) -> f64 {
        p.s[end] * p.drift
    }

    /// First-order worst case at each end, volts.
    fn worst_at_ends(&self) -> [f64; 2] {
        let mut t = [0.0; 2];
        for (end, te) in t.iter_mut().enumerate() {
            let mut sum = self.noise_peak;
            for (_, v) in &self.systematic {
                sum += v[end].abs();
            }
            for p in &self.params {
                sum += self.u(p, end).abs() + self.w(p, end).abs();
            }
            *te = sum;
        }
        t
    }

    /// RSS at each end, volts: systematic part plus root-sum-square of the rest.
    fn rss_at_ends(&self) -> [f64; 2] {
        let mut t = [0.0; 2];
        for (end, te) in t.iter_mut().enumerate() {
            let mut sys = 0.0;
            for (_, v) in &self.systematic {
                sys += v[end].abs();
            }
            let mut sq = self.noise_peak * self.noise_peak;
            for p in &self.params {
                sq += self.u(p, end).powi(2) + self.w(p, end).powi(2);
            }
            *te = sys + sq.sqrt();
        }
        t
    }

    /// Random-part standard deviation at each end, volts, treating every
    /// limit as the edge of a uniform distribution (sigma = limit/sqrt 3)
    /// and noise as Gaussian.
    fn sigma_at_ends(&self) -> [f64; 2] {
        let mut t = [0.0; 2];
        for (end, te) in t.iter_mut().enumerate() {
            let mut sq = self.noise.rms_v.powi(2);
            for p in &self.params {
                sq += (self.u(p, end).powi(2) + self.w(p, end).powi(2)) / 3.0;
            }
            *te = sq.sqrt();
        }
        t
    }

    /// Solve the full netlist with every parameter at `x` (initial, in
    /// units of its range) and `y` (drift), and return the calibrated
    /// error at each end in volts.
    fn exact_error(&self, x: &[f64], y: &[f64]) -> Result<[f64; 2]> {
        let outputs = |with_drift: bool| -> Result<[f64; 2]> {
            // A deviation that calibration cannot remove (the supply moves
            // in service) is absent when calibrating.
            let deviation = |i: usize, p: &Param, end: usize| {
                let init = if p.calibratable || with_drift {
                    x[i] * p.init[end]
                } else {
                    0.0
                };
                init + if with_drift { y[i] * p.drift } else { 0.0 }
            };
            // Resistors set the matrix (the same at both ends); sources set
            // the right-hand side, end by end.
            let mut n = self.built.netlist.clone();
            for (i, p) in self.params.iter().enumerate() {
                if let Target::Resistors(es) = &p.target {
                    let d = deviation(i, p, 0);
                    for &e in es {
                        let v = value(&n, e);
                        set_value(&mut n, e, v * (1.0 + d));
                    }
                }
            }
            let mut s = Solver::new(&n);
            s.factor(&n)
                .map_err(|e| Error::design(format!("corner has no DC solution ({})", e.unknown)))?;
            let mut res = [0.0; 2];
            let mut xs = vec![0.0; s.size()];
            for (end, r) in res.iter_mut().enumerate() {
                let mut supply_dev = 0.0;
                for (i, p) in self.params.iter().enumerate() {
                    let d = deviation(i, p, end);
                    let nominal = |e: usize| value(&self.built.netlist, e);
                    match &p.target {
                        Target::Resistors(_) | Target::AdcScale => {}
                        Target::Source(e) => set_value(&mut n, *e, nominal(*e)),
                        Target::BiasCommon(a, b) | Target::BiasOffset(a, b) => {
                            set_value(&mut n, *a, nominal(*a));
                            set_value(&mut n, *b, nominal(*b));
                        }
                    }
                    if p.init_line == Line::SupplyTolerance {
                        supply_dev = d;
                    }
                }
                for (i, p) in self.params.iter().enumerate() {
                    let d = deviation(i, p, end);
                    match &p.target {
                        Target::Resistors(_) | Target::AdcScale => {}
                        Target::Source(e) => {
                            let v = value(&n, *e);
                            set_value(&mut n, *e, v + d);
                        }
                        Target::BiasCommon(a, b) => {
                            for e in [*a, *b] {
                                let v = value(&n, e);
                                set_value(&mut n, e, v + d);
                            }
                        }
                        Target::BiasOffset(a, b) => {
                            let va = value(&n, *a);
                            set_value(&mut n, *a, va + 0.5 * d);
                            let vb = value(&n, *b);
                            set_value(&mut n, *b, vb - 0.5 * d);
                        }
                    }
                }
                set_value(&mut n, self.built.vsense, self.signal[end]);
                s.rhs(&n, &mut xs);
                s.solve_in_place(&mut xs);
                let mut v = s.voltage(&xs, self.built.out);
                if self.ratiometric {
                    // The ADC window scales with the supply: refer the
                    // reading back to the nominal window.
                    let low = self.adc_low;
                    v = low + (v - low) * self.supply_nominal / (self.supply_nominal + supply_dev);
                }
                *r = v;
            }
            Ok(res)
        };
        let hot = outputs(true)?;
        let err = [hot[0] - self.ideal[0], hot[1] - self.ideal[1]];
        Ok(match self.calibration {
            Calibration::None => err,
            Calibration::Offset => {
                let cold = outputs(false)?;
                let trim = cold[0] - self.ideal[0];
                [err[0] - trim, err[1] - trim]
            }
            Calibration::TwoPoint => {
                let cold = outputs(false)?;
                let slope = (self.ideal[1] - self.ideal[0]) / (cold[1] - cold[0]);
                let map = |v: f64| self.ideal[0] + (v - cold[0]) * slope;
                [map(hot[0]) - self.ideal[0], map(hot[1]) - self.ideal[1]]
            }
        })
    }

    /// The corner that the linear model says is worst at `end`, solved
    /// exactly: error in volts (noise peak added).
    fn corner_check(&self, end: usize) -> Result<f64> {
        // Each contribution is linear in its deviation, so x = +/-sign(u)
        // puts every one the same way; both mirror corners are solved, as
        // second-order terms may favour either.
        let mut worst = 0.0f64;
        for sign in [1.0, -1.0] {
            let x: Vec<f64> = self
                .params
                .iter()
                .map(|p| sign * signum0(self.u(p, end)))
                .collect();
            let y: Vec<f64> = self
                .params
                .iter()
                .map(|p| sign * signum0(self.w(p, end)))
                .collect();
            worst = worst.max(self.exact_error(&x, &y)?[end].abs());
        }
        Ok(worst + self.noise_peak)
    }

    /// Monte Carlo over the linear model: `builds` draws from `seed`.
    pub fn monte_carlo(&self, builds: u64, seed: u64, limit_v: f64) -> YieldResult {
        let np = self.params.len();
        // Per parameter and condition (end x {hot, cold}) coefficients.
        let mut cu = vec![[0.0f64; 2]; np];
        let mut cw = vec![[0.0f64; 2]; np];
        for (i, p) in self.params.iter().enumerate() {
            cu[i] = [self.u(p, 0), self.u(p, 1)];
            cw[i] = [self.w(p, 0), self.w(p, 1)];
        }
        let sys: [f64; 2] = [
            self.systematic.iter().map(|(_, v)| v[0]).sum(),
            self.systematic.iter().map(|(_, v)| v[1]).sum(),
        ];
        let cold = self.cold_ratio;
        let limit = limit_v - self.noise_peak;
        let mut rng = Rng::new(seed);
        let mut pass = 0u64;
        let mut worst = Vec::with_capacity(builds as usize);
        let (mut s1, mut s2) = (0.0, 0.0);
        for _ in 0..builds {
            let (mut a0, mut a1, mut d0, mut d1) = (sys[0], sys[1], 0.0, 0.0);
            for i in 0..np {
                let x = rng.symmetric();
                let y = rng.symmetric();
                a0 += cu[i][0] * x;
                a1 += cu[i][1] * x;
                d0 += cw[i][0] * y;
                d1 += cw[i][1] * y;
            }
            let c = [a0 + d0, a1 + d1, a0 + cold * d0, a1 + cold * d1];
            let mut m = c[0];
            for v in &c[1..] {
                if v.abs() > m.abs() {
                    m = *v;
                }
            }
            if m.abs() <= limit {
                pass += 1;
            }
            s1 += m;
            s2 += m * m;
            worst.push(m);
        }
        let n = builds.max(1) as f64;
        let mean = s1 / n;
        let sigma = (s2 / n - mean * mean).max(0.0).sqrt();
        let (lo, hi) = wilson_interval(pass, builds);
        let span = worst.iter().fold(limit_v, |a, v| a.max(v.abs())) * 1.05;
        let bins = 40usize;
        let mut counts = vec![0u64; bins];
        for v in &worst {
            let k = (((v + span) / (2.0 * span)) * bins as f64).floor() as isize;
            counts[k.clamp(0, bins as isize - 1) as usize] += 1;
        }
        let pct = 100.0 / self.fs;
        YieldResult {
            builds,
            seed,
            yield_pct: 100.0 * pass as f64 / n,
            confidence_pct: [100.0 * lo, 100.0 * hi],
            sigma_pct_fs: sigma * pct,
            histogram: Histogram {
                bin_edges_pct_fs: (0..=bins)
                    .map(|k| (-span + 2.0 * span * k as f64 / bins as f64) * pct)
                    .collect(),
                counts,
            },
        }
    }

    /// Worst-case, RSS and sigma totals at the ends in % FS (fast; no corner check).
    pub fn quick_totals(&self) -> (f64, f64, f64) {
        let pct = 100.0 / self.fs;
        let w = self.worst_at_ends();
        let r = self.rss_at_ends();
        let s = self.sigma_at_ends();
        (
            w[0].max(w[1]) * pct,
            r[0].max(r[1]) * pct,
            s[0].max(s[1]) * pct,
        )
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
        let resistor_stage = |e: usize| {
            self.built
                .resistors
                .iter()
                .find(|r| r.element == e)
                .map(|r| {
                    let divider = r.role.starts_with("offset.") || r.role.starts_with("bias.");
                    (
                        2 * r.stage + usize::from(divider),
                        r.part.tolerance_pct / 100.0,
                        r.part.tcr_ppm_per_c * 1e-6,
                    )
                })
        };
        for p in &self.params {
            let stage = match (&p.target, p.init_line) {
                (Target::Resistors(es), Line::ResistorTolerance) if es.len() == 1 => {
                    resistor_stage(es[0])
                }
                _ => None,
            };
            for end in 0..2 {
                let (u, w) = (self.u(p, end), self.w(p, end));
                match stage {
                    Some((st, tol, tcr)) if st < 2 * stages => {
                        let ps = &mut split.per_stage[st];
                        if tol > 0.0 {
                            ps.tolerance_worst[end] += u.abs() / tol;
                            ps.tolerance_squares[end] += (u / tol).powi(2);
                        }
                        if tcr > 0.0 {
                            ps.tcr_worst[end] += w.abs() / tcr;
                            ps.tcr_squares[end] += (w / tcr).powi(2);
                        }
                    }
                    _ => {
                        split.other_worst[end] += u.abs() + w.abs();
                        split.other_squares[end] += u * u + w * w;
                    }
                }
            }
        }
        split
    }

    /// The random part of the total on a basis at each end, volts: what
    /// remains of the budget once the systematic lines are taken out
    /// (worst case: sum of limits plus noise peak; RSS: root-sum-square;
    /// yield: k sigma for the yield plus the noise peak).
    pub fn random_at_ends(&self, basis: Basis, yield_pct: f64) -> [f64; 2] {
        let sys = self.systematic_at_ends();
        match basis {
            Basis::WorstCase => {
                let w = self.worst_at_ends();
                [w[0] - sys[0], w[1] - sys[1]]
            }
            Basis::Rss => {
                let r = self.rss_at_ends();
                [r[0] - sys[0], r[1] - sys[1]]
            }
            Basis::Yield => {
                let s = self.sigma_at_ends();
                let k = yield_k_sigma(yield_pct);
                [k * s[0] + self.noise_peak, k * s[1] + self.noise_peak]
            }
        }
    }

    /// Signed finite-gain error at each end, volts, after calibration.
    pub fn open_loop_gain_error(&self) -> [f64; 2] {
        self.systematic
            .iter()
            .find(|(l, _)| *l == Line::OpenLoopGain)
            .map(|(_, v)| *v)
            .unwrap_or([0.0; 2])
    }

    /// Signed rounding error at each end, volts, after calibration.
    pub fn rounding_error(&self) -> [f64; 2] {
        self.systematic
            .iter()
            .find(|(l, _)| *l == Line::NominalRounding)
            .map(|(_, v)| *v)
            .unwrap_or([0.0; 2])
    }

    /// Systematic error at each end (rounding plus finite gain), volts,
    /// after calibration.
    pub fn systematic_at_ends(&self) -> [f64; 2] {
        let mut t = [0.0; 2];
        for (_, v) in &self.systematic {
            t[0] += v[0].abs();
            t[1] += v[1].abs();
        }
        t
    }

    /// Feasibility findings, with their text.
    pub fn findings(&self) -> Vec<Finding> {
        self.findings.iter().map(RawFinding::finding).collect()
    }

    /// Whether every feasibility check of the model passes (the ADC-window
    /// check needs the worst case and is made in [`Model::report`]).
    pub fn feasible(&self) -> bool {
        self.findings.iter().all(|f| f.ok)
    }

    /// Full report on a need's basis. `mc_builds` sets the Monte Carlo size
    /// for the yield basis (and is run for every basis when non-zero).
    pub fn report(&self, need: &Need, mc_builds: u64, seed: u64) -> Result<Analysis> {
        let pct = 100.0 / self.fs;
        let lsb = need.lsb();
        let vpu = need.volts_per_unit();
        let w = self.worst_at_ends();
        let first_order = w[0].max(w[1]);
        let binding_end = if w[1] > w[0] { 1 } else { 0 };
        let corner = self.corner_check(0)?.max(self.corner_check(1)?);
        let worst = first_order.max(corner);
        let r = self.rss_at_ends();
        let rss = r[0].max(r[1]);
        // Lines at the binding end.
        let mut budget = Vec::new();
        for line in Line::ALL {
            let mut at = [0.0f64; 2];
            let mut any = false;
            for (end, a) in at.iter_mut().enumerate() {
                if line == Line::Noise {
                    *a = self.noise_peak;
                    any = true;
                    continue;
                }
                for (l, v) in &self.systematic {
                    if *l == line {
                        *a += v[end].abs();
                        any = true;
                    }
                }
                for p in &self.params {
                    if p.init_line == line {
                        *a += self.u(p, end).abs();
                        any = true;
                    }
                    if p.drift_line == line && p.drift != 0.0 {
                        *a += self.w(p, end).abs();
                        any = true;
                    }
                }
            }
            if !any {
                continue;
            }
            let v = at[binding_end];
            budget.push(BudgetLine {
                line,
                source: line.label().to_string(),
                pct_fs: v * pct,
                lsb: v / lsb,
                units: vpu.map(|k| v / k),
                at_ends_pct_fs: [at[0] * pct, at[1] * pct],
                systematic: line.systematic(),
            });
        }
        let target_v = need.accuracy.max_error_pct_fs / pct;
        let yield_result = if mc_builds > 0 {
            Some(self.monte_carlo(mc_builds, seed, target_v))
        } else {
            None
        };
        let basis_pct_fs = match need.accuracy.basis {
            Basis::WorstCase => worst * pct,
            Basis::Rss => rss * pct,
            Basis::Yield => {
                let s = self.sigma_at_ends();
                let sys: f64 = (0..2)
                    .map(|e| self.systematic.iter().map(|(_, v)| v[e].abs()).sum::<f64>())
                    .fold(0.0, f64::max);
                (sys + yield_k_sigma(need.accuracy.yield_pct) * s[0].max(s[1]) + self.noise_peak)
                    * pct
            }
        };
        let feasible = self.feasible();
        let within = match need.accuracy.basis {
            Basis::Yield => yield_result
                .as_ref()
                .map(|y| y.yield_pct >= need.accuracy.yield_pct)
                .unwrap_or(basis_pct_fs <= need.accuracy.max_error_pct_fs),
            _ => basis_pct_fs <= need.accuracy.max_error_pct_fs,
        };
        let (k, b) = need.ideal_transfer();
        let gain = (self.out[1] - self.out[0]) / (self.signal[1] - self.signal[0]);
        let mut findings = self.findings();
        // The final output, with its worst-case error, inside the ADC window.
        let lo = self.out[0].min(self.out[1]) - worst;
        let hi = self.out[0].max(self.out[1]) + worst;
        let ok = lo >= need.adc.low.0 - 1e-12 && hi <= need.adc.high.0 + 1e-12;
        findings.push(Finding {
            check: "ADC window".into(),
            subject: "out".into(),
            ok,
            detail: format!(
                "output with worst-case error spans {lo:.4} V to {hi:.4} V; the ADC takes {:.4} V to {:.4} V",
                need.adc.low.0, need.adc.high.0
            ),
        });
        let feasible = feasible && ok;
        Ok(Analysis {
            transfer: Transfer {
                gain,
                offset_v: self.out[0] - gain * self.signal[0],
                ideal_gain: k,
                ideal_offset_v: b,
                output_at_ends_v: self.out,
                ideal_at_ends_v: self.ideal,
            },
            stages: self.stages.clone(),
            budget,
            worst_case_pct_fs: worst * pct,
            first_order_pct_fs: first_order * pct,
            corner_check_pct_fs: corner * pct,
            rss_pct_fs: rss * pct,
            basis_pct_fs,
            quantisation_pct_fs: 0.5 * lsb * pct,
            full_scale_v: self.fs,
            noise: self.noise.clone(),
            yield_result,
            findings,
            feasible,
            meets_target: feasible && within,
            binding_end,
        })
    }

    /// Exact calibrated error (volts, both ends) with each parameter at the
    /// given point in its range (`x` initial, `y` drift, each in -1..1);
    /// for tests of the worst-case claim.
    pub fn error_at(&self, x: &[f64], y: &[f64]) -> Result<[f64; 2]> {
        if x.len() != self.params.len() || y.len() != self.params.len() {
            return Err(Error::design("wrong number of parameter deviations"));
        }
        self.exact_error(x, y)
    }

    /// Number of parameters in the linear model.
    pub fn parameter_count(&self) -> usize {
        self.params.len()
    }

    /// The noise peak at the output, volts.
    pub fn noise_peak_v(&self) -> f64 {
        self.noise_peak
    }
}

/// The two-sided normal quantile for a yield in %, used to screen the
/// yield basis as RSS at k sigma (Acklam's rational approximation of the
/// inverse normal, from memory; accurate to about 1e-9).
pub fn yield_k_sigma(yield_pct: f64) -> f64 {
    let p = 0.5 + 0.5 * (yield_pct / 100.0).clamp(1e-9, 1.0 - 1e-12);
    inverse_normal(p)
}

#[allow(clippy::excessive_precision)]
fn inverse_normal(p: f64) -> f64 {
    let a = [
        -3.969683028665376e+01,
        2.209460984245205e+02,
        -2.759285104469687e+02,
        1.383577518672690e+02,
        -3.066479806614716e+01,
        2.506628277459239e+00,
    ];
    let b = [
        -5.447609879822406e+01,
        1.615858368580409e+02,
        -1.556989798598866e+02,
        6.680131188771972e+01,
        -1.328068155288572e+01,
    ];
    let c = [
        -7.784894002430293e-03,
        -3.223964580411365e-01,
        -2.400758277161838e+00,
        -2.549732539343734e+00,
        4.374664141464968e+00,
        2.938163982698783e+00,
    ];
    let d = [
        7.784695709041462e-03,
        3.224671290700398e-01,
        2.445134137142996e+00,
        3.754408661907416e+00,
    ];
    let plow = 0.02425;
    if p < plow {
        let q = (-2.0 * p.ln()).sqrt();
        (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5])
            / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1.0)
    } else if p <= 1.0 - plow {
        let q = p - 0.5;
        let r = q * q;
        (((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q
            / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1.0)
    } else {
        -inverse_normal(1.0 - p)
    }
}

fn feasibility(
    need: &Need,
    stock: &Stock,
    built: &Built,
    solver: &mut Solver,
    xs: &[Vec<f64>; 2],
    output_adjoint: Vec<f64>,
) -> Vec<RawFinding> {
    let mut out = Vec::new();
    let pos = need.supply.positive.0;
    let neg = need.supply.negative.0;
    let span = pos - neg;
    let node_map: Vec<Option<usize>> = (0..built.netlist.node_names.len())
        .map(|n| solver.node_unknown(n))
        .collect();
    let volt = |x: &[f64], node: usize| node_map[node].map(|i| x[i]).unwrap_or(0.0);
    // Lowest and highest voltage of these nodes at both span ends.
    let span_of = |nodes: &[usize]| {
        xs.iter()
            .flat_map(|x| nodes.iter().map(move |&n| volt(x, n)))
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
                (lo.min(v), hi.max(v))
            })
    };
    for pkg in &built.packages {
        let (lo, hi) = match pkg.kind {
            AmplifierKind::OpAmp(i) => (stock.opamps[i].supply_min.0, stock.opamps[i].supply_max.0),
            AmplifierKind::InAmp(i) => (stock.inamps[i].supply_min.0, stock.inamps[i].supply_max.0),
        };
        out.push(RawFinding {
            check: "supply range",
            subject: format!("{} ({})", pkg.designator, pkg.part_id),
            ok: span >= lo && span <= hi,
            numbers: [span, lo, hi, 0.0],
        });
    }
    let mut adjoints: std::collections::BTreeMap<usize, Vec<f64>> =
        std::collections::BTreeMap::new();
    adjoints.insert(built.out, output_adjoint);
    for sec in &built.sections {
        let (il, ih, ol, oh, gbw_hz) = match sec.kind {
            AmplifierKind::OpAmp(i) => {
                let p = &stock.opamps[i];
                (
                    p.input_headroom_low.0,
                    p.input_headroom_high.0,
                    p.output_headroom_low.0,
                    p.output_headroom_high.0,
                    p.gbw_mhz * 1e6,
                )
            }
            AmplifierKind::InAmp(i) => {
                let p = &stock.inamps[i];
                (
                    p.input_headroom_low.0,
                    p.input_headroom_high.0,
                    p.output_headroom_low.0,
                    p.output_headroom_high.0,
                    p.gbw_mhz * 1e6,
                )
            }
        };
        let (cm_lo, cm_hi) = (neg + il, pos - ih);
        let mut inputs = vec![sec.plus];
        if matches!(sec.kind, AmplifierKind::InAmp(_)) {
            inputs.push(sec.minus);
        }
        let (vmin, vmax) = span_of(&inputs);
        out.push(RawFinding {
            check: "input common mode",
            subject: sec.designator.clone(),
            ok: vmin >= cm_lo - 1e-9 && vmax <= cm_hi + 1e-9,
            numbers: [vmin, vmax, cm_lo, cm_hi],
        });
        let (sw_lo, sw_hi) = (neg + ol, pos - oh);
        let mut nodes = vec![sec.out];
        nodes.extend(&sec.internal_outputs);
        let (omin, omax) = span_of(&nodes);
        out.push(RawFinding {
            check: "output swing",
            subject: sec.designator.clone(),
            ok: omin >= sw_lo - 1e-9 && omax <= sw_hi + 1e-9,
            numbers: [omin, omax, sw_lo, sw_hi],
        });
        // Noise gain of this section: its output per volt of its own offset,
        // from the adjoint of its output node (one solve per distinct
        // output node; a follower's is 1 without solving).
        let ng = if sec.minus == sec.out && matches!(sec.kind, AmplifierKind::OpAmp(_)) {
            1.0
        } else {
            let mu = adjoints.entry(sec.out).or_insert_with(|| {
                let mut mu = vec![0.0; solver.size()];
                if let Some(i) = solver.node_unknown(sec.out) {
                    mu[i] = 1.0;
                }
                solver.solve_transposed_in_place(&mut mu);
                mu
            });
            solver
                .branch_unknown(sec.vos)
                .map(|i| mu[i].abs())
                .unwrap_or(1.0)
                .max(1.0)
        };
        let needed = 10.0 * need.accuracy.bandwidth.0;
        let closed = gbw_hz / ng;
        out.push(RawFinding {
            check: "gain-bandwidth",
            subject: sec.designator.clone(),
            ok: closed >= needed,
            numbers: [ng, closed, need.accuracy.bandwidth.0, 0.0],
        });
    }
    for src in &built.sources {
        if let Some(i) = src.reference {
            let r = &stock.references[i];
            let needs = r.volts.0 + r.dropout.0;
            out.push(RawFinding {
                check: "reference headroom",
                subject: format!("{} ({})", src.designator, r.part_id),
                ok: needs <= pos,
                numbers: [needs, pos, 0.0, 0.0],
            });
        }
    }
    let parts = part_count(built);
    out.push(RawFinding {
        check: "part count",
        subject: "design".into(),
        ok: parts <= need.search.max_parts,
        numbers: [parts as f64, need.search.max_parts as f64, 0.0, 0.0],
    });
    out
}

/// Parts on the board: resistors, amplifier packages, references.
pub fn part_count(built: &Built) -> usize {
    built.resistors.len()
        + built.packages.len()
        + built
            .sources
            .iter()
            .filter(|s| s.reference.is_some())
            .count()
}

/// Analyse a design against a need: the budget on the need's basis, with a
/// Monte Carlo run of `mc_builds` (seeded) when the basis is `yield` or
/// `mc_builds` is non-zero.
pub fn analyze(
    need: &Need,
    stock: &Stock,
    design: &Design,
    mc_builds: u64,
    seed: u64,
) -> Result<(Model, Analysis)> {
    let model = Model::new(need, stock, design)?;
    let builds = if need.accuracy.basis == Basis::Yield && mc_builds == 0 {
        20_000
    } else {
        mc_builds
    };
    let report = model.report(need, builds, seed)?;
    Ok((model, report))
}
