//! The `alias rejection` check: where a need asks for a rejection at half
//! the sample rate (`adc.alias_rejection_db`), a design meets the need
//! only if its chain, as built, gives it. The invented demo need is asked
//! for 60 dB at 1 kHz (one pole at the ADC input cannot give it without
//! far more droop at 10 Hz than the filter rules allow, so no pair fits)
//! and for 5 dB (the pair the rules choose gives more). The rejection the
//! check reads is the filter report's own where the design has a pair,
//! and a one-pole closed form bounds it (handbook: one pole rejects
//! `10 log10(1 + (f/fc)^2)` dB at `f`; common practice).
// A test stops loudly on a broken tree; the core itself does not.
#![allow(clippy::unwrap_used)]

use serde_json::Value;
use spanfit::api::analyze_bundle;

const SOLVED: &str = include_str!("../../examples/demo-solved-design.json");

/// The demo need with a sample rate of 2 kS/s and the given rejection.
fn need(rejection_db: f64) -> String {
    let base = spanfit::demo::NEED_TOML;
    assert!(base.contains("[adc]\n"), "the demo need has an [adc] table");
    base.replacen(
        "[adc]\n",
        &format!("[adc]\nsample_rate_hz = 2000\nalias_rejection_db = {rejection_db}\n"),
        1,
    )
}

fn analyse(rejection_db: f64) -> Value {
    let need = need(rejection_db);
    let bundle = analyze_bundle(
        need.as_bytes(),
        "alias-need.toml",
        &[],
        SOLVED.as_bytes(),
        "demo-solved-design.json",
    )
    .unwrap();
    serde_json::to_value(bundle).unwrap()["report"].clone()
}

fn alias_finding(report: &Value) -> Value {
    report["design"]["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["check"] == "alias rejection")
        .cloned()
        .expect("the need asks for a rejection, so the report checks it")
}

/// The dB figure a finding's detail states ("rejects X dB").
fn stated_db(detail: &str) -> f64 {
    let after = detail.split("rejects ").nth(1).unwrap();
    after.split(" dB").next().unwrap().trim().parse().unwrap()
}

#[test]
fn a_design_short_of_the_asked_rejection_does_not_meet_the_need() {
    let report = analyse(60.0);
    let finding = alias_finding(&report);
    assert_eq!(finding["ok"], false, "{finding}");
    let detail = finding["detail"].as_str().unwrap();
    let got = stated_db(detail);
    assert!(got < 60.0, "{detail}");
    assert_eq!(report["design"]["feasible"], false);
    assert_eq!(report["design"]["error"]["meets_target"], false);
    assert_ne!(
        report["status"], "ok",
        "a design short of the rejection is not reported as meeting the need"
    );
    // Where the design has a pair, the check reads the filter report's
    // own figure.
    if let Some(r) = report["design"]["filter"]["rejection_at_nyquist_db"].as_f64() {
        assert!((r - got).abs() < 0.01, "filter report {r}, finding {got}");
    }
}

#[test]
fn a_design_with_the_asked_rejection_passes_the_check() {
    let report = analyse(5.0);
    let finding = alias_finding(&report);
    assert_eq!(finding["ok"], true, "{finding}");
    let got = stated_db(finding["detail"].as_str().unwrap());
    assert!(got >= 5.0);
    let filter = &report["design"]["filter"];
    let corner = filter["corner_hz"]
        .as_f64()
        .expect("the rules fit a pair at 5 dB");
    // The whole chain rejects at least what its -3 dB corner's one pole
    // would (every other pole only adds), within rounding.
    let one_pole = 10.0 * (1.0 + (1000.0 / corner).powi(2)).log10();
    assert!(
        got >= one_pole - 0.05,
        "chain {got} dB, one pole at the corner {one_pole} dB"
    );
    assert!((filter["rejection_at_nyquist_db"].as_f64().unwrap() - got).abs() < 0.01);
    assert_eq!(
        report["status"], "ok",
        "the demo design still meets the need"
    );
}
