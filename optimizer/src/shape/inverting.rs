//! Inverting summing stage: `-rf (v/ri + vo/ro)` plus the + bias times
//! the noise gain. A negative output offset comes through `ro` from the
//! source into the summing node, a positive one from an unbuffered divider
//! biasing the + input.

use super::{
    roles, CarriedGrade, OffsetNetwork, Role, RoleValues, StageDrive, StageNodes, StageShape,
    ValueSetRequest,
};
use crate::design::Injection;
use crate::design::Stage;
use crate::error::{Error, Result};
use crate::need::Topology;
use crate::netlist::Node;
use crate::schematic::{anchor, Canvas, Sheet, Side, StageOutline, Y0};
use crate::search::ratio::{bracket, bracketed_pairs, carried_pairs, BAND, PAIRS_PER_RATIO};
use crate::topology::{Builder, InjectionPoint};

/// The inverting shape.
pub(crate) struct Inverting;

/// The stage's sets from `(ri, rf)` pairs: `ri` indexes `ri_values`,
/// `rf` (and `ro`) the stage grade's values; with the offset network's
/// `ro` or bias divider where the stage has one.
fn sets_from_pairs(
    request: &ValueSetRequest<'_>,
    pairs: &[(usize, usize, f64)],
    ri_values: &[f64],
) -> Vec<RoleValues> {
    let c = request.offset;
    let values = request.values;
    let rs = request.sensor_ohms.0;
    let mut out = Vec::new();
    for &(ri, rf, _) in pairs {
        match request.network {
            Some(OffsetNetwork::InvertingRo) => {
                if c >= 0.0 {
                    return Vec::new();
                }
                for ro in bracket(values, values[rf] * request.source_volts / (-c)) {
                    out.push((
                        roles(&[(Role::Ri, ri), (Role::Rf, rf), (Role::Ro, ro)]),
                        None,
                    ));
                }
            }
            Some(OffsetNetwork::InvertingBias) => {
                let bias = c / (1.0 + values[rf] / (ri_values[ri] + rs));
                for divider in request.dividers(bias) {
                    out.push((roles(&[(Role::Ri, ri), (Role::Rf, rf)]), Some(divider)));
                }
            }
            _ => out.push((roles(&[(Role::Ri, ri), (Role::Rf, rf)]), None)),
        }
    }
    out
}

