//! A bridge excited from the supply, read by an ADC referenced to the same
//! supply (`sensor.excitation = "supply"`, `supply.ratiometric = true`).
//!
//! Closed form (common practice): every source of the front end that scales
//! with the rail (the bridge's signal and common mode, an offset divider off
//! the rail) makes the output scale with it, `Vout(1 + d) = (1 + d) Vout`,
//! and a ratiometric ADC reads `Vout / (1 + d)`: the reading does not depend
//! on the rail. An offset `B_ref` set by a fixed reference does not scale,
//! so the reading moves by `B_ref (1 / (1 + d) - 1)`, to first order
//! `-B_ref d`, and the supply-tolerance line is `|B_ref| x tolerance`.
//!
//! The cases are invented: a 0 to 50 mV bridge with its common mode at half
//! the 5 V rail, one difference stage of gain 90 (resistors exact, so no
//! mismatch passes the common mode), its REF pin at 0.25 V from a buffered
//! divider off the rail or off the demo stock's invented 1.25 V reference,
//! into a 0 to 5 V ADC.

use spanfit::analysis::{analyze, Analysis, Contributor, Model};
use spanfit::design::{parse_design, Design};
use spanfit::need::{parse_need, Need};
use spanfit::stock::{parse_stock, Stock};

/// Supply tolerance of the cases, %.
const TOLERANCE_PCT: f64 = 5.0;
/// The REF pin voltage both offset networks give, volts.
const REF_PIN_V: f64 = 0.25;
/// The ADC full scale, volts.
const FULL_SCALE_V: f64 = 5.0;

