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

use crate::design::{Design, Shape};
use crate::netlist::{ElementKind, Netlist, Node};
use crate::topology::{AmplifierKind, Built, PlacedResistor, Section};
use std::collections::BTreeSet;
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
// Drawing primitives.

/// The signal line of every stage.
const Y0: f64 = 180.0;
/// Offset of the second (inverting) input of a differential stage.
const DY: f64 = 80.0;
/// Space between stages.
const GAP: f64 = 40.0;
/// Space between the lowest stage drawing and the row of networks.
const NET_ROW_GAP: f64 = 100.0;

#[derive(Clone, Copy, PartialEq)]
enum Side {
    Left,
    Right,
    Above,
    Below,
}

struct Canvas {
    body: String,
    max_x: f64,
    max_y: f64,
    drawn: BTreeSet<String>,
}

fn num(v: f64) -> String {
    let r = (v * 10.0).round() / 10.0;
    if r == r.trunc() {
        format!("{}", r as i64)
    } else {
        format!("{r:.1}")
    }
}

impl Canvas {
    fn new() -> Self {
        Canvas {
            body: String::new(),
            max_x: 0.0,
            max_y: 0.0,
            drawn: BTreeSet::new(),
        }
    }

    fn extend(&mut self, x: f64, y: f64) {
        self.max_x = self.max_x.max(x);
        self.max_y = self.max_y.max(y);
    }

    fn wire(&mut self, pts: &[(f64, f64)]) {
        let p: Vec<String> = pts
            .iter()
            .map(|(x, y)| format!("{},{}", num(*x), num(*y)))
            .collect();
        for &(x, y) in pts {
            self.extend(x, y);
        }
        let _ = writeln!(
            self.body,
            "<polyline class=\"w\" points=\"{}\"/>",
            p.join(" ")
        );
    }

    fn dot(&mut self, x: f64, y: f64) {
        let _ = writeln!(
            self.body,
            "<circle class=\"j\" cx=\"{}\" cy=\"{}\" r=\"2.6\"/>",
            num(x),
            num(y)
        );
    }

    /// Text; `anchor` is `start`, `middle` or `end`.
    fn text(&mut self, x: f64, y: f64, anchor: &str, class: &str, s: &str) {
        let width = 6.3 * s.chars().count() as f64;
        let right = match anchor {
            "start" => x + width,
            "middle" => x + width / 2.0,
            _ => x,
        };
        self.extend(right, y + 4.0);
        let _ = writeln!(
            self.body,
            "<text x=\"{}\" y=\"{}\" text-anchor=\"{anchor}\" class=\"{class}\">{}</text>",
            num(x),
            num(y),
            xml_escape(s)
        );
    }

    fn open_part(&mut self, designator: &str, hover: &str) {
        self.drawn.insert(designator.to_string());
        let _ = writeln!(
            self.body,
            "<g class=\"part\" data-ref=\"{}\"><title>{}</title>",
            xml_escape(designator),
            xml_escape(hover)
        );
    }

    fn close_part(&mut self) {
        self.body.push_str("</g>\n");
    }

    fn ground(&mut self, x: f64, y: f64) {
        self.wire(&[(x, y), (x, y + 8.0)]);
        for (i, half) in [10.0, 6.0, 2.0].iter().enumerate() {
            let yy = y + 8.0 + 4.0 * i as f64;
            let _ = writeln!(
                self.body,
                "<line class=\"g\" x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"/>",
                num(x - half),
                num(yy),
                num(x + half),
                num(yy)
            );
        }
        self.extend(x + 10.0, y + 18.0);
    }

    /// A node label: a tag with the netlist node name at the end of a
    /// short stub from `(x, y)` towards `side`.
    fn tag(&mut self, x: f64, y: f64, name: &str, side: Side) {
        let w = 6.0 * name.chars().count() as f64 + 10.0;
        let (sx, sy) = match side {
            Side::Below => (x, y + 10.0),
            Side::Above => (x, y - 10.0),
            Side::Right => (x + 10.0, y),
            Side::Left => (x - 10.0, y),
        };
        self.wire(&[(x, y), (sx, sy)]);
        let (rx, ry) = match side {
            Side::Below => (sx - w / 2.0, sy),
            Side::Above => (sx - w / 2.0, sy - 14.0),
            Side::Right => (sx, sy - 7.0),
            Side::Left => (sx - w, sy - 7.0),
        };
        let _ = writeln!(
            self.body,
            "<rect class=\"tag\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"14\" rx=\"7\"/>",
            num(rx),
            num(ry),
            num(w)
        );
        self.extend(rx + w, ry + 14.0);
        self.text(rx + w / 2.0, ry + 10.5, "middle", "node", name);
    }

