//! The pages under `docs/` against the code, in both directions: a need
//! key, a stock column, a report field or a budget line that exists in
//! the code but has no row in the docs fails here, and so does a row that
//! names something the code does not have.
//!
//! The docs keep one machine-checkable row per item, its name in
//! backticks in the first cell:
//!
//! - `docs/need.md`: `` | `sensor.signal_low_v` | ... ``;
//! - `docs/stock.md`: `` | `resistors.csv` `part_id` | ... ``;
//! - `docs/report.md`: `` | `design.parts[].ref` | ... `` (key paths as in
//!   `tests/data/demo-design.keys`);
//! - `docs/error-budget.md`: `` | resistor tolerance | `resistor-tolerance` | random | ... ``.
//!
//! The code's side is asked through the public surface, never copied into
//! this file: the need reader refuses an unknown key and lists the keys
//! of its table (and an unknown table, listing the tables); the stock
//! reader refuses an unknown file name and an unknown column, listing the
//! files and the columns; the report's key paths come from the golden keys
//! file and from a real solve of the demo need; the budget lines from
//! `spanfit::analysis::Line::ALL`.

mod common;
use common::solve::{demo_need_with, solve_report, with_still_clock};
use serde_json::Value;
use spanfit::analysis::Line;
use spanfit::stock::{parse_stock, StockFile};
use std::collections::BTreeSet;

const NEED_MD: &str = include_str!("../../docs/need.md");
const STOCK_MD: &str = include_str!("../../docs/stock.md");
const REPORT_MD: &str = include_str!("../../docs/report.md");
const BUDGET_MD: &str = include_str!("../../docs/error-budget.md");
const DESIGN_KEYS: &str = include_str!("data/demo-design.keys");

/// A name no table, key, file or column will ever have.
const NOT_A_NAME: &str = "zz_not_documented_anywhere";

/// The backticked first cells of the table rows of a page:
/// `` | `a.b` | `` gives `a.b`, `` | `x.csv` `col` | `` gives `x.csv col`.
fn first_cells(page: &str) -> Vec<String> {
    page.lines()
        .filter_map(|line| {
            let rest = line.strip_prefix("| `")?;
            let cell = rest.split(" |").next()?;
            let names: Vec<&str> = cell
                .split('`')
                .map(str::trim)
                .filter(|s| !s.is_empty())
                .collect();
            Some(names.join(" "))
        })
        .collect()
}

/// The list after the last `are: ` in a message (`a, b, c`).
fn listed_after_are(message: &str) -> Vec<String> {
    let (_, list) = message
        .rsplit_once("are: ")
        .unwrap_or_else(|| panic!("no list of allowed names in the message: {message}"));
    let names: Vec<String> = list.split(", ").map(|s| s.trim().to_string()).collect();
    assert!(!names.is_empty(), "empty list in: {message}");
    names
}

/// Both directions of a comparison, with the differences named.
fn assert_same(what: &str, in_code: &BTreeSet<String>, in_docs: &BTreeSet<String>, page: &str) {
    let undocumented: Vec<&String> = in_code.difference(in_docs).collect();
    let unknown: Vec<&String> = in_docs.difference(in_code).collect();
    assert!(
        undocumented.is_empty() && unknown.is_empty(),
        "{what}: in the code but not in {page}: {undocumented:?}; in {page} but not in the code: \
         {unknown:?}"
    );
}

fn need_error(text: &str) -> String {
    match spanfit::need::parse_need(text.as_bytes(), "probe.toml") {
        Ok(_) => panic!("the need reader accepted:\n{text}"),
        Err(e) => e.to_string(),
    }
}

/// Every `table.key` the need reader accepts: the tables from the message
/// about an unknown table, then each table's keys from the message about
/// an unknown key in it.
fn need_keys_in_code() -> BTreeSet<String> {
    let tables = listed_after_are(&need_error(&format!("[{NOT_A_NAME}]\nx = 1\n")));
    let mut keys = BTreeSet::new();
    for table in &tables {
        let message = need_error(&format!("[{table}]\n{NOT_A_NAME} = 1\n"));
        assert!(
            message.contains(&format!("{table}.{NOT_A_NAME}")),
            "the unknown key was not named: {message}"
        );
        for key in listed_after_are(&message) {
            keys.insert(format!("{table}.{key}"));
        }
    }
    keys
}

