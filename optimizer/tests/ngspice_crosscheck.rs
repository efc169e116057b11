//! Cross-check of the SPICE export against an outside simulator: ngspice
//! (Debian package `ngspice`, run as `ngspice -b`).
//!
//! For every stage shape (and cascades of them) a need and a design are
//! built in code, exported with `spanfit::spice::export`, and simulated by
//! ngspice in a temporary folder. The output at both ends of the sensor
//! span must match the core's MNA result (`analysis::analyze` ->
//! `transfer.output_at_ends_v`) within 1e-6 relative. Then each explicit
//! error source of the netlist contract (`docs/spice.md`) is moved in the deck
//! text (`VOS_<ref>` to 1 mV, `IBP_<ref>`/`IBN_<ref>` to 1 uA, each
//! `VREF_<ref>`/`VSUP` by +10 mV), and the output shift ngspice reports
//! must match the core netlist solved with the same change
//! (`spanfit::mna::Solver`) within 1e-6 relative plus 1e-7 V (ngspice's
//! own rounding; see [`SHIFT_FLOOR_V`]), while the moved outputs still
//! match within 1e-6 relative.
//!
//! `cargo test --test ngspice_crosscheck -- --nocapture` prints the
//! numbers of each case; `SPANFIT_KEEP_DECKS=1` keeps the decks in the
//! temporary folder for inspection.
//!
//! ngspice must be on PATH: when it is not, these tests fail with a
//! message saying so (CI installs it); they never skip silently.

// The cross-check prints what ngspice found for each case (shown with
// --nocapture).
#![allow(clippy::print_stdout)]

mod common;
use common::ngspice::{run_ngspice, set_dc};
use spanfit::analysis::analyze;
use spanfit::mna::Solver;
use spanfit::netlist::ElementKind;
use spanfit::topology::{build, Built};

/// Relative tolerance of the comparison with ngspice.
const REL_TOL: f64 = 1e-6;
/// Absolute floor for values that are zero in exact arithmetic (volts);
/// far below anything a front end resolves, far above double rounding.
const ABS_FLOOR_V: f64 = 1e-10;
/// Absolute allowance on a *shift* (difference of two ngspice runs).
/// ngspice stamps a VCVS as `V(out) = Aol (V+ - V-)` from node voltages
/// near the common mode, so each run carries about `Aol * eps * Vcm`
/// (1e7 x 1.1e-16 x 2.5 V = 3e-9 V per in-amp amplifier) of rounding,
/// amplified by later stages; up to 4e-8 V was seen on the three-stage
/// cascade. (Found during development by solving the same decks exactly in
/// rational arithmetic with Python's `fractions`: the core matched that to
/// 1e-11 relative or better, ngspice to about 1e-8.) 1e-7 V is 1/460 of an
/// LSB of a 16-bit, 3 V converter.
const SHIFT_FLOOR_V: f64 = 1e-7;

/// Relative mismatch of `a` against `b`, with the absolute floor.
fn mismatch(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(a.abs()).max(ABS_FLOOR_V / REL_TOL)
}

/// Output of the core netlist at both span ends with element `name` (a
/// source) set to `value`, solved directly with the MNA solver.
fn core_with(built: &Built, span: [f64; 2], name: Option<(&str, f64)>) -> [f64; 2] {
    let mut n = built.netlist.clone();
    if let Some((name, value)) = name {
        let e = n
            .element(name)
            .unwrap_or_else(|| panic!("no element `{name}` in the core netlist"));
        n.elements[e].kind = match n.elements[e].kind {
            ElementKind::VoltageSource { .. } => ElementKind::VoltageSource { volts: value },
            ElementKind::CurrentSource { .. } => ElementKind::CurrentSource { amps: value },
            other => panic!("`{name}` is not a source: {other:?}"),
        };
    }
    let mut solver = Solver::new(&n);
    let mut out = [0.0; 2];
    for (end, v) in span.iter().enumerate() {
        n.elements[built.vsense].kind = ElementKind::VoltageSource { volts: *v };
        let x = solver
            .dc(&n)
            .unwrap_or_else(|s| panic!("core netlist is singular at {}", s.unknown));
        out[end] = solver.voltage(&x, built.out);
    }
    out
}

