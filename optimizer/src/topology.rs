//! A [`Design`] turned into a [`Netlist`] with the element names of the
//! SPICE contract (docs/spice.md): the sensor, the sources, the amplifier
//! sections and packages, and each stage by its shape's netlist template
//! (`crate::shape`); records where each part sits so the analysis can
//! perturb it.
//!
//! Node names: the sensor source `VSENSE` sits between `inp` and `inn`
//! (single-ended: `inp` and ground), `VCM` holds `inn` at the common mode,
//! the sensor's own resistance runs from `inp`/`inn` to `sp`/`sn`, stage
//! `i` has internal nodes `s<i>...`, and the last stage drives `out`.

use crate::design::{Design, Injection, Resistor, Source, Stage};
use crate::error::{Error, Result};
use crate::need::{Need, SensorOutput};
use crate::netlist::{ElementKind, Netlist, Node};
use crate::shape::{Role, StageNodes};
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
    /// Role in the stage (named `rf`, `o.top`, ... in files).
    pub role: Role,
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
    /// The filter at the ADC input, where one was chosen
    /// ([`crate::filter::attach`]; designs analysed by the search have
    /// none).
    pub filter: Option<PlacedFilter>,
    /// Capacitors across a stage's feedback resistor `rf`, in stage order.
    pub feedback_capacitors: Vec<PlacedCapacitor>,
}

/// A capacitor across a stage's feedback resistor (a pole in the stage's
/// feedback, [`crate::design::Stage::feedback_capacitor`]).
#[derive(Debug, Clone, PartialEq)]
pub struct PlacedCapacitor {
    /// Element index.
    pub element: usize,
    /// Designator (`C2`, `C3`, ...; `C1` is the filter at the ADC input).
    pub designator: String,
    /// Stage index (0-based).
    pub stage: usize,
    /// Element index of the resistor it is across (`rf`).
    pub across: usize,
    /// The part.
    pub part: crate::stock::CapacitorPart,
}

/// The filter pair placed at the ADC input, with its figures.
#[derive(Debug, Clone, PartialEq)]
pub struct PlacedFilter {
    /// Element index of the series resistor.
    pub series_element: usize,
    /// Designator of the series resistor (`R<n>`).
    pub series_ref: String,
    /// The series resistor part.
    pub series: Resistor,
    /// Element index of the shunt capacitor.
    pub shunt_element: usize,
    /// Designator of the shunt capacitor (`C1`).
    pub shunt_ref: String,
    /// The capacitor part.
    pub shunt: crate::stock::CapacitorPart,
    /// Its figures (`design.filter`).
    pub report: Box<crate::filter::FilterReport>,
}

/// The netlist under construction with its part map; shape templates
/// (`crate::shape`) place their elements through it.
pub(crate) struct Builder<'a> {
    need: &'a Need,
    /// The stock parts are taken from.
    pub(crate) stock: &'a Stock,
    /// The circuit so far.
    pub(crate) netlist: Netlist,
    resistors: Vec<PlacedResistor>,
    /// Resistors inside integrated parts.
    pub(crate) internal_resistors: Vec<usize>,
    /// Amplifier sections so far.
    pub(crate) sections: Vec<Section>,
    /// Amplifier packages so far.
    pub(crate) packages: Vec<Package>,
    sources: Vec<PlacedSource>,
    /// Packages numbered so far (`U<n>`).
    pub(crate) package_count: usize,
    reference_count: usize,
    open_packages: BTreeMap<String, usize>,
}

/// Where an injection drives a stage: its offset node or its + bias.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum InjectionPoint {
    /// The offset node (roles `o.top`, `o.bottom`).
    Offset,
    /// The + input bias (roles `b.top`, `b.bottom`).
    Bias,
}

