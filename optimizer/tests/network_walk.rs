//! The exhaustive walk places matched resistor networks (`networks.csv`):
//! where one package is the only way to meet a need, `--exhaustive` finds
//! the design placing it, proves it optimal, and agrees with the optimised
//! mode's cost; without the package the walk proves the need out of
//! reach.
//!
//! Every stock and need here is invented (the need and the stock of
//! `network_search.rs`): a 0 to 15 mV bridge at a 2.5 V common mode into
//! 0.5 to 2.0 V of a 0 to 2.5 V ADC (gain 100, offset 0.5 V), one
//! difference stage on split 5 V rails with an offset trim, at 0.2 % FS
//! over 25 to 65 degC. The discrete 0.1 %, 25 ppm/degC rows cannot hold
//! the common mode's error through their TCR; a package whose elements
//! track to 2 ppm/degC can.

mod common;

use common::bridge::{files_with, need_text_with, RESISTORS_CSV, SERVES};
use common::solve::with_still_clock;
use spanfit::design::Design;
use spanfit::need::{parse_need, Need};
use spanfit::search::{solve_unexplained, space_designs, SearchMode, SolveOutcome};
use spanfit::stock::{parse_stock, Stock};

/// The invented need (module header).
fn need() -> Need {
    let text = need_text_with(0.2, "difference", "cost");
    parse_need(text.as_bytes(), "bridge.toml").unwrap_or_else(|e| panic!("{e}\n{text}"))
}

/// The invented stock, with its network table or without it.
fn stock(with_network: bool) -> Stock {
    let networks: &[&str] = if with_network { &[SERVES] } else { &[] };
    parse_stock(&files_with(RESISTORS_CSV, networks, false))
        .unwrap_or_else(|e| panic!("the invented stock: {e}"))
}

fn run(need: &Need, stock: &Stock, mode: SearchMode) -> SolveOutcome {
    with_still_clock(|control| solve_unexplained(need, stock, mode, control))
        .unwrap_or_else(|e| panic!("the search runs: {e}"))
}

/// The network elements a design places: (part, package, element, ohms)
/// by role name.
fn elements(design: &Design) -> Vec<(String, String, u32, u32, f64)> {
    design
        .stages
        .iter()
        .flat_map(|s| s.resistors.iter())
        .filter_map(|(role, r)| {
            r.network.as_ref().map(|n| {
                (
                    role.to_string(),
                    n.part_id.clone(),
                    n.package,
                    n.element,
                    r.ohms,
                )
            })
        })
        .collect()
}

/// The walk with the package: a design placing it in all four matched
/// roles (four distinct elements of one package, `r1` with `r3` and `r2`
/// with `r4` of one value), proven optimal, at the optimised mode's cost.
#[test]
fn the_walk_places_the_network_and_proves_the_optimum() {
    let need = need();
    let stock = stock(true);
    let full = run(&need, &stock, SearchMode::Exhaustive);
    assert!(full.stopped.is_none() && !full.unfinished());
    let best = full
        .best
        .as_ref()
        .unwrap_or_else(|| panic!("the walk found no design: {:?}", full.infeasible));
    assert!(
        full.stats.proven_optimal,
        "the walk's optimum is not proven"
    );
    assert!(full.stats.gap.is_none());
    assert!(best.analysis.meets_target);
    assert!(best.analysis.basis_pct_fs <= 0.2);

    let placed = elements(&best.design);
    let roles: Vec<&str> = placed.iter().map(|p| p.0.as_str()).collect();
    assert_eq!(roles, ["r1", "r2", "r3", "r4"], "{placed:?}");
    assert!(
        placed
            .iter()
            .all(|p| p.1 == "RN-T1K-100K" && p.2 == placed[0].2),
        "{placed:?}"
    );
    let mut numbers: Vec<u32> = placed.iter().map(|p| p.3).collect();
    numbers.sort_unstable();
    numbers.dedup();
    assert_eq!(numbers.len(), 4, "{placed:?}");
    assert_eq!(placed[0].4, placed[2].4, "{placed:?}");
    assert_eq!(placed[1].4, placed[3].4, "{placed:?}");
    // One package in the design.
    let packages = spanfit::design::network_packages(
        best.design.stages.iter().flat_map(|s| s.resistors.values()),
    );
    assert_eq!(packages.len(), 1, "{packages:?}");

    let fast = run(&need, &stock, SearchMode::Optimised);
    let fast_best = fast
        .best
        .as_ref()
        .unwrap_or_else(|| panic!("the optimised mode found no design"));
    assert!(
        (fast_best.costing.total - best.costing.total).abs() <= 1e-9,
        "optimised {} against the walk's {}",
        fast_best.costing.total,
        best.costing.total
    );
    // The optimised mode's finishing walk now proves on a network stock.
    assert!(
        fast.stats.proven_optimal,
        "the optimised mode proves nothing"
    );
}

/// Without the package the walk proves that no design meets the need.
#[test]
fn without_the_network_the_walk_proves_the_need_out_of_reach() {
    let need = need();
    let full = run(&need, &stock(false), SearchMode::Exhaustive);
    assert!(full.stopped.is_none() && !full.unfinished());
    assert!(full.best.is_none(), "a discrete design met the need");
    assert!(
        full.infeasible.as_ref().is_some_and(|i| i.proven),
        "the walk's infeasibility is not proven"
    );
}

/// The count of the space takes the network's placements: the package's
/// six distinct orders of two values in the four matched roles, each with
/// the roles left to the discrete rows, on top of the discrete designs.
#[test]
fn the_space_counts_the_network_placements() {
    let need = need();
    let plain = space_designs(&need, &stock(false), u64::MAX)
        .unwrap_or_else(|| panic!("no count without the network"));
    let with = space_designs(&need, &stock(true), u64::MAX)
        .unwrap_or_else(|| panic!("no count with the network"));
    // Each discrete structure's four matched roles take one of the
    // stocked resistors each (`choices^4` ways); with the package they
    // also take one of six orders (no discrete choice), so the count
    // grows by 6 / choices^4 of the discrete count.
    let choices = 4u64;
    assert_eq!(
        (with - plain) * choices.pow(4),
        plain * 6,
        "{plain} without, {with} with"
    );
}
