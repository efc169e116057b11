//! Tests of the filter choice and its figures, against handbook closed
//! forms of one RC pole (common practice).

use super::*;
use crate::units::{Decibels, Farads, Hertz, Seconds};

fn demo() -> (Need, Stock, crate::design::Design) {
    let need = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
    let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
    let json = include_str!("../../../examples/demo-design.json");
    let design = crate::design::parse_design(json.as_bytes(), "demo-design.json", &stock).unwrap();
    (need, stock, design)
}

fn designed(
    need: &Need,
    stock: &Stock,
    design: &crate::design::Design,
) -> (FilterParts, FilterReport) {
    let built = crate::topology::build(need, stock, design).unwrap();
    match analyse(need, stock, &built) {
        FilterStatus::Designed { parts, report, .. } => (parts, *report),
        FilterStatus::NotDesigned { reason } => panic!("no filter: {reason}"),
    }
}

/// The chosen pair meets every bound, and the reported corner is the RC
/// corner `1/(2 pi R C)` up to the stage poles far above it.
#[test]
fn the_pair_meets_its_bounds_and_sets_the_corner() {
    let (need, stock, design) = demo();
    let built = crate::topology::build(&need, &stock, &design).unwrap();
    let d = driver(&need, &stock, &built).unwrap();
    let b = bounds(&need, &d);
    let (parts, report) = designed(&need, &stock, &design);
    let (r, c) = (parts.series.ohms, parts.shunt.value.0);
    assert!(r >= b.min_ohms && c >= b.min_farads);
    let tau = r * c;
    let (tr, tc) = (
        parts.series.tolerance_pct / 100.0,
        parts.shunt.tolerance.0 / 100.0,
    );
    assert!(tau * (1.0 + tr) * (1.0 + tc) <= b.max_tau_s * (1.0 + 1e-9));
    assert!(tau >= b.min_tau_s * (1.0 - 1e-9));
    let rc_corner = 1.0 / (2.0 * std::f64::consts::PI * tau);
    assert!(
        (report.corner_hz / rc_corner - 1.0).abs() < 0.02,
        "{} vs {rc_corner}",
        report.corner_hz
    );
    assert!(report.checks.iter().all(|c| c.pass), "{:?}", report.checks);
    assert_eq!(report.bode.len(), 61);
}

/// The demo chain is two real poles well apart: the pair's RC corner
/// `f_1 = 1/(2 pi R C)` and the in-amp's `f_2 = GBW / G` (its output
/// amplifier's pole at the GBW far above); the noise bandwidth of two real
/// poles is `pi/2 f_1 f_2 / (f_1 + f_2)` (handbook closed form), and the
/// chain's is within 1 % of it.
#[test]
fn noise_bandwidth_is_the_two_pole_closed_form() {
    let (need, stock, design) = demo();
    let (parts, report) = designed(&need, &stock, &design);
    let f1 = 1.0 / (2.0 * std::f64::consts::PI * parts.series.ohms * parts.shunt.value.0);
    let part = stock.inamps.iter().find(|p| p.part_id == "IA-3").unwrap();
    let rg = 432.0;
    let f2 = part.gbw_mhz * 1e6 / (1.0 + part.gain_resistor.0 / rg);
    let want = std::f64::consts::FRAC_PI_2 * f1 * f2 / (f1 + f2);
    assert!(
        (report.noise_bandwidth_hz / want - 1.0).abs() < 0.01,
        "{} vs {want}",
        report.noise_bandwidth_hz
    );
}

/// A sampling input and an alias target: the reservoir, settling and
/// rejection rules bind, and the reported figures follow their closed
/// forms (one pole: 10 log10(1 + (f/fc)^2) dB at f).
#[test]
fn a_sampling_input_gets_a_reservoir_and_settles() {
    let (mut need, stock, design) = demo();
    // A 12-bit converter: a large reservoir keeps its kickback under
    // 1/2 LSB.
    need.adc.bits = 12;
    need.adc.sample_rate = Some(Hertz(200e3));
    need.adc.alias_rejection = Some(Decibels(20.0));
    need.adc.sample_capacitance = Some(Farads(10e-12));
    need.adc.acquisition_time = Some(Seconds(2e-6));
    let (parts, report) = designed(&need, &stock, &design);
    assert!(parts.shunt.value.0 >= 20.0 * 10e-12);
    let rejection = report.rejection_at_nyquist_db.unwrap();
    assert!(rejection >= 20.0, "{rejection}");
    let fc = report.corner_hz;
    let one_pole = 10.0 * (1.0 + (100e3 / fc).powi(2)).log10();
    // The stage poles add rejection; never less than the pair's own.
    assert!(rejection >= one_pole - 0.2, "{rejection} vs {one_pole}");
    let left = report.settling_error_lsb.unwrap();
    assert!(left <= 0.5, "{left}");
    let kick = report.kickback_v.unwrap();
    let want = need.full_scale() * 10e-12 / (parts.shunt.value.0 + 10e-12);
    assert!((kick / want - 1.0).abs() < 1e-12);
}

