//! SPICE export: the netlist of a design as a deck that runs unmodified in
//! ngspice batch mode (`ngspice -b FILE`), under the contract documented
//! in `docs/spice.md`.
//!
//! The deck is a straight copy of the [`Netlist`] the analysis solves:
//! every element keeps its name (`R3`, `VSENSE`, `VOS_U1A`, ...) and its
//! nodes (`0`, `inp`, `inn`, `out`, ...). Op-amp sections become
//! behavioural voltage-controlled voltage sources `E<ref> out 0 plus minus
//! Aol`, so no vendor model is needed. The insides of an integrated part
//! (elements whose `group` is set) go into a `.subckt` with one instance
//! `X<ref>` at top level.
//!
//! The deck ends with a `.control` block that solves the operating point
//! at both ends of the sensor span and prints two lines a script can read:
//!
//! ```text
//! out_low_v = 6.000000000000000e-02
//! out_high_v = 2.940000000000000e+00
//! ```
//!
//! Values are written with the shortest text that reads back as the same
//! `f64` (`1e4`, `4.32e2`), which SPICE reads as plain numbers.

use crate::design::Design;
use crate::error::{Error, Result};
use crate::mna_ac::AcAmplifier;
use crate::need::{Need, SensorOutput};
use crate::netlist::{Element, ElementKind, Netlist, Node};
use crate::stock::Stock;
use crate::topology::{build, AmplifierKind, Built, INAMP_INTERNAL_GAIN, INAMP_INTERNAL_OHMS};
use std::fmt::Write as _;

/// Open-loop gain written for an op-amp element whose inverse gain is 0
/// (an ideal op-amp in the core). SPICE needs a finite number; at this gain
/// the closed-loop result differs from the ideal one by about one part in
/// 10^12 per unit of noise gain.
pub const IDEAL_OPAMP_GAIN: f64 = 1e12;

/// Name printed by the `.control` block for the output at the low end of
/// the span.
pub const OUT_LOW_NAME: &str = "out_low_v";
/// Name printed by the `.control` block for the output at the high end of
/// the span.
pub const OUT_HIGH_NAME: &str = "out_high_v";

/// What goes into a deck besides the circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct Deck<'a> {
    /// Free text for the title line (sanitised: one line of printable
    /// ASCII, always after a fixed `spanfit` prefix).
    pub title: &'a str,
    /// Sensor signal at the low and the high end of the span, volts.
    /// `VSENSE` is written at the low end; the `.control` block also
    /// solves the high end and then restores the low end.
    pub span_v: [f64; 2],
    /// Extra comment lines (sanitised) written in the header, such as the
    /// limits of the error sources from the stock rows.
    pub notes: &'a [String],
    /// The single-pole model of each op-amp section (its GBW and output
    /// resistance, [`crate::filter::amplifiers`]); a section without one
    /// is written as a frequency-independent gain block.
    pub amplifiers: &'a [AcAmplifier],
}

/// Inductance across each op-amp's output resistance in the deck, as the
/// frequency `R / (2 pi L)` above which the resistance is in place, Hz.
/// At DC the inductor shorts it, so the operating point is the core's DC
/// model (no output resistance) exactly; from this frequency up the
/// output is the core's AC model. A model choice of ours.
pub const OUTPUT_RESISTANCE_FROM_HZ: f64 = 1e-3;

/// The deck of a built design, with `VSENSE` at the value the netlist holds
/// (the low end of the span, as [`build`] makes it) and a second operating
/// point at `signal_high_v` (normally the high end of the span). See
/// [`deck`] for the layout; [`export`] adds the limits of every error
/// source from the stock.
pub fn netlist_text(built: &Built, title: &str, signal_high_v: f64) -> String {
    let low = match built.netlist.elements.get(built.vsense).map(|e| e.kind) {
        Some(ElementKind::VoltageSource { volts }) => volts,
        _ => 0.0,
    };
    deck(
        built,
        &Deck {
            title,
            span_v: [low, signal_high_v],
            notes: &[],
            amplifiers: &[],
        },
    )
}

