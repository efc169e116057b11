//! Matched resistor networks (`networks.csv`): the table's errors, and the
//! budget of a difference stage whose four resistors are elements of one
//! package.
//!
//! Closed form (handbook formula for a difference amplifier, common
//! practice): with `r2/r1 = r4/r3 = G` and each resistor within `+/-e` of
//! its value, the common-mode rejection from mismatch alone is at worst
//! `(1 + G) / (4 e)`, so a common mode `Vcm` gives at most
//! `Vcm G 4e / (1 + G)` at the output. For the elements of one network the
//! ratio tolerance `d` bounds every ratio, which the analysis models as a
//! common deviation plus `+/-d/2` per element: the handbook bound with
//! `e = d/2`, `Vcm G 2d / (1 + G)`, whatever the absolute tolerance.
//!
//! The cases are invented: a 0 to 10 mV bridge at a 2.5 V common mode,
//! one difference stage of gain 100, an invented network part
//! `RN-T1K-100K` (elements 1 and 3: 1 kohm, 2 and 4: 100 kohm).

mod common;

use common::ngspice::run_ngspice;
use spanfit::analysis::{analyze, Analysis, Contributor};
use spanfit::design::{design_file_json, parse_design, Design};
use spanfit::need::{parse_need, Need};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// Gain of the stage.
const GAIN: f64 = 100.0;
/// The sensor's common mode, volts.
const COMMON_MODE_V: f64 = 2.5;
/// ADC full scale, volts (the window is -10 V to 10 V).
const FULL_SCALE_V: f64 = 20.0;
/// Open-loop gain of the demo stock's `OA-GP4` (94 dB): the closed forms
/// are scaled by the loop-gain factor `1 / (1 + (1 + G) / Aol)` of a
/// stage of noise gain `1 + G` (common practice).
const AOL: f64 = 50_118.723_362_727_23;

/// The loop-gain factor of the stage.
fn loop_factor() -> f64 {
    1.0 / (1.0 + (1.0 + GAIN) / AOL)
}
/// The invented network's figures: absolute tolerance, ratio tolerance
/// (%), absolute TCR and tracking (ppm/degC).
const NETWORK: (f64, f64, f64, f64) = (0.1, 0.02, 25.0, 4.0);

const NETWORKS_CSV: &str = "part_id,count,value_ohms,abs_tolerance_pct,ratio_tolerance_pct,\
abs_tcr_ppm_per_c,tracking_tcr_ppm_per_c,package,unit_cost,stock_qty\n\
# invented parts for the tests\n\
RN-T1K-100K,4,1000;100000;1000;100000,0.1,0.02,25,4,SOT23-8,0.30,50\n\
RN-T10K,4,10000,0.05,0.01,10,2,SOT23-8,0.40,\n";

fn files(networks: &str) -> Vec<StockFile> {
    let mut files = spanfit::demo::stock_files();
    files.retain(|f| f.name != "networks.csv");
    files.push(StockFile {
        name: "networks.csv".into(),
        bytes: networks.as_bytes().to_vec(),
    });
    files
}

fn stock() -> Stock {
    parse_stock(&files(NETWORKS_CSV)).unwrap_or_else(|e| panic!("stock: {e}"))
}

/// The error message of a networks table, which must not parse.
fn refused(networks: &str) -> String {
    match parse_stock(&files(networks)) {
        Ok(_) => panic!("parsed:\n{networks}"),
        Err(e) => e.to_string(),
    }
}

