//! Three op-amp instrumentation amplifier: input pair with `rf1`, `rf2`
//! and `rg` (gain `1 + (rf1 + rf2)/rg`), then a difference stage `r2/r1`
//! whose REF node takes a buffered divider for a positive output offset.

use super::{
    push_with_ref, roles, MatchedRoles, OffsetNetwork, Role, RoleValues, StageDrive, StageNodes,
    StageShape, ValueSetRequest,
};
use crate::design::Stage;
use crate::error::Result;
use crate::need::Topology;
use crate::netlist::Node;
use crate::schematic::{anchor, input_from, Canvas, Sheet, Side, StageOutline, DY, Y0};
use crate::search::ratio::nearest_values;
use crate::topology::{Builder, InjectionPoint};

/// The instrumentation-discrete shape.
pub(crate) struct InstrumentationDiscrete;

impl StageShape for InstrumentationDiscrete {
    fn name(&self) -> &'static str {
        "instrumentation-discrete"
    }

    fn topology(&self) -> Topology {
        Topology::Instrumentation
    }

    fn required_roles(&self) -> &'static [Role] {
        &[
            Role::Rf1,
            Role::Rf2,
            Role::Rg,
            Role::R1,
            Role::R2,
            Role::R3,
            Role::R4,
        ]
    }

    fn sections(&self) -> usize {
        3
    }

    fn differential_input(&self) -> bool {
        true
    }

    fn may_take_stage(&self, first: bool, differential_sensor: bool) -> bool {
        first && differential_sensor
    }

    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork> {
        (offset > 0.0).then_some(OffsetNetwork::RefDivider)
    }

    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, minus: f64) -> f64 {
        let r = drive.ohms;
        let (rf1, rf2, rg) = (r(Role::Rf1), r(Role::Rf2), r(Role::Rg));
        let difference = plus - minus;
        let a1 = plus + rf1 * difference / rg;
        let a2 = minus - rf2 * difference / rg;
        // An unbuffered REF divider's Thevenin resistance is in series with r4.
        let (r1, r2, r3) = (r(Role::R1), r(Role::R2), r(Role::R3));
        let r4 = r(Role::R4) + drive.thevenin_ohms;
        let at_plus = a1 * r4 / (r3 + r4) + drive.offset_volts * r3 / (r3 + r4);
        at_plus * (1.0 + r2 / r1) - a2 * r2 / r1
    }

    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues> {
        let a = request.gain;
        let mut out = Vec::new();
        if a <= 1.0 {
            return out;
        }
        let ref_dividers = request.ref_dividers();
        // The output difference stage at unity, all four near 10 k.
        let Some(&unity) = nearest_values(request.values, 10_000.0, 1).first() else {
            return out;
        };
        for (rg, rf, _) in request.pairs((a - 1.0) / 2.0) {
            let network = roles(&[
                (Role::Rf1, rf),
                (Role::Rf2, rf),
                (Role::Rg, rg),
                (Role::R1, unity),
                (Role::R2, unity),
                (Role::R3, unity),
                (Role::R4, unity),
            ]);
            push_with_ref(&mut out, network, &ref_dividers);
        }
        out
    }

    /// The output difference part: `r1` with `r3` and `r2` with `r4`,
    /// whose match sets the common-mode rejection.
    fn matched_roles(&self) -> Option<MatchedRoles> {
        Some(MatchedRoles {
            low: [Role::R1, Role::R3],
            high: [Role::R2, Role::R4],
        })
    }

    fn build(
        &self,
        builder: &mut Builder<'_>,
        index: usize,
        stage: &Stage,
        nodes: StageNodes,
    ) -> Result<()> {
        let StageNodes {
            plus: vin,
            minus: vin_n,
            out,
        } = nodes;
        let part = builder.opamp_index(&stage.amplifier)?;
        let inj = builder.injection(index, &stage.offset, InjectionPoint::Offset, Some(part))?;
        let (g1, g2, a1, a2) = (
            builder.stage_node(index, "g1"),
            builder.stage_node(index, "g2"),
            builder.stage_node(index, "a1"),
            builder.stage_node(index, "a2"),
        );
        let m = builder.stage_node(index, "m");
        let q = builder.stage_node(index, "q");
        builder.section(index, part, vin, g1, a1);
        builder.section(index, part, vin_n, g2, a2);
        builder.resistor(index, Role::Rf1, stage.r(Role::Rf1)?, a1, g1);
        builder.resistor(index, Role::Rf2, stage.r(Role::Rf2)?, a2, g2);
        builder.resistor(index, Role::Rg, stage.r(Role::Rg)?, g1, g2);
        builder.resistor(index, Role::R1, stage.r(Role::R1)?, a2, m);
        builder.resistor(index, Role::R2, stage.r(Role::R2)?, m, out);
        builder.resistor(index, Role::R3, stage.r(Role::R3)?, a1, q);
        builder.resistor(index, Role::R4, stage.r(Role::R4)?, q, inj);
        builder.section(index, part, q, m, out);
        Ok(())
    }

    fn draw(
        &self,
        canvas: &mut Canvas,
        sheet: &Sheet<'_>,
        index: usize,
        x0: f64,
        out: Node,
    ) -> StageOutline {
        let o1 = x0 + 140.0;
        let yb = Y0 + 200.0;
        draw_input_pair(canvas, sheet, index, x0, o1, yb);
        draw_output_difference(canvas, sheet, index, out, o1, yb)
    }
}