impl StageShape for Inverting {
    fn name(&self) -> &'static str {
        "inverting"
    }

    fn topology(&self) -> Topology {
        Topology::Inverting
    }

    fn required_roles(&self) -> &'static [Role] {
        &[Role::Ri, Role::Rf]
    }

    fn optional_roles(&self) -> &'static [Role] {
        &[Role::Ro]
    }

    fn sign(&self) -> f64 {
        -1.0
    }

    fn noise_gain(&self, gain: f64) -> f64 {
        1.0 + gain
    }

    fn may_take_stage(&self, first: bool, differential_sensor: bool) -> bool {
        !(first && differential_sensor)
    }

    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork> {
        if offset < 0.0 {
            Some(OffsetNetwork::InvertingRo)
        } else if offset > 0.0 {
            Some(OffsetNetwork::InvertingBias)
        } else {
            None
        }
    }

    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, _minus: f64) -> f64 {
        let r = drive.ohms;
        let ri = r(Role::Ri) + drive.sensor_ohms.0;
        let rf = r(Role::Rf);
        let vo = drive.offset_volts;
        let (bias, ro_term) = match drive.network {
            Some(OffsetNetwork::InvertingRo) => (0.0, vo / r(Role::Ro)),
            Some(OffsetNetwork::InvertingBias) => (vo, 0.0),
            _ => (0.0, 0.0),
        };
        let ro_conductance = if matches!(drive.network, Some(OffsetNetwork::InvertingRo)) {
            1.0 / r(Role::Ro)
        } else {
            0.0
        };
        -rf * (plus / ri + ro_term) + bias * (1.0 + rf / ri + rf * ro_conductance)
    }

    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues> {
        let a = request.gain;
        let rs = request.sensor_ohms.0;
        if a >= 0.0 {
            return Vec::new();
        }
        let gain = -a;
        let ri_rf = bracketed_pairs(
            request.values,
            BAND,
            PAIRS_PER_RATIO,
            |ri| gain * (ri + rs),
            |ri, rf| (rf / (ri + rs) / gain - 1.0).abs(),
        );
        sets_from_pairs(request, &ri_rf, request.values)
    }

    fn carried_roles(&self) -> &'static [Role] {
        &[Role::Ri]
    }

    /// `ri` a small value of the cheaper grade beside the sensor, `rf`
    /// (and `ro`) of the stage grade.
    fn carried_sets(
        &self,
        request: &ValueSetRequest<'_>,
        carried: &CarriedGrade<'_>,
    ) -> Vec<RoleValues> {
        if request.gain >= 0.0 {
            return Vec::new();
        }
        let ri_rf = carried_pairs(
            carried.values,
            request.values,
            -request.gain,
            request.sensor_ohms.0,
            carried.tolerance,
            PAIRS_PER_RATIO,
        );
        sets_from_pairs(request, &ri_rf, carried.values)
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
        let bias = builder.injection(index, &stage.bias, InjectionPoint::Bias, Some(part))?;
        let m = builder.stage_node(index, "m");
        builder.resistor(index, Role::Ri, stage.r(Role::Ri)?, vin, m);
        builder.resistor(index, Role::Rf, stage.r(Role::Rf)?, out, m);
        if let Some(ro) = stage.resistors.get(&Role::Ro) {
            builder.resistor(index, Role::Ro, ro, inj, m);
        } else if stage.offset != Injection::Ground {
            return Err(Error::design(
                "an inverting stage with an offset source needs a resistor `ro`",
            ));
        }
        builder.section(index, part, bias, m, out);
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
        let ox = x0 + 150.0;
        let m = (x0 + 100.0, Y0 - 15.0);
        canvas.wire(&[(x0, Y0), (x0 + 10.0, Y0), (x0 + 10.0, Y0 - 15.0)]);
        if let Some(ri) = sheet.resistor(index, Role::Ri) {
            canvas.resistor_h(
                x0 + 10.0,
                m.0 - 10.0,
                m.1,
                &sheet.labelled_resistor(ri),
                Side::Below,
            );
        }
        canvas.wire(&[(m.0 - 10.0, m.1), (ox, m.1)]);
        canvas.dot(m.0, m.1);
        canvas.wire(&[m, (m.0, Y0 - 70.0)]);
        if let Some(rf) = sheet.resistor(index, Role::Rf) {
            canvas.resistor_h(
                m.0,
                ox + 80.0,
                Y0 - 70.0,
                &sheet.labelled_resistor(rf),
                Side::Above,
            );
        }
        canvas.wire(&[(ox + 80.0, Y0 - 70.0), (ox + 80.0, Y0)]);
        canvas.dot(ox + 80.0, Y0);
        let main = sheet.section_driving(out);
        if let Some(sec) = main {
            canvas.opamp(ox, Y0, false, &sheet.labelled_section(sec), Side::Below);
        }
        canvas.wire(&[(ox + 60.0, Y0), (ox + 100.0, Y0)]);
        if let Some(ro) = sheet.resistor(index, Role::Ro) {
            canvas.resistor_v(
                m.0,
                m.1,
                Y0 + 75.0,
                &sheet.labelled_resistor(ro),
                Side::Left,
            );
            let far = sheet.nodes_of(ro.element)[0];
            anchor(canvas, sheet, m.0, Y0 + 75.0, far, Side::Below);
        }
        canvas.wire(&[
            (ox, Y0 + 15.0),
            (ox - 15.0, Y0 + 15.0),
            (ox - 15.0, Y0 + 50.0),
        ]);
        let bias = main.map(|s| s.plus).unwrap_or(0);
        anchor(canvas, sheet, ox - 15.0, Y0 + 50.0, bias, Side::Below);
        StageOutline {
            out: (ox + 100.0, Y0),
        }
    }
}
