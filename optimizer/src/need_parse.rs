//! Reading a need from TOML or JSON and validating it into [`Need`].
//!
//! The raw structs below mirror the keys of DESIGN.md section 3 exactly and
//! refuse unknown keys (`deny_unknown_fields`). Each value is first read as
//! a loosely typed [`Loose`] (with its byte span, for TOML), so that a value
//! of the wrong type is reported by *this* code, naming the key path
//! (`adc.bits`), the line and column where the format allows it, and what
//! was expected. Validation then turns the raw values into the unit-typed
//! [`Need`] and applies the defaults listed on [`parse_need`].

use crate::error::{Error, Location, Result};
use crate::need::{
    Accuracy, Adc, Basis, Calibration, Need, Objective, Quantity, SearchOptions, Sensor,
    SensorOutput, StockSource, Supply, Topology,
};
use crate::series::Series;
use crate::units::{Celsius, Hertz, Ohms, Percent, Volts};
use serde::de::{self, Deserializer, IgnoredAny, MapAccess, SeqAccess, Visitor};
use serde::Deserialize;
use std::ops::Range;

/// Largest need file accepted, in bytes (1 MiB).
pub(crate) const MAX_NEED_BYTES: usize = 1 << 20;

/// Longest label, unit or path text accepted, in characters.
const MAX_TEXT_CHARS: usize = 200;

/// Absolute zero in degrees Celsius; no temperature may lie below it.
const ABSOLUTE_ZERO_C: f64 = -273.15;

/// Most parts a design may be allowed to have.
const MAX_PARTS_LIMIT: i128 = 10_000;

/// Longest search time that may be asked for, in milliseconds (one hour).
const MAX_TIME_LIMIT_MS: i128 = 3_600_000;

/// Largest voltage magnitude any need key may hold, in volts. spanfit
/// designs low-voltage signal conditioning; this bound only keeps every
/// later product finite.
const MAX_ABS_VOLTS: f64 = 1000.0;

/// Smallest sensor span `|signal_high_v - signal_low_v|`, in volts (1 uV).
pub(crate) const MIN_SENSOR_SPAN_V: f64 = 1e-6;

/// Smallest ADC window `adc.high_v - adc.low_v`, in volts (1 mV).
pub(crate) const MIN_ADC_SPAN_V: f64 = 1e-3;

/// Largest magnitude of `sensor.quantity_low` and `quantity_high`.
const MAX_ABS_QUANTITY: f64 = 1e12;

/// Smallest `|quantity_high - quantity_low|`.
const MIN_QUANTITY_SPAN: f64 = 1e-9;

/// The allowed range of one number of a need, both ends included.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct NumberRange {
    /// Key path (`adc.high_v`).
    pub key: &'static str,
    /// Smallest value allowed.
    pub min: f64,
    /// Largest value allowed.
    pub max: f64,
    /// The unit, as messages name it.
    pub unit: &'static str,
}

/// Every number a need may hold with its range (both ends included; a few
/// keys also refuse an end, as their own messages say: a margin under 50 %,
/// a supply tolerance and a yield under 100 %, an error bound and a
/// bandwidth above 0). Whole-number keys hold whole numbers only. A value
/// outside is refused with the key, its line and column and this range.
pub(crate) const NUMBER_RANGES: &[NumberRange] = &[
    NumberRange {
        key: "sensor.signal_low_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "sensor.signal_high_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "sensor.quantity_low",
        min: -MAX_ABS_QUANTITY,
        max: MAX_ABS_QUANTITY,
        unit: "the physical value at signal_low_v",
    },
    NumberRange {
        key: "sensor.quantity_high",
        min: -MAX_ABS_QUANTITY,
        max: MAX_ABS_QUANTITY,
        unit: "the physical value at signal_high_v",
    },
    NumberRange {
        key: "sensor.common_mode_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "sensor.source_ohms",
        min: 0.0,
        max: 1e9,
        unit: "ohms",
    },
    NumberRange {
        key: "adc.low_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "adc.high_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "adc.bits",
        min: 1.0,
        max: 32.0,
        unit: "bits of resolution",
    },
    NumberRange {
        key: "adc.margin_pct",
        min: 0.0,
        max: 50.0,
        unit: "percent",
    },
    NumberRange {
        key: "supply.positive_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "supply.negative_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "supply.tolerance_pct",
        min: 0.0,
        max: 100.0,
        unit: "percent",
    },
    NumberRange {
        key: "accuracy.max_error_pct_fs",
        min: 1e-6,
        max: 100.0,
        unit: "percent of full scale",
    },
    NumberRange {
        key: "accuracy.yield_pct",
        min: 0.0,
        max: 100.0,
        unit: "percent",
    },
    NumberRange {
        key: "accuracy.temp_min_c",
        min: ABSOLUTE_ZERO_C,
        max: 1000.0,
        unit: "degrees Celsius",
    },
    NumberRange {
        key: "accuracy.temp_max_c",
        min: ABSOLUTE_ZERO_C,
        max: 1000.0,
        unit: "degrees Celsius",
    },
    NumberRange {
        key: "accuracy.bandwidth_hz",
        min: 1e-6,
        max: 1e9,
        unit: "hertz",
    },
    NumberRange {
        key: "search.max_stages",
        min: 1.0,
        max: 3.0,
        unit: "stages",
    },
    NumberRange {
        key: "search.bom_line_cost",
        min: 0.0,
        max: 1e6,
        unit: "cost per distinct BOM line",
    },
    NumberRange {
        key: "search.max_parts",
        min: 1.0,
        max: MAX_PARTS_LIMIT as f64,
        unit: "parts",
    },
    NumberRange {
        key: "search.time_limit_ms",
        min: 1.0,
        max: MAX_TIME_LIMIT_MS as f64,
        unit: "milliseconds",
    },
];

/// The range of a key path, if it holds a number.
pub(crate) fn number_range(key: &str) -> Option<&'static NumberRange> {
    NUMBER_RANGES.iter().find(|r| r.key == key)
}

impl NumberRange {
    /// "volts from -1000 to 1000", for messages.
    pub(crate) fn describe(&self) -> String {
        format!("{} from {} to {}", self.unit, self.min, self.max)
    }
}

/// Default values of the optional keys (see [`parse_need`]).
mod defaults {
    pub const LABEL: &str = "sensor";
    pub const SOURCE_OHMS: f64 = 0.0;
    pub const MARGIN_PCT: f64 = 0.0;
    pub const NEGATIVE_V: f64 = 0.0;
    pub const TOLERANCE_PCT: f64 = 5.0;
    pub const YIELD_PCT: f64 = 99.0;
    pub const TEMP_MIN_C: f64 = 0.0;
    pub const TEMP_MAX_C: f64 = 70.0;
    pub const BANDWIDTH_HZ: f64 = 10.0;
    pub const MAX_STAGES: i128 = 3;
    pub const BOM_LINE_COST: f64 = 0.0;
    pub const MAX_PARTS: i128 = 30;
    pub const TIME_LIMIT_MS: i128 = 2000;
}