/// Without capacitors in the stock there is no filter, and the reason
/// says so.
#[test]
fn no_capacitors_no_filter() {
    let (need, mut stock, design) = demo();
    stock.capacitors.clear();
    let built = crate::topology::build(&need, &stock, &design).unwrap();
    match analyse(&need, &stock, &built) {
        FilterStatus::NotDesigned { reason } => assert!(reason.contains("capacitors"), "{reason}"),
        FilterStatus::Designed { .. } => panic!("a filter without capacitors"),
    }
}

/// The phase-margin rule: at the smallest R it allows, the exact margin
/// at any noise gain is at least the target.
#[test]
fn the_isolation_resistor_bound_keeps_the_margin() {
    for noise_gain in [1.0, 3.0, 100.0] {
        let d = Driver {
            designator: "U1".into(),
            gbw_hz: 1e6,
            output_ohms: 100.0,
            noise_gain,
            output_amps: 0.01,
            step_v: 3.0,
            feedback: Vec::new(),
        };
        let t = (90.0 - PHASE_MARGIN_TARGET_DEG).to_radians().tan();
        let r_min = 100.0 * ((1.0 + 1.0 / (t * t)).sqrt() - 1.0) / 2.0;
        for farads in [1e-10, 1e-9, 1e-8, 1e-7, 1e-6] {
            let m = response::phase_margin_deg(&d, r_min, farads);
            assert!(
                m >= PHASE_MARGIN_TARGET_DEG - 1e-6,
                "NG {noise_gain}, C {farads}: {m}"
            );
        }
        // Without the resistor a large capacitor costs margin.
        assert!(response::phase_margin_deg(&d, 0.0, 1e-6) < 45.0 || noise_gain > 10.0);
    }
}

/// The in-amp's AC model (the demo design's one stage, without the pair):
/// its bandwidth falls with its gain, one pole at `GBW / G` from the input
/// stage (`G = 1 + Rk/Rg`), and its output amplifier adds a second at the
/// GBW, so `|H(f)/H(0)|^2 = 1 / ((1 + (f G/GBW)^2) (1 + (f/GBW)^2))`
/// (handbook closed form of a non-inverting stage's closed-loop pole,
/// common practice).
#[test]
fn the_in_amp_bandwidth_falls_with_its_gain() {
    let (need, stock, design) = demo();
    let built = crate::topology::build(&need, &stock, &design).unwrap();
    let section = built
        .sections
        .iter()
        .find(|s| matches!(s.kind, AmplifierKind::InAmp(_)))
        .unwrap();
    let AmplifierKind::InAmp(i) = section.kind else {
        unreachable!()
    };
    let part = &stock.inamps[i];
    let rg = built
        .resistors
        .iter()
        .find(|r| r.stage == section.stage && r.role == crate::shape::Role::Rg)
        .unwrap()
        .part
        .ohms;
    let gain = 1.0 + part.gain_resistor.0 / rg;
    let gbw = part.gbw_mhz * 1e6;
    let models = amplifiers(&stock, &built);
    assert_eq!(
        models
            .iter()
            .filter(|m| built.netlist.elements[m.element].group.as_deref()
                == Some(section.designator.as_str()))
            .count(),
        3,
        "three internal amplifiers carry the model"
    );
    let mut solver = crate::mna_ac::AcSolver::new(&built.netlist, &models);
    let mut at = |f: f64| {
        solver
            .transfer(&built.netlist, built.vsense, section.out, f)
            .unwrap()
            .abs()
    };
    let h0 = at(1e-3);
    for f in [0.1 * gbw / gain, gbw / gain, 3.0 * gbw / gain, 0.5 * gbw] {
        let want = 1.0 / ((1.0 + (f * gain / gbw).powi(2)) * (1.0 + (f / gbw).powi(2))).sqrt();
        let got = at(f) / h0;
        assert!(
            (got / want - 1.0).abs() < 2e-3,
            "at {f} Hz: {got} vs {want}"
        );
    }
}

