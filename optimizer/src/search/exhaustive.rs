//! The exhaustive walk: every design of the space (docs/search.md), with
//! pruning only where a written proof says a design cannot win.
//!
//! The space: every sequence of one to `max_stages` shapes that may take
//! each stage ([`super::groups::shape_sequences`]); per stage any stocked
//! amplifier that can run on the rails, its offset node (and an inverting
//! stage's bias node) grounded, driven straight from the supply or a
//! stocked reference, or through a divider from one, buffered or not (a
//! buffered divider on an in-amp stage with any stocked op-amp as its
//! follower); every optional role present or absent; any stocked resistor
//! in any role, divider resistors included, each role on its own; and in a
//! stage whose shape has matched roles, those four roles either discrete
//! like the rest or filled by one package of a stocked network part (each
//! distinct assignment of four of its elements, [`network_places`]; one
//! package per stage).
//!
//! A *structure* fixes everything but the resistors (a stage's network
//! package and its elements are part of the structure). Structures come out
//! of a heap in the order of an additive lower bound on the objective
//! (the sorted-product walk: a node's successors raise one stage's choice
//! at or after the last one raised, so each index vector is made once and
//! memory holds only the frontier). Inside a structure every resistor
//! assignment is taken in turn (an odometer, no list).
//!
//! Proofs used to prune (each beside its code below):
//! - the walk stops when the next structure's bound is no better than the
//!   best design: every structure left has a bound at least as high;
//! - a resistor assignment whose exact cost is no lower than the best is
//!   skipped (cost objective): its cost is computed, not estimated;
//! - an amplifier whose supply range excludes the rails is never placed
//!   (the supply-range check fails whatever the resistors), nor a part
//!   with none on the shelf; sequences of the wrong sign are skipped where
//!   [`wrong_sign_ruled_out`] holds; structures with more parts than
//!   `max_parts` (the part-count check) are skipped; a first stage does
//!   not take a part whose accuracy floor is over the target, nor a last
//!   stage one whose swing floor is (proofs in `floors.rs`);
//! - a design failing a feasibility check of its model, or whose
//!   first-order worst case (worst-case basis, a lower bound on the
//!   reported total, which is its maximum with the corner check) or RSS
//!   (RSS basis, the reported total itself), both without the noise and
//!   the droop the candidate takes at bounds (`Model::floor_at_ends`),
//!   exceeds the target, cannot meet the need and is not reported in
//!   full; with the error objective,
//!   nor is one whose such total exceeds the best design's reported total
//!   (it cannot be more accurate).

use super::bounds::{wrong_sign_ruled_out, MATCHED_ROLES};
use super::floors::{swing_floor_v, SequenceFloors};
use super::groups::shape_sequences;
use super::pair::PairFloor;
use super::strategy::{objective_key, RunResult, SearchState};
use super::verify::{cannot_meet, verify_model};
use super::{costing, Problem, Progress, SearchMode, SearchStats, SolveControl, Stop};
use crate::analysis::Model;
use crate::design::{Design, Injection, Resistor, Shape, Source, Stage};
use crate::need::Objective;
use crate::shape::{OffsetNetwork, Role};
use crate::topology::AmplifierKind;
use std::cmp::Ordering;
use std::collections::{BTreeMap, BinaryHeap};

/// How an offset or bias node is driven, before resistors are chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Drive {
    Ground,
    /// Straight from source `i` of [`Walk::sources`].
    Direct(usize),
    /// A divider from source `i`, buffered or not.
    Divider(usize, bool),
}

/// One stage's choice of everything but its resistors.
#[derive(Debug, Clone)]
struct StageOption {
    /// Op-amp (or, integrated, in-amp) stock index.
    amplifier: usize,
    offset: Drive,
    bias: Drive,
    /// Follower op-amp of a buffered divider on an in-amp stage.
    buffer: Option<usize>,
    /// Resistor slots: stage roles, then divider roles.
    slots: Vec<Role>,
    /// Additive lower bound of the stage on the objective.
    bound: f64,
    /// Parts the stage places at least (resistors, in-amp), without the
    /// op-amp packages, which stages may share.
    parts: usize,
    /// Op-amp sections the stage uses (followers included).
    sections: usize,
    /// The network package filling the shape's matched roles, as an index
    /// into [`Catalog::networks`] (those roles are then not slots).
    network: Option<usize>,
}

/// One way a package of a stocked network part fills a stage's four
/// matched roles.
#[derive(Debug, Clone, PartialEq)]
struct NetworkPlace {
    /// Index of the part in the stock's networks.
    part: usize,
    /// Element number (1-based) for each matched role, in the order of
    /// [`crate::shape::MatchedRoles::roles`].
    elements: [u32; MATCHED_ROLES],
}

/// Every distinct way one package of a stocked network part (`stock_qty`
/// not 0, at least four elements) fills four matched roles: four distinct
/// elements, one per role, once per tuple of values (elements of one value
/// are alike to the analysis); each tuple takes the lowest-numbered
/// elements of its values, role by role (the first such assignment in
/// lexicographic order of element numbers).
fn network_places(stock: &crate::stock::Stock) -> Vec<NetworkPlace> {
    let mut out = Vec::new();
    for (part, network) in stock.networks.iter().enumerate() {
        let n = network.values.len();
        if network.stock_qty == Some(0) || n < MATCHED_ROLES || u32::try_from(n).is_err() {
            continue;
        }
        // Each element's value class: the first element of its value.
        let class: Vec<usize> = (0..n)
            .map(|i| {
                let v = network.values[i].0;
                (0..=i)
                    .find(|&j| (network.values[j].0 - v).abs() <= 1e-9 * v.abs())
                    .unwrap_or(i)
            })
            .collect();
        let mut seen = std::collections::BTreeSet::new();
        for a in 0..n {
            for b in (0..n).filter(|&b| b != a) {
                for c in (0..n).filter(|&c| c != a && c != b) {
                    for d in (0..n).filter(|&d| d != a && d != b && d != c) {
                        if !seen.insert([class[a], class[b], class[c], class[d]]) {
                            continue;
                        }
                        // In range: n fits a u32 (checked above).
                        let number = |i: usize| i as u32 + 1;
                        out.push(NetworkPlace {
                            part,
                            elements: [number(a), number(b), number(c), number(d)],
                        });
                    }
                }
            }
        }
    }
    out
}

