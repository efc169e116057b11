//! The optimiser against the true exhaustive walk on small random spaces.
//!
//! Invented stocks: one to three resistor grades, each an E6, E12 or E24
//! family over one or two decades (some held in small quantities), one to
//! three op-amps (single and dual packages), no, one or two references,
//! no, one or two capacitor families (so the filter pair at the ADC input
//! counts), and now and then an in-amp. Invented needs: single-ended and
//! differential sensors, rising and falling gains, positive, negative,
//! small and zero offsets, single and split supplies, a sampling ADC input
//! or not, every calibration and basis, the cost, parts and error
//! objectives, targets from loose to the edge of feasibility (measured
//! first by the exhaustive walk of the error objective), BOM-line fees.
//! The space of each case is kept small enough for both walks to finish.
//!
//! What must hold on every case:
//! - the exhaustive walk finishes with a proof (optimal or infeasible);
//! - the same feasibility verdict, and the same objective value: the
//!   optimised mode finishes these small spaces, so it proves its answer
//!   too and must prove the same one;
//! - no false proof on the way: an optimiser that claims `proven_optimal`
//!   or a proven infeasibility is never contradicted by the walk.
//!
//! `cargo test --release --test exhaustive_agreement -- --ignored
//! --nocapture agreement_table` prints the README's table of both modes'
//! times on a fixed sample of these cases.

// The test reads the clock to time the cases.
#![allow(clippy::disallowed_methods, clippy::disallowed_types)]

use proptest::prelude::*;
use spanfit::need::{Need, Objective};
use spanfit::search::{solve_unexplained, Progress, SearchMode, SolveControl, SolveOutcome};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// One resistor grade of an invented stock.
#[derive(Debug, Clone)]
struct Grade {
    /// `E6`, `E12` or `E24`.
    series: &'static str,
    /// Lowest value, ohms.
    from: f64,
    /// Decades covered.
    decades: u32,
    /// Tolerance, TCR and price class (0 coarse, 1 usual, 2 precise).
    class: usize,
    /// Held in a small quantity (or any number).
    quantity: Option<u32>,
}

/// An invented stock.
#[derive(Debug, Clone)]
struct StockCase {
    grades: Vec<Grade>,
    /// Op-amps, by index into [`OPAMPS`].
    opamps: Vec<usize>,
    /// References, by index into [`REFERENCES`].
    references: Vec<usize>,
    /// Capacitor families, by index into [`CAPACITORS`].
    capacitors: Vec<usize>,
    inamp: bool,
}

/// Invented op-amp rows (single and dual packages, precise and cheap, one
/// that cannot run on 12 V).
const OPAMPS: [&str; 4] = [
    "X-OA1,1,2.7,12,0,0,0.02,0.02,300,2,0.1,0.1,110,2,20,0.1,100,0.40,",
    "X-OA2,2,2.7,12,0,0,0.02,0.02,20,0.1,0.1,0.1,120,2,20,0.1,110,0.90,",
    "X-OA3,2,2.7,12,0,0,0.02,0.02,1500,5,1,0.5,100,1,30,0.1,90,0.30,4",
    "X-OA4,1,1.8,5.5,0,0,0.01,0.01,50,0.5,0.01,0.01,115,5,15,0.1,105,0.70,",
];

/// Invented reference rows.
const REFERENCES: [&str; 2] = [
    "X-REF25,2.5,0.1,20,0.2,10,0.30,",
    "X-REF12,1.25,0.5,50,0.2,20,0.15,",
];

/// Invented capacitor family rows.
const CAPACITORS: [&str; 2] = [
    "X-C1,,E6,1e-9,1e-6,10,1500,X7R,25,0603,0.004,",
    "X-C2,,E12,1e-10,1e-7,5,30,C0G,50,0603,0.008,",
];

/// Invented in-amp row.
const INAMP: &str = "X-IA,49400,0.1,25,50,200,0.5,2,90,2.7,12,0.1,0.1,0.05,0.05,50,1.0,1.50,";

/// Values per decade of a series.
#[allow(dead_code)]
fn per_decade(series: &str) -> usize {
    match series {
        "E6" => 6,
        "E12" => 12,
        _ => 24,
    }
}

