//! Reading the stock CSV tables of `docs/stock.md` into [`Stock`].
//!
//! A small RFC 4180 reader ([`read_csv`]) keeps the 1-based line on which
//! each record starts, so every message can name the file, the line and the
//! column. It accepts quoted fields (with doubled quotes and line breaks
//! inside), LF, CRLF or CR line ends, a trailing line end, a UTF-8
//! byte-order mark at the start, blank lines, and lines starting with `#`
//! as comments. Columns are mapped by their header name, in any order;
//! unknown and missing columns are errors.
//!
//! Limits, checked before anything is parsed: a file is at most 8 MiB, a
//! line at most 64 KiB, and the text must be UTF-8. Part ids and packages
//! are data, up to 64 characters, without control characters; markup in
//! them is kept as written (the page escapes it). Resistances lie from
//! 1 milliohm to 1 teraohm, and a stock expands to at most 100,000 resistor
//! values.

use crate::error::{Error, Location, Result};
use crate::need_parse::{decode_utf8, listed, shown};
use crate::series::{value_code, Series};
use crate::stock::{
    CapacitorPart, InAmpPart, NetworkPart, OpAmpPart, ReferencePart, ResistorPart, Stock, StockFile,
};
use crate::units::{Decibels, Farads, Ohms, Percent, PpmPerC, Volts};
use std::collections::HashMap;

mod capacitors;
mod csv;
mod networks;
mod tables;

use capacitors::capacitors;
use csv::{read_csv, Record};
use networks::networks;
use tables::{inamps, opamps, references, resistors};

/// Largest stock file accepted, in bytes (8 MiB).
const MAX_FILE_BYTES: usize = 8 << 20;

/// Longest line accepted, in bytes (64 KiB).
const MAX_LINE_BYTES: usize = 64 << 10;

/// Longest part id or package text, in characters.
pub(crate) const MAX_ID_CHARS: usize = 64;

/// Most resistor values a stock may expand to (single rows plus every
/// value of every family); the same limit holds for capacitor values.
const MAX_RESISTOR_VALUES: usize = 100_000;

/// Smallest and largest capacitance accepted, in farads (0.1 pF to 1 F).
pub(crate) const FARADS_RANGE: (f64, f64) = (1e-13, 1.0);

/// Highest rated voltage accepted for a capacitor, in volts.
const MAX_RATED_V: f64 = 1e5;

/// Smallest and largest resistance accepted, in ohms (stock and inline
/// design resistors alike).
pub(crate) const OHMS_RANGE: (f64, f64) = (1e-3, 1e12);

/// Largest resistor TCR accepted, in ppm/degC (stock and inline design
/// resistors alike).
pub(crate) const MAX_TCR_PPM_PER_C: f64 = 1e5;

/// Largest unit cost accepted (any currency).
pub(crate) const MAX_UNIT_COST: f64 = 1e6;

/// Largest value of any other number column: every column is bounded so
/// that nothing later overflows.
const MAX_NUMBER: f64 = 1e9;

/// Sections an op-amp package may hold.
const CHANNELS: [u32; 3] = [1, 2, 4];

/// The six kinds of table, recognised by file name.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Table {
    Resistors,
    OpAmps,
    References,
    InAmps,
    Capacitors,
    Networks,
}

/// The value columns of a table whose rows are single values or series
/// families (resistors, capacitors).
#[derive(Debug, Clone, Copy)]
pub(crate) struct ValueColumns {
    /// The single-value column (`value_ohms`).
    pub single: &'static str,
    /// The family columns: series name, lowest and highest value.
    pub family: [&'static str; 3],
}

/// Value columns of `resistors.csv`.
const RESISTOR_VALUES: ValueColumns = ValueColumns {
    single: "value_ohms",
    family: ["series", "min_ohms", "max_ohms"],
};

/// Value columns of `capacitors.csv`.
const CAPACITOR_VALUES: ValueColumns = ValueColumns {
    single: "value_farads",
    family: ["series", "min_farads", "max_farads"],
};

impl Table {
    const ALL: [Table; 6] = [
        Table::Resistors,
        Table::OpAmps,
        Table::References,
        Table::InAmps,
        Table::Capacitors,
        Table::Networks,
    ];

