//! Netlist templates: one function per stage shape turns a [`Design`]
//! into a [`Netlist`] with the element names of the SPICE contract
//! (DESIGN.md section 4), and records where each part sits so the analysis
//! can perturb it.
//!
//! Node names: the sensor source `VSENSE` sits between `inp` and `inn`
//! (single-ended: `inp` and ground), `VCM` holds `inn` at the common mode,
//! the sensor's own resistance runs from `inp`/`inn` to `sp`/`sn`, stage
//! `i` has internal nodes `s<i>...`, and the last stage drives `out`.

use crate::design::{Design, Injection, Resistor, Shape, Source, Stage};
use crate::error::{Error, Result};
use crate::need::{Need, SensorOutput};
use crate::netlist::{ElementKind, Netlist, Node};
use crate::stock::Stock;
use std::collections::BTreeMap;

/// Open-loop gain given to the ideal-ish internal amplifiers of an
/// integrated in-amp (its datasheet-level errors come from the part row).
pub const INAMP_INTERNAL_GAIN: f64 = 1e7;
/// Value of each internal resistor of an integrated in-amp's output
/// difference stage (a modelling choice; it sets how much an unbuffered
/// REF-pin divider disturbs gain and common-mode rejection).
pub const INAMP_INTERNAL_OHMS: f64 = 20_000.0;

/// A resistor placed in the netlist.
#[derive(Debug, Clone, PartialEq)]
pub struct PlacedResistor {
    /// Element index.
    pub element: usize,
    /// Reference designator (`R3`).
    pub designator: String,
    /// Stage index (0-based).
    pub stage: usize,
    /// Role in the stage (`rf`, `offset.top`, ...).
    pub role: String,
    /// The part.
    pub part: Resistor,
}

/// What kind of amplifier a section belongs to.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AmplifierKind {
    /// Index into `stock.opamps`.
    OpAmp(usize),
    /// Index into `stock.inamps`.
    InAmp(usize),
}

/// One amplifier section (an op-amp channel or a whole in-amp).
#[derive(Debug, Clone, PartialEq)]
pub struct Section {
    /// Reference designator (`U1A`, or `U1` for a single).
    pub designator: String,
    /// Package designator (`U1`).
    pub package: String,
    /// Stage index.
    pub stage: usize,
    /// Part kind and index.
    pub kind: AmplifierKind,
    /// The + input pin node.
    pub plus: Node,
    /// The - input pin node.
    pub minus: Node,
    /// The output node.
    pub out: Node,
    /// The gain block element.
    pub gain_element: usize,
    /// `VOS_<ref>`.
    pub vos: usize,
    /// `IBP_<ref>`.
    pub ibp: usize,
    /// `IBN_<ref>`.
    pub ibn: usize,
    /// Internal nodes whose swing is limited like an output (in-amp
    /// input stages).
    pub internal_outputs: Vec<Node>,
    /// In-amp only: output offset source and the resistors that scale its
    /// gain (for gain error and drift).
    pub inamp: Option<InAmpInternals>,
}

/// Elements inside an integrated in-amp that carry its own error terms.
#[derive(Debug, Clone, PartialEq)]
pub struct InAmpInternals {
    /// Output offset source `VOSO_<ref>`.
    pub output_offset: usize,
    /// Internal resistors scaled together by gain error.
    pub gain_resistors: Vec<usize>,
}

/// An amplifier package on the BOM.
#[derive(Debug, Clone, PartialEq)]
pub struct Package {
    /// Designator (`U1`).
    pub designator: String,
    /// Part kind and index.
    pub kind: AmplifierKind,
    /// Part id.
    pub part_id: String,
    /// Sections in the package.
    pub channels: u32,
    /// Sections used.
    pub used: Vec<String>,
    /// Price of the package.
    pub unit_cost: f64,
}

/// A voltage source that offsets or biases the chain.
#[derive(Debug, Clone, PartialEq)]
pub struct PlacedSource {
    /// Designator (`VR1`), or `VSUP` for the supply.
    pub designator: String,
    /// The source.
    pub source: Source,
    /// Index into `stock.references`, for a reference.
    pub reference: Option<usize>,
    /// Element index of `VREF_<ref>` or `VSUP`.
    pub element: usize,
    /// Output node.
    pub node: Node,
    /// Price of the part (0 for the supply).
    pub unit_cost: f64,
}

