//! Checks of the analysis against references outside the project: the
//! two-point span and offset arithmetic, the closed-form transfer of each
//! stage shape, the closed form of every error line that has one, the
//! Monte Carlo yield against the distribution of a sum of uniforms, and
//! the Monte Carlo spread over temperature against an independent
//! brute-force sampler written here. Each check names its source beside
//! it.
//!
//! The op-amps and references used here are invented test parts (rows of
//! the `TEST_*` tables below), idealised so that one imperfection at a
//! time is non-zero.

use spanfit::analysis::{analyze, Analysis, Contributor, Model};
use spanfit::design::parse_design;
use spanfit::need::{parse_need, Need};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// Boltzmann constant, J/K (CODATA 2018; exact since the 2019 SI).
const CODATA_BOLTZMANN: f64 = 1.380_649e-23;

const TEST_RESISTORS: &str =
    "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
TR-F1,E96,10,1000000,1.0,100,0603,0.004,\n";

/// Invented op-amps: `TA-IDEAL` has no imperfection but a 200 dB gain;
/// the others add one imperfection each (`TA-MC` three, for Monte Carlo;
/// `TA-PSRR` a 60 dB supply rejection; `TA-FET` a bias current that
/// doubles every 10 degC). The idealised parts give a 400 dB PSRR, so the
/// supply-rejection line (70 dB where a table does not say) stays out of
/// their closed forms.
const TEST_OPAMPS: &str = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty,psrr_min_db,ib_doubling_c\n\
TA-IDEAL,1,1,40,0,0,0,0,0,0,0,0,200,100,0,0,200,1,100,400,\n\
TA-VOS,1,1,40,0,0,0,0,1000,0,0,0,200,100,0,0,200,1,100,400,\n\
TA-IB,1,1,40,0,0,0,0,0,0,10,0,200,100,0,0,200,1,100,400,\n\
TA-AOL,1,1,40,0,0,0,0,0,0,0,0,60,100,0,0,200,1,100,400,\n\
TA-MC,1,1,40,0,0,0,0,1000,0,100,0,200,100,0,0,200,1,100,400,\n\
TA-PSRR,1,1,40,0,0,0,0,0,0,0,0,200,100,0,0,200,1,100,60,\n\
TA-FET,1,1,40,0,0,0,0,0,0,10,0,200,100,0,0,200,1,100,400,10\n";

/// Invented references: `TR-2V5` exact and noiseless, `TR-MC` with a
/// 0.12 % initial accuracy and nothing else, `TR-LOAD` exact but for a
/// 100 ppm/mA load regulation and a 0.1 mA load limit.
const TEST_REFERENCES: &str =
    "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty,load_regulation_ppm_per_ma,max_load_ma\n\
TR-2V5,2.5,0,0,0.2,0,1,100,0,100\n\
TR-MC,2.5,0.12,0,0.2,0,1,100,0,100\n\
TR-LOAD,2.5,0,0,0.2,0,1,100,100,0.1\n";

fn test_stock() -> Stock {
    let file = |name: &str, text: &str| StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    };
    parse_stock(&[
        file("resistors.csv", TEST_RESISTORS),
        file("opamps.csv", TEST_OPAMPS),
        file("references.csv", TEST_REFERENCES),
    ])
    .expect("the test stock parses")
}

fn demo_stock() -> Stock {
    parse_stock(&spanfit::demo::stock_files()).expect("the demo stock parses")
}

fn need(toml: &str) -> Need {
    parse_need(toml.as_bytes(), "check.toml").expect("the test need parses")
}

/// A single-ended need with the given sensor span, source resistance,
/// ADC window and rails (margin 0, calibration none, worst-case basis).
fn single_ended(lo: f64, hi: f64, source_ohms: f64, adc: (f64, f64), rails: (f64, f64)) -> Need {
    need(&format!(
        "[sensor]\nsignal_low_v = {lo}\nsignal_high_v = {hi}\nsource_ohms = {source_ohms}\n\
         [adc]\nlow_v = {}\nhigh_v = {}\nbits = 12\nmargin_pct = 0\n\
         [supply]\npositive_v = {}\nnegative_v = {}\n\
         [accuracy]\nmax_error_pct_fs = 1\ntemp_min_c = 27\ntemp_max_c = 27\nbandwidth_hz = 10\n",
        adc.0, adc.1, rails.1, rails.0
    ))
}

/// An exact, drift-free inline resistor.
fn exact(ohms: f64) -> serde_json::Value {
    serde_json::json!({"ohms": ohms, "tolerance_pct": 0, "tcr_ppm_per_c": 0})
}

fn run(need: &Need, stock: &Stock, design: serde_json::Value) -> (Model, Analysis) {
    let text = design.to_string();
    let design =
        parse_design(text.as_bytes(), "check.json", stock).expect("the test design parses");
    analyze(need, stock, &design, 0, 1).expect("the test design analyses")
}

fn line(a: &Analysis, which: Contributor) -> [f64; 2] {
    a.budget
        .iter()
        .find(|b| b.line == which)
        .map(|b| b.at_ends_pct_fs)
        .unwrap_or([0.0, 0.0])
}

fn close(got: f64, want: f64, rel: f64, what: &str) {
    let tol = rel * want.abs().max(1e-300);
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got:e}, closed form {want:e} (relative tolerance {rel:e})"
    );
}

fn non_inverting(amp: &str, rf: f64, rg: f64, offset: serde_json::Value) -> serde_json::Value {
    serde_json::json!({"stages": [{
        "shape": "non-inverting", "amplifier": amp,
        "resistors": {"rf": exact(rf), "rg": exact(rg)},
        "offset": offset,
    }]})
}

fn ground() -> serde_json::Value {
    serde_json::json!({"kind": "ground"})
}

// ---------------------------------------------------------------------
// Two-point span and offset (common practice; docs/need.md, the target window).

fn two_point(lo: f64, hi: f64, adc_hi: f64, margin: f64) -> (f64, f64) {
    need(&format!(
        "[sensor]\nsignal_low_v = {lo}\nsignal_high_v = {hi}\n\
         [adc]\nlow_v = 0\nhigh_v = {adc_hi}\nbits = 12\nmargin_pct = {margin}\n\
         [supply]\npositive_v = 5\n[accuracy]\nmax_error_pct_fs = 1\n"
    ))
    .ideal_transfer()
}

/// A 4-20 mA loop across 250 ohm gives 1-5 V; mapped to 0-5 V the straight
/// line through the two points has K = 5/4 and B = -K * 1 V (common practice).
#[test]
fn current_loop_across_250_ohm_to_0_5_v() {
    let (k, b) = two_point(0.004 * 250.0, 0.020 * 250.0, 5.0, 0.0);
    close(k, 1.25, 1e-12, "K");
    close(b, -1.25, 1e-12, "B");
}

/// 4-20 mV to 0-5 V: K = 5 V / 16 mV = 312.5, B = -312.5 * 4 mV (common practice).
#[test]
fn four_to_twenty_millivolts_to_0_5_v() {
    let (k, b) = two_point(0.004, 0.020, 5.0, 0.0);
    close(k, 312.5, 1e-12, "K");
    close(b, -1.25, 1e-12, "B");
}

/// With a 2 % margin a 0-3 V window shrinks to 0.06-2.94 V, so a 25 mV
/// span needs K = 2.88 / 0.025 = 115.2 and B = 0.06 V (docs/need.md
/// window formula; arithmetic by hand).
#[test]
fn margin_shrinks_the_target_window() {
    let (k, b) = two_point(0.0, 0.025, 3.0, 2.0);
    close(k, 115.2, 1e-12, "K");
    close(b, 0.06, 1e-12, "B");
}