#[test]
fn every_need_key_is_documented_and_every_documented_key_exists() {
    let in_docs: BTreeSet<String> = first_cells(NEED_MD)
        .into_iter()
        .filter(|c| c.contains('.') && !c.contains(' '))
        .collect();
    let in_code = need_keys_in_code();
    assert!(
        in_code.len() > 20,
        "only {} need keys found: {in_code:?}",
        in_code.len()
    );
    assert_same("need keys", &in_code, &in_docs, "docs/need.md");
}

#[test]
fn every_documented_need_key_is_accepted_by_the_reader() {
    // The other direction once more, by feeding each documented key to the
    // reader: a key it does not know is refused as unknown.
    for cell in first_cells(NEED_MD) {
        let Some((table, key)) = cell.split_once('.') else {
            continue;
        };
        let message = match spanfit::need::parse_need(
            format!("[{table}]\n{key} = 1\n").as_bytes(),
            "probe.toml",
        ) {
            Ok(_) => continue,
            Err(e) => e.to_string(),
        };
        assert!(
            !message.contains("unknown"),
            "docs/need.md documents `{cell}`, which the reader refuses: {message}"
        );
    }
}

fn stock_error(files: Vec<StockFile>) -> String {
    match parse_stock(&files) {
        Ok(_) => panic!("the stock reader accepted the probe"),
        Err(e) => e.to_string(),
    }
}

/// Every `file column` the stock reader accepts: the files from the
/// message about an unknown file, then each file's columns from the
/// message about an unknown column in its header.
fn stock_columns_in_code() -> BTreeSet<String> {
    let probe = |name: &str, text: &str| StockFile {
        name: name.to_string(),
        bytes: text.as_bytes().to_vec(),
    };
    let message = stock_error(vec![probe(&format!("{NOT_A_NAME}.csv"), "x\n")]);
    let (_, list) = message
        .rsplit_once("expected one of ")
        .unwrap_or_else(|| panic!("no list of stock files in: {message}"));
    let files: Vec<&str> = list.split(", ").map(str::trim).collect();
    assert!(files.len() >= 4, "stock files: {files:?}");
    let mut columns = BTreeSet::new();
    for file in files {
        let message = stock_error(vec![probe(file, &format!("{NOT_A_NAME}\n"))]);
        assert!(
            message.contains(NOT_A_NAME),
            "the unknown column was not named: {message}"
        );
        for column in listed_after_are(&message) {
            columns.insert(format!("{file} {column}"));
        }
    }
    columns
}

#[test]
fn every_stock_column_is_documented_and_every_documented_column_exists() {
    let in_docs: BTreeSet<String> = first_cells(STOCK_MD)
        .into_iter()
        .filter(|c| c.contains(".csv "))
        .collect();
    let in_code = stock_columns_in_code();
    assert!(
        in_code.len() > 40,
        "only {} columns found: {in_code:?}",
        in_code.len()
    );
    assert_same("stock columns", &in_code, &in_docs, "docs/stock.md");
}

/// The report's key paths documented in `docs/report.md` under `prefix`
/// (the path itself or anything below it).
fn documented_paths(prefix: &str) -> BTreeSet<String> {
    first_cells(REPORT_MD)
        .into_iter()
        .filter(|c| {
            c == prefix
                || c.strip_prefix(prefix)
                    .is_some_and(|rest| rest.starts_with('.') || rest.starts_with("[]"))
        })
        .collect()
}

/// Every key path in `v` below `path` (`need.lsb_v`, `alternatives[]`).
fn key_paths(v: &Value, path: &str, out: &mut BTreeSet<String>) {
    out.insert(path.to_string());
    match v {
        Value::Object(map) => {
            for (k, x) in map {
                let child = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                key_paths(x, &child, out);
            }
        }
        Value::Array(items) => {
            for x in items {
                key_paths(x, &format!("{path}[]"), out);
            }
        }
        _ => {}
    }
}

#[test]
fn every_design_field_is_documented_and_every_documented_field_exists() {
    let in_code: BTreeSet<String> = DESIGN_KEYS
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .filter_map(|l| l.split(": ").next())
        .map(str::to_string)
        .collect();
    assert!(in_code.len() > 100, "keys file: {} paths", in_code.len());
    // An array the pinned design leaves empty (`design.warnings`: the
    // pinned design has nothing to flag) has no element path in the keys
    // file; its documented element row is checked by the infeasibility
    // test below, whose best attempt carries one.
    let empty_arrays: BTreeSet<String> = DESIGN_KEYS
        .lines()
        .filter_map(|l| l.strip_suffix(": array"))
        .filter(|path| !in_code.contains(&format!("{path}[]")))
        .map(|path| format!("{path}[]"))
        .collect();
    let documented: BTreeSet<String> = documented_paths("design")
        .into_iter()
        .filter(|p| !empty_arrays.contains(p))
        .collect();
    assert_same(
        "design object fields",
        &in_code,
        &documented,
        "docs/report.md",
    );
}