/// A design turned into a netlist, with the map back to its parts.
#[derive(Debug, Clone, PartialEq)]
pub struct Built {
    /// The circuit.
    pub netlist: Netlist,
    /// The front-end output node (`out`).
    pub out: Node,
    /// The sensor source `VSENSE`.
    pub vsense: usize,
    /// The common-mode source `VCM`, differential sensors only.
    pub vcm: Option<usize>,
    /// Resistors that are parts (designators `R<n>`).
    pub resistors: Vec<PlacedResistor>,
    /// The sensor's own resistance elements (not parts).
    pub source_resistors: Vec<usize>,
    /// Resistors inside integrated parts (not parts, but noisy).
    pub internal_resistors: Vec<usize>,
    /// Amplifier sections.
    pub sections: Vec<Section>,
    /// Amplifier packages.
    pub packages: Vec<Package>,
    /// References and the supply where used.
    pub sources: Vec<PlacedSource>,
    /// Output node of each stage.
    pub stage_outputs: Vec<Node>,
}

struct Builder<'a> {
    need: &'a Need,
    stock: &'a Stock,
    n: Netlist,
    resistors: Vec<PlacedResistor>,
    internal_resistors: Vec<usize>,
    sections: Vec<Section>,
    packages: Vec<Package>,
    sources: Vec<PlacedSource>,
    next_u: usize,
    next_vr: usize,
    open_packages: BTreeMap<String, usize>,
}

const LETTERS: [&str; 4] = ["A", "B", "C", "D"];

impl<'a> Builder<'a> {
    fn resistor(&mut self, stage: usize, role: &str, part: &Resistor, a: Node, b: Node) -> usize {
        let designator = format!("R{}", self.resistors.len() + 1);
        let e = self.n.resistor(&designator, a, b, part.ohms);
        self.resistors.push(PlacedResistor {
            element: e,
            designator,
            stage,
            role: role.to_string(),
            part: part.clone(),
        });
        e
    }

    fn source_node(&mut self, source: &Source) -> Result<Node> {
        if let Some(s) = self.sources.iter().find(|s| &s.source == source) {
            return Ok(s.node);
        }
        match source {
            Source::Supply => {
                let node = self.n.node("vsup");
                let e = self.n.vsource("VSUP", node, 0, self.need.supply.positive.0);
                self.sources.push(PlacedSource {
                    designator: "VSUP".into(),
                    source: source.clone(),
                    reference: None,
                    element: e,
                    node,
                    unit_cost: 0.0,
                });
                Ok(node)
            }
            Source::Reference(id) => {
                let idx = self
                    .stock
                    .references
                    .iter()
                    .position(|r| &r.part_id == id)
                    .ok_or_else(|| Error::design(format!("reference `{id}` is not in stock")))?;
                self.next_vr += 1;
                let d = format!("VR{}", self.next_vr);
                let node = self.n.node(&d.to_lowercase());
                let volts = self.stock.references[idx].volts.0;
                let e = self.n.vsource(&format!("VREF_{d}"), node, 0, volts);
                self.sources.push(PlacedSource {
                    designator: d,
                    source: source.clone(),
                    reference: Some(idx),
                    element: e,
                    node,
                    unit_cost: self.stock.references[idx].unit_cost,
                });
                Ok(node)
            }
        }
    }

    fn opamp_index(&self, id: &str) -> Result<usize> {
        self.stock
            .opamps
            .iter()
            .position(|p| p.part_id == id)
            .ok_or_else(|| Error::design(format!("op-amp `{id}` is not in stock")))
    }

    /// Take a free section of an op-amp part, opening a package if needed.
    fn take_section(&mut self, part: usize) -> (String, String) {
        let p = &self.stock.opamps[part];
        let channels = p.channels.max(1);
        if let Some(&pk) = self.open_packages.get(&p.part_id) {
            let pkg = &mut self.packages[pk];
            if (pkg.used.len() as u32) < channels {
                let d = format!("{}{}", pkg.designator, LETTERS[pkg.used.len().min(3)]);
                pkg.used.push(d.clone());
                return (d, pkg.designator.clone());
            }
        }
        self.next_u += 1;
        let pd = format!("U{}", self.next_u);
        let d = if channels == 1 {
            pd.clone()
        } else {
            format!("{pd}A")
        };
        self.packages.push(Package {
            designator: pd.clone(),
            kind: AmplifierKind::OpAmp(part),
            part_id: p.part_id.clone(),
            channels,
            used: vec![d.clone()],
            unit_cost: p.unit_cost,
        });
        self.open_packages
            .insert(p.part_id.clone(), self.packages.len() - 1);
        (d, pd)
    }