// ---------------------------------------------------------------------
// Closed-form transfers (handbook op-amp formulas, common practice).

/// Non-inverting stage, ideal offset at ground: `1 + Rf/Rg`.
#[test]
fn non_inverting_gain_is_one_plus_rf_over_rg() {
    let n = single_ended(0.0, 0.1, 0.0, (0.0, 3.0), (0.0, 5.0));
    let (rf, rg) = (47_000.0, 2_200.0);
    let (_, a) = run(
        &n,
        &test_stock(),
        non_inverting("TA-IDEAL", rf, rg, ground()),
    );
    close(a.transfer.gain, 1.0 + rf / rg, 1e-8, "gain");
    assert!(
        a.transfer.offset_v.abs() < 1e-12,
        "offset {}",
        a.transfer.offset_v
    );
    close(a.stages[0].gain, 1.0 + rf / rg, 1e-8, "stage gain");
}

/// Non-inverting stage with an unbuffered divider at the bottom of Rg:
/// `Vout = Vs(1 + Rf/Rg') - Vth Rf/Rg'`, `Rg' = Rg + Rth`, with the
/// divider's Thevenin source `Vth = Vref Rb/(Rt+Rb)`, `Rth = Rt || Rb`
/// (docs/error-budget.md; Thevenin's theorem, common practice).
#[test]
fn non_inverting_with_divider_offset_matches_thevenin_formula() {
    let n = single_ended(0.5, 1.0, 0.0, (0.0, 3.0), (0.0, 5.0));
    let (rf, rg, rt, rb, vref) = (30_000.0, 8_200.0, 15_000.0, 10_000.0, 2.5);
    let offset = serde_json::json!({
        "kind": "divider", "source": "TR-2V5", "top": exact(rt), "bottom": exact(rb), "buffered": false
    });
    let (_, a) = run(&n, &test_stock(), non_inverting("TA-IDEAL", rf, rg, offset));
    let vth = vref * rb / (rt + rb);
    let rth = rt * rb / (rt + rb);
    let rg_eff = rg + rth;
    close(a.transfer.gain, 1.0 + rf / rg_eff, 1e-8, "gain");
    close(a.transfer.offset_v, -vth * rf / rg_eff, 1e-8, "offset");
    for (end, vs) in [0.5, 1.0].into_iter().enumerate() {
        let want = vs * (1.0 + rf / rg_eff) - vth * rf / rg_eff;
        close(a.transfer.output_at_ends_v[end], want, 1e-8, "output");
    }
}

/// Inverting summing stage on split rails: `Vout = -Rf(Vs/(R1+Rs) + Vr/R2)`,
/// the sensor's own resistance Rs adding to R1 (docs/error-budget.md;
/// summing amplifier, common practice).
#[test]
fn inverting_summing_stage_matches_closed_form() {
    let rs = 1_000.0;
    let n = single_ended(0.0, 0.2, rs, (0.0, 3.0), (-5.0, 5.0));
    let (r1, rf, r2, vr) = (9_000.0, 68_000.0, 150_000.0, 2.5);
    let design = serde_json::json!({"stages": [{
        "shape": "inverting", "amplifier": "TA-IDEAL",
        "resistors": {"ri": exact(r1), "rf": exact(rf), "ro": exact(r2)},
        "offset": {"kind": "direct", "source": "TR-2V5"},
    }]});
    let (_, a) = run(&n, &test_stock(), design);
    for (end, vs) in [0.0, 0.2].into_iter().enumerate() {
        let want = -rf * (vs / (r1 + rs) + vr / r2);
        close(a.transfer.output_at_ends_v[end], want, 1e-8, "output");
    }
    close(a.transfer.gain, -rf / (r1 + rs), 1e-8, "gain");
    close(a.transfer.offset_v, -rf * vr / r2, 1e-8, "offset");
}

/// Four-resistor difference amplifier with `R4/R3 = R2/R1`:
/// `Vout = (R2/R1)(V+ - V-) + Vref`, the 2.5 V common mode rejected
/// (docs/error-budget.md; difference amplifier, common practice).
#[test]
fn matched_difference_amplifier_matches_closed_form() {
    let n = need(
        "[sensor]\nsignal_low_v = -0.05\nsignal_high_v = 0.05\noutput = \"differential\"\n\
         common_mode_v = 2.5\nsource_ohms = 0\n\
         [adc]\nlow_v = 0\nhigh_v = 5\nbits = 12\n[supply]\npositive_v = 5\n\
         [accuracy]\nmax_error_pct_fs = 1\n",
    );
    let (r1, r2) = (10_000.0, 220_000.0);
    let design = serde_json::json!({"stages": [{
        "shape": "difference", "amplifier": "TA-IDEAL",
        "resistors": {"r1": exact(r1), "r2": exact(r2), "r3": exact(r1), "r4": exact(r2)},
        "offset": {"kind": "direct", "source": "TR-2V5"},
    }]});
    let (_, a) = run(&n, &test_stock(), design);
    close(a.transfer.gain, r2 / r1, 1e-8, "gain");
    close(a.transfer.offset_v, 2.5, 1e-8, "offset");
    for (end, vd) in [-0.05, 0.05].into_iter().enumerate() {
        close(
            a.transfer.output_at_ends_v[end],
            r2 / r1 * vd + 2.5,
            1e-8,
            "output",
        );
    }
}

/// Finite open-loop gain: closed-loop gain `A/(1 + A beta)` with
/// `beta = Rg/(Rf+Rg)` (Black's feedback formula, common practice); the
/// open-loop-gain budget line is the difference from the ideal `1/beta`.
#[test]
fn finite_open_loop_gain_follows_feedback_formula() {
    let n = single_ended(0.0, 0.25, 0.0, (0.0, 2.5), (0.0, 5.0));
    let (rf, rg) = (9_000.0, 1_000.0);
    let (_, a) = run(&n, &test_stock(), non_inverting("TA-AOL", rf, rg, ground()));
    let big_a = 1_000.0; // 60 dB
    let beta = rg / (rf + rg);
    let closed = big_a / (1.0 + big_a * beta);
    close(a.transfer.gain, closed, 1e-10, "gain");
    // Ideal gain 10 maps 0-0.25 V to 0-2.5 V exactly: the open-loop-gain
    // line at the top of the span is 0.25 V * (1/beta - A/(1 + A beta)).
    let want_pct = 100.0 * 0.25 * (1.0 / beta - closed) / 2.5;
    close(
        line(&a, Contributor::OpenLoopGain)[1],
        want_pct,
        1e-8,
        "open-loop-gain line",
    );
    assert!(line(&a, Contributor::NominalRounding)[1].abs() < 1e-10);
}

// ---------------------------------------------------------------------
// Error lines (handbook op-amp error formulas, common practice).

/// Vos line = Vos_max x noise gain / FS; noise gain `1 + Rf/Rg` for a
/// non-inverting stage and `1 + Rf/(R1 + Rs)` for an inverting one.
#[test]
fn offset_voltage_line_is_vos_times_noise_gain() {
    let fs = 3.0;
    let n = single_ended(0.0, 0.1, 0.0, (0.0, fs), (0.0, 5.0));
    let (rf, rg) = (47_000.0, 2_200.0);
    let (_, a) = run(&n, &test_stock(), non_inverting("TA-VOS", rf, rg, ground()));
    let want = 100.0 * 1e-3 * (1.0 + rf / rg) / fs;
    for v in line(&a, Contributor::OffsetVoltage) {
        close(v, want, 1e-8, "non-inverting Vos line");
    }

    let rs = 500.0;
    let n = single_ended(0.0, 0.1, rs, (0.0, fs), (-5.0, 5.0));
    let (ri, rf) = (4_500.0, 20_000.0);
    let design = serde_json::json!({"stages": [{
        "shape": "inverting", "amplifier": "TA-VOS",
        "resistors": {"ri": exact(ri), "rf": exact(rf)}, "offset": ground(),
    }]});
    let (_, a) = run(&n, &test_stock(), design);
    let want = 100.0 * 1e-3 * (1.0 + rf / (ri + rs)) / fs;
    for v in line(&a, Contributor::OffsetVoltage) {
        close(v, want, 1e-8, "inverting Vos line");
    }
}

