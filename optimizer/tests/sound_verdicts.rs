//! "Meets the need" must hold at every extreme, untrimmed.
//!
//! The cases here are invented scenarios (no real sensor or part): a
//! high-impedance glass-type electrode, +/-400 mV through 100 Mohm, on a
//! split +/-5 V supply, read by an invented bipolar +/-1.5 V ADC with a
//! two-point calibration. An op-amp whose bias current is 100 nA puts
//! `100 nA x 100 Mohm = 10 V` (Ohm's law) on its + input: the circuit
//! saturates, and no trim can undo that. The same design with a 1 pA part
//! works. The op-amp rows are invented test parts (`TV-*`).

#![allow(clippy::disallowed_methods, clippy::disallowed_types)]

use spanfit::analysis::{analyze, Analysis, Check, Contributor};
use spanfit::design::parse_design;
use spanfit::need::{parse_need, Need};
use spanfit::search::{solve, Progress, SearchMode, SolveControl};
use spanfit::stock::{parse_stock, Stock, StockFile};
use std::time::Instant;

const RESISTORS: &str =
    "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
TV-R1,E96,10,1000000,0.1,25,0603,0.01,\n";

/// `TV-BIG`: 100 nA bias current. `TV-FET`: 1 pA. Otherwise alike: rail
/// to rail in and out, 20 V supply span.
const OPAMPS: &str = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
TV-BIG,1,2.7,20,0.1,0.1,0.1,0.1,100,1,100,10,110,1,20,0.1,100,0.5,100\n\
TV-FET,1,2.7,20,0.1,0.1,0.1,0.1,100,1,0.001,0.001,110,1,20,0.0001,100,0.5,100\n";

/// `TV-REF`: an invented 2.5 V reference with a 20 ppm/degC tempco only.
const REFERENCES: &str =
    "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n\
TV-REF,2.5,0,20,0.2,0,1,100\n";

fn stock(opamps: &str) -> Stock {
    let file = |name: &str, text: &str| StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    };
    parse_stock(&[
        file("resistors.csv", RESISTORS),
        file("opamps.csv", opamps),
        file("references.csv", REFERENCES),
    ])
    .unwrap_or_else(|e| panic!("the test stock does not parse: {e}"))
}

/// The electrode need (invented scenario).
fn electrode_need() -> Need {
    let toml = "[sensor]\nlabel = \"invented glass-type electrode\"\n\
        signal_low_v = -0.4\nsignal_high_v = 0.4\nsource_ohms = 100000000\n\
        [adc]\nlow_v = -1.5\nhigh_v = 1.5\nbits = 12\nmargin_pct = 2\n\
        [supply]\npositive_v = 5\nnegative_v = -5\ntolerance_pct = 5\n\
        [accuracy]\nmax_error_pct_fs = 1\ncalibration = \"two-point\"\n\
        temp_min_c = 0\ntemp_max_c = 50\nbandwidth_hz = 1\n\
        [search]\nmax_stages = 1\ntopologies = [\"non-inverting\"]\n\
        resistor_series = [\"E96\"]\ntime_limit_ms = 4000\n";
    parse_need(toml.as_bytes(), "electrode.toml")
        .unwrap_or_else(|e| panic!("the electrode need does not parse: {e}"))
}

/// A non-inverting stage of gain 1 + 2.6k/1k = 3.6 (96 % of 3 V over 0.8 V).
fn electrode_design(stock: &Stock, amplifier: &str) -> spanfit::design::Design {
    let json = serde_json::json!({"stages": [{
        "shape": "non-inverting", "amplifier": amplifier,
        "resistors": {
            "rf": {"ohms": 2600.0, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25},
            "rg": {"ohms": 1000.0, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25}
        },
    }]})
    .to_string();
    parse_design(json.as_bytes(), "electrode.json", stock)
        .unwrap_or_else(|e| panic!("the electrode design does not parse: {e}"))
}

fn analyse(amplifier: &str) -> Analysis {
    let need = electrode_need();
    let stock = stock(OPAMPS);
    let design = electrode_design(&stock, amplifier);
    analyze(&need, &stock, &design, 0, 1)
        .unwrap_or_else(|e| panic!("the electrode design does not analyse: {e}"))
        .1
}

fn finding_ok(a: &Analysis, check: Check) -> bool {
    a.findings.iter().filter(|f| f.kind == check).all(|f| f.ok)
}

