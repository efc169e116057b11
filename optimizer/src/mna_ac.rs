//! Small-signal AC analysis: the same modified nodal analysis as
//! [`crate::mna`], on the same netlist data, with complex admittances.
//!
//! The unknowns are numbered exactly as the DC solver numbers them (this
//! module asks [`Solver`] for the numbering, folded offset sources
//! included), so a node or a branch is the same unknown in both. What
//! differs is the stamp:
//! - a capacitor is the admittance `j w C` (open at DC);
//! - an op-amp section given an [`AcAmplifier`] is a single-pole gain block
//!   with open-loop gain `A(s) = 1 / (1/A0 + s / w_t)`, `w_t = 2 pi GBW`,
//!   behind its open-loop output resistance `Ro`:
//!   `V(out) = A(s) (V+ - V-) - Ro I_out`. Its row is
//!   `g(s) V(out) - g(s) Ro I + V(-) - V(+) = 0`, with `g = 1/A(s)` and `I`
//!   the branch current (taken, as in the DC solver, as the current that
//!   leaves `out` into the source). Sections not listed keep the DC
//!   model (frequency-independent gain, no output resistance);
//! - independent sources are zero except the one driven with amplitude 1
//!   (SPICE's `AC 1`), so a node voltage is the transfer from that source.
//!
//! The matrix is dense and factored by LU with partial pivoting, as in
//! the DC solver, once per frequency.

use crate::mna::{Singular, Solver};
use crate::netlist::{ElementKind, Netlist, Node};
use std::f64::consts::PI;

/// A complex number (the few operations the solver needs).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Complex {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl Complex {
    /// `re + j im`.
    pub const fn new(re: f64, im: f64) -> Self {
        Complex { re, im }
    }
    const ZERO: Complex = Complex::new(0.0, 0.0);
    /// Magnitude.
    pub fn abs(self) -> f64 {
        self.re.hypot(self.im)
    }
    /// Phase in radians, from -pi to pi.
    pub fn arg(self) -> f64 {
        self.im.atan2(self.re)
    }
    fn add(self, o: Complex) -> Complex {
        Complex::new(self.re + o.re, self.im + o.im)
    }
    fn sub(self, o: Complex) -> Complex {
        Complex::new(self.re - o.re, self.im - o.im)
    }
    fn mul(self, o: Complex) -> Complex {
        Complex::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
    fn div(self, o: Complex) -> Complex {
        let d = o.re * o.re + o.im * o.im;
        Complex::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }
    fn scale(self, k: f64) -> Complex {
        Complex::new(self.re * k, self.im * k)
    }
}

/// The AC model of one op-amp gain element.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AcAmplifier {
    /// Index of the `OpAmp` element in the netlist.
    pub element: usize,
    /// Gain-bandwidth product in hertz (the unity-gain frequency of the
    /// single-pole model).
    pub gbw_hz: f64,
    /// Open-loop output resistance in ohms.
    pub output_ohms: f64,
}

/// One point of a frequency response.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct BodePoint {
    /// Frequency in hertz.
    pub frequency_hz: f64,
    /// Magnitude of the transfer in dB (20 log10 |H|).
    pub magnitude_db: f64,
    /// Phase of the transfer in degrees, from -180 to 180.
    pub phase_deg: f64,
}

/// A reusable AC solver for one netlist shape.
#[derive(Debug, Clone)]
pub struct AcSolver {
    numbering: Solver,
    n: usize,
    /// Per element: the single-pole model of an op-amp, if given.
    amplifiers: Vec<Option<AcAmplifier>>,
    lu: Vec<Complex>,
    pivot: Vec<usize>,
    x: Vec<Complex>,
}

impl AcSolver {
    /// A solver for `netlist`, with these op-amp sections given their
    /// single-pole model.
    pub fn new(netlist: &Netlist, amplifiers: &[AcAmplifier]) -> Self {
        let numbering = Solver::new(netlist);
        let n = numbering.size();
        let mut per_element = vec![None; netlist.elements.len()];
        for a in amplifiers {
            if let Some(slot) = per_element.get_mut(a.element) {
                *slot = Some(*a);
            }
        }
        AcSolver {
            numbering,
            n,
            amplifiers: per_element,
            lu: vec![Complex::ZERO; n * n],
            pivot: vec![0; n],
            x: vec![Complex::ZERO; n],
        }
    }

