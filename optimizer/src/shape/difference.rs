//! Four-resistor difference amplifier: gain `r2/r1` with `r4/r3 = r2/r1`;
//! an offset comes from a buffered divider at the far end of `r4` (the REF
//! node), which makes a positive output offset.

use super::{
    push_with_ref, roles, CarriedGrade, MatchedRoles, OffsetNetwork, Role, RoleValues, StageDrive,
    StageNodes, StageShape, ValueSetRequest,
};
use crate::design::Stage;
use crate::error::Result;
use crate::need::Topology;
use crate::netlist::Node;
use crate::schematic::{anchor, input_from, Canvas, Sheet, Side, StageOutline, DY, Y0};
use crate::search::ratio::{bracket, bracketed_pairs, carried_pairs, BAND, PAIRS_PER_RATIO};
use crate::topology::{Builder, InjectionPoint};

/// The difference shape.
pub(crate) struct Difference;

/// What a stage's value sets aim at: the `r2/r1'` ratio `g` and, where the
/// offset comes from the sensor's common mode (no offset network, an
/// offset asked, a common mode at the inputs), the `r4'/(r3' + r4')`
/// share `beta` of the + input. With the + input at `cm + s` and the -
/// input at `cm`, the output is `beta (1 + g)(cm + s) - g cm`: a gain
/// `a = beta (1 + g)` and an offset `c = cm (a - g)`, so `g = a - c / cm`
/// and `beta = a / (1 + g)`. `None` without a positive gain to aim at.
fn aims(request: &ValueSetRequest<'_>) -> Option<(f64, Option<f64>)> {
    let (a, c, cm) = (request.gain, request.offset, request.common_mode);
    if a <= 0.0 {
        return None;
    }
    if request.network.is_some() || c.abs() < 1e-12 || cm.abs() < 1e-9 {
        return Some((a, None));
    }
    let g = a - c / cm;
    (g > 0.0).then(|| (g, Some(a / (1.0 + g))))
}

/// The stage's sets from `(r1, r2)` pairs (`r1` indexes `r1_values`, `r2`
/// the stage grade's values): `r3` the value of `r1`; `r4` the value of
/// `r2` where the offset comes from the offset network (`beta` `None`,
/// with each REF divider), or, for an offset from the common mode, the two
/// stage values bracketing the `r4` that gives the + input its share
/// `beta` ([`aims`]).
fn sets_from_pairs(
    request: &ValueSetRequest<'_>,
    beta: Option<f64>,
    pairs: &[(usize, usize, f64)],
    r1_values: &[f64],
) -> Vec<RoleValues> {
    let mut out = Vec::new();
    let ref_dividers = request.ref_dividers();
    for &(r1, r2, _) in pairs {
        match beta {
            None => {
                let network = roles(&[
                    (Role::R1, r1),
                    (Role::R2, r2),
                    (Role::R3, r1),
                    (Role::R4, r2),
                ]);
                push_with_ref(&mut out, network, &ref_dividers);
            }
            Some(beta) if beta > 0.0 && beta < 1.0 => {
                let r3 = r1_values[r1] + request.sensor_ohms.0;
                for r4 in bracket(request.values, r3 * beta / (1.0 - beta)) {
                    out.push((
                        roles(&[
                            (Role::R1, r1),
                            (Role::R2, r2),
                            (Role::R3, r1),
                            (Role::R4, r4),
                        ]),
                        None,
                    ));
                }
            }
            Some(_) => {}
        }
    }
    out
}