/// A need as TOML text.
struct NeedSpec {
    differential: bool,
    signal: [f64; 2],
    source_ohms: f64,
    adc: [f64; 2],
    rails: [f64; 2],
}

impl NeedSpec {
    fn toml(&self) -> String {
        let sensor = if self.differential {
            "output = \"differential\"\ncommon_mode_v = 2.5\n"
        } else {
            "output = \"single-ended\"\n"
        };
        format!(
            "# invented test scenario\n[sensor]\nlabel = \"cross-check sensor (invented)\"\n\
             signal_low_v = {}\nsignal_high_v = {}\n{sensor}source_ohms = {}\n\n\
             [adc]\nlow_v = {}\nhigh_v = {}\nbits = 16\nmargin_pct = 2.0\n\n\
             [supply]\npositive_v = {}\nnegative_v = {}\n\n\
             [accuracy]\nmax_error_pct_fs = 1.0\ntemp_min_c = -10.0\ntemp_max_c = 50.0\n\n\
             [search]\nbom_line_cost = 0.05\n",
            self.signal[0],
            self.signal[1],
            self.source_ohms,
            self.adc[0],
            self.adc[1],
            self.rails[0],
            self.rails[1]
        )
    }
}

/// An inline resistor, 0.1 % 25 ppm/C.
fn r(ohms: f64) -> String {
    format!("{{\"ohms\": {ohms}, \"tolerance_pct\": 0.1, \"tcr_ppm_per_c\": 25}}")
}

/// What one case found.
struct Outcome {
    /// Largest relative mismatch of an output (nominal and moved decks).
    worst: f64,
    /// ngspice output at both span ends.
    ngspice_v: [f64; 2],
}