/// 100 nA through 100 Mohm is 10 V at the + input (Ohm's law): beyond
/// the +/-5 V rails, so the common-mode check fails before any trim and
/// the design is not met, whatever its calibrated error.
#[test]
fn saturated_electrode_front_end_is_not_met() {
    let a = analyse("TV-BIG");
    assert!(
        !finding_ok(&a, Check::CommonMode),
        "the + input reaches 10 V but the common-mode check passed: {:?}",
        a.findings
    );
    assert!(!finding_ok(&a, Check::OutputSwing));
    assert!(!finding_ok(&a, Check::AdcWindow));
    assert!(!a.feasible && !a.meets_target);
    // The bias current still drifts after the two-point trim: its line is
    // not zero (100 nA x 100 Mohm x gain 3.6 is far beyond 1 % of 3 V).
    let bias = a
        .budget
        .iter()
        .find(|b| b.line == Contributor::BiasCurrent)
        .map(|b| b.at_ends_pct_fs[0].abs().max(b.at_ends_pct_fs[1].abs()))
        .unwrap_or(0.0);
    assert!(bias > 100.0, "bias current line {bias} % FS");
}

/// The same stage with a 1 pA part passes every check (the checks above
/// do not fail for every design of this need).
#[test]
fn electrode_front_end_with_low_bias_part_is_met() {
    let a = analyse("TV-FET");
    assert!(
        a.feasible,
        "{:?}",
        a.findings.iter().filter(|f| !f.ok).collect::<Vec<_>>()
    );
    assert!(a.meets_target, "worst case {} % FS", a.worst_case_pct_fs);
}

/// The search, given only the 100 nA part, returns no design that it calls
/// met.
#[test]
fn search_with_only_the_high_bias_part_meets_nothing() {
    let need = electrode_need();
    let only_big = OPAMPS
        .lines()
        .filter(|l| !l.starts_with("TV-FET"))
        .collect::<Vec<_>>()
        .join("\n")
        + "\n";
    let stock = stock(&only_big);
    let t0 = Instant::now();
    let clock = move || t0.elapsed().as_secs_f64() * 1000.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control)
        .unwrap_or_else(|e| panic!("solve failed: {e}"));
    for c in outcome.best.iter().chain(outcome.alternatives.iter()) {
        assert!(
            !c.analysis.meets_target,
            "a design on the 100 nA part is called met: worst case {} % FS",
            c.analysis.worst_case_pct_fs
        );
    }
}

// ---------------------------------------------------------------------
// The worst case is a maximum over corners.

/// Invented test op-amp with offset, bias and offset current.
const CORNER_OPAMPS: &str = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
TV-C,1,2.7,20,0,0,0,0,500,5,20,5,100,1,20,0.1,90,0.5,100\n";

/// A small seeded generator for drawing cases and vertices (splitmix64,
/// from its published description).
struct Draw(u64);

impl Draw {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn between(&mut self, low: f64, high: f64) -> f64 {
        low + (high - low) * self.next()
    }
    fn sign(&mut self) -> f64 {
        if self.next() < 0.5 {
            -1.0
        } else {
            1.0
        }
    }
}

/// The largest exact error (volts, noise peak added) over the corners a
/// search of its own finds: greedy single flips from all-high, all-low
/// and random starts, and random vertices.
fn searched_worst(model: &spanfit::analysis::Model, draw: &mut Draw) -> f64 {
    let p = model.parameter_count();
    let eval = |x: &[f64], y: &[f64]| -> f64 {
        let e = model
            .error_at(x, y)
            .unwrap_or_else(|e| panic!("corner does not solve: {e}"));
        e[0].abs().max(e[1].abs())
    };
    let mut worst = 0.0f64;
    let mut starts: Vec<(Vec<f64>, Vec<f64>)> = vec![(vec![1.0; p], vec![1.0; p])];
    starts.push((vec![-1.0; p], vec![-1.0; p]));
    for _ in 0..3 {
        let x = (0..p).map(|_| draw.sign()).collect();
        let y = (0..p).map(|_| draw.sign()).collect();
        starts.push((x, y));
    }
    for (mut x, mut y) in starts {
        let mut best = eval(&x, &y);
        for _pass in 0..4 {
            let mut improved = false;
            for k in 0..2 * p {
                let (v, i) = if k < p { (&mut x, k) } else { (&mut y, k - p) };
                v[i] = -v[i];
                let e = eval(&x, &y);
                let v = if k < p { &mut x } else { &mut y };
                if e > best {
                    best = e;
                    improved = true;
                } else {
                    v[i] = -v[i];
                }
            }
            if !improved {
                break;
            }
        }
        worst = worst.max(best);
    }
    for _ in 0..40 {
        let x: Vec<f64> = (0..p).map(|_| draw.sign()).collect();
        let y: Vec<f64> = (0..p).map(|_| draw.sign()).collect();
        worst = worst.max(eval(&x, &y));
    }
    worst + model.noise_peak_v()
}