fn need(excitation: &str, ratiometric: bool) -> Need {
    let text = format!(
        "[sensor]\nlabel = \"invented bridge on the rail\"\nsignal_low_v = 0\nsignal_high_v = 0.05\n\
         output = \"differential\"\ncommon_mode_v = 2.5\nexcitation = \"{excitation}\"\n\
         [adc]\nlow_v = 0\nhigh_v = {FULL_SCALE_V}\nbits = 16\nmargin_pct = 5\n\
         [supply]\npositive_v = 5\ntolerance_pct = {TOLERANCE_PCT}\nratiometric = {ratiometric}\n\
         [accuracy]\nmax_error_pct_fs = 5\ncalibration = \"none\"\ntemp_min_c = 25\ntemp_max_c = 25\n"
    );
    parse_need(text.as_bytes(), "bridge.toml").unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn stock() -> Stock {
    parse_stock(&spanfit::demo::stock_files()).unwrap_or_else(|e| panic!("demo stock: {e}"))
}

/// An exact resistor (0 % tolerance, 0 ppm/degC), so only the supply moves.
fn exact(ohms: f64) -> serde_json::Value {
    serde_json::json!({"ohms": ohms, "tolerance_pct": 0.0, "tcr_ppm_per_c": 0.0})
}

/// The difference stage of gain 90 with its REF pin at 0.25 V from a
/// buffered divider off `source` (`"supply"`: 5 V x 1k / 20k; `"VR-125"`:
/// 1.25 V x 1k / 5k).
fn design(stock: &Stock, source: &str) -> Design {
    let top = if source == "supply" {
        19_000.0
    } else {
        4_000.0
    };
    let json = serde_json::json!({"stages": [{
        "shape": "difference", "amplifier": "OA-ZD2",
        "resistors": {"r1": exact(1000.0), "r2": exact(90_000.0),
                      "r3": exact(1000.0), "r4": exact(90_000.0)},
        "offset": {"kind": "divider", "source": source, "top": exact(top),
                   "bottom": exact(1000.0), "buffered": true},
    }]})
    .to_string();
    parse_design(json.as_bytes(), "bridge.json", stock).unwrap_or_else(|e| panic!("{e}\n{json}"))
}

fn run(excitation: &str, ratiometric: bool, source: &str) -> (Model, Analysis) {
    let stock = stock();
    analyze(
        &need(excitation, ratiometric),
        &stock,
        &design(&stock, source),
        0,
        1,
    )
    .unwrap_or_else(|e| panic!("analysis failed: {e}"))
}

/// The supply-tolerance line, % FS, the larger of its two ends.
fn supply_line(a: &Analysis) -> f64 {
    a.budget
        .iter()
        .find(|b| b.line == Contributor::SupplyTolerance)
        .map(|b| b.at_ends_pct_fs[0].abs().max(b.at_ends_pct_fs[1].abs()))
        .unwrap_or(0.0)
}

/// The exact error (volts, each end) with only the supply moved to `side`
/// of its range (the supply is the model's last parameter) and every other
/// parameter at nominal.
fn with_supply_at(model: &Model, side: f64) -> [f64; 2] {
    let n = model.parameter_count();
    let mut initial = vec![0.0; n];
    initial[n - 1] = side;
    model
        .error_at(&initial, &vec![0.0; n])
        .unwrap_or_else(|e| panic!("corner does not solve: {e}"))
}

/// Offset from the rail, bridge on the rail, ratiometric ADC: the supply
/// line is below 1 % of the same design read by a fixed-reference ADC with
/// an independently excited bridge (where it is `0.25 V x 5 %`), and the
/// full netlist at either end of the rail's range reads what it reads at
/// nominal.
#[test]
fn supply_tolerance_cancels_when_everything_follows_the_rail() {
    let (_, plain) = run("independent", false, "supply");
    let (model, ratiometric) = run("supply", true, "supply");
    let plain_line = supply_line(&plain);
    // The non-ratiometric line is the divider's share of the offset times
    // the tolerance (closed form above).
    let expected = 100.0 * REF_PIN_V * TOLERANCE_PCT / 100.0 / FULL_SCALE_V;
    assert!(
        (plain_line - expected).abs() <= 1e-3 * expected,
        "non-ratiometric supply line {plain_line} % FS, closed form {expected} % FS"
    );
    let line = supply_line(&ratiometric);
    assert!(
        line < 0.01 * plain_line,
        "ratiometric supply line {line} % FS is not below 1 % of {plain_line} % FS"
    );
    let nominal = with_supply_at(&model, 0.0);
    for side in [-1.0, 1.0] {
        let moved = with_supply_at(&model, side);
        for end in 0..2 {
            assert!(
                (moved[end] - nominal[end]).abs() <= 1e-9,
                "rail at {side:+} x tolerance, end {end}: error {} V against {} V at nominal",
                moved[end],
                nominal[end]
            );
        }
    }
    // Without the sensor following the rail, the ratiometric ADC alone
    // does not cancel: the signal stays put while the scale moves.
    let (_, adc_only) = run("independent", true, "supply");
    assert!(
        supply_line(&adc_only) > 10.0 * line.max(1e-9),
        "a bridge on its own supply read ratiometrically still shows the rail: {} % FS",
        supply_line(&adc_only)
    );
}

/// Offset from a fixed reference: the residue is `B_ref x tolerance` to
/// first order and `B_ref (1 / (1 + d) - 1)` exactly on the full netlist.
#[test]
fn a_fixed_reference_in_the_offset_path_leaves_its_residue() {
    let (model, analysis) = run("supply", true, "VR-125");
    let line = supply_line(&analysis);
    let expected = 100.0 * REF_PIN_V * TOLERANCE_PCT / 100.0 / FULL_SCALE_V;
    assert!(line > 0.0, "no residue from the fixed reference");
    assert!(
        (line - expected).abs() <= 1e-3 * expected,
        "supply line {line} % FS, closed form {expected} % FS"
    );
    let nominal = with_supply_at(&model, 0.0);
    for side in [-1.0, 1.0] {
        let d = side * TOLERANCE_PCT / 100.0;
        let residue = REF_PIN_V * (1.0 / (1.0 + d) - 1.0);
        let moved = with_supply_at(&model, side);
        for end in 0..2 {
            let shift = moved[end] - nominal[end];
            assert!(
                (shift - residue).abs() <= 1e-4 * residue.abs(),
                "rail at d = {d}: end {end}: reading moved {shift} V, closed form {residue} V"
            );
        }
    }
}