    /// Solve at `frequency_hz` with the voltage source `source` at AC
    /// amplitude 1 and every other source at 0; then [`AcSolver::voltage`]
    /// reads the transfer to any node.
    pub fn solve(
        &mut self,
        netlist: &Netlist,
        source: usize,
        frequency_hz: f64,
    ) -> Result<(), Singular> {
        self.stamp(netlist, 2.0 * PI * frequency_hz);
        self.factor(netlist)?;
        self.x.iter_mut().for_each(|v| *v = Complex::ZERO);
        if let Some(k) = self.numbering.branch_unknown(source) {
            self.x[k] = Complex::new(1.0, 0.0);
        }
        self.substitute();
        Ok(())
    }

    /// Solve the adjoint (transposed) system at `frequency_hz` for the
    /// output `node`: afterwards [`AcSolver::node_transfer`] and
    /// [`AcSolver::branch_transfer`] read the transfer to `node` from a
    /// unit current injected at any node or a unit voltage in any source,
    /// all from this one factorisation (the AC form of the DC adjoint).
    pub fn solve_adjoint(
        &mut self,
        netlist: &Netlist,
        node: Node,
        frequency_hz: f64,
    ) -> Result<(), Singular> {
        self.stamp(netlist, 2.0 * PI * frequency_hz);
        self.factor(netlist)?;
        self.x.iter_mut().for_each(|v| *v = Complex::ZERO);
        if let Some(i) = self.numbering.node_unknown(node) {
            self.x[i] = Complex::new(1.0, 0.0);
        }
        self.substitute_transposed();
        Ok(())
    }

    /// After [`AcSolver::solve_adjoint`]: the transfer from a unit current
    /// injected into `node` to the output node.
    pub fn node_transfer(&self, node: Node) -> Complex {
        match self.numbering.node_unknown(node) {
            Some(i) => self.x[i],
            None => Complex::ZERO,
        }
    }

    /// After [`AcSolver::solve_adjoint`]: the transfer from a unit value of
    /// the voltage source `element` (a folded offset source included) to
    /// the output node.
    pub fn branch_transfer(&self, element: usize) -> Complex {
        match self.numbering.branch_unknown(element) {
            Some(k) => self.x[k],
            None => Complex::ZERO,
        }
    }

    /// The voltage of `node` in the last solution.
    pub fn voltage(&self, node: Node) -> Complex {
        match self.numbering.node_unknown(node) {
            Some(i) => self.x[i],
            None => Complex::ZERO,
        }
    }

    /// The transfer from `source` (AC 1) to `node` at `frequency_hz`.
    pub fn transfer(
        &mut self,
        netlist: &Netlist,
        source: usize,
        node: Node,
        frequency_hz: f64,
    ) -> Result<Complex, Singular> {
        self.solve(netlist, source, frequency_hz)?;
        Ok(self.voltage(node))
    }