/// A one-stage non-inverting design of the demo stock (invented values)
/// with `feedback` as its `feedback_capacitor` entry.
fn with_feedback(stock: &Stock, feedback: &str) -> crate::Result<crate::design::Design> {
    let json = format!(
        r#"{{"format": "spanfit-design-1", "stages": [{{"shape": "non-inverting",
        "amplifier": "OA-RR1", "resistors": {{"rf": "HR-F1-10K0", "rg": "HR-F1-10K0"}},
        "feedback_capacitor": {feedback}}}]}}"#
    );
    crate::design::parse_design(json.as_bytes(), "fb.json", stock)
}

/// The phase margin of a single-pole amplifier with a capacitor pole in
/// its feedback is `90 + atan(f/fp) - atan(f/(NG fp))` at crossover: 90
/// degrees at a noise gain of 1 (no pole-zero pair), more above it, and
/// the crossover of `GBW/f |beta(f)| = 1` closed form (handbook
/// single-pole loop) agrees with the bisection.
#[test]
fn a_feedback_pole_only_adds_phase_margin() {
    use super::feedback::phase_margin_deg;
    let gbw = 1e6;
    assert!((phase_margin_deg(gbw, 1.0, 1e3) - 90.0).abs() < 1e-9);
    for (ng, fp) in [(2.0, 1e3), (10.0, 1e4), (100.0, 50.0), (3.0, 3e5)] {
        let m = phase_margin_deg(gbw, ng, fp);
        assert!(m > 90.0 && m < 180.0, "NG {ng}, fp {fp}: {m}");
        // Far above the corner and its zero the loop is the follower's:
        // crossover near GBW, margin 90 + atan(GBW/fp) - atan(GBW/(NG fp)).
        if fp * ng * 100.0 < gbw {
            let x = gbw / fp;
            let want = 90.0 + (x.atan() - (x / ng).atan()).to_degrees();
            assert!(
                (m - want).abs() < 0.5,
                "NG {ng}, fp {fp}: {m} against {want}"
            );
        }
    }
}

/// A capacitor across `rf` is in the netlist across `rf`'s two nodes as
/// `C2` (after the pair's `C1`), in the BOM, the schematic, the SPICE deck,
/// the cost, the part count and the BOM lines, and its reported corner is
/// `1 / (2 pi rf C)` (handbook closed form); the chain's corner falls.
#[test]
fn a_feedback_capacitor_is_placed_counted_and_reported() {
    let (_, stock, _) = demo();
    // A single-ended sensor (invented): 0.4 V to 2.0 V from 100 ohm.
    let need = crate::need::parse_need(
        b"[sensor]\nsignal_low_v = 0.4\nsignal_high_v = 2.0\nsource_ohms = 100.0\n\
          [adc]\nlow_v = 0.0\nhigh_v = 3.3\nbits = 12\n[supply]\npositive_v = 5.0\n\
          [accuracy]\nmax_error_pct_fs = 1.0\n",
        "se.toml",
    )
    .unwrap();
    let with = with_feedback(&stock, "\"HC-N1-1n00\"").unwrap();
    let mut without = with.clone();
    without.stages[0].feedback_capacitor = None;
    let built = crate::topology::build(&need, &stock, &with).unwrap();
    let (filtered, _) = attach(&need, &stock, &built);
    let c = &filtered.feedback_capacitors[0];
    assert_eq!(c.designator, "C2");
    let rf = filtered
        .resistors
        .iter()
        .find(|r| r.role == crate::shape::Role::Rf)
        .unwrap();
    assert_eq!(c.across, rf.element);
    let cap_nodes = &filtered.netlist.elements[c.element].nodes[..2];
    let rf_nodes = &filtered.netlist.elements[rf.element].nodes[..2];
    assert_eq!(cap_nodes, rf_nodes);
    let report = &filtered.filter.as_ref().unwrap().report;
    let pole = &report.feedback_poles[0];
    let fp = 1.0 / (2.0 * std::f64::consts::PI * 10e3 * 1e-9);
    assert!((pole.corner_hz / fp - 1.0).abs() < 1e-12);
    assert!((pole.noise_gain_dc - 2.0).abs() < 1e-3, "{pole:?}");
    assert!(report
        .checks
        .iter()
        .any(|k| k.check == "feedback-pole" && k.pass));
    // Counted like any part.
    let plain = attach(
        &need,
        &stock,
        &crate::topology::build(&need, &stock, &without).unwrap(),
    )
    .0;
    let (a, b) = (
        crate::search::costing(&filtered, need.search.bom_line_cost),
        crate::search::costing(&plain, need.search.bom_line_cost),
    );
    assert_eq!(a.part_count, b.part_count + 1);
    let cap_cost = stock.capacitor("HC-N1-1n00").unwrap().unit_cost;
    assert!((a.parts_cost - b.parts_cost - cap_cost).abs() < 1e-12);
    // HC-N1-1n00 is not the pair's capacitor, so it is a BOM line of its own.
    assert_ne!(
        filtered.filter.as_ref().unwrap().shunt.part_id,
        "HC-N1-1n00"
    );
    assert_eq!(a.bom_lines, b.bom_lines + 1);
    let rows = crate::bom::rows(&filtered, &stock);
    assert!(rows
        .iter()
        .any(|r| r.kind == "capacitor" && r.refs == ["C2"] && r.part_id == "HC-N1-1n00"));
    let svg = crate::schematic::svg(&filtered, &with, "t");
    assert!(svg.contains("data-ref=\"C2\""));
    assert!(!svg.contains("also in the netlist"));
    let deck = crate::spice::export(&need, &stock, &with).unwrap();
    assert!(deck
        .lines()
        .any(|l| l.starts_with("C2 ") && l.ends_with(" 1e-9")));
    // The pole lowers the chain's corner.
    assert!(report.corner_hz < plain.filter.as_ref().unwrap().report.corner_hz);
}