    /// An op-amp section with its explicit error sources.
    fn section(&mut self, stage: usize, part: usize, plus: Node, minus: Node, out: Node) -> usize {
        let (d, pkg) = self.take_section(part);
        let inverse_gain = 1.0 / self.stock.opamps[part].aol_min.ratio();
        let pi = self.n.node(&format!("{}_pi", d.to_lowercase()));
        let vos = self.n.vsource(&format!("VOS_{d}"), pi, plus, 0.0);
        let ibp = self.n.isource(&format!("IBP_{d}"), plus, 0, 0.0);
        let ibn = self.n.isource(&format!("IBN_{d}"), minus, 0, 0.0);
        let gain_element = self.n.add(
            &format!("E{d}"),
            ElementKind::OpAmp { inverse_gain },
            [pi, minus, out],
        );
        self.sections.push(Section {
            designator: d,
            package: pkg,
            stage,
            kind: AmplifierKind::OpAmp(part),
            plus,
            minus,
            out,
            gain_element,
            vos,
            ibp,
            ibn,
            internal_outputs: Vec::new(),
            inamp: None,
        });
        self.sections.len() - 1
    }

    /// The node an injection drives (creating divider and buffer).
    fn injection(
        &mut self,
        stage: usize,
        inj: &Injection,
        what: &str,
        opamp: Option<usize>,
    ) -> Result<Node> {
        match inj {
            Injection::Ground => Ok(0),
            Injection::Direct { source } => self.source_node(source),
            Injection::Divider {
                source,
                top,
                bottom,
                buffered,
            } => {
                let src = self.source_node(source)?;
                let tap = self.n.node(&format!("s{}{}t", stage + 1, what));
                self.resistor(stage, &format!("{what}.top"), top, src, tap);
                self.resistor(stage, &format!("{what}.bottom"), bottom, tap, 0);
                if *buffered {
                    let part = opamp.ok_or_else(|| {
                        Error::design(
                            "a buffered divider on an in-amp stage needs a `buffer` op-amp part",
                        )
                    })?;
                    let b = self.n.node(&format!("s{}{}b", stage + 1, what));
                    self.section(stage, part, tap, b, b);
                    Ok(b)
                } else {
                    Ok(tap)
                }
            }
        }
    }

