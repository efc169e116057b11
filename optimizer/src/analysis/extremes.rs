//! Raw extremes: how far each node of the circuit can move, untrimmed,
//! when every part sits at its limits (tolerance plus drift, offset, bias
//! and offset current, reference accuracy and tempco, supply tolerance).
//!
//! The swing, common-mode and ADC-window checks are made on these ranges,
//! before any calibration: a trim corrects a working circuit's reading, it
//! cannot bring back a node that has clipped. The circuit is linear, so
//! each node's range over the sensor span is its value at the two span
//! ends widened by the sum of every parameter's effect at its limit; the
//! drift is taken at the larger temperature excursion, which covers the
//! other end too (drift is linear in `T - 25 degC`).
//!
//! The sensitivity of a node to a parameter comes from that node's adjoint
//! (one transposed solve with the factors already made), as for the
//! output in `mna::DcSolution`.

use super::params::{Parameter, Target};
use crate::mna::{element_value, DcSolution, Solver};
use crate::netlist::{ElementKind, Netlist, Node};
use std::collections::BTreeMap;

/// `d(V_node)/d(target)` at `end` of the nominal solution, from the
/// node's adjoint `adjoint`.
pub(crate) fn sensitivity(
    netlist: &Netlist,
    dc: &DcSolution,
    adjoint: &[f64],
    target: &Target,
    end: usize,
) -> f64 {
    let voltage = |n: Node| dc.voltage(end, n);
    sensitivity_with(netlist, dc.solver(), adjoint, target, &voltage, None, end)
}

/// `d(V)/d(target)` for the node whose adjoint is `adjoint`, on `netlist`
/// factored in `solver`, whose node voltages are `voltage`. A resistor's
/// deviation is relative to its value in `nominal` (its present value
/// when `None`); weighted sources take their weight at span end `end`.
pub(crate) fn sensitivity_with(
    netlist: &Netlist,
    solver: &Solver,
    adjoint: &[f64],
    target: &Target,
    voltage: &dyn Fn(Node) -> f64,
    nominal: Option<&Netlist>,
    end: usize,
) -> f64 {
    let at_node = |n: Node| solver.node_unknown(n).map(|i| adjoint[i]).unwrap_or(0.0);
    // A source's value enters the right-hand side: a voltage source at its
    // branch row, a current source out of its first node and into its
    // second (as `mna::Solver::rhs` stamps them).
    let source = |e: usize| -> f64 {
        let element = &netlist.elements[e];
        match element.kind {
            ElementKind::VoltageSource { .. } => {
                solver.branch_unknown(e).map(|i| adjoint[i]).unwrap_or(0.0)
            }
            ElementKind::CurrentSource { .. } => {
                at_node(element.nodes[1]) - at_node(element.nodes[0])
            }
            _ => 0.0,
        }
    };
    match target {
        Target::Resistors(elements) => elements
            .iter()
            .map(|&e| {
                let element = &netlist.elements[e];
                let ElementKind::Resistor { ohms } = element.kind else {
                    return 0.0;
                };
                let base = nominal.map(|n| element_value(n, e)).unwrap_or(ohms);
                let (a, b) = (element.nodes[0], element.nodes[1]);
                let adjoint_drop = at_node(a) - at_node(b);
                let voltage_drop = voltage(a) - voltage(b);
                // d V / d R = adjoint_drop * voltage_drop / R^2, and the
                // deviation moves R by `base` per unit.
                adjoint_drop * voltage_drop * base / (ohms * ohms)
            })
            .sum(),
        Target::Source(e) => source(*e),
        Target::BiasCommon(a, b) => source(*a) + source(*b),
        Target::BiasOffset(a, b) => 0.5 * (source(*a) - source(*b)),
        Target::AdcScale => 0.0,
        Target::Sources(list) => list.iter().map(|(e, w)| w[end] * source(*e)).sum(),
    }
}

/// The largest untrimmed movement of a parameter's target: its initial
/// limit plus its drift limit (target units, at `end`).
#[inline]
pub(crate) fn raw_limit(parameter: &Parameter, end: usize) -> f64 {
    parameter.initial[end].abs() + parameter.drift.abs()
}

/// The half-width of the raw range of `node` at each span end: the sum
/// over the parameters of `|dV/dp| x (initial + drift limit)`, from the
/// node's adjoint (`adjoint`).
pub(crate) fn node_half_range(
    netlist: &Netlist,
    dc: &DcSolution,
    params: &[Parameter],
    adjoint: &[f64],
) -> [f64; 2] {
    let mut half = [0.0; 2];
    for parameter in params {
        for (end, h) in half.iter_mut().enumerate() {
            let s = sensitivity(netlist, dc, adjoint, &parameter.target, end);
            *h += (s * raw_limit(parameter, end)).abs();
        }
    }
    half
}

/// The raw low and high of a set of nodes over both span ends; node
/// adjoints are taken from, and added to, `adjoints`.
pub(crate) fn nodes_range(
    netlist: &Netlist,
    dc: &DcSolution,
    params: &[Parameter],
    nodes: &[Node],
    adjoints: &mut BTreeMap<Node, Vec<f64>>,
) -> (f64, f64) {
    let mut low = f64::INFINITY;
    let mut high = f64::NEG_INFINITY;
    for &node in nodes {
        let half = if dc.solver().node_unknown(node).is_none() {
            [0.0; 2]
        } else {
            let adjoint = adjoints.entry(node).or_insert_with(|| dc.adjoint_of(node));
            node_half_range(netlist, dc, params, adjoint)
        };
        for (end, h) in half.iter().enumerate() {
            let v = dc.voltage(end, node);
            low = low.min(v - h);
            high = high.max(v + h);
        }
    }
    (low, high)
}

/// The half-width of the raw range of the reading at the output, each
/// end: the parameters' own output sensitivities (which carry the ADC
/// scale of a ratiometric design), untrimmed.
pub(crate) fn output_half_range(params: &[Parameter]) -> [f64; 2] {
    let mut half = [0.0; 2];
    for parameter in params {
        for (end, h) in half.iter_mut().enumerate() {
            *h += (parameter.sensitivity[end] * raw_limit(parameter, end)).abs();
        }
    }
    half
}