/// A heap entry: a structure as one option index per stage.
struct Node {
    key: f64,
    sequence: usize,
    index: Vec<usize>,
    /// The stage raised last (successors raise it or a later one).
    last: usize,
}

impl PartialEq for Node {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == Ordering::Equal
    }
}
impl Eq for Node {}
impl PartialOrd for Node {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Node {
    /// Reversed, so the max-heap pops the lowest key; ties by sequence and
    /// index, so the walk order is fixed.
    fn cmp(&self, other: &Self) -> Ordering {
        other
            .key
            .total_cmp(&self.key)
            .then_with(|| other.sequence.cmp(&self.sequence))
            .then_with(|| other.index.cmp(&self.index))
    }
}

/// What the walk reads: the sources, the sequences and their options.
struct Walk {
    sources: Vec<Source>,
    /// Per sequence: its shapes, the options of each stage (sorted by
    /// bound) and the bound the whole sequence adds (BOM lines).
    sequences: Vec<(Vec<Shape>, Vec<Vec<StageOption>>, f64)>,
    /// Stock indices of the resistors that may be placed.
    resistors: Vec<usize>,
    /// Every way a network package may fill a stage's matched roles.
    networks: Vec<NetworkPlace>,
}

/// Whether a shape's template drives a bias node (the + input of an
/// inverting stage): asked of the networks the shape makes.
fn uses_bias(shape: Shape) -> bool {
    [-1.0, 1.0]
        .iter()
        .any(|&c| shape.offset_network(c) == Some(OffsetNetwork::InvertingBias))
}

/// The part driving the output when a stage of `shape` with stock
/// amplifier `amplifier` is the last.
fn driver_kind(shape: Shape, amplifier: usize) -> AmplifierKind {
    if shape.integrated() {
        AmplifierKind::InAmp(amplifier)
    } else {
        AmplifierKind::OpAmp(amplifier)
    }
}

/// The drives a node may take.
fn drives(sources: usize) -> Vec<Drive> {
    let mut out = vec![Drive::Ground];
    for s in 0..sources {
        out.push(Drive::Direct(s));
        out.push(Drive::Divider(s, false));
        out.push(Drive::Divider(s, true));
    }
    out
}

/// Every subset of the optional roles.
fn optional_subsets(roles: &[Role]) -> Vec<Vec<Role>> {
    (0..1usize << roles.len())
        .map(|mask| {
            roles
                .iter()
                .enumerate()
                .filter(|(i, _)| mask >> i & 1 == 1)
                .map(|(_, r)| *r)
                .collect()
        })
        .collect()
}

/// The parts a walk may place, read once from the need and the stock.
struct Catalog {
    sources: Vec<Source>,
    /// Stock indices of the resistors that may be placed.
    resistors: Vec<usize>,
    least_resistor: f64,
    /// Stock indices of the op-amps and in-amps that run on the rails.
    opamps: Vec<usize>,
    inamps: Vec<usize>,
    /// Those of them that may sit in the first stage. Proof 6: a
    /// first-stage part whose accuracy floor (search/floors.rs) is over
    /// the target is in no design that meets the need.
    first_opamps: Vec<usize>,
    first_inamps: Vec<usize>,
    /// Floors of the first stage's part by sequence (floors.rs).
    floors: SequenceFloors,
    /// Every way a network package may fill a stage's matched roles.
    networks: Vec<NetworkPlace>,
}

impl Catalog {
    fn new(problem: &Problem<'_>) -> Catalog {
        let need = problem.need;
        let stock = problem.stock;
        let mut sources = Vec::new();
        if need.supply.positive.0 > 0.0 {
            sources.push(Source::Supply);
        }
        for r in stock.references.iter().filter(|r| r.stock_qty != Some(0)) {
            sources.push(Source::Reference(r.part_id.clone()));
        }
        let resistors: Vec<usize> = (0..stock.resistors.len())
            .filter(|&i| stock.resistors[i].stock_qty != Some(0))
            .collect();
        let least_resistor = resistors
            .iter()
            .map(|&i| stock.resistors[i].unit_cost)
            .reduce(f64::min)
            .unwrap_or(0.0);
        let span = need.supply.positive.0 - need.supply.negative.0;
        // Proof: the supply-range check compares the rails with the part's
        // own range, which no resistor changes.
        let fits =
            |min: f64, max: f64, qty: Option<u32>| qty != Some(0) && span >= min && span <= max;
        let opamps: Vec<usize> = (0..stock.opamps.len())
            .filter(|&i| {
                let p = &stock.opamps[i];
                fits(p.supply_min.0, p.supply_max.0, p.stock_qty)
            })
            .collect();
        let inamps: Vec<usize> = (0..stock.inamps.len())
            .filter(|&i| {
                let p = &stock.inamps[i];
                fits(p.supply_min.0, p.supply_max.0, p.stock_qty)
            })
            .collect();
        let floors = SequenceFloors::new(need, stock);
        let over = |kind: AmplifierKind| floors.part(kind) > problem.target_v;
        let first_opamps = opamps
            .iter()
            .copied()
            .filter(|&i| !over(AmplifierKind::OpAmp(i)))
            .collect();
        let first_inamps = inamps
            .iter()
            .copied()
            .filter(|&i| !over(AmplifierKind::InAmp(i)))
            .collect();
        Catalog {
            sources,
            resistors,
            least_resistor,
            opamps,
            inamps,
            first_opamps,
            first_inamps,
            floors,
            networks: network_places(stock),
        }
    }

