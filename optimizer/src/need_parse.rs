//! Reading a need from TOML or JSON and validating it into [`Need`].
//!
//! The raw structs below mirror the keys of `docs/need.md` exactly and
//! refuse unknown keys (`deny_unknown_fields`). Each value is first read as
//! a loosely typed [`Loose`] (with its byte span, for TOML), so that a value
//! of the wrong type is reported by *this* code, naming the key path
//! (`adc.bits`), the line and column where the format allows it, and what
//! was expected. Validation then turns the raw values into the unit-typed
//! [`Need`] and applies the defaults listed on [`parse_need`].

use crate::error::{Error, Location, Result};
use crate::need::{
    Accuracy, Adc, Basis, Calibration, Excitation, Need, Objective, Quantity, SearchOptions,
    Sensor, SensorOutput, StockSource, Supply, Topology,
};
use crate::series::Series;
use crate::units::{Celsius, Decibels, Farads, Hertz, Ohms, Percent, PpmPerC, Seconds, Volts};
use serde::Deserialize;
use std::ops::Range;

mod key;
mod loose;
mod ranges;
mod text;

use key::{check, Key};
use loose::{Field, Loose};
use ranges::number_range;
#[cfg(test)]
use ranges::NUMBER_RANGES;
use ranges::{ABSOLUTE_ZERO_C, MIN_ADC_SPAN_V, MIN_QUANTITY_SPAN, MIN_SENSOR_SPAN_V};
use text::shown_long;
pub(crate) use text::{decode_utf8, line_col, listed, short_number, shown};

/// Largest need file accepted, in bytes (1 MiB).
pub(crate) const MAX_NEED_BYTES: usize = 1 << 20;

/// Longest label, unit or path text accepted, in characters.
const MAX_TEXT_CHARS: usize = 200;

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
    /// Lowest frequency of the noise line, Hz: the low end of the
    /// 0.1 Hz to 10 Hz band low-frequency noise is stated over (common
    /// practice); slower changes count as drift.
    pub const NOISE_LOW_HZ: f64 = 0.1;
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
/// | `sensor.source_ohms` | 0 (between the terminals; half in each leg of a differential sensor) |
/// | `sensor.source_tolerance_pct` | 0 |
/// | `sensor.source_tempco_ppm_per_c` | 0 |
/// | `sensor.excitation` | `"independent"` |
/// | `sensor.common_mode_tolerance_pct` | 5 for a differential sensor with `excitation = "independent"`; not allowed otherwise |
/// | `adc.margin_pct` | 0 |
/// | `adc.sample_rate_hz`, `alias_rejection_db` | none (the rejection needs the rate) |
/// | `adc.sample_capacitance_pf`, `acquisition_time_ns` | none (both or neither) |
/// | `supply.negative_v` | 0 (single supply) |
/// | `supply.tolerance_pct` | 5 |
/// | `supply.ratiometric` | false |
/// | `accuracy.basis` | `"worst-case"` |
/// | `accuracy.yield_pct` | 99 |
/// | `accuracy.temp_min_c`, `temp_max_c` | 0, 70 |
/// | `accuracy.calibration` | `"none"` |
/// | `accuracy.bandwidth_hz` | 10 |
/// | `accuracy.noise_low_hz` | 0.1 |
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
/// [`NUMBER_RANGES`](ranges::NUMBER_RANGES)): volts from -1000 to 1000; `quantity_low` and
/// `quantity_high` from -1e12 to 1e12, at least 1e-9 apart;
/// `source_ohms` 0 to 1e9; `bits` 1 to 32; `margin_pct` 0 to under 50;
/// `tolerance_pct` 0 to under 100; `max_error_pct_fs` 1e-6 to 100;
/// `yield_pct` above 0 and under 100; temperatures -273.15 to 1000 degC;
/// `bandwidth_hz` 1e-6 to 1e9; `noise_low_hz` 1e-9 to 1e6; `max_stages` 1 to 3; `bom_line_cost` 0 to
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
// Raw structs: the keys of `docs/need.md`, exactly.

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
    source_tolerance_pct: Option<W>,
    source_tempco_ppm_per_c: Option<W>,
    excitation: Option<W>,
    common_mode_tolerance_pct: Option<W>,
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
    sample_rate_hz: Option<W>,
    alias_rejection_db: Option<W>,
    sample_capacitance_pf: Option<W>,
    acquisition_time_ns: Option<W>,
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
    noise_low_hz: Option<W>,
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
    if sensor.excitation == Excitation::Supply && supply.positive.0 <= 0.0 {
        return Err(Error::input(
            ctx.at("sensor.excitation", None),
            format!(
                "sensor.excitation = \"supply\" scales the sensor with supply.positive_v, which \
                 is {} V; expected a positive rail above 0 V, or excitation = \"independent\"",
                short_number(supply.positive.0)
            ),
        ));
    }
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