impl StockCase {
    #[allow(dead_code)]
    /// Resistor values on the shelf (an upper count: rows are per value).
    fn resistor_count(&self) -> usize {
        self.grades
            .iter()
            .map(|g| per_decade(g.series) * g.decades as usize)
            .sum()
    }

    fn build(&self) -> Stock {
        let f = |name: &str, text: String| StockFile {
            name: name.into(),
            bytes: text.into_bytes(),
        };
        let mut resistors = String::from(
            "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n",
        );
        for (i, g) in self.grades.iter().enumerate() {
            let (tol, tcr, cost) =
                [(5.0, 200.0, 0.002), (1.0, 100.0, 0.003), (0.1, 25.0, 0.02)][g.class.min(2)];
            // Just under the next decade's first value, so each decade
            // holds the whole series once.
            let top = g.from * 10f64.powi(g.decades as i32) * 0.99;
            let qty = g.quantity.map(|q| q.to_string()).unwrap_or_default();
            resistors.push_str(&format!(
                "X-R{i},{},{},{top},{tol},{tcr},0603,{cost},{qty}\n",
                g.series, g.from
            ));
        }
        let mut amps = String::from(
            "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n",
        );
        for &o in &self.opamps {
            amps.push_str(OPAMPS[o]);
            amps.push('\n');
        }
        let mut refs = String::from(
            "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n",
        );
        for &r in &self.references {
            refs.push_str(REFERENCES[r]);
            refs.push('\n');
        }
        let mut files = vec![
            f("resistors.csv", resistors),
            f("opamps.csv", amps),
            f("references.csv", refs),
        ];
        if !self.capacitors.is_empty() {
            let mut caps = String::from(
                "part_id,value_farads,series,min_farads,max_farads,tolerance_pct,tempco_ppm_per_c,dielectric,rated_v,package,unit_cost,stock_qty\n",
            );
            for &c in &self.capacitors {
                caps.push_str(CAPACITORS[c]);
                caps.push('\n');
            }
            files.push(f("capacitors.csv", caps));
        }
        if self.inamp {
            files.push(f(
                "inamps.csv",
                format!("part_id,gain_resistor_ohms,gain_error_pct,gain_drift_ppm_per_c,input_offset_uv,output_offset_uv,offset_drift_uv_per_c,ib_max_na,cmrr_min_db,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,en_nv_rthz,gbw_mhz,unit_cost,stock_qty\n{INAMP}\n"),
            ));
        }
        parse_stock(&files).unwrap_or_else(|e| panic!("the invented stock parses: {e}\n{self:?}"))
    }
}

/// An invented need.
#[derive(Debug, Clone)]
struct NeedCase {
    differential: bool,
    /// The sensor's span falls (a negative gain).
    falling: bool,
    /// -1 negative, 0 zero, 1 positive, 2 small positive, -2 small
    /// negative ideal offset.
    offset: i8,
    split: bool,
    /// Target: a multiple of the best error the space reaches (from the
    /// exhaustive walk of the error objective), or, without one, % FS.
    target: Target,
    calibration: &'static str,
    basis: &'static str,
    line: f64,
    objective: &'static str,
    max_parts: usize,
    sampling: bool,
}

#[derive(Debug, Clone, Copy)]
enum Target {
    /// This many % FS.
    Fixed(f64),
    /// This factor times the least error the space reaches: just above 1
    /// is the edge of feasibility, just below it is infeasible.
    Edge(f64),
}

