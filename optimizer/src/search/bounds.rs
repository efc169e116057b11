//! Lower bounds over the whole design space, valid whatever the search
//! tried: the least cost and the fewest parts any design the analysis
//! could accept may have, and the proof that no design exists when every
//! stage sequence fails a check that no value choice can change.
//!
//! The space (docs/search.md): every sequence of one to `max_stages`
//! shapes of the need's topologies that may take each stage, any stocked
//! amplifier per stage, any offset network or none, the optional roles
//! present or absent, any stocked resistor in any role. The bounds below
//! take for each sequence the least it must place; each exclusion is a
//! proof written beside it. The optimised search walks only part of the
//! space heuristically, so its `proven_optimal` rests on these bounds
//! alone; the exhaustive walk (`exhaustive`) proves by walking.

use super::floors;
use super::groups::shape_sequences;
use super::pair::PairFloor;
use super::Problem;
use crate::design::{Design, Shape};
use crate::need::{Basis, Calibration, Need};
use crate::stock::Stock;
use crate::topology::AmplifierKind;

/// What can be proven of the whole space before any search.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct SpaceBound {
    /// Least total cost of any design in the space; `None` when the space
    /// holds no design that can meet the need (proven).
    pub(super) cost: Option<f64>,
    /// Fewest parts of any design in the space.
    pub(super) parts: Option<usize>,
}

impl SpaceBound {
    /// Whether the space is proven empty: no design can meet the need.
    pub(super) fn proven_empty(&self) -> bool {
        self.cost.is_none()
    }
}

/// Whether a sequence whose gain has the wrong sign is ruled out.
///
/// Proof: with a stage gain product of the other sign (or zero), the
/// output moves the other way from the ideal over the span, so the errors
/// at the two span ends differ by at least the ideal output span `S`:
/// `|e1 - e0| = |(y1 - y0) - (i1 - i0)| >= |i1 - i0|`. Without calibration
/// one end is then off by at least `S / 2`; an offset trim leaves
/// `e1 - e0` itself. On the worst-case and RSS bases the total at an end
/// is the sum of the calibrated systematic lines' magnitudes (at least the
/// nominal error) plus a non-negative random part, so no such design
/// meets a target below `S / 2`. A two-point trim rescales by the measured
/// slope and undoes the sign, and the yield basis judges by Monte Carlo
/// builds against a yield, so nothing is ruled out on those.
pub(super) fn wrong_sign_ruled_out(problem: &Problem<'_>) -> bool {
    let span = (problem.ideal[1] - problem.ideal[0]).abs();
    let accuracy = &problem.need.accuracy;
    accuracy.calibration != Calibration::TwoPoint
        && accuracy.basis != Basis::Yield
        && problem.target_v < span / 2.0
}