impl InjectionPoint {
    /// Letter in node names (`s1ot`, `s1bb`).
    fn letter(self) -> &'static str {
        match self {
            InjectionPoint::Offset => "o",
            InjectionPoint::Bias => "b",
        }
    }

    /// The divider roles (top, bottom).
    fn divider_roles(self) -> (Role, Role) {
        match self {
            InjectionPoint::Offset => (Role::OffsetTop, Role::OffsetBottom),
            InjectionPoint::Bias => (Role::BiasTop, Role::BiasBottom),
        }
    }
}

const LETTERS: [&str; 4] = ["A", "B", "C", "D"];

impl<'a> Builder<'a> {
    /// Place a resistor part of a stage between `a` and `b`.
    pub(crate) fn resistor(
        &mut self,
        stage: usize,
        role: Role,
        part: &Resistor,
        a: Node,
        b: Node,
    ) -> usize {
        let designator = format!("R{}", self.resistors.len() + 1);
        let e = self.netlist.resistor(&designator, a, b, part.ohms);
        self.resistors.push(PlacedResistor {
            element: e,
            designator,
            stage,
            role,
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
                let node = self.netlist.node("vsup");
                let e = self
                    .netlist
                    .vsource("VSUP", node, 0, self.need.supply.positive.0);
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
                self.reference_count += 1;
                let d = format!("VR{}", self.reference_count);
                let node = self.netlist.node(&d.to_lowercase());
                let volts = self.stock.references[idx].volts.0;
                let e = self.netlist.vsource(&format!("VREF_{d}"), node, 0, volts);
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

    /// The stock index of an op-amp part.
    pub(crate) fn opamp_index(&self, id: &str) -> Result<usize> {
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
        self.package_count += 1;
        let pd = format!("U{}", self.package_count);
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
    pub(crate) fn section(
        &mut self,
        stage: usize,
        part: usize,
        plus: Node,
        minus: Node,
        out: Node,
    ) -> usize {
        let (d, pkg) = self.take_section(part);
        let inverse_gain = 1.0 / self.stock.opamps[part].aol_min.ratio();
        let pi = self.netlist.node(&format!("{}_pi", d.to_lowercase()));
        let vos = self.netlist.vsource(&format!("VOS_{d}"), pi, plus, 0.0);
        let ibp = self.netlist.isource(&format!("IBP_{d}"), plus, 0, 0.0);
        let ibn = self.netlist.isource(&format!("IBN_{d}"), minus, 0, 0.0);
        let gain_element = self.netlist.add(
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

    /// A node of stage `index` (`s<index+1><suffix>`).
    pub(crate) fn stage_node(&mut self, index: usize, suffix: &str) -> Node {
        self.netlist.node(&format!("s{}{suffix}", index + 1))
    }

    /// The node an injection drives (creating divider and buffer).
    pub(crate) fn injection(
        &mut self,
        stage: usize,
        inj: &Injection,
        point: InjectionPoint,
        opamp: Option<usize>,
    ) -> Result<Node> {
        let what = point.letter();
        let (top_role, bottom_role) = point.divider_roles();
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
                let tap = self.netlist.node(&format!("s{}{}t", stage + 1, what));
                self.resistor(stage, top_role, top, src, tap);
                self.resistor(stage, bottom_role, bottom, tap, 0);
                if *buffered {
                    let part = opamp.ok_or_else(|| {
                        Error::design(
                            "a buffered divider on an in-amp stage needs a `buffer` op-amp part",
                        )
                    })?;
                    let buffered_node = self.netlist.node(&format!("s{}{}b", stage + 1, what));
                    self.section(stage, part, tap, buffered_node, buffered_node);
                    Ok(buffered_node)
                } else {
                    Ok(tap)
                }
            }
        }
    }

    /// Place stage `index` by its shape's netlist template.
    fn stage(&mut self, index: usize, stage: &Stage, nodes: StageNodes) -> Result<()> {
        stage.shape.behaviour().build(self, index, stage, nodes)
    }
}

/// Build the netlist of a design for a need, against a stock.
pub fn build(need: &Need, stock: &Stock, design: &Design) -> Result<Built> {
    if design.stages.is_empty() {
        return Err(Error::design("a design needs at least one stage"));
    }
    let mut builder = Builder {
        need,
        stock,
        netlist: Netlist::new(),
        resistors: Vec::new(),
        internal_resistors: Vec::new(),
        sections: Vec::new(),
        packages: Vec::new(),
        sources: Vec::new(),
        package_count: 0,
        reference_count: 0,
        open_packages: BTreeMap::new(),
    };
    // The sensor.
    let inp = builder.netlist.node("inp");
    let differential = need.sensor.output == SensorOutput::Differential;
    let (vsense, vcm, inn) = if differential {
        let inn = builder.netlist.node("inn");
        let vs = builder
            .netlist
            .vsource("VSENSE", inp, inn, need.sensor.signal_low.0);
        let vcm = builder
            .netlist
            .vsource("VCM", inn, 0, need.sensor.common_mode.0);
        (vs, Some(vcm), inn)
    } else {
        let vs = builder
            .netlist
            .vsource("VSENSE", inp, 0, need.sensor.signal_low.0);
        (vs, None, 0)
    };
    // The sensor's resistance: `source_ohms` is between its terminals, so
    // a differential sensor has half of it in each leg.
    let mut source_resistors = Vec::new();
    let (rs, rs_leg) = (need.sensor.source.0, need.sensor.leg_ohms().0);
    let (sp, sn) = if rs > 0.0 {
        let sp = builder.netlist.node("sp");
        if differential {
            let sn = builder.netlist.node("sn");
            source_resistors.push(builder.netlist.resistor("RSENSE_P", inp, sp, rs_leg));
            source_resistors.push(builder.netlist.resistor("RSENSE_N", inn, sn, rs_leg));
            (sp, sn)
        } else {
            source_resistors.push(builder.netlist.resistor("RSENSE", inp, sp, rs));
            (sp, 0)
        }
    } else {
        (inp, inn)
    };
    let last = design.stages.len() - 1;
    let mut vin = (sp, sn);
    let mut stage_outputs = Vec::new();
    let mut feedback_capacitors = Vec::new();
    for (i, stage) in design.stages.iter().enumerate() {
        if i == 0 && differential && !stage.shape.differential_input() {
            return Err(Error::design(format!(
                "the sensor is differential, so the first stage must be a difference or instrumentation stage, not {}",
                stage.shape.name()
            )));
        }
        let out = if i == last {
            builder.netlist.node("out")
        } else {
            builder.netlist.node(&format!("s{}o", i + 1))
        };
        let nodes = StageNodes {
            plus: vin.0,
            minus: vin.1,
            out,
        };
        builder.stage(i, stage, nodes)?;
        if let Some(part) = &stage.feedback_capacitor {
            let across = builder
                .resistors
                .iter()
                .find(|r| r.stage == i && r.role == Role::Rf)
                .map(|r| r.element)
                .ok_or_else(|| {
                    Error::design(format!(
                        "stage {} ({}) has a feedback capacitor but no feedback resistor `rf`",
                        i + 1,
                        stage.shape.name()
                    ))
                })?;
            let [a, b, _] = builder.netlist.elements[across].nodes;
            let designator = format!("C{}", feedback_capacitors.len() + 2);
            let element = builder.netlist.capacitor(&designator, a, b, part.value.0);
            feedback_capacitors.push(PlacedCapacitor {
                element,
                designator,
                stage: i,
                across,
                part: part.clone(),
            });
        }
        stage_outputs.push(out);
        vin = (out, 0);
    }
    let out = *stage_outputs.last().unwrap_or(&0);
    Ok(Built {
        netlist: builder.netlist,
        out,
        vsense,
        vcm,
        resistors: builder.resistors,
        source_resistors,
        internal_resistors: builder.internal_resistors,
        sections: builder.sections,
        packages: builder.packages,
        sources: builder.sources,
        stage_outputs,
        filter: None,
        feedback_capacitors,
    })
}