    fn file_name(self) -> &'static str {
        match self {
            Table::Resistors => "resistors.csv",
            Table::OpAmps => "opamps.csv",
            Table::References => "references.csv",
            Table::InAmps => "inamps.csv",
            Table::Capacitors => "capacitors.csv",
            Table::Networks => "networks.csv",
        }
    }

    /// The value columns, for a table of single values or families.
    fn value_columns(self) -> Option<ValueColumns> {
        match self {
            Table::Resistors => Some(RESISTOR_VALUES),
            Table::Capacitors => Some(CAPACITOR_VALUES),
            _ => None,
        }
    }

    /// The table a file name stands for: its last path component, compared
    /// without regard to ASCII case.
    fn from_file_name(name: &str) -> Option<Table> {
        let base = name.rsplit(['/', '\\']).next().unwrap_or(name);
        Table::ALL
            .into_iter()
            .find(|t| t.file_name().eq_ignore_ascii_case(base))
    }

    /// Columns every file of this kind must have.
    fn required_columns(self) -> &'static [&'static str] {
        match self {
            Table::Resistors => &[
                "part_id",
                "tolerance_pct",
                "tcr_ppm_per_c",
                "package",
                "unit_cost",
                "stock_qty",
            ],
            Table::OpAmps => &[
                "part_id",
                "channels",
                "supply_min_v",
                "supply_max_v",
                "input_headroom_low_v",
                "input_headroom_high_v",
                "output_headroom_low_v",
                "output_headroom_high_v",
                "vos_max_uv",
                "vos_drift_uv_per_c",
                "ib_max_na",
                "ios_max_na",
                "aol_min_db",
                "gbw_mhz",
                "en_nv_rthz",
                "in_pa_rthz",
                "cmrr_min_db",
                "unit_cost",
                "stock_qty",
            ],
            Table::References => &[
                "part_id",
                "volts",
                "initial_pct",
                "tempco_ppm_per_c",
                "dropout_v",
                "noise_uv_pp",
                "unit_cost",
                "stock_qty",
            ],
            Table::InAmps => &[
                "part_id",
                "gain_resistor_ohms",
                "gain_error_pct",
                "gain_drift_ppm_per_c",
                "input_offset_uv",
                "output_offset_uv",
                "offset_drift_uv_per_c",
                "ib_max_na",
                "cmrr_min_db",
                "supply_min_v",
                "supply_max_v",
                "input_headroom_low_v",
                "input_headroom_high_v",
                "output_headroom_low_v",
                "output_headroom_high_v",
                "en_nv_rthz",
                "gbw_mhz",
                "unit_cost",
                "stock_qty",
            ],
            Table::Capacitors => &[
                "part_id",
                "tolerance_pct",
                "tempco_ppm_per_c",
                "dielectric",
                "rated_v",
                "package",
                "unit_cost",
                "stock_qty",
            ],
            Table::Networks => &[
                "part_id",
                "count",
                "value_ohms",
                "abs_tolerance_pct",
                "ratio_tolerance_pct",
                "abs_tcr_ppm_per_c",
                "tracking_tcr_ppm_per_c",
                "package",
                "unit_cost",
                "stock_qty",
            ],
        }
    }

    /// Columns a file may have in addition (resistors and capacitors: a
    /// single value, or a series family; at least one of the two kinds
    /// must be complete; op-amps: `output_ohms`, `ib_doubling_c`,
    /// `psrr_min_db`, `output_current_ma`, `en_corner_hz`, `in_corner_hz`; in-amps:
    /// `ib_doubling_c`, `psrr_min_db`, `output_current_ma`, `en_corner_hz`; references:
    /// `load_regulation_ppm_per_ma`, `max_load_ma`). An absent column or an
    /// empty cell takes the documented default.
    fn optional_columns(self) -> &'static [&'static str] {
        match self {
            Table::Resistors => &["value_ohms", "series", "min_ohms", "max_ohms"],
            Table::Capacitors => &["value_farads", "series", "min_farads", "max_farads"],
            Table::OpAmps => &[
                "output_ohms",
                "ib_doubling_c",
                "psrr_min_db",
                "output_current_ma",
                "en_corner_hz",
                "in_corner_hz",
            ],
            Table::InAmps => &[
                "ib_doubling_c",
                "psrr_min_db",
                "output_current_ma",
                "en_corner_hz",
            ],
            Table::References => &["load_regulation_ppm_per_ma", "max_load_ma"],
            Table::Networks => &[],
        }
    }

    fn all_columns(self) -> Vec<&'static str> {
        let mut all = self.required_columns().to_vec();
        if self.value_columns().is_some() {
            // Keep the documented order: the value columns follow part_id.
            for (i, c) in self.optional_columns().iter().enumerate() {
                all.insert(1 + i, c);
            }
        } else {
            all.extend(self.optional_columns());
        }
        all
    }
}

