//! Stage shapes: everything about one shape lives in its own module
//! (`shape/<name>.rs`): its resistor roles, the op-amp sections it uses,
//! its sign and noise gain, the offset networks it supports, its ideal
//! closed-form transfer, the value sets the search tries, its netlist
//! template and its schematic drawing. The rest of the crate asks the
//! shape through [`Shape`] (public facts) or the crate's `StageShape`
//! trait (search, netlist and drawing hooks).
//!
//! A new shape goes in one new module implementing `StageShape`, its
//! `mod` line, and one line in the `register_shapes!` list below (which
//! makes the [`Shape`] variant and ties it to the module).
//!
//! ```
//! use spanfit::shape::{Role, Shape};
//! assert_eq!(Shape::NonInverting.required_roles(), &[Role::Rf, Role::Rg]);
//! assert_eq!(Shape::Inverting.sign(), -1.0);
//! ```

mod difference;
mod instrumentation_discrete;
mod instrumentation_integrated;
mod inverting;
mod non_inverting;
mod non_inverting_summed;

use crate::design::Stage;
use crate::error::Result;
use crate::netlist::Node;
use crate::schematic::{Canvas, Sheet, StageOutline};
use crate::search::ratio::{ratio_pairs, BAND, PAIRS_PER_RATIO};
use crate::topology::Builder;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The role of a resistor in its stage. Serialised (design files, the
/// report) by its name: `rf`, `o.top` (offset divider), `b.top` (bias divider), ... Variants are declared in
/// the order of their names, so maps keyed by role list them as before.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum Role {
    /// Bias divider, tap to ground.
    #[serde(rename = "b.bottom")]
    BiasBottom,
    /// Bias divider, source to tap.
    #[serde(rename = "b.top")]
    BiasTop,
    /// Offset divider, tap to ground.
    #[serde(rename = "o.bottom")]
    OffsetBottom,
    /// Offset divider, source to tap.
    #[serde(rename = "o.top")]
    OffsetTop,
    /// Difference network: inverting input resistor.
    #[serde(rename = "r1")]
    R1,
    /// Difference network: feedback resistor.
    #[serde(rename = "r2")]
    R2,
    /// Difference network: non-inverting input resistor.
    #[serde(rename = "r3")]
    R3,
    /// Difference network: REF-side resistor.
    #[serde(rename = "r4")]
    R4,
    /// Feedback resistor.
    #[serde(rename = "rf")]
    Rf,
    /// Instrumentation input stage, + side feedback.
    #[serde(rename = "rf1")]
    Rf1,
    /// Instrumentation input stage, - side feedback.
    #[serde(rename = "rf2")]
    Rf2,
    /// Gain-setting resistor to the offset node (or between the inputs of
    /// an instrumentation stage).
    #[serde(rename = "rg")]
    Rg,
    /// Input resistor.
    #[serde(rename = "ri")]
    Ri,
    /// Offset resistor from the source.
    #[serde(rename = "ro")]
    Ro,
    /// + input resistor to ground of a summed stage.
    #[serde(rename = "rp")]
    Rp,
}

impl Role {
    /// Every role.
    pub const ALL: [Role; 15] = [
        Role::BiasBottom,
        Role::BiasTop,
        Role::OffsetBottom,
        Role::OffsetTop,
        Role::R1,
        Role::R2,
        Role::R3,
        Role::R4,
        Role::Rf,
        Role::Rf1,
        Role::Rf2,
        Role::Rg,
        Role::Ri,
        Role::Ro,
        Role::Rp,
    ];

    /// The name in files and reports.
    pub fn name(self) -> &'static str {
        match self {
            Role::BiasBottom => "b.bottom",
            Role::BiasTop => "b.top",
            Role::OffsetBottom => "o.bottom",
            Role::OffsetTop => "o.top",
            Role::R1 => "r1",
            Role::R2 => "r2",
            Role::R3 => "r3",
            Role::R4 => "r4",
            Role::Rf => "rf",
            Role::Rf1 => "rf1",
            Role::Rf2 => "rf2",
            Role::Rg => "rg",
            Role::Ri => "ri",
            Role::Ro => "ro",
            Role::Rp => "rp",
        }
    }

    /// The role of a name, if any.
    pub fn from_name(name: &str) -> Option<Role> {
        Role::ALL.into_iter().find(|r| r.name() == name)
    }

    /// Whether the role is a divider resistor of an offset or bias network.
    pub fn is_divider(self) -> bool {
        matches!(
            self,
            Role::BiasBottom | Role::BiasTop | Role::OffsetBottom | Role::OffsetTop
        )
    }
}

