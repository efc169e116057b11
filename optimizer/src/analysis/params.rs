//! Parameter collection: every imperfection of the parts (resistor
//! tolerance and TCR, op-amp offset, drift, bias and offset current, CMRR,
//! PSRR, in-amp gain error and output offset, reference accuracy, tempco
//! and load regulation, supply tolerance, the sensor's resistance and common mode) becomes a
//! [`Parameter`]: what it perturbs in the netlist, its initial range and
//! drift range, and the output's sensitivity to it at both span ends (from
//! the adjoint).
//!
//! The sensor as it is: its common mode is not a reference. A
//! differential sensor with its own excitation has a common mode within
//! `sensor.common_mode_tolerance_pct`; one excited from the supply
//! (`sensor.excitation = "supply"`) has its signal and common mode move
//! with the rail, so the supply's one parameter moves them together with
//! every offset taken from the rail and, when ratiometric, the ADC scale.

use super::contributor::Contributor;
use crate::mna::DcSolution;
use crate::need::{Calibration, Excitation, Need};
use crate::netlist::Netlist;
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built, Section};

/// What one parameter perturbs in the netlist.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Target {
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
    /// Absolute change of several sources together, each by its weight at
    /// each span end (the supply when it also excites the sensor: the rail,
    /// the sensor signal by `signal / rail` and its common mode by
    /// `common mode / rail`).
    Sources(Vec<(usize, [f64; 2])>),
}

/// One imperfection, linearised.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Parameter {
    /// The budget line its initial deviation goes to.
    pub initial_contributor: Contributor,
    /// The budget line its drift goes to.
    pub drift_contributor: Contributor,
    /// What it perturbs.
    pub target: Target,
    /// Half-range of the initial deviation at each end (target units).
    pub initial: [f64; 2],
    /// Half-range of the drift at the largest temperature excursion.
    pub drift: f64,
    /// d(output)/d(target) at each end.
    pub sensitivity: [f64; 2],
    /// Removed by calibration (the supply is not: it moves in service).
    pub calibratable: bool,
}

impl Parameter {
    /// Output error of the initial deviation at its limit, at `end`, after
    /// calibration (signed, volts).
    #[inline]
    pub fn initial_error(&self, calibration: Calibration, end: usize) -> f64 {
        let raw = [
            self.sensitivity[0] * self.initial[0],
            self.sensitivity[1] * self.initial[1],
        ];
        if self.calibratable {
            calibration.apply(raw)[end]
        } else {
            raw[end]
        }
    }

    /// Output error of the drift at its limit (largest excursion), at `end`
    /// (signed, volts; calibration does not remove drift).
    #[inline]
    pub fn drift_error(&self, end: usize) -> f64 {
        self.sensitivity[end] * self.drift
    }
}

/// The parameters of a built design, in a fixed order: resistors, then per
/// amplifier section its offset, bias, offset current, CMRR and in-amp
/// terms, then references, then the supply.
pub(crate) fn collect(
    need: &Need,
    stock: &Stock,
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
) -> Vec<Parameter> {
    let delta_t = need.max_delta_t();
    let mut params = Vec::new();
    let common_mode = common_mode_parameter(need, built, dc);
    let supply = supply_parameter(need, built, dc);
    // How the sensor's common mode can move the amplifier inputs: the
    // forward response of every node to those two parameters, per end.
    let motions: Vec<SourceMotion> = common_mode
        .iter()
        .chain(
            supply
                .iter()
                .filter(|_| need.sensor.excitation == Excitation::Supply),
        )
        .filter_map(|p| SourceMotion::of(dc, p))
        .collect();
    resistor_parameters(built, netlist, dc, delta_t, &mut params);
    for section in &built.sections {
        amplifier_parameters(need, stock, netlist, dc, section, &motions, &mut params);
    }
    // A reference's tempco is a box-method figure (common practice): the
    // output stays inside a box `tempco x (temp_max - temp_min)` high over
    // the whole range, and its value at 25 degC may sit anywhere in that
    // box, so the drift limit is the whole box height.
    let box_t = need
        .accuracy
        .reference_box_c
        .unwrap_or(need.accuracy.temp_max.0 - need.accuracy.temp_min.0)
        .max(0.0);
    for source in &built.sources {
        if let Some(i) = source.reference {
            let reference = &stock.references[i];
            let sensitivity = dc.branch_adjoint(source.element);
            params.push(Parameter {
                initial_contributor: Contributor::ReferenceInitial,
                drift_contributor: Contributor::ReferenceTempco,
                target: Target::Source(source.element),
                initial: [reference.volts.0 * reference.initial.fraction(); 2],
                drift: reference.volts.0 * reference.tempco.fraction_per_c() * box_t,
                sensitivity: [sensitivity, sensitivity],
                calibratable: true,
            });
        }
    }
    // The sensor's own resistance, all legs together (one resistor, split
    // between the legs of a differential sensor).
    let source_tolerance = need.sensor.source_tolerance.fraction();
    let source_drift = need.sensor.source_tempco.fraction_per_c() * delta_t;
    if !built.source_resistors.is_empty() && (source_tolerance > 0.0 || source_drift != 0.0) {
        let mut sensitivity = [0.0; 2];
        for &e in &built.source_resistors {
            let s = dc.resistor_sensitivity(netlist, e);
            sensitivity[0] += s[0];
            sensitivity[1] += s[1];
        }
        params.push(Parameter {
            initial_contributor: Contributor::SourceResistance,
            drift_contributor: Contributor::SourceResistance,
            target: Target::Resistors(built.source_resistors.clone()),
            initial: [source_tolerance; 2],
            drift: source_drift.abs(),
            sensitivity,
            calibratable: true,
        });
    }
    reference_load_parameters(stock, built, dc, &mut params);
    params.extend(common_mode);
    params.extend(supply);
    params
}