    fn stage(&mut self, i: usize, st: &Stage, vin: Node, vin_n: Node, out: Node) -> Result<()> {
        let s = i + 1;
        let node = |b: &mut Self, suffix: &str| b.n.node(&format!("s{s}{suffix}"));
        if st.shape == Shape::InstrumentationIntegrated {
            return self.inamp_stage(i, st, vin, vin_n, out);
        }
        let part = self.opamp_index(&st.amplifier)?;
        match st.shape {
            Shape::NonInverting => {
                let inj = self.injection(i, &st.offset, "o", Some(part))?;
                let m = node(self, "m");
                self.resistor(i, "rf", st.r("rf")?, out, m);
                self.resistor(i, "rg", st.r("rg")?, m, inj);
                self.section(i, part, vin, m, out);
            }
            Shape::NonInvertingSummed => {
                let inj = self.injection(i, &st.offset, "o", Some(part))?;
                let p = node(self, "p");
                let m = node(self, "m");
                self.resistor(i, "ri", st.r("ri")?, vin, p);
                self.resistor(i, "ro", st.r("ro")?, inj, p);
                if let Some(rp) = st.resistors.get("rp") {
                    self.resistor(i, "rp", rp, p, 0);
                }
                self.resistor(i, "rf", st.r("rf")?, out, m);
                self.resistor(i, "rg", st.r("rg")?, m, 0);
                self.section(i, part, p, m, out);
            }
            Shape::Inverting => {
                let inj = self.injection(i, &st.offset, "o", Some(part))?;
                let bias = self.injection(i, &st.bias, "b", Some(part))?;
                let m = node(self, "m");
                self.resistor(i, "ri", st.r("ri")?, vin, m);
                self.resistor(i, "rf", st.r("rf")?, out, m);
                if let Some(ro) = st.resistors.get("ro") {
                    self.resistor(i, "ro", ro, inj, m);
                } else if st.offset != Injection::Ground {
                    return Err(Error::design(
                        "an inverting stage with an offset source needs a resistor `ro`",
                    ));
                }
                self.section(i, part, bias, m, out);
            }
            Shape::Difference => {
                let inj = self.injection(i, &st.offset, "o", Some(part))?;
                let m = node(self, "m");
                let q = node(self, "q");
                self.resistor(i, "r1", st.r("r1")?, vin_n, m);
                self.resistor(i, "r2", st.r("r2")?, m, out);
                self.resistor(i, "r3", st.r("r3")?, vin, q);
                self.resistor(i, "r4", st.r("r4")?, q, inj);
                self.section(i, part, q, m, out);
            }
            Shape::InstrumentationDiscrete => {
                let inj = self.injection(i, &st.offset, "o", Some(part))?;
                let (g1, g2, a1, a2) = (
                    node(self, "g1"),
                    node(self, "g2"),
                    node(self, "a1"),
                    node(self, "a2"),
                );
                let m = node(self, "m");
                let q = node(self, "q");
                self.section(i, part, vin, g1, a1);
                self.section(i, part, vin_n, g2, a2);
                self.resistor(i, "rf1", st.r("rf1")?, a1, g1);
                self.resistor(i, "rf2", st.r("rf2")?, a2, g2);
                self.resistor(i, "rg", st.r("rg")?, g1, g2);
                self.resistor(i, "r1", st.r("r1")?, a2, m);
                self.resistor(i, "r2", st.r("r2")?, m, out);
                self.resistor(i, "r3", st.r("r3")?, a1, q);
                self.resistor(i, "r4", st.r("r4")?, q, inj);
                self.section(i, part, q, m, out);
            }
            Shape::InstrumentationIntegrated => {}
        }
        Ok(())
    }

    fn inamp_stage(
        &mut self,
        i: usize,
        st: &Stage,
        vin: Node,
        vin_n: Node,
        out: Node,
    ) -> Result<()> {
        let s = i + 1;
        let idx = self
            .stock
            .inamps
            .iter()
            .position(|p| p.part_id == st.amplifier)
            .ok_or_else(|| Error::design(format!("in-amp `{}` is not in stock", st.amplifier)))?;
        let part = &self.stock.inamps[idx];
        let rk_half = part.gain_resistor.0 / 2.0;
        let buffer = match &st.buffer {
            Some(id) => Some(self.opamp_index(id)?),
            None => None,
        };
        let inj = self.injection(i, &st.offset, "o", buffer)?;
        self.next_u += 1;
        let d = format!("U{}", self.next_u);
        let lower = d.to_lowercase();
        let g1 = self.n.node(&format!("s{s}g1"));
        let g2 = self.n.node(&format!("s{s}g2"));
        let pi = self.n.node(&format!("{lower}_pi"));
        let vos = self.n.vsource(&format!("VOS_{d}"), pi, vin, 0.0);
        let ibp = self.n.isource(&format!("IBP_{d}"), vin, 0, 0.0);
        let ibn = self.n.isource(&format!("IBN_{d}"), vin_n, 0, 0.0);
        self.resistor(i, "rg", st.r("rg")?, g1, g2);
        let a1 = self.n.node(&format!("{lower}_a1"));
        let a2 = self.n.node(&format!("{lower}_a2"));
        let m = self.n.node(&format!("{lower}_m"));
        let q = self.n.node(&format!("{lower}_q"));
        let oi = self.n.node(&format!("{lower}_oi"));
        let g = 1.0 / INAMP_INTERNAL_GAIN;
        let amp = ElementKind::OpAmp { inverse_gain: g };
        let res = |ohms| ElementKind::Resistor { ohms };
        let gain_element = self.n.add_in(&d, &format!("{d}.EA1"), amp, [pi, g1, a1]);
        self.n.add_in(&d, &format!("{d}.EA2"), amp, [vin_n, g2, a2]);
        let rk1 = self
            .n
            .add_in(&d, &format!("{d}.RK1"), res(rk_half), [a1, g1, 0]);
        let rk2 = self
            .n
            .add_in(&d, &format!("{d}.RK2"), res(rk_half), [a2, g2, 0]);
        let r1 = self.n.add_in(
            &d,
            &format!("{d}.RD1"),
            res(INAMP_INTERNAL_OHMS),
            [a2, m, 0],
        );
        let r2 = self.n.add_in(
            &d,
            &format!("{d}.RD2"),
            res(INAMP_INTERNAL_OHMS),
            [m, oi, 0],
        );
        let r3 = self.n.add_in(
            &d,
            &format!("{d}.RD3"),
            res(INAMP_INTERNAL_OHMS),
            [a1, q, 0],
        );
        let r4 = self.n.add_in(
            &d,
            &format!("{d}.RD4"),
            res(INAMP_INTERNAL_OHMS),
            [q, inj, 0],
        );
        self.n.add_in(&d, &format!("{d}.EA3"), amp, [q, m, oi]);
        let output_offset = self.n.vsource(&format!("VOSO_{d}"), out, oi, 0.0);
        self.internal_resistors.extend([rk1, rk2, r1, r2, r3, r4]);
        self.sections.push(Section {
            designator: d.clone(),
            package: d.clone(),
            stage: i,
            kind: AmplifierKind::InAmp(idx),
            plus: vin,
            minus: vin_n,
            out,
            gain_element,
            vos,
            ibp,
            ibn,
            internal_outputs: vec![a1, a2],
            inamp: Some(InAmpInternals {
                output_offset,
                gain_resistors: vec![r2, r4],
            }),
        });
        self.packages.push(Package {
            designator: d.clone(),
            kind: AmplifierKind::InAmp(idx),
            part_id: part.part_id.clone(),
            channels: 1,
            used: vec![d],
            unit_cost: part.unit_cost,
        });
        Ok(())
    }
}