    /// A small node name written beside a wire.
    fn node_note(&mut self, x: f64, y: f64, name: &str) {
        self.text(x, y, "start", "node", name);
    }

    /// A horizontal resistor between `x1` and `x2` on `y`.
    fn resistor_h(&mut self, x1: f64, x2: f64, y: f64, r: &Labelled, side: Side) {
        self.open_part(&r.designator, &r.hover);
        let cx = (x1 + x2) / 2.0;
        self.wire(&[(x1, y), (cx - 18.0, y)]);
        self.wire(&[(cx + 18.0, y), (x2, y)]);
        let _ = writeln!(
            self.body,
            "<rect class=\"r\" x=\"{}\" y=\"{}\" width=\"36\" height=\"12\"/>",
            num(cx - 18.0),
            num(y - 6.0)
        );
        let ty = if side == Side::Below {
            y + 20.0
        } else {
            y - 10.0
        };
        self.text(cx, ty, "middle", "lbl", &r.label);
        self.close_part();
    }

    /// A vertical resistor between `y1` and `y2` on `x`.
    fn resistor_v(&mut self, x: f64, y1: f64, y2: f64, r: &Labelled, side: Side) {
        self.open_part(&r.designator, &r.hover);
        let cy = (y1 + y2) / 2.0;
        self.wire(&[(x, y1), (x, cy - 18.0)]);
        self.wire(&[(x, cy + 18.0), (x, y2)]);
        let _ = writeln!(
            self.body,
            "<rect class=\"r\" x=\"{}\" y=\"{}\" width=\"12\" height=\"36\"/>",
            num(x - 6.0),
            num(cy - 18.0)
        );
        if side == Side::Left {
            self.text(x - 12.0, cy + 4.0, "end", "lbl", &r.label);
        } else {
            self.text(x + 12.0, cy + 4.0, "start", "lbl", &r.label);
        }
        self.close_part();
    }

    /// An op-amp pointing right: inputs at `(ox, oy -+ 15)`, output at
    /// `(ox + 60, oy)`. `caption` (the part id) goes above or below.
    fn opamp(&mut self, ox: f64, oy: f64, plus_top: bool, a: &Labelled, caption_side: Side) {
        self.open_part(&a.designator, &a.hover);
        let _ = writeln!(
            self.body,
            "<polygon class=\"amp\" points=\"{},{} {},{} {},{}\"/>",
            num(ox),
            num(oy - 30.0),
            num(ox),
            num(oy + 30.0),
            num(ox + 60.0),
            num(oy)
        );
        self.extend(ox + 60.0, oy + 30.0);
        let (top, bottom) = if plus_top {
            ("+", "\u{2212}")
        } else {
            ("\u{2212}", "+")
        };
        self.text(ox + 4.0, oy - 11.0, "start", "pin", top);
        self.text(ox + 4.0, oy + 19.0, "start", "pin", bottom);
        self.text(ox + 15.0, oy + 4.0, "start", "des", &a.designator);
        let cy = if caption_side == Side::Below {
            oy + 44.0
        } else {
            oy - 36.0
        };
        self.text(ox + 4.0, cy, "start", "lbl", &a.label);
        self.close_part();
    }

    /// A DC source standing between `y1` (+) and `y2` (-) on `x`.
    fn source(&mut self, x: f64, y1: f64, y2: f64, s: &Labelled, lines: &[String], side: Side) {
        self.open_part(&s.designator, &s.hover);
        let cy = (y1 + y2) / 2.0;
        self.wire(&[(x, y1), (x, cy - 14.0)]);
        self.wire(&[(x, cy + 14.0), (x, y2)]);
        let _ = writeln!(
            self.body,
            "<circle class=\"src\" cx=\"{}\" cy=\"{}\" r=\"14\"/>",
            num(x),
            num(cy)
        );
        self.text(x, cy - 2.0, "middle", "pin", "+");
        self.text(x, cy + 10.0, "middle", "pin", "\u{2212}");
        let (tx, anchor) = if side == Side::Left {
            (x - 20.0, "end")
        } else {
            (x + 20.0, "start")
        };
        let mut all = vec![s.label.clone()];
        all.extend(lines.iter().cloned());
        let top = cy - 6.0 * (all.len() as f64 - 1.0) + 4.0;
        for (i, l) in all.iter().enumerate() {
            let class = if i == 0 { "lbl" } else { "sub" };
            self.text(tx, top + 12.0 * i as f64, anchor, class, l);
        }
        self.close_part();
    }
}

/// A part's visible label and its hover text.
struct Labelled {
    designator: String,
    label: String,
    hover: String,
}

// ---------------------------------------------------------------------
// Reading the built design.

struct Ctx<'a> {
    built: &'a Built,
    n: &'a Netlist,
}

