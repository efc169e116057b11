//! "Meets the need" checked outside spanfit, at the limits: ngspice
//! (Debian package `ngspice`, run as `ngspice -b`) on the SPICE deck
//! spanfit exports for every design a search returns.
//!
//! Each need here is solved through `spanfit::api::solve_bundle` (the
//! embedded demo, every gallery example `examples/gallery/*.toml`, and a
//! held-back high-impedance electrode case written below). For the chosen
//! design and every alternative of each report, the exported deck is run
//! with every explicit error source of the SPICE contract (`docs/spice.md`)
//! at its limit, the limits read from the part in `design.parts[]`:
//! `VOS_<ref>` at `+/- vos_max_uv`, `IBP_<ref>` and `IBN_<ref>` at
//! `+/- ib_max_na` (the two currents of a section together, as the
//! analysis's common bias term; their difference is the offset current,
//! which the deck has no source of its own for), `VOSO_<ref>` at
//! `+/- output_offset_uv`, and `VREF_<ref>` at `value x (1 +/- initial_pct)`.
//! The corners: all high, all low, and for every checked node and each
//! direction the corner that pushes it that way (each source on the side
//! of the sign of the node's sensitivity to it, taken from the core
//! netlist solved with that source moved). The sensor sits at both span
//! ends in each run.
//!
//! Where the report calls a design feasible, ngspice must find the node
//! `out` inside the ADC window and every amplifier output inside its
//! swing (`supply.negative_v + output_headroom_low_v` to
//! `supply.positive_v x (1 - tolerance) - output_headroom_high_v`, the
//! window the report checks, headrooms from the part's stock row) at
//! every corner; otherwise the test fails, naming the design, the corner
//! and the node. A control case (the electrode on a 100 nA part, which
//! the report calls infeasible) shows the same check does find a clipped
//! node.

// Tests run ngspice: they read examples, write decks and start a process;
// they print what each design went through (shown with --nocapture).
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::print_stdout
)]

mod common;

use common::ngspice::{printed, run_deck, set_dc};
use serde_json::Value;
use spanfit::api::{artifacts_for, solve_bundle, Progress, SolveControl};
use spanfit::mna::Solver;
use spanfit::netlist::ElementKind;
use spanfit::stock::{parse_stock, Stock, StockFile};
use std::path::{Path, PathBuf};

/// Slack on the comparisons, volts (ngspice's own rounding; far below an
/// LSB of any ADC here).
const SLACK_V: f64 = 1e-6;

/// A need with its stock files, as a front end hands them to the core.
struct Case {
    name: String,
    need: Vec<u8>,
    stock: Vec<StockFile>,
}

fn read_stock_folder(dir: &Path) -> Vec<StockFile> {
    let mut paths: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "csv"))
        .collect();
    paths.sort();
    paths
        .iter()
        .map(|p| StockFile {
            name: p
                .file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default(),
            bytes: std::fs::read(p).unwrap_or_else(|e| panic!("{}: {e}", p.display())),
        })
        .collect()
}

/// A gallery example with the stock its `stock.path` names.
fn gallery_case(file: &str) -> Case {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples/gallery")
        .join(file);
    let need = std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let parsed = spanfit::need::parse_need(&need, file).unwrap_or_else(|e| panic!("{e}"));
    let stock = match &parsed.stock.path {
        Some(folder) => read_stock_folder(&path.parent().unwrap_or(Path::new(".")).join(folder)),
        None => spanfit::demo::stock_files(),
    };
    Case {
        name: file.to_string(),
        need,
        stock,
    }
}

fn file(name: &str, text: &str) -> StockFile {
    StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    }
}