/// The least the amplifiers of a sequence cost, their BOM lines and
/// packages, or `None` when no stocked amplifier can serve (proof: the
/// supply-range check compares the rails with the part's own range, which
/// no resistor changes, and a part with none on the shelf cannot be
/// placed). With `first`, the first stage's part is fixed: the design
/// holds enough whole packages of it for the first stage's sections.
fn amplifier_floor(
    problem: &Problem<'_>,
    shapes: &[Shape],
    first: Option<AmplifierKind>,
) -> Option<(f64, usize, usize)> {
    let stock = problem.stock;
    let span = problem.need.supply.positive.0 - problem.need.supply.negative.0;
    let sections: usize = shapes.iter().map(|s| s.sections()).sum();
    let inamp_stages = shapes.iter().filter(|s| s.integrated()).count();
    let (mut cost, mut lines, mut packages) = (0.0, 0, 0);
    if sections > 0 {
        let usable: Vec<_> = stock
            .opamps
            .iter()
            .filter(|p| p.stock_qty != Some(0) && span >= p.supply_min.0 && span <= p.supply_max.0)
            .collect();
        // Sections may come from several parts: the cost is at least the
        // cheapest price per section times the sections, and at least one
        // whole package; packages at least the sections over the widest
        // package.
        let per_section = usable
            .iter()
            .map(|p| p.unit_cost / f64::from(p.channels.max(1)))
            .reduce(f64::min)?;
        let package = usable.iter().map(|p| p.unit_cost).reduce(f64::min)?;
        let widest = usable.iter().map(|p| p.channels.max(1)).max()? as usize;
        // Every section of the first stage is the first part (a stage has
        // one amplifier part, its offset buffers included): at least enough
        // of its packages for those sections. Sections left over beyond
        // those packages' spare sections sit in at least one more package:
        // another of the first part, or one of another part, which is a
        // BOM line of its own; and they cost at least the least price per
        // section each.
        let first_stage_sections = shapes.first().map_or(0, |s| s.sections());
        let first_packages = match first {
            Some(AmplifierKind::OpAmp(i)) => {
                let part = &stock.opamps[i];
                let channels = part.channels.max(1) as usize;
                let packages = first_stage_sections.div_ceil(channels);
                let rest = sections.saturating_sub(packages * channels);
                let more = if rest > 0 {
                    let other = usable
                        .iter()
                        .filter(|p| !std::ptr::eq(**p, part))
                        .map(|p| p.unit_cost + problem.need.search.bom_line_cost)
                        .fold(part.unit_cost, f64::min);
                    (per_section * rest as f64).max(other)
                } else {
                    0.0
                };
                packages as f64 * part.unit_cost + more
            }
            _ => 0.0,
        };
        cost += (per_section * sections as f64)
            .max(package)
            .max(first_packages);
        lines += 1;
        packages += sections.div_ceil(widest);
    }
    if inamp_stages > 0 {
        let least = stock
            .inamps
            .iter()
            .filter(|p| p.stock_qty != Some(0) && span >= p.supply_min.0 && span <= p.supply_max.0)
            .map(|p| p.unit_cost)
            .reduce(f64::min)?;
        cost += match first {
            Some(AmplifierKind::InAmp(i)) => {
                stock.inamps[i].unit_cost + least * (inamp_stages - 1) as f64
            }
            _ => least * inamp_stages as f64,
        };
        lines += 1;
        packages += inamp_stages;
    }
    Some((cost, lines, packages))
}

/// The least the filter pair adds to any design of a sequence: the least
/// floor over the stocked amplifiers that may drive its last stage.
fn driver_floor(problem: &Problem<'_>, shapes: &[Shape]) -> PairFloor {
    let stock = problem.stock;
    let span = problem.need.supply.positive.0 - problem.need.supply.negative.0;
    let fits = |min: f64, max: f64, qty: Option<u32>| qty != Some(0) && span >= min && span <= max;
    match shapes.last() {
        Some(shape) if shape.integrated() => problem.pairs.least_floor(
            (0..stock.inamps.len())
                .filter(|&i| {
                    let p = &stock.inamps[i];
                    fits(p.supply_min.0, p.supply_max.0, p.stock_qty)
                })
                .map(AmplifierKind::InAmp),
        ),
        Some(_) => problem.pairs.least_floor(
            (0..stock.opamps.len())
                .filter(|&i| {
                    let p = &stock.opamps[i];
                    fits(p.supply_min.0, p.supply_max.0, p.stock_qty)
                })
                .map(AmplifierKind::OpAmp),
        ),
        None => PairFloor::default(),
    }
}

/// The stocked amplifiers that may serve a first stage of `shape`: in-amps
/// for the integrated shape, op-amps otherwise, each on the shelf and
/// running on the rails (the supply-range check).
fn first_stage_parts(problem: &Problem<'_>, shape: Shape) -> Vec<AmplifierKind> {
    let stock = problem.stock;
    let span = problem.need.supply.positive.0 - problem.need.supply.negative.0;
    let fits = |min: f64, max: f64, qty: Option<u32>| qty != Some(0) && span >= min && span <= max;
    if shape.integrated() {
        (0..stock.inamps.len())
            .filter(|&i| {
                let p = &stock.inamps[i];
                fits(p.supply_min.0, p.supply_max.0, p.stock_qty)
            })
            .map(AmplifierKind::InAmp)
            .collect()
    } else {
        (0..stock.opamps.len())
            .filter(|&i| {
                let p = &stock.opamps[i];
                fits(p.supply_min.0, p.supply_max.0, p.stock_qty)
            })
            .map(AmplifierKind::OpAmp)
            .collect()
    }
}