/// The bundle of a real solve of the embedded demo need and stock.
fn demo_solve_bundle() -> Value {
    let bundle = with_still_clock(|control| {
        spanfit::api::solve_bundle(
            spanfit::demo::NEED_TOML.as_bytes(),
            "demo-need.toml",
            &[],
            false,
            control,
        )
    })
    .unwrap_or_else(|e| panic!("the demo does not solve: {e}"));
    serde_json::to_value(bundle).expect("a bundle serialises")
}

/// Top-level members of the bundle and of a structured error: their rows
/// in `docs/report.md` belong to other tables than the report's.
const NOT_REPORT: [&str; 4] = ["report", "artifacts", "text", "error"];

/// The report's key paths in `report` outside the design object: its
/// top-level members, what is below them, and the members a front entry
/// adds to a design object (`alternatives[].basis_pct_fs`).
fn report_paths_outside_design(report: &Value) -> BTreeSet<String> {
    let mut all = BTreeSet::new();
    key_paths(report, "", &mut all);
    let mut paths: BTreeSet<String> = all
        .into_iter()
        .filter(|p| !p.is_empty())
        .filter(|p| !p.starts_with("design.") && !p.starts_with("alternatives[]."))
        .collect();
    let mut design_members = BTreeSet::new();
    if let Some(map) = report["design"].as_object() {
        design_members.extend(map.keys().cloned());
    }
    for entry in report["alternatives"].as_array().into_iter().flatten() {
        for key in entry.as_object().into_iter().flatten().map(|(k, _)| k) {
            if !design_members.contains(key) {
                paths.insert(format!("alternatives[].{key}"));
            }
        }
    }
    paths
}

/// The documented report paths outside the design object; `below` says
/// which members' insides to include (`infeasible` is null when a design
/// is found, so its insides are compared apart).
fn documented_report_paths(include: impl Fn(&str) -> bool) -> BTreeSet<String> {
    first_cells(REPORT_MD)
        .into_iter()
        .filter(|c| !c.contains(' ') && !c.starts_with("design."))
        .filter(|c| {
            let top = c.split(['.', '[']).next().unwrap_or(c);
            !NOT_REPORT.contains(&top) && include(c)
        })
        .collect()
}

#[test]
fn every_report_field_is_documented_and_every_documented_field_exists() {
    let bundle = demo_solve_bundle();
    let report = &bundle["report"];
    assert_eq!(report["status"], "ok", "the demo has a design");
    assert!(
        report["alternatives"]
            .as_array()
            .is_some_and(|a| !a.is_empty()),
        "the demo has no cost/error front, so its members go unchecked"
    );
    // The need's tables (`need.sensor`, ...) echo need-file keys: their
    // insides are the keys of docs/need.md, checked here against it.
    let need_tables = ["sensor", "adc", "supply", "accuracy", "search", "stock"];
    let need_keys: BTreeSet<String> = first_cells(NEED_MD).into_iter().collect();
    let mut in_code = BTreeSet::new();
    for path in report_paths_outside_design(report) {
        let inside = need_tables.iter().find_map(|t| {
            path.strip_prefix(&format!("need.{t}."))
                .map(|key| format!("{t}.{}", key.trim_end_matches("[]")))
        });
        match inside {
            Some(key) => assert!(
                need_keys.contains(&key),
                "the report's need echo has {path}, which docs/need.md does not list as {key}"
            ),
            None => {
                in_code.insert(path);
            }
        }
    }
    let in_docs = documented_report_paths(|c| !c.starts_with("infeasible."));
    assert_same("report fields", &in_code, &in_docs, "docs/report.md");
    for table in need_tables {
        assert!(
            report["need"][table].is_object(),
            "the report's need has no {table} table"
        );
    }
    // Every front entry is a whole design object.
    let design_keys: BTreeSet<&str> = report["design"]
        .as_object()
        .map(|m| m.keys().map(String::as_str).collect())
        .unwrap_or_default();
    for entry in report["alternatives"].as_array().into_iter().flatten() {
        for key in &design_keys {
            assert!(entry.get(*key).is_some(), "a front entry lacks `{key}`");
        }
    }
}