/// Build a design for a need and write its deck, the sensor at the low end
/// of its span, with the header naming every error source and its limit
/// from the stock rows (`vos_max_uv`, `ib_max_na`, `initial_pct`).
pub fn export(need: &Need, stock: &Stock, design: &Design) -> Result<String> {
    let (built, _) = crate::filter::attach(need, stock, &build(need, stock, design)?);
    let span = [need.sensor.signal_low.0, need.sensor.signal_high.0];
    if !(span[0].is_finite() && span[1].is_finite()) {
        return Err(Error::design(
            "the sensor span is not a pair of finite voltages",
        ));
    }
    let shapes: Vec<&str> = design.stages.iter().map(|s| s.shape.name()).collect();
    let title = format!("{} for {}", shapes.join(" + "), need.sensor.label);
    let notes = limit_notes(need, stock, &built);
    let amplifiers = crate::filter::amplifiers(stock, &built);
    Ok(deck(
        &built,
        &Deck {
            title: &title,
            span_v: span,
            notes: &notes,
            amplifiers: &amplifiers,
        },
    ))
}

/// Header lines naming each explicit error source of a built design and
/// its limit from the stock row, plus the resistors with their grade.
// Long because it is one note per kind of error source, in netlist order;
// each arm is a few lines and splitting would scatter the header's order.
pub fn limit_notes(need: &Need, stock: &Stock, built: &Built) -> Vec<String> {
    let mut notes = Vec::new();
    notes.push(
        "Limits of the error sources (from the stock rows; sources sit at 0 / nominal):".into(),
    );
    for sec in &built.sections {
        let d = &sec.designator;
        match sec.kind {
            AmplifierKind::OpAmp(i) => {
                if let Some(p) = stock.opamps.get(i) {
                    notes.push(format!(
                        "  {d}: op-amp {} (section of {}), Aol >= {} dB; VOS_{d} within +/-{} uV \
                         (vos_max_uv = {}, drift {} uV/C); IBP_{d}, IBN_{d} within +/-{} nA \
                         (ib_max_na = {}, ios_max_na = {})",
                        p.part_id,
                        sec.package,
                        p.aol_min.0,
                        p.vos_max_uv,
                        p.vos_max_uv,
                        p.vos_drift_uv_per_c,
                        p.ib_max_na,
                        p.ib_max_na,
                        p.ios_max_na
                    ));
                }
            }
            AmplifierKind::InAmp(i) => {
                if let Some(p) = stock.inamps.get(i) {
                    notes.push(format!(
                        "  {d}: in-amp {} (subcircuit {}), gain 1 + Rk/Rg with Rk = {} ohm, \
                         gain error +/-{} %; VOS_{d} within +/-{} uV (input_offset_uv = {}); \
                         VOSO_{d} within +/-{} uV (output_offset_uv = {}); IBP_{d}, IBN_{d} \
                         within +/-{} nA (ib_max_na = {}); inside, a model: amplifiers of gain \
                         {} and {} ohm difference resistors",
                        p.part_id,
                        subckt_name(built, d),
                        p.gain_resistor.0,
                        p.gain_error.0,
                        p.input_offset_uv,
                        p.input_offset_uv,
                        p.output_offset_uv,
                        p.output_offset_uv,
                        p.ib_max_na,
                        p.ib_max_na,
                        spice_number(INAMP_INTERNAL_GAIN),
                        spice_number(INAMP_INTERNAL_OHMS)
                    ));
                }
            }
        }
    }
    for src in &built.sources {
        match src.reference.and_then(|i| stock.references.get(i)) {
            Some(r) => notes.push(format!(
                "  VREF_{}: reference {} at {} V nominal, within +/-{} % (initial_pct = {}), \
                 tempco {} ppm/C",
                src.designator, r.part_id, r.volts.0, r.initial.0, r.initial.0, r.tempco.0
            )),
            None => notes.push(format!(
                "  {}: the positive supply used as a source, {} V within +/-{} % \
                 (supply.tolerance_pct){}",
                src.designator,
                need.supply.positive.0,
                need.supply.tolerance.0,
                if need.supply.ratiometric {
                    "; ratiometric: the ADC reference moves with it"
                } else {
                    ""
                }
            )),
        }
    }
    notes.push("Resistors (designator, part, value, tolerance, TCR, stage, role):".into());
    for r in &built.resistors {
        let matched = r.part.network.as_ref().map_or_else(String::new, |n| {
            format!(
                ", network package {} element {} (ratio +/-{} %, tracking {} ppm/C)",
                n.package, n.element, n.ratio_tolerance_pct, n.tracking_tcr_ppm_per_c
            )
        });
        notes.push(format!(
            "  {} {} {} ohm +/-{} % {} ppm/C{matched}, stage {}, {}",
            r.designator,
            r.part.part_id,
            spice_number(r.part.ohms),
            r.part.tolerance_pct,
            r.part.tcr_ppm_per_c,
            r.stage + 1,
            r.role
        ));
    }
    if !built.feedback_capacitors.is_empty() {
        notes.push(
            "Feedback capacitors (designator, part, value, tolerance, across, stage):".into(),
        );
        for c in &built.feedback_capacitors {
            let across = built
                .resistors
                .iter()
                .find(|r| r.element == c.across)
                .map_or("rf", |r| r.designator.as_str());
            notes.push(format!(
                "  {} {} {} F +/-{} %, across {across}, stage {}",
                c.designator,
                c.part.part_id,
                spice_number(c.part.value.0),
                c.part.tolerance.0,
                c.stage + 1
            ));
        }
    }
    if need.sensor.output == SensorOutput::Differential {
        notes.push(format!(
            "Sensor: differential, {} V to {} V between inp and inn, common mode {} V (VCM), \
             {} ohm between the terminals ({} ohm per leg)",
            need.sensor.signal_low.0,
            need.sensor.signal_high.0,
            need.sensor.common_mode.0,
            need.sensor.source.0,
            need.sensor.leg_ohms().0
        ));
    } else {
        notes.push(format!(
            "Sensor: single-ended, {} V to {} V at inp, {} ohm source resistance",
            need.sensor.signal_low.0, need.sensor.signal_high.0, need.sensor.source.0
        ));
    }
    notes
}

