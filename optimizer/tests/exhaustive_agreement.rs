//! The optimiser against the true exhaustive walk on small random spaces.
//!
//! Invented stocks: one to three resistor grades, each an E6, E12 or E24
//! family over one or two decades (some held in small quantities), one or
//! two op-amps that run on 10 V (single and dual packages) and now and
//! then a 5.5 V one, no, one or two references, no, one or two capacitor
//! families (so the filter pair at the ADC input counts), now and then
//! an in-amp, and now and then a matched network of four elements (two
//! values of the first grade a ratio of 2.2 or 4.7 apart, matched and
//! tracking tighter than any grade, dearer or cheaper than four resistors),
//! which both walks place in a difference stage's matched roles. Invented needs: single-ended and differential sensors,
//! rising and falling gains (each a gain one decade of E6 values reaches
//! exactly), positive, negative, small and zero offsets, margins of 1 to
//! 10 %, single and split supplies, a sampling ADC input or not, every
//! calibration and basis, the cost, parts and error objectives, BOM-line
//! fees. Most targets sit at the edge of feasibility: a factor from 0.9
//! to 3 of the least error the space reaches, measured first by the
//! exhaustive walk of the error objective (see [`settle`]); some are fixed.
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
//! And over the run, the mix (printed with `--nocapture`): at least 40 %
//! of the cases feasible and 20 % infeasible, 15 % feasible and 10 %
//! infeasible with the target within 10 % of the least error, none
//! unfinished, every trait of the generator on both sides of the
//! verdict, and a network package in the optimum of at least 2 % of the
//! cases.
//!
//! `cargo test --release --test exhaustive_agreement -- --ignored
//! --nocapture agreement_table` prints the README's table of both modes'
//! times on a fixed sample of these cases.

// The test reads the clock to time the cases.
#![allow(clippy::disallowed_methods, clippy::disallowed_types)]

use proptest::prelude::*;
use spanfit::need::{Need, Objective};
use spanfit::search::{
    first_stage_floor_pct, last_stage_swing_floor_pct, solve_unexplained, space_cost_floor,
    Progress, SearchMode, SolveControl, SolveOutcome,
};
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
    /// A matched network, now and then.
    network: Option<Network>,
}

/// A matched network of an invented stock: four elements, two of the
/// first grade's lowest value and two of that value times an E6 ratio
/// (2.2 or 4.7, a difference stage's gain when it is the need's), matched
/// and tracking far tighter than any discrete grade.
#[derive(Debug, Clone)]
struct Network {
    /// The ratio of its two values.
    ratio: f64,
    /// Its package price (dearer or cheaper than four resistors).
    price: f64,
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
        if let Some(n) = &self.network {
            let low = self.grades[0].from;
            let high = low * n.ratio;
            files.push(f(
                "networks.csv",
                format!(
                    "part_id,count,value_ohms,abs_tolerance_pct,ratio_tolerance_pct,abs_tcr_ppm_per_c,tracking_tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                     X-RN1,4,{low};{high};{low};{high},0.1,0.01,25,2,SOIC-8,{},\n",
                    n.price
                ),
            ));
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
    /// The ideal offset of a rising gain: -1 negative, -2 small negative,
    /// 0 zero, 2 small positive, 1 positive (a falling gain always has a
    /// positive one).
    offset: i8,
    /// Span kept free at each end of the ADC window, %.
    margin: f64,
    /// The gain's size from an E6 ratio (2.2 or 4.7): the ratio itself
    /// for a difference or an inverting amplifier, one plus it for a
    /// non-inverting one (a rising single-ended sensor), so that one decade
    /// of E6 values reaches it exactly and a design without calibration
    /// can exist (the sensor's span follows from it).
    ratio: f64,
    split: bool,
    /// Target: a multiple of the least error the space reaches (from the
    /// exhaustive walk of the error objective), or % FS.
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
    /// This factor times the least error the space reaches: 1 and just
    /// above is the edge of feasibility, just below it is infeasible. The
    /// filter pair's rules are drawn from the second number, % FS (see
    /// [`settle`]).
    Edge(f64, f64),
}

impl NeedCase {
    /// The sensor's low and high ends (before a falling gain swaps them)
    /// and the margin, from the offset class: the gain maps the span onto
    /// the window `[3 m, 3 (1 - m)]` V, so a sensor low end of `w_low / K`
    /// means no offset, above it a negative one, below it a positive one.
    fn signal(&self) -> (f64, f64, f64) {
        let margin = if self.offset == 1 {
            self.margin.max(10.0)
        } else {
            self.margin
        };
        let (w_low, w_high) = (0.03 * margin, 3.0 - 0.03 * margin);
        let gain = if self.differential || self.falling {
            self.ratio
        } else {
            1.0 + self.ratio
        };
        let span = (w_high - w_low) / gain;
        let zero = w_low / gain;
        let low = match self.offset {
            0 => zero,
            -1 => zero + 0.5 * span,
            -2 => zero + 0.025 * span,
            2 => zero * 0.5,
            _ => 0.0,
        };
        (low, low + span, margin)
    }

