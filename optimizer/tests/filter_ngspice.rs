//! The filter at the ADC input against an outside simulator: ngspice
//! (Debian package `ngspice`, run as `ngspice -b`) runs `.ac` on the deck
//! spanfit exports, unmodified except for the `.control` block, which is
//! replaced by one that prints the response at a few frequencies. The
//! -3 dB corner must lie within 2 % of the reported `corner_hz`, and the
//! rejection at half the sample rate within 0.5 dB of the reported
//! `rejection_at_nyquist_db`, for every design the solve returns (the
//! chosen one and the alternatives).
//!
//! The deck writes the op-amps as frequency-independent gain blocks, so
//! the need is chosen with its Nyquist frequency well below the stage
//! amplifiers' closed-loop poles (docs/filter.md says so).

// Tests run ngspice: they write decks to files and start a process.
#![allow(clippy::disallowed_methods, clippy::disallowed_types)]

// Only `ngspice()` of the shared runner is used here.
#[allow(dead_code)]
mod common;

use common::ngspice::ngspice;
use spanfit::api::{artifacts, solve_bundle, SolveControl};
use std::process::Command;

/// The demo need with a sample rate and an alias target.
fn need_text() -> String {
    spanfit::demo::NEED_TOML.replace(
        "[adc]\n",
        "[adc]\nsample_rate_hz = 4000.0\nalias_rejection_db = 10.0\n",
    )
}

/// The magnitude in dB of v(out) at each frequency, from ngspice `.ac`.
fn magnitudes_db(deck: &str, frequencies: &[f64], tag: &str) -> Vec<f64> {
    let start = deck
        .find("\n.control\n")
        .expect("the deck has a .control block");
    let mut text = deck[..start].to_string();
    text.push_str("\n.control\nset numdgt=12\n");
    for (i, f) in frequencies.iter().enumerate() {
        text.push_str(&format!(
            "ac lin 1 {f:e} {f:e}\nlet m{i} = vdb(out)\nprint m{i}\n"
        ));
    }
    text.push_str(".endc\n.end\n");
    let dir = std::env::temp_dir().join(format!("spanfit-filter-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("a temporary folder");
    let file = dir.join("deck.cir");
    std::fs::write(&file, &text).expect("the deck is written");
    let out = Command::new(ngspice())
        .arg("-b")
        .arg(&file)
        .current_dir(&dir)
        .output()
        .expect("ngspice runs");
    let stdout = String::from_utf8_lossy(&out.stdout).to_string();
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    let _ = std::fs::remove_dir_all(&dir);
    assert!(
        out.status.success(),
        "ngspice failed on {tag} ({}):\n{stdout}\n{stderr}\n{text}",
        out.status
    );
    (0..frequencies.len())
        .map(|i| {
            let prefix = format!("m{i} = ");
            stdout
                .lines()
                .find_map(|l| l.trim().strip_prefix(&prefix))
                .unwrap_or_else(|| panic!("{tag}: no m{i} in:\n{stdout}\n{text}"))
                .trim()
                .parse::<f64>()
                .expect("ngspice prints a number")
        })
        .collect()
}

#[test]
fn corner_and_nyquist_rejection_match_ngspice() {
    let mut progress = |_: spanfit::api::Progress| true;
    let clock = || 0.0;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let text = need_text();
    let bundle = solve_bundle(text.as_bytes(), "need.toml", &[], false, &mut control).unwrap();
    let (need, stock) = spanfit::api::load(text.as_bytes(), "need.toml", &[]).unwrap();
    let report = &bundle.report;
    let mut designs = vec![report.design.clone().expect("a design")];
    designs.extend(report.alternatives.iter().map(|a| a.design.clone()));
    for (k, d) in designs.iter().enumerate() {
        let filter = d.filter.as_ref().expect("a filter");
        let design = spanfit::api::read_design(
            serde_json::to_string(&d.file).unwrap().as_bytes(),
            "design",
            &stock,
        )
        .unwrap();
        let deck = artifacts(&need, &stock, &design).unwrap().spice.unwrap();
        assert!(deck.contains(" AC 1"), "VSENSE carries AC 1");
        assert!(deck.contains(&format!("{} out 0 ", filter.shunt_ref)));
        let fc = filter.corner_hz;
        let nyquist = 2000.0;
        let db = magnitudes_db(
            &deck,
            &[1e-3 * fc, 0.98 * fc, 1.02 * fc, nyquist],
            &format!("design{k}"),
        );
        let loss = |m: f64| db[0] - m;
        let half_power_db = 10.0 * 2f64.log10();
        assert!(
            loss(db[1]) < half_power_db && loss(db[2]) > half_power_db,
            "design {k}: ngspice loss {} dB at 0.98 fc and {} dB at 1.02 fc (fc = {fc} Hz)",
            loss(db[1]),
            loss(db[2])
        );
        let reported = filter.rejection_at_nyquist_db.unwrap();
        assert!(
            (loss(db[3]) - reported).abs() < 0.5,
            "design {k}: ngspice rejection {} dB, reported {reported} dB",
            loss(db[3])
        );
    }
}