/// A feedback capacitor goes only on a shape with `rf`, and must be a
/// stock capacitor or a complete inline one; each refusal names the key.
#[test]
fn bad_feedback_capacitors_are_refused_by_key() {
    let (_, stock, _) = demo();
    let difference = r#"{"stages": [{"shape": "difference", "amplifier": "OA-RR1",
        "resistors": {"r1": "HR-F1-10K0", "r2": "HR-F1-10K0", "r3": "HR-F1-10K0",
        "r4": "HR-F1-10K0"}, "feedback_capacitor": "HC-N1-1n00"}]}"#;
    let e = crate::design::parse_design(difference.as_bytes(), "d.json", &stock).unwrap_err();
    let text = e.to_string();
    assert!(
        text.contains("stages[0].feedback_capacitor") && text.contains("rf"),
        "{text}"
    );
    for (entry, says) in [
        ("\"NO-SUCH-CAP\"", "not in stock"),
        ("{\"farads\": 1e-9}", "tolerance_pct"),
        ("{\"farads\": -1, \"tolerance_pct\": 5}", "farads"),
        (
            "{\"farads\": 1e-9, \"tolerance_pct\": 5, \"volts\": 3}",
            "unknown key",
        ),
        (
            "{\"farads\": 1e-9, \"tolerance_pct\": 5, \"part_id\": \"HC-F47\"}",
            "stock capacitor",
        ),
        ("12", "the number"),
    ] {
        let e = with_feedback(&stock, entry).unwrap_err().to_string();
        assert!(
            e.contains("stages[0].feedback_capacitor") && e.contains(says),
            "{entry}: {e}"
        );
    }
    // An inline one reads back through the design file writer.
    let inline = with_feedback(
        &stock,
        "{\"farads\": 2.2e-9, \"tolerance_pct\": 5, \"dielectric\": \"C0G\", \"part_id\": \"MY-C\"}",
    )
    .unwrap();
    let file = crate::design::design_file_json(&inline, &stock);
    let again =
        crate::design::parse_design(file.to_string().as_bytes(), "again.json", &stock).unwrap();
    assert_eq!(again, inline);
    assert_eq!(
        again.stages[0].feedback_capacitor.as_ref().unwrap().value.0,
        2.2e-9
    );
}

