//! Designs round-trip: what a report gives under `design.file` reads back
//! through `analyze` as the same design, with the same cost and error, for
//! stock parts, inline parts (with or without their own `part_id`),
//! generic series values (`stock.only = false`) and every stage shape.
//!
//! A property test builds random designs over the demo stock, writes each
//! with `spanfit::design::design_file_json` and reads it back through
//! `spanfit::api::analyze_bundle`; designs whose resistors are stock,
//! generic or `custom` also go once more around through the report's own
//! `design.file`.
// A test reads the examples from disk and the clock, and stops loudly on a
// broken tree; the core itself does none of these.
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::unwrap_used
)]

use proptest::prelude::*;
use serde_json::Value;
use spanfit::api::{analyze_bundle, evaluate, solve_bundle, Progress, SolveControl};
use spanfit::design::{
    design_file_json, parse_design, Design, Injection, Resistor, Shape, Source, Stage,
};
use spanfit::need::{parse_need, Need};
use spanfit::stock::{generic_resistor, generic_resistor_by_id, parse_stock, Stock};
use std::collections::BTreeMap;

fn demo() -> (Need, Stock) {
    let need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml").unwrap();
    let stock = parse_stock(&spanfit::demo::stock_files()).unwrap();
    (need, stock)
}

/// A small xorshift generator: the property test draws one seed and the
/// design follows from it.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// How a resistor is given.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Stock,
    Custom,
    OwnId,
    Generic,
}

fn resistor(rng: &mut Rng, stock: &Stock, kinds: &[Kind], n: &mut usize) -> (Resistor, Kind) {
    let kind = kinds[rng.below(kinds.len())];
    let r = match kind {
        Kind::Stock => Resistor::from(&stock.resistors[rng.below(stock.resistors.len())]),
        Kind::Generic => {
            let series = spanfit::series::Series::ALL[rng.below(6)];
            let values = series.values_in(10.0, 1e6);
            Resistor::from(&generic_resistor(series, values[rng.below(values.len())]))
        }
        Kind::Custom | Kind::OwnId => {
            *n += 1;
            Resistor {
                part_id: if kind == Kind::Custom {
                    "custom".into()
                } else {
                    format!("MY-{n}")
                },
                // Log-uniform from 100 ohm to 1 Mohm, full f64 precision.
                ohms: 100.0 * 10f64.powf(4.0 * rng.unit()),
                tolerance_pct: [0.01, 0.1, 0.5, 1.0, 5.0][rng.below(5)],
                tcr_ppm_per_c: 200.0 * rng.unit(),
                unit_cost: 0.1 * rng.unit(),
                network: None,
            }
        }
    };
    (r, kind)
}

/// A random design of one to three stages over the demo stock, and the
/// kinds of resistor it holds.
fn random_design(seed: u64, stock: &Stock, kinds: &[Kind]) -> (Design, Vec<Kind>) {
    let mut rng = Rng(seed | 1);
    let mut used = Vec::new();
    let mut n = 0;
    let mut stages = Vec::new();
    for _ in 0..1 + rng.below(3) {
        let shape = Shape::ALL[rng.below(Shape::ALL.len())];
        let amplifier = if shape == Shape::InstrumentationIntegrated {
            stock.inamps[rng.below(stock.inamps.len())].part_id.clone()
        } else {
            stock.opamps[rng.below(stock.opamps.len())].part_id.clone()
        };
        let mut resistors = BTreeMap::new();
        let optional: Vec<spanfit::shape::Role> = shape
            .optional_roles()
            .iter()
            .copied()
            .filter(|_| rng.below(2) == 0)
            .collect();
        for role in shape.required_roles().iter().chain(optional.iter()) {
            let (r, kind) = resistor(&mut rng, stock, kinds, &mut n);
            used.push(kind);
            resistors.insert(*role, r);
        }
        let source = |rng: &mut Rng| match rng.below(stock.references.len() + 1) {
            0 => Source::Supply,
            i => Source::Reference(stock.references[i - 1].part_id.clone()),
        };
        let mut injection = |rng: &mut Rng| match rng.below(3) {
            0 => Injection::Ground,
            1 => Injection::Direct {
                source: source(rng),
            },
            _ => {
                let (top, k1) = resistor(rng, stock, kinds, &mut n);
                let (bottom, k2) = resistor(rng, stock, kinds, &mut n);
                used.extend([k1, k2]);
                Injection::Divider {
                    source: source(rng),
                    top,
                    bottom,
                    buffered: rng.below(2) == 0,
                }
            }
        };
        let offset = injection(&mut rng);
        let bias = if shape == Shape::Inverting {
            injection(&mut rng)
        } else {
            Injection::Ground
        };
        let buffer = (shape == Shape::InstrumentationIntegrated && rng.below(2) == 0)
            .then(|| stock.opamps[rng.below(stock.opamps.len())].part_id.clone());
        // A capacitor across `rf` on half the stages that have one: a stock
        // part, or an inline one with random values.
        let feedback_capacitor = (shape.required_roles().contains(&spanfit::shape::Role::Rf)
            && rng.below(2) == 0)
            .then(|| {
                if !stock.capacitors.is_empty() && rng.below(2) == 0 {
                    stock.capacitors[rng.below(stock.capacitors.len())].clone()
                } else {
                    spanfit::stock::CapacitorPart {
                        part_id: if rng.below(2) == 0 {
                            "custom".to_string()
                        } else {
                            format!("MY-C{}", rng.below(1000))
                        },
                        value: spanfit::units::Farads(1e-12 * 10f64.powf(6.0 * rng.unit())),
                        tolerance: spanfit::units::Percent(20.0 * rng.unit()),
                        tempco: spanfit::units::PpmPerC(100.0 * rng.unit()),
                        dielectric: "C0G".to_string(),
                        rated: spanfit::units::Volts(0.0),
                        package: String::new(),
                        unit_cost: 0.1 * rng.unit(),
                        stock_qty: None,
                        family: None,
                    }
                }
            });
        stages.push(Stage {
            shape,
            amplifier,
            resistors,
            offset,
            bias,
            buffer,
            feedback_capacitor,
        });
    }
    (Design { stages }, used)
}