/// Matched roles one network package fills in a stage.
pub(super) const MATCHED_ROLES: usize = 4;

/// The bounds over the whole space.
pub(super) fn space_bound(problem: &Problem<'_>) -> SpaceBound {
    let need = problem.need;
    let (k, _) = need.ideal_transfer();
    let least_resistor = problem
        .stock
        .resistors
        .iter()
        .filter(|r| r.stock_qty != Some(0))
        .map(|r| r.unit_cost)
        .reduce(f64::min);
    // A matched network (the search places one package's four elements in
    // a stage's matched roles, docs/search.md) costs at least its package
    // price over its element count per role it fills, and is one part for
    // those four roles; with one on the shelf the bound takes the lesser
    // price per role, and a stage with matched roles the fewer parts.
    let least_element = problem
        .stock
        .networks
        .iter()
        .filter(|n| n.stock_qty != Some(0) && n.values.len() >= MATCHED_ROLES)
        .map(|n| n.unit_cost / n.values.len() as f64)
        .reduce(f64::min);
    let least_per_role = match (least_resistor, least_element) {
        (Some(r), Some(e)) => Some(r.min(e)),
        (r, e) => r.or(e),
    };
    let line = need.search.bom_line_cost;
    let mut best = SpaceBound {
        cost: None,
        parts: None,
    };
    let sequence_floors = floors::SequenceFloors::new(need, problem.stock);
    // The finest feedback resistor of a design of single-section stages,
    // per stage count and first op-amp part: the least it costs over the
    // least of any role (`None`: no stocked part lets the part meet the
    // need; floors.rs proves it).
    let feedback_extra: Vec<Vec<Option<f64>>> = (1..=need.search.max_stages.max(1))
        .map(|n| {
            (0..problem.stock.opamps.len())
                .map(|i| {
                    floors::feedback_cost_floor(need, problem.stock, n, i, problem.target_v)
                        .map(|c| (c - least_per_role.unwrap_or(0.0)).max(0.0))
                })
                .collect()
        })
        .collect();
    // A one-stage difference design's chain (`r4` and the offset
    // divider) per op-amp part: the least unit cost of its finest part
    // where the matched roles are discrete and no reference drives the
    // offset node (floors.rs proves it; `None`: no such design meets the
    // need). Otherwise the design holds a network package in its matched
    // roles (at least the cheapest package over the four least-cost roles
    // the bound counts) or a reference (the cheapest on the shelf and its
    // BOM line).
    let chain_part: Vec<Option<f64>> = (0..problem.stock.opamps.len())
        .map(|i| floors::difference_chain_cost(need, problem.stock, i, problem.target_v))
        .collect();
    let reference_extra = problem
        .stock
        .references
        .iter()
        .filter(|r| r.stock_qty != Some(0))
        .map(|r| r.unit_cost + line)
        .fold(f64::INFINITY, f64::min);
    let network_extra = problem
        .stock
        .networks
        .iter()
        .filter(|n| n.stock_qty != Some(0) && n.values.len() >= MATCHED_ROLES)
        .map(|n| (n.unit_cost - MATCHED_ROLES as f64 * least_per_role.unwrap_or(0.0)).max(0.0))
        .fold(f64::INFINITY, f64::min);
    // Its BOM lines (floors.rs proves them): `r1`, `r2` and the filter
    // pair's resistor on three rows, and what a design with neither a
    // divider nor a reference adds beyond them.
    let difference_lines: Vec<Option<f64>> = (0..problem.stock.opamps.len())
        .map(|i| {
            let tied = problem.pairs.tied_series(i)?;
            floors::difference_lines(
                need,
                problem.stock,
                i,
                problem.target_v,
                &tied,
                least_per_role.unwrap_or(0.0),
                line,
            )
        })
        .collect();
    // One value in every role of a single-section stage gives a stage gain
    // of at most 2 in size (non-inverting and summed: `1 + rf/rg` of 2 at
    // most times the + pin's share; inverting: `rf / (ri + source)`, 1 at
    // most; difference: `(1 + r2/r1') r4' / (r3' + r4')`, 2 at most; a real
    // part gives `T <= 1` of it, floors.rs). One value in the whole design
    // thus gives `2^n` at most over `n` stages; a design whose real gain
    // must be above that ([`floors::least_real_gain`]) holds two resistor
    // values, so two BOM lines where every resistor part holds one value
    // (no matched network on the shelf).
    let networks_on_shelf = problem
        .stock
        .networks
        .iter()
        .any(|n| n.stock_qty != Some(0));
    let least_gain = floors::least_real_gain(need, problem.target_v);
    for shapes in shape_sequences(need, problem.stock) {
        let sign: f64 = shapes.iter().map(|s| s.sign()).product();
        if sign * k <= 0.0 && wrong_sign_ruled_out(problem) {
            continue;
        }
        // The first stage's part is fixed choice by choice: a part whose
        // floor in this sequence (search/floors.rs: its accuracy floor,
        // and the loop-gain floor where every stage is one op-amp section)
        // is over the target is in no design of the sequence that meets
        // the need.
        let mut least: Option<(f64, usize)> = None;
        let mut lines_and_parts = None;
        let (Some(&first), Some(&last)) = (shapes.first(), shapes.last()) else {
            continue;
        };
        // The last stage's part drives the output: a part whose swing
        // floor (search/floors.rs) is over the target ends no design that
        // meets the need, and a sequence whose last stage no part can end
        // holds none.
        let ends = |kind: AmplifierKind| {
            floors::swing_floor_v(need, problem.stock, kind, problem.ideal) <= problem.target_v
        };
        if !first_stage_parts(problem, last).into_iter().any(ends) {
            continue;
        }
        let single_sections = floors::loop_gain_applies(&shapes);
        let two_values = single_sections
            && !networks_on_shelf
            && least_gain > 2f64.powi(i32::try_from(shapes.len()).unwrap_or(i32::MAX));
        for kind in first_stage_parts(problem, first) {
            if sequence_floors.get(&shapes, kind) > problem.target_v
                || (shapes.len() == 1 && !ends(kind))
            {
                continue;
            }
            let Some((amp_cost, amp_lines, packages)) =
                amplifier_floor(problem, &shapes, Some(kind))
            else {
                continue;
            };
            // The finest feedback resistor's grade.
            let feedback = match kind {
                AmplifierKind::OpAmp(i) if single_sections => {
                    match feedback_extra
                        .get(shapes.len() - 1)
                        .and_then(|row| row.get(i))
                    {
                        Some(Some(extra)) => *extra,
                        Some(None) => continue,
                        None => 0.0,
                    }
                }
                _ => 0.0,
            };
            // A one-stage difference design: its chain's finest part, a
            // network package or a reference.
            let chain = match kind {
                AmplifierKind::OpAmp(i) if shapes == [Shape::Difference] => {
                    let finest = chain_part
                        .get(i)
                        .copied()
                        .flatten()
                        .map_or(f64::INFINITY, |c| {
                            (c - least_per_role.unwrap_or(0.0)).max(0.0)
                        });
                    match difference_lines.get(i).copied().flatten() {
                        // All resistors discrete (no network on the
                        // shelf): a third line, and by offset plan a
                        // divider's two resistors, what a plan with
                        // neither divider nor reference adds, or a
                        // reference.
                        Some(no_divider) if two_values => {
                            let divider = 2.0 * least_per_role.unwrap_or(0.0);
                            line + (finest + divider)
                                .min(finest + no_divider)
                                .min(reference_extra)
                        }
                        // A network package holds `r2` too: its price
                        // over the least-cost roles covers the finest
                        // feedback resistor's extra already counted.
                        _ => finest
                            .min(reference_extra)
                            .min((network_extra - feedback).max(0.0)),
                    }
                }
                _ => 0.0,
            };
            if !chain.is_finite() {
                continue;
            }
            // The filter pair the report attaches: the last stage's
            // amplifier drives it, so it adds at least the least floor over
            // the parts that may sit there (search/pair.rs proves each
            // floor); with one stage that is the first stage's part. It is
            // not in the part-count check, which judges the design without
            // it.
            let pair = if shapes.len() == 1 {
                problem.pairs.least_floor(std::iter::once(kind))
            } else {
                driver_floor(problem, &shapes)
            };
            let cost = amp_cost + pair.cost + feedback + chain;
            let parts = packages + pair.parts;
            least = Some(match least {
                Some((c, p)) => (c.min(cost), p.min(parts)),
                None => (cost, parts),
            });
            lines_and_parts = Some((amp_lines, packages));
        }
        let (Some((amp_and_pair, pair_parts)), Some((amp_lines, packages))) =
            (least, lines_and_parts)
        else {
            continue;
        };
        // Every required role holds a resistor (or a network element);
        // offset networks and optional roles only add parts.
        let resistors: usize = shapes.iter().map(|s| s.resistor_count()).sum();
        let resistor_cost = match (resistors, least_per_role) {
            (0, _) => 0.0,
            (n, Some(least)) => n as f64 * least,
            (_, None) => continue,
        };
        // One package may fill a stage's four matched roles: one part.
        let shared = if least_element.is_some() {
            shapes
                .iter()
                .filter(|s| s.behaviour().matched_roles().is_some())
                .count()
                * (MATCHED_ROLES - 1)
        } else {
            0
        };
        let resistors = resistors.saturating_sub(shared);
        let parts = resistors + packages;
        // The analysis's part-count check holds `max_parts`.
        if parts > need.search.max_parts {
            continue;
        }
        // At least one line for the resistors or the networks that fill
        // the roles.
        let resistor_lines = match resistors {
            0 => 0,
            _ if two_values => 2,
            _ => 1,
        };
        let lines = amp_lines + resistor_lines;
        let cost = amp_and_pair + resistor_cost + line * lines as f64;
        // `pair_parts` holds the least packages plus pair parts.
        let parts_with_pair = resistors + pair_parts;
        best.cost = Some(best.cost.map_or(cost, |c: f64| c.min(cost)));
        best.parts = Some(
            best.parts
                .map_or(parts_with_pair, |p: usize| p.min(parts_with_pair)),
        );
    }
    best
}