/// Parse and validate the stock tables (see [`crate::stock::parse_stock`]).
// Long because it runs the tables in their fixed order and checks ids
// across them in one pass; each step is a call.
pub(crate) fn parse_stock(files: &[StockFile]) -> Result<Stock> {
    if files.is_empty() {
        return Err(Error::input(
            Location::file("stock"),
            format!(
                "no stock files were given; expected {}",
                expected_file_names()
            ),
        ));
    }
    let mut given: HashMap<&'static str, &str> = HashMap::new();
    let mut stock = Stock::default();
    // (part id, file, line) of every part, for the check across tables.
    let mut owners: Vec<(String, &str, usize)> = Vec::new();
    for file in files {
        let table = Table::from_file_name(&file.name).ok_or_else(|| {
            Error::input(
                Location::file(&file.name),
                format!(
                    "unknown stock file `{}`; expected one of {}",
                    shown(&file.name),
                    expected_file_names()
                ),
            )
        })?;
        if let Some(first) = given.insert(table.file_name(), &file.name) {
            return Err(Error::input(
                Location::file(&file.name),
                format!(
                    "{} is given twice (also as `{}`); expected each table once",
                    table.file_name(),
                    shown(first)
                ),
            ));
        }
        let name = file.name.as_str();
        let text = checked_text(&file.bytes, name)?;
        let records = read_csv(text, name)?;
        let (columns, rows) = split_header(&records, table, name)?;
        let mut intake = Intake {
            columns: &columns,
            rows,
            file: name,
            owners: &mut owners,
        };
        match table {
            Table::Resistors => intake.read(resistors, &mut stock.resistors)?,
            Table::OpAmps => intake.read(opamps, &mut stock.opamps)?,
            Table::References => intake.read(references, &mut stock.references)?,
            Table::InAmps => intake.read(inamps, &mut stock.inamps)?,
            Table::Capacitors => intake.read(capacitors, &mut stock.capacitors)?,
            Table::Networks => intake.read(networks, &mut stock.networks)?,
        }
    }
    check_ids_across_tables(&owners)?;
    let given_list = || {
        let mut names: Vec<&str> = given.values().copied().collect();
        names.sort_unstable();
        names.join(", ")
    };
    if stock.resistors.is_empty() {
        let (at, why) = match given.get("resistors.csv") {
            Some(name) => (Location::file(name), format!("{name} has no rows")),
            None => (
                Location::file("stock"),
                format!("no resistors.csv was given (files: {})", given_list()),
            ),
        };
        return Err(Error::input(
            at,
            format!(
                "the stock has no resistors: {why}; expected at least one resistor or series \
                 family"
            ),
        ));
    }
    if stock.opamps.is_empty() && stock.inamps.is_empty() {
        return Err(Error::input(
            Location::file("stock"),
            format!(
                "the stock has no amplifiers: no row in opamps.csv or inamps.csv (files \
                 given: {}); expected at least one op-amp or in-amp",
                given_list()
            ),
        ));
    }
    sort_by_value(&mut stock.resistors, |p| {
        (p.value.0, p.unit_cost, &p.part_id)
    });
    sort_by_value(&mut stock.capacitors, |p| {
        (p.value.0, p.unit_cost, &p.part_id)
    });
    Ok(stock)
}