/// Parse and validate a need (see [`crate::need::parse_need`]).
///
/// The text is JSON when its first non-whitespace character is `{`, TOML
/// otherwise. A UTF-8 byte-order mark at the start is ignored. Files over
/// 1 MiB and bytes that are not UTF-8 are refused before parsing.
///
/// Required keys: `sensor.signal_low_v`, `sensor.signal_high_v`,
/// `adc.low_v`, `adc.high_v`, `adc.bits`, `supply.positive_v`,
/// `accuracy.max_error_pct_fs`. Defaults for the others:
///
/// | key | default |
/// |---|---|
/// | `sensor.label` | `"sensor"` |
/// | `sensor.quantity_low`, `quantity_high`, `quantity_unit` | none (all three or none) |
/// | `sensor.output` | `"single-ended"` |
/// | `sensor.common_mode_v` | required when differential; not allowed otherwise |
/// | `sensor.source_ohms` | 0 |
/// | `adc.margin_pct` | 0 |
/// | `supply.negative_v` | 0 (single supply) |
/// | `supply.tolerance_pct` | 5 |
/// | `supply.ratiometric` | false |
/// | `accuracy.basis` | `"worst-case"` |
/// | `accuracy.yield_pct` | 99 |
/// | `accuracy.temp_min_c`, `temp_max_c` | 0, 70 |
/// | `accuracy.calibration` | `"none"` |
/// | `accuracy.bandwidth_hz` | 10 |
/// | `search.max_stages` | 3 |
/// | `search.topologies` | all four |
/// | `search.resistor_series` | `["E96"]` |
/// | `search.objective` | `"cost"` |
/// | `search.bom_line_cost` | 0 |
/// | `search.max_parts` | 30 (at most 10,000) |
/// | `search.time_limit_ms` | 2000 (at most 3,600,000) |
/// | `stock.path` | none: the embedded demo stock |
/// | `stock.only` | true |
///
/// The tables `[search]` and `[stock]` may be left out; `[sensor]`,
/// `[adc]`, `[supply]` and `[accuracy]` may not.
///
/// Every number has a finite range, both ends included (see
/// [`NUMBER_RANGES`]): volts from -1000 to 1000; `quantity_low` and
/// `quantity_high` from -1e12 to 1e12, at least 1e-9 apart;
/// `source_ohms` 0 to 1e9; `bits` 1 to 32; `margin_pct` 0 to under 50;
/// `tolerance_pct` 0 to under 100; `max_error_pct_fs` 1e-6 to 100;
/// `yield_pct` above 0 and under 100; temperatures -273.15 to 1000 degC;
/// `bandwidth_hz` 1e-6 to 1e9; `max_stages` 1 to 3; `bom_line_cost` 0 to
/// 1e6; `max_parts` 1 to 10,000; `time_limit_ms` 1 to 3,600,000. The
/// sensor span `|signal_high_v - signal_low_v|` is at least 1 uV and the
/// ADC window `high_v - low_v` at least 1 mV. A value outside is refused
/// with the key, its line and column, and the range.
pub(crate) fn parse_need(bytes: &[u8], file: &str) -> Result<Need> {
    if bytes.len() > MAX_NEED_BYTES {
        return Err(Error::input(
            Location::file(file),
            format!(
                "need file is {} bytes; the limit is 1 MiB ({MAX_NEED_BYTES} bytes)",
                bytes.len()
            ),
        ));
    }
    let text = decode_utf8(bytes, file)?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if text.trim().is_empty() {
        return Err(Error::input(
            Location::file(file),
            "need file is empty; expected TOML (or JSON) with [sensor], [adc], [supply] \
             and [accuracy] tables",
        ));
    }
    let ctx = Ctx { file, text };
    if text.trim_start().starts_with('{') {
        match serde_json::from_str::<RawNeed<Loose>>(text) {
            Ok(raw) => validate(&raw, &ctx),
            Err(e) => Err(json_error(&e, &ctx)),
        }
    } else if let Some(kind) = json_non_object(text) {
        Err(Error::input(
            Location::file(file),
            format!(
                "the need is JSON but {kind}; expected a JSON object `{{\"sensor\": {{..}}, \
                 \"adc\": {{..}}, ..}}` (or TOML)"
            ),
        ))
    } else {
        match toml::from_str::<RawNeed<toml::Spanned<Loose>>>(text) {
            Ok(raw) => validate(&raw, &ctx),
            Err(e) => Err(toml_error(&e, &ctx)),
        }
    }
}

// ---------------------------------------------------------------------------
// Shared text helpers (also used by the stock reader).

/// The text of `bytes`, or an error naming the line, column and byte offset
/// of the first byte that is not UTF-8.
pub(crate) fn decode_utf8<'a>(bytes: &'a [u8], file: &str) -> Result<&'a str> {
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(text),
        Err(e) => {
            let offset = e.valid_up_to();
            let good = std::str::from_utf8(&bytes[..offset]).unwrap_or_default();
            let (line, column) = line_col(good, offset);
            let mut at = Location::file(file);
            at.line = Some(line);
            at.column = Some(column.to_string());
            Err(Error::input(
                at,
                format!(
                    "not valid UTF-8: byte 0x{:02X} at byte offset {offset} (line {line}); \
                     save the file as UTF-8",
                    bytes[offset]
                ),
            ))
        }
    }
}

/// 1-based line and column (in characters) of a byte offset in `text`.
/// Offsets past the end or inside a character are moved back to the
/// nearest character start.
pub(crate) fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let mut offset = offset.min(text.len());
    while !text.is_char_boundary(offset) {
        offset -= 1;
    }
    let before = &text[..offset];
    let line = before.bytes().filter(|&b| b == b'\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let column = before[line_start..].chars().count() + 1;
    (line, column)
}

/// Most characters of user text echoed in a message; longer text is cut
/// and ends in `…`.
pub(crate) const MAX_ECHO_CHARS: usize = 80;

/// Most names (keys, columns) listed in one message; the rest are counted
/// ("and 12 more").
pub(crate) const MAX_LISTED_NAMES: usize = 8;

/// A short, printable rendering of user text for messages: control
/// characters escaped, text over [`MAX_ECHO_CHARS`] characters cut and
/// ended with `…`.
pub(crate) fn shown(text: &str) -> String {
    let mut out = String::new();
    for (i, c) in text.chars().enumerate() {
        if i == MAX_ECHO_CHARS {
            out.push('…');
            break;
        }
        out.extend(c.escape_debug());
    }
    out
}

/// User-supplied names joined with `, `: at most [`MAX_LISTED_NAMES`],
/// each cut by [`shown`] and put in backquotes, then "and N more".
pub(crate) fn listed<S: AsRef<str>>(names: &[S]) -> String {
    let mut out: Vec<String> = names
        .iter()
        .take(MAX_LISTED_NAMES)
        .map(|n| format!("`{}`", shown(n.as_ref())))
        .collect();
    if names.len() > MAX_LISTED_NAMES {
        out.push(format!("and {} more", names.len() - MAX_LISTED_NAMES));
    }
    out.join(", ")
}

// ---------------------------------------------------------------------------
// Loosely typed values.

/// Any value as it was read, before its type is checked.
#[derive(Debug, Clone, PartialEq)]
enum Loose {
    /// `true` / `false`.
    Bool(bool),
    /// A whole number.
    Int(i128),
    /// A number with a fraction or exponent (TOML also allows `nan`, `inf`).
    Float(f64),
    /// A string.
    Text(String),
    /// An array.
    List(Vec<Loose>),
    /// A table or object (contents not kept: no key takes one).
    Table,
    /// A TOML date or time.
    DateTime,
    /// JSON `null` (inside a list).
    Null,
}

impl Loose {
    /// What the value is, for "found ..." in messages.
    fn describe(&self) -> String {
        match self {
            Loose::Bool(b) => format!("the boolean `{b}`"),
            Loose::Int(i) => format!("the number `{i}`"),
            Loose::Float(x) if x.is_nan() => "`nan`".to_string(),
            Loose::Float(x) if x.is_infinite() => {
                if *x > 0.0 { "`inf`" } else { "`-inf`" }.to_string()
            }
            Loose::Float(x) => format!("the number `{x}`"),
            Loose::Text(s) => format!("the text `{}`", shown(s)),
            Loose::List(_) => "a list".to_string(),
            Loose::Table => "a table".to_string(),
            Loose::DateTime => "a date/time".to_string(),
            Loose::Null => "null".to_string(),
        }
    }
}

impl<'de> Deserialize<'de> for Loose {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> std::result::Result<Self, D::Error> {
        deserializer.deserialize_any(LooseVisitor)
    }
}

/// Builds a [`Loose`] from whatever the format holds.
struct LooseVisitor;

impl<'de> Visitor<'de> for LooseVisitor {
    type Value = Loose;

    fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("a value")
    }

    fn visit_bool<E: de::Error>(self, v: bool) -> std::result::Result<Loose, E> {
        Ok(Loose::Bool(v))
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> std::result::Result<Loose, E> {
        Ok(Loose::Int(i128::from(v)))
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> std::result::Result<Loose, E> {
        Ok(Loose::Int(i128::from(v)))
    }

    fn visit_i128<E: de::Error>(self, v: i128) -> std::result::Result<Loose, E> {
        Ok(Loose::Int(v))
    }

    fn visit_u128<E: de::Error>(self, v: u128) -> std::result::Result<Loose, E> {
        Ok(i128::try_from(v).map_or(Loose::Float(v as f64), Loose::Int))
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> std::result::Result<Loose, E> {
        Ok(Loose::Float(v))
    }

    fn visit_str<E: de::Error>(self, v: &str) -> std::result::Result<Loose, E> {
        Ok(Loose::Text(v.to_string()))
    }

    fn visit_string<E: de::Error>(self, v: String) -> std::result::Result<Loose, E> {
        Ok(Loose::Text(v))
    }

    fn visit_unit<E: de::Error>(self) -> std::result::Result<Loose, E> {
        Ok(Loose::Null)
    }

    fn visit_none<E: de::Error>(self) -> std::result::Result<Loose, E> {
        Ok(Loose::Null)
    }

    fn visit_some<D: Deserializer<'de>>(self, d: D) -> std::result::Result<Loose, D::Error> {
        Loose::deserialize(d)
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> std::result::Result<Loose, A::Error> {
        let mut items = Vec::new();
        while let Some(item) = seq.next_element::<Loose>()? {
            items.push(item);
        }
        Ok(Loose::List(items))
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> std::result::Result<Loose, A::Error> {
        // toml hands a date/time over as a one-entry map with this key.
        let mut kind = Loose::Table;
        let mut first = true;
        while let Some(key) = map.next_key::<String>()? {
            if first && key == "$__toml_private_datetime" {
                kind = Loose::DateTime;
            }
            first = false;
            map.next_value::<IgnoredAny>()?;
        }
        Ok(kind)
    }
}

/// A read value with, where the format gives it, its byte span.
trait Field {
    /// The value.
    fn value(&self) -> &Loose;
    /// Its byte range in the text.
    fn span(&self) -> Option<Range<usize>>;
}

impl Field for Loose {
    fn value(&self) -> &Loose {
        self
    }
    fn span(&self) -> Option<Range<usize>> {
        None
    }
}

impl Field for toml::Spanned<Loose> {
    fn value(&self) -> &Loose {
        self.get_ref()
    }
    fn span(&self) -> Option<Range<usize>> {
        Some(toml::Spanned::span(self))
    }
}

// ---------------------------------------------------------------------------
// Raw structs: the keys of DESIGN.md section 3, exactly.

/// The whole file.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "a need with [sensor], [adc], [supply] and [accuracy] tables"
)]
struct RawNeed<W> {
    sensor: Option<RawSensor<W>>,
    adc: Option<RawAdc<W>>,
    supply: Option<RawSupply<W>>,
    accuracy: Option<RawAccuracy<W>>,
    search: Option<RawSearch<W>>,
    stock: Option<RawStock<W>>,
}

/// `[sensor]`.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "the [sensor] table"
)]
struct RawSensor<W> {
    label: Option<W>,
    signal_low_v: Option<W>,
    signal_high_v: Option<W>,
    quantity_low: Option<W>,
    quantity_high: Option<W>,
    quantity_unit: Option<W>,
    output: Option<W>,
    common_mode_v: Option<W>,
    source_ohms: Option<W>,
}

/// `[adc]`.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "the [adc] table"
)]
struct RawAdc<W> {
    low_v: Option<W>,
    high_v: Option<W>,
    bits: Option<W>,
    margin_pct: Option<W>,
}

/// `[supply]`.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "the [supply] table"
)]
struct RawSupply<W> {
    positive_v: Option<W>,
    negative_v: Option<W>,
    tolerance_pct: Option<W>,
    ratiometric: Option<W>,
}

/// `[accuracy]`.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "the [accuracy] table"
)]
struct RawAccuracy<W> {
    max_error_pct_fs: Option<W>,
    basis: Option<W>,
    yield_pct: Option<W>,
    temp_min_c: Option<W>,
    temp_max_c: Option<W>,
    calibration: Option<W>,
    bandwidth_hz: Option<W>,
}

/// `[search]`.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "the [search] table"
)]
struct RawSearch<W> {
    max_stages: Option<W>,
    topologies: Option<W>,
    resistor_series: Option<W>,
    objective: Option<W>,
    bom_line_cost: Option<W>,
    max_parts: Option<W>,
    time_limit_ms: Option<W>,
}

/// `[stock]`.
#[derive(Deserialize)]
#[serde(
    deny_unknown_fields,
    bound(deserialize = "W: Deserialize<'de>"),
    expecting = "the [stock] table"
)]
struct RawStock<W> {
    path: Option<W>,
    only: Option<W>,
}

/// The table a raw struct stands for, recognised by its first key as serde
/// lists it in an "unknown field" message.
fn table_of_first_key(first: &str) -> Option<&'static str> {
    Some(match first {
        "sensor" => "",
        "label" => "sensor",
        "low_v" => "adc",
        "positive_v" => "supply",
        "max_error_pct_fs" => "accuracy",
        "max_stages" => "search",
        "path" => "stock",
        _ => return None,
    })
}

// ---------------------------------------------------------------------------
// Format errors.

/// Where the text came from, for locations.
struct Ctx<'a> {
    file: &'a str,
    text: &'a str,
}

impl Ctx<'_> {
    /// A location for a key path, with line and column when a span is known.
    fn at(&self, key: &str, span: Option<Range<usize>>) -> Location {
        let mut at = Location::key(self.file, key);
        if let Some(span) = span {
            let (line, column) = line_col(self.text, span.start);
            at.line = Some(line);
            at.column = Some(column.to_string());
        }
        at
    }
}

/// A serde "unknown field" message rewritten to name the table and list
/// the allowed keys; `None` if the message is of another kind.
fn unknown_key(message: &str) -> Option<(String, String)> {
    let rest = message.strip_prefix("unknown field `")?;
    let (key, rest) = rest.split_once('`')?;
    let allowed: Vec<&str> = rest
        .split('`')
        .skip(1)
        .step_by(2)
        .filter(|s| !s.is_empty())
        .collect();
    let table = table_of_first_key(allowed.first()?)?;
    let list = allowed.join(", ");
    Some(if table.is_empty() {
        (
            shown(key),
            format!("unknown table `{}`; the tables are: {list}", shown(key)),
        )
    } else {
        (
            format!("{table}.{}", shown(key)),
            format!(
                "unknown key `{}` in [{table}]; the keys of [{table}] are: {list}",
                shown(key)
            ),
        )
    })
}

/// The key path (`search.time_limit_ms`) of the `key = value` line that
/// holds byte `offset` of a TOML text, its table taken from the nearest
/// `[table]` header above; `None` where that line has no plain `key =`.
fn toml_key_at(text: &str, offset: usize) -> Option<String> {
    let mut offset = offset.min(text.len());
    while !text.is_char_boundary(offset) {
        offset -= 1;
    }
    let line_start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line = text[line_start..].lines().next().unwrap_or("");
    let (name, _) = line.split_once('=')?;
    let name = name.trim();
    let bare = |s: &str| {
        !s.is_empty()
            && s.chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
    };
    if !bare(name) {
        return None;
    }
    let table = text[..line_start]
        .lines()
        .rev()
        .map(str::trim)
        .find(|l| l.starts_with('['))
        .and_then(|l| l.strip_prefix('['))
        .and_then(|l| l.split_once(']'))
        .map(|(t, _)| t.trim())
        .filter(|t| bare(t));
    Some(match table {
        Some(t) => format!("{t}.{name}"),
        None => name.to_string(),
    })
}

