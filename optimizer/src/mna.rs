//! Modified nodal analysis: the one DC solver of spanfit.
//!
//! Unknowns are the node voltages (ground excluded) followed by one branch
//! current per voltage source and per op-amp output. The matrix is dense
//! (front ends have tens of nodes) and is factored once by LU with partial
//! pivoting; the same factors give the forward solution for any source
//! values and the adjoint solution `A^T lambda = c`, from which the
//! sensitivity of the output to every element follows without re-solving
//! (the adjoint method of circuit sensitivity analysis; see any circuit
//! simulation text, e.g. Vlach and Singhal, *Computer Methods for Circuit
//! Analysis and Design*, ch. on sensitivity; from memory).
//!
//! The workspace is allocated once per netlist shape and reused, so the
//! analysis of many value sets of one structure does not allocate.

use crate::lu::DenseLu;
use crate::netlist::{ElementKind, Netlist, Node};

/// The solver failed: the circuit has no unique DC solution (a floating
/// node, a loop of voltage sources, an op-amp without feedback).
#[derive(Debug, Clone, PartialEq)]
pub struct Singular {
    /// The unknown at which elimination found no pivot.
    pub unknown: String,
}

/// A reusable solver for one netlist shape.
///
/// An offset source `VOS_<ref>` in series with an op-amp's + input (its
/// first node touching nothing but that + input) is folded into the
/// op-amp's own row: `g V(out) - V(pin) + V(minus) = Vos`. That removes
/// two unknowns per section and leaves every result unchanged; the
/// source's sensitivity is then read from the op-amp's row, and the
/// internal node reads as the pin.
#[derive(Debug, Clone)]
pub struct Solver {
    n: usize,
    /// Unknown of each node (`None` for ground and folded nodes).
    node_map: Vec<Option<usize>>,
    /// For each element, the index of its branch unknown (if any); a
    /// folded source maps to its op-amp's row.
    branch: Vec<Option<usize>>,
    /// For each element: an op-amp's effective + node, or for a folded
    /// source the marker that its value goes to the op-amp row.
    plus: Vec<usize>,
    folded: Vec<bool>,
    /// For a folded internal node, the + pin it stands for.
    pin_of: Vec<Option<Node>>,
    lu: DenseLu<f64>,
}

impl Solver {
    /// A solver sized for this netlist.
    pub fn new(netlist: &Netlist) -> Self {
        let nn = netlist.node_names.len();
        let ne = netlist.elements.len();
        let mut uses = vec![0usize; nn];
        for e in &netlist.elements {
            let k = if matches!(e.kind, ElementKind::OpAmp { .. }) {
                3
            } else {
                2
            };
            for &node in &e.nodes[..k] {
                uses[node] += 1;
            }
        }
        // Find foldable offset sources.
        let mut folded = vec![false; ne];
        let mut fold_of_opamp: Vec<Option<usize>> = vec![None; ne];
        let mut node_folded = vec![false; nn];
        for (k, e) in netlist.elements.iter().enumerate() {
            if !matches!(e.kind, ElementKind::OpAmp { .. }) {
                continue;
            }
            let pi = e.nodes[0];
            if pi == 0 || uses[pi] != 2 || node_folded[pi] {
                continue;
            }
            let src = netlist.elements.iter().position(|s| {
                matches!(s.kind, ElementKind::VoltageSource { .. })
                    && s.name.starts_with("VOS_")
                    && s.nodes[0] == pi
                    && s.nodes[1] != pi
            });
            if let Some(si) = src {
                folded[si] = true;
                fold_of_opamp[k] = Some(si);
                node_folded[pi] = true;
            }
        }
        let mut node_map = vec![None; nn];
        let mut next = 0;
        for (i, slot) in node_map.iter_mut().enumerate().skip(1) {
            if !node_folded[i] {
                *slot = Some(next);
                next += 1;
            }
        }
        let mut branch = vec![None; ne];
        for (ei, e) in netlist.elements.iter().enumerate() {
            if folded[ei] {
                continue;
            }
            if matches!(
                e.kind,
                ElementKind::VoltageSource { .. } | ElementKind::OpAmp { .. }
            ) {
                branch[ei] = Some(next);
                next += 1;
            }
        }
        let mut plus: Vec<usize> = netlist.elements.iter().map(|e| e.nodes[0]).collect();
        let mut pin_of = vec![None; nn];
        for (k, f) in fold_of_opamp.iter().enumerate() {
            if let Some(si) = *f {
                branch[si] = branch[k];
                plus[k] = netlist.elements[si].nodes[1];
                pin_of[netlist.elements[k].nodes[0]] = Some(plus[k]);
            }
        }
        let n = next;
        Solver {
            n,
            node_map,
            branch,
            plus,
            folded,
            pin_of,
            lu: DenseLu::new(n),
        }
    }