/// The held-back case, invented: a high-impedance electrode, -400 mV to
/// +400 mV behind 100 Mohm, on a split +/-5 V supply, read by an invented
/// 0 to 2.048 V ADC, so the front end needs gain and a positive offset.
/// The shelf (invented `HB-*` rows) holds a 1 pA FET-input op-amp, a
/// 100 nA one (100 nA x 100 Mohm = 10 V, Ohm's law: it clips) and a
/// 1.024 V reference. `only_high_bias` leaves the FET part off the shelf.
fn electrode_case(only_high_bias: bool) -> Case {
    let need = "[sensor]\nlabel = \"held-back electrode (invented)\"\n\
        signal_low_v = -0.4\nsignal_high_v = 0.4\nsource_ohms = 100e6\n\
        [adc]\nlow_v = 0\nhigh_v = 2.048\nbits = 14\nmargin_pct = 3\n\
        [supply]\npositive_v = 5\nnegative_v = -5\ntolerance_pct = 2\n\
        [accuracy]\nmax_error_pct_fs = 2\ncalibration = \"offset\"\n\
        temp_min_c = 10\ntemp_max_c = 40\nbandwidth_hz = 1\n\
        [search]\nmax_stages = 2\nbom_line_cost = 0.02\n";
    let opamps = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
HB-BJT,1,4,36,1.5,1.5,1.2,1.2,50,0.5,100,5,110,1,10,0.4,100,0.4,100\n";
    let fet = "HB-FET,2,4,36,1.0,2.0,0.8,0.8,400,4,0.001,0.0005,106,2,25,0.001,90,0.9,100\n";
    let opamps = if only_high_bias {
        opamps.to_string()
    } else {
        format!("{opamps}{fet}")
    };
    let resistors = "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
HB-R,E96,100,1000000,0.1,25,0603,0.01,\n";
    let references =
        "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n\
HB-VR,1.024,0.2,25,0.3,10,0.5,100\n";
    Case {
        name: if only_high_bias {
            "electrode-100nA".into()
        } else {
            "electrode".into()
        },
        need: need.as_bytes().to_vec(),
        stock: vec![
            file("resistors.csv", resistors),
            file("opamps.csv", &opamps),
            file("references.csv", references),
        ],
    }
}

fn solve(case: &Case) -> Value {
    let mut progress = |_: Progress| true;
    // A clock standing still: the search is never cut short.
    let clock = || 0.0;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let bundle = solve_bundle(&case.need, &case.name, &case.stock, false, &mut control)
        .unwrap_or_else(|e| panic!("{}: {e}", case.name));
    serde_json::to_value(bundle).unwrap_or_else(|e| panic!("{}: {e}", case.name))
}

fn number(v: &Value, what: &str) -> f64 {
    v.as_f64()
        .unwrap_or_else(|| panic!("expected a number for {what}, found {v}"))
}

/// One explicit error source group: the deck elements it moves together,
/// each with its nominal value, and its half-range.
struct SourceGroup {
    elements: Vec<(String, f64)>,
    limit: f64,
}

/// The error sources of a design at their limits, from `design.parts[]`.
fn source_groups(parts: &[Value]) -> Vec<SourceGroup> {
    let mut groups = Vec::new();
    for p in parts {
        let r = p["ref"].as_str().unwrap_or_default();
        match p["kind"].as_str().unwrap_or_default() {
            "opamp" | "inamp" => {
                groups.push(SourceGroup {
                    elements: vec![(format!("VOS_{r}"), 0.0)],
                    limit: number(&p["vos_max_uv"], "vos_max_uv") * 1e-6,
                });
                groups.push(SourceGroup {
                    elements: vec![(format!("IBP_{r}"), 0.0), (format!("IBN_{r}"), 0.0)],
                    limit: number(&p["ib_max_na"], "ib_max_na") * 1e-9,
                });
                if let Some(o) = p.get("output_offset_uv").and_then(Value::as_f64) {
                    groups.push(SourceGroup {
                        elements: vec![(format!("VOSO_{r}"), 0.0)],
                        limit: o * 1e-6,
                    });
                }
            }
            "reference" => {
                let volts = number(&p["value"], "reference value");
                groups.push(SourceGroup {
                    elements: vec![(format!("VREF_{r}"), volts)],
                    limit: volts * number(&p["initial_pct"], "initial_pct") / 100.0,
                });
            }
            _ => {}
        }
    }
    groups
}

/// A node to check, with its allowed window.
struct Checked {
    /// What it is, for messages.
    what: String,
    /// The deck's node name.
    node: String,
    low: f64,
    high: f64,
}