/// A toml error as an input error with line and column (and the key,
/// where the failing line is a plain `key = value`).
fn toml_error(e: &toml::de::Error, ctx: &Ctx<'_>) -> Error {
    let message = e
        .message()
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .collect::<Vec<_>>()
        .join("; ");
    let mut at = Location::file(ctx.file);
    if let Some(span) = e.span() {
        let (line, column) = line_col(ctx.text, span.start);
        at.line = Some(line);
        at.column = Some(column.to_string());
        at.key = toml_key_at(ctx.text, span.start).map(|k| shown(&k));
    }
    if let Some((key, text)) = unknown_key(&message) {
        at.key = Some(key);
        return Error::input(at, text);
    }
    if message.contains("too large") || message.contains("too small") {
        let range = at.key.as_deref().and_then(number_range);
        let expected = range.map_or_else(
            || "a smaller number".to_string(),
            |r| format!("a number ({})", r.describe()),
        );
        return Error::input(
            at,
            format!(
                "the number does not fit a TOML whole number (at most {}); expected {expected}",
                i64::MAX
            ),
        );
    }
    if message.is_empty() {
        return Error::input(
            at,
            "the text is not valid TOML here; expected `key = value` lines under [table] \
             headers, or a JSON object starting with `{`",
        );
    }
    Error::input(
        at,
        format!("could not read the need as TOML: {}", shown_long(&message)),
    )
}

/// Like [`shown`] for a parser's own message, which may quote input: cut
/// at four times [`MAX_ECHO_CHARS`].
fn shown_long(text: &str) -> String {
    let cut: String = text.chars().take(4 * MAX_ECHO_CHARS).collect();
    if cut.len() < text.len() {
        format!("{cut}…")
    } else {
        cut
    }
}

/// A serde_json error as an input error with line and column (from 1).
fn json_error(e: &serde_json::Error, ctx: &Ctx<'_>) -> Error {
    let full = e.to_string();
    let message = match full.rsplit_once(" at line ") {
        Some((head, _)) if e.line() > 0 => head.to_string(),
        _ => full.clone(),
    };
    let mut at = Location::file(ctx.file);
    if e.line() > 0 {
        at.line = Some(e.line());
        at.column = Some(e.column().max(1).to_string());
    }
    match unknown_key(&message) {
        Some((key, text)) => {
            at.key = Some(key);
            Error::input(at, text)
        }
        None if e.is_syntax() || e.is_eof() => {
            Error::input(at, format!("not valid JSON: {}", shown_long(&message)))
        }
        None => Error::input(
            at,
            format!("could not read the need as JSON: {}", shown_long(&message)),
        ),
    }
}

/// The JSON kind of a text that is a whole JSON value but not an object
/// (`"a list"`), so a JSON need that does not start with `{` is answered
/// in JSON's terms.
fn json_non_object(text: &str) -> Option<&'static str> {
    match serde_json::from_str::<serde_json::Value>(text).ok()? {
        serde_json::Value::Object(_) => None,
        serde_json::Value::Array(_) => Some("a list"),
        serde_json::Value::String(_) => Some("a string"),
        serde_json::Value::Number(_) => Some("a number"),
        serde_json::Value::Bool(_) => Some("a boolean"),
        serde_json::Value::Null => Some("null"),
    }
}

// ---------------------------------------------------------------------------
// Typed access to one key.

/// One key of the need: its path and, if present, its value.
struct Key<'a, W> {
    ctx: &'a Ctx<'a>,
    path: String,
    field: Option<&'a W>,
}

impl<W: Field> Key<'_, W> {
    fn value(&self) -> Option<&Loose> {
        self.field.map(Field::value)
    }

    fn loc(&self) -> Location {
        self.ctx.at(&self.path, self.field.and_then(Field::span))
    }

    fn err(&self, message: impl Into<String>) -> Error {
        Error::input(self.loc(), message)
    }

    fn present(&self) -> bool {
        self.field.is_some()
    }

    /// The last part of the path (`bits` of `adc.bits`).
    fn name(&self) -> &str {
        self.path.rsplit('.').next().unwrap_or(&self.path)
    }

    /// The table part of the path (`adc` of `adc.bits`).
    fn table(&self) -> &str {
        self.path.split('.').next().unwrap_or(&self.path)
    }

    fn missing(&self, expected: &str) -> Error {
        self.err(format!(
            "required key `{}` is missing from [{}]; expected {expected}",
            self.name(),
            self.table()
        ))
    }

    /// The allowed range of this key, as a sentence to end a message
    /// ("; allowed: volts from -1000 to 1000"), from [`NUMBER_RANGES`].
    fn allowed(&self) -> String {
        number_range(&self.path).map_or(String::new(), |r| format!("; allowed: {}", r.describe()))
    }

    /// A finite number, if present (its range is checked by
    /// [`Key::ranged`], after the key's own checks).
    fn number(&self, unit: &str) -> Result<Option<f64>> {
        match self.value() {
            None => Ok(None),
            Some(Loose::Int(i)) => Ok(Some(*i as f64)),
            Some(Loose::Float(x)) if x.is_finite() => Ok(Some(*x)),
            Some(v @ Loose::Float(_)) => Err(self.err(format!(
                "expected a finite number ({unit}), found {}{}",
                v.describe(),
                self.allowed()
            ))),
            Some(v) => Err(self.err(format!(
                "expected a number ({unit}), found {}{}",
                v.describe(),
                self.allowed()
            ))),
        }
    }

    /// `value` if it lies inside the key's range of [`NUMBER_RANGES`]; an
    /// error naming the range otherwise.
    fn ranged(&self, value: f64) -> Result<f64> {
        match number_range(&self.path) {
            Some(r) if !(r.min..=r.max).contains(&value) => Err(self.err(format!(
                "expected a number ({}), found {}",
                r.describe(),
                short_number(value)
            ))),
            _ => Ok(value),
        }
    }

    fn required_number(&self, unit: &str) -> Result<f64> {
        self.number(unit)?
            .ok_or_else(|| self.missing(&format!("a number ({unit}){}", self.allowed())))
    }

    /// A whole number, if present (a float with no fraction counts);
    /// `expected` says what was wanted, range included.
    fn integer(&self, expected: &str) -> Result<Option<i128>> {
        match self.value() {
            None => Ok(None),
            Some(Loose::Int(i)) => Ok(Some(*i)),
            Some(Loose::Float(x)) if x.is_finite() && x.fract() == 0.0 && x.abs() < 1e18 => {
                Ok(Some(*x as i128))
            }
            Some(v) => Err(self.err(format!("expected {expected}, found {}", v.describe()))),
        }
    }

    /// A whole number inside the key's range of [`NUMBER_RANGES`], or the
    /// default.
    fn integer_in(&self, what: &str, default: Option<i128>) -> Result<i128> {
        let (min, max) = number_range(&self.path)
            .map_or((i128::MIN, i128::MAX), |r| (r.min as i128, r.max as i128));
        let expected = format!("a whole number ({what}) from {min} to {max}");
        let value = match (self.integer(&expected)?, default) {
            (Some(v), _) => v,
            (None, Some(d)) => d,
            (None, None) => return Err(self.missing(&expected)),
        };
        if (min..=max).contains(&value) {
            Ok(value)
        } else {
            Err(self.err(format!("expected {expected}, found {value}")))
        }
    }

    fn boolean(&self, default: bool) -> Result<bool> {
        match self.value() {
            None => Ok(default),
            Some(Loose::Bool(b)) => Ok(*b),
            Some(v) => Err(self.err(format!("expected true or false, found {}", v.describe()))),
        }
    }

    /// Text of at most [`MAX_TEXT_CHARS`] characters with no control
    /// characters, if present.
    fn text(&self) -> Result<Option<String>> {
        match self.value() {
            None => Ok(None),
            Some(Loose::Text(s)) => {
                let count = s.chars().count();
                if count > MAX_TEXT_CHARS {
                    return Err(self.err(format!(
                        "text is {count} characters long; the limit is {MAX_TEXT_CHARS}"
                    )));
                }
                if let Some(c) = s.chars().find(|c| c.is_control()) {
                    return Err(self.err(format!(
                        "text contains the control character {}; expected plain text on one line",
                        c.escape_unicode()
                    )));
                }
                Ok(Some(s.clone()))
            }
            Some(v) => Err(self.err(format!("expected text in quotes, found {}", v.describe()))),
        }
    }

    /// One of a fixed set of names, or the default.
    fn choice<T: Copy>(&self, choices: &[(&str, T)], default: T) -> Result<T> {
        let names = || {
            choices
                .iter()
                .map(|(n, _)| format!("\"{n}\""))
                .collect::<Vec<_>>()
                .join(", ")
        };
        match self.value() {
            None => Ok(default),
            Some(Loose::Text(s)) => choices
                .iter()
                .find(|(n, _)| n == s)
                .map(|&(_, t)| t)
                .ok_or_else(|| {
                    self.err(format!("expected one of {}, found `{}`", names(), shown(s)))
                }),
            Some(v) => Err(self.err(format!(
                "expected one of {}, found {}",
                names(),
                v.describe()
            ))),
        }
    }

    /// A non-empty list of names from `choices` (a single name counts as a
    /// list of one), duplicates dropped, or the default.
    fn choice_list<T: Copy + PartialEq>(
        &self,
        choices: &[(&str, T)],
        default: &[T],
    ) -> Result<Vec<T>> {
        let names = || {
            choices
                .iter()
                .map(|(n, _)| format!("\"{n}\""))
                .collect::<Vec<_>>()
                .join(", ")
        };
        let items: Vec<&Loose> = match self.value() {
            None => return Ok(default.to_vec()),
            Some(Loose::List(items)) => items.iter().collect(),
            Some(v @ Loose::Text(_)) => vec![v],
            Some(v) => {
                return Err(self.err(format!(
                    "expected a list of names from {}, found {}",
                    names(),
                    v.describe()
                )))
            }
        };
        if items.is_empty() {
            return Err(self.err(format!(
                "the list is empty; expected at least one of {}",
                names()
            )));
        }
        let mut out: Vec<T> = Vec::new();
        for (i, item) in items.into_iter().enumerate() {
            let found = match item {
                Loose::Text(s) => choices.iter().find(|(n, _)| n == s).map(|&(_, t)| t),
                _ => None,
            };
            let t = found.ok_or_else(|| {
                self.err(format!(
                    "item {} of the list: expected one of {}, found {}",
                    i + 1,
                    names(),
                    match item {
                        Loose::Text(s) => format!("`{}`", shown(s)),
                        other => other.describe(),
                    }
                ))
            })?;
            if !out.contains(&t) {
                out.push(t);
            }
        }
        Ok(out)
    }
}