impl NeedCase {
    fn text(&self, err: f64) -> String {
        let (output, cm) = if self.differential {
            ("differential", "common_mode_v = 2.5\n")
        } else {
            ("single-ended", "")
        };
        // Output window 0..3 V, with a margin where the offset asks.
        let (mut low, mut high, margin) = match self.offset {
            0 => (0.0, 0.2, 0.0),
            -1 => (0.1, 0.3, 0.0),
            -2 => (0.01, 0.21, 0.0),
            2 => (0.0, 0.2, 1.0),
            _ => (0.0, 0.2, 10.0),
        };
        if self.falling {
            std::mem::swap(&mut low, &mut high);
        }
        let negative = if self.split { -5.0 } else { 0.0 };
        let sampling = if self.sampling {
            "sample_capacitance_pf = 10\nacquisition_time_ns = 2000\n"
        } else {
            ""
        };
        format!(
            "[sensor]\nsignal_low_v = {low}\nsignal_high_v = {high}\noutput = \"{output}\"\n{cm}source_ohms = 10.0\n\
             [adc]\nlow_v = 0.0\nhigh_v = 3.0\nbits = 12\nmargin_pct = {margin}\n{sampling}\
             [supply]\npositive_v = 5.0\nnegative_v = {negative}\n\
             [accuracy]\nmax_error_pct_fs = {err}\ncalibration = \"{}\"\nbasis = \"{}\"\nyield_pct = 95\ntemp_min_c = 0.0\ntemp_max_c = 50.0\n\
             [search]\nmax_stages = 1\nmax_parts = {}\nbom_line_cost = {}\nobjective = \"{}\"\ntime_limit_ms = 600000\n",
            self.calibration, self.basis, self.max_parts, self.line, self.objective
        )
    }

    fn build(&self, err: f64) -> Need {
        let text = self.text(err);
        spanfit::need::parse_need(text.as_bytes(), "random.toml")
            .unwrap_or_else(|e| panic!("{e}\n{text}"))
    }
}

fn run(need: &Need, stock: &Stock, mode: SearchMode) -> SolveOutcome {
    let clock = || 0.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    // The verdict and the design only: the explanation of a need without a
    // design (its suggestions, each a search of its own) is not compared.
    solve_unexplained(need, stock, mode, &mut control).expect("the search runs")
}

/// The objective value of an outcome's best design.
fn value(need: &Need, o: &SolveOutcome) -> Option<f64> {
    o.best.as_ref().map(|b| match need.search.objective {
        Objective::Cost => b.costing.total,
        Objective::Parts => b.costing.part_count as f64,
        Objective::Error => b.analysis.basis_pct_fs,
    })
}

/// The need of a case with its target settled: an edge target is placed
/// against the least error the space reaches, found by the exhaustive walk
/// of the error objective with a loose target (`None` when nothing in the
/// space is feasible at all).
fn settle(case: &NeedCase, stock: &Stock) -> Option<Need> {
    match case.target {
        Target::Fixed(err) => Some(case.build(err)),
        Target::Edge(factor) => {
            let mut loose = case.clone();
            loose.objective = "error";
            let probe = loose.build(50.0);
            let least = value(&probe, &run(&probe, stock, SearchMode::Exhaustive))?;
            Some(case.build((least * factor).clamp(1e-4, 50.0)))
        }
    }
}

/// Every property of the module notes for one need and stock.
fn check(need: &Need, stock: &Stock) -> Result<(), String> {
    let fast = run(need, stock, SearchMode::Optimised);
    let full = run(need, stock, SearchMode::Exhaustive);
    compare(need, &fast, &full)
}

fn compare(need: &Need, fast: &SolveOutcome, full: &SolveOutcome) -> Result<(), String> {
    let (a, b) = (value(need, fast), value(need, full));
    if full.stopped.is_some() || full.unfinished() {
        return Err("the exhaustive walk did not finish".into());
    }
    if full.best.is_some() != full.stats.proven_optimal {
        return Err("a finished exhaustive walk proves its optimum".into());
    }
    if full.best.is_none() && !full.infeasible.as_ref().is_some_and(|i| i.proven) {
        return Err("a finished exhaustive walk proves infeasibility".into());
    }
    let fast_proven_infeasible = fast.infeasible.as_ref().is_some_and(|i| i.proven);
    match (a, b) {
        (Some(a), Some(b)) => {
            let tolerance = 1e-9 * a.abs().max(1.0);
            if fast.stats.proven_optimal && (a - b).abs() > tolerance {
                return Err(format!("false proof: optimiser {a} proven, exhaustive {b}"));
            }
            if b > a + tolerance {
                return Err(format!(
                    "exhaustive optimum {b} worse than the optimiser's {a}"
                ));
            }
            if (a - b).abs() > tolerance {
                return Err(format!("optimiser {a}, exhaustive optimum {b}"));
            }
            if !fast.stats.proven_optimal {
                return Err(format!("optimiser {a} not proven on a small space"));
            }
        }
        (Some(a), None) => return Err(format!("optimiser found {a}, exhaustive none")),
        (None, Some(b)) => {
            if fast_proven_infeasible {
                return Err(format!(
                    "false proof of infeasibility: exhaustive found {b}"
                ));
            }
            return Err(format!("optimiser found no design, exhaustive found {b}"));
        }
        (None, None) => {
            if !fast_proven_infeasible || fast.unfinished() {
                return Err("optimiser did not prove the infeasibility".into());
            }
        }
    }
    Ok(())
}