    /// Number of unknowns.
    pub fn size(&self) -> usize {
        self.n
    }

    /// Index of the unknown for a node (`None` for ground; a folded
    /// internal node reads as its op-amp's + pin).
    #[inline]
    pub fn node_unknown(&self, node: Node) -> Option<usize> {
        match self.node_map.get(node).copied().flatten() {
            Some(i) => Some(i),
            None => self
                .pin_of
                .get(node)
                .copied()
                .flatten()
                .and_then(|pin| self.node_map[pin]),
        }
    }

    /// Index of the branch-current unknown of an element, if it has one
    /// (for a folded offset source: its op-amp's row, where its value
    /// enters).
    #[inline]
    pub fn branch_unknown(&self, element: usize) -> Option<usize> {
        self.branch[element]
    }

    /// The node an op-amp element's + input stamps at (past a folded
    /// offset source: the source's other node).
    #[inline]
    pub(crate) fn plus_node(&self, element: usize) -> Node {
        self.plus[element]
    }

    /// Whether this element is an offset source folded into its op-amp's
    /// row (it has no row of its own).
    #[inline]
    pub(crate) fn is_folded(&self, element: usize) -> bool {
        self.folded[element]
    }

    /// Stamp and factor the matrix of `netlist` (values as they are now).
    pub fn factor(&mut self, netlist: &Netlist) -> Result<(), Singular> {
        self.lu.clear();
        let a = &mut self.lu;
        let idx = |node: Node| self.node_map[node];
        for (ei, e) in netlist.elements.iter().enumerate() {
            match e.kind {
                ElementKind::Resistor { ohms } => {
                    let g = 1.0 / ohms;
                    let (p, q) = (idx(e.nodes[0]), idx(e.nodes[1]));
                    if let Some(p) = p {
                        a.add(p, p, g);
                    }
                    if let Some(q) = q {
                        a.add(q, q, g);
                    }
                    if let (Some(p), Some(q)) = (p, q) {
                        a.add(p, q, -g);
                        a.add(q, p, -g);
                    }
                }
                ElementKind::VoltageSource { .. } => {
                    if self.folded[ei] {
                        continue;
                    }
                    let k = self.branch[ei].unwrap_or(0);
                    if let Some(p) = idx(e.nodes[0]) {
                        a.add(p, k, 1.0);
                        a.add(k, p, 1.0);
                    }
                    if let Some(q) = idx(e.nodes[1]) {
                        a.add(q, k, -1.0);
                        a.add(k, q, -1.0);
                    }
                }
                // Open at DC.
                ElementKind::CurrentSource { .. } | ElementKind::Capacitor { .. } => {}
                ElementKind::OpAmp { inverse_gain } => {
                    let k = self.branch[ei].unwrap_or(0);
                    if let Some(o) = idx(e.nodes[2]) {
                        a.add(o, k, 1.0);
                        a.add(k, o, inverse_gain);
                    }
                    if let Some(p) = idx(self.plus[ei]) {
                        a.add(k, p, -1.0);
                    }
                    if let Some(m) = idx(e.nodes[1]) {
                        a.add(k, m, 1.0);
                    }
                }
            }
        }
        // LU with partial pivoting, in place (the shared dense LU).
        self.lu.factor().map_err(|col| Singular {
            unknown: self.unknown_name(netlist, col),
        })
    }

    fn unknown_name(&self, netlist: &Netlist, i: usize) -> String {
        if let Some(node) = self.node_map.iter().position(|m| *m == Some(i)) {
            return format!("node {}", netlist.node_names[node]);
        }
        for (ei, b) in self.branch.iter().enumerate() {
            if *b == Some(i) && !self.folded[ei] {
                return format!("branch current of {}", netlist.elements[ei].name);
            }
        }
        format!("unknown {i}")
    }