/// Checks on a number that has been read.
/// The key's own rule comes first, then its range of [`NUMBER_RANGES`].
fn check(key: &Key<'_, impl Field>, value: f64, ok: bool, expected: &str) -> Result<f64> {
    if ok {
        key.ranged(value)
    } else {
        Err(key.err(format!(
            "expected {expected}, found {}{}",
            short_number(value),
            key.allowed()
        )))
    }
}

/// A number as messages show it: plain when short, in exponent form when
/// it would take many digits (`1e308`, not 309 digits).
pub(crate) fn short_number(x: f64) -> String {
    let plain = format!("{x}");
    if plain.len() > 16 {
        format!("{x:e}")
    } else {
        plain
    }
}

// ---------------------------------------------------------------------------
// Validation.

/// Make a [`Key`] for `table.name` from an optional raw table.
macro_rules! key {
    ($ctx:expr, $table:ident, $raw:expr, $name:ident) => {
        Key {
            ctx: $ctx,
            path: concat!(stringify!($table), ".", stringify!($name)).to_string(),
            field: $raw.and_then(|t| t.$name.as_ref()),
        }
    };
}

fn missing_table(ctx: &Ctx<'_>, table: &str, needs: &str) -> Error {
    Error::input(
        Location::key(ctx.file, table),
        format!("missing table [{table}]; it needs {needs}"),
    )
}

fn validate<W: Field>(raw: &RawNeed<W>, ctx: &Ctx<'_>) -> Result<Need> {
    let sensor_raw = raw
        .sensor
        .as_ref()
        .ok_or_else(|| missing_table(ctx, "sensor", "signal_low_v and signal_high_v"))?;
    let adc_raw = raw
        .adc
        .as_ref()
        .ok_or_else(|| missing_table(ctx, "adc", "low_v, high_v and bits"))?;
    let supply_raw = raw
        .supply
        .as_ref()
        .ok_or_else(|| missing_table(ctx, "supply", "positive_v"))?;
    let accuracy_raw = raw
        .accuracy
        .as_ref()
        .ok_or_else(|| missing_table(ctx, "accuracy", "max_error_pct_fs"))?;

    let sensor = sensor(Some(sensor_raw), ctx)?;
    let supply = supply(Some(supply_raw), ctx)?;
    let adc = adc(Some(adc_raw), &supply, ctx)?;
    let accuracy = accuracy(Some(accuracy_raw), ctx)?;
    let search = search(raw.search.as_ref(), ctx)?;
    let stock = stock(raw.stock.as_ref(), ctx)?;
    Ok(Need {
        sensor,
        adc,
        supply,
        accuracy,
        search,
        stock,
    })
}

fn sensor<W: Field>(raw: Option<&RawSensor<W>>, ctx: &Ctx<'_>) -> Result<Sensor> {
    let label = key!(ctx, sensor, raw, label)
        .text()?
        .unwrap_or_else(|| defaults::LABEL.to_string());

    let low_key = key!(ctx, sensor, raw, signal_low_v);
    let high_key = key!(ctx, sensor, raw, signal_high_v);
    let low = low_key.ranged(low_key.required_number("volts")?)?;
    let high = high_key.ranged(high_key.required_number("volts")?)?;
    if low == high {
        return Err(high_key.err(format!(
            "sensor.signal_high_v equals sensor.signal_low_v ({} V); the sensor must have a \
             span, so expected a different value",
            short_number(low)
        )));
    }
    if (high - low).abs() < MIN_SENSOR_SPAN_V {
        return Err(high_key.err(format!(
            "the sensor span |signal_high_v - signal_low_v| is {} V; expected at least \
             {MIN_SENSOR_SPAN_V} V",
            short_number((high - low).abs())
        )));
    }

    let q_low = key!(ctx, sensor, raw, quantity_low);
    let q_high = key!(ctx, sensor, raw, quantity_high);
    let q_unit = key!(ctx, sensor, raw, quantity_unit);
    let quantity = if q_low.present() || q_high.present() || q_unit.present() {
        let needs = "quantity_low, quantity_high and quantity_unit go together";
        let ql = q_low.number("the physical value at signal_low_v")?;
        let qh = q_high.number("the physical value at signal_high_v")?;
        let unit = q_unit.text()?;
        let ql = q_low.ranged(ql.ok_or_else(|| q_low.missing(&format!("a number ({needs})")))?)?;
        let qh =
            q_high.ranged(qh.ok_or_else(|| q_high.missing(&format!("a number ({needs})")))?)?;
        let unit =
            unit.ok_or_else(|| q_unit.missing(&format!("text such as \"bar\" ({needs})")))?;
        if ql == qh {
            return Err(q_high.err(format!(
                "sensor.quantity_high equals sensor.quantity_low ({}); expected a different value",
                short_number(ql)
            )));
        }
        if (qh - ql).abs() < MIN_QUANTITY_SPAN {
            return Err(q_high.err(format!(
                "|quantity_high - quantity_low| is {}; expected at least {MIN_QUANTITY_SPAN}",
                short_number((qh - ql).abs())
            )));
        }
        Some(Quantity {
            low: ql,
            high: qh,
            unit,
        })
    } else {
        None
    };

    let output = key!(ctx, sensor, raw, output).choice(
        &[
            ("single-ended", SensorOutput::SingleEnded),
            ("differential", SensorOutput::Differential),
        ],
        SensorOutput::SingleEnded,
    )?;

    let cm_key = key!(ctx, sensor, raw, common_mode_v);
    let cm = cm_key.number("volts")?;
    let common_mode =
        match (output, cm) {
            (SensorOutput::Differential, Some(v)) => cm_key.ranged(v)?,
            (SensorOutput::Differential, None) => return Err(cm_key.err(
                "a differential sensor needs `sensor.common_mode_v`, the common-mode voltage of \
                 its outputs, in volts",
            )),
            (SensorOutput::SingleEnded, None) => 0.0,
            (SensorOutput::SingleEnded, Some(_)) => {
                return Err(cm_key.err(
                    "sensor.common_mode_v applies only to output = \"differential\"; remove it or \
                 set output = \"differential\"",
                ))
            }
        };

    let source_key = key!(ctx, sensor, raw, source_ohms);
    let source = source_key.number("ohms")?.unwrap_or(defaults::SOURCE_OHMS);
    check(
        &source_key,
        source,
        source >= 0.0,
        "a source resistance of zero ohms or more",
    )?;

    Ok(Sensor {
        label,
        signal_low: Volts(low),
        signal_high: Volts(high),
        quantity,
        output,
        common_mode: Volts(common_mode),
        source: Ohms(source),
    })
}