/// Run the whole cross-check for one case.
fn cross_check(name: &str, spec: &NeedSpec, stages: &[String]) -> Outcome {
    let need_text = spec.toml();
    let need = spanfit::need::parse_need(need_text.as_bytes(), &format!("{name}.toml"))
        .unwrap_or_else(|e| panic!("{name}: need does not parse: {e}\n{need_text}"));
    let stock = spanfit::stock::parse_stock(&spanfit::demo::stock_files())
        .unwrap_or_else(|e| panic!("demo stock does not parse: {e}"));
    let design_text = format!(
        "{{\"format\": \"spanfit-design-1\", \"stages\": [{}]}}",
        stages.join(",")
    );
    let design =
        spanfit::design::parse_design(design_text.as_bytes(), &format!("{name}.json"), &stock)
            .unwrap_or_else(|e| panic!("{name}: design does not parse: {e}\n{design_text}"));
    let (_model, report) = analyze(&need, &stock, &design, 0, 1)
        .unwrap_or_else(|e| panic!("{name}: analysis failed: {e}"));
    let core = report.transfer.output_at_ends_v;
    let built =
        build(&need, &stock, &design).unwrap_or_else(|e| panic!("{name}: build failed: {e}"));
    let span = [need.sensor.signal_low.0, need.sensor.signal_high.0];

    let deck = spanfit::spice::export(&need, &stock, &design)
        .unwrap_or_else(|e| panic!("{name}: export failed: {e}"));

    // The naming contract of `docs/spice.md`, on the text itself.
    let has_line = |prefix: &str| deck.lines().any(|l| l.starts_with(prefix));
    assert!(has_line("VSENSE inp "), "{name}: no VSENSE element\n{deck}");
    assert_eq!(
        has_line("VCM inn 0 "),
        spec.differential,
        "{name}: VCM\n{deck}"
    );
    for p in &built.resistors {
        assert!(
            has_line(&format!("{} ", p.designator)),
            "{name}: no element {}\n{deck}",
            p.designator
        );
    }
    for s in &built.sections {
        for src in ["VOS_", "IBP_", "IBN_"] {
            let line = format!("{src}{} ", s.designator);
            assert!(
                deck.lines()
                    .any(|l| l.starts_with(&line) && l.ends_with(" DC 0")),
                "{name}: no `{line}... DC 0` line\n{deck}"
            );
        }
    }
    assert!(deck.lines().any(|l| l == ".end"), "{name}: no .end");

    let ng = run_ngspice(&deck, name);
    let mut worst = 0.0f64;
    for end in 0..2 {
        let m = mismatch(ng[end], core[end]);
        worst = worst.max(m);
        assert!(
            m <= REL_TOL,
            "{name}: end {end}: ngspice {} V, spanfit {} V (relative mismatch {m:e})\n{deck}",
            ng[end],
            core[end]
        );
    }
    // The direct solve agrees with the analysis (same netlist).
    let base = core_with(&built, span, None);
    for end in 0..2 {
        assert!(
            mismatch(base[end], core[end]) <= 1e-12,
            "{name}: direct solve vs analysis"
        );
    }

    // Move each explicit error source in the deck text and in the core.
    let mut worst_shift = 0.0f64;
    let mut moves: Vec<(String, f64)> = Vec::new();
    for s in &built.sections {
        moves.push((format!("VOS_{}", s.designator), 1e-3));
        moves.push((format!("IBP_{}", s.designator), 1e-6));
        moves.push((format!("IBN_{}", s.designator), 1e-6));
        if s.inamp.is_some() {
            moves.push((format!("VOSO_{}", s.designator), 1e-3));
        }
    }
    for src in &built.sources {
        let e = &built.netlist.elements[src.element];
        let volts = match e.kind {
            ElementKind::VoltageSource { volts } => volts,
            _ => panic!("{name}: source {} is not a voltage source", e.name),
        };
        moves.push((e.name.clone(), volts + 0.01));
    }
    for (element, value) in &moves {
        let moved = set_dc(&deck, element, *value);
        let ng_moved = run_ngspice(&moved, &format!("{name}-{element}"));
        let core_moved = core_with(&built, span, Some((element, *value)));
        for end in 0..2 {
            let ng_shift = ng_moved[end] - ng[end];
            let core_shift = core_moved[end] - base[end];
            let m = mismatch(ng_shift, core_shift);
            worst_shift = worst_shift.max(m);
            assert!(
                (ng_shift - core_shift).abs() <= REL_TOL * core_shift.abs() + SHIFT_FLOOR_V,
                "{name}: {element} = {value}: end {end}: ngspice shift {ng_shift:e} V, \
                 spanfit shift {core_shift:e} V (relative mismatch {m:e})"
            );
        }
        // The moved deck still matches the moved core like the nominal one.
        for end in 0..2 {
            let m = mismatch(ng_moved[end], core_moved[end]);
            worst = worst.max(m);
            assert!(
                m <= REL_TOL,
                "{name}: {element} = {value}: end {end}: ngspice {} V, spanfit {} V ({m:e})",
                ng_moved[end],
                core_moved[end]
            );
        }
        // The offset of a section always moves the output (noise gain >= 1).
        if element.starts_with("VOS_") {
            let shift = core_moved[0] - base[0];
            assert!(
                shift.abs() >= 0.5e-3,
                "{name}: {element} moved the output only {shift:e} V"
            );
        }
    }
    println!(
        "{name}: ngspice v(out) = [{:e}, {:e}] V, spanfit = [{:e}, {:e}] V, \
         {} source moves; max relative mismatch {worst:.2e} on outputs, \
         {worst_shift:.2e} on shifts",
        ng[0],
        ng[1],
        core[0],
        core[1],
        moves.len()
    );
    Outcome {
        worst,
        ngspice_v: ng,
    }
}

fn single(signal: [f64; 2], adc: [f64; 2], rails: [f64; 2]) -> NeedSpec {
    NeedSpec {
        differential: false,
        signal,
        source_ohms: 100.0,
        adc,
        rails,
    }
}

fn differential() -> NeedSpec {
    NeedSpec {
        differential: true,
        signal: [0.0, 0.025],
        source_ohms: 350.0,
        adc: [0.0, 3.0],
        rails: [5.0, 0.0],
    }
}