impl std::fmt::Display for Role {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// A role equals its name as files write it (`Role::Rf == "rf"`).
impl PartialEq<String> for Role {
    fn eq(&self, other: &String) -> bool {
        self.name() == other
    }
}

impl std::str::FromStr for Role {
    type Err = String;
    fn from_str(s: &str) -> std::result::Result<Role, String> {
        Role::from_name(s).ok_or_else(|| format!("no resistor role `{s}`"))
    }
}

/// How the offset of an offset-carrying stage is made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OffsetNetwork {
    /// Non-inverting: unbuffered divider at the bottom of the gain leg.
    GainLeg,
    /// Summed at the + input through `ro` straight from the source.
    Summed,
    /// Inverting: `ro` from the source into the summing node.
    InvertingRo,
    /// Inverting: unbuffered divider biasing the + input.
    InvertingBias,
    /// REF node (difference, instrumentation) from a buffered divider.
    RefDivider,
}

impl OffsetNetwork {
    /// Whether the network places a divider (two resistors).
    pub fn has_divider(self) -> bool {
        matches!(
            self,
            OffsetNetwork::GainLeg | OffsetNetwork::InvertingBias | OffsetNetwork::RefDivider
        )
    }

    /// Resistors the network adds to its stage.
    pub fn extra_resistors(self) -> usize {
        match self {
            OffsetNetwork::GainLeg | OffsetNetwork::InvertingBias | OffsetNetwork::RefDivider => 2,
            OffsetNetwork::Summed => 0,
            OffsetNetwork::InvertingRo => 1,
        }
    }

    /// Whether the divider's tap is followed by an op-amp buffer.
    pub fn buffered(self) -> bool {
        self == OffsetNetwork::RefDivider
    }
}

/// The volts a stage's closed form sees from its offset network, and the
/// Thevenin resistance in series with them: the source itself, or the tap
/// of a divider `(top, bottom)` ohms (in series only where the divider is
/// unbuffered in the gain leg).
pub(crate) fn offset_drive(
    network: Option<OffsetNetwork>,
    source_volts: f64,
    divider: Option<(f64, f64)>,
) -> (f64, f64) {
    match (network, divider) {
        (Some(OffsetNetwork::GainLeg), Some((top, bottom))) => (
            source_volts * bottom / (top + bottom),
            top * bottom / (top + bottom),
        ),
        (Some(OffsetNetwork::InvertingBias | OffsetNetwork::RefDivider), Some((top, bottom))) => {
            (source_volts * bottom / (top + bottom), 0.0)
        }
        (Some(_), None) => (source_volts, 0.0),
        _ => (0.0, 0.0),
    }
}

/// What the closed form of a stage is evaluated with (ideal op-amps).
pub(crate) struct StageDrive<'d> {
    /// Ohms by role.
    pub(crate) ohms: &'d dyn Fn(Role) -> f64,
    /// The offset network, if the stage has one.
    pub(crate) network: Option<OffsetNetwork>,
    /// The offset source (or its divider's Thevenin) volts.
    pub(crate) offset_volts: f64,
    /// Thevenin resistance in series where the divider is unbuffered.
    pub(crate) thevenin_ohms: f64,
    /// The sensor's resistance on the (+, -) legs (first stage only).
    pub(crate) sensor_ohms: (f64, f64),
    /// An integrated in-amp's gain constant `Rk` (gain `1 + Rk/rg`).
    pub(crate) inamp_gain_ohms: f64,
}

/// Roles to value indices, with an optional divider (top, bottom) in the
/// divider grade.
pub(crate) type RoleValues = (BTreeMap<Role, usize>, Option<(usize, usize)>);

/// Roles of a stage that one matched network package may fill: the roles
/// of `low` take one value, those of `high` another (or the same), each
/// from its own element of the package.
#[derive(Debug, Clone, Copy)]
pub(crate) struct MatchedRoles {
    /// The first pair (one value).
    pub(crate) low: [Role; 2],
    /// The second pair (one value).
    pub(crate) high: [Role; 2],
}