/// Cost and error of a design object of a report.
fn cost_and_error(design: &Value) -> (Value, Value) {
    (design["cost"].clone(), design["error"].clone())
}

fn analyse(need: &[u8], file: &[u8]) -> Result<Value, String> {
    analyze_bundle(need, "demo-need.toml", &[], file, "design.json")
        .map(|bundle| serde_json::to_value(bundle.report).unwrap_or_default())
        .map_err(|e| e.to_string())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    /// Random designs: written by `design_file_json`, read back by
    /// `parse_design` as the same design, and analysed by `analyze_bundle`
    /// to the same cost and error as the design itself.
    #[test]
    fn random_designs_read_back_with_the_same_cost_and_error(seed in any::<u64>()) {
        let (need, stock) = demo();
        let all = [Kind::Stock, Kind::Custom, Kind::OwnId, Kind::Generic];
        let (design, _kinds) = random_design(seed, &stock, &all);
        let file = design_file_json(&design, &stock).to_string();
        let again = parse_design(file.as_bytes(), "design.json", &stock)
            .map_err(|e| TestCaseError::fail(format!("{e}\n{file}")))?;
        prop_assert_eq!(&again, &design, "{}", file);
        let direct = evaluate(&need, &stock, &design).map_err(|e| e.to_string());
        let read = analyse(spanfit::demo::NEED_TOML.as_bytes(), file.as_bytes());
        match (direct, read) {
            (Ok(c), Ok(b)) => {
                prop_assert_eq!(Value::from(c.costing.total), b["design"]["cost"].clone());
                prop_assert_eq!(
                    Value::from(c.analysis.worst_case_pct_fs),
                    b["design"]["error"]["worst_case_pct_fs"].clone()
                );
                // And once more around through the report's own file.
                let file2 = b["design"]["file"].to_string();
                let b2 = analyse(spanfit::demo::NEED_TOML.as_bytes(), file2.as_bytes())
                    .map_err(TestCaseError::fail)?;
                prop_assert_eq!(cost_and_error(&b2["design"]), cost_and_error(&b["design"]));
                prop_assert_eq!(&b2["design"]["file"], &b["design"]["file"]);
            }
            (Err(a), Err(b)) => prop_assert_eq!(a, b),
            (a, b) => prop_assert!(false, "direct {:?} but read back {:?}", a.map(|_| ()), b.map(|_| ())),
        }
    }
}

/// The report's own `design.file` writer round-trips stock, generic,
/// `custom` and own-id inline resistors of every shape.
#[test]
fn the_report_file_reads_back_for_every_shape() {
    let (_, stock) = demo();
    let kinds = [Kind::Stock, Kind::Custom, Kind::OwnId, Kind::Generic];
    let mut seen = std::collections::BTreeSet::new();
    let mut seed = 1u64;
    while seen.len() < Shape::ALL.len() && seed < 10_000 {
        let (design, _) = random_design(seed, &stock, &kinds);
        seed += 1;
        if design.stages.len() != 1 || !seen.insert(design.stages[0].shape.name()) {
            continue;
        }
        let file = spanfit::design::design_file_json(&design, &stock).to_string();
        let again = parse_design(file.as_bytes(), "design.json", &stock).unwrap();
        assert_eq!(again, design, "{file}");
    }
    assert_eq!(seen.len(), Shape::ALL.len());
}

