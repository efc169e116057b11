//! One reader per stock table (`resistors.csv`, `opamps.csv`,
//! `references.csv`, `inamps.csv`): rows become validated parts.

use super::*;

// Long because a row is either a single part or a whole series family, and
// each column of both forms is read and checked here with its location.
pub(super) fn resistors(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(ResistorPart, usize)>> {
    let mut ids = Ids::default();
    let mut parts = Vec::new();
    for record in rows {
        let row = Row::new(file, columns, record)?;
        let part_id = row.text("part_id", true)?;
        ids.claim(&part_id, &row)?;
        let has_value = !row.cell("value_ohms").is_empty();
        let family_cells: Vec<&str> = FAMILY_COLUMNS
            .iter()
            .copied()
            .filter(|c| !row.cell(c).is_empty())
            .collect();
        let tolerance = row.number("tolerance_pct", "a tolerance in percent", Bound::Percent)?;
        let tcr = row.number(
            "tcr_ppm_per_c",
            "a temperature coefficient in ppm/degC",
            Bound::UpTo(MAX_TCR_PPM_PER_C),
        )?;
        let package = row.text("package", false)?;
        let unit_cost = row.number("unit_cost", "a unit cost", Bound::UpTo(MAX_UNIT_COST))?;
        let stock_qty = row.quantity("stock_qty")?;
        let base = ResistorPart {
            part_id: part_id.clone(),
            value: Ohms(0.0),
            tolerance: Percent(tolerance),
            tcr: PpmPerC(tcr),
            package,
            unit_cost,
            stock_qty,
            family: None,
        };
        match (has_value, family_cells.is_empty()) {
            (true, false) => {
                return Err(row.err(
                    "value_ohms",
                    "the row has both `value_ohms` and series family cells; expected either a \
                     single value or `series,min_ohms,max_ohms`",
                ))
            }
            (false, true) => {
                let column = if columns.index.contains_key("value_ohms") {
                    "value_ohms"
                } else {
                    "series"
                };
                return Err(row.err(
                    column,
                    "the row has no value; expected `value_ohms` or `series,min_ohms,max_ohms`",
                ));
            }
            (true, true) => {
                let value = row.number("value_ohms", "a number of ohms", Bound::Resistance)?;
                parts.push((
                    ResistorPart {
                        value: Ohms(value),
                        ..base
                    },
                    row.line,
                ));
            }
            (false, false) => {
                for c in FAMILY_COLUMNS {
                    if row.cell(c).is_empty() {
                        return Err(row.err(
                            c,
                            format!(
                                "a series family needs `series`, `min_ohms` and `max_ohms`; \
                                 `{c}` is empty"
                            ),
                        ));
                    }
                }
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
                let min = row.number("min_ohms", "a number of ohms", Bound::Resistance)?;
                let max = row.number("max_ohms", "a number of ohms", Bound::Resistance)?;
                if min > max {
                    return Err(row.err(
                        "max_ohms",
                        format!("max_ohms ({max}) is below min_ohms ({min}); expected min_ohms <= max_ohms"),
                    ));
                }
                let values = series.values_in(min, max);
                if values.is_empty() {
                    return Err(row.err(
                        "min_ohms",
                        format!(
                            "family `{}` has no {} value from {min} to {max} ohms; expected a \
                             range that holds at least one",
                            shown(&part_id),
                            series.name()
                        ),
                    ));
                }
                if parts.len() + values.len() > MAX_RESISTOR_VALUES {
                    return Err(row.err(
                        "max_ohms",
                        format!(
                            "the stock expands to more than {MAX_RESISTOR_VALUES} resistor \
                             values at this family; expected fewer or narrower families"
                        ),
                    ));
                }
                for value in values {
                    let id = format!("{part_id}-{}", value_code(value));
                    ids.claim(&id, &row)?;
                    parts.push((
                        ResistorPart {
                            part_id: id,
                            value: Ohms(value),
                            family: Some(part_id.clone()),
                            ..base.clone()
                        },
                        row.line,
                    ));
                }
            }
        }
        if parts.len() > MAX_RESISTOR_VALUES {
            return Err(row.err(
                "part_id",
                format!("the stock has more than {MAX_RESISTOR_VALUES} resistor values"),
            ));
        }
    }
    Ok(parts)
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
    let mut ids = Ids::default();
    let mut parts = Vec::new();
    for record in rows {
        let row = Row::new(file, columns, record)?;
        let part_id = row.text("part_id", true)?;
        ids.claim(&part_id, &row)?;
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
        let r = rails(&row)?;
        let nonneg = |column: &str, what: &str| row.number(column, what, Bound::ZeroOrMore);
        let positive = |column: &str, what: &str| row.number(column, what, Bound::AboveZero);
        parts.push((
            OpAmpPart {
                part_id,
                channels,
                supply_min: Volts(r.supply_min),
                supply_max: Volts(r.supply_max),
                input_headroom_low: Volts(r.input_low),
                input_headroom_high: Volts(r.input_high),
                output_headroom_low: Volts(r.output_low),
                output_headroom_high: Volts(r.output_high),
                vos_max_uv: nonneg("vos_max_uv", "an offset voltage in microvolts")?,
                vos_drift_uv_per_c: nonneg(
                    "vos_drift_uv_per_c",
                    "an offset drift in microvolts per degC",
                )?,
                ib_max_na: nonneg("ib_max_na", "a bias current in nanoamps")?,
                ios_max_na: nonneg("ios_max_na", "an offset current in nanoamps")?,
                aol_min: Decibels(positive("aol_min_db", "an open-loop gain in dB")?),
                gbw_mhz: positive("gbw_mhz", "a gain-bandwidth product in MHz")?,
                en_nv_rthz: nonneg("en_nv_rthz", "a noise density in nV/sqrt(Hz)")?,
                in_pa_rthz: nonneg("in_pa_rthz", "a noise density in pA/sqrt(Hz)")?,
                cmrr_min: Decibels(positive("cmrr_min_db", "a common-mode rejection in dB")?),
                unit_cost: nonneg("unit_cost", "a unit cost")?,
                stock_qty: row.quantity("stock_qty")?,
            },
            row.line,
        ));
    }
    Ok(parts)
}

pub(super) fn references(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(ReferencePart, usize)>> {
    let mut ids = Ids::default();
    let mut parts = Vec::new();
    for record in rows {
        let row = Row::new(file, columns, record)?;
        let part_id = row.text("part_id", true)?;
        ids.claim(&part_id, &row)?;
        let nonneg = |column: &str, what: &str| row.number(column, what, Bound::ZeroOrMore);
        parts.push((
            ReferencePart {
                part_id,
                volts: Volts(row.number(
                    "volts",
                    "an output voltage in volts",
                    Bound::AboveZero,
                )?),
                initial: Percent(row.number(
                    "initial_pct",
                    "an initial accuracy in percent",
                    Bound::Percent,
                )?),
                tempco: PpmPerC(nonneg(
                    "tempco_ppm_per_c",
                    "a temperature coefficient in ppm/degC",
                )?),
                dropout: Volts(nonneg("dropout_v", "a dropout voltage in volts")?),
                noise_uv_pp: nonneg("noise_uv_pp", "a noise in microvolts peak to peak")?,
                unit_cost: nonneg("unit_cost", "a unit cost")?,
                stock_qty: row.quantity("stock_qty")?,
            },
            row.line,
        ));
    }
    Ok(parts)
}

pub(super) fn inamps(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(InAmpPart, usize)>> {
    let mut ids = Ids::default();
    let mut parts = Vec::new();
    for record in rows {
        let row = Row::new(file, columns, record)?;
        let part_id = row.text("part_id", true)?;
        ids.claim(&part_id, &row)?;
        let nonneg = |column: &str, what: &str| row.number(column, what, Bound::ZeroOrMore);
        let positive = |column: &str, what: &str| row.number(column, what, Bound::AboveZero);
        let gain_resistor = row.number(
            "gain_resistor_ohms",
            "a gain-setting resistance in ohms",
            Bound::Resistance,
        )?;
        let gain_error = row.number("gain_error_pct", "a gain error in percent", Bound::Percent)?;
        let r = rails(&row)?;
        parts.push((
            InAmpPart {
                part_id,
                gain_resistor: Ohms(gain_resistor),
                gain_error: Percent(gain_error),
                gain_drift: PpmPerC(nonneg("gain_drift_ppm_per_c", "a gain drift in ppm/degC")?),
                input_offset_uv: nonneg("input_offset_uv", "an offset voltage in microvolts")?,
                output_offset_uv: nonneg("output_offset_uv", "an offset voltage in microvolts")?,
                offset_drift_uv_per_c: nonneg(
                    "offset_drift_uv_per_c",
                    "an offset drift in microvolts per degC",
                )?,
                ib_max_na: nonneg("ib_max_na", "a bias current in nanoamps")?,
                cmrr_min: Decibels(positive("cmrr_min_db", "a common-mode rejection in dB")?),
                supply_min: Volts(r.supply_min),
                supply_max: Volts(r.supply_max),
                input_headroom_low: Volts(r.input_low),
                input_headroom_high: Volts(r.input_high),
                output_headroom_low: Volts(r.output_low),
                output_headroom_high: Volts(r.output_high),
                en_nv_rthz: nonneg("en_nv_rthz", "a noise density in nV/sqrt(Hz)")?,
                gbw_mhz: positive("gbw_mhz", "a gain-bandwidth product in MHz")?,
                unit_cost: nonneg("unit_cost", "a unit cost")?,
                stock_qty: row.quantity("stock_qty")?,
            },
            row.line,
        ));
    }
    Ok(parts)
}