impl MatchedRoles {
    /// The four roles, `low` then `high`.
    pub(crate) fn roles(&self) -> [Role; 4] {
        [self.low[0], self.low[1], self.high[0], self.high[1]]
    }
}

/// What a shape's value-set generator is asked for one stage.
pub(crate) struct ValueSetRequest<'r> {
    /// The stage grade's sorted values, ohms.
    pub(crate) values: &'r [f64],
    /// The divider grade's sorted values, ohms.
    pub(crate) divider_values: &'r [f64],
    /// Target stage gain.
    pub(crate) gain: f64,
    /// Target stage output offset, volts.
    pub(crate) offset: f64,
    /// The offset network, if the stage has one.
    pub(crate) network: Option<OffsetNetwork>,
    /// The offset source volts (0 without one).
    pub(crate) source_volts: f64,
    /// A summed stage whose `ro` returns to ground: the band `[lo, hi]`
    /// of its noise gain `1 + rf/rg` over its signal gain (the inverse of
    /// the attenuation at its + input). `None` otherwise.
    pub(crate) ground_band: Option<[f64; 2]>,
    /// The sensor's resistance on the (+, -) legs (first stage only).
    pub(crate) sensor_ohms: (f64, f64),
    /// An integrated in-amp's gain constant `Rk`.
    pub(crate) inamp_gain_ohms: f64,
    /// The common mode at the stage's inputs (the sensor's, first stage
    /// of a differential sensor; 0 otherwise).
    pub(crate) common_mode: f64,
}

impl ValueSetRequest<'_> {
    /// Divider (top, bottom) candidates for a tap voltage.
    pub(crate) fn dividers(&self, tap: f64) -> Vec<(usize, usize)> {
        let volts = self.source_volts;
        if !(tap > 0.0 && tap < volts) {
            return Vec::new();
        }
        let fraction = tap / volts;
        let ratio = fraction / (1.0 - fraction);
        // Keep the smaller resistor of the pair inside the band.
        if ratio < 1.0 {
            ratio_pairs(self.divider_values, 1.0 / ratio, BAND, PAIRS_PER_RATIO)
                .into_iter()
                .map(|(bottom, top, _)| (top, bottom))
                .collect()
        } else {
            ratio_pairs(self.divider_values, ratio, BAND, PAIRS_PER_RATIO)
                .into_iter()
                .map(|(top, bottom, _)| (top, bottom))
                .collect()
        }
    }

    /// Best pairs (base, partner) of the stage grade with `partner/base`
    /// near `ratio`.
    pub(crate) fn pairs(&self, ratio: f64) -> Vec<(usize, usize, f64)> {
        ratio_pairs(self.values, ratio, BAND, PAIRS_PER_RATIO)
    }

    /// The REF dividers of a REF-pin stage: each network is taken with
    /// every divider for its offset, or alone when the REF pin is grounded.
    pub(crate) fn ref_dividers(&self) -> Option<Vec<(usize, usize)>> {
        (self.network == Some(OffsetNetwork::RefDivider)).then(|| self.dividers(self.offset))
    }
}

/// The cheaper grade a first stage's input resistors may take beside the
/// sensor's resistance ([`StageShape::carried_sets`]).
pub(crate) struct CarriedGrade<'r> {
    /// Its sorted values, ohms.
    pub(crate) values: &'r [f64],
    /// Its tolerance as a fraction (ranks the pairs: a small resistor's
    /// tolerance weighs by its share of the input resistance).
    pub(crate) tolerance: f64,
}

/// Push a REF-pin stage's network with each REF divider (or alone).
pub(crate) fn push_with_ref(
    out: &mut Vec<RoleValues>,
    roles: BTreeMap<Role, usize>,
    ref_dividers: &Option<Vec<(usize, usize)>>,
) {
    match ref_dividers {
        Some(dividers) => {
            for &d in dividers {
                out.push((roles.clone(), Some(d)));
            }
        }
        None => out.push((roles, None)),
    }
}

/// A role map from (role, value index) pairs.
pub(crate) fn roles(items: &[(Role, usize)]) -> BTreeMap<Role, usize> {
    items.iter().copied().collect()
}

