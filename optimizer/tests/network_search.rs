//! The optimised search places matched resistor networks
//! (`networks.csv`): a difference stage's four matched roles from one
//! package where discrete parts cannot meet the need, the discrete
//! instrumentation stage's difference part from one package, a network
//! that cannot give the stage's ratio or is not on the shelf never placed,
//! and the error objective on the demo stock no worse with its networks
//! than without them.
//!
//! Every stock and need here is invented: a 0 to 15 mV bridge at a 2.5 V
//! common mode into 0.5 to 2.0 V of a 0 to 2.5 V ADC (gain 100, offset
//! 0.5 V), one difference stage, on split 5 V rails, with an offset trim.
//! Its resistor TCR over 40 degC through the common mode is what a 0.1 %,
//! 25 ppm/degC discrete grade cannot hold to 0.2 % FS; a package whose
//! elements track to 2 ppm/degC can.

mod common;

use common::bridge::{
    files_with, need_text_with, NOT_ON_SHELF, RESISTORS_CSV, SERVES, WRONG_RATIO,
};
use common::solve::{solve_and_analyze, with_still_clock};
use spanfit::analysis::analyze;
use spanfit::design::{design_file_json, parse_design, Design};
use spanfit::need::{parse_need, Need};
use spanfit::search::{solve, solve_unexplained, space_cost_floor, SearchMode, SolveOutcome};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// The invented need (module header), at `target` % FS, as need text.
fn need_text(target: f64) -> String {
    need_text_with(target, "difference", "cost")
}

/// The invented need at `target` % FS.
fn need(target: f64) -> Need {
    let text = need_text(target);
    parse_need(text.as_bytes(), "bridge.toml").unwrap_or_else(|e| panic!("{e}\n{text}"))
}

/// The invented stock's files with `networks` as the rows of its networks
/// table (none: no table).
fn files(networks: &[&str]) -> Vec<StockFile> {
    files_with(RESISTORS_CSV, networks, true)
}

/// The invented stock with `networks` as the rows of its networks table.
fn stock(networks: &[&str]) -> Stock {
    parse_stock(&files(networks)).unwrap_or_else(|e| panic!("the invented stock: {e}"))
}

fn run(need: &Need, stock: &Stock) -> SolveOutcome {
    with_still_clock(|control| solve(need, stock, SearchMode::Optimised, control))
        .unwrap_or_else(|e| panic!("the search runs: {e}"))
}

/// The search alone, where no design is expected: the binding limit
/// without the verified suggestions (each a search of its own, which a
/// still clock never cuts short).
fn run_unexplained(need: &Need, stock: &Stock) -> SolveOutcome {
    with_still_clock(|control| solve_unexplained(need, stock, SearchMode::Optimised, control))
        .unwrap_or_else(|e| panic!("the search runs: {e}"))
}

/// The network part ids a design places.
fn network_parts(design: &Design) -> Vec<String> {
    let mut out: Vec<String> = design
        .stages
        .iter()
        .flat_map(|s| s.resistors.values())
        .filter_map(|r| r.network.as_ref().map(|n| n.part_id.clone()))
        .collect();
    out.sort();
    out.dedup();
    out
}