/// Sort parts by value, then unit cost, then part id; `key` gives the
/// three.
fn sort_by_value<P>(parts: &mut [P], key: impl Fn(&P) -> (f64, f64, &str)) {
    parts.sort_by(|a, b| {
        let (a, b) = (key(a), key(b));
        a.0.total_cmp(&b.0)
            .then(a.1.total_cmp(&b.1))
            .then_with(|| a.2.cmp(b.2))
    });
}

/// A part of any table, known by its id.
trait Part {
    /// The part id.
    fn part_id(&self) -> &str;
}

/// [`Part`] for each kind of stock part.
macro_rules! parts_by_id {
    ($($kind:ty),*) => {
        $(impl Part for $kind {
            fn part_id(&self) -> &str {
                &self.part_id
            }
        })*
    };
}

parts_by_id!(
    ResistorPart,
    OpAmpPart,
    ReferencePart,
    InAmpPart,
    CapacitorPart,
    NetworkPart
);

/// The reader of one table: header, data records and file name in, the
/// parts with the lines they come from out.
type Reader<P> = fn(&Columns, &[Record], &str) -> Result<Vec<(P, usize)>>;

/// One file on its way into the stock: its header, its data records, its
/// name, and the (part id, file, line) of every part read so far, for the
/// check across tables.
struct Intake<'a, 'f> {
    columns: &'a Columns,
    rows: &'a [Record],
    file: &'f str,
    owners: &'a mut Vec<(String, &'f str, usize)>,
}

impl Intake<'_, '_> {
    /// Read the file with `reader` and add its parts to `into`, in order.
    fn read<P: Part>(&mut self, reader: Reader<P>, into: &mut Vec<P>) -> Result<()> {
        for (part, line) in reader(self.columns, self.rows, self.file)? {
            self.owners
                .push((part.part_id().to_string(), self.file, line));
            into.push(part);
        }
        Ok(())
    }
}

fn expected_file_names() -> String {
    Table::ALL
        .iter()
        .map(|t| t.file_name())
        .collect::<Vec<_>>()
        .join(", ")
}

/// A location with a line but no column.
fn at_line(file: &str, line: usize) -> Location {
    let mut at = Location::file(file);
    at.line = Some(line);
    at
}

/// Size, line length and UTF-8 checks; the text without a leading
/// byte-order mark.
fn checked_text<'a>(bytes: &'a [u8], file: &str) -> Result<&'a str> {
    if bytes.len() > MAX_FILE_BYTES {
        return Err(Error::input(
            Location::file(file),
            format!(
                "stock file is {} bytes; the limit is 8 MiB ({MAX_FILE_BYTES} bytes)",
                bytes.len()
            ),
        ));
    }
    let mut line = 1;
    let mut start = 0;
    for (i, &b) in bytes.iter().enumerate() {
        let is_end = b == b'\n' || (b == b'\r' && bytes.get(i + 1) != Some(&b'\n'));
        if is_end || i + 1 == bytes.len() {
            let end = if is_end { i } else { i + 1 };
            let len = end - start;
            if len > MAX_LINE_BYTES {
                return Err(Error::input(
                    at_line(file, line),
                    format!(
                        "line {line} is {len} bytes long; the limit is 64 KiB ({MAX_LINE_BYTES} \
                         bytes) per line"
                    ),
                ));
            }
            line += 1;
            start = i + 1;
        }
    }
    let text = decode_utf8(bytes, file)?;
    Ok(text.strip_prefix('\u{feff}').unwrap_or(text))
}

// ---------------------------------------------------------------------------
// Header and cells.

/// The header of one table: where each column is.
struct Columns {
    index: HashMap<String, usize>,
    count: usize,
    line: usize,
}