/// Bias current into both inputs of a non-inverting stage: the + input
/// current through the source resistance is amplified by `1 + Rf/Rg`, the
/// inverting-input current flows through Rf, so the output moves
/// `Ib (Rs (1 + Rf/Rg) - Rf)` (handbook bias-current error, common practice).
#[test]
fn bias_current_line_is_current_through_network_resistance() {
    let fs = 3.0;
    let (rf, rg) = (9_000.0, 1_000.0);
    let ib = 10e-9;
    for rs in [0.0, 5_000.0] {
        let n = single_ended(0.0, 0.1, rs, (0.0, fs), (0.0, 5.0));
        let (_, a) = run(&n, &test_stock(), non_inverting("TA-IB", rf, rg, ground()));
        let want = 100.0 * (ib * (rs * (1.0 + rf / rg) - rf)).abs() / fs;
        for v in line(&a, Contributor::BiasCurrent) {
            close(v, want, 1e-8, "bias-current line");
        }
    }
}

/// Johnson noise `sqrt(4 k T R B)` (Johnson 1928 / Nyquist 1928; k from
/// CODATA 2018) of the one resistor that dominates: a 1 Mohm sensor
/// resistance into a near-unity non-inverting stage whose Rf is 10 ohm.
/// The noise bandwidth of a one-pole roll-off is pi/2 times its corner
/// (common practice); the peak-to-peak figure is 6.6 sigma (common practice).
/// The test stock has no capacitors, so the design has no filter at the ADC
/// input and its noise runs up to the stage's closed-loop pole,
/// `GBW / NG` (100 MHz over a noise gain of 1 + 10/1e6).
#[test]
fn resistor_johnson_noise_appears_in_rms() {
    let rs = 1.0e6;
    let n = single_ended(0.0, 1.0, rs, (0.0, 3.0), (0.0, 5.0));
    let (rf, rg) = (10.0, 1.0e6);
    let (_, a) = run(
        &n,
        &test_stock(),
        non_inverting("TA-IDEAL", rf, rg, ground()),
    );
    let t_kelvin = 27.0 + 273.15;
    let bw = std::f64::consts::PI / 2.0 * 100e6 / (1.0 + rf / rg);
    // The noise gain comes from the DC adjoint at the 200 dB open-loop
    // gain: 1e-10 off the ideal closed form.
    close(a.noise.noise_bandwidth_hz, bw, 1e-9, "noise bandwidth");
    let gain = 1.0 + rf / rg;
    let want = gain * (4.0 * CODATA_BOLTZMANN * t_kelvin * rs * bw).sqrt();
    // The other two resistors add about (10/1e6) of the power.
    close(a.noise.rms_v, want, 1e-4, "output RMS noise");
    assert!(
        a.noise.shares[0] > 0.9999,
        "resistor share {:?}",
        a.noise.shares
    );
    close(
        a.noise.peak_to_peak_v,
        6.6 * a.noise.rms_v,
        1e-12,
        "peak-to-peak",
    );
    let noise_line = line(&a, Contributor::Noise);
    close(
        noise_line[1],
        100.0 * 3.3 * a.noise.rms_v / 3.0,
        1e-9,
        "noise line",
    );
}

/// With capacitors on the shelf the design gets its filter pair, and the
/// noise of the dominant source (a 1 Mohm sensor resistance) runs over the
/// chain's response: its noise bandwidth, from the adjoint AC solves of the
/// noise integral, is the filter's own `noise_bandwidth_hz`, from forward
/// AC solves of the chain (two computations of one integral), and the RMS
/// is `sqrt(4 k T R B)` (handbook formula) over it.
#[test]
fn with_a_filter_the_noise_runs_over_the_chain_response() {
    let rs = 1.0e6;
    let n = single_ended(0.0, 1.0, rs, (0.0, 3.0), (0.0, 5.0));
    let (rf, rg) = (10.0, 1.0e6);
    let capacitors = "part_id,series,min_farads,max_farads,tolerance_pct,tempco_ppm_per_c,\
                      dielectric,rated_v,package,unit_cost,stock_qty\n\
                      TC-1,E12,1e-11,1e-5,5,30,C0G,50,0603,0.01,\n";
    let file = |name: &str, text: &str| StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    };
    let stock = parse_stock(&[
        file("resistors.csv", TEST_RESISTORS),
        file("opamps.csv", TEST_OPAMPS),
        file("references.csv", TEST_REFERENCES),
        file("capacitors.csv", capacitors),
    ])
    .expect("the test stock parses");
    let (m, a) = run(&n, &stock, non_inverting("TA-IDEAL", rf, rg, ground()));
    let filter = m.built().filter.as_ref().expect("a filter pair");
    let b = filter.report.noise_bandwidth_hz;
    close(a.noise.noise_bandwidth_hz, b, 2e-3, "noise bandwidth");
    assert!(b < 1e4, "the pair limits the band: {b} Hz");
    let t_kelvin = 27.0 + 273.15;
    // The source's noise through the gain, and the pair's own series
    // resistor, whose noise sees the same one-pole shape at the pin.
    let kt4 = 4.0 * CODATA_BOLTZMANN * t_kelvin;
    let want = (((1.0 + rf / rg).powi(2) * rs + filter.series.ohms) * kt4 * b).sqrt();
    close(a.noise.rms_v, want, 2e-3, "output RMS noise");
    // The droop line is the filter's own figure.
    let droop = line(&a, Contributor::Droop)[1];
    close(droop, filter.report.droop_pct_fs, 1e-9, "droop line");
}

/// An invented op-amp whose voltage noise dominates (100 nV/rtHz white,
/// its 1/f corner at 1 kHz, no current noise) and an invented capacitor
/// family.
const NOISY_OPAMP: &str = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty,psrr_min_db,en_corner_hz\n\
TA-NOISY,1,1,40,0,0,0,0,0,0,0,0,200,100,100,0,200,1,100,400,1000\n";

/// The closed forms of one pole `p` from `f_L` up (handbook integrals,
/// common practice): white `p (pi/2 - atan(f_L/p))`, and the 1/f weight
/// `ln(1 + (p/f_L)^2) / 2` (about `ln(p/f_L)`, the handbook's
/// `fc ln(fH/fL)` with `fH` the pole).
fn one_pole(p: f64, low: f64) -> (f64, f64) {
    (
        p * (std::f64::consts::FRAC_PI_2 - (low / p).atan()),
        0.5 * (p / low).powi(2).ln_1p(),
    )
}

