//! Schematic: an SVG drawing of a built design, made from its netlist
//! data, plus the value formatters the rest of the crate shares
//! ([`format_ohms`], [`format_quantity`]).
//!
//! Layout: the sensor at the left, then one fixed template per stage
//! shape, placed left to right on a common signal line. Offset and bias
//! networks (dividers, with their follower where buffered) and the voltage
//! sources are drawn in a row underneath and joined to their stage by node
//! labels carrying the netlist node names (`s1ob`, `vr1`, ...), the way a
//! hand-drawn schematic uses net labels instead of long wires. Every part
//! is shown with its designator and value (`R3 10.0k`); hovering a part
//! shows its part id and grade. The explicit error sources of the SPICE
//! export (`VOS_<ref>`, `IBP_<ref>`, `IBN_<ref>`) are not drawn.
//!
//! All text is XML-escaped: part ids and labels come from user files.

use crate::design::Design;
use crate::netlist::{ElementKind, Netlist, Node};
use crate::shape::Role;
use crate::topology::{AmplifierKind, Built, PlacedResistor, Section};

mod canvas;
pub(crate) use canvas::{num, Canvas, Labelled, Side, DY, GAP, NET_ROW_GAP, Y0};
use std::fmt::Write as _;

// ---------------------------------------------------------------------
// Value formatting (shared with the BOM and the report).

/// Round to `sig` significant digits.
fn round_sig(v: f64, sig: i32) -> f64 {
    let e = v.abs().log10().floor() as i32;
    let p = sig - 1 - e;
    if p >= 0 {
        let scale = 10f64.powi(p);
        (v * scale).round() / scale
    } else {
        let scale = 10f64.powi(-p);
        (v / scale).round() * scale
    }
}

/// Decimal exponent of `|v|` (`v` non-zero and finite), robust against
/// `log10` landing just below an exact power of ten.
fn exponent10(v: f64) -> i32 {
    let a = v.abs();
    let mut e = a.log10().floor() as i32;
    if 10f64.powi(e + 1) <= a {
        e += 1;
    } else if 10f64.powi(e) > a {
        e -= 1;
    }
    e
}

/// Mantissa text and SI prefix: three significant digits, or up to six
/// where three would change the value by more than a part in 10^9.
fn engineering(v: f64) -> (String, &'static str) {
    if !v.is_finite() {
        return ("?".to_string(), "");
    }
    if v == 0.0 {
        return ("0".to_string(), "");
    }
    let mut sig = 3;
    let mut r = round_sig(v, sig);
    while sig < 6 && (r - v).abs() > 1e-9 * v.abs() {
        sig += 1;
        r = round_sig(v, sig);
    }
    const PREFIXES: [&str; 9] = ["p", "n", "u", "m", "", "k", "M", "G", "T"];
    let e3 = (exponent10(r).div_euclid(3) * 3).clamp(-12, 12);
    let mant = round_sig(r / 10f64.powi(e3), sig);
    let int_digits = if mant.abs() >= 1.0 {
        exponent10(mant) + 1
    } else {
        1
    };
    let decimals = (sig - int_digits).max(0) as usize;
    let prefix = PREFIXES[((e3 + 12) / 3) as usize];
    (format!("{mant:.decimals$}"), prefix)
}

/// A resistance in the trade's short form: three significant digits and
/// an SI suffix, no unit (`432`, `4.99`, `20.0k`, `1.00M`); more digits
/// only where the value needs them (`12.345k`).
pub fn format_ohms(ohms: f64) -> String {
    let (m, p) = engineering(ohms);
    format!("{m}{p}")
}

/// A value with its unit and SI prefix (`1.25 V`, `25.0 mV`, `100 nA`).
pub fn format_quantity(value: f64, unit: &str) -> String {
    let (m, p) = engineering(value);
    format!("{m} {p}{unit}")
}

