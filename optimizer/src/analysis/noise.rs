//! Noise at the output: resistor Johnson noise at the hot end of the
//! temperature range, op-amp voltage and current noise, and reference
//! noise, each referred to the output through the adjoint and summed in
//! power over the noise bandwidth.

use crate::mna::{element_value, DcSolution};
use crate::need::Need;
use crate::netlist::Netlist;
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built};
use crate::units::{johnson_noise_density, Celsius, Ohms, PEAK_TO_PEAK_PER_RMS};
use serde::Serialize;

/// Noise summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseSummary {
    /// Output RMS noise over the noise bandwidth, volts.
    pub rms_v: f64,
    /// Peak-to-peak (6.6 sigma), volts.
    pub peak_to_peak_v: f64,
    /// Noise bandwidth used (pi/2 times the signal bandwidth), Hz.
    pub noise_bandwidth_hz: f64,
    /// Share of the RMS power from resistor thermal noise, op-amp voltage
    /// noise, op-amp current noise and reference noise (fractions).
    pub shares: [f64; 4],
}

impl NoiseSummary {
    /// The peak the budget takes for noise: half the peak-to-peak, volts.
    pub fn peak_v(&self) -> f64 {
        0.5 * self.peak_to_peak_v
    }
}

/// The output noise of a solved design.
pub(crate) fn output_noise(
    need: &Need,
    stock: &Stock,
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
) -> NoiseSummary {
    let t_hot = Celsius(need.accuracy.temp_max.0);
    let mut johnson2 = 0.0;
    let mut resistor_elements: Vec<usize> = built.resistors.iter().map(|r| r.element).collect();
    resistor_elements.extend(&built.source_resistors);
    resistor_elements.extend(&built.internal_resistors);
    for &e in &resistor_elements {
        let element = &netlist.elements[e];
        let ohms = element_value(netlist, e);
        let adjoint_drop = dc.node_adjoint(element.nodes[0]) - dc.node_adjoint(element.nodes[1]);
        // Current-noise density of the resistor, A/rtHz.
        let density = johnson_noise_density(Ohms(ohms), t_hot) / ohms;
        johnson2 += (adjoint_drop * density).powi(2);
    }
    let mut voltage2 = 0.0;
    let mut current2 = 0.0;
    for section in &built.sections {
        let (voltage_density, current_density) = match section.kind {
            AmplifierKind::OpAmp(i) => (
                stock.opamps[i].en_nv_rthz * 1e-9,
                stock.opamps[i].in_pa_rthz * 1e-12,
            ),
            AmplifierKind::InAmp(i) => (stock.inamps[i].en_nv_rthz * 1e-9, 0.0),
        };
        voltage2 += (dc.branch_adjoint(section.vos) * voltage_density).powi(2);
        current2 += (dc.node_adjoint(section.plus) * current_density).powi(2)
            + (dc.node_adjoint(section.minus) * current_density).powi(2);
    }
    let enbw = std::f64::consts::FRAC_PI_2 * need.accuracy.bandwidth.0;
    let mut reference2 = 0.0;
    for source in &built.sources {
        if let Some(i) = source.reference {
            let rms = stock.references[i].noise_uv_pp * 1e-6 / PEAK_TO_PEAK_PER_RMS;
            reference2 += (dc.branch_adjoint(source.element) * rms).powi(2);
        }
    }
    let total2 = (johnson2 + voltage2 + current2) * enbw + reference2;
    let rms = total2.sqrt();
    let share = |x: f64| if total2 > 0.0 { x / total2 } else { 0.0 };
    NoiseSummary {
        rms_v: rms,
        peak_to_peak_v: rms * PEAK_TO_PEAK_PER_RMS,
        noise_bandwidth_hz: enbw,
        shares: [
            share(johnson2 * enbw),
            share(voltage2 * enbw),
            share(current2 * enbw),
            share(reference2),
        ],
    }
}