/// A number as SPICE reads it: the shortest decimal text that reads back
/// as the same `f64` (`0`, `1e4`, `-2.5e0`, `4.32e2`).
pub fn spice_number(v: f64) -> String {
    if v == 0.0 {
        "0".to_string()
    } else if v.is_finite() {
        format!("{v:e}")
    } else if v.is_nan() {
        "0".to_string()
    } else if v > 0.0 {
        format!("{:e}", f64::MAX)
    } else {
        format!("{:e}", -f64::MAX)
    }
}

/// One line of printable ASCII: control characters (line breaks above
/// all, which would end a comment and start an element line) and
/// non-ASCII characters become `_`.
pub fn comment_text(s: &str) -> String {
    s.chars()
        .map(|c| if (' '..='~').contains(&c) { c } else { '_' })
        .collect()
}

/// The SPICE letter an element name must start with.
fn letter(kind: &ElementKind) -> char {
    match kind {
        ElementKind::Resistor { .. } => 'R',
        ElementKind::VoltageSource { .. } => 'V',
        ElementKind::CurrentSource { .. } => 'I',
        ElementKind::OpAmp { .. } => 'E',
        ElementKind::Capacitor { .. } => 'C',
    }
}

/// The element name as written: the netlist name, prefixed by the right
/// letter only if it does not start with it (the templates always do).
fn element_name(name: &str, kind: &ElementKind) -> String {
    let l = letter(kind);
    let safe: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    if safe.chars().next().map(|c| c.to_ascii_uppercase()) == Some(l) {
        safe
    } else {
        format!("{l}{safe}")
    }
}