fn supply<W: Field>(raw: Option<&RawSupply<W>>, ctx: &Ctx<'_>) -> Result<Supply> {
    let pos_key = key!(ctx, supply, raw, positive_v);
    let neg_key = key!(ctx, supply, raw, negative_v);
    let positive = pos_key.ranged(pos_key.required_number("volts")?)?;
    let negative = neg_key.ranged(neg_key.number("volts")?.unwrap_or(defaults::NEGATIVE_V))?;
    if positive <= negative {
        return Err(pos_key.err(format!(
            "supply.positive_v ({} V) must be above supply.negative_v ({} V)",
            short_number(positive),
            short_number(negative)
        )));
    }
    let tol_key = key!(ctx, supply, raw, tolerance_pct);
    let tolerance = tol_key
        .number("percent")?
        .unwrap_or(defaults::TOLERANCE_PCT);
    check(
        &tol_key,
        tolerance,
        (0.0..100.0).contains(&tolerance),
        "a tolerance from 0 to less than 100 %",
    )?;
    let ratiometric = key!(ctx, supply, raw, ratiometric).boolean(false)?;
    Ok(Supply {
        positive: Volts(positive),
        negative: Volts(negative),
        tolerance: Percent(tolerance),
        ratiometric,
    })
}

fn adc<W: Field>(raw: Option<&RawAdc<W>>, supply: &Supply, ctx: &Ctx<'_>) -> Result<Adc> {
    let low_key = key!(ctx, adc, raw, low_v);
    let high_key = key!(ctx, adc, raw, high_v);
    let low = low_key.ranged(low_key.required_number("volts")?)?;
    let high = high_key.ranged(high_key.required_number("volts")?)?;
    if low >= high {
        return Err(high_key.err(format!(
            "adc.high_v ({} V) must be above adc.low_v ({} V)",
            short_number(high),
            short_number(low)
        )));
    }
    if high - low < MIN_ADC_SPAN_V {
        return Err(high_key.err(format!(
            "the ADC window adc.high_v - adc.low_v is {} V; expected at least {MIN_ADC_SPAN_V} V",
            short_number(high - low)
        )));
    }
    if low < supply.negative.0 {
        return Err(low_key.err(format!(
            "the ADC window starts at {} V, below the negative rail (supply.negative_v = {} V); \
             expected adc.low_v inside the supply rails",
            short_number(low),
            short_number(supply.negative.0)
        )));
    }
    if high > supply.positive.0 {
        return Err(high_key.err(format!(
            "the ADC window ends at {} V, above the positive rail (supply.positive_v = {} V); \
             expected adc.high_v inside the supply rails",
            short_number(high),
            short_number(supply.positive.0)
        )));
    }
    let bits = key!(ctx, adc, raw, bits).integer_in("bits of resolution", None)?;
    let margin_key = key!(ctx, adc, raw, margin_pct);
    let margin = margin_key
        .number("percent")?
        .unwrap_or(defaults::MARGIN_PCT);
    check(
        &margin_key,
        margin,
        (0.0..50.0).contains(&margin),
        "a margin from 0 to less than 50 % at each end of the window",
    )?;
    Ok(Adc {
        low: Volts(low),
        high: Volts(high),
        bits: bits as u32,
        margin: Percent(margin),
    })
}

fn accuracy<W: Field>(raw: Option<&RawAccuracy<W>>, ctx: &Ctx<'_>) -> Result<Accuracy> {
    let max_key = key!(ctx, accuracy, raw, max_error_pct_fs);
    let max_error = max_key.required_number("percent of full scale")?;
    check(
        &max_key,
        max_error,
        max_error > 0.0 && max_error <= 100.0,
        "an error bound above 0 and at most 100 % of full scale",
    )?;
    let basis = key!(ctx, accuracy, raw, basis).choice(
        &[
            ("worst-case", Basis::WorstCase),
            ("rss", Basis::Rss),
            ("yield", Basis::Yield),
        ],
        Basis::WorstCase,
    )?;
    let yield_key = key!(ctx, accuracy, raw, yield_pct);
    let yield_pct = yield_key.number("percent")?.unwrap_or(defaults::YIELD_PCT);
    check(
        &yield_key,
        yield_pct,
        yield_pct > 0.0 && yield_pct < 100.0,
        "a yield above 0 and below 100 %",
    )?;
    let tmin_key = key!(ctx, accuracy, raw, temp_min_c);
    let tmax_key = key!(ctx, accuracy, raw, temp_max_c);
    let temp_min = tmin_key
        .number("degrees Celsius")?
        .unwrap_or(defaults::TEMP_MIN_C);
    let temp_max = tmax_key
        .number("degrees Celsius")?
        .unwrap_or(defaults::TEMP_MAX_C);
    for (key, t) in [(&tmin_key, temp_min), (&tmax_key, temp_max)] {
        check(
            key,
            t,
            t >= ABSOLUTE_ZERO_C,
            "a temperature at or above absolute zero (-273.15 degC)",
        )?;
    }
    if temp_min > temp_max {
        let note = |k: &Key<'_, W>| if k.present() { "" } else { ", the default" };
        return Err(tmin_key.err(format!(
            "accuracy.temp_min_c ({temp_min} degC{}) is above accuracy.temp_max_c \
             ({temp_max} degC{}); expected temp_min_c <= temp_max_c",
            note(&tmin_key),
            note(&tmax_key)
        )));
    }
    let calibration = key!(ctx, accuracy, raw, calibration).choice(
        &[
            ("none", Calibration::None),
            ("offset", Calibration::Offset),
            ("two-point", Calibration::TwoPoint),
        ],
        Calibration::None,
    )?;
    let bw_key = key!(ctx, accuracy, raw, bandwidth_hz);
    let bandwidth = bw_key.number("hertz")?.unwrap_or(defaults::BANDWIDTH_HZ);
    check(
        &bw_key,
        bandwidth,
        bandwidth > 0.0,
        "a bandwidth above 0 Hz",
    )?;
    Ok(Accuracy {
        max_error_pct_fs: max_error,
        basis,
        yield_pct,
        temp_min: Celsius(temp_min),
        temp_max: Celsius(temp_max),
        calibration,
        bandwidth: Hertz(bandwidth),
    })
}

fn search<W: Field>(raw: Option<&RawSearch<W>>, ctx: &Ctx<'_>) -> Result<SearchOptions> {
    let max_stages =
        key!(ctx, search, raw, max_stages).integer_in("stages", Some(defaults::MAX_STAGES))?;
    let topology_names: Vec<(&str, Topology)> =
        Topology::ALL.iter().map(|&t| (t.name(), t)).collect();
    let topologies =
        key!(ctx, search, raw, topologies).choice_list(&topology_names, &Topology::ALL)?;
    let series_names: Vec<(&str, Series)> = Series::ALL.iter().map(|&s| (s.name(), s)).collect();
    let resistor_series =
        key!(ctx, search, raw, resistor_series).choice_list(&series_names, &[Series::E96])?;
    let objective = key!(ctx, search, raw, objective).choice(
        &[
            ("cost", Objective::Cost),
            ("error", Objective::Error),
            ("parts", Objective::Parts),
        ],
        Objective::Cost,
    )?;
    let line_key = key!(ctx, search, raw, bom_line_cost);
    let bom_line_cost = line_key
        .number("cost per distinct BOM line")?
        .unwrap_or(defaults::BOM_LINE_COST);
    check(
        &line_key,
        bom_line_cost,
        bom_line_cost >= 0.0,
        "a cost of zero or more",
    )?;
    let max_parts =
        key!(ctx, search, raw, max_parts).integer_in("parts", Some(defaults::MAX_PARTS))?;
    let time_limit_ms = key!(ctx, search, raw, time_limit_ms)
        .integer_in("milliseconds", Some(defaults::TIME_LIMIT_MS))?;
    Ok(SearchOptions {
        max_stages: max_stages as usize,
        topologies,
        resistor_series,
        objective,
        bom_line_cost,
        max_parts: max_parts as usize,
        time_limit_ms: time_limit_ms as u64,
    })
}