/// Random one-stage designs with the offset taken from the supply through
/// a divider, each calibration: no corner found by an independent search
/// (greedy sign flips from several starts plus random vertices, every
/// corner solved on the full netlist) exceeds the reported worst case.
#[test]
fn no_corner_found_exceeds_the_reported_worst_case() {
    let stock = stock(CORNER_OPAMPS);
    let mut draw = Draw(0x5EED_C0DE);
    for case in 0..12 {
        let calibration = ["none", "offset", "two-point"][case % 3];
        let ratiometric = case % 2 == 0;
        let toml = format!(
            "[sensor]\nsignal_low_v = 0.1\nsignal_high_v = 0.5\nsource_ohms = 1000\n\
             [adc]\nlow_v = 0\nhigh_v = 3\nbits = 12\nmargin_pct = 2\n\
             [supply]\npositive_v = 5\ntolerance_pct = 5\nratiometric = {ratiometric}\n\
             [accuracy]\nmax_error_pct_fs = 1\ncalibration = \"{calibration}\"\n\
             temp_min_c = -30\ntemp_max_c = 60\nbandwidth_hz = 1\n"
        );
        let need = parse_need(toml.as_bytes(), "corner.toml")
            .unwrap_or_else(|e| panic!("the corner need does not parse: {e}"));
        let resistor = |draw: &mut Draw, ohms: f64| {
            serde_json::json!({
                "ohms": ohms,
                "tolerance_pct": draw.between(0.05, 2.0),
                "tcr_ppm_per_c": draw.between(5.0, 200.0),
            })
        };
        let rg = draw.between(1e3, 2e4);
        let rf = rg * draw.between(2.0, 12.0);
        let top = draw.between(1e4, 1e5);
        let bottom = top * draw.between(0.01, 0.2);
        let json = serde_json::json!({"stages": [{
            "shape": "non-inverting", "amplifier": "TV-C",
            "resistors": {"rf": resistor(&mut draw, rf), "rg": resistor(&mut draw, rg)},
            "offset": {"kind": "divider", "source": "supply",
                       "top": resistor(&mut draw, top), "bottom": resistor(&mut draw, bottom)},
        }]})
        .to_string();
        let design = parse_design(json.as_bytes(), "corner.json", &stock)
            .unwrap_or_else(|e| panic!("the corner design does not parse: {e}"));
        let (model, analysis) = analyze(&need, &stock, &design, 0, 1)
            .unwrap_or_else(|e| panic!("the corner design does not analyse: {e}"));
        let found = searched_worst(&model, &mut draw);
        let reported = analysis.worst_case_pct_fs * need.full_scale() / 100.0;
        assert!(
            found <= reported * (1.0 + 1e-9) + 1e-12,
            "case {case} ({calibration}, ratiometric {ratiometric}): a corner gives {found:e} V, \
             the reported worst case is {reported:e} V"
        );
    }
}

// ---------------------------------------------------------------------
// The sensor's own resistance.

