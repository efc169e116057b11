//! Non-inverting summed stage: the input through `ri` and the offset
//! source through `ro` meet at the + input (optional `rp` to ground), then
//! gain `1 + rf/rg`; makes a positive output offset.

use super::{
    roles, OffsetNetwork, Role, RoleValues, StageDrive, StageNodes, StageShape, ValueSetRequest,
};
use crate::design::Stage;
use crate::error::Result;
use crate::need::Topology;
use crate::netlist::Node;
use crate::schematic::{anchor, Canvas, Sheet, Side, StageOutline, Y0};
use crate::search::ratio::{bracket, bracketed_pairs, BAND, PAIRS_PER_RATIO};
use crate::topology::{Builder, InjectionPoint};

/// Noise-gain targets sampled inside a grounded stage's band.
const GROUND_BAND_SAMPLES: usize = 4;

/// The `(ro, ri)` pairs (indices in the grade) whose attenuation
/// `ro/(ri + rs + ro)` comes nearest `alpha`.
fn attenuation_pairs(request: &ValueSetRequest<'_>, alpha: f64) -> Vec<(usize, usize)> {
    // ri' / ro = (1 - alpha) / alpha, with ri' = ri + rs.
    let ratio_ri_ro = (1.0 - alpha) / alpha;
    let rs = request.sensor_ohms.0;
    bracketed_pairs(
        request.values,
        BAND,
        PAIRS_PER_RATIO,
        |ro| ro * ratio_ri_ro - rs,
        |ro, ri| (((ri + rs) / ro) / ratio_ri_ro - 1.0).abs(),
    )
    .into_iter()
    .map(|(ro, ri, _)| (ro, ri))
    .collect()
}

/// The roles of one set, no divider.
fn summed_roles(ri: usize, ro: usize, rg: usize, rf: usize) -> RoleValues {
    (
        roles(&[
            (Role::Ri, ri),
            (Role::Ro, ro),
            (Role::Rg, rg),
            (Role::Rf, rf),
        ]),
        None,
    )
}

/// The value sets of a summed stage whose `ro` returns to ground: noise
/// gains `1 + rf/rg` sampled inside `band` times the signal gain, each
/// `rg, rf` pair with the `ri, ro` pairs whose attenuation brings that
/// pair's own noise gain back to the signal gain.
fn grounded_value_sets(request: &ValueSetRequest<'_>, band: [f64; 2]) -> Vec<RoleValues> {
    let mut out = Vec::new();
    let gain = request.gain;
    if !(gain > 0.0 && band[0] > 1.0 && band[1] > band[0]) {
        return out;
    }
    let mut pairs: Vec<(usize, usize)> = Vec::new();
    for k in 0..GROUND_BAND_SAMPLES {
        let at = (k as f64 + 0.5) / GROUND_BAND_SAMPLES as f64;
        let noise_gain = gain * band[0] * (band[1] / band[0]).powf(at);
        if noise_gain <= 1.05 {
            continue;
        }
        for (rg, rf, _) in request.pairs(noise_gain - 1.0) {
            if !pairs.contains(&(rg, rf)) {
                pairs.push((rg, rf));
            }
        }
    }
    for (rg, rf) in pairs {
        let alpha = gain / (1.0 + request.values[rf] / request.values[rg]);
        if alpha > 0.0 && alpha < 1.0 {
            for (ro, ri) in attenuation_pairs(request, alpha) {
                out.push(summed_roles(ri, ro, rg, rf));
            }
        }
    }
    out
}

/// Noise gains `1 + rf/rg` a summed stage with its `rp` shunt is tried
/// at: 2 lets `rf` and `rg` share one value (and one BOM line).
const SHUNTED_NOISE_GAINS: [f64; 2] = [2.0, 4.0];

/// The value sets of a summed stage with its `rp` shunt to ground: where
/// the signal gain plus the offset over the source's volts is below a
/// noise gain `G`, the + input must attenuate both the input (to
/// `gain / G`) and the source (to `offset / (volts G)`), and `rp` takes
/// the rest. For each `rg, rf` pair near each of
/// [`SHUNTED_NOISE_GAINS`], the `ri, ro` pairs nearest the ratio of the
/// two shares, and the stocked `rp` values on either side of the one
/// that makes the signal gain exact with them.
fn shunted_value_sets(request: &ValueSetRequest<'_>, volts: f64) -> Vec<RoleValues> {
    let mut out = Vec::new();
    let values = request.values;
    let rs = request.sensor_ohms.0;
    let least = request.gain + request.offset / volts;
    if !(request.gain > 0.0 && request.offset > 0.0 && least.is_finite()) {
        return out;
    }
    for noise_gain in SHUNTED_NOISE_GAINS {
        if noise_gain <= least * 1.05 {
            continue;
        }
        for (rg, rf, _) in request.pairs(noise_gain - 1.0) {
            let g = 1.0 + values[rf] / values[rg];
            let a = request.gain / g;
            let b = request.offset / (volts * g);
            // A shunt that takes at least 2 % of the + input's conductance
            // (NaN shares fail too).
            let shares = a + b;
            if shares.is_nan() || shares >= 0.98 {
                continue;
            }
            for (ro, ri) in attenuation_pairs(request, a / (a + b)) {
                let gi = 1.0 / (values[ri] + rs);
                let go = 1.0 / values[ro];
                // gi / (gi + go + gp) = a.
                let gp = gi / a - gi - go;
                if !(gp > 0.0 && gp.is_finite()) {
                    continue;
                }
                for rp in bracket(values, 1.0 / gp) {
                    let (mut roles, divider) = summed_roles(ri, ro, rg, rf);
                    roles.insert(Role::Rp, rp);
                    out.push((roles, divider));
                }
            }
        }
    }
    out
}