/// Split supplies and a wide window, so the stage works untrimmed; one
/// temperature span of 40 degC.
fn need(calibration: &str) -> Need {
    let text = format!(
        "[sensor]\nlabel = \"invented bridge\"\nsignal_low_v = 0\nsignal_high_v = 0.01\n\
         output = \"differential\"\ncommon_mode_v = {COMMON_MODE_V}\nsource_ohms = 0\n\
         [adc]\nlow_v = -10\nhigh_v = 10\nbits = 16\nmargin_pct = 0\n\
         [supply]\npositive_v = 15\nnegative_v = -15\ntolerance_pct = 0\n\
         [accuracy]\nmax_error_pct_fs = 5\ncalibration = \"{calibration}\"\n\
         temp_min_c = 25\ntemp_max_c = 65\n"
    );
    parse_need(text.as_bytes(), "bridge.toml").unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn element(n: u32) -> serde_json::Value {
    serde_json::json!({"network": "RN-T1K-100K", "element": n})
}

/// An inline resistor with the network's absolute figures.
fn discrete(ohms: f64) -> serde_json::Value {
    serde_json::json!({"ohms": ohms, "tolerance_pct": NETWORK.0, "tcr_ppm_per_c": NETWORK.2})
}

fn design(stock: &Stock, matched: bool) -> Design {
    let r = |n: u32, ohms: f64| if matched { element(n) } else { discrete(ohms) };
    let json = serde_json::json!({"stages": [{
        "shape": "difference", "amplifier": "OA-GP4",
        "resistors": {"r1": r(1, 1000.0), "r2": r(2, 100_000.0),
                      "r3": r(3, 1000.0), "r4": r(4, 100_000.0)},
    }]})
    .to_string();
    parse_design(json.as_bytes(), "stage.json", stock).unwrap_or_else(|e| panic!("{e}\n{json}"))
}

fn run(matched: bool, calibration: &str) -> Analysis {
    let stock = stock();
    analyze(&need(calibration), &stock, &design(&stock, matched), 0, 1)
        .unwrap_or_else(|e| panic!("analysis: {e}"))
        .1
}

/// A budget line at each span end, % FS (0 when absent).
fn line(a: &Analysis, which: Contributor) -> [f64; 2] {
    a.budget
        .iter()
        .find(|b| b.line == which)
        .map_or([0.0; 2], |b| b.at_ends_pct_fs)
}

/// `got` against a closed form `want` (ideal op-amp), scaled by the
/// loop-gain factor.
fn close(got: f64, want: f64, what: &str) {
    close_within(got, want, 1e-4, what);
}

/// As [`close`], within a relative `tolerance`.
fn close_within(got: f64, want: f64, tolerance: f64, what: &str) {
    let want = want * loop_factor();
    assert!(
        (got - want).abs() <= tolerance * want.abs(),
        "{what}: {got} % FS, closed form {want} % FS"
    );
}

/// At zero signal only the common mode passes the mismatch: the tolerance
/// line is the handbook bound with `e` half the ratio tolerance, and the
/// TCR line the same with half the tracking over 40 degC; the absolute
/// figures (here five times the ratio figure) cancel.
#[test]
fn common_mode_error_follows_the_handbook_bound_with_the_ratio_tolerance() {
    let a = run(true, "none");
    let (_, ratio, _, tracking) = NETWORK;
    let bound = |e: f64| 100.0 * COMMON_MODE_V * GAIN * 4.0 * e / (1.0 + GAIN) / FULL_SCALE_V;
    close(
        line(&a, Contributor::ResistorTolerance)[0].abs(),
        bound(0.5 * ratio / 100.0),
        "tolerance line at zero signal",
    );
    close(
        line(&a, Contributor::ResistorTcr)[0].abs(),
        bound(0.5 * tracking * 1e-6 * 40.0),
        "TCR line at zero signal",
    );
    // The same stage of discrete resistors at the network's absolute
    // figures: the handbook bound with e the absolute tolerance.
    let d = run(false, "none");
    close(
        line(&d, Contributor::ResistorTolerance)[0].abs(),
        bound(NETWORK.0 / 100.0),
        "discrete tolerance line at zero signal",
    );
}

/// At full signal the gain error adds: `Vs G/(1+G) (x4 - x3 + G (x2 - x1))`
/// beside the common-mode part, each element within half the ratio
/// tolerance (closed form of the stage, first order).
#[test]
fn gain_error_at_full_signal_matches_the_closed_form() {
    let a = run(true, "none");
    let e = 0.5 * NETWORK.1 / 100.0;
    let vs = 0.01;
    let g = GAIN;
    // Coefficients of (x4 - x3) and (x2 - x1).
    let a4 = g / (1.0 + g) * (COMMON_MODE_V + vs);
    let b2 = -g / (1.0 + g) * COMMON_MODE_V + g * g / (1.0 + g) * vs;
    let want = 100.0 * 2.0 * e * (a4.abs() + b2.abs()) / FULL_SCALE_V;
    // With signal, finite-gain terms beyond the loop-gain factor (of the
    // order of the output over the open-loop gain) remain: 1e-3.
    close_within(
        line(&a, Contributor::ResistorTolerance)[1].abs(),
        want,
        1e-3,
        "tolerance line at full signal",
    );
}

/// The network design against the same design of discrete resistors with
/// the network's absolute figures: smaller resistor lines and a smaller
/// worst case, uncalibrated and with an offset trim; and the Monte Carlo
/// spread is smaller too.
#[test]
fn a_network_beats_discrete_parts_of_its_absolute_grade() {
    for calibration in ["none", "offset"] {
        let network = run(true, calibration);
        let discrete = run(false, calibration);
        for which in [Contributor::ResistorTolerance, Contributor::ResistorTcr] {
            let n = line(&network, which);
            let d = line(&discrete, which);
            assert!(
                n[0].abs().max(n[1].abs()) < 0.5 * d[0].abs().max(d[1].abs()),
                "{calibration}: {which:?} network {n:?}, discrete {d:?}"
            );
        }
        assert!(
            network.worst_case_pct_fs < discrete.worst_case_pct_fs,
            "{calibration}: worst case network {}, discrete {}",
            network.worst_case_pct_fs,
            discrete.worst_case_pct_fs
        );
    }
    let stock = stock();
    let sigma = |matched: bool| {
        analyze(&need("none"), &stock, &design(&stock, matched), 20_000, 7)
            .unwrap_or_else(|e| panic!("{e}"))
            .1
            .yield_result
            .map(|y| y.sigma_pct_fs)
            .unwrap_or(f64::NAN)
    };
    let (n, d) = (sigma(true), sigma(false));
    assert!(n < d, "Monte Carlo sigma network {n}, discrete {d}");
}

/// The Monte Carlo of the network design against a brute-force sampler of
/// the closed form at zero signal: each build draws one common deviation
/// within the absolute tolerance and one per element within half the
/// ratio tolerance (uniform), temperature at 25 degC so only tolerances
/// move. The sampler's standard deviation of the common-mode error and the
/// analysis's sigma of its resistor-only case agree within 3 %.
#[test]
fn monte_carlo_draws_the_common_and_ratio_parts() {
    // Only resistor tolerances: an op-amp whose offset and bias are
    // negligible is not in the demo stock, so compare the resistor line's
    // own spread: the analysis's RSS of the tolerance line parameters is
    // sqrt(sum (s_i d/2)^2 / 3) for uniform draws.
    let mut rng = 0x2545_f491_4f6c_dd1d_u64;
    let mut next = || {
        rng ^= rng << 13;
        rng ^= rng >> 7;
        rng ^= rng << 17;
        (rng >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    let (abs_tol, ratio, _, _) = NETWORK;
    let g = GAIN;
    let n = 200_000;
    let mut sum = 0.0;
    let mut squares = 0.0;
    for _ in 0..n {
        let common = next() * abs_tol / 100.0;
        let x: Vec<f64> = (0..4)
            .map(|_| common + next() * 0.5 * ratio / 100.0)
            .collect();
        // Exact transfer of the stage at zero signal (inputs at Vcm).
        let (r1, r2, r3, r4) = (
            1e3 * (1.0 + x[0]),
            1e5 * (1.0 + x[1]),
            1e3 * (1.0 + x[2]),
            1e5 * (1.0 + x[3]),
        );
        let out = COMMON_MODE_V * (r4 / (r3 + r4)) * (1.0 + r2 / r1) - COMMON_MODE_V * r2 / r1;
        sum += out;
        squares += out * out;
    }
    let mean = sum / n as f64;
    let sampled = (squares / n as f64 - mean * mean).sqrt();
    // The linear model's spread of the same terms: per element s_i d/2
    // uniform (variance (s_i d/2)^2 / 3), the common part cancelling.
    let s = g / (1.0 + g) * COMMON_MODE_V;
    let model = (4.0 * (s * 0.5 * ratio / 100.0).powi(2) / 3.0).sqrt();
    assert!(
        (sampled - model).abs() <= 0.03 * model,
        "sampled sigma {sampled} V, linear model {model} V"
    );
    // And the analysis's own tolerance line is the worst case of those
    // terms: sqrt(3) sigma per term, summed.
    let a = run(true, "none");
    let worst = 100.0 * 4.0 * s * 0.5 * ratio / 100.0 / FULL_SCALE_V;
    close(
        line(&a, Contributor::ResistorTolerance)[0].abs(),
        worst,
        "tolerance line",
    );
}

/// The network is one part: one BOM row with the four designators, the
/// package priced once, the part count one; the SPICE netlist keeps one
/// element per resistor under its designator; the design file reads back
/// as the same design; the schematic labels the elements.
#[test]
fn a_network_is_one_part_and_four_elements() {
    let stock = stock();
    let need = need("none");
    let d = design(&stock, true);
    let candidate = spanfit::api::evaluate(&need, &stock, &d).unwrap_or_else(|e| panic!("{e}"));
    let rows = spanfit::bom::rows(&candidate.built, &stock);
    let nets: Vec<_> = rows
        .iter()
        .filter(|r| r.kind == "resistor network")
        .collect();
    assert_eq!(nets.len(), 1, "{rows:?}");
    assert_eq!(nets[0].quantity, 1);
    assert_eq!(nets[0].refs.len(), 4, "{:?}", nets[0].refs);
    assert!(
        nets[0].value.starts_with("2 x ") && nets[0].value.ends_with(" + 2 x 100k"),
        "{}",
        nets[0].value
    );
    // No element on a resistor row of its own (the filter's series
    // resistor is the only one).
    assert!(
        rows.iter()
            .filter(|r| r.kind == "resistor")
            .all(|r| r.refs.iter().all(|d| !nets[0].refs.contains(d))),
        "{rows:?}"
    );
    // Cost: the network package once, nothing per element: the discrete
    // design (four inline resistors at no cost) costs the package less.
    let discrete = spanfit::api::evaluate(&need, &stock, &design(&stock, false))
        .unwrap_or_else(|e| panic!("{e}"));
    assert!(
        (candidate.costing.parts_cost - discrete.costing.parts_cost - 0.30).abs() < 1e-9,
        "network {:?}, discrete {:?}",
        candidate.costing,
        discrete.costing
    );
    assert_eq!(
        candidate.costing.part_count + 3,
        discrete.costing.part_count,
        "network {:?}, discrete {:?}",
        candidate.costing,
        discrete.costing
    );
    // SPICE: one element per resistor, named by its designator.
    let deck = spanfit::spice::export(&need, &stock, &d).unwrap_or_else(|e| panic!("{e}"));
    for r in &candidate.built.resistors {
        assert!(
            deck.lines()
                .any(|l| l.split_whitespace().next() == Some(r.designator.as_str())),
            "{} missing from\n{deck}",
            r.designator
        );
    }
    // Round trip through the design file.
    let text = design_file_json(&d, &stock).to_string();
    assert!(text.contains("\"network\":\"RN-T1K-100K\""), "{text}");
    let back = parse_design(text.as_bytes(), "back.json", &stock).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(back, d);
    // The schematic names package and element.
    let svg = spanfit::api::artifacts(&need, &stock, &d)
        .unwrap_or_else(|e| panic!("{e}"))
        .svg
        .unwrap_or_default();
    assert!(svg.contains("RN1.2"), "no element label in the schematic");
}

/// A table with one defect each: the message names the file, the line,
/// the column and what was expected.
#[test]
fn bad_network_rows_are_located() {
    let header = NETWORKS_CSV.lines().next().unwrap_or_default();
    let cases = [
        ("RN-A,1,1000,0.1,0.02,25,4,x,0.3,", "count", "from 2 to 16"),
        (
            "RN-A,4,1000;2000,0.1,0.02,25,4,x,0.3,",
            "value_ohms",
            "2 values for 4",
        ),
        (
            "RN-A,2,1000;ten,0.1,0.02,25,4,x,0.3,",
            "value_ohms",
            "not a number",
        ),
        ("RN-A,2,0,0.1,0.02,25,4,x,0.3,", "value_ohms", "value 1"),
        (
            "RN-A,2,1000,0.1,0.3,25,4,x,0.3,",
            "ratio_tolerance_pct",
            "twice",
        ),
        (
            "RN-A,2,1000,0.1,0.02,25,60,x,0.3,",
            "tracking_tcr_ppm_per_c",
            "twice",
        ),
        (
            "RN-A,2,1000,0.1,0.02,25,4,x,NaN,",
            "unit_cost",
            "a unit cost",
        ),
        (
            "RN-A,2,1000,0.1,0.02,25,4,x,0.3,-1",
            "stock_qty",
            "whole number",
        ),
        (
            "HR-F1-10K0,2,1000,0.1,0.02,25,4,x,0.3,",
            "part_id",
            "resistors.csv",
        ),
    ];
    for (row, column, expected) in cases {
        let text = format!("{header}\n{row}\n");
        let message = refused(&text);
        assert!(
            message.contains("networks.csv")
                && message.contains("line 2")
                && message.contains(column)
                && message.contains(expected),
            "{row}: {message}"
        );
    }
    let missing = refused("part_id,count,value_ohms\nRN-A,2,1000\n");
    assert!(
        missing.contains("missing column") && missing.contains("ratio_tolerance_pct"),
        "{missing}"
    );
}

/// Design file errors: an element past the package's count, an unknown
/// network, an element placed twice.
#[test]
fn bad_network_elements_in_a_design_are_located() {
    let stock = stock();
    let bad = |r1: serde_json::Value, r3: serde_json::Value| {
        let json = serde_json::json!({"stages": [{
            "shape": "difference", "amplifier": "OA-GP4",
            "resistors": {"r1": r1, "r2": element(2), "r3": r3, "r4": element(4)},
        }]})
        .to_string();
        match parse_design(json.as_bytes(), "stage.json", &stock) {
            Ok(_) => panic!("parsed {json}"),
            Err(e) => e.to_string(),
        }
    };
    let past = bad(element(5), element(3));
    assert!(
        past.contains("stages[0].resistors.r1.element") && past.contains("1 to 4"),
        "{past}"
    );
    let unknown = bad(
        serde_json::json!({"network": "RN-NONE", "element": 1}),
        element(3),
    );
    assert!(unknown.contains("not in stock"), "{unknown}");
    let twice = bad(element(1), element(1));
    assert!(
        twice.contains("also placed") && twice.contains("stages[0].resistors"),
        "{twice}"
    );
    // A second package of the same part is another part.
    let json = serde_json::json!({"stages": [{
        "shape": "difference", "amplifier": "OA-GP4",
        "resistors": {"r1": element(1), "r2": element(2),
                      "r3": {"network": "RN-T1K-100K", "element": 1, "package": 2},
                      "r4": {"network": "RN-T1K-100K", "element": 2, "package": 2}},
    }]})
    .to_string();
    let two = parse_design(json.as_bytes(), "two.json", &stock).unwrap_or_else(|e| panic!("{e}"));
    let c = spanfit::api::evaluate(&need("none"), &stock, &two).unwrap_or_else(|e| panic!("{e}"));
    let rows = spanfit::bom::rows(&c.built, &stock);
    let net = rows.iter().find(|r| r.kind == "resistor network");
    assert_eq!(net.map(|r| r.quantity), Some(2), "{rows:?}");
}

/// The deck with resistor element `name` set to `ohms`; fails unless
/// exactly one such element line exists (the naming contract).
fn set_resistor(deck: &str, name: &str, ohms: f64) -> String {
    let prefix = format!("{name} ");
    let mut found = 0;
    let lines: Vec<String> = deck
        .lines()
        .map(|l| {
            if l.starts_with(&prefix) {
                found += 1;
                let fields: Vec<&str> = l.split_whitespace().collect();
                format!("{} {} {} {ohms:e}", fields[0], fields[1], fields[2])
            } else {
                l.to_string()
            }
        })
        .collect();
    assert_eq!(found, 1, "element {name} in\n{deck}");
    lines.join("\n") + "\n"
}

/// ngspice on our own exported netlist of the network design: at nominal
/// it reads the analysis's output at both span ends; with the four
/// elements at the ratio corner that passes the most common mode (a common
/// deviation at the absolute limit, each element half the ratio tolerance
/// against the others) the output at zero signal moves by the tolerance
/// line, the absolute part cancelling (first order: within 1 %).
#[test]
fn ngspice_reads_the_ratio_corner_of_the_network_design() {
    let stock = stock();
    let need = need("none");
    let d = design(&stock, true);
    let (_, a) = analyze(&need, &stock, &d, 0, 1).unwrap_or_else(|e| panic!("{e}"));
    let deck = spanfit::spice::export(&need, &stock, &d).unwrap_or_else(|e| panic!("{e}"));
    let nominal = run_ngspice(&deck, "network-nominal");
    for (end, (got, want)) in nominal.iter().zip(a.transfer.output_at_ends_v).enumerate() {
        assert!(
            (got - want).abs() <= 1e-6 + 1e-6 * want.abs(),
            "end {end}: ngspice {got} V, analysis {want} V"
        );
    }
    let (abs_tol, ratio, _, _) = NETWORK;
    let common = 1.0 + abs_tol / 100.0;
    let e = 0.5 * ratio / 100.0;
    // At zero signal the output moves by `Vcm G/(1+G) ((x4 - x3) - (x2 -
    // x1))`: r4 and r1 up, r3 and r2 down.
    let built = spanfit::api::evaluate(&need, &stock, &d)
        .unwrap_or_else(|e| panic!("{e}"))
        .built;
    let designator = |role: &str| {
        built
            .resistors
            .iter()
            .find(|r| r.stage == 0 && r.role.name() == role)
            .map(|r| r.designator.clone())
            .unwrap_or_else(|| panic!("no {role}"))
    };
    let corner = [
        ("r1", 1000.0 * common * (1.0 + e)),
        ("r2", 100_000.0 * common * (1.0 - e)),
        ("r3", 1000.0 * common * (1.0 - e)),
        ("r4", 100_000.0 * common * (1.0 + e)),
    ];
    let mut moved = deck.clone();
    for (role, ohms) in corner {
        moved = set_resistor(&moved, &designator(role), ohms);
    }
    let at_corner = run_ngspice(&moved, "network-corner");
    let shift_pct = 100.0 * (at_corner[0] - nominal[0]).abs() / FULL_SCALE_V;
    let line_pct = line(&a, Contributor::ResistorTolerance)[0].abs();
    assert!(
        (shift_pct - line_pct).abs() <= 0.01 * line_pct,
        "ngspice shift {shift_pct} % FS, tolerance line {line_pct} % FS"
    );
}

/// The demo's solved difference stage against the same stage built from
/// the demo stock's invented network (`examples/demo-network-design.json`):
/// the network's resistor lines are smaller (ratio 0.02 % and tracking
/// 3 ppm/degC against four 0.1 %, 25 ppm/degC parts), and so is the worst
/// case; the BOM has one network line in place of the 0.1 % resistors.
#[test]
fn the_demo_network_design_beats_the_solved_demo_on_resistor_lines() {
    let mut files = spanfit::demo::stock_files();
    files.push(StockFile {
        name: "networks.csv".into(),
        bytes: spanfit::demo::NETWORKS_CSV.as_bytes().to_vec(),
    });
    let stock = parse_stock(&files).unwrap_or_else(|e| panic!("{e}"));
    let need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml")
        .unwrap_or_else(|e| panic!("{e}"));
    let read = |text: &str, name: &str| {
        parse_design(text.as_bytes(), name, &stock).unwrap_or_else(|e| panic!("{name}: {e}"))
    };
    let solved = read(
        include_str!("../../examples/demo-solved-design.json"),
        "demo-solved-design.json",
    );
    let network = read(
        include_str!("../../examples/demo-network-design.json"),
        "demo-network-design.json",
    );
    let budget = |d: &Design| {
        analyze(&need, &stock, d, 0, 1)
            .unwrap_or_else(|e| panic!("{e}"))
            .1
    };
    let (s, n) = (budget(&solved), budget(&network));
    // The divider's two 1 % parts are the same in both; the difference
    // stage's share drops.
    for which in [Contributor::ResistorTolerance, Contributor::ResistorTcr] {
        let worst = |a: &Analysis| {
            let l = line(a, which);
            l[0].abs().max(l[1].abs())
        };
        assert!(
            worst(&n) < worst(&s),
            "{which:?}: network {}, solved {}",
            worst(&n),
            worst(&s)
        );
    }
    assert!(
        n.worst_case_pct_fs < s.worst_case_pct_fs,
        "worst case network {}, solved {}",
        n.worst_case_pct_fs,
        s.worst_case_pct_fs
    );
}