/// An inverting stage fed through the sensor's resistance `Rs`:
/// `Vout = -Rf Vs / (Ri + Rs)` (inverting amplifier, common practice), so
/// a relative change `d` of `Rs` moves the output by
/// `Rf Rs Vs / (Ri + Rs)^2 * d`. With `source_tolerance_pct = 10` and a
/// 100 ppm/degC tempco over 25..75 degC (no calibration), the line is
/// that sensitivity times 0.10 plus times 100e-6 x 50.
#[test]
fn sensor_resistance_line_matches_closed_form() {
    let (rs, ri, rf) = (1_000.0, 9_000.0, 30_000.0);
    let toml = format!(
        "[sensor]\nsignal_low_v = -0.2\nsignal_high_v = 0.0\nsource_ohms = {rs}\n\
         source_tolerance_pct = 10\nsource_tempco_ppm_per_c = 100\n\
         [adc]\nlow_v = 0\nhigh_v = 3\nbits = 12\nmargin_pct = 0\n\
         [supply]\npositive_v = 5\nnegative_v = -5\n\
         [accuracy]\nmax_error_pct_fs = 5\ntemp_min_c = 25\ntemp_max_c = 75\nbandwidth_hz = 1\n"
    );
    let need = parse_need(toml.as_bytes(), "source.toml")
        .unwrap_or_else(|e| panic!("the need does not parse: {e}"));
    let stock = stock(OPAMPS);
    let exact =
        |ohms: f64| serde_json::json!({"ohms": ohms, "tolerance_pct": 0, "tcr_ppm_per_c": 0});
    let json = serde_json::json!({"stages": [{
        "shape": "inverting", "amplifier": "TV-FET",
        "resistors": {"ri": exact(ri), "rf": exact(rf)},
    }]})
    .to_string();
    let design = parse_design(json.as_bytes(), "source.json", &stock)
        .unwrap_or_else(|e| panic!("the design does not parse: {e}"));
    let (_, a) = analyze(&need, &stock, &design, 0, 1)
        .unwrap_or_else(|e| panic!("the design does not analyse: {e}"));
    let line = a
        .budget
        .iter()
        .find(|b| b.line == Contributor::SourceResistance)
        .unwrap_or_else(|| panic!("no sensor resistance line: {:?}", a.budget));
    for (end, vs) in [-0.2f64, 0.0].into_iter().enumerate() {
        let s = rf * rs * vs.abs() / (ri + rs).powi(2);
        let want = 100.0 * s * (0.10 + 100e-6 * 50.0) / 3.0;
        let got = line.at_ends_pct_fs[end].abs();
        assert!(
            // 1e-4: the part's 110 dB open-loop gain moves the closed form
            // by about noise gain / A_OL = 4 / 3e5.
            (got - want).abs() <= 1e-4 * want.max(1e-12) + 1e-12,
            "end {end}: line {got} % FS, closed form {want} % FS"
        );
    }
}

// ---------------------------------------------------------------------
// Reference tempco by the box method.

/// A box-method tempco bounds the output inside a box `tempco x (T_max -
/// T_min)` high over the whole range (common practice), so over 0..70 degC
/// a 2.5 V, 20 ppm/degC reference may move 2.5 x 20e-6 x 70 = 3.5 mV from
/// its 25 degC value, not 2.5 x 20e-6 x 45. Into the foot of Rg of a
/// non-inverting stage with Rf = Rg it moves the output by Rf/Rg = 1 times
/// that: 0.14 % of a 2.5 V full scale.
#[test]
fn reference_tempco_covers_the_whole_range() {
    let toml = "[sensor]\nsignal_low_v = 1.25\nsignal_high_v = 2.5\n\
        [adc]\nlow_v = 0\nhigh_v = 2.5\nbits = 12\nmargin_pct = 0\n\
        [supply]\npositive_v = 5\n\
        [accuracy]\nmax_error_pct_fs = 5\ntemp_min_c = 0\ntemp_max_c = 70\nbandwidth_hz = 1\n";
    let need = parse_need(toml.as_bytes(), "box.toml")
        .unwrap_or_else(|e| panic!("the need does not parse: {e}"));
    let stock = stock(OPAMPS);
    let exact =
        |ohms: f64| serde_json::json!({"ohms": ohms, "tolerance_pct": 0, "tcr_ppm_per_c": 0});
    let json = serde_json::json!({"stages": [{
        "shape": "non-inverting", "amplifier": "TV-FET",
        "resistors": {"rf": exact(10_000.0), "rg": exact(10_000.0)},
        "offset": {"kind": "direct", "source": "TV-REF"},
    }]})
    .to_string();
    let design = parse_design(json.as_bytes(), "box.json", &stock)
        .unwrap_or_else(|e| panic!("the design does not parse: {e}"));
    let (_, a) = analyze(&need, &stock, &design, 0, 1)
        .unwrap_or_else(|e| panic!("the design does not analyse: {e}"));
    let line = a
        .budget
        .iter()
        .find(|b| b.line == Contributor::ReferenceTempco)
        .unwrap_or_else(|| panic!("no reference tempco line: {:?}", a.budget));
    let want = 100.0 * 2.5 * 20e-6 * 70.0 / 2.5;
    for got in line.at_ends_pct_fs {
        // 1e-4: the part's 110 dB open-loop gain (noise gain 2).
        assert!(
            (got.abs() - want).abs() <= 1e-4 * want,
            "reference tempco line {got} % FS, box method {want} % FS"
        );
    }
}