/// Check the header against the table's columns; the header and the data
/// records.
// Long because each header defect (unknown, repeated, missing, family
// and single columns mixed) gets its own located message.
fn split_header<'r>(
    records: &'r [Record],
    table: Table,
    file: &str,
) -> Result<(Columns, &'r [Record])> {
    let all = table.all_columns();
    let Some((header, rows)) = records.split_first() else {
        return Err(Error::input(
            Location::file(file),
            format!(
                "{file} is empty; expected a header row with the columns {}",
                all.join(",")
            ),
        ));
    };
    let mut index = HashMap::new();
    let mut unknown = Vec::new();
    // 1-based position of the first unknown column.
    let mut first_unknown = 0;
    for (i, raw) in header.fields.iter().enumerate() {
        let name = raw.trim();
        if name.is_empty() {
            return Err(Error::input(
                at_line(file, header.line),
                format!(
                    "column {} of the header has no name; expected one of {}",
                    i + 1,
                    all.join(", ")
                ),
            ));
        }
        if !all.contains(&name) {
            if unknown.is_empty() {
                first_unknown = i + 1;
            }
            unknown.push(name);
            continue;
        }
        if index.insert(name.to_string(), i).is_some() {
            return Err(Error::input(
                Location::cell(file, header.line, name),
                format!("column `{name}` appears twice in the header; expected it once"),
            ));
        }
    }
    if !unknown.is_empty() {
        let mut at = at_line(file, header.line);
        // The column is named, unless its name reads as a number (`0`),
        // which would pass for a position: then its 1-based position.
        at.column = unknown.first().map(|u| {
            if u.bytes()
                .all(|b| b.is_ascii_digit() || b == b'.' || b == b'-')
            {
                first_unknown.to_string()
            } else {
                shown(u)
            }
        });
        return Err(Error::input(
            at,
            format!(
                "unknown column{} {} in the header; the columns of {} are: {}",
                if unknown.len() > 1 { "s" } else { "" },
                listed(&unknown),
                table.file_name(),
                all.join(", ")
            ),
        ));
    }
    let mut missing: Vec<&str> = table
        .required_columns()
        .iter()
        .copied()
        .filter(|c| !index.contains_key(*c))
        .collect();
    if let Some(values) = table.value_columns() {
        let family: Vec<&str> = values
            .family
            .iter()
            .copied()
            .filter(|c| !index.contains_key(*c))
            .collect();
        let has_value = index.contains_key(values.single);
        if family.len() == values.family.len() && !has_value {
            return Err(Error::input(
                at_line(file, header.line),
                format!(
                    "the header has neither `{}` (single parts) nor `{}` (series families); \
                     expected one of them or both",
                    values.single,
                    values.family.join(",")
                ),
            ));
        }
        if family.len() < values.family.len() {
            missing.extend(family);
        }
    }
    if !missing.is_empty() {
        let list: Vec<String> = missing.iter().map(|c| format!("`{c}`")).collect();
        return Err(Error::input(
            at_line(file, header.line),
            format!(
                "missing column{} {} in the header; the columns of {} are: {}",
                if missing.len() > 1 { "s" } else { "" },
                list.join(", "),
                table.file_name(),
                all.join(", ")
            ),
        ));
    }
    Ok((
        Columns {
            index,
            count: header.fields.len(),
            line: header.line,
        },
        rows,
    ))
}

/// What a number must satisfy.
#[derive(Debug, Clone, Copy)]
enum Bound {
    /// Strictly positive.
    AboveZero,
    /// Zero or positive.
    ZeroOrMore,
    /// From zero to just under 100 (a percentage of something).
    Percent,
    /// Inside [`OHMS_RANGE`].
    Resistance,
    /// Inside [`FARADS_RANGE`].
    Capacitance,
    /// From zero to this.
    UpTo(f64),
    /// From the first to the second, both included.
    Between(f64, f64),
}

/// One data row of a table.
struct Row<'a> {
    file: &'a str,
    line: usize,
    columns: &'a Columns,
    fields: &'a [String],
}

impl<'a> Row<'a> {
    fn new(file: &'a str, columns: &'a Columns, record: &'a Record) -> Result<Self> {
        if record.fields.len() != columns.count {
            return Err(Error::input(
                at_line(file, record.line),
                format!(
                    "line {} has {} fields; the header (line {}) has {} columns",
                    record.line,
                    record.fields.len(),
                    columns.line,
                    columns.count
                ),
            ));
        }
        Ok(Row {
            file,
            line: record.line,
            columns,
            fields: &record.fields,
        })
    }