fn node_name(n: &Netlist, node: Node) -> &str {
    n.node_names.get(node).map(String::as_str).unwrap_or("0")
}

/// The lines of an op-amp section with its single-pole model (no
/// trailing newline): a transconductance of `Aol` A/V from the inputs into
/// a pole node loaded by 1 ohm and `Aol/(2 pi GBW)` farads, so its voltage
/// is `A(s) (V+ - V-)` with `A(s) = 1/(1/Aol + s/(2 pi GBW))` (the gain in
/// the transconductance keeps the matrix scaled as a plain gain block's,
/// so the operating point matches the core's to its precision);
/// `E<ref>` copies it, and the output resistance (with an inductor across
/// it, [`OUTPUT_RESISTANCE_FROM_HZ`]) joins it to the output node. The
/// same model as the core's AC analysis ([`crate::mna_ac`]).
fn opamp_lines(n: &Netlist, e: &Element, name: &str, aol: f64, model: &AcAmplifier) -> String {
    let a = node_name(n, e.nodes[0]);
    let b = node_name(n, e.nodes[1]);
    let out = node_name(n, e.nodes[2]);
    let x = name.strip_prefix('E').unwrap_or(name);
    let pole = format!("pole_{x}");
    let drive = format!("drive_{x}");
    let ro = model.output_ohms.max(1e-6);
    let henries = ro / (2.0 * std::f64::consts::PI * OUTPUT_RESISTANCE_FROM_HZ);
    [
        format!("GPOLE_{x} 0 {pole} {a} {b} {}", spice_number(aol)),
        format!("RPOLE_{x} {pole} 0 1"),
        format!(
            "CPOLE_{x} {pole} 0 {}",
            spice_number(aol / (2.0 * std::f64::consts::PI * model.gbw_hz))
        ),
        format!("{name} {drive} 0 {pole} 0 1"),
        format!("ROUT_{x} {drive} {out} {}", spice_number(ro)),
        format!("LOUT_{x} {drive} {out} {}", spice_number(henries)),
    ]
    .join("\n")
}

/// The element line (no trailing newline), with `name` as written; an
/// op-amp with a model in `amplifiers` takes several lines
/// ([`opamp_lines`]).
fn element_line(n: &Netlist, e: &Element, name: &str, model: Option<&AcAmplifier>) -> String {
    let a = node_name(n, e.nodes[0]);
    let b = node_name(n, e.nodes[1]);
    match e.kind {
        ElementKind::Resistor { ohms } => format!("{name} {a} {b} {}", spice_number(ohms)),
        ElementKind::VoltageSource { volts } => {
            format!("{name} {a} {b} DC {}", spice_number(volts))
        }
        ElementKind::CurrentSource { amps } => format!("{name} {a} {b} DC {}", spice_number(amps)),
        ElementKind::Capacitor { farads } => format!("{name} {a} {b} {}", spice_number(farads)),
        ElementKind::OpAmp { inverse_gain } => {
            let aol = if inverse_gain > 0.0 && inverse_gain.is_finite() {
                1.0 / inverse_gain
            } else {
                IDEAL_OPAMP_GAIN
            };
            if let Some(m) = model.filter(|m| m.gbw_hz > 0.0 && m.gbw_hz.is_finite()) {
                return opamp_lines(n, e, name, aol, m);
            }
            let out = node_name(n, e.nodes[2]);
            format!("{name} {out} 0 {a} {b} {}", spice_number(aol))
        }
    }
}

/// Nodes an element touches (two, or three for an op-amp).
fn element_nodes(e: &Element) -> &[Node] {
    match e.kind {
        ElementKind::OpAmp { .. } => &e.nodes[..3],
        _ => &e.nodes[..2],
    }
}

