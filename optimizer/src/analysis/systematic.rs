//! Systematic terms: the nominal error of the rounded values (every
//! op-amp ideal) and the error of the op-amps' finite open-loop gain. Both
//! are fixed for a given design and signed; calibration removes what a
//! trim removes.

use super::contributor::Contributor;
use super::dc_error;
use crate::error::Result;
use crate::mna::{set_element_value, DcSolution};
use crate::need::Need;
use crate::netlist::{ElementKind, Netlist};
use crate::topology::Built;

/// One systematic line: its signed error at each end, volts, calibrated.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SystematicTerm {
    /// Which line.
    pub contributor: Contributor,
    /// Signed error at the low and high end, volts, after calibration.
    pub error: [f64; 2],
    /// The same before calibration (for the line's explanation).
    pub raw: [f64; 2],
}

/// Rounding and finite-gain terms of a solved design. `netlist` is the
/// design's netlist as solved in `dc`, `ideal` the ideal output at the
/// span ends, `signal` the sensor values there.
pub(crate) fn terms(
    need: &Need,
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
    ideal: [f64; 2],
    signal: [f64; 2],
) -> Result<Vec<SystematicTerm>> {
    let out = dc.output();
    // The output with every gain block ideal (g = 1/Aol = 0) follows from
    // the adjoint to first order in g: d out/d g_k = -lambda_k * V(out_k);
    // the neglected term is of order (noise gain / Aol)^2.
    let mut out_ideal_opamps = out;
    for (e, element) in netlist.elements.iter().enumerate() {
        if let ElementKind::OpAmp { inverse_gain } = element.kind {
            let adjoint = dc.branch_adjoint(e);
            for (end, v) in out_ideal_opamps.iter_mut().enumerate() {
                *v += adjoint * dc.voltage(end, element.nodes[2]) * inverse_gain;
            }
        }
    }
    // Where the neglected term could reach 1e-7 of full scale (low
    // open-loop gain against a high noise gain), solve exactly instead.
    let second_order = (0..2)
        .map(|e| (out[e] - out_ideal_opamps[e]).powi(2) / out[e].abs().max(1e-3))
        .fold(0.0, f64::max);
    if second_order > 1e-7 * need.full_scale() {
        out_ideal_opamps = ideal_opamp_output(built, netlist, signal)?;
    }
    let rounding = [
        out_ideal_opamps[0] - ideal[0],
        out_ideal_opamps[1] - ideal[1],
    ];
    let open_loop = [out[0] - out_ideal_opamps[0], out[1] - out_ideal_opamps[1]];
    let calibration = need.accuracy.calibration;
    Ok(vec![
        SystematicTerm {
            contributor: Contributor::NominalRounding,
            error: calibration.apply(rounding),
            raw: rounding,
        },
        SystematicTerm {
            contributor: Contributor::OpenLoopGain,
            error: calibration.apply(open_loop),
            raw: open_loop,
        },
    ])
}

/// The output at both ends with every op-amp's open-loop gain infinite,
/// by a full solve.
fn ideal_opamp_output(built: &Built, netlist: &Netlist, signal: [f64; 2]) -> Result<[f64; 2]> {
    let mut ideal_net = netlist.clone();
    for e in 0..ideal_net.elements.len() {
        if let ElementKind::OpAmp { .. } = ideal_net.elements[e].kind {
            set_element_value(&mut ideal_net, e, 0.0);
        }
    }
    DcSolution::solve(&mut ideal_net, built.vsense, signal, built.out)
        .map(|dc| dc.output())
        .map_err(dc_error)
}