/// Tolerance and TCR of the placed resistors. A single resistor is one
/// parameter of its own. The elements of one matched network package
/// move together and apart: one parameter for the package as a whole
/// (every element by the same fraction, within the absolute tolerance and
/// TCR) and one per element (within half the ratio tolerance and half the
/// TCR tracking, so the ratio of any two elements stays within the ratio
/// figures). Worst case and RSS then take the common part through the sum
/// of the elements' sensitivities, where a ratio the circuit depends on
/// cancels it, and the Monte Carlo draws one common deviation per package
/// and one of its own per element. This is the one place resistor
/// correlation enters the analysis.
fn resistor_parameters(
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
    delta_t: f64,
    params: &mut Vec<Parameter>,
) {
    let resistor = |contributors: (Contributor, Contributor),
                    elements: Vec<usize>,
                    tolerance_pct: f64,
                    tcr_ppm_per_c: f64| {
        let mut sensitivity = [0.0; 2];
        for &e in &elements {
            let s = dc.resistor_sensitivity(netlist, e);
            sensitivity[0] += s[0];
            sensitivity[1] += s[1];
        }
        let tolerance = tolerance_pct / 100.0;
        Parameter {
            initial_contributor: contributors.0,
            drift_contributor: contributors.1,
            target: Target::Resistors(elements),
            initial: [tolerance, tolerance],
            drift: tcr_ppm_per_c * 1e-6 * delta_t,
            sensitivity,
            calibratable: true,
        }
    };
    let lines = (Contributor::ResistorTolerance, Contributor::ResistorTcr);
    for placed in &built.resistors {
        let part = &placed.part;
        params.push(match &part.network {
            None => resistor(
                lines,
                vec![placed.element],
                part.tolerance_pct,
                part.tcr_ppm_per_c,
            ),
            Some(n) => resistor(
                lines,
                vec![placed.element],
                0.5 * n.ratio_tolerance_pct,
                0.5 * n.tracking_tcr_ppm_per_c,
            ),
        });
    }
    for package in crate::design::network_packages(built.resistors.iter().map(|p| &p.part)) {
        let placed = &built.resistors[package.elements[0]];
        let elements = package
            .elements
            .iter()
            .map(|&i| built.resistors[i].element)
            .collect();
        params.push(resistor(
            lines,
            elements,
            placed.part.tolerance_pct,
            placed.part.tcr_ppm_per_c,
        ));
    }
}

/// The forward response of every unknown to one parameter's sources, per
/// unit of its deviation, at each span end, with the parameter's largest
/// deviation (initial plus drift).
struct SourceMotion {
    response: [Vec<f64>; 2],
    range: f64,
}

impl SourceMotion {
    /// The motion of a parameter that moves sources (`None` for others).
    fn of(dc: &DcSolution, parameter: &Parameter) -> Option<SourceMotion> {
        let weights: Vec<(usize, [f64; 2])> = match &parameter.target {
            Target::Source(e) => vec![(*e, [1.0; 2])],
            Target::Sources(list) => list.clone(),
            _ => return None,
        };
        let solver = dc.solver();
        let response = [0, 1].map(|end| {
            let mut x = vec![0.0; solver.size()];
            for (e, w) in &weights {
                if let Some(k) = solver.branch_unknown(*e) {
                    x[k] += w[end];
                }
            }
            solver.solve_in_place(&mut x);
            x
        });
        Some(SourceMotion {
            response,
            range: parameter.initial[0].abs().max(parameter.initial[1].abs())
                + parameter.drift.abs(),
        })
    }