    /// Build the right-hand side from the sources of `netlist`.
    pub fn rhs(&self, netlist: &Netlist, b: &mut [f64]) {
        b.iter_mut().for_each(|v| *v = 0.0);
        for (ei, e) in netlist.elements.iter().enumerate() {
            match e.kind {
                ElementKind::VoltageSource { volts } => {
                    if let Some(k) = self.branch[ei] {
                        b[k] += volts;
                    }
                }
                ElementKind::CurrentSource { amps } => {
                    if let Some(p) = self.node_unknown(e.nodes[0]) {
                        b[p] -= amps;
                    }
                    if let Some(q) = self.node_unknown(e.nodes[1]) {
                        b[q] += amps;
                    }
                }
                _ => {}
            }
        }
    }

    /// Solve `A x = b` in place with the current factors.
    pub fn solve_in_place(&self, x: &mut [f64]) {
        self.lu.solve_in_place(x);
    }

    /// Solve `A^T y = c` in place with the current factors (the adjoint).
    pub fn solve_transposed_in_place(&self, y: &mut [f64]) {
        self.lu.solve_transposed_in_place(y);
    }

    /// Factor and solve in one call, returning the unknowns.
    pub fn dc(&mut self, netlist: &Netlist) -> Result<Vec<f64>, Singular> {
        self.factor(netlist)?;
        let mut x = vec![0.0; self.n];
        self.rhs(netlist, &mut x);
        self.solve_in_place(&mut x);
        Ok(x)
    }

    /// Voltage of `node` in a solution vector.
    #[inline]
    pub fn voltage(&self, x: &[f64], node: Node) -> f64 {
        match self.node_unknown(node) {
            Some(i) => x[i],
            None => 0.0,
        }
    }
}

/// Why a [`DcSolution`] could not be formed.
#[derive(Debug, Clone, PartialEq)]
pub enum DcFailure {
    /// The circuit has no unique DC solution.
    Singular(Singular),
    /// The output node asked for is ground.
    GroundedOutput,
}

/// The DC operating point of a circuit at the two values of one swept
/// source (the two ends of the sensor span), and the adjoint of one output
/// node: everything the error budget needs from the solver.
///
/// The matrix is factored once; the forward solutions differ only in the
/// right-hand side, and the adjoint `A^T lambda = e_out` reuses the same
/// factors. From `lambda`, the sensitivity of the output to any source
/// value or resistor follows without another solve.
#[derive(Debug, Clone)]
pub struct DcSolution {
    solver: Solver,
    /// All unknowns at each value of the swept source.
    ends: [Vec<f64>; 2],
    /// The adjoint of the output node.
    output_adjoint: Vec<f64>,
    /// Output voltage at each value of the swept source.
    output: [f64; 2],
}

impl DcSolution {
    /// Factor `netlist`, solve it with the voltage source `swept` at each
    /// of `values`, and form the adjoint of `output`. The swept source is
    /// left at `values[0]`.
    pub fn solve(
        netlist: &mut Netlist,
        swept: usize,
        values: [f64; 2],
        output: Node,
    ) -> Result<DcSolution, DcFailure> {
        let mut solver = Solver::new(netlist);
        solver.factor(netlist).map_err(DcFailure::Singular)?;
        let mut ends = [vec![0.0; solver.size()], vec![0.0; solver.size()]];
        for (end, x) in ends.iter_mut().enumerate() {
            set_element_value(netlist, swept, values[end]);
            solver.rhs(netlist, x);
            solver.solve_in_place(x);
        }
        set_element_value(netlist, swept, values[0]);
        let out = solver
            .node_unknown(output)
            .ok_or(DcFailure::GroundedOutput)?;
        let mut output_adjoint = vec![0.0; solver.size()];
        output_adjoint[out] = 1.0;
        solver.solve_transposed_in_place(&mut output_adjoint);
        let output = [ends[0][out], ends[1][out]];
        Ok(DcSolution {
            solver,
            ends,
            output_adjoint,
            output,
        })
    }

    /// Output voltage at each end.
    #[inline]
    pub fn output(&self) -> [f64; 2] {
        self.output
    }

    /// Voltage of `node` at `end` (0 or 1).
    #[inline]
    pub fn voltage(&self, end: usize, node: Node) -> f64 {
        self.solver.voltage(&self.ends[end], node)
    }

    /// The output adjoint at a node: `-d(output)/d(I)` for a current `I`
    /// drawn out of that node (0 for ground).
    #[inline]
    pub fn node_adjoint(&self, node: Node) -> f64 {
        self.solver
            .node_unknown(node)
            .map(|i| self.output_adjoint[i])
            .unwrap_or(0.0)
    }

