//! Every budget line explains itself: its `explain.formula`, evaluated over
//! its `explain.inputs`, gives the line's `pct_fs`; every name the formula
//! uses is an input and every input is used; the parts named exist in the
//! design. Checked on the solved demo (design and alternatives) and on the
//! demo design analysed under each calibration.

mod common;

use common::solve::solve_report;
use serde_json::Value;
use std::collections::{BTreeMap, BTreeSet};

/// A tiny evaluator of the formula notation: numbers, names, `+ - * /`,
/// parentheses and `|x|`.
struct Eval<'a> {
    chars: Vec<char>,
    at: usize,
    inputs: &'a BTreeMap<String, f64>,
    used: BTreeSet<String>,
}

impl Eval<'_> {
    fn skip(&mut self) {
        while self.chars.get(self.at).is_some_and(|c| c.is_whitespace()) {
            self.at += 1;
        }
    }
    fn peek(&mut self) -> Option<char> {
        self.skip();
        self.chars.get(self.at).copied()
    }
    fn sum(&mut self) -> Result<f64, String> {
        let mut v = self.product()?;
        while let Some(c @ ('+' | '-')) = self.peek() {
            self.at += 1;
            let r = self.product()?;
            v = if c == '+' { v + r } else { v - r };
        }
        Ok(v)
    }
    fn product(&mut self) -> Result<f64, String> {
        let mut v = self.factor()?;
        while let Some(c @ ('*' | '/')) = self.peek() {
            self.at += 1;
            let r = self.factor()?;
            v = if c == '*' { v * r } else { v / r };
        }
        Ok(v)
    }
    fn factor(&mut self) -> Result<f64, String> {
        match self.peek() {
            Some('(') => {
                self.at += 1;
                let v = self.sum()?;
                self.expect(')')?;
                Ok(v)
            }
            Some('|') => {
                self.at += 1;
                let v = self.sum()?;
                self.expect('|')?;
                Ok(v.abs())
            }
            Some('-') => {
                self.at += 1;
                Ok(-self.factor()?)
            }
            Some(c) if c.is_ascii_digit() || c == '.' => {
                let start = self.at;
                while self.chars.get(self.at).is_some_and(|c| {
                    c.is_ascii_alphanumeric()
                        || *c == '.'
                        || *c == '-' && self.chars[self.at - 1] == 'e'
                }) {
                    self.at += 1;
                }
                let text: String = self.chars[start..self.at].iter().collect();
                text.parse().map_err(|_| format!("bad number `{text}`"))
            }
            Some(c) if c.is_ascii_alphabetic() => {
                let start = self.at;
                while self
                    .chars
                    .get(self.at)
                    .is_some_and(|c| c.is_ascii_alphanumeric() || *c == '_')
                {
                    self.at += 1;
                }
                let name: String = self.chars[start..self.at].iter().collect();
                let v = *self
                    .inputs
                    .get(&name)
                    .ok_or(format!("`{name}` is not an input"))?;
                self.used.insert(name);
                Ok(v)
            }
            other => Err(format!("unexpected {other:?} at {}", self.at)),
        }
    }
    fn expect(&mut self, c: char) -> Result<(), String> {
        if self.peek() == Some(c) {
            self.at += 1;
            Ok(())
        } else {
            Err(format!("expected `{c}` at {}", self.at))
        }
    }
}

/// Evaluate a formula; the value and the names it used.
fn evaluate(
    formula: &str,
    inputs: &BTreeMap<String, f64>,
) -> Result<(f64, BTreeSet<String>), String> {
    let mut e = Eval {
        chars: formula.chars().collect(),
        at: 0,
        inputs,
        used: BTreeSet::new(),
    };
    let v = e.sum()?;
    if e.peek().is_some() {
        return Err(format!("trailing text at {}", e.at));
    }
    Ok((v, e.used))
}

/// Check every budget line of one design object; returns the number of
/// lines checked.
fn check_design(design: &Value, what: &str) -> usize {
    let parts = design["parts"].as_array().expect("parts");
    let refs: BTreeSet<&str> = parts.iter().filter_map(|p| p["ref"].as_str()).collect();
    let ids: BTreeSet<&str> = parts.iter().filter_map(|p| p["part_id"].as_str()).collect();
    let budget = design["error"]["budget"].as_array().expect("budget");
    assert!(!budget.is_empty(), "{what}: no budget lines");
    let mut named_parts = 0;
    for line in budget {
        let name = line["line"].as_str().expect("line name");
        let explain = &line["explain"];
        let formula = explain["formula"].as_str().expect("a formula");
        assert!(!formula.trim().is_empty(), "{what} {name}: empty formula");
        let list = explain["inputs"].as_array().expect("inputs");
        assert!(!list.is_empty(), "{what} {name}: no inputs");
        let mut inputs = BTreeMap::new();
        for input in list {
            let key = input["name"].as_str().expect("input name").to_string();
            let value = input["value"]
                .as_f64()
                .unwrap_or_else(|| panic!("{what} {name}: {key} has no number"));
            assert!(
                input["unit"].as_str().is_some_and(|u| !u.is_empty()),
                "{what} {name}: {key} has no unit"
            );
            assert!(
                input["what"].as_str().is_some_and(|u| !u.is_empty()),
                "{what} {name}: {key} says nothing"
            );
            assert!(
                inputs.insert(key.clone(), value).is_none(),
                "{what} {name}: {key} twice"
            );
            for r in input["refs"].as_array().expect("refs") {
                let r = r.as_str().expect("a ref");
                assert!(
                    refs.contains(r),
                    "{what} {name}: {key} names {r}, not a part of the design"
                );
                named_parts += 1;
            }
            for id in input["part_ids"].as_array().expect("part_ids") {
                let id = id.as_str().expect("a part id");
                assert!(
                    ids.contains(id),
                    "{what} {name}: {key} names part {id}, not in the design"
                );
            }
        }
        let (value, used) = evaluate(formula, &inputs)
            .unwrap_or_else(|e| panic!("{what} {name}: `{formula}`: {e}"));
        let unused: Vec<_> = inputs.keys().filter(|k| !used.contains(*k)).collect();
        assert!(
            unused.is_empty(),
            "{what} {name}: inputs {unused:?} are not in `{formula}`"
        );
        let pct = line["pct_fs"].as_f64().expect("pct_fs");
        assert!(
            (value - pct).abs() <= 1e-9 * pct.abs() + 1e-15,
            "{what} {name}: `{formula}` gives {value}, the line is {pct}"
        );
    }
    assert!(named_parts > 0, "{what}: no line names a part");
    budget.len()
}

