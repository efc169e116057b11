//! The filter pair at the ADC input in the search's objective.
//!
//! Every reported design gets the pair [`crate::filter::attach`] chooses
//! for it ([`crate::filter::choose`]: the cheapest stocked resistor and
//! capacitor meeting the rules of `docs/filter.md`), so the search counts
//! that pair in the objective of every design it verifies (its parts
//! cost, its two parts, the capacitor's BOM line and the series
//! resistor's line where no resistor of the design shares it) and in the
//! lower bounds of both modes. The pair is chosen from the user's stock,
//! as the report chooses it, not from the search's augmented one.
//!
//! What the choice depends on (read from `filter::bounds`, `meets` and
//! `choose`): the need, the stock, and the driving section (the last
//! stage's amplifier, whose output is the chain's output): its output
//! resistance (the phase-margin rule) and, only with a sampling ADC input
//! (`adc.sample_capacitance_pf`), its gain-bandwidth and noise gain
//! through the settling rule. So without a sampling input the pair is a
//! function of the driving part alone, chosen once per part here. With
//! one, the noise gain `NG` (never below 1) enters only the recovery time
//! constant `R (C + Cs) + NG / (2 pi GBW)`, which grows with `NG`; a pair
//! meeting the settling rule at some `NG` meets it at every smaller one.
//! The pairs allowed at `NG` thus shrink as `NG` grows, and:
//!
//! - the cheapest pair at `NG = 1` costs no more (in unit prices, which is
//!   what `choose` minimises) than the pair chosen at any `NG`;
//! - where no pair is allowed at `NG` large enough (the pairs left in the
//!   limit are those whose kickback is under 1/2 LSB before any
//!   recovery), some design of that part may get no pair at all and add
//!   nothing, so the floor is zero.
//!
//! The floor of a part ([`PairFloor`]) is therefore: nothing when no pair
//! exists at `NG = 1` or may vanish at a large `NG`; otherwise the unit
//! prices of the `NG = 1` pair plus one BOM line (the capacitor's, which
//! no other part shares: the capacitor rows are the filter's alone), and
//! two parts. The series resistor's line may be shared with a resistor of
//! the design, so the floor does not count it; the exact share of a
//! design does ([`FilterPairs::share`]). Among pairs of the least unit
//! prices the rule takes one whose resistor the design already places
//! (its line shared): that changes which pair of that price a design
//! gets, never the price, so the floor above stands; the part's pair is
//! kept with every pair tied with it ([`Choice::tied`]), and a design's
//! own pair is the first tied one whose resistor it places.
//!
//! Stock quantities: the report chooses the pair among the parts the
//! design's own resistors leave on the shelf ([`crate::filter::stock_left`]),
//! so a design that places the chosen pair's resistor as often as the
//! stock holds it gets another pair, or none. The pair per part above is
//! chosen with the whole shelf, so it costs no more than any design's
//! pair; the floor's "a pair always exists" is decided with every limited
//! resistor that a design within `search.max_parts` could use up
//! (`stock_qty` at most `max_parts`) left out, so no design can lose its
//! pair where the floor counts one.
//!
//! A pole in the last stage's feedback ([`FilterPairs::place_feedback`]):
//! where one pole cannot give the need's alias rejection within the droop
//! rule, no pair alone meets the rules, every part's floor above is zero,
//! and both modes give each design the capacitor across `rf` the rule
//! picks (a function of the design, so the walk's space holds the design
//! with it). A design with a feedback capacitor gets its pair chosen for
//! it in full (the pair shares the droop and alias rules with the pole),
//! as the report chooses it.

use crate::design::{Design, Resistor};
use crate::filter::{
    choose_preferring, choose_within, driver, driver_from, driver_of, resistors_used,
    stock_has_capacitors, Choice, Driver, FeedbackCorner, FilterParts,
};
use crate::mna::DcSolution;
use crate::need::Need;
use crate::shape::Role;
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built};
use std::cell::RefCell;
use std::collections::BTreeMap;
use std::rc::Rc;

/// The least the pair adds to any design whose output a given part
/// drives: cost (parts and the capacitor's BOM line) and parts.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct PairFloor {
    /// Least cost added, the capacitor's BOM line included.
    pub(crate) cost: f64,
    /// Least parts added (0 or 2).
    pub(crate) parts: usize,
}