    /// One shape sequence of the walk: the options of each stage (sorted
    /// by bound) and the bound the whole sequence adds (BOM lines), or
    /// `None` where a proof rules the sequence out or a stage has no
    /// option.
    fn sequence(
        &self,
        problem: &Problem<'_>,
        shapes: Vec<Shape>,
    ) -> Option<(Vec<Shape>, Vec<Vec<StageOption>>, f64)> {
        let need = problem.need;
        let stock = problem.stock;
        let (sources, least_resistor) = (&self.sources, self.least_resistor);
        let (opamps, inamps) = (&self.opamps, &self.inamps);
        let objective = need.search.objective;
        let (k, _) = need.ideal_transfer();
        let line = need.search.bom_line_cost;
        let sign: f64 = shapes.iter().map(|s| s.sign()).product();
        if sign * k <= 0.0 && wrong_sign_ruled_out(problem) {
            return None;
        }
        let mut per_stage = Vec::new();
        for (position, &shape) in shapes.iter().enumerate() {
            let last = position + 1 == shapes.len();
            let mut options = Vec::new();
            let amplifiers = match (shape.integrated(), position == 0) {
                (true, true) => &self.first_inamps,
                (true, false) => inamps,
                (false, true) => &self.first_opamps,
                (false, false) => opamps,
            };
            let bias_drives = if uses_bias(shape) {
                drives(sources.len())
            } else {
                vec![Drive::Ground]
            };
            // Discrete matched roles, or one package in them.
            let matched = shape.behaviour().matched_roles();
            let mut network_variants: Vec<Option<usize>> = vec![None];
            if matched.is_some() {
                network_variants.extend((0..self.networks.len()).map(Some));
            }
            for &amplifier in amplifiers {
                // The first stage's part must clear its floor in this
                // sequence (floors::sequence_floor_v states the proof).
                if position == 0
                    && self.floors.get(&shapes, driver_kind(shape, amplifier)) > problem.target_v
                {
                    continue;
                }
                // The last stage's part must be able to swing where the
                // output must be (floors::swing_floor_v states the proof).
                if last
                    && swing_floor_v(need, stock, driver_kind(shape, amplifier), problem.ideal)
                        > problem.target_v
                {
                    continue;
                }
                for offset in drives(sources.len()) {
                    for &bias in &bias_drives {
                        let buffered = [offset, bias]
                            .iter()
                            .filter(|d| matches!(d, Drive::Divider(_, true)))
                            .count();
                        let buffers: Vec<Option<usize>> = if shape.integrated() && buffered > 0 {
                            opamps.iter().map(|&o| Some(o)).collect()
                        } else {
                            vec![None]
                        };
                        for optional in optional_subsets(shape.optional_roles()) {
                            let variants = buffers
                                .iter()
                                .flat_map(|&b| network_variants.iter().map(move |&n| (b, n)));
                            for (buffer, network) in variants {
                                // A network fills the matched roles: they
                                // are not slots, and its package is one
                                // part at its own price.
                                let mut slots: Vec<Role> = shape.required_roles().to_vec();
                                let mut package_cost = 0.0;
                                if let (Some(n), Some(matched)) = (network, matched) {
                                    let taken = matched.roles();
                                    slots.retain(|r| !taken.contains(r));
                                    package_cost = stock.networks[self.networks[n].part].unit_cost;
                                }
                                slots.extend(&optional);
                                if matches!(offset, Drive::Divider(..)) {
                                    slots.extend([Role::OffsetTop, Role::OffsetBottom]);
                                }
                                if matches!(bias, Drive::Divider(..)) {
                                    slots.extend([Role::BiasTop, Role::BiasBottom]);
                                }
                                let (own, sections) = if shape.integrated() {
                                    (stock.inamps[amplifier].unit_cost, 0)
                                } else {
                                    (0.0, shape.sections() + buffered)
                                };
                                let per_section = |o: usize| {
                                    stock.opamps[o].unit_cost
                                        / f64::from(stock.opamps[o].channels.max(1))
                                };
                                // Op-amp packages may be shared across
                                // stages: each section bears its share.
                                let section_cost = if shape.integrated() {
                                    buffer.map(per_section).unwrap_or(0.0)
                                } else {
                                    sections as f64 * per_section(amplifier)
                                };
                                let section_parts = if shape.integrated() {
                                    buffer
                                        .map(|o| 1.0 / f64::from(stock.opamps[o].channels.max(1)))
                                        .unwrap_or(0.0)
                                } else {
                                    sections as f64
                                        / f64::from(stock.opamps[amplifier].channels.max(1))
                                };
                                let parts = slots.len()
                                    + usize::from(shape.integrated())
                                    + usize::from(network.is_some());
                                // Proof: the part-count check fails
                                // a design with more parts than
                                // `max_parts` (the stage alone, with
                                // its amplifier, is too many).
                                if parts + usize::from(sections > 0) > need.search.max_parts {
                                    continue;
                                }
                                // The last stage's amplifier drives
                                // the filter pair: its floor (proof in
                                // search/pair.rs) joins the bound.
                                let pair = if last {
                                    problem.pairs.floor(driver_kind(shape, amplifier))
                                } else {
                                    PairFloor::default()
                                };
                                let bound = match objective {
                                    Objective::Parts => {
                                        parts as f64 + section_parts + pair.parts as f64
                                    }
                                    _ => {
                                        own + section_cost
                                            + slots.len() as f64 * least_resistor
                                            + package_cost
                                            + pair.cost
                                    }
                                };
                                options.push(StageOption {
                                    amplifier,
                                    offset,
                                    bias,
                                    buffer,
                                    slots,
                                    bound,
                                    parts,
                                    sections,
                                    network,
                                });
                            }
                        }
                    }
                }
            }
            options.sort_by(|a, b| a.bound.total_cmp(&b.bound));
            per_stage.push(options);
        }
        if per_stage.iter().any(|o| o.is_empty()) {
            return None;
        }
        // At least one BOM line for the op-amps, one for the in-amps
        // and one for the resistors (every shape places one).
        let lines = usize::from(shapes.iter().any(|s| !s.integrated()))
            + usize::from(shapes.iter().any(|s| s.integrated()))
            + 1;
        let fixed = match objective {
            Objective::Parts => 0.0,
            _ => line * lines as f64,
        };
        Some((shapes, per_stage, fixed))
    }
}

impl Walk {
    fn new(problem: &Problem<'_>) -> Walk {
        let catalog = Catalog::new(problem);
        let sequences = shape_sequences(problem.need, problem.stock)
            .into_iter()
            .filter_map(|shapes| catalog.sequence(problem, shapes))
            .collect();
        Walk {
            sources: catalog.sources,
            sequences,
            resistors: catalog.resistors,
            networks: catalog.networks,
        }
    }