/// The input pair: two op-amps at `o1` (the upper on the signal line, the
/// lower at `yb`) with `rf1`, `rf2` and `rg` between them.
fn draw_input_pair(
    canvas: &mut Canvas,
    sheet: &Sheet<'_>,
    index: usize,
    x0: f64,
    o1: f64,
    yb: f64,
) {
    let rf1 = sheet.resistor(index, Role::Rf1);
    let rf2 = sheet.resistor(index, Role::Rf2);
    let a1 = rf1.map(|r| sheet.nodes_of(r.element)[0]);
    let a2 = rf2.map(|r| sheet.nodes_of(r.element)[0]);
    // Input amplifiers.
    canvas.wire(&[(x0, Y0), (o1, Y0)]);
    if let Some(sec) = a1.and_then(|n| sheet.section_driving(n)) {
        canvas.opamp(
            o1,
            Y0 + 15.0,
            true,
            &sheet.labelled_section(sec),
            Side::Above,
        );
        input_from(canvas, x0, Y0, sec.plus);
    }
    canvas.wire(&[
        (x0, Y0 + DY),
        (x0 + 20.0, Y0 + DY),
        (x0 + 20.0, yb + 15.0),
        (o1, yb + 15.0),
    ]);
    if let Some(sec) = a2.and_then(|n| sheet.section_driving(n)) {
        canvas.opamp(o1, yb, false, &sheet.labelled_section(sec), Side::Below);
        input_from(canvas, x0, Y0 + DY, sec.plus);
    }
    let g1 = (o1 - 20.0, Y0 + 70.0);
    let g2 = (o1 - 20.0, yb - 55.0);
    canvas.wire(&[(o1, Y0 + 30.0), (g1.0, Y0 + 30.0), g1]);
    canvas.wire(&[(o1, yb - 15.0), (g2.0, yb - 15.0), g2]);
    canvas.dot(g1.0, g1.1);
    canvas.dot(g2.0, g2.1);
    if let Some(rf1) = rf1 {
        canvas.resistor_h(
            g1.0,
            o1 + 80.0,
            g1.1,
            &sheet.labelled_resistor(rf1),
            Side::Above,
        );
    }
    canvas.wire(&[(o1 + 80.0, g1.1), (o1 + 80.0, Y0 + 15.0)]);
    if let Some(rf2) = rf2 {
        canvas.resistor_h(
            g2.0,
            o1 + 80.0,
            g2.1,
            &sheet.labelled_resistor(rf2),
            Side::Above,
        );
    }
    canvas.wire(&[(o1 + 80.0, g2.1), (o1 + 80.0, yb)]);
    if let Some(rg) = sheet.resistor(index, Role::Rg) {
        canvas.resistor_v(g1.0, g1.1, g2.1, &sheet.labelled_resistor(rg), Side::Left);
    }
}

/// The output difference amplifier fed by the input pair's outputs.
fn draw_output_difference(
    canvas: &mut Canvas,
    sheet: &Sheet<'_>,
    index: usize,
    out: Node,
    o1: f64,
    yb: f64,
) -> StageOutline {
    let o3 = o1 + 240.0;
    let q = (o1 + 200.0, Y0 + 15.0);
    canvas.wire(&[(o1 + 60.0, Y0 + 15.0), (o1 + 90.0, Y0 + 15.0)]);
    canvas.dot(o1 + 80.0, Y0 + 15.0);
    if let Some(r3) = sheet.resistor(index, Role::R3) {
        canvas.resistor_h(
            o1 + 90.0,
            q.0,
            q.1,
            &sheet.labelled_resistor(r3),
            Side::Above,
        );
    }
    canvas.dot(q.0, q.1);
    canvas.wire(&[q, (o3, q.1)]);
    if let Some(r4) = sheet.resistor(index, Role::R4) {
        canvas.resistor_v(
            q.0,
            q.1,
            Y0 - 65.0,
            &sheet.labelled_resistor(r4),
            Side::Left,
        );
        let far = sheet.nodes_of(r4.element)[1];
        anchor(canvas, sheet, q.0, Y0 - 65.0, far, Side::Above);
    }
    if let Some(sec) = sheet.section_driving(out) {
        canvas.opamp(
            o3,
            Y0 + 30.0,
            true,
            &sheet.labelled_section(sec),
            Side::Below,
        );
    }
    let m = (o1 + 210.0, yb);
    canvas.wire(&[(o1 + 60.0, yb), (o1 + 80.0, yb)]);
    canvas.dot(o1 + 80.0, yb);
    if let Some(r1) = sheet.resistor(index, Role::R1) {
        canvas.resistor_h(
            o1 + 80.0,
            m.0,
            m.1,
            &sheet.labelled_resistor(r1),
            Side::Above,
        );
    }
    canvas.dot(m.0, m.1);
    canvas.wire(&[m, (m.0, Y0 + 45.0), (o3, Y0 + 45.0)]);
    if let Some(r2) = sheet.resistor(index, Role::R2) {
        canvas.resistor_h(
            m.0,
            o3 + 80.0,
            m.1,
            &sheet.labelled_resistor(r2),
            Side::Above,
        );
    }
    canvas.wire(&[(o3 + 80.0, m.1), (o3 + 80.0, Y0 + 30.0)]);
    canvas.dot(o3 + 80.0, Y0 + 30.0);
    canvas.wire(&[(o3 + 60.0, Y0 + 30.0), (o3 + 100.0, Y0 + 30.0)]);
    StageOutline {
        out: (o3 + 100.0, Y0 + 30.0),
    }
}