    fn text(&self, err: f64) -> String {
        let (output, cm) = if self.differential {
            ("differential", "common_mode_v = 2.5\n")
        } else {
            ("single-ended", "")
        };
        let (mut low, mut high, margin) = self.signal();
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
/// of the error objective with a loose target. The filter pair's rules are
/// drawn from the target (its droop allowance is a share of it), so an
/// edge case draws them from a fixed target of its own instead, in the
/// probe and in the case alike, as the explanation of an infeasible need
/// does (`Accuracy::filter_target_pct_fs`): the least error then does not
/// move with the target, and the edge is where it meets the target.
/// The probe's designs (the most accurate of the whole space, and its
/// front), which no floor prunes at a loose target, are also held to the
/// floors: the third value names a floor over a design's error.
fn settle(case: &NeedCase, stock: &Stock) -> (Need, Probe, Result<(), String>) {
    let (factor, filter) = match case.target {
        Target::Fixed(err) => return (case.build(err), Probe::None, Ok(())),
        Target::Edge(factor, filter) => (factor, filter),
    };
    let pinned = |mut need: Need| {
        need.accuracy.filter_target_pct_fs = Some(filter);
        need
    };
    let mut probe = case.clone();
    probe.objective = "error";
    let loose = pinned(probe.build(50.0));
    let walk = run(&loose, stock, SearchMode::Exhaustive);
    let floors = floors_hold(&loose, stock, &walk).map_err(|e| format!("probe: {e}"));
    match value(&loose, &walk) {
        Some(least) => (
            pinned(case.build((least * factor).clamp(1e-4, 50.0))),
            Probe::Least(least),
            floors,
        ),
        None => (pinned(case.build(50.0)), Probe::Nothing, floors),
    }
}

/// What the probe of an edge target found.
#[derive(Debug, Clone, Copy)]
enum Probe {
    /// No probe (a fixed target).
    None,
    /// No design of the space meets the need at any target.
    Nothing,
    /// The least error the space reaches, % FS.
    Least(f64),
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
/// walk of the case's part limit stays quick. At least one op-amp runs on
/// the split supply's 10 V (the fourth, a 5.5 V part, comes as an extra).
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
        prop::sample::subsequence(vec![0usize, 1, 2], 1..=2),
        prop::bool::weighted(0.3),
        prop::sample::subsequence(vec![0usize, 1], 0..=2),
        prop::sample::subsequence(vec![0usize, 1], 0..=2),
        prop::bool::weighted(0.15),
        prop::option::weighted(
            0.25,
            (
                prop::sample::select(vec![2.2f64, 4.7]),
                prop::sample::select(vec![0.01f64, 0.3]),
            )
                .prop_map(|(ratio, price)| Network { ratio, price }),
        ),
    )
        .prop_map(
            |(grades, mut opamps, low_voltage, references, capacitors, inamp, network)| {
                if low_voltage {
                    opamps.push(3);
                }
                StockCase {
                    grades,
                    opamps,
                    references,
                    capacitors,
                    inamp,
                    network,
                }
            },
        )
}

/// Targets: most at the edge of feasibility (factors of the least error
/// from just below to just above 1), some comfortable, some fixed.
fn target() -> impl Strategy<Value = Target> {
    let edge = |factors: Vec<f64>| {
        (
            prop::sample::select(factors),
            prop::sample::select(vec![0.1f64, 0.5, 2.0]),
        )
            .prop_map(|(factor, filter)| Target::Edge(factor, filter))
    };
    prop_oneof![
        3 => edge(vec![0.9, 0.99, 0.999]),
        5 => edge(vec![1.0, 1.0001, 1.01, 1.05, 1.1]),
        2 => edge(vec![1.5, 3.0]),
        2 => prop::sample::select(vec![0.3f64, 1.0, 3.0, 10.0]).prop_map(Target::Fixed),
    ]
}

fn need_case() -> impl Strategy<Value = NeedCase> {
    (
        (
            any::<bool>(),
            prop::bool::weighted(0.2),
            prop::sample::select(vec![-2i8, -1, 0, 1, 2]),
            prop::sample::select(vec![1.0f64, 3.0, 10.0, 10.0]),
            prop::sample::select(vec![2.2f64, 4.7]),
            any::<bool>(),
            target(),
        ),
        (
            prop::sample::select(vec![
                "none",
                "offset",
                "two-point",
                "two-point",
                "two-point",
            ]),
            prop::sample::select(vec!["worst-case", "worst-case", "rss", "rss", "yield"]),
            prop::sample::select(vec![0.0f64, 0.05]),
            prop::sample::select(vec!["cost", "cost", "parts", "error"]),
            0usize..=2,
            prop::bool::weighted(0.25),
        ),
    )
        .prop_map(
            |(
                (differential, falling, offset, margin, ratio, split, target),
                (calibration, basis, line, objective, extra_parts, sampling),
            )| NeedCase {
                differential,
                falling,
                offset,
                margin,
                ratio,
                split,
                target,
                calibration,
                basis,
                line,
                objective,
                max_parts: least_parts(differential) + extra_parts,
                sampling,
            },
        )
}

/// The fewest parts a design of the sensor can have: an op-amp and two
/// resistors, or a difference amplifier's four.
fn least_parts(differential: bool) -> usize {
    if differential {
        5
    } else {
        3
    }
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
    // A Monte Carlo run per design on the yield basis: one reference, and
    // a differential sensor through the in-amp and its gain resistor only
    // (a difference amplifier's four resistors make too large a space).
    let inamp_only = need.basis == "yield" && need.differential;
    if need.basis == "yield" {
        stock.references.truncate(1);
        stock.inamp = inamp_only;
    }
    if inamp_only {
        need.max_parts = need.max_parts.min(3);
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
        } else if stock.inamp && !inamp_only {
            stock.inamp = false;
        } else if stock.references.len() > 1 {
            stock.references.pop();
        } else if need.max_parts > least_parts(need.differential) {
            need.max_parts -= 1;
        } else if !stock.references.is_empty() {
            stock.references.pop();
        } else {
            break;
        }
    }
    (stock, need)
}

/// The verdict of one case, for the tally of the mix.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Verdict {
    /// A design meets the need (both walks found one).
    Feasible,
    /// No design meets it (the exhaustive walk proves it).
    Infeasible,
    /// A walk ended without a design or a proof (a disagreement).
    Unfinished,
}