    /// How far the mean of `nodes` can move at `end`, volts.
    fn reach(&self, dc: &DcSolution, nodes: &[crate::netlist::Node], end: usize) -> f64 {
        let solver = dc.solver();
        let mean = nodes
            .iter()
            .map(|&n| solver.voltage(&self.response[end], n))
            .sum::<f64>()
            / nodes.len().max(1) as f64;
        (mean * self.range).abs()
    }
}

/// The common mode of a differential sensor with its own excitation: not
/// a reference, it sits within `sensor.common_mode_tolerance_pct` of its
/// value. Its output effect (through any mismatch of the network that
/// takes the difference) goes to the common-mode line. It is a property
/// of the sensor and its excitation, not of the board, so calibration
/// does not remove it (our rule).
fn common_mode_parameter(need: &Need, built: &Built, dc: &DcSolution) -> Option<Parameter> {
    let vcm = built.vcm?;
    if need.sensor.excitation != Excitation::Independent {
        return None;
    }
    let range = need.sensor.common_mode_tolerance.fraction() * need.sensor.common_mode.0.abs();
    if range <= 0.0 {
        return None;
    }
    let sensitivity = dc.branch_adjoint(vcm);
    Some(Parameter {
        calibratable: false,
        ..flat(Contributor::Cmrr, Target::Source(vcm), range, sensitivity)
    })
}

// ---------------------------------------------------------------------
// Parts over temperature and load: bias current growth with temperature,
// supply rejection, reference load regulation (`docs/stock.md` gives the
// columns and their defaults).

/// The bias (and offset) current limit's initial and drift ranges, as
/// multiples of the stock limit. Without a doubling interval the limit
/// holds over the whole range: untrimmed it is the initial range at every
/// temperature; once a calibration has trimmed the value on the day, the
/// current may still move anywhere inside its limit (drift range the limit
/// itself; a conservative assumption of this tool). With a doubling
/// interval `n` degC (FET and CMOS inputs, leakage roughly doubling every
/// 10 degC; common practice) the limit is the one at 25 degC and grows to
/// `2^((temp_max - 25)/n)` times it at the hot end: untrimmed that is the
/// initial range; trimmed at 25 degC, the drift range is the larger move
/// to either temperature end, `2^(hot/n) - 1` or `1 - 2^(-cold/n)`.
pub(crate) fn bias_over_temperature(need: &Need, doubling_c: Option<f64>) -> [f64; 2] {
    let calibrated = need.accuracy.calibration != Calibration::None;
    match doubling_c {
        None => {
            let moves = need.max_delta_t() > 0.0 && calibrated;
            [1.0, if moves { 1.0 } else { 0.0 }]
        }
        Some(n) => {
            let hot = (need.accuracy.temp_max.0 - 25.0).max(0.0);
            let cold = (25.0 - need.accuracy.temp_min.0).max(0.0);
            let growth = (hot / n).exp2();
            if calibrated {
                [1.0, (growth - 1.0).max(1.0 - (-cold / n).exp2())]
            } else {
                [growth, 0.0]
            }
        }
    }
}

/// The supply-rejection parameter of a section: the positive rail's
/// tolerance over the part's minimum PSRR, as an input offset (so through
/// the section's noise gain). Like the supply line it moves in service, so
/// calibration does not remove it. `None` when the supply has no
/// tolerance.
fn psrr_parameter(need: &Need, psrr_ratio: f64, vos: usize, s_offset: f64) -> Option<Parameter> {
    let supply_range = need.supply.positive.0.abs() * need.supply.tolerance.fraction();
    (supply_range > 0.0 && psrr_ratio > 0.0).then(|| Parameter {
        calibratable: false,
        ..flat(
            Contributor::Psrr,
            Target::Source(vos),
            supply_range / psrr_ratio,
            s_offset,
        )
    })
}

/// Load regulation of each reference: its load current at each span end
/// (the branch current of its source, from the network it drives) times
/// its regulation, as a change of its output. A fixed shift on each board,
/// so calibration removes it like the initial accuracy.
fn reference_load_parameters(
    stock: &Stock,
    built: &Built,
    dc: &DcSolution,
    params: &mut Vec<Parameter>,
) {
    for source in &built.sources {
        let Some(reference) = source.reference.and_then(|i| stock.references.get(i)) else {
            continue;
        };
        // Volts of output change per ampere of load.
        let per_amp = reference.volts.0 * reference.load_regulation_ppm_per_ma * 1e-6 * 1e3;
        let load = [0, 1].map(|end| dc.branch_current(end, source.element).unwrap_or(0.0).abs());
        let initial = [per_amp * load[0], per_amp * load[1]];
        if initial[0] > 0.0 || initial[1] > 0.0 {
            let sensitivity = dc.branch_adjoint(source.element);
            params.push(Parameter {
                initial_contributor: Contributor::ReferenceLoad,
                drift_contributor: Contributor::ReferenceLoad,
                target: Target::Source(source.element),
                initial,
                drift: 0.0,
                sensitivity: [sensitivity, sensitivity],
                calibratable: true,
            });
        }
    }
}