/// The nodes a stage's netlist template connects to.
#[derive(Debug, Clone, Copy)]
pub(crate) struct StageNodes {
    /// + input (or the single input).
    pub(crate) plus: Node,
    /// - input (ground for a single-ended stage).
    pub(crate) minus: Node,
    /// The stage output.
    pub(crate) out: Node,
}

/// Everything about one stage shape.
pub(crate) trait StageShape: Sync {
    /// Name in files and reports (kebab-case, as serde writes [`Shape`]).
    fn name(&self) -> &'static str;
    /// The topology family of the need's `topologies` list.
    fn topology(&self) -> crate::need::Topology;
    /// Resistor roles the shape requires (offset network roles apart).
    fn required_roles(&self) -> &'static [Role];
    /// Roles the shape may also have.
    fn optional_roles(&self) -> &'static [Role] {
        &[]
    }
    /// Op-amp sections the stage uses (an integrated part counts none).
    fn sections(&self) -> usize {
        1
    }
    /// Whether the stage takes a differential input.
    fn differential_input(&self) -> bool {
        false
    }
    /// Whether the amplifier is an integrated in-amp part.
    fn integrated(&self) -> bool {
        false
    }
    /// Sign of the stage gain.
    fn sign(&self) -> f64 {
        1.0
    }
    /// Noise gain (gain from the amplifier's input offset to the output)
    /// at a stage gain of magnitude `gain`.
    fn noise_gain(&self, gain: f64) -> f64 {
        gain.max(1.0)
    }
    /// Whether the search may use the shape for a stage: the first stage
    /// sees the sensor, differential or not.
    fn may_take_stage(&self, first: bool, differential_sensor: bool) -> bool;
    /// The offset network for a stage output offset `offset` (volts), if
    /// the shape can make one of that sign.
    fn offset_network(&self, offset: f64) -> Option<OffsetNetwork>;
    /// Ideal stage output for inputs `(plus, minus)`.
    fn ideal_output(&self, drive: &StageDrive<'_>, plus: f64, minus: f64) -> f64;
    /// The value sets the search tries for a stage gain and offset.
    fn value_sets(&self, request: &ValueSetRequest<'_>) -> Vec<RoleValues>;
    /// Whether a first stage of the shape, its offset node grounded, can
    /// make an output offset from the sensor's common mode by a deliberate
    /// mismatch of its ratios (its value sets then aim at that offset
    /// where [`ValueSetRequest::common_mode`] is not 0 and no offset
    /// network is planned).
    fn common_mode_offset(&self) -> bool {
        false
    }
    /// The roles in series with the sensor's own resistance when the
    /// stage is first (its input resistors), which the search may fill
    /// with small values of a cheaper grade ([`StageShape::carried_sets`]).
    fn carried_roles(&self) -> &'static [Role] {
        &[]
    }
    /// Value sets whose [`StageShape::carried_roles`] take small values
    /// of a cheaper grade (`carried`) beside the sensor's resistance: the
    /// sensor's resistance, which the need states, then carries most of
    /// the input resistance, and the input resistors' own tolerance and
    /// drift weigh only by their share `r / (r + source)` of it. The
    /// carried roles' indices are into `carried.values`, the others into
    /// `request.values`. Empty for a shape without such roles or a stage
    /// without a sensor resistance in series.
    fn carried_sets(
        &self,
        _request: &ValueSetRequest<'_>,
        _carried: &CarriedGrade<'_>,
    ) -> Vec<RoleValues> {
        Vec::new()
    }
    /// The roles whose ratios must match, which the search may take from
    /// the elements of one matched network package: two pairs of roles,
    /// each pair of one value (`None` for a shape without such roles).
    fn matched_roles(&self) -> Option<MatchedRoles> {
        None
    }
    /// Place the stage's elements in the netlist.
    fn build(
        &self,
        builder: &mut Builder<'_>,
        index: usize,
        stage: &Stage,
        nodes: StageNodes,
    ) -> Result<()>;
    /// Draw the stage at `x0` on the signal line; returns its outline.
    fn draw(
        &self,
        canvas: &mut Canvas,
        sheet: &Sheet<'_>,
        index: usize,
        x0: f64,
        out: Node,
    ) -> StageOutline;
}