fn stock<W: Field>(raw: Option<&RawStock<W>>, ctx: &Ctx<'_>) -> Result<StockSource> {
    let path_key = key!(ctx, stock, raw, path);
    let path = path_key.text()?;
    if path.as_deref().is_some_and(|p| p.trim().is_empty()) {
        return Err(path_key.err(
            "stock.path is empty; expected a folder of stock CSVs, or leave the key out to use \
             the demo stock",
        ));
    }
    let only = key!(ctx, stock, raw, only).boolean(true)?;
    Ok(StockSource { path, only })
}

#[cfg(test)]
mod tests {
    use super::*;

    const MINIMAL: &str = "[sensor]\nsignal_low_v = 0\nsignal_high_v = 0.01\n\
                           [adc]\nlow_v = 0\nhigh_v = 3.3\nbits = 12\n\
                           [supply]\npositive_v = 5\n\
                           [accuracy]\nmax_error_pct_fs = 1\n";

    fn message(text: &str) -> String {
        match parse_need(text.as_bytes(), "t.toml") {
            Ok(_) => panic!("expected an error for:\n{text}"),
            Err(e) => e.to_string(),
        }
    }

    #[test]
    fn defaults_apply_to_a_minimal_need() {
        let need = parse_need(MINIMAL.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.label, defaults::LABEL);
        assert_eq!(need.sensor.output, SensorOutput::SingleEnded);
        assert_eq!(need.sensor.common_mode, Volts(0.0));
        assert_eq!(need.sensor.quantity, None);
        assert_eq!(need.adc.margin, Percent(0.0));
        assert_eq!(need.supply.negative, Volts(0.0));
        assert_eq!(need.supply.tolerance, Percent(5.0));
        assert!(!need.supply.ratiometric);
        assert_eq!(need.accuracy.basis, Basis::WorstCase);
        assert_eq!(need.accuracy.yield_pct, 99.0);
        assert_eq!(need.accuracy.temp_min, Celsius(0.0));
        assert_eq!(need.accuracy.temp_max, Celsius(70.0));
        assert_eq!(need.accuracy.calibration, Calibration::None);
        assert_eq!(need.accuracy.bandwidth, Hertz(10.0));
        assert_eq!(need.search.max_stages, 3);
        assert_eq!(need.search.topologies, Topology::ALL.to_vec());
        assert_eq!(need.search.resistor_series, vec![Series::E96]);
        assert_eq!(need.search.objective, Objective::Cost);
        assert_eq!(need.search.bom_line_cost, 0.0);
        assert_eq!(need.search.max_parts, 30);
        assert_eq!(need.search.time_limit_ms, 2000);
        assert_eq!(need.stock.path, None);
        assert!(need.stock.only);
        // Integers in TOML are accepted where volts are expected.
        assert_eq!(need.adc.high, Volts(3.3));
        assert_eq!(need.supply.positive, Volts(5.0));
    }

    #[test]
    fn unknown_key_names_table_line_and_allowed_keys() {
        let text = MINIMAL.replace("bits = 12", "bits = 12\nbitz = 3");
        let m = message(&text);
        assert!(m.contains("line 8"), "{m}");
        assert!(m.contains("adc.bitz"), "{m}");
        assert!(m.contains("low_v, high_v, bits, margin_pct"), "{m}");
        let m = message(&format!("{MINIMAL}[extra]\nx = 1\n"));
        assert!(m.contains("unknown table `extra`"), "{m}");
        assert!(
            m.contains("sensor, adc, supply, accuracy, search, stock"),
            "{m}"
        );
    }

    /// Every raw table is recognised from its unknown-key message, so the
    /// first-key map above stays in step with the structs.
    #[test]
    fn every_table_is_named_in_unknown_key_messages() {
        for table in ["sensor", "adc", "supply", "accuracy", "search", "stock"] {
            let text = if MINIMAL.contains(&format!("[{table}]")) {
                MINIMAL.replace(&format!("[{table}]"), &format!("[{table}]\nzz = 1"))
            } else {
                format!("{MINIMAL}[{table}]\nzz = 1\n")
            };
            let m = message(&text);
            assert!(m.contains(&format!("{table}.zz")), "{m}");
            let json = format!("{{\"{table}\": {{\"zz\": 1}}}}");
            let m = parse_need(json.as_bytes(), "t.json")
                .unwrap_err()
                .to_string();
            assert!(m.contains(&format!("{table}.zz")), "{m}");
            assert!(m.contains("line 1"), "{m}");
        }
    }

    #[test]
    fn wrong_type_names_key_line_and_expected_type() {
        let m = message(&MINIMAL.replace("bits = 12", "bits = \"twelve\""));
        assert!(m.contains("adc.bits"), "{m}");
        assert!(m.contains("line 7, column 8"), "{m}");
        assert!(m.contains("expected a whole number"), "{m}");
        let m = message(&MINIMAL.replace("bits = 12", "bits = 12.5"));
        assert!(m.contains("found the number `12.5`"), "{m}");
        let m = message(&MINIMAL.replace("positive_v = 5", "positive_v = true"));
        assert!(m.contains("supply.positive_v"), "{m}");
        assert!(
            m.contains("expected a number (volts), found the boolean `true`"),
            "{m}"
        );
        let m = message(&format!("{MINIMAL}[stock]\nonly = \"yes\"\n"));
        assert!(m.contains("stock.only"), "{m}");
        assert!(m.contains("expected true or false"), "{m}");
        let m = message(&format!("{MINIMAL}[search]\nmax_stages = 1979-05-27\n"));
        assert!(m.contains("a date/time"), "{m}");
        let m = message(&MINIMAL.replace("[adc]\n", "adc = 5\n[adcx]\n"));
        assert!(m.contains("line"), "{m}");
    }

    #[test]
    fn non_finite_values_are_refused() {
        for literal in ["nan", "inf", "-inf", "+nan"] {
            let m = message(&MINIMAL.replace("high_v = 3.3", &format!("high_v = {literal}")));
            assert!(m.contains("adc.high_v"), "{m}");
            assert!(m.contains("expected a finite number"), "{m}");
        }
    }

    /// The need text with `key` (a path of [`NUMBER_RANGES`]) set to
    /// `value`, added to its table.
    fn with_key(key: &str, value: &str) -> String {
        let (table, name) = key.split_once('.').unwrap();
        let mut lines: Vec<String> = MINIMAL.lines().map(str::to_string).collect();
        let header = format!("[{table}]");
        let start = match lines.iter().position(|l| *l == header) {
            Some(i) => i,
            None => {
                lines.push(header);
                lines.len() - 1
            }
        };
        let end = (start + 1..lines.len())
            .find(|&i| lines[i].starts_with('['))
            .unwrap_or(lines.len());
        let line = format!("{name} = {value}");
        match (start + 1..end).find(|&i| lines[i].starts_with(&format!("{name} = "))) {
            Some(i) => lines[i] = line,
            None => lines.insert(start + 1, line),
        }
        let mut text = lines.join("\n") + "\n";
        if key == "sensor.common_mode_v" {
            text = text.replace("[sensor]\n", "[sensor]\noutput = \"differential\"\n");
        }
        if key.starts_with("sensor.quantity_") {
            text = text.replace("[sensor]\n", "[sensor]\nquantity_unit = \"bar\"\n");
            for other in ["quantity_low", "quantity_high"] {
                if !key.ends_with(other) {
                    text = text.replace("[sensor]\n", &format!("[sensor]\n{other} = 0.5\n"));
                }
            }
        }
        text
    }