/// A constant parameter with the same range and sensitivity at both ends.
fn flat(contributor: Contributor, target: Target, initial: f64, sensitivity: f64) -> Parameter {
    Parameter {
        initial_contributor: contributor,
        drift_contributor: contributor,
        target,
        initial: [initial, initial],
        drift: 0.0,
        sensitivity: [sensitivity, sensitivity],
        calibratable: true,
    }
}

/// The limits of one amplifier section that enter the budget.
struct AmplifierLimits {
    offset_v: f64,
    offset_drift_v: f64,
    bias_a: f64,
    offset_current_a: f64,
    cmrr_ratio: f64,
    /// Temperature rise that doubles the bias current, if given.
    ib_doubling_c: Option<f64>,
    /// Minimum supply rejection as a ratio.
    psrr_ratio: f64,
}

fn amplifier_limits(stock: &Stock, kind: AmplifierKind, delta_t: f64) -> AmplifierLimits {
    match kind {
        AmplifierKind::OpAmp(i) => {
            let part = &stock.opamps[i];
            AmplifierLimits {
                offset_v: part.vos_max_uv * 1e-6,
                offset_drift_v: part.vos_drift_uv_per_c * 1e-6 * delta_t,
                bias_a: part.ib_max_na * 1e-9,
                offset_current_a: part.ios_max_na * 1e-9,
                cmrr_ratio: part.cmrr_min.ratio(),
                ib_doubling_c: part.ib_doubling_c,
                psrr_ratio: part.psrr_min.ratio(),
            }
        }
        AmplifierKind::InAmp(i) => {
            let part = &stock.inamps[i];
            AmplifierLimits {
                offset_v: part.input_offset_uv * 1e-6,
                offset_drift_v: part.offset_drift_uv_per_c * 1e-6 * delta_t,
                bias_a: part.ib_max_na * 1e-9,
                offset_current_a: 0.0,
                cmrr_ratio: part.cmrr_min.ratio(),
                ib_doubling_c: part.ib_doubling_c,
                psrr_ratio: part.psrr_min.ratio(),
            }
        }
    }
}

