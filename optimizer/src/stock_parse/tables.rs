//! One reader per stock table (`resistors.csv`, `opamps.csv`,
//! `references.csv`, `inamps.csv`): rows become validated parts. The
//! reading of a row's value (a single value or a series family) is shared
//! with `capacitors.csv` through [`value_rows`], and the closing purchase
//! columns with `capacitors.csv` and `networks.csv` through [`Purchase`].

use super::*;

pub(super) fn resistors(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(ResistorPart, usize)>> {
    let kind = ValueKind {
        columns: RESISTOR_VALUES,
        what: "a number of ohms",
        unit: "ohms",
        noun: "resistor",
        bound: Bound::Resistance,
        code: value_code,
    };
    value_rows(columns, rows, file, &kind, |row| {
        let tolerance = row.number("tolerance_pct", "a tolerance in percent", Bound::Percent)?;
        let tcr = row.tempco("tcr_ppm_per_c")?;
        let buy = Purchase::read(row)?;
        Ok(move |value: RowValue| ResistorPart {
            part_id: value.part_id,
            value: Ohms(value.value),
            tolerance: Percent(tolerance),
            tcr: PpmPerC(tcr),
            package: buy.package.clone(),
            unit_cost: buy.unit_cost,
            stock_qty: buy.stock_qty,
            family: value.family,
        })
    })
}

/// The columns a passive part's row closes with: `package`, `unit_cost`
/// (at most [`MAX_UNIT_COST`]) and `stock_qty`, read in that order.
pub(super) struct Purchase {
    /// The package text.
    pub package: String,
    /// The unit cost.
    pub unit_cost: f64,
    /// The quantity on hand (`None`: unlimited).
    pub stock_qty: Option<u32>,
}

impl Purchase {
    /// Read the purchase columns of `row`.
    pub(super) fn read(row: &Row<'_>) -> Result<Purchase> {
        Ok(Purchase {
            package: row.text("package", false)?,
            unit_cost: row.number("unit_cost", "a unit cost", Bound::UpTo(MAX_UNIT_COST))?,
            stock_qty: row.quantity("stock_qty")?,
        })
    }
}

/// Read a table of single values or families (resistors, capacitors):
/// for each row, `read` reads the cells other than the part id and the
/// value (in the table's order, before the value) and gives the maker of
/// one part for each value the row stands for (see [`row_values`]).
pub(super) fn value_rows<P, F: Fn(RowValue) -> P>(
    columns: &Columns,
    rows: &[Record],
    file: &str,
    kind: &ValueKind,
    read: impl Fn(&Row<'_>) -> Result<F>,
) -> Result<Vec<(P, usize)>> {
    read_rows(columns, rows, file, |row, part_id, ids, parts| {
        let make = read(row)?;
        for value in row_values(row, &part_id, kind, parts.len(), ids)? {
            parts.push((make(value), row.line));
        }
        Ok(())
    })
}

/// How the value of a table of single values or families reads.
pub(super) struct ValueKind {
    /// The value columns.
    pub columns: ValueColumns,
    /// What a value cell holds, for messages (`a number of ohms`).
    pub what: &'static str,
    /// The unit's name (`ohms`).
    pub unit: &'static str,
    /// The part's name (`resistor`).
    pub noun: &'static str,
    /// The range a value must lie in.
    pub bound: Bound,
    /// The value code of a family member's part id.
    pub code: fn(f64) -> String,
}

/// One value a row stands for.
pub(super) struct RowValue {
    /// Its part id (a family member: `<family id>-<value code>`).
    pub part_id: String,
    /// The value in the table's unit.
    pub value: f64,
    /// The family id, for a family member.
    pub family: Option<String>,
}

/// The values one row stands for: its single value, or every series value
/// of its family; `before` values came from earlier rows (for the limit
/// on values per stock).
// Long because each defect of the value cells (both forms, neither form,
// an incomplete family, an unknown series, an empty range, too many
// values) gets its own located message.
pub(super) fn row_values(
    row: &Row<'_>,
    part_id: &str,
    kind: &ValueKind,
    before: usize,
    ids: &mut Ids,
) -> Result<Vec<RowValue>> {
    let single = kind.columns.single;
    let family_columns = kind.columns.family;
    let has_value = !row.cell(single).is_empty();
    let family_cells: Vec<&str> = family_columns
        .iter()
        .copied()
        .filter(|c| !row.cell(c).is_empty())
        .collect();
    let family_list = family_columns.join(",");
    let values = match (has_value, family_cells.is_empty()) {
        (true, false) => {
            return Err(row.err(
                single,
                format!(
                    "the row has both `{single}` and series family cells; expected either a \
                     single value or `{family_list}`"
                ),
            ))
        }
        (false, true) => {
            let column = if row.columns.index.contains_key(single) {
                single
            } else {
                "series"
            };
            return Err(row.err(
                column,
                format!("the row has no value; expected `{single}` or `{family_list}`"),
            ));
        }
        (true, true) => vec![RowValue {
            part_id: part_id.to_string(),
            value: row.number(single, kind.what, kind.bound)?,
            family: None,
        }],
        (false, false) => {
            for c in family_columns {
                if row.cell(c).is_empty() {
                    return Err(row.err(
                        c,
                        format!(
                            "a series family needs `series`, `{}` and `{}`; `{c}` is empty",
                            family_columns[1], family_columns[2]
                        ),
                    ));
                }
            }
            let (min_column, max_column) = (family_columns[1], family_columns[2]);
            let name = row.cell("series");
            let series = Series::from_name(name).ok_or_else(|| {
                let names: Vec<&str> = Series::ALL.iter().map(|s| s.name()).collect();
                row.err(
                    "series",
                    format!(
                        "expected one of {}, found {}",
                        names.join(", "),
                        row.found("series")
                    ),
                )
            })?;
            let min = row.number(min_column, kind.what, kind.bound)?;
            let max = row.number(max_column, kind.what, kind.bound)?;
            if min > max {
                return Err(row.err(
                    max_column,
                    format!(
                        "{max_column} ({max}) is below {min_column} ({min}); expected \
                         {min_column} <= {max_column}"
                    ),
                ));
            }
            let values = series.values_in(min, max);
            if values.is_empty() {
                return Err(row.err(
                    min_column,
                    format!(
                        "family `{}` has no {} value from {min} to {max} {}; expected a \
                         range that holds at least one",
                        shown(part_id),
                        series.name(),
                        kind.unit
                    ),
                ));
            }
            if before + values.len() > MAX_RESISTOR_VALUES {
                return Err(row.err(
                    max_column,
                    format!(
                        "the stock expands to more than {MAX_RESISTOR_VALUES} {} values at \
                         this family; expected fewer or narrower families",
                        kind.noun
                    ),
                ));
            }
            let mut out = Vec::with_capacity(values.len());
            for value in values {
                let id = format!("{part_id}-{}", (kind.code)(value));
                ids.claim(&id, row)?;
                out.push(RowValue {
                    part_id: id,
                    value,
                    family: Some(part_id.to_string()),
                });
            }
            out
        }
    };
    if before + values.len() > MAX_RESISTOR_VALUES {
        return Err(row.err(
            "part_id",
            format!(
                "the stock has more than {MAX_RESISTOR_VALUES} {} values",
                kind.noun
            ),
        ));
    }
    Ok(values)
}

/// Supply range and headrooms shared by op-amps and in-amps.
pub(super) struct Rails {
    supply_min: f64,
    supply_max: f64,
    input_low: f64,
    input_high: f64,
    output_low: f64,
    output_high: f64,
}

pub(super) fn rails(row: &Row<'_>) -> Result<Rails> {
    let supply = "a total supply in volts";
    let headroom = "a headroom in volts";
    let r = Rails {
        supply_min: row.number("supply_min_v", supply, Bound::AboveZero)?,
        supply_max: row.number("supply_max_v", supply, Bound::AboveZero)?,
        input_low: row.number("input_headroom_low_v", headroom, Bound::ZeroOrMore)?,
        input_high: row.number("input_headroom_high_v", headroom, Bound::ZeroOrMore)?,
        output_low: row.number("output_headroom_low_v", headroom, Bound::ZeroOrMore)?,
        output_high: row.number("output_headroom_high_v", headroom, Bound::ZeroOrMore)?,
    };
    if r.supply_min > r.supply_max {
        return Err(row.err(
            "supply_max_v",
            format!(
                "supply_max_v ({} V) is below supply_min_v ({} V); expected supply_min_v <= \
                 supply_max_v",
                r.supply_max, r.supply_min
            ),
        ));
    }
    for (kind, low, high, column) in [
        ("input", r.input_low, r.input_high, "input_headroom_high_v"),
        (
            "output",
            r.output_low,
            r.output_high,
            "output_headroom_high_v",
        ),
    ] {
        if low + high >= r.supply_max {
            return Err(row.err(
                column,
                format!(
                    "the {kind} headrooms ({low} V + {high} V) leave no {kind} range even at \
                     supply_max_v ({} V); expected their sum below the supply",
                    r.supply_max
                ),
            ));
        }
    }
    Ok(r)
}

pub(super) fn opamps(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(OpAmpPart, usize)>> {
    one_per_row(columns, rows, file, |row, part_id| {
        let channels = match row.cell("channels").parse::<u32>() {
            Ok(n) if CHANNELS.contains(&n) => n,
            _ => {
                return Err(row.err(
                    "channels",
                    format!(
                        "expected 1, 2 or 4 op-amp sections per package, found {}",
                        row.found("channels")
                    ),
                ))
            }
        };
        let r = rails(row)?;
        Ok(OpAmpPart {
            part_id,
            channels,
            supply_min: Volts(r.supply_min),
            supply_max: Volts(r.supply_max),
            input_headroom_low: Volts(r.input_low),
            input_headroom_high: Volts(r.input_high),
            output_headroom_low: Volts(r.output_low),
            output_headroom_high: Volts(r.output_high),
            vos_max_uv: row.nonneg("vos_max_uv", "an offset voltage in microvolts")?,
            vos_drift_uv_per_c: row.nonneg(
                "vos_drift_uv_per_c",
                "an offset drift in microvolts per degC",
            )?,
            ib_max_na: row.nonneg("ib_max_na", "a bias current in nanoamps")?,
            ios_max_na: row.nonneg("ios_max_na", "an offset current in nanoamps")?,
            aol_min: Decibels(row.positive("aol_min_db", "an open-loop gain in dB")?),
            gbw_mhz: row.positive("gbw_mhz", "a gain-bandwidth product in MHz")?,
            en_nv_rthz: row.nonneg("en_nv_rthz", "a noise density in nV/sqrt(Hz)")?,
            in_pa_rthz: row.nonneg("in_pa_rthz", "a noise density in pA/sqrt(Hz)")?,
            cmrr_min: Decibels(row.positive("cmrr_min_db", "a common-mode rejection in dB")?),
            unit_cost: row.nonneg("unit_cost", "a unit cost")?,
            stock_qty: row.quantity("stock_qty")?,
            output_ohms: row.optional_number(
                "output_ohms",
                "an open-loop output resistance in ohms",
                Bound::Resistance,
                crate::stock::DEFAULT_OUTPUT_OHMS,
            )?,
            ib_doubling_c: ib_doubling(row)?,
            psrr_min: psrr(row)?,
            output_current_ma: output_current(row)?,
            en_corner_hz: en_corner(row)?,
            in_corner_hz: row.optional_number(
                "in_corner_hz",
                "a 1/f current noise corner in Hz",
                Bound::ZeroOrMore,
                crate::stock::DEFAULT_IN_CORNER_HZ,
            )?,
        })
    })
}

pub(super) fn references(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(ReferencePart, usize)>> {
    one_per_row(columns, rows, file, |row, part_id| {
        Ok(ReferencePart {
            part_id,
            volts: Volts(row.number("volts", "an output voltage in volts", Bound::AboveZero)?),
            initial: Percent(row.number(
                "initial_pct",
                "an initial accuracy in percent",
                Bound::Percent,
            )?),
            tempco: PpmPerC(
                row.nonneg("tempco_ppm_per_c", "a temperature coefficient in ppm/degC")?,
            ),
            dropout: Volts(row.nonneg("dropout_v", "a dropout voltage in volts")?),
            noise_uv_pp: row.nonneg("noise_uv_pp", "a noise in microvolts peak to peak")?,
            unit_cost: row.nonneg("unit_cost", "a unit cost")?,
            stock_qty: row.quantity("stock_qty")?,
            load_regulation_ppm_per_ma: row.optional_number(
                "load_regulation_ppm_per_ma",
                "a load regulation in ppm of the output per mA",
                Bound::ZeroOrMore,
                crate::stock::DEFAULT_LOAD_REGULATION_PPM_PER_MA,
            )?,
            max_load_ma: row.optional_number(
                "max_load_ma",
                "a largest load current in mA",
                Bound::AboveZero,
                crate::stock::DEFAULT_MAX_LOAD_MA,
            )?,
        })
    })
}

/// The optional `ib_doubling_c` of an amplifier row: `None` when absent
/// or empty (the bias current limit then holds over the whole range).
fn ib_doubling(row: &Row<'_>) -> Result<Option<f64>> {
    if row.cell("ib_doubling_c").is_empty() {
        return Ok(None);
    }
    row.number(
        "ib_doubling_c",
        "a temperature rise in degC over which the bias current doubles",
        Bound::Between(1.0, 1000.0),
    )
    .map(Some)
}

/// The optional `psrr_min_db` of an amplifier row, or the default.
fn psrr(row: &Row<'_>) -> Result<Decibels> {
    row.optional_number(
        "psrr_min_db",
        "a power-supply rejection in dB",
        Bound::AboveZero,
        crate::stock::DEFAULT_PSRR_DB,
    )
    .map(Decibels)
}

/// The optional `output_current_ma` of an amplifier row, or the default.
fn output_current(row: &Row<'_>) -> Result<f64> {
    row.optional_number(
        "output_current_ma",
        "an output current in mA",
        Bound::AboveZero,
        crate::stock::DEFAULT_OUTPUT_CURRENT_MA,
    )
}

/// The optional `en_corner_hz` of an amplifier row, or the default.
fn en_corner(row: &Row<'_>) -> Result<f64> {
    row.optional_number(
        "en_corner_hz",
        "a 1/f noise corner in Hz",
        Bound::ZeroOrMore,
        crate::stock::DEFAULT_EN_CORNER_HZ,
    )
}

pub(super) fn inamps(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(InAmpPart, usize)>> {
    one_per_row(columns, rows, file, |row, part_id| {
        let gain_resistor = row.number(
            "gain_resistor_ohms",
            "a gain-setting resistance in ohms",
            Bound::Resistance,
        )?;
        let gain_error = row.number("gain_error_pct", "a gain error in percent", Bound::Percent)?;
        let r = rails(row)?;
        Ok(InAmpPart {
            part_id,
            gain_resistor: Ohms(gain_resistor),
            gain_error: Percent(gain_error),
            gain_drift: PpmPerC(row.nonneg("gain_drift_ppm_per_c", "a gain drift in ppm/degC")?),
            input_offset_uv: row.nonneg("input_offset_uv", "an offset voltage in microvolts")?,
            output_offset_uv: row.nonneg("output_offset_uv", "an offset voltage in microvolts")?,
            offset_drift_uv_per_c: row.nonneg(
                "offset_drift_uv_per_c",
                "an offset drift in microvolts per degC",
            )?,
            ib_max_na: row.nonneg("ib_max_na", "a bias current in nanoamps")?,
            cmrr_min: Decibels(row.positive("cmrr_min_db", "a common-mode rejection in dB")?),
            supply_min: Volts(r.supply_min),
            supply_max: Volts(r.supply_max),
            input_headroom_low: Volts(r.input_low),
            input_headroom_high: Volts(r.input_high),
            output_headroom_low: Volts(r.output_low),
            output_headroom_high: Volts(r.output_high),
            en_nv_rthz: row.nonneg("en_nv_rthz", "a noise density in nV/sqrt(Hz)")?,
            gbw_mhz: row.positive("gbw_mhz", "a gain-bandwidth product in MHz")?,
            unit_cost: row.nonneg("unit_cost", "a unit cost")?,
            stock_qty: row.quantity("stock_qty")?,
            ib_doubling_c: ib_doubling(row)?,
            psrr_min: psrr(row)?,
            output_current_ma: output_current(row)?,
            en_corner_hz: en_corner(row)?,
        })
    })
}