/// The deck with its `.control` block replaced by one that solves both
/// span ends and prints every checked node as `lim_<end>_<i> = <v>`.
fn with_probes(deck: &str, span: [f64; 2], nodes: &[Checked]) -> String {
    let cut = deck
        .find("\n.op\n.control\n")
        .unwrap_or_else(|| panic!("no `.op` / `.control` block in:\n{deck}"));
    let mut s = deck[..cut + 1].to_string();
    s.push_str(".op\n.control\nset numdgt=15\n");
    for (end, v) in span.iter().enumerate() {
        s.push_str(&format!("alter VSENSE dc = {v:e}\nop\n"));
        for (i, c) in nodes.iter().enumerate() {
            s.push_str(&format!(
                "let lim_{end}_{i} = v({})\nprint lim_{end}_{i}\n",
                c.node
            ));
        }
    }
    s.push_str(".endc\n.end\n");
    s
}

/// ngspice on a deck; the printed `lim_<end>_<i>` values.
fn run(deck: &str, tag: &str, count: usize) -> Vec<[f64; 2]> {
    let stdout = run_deck(deck, tag);
    (0..count)
        .map(|i| [0, 1].map(|end| printed(&stdout, tag, &format!("lim_{end}_{i}"))))
        .collect()
}

/// How each source group moves each checked node: the sign of the shift
/// of the node when the group moves to `+limit`, from the core netlist of
/// the design (`topology::build`, solved with `mna::Solver`).
fn shift_signs(
    need: &spanfit::need::Need,
    stock: &Stock,
    design_file: &Value,
    groups: &[SourceGroup],
    nodes: &[Checked],
) -> Vec<Vec<f64>> {
    let text = design_file.to_string();
    let design = spanfit::design::parse_design(text.as_bytes(), "design.json", stock)
        .unwrap_or_else(|e| panic!("the report's design file does not read back: {e}"));
    let built =
        spanfit::topology::build(need, stock, &design).unwrap_or_else(|e| panic!("build: {e}"));
    let solve = |moved: Option<&SourceGroup>| -> Vec<f64> {
        let mut n = built.netlist.clone();
        if let Some(g) = moved {
            for (name, nominal) in &g.elements {
                let e = n
                    .element(name)
                    .unwrap_or_else(|| panic!("no element `{name}` in the core netlist"));
                n.elements[e].kind = match n.elements[e].kind {
                    ElementKind::VoltageSource { .. } => ElementKind::VoltageSource {
                        volts: nominal + g.limit,
                    },
                    ElementKind::CurrentSource { .. } => ElementKind::CurrentSource {
                        amps: nominal + g.limit,
                    },
                    other => panic!("`{name}` is not a source: {other:?}"),
                };
            }
        }
        let mut solver = Solver::new(&n);
        let x = solver
            .dc(&n)
            .unwrap_or_else(|s| panic!("core netlist singular at {}", s.unknown));
        nodes
            .iter()
            .map(|c| {
                // The deck's `drv` is the core's `out` (the filter passes DC).
                let name = if c.node == "drv" {
                    "out"
                } else {
                    c.node.as_str()
                };
                let node = n
                    .node_names
                    .iter()
                    .position(|m| m == name)
                    .unwrap_or_else(|| panic!("no node `{name}` in the core netlist"));
                solver.voltage(&x, node)
            })
            .collect()
    };
    let base = solve(None);
    groups
        .iter()
        .map(|g| {
            let moved = solve(Some(g));
            moved
                .iter()
                .zip(&base)
                .map(|(m, b)| if m - b < 0.0 { -1.0 } else { 1.0 })
                .collect()
        })
        .collect()
}

/// What the limit runs of one design found.
struct Verdict {
    /// Violations, in words (empty when every node stayed inside).
    violations: Vec<String>,
    /// Corners run.
    corners: usize,
}