/// The shapes: `Variant => module::Unit`, one line each (with its doc);
/// the line makes the enum variant and ties it to its behaviour. (The
/// `mod` lines stay outside the macro so rustfmt reaches the modules.)
macro_rules! register_shapes {
    ($($(#[$doc:meta])* $variant:ident => $module:ident :: $unit:ident,)*) => {
        /// The shape of one stage (its netlist template). Serialised by
        /// its kebab-case name.
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
        #[serde(rename_all = "kebab-case")]
        pub enum Shape {
            $($(#[$doc])* $variant,)*
        }

        impl Shape {
            /// Every shape, in registration order (the order the search
            /// tries them).
            pub const ALL: &'static [Shape] = &[$(Shape::$variant,)*];

            /// The shape's behaviour.
            pub(crate) fn behaviour(self) -> &'static dyn StageShape {
                match self {
                    $(Shape::$variant => &$module::$unit,)*
                }
            }
        }
    };
}

register_shapes! {
    /// Gain `1 + rf/rg`, offset injected at the bottom of `rg`.
    NonInverting => non_inverting::NonInverting,
    /// Input through `ri` and offset through `ro` summed at the + input,
    /// optional `rp` to ground, then gain `1 + rf/rg`.
    NonInvertingSummed => non_inverting_summed::NonInvertingSummed,
    /// Summing inverting stage: `-rf (v/ri + vo/ro)` plus the + bias.
    Inverting => inverting::Inverting,
    /// Four-resistor difference amplifier, `r2/r1` with `r4/r3 = r2/r1`.
    Difference => difference::Difference,
    /// Three op-amp instrumentation amplifier: `(1 + (rf1 + rf2)/rg) * r2/r1`.
    InstrumentationDiscrete => instrumentation_discrete::InstrumentationDiscrete,
    /// Integrated in-amp part, gain `1 + Rk/rg`.
    InstrumentationIntegrated => instrumentation_integrated::InstrumentationIntegrated,
}

impl Shape {
    /// Name in files and reports.
    pub fn name(self) -> &'static str {
        self.behaviour().name()
    }

    /// The topology family of this shape.
    pub fn topology(self) -> crate::need::Topology {
        self.behaviour().topology()
    }

    /// Resistor roles the shape requires (offset network roles apart).
    pub fn required_roles(self) -> &'static [Role] {
        self.behaviour().required_roles()
    }

    /// Roles the shape may also have.
    pub fn optional_roles(self) -> &'static [Role] {
        self.behaviour().optional_roles()
    }

    /// Op-amp sections the stage uses (an integrated part counts none).
    pub fn sections(self) -> usize {
        self.behaviour().sections()
    }

    /// Whether the stage takes a differential input.
    pub fn differential_input(self) -> bool {
        self.behaviour().differential_input()
    }

    /// Whether the amplifier is an integrated in-amp part (otherwise
    /// op-amp sections).
    pub fn integrated(self) -> bool {
        self.behaviour().integrated()
    }

    /// Sign of the stage gain.
    pub fn sign(self) -> f64 {
        self.behaviour().sign()
    }

    /// Noise gain at a stage gain of magnitude `gain`.
    pub fn noise_gain(self, gain: f64) -> f64 {
        self.behaviour().noise_gain(gain)
    }

    /// The offset network for a stage output offset (volts), if any.
    pub fn offset_network(self, offset: f64) -> Option<OffsetNetwork> {
        self.behaviour().offset_network(offset)
    }

    /// Resistors the shape places besides its offset network.
    pub fn resistor_count(self) -> usize {
        self.required_roles().len()
    }
}

#[cfg(test)]
mod tests;

#[cfg(test)]
mod names {
    use super::*;

    #[test]
    fn names_match_serde_and_roles_round_trip() {
        for &shape in Shape::ALL {
            let json = serde_json::to_string(&shape).unwrap_or_default();
            assert_eq!(json, format!("\"{}\"", shape.name()));
        }
        for role in Role::ALL {
            assert_eq!(Role::from_name(role.name()), Some(role));
            let json = serde_json::to_string(&role).unwrap_or_default();
            assert_eq!(json, format!("\"{}\"", role.name()));
        }
        // Declared in the order of their names.
        let mut names: Vec<&str> = Role::ALL.iter().map(|r| r.name()).collect();
        names.sort_unstable();
        let declared: Vec<&str> = Role::ALL.iter().map(|r| r.name()).collect();
        assert_eq!(names, declared);
    }
}