    /// Structures in the whole walk (saturating).
    fn total(&self) -> u64 {
        self.sequences
            .iter()
            .map(|(_, options, _)| {
                options
                    .iter()
                    .fold(1u64, |n, o| n.saturating_mul(o.len() as u64))
            })
            .fold(0u64, u64::saturating_add)
    }

    fn key(&self, sequence: usize, index: &[usize]) -> f64 {
        let (_, options, fixed) = &self.sequences[sequence];
        fixed
            + index
                .iter()
                .enumerate()
                .map(|(stage, &i)| options[stage][i].bound)
                .sum::<f64>()
    }

    /// The heap of a walk's start: each sequence's cheapest structure.
    fn first_nodes(&self) -> BinaryHeap<Node> {
        let mut heap = BinaryHeap::new();
        for (sequence, (shapes, _, _)) in self.sequences.iter().enumerate() {
            let index = vec![0; shapes.len()];
            heap.push(Node {
                key: self.key(sequence, &index),
                sequence,
                index,
                last: 0,
            });
        }
        heap
    }

    /// Push the successors of a structure taken from the heap (the sorted
    /// product walk: raise the stage raised last or a later one).
    fn push_successors(&self, node: &Node, heap: &mut BinaryHeap<Node>) {
        let (shapes, options, _) = &self.sequences[node.sequence];
        for stage in node.last..shapes.len() {
            if node.index[stage] + 1 < options[stage].len() {
                let mut index = node.index.clone();
                index[stage] += 1;
                heap.push(Node {
                    key: self.key(node.sequence, &index),
                    sequence: node.sequence,
                    index,
                    last: stage,
                });
            }
        }
    }

    /// The option of each stage of a structure.
    fn chosen(&self, node: &Node) -> Vec<&StageOption> {
        let (_, options, _) = &self.sequences[node.sequence];
        node.index
            .iter()
            .enumerate()
            .map(|(stage, &i)| &options[stage][i])
            .collect()
    }