/// Escape text for XML character data and attribute values. Characters
/// XML 1.0 does not allow (control characters other than tab and line
/// breaks) become U+FFFD.
pub fn xml_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' | '\r' => out.push(c),
            c if (c as u32) < 0x20 || c == '\u{fffe}' || c == '\u{ffff}' => out.push('\u{fffd}'),
            c => out.push(c),
        }
    }
    out
}

// ---------------------------------------------------------------------
// Reading the built design.

/// The built design a drawing reads: its netlist and part map.
pub(crate) struct Sheet<'a> {
    /// The design as built.
    pub(crate) built: &'a Built,
    /// Its netlist.
    pub(crate) netlist: &'a Netlist,
}

impl<'a> Sheet<'a> {
    pub(crate) fn node(&self, node: Node) -> &'a str {
        self.netlist
            .node_names
            .get(node)
            .map(String::as_str)
            .unwrap_or("0")
    }

    pub(crate) fn resistor(&self, stage: usize, role: Role) -> Option<&'a PlacedResistor> {
        self.built
            .resistors
            .iter()
            .find(|r| r.stage == stage && r.role == role)
    }

    pub(crate) fn nodes_of(&self, element: usize) -> [Node; 3] {
        self.netlist
            .elements
            .get(element)
            .map(|e| e.nodes)
            .unwrap_or([0; 3])
    }

    pub(crate) fn labelled_resistor(&self, r: &PlacedResistor) -> Labelled {
        let p = &r.part;
        // An element of a matched network is labelled with its package
        // and element (`RN1.2`: package 1, element 2) and its ratio
        // figures.
        let (label, matched) = match &p.network {
            None => (
                format!("{} {}", r.designator, format_ohms(p.ohms)),
                String::new(),
            ),
            Some(n) => (
                format!(
                    "{} {} RN{}.{}",
                    r.designator,
                    format_ohms(p.ohms),
                    n.package,
                    n.element
                ),
                format!(
                    ", network package {} element {}, ratio +/-{} %, tracking {} ppm/C",
                    n.package, n.element, n.ratio_tolerance_pct, n.tracking_tcr_ppm_per_c
                ),
            ),
        };
        Labelled {
            designator: r.designator.clone(),
            label,
            hover: format!(
                "{} {} ohm, part {}, +/-{} %, {} ppm/C{matched} (stage {}, {})",
                r.designator,
                format_ohms(p.ohms),
                p.part_id,
                p.tolerance_pct,
                p.tcr_ppm_per_c,
                r.stage + 1,
                r.role
            ),
        }
    }

    pub(crate) fn part_id(&self, sec: &Section) -> String {
        self.built
            .packages
            .iter()
            .find(|p| p.designator == sec.package)
            .map(|p| p.part_id.clone())
            .unwrap_or_default()
    }

    pub(crate) fn labelled_section(&self, sec: &Section) -> Labelled {
        let id = self.part_id(sec);
        let what = match sec.kind {
            AmplifierKind::OpAmp(_) => "op-amp",
            AmplifierKind::InAmp(_) => "in-amp",
        };
        Labelled {
            designator: sec.designator.clone(),
            label: id.clone(),
            hover: format!("{} {what} {id}, package {}", sec.designator, sec.package),
        }
    }

    pub(crate) fn section_driving(&self, node: Node) -> Option<&'a Section> {
        self.built.sections.iter().find(|s| s.out == node)
    }

    /// The follower section whose + input is `tap`.
    pub(crate) fn follower_on(&self, tap: Node) -> Option<&'a Section> {
        self.built
            .sections
            .iter()
            .find(|s| s.plus == tap && s.minus == s.out)
    }
}

/// A divider network to draw in the lower row.
struct Network<'a> {
    heading: String,
    top: &'a PlacedResistor,
    bottom: &'a PlacedResistor,
}

/// Draw an offset/bias anchor: ground, or a node label.
pub(crate) fn anchor(
    canvas: &mut Canvas,
    sheet: &Sheet<'_>,
    x: f64,
    y: f64,
    node: Node,
    side: Side,
) {
    if node == 0 {
        match side {
            Side::Below => canvas.ground(x, y),
            _ => {
                canvas.wire(&[(x, y), (x + 16.0, y)]);
                canvas.ground(x + 16.0, y);
            }
        }
    } else {
        canvas.tag(x, y, sheet.node(node), side);
    }
}