/// Non-inverting, offset through the bottom of the gain leg from a
/// divider off a reference: buffered (the follower is section A of the
/// dual) or unbuffered (its Thevenin resistance in series with Rg).
fn non_inverting_stage(buffered: bool) -> String {
    // Vout = Vs (1 + Rf/Rg') - Vth Rf/Rg' with Vth = 1.25 V * 10k/24.3k =
    // 0.514 V; K = 31.7 needs Rf/Rg' = 30.7. Buffered: Rg' = Rg = 1k.
    // Unbuffered: Rg' = Rg + 14.3k || 10k = 4.12k + 5.88k = 10k.
    let (rf, rg) = if buffered {
        (30_700.0, 1_000.0)
    } else {
        (306_000.0, 4_120.0)
    };
    format!(
        r#"{{"shape": "non-inverting", "amplifier": "OA-RR2",
            "resistors": {{"rf": {}, "rg": {}}},
            "offset": {{"kind": "divider", "source": "VR-125", "top": {}, "bottom": {}, "buffered": {buffered}}}}}"#,
        r(rf),
        r(rg),
        r(14_300.0),
        r(10_000.0)
    )
}

#[test]
fn non_inverting_gain_leg_offset_buffered() {
    let w = cross_check(
        "non-inverting-buffered",
        &single([0.5, 0.6], [0.0, 3.3], [5.0, 0.0]),
        &[non_inverting_stage(true)],
    );
    assert!(w.worst <= REL_TOL);
}

#[test]
fn non_inverting_gain_leg_offset_unbuffered() {
    let w = cross_check(
        "non-inverting-unbuffered",
        &single([0.5, 0.6], [0.0, 3.3], [5.0, 0.0]),
        &[non_inverting_stage(false)],
    );
    assert!(w.worst <= REL_TOL);
}

#[test]
fn non_inverting_summed() {
    let stage = format!(
        r#"{{"shape": "non-inverting-summed", "amplifier": "OA-RR1",
            "resistors": {{"ri": {}, "ro": {}, "rp": {}, "rf": {}, "rg": {}}},
            "offset": {{"kind": "direct", "source": "VR-250"}}}}"#,
        r(10_000.0),
        r(402_000.0),
        r(100_000.0),
        r(31_600.0),
        r(1_000.0)
    );
    let w = cross_check(
        "non-inverting-summed",
        &single([0.0, 0.1], [0.0, 3.3], [5.0, 0.0]),
        &[stage],
    );
    assert!(w.worst <= REL_TOL);
}

#[test]
fn inverting_single_stage_split_supplies() {
    // Vout = -Rf (Vs/(Ri + Rs) + Vr/Ro), + input grounded (split rails).
    let stage = format!(
        r#"{{"shape": "inverting", "amplifier": "OA-GP4",
            "resistors": {{"ri": {}, "rf": {}, "ro": {}}},
            "offset": {{"kind": "direct", "source": "VR-250"}},
            "bias": {{"kind": "ground"}}}}"#,
        r(10_000.0),
        r(475_000.0),
        r(523_000.0)
    );
    let w = cross_check(
        "inverting-split",
        &single([-0.1, 0.0], [-2.5, 2.5], [5.0, -5.0]),
        &[stage],
    );
    assert!(w.worst <= REL_TOL);
}

#[test]
fn two_inverting_stages_positive_gain() {
    // Stage 1: V1 = 11 Vb - 10 Vs with Vb = 0.25 V from a buffered divider
    // off the supply; stage 2: V2 = 4 Vb2 - 3 V1 with Vb2 from an
    // unbuffered divider off a reference. Overall gain +30.
    let s1 = format!(
        r#"{{"shape": "inverting", "amplifier": "OA-RR2",
            "resistors": {{"ri": {}, "rf": {}}},
            "offset": {{"kind": "ground"}},
            "bias": {{"kind": "divider", "source": "supply", "top": {}, "bottom": {}, "buffered": true}}}}"#,
        r(10_000.0),
        r(100_000.0),
        r(19_100.0),
        r(1_000.0)
    );
    let s2 = format!(
        r#"{{"shape": "inverting", "amplifier": "OA-RR2",
            "resistors": {{"ri": {}, "rf": {}}},
            "offset": {{"kind": "ground"}},
            "bias": {{"kind": "divider", "source": "VR-250", "top": {}, "bottom": {}, "buffered": false}}}}"#,
        r(10_000.0),
        r(30_100.0),
        r(2_000.0),
        r(10_000.0)
    );
    let w = cross_check(
        "two-inverting",
        &single([0.0, 0.1], [0.0, 3.3], [5.0, 0.0]),
        &[s1, s2],
    );
    assert!(w.worst <= REL_TOL);
    // The cascade really has positive overall gain (about +30).
    let gain = (w.ngspice_v[1] - w.ngspice_v[0]) / 0.1;
    assert!(gain > 25.0 && gain < 35.0, "overall gain {gain}");
}

