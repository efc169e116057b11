//! The drawing primitives of the schematic: an SVG canvas that grows to
//! fit, wires, dots, labels, resistors, op-amp triangles and grounds.

use super::xml_escape;
use std::collections::{BTreeMap, BTreeSet};
use std::fmt::Write as _;

/// The signal line of every stage.
pub(crate) const Y0: f64 = 180.0;
/// Offset of the second (inverting) input of a differential stage.
pub(crate) const DY: f64 = 80.0;
/// Space between stages.
pub(crate) const GAP: f64 = 40.0;
/// Space between the lowest stage drawing and the row of networks.
pub(crate) const NET_ROW_GAP: f64 = 100.0;

#[derive(Clone, Copy, PartialEq)]
pub(crate) enum Side {
    Left,
    Right,
    Above,
    Below,
}

pub(crate) struct Canvas {
    pub(crate) body: String,
    pub(crate) max_x: f64,
    pub(crate) max_y: f64,
    pub(crate) drawn: BTreeSet<String>,
    /// Where each horizontal resistor was drawn, by designator: its ends
    /// `(x1, x2, y)` (a feedback capacitor is drawn beside its `rf`).
    pub(crate) horizontal: BTreeMap<String, (f64, f64, f64)>,
}

pub(crate) fn num(v: f64) -> String {
    let r = (v * 10.0).round() / 10.0;
    if r == r.trunc() {
        format!("{}", r as i64)
    } else {
        format!("{r:.1}")
    }
}

impl Canvas {
    pub(crate) fn new() -> Self {
        Canvas {
            body: String::new(),
            max_x: 0.0,
            max_y: 0.0,
            drawn: BTreeSet::new(),
            horizontal: BTreeMap::new(),
        }
    }

    pub(crate) fn extend(&mut self, x: f64, y: f64) {
        self.max_x = self.max_x.max(x);
        self.max_y = self.max_y.max(y);
    }

    pub(crate) fn wire(&mut self, pts: &[(f64, f64)]) {
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

    pub(crate) fn dot(&mut self, x: f64, y: f64) {
        let _ = writeln!(
            self.body,
            "<circle class=\"j\" cx=\"{}\" cy=\"{}\" r=\"2.6\"/>",
            num(x),
            num(y)
        );
    }

    /// Text; `anchor` is `start`, `middle` or `end`.
    pub(crate) fn text(&mut self, x: f64, y: f64, anchor: &str, class: &str, content: &str) {
        let width = 6.3 * content.chars().count() as f64;
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
            xml_escape(content)
        );
    }

    pub(crate) fn open_part(&mut self, designator: &str, hover: &str) {
        self.drawn.insert(designator.to_string());
        let _ = writeln!(
            self.body,
            "<g class=\"part\" data-ref=\"{}\"><title>{}</title>",
            xml_escape(designator),
            xml_escape(hover)
        );
    }

    pub(crate) fn close_part(&mut self) {
        self.body.push_str("</g>\n");
    }

    pub(crate) fn ground(&mut self, x: f64, y: f64) {
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
    pub(crate) fn tag(&mut self, x: f64, y: f64, name: &str, side: Side) {
        let width = 6.0 * name.chars().count() as f64 + 10.0;
        let (sx, sy) = match side {
            Side::Below => (x, y + 10.0),
            Side::Above => (x, y - 10.0),
            Side::Right => (x + 10.0, y),
            Side::Left => (x - 10.0, y),
        };
        self.wire(&[(x, y), (sx, sy)]);
        let (rx, ry) = match side {
            Side::Below => (sx - width / 2.0, sy),
            Side::Above => (sx - width / 2.0, sy - 14.0),
            Side::Right => (sx, sy - 7.0),
            Side::Left => (sx - width, sy - 7.0),
        };
        let _ = writeln!(
            self.body,
            "<rect class=\"tag\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"14\" rx=\"7\"/>",
            num(rx),
            num(ry),
            num(width)
        );
        self.extend(rx + width, ry + 14.0);
        self.text(rx + width / 2.0, ry + 10.5, "middle", "node", name);
    }

    /// A small node name written beside a wire.
    pub(crate) fn node_note(&mut self, x: f64, y: f64, name: &str) {
        self.text(x, y, "start", "node", name);
    }

    /// A horizontal resistor between `x1` and `x2` on `y`.
    pub(crate) fn resistor_h(&mut self, x1: f64, x2: f64, y: f64, r: &Labelled, side: Side) {
        self.horizontal.insert(r.designator.clone(), (x1, x2, y));
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
    pub(crate) fn resistor_v(&mut self, x: f64, y1: f64, y2: f64, r: &Labelled, side: Side) {
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

    /// A horizontal capacitor between `x1` and `x2` on `y`: two plates
    /// across the wire at the middle, the label to the right of `x2`.
    pub(crate) fn capacitor_h(&mut self, x1: f64, x2: f64, y: f64, c: &Labelled) {
        self.open_part(&c.designator, &c.hover);
        let cx = (x1 + x2) / 2.0;
        self.wire(&[(x1, y), (cx - 4.0, y)]);
        self.wire(&[(cx + 4.0, y), (x2, y)]);
        for px in [cx - 4.0, cx + 4.0] {
            let _ = writeln!(
                self.body,
                "<line class=\"g\" x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"/>",
                num(px),
                num(y - 8.0),
                num(px),
                num(y + 8.0)
            );
        }
        self.extend(x2, y + 8.0);
        self.text(x2 + 6.0, y + 4.0, "start", "lbl", &c.label);
        self.close_part();
    }

    /// A vertical capacitor between `y1` and `y2` on `x`: two plates
    /// across the wire, the label to the right.
    pub(crate) fn capacitor_v(&mut self, x: f64, y1: f64, y2: f64, c: &Labelled) {
        self.open_part(&c.designator, &c.hover);
        let cy = (y1 + y2) / 2.0;
        self.wire(&[(x, y1), (x, cy - 4.0)]);
        self.wire(&[(x, cy + 4.0), (x, y2)]);
        for py in [cy - 4.0, cy + 4.0] {
            let _ = writeln!(
                self.body,
                "<line class=\"g\" x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"/>",
                num(x - 12.0),
                num(py),
                num(x + 12.0),
                num(py)
            );
        }
        self.extend(x + 12.0, y2);
        self.text(x + 16.0, cy + 4.0, "start", "lbl", &c.label);
        self.close_part();
    }

    /// An op-amp pointing right: inputs at `(ox, oy -+ 15)`, output at
    /// `(ox + 60, oy)`. `caption` (the part id) goes above or below.
    pub(crate) fn opamp(
        &mut self,
        ox: f64,
        oy: f64,
        plus_top: bool,
        a: &Labelled,
        caption_side: Side,
    ) {
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
    pub(crate) fn source(
        &mut self,
        x: f64,
        y1: f64,
        y2: f64,
        labelled: &Labelled,
        lines: &[String],
        side: Side,
    ) {
        self.open_part(&labelled.designator, &labelled.hover);
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
        let mut all = vec![labelled.label.clone()];
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
pub(crate) struct Labelled {
    pub(crate) designator: String,
    pub(crate) label: String,
    pub(crate) hover: String,
}