/// The far end of a stage input: a wire from the left edge, or ground.
pub(crate) fn input_from(canvas: &mut Canvas, x0: f64, y: f64, node: Node) {
    if node == 0 {
        canvas.ground(x0, y);
    }
}

/// Where a stage drawing ends: its output point on the signal line.
pub(crate) struct StageOutline {
    /// The output point.
    pub(crate) out: (f64, f64),
}

fn collect_networks<'a>(sheet: &Sheet<'a>, stage: usize, nets: &mut Vec<Network<'a>>) {
    for (top, bottom, name) in [
        (Role::OffsetTop, Role::OffsetBottom, "offset"),
        (Role::BiasTop, Role::BiasBottom, "bias"),
    ] {
        if let (Some(top), Some(bottom)) =
            (sheet.resistor(stage, top), sheet.resistor(stage, bottom))
        {
            nets.push(Network {
                heading: format!("stage {} {name} divider", stage + 1),
                top,
                bottom,
            });
        }
    }
}

fn draw_sensor(canvas: &mut Canvas, sheet: &Sheet<'_>) -> f64 {
    let sx = 110.0;
    let n = sheet.netlist;
    let value = |e: usize| match n.elements.get(e).map(|e| e.kind) {
        Some(ElementKind::VoltageSource { volts }) => volts,
        Some(ElementKind::Resistor { ohms }) => ohms,
        _ => 0.0,
    };
    let vsense = Labelled {
        designator: "VSENSE".into(),
        label: "VSENSE".into(),
        hover: "VSENSE: the sensor signal (swept over the span in the SPICE deck)".into(),
    };
    let sensor_lines = vec![
        "sensor".to_string(),
        format_quantity(value(sheet.built.vsense), "V"),
    ];
    let by_name = |name: &str| {
        sheet
            .built
            .source_resistors
            .iter()
            .copied()
            .find(|&e| n.elements.get(e).map(|x| x.name.as_str()) == Some(name))
    };
    let rs_label = |e: usize| {
        let name = n
            .elements
            .get(e)
            .map(|x| x.name.clone())
            .unwrap_or_default();
        Labelled {
            designator: name.clone(),
            label: format!("{name} {}", format_ohms(value(e))),
            hover: format!("{name}: the sensor's own resistance (not a part)"),
        }
    };
    let x_end = sx + 120.0;
    match sheet.built.vcm {
        Some(vcm) => {
            canvas.source(sx, Y0, Y0 + DY, &vsense, &sensor_lines, Side::Left);
            let l = Labelled {
                designator: "VCM".into(),
                label: "VCM".into(),
                hover: "VCM: the sensor's common-mode voltage".into(),
            };
            canvas.source(
                sx,
                Y0 + DY,
                Y0 + DY + 70.0,
                &l,
                &[format_quantity(value(vcm), "V")],
                Side::Left,
            );
            canvas.ground(sx, Y0 + DY + 70.0);
            canvas.dot(sx, Y0 + DY);
            for (y, name, rname) in [(Y0, "inp", "RSENSE_P"), (Y0 + DY, "inn", "RSENSE_N")] {
                canvas.node_note(sx + 4.0, y - 6.0, name);
                match by_name(rname) {
                    Some(e) => canvas.resistor_h(sx, sx + 100.0, y, &rs_label(e), Side::Below),
                    None => canvas.wire(&[(sx, y), (sx + 100.0, y)]),
                }
                canvas.wire(&[(sx + 100.0, y), (x_end, y)]);
            }
        }
        None => {
            canvas.source(sx, Y0, Y0 + 70.0, &vsense, &sensor_lines, Side::Left);
            canvas.ground(sx, Y0 + 70.0);
            canvas.node_note(sx + 4.0, Y0 - 6.0, "inp");
            match by_name("RSENSE") {
                Some(e) => canvas.resistor_h(sx, sx + 100.0, Y0, &rs_label(e), Side::Below),
                None => canvas.wire(&[(sx, Y0), (sx + 100.0, Y0)]),
            }
            canvas.wire(&[(sx + 100.0, Y0), (x_end, Y0)]);
        }
    }
    x_end
}