/// The pairs of one search: floors per amplifier part, the exact pair per
/// part without a sampling input, and a cache of the pairs chosen per
/// noise gain with one.
pub(crate) struct FilterPairs<'s> {
    need: &'s Need,
    /// The user's stock (the report chooses the pair from it).
    stock: &'s Stock,
    /// Whether the ADC input samples (the noise gain then matters).
    sampling: bool,
    /// Per op-amp stock index: the floor, and the pair at `NG = 1` for a
    /// design placing none of its tied resistors.
    opamps: Vec<(PairFloor, Option<Rc<Choice>>)>,
    /// Per in-amp stock index: the same.
    inamps: Vec<(PairFloor, Option<Rc<Choice>>)>,
    /// Pairs chosen with a sampling input, by part and noise gain.
    cache: RefCell<BTreeMap<CacheKey, Option<Rc<Choice>>>>,
    /// Whether one pole cannot meet the need's alias rejection within the
    /// droop rule ([`crate::filter::needs_second_pole`]): only then does
    /// the search place a feedback capacitor ([`FilterPairs::place_feedback`]).
    second_pole: bool,
}

/// A pair chosen with a sampling input: in-amp or op-amp, its stock
/// index, and the noise gain's bits.
type CacheKey = (bool, usize, u64);

/// Most pairs kept in the cache (a sampling input makes one per noise
/// gain; past this they are chosen again, which is cheap).
const CACHE_ENTRIES: usize = 4096;

/// Unit prices of a pair (what `choose` minimises).
fn units(p: &FilterParts) -> f64 {
    p.series.unit_cost + p.shunt.unit_cost
}