    /// `d(output)/d(V)` for the value `V` of a voltage source (or the
    /// inverse gain of an op-amp, times its output voltage): the adjoint
    /// at the element's branch unknown, 0 if it has none.
    #[inline]
    pub fn branch_adjoint(&self, element: usize) -> f64 {
        self.solver
            .branch_unknown(element)
            .map(|i| self.output_adjoint[i])
            .unwrap_or(0.0)
    }

    /// Sensitivity of the output to a relative change `dR/R` of the
    /// resistor `element`, at each end: `dOut/d(dR/R) = (lambda_a -
    /// lambda_b)(V_a - V_b)/R` (the adjoint method; see the module header).
    pub fn resistor_sensitivity(&self, netlist: &Netlist, element: usize) -> [f64; 2] {
        let el = &netlist.elements[element];
        let ohms = match el.kind {
            ElementKind::Resistor { ohms } => ohms,
            _ => return [0.0; 2],
        };
        let (a, b) = (el.nodes[0], el.nodes[1]);
        let adjoint_drop = self.node_adjoint(a) - self.node_adjoint(b);
        let mut sensitivity = [0.0; 2];
        for (end, s) in sensitivity.iter_mut().enumerate() {
            let voltage_drop = self.voltage(end, a) - self.voltage(end, b);
            // d out / d G = -adjoint_drop * voltage_drop ; d out / (dR/R) = -G * d out/dG
            *s = adjoint_drop * voltage_drop / ohms;
        }
        sensitivity
    }

    /// The branch current of a voltage source at `end` in the MNA sense
    /// (flowing from its first node into the source, so negative while
    /// the source delivers current to the circuit), or `None` when the
    /// element has no branch unknown of its own.
    pub fn branch_current(&self, end: usize, element: usize) -> Option<f64> {
        self.solver
            .branch_unknown(element)
            .map(|i| self.ends[end][i])
    }

    /// The adjoint of a voltage source's branch current (one more solve
    /// with the same factors), or `None` when it has no branch unknown.
    pub fn branch_current_adjoint(&self, element: usize) -> Option<Vec<f64>> {
        let k = self.solver.branch_unknown(element)?;
        let mut adjoint = vec![0.0; self.solver.size()];
        adjoint[k] = 1.0;
        self.solver.solve_transposed_in_place(&mut adjoint);
        Some(adjoint)
    }

    /// The adjoint of another node (one more solve with the same factors);
    /// the output's own is returned without solving.
    pub fn adjoint_of(&self, node: Node) -> Vec<f64> {
        let mut adjoint = vec![0.0; self.solver.size()];
        if let Some(i) = self.solver.node_unknown(node) {
            adjoint[i] = 1.0;
        }
        self.solver.solve_transposed_in_place(&mut adjoint);
        adjoint
    }

    /// The adjoint of the output node.
    pub fn output_adjoint(&self) -> &[f64] {
        &self.output_adjoint
    }

    /// The factored solver (for reading unknown indices).
    pub fn solver(&self) -> &Solver {
        &self.solver
    }
}

/// Set the value of an element: ohms, volts, amps or an op-amp's inverse
/// gain.
pub fn set_element_value(netlist: &mut Netlist, element: usize, value: f64) {
    match &mut netlist.elements[element].kind {
        ElementKind::Resistor { ohms } => *ohms = value,
        ElementKind::VoltageSource { volts } => *volts = value,
        ElementKind::CurrentSource { amps } => *amps = value,
        ElementKind::OpAmp { inverse_gain } => *inverse_gain = value,
        ElementKind::Capacitor { farads } => *farads = value,
    }
}