/// 1/f noise: an op-amp of 100 nV/rtHz with a 1 kHz corner as a near-unity
/// follower. Without a filter (no capacitors) its output power is the one
/// pole at `GBW / NG` from `accuracy.noise_low_hz` up, `en^2 (p (pi/2 -
/// atan(f_L/p)) + fc ln(1 + (p/f_L)^2)/2)` (handbook closed form). With a
/// filter pair the chain's response is the pair's pole (the stage pole
/// far above), and the integral over the real response meets the same
/// closed form at the chain's corner within 0.5 %, at two low limits
/// (the noise line grows by `en^2 fc ln 10` from 0.1 Hz to 0.01 Hz).
#[test]
fn flicker_noise_meets_the_one_pole_closed_form() {
    let file = |name: &str, text: &str| StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    };
    let capacitors = "part_id,series,min_farads,max_farads,tolerance_pct,tempco_ppm_per_c,\
                      dielectric,rated_v,package,unit_cost,stock_qty\n\
                      TC-1,E12,1e-11,1e-5,5,30,C0G,50,0603,0.01,\n";
    let with_pair = parse_stock(&[
        file("resistors.csv", TEST_RESISTORS),
        file("opamps.csv", NOISY_OPAMP),
        file("references.csv", TEST_REFERENCES),
        file("capacitors.csv", capacitors),
    ])
    .expect("the test stock parses");
    let without = parse_stock(&[
        file("resistors.csv", TEST_RESISTORS),
        file("opamps.csv", NOISY_OPAMP),
        file("references.csv", TEST_REFERENCES),
    ])
    .expect("the test stock parses");
    let (rf, rg) = (1.0, 1.0e6);
    let gain = 1.0 + rf / rg;
    let (en, fc) = (100e-9, 1000.0);
    let kt4 = 4.0 * CODATA_BOLTZMANN * (27.0 + 273.15);
    for low in [0.1, 0.01] {
        let text = format!(
            "[sensor]\nsignal_low_v = 0\nsignal_high_v = 1\n\
             [adc]\nlow_v = 0\nhigh_v = 3\nbits = 12\nmargin_pct = 0\n\
             [supply]\npositive_v = 5\n\
             [accuracy]\nmax_error_pct_fs = 1\ntemp_min_c = 27\ntemp_max_c = 27\n\
             bandwidth_hz = 10\nnoise_low_hz = {low}\n"
        );
        let n = need(&text);
        // No pair: the stage pole.
        let (_, a) = run(&n, &without, non_inverting("TA-NOISY", rf, rg, ground()));
        let (white, flicker) = one_pole(100e6 / gain, low);
        let want = (gain * en).powi(2) * (white + fc * flicker);
        // The 1 ohm feedback resistor adds 4 k T / en^2, under 2e-6.
        close(
            a.noise.rms_v.powi(2),
            want,
            1e-5,
            "output power, stage pole",
        );
        close(
            a.noise.flicker_share,
            (gain * en).powi(2) * fc * flicker / want,
            1e-5,
            "1/f share, stage pole",
        );
        // With the pair: the chain's corner; the pair's series resistor
        // adds its own white noise through the same pole.
        let (m, a) = run(&n, &with_pair, non_inverting("TA-NOISY", rf, rg, ground()));
        let filter = m.built().filter.as_ref().expect("a filter pair");
        let corner = filter.report.corner_hz;
        assert!(corner < 1e3, "the pair limits the band: {corner} Hz");
        let (white, flicker) = one_pole(corner, low);
        let amp = (gain * en).powi(2) * (white + fc * flicker);
        let want = amp + kt4 * filter.series.ohms * white;
        close(
            a.noise.rms_v.powi(2),
            want,
            5e-3,
            "output power over the chain",
        );
        assert!(
            a.noise.flicker_share > 0.5,
            "the 1/f part dominates below a 1 kHz corner: {}",
            a.noise.flicker_share
        );
    }
}

/// An invented op-amp whose current noise dominates (10 pA/rtHz into each
/// input, no voltage noise), its current-noise 1/f corner the cell
/// `corner` (`None`: no `in_corner_hz` column at all), and the invented
/// capacitor family when `pair`.
fn current_noise_stock(corner: Option<&str>, pair: bool) -> Stock {
    let header = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,\
                  input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,\
                  vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,\
                  en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty,psrr_min_db,\
                  en_corner_hz";
    let row = "TA-INOISE,1,1,40,0,0,0,0,0,0,0,0,200,100,0,10,200,1,100,400,0";
    let opamps = match corner {
        Some(cell) => format!("{header},in_corner_hz\n{row},{cell}\n"),
        None => format!("{header}\n{row}\n"),
    };
    let file = |name: &str, text: &str| StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    };
    let mut files = vec![
        file("resistors.csv", TEST_RESISTORS),
        file("opamps.csv", &opamps),
        file("references.csv", TEST_REFERENCES),
    ];
    if pair {
        files.push(file(
            "capacitors.csv",
            "part_id,series,min_farads,max_farads,tolerance_pct,tempco_ppm_per_c,\
             dielectric,rated_v,package,unit_cost,stock_qty\n\
             TC-1,E12,1e-11,1e-5,5,30,C0G,50,0603,0.01,\n",
        ));
    }
    parse_stock(&files).expect("the test stock parses")
}

/// The 1/f current-noise part: a near-unity follower (`rf` 1 ohm) behind a
/// 1 Mohm source, so the + input's 10 pA/rtHz through the source
/// resistance (10 uV/rtHz) is nearly all the noise. The output power's
/// growth from a white current noise to `in_corner_hz = fc` is the 1/f
/// part; it must be `(in Rs G)^2 fc` times the 1/f weight of the band:
/// - without a pair, the stage pole `p = GBW / NG`: the one-pole closed
///   form `ln(1 + (p/f_L)^2) / 2`, and against it the handbook brick-wall
///   integral `in^2 ((f_H - f_L) + fc ln(f_H/f_L))` (handbook formula,
///   common practice) with `f_H = p`, whose 1/f term a single pole passes
///   exactly (to `(f_L/p)^2`): within 1 %;
/// - with the pair, over the core's own AC transfer from each input to
///   the output, integrated here directly (trapezoids in `ln f`, 200
///   points a decade, from `f_L` to 10^5 times the chain's corner), and
///   against the handbook brick-wall term with `f_H` the chain's corner:
///   within 1 %.
///
/// The part grows in proportion to the corner, the flicker share counts
/// it, and the search's bound on the noise (a candidate without its pair)
/// stays at or above the noise as reported.
#[test]
fn current_noise_corner_adds_the_handbook_one_over_f_part() {
    let rs = 1.0e6;
    let n = single_ended(0.0, 1.0, rs, (0.0, 3.0), (0.0, 5.0));
    let low = n.accuracy.noise_low.0;
    let (rf, rg) = (1.0, 1.0e6);
    let gain = 1.0 + rf / rg;
    let i_n = 10e-12;
    let design = || non_inverting("TA-INOISE", rf, rg, ground());
    for pair in [false, true] {
        let (_, white) = run(&n, &current_noise_stock(Some(""), pair), design());
        assert_eq!(white.noise.flicker_share, 0.0, "white current noise");
        let mut last = 0.0;
        for fc in [10.0, 100.0, 1000.0, 10_000.0] {
            let stock = current_noise_stock(Some(&fc.to_string()), pair);
            let (m, a) = run(&n, &stock, design());
            let part = a.noise.rms_v.powi(2) - white.noise.rms_v.powi(2);
            assert!(part > last, "the 1/f part grows with the corner: {part:e}");
            last = part;
            close(
                a.noise.flicker_share,
                part / a.noise.rms_v.powi(2),
                1e-6,
                "1/f share",
            );
            let scale = (i_n * rs * gain).powi(2) * fc;
            let built = m.built();
            match &built.filter {
                None => {
                    assert!(!pair, "a pair fits the test stock with capacitors");
                    let p = 100e6 / gain;
                    close(
                        part,
                        scale * 0.5 * (p / low).powi(2).ln_1p(),
                        1e-6,
                        "one pole",
                    );
                    close(part, scale * (p / low).ln(), 1e-2, "handbook, f_H = p");
                }
                Some(filter) => {
                    let corner = filter.report.corner_hz;
                    assert!(corner < 1e3, "the pair limits the band: {corner} Hz");
                    let amplifiers = spanfit::filter::amplifiers(&stock, built);
                    let mut solver = spanfit::mna_ac::AcSolver::new(&built.netlist, &amplifiers);
                    let mut weight = |f: f64| {
                        solver
                            .solve_adjoint(&built.netlist, built.out, f)
                            .expect("the chain solves");
                        built
                            .sections
                            .iter()
                            .map(|s| {
                                solver.node_transfer(s.plus).abs().powi(2)
                                    + solver.node_transfer(s.minus).abs().powi(2)
                            })
                            .sum::<f64>()
                    };
                    let high = corner * 1e5;
                    let count = ((high / low).log10() * 200.0).ceil() as usize + 1;
                    let grid = spanfit::mna_ac::log_frequencies(low, high, count);
                    // Trapezoids of |H|^2 in ln f: the integral of |H|^2 / f.
                    let mut direct = 0.0;
                    let mut previous = (grid[0], weight(grid[0]));
                    for &f in &grid[1..] {
                        let g = weight(f);
                        direct += 0.5 * (g + previous.1) * (f / previous.0).ln();
                        previous = (f, g);
                    }
                    let direct = i_n * i_n * fc * direct;
                    close(part, direct, 1e-2, "direct integral of the transfer");
                    close(
                        part,
                        scale * (corner / low).ln(),
                        1e-2,
                        "handbook, f_H = corner",
                    );
                }
            }
            // The search's bound: the candidate without its pair.
            let text = design().to_string();
            let parsed = parse_design(text.as_bytes(), "check.json", &stock)
                .expect("the test design parses");
            let bound = Model::new(&n, &stock, &parsed)
                .expect("the candidate builds")
                .noise_peak_v();
            assert!(
                bound >= m.noise_peak_v(),
                "the bound {bound:e} V is below the reported {:e} V",
                m.noise_peak_v()
            );
        }
    }
}