    /// The design of a structure with one stock resistor per slot.
    fn design(
        &self,
        problem: &Problem<'_>,
        shapes: &[Shape],
        options: &[&StageOption],
        picks: &[&[usize]],
    ) -> Design {
        let stock = problem.stock;
        let resistor = |i: usize| Resistor::from(&stock.resistors[self.resistors[i]]);
        let mut stages = Vec::new();
        // Packages placed so far, by network part: each stage placing one
        // takes its own, numbered 1, 2, ... per part in stage order (as the
        // optimised mode numbers them).
        let mut packages: BTreeMap<usize, u32> = BTreeMap::new();
        for ((&shape, option), pick) in shapes.iter().zip(options).zip(picks) {
            let mut resistors = BTreeMap::new();
            if let (Some(n), Some(matched)) = (option.network, shape.behaviour().matched_roles()) {
                let place = &self.networks[n];
                let count = packages.entry(place.part).or_insert(0);
                *count += 1;
                let part = &stock.networks[place.part];
                for (role, &element) in matched.roles().into_iter().zip(&place.elements) {
                    if let Some(r) = Resistor::network_element(part, *count, element) {
                        resistors.insert(role, r);
                    }
                }
            }
            let mut dividers: BTreeMap<Role, Resistor> = BTreeMap::new();
            for (&role, &i) in option.slots.iter().zip(pick.iter()) {
                if role.is_divider() {
                    dividers.insert(role, resistor(i));
                } else {
                    resistors.insert(role, resistor(i));
                }
            }
            let injection = |drive: Drive, top: Role, bottom: Role| match drive {
                Drive::Ground => Injection::Ground,
                Drive::Direct(s) => Injection::Direct {
                    source: self.sources[s].clone(),
                },
                Drive::Divider(s, buffered) => Injection::Divider {
                    source: self.sources[s].clone(),
                    top: dividers.get(&top).cloned().unwrap_or_else(|| resistor(0)),
                    bottom: dividers
                        .get(&bottom)
                        .cloned()
                        .unwrap_or_else(|| resistor(0)),
                    buffered,
                },
            };
            let amplifier = if shape.integrated() {
                stock.inamps[option.amplifier].part_id.clone()
            } else {
                stock.opamps[option.amplifier].part_id.clone()
            };
            stages.push(Stage {
                shape,
                amplifier,
                resistors,
                offset: injection(option.offset, Role::OffsetTop, Role::OffsetBottom),
                bias: injection(option.bias, Role::BiasTop, Role::BiasBottom),
                buffer: option.buffer.map(|o| stock.opamps[o].part_id.clone()),
                feedback_capacitor: None,
            });
        }
        let mut design = Design { stages };
        // A pole in the last stage's feedback where the rule places one
        // (search/pair.rs): a function of the design, so the walk's space
        // is the designs with the capacitor their rule gives.
        problem.pairs.place_feedback(stock, &mut design);
        design
    }
}

/// Least wall time between two progress reports inside one structure, ms.
const PROGRESS_EVERY_MS: f64 = 100.0;

/// What a structure's assignments are interrupted by: the deadline, and
/// a cancel from the progress sink, which is called now and then (at most
/// every [`PROGRESS_EVERY_MS`]) so that a structure of very many
/// assignments still hears a Stop.
struct Pause<'c, 'a> {
    control: &'c mut SolveControl<'a>,
    deadline_ms: f64,
    /// The structures done and in all, as the walk reports them.
    done: u64,
    total: u64,
    last_report_ms: f64,
    /// The progress sink answered `false`.
    cancelled: bool,
    /// Work units spent by the walk so far, and its limit
    /// ([`WalkBudget::max_work`]).
    work: u64,
    max_work: u64,
}

impl Pause<'_, '_> {
    /// Whether the walk may go on; `false` at the deadline, past the work
    /// limit, or on a cancel.
    fn keep_going(&mut self, state: &SearchState) -> bool {
        self.work = self.work.saturating_add(1);
        if self.work > self.max_work {
            return false;
        }
        let now = (self.control.now_ms)();
        if now > self.deadline_ms {
            return false;
        }
        if now - self.last_report_ms >= PROGRESS_EVERY_MS {
            self.last_report_ms = now;
            let going = (self.control.progress)(Progress {
                done: self.done,
                total: self.total,
                best_cost: state.best.as_ref().map(|b| b.costing.total),
            });
            if !going {
                self.cancelled = true;
                return false;
            }
        }
        true
    }
}

/// Every resistor assignment of one structure, offered to `state`;
/// `false` when the deadline or a cancel came first (the structure is not
/// done).
fn search_structure(
    problem: &Problem<'_>,
    walk: &Walk,
    shapes: &[Shape],
    options: &[&StageOption],
    state: &mut SearchState,
    pause: &mut Pause<'_, '_>,
) -> bool {
    let stock = problem.stock;
    let objective = problem.need.search.objective;
    let line = problem.need.search.bom_line_cost;
    let choices = walk.resistors.len();
    let slots: Vec<usize> = options.iter().map(|o| o.slots.len()).collect();
    let count: usize = slots.iter().sum();
    if choices == 0 && count > 0 {
        return true;
    }
    let mut flat = vec![0usize; count];
    // The part driving the output and the filter pair.
    let driver = match (shapes.last(), options.last()) {
        (Some(&shape), Some(option)) => Some(driver_kind(shape, option.amplifier)),
        _ => None,
    };
    // The network parts the structure places (one line each).
    let mut network_ids: Vec<&str> = Vec::new();
    for option in options {
        if let Some(n) = option.network {
            let id = stock.networks[walk.networks[n].part].part_id.as_str();
            if !network_ids.contains(&id) {
                network_ids.push(id);
            }
        }
    }
    // Cost of everything but the discrete resistors and their lines
    // (network packages included), exact, from the first build.
    let mut fixed: Option<f64> = None;
    let mut visited = 0u64;
    loop {
        visited += 1;
        if visited.is_multiple_of(256) && !pause.keep_going(state) {
            return false;
        }
        let mut picks: Vec<&[usize]> = Vec::with_capacity(options.len());
        let mut at = 0;
        for &n in &slots {
            picks.push(&flat[at..at + n]);
            at += n;
        }
        // Proof: the exact cost of the assignment (fixed part, network
        // packages included, plus its resistors and the distinct BOM lines
        // of its resistor and network parts) is no lower than the best
        // design's, so it cannot rank first on cost.
        let skip = match (objective, fixed, state.best.as_ref()) {
            (Objective::Cost, Some(fixed), Some(best)) => {
                // The network parts' lines are in `ids` from the start (a
                // resistor of the same part id shares the line, as in
                // the costing); their packages are in `fixed`.
                let mut ids: Vec<&str> = network_ids.clone();
                let mut cost = fixed;
                for &i in &flat {
                    let part = &stock.resistors[walk.resistors[i]];
                    cost += part.unit_cost;
                    if !ids.contains(&part.part_id.as_str()) {
                        ids.push(&part.part_id);
                    }
                }
                cost += line * ids.len() as f64;
                // The filter pair the report attaches: exact without a
                // sampling input, its floor with one (search/pair.rs).
                if let Some(kind) = driver {
                    cost += problem.pairs.least_added(kind, &|id| ids.contains(&id));
                }
                cost >= objective_key(objective, best).0 - 1e-12
            }
            _ => false,
        };
        if !skip {
            let design = walk.design(problem, shapes, options, &picks);
            let gets_pair = |b: &crate::topology::Built, dc: &crate::mna::DcSolution| {
                problem.pairs.gets_pair(b, dc)
            };
            if let Ok(model) = Model::candidate(problem.need, stock, &design, &gets_pair) {
                if fixed.is_none() {
                    let c = costing(model.built(), line);
                    let resistor_lines = model
                        .built()
                        .resistors
                        .iter()
                        .map(|r| r.part.part_id.as_str())
                        .collect::<std::collections::BTreeSet<_>>()
                        .len();
                    let resistor_cost: f64 = model
                        .built()
                        .resistors
                        .iter()
                        .map(|r| r.part.unit_cost)
                        .sum();
                    // A capacitor the rule places across `rf` depends on
                    // the resistors: left out of the fixed part (it only
                    // adds), so the sum below stays a lower bound.
                    let capacitors = &model.built().feedback_capacitors;
                    let capacitor_cost: f64 = capacitors.iter().map(|c| c.part.unit_cost).sum();
                    let capacitor_lines = capacitors
                        .iter()
                        .map(|c| c.part.part_id.as_str())
                        .collect::<std::collections::BTreeSet<_>>()
                        .len();
                    fixed = Some(
                        c.total
                            - resistor_cost
                            - line * resistor_lines as f64
                            - capacitor_cost
                            - line * capacitor_lines as f64,
                    );
                }
                let best_v = match (objective, state.best.as_ref()) {
                    (Objective::Error, Some(best)) => {
                        Some(best.analysis.basis_pct_fs / 100.0 * best.analysis.full_scale_v)
                    }
                    _ => None,
                };
                if cannot_meet(problem, &model, best_v) {
                    state.diagnosis.note_findings(&model.findings());
                } else if let Some(c) = verify_model(problem, design, model) {
                    state.evaluated += 1;
                    state.offer(c);
                }
            }
        }
        // The next assignment, first slot fastest.
        let mut slot = 0;
        while slot < count {
            flat[slot] += 1;
            if flat[slot] < choices {
                break;
            }
            flat[slot] = 0;
            slot += 1;
        }
        if slot == count {
            return true;
        }
    }
}

/// How a walk ended.
pub(super) struct WalkEnd {
    /// What the walk found.
    pub(super) state: SearchState,
    /// The walk visited or ruled out every structure: its verdict is
    /// proven.
    pub(super) finished: bool,
    /// A cancel stopped it.
    pub(super) cancelled: bool,
    /// The bound of the first structure not searched, when cut short.
    pub(super) bound_left: Option<f64>,
    /// Structures in the walk.
    pub(super) total: u64,
}

/// What a walk may spend and how it reports progress.
pub(super) struct WalkBudget {
    /// When to give up, on the caller's clock (infinite: never).
    pub(super) deadline_ms: f64,
    /// Report progress as this fixed total (the main search's) instead of
    /// the walk's own, so a call shows one total.
    pub(super) report_as: Option<u64>,
    /// Most work units (a structure taken from the heap is one, every
    /// 256 resistor assignments another) before the walk gives up, on
    /// any clock (`u64::MAX`: no such limit).
    pub(super) max_work: u64,
}

/// Whether a structure has more parts than `max_parts` whatever its
/// values (the part-count check fails it).
fn too_many_parts(problem: &Problem<'_>, chosen: &[&StageOption]) -> bool {
    let parts: usize = chosen.iter().map(|o| o.parts).sum::<usize>()
        + chosen
            .iter()
            .filter(|o| o.sections > 0)
            .map(|o| o.sections)
            .sum::<usize>()
            .min(1);
    parts > problem.need.search.max_parts
}

/// Designs a walk seeded with a design of objective value `best` (cost
/// or parts) can still visit: those of the structures whose bound is
/// below `best`, or `None` as soon as the count passes `limit`.
/// Structures at or over `best` are never opened (proof 1), so this is
/// the walk's whole work however large the space; it decides only whether
/// a walk is worth starting, never what a walk proves.
pub(super) fn live_space_size(problem: &Problem<'_>, best: f64, limit: u64) -> Option<u64> {
    // The count is a sum over structures, so the sequences are taken one
    // at a time (built only as far as needed), not in the walk's order.
    let catalog = Catalog::new(problem);
    let mut live = Live {
        problem,
        choices: catalog.resistors.len() as u64,
        best,
        limit,
        count: 0,
    };
    for shapes in shape_sequences(problem.need, problem.stock) {
        let Some((_, options, fixed)) = catalog.sequence(problem, shapes) else {
            continue;
        };
        let mut least_rest = vec![0.0; options.len() + 1];
        for stage in (0..options.len()).rev() {
            least_rest[stage] = least_rest[stage + 1] + options[stage][0].bound;
        }
        if !live.count_from(&options, &least_rest, 0, fixed, &mut Vec::new()) {
            return None;
        }
    }
    Some(live.count)
}

/// The count of [`live_space_size`] as it goes.
struct Live<'p, 'a> {
    problem: &'p Problem<'a>,
    /// Resistors each slot may hold.
    choices: u64,
    best: f64,
    limit: u64,
    count: u64,
}

impl Live<'_, '_> {
    /// Add the designs of every structure below `best` that extends
    /// `chosen` (stages before `stage`, bound `key` so far); false once
    /// the count passes the limit. Options are sorted by bound, so the
    /// first option whose least completion reaches `best` ends a stage.
    fn count_from<'o>(
        &mut self,
        options: &'o [Vec<StageOption>],
        least_rest: &[f64],
        stage: usize,
        key: f64,
        chosen: &mut Vec<&'o StageOption>,
    ) -> bool {
        if stage == options.len() {
            if too_many_parts(self.problem, chosen) {
                return true;
            }
            let slots: usize = chosen.iter().map(|o| o.slots.len()).sum();
            let assignments = u32::try_from(slots)
                .ok()
                .and_then(|n| self.choices.checked_pow(n))
                .unwrap_or(u64::MAX);
            self.count = self.count.saturating_add(assignments.max(1));
            return self.count <= self.limit;
        }
        for option in &options[stage] {
            let key = key + option.bound;
            if key + least_rest[stage + 1] >= self.best - 1e-12 {
                break;
            }
            chosen.push(option);
            let within = self.count_from(options, least_rest, stage + 1, key, chosen);
            chosen.pop();
            if !within {
                return false;
            }
        }
        true
    }
}