/// With `stock.only = false` and a shelf of one resistor, the solved
/// design holds generic series parts; its file reads back through
/// `analyze` to the same design object.
#[test]
fn a_design_of_generic_values_reads_back() {
    let need = spanfit::demo::NEED_TOML
        .replace("only = true", "only = false")
        .replace("path = \"../parts-data/demo-stock\"\n", "")
        .replace("max_stages = 3", "max_stages = 1")
        .replace("max_error_pct_fs = 0.5", "max_error_pct_fs = 2.5")
        // One in-amp stage with the rail's tolerance through PSRR and the
        // reference's load regulation spreads the raw output wider than a
        // 2 % margin holds; 5 % leaves room for it.
        .replace("margin_pct = 2.0", "margin_pct = 5.0")
        .replace(
            "topologies = [\"non-inverting\", \"inverting\", \"difference\", \"instrumentation\"]",
            "topologies = [\"instrumentation\"]",
        );
    assert!(need.contains("only = false") && need.contains("max_error_pct_fs = 2.5"));
    assert!(need.contains("margin_pct = 5.0"));
    assert!(need.contains("topologies = [\"instrumentation\"]"));
    let mut stock = spanfit::demo::stock_files();
    for f in &mut stock {
        if f.name == "resistors.csv" {
            f.bytes =
                b"part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                        ONE-10K,10000,0.1,25,0603,0.5,\n"
                    .to_vec();
        }
    }
    let mut progress = |_: Progress| true;
    let clock = || 0.0;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let solved = solve_bundle(need.as_bytes(), "need.toml", &stock, false, &mut control).unwrap();
    let solved = serde_json::to_value(solved).unwrap();
    let report = &solved["report"];
    assert_eq!(report["status"], "ok", "{}", report["reason"]);
    let file = report["design"]["file"].to_string();
    assert!(
        file.contains("GEN-"),
        "the design uses no generic part: {file}"
    );
    let analysed = analyze_bundle(
        need.as_bytes(),
        "need.toml",
        &stock,
        file.as_bytes(),
        "file",
    )
    .unwrap();
    let analysed = serde_json::to_value(analysed).unwrap();
    assert_eq!(analysed["report"]["design"], report["design"]);
}

/// A generic id names the part the search places, grade and cost alike.
#[test]
fn generic_ids_name_the_parts_the_search_places() {
    let (need, stock) = demo();
    let mut need = need;
    need.stock.only = false;
    need.search.resistor_series = spanfit::series::Series::ALL.to_vec();
    let augmented = spanfit::search::augment_stock(&need, &stock);
    let generic: Vec<_> = augmented
        .resistors
        .iter()
        .filter(|p| p.part_id.starts_with("GEN-"))
        .collect();
    assert!(generic.len() > 1000, "{}", generic.len());
    for p in generic {
        assert_eq!(generic_resistor_by_id(&p.part_id).as_ref(), Some(p));
    }
    assert_eq!(generic_resistor_by_id("GEN-E96-4K98"), None);
    assert_eq!(generic_resistor_by_id("GEN-E97-4K99"), None);
}

/// An inline part with its own id reads back as written (99 kohm stays
/// 99 kohm); one whose id is a stock id with other values is refused.
#[test]
fn inline_ids_read_back_and_collisions_are_refused() {
    let (_, stock) = demo();
    let stock_id = &stock.resistors[0].part_id;
    let file = |id: &str, ohms: f64| {
        format!(
            "{{\"stages\": [{{\"shape\": \"instrumentation-integrated\", \"amplifier\": \"IA-3\", \
             \"resistors\": {{\"rg\": {{\"part_id\": \"{id}\", \"ohms\": {ohms}, \
             \"tolerance_pct\": 0.1, \"tcr_ppm_per_c\": 25, \"unit_cost\": 0.2}}}}}}]}}"
        )
    };
    let d = parse_design(file("BENCH-99K", 99_000.0).as_bytes(), "d.json", &stock).unwrap();
    let rg = &d.stages[0].resistors[&spanfit::shape::Role::Rg];
    assert_eq!((rg.part_id.as_str(), rg.ohms), ("BENCH-99K", 99_000.0));
    let written = design_file_json(&d, &stock);
    assert_eq!(
        written["stages"][0]["resistors"]["rg"]["part_id"],
        "BENCH-99K"
    );
    assert_eq!(
        parse_design(written.to_string().as_bytes(), "d.json", &stock).unwrap(),
        d
    );

    let e = parse_design(file(stock_id, 99_000.0).as_bytes(), "d.json", &stock)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("d.json") && e.contains("stages[0].resistors.rg"),
        "{e}"
    );
    assert!(
        e.contains(stock_id.as_str()) && e.contains("other values"),
        "{e}"
    );

    // The same id with the stock part's own values is that stock part.
    let p = &stock.resistors[0];
    let same = format!(
        "{{\"stages\": [{{\"shape\": \"instrumentation-integrated\", \"amplifier\": \"IA-3\", \
         \"resistors\": {{\"rg\": {{\"part_id\": \"{}\", \"ohms\": {}, \"tolerance_pct\": {}, \
         \"tcr_ppm_per_c\": {}}}}}}}]}}",
        p.part_id, p.value.0, p.tolerance.0, p.tcr.0
    );
    let d = parse_design(same.as_bytes(), "d.json", &stock).unwrap();
    assert_eq!(
        d.stages[0].resistors[&spanfit::shape::Role::Rg],
        Resistor::from(p)
    );
}