/// Draw a divider (and its follower) at `bx` in the lower row; returns
/// its right edge.
fn draw_network(
    canvas: &mut Canvas,
    sheet: &Sheet<'_>,
    net: &Network<'_>,
    bx: f64,
    ny: f64,
) -> f64 {
    let nx = bx + 80.0;
    canvas.text(bx, ny - 36.0, "start", "sub", &net.heading);
    let [src, tap, _] = sheet.nodes_of(net.top.element);
    anchor(canvas, sheet, nx, ny, src, Side::Above);
    canvas.resistor_v(
        nx,
        ny,
        ny + 70.0,
        &sheet.labelled_resistor(net.top),
        Side::Left,
    );
    canvas.dot(nx, ny + 70.0);
    canvas.resistor_v(
        nx,
        ny + 70.0,
        ny + 140.0,
        &sheet.labelled_resistor(net.bottom),
        Side::Left,
    );
    canvas.ground(nx, ny + 140.0);
    match sheet.follower_on(tap) {
        Some(f) => {
            let ox = nx + 40.0;
            canvas.wire(&[(nx, ny + 70.0), (ox, ny + 70.0)]);
            canvas.opamp(ox, ny + 85.0, true, &sheet.labelled_section(f), Side::Above);
            canvas.wire(&[
                (ox, ny + 100.0),
                (ox - 12.0, ny + 100.0),
                (ox - 12.0, ny + 125.0),
                (ox + 75.0, ny + 125.0),
                (ox + 75.0, ny + 85.0),
            ]);
            canvas.dot(ox + 75.0, ny + 85.0);
            canvas.wire(&[(ox + 60.0, ny + 85.0), (ox + 95.0, ny + 85.0)]);
            canvas.tag(ox + 95.0, ny + 85.0, sheet.node(f.out), Side::Right);
            ox + 95.0 + 70.0
        }
        None => {
            canvas.wire(&[(nx, ny + 70.0), (nx + 40.0, ny + 70.0)]);
            canvas.tag(nx + 40.0, ny + 70.0, sheet.node(tap), Side::Right);
            nx + 40.0 + 70.0
        }
    }
}

/// Draw one voltage source (reference or supply) at `bx`; returns its
/// right edge.
fn draw_source(canvas: &mut Canvas, sheet: &Sheet<'_>, index: usize, bx: f64, ny: f64) -> f64 {
    let Some(src) = sheet.built.sources.get(index) else {
        return bx;
    };
    let volts = match sheet.netlist.elements.get(src.element).map(|e| e.kind) {
        Some(ElementKind::VoltageSource { volts }) => volts,
        _ => 0.0,
    };
    let (label, hover, lines) = match &src.source {
        crate::design::Source::Reference(id) => (
            src.designator.clone(),
            format!("{} voltage reference {id}", src.designator),
            vec![id.clone(), format_quantity(volts, "V")],
        ),
        crate::design::Source::Supply => (
            src.designator.clone(),
            format!(
                "{}: the positive supply rail used as a source",
                src.designator
            ),
            vec!["supply".to_string(), format_quantity(volts, "V")],
        ),
    };
    let sx = bx + 20.0;
    anchor(canvas, sheet, sx, ny, src.node, Side::Above);
    let l = Labelled {
        designator: src.designator.clone(),
        label,
        hover,
    };
    canvas.source(sx, ny, ny + 70.0, &l, &lines, Side::Right);
    canvas.ground(sx, ny + 70.0);
    let widest = lines
        .iter()
        .map(|s| s.chars().count())
        .max()
        .unwrap_or(4)
        .max(src.designator.chars().count());
    sx + 30.0 + 6.5 * widest as f64 + 30.0
}

