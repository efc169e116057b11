//! A design: the stages of a front end with their amplifier parts,
//! resistor values and offset networks. This is what the optimiser
//! produces, what `spanfit analyze --design` reads, and what
//! [`crate::topology`] turns into a netlist.
//!
//! The file format (JSON, `"format": "spanfit-design-1"`) is documented in
//! `examples/README.md`; a resistor is named by a stock part id, or given
//! inline as `{"ohms": .., "tolerance_pct": .., "tcr_ppm_per_c": ..}`, or
//! as an element of a matched network package
//! `{"network": "NET-x", "element": 2, "package": 1}`.

use crate::error::{Error, Location, Result};
use crate::need_parse::{decode_utf8, listed, short_number, shown};
use crate::stock::{generic_resistor_by_id, CapacitorPart, NetworkPart, ResistorPart, Stock};
use crate::stock_parse::{MAX_ID_CHARS, MAX_TCR_PPM_PER_C, MAX_UNIT_COST, OHMS_RANGE};
use crate::units::{Farads, Percent, PpmPerC, Volts};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

pub use crate::shape::{Role, Shape};

/// One resistor as placed: value, grade and where it comes from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Resistor {
    /// Part number (`"custom"` for an inline value).
    pub part_id: String,
    /// Nominal value.
    pub ohms: f64,
    /// Tolerance in %.
    pub tolerance_pct: f64,
    /// TCR in ppm/degC.
    pub tcr_ppm_per_c: f64,
    /// Price of one (0 for an element of a network: its package is
    /// priced once, [`NetworkElement::package_cost`]).
    pub unit_cost: f64,
    /// The network package this resistor is an element of, if any; its
    /// `tolerance_pct` and `tcr_ppm_per_c` are then the network's absolute
    /// figures.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub network: Option<Box<NetworkElement>>,
}

/// Where a resistor sits in a matched network: which package of which
/// part, which element, and the figures that hold between elements of one
/// package.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetworkElement {
    /// Network part id from `networks.csv`.
    pub part_id: String,
    /// Package number inside the design (1, 2, ...): elements with the
    /// same part id and package number share one package.
    pub package: u32,
    /// Element number in the package (1-based).
    pub element: u32,
    /// Ratio tolerance between elements of the package (+/- %).
    pub ratio_tolerance_pct: f64,
    /// TCR tracking between elements of the package (+/- ppm/degC).
    pub tracking_tcr_ppm_per_c: f64,
    /// Price of the whole package.
    pub package_cost: f64,
}

impl From<&ResistorPart> for Resistor {
    fn from(p: &ResistorPart) -> Self {
        Resistor {
            part_id: p.part_id.clone(),
            ohms: p.value.0,
            tolerance_pct: p.tolerance.0,
            tcr_ppm_per_c: p.tcr.0,
            unit_cost: p.unit_cost,
            network: None,
        }
    }
}

impl Resistor {
    /// Element `element` (1-based) of package `package` of a network part;
    /// `None` when the part has no such element.
    pub fn network_element(part: &NetworkPart, package: u32, element: u32) -> Option<Resistor> {
        let index = usize::try_from(element).ok()?.checked_sub(1)?;
        let ohms = part.values.get(index)?.0;
        Some(Resistor {
            part_id: part.part_id.clone(),
            ohms,
            tolerance_pct: part.abs_tolerance.0,
            tcr_ppm_per_c: part.abs_tcr.0,
            unit_cost: 0.0,
            network: Some(Box::new(NetworkElement {
                part_id: part.part_id.clone(),
                package,
                element,
                ratio_tolerance_pct: part.ratio_tolerance.0,
                tracking_tcr_ppm_per_c: part.tracking_tcr.0,
                package_cost: part.unit_cost,
            })),
        })
    }
}

/// One network package placed in a design: its part, package number,
/// price, and the positions (in the order given) of its elements.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkPackage {
    /// Network part id.
    pub part_id: String,
    /// Package number inside the design.
    pub package: u32,
    /// Price of the package.
    pub unit_cost: f64,
    /// Positions of its elements among the resistors given.
    pub elements: Vec<usize>,
}