/// Without the column, with an empty cell and with 0, the current noise
/// is white and every figure is the same to the bit: the analysis of a
/// current-noise-dominated design (with and without its pair), its search
/// bound, and the demo design's whole analysis bundle (report, exports,
/// text) with the demo op-amps' `in_corner_hz` column left out and with it
/// present but empty.
#[test]
fn an_empty_current_noise_corner_changes_nothing() {
    let n = single_ended(0.0, 1.0, 1.0e6, (0.0, 3.0), (0.0, 5.0));
    let design = non_inverting("TA-INOISE", 1.0, 1.0e6, ground()).to_string();
    for pair in [false, true] {
        let figures = |corner: Option<&str>| {
            let stock = current_noise_stock(corner, pair);
            let parsed = parse_design(design.as_bytes(), "check.json", &stock)
                .expect("the test design parses");
            let (_, a) = analyze(&n, &stock, &parsed, 200, 1).expect("the test design analyses");
            let bound = Model::new(&n, &stock, &parsed)
                .expect("the candidate builds")
                .noise_peak_v();
            (a, bound.to_bits())
        };
        let absent = figures(None);
        assert!(absent.0.noise.rms_v > 0.0);
        assert_eq!(figures(Some("")), absent, "an empty cell");
        assert_eq!(figures(Some("0")), absent, "a zero corner");
    }
    let bundle = |files: &[StockFile]| {
        let b = spanfit::api::analyze_bundle(
            spanfit::demo::NEED_TOML.as_bytes(),
            "need.toml",
            files,
            include_str!("../../examples/demo-design.json").as_bytes(),
            "demo-design.json",
        )
        .expect("the demo design analyses");
        serde_json::to_string(&b).expect("the bundle serialises")
    };
    // The demo op-amps without the column, and with it but every cell
    // empty.
    let variant = |keep: bool| -> Vec<StockFile> {
        let mut files = spanfit::demo::stock_files();
        for f in files.iter_mut().filter(|f| f.name == "opamps.csv") {
            let text = String::from_utf8(f.bytes.clone()).expect("the demo table is text");
            let mut lines = text.lines().map(|l| l.split(',').collect::<Vec<_>>());
            let header = lines.next().expect("the demo table has a header");
            let at = header.iter().position(|c| *c == "in_corner_hz");
            let rows: Vec<String> = std::iter::once(header)
                .chain(lines)
                .enumerate()
                .map(|(i, mut cells)| {
                    if let Some(k) = at {
                        cells.remove(k);
                    }
                    let mut line = cells.join(",");
                    if keep {
                        line.push_str(if i == 0 { ",in_corner_hz" } else { "," });
                    }
                    line
                })
                .collect();
            f.bytes = (rows.join("\n") + "\n").into_bytes();
        }
        files
    };
    let (without, empty) = (variant(false), variant(true));
    let has_column = |files: &[StockFile]| {
        files
            .iter()
            .any(|f| f.name == "opamps.csv" && f.bytes.windows(12).any(|w| w == b"in_corner_hz"))
    };
    assert!(has_column(&empty) && !has_column(&without));
    let empty_stock = parse_stock(&empty).expect("the demo stock with the column parses");
    assert!(empty_stock.opamps.iter().all(|p| p.in_corner_hz == 0.0));
    assert_eq!(bundle(&empty), bundle(&without));
}

/// Quantisation is +/-0.5 LSB with `LSB = FS / 2^bits` (common practice):
/// 12 bits over 3 V gives 0.5/4096 of full scale.
#[test]
fn quantisation_is_half_an_lsb() {
    let n = single_ended(0.0, 0.1, 0.0, (0.0, 3.0), (0.0, 5.0));
    let (_, a) = run(
        &n,
        &test_stock(),
        non_inverting("TA-IDEAL", 29_000.0, 1_000.0, ground()),
    );
    close(
        a.quantisation_pct_fs,
        100.0 * 0.5 / 4096.0,
        1e-12,
        "quantisation",
    );
    close(n.lsb(), 3.0 / 4096.0, 1e-12, "LSB");
}

// ---------------------------------------------------------------------
// Monte Carlo against closed forms.

/// A need whose ideal transfer `Vout = 2 Vs - 2.5 V` is met exactly by a
/// non-inverting stage `Rf = Rg` with the reference at the bottom of Rg,
/// so the only errors are the op-amp and reference limits, the same at
/// both ends of the span and free of drift.
fn mc_case(amp: &str) -> (Need, Model, Analysis) {
    let n = single_ended(1.25, 2.5, 0.0, (0.0, 2.5), (0.0, 5.0));
    let design = non_inverting(
        amp,
        10_000.0,
        10_000.0,
        serde_json::json!({"kind": "direct", "source": "TR-MC"}),
    );
    let (m, a) = run(&n, &test_stock(), design);
    (n, m, a)
}

/// CDF of `S = sum a_i U_i`, `U_i` independent uniform on (-1, 1):
/// `F(t) = sum over signs e of (prod e_i) (t + sum e_i a_i)_+^n / (n! 2^n prod a_i)`
/// (the Irwin-Hall distribution generalised to unequal widths, i.e. the
/// repeated convolution of uniform densities; from memory, and checked
/// here against the n = 1 and equal-width cases).
fn uniform_sum_cdf(a: &[f64], t: f64) -> f64 {
    let n = a.len();
    let mut total = 0.0;
    for mask in 0..(1u32 << n) {
        let mut sign = 1.0;
        let mut shift = 0.0;
        for (i, ai) in a.iter().enumerate() {
            if mask & (1 << i) != 0 {
                sign = -sign;
                shift -= ai;
            } else {
                shift += ai;
            }
        }
        let x = (t + shift).max(0.0);
        total += sign * x.powi(n as i32);
    }
    let factorial: f64 = (1..=n).map(|k| k as f64).product();
    let denom = factorial * 2f64.powi(n as i32) * a.iter().product::<f64>();
    (total / denom).clamp(0.0, 1.0)
}