/// Offset, drift, bias and offset current, CMRR and (integrated in-amps)
/// gain error and output offset of one section.
fn amplifier_parameters(
    need: &Need,
    stock: &Stock,
    netlist: &Netlist,
    dc: &DcSolution,
    section: &Section,
    motions: &[SourceMotion],
    params: &mut Vec<Parameter>,
) {
    let delta_t = need.max_delta_t();
    let limits = amplifier_limits(stock, section.kind, delta_t);
    let s_offset = dc.branch_adjoint(section.vos);
    let s_bias_plus = -dc.node_adjoint(section.plus);
    let s_bias_minus = -dc.node_adjoint(section.minus);
    params.push(Parameter {
        drift_contributor: Contributor::OffsetDrift,
        drift: limits.offset_drift_v,
        ..flat(
            Contributor::OffsetVoltage,
            Target::Source(section.vos),
            limits.offset_v,
            s_offset,
        )
    });
    // Bias and offset current are real errors through the network
    // resistance; their ranges over temperature are those of
    // `bias_over_temperature`.
    let [grows, moves] = bias_over_temperature(need, limits.ib_doubling_c);
    params.push(Parameter {
        drift: moves * limits.bias_a,
        ..flat(
            Contributor::BiasCurrent,
            Target::BiasCommon(section.ibp, section.ibn),
            grows * limits.bias_a,
            s_bias_plus + s_bias_minus,
        )
    });
    if limits.offset_current_a > 0.0 {
        params.push(Parameter {
            drift: moves * limits.offset_current_a,
            ..flat(
                Contributor::OffsetCurrent,
                Target::BiasOffset(section.ibp, section.ibn),
                grows * limits.offset_current_a,
                0.5 * (s_bias_plus - s_bias_minus),
            )
        });
    }
    // Common mode at the inputs against the mid-supply point where offset
    // is specified (common practice for datasheet limits).
    let mid = 0.5 * (need.supply.positive.0 + need.supply.negative.0);
    let common_mode_at = |end: usize| match section.kind {
        AmplifierKind::InAmp(_) => {
            0.5 * (dc.voltage(end, section.plus) + dc.voltage(end, section.minus))
        }
        AmplifierKind::OpAmp(_) => dc.voltage(end, section.plus),
    };
    // The sensor's common mode is not exact: the inputs' common mode
    // reaches as far from mid-supply as its motion allows.
    let inputs: &[crate::netlist::Node] = match section.kind {
        AmplifierKind::InAmp(_) => &[section.plus, section.minus],
        AmplifierKind::OpAmp(_) => &[section.plus],
    };
    let widened = |end: usize| {
        let nominal = common_mode_at(end) - mid;
        let reach: f64 = motions.iter().map(|m| m.reach(dc, inputs, end)).sum();
        nominal + if nominal < 0.0 { -reach } else { reach }
    };
    let common_mode = [widened(0), widened(1)];
    params.push(Parameter {
        initial: [
            common_mode[0] / limits.cmrr_ratio,
            common_mode[1] / limits.cmrr_ratio,
        ],
        ..flat(
            Contributor::Cmrr,
            Target::Source(section.vos),
            0.0,
            s_offset,
        )
    });
    params.extend(psrr_parameter(
        need,
        limits.psrr_ratio,
        section.vos,
        s_offset,
    ));
    if let (AmplifierKind::InAmp(i), Some(internals)) = (section.kind, &section.inamp) {
        let part = &stock.inamps[i];
        let mut s_gain = [0.0; 2];
        for &e in &internals.gain_resistors {
            let sensitivity = dc.resistor_sensitivity(netlist, e);
            s_gain[0] += sensitivity[0];
            s_gain[1] += sensitivity[1];
        }
        params.push(Parameter {
            initial_contributor: Contributor::InAmpGainError,
            drift_contributor: Contributor::InAmpGainDrift,
            target: Target::Resistors(internals.gain_resistors.clone()),
            initial: [part.gain_error.fraction(); 2],
            drift: part.gain_drift.fraction_per_c() * delta_t,
            sensitivity: s_gain,
            calibratable: true,
        });
        params.push(flat(
            Contributor::InAmpOutputOffset,
            Target::Source(internals.output_offset),
            part.output_offset_uv * 1e-6,
            dc.branch_adjoint(internals.output_offset),
        ));
    }
}

/// The supply: as an offset source where it feeds the circuit, as the
/// sensor's excitation (its signal and common mode scale with the rail)
/// with `sensor.excitation = "supply"`, and as the ADC scale when the
/// design is ratiometric. Not removed by calibration: it moves in service.
fn supply_parameter(need: &Need, built: &Built, dc: &DcSolution) -> Option<Parameter> {
    let nominal = need.supply.positive.0;
    let supply_element = built
        .sources
        .iter()
        .find(|s| s.reference.is_none())
        .map(|s| s.element);
    let excited = need.sensor.excitation == Excitation::Supply;
    if supply_element.is_none() && !need.supply.ratiometric && !excited {
        return None;
    }
    // The sources the rail moves, each per volt of the rail at each end.
    let mut weights: Vec<(usize, [f64; 2])> =
        supply_element.map(|e| (e, [1.0; 2])).into_iter().collect();
    if excited {
        let signal = [need.sensor.signal_low.0, need.sensor.signal_high.0];
        weights.push((built.vsense, [signal[0] / nominal, signal[1] / nominal]));
        if let Some(vcm) = built.vcm {
            weights.push((vcm, [need.sensor.common_mode.0 / nominal; 2]));
        }
    }
    let in_circuit = |end: usize| -> f64 {
        weights
            .iter()
            .map(|(e, w)| w[end] * dc.branch_adjoint(*e))
            .sum()
    };
    let out = dc.output();
    let sensitivity = if need.supply.ratiometric {
        [
            in_circuit(0) - (out[0] - need.adc.low.0) / nominal,
            in_circuit(1) - (out[1] - need.adc.low.0) / nominal,
        ]
    } else {
        [in_circuit(0), in_circuit(1)]
    };
    let range = need.supply.tolerance.fraction() * nominal;
    Some(Parameter {
        initial_contributor: Contributor::SupplyTolerance,
        drift_contributor: Contributor::SupplyTolerance,
        target: match (excited, supply_element) {
            (true, _) => Target::Sources(weights),
            (false, Some(e)) => Target::Source(e),
            (false, None) => Target::AdcScale,
        },
        initial: [range, range],
        drift: 0.0,
        sensitivity,
        calibratable: false,
    })
}
