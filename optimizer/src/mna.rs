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

use crate::netlist::{ElementKind, Netlist, Node};

/// The solver failed: the circuit has no unique DC solution (a floating
/// node, a loop of voltage sources, an op-amp without feedback).
#[derive(Debug, Clone, PartialEq)]
pub struct Singular {
    /// The unknown at which elimination found no pivot.
    pub unknown: String,
}

/// A reusable solver for one netlist shape.
#[derive(Debug, Clone)]
pub struct Solver {
    n: usize,
    nodes: usize,
    /// For each element, the index of its branch unknown (if any).
    branch: Vec<Option<usize>>,
    lu: Vec<f64>,
    pivot: Vec<usize>,
    scratch: Vec<f64>,
}

impl Solver {
    /// A solver sized for this netlist.
    pub fn new(netlist: &Netlist) -> Self {
        let nodes = netlist.node_names.len() - 1;
        let mut next = nodes;
        let branch = netlist
            .elements
            .iter()
            .map(|e| match e.kind {
                ElementKind::VoltageSource { .. } | ElementKind::OpAmp { .. } => {
                    next += 1;
                    Some(next - 1)
                }
                _ => None,
            })
            .collect();
        let n = next;
        Solver {
            n,
            nodes,
            branch,
            lu: vec![0.0; n * n],
            pivot: vec![0; n],
            scratch: vec![0.0; n],
        }
    }

    /// Number of unknowns.
    pub fn size(&self) -> usize {
        self.n
    }

    /// Index of the unknown for a node (`None` for ground).
    #[inline]
    pub fn node_unknown(&self, node: Node) -> Option<usize> {
        if node == 0 {
            None
        } else {
            Some(node - 1)
        }
    }

    /// Index of the branch-current unknown of an element, if it has one.
    #[inline]
    pub fn branch_unknown(&self, element: usize) -> Option<usize> {
        self.branch[element]
    }

    /// Stamp and factor the matrix of `netlist` (values as they are now).
    pub fn factor(&mut self, netlist: &Netlist) -> Result<(), Singular> {
        let n = self.n;
        self.lu.iter_mut().for_each(|v| *v = 0.0);
        let a = &mut self.lu;
        let idx = |node: Node| if node == 0 { None } else { Some(node - 1) };
        for (ei, e) in netlist.elements.iter().enumerate() {
            match e.kind {
                ElementKind::Resistor { ohms } => {
                    let g = 1.0 / ohms;
                    let (p, q) = (idx(e.nodes[0]), idx(e.nodes[1]));
                    if let Some(p) = p {
                        a[p * n + p] += g;
                    }
                    if let Some(q) = q {
                        a[q * n + q] += g;
                    }
                    if let (Some(p), Some(q)) = (p, q) {
                        a[p * n + q] -= g;
                        a[q * n + p] -= g;
                    }
                }
                ElementKind::VoltageSource { .. } => {
                    let k = self.branch[ei].unwrap_or(0);
                    if let Some(p) = idx(e.nodes[0]) {
                        a[p * n + k] += 1.0;
                        a[k * n + p] += 1.0;
                    }
                    if let Some(q) = idx(e.nodes[1]) {
                        a[q * n + k] -= 1.0;
                        a[k * n + q] -= 1.0;
                    }
                }
                ElementKind::CurrentSource { .. } => {}
                ElementKind::OpAmp { inverse_gain } => {
                    let k = self.branch[ei].unwrap_or(0);
                    if let Some(o) = idx(e.nodes[2]) {
                        a[o * n + k] += 1.0;
                        a[k * n + o] += inverse_gain;
                    }
                    if let Some(p) = idx(e.nodes[0]) {
                        a[k * n + p] -= 1.0;
                    }
                    if let Some(m) = idx(e.nodes[1]) {
                        a[k * n + m] += 1.0;
                    }
                }
            }
        }
        // LU with partial pivoting, in place.
        let mut scale = 0.0f64;
        for v in a.iter() {
            scale = scale.max(v.abs());
        }
        let tiny = scale * 1e-14;
        for col in 0..n {
            let mut best = col;
            let mut best_val = a[col * n + col].abs();
            for row in col + 1..n {
                let v = a[row * n + col].abs();
                if v > best_val {
                    best = row;
                    best_val = v;
                }
            }
            if best_val <= tiny || !best_val.is_finite() {
                return Err(Singular {
                    unknown: self.unknown_name(netlist, col),
                });
            }
            self.pivot[col] = best;
            if best != col {
                for j in 0..n {
                    a.swap(col * n + j, best * n + j);
                }
            }
            let d = a[col * n + col];
            for row in col + 1..n {
                let f = a[row * n + col] / d;
                if f != 0.0 {
                    a[row * n + col] = f;
                    for j in col + 1..n {
                        a[row * n + j] -= f * a[col * n + j];
                    }
                } else {
                    a[row * n + col] = 0.0;
                }
            }
        }
        Ok(())
    }

    fn unknown_name(&self, netlist: &Netlist, i: usize) -> String {
        if i < self.nodes {
            return format!("node {}", netlist.node_names[i + 1]);
        }
        for (ei, b) in self.branch.iter().enumerate() {
            if *b == Some(i) {
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
                        b[k] = volts;
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
        let n = self.n;
        let a = &self.lu;
        for i in 0..n {
            x.swap(i, self.pivot[i]);
        }
        for i in 0..n {
            let mut s = x[i];
            for j in 0..i {
                s -= a[i * n + j] * x[j];
            }
            x[i] = s;
        }
        for i in (0..n).rev() {
            let mut s = x[i];
            for j in i + 1..n {
                s -= a[i * n + j] * x[j];
            }
            x[i] = s / a[i * n + i];
        }
    }

    /// Solve `A^T y = c` in place with the current factors (the adjoint).
    pub fn solve_transposed_in_place(&mut self, y: &mut [f64]) {
        let n = self.n;
        let a = &self.lu;
        // P A = L U  =>  A^T = U^T L^T P ; solve U^T w = c, L^T z = w, y = P^T z.
        for i in 0..n {
            let mut s = y[i];
            for j in 0..i {
                s -= a[j * n + i] * y[j];
            }
            y[i] = s / a[i * n + i];
        }
        for i in (0..n).rev() {
            let mut s = y[i];
            for j in i + 1..n {
                s -= a[j * n + i] * y[j];
            }
            y[i] = s;
        }
        for i in (0..n).rev() {
            y.swap(i, self.pivot[i]);
        }
        self.scratch.copy_from_slice(y);
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