#[test]
fn difference_unbuffered_divider() {
    // Vout = (R2/R1) Vd + Vref, REF from a 20k/1k divider off 1.25 V, its
    // Thevenin resistance taken out of R4.
    let stage = format!(
        r#"{{"shape": "difference", "amplifier": "OA-ZD1",
            "resistors": {{"r1": {}, "r2": {}, "r3": {}, "r4": {}}},
            "offset": {{"kind": "divider", "source": "VR-125", "top": "HR-F1-20K0", "bottom": "HR-F1-1K00", "buffered": false}}}}"#,
        r(1_000.0),
        r(100_000.0),
        r(1_000.0),
        r(99_000.0)
    );
    let w = cross_check("difference", &differential(), &[stage]);
    assert!(w.worst <= REL_TOL);
}

#[test]
fn instrumentation_discrete() {
    let stage = format!(
        r#"{{"shape": "instrumentation-discrete", "amplifier": "OA-GP4",
            "resistors": {{"rf1": "HR-F1-24K9", "rf2": "HR-F1-24K9", "rg": "HR-F01-1K00",
                           "r1": "HR-F01-10K0", "r2": "HR-F01-23K2", "r3": "HR-F01-10K0", "r4": "HR-F01-23K2"}},
            "offset": {{"kind": "divider", "source": "VR-125", "top": {}, "bottom": {}, "buffered": true}}}}"#,
        r(20_000.0),
        r(1_000.0)
    );
    let w = cross_check("instrumentation-discrete", &differential(), &[stage]);
    assert!(w.worst <= REL_TOL);
}

#[test]
fn instrumentation_integrated_buffered_ref() {
    // The demo design (examples/demo-design.json).
    let stage = r#"{"shape": "instrumentation-integrated", "amplifier": "IA-3",
        "resistors": {"rg": "HR-F01-432R"},
        "offset": {"kind": "divider", "source": "VR-125", "top": "HR-F1-20K0", "bottom": "HR-F1-1K00", "buffered": true},
        "buffer": "OA-RR1"}"#
        .to_string();
    let w = cross_check("instrumentation-integrated", &differential(), &[stage]);
    assert!(w.worst <= REL_TOL);
}

#[test]
fn three_stage_cascade() {
    // In-amp x10 with REF at 1.25 V, then a non-inverting x6 offset by the
    // same reference at the gain leg, then a summed stage off the supply.
    let s1 = r#"{"shape": "instrumentation-integrated", "amplifier": "IA-3",
        "resistors": {"rg": "HR-F01-5K49"},
        "offset": {"kind": "direct", "source": "VR-125"}}"#
        .to_string();
    let s2 = format!(
        r#"{{"shape": "non-inverting", "amplifier": "OA-RR2",
            "resistors": {{"rf": {}, "rg": {}}},
            "offset": {{"kind": "direct", "source": "VR-125"}}}}"#,
        r(49_900.0),
        r(10_000.0)
    );
    let s3 = format!(
        r#"{{"shape": "non-inverting-summed", "amplifier": "OA-RR2",
            "resistors": {{"ri": {}, "ro": {}, "rf": {}, "rg": {}}},
            "offset": {{"kind": "divider", "source": "supply", "top": {}, "bottom": {}, "buffered": false}}}}"#,
        r(10_000.0),
        r(100_000.0),
        r(1_000.0),
        r(10_000.0),
        r(10_000.0),
        r(10_000.0)
    );
    let w = cross_check("three-stage", &differential(), &[s1, s2, s3]);
    assert!(w.worst <= REL_TOL);
}