    /// The trimmed cell of a column, or `""` when the header lacks it.
    fn cell(&self, column: &str) -> &'a str {
        self.columns
            .index
            .get(column)
            .and_then(|&i| self.fields.get(i))
            .map_or("", |s| s.trim())
    }

    fn err(&self, column: &str, message: impl Into<String>) -> Error {
        Error::input(Location::cell(self.file, self.line, column), message)
    }

    fn found(&self, column: &str) -> String {
        let cell = self.cell(column);
        if cell.is_empty() {
            "an empty cell".to_string()
        } else {
            format!("`{}`", shown(cell))
        }
    }

    /// A finite number meeting `bound`; `what` reads "a number of ohms".
    fn number(&self, column: &str, what: &str, bound: Bound) -> Result<f64> {
        let cell = self.cell(column);
        let value: f64 = cell.parse().map_err(|_| {
            self.err(
                column,
                format!("expected {what}, found {}", self.found(column)),
            )
        })?;
        let (ok, rule) = match bound {
            Bound::AboveZero => (
                value > 0.0 && value <= MAX_NUMBER,
                format!("above zero and at most {MAX_NUMBER:e}"),
            ),
            Bound::ZeroOrMore => (
                (0.0..=MAX_NUMBER).contains(&value),
                format!("from 0 to {MAX_NUMBER:e}"),
            ),
            Bound::UpTo(max) => ((0.0..=max).contains(&value), format!("from 0 to {max:e}")),
            Bound::Between(min, max) => {
                ((min..=max).contains(&value), format!("from {min} to {max}"))
            }
            Bound::Percent => (
                (0.0..100.0).contains(&value),
                "from 0 to less than 100".to_string(),
            ),
            Bound::Resistance | Bound::Capacitance if value <= 0.0 => {
                (false, "above zero".to_string())
            }
            Bound::Resistance => (
                value >= OHMS_RANGE.0 && value <= OHMS_RANGE.1,
                format!("from {} to {:e}", OHMS_RANGE.0, OHMS_RANGE.1),
            ),
            Bound::Capacitance => (
                value >= FARADS_RANGE.0 && value <= FARADS_RANGE.1,
                format!("from {:e} to {}", FARADS_RANGE.0, FARADS_RANGE.1),
            ),
        };
        if ok && value.is_finite() {
            Ok(value)
        } else {
            let finite = if value.is_finite() {
                ""
            } else {
                " (a finite one)"
            };
            Err(self.err(
                column,
                format!(
                    "expected {what}{finite} {rule}, found {}",
                    self.found(column)
                ),
            ))
        }
    }

    /// A number from zero to [`MAX_NUMBER`].
    fn nonneg(&self, column: &str, what: &str) -> Result<f64> {
        self.number(column, what, Bound::ZeroOrMore)
    }

    /// A number above zero and at most [`MAX_NUMBER`].
    fn positive(&self, column: &str, what: &str) -> Result<f64> {
        self.number(column, what, Bound::AboveZero)
    }

    /// A temperature coefficient in ppm/degC, from zero to
    /// [`MAX_TCR_PPM_PER_C`].
    fn tempco(&self, column: &str) -> Result<f64> {
        self.number(
            column,
            "a temperature coefficient in ppm/degC",
            Bound::UpTo(MAX_TCR_PPM_PER_C),
        )
    }

    /// An optional number: `default` when the column is absent or the
    /// cell empty, else a number meeting `bound`.
    fn optional_number(&self, column: &str, what: &str, bound: Bound, default: f64) -> Result<f64> {
        if self.cell(column).is_empty() {
            Ok(default)
        } else {
            self.number(column, what, bound)
        }
    }

    /// Quantity on hand: a whole number, or an empty cell for unlimited.
    fn quantity(&self, column: &str) -> Result<Option<u32>> {
        let cell = self.cell(column);
        if cell.is_empty() {
            return Ok(None);
        }
        if !cell.bytes().all(|c| c.is_ascii_digit()) {
            return Err(self.err(
                column,
                format!(
                    "expected a whole number of parts on hand (or an empty cell for unlimited), \
                     found {}",
                    self.found(column)
                ),
            ));
        }
        cell.parse::<u32>().map(Some).map_err(|_| {
            self.err(
                column,
                format!(
                    "expected a quantity of at most {}, found {}",
                    u32::MAX,
                    self.found(column)
                ),
            )
        })
    }

    /// Free text of at most [`MAX_ID_CHARS`] characters with no control
    /// characters; `required` refuses an empty cell.
    fn text(&self, column: &str, required: bool) -> Result<String> {
        let cell = self.cell(column);
        if required && cell.is_empty() {
            return Err(self.err(column, "expected a part id, found an empty cell"));
        }
        let count = cell.chars().count();
        if count > MAX_ID_CHARS {
            return Err(self.err(
                column,
                format!("text is {count} characters long; the limit is {MAX_ID_CHARS}"),
            ));
        }
        if let Some(c) = cell.chars().find(|c| c.is_control()) {
            return Err(self.err(
                column,
                format!(
                    "text contains the control character {}; expected plain text",
                    c.escape_unicode()
                ),
            ));
        }
        Ok(cell.to_string())
    }
}