/// Run one design of a report at its corners.
fn check_design(case: &Case, report: &Value, design: &Value, label: &str) -> Verdict {
    let (need, stock) =
        spanfit::api::load(&case.need, &case.name, &case.stock).unwrap_or_else(|e| panic!("{e}"));
    let file = &design["file"];
    let artifacts = artifacts_for(
        &case.need,
        &case.name,
        &case.stock,
        file.to_string().as_bytes(),
        "design.json",
    )
    .unwrap_or_else(|e| panic!("{label}: artifacts: {e}"));
    let deck = artifacts
        .spice
        .unwrap_or_else(|| panic!("{label}: no SPICE deck"));
    let parts: Vec<Value> = design["parts"].as_array().cloned().unwrap_or_default();
    let groups = source_groups(&parts);
    let adc = &report["need"]["adc"];
    let supply = &report["need"]["supply"];
    let positive = number(&supply["positive_v"], "positive_v");
    let negative = number(&supply["negative_v"], "negative_v");
    let tolerance = number(&supply["tolerance_pct"], "tolerance_pct") / 100.0;
    let mut nodes = vec![Checked {
        what: "ADC input `out`".into(),
        node: "out".into(),
        low: number(&adc["low_v"], "adc.low_v"),
        high: number(&adc["high_v"], "adc.high_v"),
    }];
    for p in &parts {
        let kind = p["kind"].as_str().unwrap_or_default();
        if kind != "opamp" && kind != "inamp" {
            continue;
        }
        let r = p["ref"].as_str().unwrap_or_default();
        let part_id = p["part_id"].as_str().unwrap_or_default();
        let (low_headroom, high_headroom) = match kind {
            "opamp" => stock
                .opamps
                .iter()
                .find(|o| o.part_id == part_id)
                .map(|o| (o.output_headroom_low.0, o.output_headroom_high.0)),
            _ => stock
                .inamps
                .iter()
                .find(|o| o.part_id == part_id)
                .map(|o| (o.output_headroom_low.0, o.output_headroom_high.0)),
        }
        .unwrap_or_else(|| panic!("{label}: part {part_id} is not on the shelf"));
        // The section's output node: an op-amp's `E<ref> <out> 0 ...` line;
        // an in-amp drives its stage's output.
        let node = if kind == "opamp" {
            // With the single-pole model the `E` line drives an inner node
            // that `ROUT_<ref>` (shorted at DC by `LOUT_<ref>`) joins to
            // the section's output: take the node after that resistor.
            let first_node = |prefix: String| {
                deck.lines()
                    .find_map(|l| l.strip_prefix(&prefix))
                    .and_then(|rest| rest.split_whitespace().next())
                    .map(str::to_string)
            };
            let inner = first_node(format!("E{r} "))
                .unwrap_or_else(|| panic!("{label}: no `E{r}` line in:\n{deck}"));
            let rout = format!("ROUT_{r} {inner} ");
            deck.lines()
                .find_map(|l| l.strip_prefix(&rout))
                .and_then(|rest| rest.split_whitespace().next())
                .map_or(inner.clone(), str::to_string)
        } else {
            let stage = p["stage"].as_u64().unwrap_or(0) as usize;
            let stages = design["stages"].as_array().map_or(1, Vec::len);
            if stage + 1 < stages {
                format!("s{}o", stage + 1)
            } else if deck.lines().any(|l| l.contains(" drv ")) {
                "drv".into()
            } else {
                "out".into()
            }
        };
        nodes.push(Checked {
            what: format!("output of {r} ({part_id})"),
            node,
            low: negative + low_headroom,
            high: positive * (1.0 - tolerance) - high_headroom,
        });
    }
    let signs = shift_signs(&need, &stock, file, &groups, &nodes);
    let mut corners: Vec<(String, Vec<f64>)> = vec![
        ("all high".into(), vec![1.0; groups.len()]),
        ("all low".into(), vec![-1.0; groups.len()]),
    ];
    for (i, c) in nodes.iter().enumerate() {
        for (direction, word) in [(1.0, "up"), (-1.0, "down")] {
            let sides: Vec<f64> = signs.iter().map(|s| direction * s[i]).collect();
            if !corners.iter().any(|(_, x)| *x == sides) {
                corners.push((format!("{} pushed {word}", c.node), sides));
            }
        }
    }
    let span = [
        number(&report["need"]["sensor"]["signal_low_v"], "signal_low_v"),
        number(&report["need"]["sensor"]["signal_high_v"], "signal_high_v"),
    ];
    let mut violations = Vec::new();
    for (corner, sides) in &corners {
        let mut moved = deck.clone();
        for (g, side) in groups.iter().zip(sides) {
            for (element, nominal) in &g.elements {
                moved = set_dc(&moved, element, nominal + side * g.limit);
            }
        }
        let probed = with_probes(&moved, span, &nodes);
        let values = run(&probed, &format!("{label} {corner}"), nodes.len());
        for (c, v) in nodes.iter().zip(&values) {
            for (end, x) in v.iter().enumerate() {
                if *x < c.low - SLACK_V || *x > c.high + SLACK_V {
                    violations.push(format!(
                        "{label}, corner {corner}, span end {end}: {} at {x:.6} V, outside \
                         {:.6} V to {:.6} V",
                        c.what, c.low, c.high
                    ));
                }
            }
        }
    }
    Verdict {
        violations,
        corners: corners.len(),
    }
}