/// Designs in the whole walk, counted without building it, or `None` as
/// soon as the count passes `limit` (the demo's space is astronomically
/// large, and the count must cost next to nothing there).
pub(super) fn space_size(problem: &Problem<'_>, limit: u64) -> Option<u64> {
    let need = problem.need;
    let stock = problem.stock;
    let span = need.supply.positive.0 - need.supply.negative.0;
    let opamps = stock
        .opamps
        .iter()
        .filter(|p| p.stock_qty != Some(0) && span >= p.supply_min.0 && span <= p.supply_max.0)
        .count() as u64;
    let inamps = stock
        .inamps
        .iter()
        .filter(|p| p.stock_qty != Some(0) && span >= p.supply_min.0 && span <= p.supply_max.0)
        .count() as u64;
    let sources = u64::from(need.supply.positive.0 > 0.0)
        + stock
            .references
            .iter()
            .filter(|r| r.stock_qty != Some(0))
            .count() as u64;
    let choices = stock
        .resistors
        .iter()
        .filter(|r| r.stock_qty != Some(0))
        .count() as u64;
    // Ways a package fills a stage's matched roles.
    let networks = network_places(stock).len() as u64;
    let (k, _) = need.ideal_transfer();
    // Drives of a node: (how many, extra resistors, buffered).
    let drives = [
        (1, 0, false),
        (sources, 0, false),
        (sources, 2, false),
        (sources, 2, true),
    ];
    let mut total = 0u64;
    for shapes in shape_sequences(need, stock) {
        let sign: f64 = shapes.iter().map(|s| s.sign()).product();
        if sign * k <= 0.0 && wrong_sign_ruled_out(problem) {
            continue;
        }
        let mut sequence = 1u64;
        for &shape in &shapes {
            let bias_drives: &[(u64, usize, bool)] = if uses_bias(shape) {
                &drives
            } else {
                &drives[..1]
            };
            let optional = shape.optional_roles().len();
            // Matched roles filled by discrete resistors (no package), or
            // by a package (four slots fewer, one part more), one of
            // `networks` ways.
            let mut fills: Vec<(usize, usize, u64)> = vec![(0, 0, 1)];
            if shape.behaviour().matched_roles().is_some() && networks > 0 {
                fills.push((MATCHED_ROLES, 1, networks));
            }
            let mut stage = 0u64;
            for &(offsets, offset_extra, offset_buffered) in &drives {
                for &(biases, bias_extra, bias_buffered) in bias_drives {
                    let buffered = usize::from(offset_buffered) + usize::from(bias_buffered);
                    let (amps, buffers) = if shape.integrated() {
                        (inamps, if buffered > 0 { opamps } else { 1 })
                    } else {
                        (opamps, 1)
                    };
                    for (present, &(taken, package, ways)) in
                        (0..=optional).flat_map(|p| fills.iter().map(move |f| (p, f)))
                    {
                        let slots =
                            shape.resistor_count() - taken + present + offset_extra + bias_extra;
                        let amplifier_parts = usize::from(shape.integrated())
                            + usize::from(!shape.integrated() || buffered > 0);
                        if slots + package + amplifier_parts > need.search.max_parts {
                            continue;
                        }
                        let subsets = binomial(optional, present);
                        let designs = choices.saturating_pow(slots as u32).saturating_mul(
                            (amps * buffers * offsets * biases * subsets).saturating_mul(ways),
                        );
                        stage = stage.saturating_add(designs);
                    }
                }
            }
            sequence = sequence.saturating_mul(stage);
        }
        total = total.saturating_add(sequence);
        if total > limit {
            return None;
        }
    }
    Some(total)
}