impl<'a> Ctx<'a> {
    fn node(&self, node: Node) -> &'a str {
        self.n
            .node_names
            .get(node)
            .map(String::as_str)
            .unwrap_or("0")
    }

    fn resistor(&self, stage: usize, role: &str) -> Option<&'a PlacedResistor> {
        self.built
            .resistors
            .iter()
            .find(|r| r.stage == stage && r.role == role)
    }

    fn nodes_of(&self, element: usize) -> [Node; 3] {
        self.n
            .elements
            .get(element)
            .map(|e| e.nodes)
            .unwrap_or([0; 3])
    }

    fn labelled_resistor(&self, r: &PlacedResistor) -> Labelled {
        let p = &r.part;
        Labelled {
            designator: r.designator.clone(),
            label: format!("{} {}", r.designator, format_ohms(p.ohms)),
            hover: format!(
                "{} {} ohm, part {}, +/-{} %, {} ppm/C (stage {}, {})",
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

    fn part_id(&self, sec: &Section) -> String {
        self.built
            .packages
            .iter()
            .find(|p| p.designator == sec.package)
            .map(|p| p.part_id.clone())
            .unwrap_or_default()
    }

    fn labelled_section(&self, sec: &Section) -> Labelled {
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

    fn section_driving(&self, node: Node) -> Option<&'a Section> {
        self.built.sections.iter().find(|s| s.out == node)
    }

    /// The follower section whose + input is `tap`.
    fn follower_on(&self, tap: Node) -> Option<&'a Section> {
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
fn anchor(c: &mut Canvas, ctx: &Ctx<'_>, x: f64, y: f64, node: Node, side: Side) {
    if node == 0 {
        match side {
            Side::Below => c.ground(x, y),
            _ => {
                c.wire(&[(x, y), (x + 16.0, y)]);
                c.ground(x + 16.0, y);
            }
        }
    } else {
        c.tag(x, y, ctx.node(node), side);
    }
}

/// The far end of a stage input: a wire from the left edge, or ground.
fn input_from(c: &mut Canvas, x0: f64, y: f64, node: Node) {
    if node == 0 {
        c.ground(x0, y);
    }
}

struct StageGeom {
    out: (f64, f64),
}

fn collect_networks<'a>(ctx: &Ctx<'a>, stage: usize, nets: &mut Vec<Network<'a>>) {
    for (what, name) in [("o", "offset"), ("b", "bias")] {
        if let (Some(top), Some(bottom)) = (
            ctx.resistor(stage, &format!("{what}.top")),
            ctx.resistor(stage, &format!("{what}.bottom")),
        ) {
            nets.push(Network {
                heading: format!("stage {} {name} divider", stage + 1),
                top,
                bottom,
            });
        }
    }
}

fn draw_non_inverting(c: &mut Canvas, ctx: &Ctx<'_>, i: usize, x0: f64, out: Node) -> StageGeom {
    let ox = x0 + 70.0;
    let rf = ctx.resistor(i, "rf");
    let rg = ctx.resistor(i, "rg");
    c.wire(&[
        (x0, Y0),
        (x0 + 20.0, Y0),
        (x0 + 20.0, Y0 - 15.0),
        (ox, Y0 - 15.0),
    ]);
    if let Some(sec) = ctx.section_driving(out) {
        c.opamp(ox, Y0, true, &ctx.labelled_section(sec), Side::Above);
    }
    let j = (ox - 20.0, Y0 + 70.0);
    c.wire(&[(ox, Y0 + 15.0), (ox - 20.0, Y0 + 15.0), j]);
    c.dot(j.0, j.1);
    if let Some(rf) = rf {
        c.resistor_h(j.0, ox + 80.0, j.1, &ctx.labelled_resistor(rf), Side::Above);
    }
    c.wire(&[(ox + 80.0, j.1), (ox + 80.0, Y0)]);
    c.dot(ox + 80.0, Y0);
    c.wire(&[(ox + 60.0, Y0), (ox + 100.0, Y0)]);
    if let Some(rg) = rg {
        c.resistor_v(
            j.0,
            j.1,
            Y0 + 150.0,
            &ctx.labelled_resistor(rg),
            Side::Right,
        );
        let far = ctx.nodes_of(rg.element)[1];
        anchor(c, ctx, j.0, Y0 + 150.0, far, Side::Below);
    }
    StageGeom {
        out: (ox + 100.0, Y0),
    }
}

fn draw_non_inverting_summed(
    c: &mut Canvas,
    ctx: &Ctx<'_>,
    i: usize,
    x0: f64,
    out: Node,
) -> StageGeom {
    let ox = x0 + 150.0;
    let p = (x0 + 90.0, Y0 - 15.0);
    c.wire(&[(x0, Y0), (x0 + 10.0, Y0), (x0 + 10.0, Y0 - 15.0)]);
    if let Some(ri) = ctx.resistor(i, "ri") {
        c.resistor_h(x0 + 10.0, p.0, p.1, &ctx.labelled_resistor(ri), Side::Below);
    }
    c.dot(p.0, p.1);
    c.wire(&[p, (ox, p.1)]);
    if let Some(ro) = ctx.resistor(i, "ro") {
        c.resistor_v(p.0, p.1, Y0 - 95.0, &ctx.labelled_resistor(ro), Side::Right);
        let far = ctx.nodes_of(ro.element)[0];
        anchor(c, ctx, p.0, Y0 - 95.0, far, Side::Above);
    }
    if let Some(rp) = ctx.resistor(i, "rp") {
        c.resistor_v(p.0, p.1, Y0 + 65.0, &ctx.labelled_resistor(rp), Side::Left);
        c.ground(p.0, Y0 + 65.0);
    }
    if let Some(sec) = ctx.section_driving(out) {
        c.opamp(ox, Y0, true, &ctx.labelled_section(sec), Side::Above);
    }
    let j = (ox - 20.0, Y0 + 70.0);
    c.wire(&[(ox, Y0 + 15.0), (ox - 20.0, Y0 + 15.0), j]);
    c.dot(j.0, j.1);
    if let Some(rf) = ctx.resistor(i, "rf") {
        c.resistor_h(j.0, ox + 80.0, j.1, &ctx.labelled_resistor(rf), Side::Above);
    }
    c.wire(&[(ox + 80.0, j.1), (ox + 80.0, Y0)]);
    c.dot(ox + 80.0, Y0);
    c.wire(&[(ox + 60.0, Y0), (ox + 100.0, Y0)]);
    if let Some(rg) = ctx.resistor(i, "rg") {
        c.resistor_v(
            j.0,
            j.1,
            Y0 + 150.0,
            &ctx.labelled_resistor(rg),
            Side::Right,
        );
        let far = ctx.nodes_of(rg.element)[1];
        anchor(c, ctx, j.0, Y0 + 150.0, far, Side::Below);
    }
    StageGeom {
        out: (ox + 100.0, Y0),
    }
}

fn draw_inverting(c: &mut Canvas, ctx: &Ctx<'_>, i: usize, x0: f64, out: Node) -> StageGeom {
    let ox = x0 + 150.0;
    let m = (x0 + 100.0, Y0 - 15.0);
    c.wire(&[(x0, Y0), (x0 + 10.0, Y0), (x0 + 10.0, Y0 - 15.0)]);
    if let Some(ri) = ctx.resistor(i, "ri") {
        c.resistor_h(
            x0 + 10.0,
            m.0 - 10.0,
            m.1,
            &ctx.labelled_resistor(ri),
            Side::Below,
        );
    }
    c.wire(&[(m.0 - 10.0, m.1), (ox, m.1)]);
    c.dot(m.0, m.1);
    c.wire(&[m, (m.0, Y0 - 70.0)]);
    if let Some(rf) = ctx.resistor(i, "rf") {
        c.resistor_h(
            m.0,
            ox + 80.0,
            Y0 - 70.0,
            &ctx.labelled_resistor(rf),
            Side::Above,
        );
    }
    c.wire(&[(ox + 80.0, Y0 - 70.0), (ox + 80.0, Y0)]);
    c.dot(ox + 80.0, Y0);
    let main = ctx.section_driving(out);
    if let Some(sec) = main {
        c.opamp(ox, Y0, false, &ctx.labelled_section(sec), Side::Below);
    }
    c.wire(&[(ox + 60.0, Y0), (ox + 100.0, Y0)]);
    if let Some(ro) = ctx.resistor(i, "ro") {
        c.resistor_v(m.0, m.1, Y0 + 75.0, &ctx.labelled_resistor(ro), Side::Left);
        let far = ctx.nodes_of(ro.element)[0];
        anchor(c, ctx, m.0, Y0 + 75.0, far, Side::Below);
    }
    c.wire(&[
        (ox, Y0 + 15.0),
        (ox - 15.0, Y0 + 15.0),
        (ox - 15.0, Y0 + 50.0),
    ]);
    let bias = main.map(|s| s.plus).unwrap_or(0);
    anchor(c, ctx, ox - 15.0, Y0 + 50.0, bias, Side::Below);
    StageGeom {
        out: (ox + 100.0, Y0),
    }
}

fn draw_difference(c: &mut Canvas, ctx: &Ctx<'_>, i: usize, x0: f64, out: Node) -> StageGeom {
    let ox = x0 + 150.0;
    let q = (x0 + 110.0, Y0);
    if let Some(r3) = ctx.resistor(i, "r3") {
        input_from(c, x0, Y0, ctx.nodes_of(r3.element)[0]);
        c.resistor_h(x0, q.0 - 10.0, Y0, &ctx.labelled_resistor(r3), Side::Above);
    }
    c.wire(&[(q.0 - 10.0, Y0), (ox, Y0)]);
    c.dot(q.0, q.1);
    if let Some(r4) = ctx.resistor(i, "r4") {
        c.resistor_v(q.0, q.1, Y0 - 80.0, &ctx.labelled_resistor(r4), Side::Left);
        let far = ctx.nodes_of(r4.element)[1];
        anchor(c, ctx, q.0, Y0 - 80.0, far, Side::Above);
    }
    if let Some(sec) = ctx.section_driving(out) {
        c.opamp(ox, Y0 + 15.0, true, &ctx.labelled_section(sec), Side::Above);
    }
    let m = (x0 + 120.0, Y0 + DY);
    if let Some(r1) = ctx.resistor(i, "r1") {
        input_from(c, x0, Y0 + DY, ctx.nodes_of(r1.element)[0]);
        c.resistor_h(x0, m.0, m.1, &ctx.labelled_resistor(r1), Side::Above);
    }
    c.dot(m.0, m.1);
    c.wire(&[m, (m.0, Y0 + 30.0), (ox, Y0 + 30.0)]);
    if let Some(r2) = ctx.resistor(i, "r2") {
        c.resistor_h(m.0, ox + 80.0, m.1, &ctx.labelled_resistor(r2), Side::Above);
    }
    c.wire(&[(ox + 80.0, m.1), (ox + 80.0, Y0 + 15.0)]);
    c.dot(ox + 80.0, Y0 + 15.0);
    c.wire(&[(ox + 60.0, Y0 + 15.0), (ox + 100.0, Y0 + 15.0)]);
    StageGeom {
        out: (ox + 100.0, Y0 + 15.0),
    }
}

fn draw_instrumentation_discrete(
    c: &mut Canvas,
    ctx: &Ctx<'_>,
    i: usize,
    x0: f64,
    out: Node,
) -> StageGeom {
    let o1 = x0 + 140.0;
    let yb = Y0 + 200.0;
    let rf1 = ctx.resistor(i, "rf1");
    let rf2 = ctx.resistor(i, "rf2");
    let a1 = rf1.map(|r| ctx.nodes_of(r.element)[0]);
    let a2 = rf2.map(|r| ctx.nodes_of(r.element)[0]);
    // Input amplifiers.
    c.wire(&[(x0, Y0), (o1, Y0)]);
    if let Some(sec) = a1.and_then(|n| ctx.section_driving(n)) {
        c.opamp(o1, Y0 + 15.0, true, &ctx.labelled_section(sec), Side::Above);
        input_from(c, x0, Y0, sec.plus);
    }
    c.wire(&[
        (x0, Y0 + DY),
        (x0 + 20.0, Y0 + DY),
        (x0 + 20.0, yb + 15.0),
        (o1, yb + 15.0),
    ]);
    if let Some(sec) = a2.and_then(|n| ctx.section_driving(n)) {
        c.opamp(o1, yb, false, &ctx.labelled_section(sec), Side::Below);
        input_from(c, x0, Y0 + DY, sec.plus);
    }
    let g1 = (o1 - 20.0, Y0 + 70.0);
    let g2 = (o1 - 20.0, yb - 55.0);
    c.wire(&[(o1, Y0 + 30.0), (g1.0, Y0 + 30.0), g1]);
    c.wire(&[(o1, yb - 15.0), (g2.0, yb - 15.0), g2]);
    c.dot(g1.0, g1.1);
    c.dot(g2.0, g2.1);
    if let Some(rf1) = rf1 {
        c.resistor_h(
            g1.0,
            o1 + 80.0,
            g1.1,
            &ctx.labelled_resistor(rf1),
            Side::Above,
        );
    }
    c.wire(&[(o1 + 80.0, g1.1), (o1 + 80.0, Y0 + 15.0)]);
    if let Some(rf2) = rf2 {
        c.resistor_h(
            g2.0,
            o1 + 80.0,
            g2.1,
            &ctx.labelled_resistor(rf2),
            Side::Above,
        );
    }
    c.wire(&[(o1 + 80.0, g2.1), (o1 + 80.0, yb)]);
    if let Some(rg) = ctx.resistor(i, "rg") {
        c.resistor_v(g1.0, g1.1, g2.1, &ctx.labelled_resistor(rg), Side::Left);
    }
    // Output difference amplifier.
    let o3 = o1 + 240.0;
    let q = (o1 + 200.0, Y0 + 15.0);
    c.wire(&[(o1 + 60.0, Y0 + 15.0), (o1 + 90.0, Y0 + 15.0)]);
    c.dot(o1 + 80.0, Y0 + 15.0);
    if let Some(r3) = ctx.resistor(i, "r3") {
        c.resistor_h(o1 + 90.0, q.0, q.1, &ctx.labelled_resistor(r3), Side::Above);
    }
    c.dot(q.0, q.1);
    c.wire(&[q, (o3, q.1)]);
    if let Some(r4) = ctx.resistor(i, "r4") {
        c.resistor_v(q.0, q.1, Y0 - 65.0, &ctx.labelled_resistor(r4), Side::Left);
        let far = ctx.nodes_of(r4.element)[1];
        anchor(c, ctx, q.0, Y0 - 65.0, far, Side::Above);
    }
    if let Some(sec) = ctx.section_driving(out) {
        c.opamp(o3, Y0 + 30.0, true, &ctx.labelled_section(sec), Side::Below);
    }
    let m = (o1 + 210.0, yb);
    c.wire(&[(o1 + 60.0, yb), (o1 + 80.0, yb)]);
    c.dot(o1 + 80.0, yb);
    if let Some(r1) = ctx.resistor(i, "r1") {
        c.resistor_h(o1 + 80.0, m.0, m.1, &ctx.labelled_resistor(r1), Side::Above);
    }
    c.dot(m.0, m.1);
    c.wire(&[m, (m.0, Y0 + 45.0), (o3, Y0 + 45.0)]);
    if let Some(r2) = ctx.resistor(i, "r2") {
        c.resistor_h(m.0, o3 + 80.0, m.1, &ctx.labelled_resistor(r2), Side::Above);
    }
    c.wire(&[(o3 + 80.0, m.1), (o3 + 80.0, Y0 + 30.0)]);
    c.dot(o3 + 80.0, Y0 + 30.0);
    c.wire(&[(o3 + 60.0, Y0 + 30.0), (o3 + 100.0, Y0 + 30.0)]);
    StageGeom {
        out: (o3 + 100.0, Y0 + 30.0),
    }
}

fn draw_instrumentation_integrated(
    c: &mut Canvas,
    ctx: &Ctx<'_>,
    i: usize,
    x0: f64,
    _out: Node,
) -> StageGeom {
    let ix = x0 + 130.0;
    let sec = ctx
        .built
        .sections
        .iter()
        .find(|s| s.stage == i && matches!(s.kind, AmplifierKind::InAmp(_)));
    let tip = (ix + 120.0, Y0 + 55.0);
    c.wire(&[(x0, Y0), (ix, Y0)]);
    c.wire(&[
        (x0, Y0 + DY),
        (x0 + 20.0, Y0 + DY),
        (x0 + 20.0, Y0 + 110.0),
        (ix, Y0 + 110.0),
    ]);
    if let Some(sec) = sec {
        input_from(c, x0, Y0 + DY, sec.minus);
        let l = ctx.labelled_section(sec);
        c.open_part(&l.designator, &l.hover);
        let _ = writeln!(
            c.body,
            "<polygon class=\"amp\" points=\"{},{} {},{} {},{}\"/>",
            num(ix),
            num(Y0 - 20.0),
            num(ix),
            num(Y0 + 130.0),
            num(tip.0),
            num(tip.1)
        );
        c.extend(tip.0, Y0 + 130.0);
        c.text(ix + 4.0, Y0 + 4.0, "start", "pin", "+IN");
        c.text(ix + 4.0, Y0 + 29.0, "start", "pin", "RG");
        c.text(ix + 4.0, Y0 + 89.0, "start", "pin", "RG");
        c.text(ix + 4.0, Y0 + 114.0, "start", "pin", "\u{2212}IN");
        c.text(ix + 52.0, Y0 + 86.0, "start", "pin", "REF");
        c.text(ix + 10.0, Y0 + 52.0, "start", "des", &l.designator);
        c.text(ix + 10.0, Y0 + 65.0, "start", "lbl", &l.label);
        // The gain constant, from the part's internal resistors.
        let prefix = format!("{}.RK", sec.designator);
        let rk: f64 = ctx
            .n
            .elements
            .iter()
            .filter(|e| {
                e.group.as_deref() == Some(sec.designator.as_str()) && e.name.starts_with(&prefix)
            })
            .map(|e| match e.kind {
                ElementKind::Resistor { ohms } => ohms,
                _ => 0.0,
            })
            .sum();
        if rk > 0.0 {
            c.text(
                ix + 68.0,
                Y0 + 120.0,
                "start",
                "sub",
                &format!("G = 1 + {}/Rg", format_ohms(rk)),
            );
        }
        c.close_part();
    }
    if let Some(rg) = ctx.resistor(i, "rg") {
        c.wire(&[(ix, Y0 + 25.0), (ix - 25.0, Y0 + 25.0)]);
        c.wire(&[(ix, Y0 + 85.0), (ix - 25.0, Y0 + 85.0)]);
        c.resistor_v(
            ix - 25.0,
            Y0 + 25.0,
            Y0 + 85.0,
            &ctx.labelled_resistor(rg),
            Side::Left,
        );
    }
    // REF pin.
    let ref_node = sec
        .and_then(|s| {
            let name = format!("{}.RD4", s.designator);
            ctx.n
                .elements
                .iter()
                .find(|e| e.name == name)
                .map(|e| e.nodes[1])
        })
        .unwrap_or(0);
    c.wire(&[(ix + 60.0, Y0 + 92.5), (ix + 60.0, Y0 + 160.0)]);
    anchor(c, ctx, ix + 60.0, Y0 + 160.0, ref_node, Side::Below);
    c.wire(&[tip, (tip.0 + 30.0, tip.1)]);
    StageGeom {
        out: (tip.0 + 30.0, tip.1),
    }
}

/// The sensor: `VSENSE` (and `VCM`), its source resistance; returns the x
/// where the first stage starts.
fn draw_sensor(c: &mut Canvas, ctx: &Ctx<'_>) -> f64 {
    let sx = 110.0;
    let n = ctx.n;
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
        format_quantity(value(ctx.built.vsense), "V"),
    ];
    let by_name = |name: &str| {
        ctx.built
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
    match ctx.built.vcm {
        Some(vcm) => {
            c.source(sx, Y0, Y0 + DY, &vsense, &sensor_lines, Side::Left);
            let l = Labelled {
                designator: "VCM".into(),
                label: "VCM".into(),
                hover: "VCM: the sensor's common-mode voltage".into(),
            };
            c.source(
                sx,
                Y0 + DY,
                Y0 + DY + 70.0,
                &l,
                &[format_quantity(value(vcm), "V")],
                Side::Left,
            );
            c.ground(sx, Y0 + DY + 70.0);
            c.dot(sx, Y0 + DY);
            for (y, name, rname) in [(Y0, "inp", "RSENSE_P"), (Y0 + DY, "inn", "RSENSE_N")] {
                c.node_note(sx + 4.0, y - 6.0, name);
                match by_name(rname) {
                    Some(e) => c.resistor_h(sx, sx + 100.0, y, &rs_label(e), Side::Below),
                    None => c.wire(&[(sx, y), (sx + 100.0, y)]),
                }
                c.wire(&[(sx + 100.0, y), (x_end, y)]);
            }
        }
        None => {
            c.source(sx, Y0, Y0 + 70.0, &vsense, &sensor_lines, Side::Left);
            c.ground(sx, Y0 + 70.0);
            c.node_note(sx + 4.0, Y0 - 6.0, "inp");
            match by_name("RSENSE") {
                Some(e) => c.resistor_h(sx, sx + 100.0, Y0, &rs_label(e), Side::Below),
                None => c.wire(&[(sx, Y0), (sx + 100.0, Y0)]),
            }
            c.wire(&[(sx + 100.0, Y0), (x_end, Y0)]);
        }
    }
    x_end
}

/// Draw a divider (and its follower) at `bx` in the lower row; returns
/// its right edge.
fn draw_network(c: &mut Canvas, ctx: &Ctx<'_>, net: &Network<'_>, bx: f64, ny: f64) -> f64 {
    let nx = bx + 80.0;
    c.text(bx, ny - 36.0, "start", "sub", &net.heading);
    let [src, tap, _] = ctx.nodes_of(net.top.element);
    anchor(c, ctx, nx, ny, src, Side::Above);
    c.resistor_v(
        nx,
        ny,
        ny + 70.0,
        &ctx.labelled_resistor(net.top),
        Side::Left,
    );
    c.dot(nx, ny + 70.0);
    c.resistor_v(
        nx,
        ny + 70.0,
        ny + 140.0,
        &ctx.labelled_resistor(net.bottom),
        Side::Left,
    );
    c.ground(nx, ny + 140.0);
    match ctx.follower_on(tap) {
        Some(f) => {
            let ox = nx + 40.0;
            c.wire(&[(nx, ny + 70.0), (ox, ny + 70.0)]);
            c.opamp(ox, ny + 85.0, true, &ctx.labelled_section(f), Side::Above);
            c.wire(&[
                (ox, ny + 100.0),
                (ox - 12.0, ny + 100.0),
                (ox - 12.0, ny + 125.0),
                (ox + 75.0, ny + 125.0),
                (ox + 75.0, ny + 85.0),
            ]);
            c.dot(ox + 75.0, ny + 85.0);
            c.wire(&[(ox + 60.0, ny + 85.0), (ox + 95.0, ny + 85.0)]);
            c.tag(ox + 95.0, ny + 85.0, ctx.node(f.out), Side::Right);
            ox + 95.0 + 70.0
        }
        None => {
            c.wire(&[(nx, ny + 70.0), (nx + 40.0, ny + 70.0)]);
            c.tag(nx + 40.0, ny + 70.0, ctx.node(tap), Side::Right);
            nx + 40.0 + 70.0
        }
    }
}

/// Draw one voltage source (reference or supply) at `bx`; returns its
/// right edge.
fn draw_source(c: &mut Canvas, ctx: &Ctx<'_>, index: usize, bx: f64, ny: f64) -> f64 {
    let Some(src) = ctx.built.sources.get(index) else {
        return bx;
    };
    let volts = match ctx.n.elements.get(src.element).map(|e| e.kind) {
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
    anchor(c, ctx, sx, ny, src.node, Side::Above);
    let l = Labelled {
        designator: src.designator.clone(),
        label,
        hover,
    };
    c.source(sx, ny, ny + 70.0, &l, &lines, Side::Right);
    c.ground(sx, ny + 70.0);
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
    let ctx = Ctx {
        built,
        n: &built.netlist,
    };
    let mut c = Canvas::new();
    let mut x = draw_sensor(&mut c, &ctx);
    let mut nets = Vec::new();
    let mut prev: Option<(f64, f64)> = None;
    let last = design.stages.len().saturating_sub(1);
    for (i, st) in design.stages.iter().enumerate() {
        if let Some((px, py)) = prev {
            let mx = px + GAP / 2.0;
            c.wire(&[(px, py), (mx, py), (mx, Y0), (x, Y0)]);
            if let Some(&node) = built.stage_outputs.get(i - 1) {
                c.node_note(px + 2.0, py - 6.0, ctx.node(node));
            }
        }
        let out = built.stage_outputs.get(i).copied().unwrap_or(built.out);
        c.text(
            x + 10.0,
            40.0,
            "start",
            "stage",
            &format!("stage {}: {}", i + 1, st.shape.name()),
        );
        let geom = match st.shape {
            Shape::NonInverting => draw_non_inverting(&mut c, &ctx, i, x, out),
            Shape::NonInvertingSummed => draw_non_inverting_summed(&mut c, &ctx, i, x, out),
            Shape::Inverting => draw_inverting(&mut c, &ctx, i, x, out),
            Shape::Difference => draw_difference(&mut c, &ctx, i, x, out),
            Shape::InstrumentationDiscrete => {
                draw_instrumentation_discrete(&mut c, &ctx, i, x, out)
            }
            Shape::InstrumentationIntegrated => {
                draw_instrumentation_integrated(&mut c, &ctx, i, x, out)
            }
        };
        collect_networks(&ctx, i, &mut nets);
        if i == last {
            c.tag(geom.out.0, geom.out.1, ctx.node(built.out), Side::Right);
        }
        prev = Some(geom.out);
        x = geom.out.0 + GAP;
    }
    // The row of networks and sources.
    let mut bx = 20.0;
    let ny = c.max_y + NET_ROW_GAP;
    if !nets.is_empty() || !built.sources.is_empty() {
        c.text(20.0, ny - 60.0, "start", "stage", "offset and bias sources");
    }
    for net in &nets {
        bx = draw_network(&mut c, &ctx, net, bx, ny) + 30.0;
    }
    for k in 0..built.sources.len() {
        bx = draw_source(&mut c, &ctx, k, bx, ny) + 20.0;
    }
    // Anything a template did not place (a role it does not know) is still
    // listed, so no part goes missing from the drawing.
    let mut missing: Vec<String> = Vec::new();
    for r in &built.resistors {
        if !c.drawn.contains(&r.designator) {
            missing.push(format!(
                "{} {} ({})",
                r.designator,
                format_ohms(r.part.ohms),
                r.role
            ));
        }
    }
    for s in &built.sections {
        if !c.drawn.contains(&s.designator) {
            missing.push(format!("{} {}", s.designator, ctx.part_id(s)));
        }
    }
    let mut y = c.max_y + 30.0;
    if !missing.is_empty() {
        c.text(20.0, y, "start", "lbl", "also in the netlist:");
        for m in &missing {
            y += 14.0;
            c.text(30.0, y, "start", "lbl", m);
        }
        y += 10.0;
    }
    c.text(
        20.0,
        y + 14.0,
        "start",
        "sub",
        "Drawn by spanfit from the design's netlist. Error sources (VOS_, IBP_, IBN_) are in the SPICE export, not drawn.",
    );
    let width = (c.max_x + 30.0).ceil();
    let height = (c.max_y + 20.0).ceil();
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
    s.push_str(&c.body);
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
        let built = crate::topology::build(&need, &stock, &design).unwrap();
        let doc = svg(&built, &design, "<b>demo</b> & \"co\"");
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