/// The schematic of a built design as a standalone SVG document. `title`
/// is shown at the top (escaped). Every resistor, amplifier section and
/// source of the netlist appears with its designator and value.
pub fn svg(built: &Built, design: &Design, title: &str) -> String {
    let sheet = Sheet {
        built,
        netlist: &built.netlist,
    };
    let mut canvas = Canvas::new();
    let mut x = draw_sensor(&mut canvas, &sheet);
    let mut nets = Vec::new();
    let mut prev: Option<(f64, f64)> = None;
    let last = design.stages.len().saturating_sub(1);
    for (i, stage) in design.stages.iter().enumerate() {
        if let Some((px, py)) = prev {
            let mx = px + GAP / 2.0;
            canvas.wire(&[(px, py), (mx, py), (mx, Y0), (x, Y0)]);
            if let Some(&node) = built.stage_outputs.get(i - 1) {
                canvas.node_note(px + 2.0, py - 6.0, sheet.node(node));
            }
        }
        let out = built.stage_outputs.get(i).copied().unwrap_or(built.out);
        canvas.text(
            x + 10.0,
            40.0,
            "start",
            "stage",
            &format!("stage {}: {}", i + 1, stage.shape.name()),
        );
        let outline = stage.shape.behaviour().draw(&mut canvas, &sheet, i, x, out);
        draw_feedback_capacitors(&mut canvas, &sheet, i);
        collect_networks(&sheet, i, &mut nets);
        let mut end = outline.out;
        if i == last {
            if let Some(f) = &built.filter {
                // The filter at the ADC input: series resistor, then the
                // capacitor to ground at the ADC pin.
                let (ox, oy) = outline.out;
                let series = Labelled {
                    designator: f.series_ref.clone(),
                    label: format!("{} {}", f.series_ref, format_ohms(f.series.ohms)),
                    hover: format!(
                        "{}: filter series resistor {}",
                        f.series_ref, f.series.part_id
                    ),
                };
                canvas.resistor_h(ox, ox + 70.0, oy, &series, Side::Above);
                let shunt = Labelled {
                    designator: f.shunt_ref.clone(),
                    label: format!("{} {}", f.shunt_ref, format_quantity(f.shunt.value.0, "F")),
                    hover: format!(
                        "{}: filter capacitor {} ({})",
                        f.shunt_ref, f.shunt.part_id, f.shunt.dielectric
                    ),
                };
                canvas.dot(ox + 90.0, oy);
                canvas.wire(&[(ox + 70.0, oy), (ox + 90.0, oy)]);
                canvas.capacitor_v(ox + 90.0, oy, oy + 40.0, &shunt);
                canvas.ground(ox + 90.0, oy + 40.0);
                canvas.wire(&[(ox + 90.0, oy), (ox + 110.0, oy)]);
                end = (ox + 110.0, oy);
            }
            canvas.tag(end.0, end.1, sheet.node(built.out), Side::Right);
        }
        prev = Some(end);
        x = end.0 + GAP;
    }
    // The row of networks and sources.
    let mut bx = 20.0;
    let ny = canvas.max_y + NET_ROW_GAP;
    if !nets.is_empty() || !built.sources.is_empty() {
        canvas.text(20.0, ny - 60.0, "start", "stage", "offset and bias sources");
    }
    for net in &nets {
        bx = draw_network(&mut canvas, &sheet, net, bx, ny) + 30.0;
    }
    for k in 0..built.sources.len() {
        bx = draw_source(&mut canvas, &sheet, k, bx, ny) + 20.0;
    }
    list_undrawn(&mut canvas, &sheet);
    document(&canvas, title)
}