/// `n` choose `k`, for the few optional roles of a shape.
fn binomial(n: usize, k: usize) -> u64 {
    (0..k).fold(1u64, |acc, i| acc * (n - i) as u64 / (i + 1) as u64)
}

/// Walk the space from `state` (which may hold an incumbent best design,
/// so the walk prunes against it from the start).
pub(super) fn walk(
    problem: &Problem<'_>,
    control: &mut SolveControl<'_>,
    mut state: SearchState,
    budget: &WalkBudget,
) -> WalkEnd {
    let objective = problem.need.search.objective;
    let walk = Walk::new(problem);
    let total = walk.total();
    let mut heap = walk.first_nodes();
    let mut done = 0u64;
    let mut cancelled = false;
    let mut bound_left: Option<f64> = None;
    let mut work = 0u64;
    while let Some(node) = heap.pop() {
        // Proof: structures leave the heap in bound order, so when this
        // bound cannot beat the best, no structure left can.
        if let Some(best) = state.best.as_ref() {
            if objective != Objective::Error && node.key >= objective_key(objective, best).0 - 1e-12
            {
                heap.clear();
                break;
            }
        }
        let keep_going = (control.progress)(Progress {
            done: budget.report_as.unwrap_or(done),
            total: budget.report_as.unwrap_or(total),
            best_cost: state.best.as_ref().map(|b| b.costing.total),
        });
        work = work.saturating_add(1);
        if !keep_going || (control.now_ms)() > budget.deadline_ms || work > budget.max_work {
            cancelled = !keep_going;
            bound_left = Some(node.key);
            break;
        }
        done += 1;
        walk.push_successors(&node, &mut heap);
        let (shapes, _, _) = &walk.sequences[node.sequence];
        let chosen = walk.chosen(&node);
        // Proof: the part-count check fails a design with more parts than
        // `max_parts`, whatever its values.
        if too_many_parts(problem, &chosen) {
            continue;
        }
        let mut pause = Pause {
            deadline_ms: budget.deadline_ms,
            done: budget.report_as.unwrap_or(done),
            total: budget.report_as.unwrap_or(total),
            last_report_ms: (control.now_ms)(),
            cancelled: false,
            work,
            max_work: budget.max_work,
            control,
        };
        let structure_done =
            search_structure(problem, &walk, shapes, &chosen, &mut state, &mut pause);
        work = pause.work;
        if !structure_done {
            // A cut walk is unfinished, never a verdict.
            cancelled = pause.cancelled;
            bound_left = Some(node.key);
            break;
        }
    }
    WalkEnd {
        finished: bound_left.is_none(),
        state,
        cancelled,
        bound_left,
        total,
    }
}