/// Part ids already used in one table: id to line.
#[derive(Default)]
struct Ids(HashMap<String, usize>);

impl Ids {
    fn claim(&mut self, id: &str, row: &Row<'_>) -> Result<()> {
        match self.0.insert(id.to_string(), row.line) {
            Some(first) => Err(row.err(
                "part_id",
                format!(
                    "part_id `{}` is already used on line {first} (and again on line {}); \
                     expected each part id once",
                    shown(id),
                    row.line
                ),
            )),
            None => Ok(()),
        }
    }
}

/// Read the rows of one table in order: each row's part id is read and
/// claimed (once in the table), then `read` adds the row's parts to the
/// parts so far, each with the row's line (`ids` for the ids the row
/// claims besides).
fn read_rows<P>(
    columns: &Columns,
    rows: &[Record],
    file: &str,
    mut read: impl FnMut(&Row<'_>, String, &mut Ids, &mut Vec<(P, usize)>) -> Result<()>,
) -> Result<Vec<(P, usize)>> {
    let mut ids = Ids::default();
    let mut parts = Vec::new();
    for record in rows {
        let row = Row::new(file, columns, record)?;
        let part_id = row.text("part_id", true)?;
        ids.claim(&part_id, &row)?;
        read(&row, part_id, &mut ids, &mut parts)?;
    }
    Ok(parts)
}

/// [`read_rows`] for a table of one part a row: `read` makes the part
/// from the row and its part id.
fn one_per_row<P>(
    columns: &Columns,
    rows: &[Record],
    file: &str,
    read: impl Fn(&Row<'_>, String) -> Result<P>,
) -> Result<Vec<(P, usize)>> {
    read_rows(columns, rows, file, |row, part_id, _, parts| {
        parts.push((read(row, part_id)?, row.line));
        Ok(())
    })
}

/// No part id may name parts in two tables.
fn check_ids_across_tables(owners: &[(String, &str, usize)]) -> Result<()> {
    let mut seen: HashMap<&str, (&str, usize)> = HashMap::new();
    for (id, file, line) in owners {
        if let Some(&(first_file, first_line)) = seen.get(id.as_str()) {
            if first_file != *file {
                return Err(Error::input(
                    Location::cell(file, *line, "part_id"),
                    format!(
                        "part_id `{}` is also used in {first_file} line {first_line}; expected \
                         a part id to name one part",
                        shown(id)
                    ),
                ));
            }
        }
        seen.entry(id.as_str()).or_insert((file, *line));
    }
    Ok(())
}

/// One table read and validated on its own (declared here so it can call
/// the reader's private steps).
#[path = "stock_table.rs"]
pub mod stock_table;

#[cfg(test)]
mod tests;
