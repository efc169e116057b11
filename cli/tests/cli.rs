//! The `spanfit` binary as a user runs it: verbs, exit codes (0 with a
//! design, 1 when none meets the need, 2 on bad input), the fields of the
//! JSON report (`docs/report.md`), and the export files.
//!
//! Inputs are the checked-in examples (`examples/demo-need.toml`,
//! `examples/demo-design.json`, whose stock path points at
//! `parts-data/demo-stock`) and variants of them written to a scratch
//! folder under the system temp directory.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

fn example(name: &str) -> PathBuf {
    root().join("examples").join(name)
}

fn spanfit(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_spanfit"))
        .args(args)
        .output()
        .expect("the spanfit binary runs")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn code(o: &Output) -> i32 {
    o.status.code().unwrap_or(-1)
}

/// A scratch folder of its own for one test, emptied first.
fn scratch(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("spanfit-cli-{}-{test}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("the scratch folder can be made");
    dir
}

/// The demo need with one piece of text replaced (the piece must be there).
fn demo_need_with(from: &str, to: &str) -> String {
    let text = std::fs::read_to_string(example("demo-need.toml")).expect("the demo need reads");
    assert!(text.contains(from), "the demo need has no `{from}`");
    text.replacen(from, to, 1)
}

/// The demo need using the embedded stock (no `[stock] path`).
fn demo_need_embedded_stock() -> String {
    demo_need_with("path = \"../parts-data/demo-stock\"\n", "")
}

fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout).unwrap_or_else(|e| {
        panic!(
            "stdout is not JSON ({e}):\n{}\nstderr:\n{}",
            stdout(o),
            stderr(o)
        )
    })
}

/// The fields `docs/report.md` promises in a design object.
fn assert_contract_design(d: &Value) {
    assert!(d["topology"].is_string(), "topology: {}", d["topology"]);
    assert!(!d["stages"].as_array().expect("stages[]").is_empty());
    let parts = d["parts"].as_array().expect("parts[]");
    assert!(!parts.is_empty());
    for p in parts {
        for key in ["ref", "kind", "part_id"] {
            assert!(p[key].is_string(), "parts[].{key} in {p}");
        }
        assert!(!p["value"].is_null() && p["unit_cost"].is_number(), "{p}");
        if p["kind"] == "resistor" {
            assert!(p["value"].is_number(), "{p}");
            assert!(
                p["tolerance_pct"].is_number() && p["tcr_ppm_per_c"].is_number(),
                "{p}"
            );
        }
    }
    for key in ["gain", "offset_v", "ideal_gain", "ideal_offset_v"] {
        assert!(d["transfer"][key].is_number(), "transfer.{key}");
    }
    let e = &d["error"];
    assert!(e["worst_case_pct_fs"].is_number() && e["rss_pct_fs"].is_number());
    for line in e["budget"].as_array().expect("budget[]") {
        assert!(
            line["source"].is_string() && line["pct_fs"].is_number() && line["lsb"].is_number(),
            "{line}"
        );
    }
    for key in ["cost", "part_count", "bom_lines"] {
        assert!(d[key].is_number(), "{key}");
    }
}

#[test]
fn analyze_the_demo_design_as_json() {
    let need = example("demo-need.toml");
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
        "--json",
    ]);
    let v = json(&o);
    assert_contract_design(&v["design"]);
    assert!(v["design"]["error"]["yield_pct"].is_number());
    // The exit status follows the verdict: 0 when the design meets the need.
    let meets = v["design"]["error"]["meets_target"].as_bool().unwrap();
    assert_eq!(
        code(&o),
        if meets { 0 } else { 1 },
        "stderr:\n{}",
        stderr(&o)
    );
    assert_eq!(v["status"], if meets { "ok" } else { "infeasible" });
    // The report has the shape of a solve report with no search behind it.
    let keys: Vec<&String> = v.as_object().unwrap().keys().collect();
    assert_eq!(
        keys,
        [
            "alternatives",
            "design",
            "infeasible",
            "need",
            "reason",
            "search",
            "status"
        ]
    );
    assert!(v["search"].is_null() && v["infeasible"].is_null());
    assert_eq!(v["alternatives"], serde_json::json!([]));
    // The need's own figures ride along.
    let k = v["need"]["ideal_gain"].as_f64().unwrap();
    assert!((k - v["design"]["transfer"]["ideal_gain"].as_f64().unwrap()).abs() < 1e-12);
}