/// The random stock: grades and parts, kept so small that the exhaustive
/// walk of the case's part limit stays quick.
fn stock_case() -> impl Strategy<Value = StockCase> {
    let grade = (
        prop::sample::select(vec!["E6", "E12", "E24"]),
        prop::sample::select(vec![1_000.0f64, 10_000.0]),
        1u32..=2,
        0usize..=2,
        prop::option::weighted(0.2, 2u32..=4),
    )
        .prop_map(|(series, from, decades, class, quantity)| Grade {
            series,
            from,
            decades,
            class,
            quantity,
        });
    (
        prop::collection::vec(grade, 1..=3),
        prop::sample::subsequence(vec![0usize, 1, 2, 3], 1..=3),
        prop::sample::subsequence(vec![0usize, 1], 0..=2),
        prop::sample::subsequence(vec![0usize, 1], 0..=2),
        prop::bool::weighted(0.15),
    )
        .prop_map(
            |(grades, opamps, references, capacitors, inamp)| StockCase {
                grades,
                opamps,
                references,
                capacitors,
                inamp,
            },
        )
}

fn need_case() -> impl Strategy<Value = NeedCase> {
    (
        (
            any::<bool>(),
            prop::bool::weighted(0.2),
            prop::sample::select(vec![-2i8, -1, 0, 1, 2]),
            any::<bool>(),
            prop_oneof![
                prop::sample::select(vec![0.3f64, 1.0, 3.0, 10.0]).prop_map(Target::Fixed),
                prop::sample::select(vec![0.97f64, 1.001, 1.03, 1.3]).prop_map(Target::Edge),
            ],
        ),
        (
            prop::sample::select(vec!["none", "offset", "two-point"]),
            prop::sample::select(vec!["worst-case", "worst-case", "rss", "rss", "yield"]),
            prop::sample::select(vec![0.0f64, 0.05]),
            prop::sample::select(vec!["cost", "cost", "parts", "error"]),
            0usize..=2,
            prop::bool::weighted(0.25),
        ),
    )
        .prop_map(
            |(
                (differential, falling, offset, split, target),
                (calibration, basis, line, objective, extra_parts, sampling),
            )| NeedCase {
                differential,
                falling,
                offset,
                split,
                target,
                calibration,
                basis,
                line,
                objective,
                // A differential sensor needs four resistors and an
                // op-amp (or an in-amp and its gain resistor).
                max_parts: if differential {
                    5 + extra_parts.min(1)
                } else {
                    3 + extra_parts
                },
                sampling,
            },
        )
}

/// Most designs in the space of a case (every design is analysed when no
/// bound cuts the walk short: a target nothing meets, the error
/// objective); the yield basis runs a Monte Carlo check per design that
/// meets its screen, so its spaces are smaller still.
fn budget(need: &NeedCase) -> u64 {
    match (need.basis, need.objective) {
        ("yield", _) => 300,
        _ => DESIGNS,
    }
}

/// Most designs in a case's space (see [`budget`]); well under the space
/// the optimised mode finishes with its own exhaustive walk.
const DESIGNS: u64 = 4_000;

