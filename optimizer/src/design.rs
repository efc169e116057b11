//! A design: the stages of a front end with their amplifier parts,
//! resistor values and offset networks. This is what the optimiser
//! produces, what `spanfit analyze --design` reads, and what
//! [`crate::topology`] turns into a netlist.
//!
//! The file format (JSON, `"format": "spanfit-design-1"`) is documented in
//! `examples/README.md`; a resistor is named by a stock part id, or given
//! inline as `{"ohms": .., "tolerance_pct": .., "tcr_ppm_per_c": ..}`.

use crate::error::{Error, Location, Result};
use crate::stock::{ResistorPart, Stock};
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
    /// Price of one.
    pub unit_cost: f64,
}

impl From<&ResistorPart> for Resistor {
    fn from(p: &ResistorPart) -> Self {
        Resistor {
            part_id: p.part_id.clone(),
            ohms: p.value.0,
            tolerance_pct: p.tolerance.0,
            tcr_ppm_per_c: p.tcr.0,
            unit_cost: p.unit_cost,
        }
    }
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
    resistors: BTreeMap<String, RawResistor>,
    #[serde(default)]
    offset: Option<RawInjection>,
    #[serde(default)]
    bias: Option<RawInjection>,
    #[serde(default)]
    buffer: Option<String>,
}

#[derive(Deserialize)]
#[serde(untagged)]
enum RawResistor {
    Part(String),
    Inline {
        ohms: f64,
        tolerance_pct: f64,
        tcr_ppm_per_c: f64,
        #[serde(default)]
        unit_cost: f64,
        #[serde(default)]
        part_id: Option<String>,
    },
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawInjection {
    kind: String,
    #[serde(default)]
    source: Option<String>,
    #[serde(default)]
    top: Option<RawResistor>,
    #[serde(default)]
    bottom: Option<RawResistor>,
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
        format!("expected `supply` or a reference part id from stock, found `{text}`"),
    ))
}

fn resolve_resistor(raw: &RawResistor, stock: &Stock, at: &Location) -> Result<Resistor> {
    match raw {
        RawResistor::Part(id) => stock.resistor(id).map(Resistor::from).ok_or_else(|| {
            Error::input(at.clone(), format!("resistor part `{id}` is not in stock"))
        }),
        RawResistor::Inline {
            ohms,
            tolerance_pct,
            tcr_ppm_per_c,
            unit_cost,
            part_id,
        } => {
            let bad = |what: &str, v: f64| {
                Error::input(
                    at.clone(),
                    format!("expected a finite positive {what}, found {v}"),
                )
            };
            if !(ohms.is_finite() && *ohms > 0.0) {
                return Err(bad("resistance in ohms", *ohms));
            }
            if !(tolerance_pct.is_finite() && *tolerance_pct >= 0.0) {
                return Err(bad("tolerance_pct", *tolerance_pct));
            }
            if !(tcr_ppm_per_c.is_finite() && *tcr_ppm_per_c >= 0.0) {
                return Err(bad("tcr_ppm_per_c", *tcr_ppm_per_c));
            }
            if !(unit_cost.is_finite() && *unit_cost >= 0.0) {
                return Err(bad("unit_cost", *unit_cost));
            }
            Ok(Resistor {
                part_id: part_id.clone().unwrap_or_else(|| "custom".to_string()),
                ohms: *ohms,
                tolerance_pct: *tolerance_pct,
                tcr_ppm_per_c: *tcr_ppm_per_c,
                unit_cost: *unit_cost,
            })
        }
    }
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
            let need = |r: &Option<RawResistor>, which: &str| -> Result<Resistor> {
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
            format!("expected kind `ground`, `direct` or `divider`, found `{other}`"),
        )),
    }
}

/// Read a design file (JSON) against a stock. Messages name the key
/// (`stages[1].resistors.rf`) and what was expected.
pub fn parse_design(bytes: &[u8], file: &str, stock: &Stock) -> Result<Design> {
    if bytes.len() > 1 << 20 {
        return Err(Error::input(
            Location::file(file),
            format!("design file is {} bytes; the limit is 1 MiB", bytes.len()),
        ));
    }
    let text = std::str::from_utf8(bytes).map_err(|e| {
        let line = bytes[..e.valid_up_to()]
            .iter()
            .filter(|b| **b == b'\n')
            .count()
            + 1;
        Error::input(
            Location {
                file: file.to_string(),
                line: Some(line),
                ..Default::default()
            },
            format!("not UTF-8 text (bad byte at offset {})", e.valid_up_to()),
        )
    })?;
    let raw: RawDesign = serde_json::from_str(text).map_err(|e| {
        Error::input(
            Location {
                file: file.to_string(),
                line: Some(e.line()),
                column: Some(e.column().to_string()),
                key: None,
            },
            format!("not a valid design file: {e}"),
        )
    })?;
    if let Some(f) = &raw.format {
        if f != "spanfit-design-1" {
            return Err(Error::input(
                Location::key(file, "format"),
                format!("expected `spanfit-design-1`, found `{f}`"),
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
                    s.amplifier
                ),
            ));
        }
        let mut resistors = BTreeMap::new();
        for (role, r) in &s.resistors {
            let k = format!("{key}.resistors.{role}");
            let known = Role::from_name(role).filter(|r| {
                s.shape.required_roles().contains(r) || s.shape.optional_roles().contains(r)
            });
            let Some(known) = known else {
                let expected: Vec<&str> =
                    s.shape.required_roles().iter().map(|r| r.name()).collect();
                return Err(Error::input(
                    Location::key(file, &k),
                    format!(
                        "a {} stage has no resistor `{role}`; expected {}",
                        s.shape.name(),
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
        stages.push(Stage {
            shape: s.shape,
            amplifier: s.amplifier.clone(),
            resistors,
            offset,
            bias,
            buffer: s.buffer.clone(),
        });
        if let Some(b) = &s.buffer {
            if stock.opamp(b).is_none() {
                return Err(Error::input(
                    Location::key(file, &format!("{key}.buffer")),
                    format!("op-amp part `{b}` is not in stock"),
                ));
            }
        }
    }
    Ok(Design { stages })
}

/// Write a design in the file format [`parse_design`] reads (resistors as
/// part ids where they come from stock, inline otherwise).
pub fn design_to_json(design: &Design) -> serde_json::Value {
    use serde_json::json;
    let res = |r: &Resistor| {
        if r.part_id == "custom" {
            json!({"ohms": r.ohms, "tolerance_pct": r.tolerance_pct, "tcr_ppm_per_c": r.tcr_ppm_per_c, "unit_cost": r.unit_cost})
        } else {
            json!(r.part_id)
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
            o
        }).collect::<Vec<_>>()
    })
}