/// What one case showed.
#[derive(Debug, Clone)]
struct Seen {
    verdict: Verdict,
    /// An edge target within 10 % of the least error the space reaches.
    near_edge: bool,
    /// No design of the space meets the need at any target.
    nothing: bool,
    /// The walk's optimum places a network package.
    network_placed: bool,
    /// The case's traits (`sensor=differential`, `basis=rss`, ...).
    traits: Vec<String>,
}

/// The traits of a case, for the coverage tally.
fn traits(stock: &StockCase, need: &NeedCase) -> Vec<String> {
    let offset = match (need.falling, need.offset) {
        (true, _) => "positive, falling gain",
        (false, -1) => "negative",
        (false, -2) => "small negative",
        (false, 0) => "zero",
        (false, 2) => "small positive",
        _ => "positive",
    };
    let mut t = vec![
        format!(
            "sensor={}",
            if need.differential {
                "differential"
            } else {
                "single-ended"
            }
        ),
        format!("offset={offset}"),
        format!("supply={}", if need.split { "split" } else { "single" }),
        format!("basis={}", need.basis),
        format!("calibration={}", need.calibration),
        format!("objective={}", need.objective),
        format!("bom_line_cost={}", need.line),
        format!(
            "target={}",
            match need.target {
                Target::Edge(..) => "edge",
                Target::Fixed(_) => "fixed",
            }
        ),
    ];
    let flags = [
        (
            "stock: dual package",
            stock.opamps.iter().any(|&o| o == 1 || o == 2),
        ),
        (
            "stock: quantities held",
            stock.grades.iter().any(|g| g.quantity.is_some()),
        ),
        ("stock: capacitors", !stock.capacitors.is_empty()),
        ("stock: in-amp", stock.inamp),
        ("stock: matched network", stock.network.is_some()),
        ("stock: reference", !stock.references.is_empty()),
        ("need: sampling ADC input", need.sampling),
    ];
    t.extend(flags.iter().filter(|f| f.1).map(|f| f.0.to_string()));
    t
}