/// Wilson score interval (Wilson 1927) at `z` standard errors.
fn wilson(successes: f64, n: f64, z: f64) -> (f64, f64) {
    let p = successes / n;
    let denom = 1.0 + z * z / n;
    let centre = (p + z * z / (2.0 * n)) / denom;
    let half = z * (p * (1.0 - p) / n + z * z / (4.0 * n * n)).sqrt() / denom;
    (centre - half, centre + half)
}

#[test]
fn uniform_sum_cdf_matches_known_cases() {
    // One uniform on (-3, 3): F(t) = (t + 3)/6.
    close(uniform_sum_cdf(&[3.0], 1.2), 4.2 / 6.0, 1e-12, "n = 1");
    // Two equal uniforms: triangular on (-2, 2), F(1) = 1 - 1/8.
    close(uniform_sum_cdf(&[1.0, 1.0], 1.0), 0.875, 1e-12, "triangle");
    // Three equal uniforms (Irwin-Hall, shifted): F(0) = 1/2, F(-1) = 1/6
    // (Irwin-Hall CDF at 1 of 3 terms is 1/6).
    close(
        uniform_sum_cdf(&[1.0, 1.0, 1.0], 0.0),
        0.5,
        1e-12,
        "Irwin-Hall centre",
    );
    close(
        uniform_sum_cdf(&[1.0, 1.0, 1.0], -1.0),
        1.0 / 6.0,
        1e-12,
        "Irwin-Hall tail",
    );
}

/// The MC case's lines are the closed forms: Vos 1 mV x noise gain 2,
/// Ib 100 nA x Rf 10 kohm, and 0.12 % of 2.5 V x Rf/Rg (handbook
/// formulas, common practice).
#[test]
fn monte_carlo_case_lines_match_closed_forms() {
    let (_, _, a) = mc_case("TA-MC");
    let fs = 2.5;
    for (which, volts) in [
        (Contributor::OffsetVoltage, 2e-3),
        (Contributor::BiasCurrent, 1e-3),
        (Contributor::ReferenceInitial, 3e-3),
    ] {
        for v in line(&a, which) {
            close(v, 100.0 * volts / fs, 1e-6, which.label());
        }
    }
    assert!(line(&a, Contributor::NominalRounding)[1].abs() < 1e-6);
}

/// The spread of a sum of independent uniforms of half-widths `L_i` has
/// `sigma = sqrt(sum L_i^2 / 3)` (variance of a uniform, common practice),
/// and its yield is the generalised Irwin-Hall CDF.
#[test]
fn monte_carlo_sigma_and_yield_match_sum_of_uniforms() {
    let (_, m, a) = mc_case("TA-MC");
    let random: Vec<f64> = a
        .budget
        .iter()
        .filter(|b| !b.systematic && b.line != Contributor::Noise)
        .map(|b| b.pct_fs)
        .collect();
    let sigma_closed = (random.iter().map(|l| l * l / 3.0).sum::<f64>()).sqrt();
    let builds = 100_000u64;
    let y = m.monte_carlo(builds, 11, 1.0);
    // Standard error of a sample sigma is about sigma / sqrt(2N) (0.2 %).
    close(y.sigma_pct_fs, sigma_closed, 0.02, "MC sigma");

    // Half-widths in mV: 2, 1 and 3.
    let widths = [2.0, 1.0, 3.0];
    for limit_mv in [1.0, 2.5, 4.0, 5.5] {
        let exact = uniform_sum_cdf(&widths, limit_mv) - uniform_sum_cdf(&widths, -limit_mv);
        let limit_v = limit_mv * 1e-3 + m.noise_peak_v();
        let y = m.monte_carlo(builds, 11, limit_v);
        let pass = (y.yield_pct / 100.0 * builds as f64).round();
        // The reported interval is Wilson's at 95 %.
        let (lo, hi) = wilson(pass, builds as f64, 1.959_964);
        close(y.confidence_pct[0], 100.0 * lo, 1e-9, "Wilson low");
        close(y.confidence_pct[1], 100.0 * hi, 1e-9, "Wilson high");
        // The closed form lies inside a 4-standard-error Wilson interval.
        let (lo, hi) = wilson(pass, builds as f64, 4.0);
        assert!(
            exact >= lo && exact <= hi,
            "limit {limit_mv} mV: MC yield {} %, closed form {} %",
            y.yield_pct,
            100.0 * exact
        );
    }
}

/// Bounds: at the first-order worst case every build passes; at zero no
/// build does (the noise peak alone takes the limit).
#[test]
fn monte_carlo_yield_bounds() {
    for (n, m) in [
        {
            let (n, m, _) = mc_case("TA-MC");
            (n, m)
        },
        {
            let n =
                parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml").expect("demo need");
            let stock = demo_stock();
            let d = parse_design(
                include_bytes!("../../examples/demo-design.json"),
                "demo-design.json",
                &stock,
            )
            .expect("demo design");
            let (m, _) = analyze(&n, &stock, &d, 0, 1).expect("demo analysis");
            (n, m)
        },
    ] {
        let (worst_pct, _, _) = m.quick_totals();
        let worst_v = worst_pct / 100.0 * n.full_scale();
        let all = m.monte_carlo(20_000, 3, worst_v * (1.0 + 1e-12));
        assert_eq!(all.yield_pct, 100.0, "yield at the worst case");
        let none = m.monte_carlo(20_000, 3, 0.0);
        assert_eq!(none.yield_pct, 0.0, "yield at zero");
        assert_eq!(all.histogram.counts.iter().sum::<u64>(), 20_000);
    }
}

/// One uniform term of half-width 3 mV: the fraction within L is L / 3 mV
/// (uniform distribution), inside the reported 95 % Wilson interval.
#[test]
fn monte_carlo_single_uniform_term_yield_is_linear() {
    let (_, m, a) = mc_case("TA-IDEAL");
    close(
        line(&a, Contributor::ReferenceInitial)[1],
        100.0 * 3e-3 / 2.5,
        1e-6,
        "reference line",
    );
    for limit_mv in [0.6, 1.5, 2.7] {
        let y = m.monte_carlo(100_000, 5, limit_mv * 1e-3 + m.noise_peak_v());
        let exact = 100.0 * limit_mv / 3.0;
        assert!(
            exact >= y.confidence_pct[0] && exact <= y.confidence_pct[1],
            "limit {limit_mv} mV: MC {} % in {:?}, closed form {exact} %",
            y.yield_pct,
            y.confidence_pct
        );
    }
}

/// Same seed, same builds; another seed, other builds.
#[test]
fn monte_carlo_is_reproducible_by_seed() {
    let (_, m, _) = mc_case("TA-MC");
    let a = m.monte_carlo(10_000, 42, 4e-3);
    let b = m.monte_carlo(10_000, 42, 4e-3);
    assert_eq!(a, b);
    let c = m.monte_carlo(10_000, 43, 4e-3);
    assert_ne!(a.sigma_pct_fs, c.sigma_pct_fs);
    assert_ne!(a.histogram.counts, c.histogram.counts);
}

// ---------------------------------------------------------------------
// Worst case confirmed by corner evaluation (docs/error-budget.md).