/// The feedback corner's bounds against the stage's own closed forms
/// (handbook, common practice): a non-inverting stage
/// `(NG + j x)/(1 + j x)` and an inverting stage `1/(1 + j x)` (relative
/// to DC, `x = f/f_p`), at every corner the tolerances allow, keep at least
/// [`super::FeedbackCorner::least_gain`] and reject at least
/// [`super::FeedbackCorner::least_rejection_power`] in power.
#[test]
fn the_feedback_corner_bounds_hold_at_every_tolerance() {
    let (ohms, farads, tr, tc) = (47e3, 6.8e-9, 1.0, 10.0);
    for ng in [1.0, 2.0, 5.7, 100.0] {
        let corner = super::FeedbackCorner::new(ohms, tr, farads, tc, ng);
        for (dr, dc) in [
            (-1.0, -1.0),
            (-1.0, 1.0),
            (0.0, 0.0),
            (1.0, -1.0),
            (1.0, 1.0),
        ] {
            let fp = super::feedback::corner_hz(
                ohms * (1.0 + dr * tr / 100.0),
                farads * (1.0 + dc * tc / 100.0),
            );
            for f in [1.0, 10.0, 300.0, 1e3, 1e4, 1e5] {
                let x = f / fp;
                let non_inverting = ((ng * ng + x * x) / (ng * ng * (1.0 + x * x))).sqrt();
                let inverting = 1.0 / (1.0 + x * x).sqrt();
                for gain in [non_inverting, inverting] {
                    assert!(
                        gain >= corner.least_gain(f) * (1.0 - 1e-12),
                        "NG {ng} f {f}"
                    );
                    let power = 1.0 / (gain * gain);
                    assert!(
                        power >= corner.least_rejection_power(f) * (1.0 - 1e-12),
                        "NG {ng} f {f}: {power}"
                    );
                }
            }
        }
    }
}

/// One pole's rules with the demo need and an alias target: where the
/// rejection asks more than one pole can give within the droop rule, the
/// need asks a second pole; a feedback pole then leaves the pair a window
/// (largest droop `R C` above the alias rule's least), and never lets the
/// pair's corner rise above the search's highest corner.
#[test]
fn a_feedback_pole_opens_the_window_one_pole_lacks() {
    let mut need = crate::api::load(crate::demo::NEED_TOML.as_bytes(), "demo", &[])
        .unwrap()
        .0;
    need.adc.sample_rate = Some(Hertz(20_000.0));
    need.adc.alias_rejection = Some(Decibels(45.0));
    assert!(super::needs_second_pole(&need));
    let (max_tau, _, alias_tau) = super::tau_limits(&need);
    assert!(alias_tau > max_tau, "one pole: no window");
    // An inverting-like stage (large noise gain) with its pole near the
    // pair's own.
    let corner = super::FeedbackCorner::new(47e3, 0.1, 6.8e-9, 5.0, 100.0);
    let (max_tau, min_tau, alias_tau) = super::tau_limits_with(&need, &[corner]);
    assert!(
        max_tau > min_tau && min_tau >= alias_tau,
        "{max_tau} {min_tau} {alias_tau}"
    );
    let highest = super::highest_corner_hz(&need);
    assert!(1.0 / (2.0 * std::f64::consts::PI * min_tau) <= highest * (1.0 + 1e-12));
}

/// Among the pairs of the least unit prices the rule takes one whose
/// resistor the design already places, so its BOM line is shared: the
/// reported pair costs what the pair chosen for no design costs, and its
/// resistor is the design's own wherever a tied pair's is.
#[test]
fn a_pair_of_the_least_price_shares_a_resistor_the_design_places() {
    let (need, stock, design) = demo();
    let built = crate::topology::build(&need, &stock, &design).unwrap();
    let d = driver(&need, &stock, &built).unwrap();
    let alone = choose_preferring(&need, &stock, &d, &BTreeMap::new(), &|_| false).unwrap();
    assert!(alone.tied.len() > 1, "{:?}", alone.tied);
    assert_eq!(alone.tied.first(), Some(&alone.parts));
    let price = |p: &FilterParts| p.series.unit_cost + p.shunt.unit_cost;
    assert!(alone
        .tied
        .iter()
        .all(|p| (price(p) - price(&alone.parts)).abs() < 1e-12));
    let ids: Vec<&str> = built
        .resistors
        .iter()
        .map(|r| r.part.part_id.as_str())
        .collect();
    let shared = alone
        .tied
        .iter()
        .find(|p| ids.contains(&p.series.part_id.as_str()))
        .expect("a tied pair uses a resistor of the demo design");
    assert!(!ids.contains(&alone.parts.series.part_id.as_str()));
    let (parts, report) = designed(&need, &stock, &design);
    assert_eq!(&parts, shared);
    assert!((price(&parts) - price(&alone.parts)).abs() < 1e-12);
    assert!(report.checks.iter().all(|c| c.pass), "{:?}", report.checks);
}