/// Trim a random case to a space both walks finish quickly (see
/// [`budget`]): fewer grades, decades, values per decade, op-amps,
/// references, then fewer parts.
fn fit(mut stock: StockCase, mut need: NeedCase) -> (StockCase, NeedCase) {
    if need.basis == "yield" {
        // A Monte Carlo run per design: no in-amp, one reference.
        stock.inamp = false;
        stock.references.truncate(1);
    }
    let limit = budget(&need);
    loop {
        let count = spanfit::search::space_designs(&need.build(50.0), &stock.build(), limit);
        if count.is_some() {
            break;
        }
        if stock.grades.len() > 1 {
            stock.grades.pop();
        } else if stock.grades[0].decades > 1 {
            stock.grades[0].decades = 1;
        } else if stock.grades[0].series != "E6" {
            stock.grades[0].series = if stock.grades[0].series == "E24" {
                "E12"
            } else {
                "E6"
            };
        } else if stock.opamps.len() > 1 {
            stock.opamps.pop();
        } else if !stock.references.is_empty() {
            stock.references.pop();
        } else if stock.inamp {
            stock.inamp = false;
        } else if need.max_parts > 3 {
            need.max_parts -= 1;
        } else {
            break;
        }
    }
    (stock, need)
}

/// Run one case: `Err` names the disagreement.
fn case(stock: &StockCase, need: &NeedCase) -> Result<(), String> {
    let built = stock.build();
    let Some(need) = settle(need, &built) else {
        return Ok(());
    };
    check(&need, &built)
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 300,
        // A fixed seed, so a failure reproduces and CI runs the same cases.
        rng_seed: proptest::test_runner::RngSeed::Fixed(7),
        failure_persistence: None,
        max_shrink_iters: 200,
        .. ProptestConfig::default()
    })]
    #[test]
    fn optimiser_agrees_with_the_exhaustive_walk(
        (stock, need) in (stock_case(), need_case()).prop_map(|(s, n)| fit(s, n)),
    ) {
        if let Err(why) = case(&stock, &need) {
            prop_assert!(false, "{why}\nneed {need:?}\nstock {stock:?}");
        }
    }
}

/// The README's table: a fixed sample of the property test's cases, each
/// solved by both modes with a real clock (release build). Ignored in CI;
/// run with `cargo test --release --test exhaustive_agreement --
/// --ignored --nocapture agreement_table`.
#[test]
#[ignore]
fn agreement_table() {
    use proptest::strategy::ValueTree;
    use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
    let mut runner = TestRunner::new_with_rng(
        Config::default(),
        TestRng::from_seed(RngAlgorithm::ChaCha, &[11; 32]),
    );
    let strategy = (stock_case(), need_case()).prop_map(|(s, n)| fit(s, n));
    let time = |need: &Need, stock: &Stock, mode| {
        let started = std::time::Instant::now();
        let o = run(need, stock, mode);
        (o, started.elapsed().as_secs_f64() * 1e3)
    };
    println!(
        "| case | sensor | objective | basis | calibration | designs | optimum | optimised ms | exhaustive ms | same optimum and verdict |"
    );
    println!("|---:|---|---|---|---|---:|---:|---:|---:|:---:|");
    let mut n = 0;
    while n < 24 {
        let (stock_case, need_case) = strategy.new_tree(&mut runner).expect("a case").current();
        let stock = stock_case.build();
        let Some(need) = settle(&need_case, &stock) else {
            continue;
        };
        n += 1;
        let (fast, fast_ms) = time(&need, &stock, SearchMode::Optimised);
        let (full, full_ms) = time(&need, &stock, SearchMode::Exhaustive);
        let same = compare(&need, &fast, &full).is_ok();
        let designs = spanfit::search::space_designs(&need, &stock, u64::MAX).unwrap_or(u64::MAX);
        let optimum = value(&need, &full).map_or("none".to_string(), |v| format!("{v:.4}"));
        println!(
            "| {n} | {} | {} | {} | {} | {designs} | {optimum} | {fast_ms:.1} | {full_ms:.1} | {} |",
            if need_case.differential { "differential" } else { "single-ended" },
            need_case.objective,
            need_case.basis,
            need_case.calibration,
            if same { "yes" } else { "no" }
        );
    }
}