#[test]
fn demo_worst_case_covers_corner_check_and_rss() {
    let n = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml").expect("demo need");
    let stock = demo_stock();
    let d = parse_design(
        include_bytes!("../../examples/demo-design.json"),
        "demo-design.json",
        &stock,
    )
    .expect("demo design");
    let (_, a) = analyze(&n, &stock, &d, 0, 1).expect("demo analysis");
    assert!(a.worst_case_pct_fs >= a.corner_check_pct_fs, "{a:#?}");
    assert!(a.worst_case_pct_fs >= a.rss_pct_fs, "{a:#?}");
    assert!(a.worst_case_pct_fs >= a.first_order_pct_fs);
    // The corner solved exactly agrees with the linear sum to first order:
    // the second-order terms of percent-level deviations are small.
    close(
        a.corner_check_pct_fs,
        a.first_order_pct_fs,
        0.02,
        "corner vs first order",
    );
    assert!(a.rss_pct_fs > 0.0 && a.worst_case_pct_fs.is_finite());
}

// ---------------------------------------------------------------------
// Monte Carlo over temperature against an independent sampler.

/// A small generator of its own (splitmix64, Vigna's published mixer,
/// written from memory), so the sampler shares no code with the analysis.
struct SamplerRng(u64);

impl SamplerRng {
    /// Uniform in [-1, 1).
    fn symmetric(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        2.0 * ((z >> 11) as f64 / (1u64 << 53) as f64) - 1.0
    }
}

/// A gain-of-ten stage whose two resistors are 0.5 % parts with a
/// 100 ppm/degC TCR (drift comparable to tolerance, so the sign of the
/// drift at each end of the temperature range decides which end binds),
/// with the need's temperature range from `temp_min` to `temp_max` degC.
fn thermal_case(temp_min: f64, temp_max: f64) -> (Need, Model) {
    let n = need(&format!(
        "[sensor]\nsignal_low_v = 0\nsignal_high_v = 0.25\nsource_ohms = 0\n\
         [adc]\nlow_v = 0\nhigh_v = 2.5\nbits = 12\nmargin_pct = 0\n\
         [supply]\npositive_v = 5\n\
         [accuracy]\nmax_error_pct_fs = 1\ntemp_min_c = {temp_min}\ntemp_max_c = {temp_max}\n\
         calibration = \"none\"\nbandwidth_hz = 10\n"
    ));
    let part =
        |ohms: f64| serde_json::json!({"ohms": ohms, "tolerance_pct": 0.5, "tcr_ppm_per_c": 100});
    let design = serde_json::json!({"stages": [{
        "shape": "non-inverting", "amplifier": "TA-IDEAL",
        "resistors": {"rf": part(9_000.0), "rg": part(1_000.0)},
        "offset": ground(),
    }]});
    let (m, _) = run(&n, &test_stock(), design);
    (n, m)
}

/// The standard deviation, % FS, of the signed error a build shows at its
/// worst of both span ends and both ends of the temperature range, by
/// brute force: every part drawn uniformly inside its tolerance and
/// inside its TCR limit, its drift at temperature T taken as
/// `TCR (T - 25 degC)` (TCR is specified against 25 degC; common
/// practice), and each build solved on the full netlist
/// ([`Model::error_at`]) at the cold and at the hot end.
fn sampled_sigma_pct_fs(n: &Need, m: &Model, builds: usize, seed: u64) -> f64 {
    let parameters = m.parameter_count();
    let excursions = [n.accuracy.temp_min.0 - 25.0, n.accuracy.temp_max.0 - 25.0];
    // The model's drift range is the TCR limit at the larger excursion.
    let largest = excursions[0].abs().max(excursions[1].abs());
    let mut rng = SamplerRng(seed);
    let (mut sum, mut sum_squares) = (0.0, 0.0);
    for _ in 0..builds {
        let initial: Vec<f64> = (0..parameters).map(|_| rng.symmetric()).collect();
        let tcr: Vec<f64> = (0..parameters).map(|_| rng.symmetric()).collect();
        let mut worst = 0.0f64;
        for excursion in excursions {
            let drift: Vec<f64> = tcr.iter().map(|t| t * excursion / largest).collect();
            let error = m.error_at(&initial, &drift).expect("the build solves");
            for e in error {
                if e.abs() > worst.abs() {
                    worst = e;
                }
            }
        }
        sum += worst;
        sum_squares += worst * worst;
    }
    let count = builds as f64;
    let mean = sum / count;
    let sigma = (sum_squares / count - mean * mean).sqrt();
    100.0 * sigma / n.full_scale()
}

/// With the cold excursion the larger (-40..+50 degC) or the hot one
/// (-10..+85 degC), the Monte Carlo sigma matches an independent
/// brute-force sampler within 3 % (the standard error of each estimate
/// is about 0.5 %). A drift taken with the same sign at both ends of the
/// range would make the spread, and the yield loss, too small.
#[test]
fn monte_carlo_temperature_ends_match_independent_sampler() {
    for (temp_min, temp_max) in [(-40.0, 50.0), (-10.0, 85.0)] {
        let (n, m) = thermal_case(temp_min, temp_max);
        let sampled = sampled_sigma_pct_fs(&n, &m, 20_000, 2024);
        let y = m.monte_carlo(200_000, 9, 1.0);
        assert!(
            (y.sigma_pct_fs - sampled).abs() <= 0.03 * sampled,
            "{temp_min}..{temp_max} degC: Monte Carlo sigma {} % FS, independent sampler {sampled} % FS",
            y.sigma_pct_fs
        );
    }
}

/// The same check on the solved demo design (an invented scenario): its
/// range -10..+50 degC has the cold excursion the larger, its offset is
/// trimmed at 25 degC, and every kind of part drifts (resistors, op-amp
/// offset, reference) while the supply tolerance stays untrimmed.
#[test]
fn monte_carlo_of_demo_design_matches_independent_sampler() {
    let n = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml").expect("demo need");
    let stock = demo_stock();
    let d = parse_design(
        include_bytes!("../../examples/demo-solved-design.json"),
        "demo-solved-design.json",
        &stock,
    )
    .expect("demo design");
    let (m, _) = analyze(&n, &stock, &d, 0, 1).expect("demo analysis");
    let sampled = sampled_sigma_pct_fs(&n, &m, 20_000, 2024);
    let y = m.monte_carlo(200_000, 9, 1.0);
    assert!(
        (y.sigma_pct_fs - sampled).abs() <= 0.03 * sampled,
        "demo: Monte Carlo sigma {} % FS, independent sampler {sampled} % FS",
        y.sigma_pct_fs
    );
}

// ---------------------------------------------------------------------
// Parts over temperature and load (docs/stock.md, docs/error-budget.md).

/// PSRR line = positive rail x tolerance / PSRR x noise gain: a 60 dB part
/// (1000) on a 5 V rail of 5 % tolerance sees 0.25 V / 1000 at its input,
/// amplified by `1 + Rf/Rg` (handbook supply-rejection error, common
/// practice).
#[test]
fn psrr_line_is_supply_tolerance_over_psrr_times_noise_gain() {
    let fs = 3.0;
    let n = single_ended(0.0, 0.1, 0.0, (0.0, fs), (0.0, 5.0));
    let (rf, rg) = (29_000.0, 1_000.0);
    let (_, a) = run(
        &n,
        &test_stock(),
        non_inverting("TA-PSRR", rf, rg, ground()),
    );
    let want = 100.0 * (5.0 * 0.05 / 1000.0) * (1.0 + rf / rg) / fs;
    for v in line(&a, Contributor::Psrr) {
        close(v, want, 1e-8, "PSRR line");
    }
}

