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
//! The matrix is dense and factored by LU with partial pivoting, by the
//! same code as the DC solver's ([`crate::lu`]), once per frequency; the
//! element stamps' unknowns are looked up once per solver, and the
//! workspace is reused, so a frequency costs one stamp, one sparse-aware
//! elimination and one substitution, without allocation.

use crate::lu::{DenseLu, Scalar};
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
    fn neg(self) -> Complex {
        Complex::new(-self.re, -self.im)
    }
    fn scale(self, k: f64) -> Complex {
        Complex::new(self.re * k, self.im * k)
    }
}

impl Scalar for Complex {
    const ZERO: Complex = Complex::ZERO;
    #[inline]
    fn is_zero(self) -> bool {
        self.re == 0.0 && self.im == 0.0
    }
    /// `hypot(re, im)`, which is exactly `|re|` when `im` is zero and
    /// `|im|` when `re` is zero (IEEE 754 `hypot`): most entries of a
    /// circuit matrix are real, and those skip the call.
    #[inline]
    fn magnitude(self) -> f64 {
        if self.im == 0.0 {
            self.re.abs()
        } else if self.re == 0.0 {
            self.im.abs()
        } else {
            self.abs()
        }
    }
    #[inline]
    fn norm_sqr(self) -> f64 {
        self.re * self.re + self.im * self.im
    }
    #[inline]
    fn plus(self, y: Complex) -> Complex {
        self.add(y)
    }
    #[inline]
    fn sub_product(self, f: Complex, x: Complex) -> Complex {
        self.sub(f.mul(x))
    }
    #[inline]
    fn quotient(self, d: Complex) -> Complex {
        self.div(d)
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

/// One element's stamp, with its unknowns looked up once (the netlist's
/// values are read at each solve).
#[derive(Debug, Clone, Copy)]
enum Stamp {
    /// A resistor between two unknowns (`None`: ground).
    Resistor {
        element: usize,
        p: Option<usize>,
        q: Option<usize>,
    },
    /// A capacitor between two unknowns.
    Capacitor {
        element: usize,
        p: Option<usize>,
        q: Option<usize>,
    },
    /// A voltage source with its branch row `k`.
    Source {
        k: usize,
        p: Option<usize>,
        q: Option<usize>,
    },
    /// An op-amp section with its row `k`, output, + and - unknowns, and
    /// its single-pole model (`None`: the DC model).
    OpAmp {
        element: usize,
        k: usize,
        out: Option<usize>,
        plus: Option<usize>,
        minus: Option<usize>,
        model: Option<AcAmplifier>,
    },
}

/// A reusable AC solver for one netlist shape.
///
/// The unknowns of every element are found once, when the solver is made;
/// the matrix, its pivots and the solution are allocated once and reused
/// at every frequency, and the factorisation skips the matrix's zeros
/// ([`crate::lu`]), so a solve does not allocate.
#[derive(Debug, Clone)]
pub struct AcSolver {
    numbering: Solver,
    /// The stamps, resistors and capacitors first, then sources and
    /// op-amps, each group in element order (the order the entries are
    /// summed in).
    stamps: Vec<Stamp>,
    nodes: usize,
    lu: DenseLu<Complex>,
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
        let idx = |node: Node| numbering.node_unknown(node);
        let mut stamps = Vec::with_capacity(netlist.elements.len());
        for (element, e) in netlist.elements.iter().enumerate() {
            let (p, q) = (idx(e.nodes[0]), idx(e.nodes[1]));
            match e.kind {
                ElementKind::Resistor { .. } => stamps.push(Stamp::Resistor { element, p, q }),
                ElementKind::Capacitor { .. } => stamps.push(Stamp::Capacitor { element, p, q }),
                _ => {}
            }
        }
        for (ei, e) in netlist.elements.iter().enumerate() {
            let Some(k) = numbering.branch_unknown(ei) else {
                continue;
            };
            match e.kind {
                ElementKind::VoltageSource { .. } if !numbering.is_folded(ei) => {
                    stamps.push(Stamp::Source {
                        k,
                        p: idx(e.nodes[0]),
                        q: idx(e.nodes[1]),
                    });
                }
                ElementKind::OpAmp { .. } => stamps.push(Stamp::OpAmp {
                    element: ei,
                    k,
                    out: idx(e.nodes[2]),
                    plus: idx(numbering.plus_node(ei)),
                    minus: idx(e.nodes[1]),
                    model: per_element[ei].filter(|m: &AcAmplifier| m.gbw_hz > 0.0),
                }),
                _ => {}
            }
        }
        AcSolver {
            numbering,
            stamps,
            nodes: netlist.node_names.len(),
            lu: DenseLu::new(n),
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
        self.factor()?;
        self.x.iter_mut().for_each(|v| *v = Complex::ZERO);
        if let Some(k) = self.numbering.branch_unknown(source) {
            self.x[k] = Complex::new(1.0, 0.0);
        }
        self.lu.solve_in_place(&mut self.x);
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
        self.factor()?;
        self.x.iter_mut().for_each(|v| *v = Complex::ZERO);
        if let Some(i) = self.numbering.node_unknown(node) {
            self.x[i] = Complex::new(1.0, 0.0);
        }
        self.lu.solve_transposed_in_place(&mut self.x);
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

    fn factor(&mut self) -> Result<(), Singular> {
        self.lu.factor().map_err(|col| Singular {
            unknown: format!("unknown {col} of the AC matrix ({} nodes)", self.nodes),
        })
    }

    /// Stamp the matrix at `omega` from the element values of `netlist`
    /// (the shape the solver was made for).
    fn stamp(&mut self, netlist: &Netlist, omega: f64) {
        self.lu.clear();
        let a = &mut self.lu;
        let mut admittance = |p: Option<usize>, q: Option<usize>, y: Complex| {
            if let Some(p) = p {
                a.add(p, p, y);
            }
            if let Some(q) = q {
                a.add(q, q, y);
            }
            if let (Some(p), Some(q)) = (p, q) {
                a.add(p, q, y.neg());
                a.add(q, p, y.neg());
            }
        };
        let kind = |element: usize| netlist.elements.get(element).map(|e| e.kind);
        for s in &self.stamps {
            match *s {
                Stamp::Resistor { element, p, q } => {
                    if let Some(ElementKind::Resistor { ohms }) = kind(element) {
                        admittance(p, q, Complex::new(1.0 / ohms, 0.0));
                    }
                }
                Stamp::Capacitor { element, p, q } => {
                    if let Some(ElementKind::Capacitor { farads }) = kind(element) {
                        admittance(p, q, Complex::new(0.0, omega * farads));
                    }
                }
                _ => {}
            }
        }
        let one = Complex::new(1.0, 0.0);
        for s in &self.stamps {
            match *s {
                Stamp::Source { k, p, q } => {
                    if let Some(p) = p {
                        a.add(p, k, one);
                        a.add(k, p, one);
                    }
                    if let Some(q) = q {
                        a.add(q, k, one.neg());
                        a.add(k, q, one.neg());
                    }
                }
                Stamp::OpAmp {
                    element,
                    k,
                    out,
                    plus,
                    minus,
                    model,
                } => {
                    let Some(ElementKind::OpAmp { inverse_gain }) = kind(element) else {
                        continue;
                    };
                    let (g, ro) = match model {
                        Some(m) => (
                            Complex::new(inverse_gain, omega / (2.0 * PI * m.gbw_hz)),
                            m.output_ohms,
                        ),
                        None => (Complex::new(inverse_gain, 0.0), 0.0),
                    };
                    if let Some(o) = out {
                        a.add(o, k, one);
                        a.add(k, o, g);
                    }
                    a.add(k, k, g.scale(ro).neg());
                    if let Some(p) = plus {
                        a.add(k, p, one.neg());
                    }
                    if let Some(m) = minus {
                        a.add(k, m, one);
                    }
                }
                _ => {}
            }
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