/// Without networks the need is proven out of reach (the optimised mode
/// finishes this small space with the exhaustive walk); with the serving
/// package the search finds a design whose four matched roles are
/// elements of one package, whose design file reads back to the same
/// total, and which meets the target. The space is small, so the
/// optimised mode finishes it with the exhaustive walk, which places the
/// networks too: the design is proven optimal, at or above the space
/// bound (which counts the networks).
#[test]
fn a_network_meets_a_need_no_discrete_grade_meets() {
    let need = need(0.2);
    let discrete = run_unexplained(&need, &stock(&[]));
    assert!(discrete.best.is_none(), "a discrete design met the need");
    let why = discrete
        .infeasible
        .as_ref()
        .unwrap_or_else(|| panic!("no explanation of the discrete stock"));
    assert!(why.proven, "the discrete stock's verdict is not proven");
    assert!(
        why.best_error_pct_fs.is_some_and(|e| e > 0.2),
        "{:?}",
        why.best_error_pct_fs
    );

    let stock = stock(&[SERVES]);
    let outcome = run(&need, &stock);
    let best = outcome
        .best
        .as_ref()
        .unwrap_or_else(|| panic!("no design with the network: {:?}", outcome.infeasible));
    assert!(best.analysis.meets_target);
    assert!(
        best.analysis.basis_pct_fs <= 0.2,
        "{}",
        best.analysis.basis_pct_fs
    );
    let floor = space_cost_floor(&need, &stock).unwrap_or_else(|| panic!("no space bound"));
    assert!(
        floor <= best.costing.total + 1e-9,
        "{floor} over {}",
        best.costing.total
    );
    assert!(
        outcome.stats.proven_optimal,
        "the finishing walk proves nothing"
    );
    assert!(outcome.stats.gap.is_none(), "{:?}", outcome.stats.gap);

    // The four matched roles: elements of one package of the part, four
    // distinct elements, r1 with r3 and r2 with r4 of one value each.
    let stage = &best.design.stages[0];
    let element = |role: &str| {
        let r = stage
            .resistors
            .iter()
            .find(|(k, _)| k.to_string() == role)
            .map(|(_, r)| r)
            .unwrap_or_else(|| panic!("no {role}"));
        let n = r
            .network
            .as_ref()
            .unwrap_or_else(|| panic!("{role} is not a network element"));
        (n.part_id.clone(), n.package, n.element, r.ohms)
    };
    let placed: Vec<_> = ["r1", "r2", "r3", "r4"].map(element).to_vec();
    assert!(
        placed
            .iter()
            .all(|p| p.0 == "RN-T1K-100K" && p.1 == placed[0].1),
        "{placed:?}"
    );
    let mut elements: Vec<u32> = placed.iter().map(|p| p.2).collect();
    elements.sort_unstable();
    elements.dedup();
    assert_eq!(elements.len(), 4, "{placed:?}");
    assert_eq!(placed[0].3, placed[2].3, "{placed:?}");
    assert_eq!(placed[1].3, placed[3].3, "{placed:?}");

    // The design file round-trips.
    let text = design_file_json(&best.design, &stock).to_string();
    let back = parse_design(text.as_bytes(), "solved.json", &stock)
        .unwrap_or_else(|e| panic!("{e}\n{text}"));
    assert_eq!(back, best.design);

    // The solve report against `analyze` of its design file: the same
    // reported design, total included, and it meets the target.
    let need_text = need_text(0.2);
    let solved = solve_and_analyze(&need_text, "bridge.toml", &files(&[SERVES]));
    assert_eq!(solved["search"]["proven_optimal"], true);
    let file = solved["design"]["file"].to_string();
    assert!(file.contains("\"network\":\"RN-T1K-100K\""), "{file}");
    let total = solved["design"]["error"]["basis_pct_fs"]
        .as_f64()
        .unwrap_or(f64::NAN);
    assert!(total <= 0.2, "reported total {total} % FS");
    // And the core analysis of the read-back design agrees.
    let (_, again) = analyze(&need, &stock, &back, 0, 1).unwrap_or_else(|e| panic!("{e}"));
    assert!(
        (again.basis_pct_fs - total).abs() <= 1e-9 * total.abs(),
        "analyze {} against the report's {total}",
        again.basis_pct_fs
    );
    assert!(again.meets_target);
}