// Long because it reads every key of `[sensor]` in order, with the
// cross-key checks (span, differential common mode) beside them.
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

    let tolerance_key = key!(ctx, sensor, raw, source_tolerance_pct);
    let source_tolerance = tolerance_key.number("percent")?.unwrap_or(0.0);
    check(
        &tolerance_key,
        source_tolerance,
        (0.0..100.0).contains(&source_tolerance),
        "a tolerance from 0 to less than 100 %",
    )?;
    let tempco_key = key!(ctx, sensor, raw, source_tempco_ppm_per_c);
    let source_tempco = tempco_key.number("ppm/degC")?.unwrap_or(0.0);
    check(
        &tempco_key,
        source_tempco,
        source_tempco.abs() <= 100_000.0,
        "a tempco from -100000 to 100000 ppm/degC",
    )?;

    let excitation = key!(ctx, sensor, raw, excitation).choice(
        &[
            ("independent", Excitation::Independent),
            ("supply", Excitation::Supply),
        ],
        Excitation::Independent,
    )?;
    let cm_tolerance_key = key!(ctx, sensor, raw, common_mode_tolerance_pct);
    let cm_tolerance = cm_tolerance_key.number("percent")?;
    let common_mode_tolerance = match (output, excitation, cm_tolerance) {
        (SensorOutput::SingleEnded, _, Some(_)) => {
            return Err(cm_tolerance_key.err(
                "sensor.common_mode_tolerance_pct applies only to output = \"differential\"; \
                 remove it or set output = \"differential\"",
            ))
        }
        (SensorOutput::Differential, Excitation::Supply, Some(_)) => {
            return Err(cm_tolerance_key.err(
                "with sensor.excitation = \"supply\" the common mode follows the supply and \
                 carries its tolerance (supply.tolerance_pct); remove \
                 sensor.common_mode_tolerance_pct or set excitation = \"independent\"",
            ))
        }
        (SensorOutput::Differential, Excitation::Independent, given) => {
            given.unwrap_or(crate::need::DEFAULT_COMMON_MODE_TOLERANCE_PCT)
        }
        _ => 0.0,
    };
    check(
        &cm_tolerance_key,
        common_mode_tolerance,
        (0.0..100.0).contains(&common_mode_tolerance),
        "a tolerance from 0 to less than 100 %",
    )?;

    Ok(Sensor {
        label,
        signal_low: Volts(low),
        signal_high: Volts(high),
        quantity,
        output,
        common_mode: Volts(common_mode),
        source: Ohms(source),
        source_tolerance: Percent(source_tolerance),
        source_tempco: PpmPerC(source_tempco),
        excitation,
        common_mode_tolerance: Percent(common_mode_tolerance),
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
    let optional = |key: &Key<'_, W>, unit: &str| -> Result<Option<f64>> {
        match key.number(unit)? {
            Some(v) => key.ranged(v).map(Some),
            None => Ok(None),
        }
    };
    let rate_key = key!(ctx, adc, raw, sample_rate_hz);
    let sample_rate = optional(&rate_key, "hertz")?;
    let rejection_key = key!(ctx, adc, raw, alias_rejection_db);
    let alias_rejection = optional(&rejection_key, "decibels")?;
    if alias_rejection.is_some() && sample_rate.is_none() {
        return Err(rejection_key.err(
            "adc.alias_rejection_db is the rejection at half the sample rate; expected \
             adc.sample_rate_hz with it",
        ));
    }
    let capacitance_key = key!(ctx, adc, raw, sample_capacitance_pf);
    let capacitance = optional(&capacitance_key, "picofarads")?;
    let time_key = key!(ctx, adc, raw, acquisition_time_ns);
    let acquisition = optional(&time_key, "nanoseconds")?;
    match (capacitance.is_some(), acquisition.is_some()) {
        (true, false) => {
            return Err(capacitance_key.err(
                "a sampling input needs both adc.sample_capacitance_pf and \
                 adc.acquisition_time_ns; expected adc.acquisition_time_ns with it",
            ))
        }
        (false, true) => {
            return Err(time_key.err(
                "a sampling input needs both adc.sample_capacitance_pf and \
                 adc.acquisition_time_ns; expected adc.sample_capacitance_pf with it",
            ))
        }
        _ => {}
    }
    Ok(Adc {
        low: Volts(low),
        high: Volts(high),
        bits: bits as u32,
        margin: Percent(margin),
        sample_rate: sample_rate.map(Hertz),
        alias_rejection: alias_rejection.map(Decibels),
        sample_capacitance: capacitance.map(|pf| Farads(pf * 1e-12)),
        acquisition_time: acquisition.map(|ns| Seconds(ns * 1e-9)),
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
    let low_key = key!(ctx, accuracy, raw, noise_low_hz);
    let noise_low = low_key.number("hertz")?.unwrap_or(defaults::NOISE_LOW_HZ);
    check(
        &low_key,
        noise_low,
        noise_low > 0.0,
        "a lowest noise frequency above 0 Hz",
    )?;
    Ok(Accuracy {
        max_error_pct_fs: max_error,
        basis,
        yield_pct,
        temp_min: Celsius(temp_min),
        temp_max: Celsius(temp_max),
        calibration,
        bandwidth: Hertz(bandwidth),
        noise_low: Hertz(noise_low),
        reference_box_c: None,
        filter_target_pct_fs: None,
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
mod tests;