#[test]
fn analyze_a_design_that_meets_the_need_exits_0() {
    let dir = scratch("meets");
    // The demo design against a target it meets (1 % FS worst case).
    let need = dir.join("loose.toml");
    std::fs::write(
        &need,
        demo_need_embedded_stock().replacen("max_error_pct_fs = 0.5", "max_error_pct_fs = 1.0", 1),
    )
    .unwrap();
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
        "--json",
    ]);
    assert_eq!(code(&o), 0, "stderr:\n{}", stderr(&o));
    let v = json(&o);
    assert_eq!(v["status"], "ok");
    assert!(v["reason"].is_null());
    assert_contract_design(&v["design"]);
    assert!(v["design"]["error"]["worst_case_pct_fs"].as_f64().unwrap() <= 1.0);
    // The report feeds back: analysing the reported `file` gives the same design object.
    let again = dir.join("again.json");
    std::fs::write(&again, v["design"]["file"].to_string()).unwrap();
    let o2 = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        again.to_str().unwrap(),
        "--json",
    ]);
    assert_eq!(code(&o2), 0, "{}", stderr(&o2));
    assert_eq!(json(&o2)["design"], v["design"]);
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn analyze_prints_a_text_report_by_default() {
    let need = example("demo-need.toml");
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
    ]);
    // The checked-in demo design may or may not meet the demo need; the
    // text says which, and the exit status agrees.
    let text = stdout(&o);
    let missed = text.contains("NOT MET");
    assert_eq!(
        code(&o),
        if missed { 1 } else { 0 },
        "stderr:\n{}",
        stderr(&o)
    );
    for want in [
        "% FS",
        "LSB",
        "bar",
        "worst case",
        "verify on the bench",
        "IA-3",
    ] {
        assert!(text.contains(want), "no `{want}` in\n{text}");
    }
}

#[test]
fn a_design_that_misses_the_target_exits_1() {
    let dir = scratch("miss");
    // Same design, but a target no real front end reaches.
    let need = dir.join("tight.toml");
    std::fs::write(
        &need,
        demo_need_embedded_stock().replacen(
            "max_error_pct_fs = 0.5",
            "max_error_pct_fs = 0.001",
            1,
        ),
    )
    .unwrap();
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
        "--json",
    ]);
    assert_eq!(
        code(&o),
        1,
        "stdout:\n{}\nstderr:\n{}",
        stdout(&o),
        stderr(&o)
    );
    let v = json(&o);
    assert_eq!(v["status"], "infeasible");
    assert!(
        v["reason"].as_str().unwrap().contains("0.001"),
        "{}",
        v["reason"]
    );
    assert!(stderr(&o).contains("no design meets the need"));
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn a_bad_spec_exits_2_naming_the_key() {
    let dir = scratch("badspec");
    let need = dir.join("bad.toml");
    std::fs::write(&need, demo_need_with("bits = 16", "bits = \"sixteen\"")).unwrap();
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 2, "stdout:\n{}", stdout(&o));
    let err = stderr(&o);
    assert!(
        err.contains("bad.toml") && err.contains("adc.bits"),
        "{err}"
    );
    assert!(stdout(&o).is_empty());
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn a_bad_design_file_exits_2_naming_the_key() {
    let dir = scratch("baddesign");
    let design = dir.join("mine.json");
    let text = std::fs::read_to_string(example("demo-design.json")).unwrap();
    std::fs::write(&design, text.replacen("\"OA-RR1\"", "\"OA-NONE\"", 1)).unwrap();
    let need = example("demo-need.toml");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 2);
    let err = stderr(&o);
    assert!(
        err.contains("mine.json") && err.contains("stages[0].buffer") && err.contains("OA-NONE"),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn a_missing_file_exits_2() {
    let o = spanfit(&["solve", "no-such-need.toml"]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("no-such-need.toml"), "{}", stderr(&o));
    let need = example("demo-need.toml");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        "no-such-design.json",
    ]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("no-such-design.json"), "{}", stderr(&o));
}

