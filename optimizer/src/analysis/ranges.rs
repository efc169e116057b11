//! Stage ranges: each stage's realised gain, offset and output range over
//! the sensor span, read from the solved netlist.

use crate::design::Design;
use crate::mna::DcSolution;
use crate::topology::Built;
use serde::Serialize;

/// Per-stage transfer and node range.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageReport {
    /// 0-based index.
    pub index: usize,
    /// Shape name.
    pub shape: String,
    /// Amplifier part id.
    pub amplifier: String,
    /// Stage gain `a_i`.
    pub gain: f64,
    /// Stage offset `c_i` in volts.
    pub offset_v: f64,
    /// Stage output at the low and high end of the span.
    pub output_range_v: [f64; 2],
    /// Designators of the stage's parts.
    pub parts: Vec<String>,
}

/// The stages of a solved design.
pub(crate) fn stage_reports(design: &Design, built: &Built, dc: &DcSolution) -> Vec<StageReport> {
    let sensor_plus = built
        .netlist
        .find_node("sp")
        .or_else(|| built.netlist.find_node("inp"))
        .unwrap_or(0);
    let sensor_minus = built
        .netlist
        .find_node("sn")
        .or_else(|| built.netlist.find_node("inn"))
        .unwrap_or(0);
    let differential_in = |end: usize| dc.voltage(end, sensor_plus) - dc.voltage(end, sensor_minus);
    let mut stages = Vec::new();
    for (i, stage) in design.stages.iter().enumerate() {
        let output = built.stage_outputs[i];
        let vo = [dc.voltage(0, output), dc.voltage(1, output)];
        let vi = if i == 0 {
            [differential_in(0), differential_in(1)]
        } else {
            let previous = built.stage_outputs[i - 1];
            [dc.voltage(0, previous), dc.voltage(1, previous)]
        };
        let gain = if (vi[1] - vi[0]).abs() > 0.0 {
            (vo[1] - vo[0]) / (vi[1] - vi[0])
        } else {
            0.0
        };
        let mut parts: Vec<String> = built
            .resistors
            .iter()
            .filter(|r| r.stage == i)
            .map(|r| r.designator.clone())
            .collect();
        parts.extend(
            built
                .sections
                .iter()
                .filter(|s| s.stage == i)
                .map(|s| s.designator.clone()),
        );
        stages.push(StageReport {
            index: i,
            shape: stage.shape.name().to_string(),
            amplifier: stage.amplifier.clone(),
            gain,
            offset_v: vo[0] - gain * vi[0],
            output_range_v: vo,
            parts,
        });
    }
    stages
}