/// Run one case: the verdict and what it showed, and `Err` naming the
/// disagreement (after the verdict, so the tally counts it too).
fn case(stock: &StockCase, need: &NeedCase) -> (Seen, Result<(), String>) {
    let built = stock.build();
    let (settled, probe, probe_floors) = settle(need, &built);
    let fast = run(&settled, &built, SearchMode::Optimised);
    let full = run(&settled, &built, SearchMode::Exhaustive);
    let verdict = if full.unfinished() || fast.unfinished() || full.stopped.is_some() {
        Verdict::Unfinished
    } else if full.best.is_some() {
        Verdict::Feasible
    } else {
        Verdict::Infeasible
    };
    let target = settled.accuracy.max_error_pct_fs;
    let seen = Seen {
        verdict,
        near_edge: matches!(probe, Probe::Least(l) if (target / l - 1.0).abs() <= 0.1),
        nothing: matches!(probe, Probe::Nothing),
        network_placed: full.best.as_ref().is_some_and(|b| {
            b.design
                .stages
                .iter()
                .flat_map(|s| s.resistors.values())
                .any(|r| r.network.is_some())
        }),
        traits: traits(stock, need),
    };
    let floors = floors_hold(&settled, &built, &full)
        .and(probe_floors)
        .and(bound_holds(&settled, &built, &full));
    (seen, compare(&settled, &fast, &full).and(floors))
}

/// The optimised mode's space bound against the walk: a space it proves
/// empty holds no design, and its least cost is at most the optimum of
/// the cost objective.
fn bound_holds(need: &Need, stock: &Stock, full: &SolveOutcome) -> Result<(), String> {
    let Some(best) = full.best.as_ref() else {
        return Ok(());
    };
    match space_cost_floor(need, stock) {
        None => Err(format!(
            "the space bound proves no design, the walk found {:?}",
            best.design
        )),
        Some(floor)
            if need.search.objective == Objective::Cost && floor > best.costing.total + 1e-9 =>
        {
            Err(format!(
                "the space bound {floor} is over the optimum {} of {:?}",
                best.costing.total, best.design
            ))
        }
        Some(_) => Ok(()),
    }
}

/// The accuracy floor of each design's first-stage part in its stage
/// sequence (with the loop-gain, common-mode and ADC-window terms) and the swing
/// floor of its last-stage part (search/floors.rs) are at most the error
/// the analysis reports for it, on every design the walk returns.
fn floors_hold(need: &Need, stock: &Stock, full: &SolveOutcome) -> Result<(), String> {
    for design in full.best.iter().chain(full.alternatives.iter()) {
        let error = design.analysis.basis_pct_fs;
        let floors = [
            (
                "accuracy",
                first_stage_floor_pct(need, stock, &design.design),
            ),
            (
                "swing",
                last_stage_swing_floor_pct(need, stock, &design.design),
            ),
        ];
        for (name, floor) in floors {
            if floor.is_some_and(|f| f > error * (1.0 + 1e-9) + 1e-12) {
                return Err(format!(
                    "the {name} floor {floor:?} % FS is over the error {error} % FS of {:?}",
                    design.design
                ));
            }
        }
    }
    Ok(())
}