/// A cheaper network whose ratio cannot give the stage's gain, and a
/// cheaper, better one with `stock_qty = 0`, are never placed: beside the
/// serving package the search takes the serving package; without it, no
/// design places either (and none is found, since no discrete one meets
/// the need).
#[test]
fn a_network_off_ratio_or_off_the_shelf_is_not_placed() {
    let need = need(0.2);
    let stock_all = stock(&[WRONG_RATIO, NOT_ON_SHELF, SERVES]);
    let outcome = run(&need, &stock_all);
    let best = outcome
        .best
        .as_ref()
        .unwrap_or_else(|| panic!("no design: {:?}", outcome.infeasible));
    assert_eq!(network_parts(&best.design), vec!["RN-T1K-100K".to_string()]);
    for alternative in &outcome.alternatives {
        let parts = network_parts(&alternative.design);
        assert!(
            parts.iter().all(|p| p == "RN-T1K-100K"),
            "an alternative places {parts:?}"
        );
    }

    let unusable = stock(&[WRONG_RATIO, NOT_ON_SHELF]);
    let outcome = run_unexplained(&need, &unusable);
    assert!(
        outcome.best.is_none(),
        "a design met the need with {:?}",
        outcome.best.as_ref().map(|b| network_parts(&b.design))
    );
    let attempt = outcome
        .infeasible
        .as_ref()
        .and_then(|i| i.best_attempt.as_ref());
    if let Some(attempt) = attempt {
        assert!(
            network_parts(&attempt.design).is_empty(),
            "the best attempt places {:?}",
            network_parts(&attempt.design)
        );
    }
    // The resistor tempco that binds is not in any bound, but the
    // finishing walk, which places the networks too, proves it.
    assert!(outcome.infeasible.as_ref().is_some_and(|i| i.proven));
}

/// Where a package is the cheapest way to fill a difference stage's
/// matched roles (its price over its four elements is below any
/// resistor's), the space bound prices those roles at that share and
/// counts the package as one part, so it stays below the network design
/// the search finds; a bound priced by the discrete resistors alone (four
/// at 0.5) would sit above that design. The space is small: the finishing
/// walk, which places networks, proves the design optimal.
#[test]
fn the_space_bound_counts_a_network_cheaper_than_the_resistors() {
    let dear = RESISTORS_CSV.replace("0.003", "0.5").replace("0.04", "0.5");
    assert_eq!(
        dear.matches(",0.5,").count(),
        4,
        "the invented rows changed"
    );
    let stock = parse_stock(&files_with(&dear, &[SERVES], true))
        .unwrap_or_else(|e| panic!("the invented stock: {e}"));
    let need = need(0.2);
    let outcome = run(&need, &stock);
    let best = outcome
        .best
        .as_ref()
        .unwrap_or_else(|| panic!("no design with the network: {:?}", outcome.infeasible));
    assert_eq!(network_parts(&best.design), vec!["RN-T1K-100K".to_string()]);
    let floor = space_cost_floor(&need, &stock).unwrap_or_else(|| panic!("no space bound"));
    assert!(
        floor <= best.costing.total + 1e-9,
        "the bound {floor} is over the network design's cost {}",
        best.costing.total
    );
    // Without the package the same bound prices the four roles at 0.5
    // each: more than the network design saves.
    let discrete = parse_stock(&files_with(&dear, &[], true))
        .unwrap_or_else(|e| panic!("the invented stock: {e}"));
    let discrete_floor =
        space_cost_floor(&need, &discrete).unwrap_or_else(|| panic!("no space bound"));
    assert!(
        discrete_floor > best.costing.total,
        "{discrete_floor} against {}",
        best.costing.total
    );
    assert!(
        outcome.stats.proven_optimal && outcome.stats.gap.is_none(),
        "proven {}, gap {:?}",
        outcome.stats.proven_optimal,
        outcome.stats.gap
    );
}