/// The network packages among `resistors`, in order of first appearance:
/// each package is one part on the board and on the BOM, however many of
/// its elements are used.
pub fn network_packages<'a>(
    resistors: impl IntoIterator<Item = &'a Resistor>,
) -> Vec<NetworkPackage> {
    let mut out: Vec<NetworkPackage> = Vec::new();
    for (i, r) in resistors.into_iter().enumerate() {
        let Some(n) = &r.network else { continue };
        match out
            .iter_mut()
            .find(|p| p.part_id == n.part_id && p.package == n.package)
        {
            Some(p) => p.elements.push(i),
            None => out.push(NetworkPackage {
                part_id: n.part_id.clone(),
                package: n.package,
                unit_cost: n.package_cost,
                elements: vec![i],
            }),
        }
    }
    out
}

/// What supplies an offset or bias voltage.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Source {
    /// A voltage reference part from stock, by part id.
    Reference(String),
    /// The positive supply rail.
    Supply,
}

/// How a stage's offset (or bias) node is driven.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Injection {
    /// Tied to ground.
    Ground,
    /// Driven straight from the source.
    Direct {
        /// The source.
        source: Source,
    },
    /// A divider `top` from the source to the tap, `bottom` from the tap to
    /// ground; buffered by a follower section of the stage's op-amp part,
    /// or unbuffered with its Thevenin resistance in the circuit.
    Divider {
        /// The source.
        source: Source,
        /// Source to tap.
        top: Resistor,
        /// Tap to ground.
        bottom: Resistor,
        /// Buffered by an op-amp follower.
        buffered: bool,
    },
}

impl Injection {
    /// The source driving it, if any.
    pub fn source(&self) -> Option<&Source> {
        match self {
            Injection::Ground => None,
            Injection::Direct { source } | Injection::Divider { source, .. } => Some(source),
        }
    }

    /// Whether a follower section is used.
    pub fn buffered(&self) -> bool {
        matches!(self, Injection::Divider { buffered: true, .. })
    }
}

/// One stage.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Stage {
    /// Netlist template.
    pub shape: Shape,
    /// Op-amp part id (or in-amp part id for an integrated stage).
    pub amplifier: String,
    /// Resistors by role (see [`Shape::required_roles`]).
    pub resistors: BTreeMap<Role, Resistor>,
    /// The offset node: bottom of `rg` (non-inverting), far end of `ro`
    /// (summed, inverting), far end of `r4` or the REF pin (difference,
    /// instrumentation).
    pub offset: Injection,
    /// The + input bias of an inverting stage (ground on split supplies).
    pub bias: Injection,
    /// Op-amp part for the follower of a buffered divider, where the
    /// stage's own amplifier is not an op-amp (an integrated in-amp);
    /// op-amp stages use a section of their own part.
    pub buffer: Option<String>,
    /// A capacitor across the stage's feedback resistor `rf` (a pole in
    /// the stage's feedback; shapes with an `rf` role only). Designators
    /// `C2`, `C3`, ... in stage order (`C1` is the filter at the ADC input).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub feedback_capacitor: Option<CapacitorPart>,
}

impl Stage {
    /// The resistor of a role; an error naming the stage and role if absent.
    pub fn r(&self, role: Role) -> Result<&Resistor> {
        self.resistors.get(&role).ok_or_else(|| {
            Error::design(format!(
                "a {} stage needs a resistor `{role}`",
                self.shape.name()
            ))
        })
    }

    /// Ohms of a role (0 when absent; callers check roles first).
    pub fn ohms(&self, role: Role) -> f64 {
        self.resistors.get(&role).map(|r| r.ohms).unwrap_or(0.0)
    }
}

/// A whole front end: stages from the sensor to the ADC.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Design {
    /// Stages in signal order.
    pub stages: Vec<Stage>,
}

// ---------------------------------------------------------------------
// The design file.

/// Largest design file accepted, in bytes (1 MiB).
const MAX_DESIGN_BYTES: usize = 1 << 20;

/// The keys an inline resistor object may hold.
const INLINE_KEYS: [&str; 5] = [
    "ohms",
    "tolerance_pct",
    "tcr_ppm_per_c",
    "unit_cost",
    "part_id",
];

/// The keys of a network element entry.
const NETWORK_KEYS: [&str; 3] = ["network", "element", "package"];