#[test]
fn the_bundle_is_documented() {
    let bundle = demo_solve_bundle();
    let top: BTreeSet<String> = bundle
        .as_object()
        .map(|m| m.keys().cloned().collect())
        .unwrap_or_default();
    let documented_top: BTreeSet<String> = ["report", "artifacts", "text"]
        .iter()
        .map(|s| s.to_string())
        .filter(|s| first_cells(REPORT_MD).contains(s))
        .collect();
    assert_same("bundle members", &top, &documented_top, "docs/report.md");
    // Every export the code hands over is documented (code to docs only:
    // the docs also describe exports added by the front ends' contract).
    let artifacts = documented_paths("artifacts");
    for key in bundle["artifacts"]
        .as_object()
        .into_iter()
        .flatten()
        .map(|(k, _)| k)
    {
        assert!(
            artifacts.contains(&format!("artifacts.{key}")),
            "artifacts.{key} is not in docs/report.md"
        );
    }
}

#[test]
fn every_budget_line_is_documented_and_every_documented_line_exists() {
    let in_code: BTreeSet<String> = Line::ALL
        .iter()
        .map(|line| {
            let name = serde_json::to_value(line)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default();
            let kind = if line.systematic() {
                "systematic"
            } else {
                "random"
            };
            format!("{} | {name} | {kind}", line.label())
        })
        .collect();
    // Rows of the lines table: `| source | `line` | kind | ...`.
    let in_docs: BTreeSet<String> = BUDGET_MD
        .lines()
        .filter_map(|l| {
            let cells: Vec<&str> = l.split('|').map(str::trim).collect();
            let kind = *cells.get(3)?;
            let name = cells.get(2)?.strip_prefix('`')?.strip_suffix('`')?;
            (kind == "systematic" || kind == "random")
                .then(|| format!("{} | {name} | {kind}", cells[1]))
        })
        .collect();
    assert_eq!(in_code.len(), Line::ALL.len());
    assert_same("budget lines", &in_code, &in_docs, "docs/error-budget.md");
}

#[test]
fn every_infeasibility_field_is_documented_and_every_documented_field_exists() {
    // The demo need at a target no stocked part can meet, one stage only,
    // so the search and its suggestions stay small.
    let report = &solve_report(&demo_need_with(0.001, 1), "tight.toml");
    // Not proven (the space is too large to finish), so `unfinished`; the
    // explanation is there all the same.
    assert!(report["infeasible"].is_object(), "{}", report["reason"]);
    // The best attempt is a design object, documented once under `design`.
    let mut in_code: BTreeSet<String> = report_paths_outside_design(report)
        .into_iter()
        .filter(|p| p.starts_with("infeasible") && !p.starts_with("infeasible.best_attempt."))
        .collect();
    // The demo shelf has one resistor grade, so no suggestion changes the
    // stock here: a stock change's members come from the type itself.
    let stock_change = spanfit::search::StockChange {
        file: "resistors.csv".into(),
        column: "tolerance_pct".into(),
        value: 0.1,
    };
    // Its keys serialise in sorted order, as every object of the report.
    let value = serde_json::to_value(&stock_change).expect("a stock change serialises");
    assert_eq!(
        serde_json::to_string(&stock_change).expect("a stock change serialises"),
        value.to_string()
    );
    key_paths(
        &value,
        "infeasible.suggestions[].apply_stock[]",
        &mut in_code,
    );
    let in_docs = documented_report_paths(|c| c.starts_with("infeasible"));
    assert_same("infeasibility fields", &in_code, &in_docs, "docs/report.md");
    let attempt = &report["infeasible"]["best_attempt"];
    assert!(
        attempt.is_object(),
        "the search analysed designs: {attempt}"
    );
    let mut attempt_paths = BTreeSet::new();
    key_paths(attempt, "design", &mut attempt_paths);
    let documented = documented_paths("design");
    // Role names differ from design to design (docs/report.md documents
    // one role as the example of all): a role's path counts as documented
    // when its `resistors` object is.
    let undocumented: Vec<&String> = attempt_paths
        .iter()
        .filter(|p| {
            let shown = p
                .split_once(".resistors.")
                .map_or(p.to_string(), |(head, _)| format!("{head}.resistors"));
            !documented.contains(&shown)
        })
        .collect();
    assert!(
        undocumented.is_empty(),
        "best_attempt paths not documented under design: {undocumented:?}"
    );
    // Each suggestion's change, as need keys, names keys of the need.
    let keys = need_keys_in_code();
    for s in report["infeasible"]["suggestions"]
        .as_array()
        .into_iter()
        .flatten()
    {
        for a in s["apply"].as_array().into_iter().flatten() {
            let key = a["key"].as_str().unwrap_or_default();
            assert!(
                keys.contains(key),
                "suggestion applies `{key}`, not a need key"
            );
        }
    }
}