impl StageShape for Difference {
    fn name(&self) -> &'static str {
        "difference"
    }

    fn topology(&self) -> Topology {
        Topology::Difference
    }

    fn required_roles(&self) -> &'static [Role] {
        &[Role::R1, Role::R2, Role::R3, Role::R4]
    }

    fn differential_input(&self) -> bool {
        true
    }

    fn noise_gain(&self, gain: f64) -> f64 {
        1.0 + gain
    }

    fn may_take_stage(&self, first: bool, _differential_sensor: bool) -> bool {
        first
    }

    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork> {
        (offset > 0.0).then_some(OffsetNetwork::RefDivider)
    }

    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, minus: f64) -> f64 {
        let r = drive.ohms;
        let (rs_plus, rs_minus) = drive.sensor_ohms;
        let (r1, r2, r3, r4) = (
            r(Role::R1) + rs_minus,
            r(Role::R2),
            r(Role::R3) + rs_plus,
            // An unbuffered REF divider's Thevenin resistance is in series.
            r(Role::R4) + drive.thevenin_ohms,
        );
        let beta = r4 / (r3 + r4);
        let at_plus = plus * beta + drive.offset_volts * r3 / (r3 + r4);
        at_plus * (1.0 + r2 / r1) - minus * r2 / r1
    }

    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues> {
        let rs = request.sensor_ohms.1;
        let Some((g, beta)) = aims(request) else {
            return Vec::new();
        };
        let r1_r2 = bracketed_pairs(
            request.values,
            BAND,
            PAIRS_PER_RATIO,
            |r1| g * (r1 + rs),
            |r1, r2| (r2 / (r1 + rs) / g - 1.0).abs(),
        );
        sets_from_pairs(request, beta, &r1_r2, request.values)
    }

    fn common_mode_offset(&self) -> bool {
        true
    }

    fn carried_roles(&self) -> &'static [Role] {
        &[Role::R1, Role::R3]
    }

    /// `r1` and `r3` small values of the cheaper grade beside the sensor's
    /// legs, `r2` and `r4` of the stage grade for the gain.
    fn carried_sets(
        &self,
        request: &ValueSetRequest<'_>,
        carried: &CarriedGrade<'_>,
    ) -> Vec<RoleValues> {
        let Some((g, beta)) = aims(request) else {
            return Vec::new();
        };
        let pairs = carried_pairs(
            carried.values,
            request.values,
            g,
            request.sensor_ohms.1,
            carried.tolerance,
            PAIRS_PER_RATIO,
        );
        sets_from_pairs(request, beta, &pairs, carried.values)
    }

    /// `r1` with `r3` and `r2` with `r4`: the ratios the common-mode
    /// rejection rests on.
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
        let m = builder.stage_node(index, "m");
        let q = builder.stage_node(index, "q");
        builder.resistor(index, Role::R1, stage.r(Role::R1)?, vin_n, m);
        builder.resistor(index, Role::R2, stage.r(Role::R2)?, m, out);
        builder.resistor(index, Role::R3, stage.r(Role::R3)?, vin, q);
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
        let ox = x0 + 150.0;
        let q = (x0 + 110.0, Y0);
        if let Some(r3) = sheet.resistor(index, Role::R3) {
            input_from(canvas, x0, Y0, sheet.nodes_of(r3.element)[0]);
            canvas.resistor_h(
                x0,
                q.0 - 10.0,
                Y0,
                &sheet.labelled_resistor(r3),
                Side::Above,
            );
        }
        canvas.wire(&[(q.0 - 10.0, Y0), (ox, Y0)]);
        canvas.dot(q.0, q.1);
        if let Some(r4) = sheet.resistor(index, Role::R4) {
            canvas.resistor_v(
                q.0,
                q.1,
                Y0 - 80.0,
                &sheet.labelled_resistor(r4),
                Side::Left,
            );
            let far = sheet.nodes_of(r4.element)[1];
            anchor(canvas, sheet, q.0, Y0 - 80.0, far, Side::Above);
        }
        if let Some(sec) = sheet.section_driving(out) {
            canvas.opamp(
                ox,
                Y0 + 15.0,
                true,
                &sheet.labelled_section(sec),
                Side::Above,
            );
        }
        let m = (x0 + 120.0, Y0 + DY);
        if let Some(r1) = sheet.resistor(index, Role::R1) {
            input_from(canvas, x0, Y0 + DY, sheet.nodes_of(r1.element)[0]);
            canvas.resistor_h(x0, m.0, m.1, &sheet.labelled_resistor(r1), Side::Above);
        }
        canvas.dot(m.0, m.1);
        canvas.wire(&[m, (m.0, Y0 + 30.0), (ox, Y0 + 30.0)]);
        if let Some(r2) = sheet.resistor(index, Role::R2) {
            canvas.resistor_h(
                m.0,
                ox + 80.0,
                m.1,
                &sheet.labelled_resistor(r2),
                Side::Above,
            );
        }
        canvas.wire(&[(ox + 80.0, m.1), (ox + 80.0, Y0 + 15.0)]);
        canvas.dot(ox + 80.0, Y0 + 15.0);
        canvas.wire(&[(ox + 60.0, Y0 + 15.0), (ox + 100.0, Y0 + 15.0)]);
        StageOutline {
            out: (ox + 100.0, Y0 + 15.0),
        }
    }
}