/// The tally of a run: the counts of each verdict, of the near-edge
/// cases, and of each trait by verdict.
fn tally(seen: &[Seen]) -> String {
    use std::collections::BTreeMap;
    let count = |f: &dyn Fn(&Seen) -> bool| seen.iter().filter(|s| f(s)).count();
    let mut out = format!(
        "{} cases: {} feasible ({} with the target within 10 % of the least error), \
         {} infeasible ({} within 10 %, {} where nothing meets any target), {} unfinished; \
         {} optima place a network\n",
        seen.len(),
        count(&|s| s.verdict == Verdict::Feasible),
        count(&|s| s.verdict == Verdict::Feasible && s.near_edge),
        count(&|s| s.verdict == Verdict::Infeasible),
        count(&|s| s.verdict == Verdict::Infeasible && s.near_edge),
        count(&|s| s.nothing),
        count(&|s| s.verdict == Verdict::Unfinished),
        count(&|s| s.network_placed),
    );
    let mut by: BTreeMap<&str, [usize; 2]> = BTreeMap::new();
    for s in seen {
        for t in &s.traits {
            let e = by.entry(t).or_default();
            e[usize::from(s.verdict != Verdict::Feasible)] += 1;
        }
    }
    for (t, [f, i]) in by {
        out.push_str(&format!("  {t}: {f} feasible, {i} not\n"));
    }
    out
}

/// Run the property on `cases` random cases from a fixed `seed` (so a
/// failure reproduces and CI runs the same cases): what each case showed,
/// and the failure (shrunk) if any.
fn run_cases(cases: u32, seed: u64) -> (Vec<Seen>, Option<String>) {
    use proptest::test_runner::{Config, RngSeed, TestRunner};
    let mut runner = TestRunner::new(Config {
        cases,
        rng_seed: RngSeed::Fixed(seed),
        failure_persistence: None,
        max_shrink_iters: 200,
        ..Config::default()
    });
    let seen = std::cell::RefCell::new(Vec::new());
    let strategy = (stock_case(), need_case()).prop_map(|(s, n)| fit(s, n));
    let result = runner.run(&strategy, |(stock, need)| {
        let (s, agreed) = case(&stock, &need);
        seen.borrow_mut().push(s);
        if let Err(why) = agreed {
            prop_assert!(false, "{why}\nneed {need:?}\nstock {stock:?}");
        }
        Ok(())
    });
    (seen.into_inner(), result.err().map(|e| e.to_string()))
}

/// The property over the random cases, with the mix of verdicts asserted:
/// about half the cases feasible, many at the edge of feasibility on
/// either side, and every trait of the generator met by a feasible and an
/// infeasible case.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (a debug walk is too slow)"
)]
fn optimiser_agrees_with_the_exhaustive_walk() {
    let (seen, failure) = run_cases(CASES, 7);
    println!("{}", tally(&seen));
    if let Some(e) = failure {
        panic!("{e}");
    }
    let n = seen.len();
    let count = |f: &dyn Fn(&Seen) -> bool| seen.iter().filter(|s| f(s)).count();
    let feasible = count(&|s| s.verdict == Verdict::Feasible);
    let infeasible = count(&|s| s.verdict == Verdict::Infeasible);
    let near_feasible = count(&|s| s.verdict == Verdict::Feasible && s.near_edge);
    let near_infeasible = count(&|s| s.verdict == Verdict::Infeasible && s.near_edge);
    assert_eq!(n, CASES as usize, "every case ran once");
    assert_eq!(count(&|s| s.verdict == Verdict::Unfinished), 0);
    // Both walks meet networks in some optima, not only on the shelf.
    let placed = count(&|s| s.network_placed);
    assert!(placed * 100 >= 2 * n, "a network in {placed} optima of {n}");
    assert!(feasible * 100 >= 40 * n, "feasible {feasible} of {n}");
    assert!(infeasible * 100 >= 20 * n, "infeasible {infeasible} of {n}");
    assert!(
        near_feasible * 100 >= 15 * n,
        "near-edge feasible {near_feasible} of {n}"
    );
    assert!(
        near_infeasible * 100 >= 10 * n,
        "near-edge infeasible {near_infeasible} of {n}"
    );
    // Every trait of the generator is met on both sides of the verdict.
    let table = tally(&seen);
    for line in table.lines().skip(1) {
        assert!(
            !line.contains(" 0 feasible") && !line.contains(" 0 not"),
            "a trait on one side only: {line}"
        );
    }
}