    fn stamp(&mut self, netlist: &Netlist, omega: f64) {
        let n = self.n;
        self.lu.iter_mut().for_each(|v| *v = Complex::ZERO);
        let numbering = &self.numbering;
        let a = &mut self.lu;
        let idx = |node: Node| numbering.node_unknown(node);
        let mut admittance = |p: Option<usize>, q: Option<usize>, y: Complex| {
            if let Some(p) = p {
                a[p * n + p] = a[p * n + p].add(y);
            }
            if let Some(q) = q {
                a[q * n + q] = a[q * n + q].add(y);
            }
            if let (Some(p), Some(q)) = (p, q) {
                a[p * n + q] = a[p * n + q].sub(y);
                a[q * n + p] = a[q * n + p].sub(y);
            }
        };
        for e in netlist.elements.iter() {
            match e.kind {
                ElementKind::Resistor { ohms } => admittance(
                    idx(e.nodes[0]),
                    idx(e.nodes[1]),
                    Complex::new(1.0 / ohms, 0.0),
                ),
                ElementKind::Capacitor { farads } => admittance(
                    idx(e.nodes[0]),
                    idx(e.nodes[1]),
                    Complex::new(0.0, omega * farads),
                ),
                _ => {}
            }
        }
        let one = Complex::new(1.0, 0.0);
        for (ei, e) in netlist.elements.iter().enumerate() {
            match e.kind {
                ElementKind::VoltageSource { .. } if !numbering.is_folded(ei) => {
                    let Some(k) = numbering.branch_unknown(ei) else {
                        continue;
                    };
                    if let Some(p) = idx(e.nodes[0]) {
                        a[p * n + k] = a[p * n + k].add(one);
                        a[k * n + p] = a[k * n + p].add(one);
                    }
                    if let Some(q) = idx(e.nodes[1]) {
                        a[q * n + k] = a[q * n + k].sub(one);
                        a[k * n + q] = a[k * n + q].sub(one);
                    }
                }
                ElementKind::OpAmp { inverse_gain } => {
                    let Some(k) = numbering.branch_unknown(ei) else {
                        continue;
                    };
                    let (g, ro) = match self.amplifiers.get(ei).copied().flatten() {
                        Some(m) if m.gbw_hz > 0.0 => (
                            Complex::new(inverse_gain, omega / (2.0 * PI * m.gbw_hz)),
                            m.output_ohms,
                        ),
                        _ => (Complex::new(inverse_gain, 0.0), 0.0),
                    };
                    if let Some(o) = idx(e.nodes[2]) {
                        a[o * n + k] = a[o * n + k].add(one);
                        a[k * n + o] = a[k * n + o].add(g);
                    }
                    a[k * n + k] = a[k * n + k].sub(g.scale(ro));
                    if let Some(p) = idx(numbering.plus_node(ei)) {
                        a[k * n + p] = a[k * n + p].sub(one);
                    }
                    if let Some(m) = idx(e.nodes[1]) {
                        a[k * n + m] = a[k * n + m].add(one);
                    }
                }
                _ => {}
            }
        }
    }

    fn factor(&mut self, netlist: &Netlist) -> Result<(), Singular> {
        let n = self.n;
        let a = &mut self.lu;
        let scale = a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
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
                    unknown: format!(
                        "unknown {col} of the AC matrix ({} nodes)",
                        netlist.node_names.len()
                    ),
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
                let f = a[row * n + col].div(d);
                a[row * n + col] = f;
                if f != Complex::ZERO {
                    for j in col + 1..n {
                        a[row * n + j] = a[row * n + j].sub(f.mul(a[col * n + j]));
                    }
                }
            }
        }
        Ok(())
    }

    fn substitute(&mut self) {
        let n = self.n;
        let a = &self.lu;
        let x = &mut self.x;
        for i in 0..n {
            x.swap(i, self.pivot[i]);
        }
        for i in 0..n {
            let mut s = x[i];
            for j in 0..i {
                s = s.sub(a[i * n + j].mul(x[j]));
            }
            x[i] = s;
        }
        for i in (0..n).rev() {
            let mut s = x[i];
            for j in i + 1..n {
                s = s.sub(a[i * n + j].mul(x[j]));
            }
            x[i] = s.div(a[i * n + i]);
        }
    }
}

impl AcSolver {
    /// Solve `A^T y = c` in place with the current factors:
    /// `P A = L U`, so `A^T = U^T L^T P`; solve `U^T w = c`, `L^T z = w`,
    /// then `y = P^T z` (the swaps undone in reverse).
    fn substitute_transposed(&mut self) {
        let n = self.n;
        let a = &self.lu;
        let y = &mut self.x;
        for i in 0..n {
            let mut s = y[i];
            for j in 0..i {
                s = s.sub(a[j * n + i].mul(y[j]));
            }
            y[i] = s.div(a[i * n + i]);
        }
        for i in (0..n).rev() {
            let mut s = y[i];
            for j in i + 1..n {
                s = s.sub(a[j * n + i].mul(y[j]));
            }
            y[i] = s;
        }
        for i in (0..n).rev() {
            y.swap(i, self.pivot[i]);
        }
    }
}

/// `count` frequencies spaced evenly in log from `low_hz` to `high_hz`,
/// both included (`count` of at least 2).
pub fn log_frequencies(low_hz: f64, high_hz: f64, count: usize) -> Vec<f64> {
    let count = count.max(2);
    let (a, b) = (low_hz.log10(), high_hz.log10());
    (0..count)
        .map(|i| 10f64.powf(a + (b - a) * i as f64 / (count - 1) as f64))
        .collect()
}