/// Anything a template did not place (a role it does not know) is still
/// listed, so no part goes missing from the drawing; then the footnote.
/// The capacitors across stage `index`'s feedback resistor, drawn beside
/// it: a line parallel to `rf`, part of the way towards the signal line,
/// joining the two wires that already run from `rf`'s ends (its ends are
/// the op-amp's - input and output, each wired towards the amplifier by
/// every shape's drawing), with the plates at the middle.
fn draw_feedback_capacitors(canvas: &mut Canvas, sheet: &Sheet<'_>, index: usize) {
    for c in sheet
        .built
        .feedback_capacitors
        .iter()
        .filter(|c| c.stage == index)
    {
        let Some(rf) = sheet.built.resistors.iter().find(|r| r.element == c.across) else {
            continue;
        };
        let Some(&(x1, x2, y)) = canvas.horizontal.get(&rf.designator) else {
            continue;
        };
        let yc = y + (Y0 - y) * 0.45;
        let label = Labelled {
            designator: c.designator.clone(),
            label: format!("{} {}", c.designator, format_quantity(c.part.value.0, "F")),
            hover: format!(
                "{}: feedback capacitor across {}, {} ({})",
                c.designator, rf.designator, c.part.part_id, c.part.dielectric
            ),
        };
        let (left, right) = (x1.min(x2), x1.max(x2));
        canvas.dot(left, yc);
        canvas.dot(right, yc);
        canvas.capacitor_h(left, right, yc, &label);
    }
}

fn list_undrawn(canvas: &mut Canvas, sheet: &Sheet<'_>) {
    let built = sheet.built;
    let mut missing: Vec<String> = Vec::new();
    for r in &built.resistors {
        if !canvas.drawn.contains(&r.designator) {
            missing.push(format!(
                "{} {} ({})",
                r.designator,
                format_ohms(r.part.ohms),
                r.role
            ));
        }
    }
    for c in &built.feedback_capacitors {
        if !canvas.drawn.contains(&c.designator) {
            missing.push(format!(
                "{} {} (feedback)",
                c.designator,
                format_quantity(c.part.value.0, "F")
            ));
        }
    }
    for s in &built.sections {
        if !canvas.drawn.contains(&s.designator) {
            missing.push(format!("{} {}", s.designator, sheet.part_id(s)));
        }
    }
    let mut y = canvas.max_y + 30.0;
    if !missing.is_empty() {
        canvas.text(20.0, y, "start", "lbl", "also in the netlist:");
        for m in &missing {
            y += 14.0;
            canvas.text(30.0, y, "start", "lbl", m);
        }
        y += 10.0;
    }
    canvas.text(
        20.0,
        y + 14.0,
        "start",
        "sub",
        "Drawn by spanfit from the design's netlist. Error sources (VOS_, IBP_, IBN_) are in the SPICE export, not drawn.",
    );
}

/// The SVG document around a drawn canvas.
fn document(canvas: &Canvas, title: &str) -> String {
    let width = (canvas.max_x + 30.0).ceil();
    let height = (canvas.max_y + 20.0).ceil();
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {w} {h}\" width=\"{w}\" height=\"{h}\" role=\"img\" aria-label=\"{t}\">",
        w = num(width),
        h = num(height),
        t = xml_escape(title)
    );
    let _ = writeln!(s, "<title>{}</title>", xml_escape(title));
    s.push_str(STYLE);
    let _ = writeln!(
        s,
        "<rect class=\"bg\" x=\"0\" y=\"0\" width=\"{}\" height=\"{}\"/>",
        num(width),
        num(height)
    );
    let _ = writeln!(
        s,
        "<text x=\"20\" y=\"22\" class=\"title\">{}</text>",
        xml_escape(title)
    );
    s.push_str(&canvas.body);
    s.push_str("</svg>\n");
    s
}