/// The name of the subcircuit holding a group's elements.
fn subckt_name(built: &Built, group: &str) -> String {
    let inamp = built
        .sections
        .iter()
        .any(|s| s.designator == group && matches!(s.kind, AmplifierKind::InAmp(_)));
    let safe: String = group
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    if inamp {
        format!("SF_INAMP_{safe}")
    } else {
        format!("SF_PART_{safe}")
    }
}

/// One subcircuit: its name, its ports (nodes it shares with the rest of
/// the circuit, in order of first use) and its elements.
struct Group<'a> {
    name: String,
    instance: String,
    ports: Vec<Node>,
    elements: Vec<&'a Element>,
}

fn groups<'a>(built: &'a Built) -> Vec<(String, Group<'a>)> {
    let n = &built.netlist;
    let mut out: Vec<(String, Group<'a>)> = Vec::new();
    for e in &n.elements {
        let Some(g) = &e.group else { continue };
        if let Some((_, grp)) = out.iter_mut().find(|(k, _)| k == g) {
            grp.elements.push(e);
        } else {
            let safe: String = g
                .chars()
                .map(|c| {
                    if c.is_ascii_alphanumeric() || c == '_' {
                        c
                    } else {
                        '_'
                    }
                })
                .collect();
            out.push((
                g.clone(),
                Group {
                    name: subckt_name(built, g),
                    instance: format!("X{safe}"),
                    ports: Vec::new(),
                    elements: vec![e],
                },
            ));
        }
    }
    for (g, grp) in out.iter_mut() {
        for e in &grp.elements {
            for &node in element_nodes(e) {
                if node == 0 || grp.ports.contains(&node) {
                    continue;
                }
                let shared = n.elements.iter().any(|o| {
                    o.group.as_deref() != Some(g.as_str()) && element_nodes(o).contains(&node)
                });
                if shared {
                    grp.ports.push(node);
                }
            }
        }
    }
    out
}

/// Write the deck of a built design. Layout: title line; `*` header (what
/// the sources mean, the notes); top-level elements in netlist order with
/// one `X<ref>` line where a subcircuit's first element was; the
/// `.subckt` definitions; `.op`; a `.control` block printing
/// [`OUT_LOW_NAME`] and [`OUT_HIGH_NAME`]; `.end`.
pub fn deck(built: &Built, deck: &Deck<'_>) -> String {
    let n = &built.netlist;
    let mut s = String::new();
    let title = comment_text(deck.title);
    let _ = writeln!(s, "spanfit front end: {title}");
    for line in header_lines() {
        let _ = writeln!(s, "* {line}");
    }
    if !deck.notes.is_empty() {
        s.push_str("*\n");
        for line in deck.notes {
            let _ = writeln!(s, "* {}", comment_text(line));
        }
    }
    s.push_str("*\n");
    let groups = groups(built);
    let model_of = |element: usize| deck.amplifiers.iter().find(|m| m.element == element);
    let mut placed: Vec<&str> = Vec::new();
    for (i, e) in n.elements.iter().enumerate() {
        match &e.group {
            None => {
                let name = element_name(&e.name, &e.kind);
                if i == built.vsense {
                    if let ElementKind::VoltageSource { .. } = e.kind {
                        let a = node_name(n, e.nodes[0]);
                        let b = node_name(n, e.nodes[1]);
                        let _ =
                            writeln!(s, "{name} {a} {b} DC {} AC 1", spice_number(deck.span_v[0]));
                        continue;
                    }
                }
                let _ = writeln!(s, "{}", element_line(n, e, &name, model_of(i)));
            }
            Some(g) => {
                if placed.contains(&g.as_str()) {
                    continue;
                }
                placed.push(g);
                if let Some((_, grp)) = groups.iter().find(|(k, _)| k == g) {
                    let ports: Vec<&str> = grp.ports.iter().map(|&p| node_name(n, p)).collect();
                    let _ = writeln!(s, "{} {} {}", grp.instance, ports.join(" "), grp.name);
                }
            }
        }
    }
    for (g, grp) in &groups {
        let ports: Vec<&str> = grp.ports.iter().map(|&p| node_name(n, p)).collect();
        let _ = writeln!(
            s,
            "*\n* Insides of {} (not parts; a model of the integrated part)",
            comment_text(g)
        );
        let _ = writeln!(s, ".subckt {} {}", grp.name, ports.join(" "));
        let prefix = format!("{g}.");
        for e in &grp.elements {
            let local = e.name.strip_prefix(&prefix).unwrap_or(&e.name);
            let name = element_name(local, &e.kind);
            let index = n.elements.iter().position(|o| std::ptr::eq(o, *e));
            let _ = writeln!(s, "{}", element_line(n, e, &name, index.and_then(model_of)));
        }
        let _ = writeln!(s, ".ends {}", grp.name);
    }
    let vsense = n
        .elements
        .get(built.vsense)
        .map(|e| element_name(&e.name, &e.kind))
        .unwrap_or_else(|| "VSENSE".to_string());
    let out = node_name(n, built.out);
    let (low, high) = (spice_number(deck.span_v[0]), spice_number(deck.span_v[1]));
    s.push_str("*\n.op\n.control\nset numdgt=15\n");
    let _ = writeln!(s, "op\nlet {OUT_LOW_NAME} = v({out})\nprint {OUT_LOW_NAME}");
    let _ = writeln!(s, "alter {vsense} dc = {high}");
    let _ = writeln!(
        s,
        "op\nlet {OUT_HIGH_NAME} = v({out})\nprint {OUT_HIGH_NAME}"
    );
    let _ = writeln!(s, "alter {vsense} dc = {low}");
    s.push_str(".endc\n.end\n");
    s
}

/// The fixed part of the header: what the deck is and what its sources
/// mean.
fn header_lines() -> [&'static str; 20] {
    [
        "Generated by spanfit. Run: ngspice -b FILE",
        "Linear model of the front end, the same netlist the spanfit analysis solves.",
        "VSENSE   the sensor: DC source between inp and inn (single-ended: inp and 0),",
        "         written at the low end of the span with AC 1; the .control block also",
        "         solves the high end and prints out_low_v and out_high_v (the node out).",
        "VCM      the sensor's common mode (differential sensors); RSENSE* its own resistance.",
        "E<ref>   each op-amp section: a single pole at its GBW, Aol the part's minimum:",
        "         GPOLE_<ref> (Aol A/V) into RPOLE_<ref> (1 ohm) and CPOLE_<ref>",
        "         (Aol/(2 pi GBW) F), E<ref> copies that node, ROUT_<ref> (output_ohms) joins",
        "         it to the output, with LOUT_<ref> across it so DC sees no output resistance.",
        "VOS_<ref>           input offset, DC 0 V nominal, in series with the + input.",
        "IBP_<ref> IBN_<ref> bias currents into the + and - inputs, DC 0 A nominal.",
        "VOSO_<ref>          output offset of an integrated in-amp, DC 0 V nominal.",
        "VREF_<ref>          a voltage reference at its nominal voltage; VSUP the supply.",
        "Set any of these to a value inside its limit (listed below) to see its effect.",
        "Limits of this model: linear only. No output swing or common-mode limits, no",
        "CMRR, op-amp noise or drift; those are in the spanfit report. .ac, .noise",
        "(resistors only) and .tran run on it unmodified.",
        "Values are plain numbers (shortest exact decimal of the analysis value).",
        "Resistors are named by reference designator, as in the design's parts list.",
    ]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::netlist::Netlist;

    fn tiny() -> Built {
        let mut n = Netlist::new();
        let inp = n.node("inp");
        let out = n.node("out");
        let m = n.node("s1m");
        let vsense = n.vsource("VSENSE", inp, 0, 0.01);
        n.resistor("R1", out, m, 9000.0);
        n.resistor("R2", m, 0, 1000.0);
        n.add(
            "EU1",
            ElementKind::OpAmp { inverse_gain: 0.0 },
            [inp, m, out],
        );
        let g1 = n.node("u2_a");
        n.add_in(
            "U2",
            "U2.RK1",
            ElementKind::Resistor { ohms: 500.0 },
            [out, g1, 0],
        );
        n.add_in(
            "U2",
            "U2.RK2",
            ElementKind::Resistor { ohms: 700.0 },
            [g1, 0, 0],
        );
        Built {
            netlist: n,
            out,
            vsense,
            vcm: None,
            resistors: Vec::new(),
            source_resistors: Vec::new(),
            internal_resistors: Vec::new(),
            sections: Vec::new(),
            packages: Vec::new(),
            sources: Vec::new(),
            stage_outputs: vec![out],
            filter: None,
            feedback_capacitors: Vec::new(),
        }
    }

    #[test]
    fn numbers_read_back_exactly() {
        for v in [1.0, 0.1, 432.0, 49_900.0, 1.0 / 3.0, -2.5, 1e-9, 6.02e23] {
            let t = spice_number(v);
            assert_eq!(t.parse::<f64>().ok(), Some(v), "{t}");
        }
        assert_eq!(spice_number(0.0), "0");
        assert_eq!(spice_number(10_000.0), "1e4");
    }

    #[test]
    fn comment_text_cannot_break_out_of_a_comment() {
        let hostile = "OA-1\n.include /etc/passwd\r\nR9 a b 1";
        let c = comment_text(hostile);
        assert!(!c.contains('\n') && !c.contains('\r'));
        assert_eq!(c, "OA-1_.include /etc/passwd__R9 a b 1");
        assert_eq!(comment_text("5 \u{b5}V"), "5 _V");
    }

    #[test]
    fn hostile_title_and_notes_stay_in_comments() {
        let built = tiny();
        let notes = vec!["part X\n.end\nV1 out 0 DC 5".to_string()];
        let text = deck(
            &built,
            &Deck {
                title: "t\n.end",
                span_v: [0.0, 1.0],
                notes: &notes,
                amplifiers: &[],
            },
        );
        // Exactly one `.end` line, at the end; no injected element line.
        let ends = text.lines().filter(|l| l.trim() == ".end").count();
        assert_eq!(ends, 1);
        assert!(text.trim_end().ends_with(".end"));
        assert!(!text.lines().any(|l| l.starts_with("V1 ")));
        assert!(text
            .lines()
            .next()
            .unwrap_or("")
            .starts_with("spanfit front end: t_.end"));
    }

    #[test]
    fn elements_keep_their_names_and_groups_become_a_subcircuit() {
        let built = tiny();
        let text = netlist_text(&built, "tiny", 0.02);
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines.contains(&"VSENSE inp 0 DC 1e-2 AC 1"), "{text}");
        assert!(lines.contains(&"R1 out s1m 9e3"));
        assert!(lines.contains(&"R2 s1m 0 1e3"));
        // Ideal op-amp: a large finite gain.
        assert!(lines.contains(&"EU1 out 0 inp s1m 1e12"));
        // The group: ports are the nodes it shares with the top level.
        assert!(lines.contains(&"XU2 out SF_PART_U2"), "{text}");
        assert!(lines.contains(&".subckt SF_PART_U2 out"));
        assert!(lines.contains(&"RK1 out u2_a 5e2"));
        assert!(lines.contains(&"RK2 u2_a 0 7e2"));
        assert!(lines.contains(&".ends SF_PART_U2"));
        // Both span ends solved, the low end restored.
        assert!(lines.contains(&"alter VSENSE dc = 2e-2"));
        assert!(lines.contains(&"alter VSENSE dc = 1e-2"));
        assert!(lines.contains(&"print out_low_v") && lines.contains(&"print out_high_v"));
        assert_eq!(lines.last(), Some(&".end"));
    }

    /// The demo design exported: contract names, the in-amp subcircuit and
    /// the limits from the stock rows in the header.
    #[test]
    fn demo_export_names_sources_and_limits() {
        let need = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let json = include_str!("../../examples/demo-design.json");
        let design =
            crate::design::parse_design(json.as_bytes(), "demo-design.json", &stock).unwrap();
        let text = export(&need, &stock, &design).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines[0].starts_with("spanfit front end: instrumentation-integrated for "));
        assert!(lines.contains(&"VSENSE inp inn DC 0 AC 1"));
        assert!(lines.contains(&"VCM inn 0 DC 2.5e0"));
        assert!(lines.contains(&"VREF_VR1 vr1 0 DC 1.25e0"));
        assert!(lines.contains(&"R3 s1g1 s1g2 4.32e2"), "{text}");
        assert!(lines.contains(&"VOS_U2 u2_pi sp DC 0"));
        assert!(lines.contains(&"IBP_U2 sp 0 DC 0") && lines.contains(&"IBN_U2 sn 0 DC 0"));
        assert!(lines.contains(&"VOSO_U2 drv u2_oi DC 0"));
        assert!(lines
            .iter()
            .any(|l| l.starts_with("XU2 ") && l.ends_with(" SF_INAMP_U2")));
        assert!(lines.iter().any(|l| l.starts_with(".subckt SF_INAMP_U2 ")));
        // The in-amp's first amplifier with its single pole: Aol A/V into
        // 1 ohm and Aol/(2 pi GBW) farads, copied by EA1 and joined to its
        // output through the output resistance.
        assert!(
            lines.contains(&"GPOLE_A1 0 pole_A1 u2_pi s1g1 1e7"),
            "{text}"
        );
        assert!(lines.contains(&"RPOLE_A1 pole_A1 0 1"));
        assert!(lines.contains(&"EA1 drive_A1 0 pole_A1 0 1"));
        assert!(lines
            .iter()
            .any(|l| l.starts_with("ROUT_A1 drive_A1 u2_a1 ")));
        let farads = lines
            .iter()
            .find_map(|l| l.strip_prefix("CPOLE_A1 pole_A1 0 "))
            .and_then(|v| v.parse::<f64>().ok())
            .unwrap();
        let built = crate::topology::build(&need, &stock, &design).unwrap();
        let gbw = built
            .sections
            .iter()
            .find_map(|s| match s.kind {
                AmplifierKind::InAmp(i) => Some(stock.inamps[i].gbw_mhz * 1e6),
                AmplifierKind::OpAmp(_) => None,
            })
            .unwrap();
        assert!((farads * 2.0 * std::f64::consts::PI * gbw / 1e7 - 1.0).abs() < 1e-12);
        // No element inside the subcircuit keeps the `U2.` prefix.
        assert!(!lines.iter().any(|l| l.starts_with("U2.")));
        // Limits from the stock rows, in comments.
        let header: Vec<&&str> = lines.iter().filter(|l| l.starts_with('*')).collect();
        let has = |s: &str| header.iter().any(|l| l.contains(s));
        assert!(has("vos_max_uv = 800"), "OA-RR1 row");
        assert!(has("ib_max_na = 0.01"));
        assert!(has("input_offset_uv = 50") && has("output_offset_uv = 200"));
        assert!(has("initial_pct = 0.5"));
        assert!(has("Generated by spanfit"));
        // Both span ends: 0 and 25 mV.
        assert!(lines.contains(&"alter VSENSE dc = 2.5e-2"));
    }

    #[test]
    fn names_get_the_right_spice_letter() {
        let r = ElementKind::Resistor { ohms: 1.0 };
        assert_eq!(element_name("R3", &r), "R3");
        assert_eq!(element_name("GAIN", &r), "RGAIN");
        assert_eq!(
            element_name("x y", &ElementKind::OpAmp { inverse_gain: 0.0 }),
            "Ex_y"
        );
    }
}