/// The exhaustive mode. It has no time limit of its own (only a cancel
/// stops it, and then it is unfinished); a walk that ends proves its
/// verdict: the best design is optimal over the space, or none exists.
pub(super) fn run(problem: &Problem<'_>, control: &mut SolveControl<'_>) -> RunResult {
    let start = (control.now_ms)();
    let objective = problem.need.search.objective;
    let end = walk(
        problem,
        control,
        SearchState::new(objective),
        &WalkBudget {
            deadline_ms: f64::INFINITY,
            report_as: None,
            max_work: u64::MAX,
        },
    );
    let elapsed_ms = (control.now_ms)() - start;
    let state = end.state;
    let gap = match (objective, state.best.as_ref(), end.bound_left) {
        (Objective::Error, _, _) | (_, None, _) => None,
        (_, Some(best), Some(bound)) => Some((objective_key(objective, best).0 - bound).max(0.0)),
        _ => None,
    };
    RunResult {
        stopped: (!end.finished).then_some(Stop::Cancelled),
        proven_infeasible: end.finished && state.best.is_none(),
        walked: end.finished,
        stats: SearchStats {
            mode: SearchMode::Exhaustive.name().into(),
            evaluated: state.evaluated,
            structures: end.total,
            milp_solves: 0,
            elapsed_ms,
            proven_optimal: end.finished && state.best.is_some(),
            gap,
        },
        best: state.best,
        found: state.found,
        diagnosis: state.diagnosis,
    }
}

#[cfg(test)]
mod tests {
    use super::network_places;
    use crate::stock::{parse_stock, Stock, StockFile};

    /// An invented stock: one resistor row and the given network rows.
    fn stock(networks: &str) -> Stock {
        let f = |name: &str, text: String| StockFile {
            name: name.into(),
            bytes: text.into_bytes(),
        };
        parse_stock(&[
            f(
                "resistors.csv",
                "part_id,value_ohms,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                 X-R,1000,,,,1,100,0603,0.01,\n"
                    .into(),
            ),
            f(
                "opamps.csv",
                "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
                 X-OA,1,2.7,12,0,0,0.02,0.02,300,2,0.1,0.1,110,2,20,0.1,100,0.40,\n"
                    .into(),
            ),
            f(
                "networks.csv",
                format!(
                    "part_id,count,value_ohms,abs_tolerance_pct,ratio_tolerance_pct,abs_tcr_ppm_per_c,tracking_tcr_ppm_per_c,package,unit_cost,stock_qty\n{networks}"
                ),
            ),
        ])
        .unwrap_or_else(|e| panic!("the invented stock: {e}"))
    }

    /// Four elements of two values: the six orders of the values, each
    /// with the lowest-numbered elements of its values, role by role; four
    /// equal elements: one; five of which four equal: the all-equal tuple
    /// and the odd value in each of the four roles; a part with none on
    /// the shelf: none.
    #[test]
    fn places_are_the_distinct_value_tuples() {
        let s = stock(
            "X-RN1,4,1000;2200;1000;2200,0.1,0.01,25,2,SOIC-8,0.3,\n\
             X-RN2,4,1000,0.1,0.01,25,2,SOIC-8,0.3,\n\
             X-RN3,5,1000;1000;4700;1000;1000,0.1,0.01,25,2,SOIC-8,0.3,\n\
             X-RN4,4,1000;2200;1000;2200,0.1,0.01,25,2,SOIC-8,0.3,0\n",
        );
        let places = network_places(&s);
        let of = |part: usize| -> Vec<[u32; 4]> {
            places
                .iter()
                .filter(|p| p.part == part)
                .map(|p| p.elements)
                .collect()
        };
        // Values 1000, 2200, 1000, 2200 (A B A B): in order of element
        // numbers, the first assignment of each value tuple.
        assert_eq!(
            of(0),
            vec![
                [1, 2, 3, 4], // A B A B
                [1, 2, 4, 3], // A B B A
                [1, 3, 2, 4], // A A B B
                [2, 1, 3, 4], // B A A B
                [2, 1, 4, 3], // B A B A
                [2, 4, 1, 3], // B B A A
            ]
        );
        assert_eq!(of(1), vec![[1, 2, 3, 4]]);
        // Values A A B A A.
        assert_eq!(
            of(2),
            vec![
                [1, 2, 3, 4], // A A B A
                [1, 2, 4, 3], // A A A B
                [1, 2, 4, 5], // A A A A
                [1, 3, 2, 4], // A B A A
                [3, 1, 2, 4], // B A A A
            ]
        );
        assert!(of(3).is_empty());
    }
}