const STYLE: &str = "<style>\n\
.bg{fill:#fcfbf7}\n\
.w{fill:none;stroke:#33414d;stroke-width:1.4;stroke-linejoin:round}\n\
.g{stroke:#33414d;stroke-width:1.4}\n\
.j{fill:#33414d}\n\
.r{fill:#f3efe2;stroke:#7a4f12;stroke-width:1.4}\n\
.amp{fill:#eaf2ee;stroke:#1f5f4a;stroke-width:1.6;stroke-linejoin:round}\n\
.src{fill:#f6ecf1;stroke:#7b2d55;stroke-width:1.4}\n\
.tag{fill:#eef0fa;stroke:#4b5aa8;stroke-width:1}\n\
text{font-family:Helvetica,Arial,sans-serif;fill:#1e262d}\n\
.title{font-size:15px;font-weight:bold}\n\
.stage{font-size:12px;font-weight:bold;fill:#55606a}\n\
.lbl{font-size:11px}\n\
.sub{font-size:10px;fill:#55606a}\n\
.des{font-size:10px;font-weight:bold}\n\
.pin{font-size:10px;fill:#55606a}\n\
.node{font-size:10px;font-family:monospace;fill:#34407f}\n\
</style>\n";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ohms_use_engineering_suffixes() {
        // Three significant digits and an SI suffix, as resistor values
        // are written on schematics and BOMs (common practice).
        let cases = [
            (432.0, "432"),
            (20_000.0, "20.0k"),
            (1e6, "1.00M"),
            (49_900.0, "49.9k"),
            (4.99, "4.99"),
            (10.0, "10.0"),
            (1.0, "1.00"),
            (100.0, "100"),
            (0.5, "500m"),
            (1e9, "1.00G"),
            (0.0, "0"),
            (999.96, "999.96"),
            (12_345.0, "12.345k"),
            (-1500.0, "-1.50k"),
            (f64::NAN, "?"),
        ];
        for (v, want) in cases {
            assert_eq!(format_ohms(v), want, "{v}");
        }
        // Rounding that crosses a decade moves the prefix.
        assert_eq!(format_ohms(999_999_999.9), "1.00G");
    }

    #[test]
    fn quantities_carry_their_unit() {
        assert_eq!(format_quantity(1.25, "V"), "1.25 V");
        assert_eq!(format_quantity(0.025, "V"), "25.0 mV");
        assert_eq!(format_quantity(5.0, "V"), "5.00 V");
        assert_eq!(format_quantity(0.0, "V"), "0 V");
        assert_eq!(format_quantity(1e-7, "A"), "100 nA");
    }

    #[test]
    fn escaping_covers_markup_and_bad_characters() {
        assert_eq!(
            xml_escape("<script>alert('x')</script> & \"q\""),
            "&lt;script&gt;alert(&apos;x&apos;)&lt;/script&gt; &amp; &quot;q&quot;"
        );
        assert_eq!(xml_escape("a\u{1}b"), "a\u{fffd}b");
        assert_eq!(xml_escape("plain-ID_1"), "plain-ID_1");
    }

    /// The demo design, drawn: every designator appears, hostile title is
    /// escaped, the document is standalone SVG.
    #[test]
    fn every_part_appears_in_the_drawing() {
        let need = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let design_json = r#"{"stages": [
            {"shape": "instrumentation-integrated", "amplifier": "IA-3",
             "resistors": {"rg": "HR-F01-432R"},
             "offset": {"kind": "divider", "source": "VR-125", "top": "HR-F1-20K0",
                        "bottom": "HR-F1-1K00", "buffered": true},
             "buffer": "OA-RR1"},
            {"shape": "non-inverting", "amplifier": "OA-RR2",
             "resistors": {"rf": "HR-F1-10K0", "rg": "HR-F1-10K0"},
             "offset": {"kind": "divider", "source": "VR-125", "top": "HR-F1-20K0",
                        "bottom": "HR-F1-20K0", "buffered": false}},
            {"shape": "inverting", "amplifier": "OA-RR2",
             "resistors": {"ri": "HR-F1-10K0", "rf": "HR-F1-10K0", "ro": "HR-F1-20K0"},
             "offset": {"kind": "direct", "source": "supply"},
             "bias": {"kind": "divider", "source": "supply", "top": "HR-F1-10K0",
                      "bottom": "HR-F1-10K0", "buffered": true}}
        ]}"#;
        let design = crate::design::parse_design(design_json.as_bytes(), "d.json", &stock).unwrap();
        let unfiltered = crate::topology::build(&need, &stock, &design).unwrap();
        let (built, _) = crate::filter::attach(&need, &stock, &unfiltered);
        let filter = built
            .filter
            .as_ref()
            .expect("the demo stock gives a filter");
        let doc = svg(&built, &design, "<b>demo</b> & \"co\"");
        for reference in [&filter.series_ref, &filter.shunt_ref] {
            assert!(
                doc.contains(&format!("data-ref=\"{reference}\"")),
                "{reference}"
            );
        }
        assert!(doc.starts_with("<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 "));
        assert!(doc.trim_end().ends_with("</svg>"));
        assert!(!doc.contains("<b>demo"));
        assert!(doc.contains("&lt;b&gt;demo&lt;/b&gt; &amp; &quot;co&quot;"));
        for r in &built.resistors {
            let label = format!("{} {}", r.designator, format_ohms(r.part.ohms));
            assert!(doc.contains(&format!(">{label}</text>")), "{label} missing");
            assert!(doc.contains(&format!("data-ref=\"{}\"", r.designator)));
        }
        for s in &built.sections {
            assert!(
                doc.contains(&format!(">{}</text>", s.designator)),
                "{} missing",
                s.designator
            );
        }
        for src in &built.sources {
            assert!(
                doc.contains(&format!(">{}</text>", src.designator)),
                "{} missing",
                src.designator
            );
        }
        for node in ["inp", "inn", "out"] {
            assert!(
                doc.contains(&format!(">{node}</text>")),
                "node {node} missing"
            );
        }
        // Nothing fell through to the fallback list.
        assert!(!doc.contains("also in the netlist"));
        // Balanced groups: every part group is closed.
        assert_eq!(doc.matches("<g ").count(), doc.matches("</g>").count());
    }

    #[test]
    fn every_shape_draws_all_its_parts() {
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let single = crate::demo::NEED_TOML
            .replace("output = \"differential\"", "output = \"single-ended\"")
            .replace("common_mode_v = 2.5\n", "");
        let single = crate::need::parse_need(single.as_bytes(), "s.toml").unwrap();
        let diff = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "d.toml").unwrap();
        let r = "\"HR-F1-10K0\"";
        let designs = [
            (
                &single,
                format!(
                    r#"{{"shape":"non-inverting-summed","amplifier":"OA-RR1","resistors":{{"ri":{r},"ro":{r},"rp":{r},"rf":{r},"rg":{r}}},"offset":{{"kind":"direct","source":"VR-125"}}}}"#
                ),
            ),
            (
                &diff,
                format!(
                    r#"{{"shape":"difference","amplifier":"OA-RR1","resistors":{{"r1":{r},"r2":{r},"r3":{r},"r4":{r}}},"offset":{{"kind":"divider","source":"VR-250","top":{r},"bottom":{r},"buffered":false}}}}"#
                ),
            ),
            (
                &diff,
                format!(
                    r#"{{"shape":"instrumentation-discrete","amplifier":"OA-GP4","resistors":{{"rf1":{r},"rf2":{r},"rg":{r},"r1":{r},"r2":{r},"r3":{r},"r4":{r}}},"offset":{{"kind":"divider","source":"VR-250","top":{r},"bottom":{r},"buffered":true}}}}"#
                ),
            ),
        ];
        for (need, stage) in designs {
            let json = format!("{{\"stages\":[{stage}]}}");
            let design = crate::design::parse_design(json.as_bytes(), "d.json", &stock).unwrap();
            let built = crate::topology::build(need, &stock, &design).unwrap();
            let doc = svg(&built, &design, "t");
            for p in &built.resistors {
                assert!(
                    doc.contains(&format!(">{} 10.0k</text>", p.designator)),
                    "{} in {stage}",
                    p.designator
                );
            }
            for s in &built.sections {
                assert!(
                    doc.contains(&format!(">{}</text>", s.designator)),
                    "{} in {stage}",
                    s.designator
                );
            }
            assert!(!doc.contains("also in the netlist"), "{stage}");
        }
    }
}