/// The response from `source` to `node` at each frequency, as Bode points.
pub fn bode(
    solver: &mut AcSolver,
    netlist: &Netlist,
    source: usize,
    node: Node,
    frequencies: &[f64],
) -> Result<Vec<BodePoint>, Singular> {
    frequencies
        .iter()
        .map(|&f| {
            let h = solver.transfer(netlist, source, node, f)?;
            Ok(BodePoint {
                frequency_hz: f,
                magnitude_db: 20.0 * h.abs().log10(),
                phase_deg: h.arg().to_degrees(),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An RC low-pass from a source: |H| = 1/sqrt(1 + (f/fc)^2) and phase
    /// -atan(f/fc), fc = 1/(2 pi R C) (handbook closed form, common
    /// practice).
    #[test]
    fn rc_low_pass_matches_its_closed_form() {
        let mut n = Netlist::new();
        let a = n.node("a");
        let b = n.node("b");
        let v = n.vsource("V1", a, 0, 0.0);
        n.resistor("R1", a, b, 10e3);
        n.capacitor("C1", b, 0, 10e-9);
        let fc = 1.0 / (2.0 * PI * 10e3 * 10e-9);
        let mut s = AcSolver::new(&n, &[]);
        for f in [fc / 100.0, fc, 3.0 * fc, 100.0 * fc] {
            let h = s.transfer(&n, v, b, f).unwrap();
            let x = f / fc;
            assert!((h.abs() - 1.0 / (1.0 + x * x).sqrt()).abs() < 1e-12);
            assert!((h.arg() + x.atan()).abs() < 1e-12);
        }
    }

    /// The adjoint solve gives the same transfers as one forward solve per
    /// source (a divider with a source at each end, through an op-amp
    /// follower, so the op-amp row is in the matrix).
    #[test]
    fn adjoint_transfers_equal_the_forward_ones() {
        let mut n = Netlist::new();
        let a = n.node("a");
        let b = n.node("b");
        let m = n.node("m");
        let out = n.node("out");
        let va = n.vsource("VA", a, 0, 0.0);
        let vb = n.vsource("VB", b, 0, 0.0);
        n.resistor("R1", a, m, 10e3);
        n.resistor("R2", m, b, 22e3);
        n.capacitor("C1", m, 0, 1e-9);
        let amp = n.add(
            "E1",
            ElementKind::OpAmp { inverse_gain: 1e-5 },
            [m, out, out],
        );
        n.resistor("R3", out, 0, 5e3);
        let mut s = AcSolver::new(
            &n,
            &[AcAmplifier {
                element: amp,
                gbw_hz: 1e5,
                output_ohms: 50.0,
            }],
        );
        for f in [10.0, 3e3, 4e4, 2e5] {
            let forward = [va, vb].map(|v| s.transfer(&n, v, out, f).unwrap());
            s.solve_adjoint(&n, out, f).unwrap();
            for (v, h) in [va, vb].into_iter().zip(forward) {
                let g = s.branch_transfer(v);
                assert!(
                    (g.re - h.re).abs() < 1e-12 && (g.im - h.im).abs() < 1e-12,
                    "{g:?} {h:?}"
                );
            }
        }
    }

    /// A follower made of a single-pole op-amp: closed-loop -3 dB at the
    /// GBW (unity noise gain), and with output resistance Ro and a load
    /// R, the DC gain is still 1 (feedback taken at the output).
    #[test]
    fn single_pole_follower_has_its_corner_at_the_gbw() {
        let mut n = Netlist::new();
        let inp = n.node("in");
        let out = n.node("out");
        let v = n.vsource("V1", inp, 0, 0.0);
        let amp = n.add(
            "E1",
            ElementKind::OpAmp { inverse_gain: 1e-9 },
            [inp, out, out],
        );
        n.resistor("RL", out, 0, 1e3);
        let gbw = 1e6;
        let mut s = AcSolver::new(
            &n,
            &[AcAmplifier {
                element: amp,
                gbw_hz: gbw,
                output_ohms: 100.0,
            }],
        );
        let dc = s.transfer(&n, v, out, 1e-3).unwrap().abs();
        assert!((dc - 1.0).abs() < 1e-6, "{dc}");
        // With Ro = 100 into 1k the loop gain is scaled by 1k/1.1k, so the
        // pole moves to GBW x (1000/1100) ... and the -3 dB point is there.
        let f3 = gbw * 1000.0 / 1100.0;
        let h = s.transfer(&n, v, out, f3).unwrap().abs();
        assert!((h - std::f64::consts::FRAC_1_SQRT_2).abs() < 1e-3, "{h}");
    }
}