/// Design-file messages: they say what a resistor entry may be, count
/// columns from 1, name the key and the allowed range of an inline number,
/// and cut echoed text.
#[test]
fn design_file_messages_name_the_key_and_what_was_expected() {
    let (_, stock) = demo();
    let with_rg = |rg: &str| {
        format!(
            "{{\"stages\": [{{\"shape\": \"instrumentation-integrated\", \"amplifier\": \"IA-3\", \
             \"resistors\": {{\"rg\": {rg}}}}}]}}"
        )
    };
    let message = |text: &str| {
        parse_design(text.as_bytes(), "mine.json", &stock)
            .unwrap_err()
            .to_string()
    };
    let m = message(&with_rg("5"));
    assert!(m.contains("stages[0].resistors.rg"), "{m}");
    assert!(m.contains("stock part id") && m.contains("inline"), "{m}");
    assert!(!m.contains("untagged"), "{m}");
    for (field, value, range) in [
        ("ohms", "1e-308", "0.001"),
        ("ohms", "1e100", "1000000000000"),
        ("tolerance_pct", "1.7e308", "less than 100"),
        ("tcr_ppm_per_c", "1.7e308", "100000"),
        ("unit_cost", "-1", "1000000"),
    ] {
        let mut fields = vec![
            ("ohms", "1000"),
            ("tolerance_pct", "1"),
            ("tcr_ppm_per_c", "50"),
        ];
        match fields.iter_mut().find(|(k, _)| *k == field) {
            Some(f) => f.1 = value,
            None => fields.push((field, value)),
        }
        let inline = format!(
            "{{{}}}",
            fields
                .iter()
                .map(|(k, v)| format!("\"{k}\": {v}"))
                .collect::<Vec<_>>()
                .join(", ")
        );
        let m = message(&with_rg(&inline));
        assert!(
            m.contains("mine.json") && m.contains(&format!("stages[0].resistors.rg.{field}")),
            "{m}"
        );
        assert!(m.contains(range), "{field} = {value}: {m}");
    }
    let m = message(&with_rg("{\"ohms\": 1000, \"tolerance_pct\": 1}"));
    assert!(m.contains("tcr_ppm_per_c"), "{m}");
    let m = message(&with_rg(
        "{\"ohms\": 1000, \"tolerance_pct\": 1, \"tcr_ppm_per_c\": 5, \"colour\": 1}",
    ));
    assert!(
        m.contains("unknown key `colour`") && m.contains("ohms, tolerance_pct"),
        "{m}"
    );
    // A number beyond any f64 is a JSON error, still located.
    let m = message(&with_rg(
        "{\"ohms\": 1.8e308, \"tolerance_pct\": 1, \"tcr_ppm_per_c\": 5}",
    ));
    assert!(m.contains("line 1, column"), "{m}");
    let m = message("{\n\"stages\": [\n");
    assert!(
        m.contains("line 3, column 1") || m.contains("column 1"),
        "{m}"
    );
    assert!(!m.contains("column 0"), "{m}");
    let long = "x".repeat(200_000);
    let m = message(&with_rg(&format!("\"{long}\"")));
    assert!(
        m.chars().count() < 1000 && m.contains('…'),
        "{} chars",
        m.len()
    );
    let m = message(&with_rg("\"HR-NOPE\"").replace("\"rg\"", &format!("\"{long}\"")));
    assert!(m.chars().count() < 1000, "{} chars", m.len());
}