/// The demo need with the error objective on the demo stock: with the
/// demo folder's networks the search's most accurate design is no worse
/// than without them (the search walks the same structures, and more).
/// Neither run claims a proof: the demo's space is far too large for the
/// walk, and the space bound bounds no error.
#[test]
fn the_error_objective_is_no_worse_with_the_demo_networks() {
    let text = spanfit::demo::NEED_TOML.replace("objective = \"cost\"", "objective = \"error\"");
    assert!(
        text.contains("objective = \"error\""),
        "the demo need changed shape"
    );
    let need = parse_need(text.as_bytes(), "demo.toml").unwrap_or_else(|e| panic!("{e}"));
    let without = parse_stock(&spanfit::demo::stock_files()).unwrap_or_else(|e| panic!("{e}"));
    let mut files = spanfit::demo::stock_files();
    assert!(files.iter().all(|f| f.name != "networks.csv"));
    files.push(StockFile {
        name: "networks.csv".into(),
        bytes: spanfit::demo::NETWORKS_CSV.as_bytes().to_vec(),
    });
    let with = parse_stock(&files).unwrap_or_else(|e| panic!("{e}"));
    assert!(!with.networks.is_empty());
    let error = |stock: &Stock| {
        let outcome = run(&need, stock);
        assert!(!outcome.stats.proven_optimal);
        outcome
            .best
            .map(|b| b.analysis.basis_pct_fs)
            .unwrap_or_else(|| panic!("no design for the demo need"))
    };
    let (plain, networks) = (error(&without), error(&with));
    assert!(
        networks <= plain + 1e-12,
        "with networks {networks} % FS, without {plain} % FS"
    );
}

/// The discrete instrumentation stage's output difference part (`r1` to
/// `r4`, at unity) from one package of four equal elements: with an
/// invented 0.1 % E96 family for its gain resistors, the error objective
/// takes the package for the four matched roles, and its design is more
/// accurate than the best without the package.
#[test]
fn the_discrete_instrumentation_stage_takes_its_difference_part_from_a_package() {
    let resistors = format!("{RESISTORS_CSV}Z-E96,,E96,100,1000000,0.1,25,0603,0.04,\n");
    let text = need_text_with(1.0, "instrumentation", "error");
    let need = parse_need(text.as_bytes(), "bridge.toml").unwrap_or_else(|e| panic!("{e}"));
    let quad = "RN-T10K,4,10000,0.05,0.01,10,2,SOIC-8,0.40,\n";
    let solve_on = |networks: &[&str]| {
        let stock = parse_stock(&files_with(&resistors, networks, true))
            .unwrap_or_else(|e| panic!("the invented stock: {e}"));
        run(&need, &stock)
            .best
            .unwrap_or_else(|| panic!("no design with networks {networks:?}"))
    };
    let with = solve_on(&[quad]);
    let stage = &with.design.stages[0];
    assert_eq!(stage.shape.name(), "instrumentation-discrete");
    let matched: Vec<_> = stage
        .resistors
        .iter()
        .filter(|(role, _)| ["r1", "r2", "r3", "r4"].contains(&role.to_string().as_str()))
        .map(|(_, r)| {
            r.network
                .as_ref()
                .map(|n| (n.part_id.clone(), n.package, n.element))
        })
        .collect();
    assert_eq!(matched.len(), 4);
    let mut elements = Vec::new();
    for m in &matched {
        let (part, package, element) = m
            .clone()
            .unwrap_or_else(|| panic!("a matched role is discrete: {matched:?}"));
        assert_eq!((part.as_str(), package), ("RN-T10K", 1), "{matched:?}");
        elements.push(element);
    }
    elements.sort_unstable();
    assert_eq!(elements, vec![1, 2, 3, 4]);
    // The gain resistors stay discrete.
    assert!(stage
        .resistors
        .iter()
        .filter(|(role, _)| role.to_string().starts_with("rf") || role.to_string() == "rg")
        .all(|(_, r)| r.network.is_none()));
    let without = solve_on(&[]);
    assert!(
        with.analysis.basis_pct_fs <= without.analysis.basis_pct_fs,
        "with the package {} % FS, without {} % FS",
        with.analysis.basis_pct_fs,
        without.analysis.basis_pct_fs
    );
}