/// Cases the soak found, kept as they shrank.
///
/// Seed 2020: a difference stage whose four matched roles one cheap
/// matched network fills; the space bound counted the package's price
/// over the least-cost roles and the finest feedback resistor's grade
/// (which the package's element already is) both, and lay at 0.3105
/// over the optimum 0.31.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (a debug walk is too slow)"
)]
fn soak_regressions() {
    let stock = StockCase {
        grades: vec![Grade {
            series: "E6",
            from: 10000.0,
            decades: 1,
            class: 0,
            quantity: None,
        }],
        opamps: vec![2],
        references: vec![],
        capacitors: vec![],
        inamp: false,
        network: Some(Network {
            ratio: 2.2,
            price: 0.01,
        }),
    };
    let need = NeedCase {
        differential: true,
        falling: false,
        offset: -2,
        margin: 3.0,
        ratio: 2.2,
        split: false,
        target: Target::Edge(1.0, 0.1),
        calibration: "offset",
        basis: "worst-case",
        line: 0.0,
        objective: "cost",
        max_parts: 5,
        sampling: false,
    };
    let (seen, agreed) = case(&stock, &need);
    assert!(seen.verdict == Verdict::Feasible, "the case has a design");
    if let Err(why) = agreed {
        panic!("{why}");
    }
}

/// Cases a run of the property test draws.
const CASES: u32 = 300;

/// A longer run of the same property on other seeds, for hunting
/// disagreements while developing (ignored in CI): `SPANFIT_SOAK_SEED`
/// (default 1) and `SPANFIT_SOAK_CASES` (default 2000). Run with
/// `cargo test --release -p spanfit-optimizer --test exhaustive_agreement
/// -- --ignored --nocapture agreement_soak`.
#[test]
#[ignore]
fn agreement_soak() {
    let read = |name: &str, default: u64| {
        std::env::var(name)
            .ok()
            .and_then(|v| v.parse::<u64>().ok())
            .unwrap_or(default)
    };
    let seed = read("SPANFIT_SOAK_SEED", 1);
    let cases = u32::try_from(read("SPANFIT_SOAK_CASES", 2000)).unwrap_or(2000);
    let (seen, failure) = run_cases(cases, seed);
    println!("seed {seed}, {cases} cases\n{}", tally(&seen));
    if let Some(e) = failure {
        panic!("{e}");
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
        let (need, _, _) = settle(&need_case, &stock);
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

/// Regression (found by `agreement_soak`, seed 505): a target exactly on
/// the least error the space reaches. The walk's cheap screen turned the
/// target into volts and compared there, and one rounding put the only
/// design that meets it over the line: the walk said "none" while the
/// optimiser (rightly) returned it. The screen now judges in % FS by the
/// analysis's own product.
#[test]
fn a_design_exactly_on_the_target_is_found_by_both() {
    let stock = StockCase {
        grades: vec![Grade {
            series: "E6",
            from: 1000.0,
            decades: 1,
            class: 0,
            quantity: None,
        }],
        opamps: vec![0],
        references: vec![],
        capacitors: vec![1],
        inamp: false,
        network: None,
    };
    let need = NeedCase {
        differential: false,
        falling: false,
        offset: 0,
        margin: 10.0,
        ratio: 2.2,
        split: false,
        target: Target::Edge(1.0, 2.0),
        calibration: "offset",
        basis: "rss",
        line: 0.0,
        objective: "cost",
        max_parts: 3,
        sampling: false,
    };
    let (seen, agreed) = case(&stock, &need);
    assert_eq!(seen.verdict, Verdict::Feasible);
    if let Err(why) = agreed {
        panic!("{why}");
    }
}