#[test]
fn a_missing_stock_folder_exits_2_naming_stock_path() {
    let dir = scratch("nostock");
    let need = dir.join("need.toml");
    std::fs::write(
        &need,
        demo_need_with("../parts-data/demo-stock", "shelf-that-is-not-there"),
    )
    .unwrap();
    let o = spanfit(&["solve", need.to_str().unwrap()]);
    assert_eq!(code(&o), 2);
    let err = stderr(&o);
    assert!(
        err.contains("stock.path") && err.contains("shelf-that-is-not-there"),
        "{err}"
    );
    // A folder with no CSV in it is not a stock either.
    std::fs::create_dir_all(dir.join("empty-shelf")).unwrap();
    std::fs::write(
        &need,
        demo_need_with("../parts-data/demo-stock", "empty-shelf"),
    )
    .unwrap();
    let o = spanfit(&["solve", need.to_str().unwrap()]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("no *.csv"), "{}", stderr(&o));
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn the_stock_folder_is_read_relative_to_the_spec() {
    let dir = scratch("ownstock");
    let shelf = dir.join("shelf");
    std::fs::create_dir_all(&shelf).unwrap();
    let demo = root().join("parts-data").join("demo-stock");
    for name in [
        "resistors.csv",
        "opamps.csv",
        "references.csv",
        "inamps.csv",
    ] {
        std::fs::copy(demo.join(name), shelf.join(name)).unwrap();
    }
    // Break the in-amp table: the message must name that file.
    std::fs::write(
        shelf.join("inamps.csv"),
        "part_id,gain_resistor_ohms\nIA-3,lots\n",
    )
    .unwrap();
    let need = dir.join("need.toml");
    std::fs::write(&need, demo_need_with("../parts-data/demo-stock", "shelf")).unwrap();
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("inamps.csv"), "{}", stderr(&o));
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn exports_are_written_for_an_analysed_design() {
    let dir = scratch("exports");
    let spice = dir.join("front-end.cir");
    let bom = dir.join("front-end-bom.csv");
    let svg = dir.join("front-end.svg");
    let need = example("demo-need.toml");
    let design = example("demo-design.json");
    let o = spanfit(&[
        "analyze",
        need.to_str().unwrap(),
        "--design",
        design.to_str().unwrap(),
        "--json",
        "--spice",
        spice.to_str().unwrap(),
        "--bom",
        bom.to_str().unwrap(),
        "--svg",
        svg.to_str().unwrap(),
    ]);
    // Written whether or not the design meets the need: there is a design.
    assert!(matches!(code(&o), 0 | 1), "stderr:\n{}", stderr(&o));
    let v = json(&o);
    let netlist = std::fs::read_to_string(&spice).expect("the netlist file is written");
    assert!(netlist.contains("VSENSE"), "{netlist}");
    let words: Vec<&str> = netlist
        .split(|c: char| !c.is_ascii_alphanumeric() && c != '_')
        .collect();
    assert!(words.contains(&"out"), "no node `out` in\n{netlist}");
    // Every part of the report is in the netlist under its `ref`, and in the BOM by part id.
    let bom_text = std::fs::read_to_string(&bom).expect("the BOM file is written");
    for p in v["design"]["parts"].as_array().unwrap() {
        let r = p["ref"].as_str().unwrap();
        let element = match p["kind"].as_str().unwrap() {
            "resistor" | "capacitor" => r.to_string(),
            "reference" => format!("VREF_{r}"),
            _ => format!("VOS_{r}"),
        };
        assert!(
            words.contains(&element.as_str()),
            "no `{element}` in\n{netlist}"
        );
        assert!(
            bom_text.contains(p["part_id"].as_str().unwrap()),
            "{bom_text}"
        );
    }
    assert!(std::fs::read_to_string(&svg)
        .expect("the schematic is written")
        .contains("<svg"));
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn unknown_verbs_and_options_exit_2_with_usage() {
    let o = spanfit(&["optimise", "x.toml"]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("optimise") && stderr(&o).contains("usage:"));
    let o = spanfit(&["solve", "x.toml", "--fast"]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("--fast"));
    let o = spanfit(&[]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("usage:"));
}

#[test]
fn help_lists_the_verbs() {
    for args in [&["--help"][..], &["help"], &["analyze", "--help"]] {
        let o = spanfit(args);
        assert_eq!(code(&o), 0);
        let text = stdout(&o);
        for verb in [
            "spanfit solve NEED",
            "spanfit analyze NEED --design",
            "spanfit demo",
        ] {
            assert!(text.contains(verb), "{text}");
        }
    }
}

// ---------------------------------------------------------------------
// These run the optimiser.

#[test]
fn demo_solves_with_a_design() {
    let dir = scratch("demo");
    let spice = dir.join("demo.cir");
    let bom = dir.join("demo-bom.csv");
    let svg = dir.join("demo.svg");
    let o = spanfit(&[
        "demo",
        "--json",
        "--spice",
        spice.to_str().unwrap(),
        "--bom",
        bom.to_str().unwrap(),
        "--svg",
        svg.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 0, "stderr:\n{}", stderr(&o));
    let v = json(&o);
    assert_eq!(v["status"], "ok");
    assert_contract_design(&v["design"]);
    assert!(v["design"]["error"]["meets_target"].as_bool().unwrap());
    assert!(v["alternatives"].is_array());
    let s = &v["search"];
    assert!(
        s["mode"].is_string()
            && s["evaluated"].is_number()
            && s["elapsed_ms"].is_number()
            && s["proven_optimal"].is_boolean(),
        "{s}"
    );
    assert!(std::fs::read_to_string(&spice).unwrap().contains("VSENSE"));
    let bom_text = std::fs::read_to_string(&bom).unwrap();
    for p in v["design"]["parts"].as_array().unwrap() {
        assert!(
            bom_text.contains(p["part_id"].as_str().unwrap()),
            "{bom_text}"
        );
    }
    assert!(std::fs::read_to_string(&svg).unwrap().contains("<svg"));
    let _ = std::fs::remove_dir_all(dir);
}

/// A need no design can meet, by proof (rails of 40 V, beyond every
/// stocked amplifier's supply range), exits 1 with the reason.
#[test]
fn a_need_proven_infeasible_exits_1_with_the_reason() {
    let dir = scratch("infeasible");
    let need = dir.join("rails.toml");
    let text = demo_need_embedded_stock().replacen("positive_v = 5.0", "positive_v = 40.0", 1);
    assert_ne!(
        text,
        demo_need_embedded_stock(),
        "the demo need changed shape"
    );
    std::fs::write(&need, text).unwrap();
    let o = spanfit(&["solve", need.to_str().unwrap(), "--json"]);
    assert_eq!(
        code(&o),
        1,
        "stdout:\n{}\nstderr:\n{}",
        stdout(&o),
        stderr(&o)
    );
    let v = json(&o);
    assert_eq!(v["status"], "infeasible");
    assert!(v["design"].is_null());
    assert!(!v["infeasible"]["binding"].as_str().unwrap().is_empty());
    // The text report says what binds, too.
    let o = spanfit(&["solve", need.to_str().unwrap()]);
    assert_eq!(code(&o), 1);
    assert!(
        stdout(&o).contains("No design meets the need"),
        "{}",
        stdout(&o)
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// A need the optimised search finds no design for, without a proof that
/// none exists (a target well below what it reaches, about 0.42 % FS, yet
/// above what the floors prove: on the demo stock the loop-gain floor's
/// feedback-resistor term alone is about 0.1 % FS, and a target of
/// 0.01 % FS is now proven infeasible; on a space too large to finish),
/// exits 3 `unfinished` and never says that no design meets the need.
#[test]
fn no_design_found_without_a_proof_exits_3_not_1() {
    let dir = scratch("unproven");
    let need = dir.join("tight.toml");
    let text =
        demo_need_embedded_stock().replacen("max_error_pct_fs = 0.5", "max_error_pct_fs = 0.2", 1);
    std::fs::write(&need, text).unwrap();
    let o = spanfit(&["solve", need.to_str().unwrap(), "--json"]);
    assert_eq!(code(&o), 3, "stderr:\n{}", stderr(&o));
    let v = json(&o);
    assert_eq!(v["status"], "unfinished");
    assert_eq!(v["infeasible"]["proven"], false);
    let o = spanfit(&["solve", need.to_str().unwrap()]);
    assert_eq!(code(&o), 3);
    assert!(
        !stdout(&o).contains("No design meets the need"),
        "{}",
        stdout(&o)
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// Far below what any stocked first-stage part's offset drift allows
/// (the least, 0.05 uV/degC over 35 degC at K = 115.2, is about 0.0067 %
/// FS), the space bound proves that no design exists: exit 1, proven.
#[test]
fn a_target_below_every_parts_drift_floor_is_proven_infeasible() {
    let dir = scratch("drift-floor");
    let need = dir.join("tighter.toml");
    let text = demo_need_embedded_stock().replacen(
        "max_error_pct_fs = 0.5",
        "max_error_pct_fs = 0.001",
        1,
    );
    std::fs::write(&need, text).unwrap();
    let o = spanfit(&["solve", need.to_str().unwrap(), "--json"]);
    assert_eq!(code(&o), 1, "stderr:\n{}", stderr(&o));
    let v = json(&o);
    assert_eq!(v["status"], "infeasible");
    assert_eq!(v["infeasible"]["proven"], true);
    let _ = std::fs::remove_dir_all(dir);
}

/// A search cut short by its time limit before it found a design proves
/// nothing: it exits 3 with `status: "unfinished"`, never "infeasible".
#[test]
fn a_search_cut_short_exits_3_unfinished() {
    let dir = scratch("unfinished");
    let need = dir.join("short.toml");
    // A target this stock misses by little (no amplifier floor rules it
    // out before the walk), so no design can be found before the limit;
    // with 1 ms the walk stops at its first clock check.
    std::fs::write(
        &need,
        demo_need_embedded_stock()
            .replacen("max_error_pct_fs = 0.5", "max_error_pct_fs = 0.1", 1)
            .replacen("time_limit_ms = 2000", "time_limit_ms = 1", 1),
    )
    .expect("the need is written");
    let o = spanfit(&["solve", need.to_str().expect("a UTF-8 path"), "--json"]);
    assert_eq!(code(&o), 3, "stderr:\n{}", stderr(&o));
    let v = json(&o);
    assert_eq!(v["status"], "unfinished");
    assert!(v["design"].is_null());
    assert!(v["infeasible"].is_null(), "{}", v["infeasible"]);
    assert!(
        v["reason"]
            .as_str()
            .is_some_and(|r| r.contains("search.time_limit_ms")),
        "{}",
        v["reason"]
    );
    assert_eq!(v["search"]["proven_optimal"], false);
    assert!(stderr(&o).contains("did not finish"), "{}", stderr(&o));
    let o = spanfit(&["solve", need.to_str().expect("a UTF-8 path")]);
    assert_eq!(code(&o), 3);
    assert!(stdout(&o).contains("Not finished"), "{}", stdout(&o));
    let _ = std::fs::remove_dir_all(dir);
}