    /// Every number of a need has a finite range: values far outside it
    /// (and the tiniest and largest doubles) are refused with the key, its
    /// line and the range.
    #[test]
    fn every_number_key_has_a_range_that_is_enforced() {
        for r in NUMBER_RANGES {
            for value in ["1e308", "-1e308", "-1.7976931348623157e308"] {
                let m = message(&with_key(r.key, value));
                assert!(m.contains(r.key), "{}: {m}", r.key);
                assert!(m.contains("line "), "{}: {m}", r.key);
                assert!(m.contains(&format!("{}", r.max)), "{}: {m}", r.key);
            }
            // The ends themselves are inside, unless a key's own rule
            // refuses them (then with its own message, still keyed).
            for end in [r.min, r.max] {
                if let Err(e) = parse_need(with_key(r.key, &format!("{end:?}")).as_bytes(), "t") {
                    assert!(
                        e.to_string().contains(r.key) || e.to_string().contains("line"),
                        "{e}"
                    );
                }
            }
        }
        let m = message(&MINIMAL.replace("signal_high_v = 0.01", "signal_high_v = 5e-324"));
        assert!(m.contains("sensor span") && m.contains("at least"), "{m}");
        let m = message(&MINIMAL.replace("high_v = 3.3", "high_v = 0.0000001"));
        assert!(m.contains("adc.high_v"), "{m}");
    }

    /// A number too large for TOML names its key and range.
    #[test]
    fn a_huge_whole_number_names_key_and_range() {
        let m = message(&format!(
            "{MINIMAL}[search]\ntime_limit_ms = 1180591620717411303424\n"
        ));
        assert!(m.contains("search.time_limit_ms"), "{m}");
        assert!(m.contains("from 1 to 3600000"), "{m}");
        let json = "{\"search\": {\"time_limit_ms\": 1180591620717411303424}}";
        let need = MINIMAL_JSON.replace(
            "}}",
            "}, \"search\": {\"time_limit_ms\": 1180591620717411303424}}",
        );
        let m = parse_need(need.as_bytes(), "t.json")
            .unwrap_err()
            .to_string();
        assert!(
            m.contains("search.time_limit_ms") && m.contains("from 1 to 3600000"),
            "{json} {m}"
        );
    }

    const MINIMAL_JSON: &str = "{\"sensor\": {\"signal_low_v\": 0, \"signal_high_v\": 0.01}, \
        \"adc\": {\"low_v\": 0, \"high_v\": 3.3, \"bits\": 12}, \"supply\": {\"positive_v\": 5}, \
        \"accuracy\": {\"max_error_pct_fs\": 1}}";

    /// Messages: never an empty TOML message, columns from 1, JSON that is
    /// not an object answered as JSON, echoed text cut.
    #[test]
    fn messages_speak_the_format_and_stay_short() {
        assert!(parse_need(MINIMAL_JSON.as_bytes(), "t.json").is_ok());
        let m = parse_need(b"{\n\"sensor\": {\n", "t.json")
            .unwrap_err()
            .to_string();
        assert!(m.contains("column 1") && !m.contains("column 0"), "{m}");
        for (text, kind) in [
            ("[1, 2]", "a list"),
            ("\"abc\"", "a string"),
            ("42", "a number"),
        ] {
            let m = parse_need(text.as_bytes(), "t").unwrap_err().to_string();
            assert!(
                m.contains("JSON") && m.contains(kind) && !m.contains("TOML:"),
                "{m}"
            );
        }
        let long = "k".repeat(200_000);
        let m = message(&MINIMAL.replace("bits = 12", &format!("bits = 12\n{long} = 1")));
        assert!(m.len() < 600, "{} chars: {}", m.len(), &m[..300]);
        assert!(m.contains('…'), "{m}");
        let m = message(&MINIMAL.replace("bits = 12", &format!("bits = \"{long}\"")));
        assert!(m.len() < 600, "{} chars", m.len());
        for bad in ["= 1", "[adc", "x = ", "a = 1\na = 2", "x = 1979-05-27T"] {
            let m = message(bad);
            assert!(!m.trim_end().ends_with(':'), "{m}");
            assert!(m.contains("line 1") || m.contains("line 2"), "{m}");
        }
    }

    #[test]
    fn cross_key_checks() {
        let m = message(&MINIMAL.replace("signal_high_v = 0.01", "signal_high_v = 0"));
        assert!(m.contains("sensor.signal_high_v"), "{m}");
        let m = message(&MINIMAL.replace("high_v = 3.3", "high_v = 6"));
        assert!(m.contains("above the positive rail"), "{m}");
        let m = message(&MINIMAL.replace("low_v = 0\n", "low_v = -1\n"));
        assert!(m.contains("adc.low_v"), "{m}");
        assert!(m.contains("below the negative rail"), "{m}");
        let m = message(&format!("{MINIMAL}temp_min_c = 80\n"));
        assert!(m.contains("70 degC, the default"), "{m}");
        let m = message(&MINIMAL.replace("positive_v = 5", "positive_v = 5\nnegative_v = 5"));
        assert!(m.contains("must be above supply.negative_v"), "{m}");
    }

    #[test]
    fn differential_needs_common_mode_and_single_ended_refuses_it() {
        let m = message(&MINIMAL.replace("[adc]", "output = \"differential\"\n[adc]"));
        assert!(m.contains("sensor.common_mode_v"), "{m}");
        let m = message(&MINIMAL.replace("[adc]", "common_mode_v = 2.5\n[adc]"));
        assert!(m.contains("applies only to output"), "{m}");
        let ok = MINIMAL.replace(
            "[adc]",
            "output = \"differential\"\ncommon_mode_v = 2.5\n[adc]",
        );
        let need = parse_need(ok.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.common_mode, Volts(2.5));
    }

    #[test]
    fn quantity_keys_go_together() {
        let m = message(&MINIMAL.replace("[adc]", "quantity_low = 0\n[adc]"));
        assert!(m.contains("quantity_high"), "{m}");
        let full = MINIMAL.replace(
            "[adc]",
            "quantity_low = 0\nquantity_high = 10\nquantity_unit = \"bar\"\n[adc]",
        );
        let need = parse_need(full.as_bytes(), "t.toml").unwrap();
        let q = need.sensor.quantity.unwrap();
        assert_eq!((q.low, q.high, q.unit.as_str()), (0.0, 10.0, "bar"));
    }

    #[test]
    fn lists_are_checked_item_by_item_and_deduplicated() {
        let m = message(&format!(
            "{MINIMAL}[search]\nresistor_series = [\"E96\", \"E97\"]\n"
        ));
        assert!(m.contains("search.resistor_series"), "{m}");
        assert!(m.contains("item 2"), "{m}");
        assert!(m.contains("\"E192\""), "{m}");
        let need = parse_need(
            format!("{MINIMAL}[search]\ntopologies = [\"inverting\", \"inverting\"]\nresistor_series = \"E24\"\n")
                .as_bytes(),
            "t.toml",
        )
        .unwrap();
        assert_eq!(need.search.topologies, vec![Topology::Inverting]);
        assert_eq!(need.search.resistor_series, vec![Series::E24]);
    }

    #[test]
    fn line_col_counts_characters() {
        let text = "ab\ncdé f\n";
        assert_eq!(line_col(text, 0), (1, 1));
        assert_eq!(line_col(text, 3), (2, 1));
        // 'é' is two bytes; the space after it is column 4.
        assert_eq!(line_col(text, 7), (2, 4));
        // Inside 'é' moves back to its start.
        assert_eq!(line_col(text, 6), (2, 3));
        assert_eq!(line_col(text, 999), (3, 1));
    }

    #[test]
    fn bad_utf8_names_line_and_offset() {
        let mut bytes = b"[sensor]\nlabel = \"a".to_vec();
        bytes.push(0xFF);
        bytes.extend_from_slice(b"\"\n");
        let m = parse_need(&bytes, "t.toml").unwrap_err().to_string();
        assert!(m.contains("line 2"), "{m}");
        assert!(m.contains("byte offset 19"), "{m}");
        assert!(m.contains("0xFF"), "{m}");
    }

    #[test]
    fn byte_order_mark_is_ignored() {
        let text = format!("\u{feff}{MINIMAL}");
        assert!(parse_need(text.as_bytes(), "t.toml").is_ok());
        let json = "\u{feff}  {\"sensor\": {}}";
        let m = parse_need(json.as_bytes(), "t.json")
            .unwrap_err()
            .to_string();
        assert!(m.contains("missing table [adc]"), "{m}");
    }
}