/// The non-inverting-summed shape.
pub(crate) struct NonInvertingSummed;

impl StageShape for NonInvertingSummed {
    fn name(&self) -> &'static str {
        "non-inverting-summed"
    }

    fn topology(&self) -> Topology {
        Topology::NonInverting
    }

    fn required_roles(&self) -> &'static [Role] {
        &[Role::Ri, Role::Ro, Role::Rf, Role::Rg]
    }

    fn optional_roles(&self) -> &'static [Role] {
        &[Role::Rp]
    }

    fn may_take_stage(&self, first: bool, differential_sensor: bool) -> bool {
        !(first && differential_sensor)
    }

    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork> {
        (offset > 0.0).then_some(OffsetNetwork::Summed)
    }

    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, _minus: f64) -> f64 {
        let r = drive.ohms;
        let gi = 1.0 / (r(Role::Ri) + drive.sensor_ohms.0);
        let go = 1.0 / r(Role::Ro);
        // The optional shunt to ground (an absent role reads NaN).
        let rp = r(Role::Rp);
        let gp = if rp.is_finite() && rp > 0.0 {
            1.0 / rp
        } else {
            0.0
        };
        let summed = (plus * gi + drive.offset_volts * go) / (gi + go + gp);
        summed * (1.0 + r(Role::Rf) / r(Role::Rg))
    }

    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues> {
        if let Some(band) = request.ground_band {
            return grounded_value_sets(request, band);
        }
        let mut out = Vec::new();
        let volts = request.source_volts;
        if volts <= 0.0 {
            return out;
        }
        let gain = request.gain + request.offset / volts;
        let alpha = request.gain / gain;
        out.extend(shunted_value_sets(request, volts));
        if !(gain > 1.05 && alpha > 0.0 && alpha < 1.0) {
            return out;
        }
        // ri, ro pairs outermost (the order ties keep in the ranking).
        let gain_pairs = request.pairs(gain - 1.0);
        for (ro, ri) in attenuation_pairs(request, alpha) {
            for &(rg, rf, _) in &gain_pairs {
                out.push(summed_roles(ri, ro, rg, rf));
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
        let p = builder.stage_node(index, "p");
        let m = builder.stage_node(index, "m");
        builder.resistor(index, Role::Ri, stage.r(Role::Ri)?, vin, p);
        builder.resistor(index, Role::Ro, stage.r(Role::Ro)?, inj, p);
        if let Some(rp) = stage.resistors.get(&Role::Rp) {
            builder.resistor(index, Role::Rp, rp, p, 0);
        }
        builder.resistor(index, Role::Rf, stage.r(Role::Rf)?, out, m);
        builder.resistor(index, Role::Rg, stage.r(Role::Rg)?, m, 0);
        builder.section(index, part, p, m, out);
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
        let p = (x0 + 90.0, Y0 - 15.0);
        canvas.wire(&[(x0, Y0), (x0 + 10.0, Y0), (x0 + 10.0, Y0 - 15.0)]);
        if let Some(ri) = sheet.resistor(index, Role::Ri) {
            canvas.resistor_h(
                x0 + 10.0,
                p.0,
                p.1,
                &sheet.labelled_resistor(ri),
                Side::Below,
            );
        }
        canvas.dot(p.0, p.1);
        canvas.wire(&[p, (ox, p.1)]);
        if let Some(ro) = sheet.resistor(index, Role::Ro) {
            canvas.resistor_v(
                p.0,
                p.1,
                Y0 - 95.0,
                &sheet.labelled_resistor(ro),
                Side::Right,
            );
            let far = sheet.nodes_of(ro.element)[0];
            anchor(canvas, sheet, p.0, Y0 - 95.0, far, Side::Above);
        }
        if let Some(rp) = sheet.resistor(index, Role::Rp) {
            canvas.resistor_v(
                p.0,
                p.1,
                Y0 + 65.0,
                &sheet.labelled_resistor(rp),
                Side::Left,
            );
            canvas.ground(p.0, Y0 + 65.0);
        }
        if let Some(sec) = sheet.section_driving(out) {
            canvas.opamp(ox, Y0, true, &sheet.labelled_section(sec), Side::Above);
        }
        let j = (ox - 20.0, Y0 + 70.0);
        canvas.wire(&[(ox, Y0 + 15.0), (ox - 20.0, Y0 + 15.0), j]);
        canvas.dot(j.0, j.1);
        if let Some(rf) = sheet.resistor(index, Role::Rf) {
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
        if let Some(rg) = sheet.resistor(index, Role::Rg) {
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