/// Build the netlist of a design for a need, against a stock.
pub fn build(need: &Need, stock: &Stock, design: &Design) -> Result<Built> {
    if design.stages.is_empty() {
        return Err(Error::design("a design needs at least one stage"));
    }
    let mut b = Builder {
        need,
        stock,
        n: Netlist::new(),
        resistors: Vec::new(),
        internal_resistors: Vec::new(),
        sections: Vec::new(),
        packages: Vec::new(),
        sources: Vec::new(),
        next_u: 0,
        next_vr: 0,
        open_packages: BTreeMap::new(),
    };
    // The sensor.
    let inp = b.n.node("inp");
    let differential = need.sensor.output == SensorOutput::Differential;
    let (vsense, vcm, inn) = if differential {
        let inn = b.n.node("inn");
        let vs = b.n.vsource("VSENSE", inp, inn, need.sensor.signal_low.0);
        let vcm = b.n.vsource("VCM", inn, 0, need.sensor.common_mode.0);
        (vs, Some(vcm), inn)
    } else {
        let vs = b.n.vsource("VSENSE", inp, 0, need.sensor.signal_low.0);
        (vs, None, 0)
    };
    let mut source_resistors = Vec::new();
    let rs = need.sensor.source.0;
    let (sp, sn) = if rs > 0.0 {
        let sp = b.n.node("sp");
        if differential {
            let sn = b.n.node("sn");
            source_resistors.push(b.n.resistor("RSENSE_P", inp, sp, rs));
            source_resistors.push(b.n.resistor("RSENSE_N", inn, sn, rs));
            (sp, sn)
        } else {
            source_resistors.push(b.n.resistor("RSENSE", inp, sp, rs));
            (sp, 0)
        }
    } else {
        (inp, inn)
    };
    let last = design.stages.len() - 1;
    let mut vin = (sp, sn);
    let mut stage_outputs = Vec::new();
    for (i, st) in design.stages.iter().enumerate() {
        if i == 0 && differential && !st.shape.differential_input() {
            return Err(Error::design(format!(
                "the sensor is differential, so the first stage must be a difference or instrumentation stage, not {}",
                st.shape.name()
            )));
        }
        let out = if i == last {
            b.n.node("out")
        } else {
            b.n.node(&format!("s{}o", i + 1))
        };
        b.stage(i, st, vin.0, vin.1, out)?;
        stage_outputs.push(out);
        vin = (out, 0);
    }
    let out = *stage_outputs.last().unwrap_or(&0);
    Ok(Built {
        netlist: b.n,
        out,
        vsense,
        vcm,
        resistors: b.resistors,
        source_resistors,
        internal_resistors: b.internal_resistors,
        sections: b.sections,
        packages: b.packages,
        sources: b.sources,
        stage_outputs,
    })
}