/// The value of an element: ohms, volts, amps, an op-amp's inverse gain
/// or farads.
pub fn element_value(netlist: &Netlist, element: usize) -> f64 {
    match netlist.elements[element].kind {
        ElementKind::Resistor { ohms } => ohms,
        ElementKind::VoltageSource { volts } => volts,
        ElementKind::CurrentSource { amps } => amps,
        ElementKind::OpAmp { inverse_gain } => inverse_gain,
        ElementKind::Capacitor { farads } => farads,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A divider: 10 V over 1k + 3k gives 7.5 V at the tap (Ohm's law).
    #[test]
    fn divider() {
        let mut n = Netlist::new();
        let top = n.node("top");
        let mid = n.node("mid");
        n.vsource("V1", top, 0, 10.0);
        n.resistor("R1", top, mid, 1000.0);
        n.resistor("R2", mid, 0, 3000.0);
        let mut s = Solver::new(&n);
        let x = s.dc(&n).unwrap();
        assert!((s.voltage(&x, mid) - 7.5).abs() < 1e-12);
    }

    /// A non-inverting stage with finite gain: `A/(1 + A beta)` (the
    /// closed-loop gain formula of feedback theory, common practice).
    #[test]
    fn non_inverting_finite_gain() {
        let mut n = Netlist::new();
        let inp = n.node("in");
        let out = n.node("out");
        let m = n.node("m");
        n.vsource("VIN", inp, 0, 0.1);
        n.resistor("RF", out, m, 9000.0);
        n.resistor("RG", m, 0, 1000.0);
        let aol = 1e4;
        n.add(
            "EU1",
            ElementKind::OpAmp {
                inverse_gain: 1.0 / aol,
            },
            [inp, m, out],
        );
        let mut s = Solver::new(&n);
        let x = s.dc(&n).unwrap();
        let beta = 0.1;
        let expect = 0.1 * aol / (1.0 + aol * beta);
        assert!((s.voltage(&x, out) - expect).abs() < 1e-12);
    }

    /// Adjoint sensitivities agree with finite differences.
    #[test]
    fn adjoint_matches_finite_difference() {
        let mut n = Netlist::new();
        let inp = n.node("in");
        let out = n.node("out");
        let m = n.node("m");
        n.vsource("VIN", inp, 0, 0.2);
        let rf = n.resistor("RF", out, m, 20000.0);
        n.resistor("RG", m, 0, 1000.0);
        n.isource("IB", m, 0, 1e-7);
        n.add(
            "EU1",
            ElementKind::OpAmp { inverse_gain: 1e-5 },
            [inp, m, out],
        );
        let mut s = Solver::new(&n);
        let x = s.dc(&n).unwrap();
        let mut lambda = vec![0.0; s.size()];
        lambda[s.node_unknown(out).unwrap()] = 1.0;
        s.solve_transposed_in_place(&mut lambda);
        // d out / d G(RF) = -(la - lb)(xa - xb)
        let d_dg = -(lambda[out - 1] - lambda[m - 1]) * (x[out - 1] - x[m - 1]);
        let d_dr = -d_dg / (20000.0f64 * 20000.0);
        let mut n2 = n.clone();
        let h = 1e-3;
        n2.elements[rf].kind = ElementKind::Resistor { ohms: 20000.0 + h };
        let x2 = Solver::new(&n2).dc(&n2).unwrap();
        let fd = (x2[out - 1] - x[out - 1]) / h;
        assert!(
            (fd - d_dr).abs() < 1e-6 * d_dr.abs().max(1e-9),
            "{fd} vs {d_dr}"
        );
    }

    /// The divider's tap moves `V R1 R2/(R1 + R2)^2` per unit relative
    /// change of R2 (differentiating Ohm's-law division by hand), at each
    /// value of the swept source; a grounded output is refused.
    #[test]
    fn dc_solution_sensitivity_matches_divider_formula() {
        let mut n = Netlist::new();
        let top = n.node("top");
        let mid = n.node("mid");
        let source = n.vsource("V1", top, 0, 0.0);
        n.resistor("R1", top, mid, 1000.0);
        let r2 = n.resistor("R2", mid, 0, 3000.0);
        let dc = DcSolution::solve(&mut n, source, [10.0, 20.0], mid).unwrap();
        assert_eq!(element_value(&n, source), 10.0);
        for (end, volts) in [10.0, 20.0].into_iter().enumerate() {
            assert!((dc.output()[end] - 0.75 * volts).abs() < 1e-12);
            let want = volts * 1000.0 * 3000.0 / 4000.0f64.powi(2);
            let got = dc.resistor_sensitivity(&n, r2)[end];
            assert!((got - want).abs() < 1e-12, "{got} vs {want}");
        }
        // d V(mid) / d V1 = R2/(R1 + R2).
        assert!((dc.branch_adjoint(source) - 0.75).abs() < 1e-12);
        assert_eq!(
            DcSolution::solve(&mut n, source, [1.0, 2.0], 0).err(),
            Some(DcFailure::GroundedOutput)
        );
    }

    #[test]
    fn floating_node_is_singular() {
        let mut n = Netlist::new();
        let a = n.node("a");
        let b = n.node("b");
        n.resistor("R1", a, b, 1000.0);
        n.vsource("V1", a, 0, 1.0);
        n.isource("I1", b, 0, 0.0);
        let c = n.node("c");
        n.isource("I2", c, 0, 1e-3);
        assert!(Solver::new(&n).dc(&n).is_err());
    }
}