/// A need over `temp_min..temp_max` with the given calibration, 0..0.1 V
/// into 0..3 V, 5 V single supply.
fn thermal_need(temp_min: f64, temp_max: f64, calibration: &str) -> Need {
    need(&format!(
        "[sensor]\nsignal_low_v = 0\nsignal_high_v = 0.1\nsource_ohms = 0\n\
         [adc]\nlow_v = 0\nhigh_v = 3\nbits = 12\nmargin_pct = 0\n\
         [supply]\npositive_v = 5\n\
         [accuracy]\nmax_error_pct_fs = 1\ntemp_min_c = {temp_min}\ntemp_max_c = {temp_max}\n\
         calibration = \"{calibration}\"\nbandwidth_hz = 10\n"
    ))
}

/// A FET-input part whose bias current doubles every 10 degC: at 45 degC
/// it is four times its 25 degC limit. Untrimmed, the bias line is that
/// grown limit through Rf; trimmed at 25 degC, only the growth is left,
/// three times the limit (exponential doubling, common practice).
#[test]
fn fet_bias_current_grows_with_temperature() {
    let fs = 3.0;
    let (rf, rg) = (9_000.0, 1_000.0);
    let ib = 10e-9;
    for (calibration, factor) in [("none", 4.0), ("two-point", 3.0)] {
        let n = thermal_need(25.0, 45.0, calibration);
        let (_, a) = run(&n, &test_stock(), non_inverting("TA-FET", rf, rg, ground()));
        let want = 100.0 * factor * ib * rf / fs;
        for v in line(&a, Contributor::BiasCurrent) {
            close(v, want, 1e-8, &format!("FET bias line, {calibration}"));
        }
        // The same part without a doubling interval: the limit holds over
        // the whole range (TA-IB).
        let (_, a) = run(&n, &test_stock(), non_inverting("TA-IB", rf, rg, ground()));
        for v in line(&a, Contributor::BiasCurrent) {
            close(v, 100.0 * ib * rf / fs, 1e-8, "flat bias line");
        }
    }
}

/// Reference load regulation: the reference drives the bottom of Rg of a
/// non-inverting stage whose - input follows the sensor, so it sources
/// `(2.5 V - Vs)/Rg`: at the low end (Vs = 1.25 V) 1.25 V / 10 kohm =
/// 0.125 mA, at the high end nothing. Its output moves
/// by 2.5 V x 100 ppm/mA x 0.125 mA = 31.25 uV, times the stage's
/// `-Rf/Rg = -1` (Ohm's law, common practice). The 0.125 mA is over the
/// part's 0.1 mA limit, so the reference-load check fails.
#[test]
fn reference_load_line_and_check() {
    let n = single_ended(1.25, 2.5, 0.0, (0.0, 2.5), (0.0, 5.0));
    let design = non_inverting(
        "TA-IDEAL",
        10_000.0,
        10_000.0,
        serde_json::json!({"kind": "direct", "source": "TR-LOAD"}),
    );
    let (_, a) = run(&n, &test_stock(), design);
    let at = line(&a, Contributor::ReferenceLoad);
    close(at[0], 100.0 * 31.25e-6 / 2.5, 1e-8, "load line, low end");
    assert!(at[1].abs() < 1e-12, "no load at the high end: {at:?}");
    let check = a
        .findings
        .iter()
        .find(|f| f.check == "reference load")
        .expect("a reference-load finding");
    assert!(!check.ok, "{}", check.detail);
    assert!(check.detail.contains("0.1250 mA"), "{}", check.detail);
    assert!(!a.feasible);

    // The same network on the exact TR-2V5 (no regulation, 100 mA limit).
    let design = non_inverting(
        "TA-IDEAL",
        10_000.0,
        10_000.0,
        serde_json::json!({"kind": "direct", "source": "TR-2V5"}),
    );
    let (_, a) = run(&n, &test_stock(), design);
    assert_eq!(line(&a, Contributor::ReferenceLoad), [0.0, 0.0]);
    let check = a
        .findings
        .iter()
        .find(|f| f.check == "reference load")
        .expect("a reference-load finding");
    assert!(check.ok, "{}", check.detail);
}

/// The share of Monte Carlo builds inside the RSS total: the MC case's
/// three uniform terms of 2, 1 and 3 mV have an RSS of sqrt(14) mV, and the
/// share of their sum inside it is the generalised Irwin-Hall CDF there.
#[test]
fn rss_coverage_matches_sum_of_uniforms() {
    let (_, m, a) = mc_case("TA-MC");
    let rss_mv = a.rss_pct_fs / 100.0 * 2.5 * 1e3;
    // The RSS total holds the noise peak in its root sum of squares; the
    // three bounded lines are 2, 1 and 3 mV. The droop is systematic.
    let noise_mv = m.noise_peak_v() * 1e3;
    let droop_mv = m.droop_v() * 1e3;
    close(
        ((rss_mv - droop_mv).powi(2) - noise_mv * noise_mv).sqrt(),
        14f64.sqrt(),
        1e-6,
        "RSS of the MC case",
    );
    let builds = 100_000u64;
    let y = m.monte_carlo(builds, 11, 1.0);
    let widths = [2.0, 1.0, 3.0];
    // A build is inside when its drawn error plus the noise peak and the
    // droop it carries is inside the RSS total.
    let inside_mv = rss_mv - noise_mv - droop_mv;
    let exact = uniform_sum_cdf(&widths, inside_mv) - uniform_sum_cdf(&widths, -inside_mv);
    let pass = (y.rss_coverage_pct / 100.0 * builds as f64).round();
    let (lo, hi) = wilson(pass, builds as f64, 4.0);
    assert!(
        exact >= lo && exact <= hi,
        "RSS coverage {} %, closed form {} %",
        y.rss_coverage_pct,
        100.0 * exact
    );
    // Well under every build: an RSS of limits is not a worst case.
    assert!(y.rss_coverage_pct < 99.0, "{}", y.rss_coverage_pct);
}

/// A design judged on the rss basis whose Monte Carlo yield is under the
/// need's yield_pct carries a warning; on the worst-case basis it does not.
#[test]
fn rss_basis_below_yield_is_flagged() {
    let n = |basis: &str| {
        need(&format!(
            "[sensor]\nsignal_low_v = 1.25\nsignal_high_v = 2.5\nsource_ohms = 0\n\
             [adc]\nlow_v = 0\nhigh_v = 2.5\nbits = 12\nmargin_pct = 0\n\
             [supply]\npositive_v = 5\n\
             [accuracy]\nmax_error_pct_fs = 0.16\nbasis = \"{basis}\"\nyield_pct = 99\n\
             temp_min_c = 27\ntemp_max_c = 27\nbandwidth_hz = 10\n"
        ))
    };
    let design = non_inverting(
        "TA-MC",
        10_000.0,
        10_000.0,
        serde_json::json!({"kind": "direct", "source": "TR-MC"}),
    );
    let text = design.to_string();
    let stock = test_stock();
    let d = parse_design(text.as_bytes(), "check.json", &stock).expect("design");
    let rss_need = n("rss");
    let (_, a) = analyze(&rss_need, &stock, &d, 20_000, 1).expect("analysis");
    let y = a.yield_result.as_ref().expect("Monte Carlo ran");
    assert!(a.rss_pct_fs <= 0.16, "RSS {}", a.rss_pct_fs);
    assert!(y.yield_pct < 99.0, "yield {}", y.yield_pct);
    let warnings = a.warnings(&rss_need);
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert!(warnings[0].contains("rss basis"), "{}", warnings[0]);
    let worst_need = n("worst-case");
    let (_, a) = analyze(&worst_need, &stock, &d, 20_000, 1).expect("analysis");
    assert!(a.warnings(&worst_need).is_empty());
}
