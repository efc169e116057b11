//! Non-inverting stage: gain `1 + rf/rg`; an offset comes from an
//! unbuffered divider at the bottom of `rg` (its Thevenin resistance in the
//! gain leg), which makes a negative output offset.

use super::{
    roles, OffsetNetwork, Role, RoleValues, StageDrive, StageNodes, StageShape, ValueSetRequest,
};
use crate::design::Stage;
use crate::error::Result;
use crate::need::Topology;
use crate::netlist::Node;
use crate::schematic::{anchor, Canvas, Sheet, Side, StageOutline, Y0};
use crate::search::ratio::{bracketed_pairs, BAND, PAIRS_PER_RATIO};
use crate::topology::{Builder, InjectionPoint};

/// The non-inverting shape.
pub(crate) struct NonInverting;

impl StageShape for NonInverting {
    fn name(&self) -> &'static str {
        "non-inverting"
    }

    fn topology(&self) -> Topology {
        Topology::NonInverting
    }

    fn required_roles(&self) -> &'static [Role] {
        &[Role::Rf, Role::Rg]
    }

    fn may_take_stage(&self, first: bool, differential_sensor: bool) -> bool {
        !(first && differential_sensor)
    }

    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork> {
        (offset < 0.0).then_some(OffsetNetwork::GainLeg)
    }

    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, _minus: f64) -> f64 {
        let rg = (drive.ohms)(Role::Rg) + drive.thevenin_ohms;
        let rf = (drive.ohms)(Role::Rf);
        plus * (1.0 + rf / rg) - drive.offset_volts * rf / rg
    }

    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues> {
        let (gain, offset) = (request.gain, request.offset);
        let (values, divider_values) = (request.values, request.divider_values);
        let mut out = Vec::new();
        if gain <= 1.0 {
            return out;
        }
        if request.network == Some(OffsetNetwork::GainLeg) {
            let thevenin_volts = -offset / (gain - 1.0);
            for (top, bottom) in request.dividers(thevenin_volts) {
                let (t, b) = (divider_values[top], divider_values[bottom]);
                let thevenin = t * b / (t + b);
                // rf over the band, rg from the folded leg.
                let legs = bracketed_pairs(
                    values,
                    (BAND.0, BAND.1 * 10.0),
                    PAIRS_PER_RATIO,
                    |rf| rf / (gain - 1.0) - thevenin,
                    |rf, rg| ((rg + thevenin) / (rf / (gain - 1.0)) - 1.0).abs(),
                );
                for (rf, rg, _) in legs {
                    out.push((
                        roles(&[(Role::Rf, rf), (Role::Rg, rg)]),
                        Some((top, bottom)),
                    ));
                }
            }
        } else {
            for (rg, rf, _) in request.pairs(gain - 1.0) {
                out.push((roles(&[(Role::Rg, rg), (Role::Rf, rf)]), None));
            }
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
        let StageNodes { plus: vin, out, .. } = nodes;
        let part = builder.opamp_index(&stage.amplifier)?;
        let inj = builder.injection(index, &stage.offset, InjectionPoint::Offset, Some(part))?;
        let m = builder.stage_node(index, "m");
        builder.resistor(index, Role::Rf, stage.r(Role::Rf)?, out, m);
        builder.resistor(index, Role::Rg, stage.r(Role::Rg)?, m, inj);
        builder.section(index, part, vin, m, out);
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
        let ox = x0 + 70.0;
        let rf = sheet.resistor(index, Role::Rf);
        let rg = sheet.resistor(index, Role::Rg);
        canvas.wire(&[
            (x0, Y0),
            (x0 + 20.0, Y0),
            (x0 + 20.0, Y0 - 15.0),
            (ox, Y0 - 15.0),
        ]);
        if let Some(sec) = sheet.section_driving(out) {
            canvas.opamp(ox, Y0, true, &sheet.labelled_section(sec), Side::Above);
        }
        let j = (ox - 20.0, Y0 + 70.0);
        canvas.wire(&[(ox, Y0 + 15.0), (ox - 20.0, Y0 + 15.0), j]);
        canvas.dot(j.0, j.1);
        if let Some(rf) = rf {
            canvas.resistor_h(
                j.0,
                ox + 80.0,
                j.1,
                &sheet.labelled_resistor(rf),
                Side::Above,
            );
        }
        canvas.wire(&[(ox + 80.0, j.1), (ox + 80.0, Y0)]);
        canvas.dot(ox + 80.0, Y0);
        canvas.wire(&[(ox + 60.0, Y0), (ox + 100.0, Y0)]);
        if let Some(rg) = rg {
            canvas.resistor_v(
                j.0,
                j.1,
                Y0 + 150.0,
                &sheet.labelled_resistor(rg),
                Side::Right,
            );
            let far = sheet.nodes_of(rg.element)[1];
            anchor(canvas, sheet, j.0, Y0 + 150.0, far, Side::Below);
        }
        StageOutline {
            out: (ox + 100.0, Y0),
        }
    }
}
