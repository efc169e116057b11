//! Integrated in-amp part: gain `1 + Rk/rg` with the part's own gain
//! constant `Rk`; the REF pin takes a divider buffered by an op-amp
//! follower for a positive output offset. The netlist models the part's
//! insides (three ideal-ish amplifiers, its internal resistors) in a
//! subcircuit so the SPICE export and the MNA see the same circuit.

use super::{
    push_with_ref, roles, OffsetNetwork, Role, RoleValues, StageDrive, StageNodes, StageShape,
    ValueSetRequest,
};
use crate::design::Stage;
use crate::error::{Error, Result};
use crate::need::Topology;
use crate::netlist::{ElementKind, Node};
use crate::schematic::format_ohms;
use crate::schematic::{anchor, input_from, num, Canvas, Sheet, Side, StageOutline, DY, Y0};
use crate::search::ratio::nearest_values;
use crate::topology::{
    AmplifierKind, Builder, InAmpInternals, InjectionPoint, Package, Section, INAMP_INTERNAL_GAIN,
    INAMP_INTERNAL_OHMS,
};
use std::fmt::Write as _;

/// The instrumentation-integrated shape.
pub(crate) struct InstrumentationIntegrated;

impl StageShape for InstrumentationIntegrated {
    fn name(&self) -> &'static str {
        "instrumentation-integrated"
    }

    fn topology(&self) -> Topology {
        Topology::Instrumentation
    }

    fn required_roles(&self) -> &'static [Role] {
        &[Role::Rg]
    }

    fn sections(&self) -> usize {
        0
    }

    fn differential_input(&self) -> bool {
        true
    }

    fn integrated(&self) -> bool {
        true
    }

    fn may_take_stage(&self, first: bool, differential_sensor: bool) -> bool {
        first && differential_sensor
    }

    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork> {
        (offset > 0.0).then_some(OffsetNetwork::RefDivider)
    }

    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, minus: f64) -> f64 {
        // The input pair (gain constant split in two), then the unity
        // difference stage of four internal resistors to REF, with an
        // unbuffered REF divider's Thevenin resistance in series with the
        // REF leg; with none it is `(plus - minus) (1 + Rk/rg) + ref`.
        let half = drive.inamp_gain_ohms / 2.0 / (drive.ohms)(Role::Rg);
        let a1 = plus + half * (plus - minus);
        let a2 = minus - half * (plus - minus);
        let (r3, r4) = (
            INAMP_INTERNAL_OHMS,
            INAMP_INTERNAL_OHMS + drive.thevenin_ohms,
        );
        let at_q = a1 * r4 / (r3 + r4) + drive.offset_volts * r3 / (r3 + r4);
        2.0 * at_q - a2
    }

    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues> {
        let (a, rk) = (request.gain, request.inamp_gain_ohms);
        let mut out = Vec::new();
        if a <= 1.0 || rk <= 0.0 {
            return out;
        }
        let ref_dividers = request.ref_dividers();
        for rg in nearest_values(request.values, rk / (a - 1.0), 4) {
            push_with_ref(&mut out, roles(&[(Role::Rg, rg)]), &ref_dividers);
        }
        out
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
        let part_index = builder
            .stock
            .inamps
            .iter()
            .position(|p| p.part_id == stage.amplifier)
            .ok_or_else(|| {
                Error::design(format!("in-amp `{}` is not in stock", stage.amplifier))
            })?;
        let part = &builder.stock.inamps[part_index];
        let rk_half = part.gain_resistor.0 / 2.0;
        let buffer = match &stage.buffer {
            Some(id) => Some(builder.opamp_index(id)?),
            None => None,
        };
        let ref_node = builder.injection(index, &stage.offset, InjectionPoint::Offset, buffer)?;
        builder.package_count += 1;
        let d = format!("U{}", builder.package_count);
        let lower = d.to_lowercase();
        let g1 = builder.stage_node(index, "g1");
        let g2 = builder.stage_node(index, "g2");
        let plus_internal = builder.netlist.node(&format!("{lower}_pi"));
        let vos = builder
            .netlist
            .vsource(&format!("VOS_{d}"), plus_internal, vin, 0.0);
        let ibp = builder.netlist.isource(&format!("IBP_{d}"), vin, 0, 0.0);
        let ibn = builder.netlist.isource(&format!("IBN_{d}"), vin_n, 0, 0.0);
        builder.resistor(index, Role::Rg, stage.r(Role::Rg)?, g1, g2);
        let mut node = |suffix: &str| builder.netlist.node(&format!("{lower}_{suffix}"));
        let (a1, a2, m, q, oi) = (node("a1"), node("a2"), node("m"), node("q"), node("oi"));
        // The part's insides, in its subcircuit: input pair with the gain
        // constant split in two, then a unity difference stage to REF.
        let amp = ElementKind::OpAmp {
            inverse_gain: 1.0 / INAMP_INTERNAL_GAIN,
        };
        let res = |ohms| ElementKind::Resistor { ohms };
        let rd = res(INAMP_INTERNAL_OHMS);
        let mut inside = |name: &str, kind: ElementKind, pins: [Node; 3]| {
            builder
                .netlist
                .add_in(&d, &format!("{d}.{name}"), kind, pins)
        };
        let gain_element = inside("EA1", amp, [plus_internal, g1, a1]);
        inside("EA2", amp, [vin_n, g2, a2]);
        let rk1 = inside("RK1", res(rk_half), [a1, g1, 0]);
        let rk2 = inside("RK2", res(rk_half), [a2, g2, 0]);
        let r1 = inside("RD1", rd, [a2, m, 0]);
        let r2 = inside("RD2", rd, [m, oi, 0]);
        let r3 = inside("RD3", rd, [a1, q, 0]);
        let r4 = inside("RD4", rd, [q, ref_node, 0]);
        inside("EA3", amp, [q, m, oi]);
        let output_offset = builder.netlist.vsource(&format!("VOSO_{d}"), out, oi, 0.0);
        builder
            .internal_resistors
            .extend([rk1, rk2, r1, r2, r3, r4]);
        builder.sections.push(Section {
            designator: d.clone(),
            package: d.clone(),
            stage: index,
            kind: AmplifierKind::InAmp(part_index),
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
        builder.packages.push(Package {
            designator: d.clone(),
            kind: AmplifierKind::InAmp(part_index),
            part_id: part.part_id.clone(),
            channels: 1,
            used: vec![d],
            unit_cost: part.unit_cost,
        });
        Ok(())
    }

    fn draw(
        &self,
        canvas: &mut Canvas,
        sheet: &Sheet<'_>,
        index: usize,
        x0: f64,
        _out: Node,
    ) -> StageOutline {
        let ix = x0 + 130.0;
        let sec = sheet
            .built
            .sections
            .iter()
            .find(|s| s.stage == index && matches!(s.kind, AmplifierKind::InAmp(_)));
        let tip = (ix + 120.0, Y0 + 55.0);
        canvas.wire(&[(x0, Y0), (ix, Y0)]);
        canvas.wire(&[
            (x0, Y0 + DY),
            (x0 + 20.0, Y0 + DY),
            (x0 + 20.0, Y0 + 110.0),
            (ix, Y0 + 110.0),
        ]);
        if let Some(sec) = sec {
            input_from(canvas, x0, Y0 + DY, sec.minus);
            let l = sheet.labelled_section(sec);
            canvas.open_part(&l.designator, &l.hover);
            let _ = writeln!(
                canvas.body,
                "<polygon class=\"amp\" points=\"{},{} {},{} {},{}\"/>",
                num(ix),
                num(Y0 - 20.0),
                num(ix),
                num(Y0 + 130.0),
                num(tip.0),
                num(tip.1)
            );
            canvas.extend(tip.0, Y0 + 130.0);
            canvas.text(ix + 4.0, Y0 + 4.0, "start", "pin", "+IN");
            canvas.text(ix + 4.0, Y0 + 29.0, "start", "pin", "RG");
            canvas.text(ix + 4.0, Y0 + 89.0, "start", "pin", "RG");
            canvas.text(ix + 4.0, Y0 + 114.0, "start", "pin", "\u{2212}IN");
            canvas.text(ix + 52.0, Y0 + 86.0, "start", "pin", "REF");
            canvas.text(ix + 10.0, Y0 + 52.0, "start", "des", &l.designator);
            canvas.text(ix + 10.0, Y0 + 65.0, "start", "lbl", &l.label);
            // The gain constant, from the part's internal resistors.
            let prefix = format!("{}.RK", sec.designator);
            let rk: f64 = sheet
                .netlist
                .elements
                .iter()
                .filter(|e| {
                    e.group.as_deref() == Some(sec.designator.as_str())
                        && e.name.starts_with(&prefix)
                })
                .map(|e| match e.kind {
                    ElementKind::Resistor { ohms } => ohms,
                    _ => 0.0,
                })
                .sum();
            if rk > 0.0 {
                canvas.text(
                    ix + 68.0,
                    Y0 + 120.0,
                    "start",
                    "sub",
                    &format!("G = 1 + {}/Rg", format_ohms(rk)),
                );
            }
            canvas.close_part();
        }
        if let Some(rg) = sheet.resistor(index, Role::Rg) {
            canvas.wire(&[(ix, Y0 + 25.0), (ix - 25.0, Y0 + 25.0)]);
            canvas.wire(&[(ix, Y0 + 85.0), (ix - 25.0, Y0 + 85.0)]);
            canvas.resistor_v(
                ix - 25.0,
                Y0 + 25.0,
                Y0 + 85.0,
                &sheet.labelled_resistor(rg),
                Side::Left,
            );
        }
        // REF pin.
        let ref_node = sec
            .and_then(|s| {
                let name = format!("{}.RD4", s.designator);
                sheet
                    .netlist
                    .elements
                    .iter()
                    .find(|e| e.name == name)
                    .map(|e| e.nodes[1])
            })
            .unwrap_or(0);
        canvas.wire(&[(ix + 60.0, Y0 + 92.5), (ix + 60.0, Y0 + 160.0)]);
        anchor(canvas, sheet, ix + 60.0, Y0 + 160.0, ref_node, Side::Below);
        canvas.wire(&[tip, (tip.0 + 30.0, tip.1)]);
        StageOutline {
            out: (tip.0 + 30.0, tip.1),
        }
    }
}