/// What a resistor entry may be, for messages.
const RESISTOR_FORMS: &str = "a stock part id in quotes (\"HR-F1-10K0\"), an inline \
     resistor {\"ohms\": .., \"tolerance_pct\": .., \"tcr_ppm_per_c\": .., and optionally \
     \"unit_cost\": .. and \"part_id\": ..}, or a network element {\"network\": \"NET-x\", \
     \"element\": 1, and optionally \"package\": 1}";

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDesign {
    format: Option<String>,
    stages: Vec<RawStage>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawStage {
    shape: Shape,
    amplifier: String,
    #[serde(default)]
    resistors: BTreeMap<String, serde_json::Value>,
    #[serde(default)]
    offset: Option<RawInjection>,
    #[serde(default)]
    bias: Option<RawInjection>,
    #[serde(default)]
    buffer: Option<String>,
    #[serde(default)]
    feedback_capacitor: Option<serde_json::Value>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawInjection {
    kind: String,
    #[serde(default)]
    source: Option<String>,
    #[serde(default)]
    top: Option<serde_json::Value>,
    #[serde(default)]
    bottom: Option<serde_json::Value>,
    #[serde(default)]
    buffered: bool,
}

/// The source written in a design file: `"supply"` or a reference part id.
fn parse_source(text: &str, stock: &Stock, at: &Location) -> Result<Source> {
    if text == "supply" {
        return Ok(Source::Supply);
    }
    if stock.reference(text).is_some() {
        return Ok(Source::Reference(text.to_string()));
    }
    Err(Error::input(
        at.clone(),
        format!(
            "expected `supply` or a reference part id from stock, found `{}`",
            shown(text)
        ),
    ))
}

/// A stock resistor by id: a row of the stock, or a generic series part
/// (`GEN-E96-4K99`, what a search with `stock.only = false` places).
fn stock_resistor(id: &str, stock: &Stock) -> Option<Resistor> {
    match stock.resistor(id) {
        Some(p) => Some(Resistor::from(p)),
        None => generic_resistor_by_id(id).map(|p| Resistor::from(&p)),
    }
}

/// The JSON kind of a value, for "found ..." in messages.
fn json_kind(v: &serde_json::Value) -> String {
    use serde_json::Value;
    match v {
        Value::Null => "null".into(),
        Value::Bool(b) => format!("the boolean `{b}`"),
        Value::Number(n) => format!("the number `{n}`"),
        Value::String(s) => format!("the text `{}`", shown(s)),
        Value::Array(_) => "a list".into(),
        Value::Object(_) => "an object".into(),
    }
}

/// One number of an inline resistor, inside `[min, max]` (`max_open`:
/// below `max`).
fn inline_number(
    map: &serde_json::Map<String, serde_json::Value>,
    name: &str,
    range: (f64, f64, bool),
    default: Option<f64>,
    at: &Location,
) -> Result<f64> {
    let (min, max, max_open) = range;
    let rule = format!(
        "a number from {} to {}{}",
        short_number(min),
        if max_open { "less than " } else { "" },
        short_number(max)
    );
    let mut at = at.clone();
    at.key = at.key.map(|k| format!("{k}.{name}"));
    let value = match (map.get(name), default) {
        (Some(serde_json::Value::Number(n)), _) => n.as_f64(),
        (Some(other), _) => {
            return Err(Error::input(
                at,
                format!("expected {rule}, found {}", json_kind(other)),
            ))
        }
        (None, Some(d)) => Some(d),
        (None, None) => {
            return Err(Error::input(
                at,
                format!("an inline resistor needs `{name}`: {rule}"),
            ))
        }
    };
    match value {
        Some(v) if v >= min && (v < max || (!max_open && v == max)) => Ok(v),
        _ => Err(Error::input(
            at,
            format!(
                "expected {rule}, found {}",
                value.map_or_else(|| "a number out of range".to_string(), short_number)
            ),
        )),
    }
}

/// A resistor entry of a design file: a stock (or generic) part id, or an
/// inline object (see [`RESISTOR_FORMS`]). An inline `part_id` that is also
/// a stock id must carry that part's values.
// Long because each form of a resistor entry (stock id, generic id, inline
// object with or without an id of its own) has its own checks and message.
fn resolve_resistor(raw: &serde_json::Value, stock: &Stock, at: &Location) -> Result<Resistor> {
    let map = match raw {
        serde_json::Value::String(id) => {
            return stock_resistor(id, stock).ok_or_else(|| {
                Error::input(
                    at.clone(),
                    format!(
                        "resistor part `{}` is not in stock; expected {RESISTOR_FORMS}",
                        shown(id)
                    ),
                )
            })
        }
        serde_json::Value::Object(map) if map.contains_key("network") => {
            return network_resistor(map, stock, at)
        }
        serde_json::Value::Object(map) => map,
        other => {
            return Err(Error::input(
                at.clone(),
                format!("expected {RESISTOR_FORMS}; found {}", json_kind(other)),
            ))
        }
    };
    let unknown: Vec<&String> = map
        .keys()
        .filter(|k| !INLINE_KEYS.contains(&k.as_str()))
        .collect();
    if !unknown.is_empty() {
        return Err(Error::input(
            at.clone(),
            format!(
                "unknown key{} {} in an inline resistor; its keys are: {}",
                if unknown.len() > 1 { "s" } else { "" },
                listed(&unknown),
                INLINE_KEYS.join(", ")
            ),
        ));
    }
    let ohms = inline_number(map, "ohms", (OHMS_RANGE.0, OHMS_RANGE.1, false), None, at)?;
    let tolerance_pct = inline_number(map, "tolerance_pct", (0.0, 100.0, true), None, at)?;
    let tcr_ppm_per_c = inline_number(
        map,
        "tcr_ppm_per_c",
        (0.0, MAX_TCR_PPM_PER_C, false),
        None,
        at,
    )?;
    let unit_cost = inline_number(map, "unit_cost", (0.0, MAX_UNIT_COST, false), Some(0.0), at)?;
    let part_id = match map.get("part_id") {
        None => "custom".to_string(),
        Some(serde_json::Value::String(id)) => {
            let count = id.chars().count();
            if id.trim().is_empty() || count > MAX_ID_CHARS || id.chars().any(char::is_control) {
                let mut at = at.clone();
                at.key = at.key.map(|k| format!("{k}.part_id"));
                return Err(Error::input(
                    at,
                    format!(
                        "expected a part id of 1 to {MAX_ID_CHARS} characters with no control \
                         characters, found `{}` ({count} characters)",
                        shown(id)
                    ),
                ));
            }
            id.clone()
        }
        Some(other) => {
            let mut at = at.clone();
            at.key = at.key.map(|k| format!("{k}.part_id"));
            return Err(Error::input(
                at,
                format!("expected a part id in quotes, found {}", json_kind(other)),
            ));
        }
    };
    let inline = Resistor {
        part_id,
        ohms,
        tolerance_pct,
        tcr_ppm_per_c,
        unit_cost,
        network: None,
    };
    let cost_given = map.contains_key("unit_cost");
    match stock_resistor(&inline.part_id, stock) {
        // Without a cost of its own, a stock id with the stock's values
        // is that stock part.
        Some(part)
            if !cost_given
                && part
                    == Resistor {
                        unit_cost: part.unit_cost,
                        ..inline.clone()
                    } =>
        {
            Ok(part)
        }
        Some(part) if part != inline => Err(Error::input(
            at.clone(),
            format!(
                "inline part_id `{}` is also a stock part with other values (stock: {} ohm, \
                 {} %, {} ppm/degC, cost {}; here: {} ohm, {} %, {} ppm/degC, cost {}); expected \
                 the stock id alone, or another part_id for an inline part",
                shown(&inline.part_id),
                part.ohms,
                part.tolerance_pct,
                part.tcr_ppm_per_c,
                part.unit_cost,
                inline.ohms,
                inline.tolerance_pct,
                inline.tcr_ppm_per_c,
                inline.unit_cost
            ),
        )),
        _ => Ok(inline),
    }
}

/// The keys an inline capacitor object may hold.
const INLINE_CAPACITOR_KEYS: [&str; 6] = [
    "farads",
    "tolerance_pct",
    "tempco_ppm_per_c",
    "dielectric",
    "unit_cost",
    "part_id",
];

/// What a capacitor entry may be, for messages.
const CAPACITOR_FORMS: &str = "a stock capacitor part id in quotes, or an inline capacitor \
     {\"farads\": .., \"tolerance_pct\": .., and optionally \"tempco_ppm_per_c\": .., \
     \"dielectric\": .., \"unit_cost\": .. and \"part_id\": ..}";

/// Largest capacitance an inline capacitor may have, farads (1 F; a
/// signal-path part is far below).
const MAX_INLINE_FARADS: f64 = 1.0;

/// A capacitor entry of a design file (`feedback_capacitor`): a stock
/// capacitor part id, or an inline object (see [`CAPACITOR_FORMS`]).
fn resolve_capacitor(
    raw: &serde_json::Value,
    stock: &Stock,
    at: &Location,
) -> Result<CapacitorPart> {
    let map = match raw {
        serde_json::Value::String(id) => {
            return stock.capacitor(id).cloned().ok_or_else(|| {
                Error::input(
                    at.clone(),
                    format!(
                        "capacitor part `{}` is not in stock; expected {CAPACITOR_FORMS}",
                        shown(id)
                    ),
                )
            })
        }
        serde_json::Value::Object(map) => map,
        other => {
            return Err(Error::input(
                at.clone(),
                format!("expected {CAPACITOR_FORMS}; found {}", json_kind(other)),
            ))
        }
    };
    let unknown: Vec<&String> = map
        .keys()
        .filter(|k| !INLINE_CAPACITOR_KEYS.contains(&k.as_str()))
        .collect();
    if !unknown.is_empty() {
        return Err(Error::input(
            at.clone(),
            format!(
                "unknown key{} {} in an inline capacitor; its keys are: {}",
                if unknown.len() > 1 { "s" } else { "" },
                listed(&unknown),
                INLINE_CAPACITOR_KEYS.join(", ")
            ),
        ));
    }
    let farads = inline_number(map, "farads", (1e-15, MAX_INLINE_FARADS, false), None, at)?;
    let tolerance = inline_number(map, "tolerance_pct", (0.0, 100.0, true), None, at)?;
    let tempco = inline_number(
        map,
        "tempco_ppm_per_c",
        (0.0, MAX_TCR_PPM_PER_C, false),
        Some(0.0),
        at,
    )?;
    let unit_cost = inline_number(map, "unit_cost", (0.0, MAX_UNIT_COST, false), Some(0.0), at)?;
    let text = |name: &str, default: &str| -> Result<String> {
        match map.get(name) {
            None => Ok(default.to_string()),
            Some(serde_json::Value::String(t))
                if !t.trim().is_empty()
                    && t.chars().count() <= MAX_ID_CHARS
                    && !t.chars().any(char::is_control) =>
            {
                Ok(t.clone())
            }
            Some(other) => {
                let mut at = at.clone();
                at.key = at.key.map(|k| format!("{k}.{name}"));
                Err(Error::input(
                    at,
                    format!(
                        "expected a text of 1 to {MAX_ID_CHARS} characters with no control \
                         characters, found {}",
                        json_kind(other)
                    ),
                ))
            }
        }
    };
    let part_id = text("part_id", "custom")?;
    if stock.capacitor(&part_id).is_some() {
        let mut at = at.clone();
        at.key = at.key.map(|k| format!("{k}.part_id"));
        return Err(Error::input(
            at,
            format!(
                "inline part_id `{}` is a stock capacitor; expected the stock id alone, or \
                 another part_id for an inline part",
                shown(&part_id)
            ),
        ));
    }
    Ok(CapacitorPart {
        part_id,
        value: Farads(farads),
        tolerance: Percent(tolerance),
        tempco: PpmPerC(tempco),
        dielectric: text("dielectric", "unspecified")?,
        rated: Volts(0.0),
        package: String::new(),
        unit_cost,
        stock_qty: None,
        family: None,
    })
}

/// A network element entry `{"network": id, "element": n, "package": p}`:
/// element `n` (1-based) of package `p` (default 1) of a `networks.csv`
/// part.
fn network_resistor(
    map: &serde_json::Map<String, serde_json::Value>,
    stock: &Stock,
    at: &Location,
) -> Result<Resistor> {
    let sub = |key: &str| {
        let mut at = at.clone();
        at.key = at.key.as_ref().map(|k| format!("{k}.{key}"));
        at
    };
    let unknown: Vec<&String> = map
        .keys()
        .filter(|k| !NETWORK_KEYS.contains(&k.as_str()))
        .collect();
    if !unknown.is_empty() {
        return Err(Error::input(
            at.clone(),
            format!(
                "unknown key{} {} in a network element; its keys are: {}",
                if unknown.len() > 1 { "s" } else { "" },
                listed(&unknown),
                NETWORK_KEYS.join(", ")
            ),
        ));
    }
    let part = match map.get("network") {
        Some(serde_json::Value::String(id)) => stock.network(id).ok_or_else(|| {
            Error::input(
                sub("network"),
                format!(
                    "network part `{}` is not in stock; expected a part id of networks.csv",
                    shown(id)
                ),
            )
        })?,
        other => {
            return Err(Error::input(
                sub("network"),
                format!(
                    "expected a network part id in quotes, found {}",
                    other.map_or_else(|| "nothing".to_string(), json_kind)
                ),
            ))
        }
    };
    let count = part.values.len();
    let whole = |key: &str, default: Option<u64>, max: u64| -> Result<u32> {
        let value = match (map.get(key), default) {
            (Some(v), _) => v.as_u64(),
            (None, Some(d)) => Some(d),
            (None, None) => None,
        };
        match value {
            Some(n) if (1..=max).contains(&n) => u32::try_from(n).map_err(|_| {
                Error::input(sub(key), format!("expected a whole number from 1 to {max}"))
            }),
            _ => Err(Error::input(
                sub(key),
                format!(
                    "expected a whole number from 1 to {max}, found {}",
                    map.get(key)
                        .map_or_else(|| "nothing".to_string(), json_kind)
                ),
            )),
        }
    };
    let element = whole("element", None, count as u64)?;
    let package = whole("package", Some(1), 999)?;
    Resistor::network_element(part, package, element).ok_or_else(|| {
        Error::input(
            sub("element"),
            format!("network `{}` has {count} elements", shown(&part.part_id)),
        )
    })
}

/// No element of a network package may be placed twice in one design.
fn check_network_elements(stages: &[Stage], file: &str) -> Result<()> {
    let mut seen: BTreeMap<(String, u32, u32), String> = BTreeMap::new();
    for (i, stage) in stages.iter().enumerate() {
        let placed = stage
            .resistors
            .iter()
            .map(|(role, r)| (format!("stages[{i}].resistors.{}", role.name()), r))
            .chain(injection_resistors(
                &stage.offset,
                &format!("stages[{i}].offset"),
            ))
            .chain(injection_resistors(
                &stage.bias,
                &format!("stages[{i}].bias"),
            ));
        for (key, r) in placed {
            let Some(n) = &r.network else { continue };
            let id = (n.part_id.clone(), n.package, n.element);
            if let Some(first) = seen.insert(id, key.clone()) {
                return Err(Error::input(
                    Location::key(file, &key),
                    format!(
                        "element {} of package {} of network `{}` is also placed at {first}; \
                         expected each element of a package once (another package: \
                         \"package\": 2)",
                        n.element,
                        n.package,
                        shown(&n.part_id)
                    ),
                ));
            }
        }
    }
    Ok(())
}

/// The divider resistors of an injection with their keys.
fn injection_resistors<'a>(
    injection: &'a Injection,
    key: &str,
) -> impl Iterator<Item = (String, &'a Resistor)> {
    let pair = match injection {
        Injection::Divider { top, bottom, .. } => vec![
            (format!("{key}.top"), top),
            (format!("{key}.bottom"), bottom),
        ],
        _ => Vec::new(),
    };
    pair.into_iter()
}

fn resolve_injection(
    raw: &Option<RawInjection>,
    stock: &Stock,
    file: &str,
    key: &str,
) -> Result<Injection> {
    let Some(raw) = raw else {
        return Ok(Injection::Ground);
    };
    let at = Location::key(file, key);
    let source = |raw: &RawInjection| -> Result<Source> {
        let text = raw.source.as_deref().ok_or_else(|| {
            Error::input(
                Location::key(file, &format!("{key}.source")),
                "expected a source: `supply` or a reference part id",
            )
        })?;
        parse_source(text, stock, &Location::key(file, &format!("{key}.source")))
    };
    match raw.kind.as_str() {
        "ground" => Ok(Injection::Ground),
        "direct" => Ok(Injection::Direct {
            source: source(raw)?,
        }),
        "divider" => {
            let need = |r: &Option<serde_json::Value>, which: &str| -> Result<Resistor> {
                let k = format!("{key}.{which}");
                match r {
                    Some(r) => resolve_resistor(r, stock, &Location::key(file, &k)),
                    None => Err(Error::input(
                        Location::key(file, &k),
                        "a divider needs `top` and `bottom` resistors",
                    )),
                }
            };
            Ok(Injection::Divider {
                source: source(raw)?,
                top: need(&raw.top, "top")?,
                bottom: need(&raw.bottom, "bottom")?,
                buffered: raw.buffered,
            })
        }
        other => Err(Error::input(
            at,
            format!(
                "expected kind `ground`, `direct` or `divider`, found `{}`",
                shown(other)
            ),
        )),
    }
}

/// Read a design file (JSON) against a stock. Messages name the key
/// (`stages[1].resistors.rf`) and what was expected.
// Long because every key of a stage is checked here in file order, so each
// message can name the key; the resistor entries go to `resolve_resistor`.
pub fn parse_design(bytes: &[u8], file: &str, stock: &Stock) -> Result<Design> {
    if bytes.len() > MAX_DESIGN_BYTES {
        return Err(Error::input(
            Location::file(file),
            format!(
                "design file is {} bytes; the limit is 1 MiB ({MAX_DESIGN_BYTES} bytes)",
                bytes.len()
            ),
        ));
    }
    let text = decode_utf8(bytes, file)?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let raw: RawDesign = serde_json::from_str(text).map_err(|e| {
        let full = e.to_string();
        let message = match full.rsplit_once(" at line ") {
            Some((head, _)) if e.line() > 0 => head.to_string(),
            _ => full.clone(),
        };
        let mut at = Location::file(file);
        if e.line() > 0 {
            at.line = Some(e.line());
            at.column = Some(e.column().max(1).to_string());
        }
        let cut: String = message.chars().take(320).collect();
        let ellipsis = if cut.len() < message.len() { "…" } else { "" };
        Error::input(
            at,
            format!(
                "not a valid design file: {cut}{ellipsis}; expected a JSON object \
                 {{\"format\": \"spanfit-design-1\", \"stages\": [..]}}"
            ),
        )
    })?;
    if let Some(f) = &raw.format {
        if f != "spanfit-design-1" {
            return Err(Error::input(
                Location::key(file, "format"),
                format!("expected `spanfit-design-1`, found `{}`", shown(f)),
            ));
        }
    }
    if raw.stages.is_empty() || raw.stages.len() > 3 {
        return Err(Error::input(
            Location::key(file, "stages"),
            format!("expected 1 to 3 stages, found {}", raw.stages.len()),
        ));
    }
    let mut stages = Vec::new();
    for (i, s) in raw.stages.iter().enumerate() {
        let key = format!("stages[{i}]");
        let amp_ok = if s.shape == Shape::InstrumentationIntegrated {
            stock.inamp(&s.amplifier).is_some()
        } else {
            stock.opamp(&s.amplifier).is_some()
        };
        if !amp_ok {
            return Err(Error::input(
                Location::key(file, &format!("{key}.amplifier")),
                format!(
                    "{} part `{}` is not in stock",
                    if s.shape == Shape::InstrumentationIntegrated {
                        "in-amp"
                    } else {
                        "op-amp"
                    },
                    shown(&s.amplifier)
                ),
            ));
        }
        let mut resistors = BTreeMap::new();
        for (role, r) in &s.resistors {
            let k = format!("{key}.resistors.{}", shown(role));
            let known = Role::from_name(role).filter(|r| {
                s.shape.required_roles().contains(r) || s.shape.optional_roles().contains(r)
            });
            let Some(known) = known else {
                let expected: Vec<&str> =
                    s.shape.required_roles().iter().map(|r| r.name()).collect();
                return Err(Error::input(
                    Location::key(file, &k),
                    format!(
                        "a {} stage has no resistor `{}`; expected {}",
                        s.shape.name(),
                        shown(role),
                        expected.join(", ")
                    ),
                ));
            };
            resistors.insert(known, resolve_resistor(r, stock, &Location::key(file, &k))?);
        }
        for role in s.shape.required_roles() {
            if !resistors.contains_key(role) {
                return Err(Error::input(
                    Location::key(file, &format!("{key}.resistors")),
                    format!("a {} stage needs a resistor `{role}`", s.shape.name()),
                ));
            }
        }
        let offset = resolve_injection(&s.offset, stock, file, &format!("{key}.offset"))?;
        let bias = resolve_injection(&s.bias, stock, file, &format!("{key}.bias"))?;
        let feedback_capacitor = match &s.feedback_capacitor {
            None | Some(serde_json::Value::Null) => None,
            Some(raw) => {
                let at = Location::key(file, &format!("{key}.feedback_capacitor"));
                if !s.shape.required_roles().contains(&Role::Rf) {
                    return Err(Error::input(
                        at,
                        format!(
                            "a {} stage has no feedback resistor `rf` to put a capacitor \
                             across; a feedback capacitor goes on a non-inverting, \
                             non-inverting-summed or inverting stage",
                            s.shape.name()
                        ),
                    ));
                }
                Some(resolve_capacitor(raw, stock, &at)?)
            }
        };
        stages.push(Stage {
            shape: s.shape,
            amplifier: s.amplifier.clone(),
            resistors,
            offset,
            bias,
            buffer: s.buffer.clone(),
            feedback_capacitor,
        });
        if let Some(b) = &s.buffer {
            if stock.opamp(b).is_none() {
                return Err(Error::input(
                    Location::key(file, &format!("{key}.buffer")),
                    format!("op-amp part `{}` is not in stock", shown(b)),
                ));
            }
        }
    }
    check_network_elements(&stages, file)?;
    Ok(Design { stages })
}

/// Write a design in the file format [`parse_design`] reads, so that it
/// reads back against `stock` as the same design: a resistor that is the
/// stock (or generic) part of its id is written as the bare id, any other
/// inline, with its `part_id` unless that is `custom`.
pub fn design_file_json(design: &Design, stock: &Stock) -> serde_json::Value {
    write_design_file(
        design,
        &|r: &Resistor| stock_resistor(&r.part_id, stock).as_ref() == Some(r),
        &|c: &CapacitorPart| stock.capacitor(&c.part_id) == Some(c),
    )
}

/// An inline capacitor as a design file writes it.
fn capacitor_entry(c: &CapacitorPart) -> serde_json::Value {
    use serde_json::json;
    let mut o = json!({"farads": c.value.0, "tolerance_pct": c.tolerance.0,
        "tempco_ppm_per_c": c.tempco.0, "dielectric": c.dielectric, "unit_cost": c.unit_cost});
    if c.part_id != "custom" {
        o["part_id"] = json!(c.part_id);
    }
    o
}

/// The writer behind [`design_file_json`];
/// `by_id(r)` says a resistor may be written as its bare part id.
fn write_design_file(
    design: &Design,
    by_id: &dyn Fn(&Resistor) -> bool,
    capacitor_by_id: &dyn Fn(&CapacitorPart) -> bool,
) -> serde_json::Value {
    use serde_json::json;
    let res = |r: &Resistor| {
        if let Some(n) = &r.network {
            let mut o = json!({"network": n.part_id, "element": n.element});
            if n.package != 1 {
                o["package"] = json!(n.package);
            }
            o
        } else if r.part_id == "custom" {
            json!({"ohms": r.ohms, "tolerance_pct": r.tolerance_pct, "tcr_ppm_per_c": r.tcr_ppm_per_c, "unit_cost": r.unit_cost})
        } else if by_id(r) {
            json!(r.part_id)
        } else {
            json!({"part_id": r.part_id, "ohms": r.ohms, "tolerance_pct": r.tolerance_pct, "tcr_ppm_per_c": r.tcr_ppm_per_c, "unit_cost": r.unit_cost})
        }
    };
    let src = |s: &Source| match s {
        Source::Supply => json!("supply"),
        Source::Reference(id) => json!(id),
    };
    let inj = |i: &Injection| match i {
        Injection::Ground => json!({"kind": "ground"}),
        Injection::Direct { source } => json!({"kind": "direct", "source": src(source)}),
        Injection::Divider {
            source,
            top,
            bottom,
            buffered,
        } => {
            json!({"kind": "divider", "source": src(source), "top": res(top), "bottom": res(bottom), "buffered": buffered})
        }
    };
    json!({
        "format": "spanfit-design-1",
        "stages": design.stages.iter().map(|s| {
            let mut o = json!({
                "shape": s.shape.name(),
                "amplifier": s.amplifier,
                "resistors": s.resistors.iter().map(|(k, r)| (k.name().to_string(), res(r))).collect::<serde_json::Map<_, _>>(),
                "offset": inj(&s.offset),
            });
            if s.bias != Injection::Ground {
                o["bias"] = inj(&s.bias);
            }
            if let Some(b) = &s.buffer {
                o["buffer"] = json!(b);
            }
            if let Some(c) = &s.feedback_capacitor {
                o["feedback_capacitor"] = if capacitor_by_id(c) {
                    json!(c.part_id)
                } else {
                    capacitor_entry(c)
                };
            }
            o
        }).collect::<Vec<_>>()
    })
}