/// The least cost the optimised mode's bound allows any design of the
/// space of a need and a stock (`None`: the space is proven to hold no
/// design that meets the need). For checks of the bound against the
/// exhaustive walk; docs/search.md gives its proof.
pub fn space_cost_floor(need: &Need, stock: &Stock) -> Option<f64> {
    let augmented = super::augment_stock(need, stock);
    let problem = Problem::new(need, stock, &augmented);
    space_bound(&problem).cost
}

/// The swing floor of a design's last-stage part: the least total error,
/// % FS on the need's basis, that the analysis can report for any design
/// whose output that part drives (search/floors.rs). `None` when the
/// design has no stage or its part is not in the stock.
pub fn last_stage_swing_floor_pct(need: &Need, stock: &Stock, design: &Design) -> Option<f64> {
    let kind = stage_part(stock, design.stages.last()?)?;
    let ideal = need.ideal_outputs();
    Some(floors::swing_floor_v(need, stock, kind, ideal) * 100.0 / need.full_scale())
}

/// The stock index of a stage's amplifier part.
fn stage_part(stock: &Stock, stage: &crate::design::Stage) -> Option<AmplifierKind> {
    Some(if stage.shape.integrated() {
        AmplifierKind::InAmp(
            stock
                .inamps
                .iter()
                .position(|p| p.part_id == stage.amplifier)?,
        )
    } else {
        AmplifierKind::OpAmp(
            stock
                .opamps
                .iter()
                .position(|p| p.part_id == stage.amplifier)?,
        )
    })
}

/// The accuracy floor of a design's first-stage part in its stage
/// sequence: the least total error, % FS on the need's basis, that the
/// analysis can report for any design with the same shapes whose first
/// stage uses that part (search/floors.rs: the part's accuracy floor, the
/// loop-gain floor where every stage is one op-amp section, the
/// common-mode floor of a first discrete instrumentation stage). `None`
/// when the design has no stage or its part is not in the stock.
pub fn first_stage_floor_pct(need: &Need, stock: &Stock, design: &Design) -> Option<f64> {
    let kind = stage_part(stock, design.stages.first()?)?;
    let shapes: Vec<Shape> = design.stages.iter().map(|s| s.shape).collect();
    Some(floors::sequence_floor_v(need, stock, &shapes, kind) * 100.0 / need.full_scale())
}