/// Every design of a solved case whose report calls it feasible holds at
/// every corner in ngspice; returns how many designs were run.
fn check_case(case: &Case) -> usize {
    let bundle = solve(case);
    let report = &bundle["report"];
    let mut designs: Vec<(String, &Value)> = Vec::new();
    if let Some(d) = report.get("design").filter(|d| !d.is_null()) {
        designs.push((format!("{} chosen design", case.name), d));
    }
    for (i, a) in report["alternatives"]
        .as_array()
        .into_iter()
        .flatten()
        .enumerate()
    {
        designs.push((format!("{} alternative {i}", case.name), &a["design"]));
    }
    let mut checked = 0;
    for (label, design) in designs {
        if design["feasible"] != Value::Bool(true) {
            continue;
        }
        let verdict = check_design(case, report, design, &label);
        assert!(
            verdict.violations.is_empty(),
            "the report calls {label} feasible, but ngspice at the limits finds:\n{}",
            verdict.violations.join("\n")
        );
        println!(
            "{label}: {} corners in ngspice, every node inside",
            verdict.corners
        );
        checked += 1;
    }
    checked
}

#[test]
fn demo_holds_at_the_limits_in_ngspice() {
    let case = Case {
        name: "demo".into(),
        need: spanfit::demo::NEED_TOML.as_bytes().to_vec(),
        stock: spanfit::demo::stock_files(),
    };
    assert!(
        check_case(&case) >= 1,
        "the demo returned no feasible design"
    );
}

#[test]
fn gallery_designs_hold_at_the_limits_in_ngspice() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/gallery");
    let mut files: Vec<String> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().to_string()))
        .collect();
    files.sort();
    let mut solved = 0;
    for f in &files {
        if check_case(&gallery_case(f)) > 0 {
            solved += 1;
        }
    }
    // Most of the gallery solves; a change that leaves it unsolved should
    // be seen here, not pass silently.
    assert!(
        solved * 2 > files.len(),
        "only {solved} of {} gallery examples returned a feasible design",
        files.len()
    );
}

#[test]
fn held_back_electrode_holds_at_the_limits_in_ngspice() {
    assert!(
        check_case(&electrode_case(false)) >= 1,
        "the held-back electrode case returned no feasible design"
    );
}

/// The control: on the 100 nA part alone the report calls nothing
/// feasible, and the same ngspice check, run on its most accurate design,
/// finds a clipped node (so the check can fail).
#[test]
fn the_limit_check_finds_the_clipped_electrode() {
    let case = electrode_case(true);
    let bundle = solve(&case);
    let report = &bundle["report"];
    let mut designs: Vec<&Value> = Vec::new();
    if let Some(d) = report.get("design").filter(|d| !d.is_null()) {
        designs.push(d);
    }
    for a in report["alternatives"].as_array().into_iter().flatten() {
        designs.push(&a["design"]);
    }
    for d in &designs {
        assert_ne!(
            d["feasible"],
            Value::Bool(true),
            "a design on the 100 nA part is called feasible"
        );
    }
    // A design on the 100 nA part, checked as if it were called feasible.
    let stock = parse_stock(&case.stock).unwrap_or_else(|e| panic!("{e}"));
    let design_file = serde_json::json!({"stages": [{
        "shape": "non-inverting", "amplifier": "HB-BJT",
        "resistors": {"rf": {"ohms": 1500.0, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25},
                      "rg": {"ohms": 1000.0, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25}},
    }]});
    let analysed = spanfit::api::analyze_bundle(
        &case.need,
        &case.name,
        &case.stock,
        design_file.to_string().as_bytes(),
        "control.json",
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let analysed = serde_json::to_value(analysed).unwrap_or_else(|e| panic!("{e}"));
    let design = &analysed["report"]["design"];
    assert_eq!(
        design["feasible"],
        Value::Bool(false),
        "the control is feasible?"
    );
    assert!(!stock.opamps.is_empty());
    let verdict = check_design(&case, &analysed["report"], design, "control");
    assert!(
        !verdict.violations.is_empty(),
        "ngspice found no clipped node on the 100 nA electrode front end"
    );
}