#[test]
fn every_budget_line_of_the_solved_demo_is_reproduced_by_its_explanation() {
    let report = solve_report(spanfit::demo::NEED_TOML, "demo-need.toml");
    assert_eq!(report["status"], "ok");
    let mut lines = check_design(&report["design"], "design");
    for (i, alt) in report["alternatives"]
        .as_array()
        .into_iter()
        .flatten()
        .enumerate()
    {
        lines += check_design(alt, &format!("alternative {i}"));
    }
    assert!(lines >= 10, "only {lines} lines checked");
}

#[test]
fn the_explanations_follow_each_calibration() {
    let design = include_str!("../../examples/demo-design.json");
    let demo = spanfit::demo::NEED_TOML;
    assert!(
        demo.contains("calibration = \"offset\""),
        "the demo need changed shape"
    );
    let mut notes = BTreeMap::new();
    for mode in ["none", "offset", "two-point"] {
        let need = demo.replace(
            "calibration = \"offset\"",
            &format!("calibration = \"{mode}\""),
        );
        let bundle = spanfit::api::analyze_bundle(
            need.as_bytes(),
            "need.toml",
            &[],
            design.as_bytes(),
            "demo-design.json",
        )
        .unwrap_or_else(|e| panic!("{mode}: {e}"));
        let report = serde_json::to_value(bundle).expect("serialises")["report"].clone();
        check_design(&report["design"], mode);
        let noted = report["design"]["error"]["budget"]
            .as_array()
            .expect("budget")
            .iter()
            .filter(|l| l["explain"]["note"].is_string())
            .count();
        notes.insert(mode, noted);
    }
    assert_eq!(notes["none"], 0, "nothing is trimmed without a calibration");
    assert!(
        notes["two-point"] > 0,
        "a two-point trim removes something and says so"
    );
}

#[test]
fn the_totals_come_in_lsb_and_in_the_sensors_unit_from_the_core() {
    let report = solve_report(spanfit::demo::NEED_TOML, "demo-need.toml");
    let need = &report["need"];
    let (fs, lsb) = (
        need["full_scale_v"].as_f64().expect("full scale"),
        need["lsb_v"].as_f64().expect("lsb"),
    );
    let per_unit = need["volts_per_unit"]
        .as_f64()
        .expect("the demo has a unit")
        .abs();
    let e = &report["design"]["error"];
    for total in ["worst_case", "rss"] {
        let pct = e[format!("{total}_pct_fs")].as_f64().expect("pct");
        let in_lsb = e[format!("{total}_lsb")].as_f64().expect("lsb figure");
        let in_units = e[format!("{total}_units")].as_f64().expect("unit figure");
        let volts = pct / 100.0 * fs;
        assert!(
            (in_lsb * lsb - volts).abs() <= 1e-9 * volts,
            "{total}: {in_lsb} LSB"
        );
        assert!(
            (in_units * per_unit - volts).abs() <= 1e-9 * volts,
            "{total}: {in_units} units"
        );
    }
}

#[test]
fn the_text_explanation_shows_every_line_its_formula_and_inputs() {
    let bundle = spanfit::api::analyze_bundle(
        spanfit::demo::NEED_TOML.as_bytes(),
        "demo-need.toml",
        &[],
        include_str!("../../examples/demo-design.json").as_bytes(),
        "demo-design.json",
    )
    .unwrap_or_else(|e| panic!("the demo design does not analyse: {e}"));
    let design = bundle.report.design.as_ref().expect("a design");
    let text = spanfit::report::text::explain_text(design);
    assert!(
        !bundle.text.contains("How each budget line is worked out"),
        "the plain report stays short"
    );
    for line in &design.error.budget {
        assert!(
            text.contains(&format!("  {} = ", line.source)),
            "{}",
            line.source
        );
        assert!(
            text.contains(&format!("    = {}\n", line.explain.formula)),
            "{}",
            line.source
        );
        for input in &line.explain.inputs {
            assert!(
                text.contains(&format!("    {} = ", input.name)),
                "{} {}",
                line.source,
                input.name
            );
        }
    }
}