impl<'s> FilterPairs<'s> {
    /// The pairs of a need and the user's stock (the op-amp and in-amp
    /// indices are those of the search's stock too: augmenting adds only
    /// resistors).
    pub(crate) fn new(need: &'s Need, stock: &'s Stock) -> FilterPairs<'s> {
        let sampling = need.adc.sample_capacitance.is_some();
        let line = need.search.bom_line_cost;
        // Limited resistors a design could use up (left out when deciding
        // whether a pair always exists).
        let max_parts = u32::try_from(need.search.max_parts).unwrap_or(u32::MAX);
        let exhaustible: BTreeMap<&str, u32> = stock
            .resistors
            .iter()
            .filter(|r| r.stock_qty.is_some_and(|q| q <= max_parts))
            .map(|r| (r.part_id.as_str(), u32::MAX))
            .collect();
        let floor_of = |kind: AmplifierKind| {
            let Some(part) = driver_of(need, stock, kind) else {
                return (PairFloor::default(), None);
            };
            let at = |noise_gain: f64, used: &BTreeMap<&str, u32>| {
                let d = Driver {
                    noise_gain,
                    ..part.clone()
                };
                choose_within(need, stock, &d, used)
            };
            let unit = Driver {
                noise_gain: 1.0,
                ..part.clone()
            };
            let first =
                choose_preferring(need, stock, &unit, &BTreeMap::new(), &|_| false).map(Rc::new);
            let worst_gain = if sampling { f64::INFINITY } else { 1.0 };
            let always = at(worst_gain, &exhaustible).is_some();
            let floor = match &first {
                Some(c) if always => PairFloor {
                    cost: units(&c.parts) + line,
                    parts: 2,
                },
                _ => PairFloor::default(),
            };
            (floor, first)
        };
        FilterPairs {
            need,
            stock,
            sampling,
            opamps: (0..stock.opamps.len())
                .map(|i| floor_of(AmplifierKind::OpAmp(i)))
                .collect(),
            inamps: (0..stock.inamps.len())
                .map(|i| floor_of(AmplifierKind::InAmp(i)))
                .collect(),
            cache: RefCell::new(BTreeMap::new()),
            second_pole: crate::filter::needs_second_pole(need) && stock_has_capacitors(stock),
        }
    }

    /// The user's stock, from which the report chooses the pair.
    pub(crate) fn stock(&self) -> &'s Stock {
        self.stock
    }

    /// Whether the rule places a capacitor across the last stage's `rf`
    /// ([`FilterPairs::place_feedback`]) for this need and stock.
    pub(crate) fn places_feedback(&self) -> bool {
        self.second_pole
    }

    /// The search's rule for a pole in a stage's feedback (docs/search.md,
    /// *A pole in the last stage's feedback*): where one pole cannot give
    /// the need's alias rejection within the droop rule
    /// ([`crate::filter::needs_second_pole`]), no design gets a pair alone,
    /// so a design whose last stage has an `rf` gets a capacitor across it:
    /// of the stocked capacitors with which a pair is chosen (the pair's
    /// rules then share the droop and the rejection with that pole,
    /// [`crate::filter::tau_limits_with`]), the one whose capacitor and pair
    /// cost least together (unit prices and the BOM lines they add; ties:
    /// the first in stock order). None serves otherwise (no capacitor is
    /// placed). `search_stock` is the stock the design is built from.
    pub(crate) fn place_feedback(&self, search_stock: &Stock, design: &mut Design) {
        if !self.second_pole {
            return;
        }
        let Some(last) = design.stages.last() else {
            return;
        };
        if last.feedback_capacitor.is_some() || !last.shape.required_roles().contains(&Role::Rf) {
            return;
        }
        let Some(rf) = last.resistors.get(&Role::Rf).cloned() else {
            return;
        };
        let Ok(built) = crate::topology::build(self.need, search_stock, design) else {
            return;
        };
        let mut netlist = built.netlist.clone();
        let low = self.need.sensor.signal_low.0;
        let Ok(dc) = DcSolution::solve(&mut netlist, built.vsense, [low, low], built.out) else {
            return;
        };
        let Some(base) = driver_from(self.need, self.stock, &built, &dc) else {
            return;
        };
        let used = resistors_used(&built);
        let pick = self.pick_feedback(&rf, &base, &used);
        if let (Some(ci), Some(stage)) = (pick, design.stages.last_mut()) {
            stage.feedback_capacitor = Some(self.stock.capacitors[ci].clone());
        }
    }

    /// The stock index of the capacitor [`FilterPairs::place_feedback`]
    /// places across `rf` for a stage driven as `base` in a design using
    /// the shelf as `used`, or none.
    fn pick_feedback(
        &self,
        rf: &Resistor,
        base: &Driver,
        used: &BTreeMap<&str, u32>,
    ) -> Option<usize> {
        let line = self.need.search.bom_line_cost;
        let mut best: Option<(f64, usize)> = None;
        for (ci, cap) in self.stock.capacitors.iter().enumerate() {
            let placed = used.get(cap.part_id.as_str()).copied().unwrap_or(0);
            if cap.stock_qty.is_some_and(|q| q <= placed) {
                continue;
            }
            let corner = FeedbackCorner::new(
                rf.ohms,
                rf.tolerance_pct,
                cap.value.0,
                cap.tolerance.0,
                base.noise_gain,
            );
            let d = Driver {
                feedback: vec![corner],
                ..base.clone()
            };
            let mut with_cap = used.clone();
            *with_cap.entry(cap.part_id.as_str()).or_default() += 1;
            let Some(pair) = choose_within(self.need, self.stock, &d, &with_cap) else {
                continue;
            };
            let mut lines = 1.0;
            if pair.shunt.part_id != cap.part_id {
                lines += 1.0;
            }
            if !used.contains_key(pair.series.part_id.as_str()) {
                lines += 1.0;
            }
            let cost = cap.unit_cost + units(&pair) + line * lines;
            if best.is_none_or(|(b, _)| cost < b - 1e-12) {
                best = Some((cost, ci));
            }
        }
        best.map(|(_, ci)| ci)
    }

    /// The floor of the part driving the output.
    pub(crate) fn floor(&self, kind: AmplifierKind) -> PairFloor {
        let entry = match kind {
            AmplifierKind::OpAmp(i) => self.opamps.get(i),
            AmplifierKind::InAmp(i) => self.inamps.get(i),
        };
        entry.map(|e| e.0).unwrap_or_default()
    }

    /// The series resistors the pair of every design whose output the
    /// op-amp `part` drives is taken from, as (relative tolerance, TCR per
    /// degC, ohms): the rows of the part's pairs of the least price
    /// ([`Choice::tied`]). `None` where a design may get another pair or
    /// none: a sampling input (the pair then depends on the noise gain),
    /// no pair for every design (a zero floor), or a resistor held in
    /// limited quantity (a design may use the tied one up).
    pub(crate) fn tied_series(&self, part: usize) -> Option<Vec<(f64, f64, f64)>> {
        if self.sampling || self.stock.resistors.iter().any(|r| r.stock_qty.is_some()) {
            return None;
        }
        let (floor, choice) = self.opamps.get(part)?;
        if floor.parts == 0 {
            return None;
        }
        let choice = choice.as_ref()?;
        Some(
            choice
                .tied
                .iter()
                .map(|p| {
                    let r = &p.series;
                    (
                        r.tolerance_pct.abs() / 100.0,
                        r.tcr_ppm_per_c.abs() * 1e-6,
                        r.ohms,
                    )
                })
                .collect(),
        )
    }

    /// The least floor over the parts that may drive (usable op-amps or
    /// in-amps).
    pub(crate) fn least_floor(&self, kinds: impl Iterator<Item = AmplifierKind>) -> PairFloor {
        kinds
            .map(|k| self.floor(k))
            .reduce(|a, b| PairFloor {
                cost: a.cost.min(b.cost),
                parts: a.parts.min(b.parts),
            })
            .unwrap_or_default()
    }

    /// The least the pair adds to a design of a structure whose output
    /// `kind` drives, given which resistor part numbers the design places
    /// (`placed`): exact without a sampling input when the design places
    /// none of the resistors of the part's pairs of the least price (the
    /// pair is then the part's own, both BOM lines paid), the floor
    /// otherwise (a design that places one gets a pair of that price
    /// sharing its line, or, having used it up, another pair or none).
    pub(crate) fn least_added(&self, kind: AmplifierKind, placed: &dyn Fn(&str) -> bool) -> f64 {
        let floor = self.floor(kind);
        if self.sampling {
            return floor.cost;
        }
        let pair = match kind {
            AmplifierKind::OpAmp(i) => self.opamps.get(i).and_then(|e| e.1.as_ref()),
            AmplifierKind::InAmp(i) => self.inamps.get(i).and_then(|e| e.1.as_ref()),
        };
        match pair {
            Some(c) if !c.tied.iter().any(|p| placed(&p.series.part_id)) => {
                units(&c.parts) + 2.0 * self.need.search.bom_line_cost
            }
            _ => floor.cost,
        }
    }

    /// The pair the report will give a built design (without a filter of
    /// its own), or `None` when it gets none: the pair chosen with the
    /// whole shelf when one more of its parts is left after the design's
    /// own resistors, else the pair chosen from what is left (as
    /// [`crate::filter::attach`] chooses it).
    pub(crate) fn pair_for(&self, built: &Built) -> Option<FilterParts> {
        let sampled = if self.sampling {
            Some(driver(self.need, self.stock, built)?)
        } else {
            None
        };
        self.pair_with(built, sampled)
    }

    /// Whether a built design (without a filter of its own) gets a pair
    /// when reported: [`FilterPairs::pair_for`] with the driver's noise
    /// gain from the design's own DC solution. The noise bound of a
    /// search candidate counts on the pair's pole only when it does
    /// (`analysis/noise.rs`): a design no pair fits is reported without
    /// one, its noise then through the stage poles alone.
    pub(crate) fn gets_pair(&self, built: &Built, dc: &DcSolution) -> bool {
        if built.filter.is_some() {
            return true;
        }
        if !built.feedback_capacitors.is_empty() {
            // The pair then shares its rules with the feedback poles: the
            // full choice, as the report makes it.
            return crate::filter::gets_pair(self.need, self.stock, built, dc);
        }
        if !self.sampling {
            // The part's own pair, without a clone, when one more of its
            // resistor is left on the shelf (else the full choice below).
            let Some(section) = built.sections.iter().find(|s| s.out == built.out) else {
                return false;
            };
            let entry = match section.kind {
                AmplifierKind::OpAmp(i) => self.opamps.get(i),
                AmplifierKind::InAmp(i) => self.inamps.get(i),
            };
            let Some(pair) = entry.and_then(|e| e.1.as_ref()).map(|c| &c.parts) else {
                return false;
            };
            let id = pair.series.part_id.as_str();
            let limit = self
                .stock
                .resistor_valued(id, pair.series.ohms)
                .and_then(|p| p.stock_qty);
            let placed = built
                .resistors
                .iter()
                .filter(|r| r.part.part_id == id)
                .count();
            if limit.is_none_or(|q| usize::try_from(q).is_ok_and(|q| q > placed)) {
                return true;
            }
        }
        let sampled = if self.sampling {
            match driver_from(self.need, self.stock, built, dc) {
                Some(d) => Some(d),
                None => return false,
            }
        } else {
            None
        };
        self.pair_with(built, sampled).is_some()
    }

    /// [`FilterPairs::pair_for`] with the driver of a sampling input given
    /// (`None` without one).
    fn pair_with(&self, built: &Built, sampled: Option<Driver>) -> Option<FilterParts> {
        if !built.feedback_capacitors.is_empty() {
            // The pair shares its rules with the feedback poles: chosen for
            // this design, as the report chooses it.
            let d = driver(self.need, self.stock, built)?;
            return choose_within(self.need, self.stock, &d, &resistors_used(built));
        }
        let choice = self.pair_whole_shelf(built, sampled.as_ref())?;
        let used = resistors_used(built);
        // A design placing the resistor of a pair of the least price gets
        // the first such pair whose resistor has one more on the shelf,
        // its line shared (the rule's tie, as the report takes it).
        let one_more = |p: &FilterParts| {
            let limit = self
                .stock
                .resistor_valued(&p.series.part_id, p.series.ohms)
                .and_then(|r| r.stock_qty);
            let n = used.get(p.series.part_id.as_str()).copied().unwrap_or(0);
            limit.is_none_or(|q| q > n)
        };
        let placed = |p: &FilterParts| used.get(p.series.part_id.as_str()).is_some_and(|&n| n > 0);
        let shares = choice.tied.iter().any(placed);
        if let Some(p) = choice.tied.iter().find(|p| placed(p) && one_more(p)) {
            return Some(p.clone());
        }
        if !shares && one_more(&choice.parts) {
            return Some(choice.parts.clone());
        }
        let section = built.sections.iter().find(|s| s.out == built.out)?;
        let d = match sampled {
            Some(d) => d,
            // Without a sampling input the noise gain enters no rule.
            None => driver_of(self.need, self.stock, section.kind)?,
        };
        choose_within(self.need, self.stock, &d, &used)
    }

    /// The pair a built design's driving part gets with the whole shelf
    /// (`sampled`: its driver, with a sampling input).
    fn pair_whole_shelf(&self, built: &Built, sampled: Option<&Driver>) -> Option<Rc<Choice>> {
        let section = built.sections.iter().find(|s| s.out == built.out)?;
        let (is_opamp, index) = match section.kind {
            AmplifierKind::OpAmp(i) => (true, i),
            AmplifierKind::InAmp(i) => (false, i),
        };
        if !self.sampling {
            let entry = if is_opamp {
                self.opamps.get(index)
            } else {
                self.inamps.get(index)
            };
            return entry.and_then(|e| e.1.clone());
        }
        let d = sampled?;
        let key = (is_opamp, index, d.noise_gain.to_bits());
        if let Some(hit) = self.cache.borrow().get(&key) {
            return hit.clone();
        }
        let pair =
            choose_preferring(self.need, self.stock, d, &BTreeMap::new(), &|_| false).map(Rc::new);
        let mut cache = self.cache.borrow_mut();
        if cache.len() < CACHE_ENTRIES {
            cache.insert(key, pair.clone());
        }
        pair
    }

    /// The pair's series resistor and capacitor for [`super::costing_with`].
    pub(crate) fn share(&self, built: &Built) -> Option<(Resistor, crate::stock::CapacitorPart)> {
        if built.filter.is_some() {
            return None;
        }
        self.pair_for(built).map(|p| (p.series, p.shunt))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The demo need with a sampling input, so the noise gain matters.
    fn sampling_need() -> (Need, Stock) {
        let need = crate::demo::NEED_TOML.replacen(
            "margin_pct = 2.0",
            "margin_pct = 2.0\nsample_capacitance_pf = 20\nacquisition_time_ns = 2000",
            1,
        );
        crate::api::load(need.as_bytes(), "need.toml", &[]).expect("the test need loads")
    }

    /// The floor's premise, checked against `choose` itself: the pair
    /// chosen at any noise gain costs at least the floor's unit prices
    /// (when the floor is not zero), and where the floor says a pair always
    /// exists, one is chosen at every noise gain.
    #[test]
    fn the_floor_is_below_the_pair_at_every_noise_gain() {
        for (need, stock) in [
            crate::api::load(crate::demo::NEED_TOML.as_bytes(), "demo", &[]).unwrap(),
            sampling_need(),
        ] {
            let pairs = FilterPairs::new(&need, &stock);
            let line = need.search.bom_line_cost;
            for (i, p) in stock.opamps.iter().enumerate() {
                let floor = pairs.floor(AmplifierKind::OpAmp(i));
                for ng in [1.0, 1.5, 3.0, 10.0, 100.0, 1e4, 1e6, 1e9] {
                    let d = Driver {
                        noise_gain: ng,
                        ..driver_of(&need, &stock, AmplifierKind::OpAmp(i)).unwrap()
                    };
                    match crate::filter::choose(&need, &stock, &d) {
                        Some(pair) => assert!(units(&pair) + line >= floor.cost - 1e-12),
                        None => assert_eq!(floor.parts, 0, "{} at NG {ng}", p.part_id),
                    }
                }
            }
        }
    }

    /// The pair the search counts is the pair the report attaches, for
    /// every amplifier of the demo stock driving a one-stage design.
    #[test]
    fn the_counted_pair_is_the_attached_pair() {
        for (need, stock) in [
            crate::api::load(crate::demo::NEED_TOML.as_bytes(), "demo", &[]).unwrap(),
            sampling_need(),
        ] {
            let pairs = FilterPairs::new(&need, &stock);
            let design = crate::design::parse_design(
                include_str!("../../../examples/demo-design.json").as_bytes(),
                "demo-design.json",
                &stock,
            )
            .unwrap();
            let built = crate::topology::build(&need, &stock, &design).unwrap();
            let counted = pairs.pair_for(&built);
            let (attached, _) = crate::filter::attach(&need, &stock, &built);
            let placed = attached.filter.map(|f| (f.series, f.shunt));
            assert_eq!(counted.map(|p| (p.series, p.shunt)), placed);
        }
    }

    /// Capacitors on the shelf, but none that any pair can use (1 fF: the
    /// `R C` the rules ask would need a resistor far beyond the stock), so
    /// the design is reported without a pair and its noise runs up to the
    /// stage pole. The search's noise bound must then not count on the
    /// pair's pole: the candidate's noise peak is at least the reported
    /// one (here equal: the same closed form), while a bound that assumed
    /// a pair would fall below it.
    #[test]
    fn without_a_pair_the_noise_bound_stays_above_the_reported_noise() {
        let (need, mut stock) =
            crate::api::load(crate::demo::NEED_TOML.as_bytes(), "demo", &[]).unwrap();
        let mut tiny = stock.capacitors[0].clone();
        tiny.value = crate::units::Farads(1e-15);
        stock.capacitors = vec![tiny];
        let design = crate::design::parse_design(
            include_str!("../../../examples/demo-design.json").as_bytes(),
            "demo-design.json",
            &stock,
        )
        .unwrap();
        let built = crate::topology::build(&need, &stock, &design).unwrap();
        let pairs = FilterPairs::new(&need, &stock);
        assert!(pairs.pair_for(&built).is_none(), "no pair fits");
        let reported = crate::analysis::Model::reported(&need, &stock, &design).unwrap();
        assert!(reported.built().filter.is_none());
        let gets_pair = |b: &Built, dc: &DcSolution| pairs.gets_pair(b, dc);
        let candidate =
            crate::analysis::Model::candidate(&need, &stock, &design, &gets_pair).unwrap();
        let (bound, real) = (candidate.noise_peak_v(), reported.noise_peak_v());
        assert!(bound >= real * (1.0 - 1e-12), "{bound} < {real}");
        let alone = crate::analysis::Model::new(&need, &stock, &design).unwrap();
        assert!((alone.noise_peak_v() / bound - 1.0).abs() < 1e-12);
        let assumed = |_: &Built, _: &DcSolution| true;
        let assuming = crate::analysis::Model::candidate(&need, &stock, &design, &assumed).unwrap();
        assert!(assuming.noise_peak_v() < real, "the case this guards");
    }
}
