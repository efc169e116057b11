//! The reader of `capacitors.csv`: single values or series families, read
//! through the same value and family parsing as `resistors.csv`.

use super::tables::{value_rows, Purchase, RowValue, ValueKind};
use super::*;
use crate::stock::capacitor_code;

/// Longest dielectric text, in characters.
const MAX_DIELECTRIC_CHARS: usize = 16;

pub(super) fn capacitors(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(CapacitorPart, usize)>> {
    let kind = ValueKind {
        columns: CAPACITOR_VALUES,
        what: "a capacitance in farads",
        unit: "farads",
        noun: "capacitor",
        bound: Bound::Capacitance,
        code: capacitor_code,
    };
    value_rows(columns, rows, file, &kind, |row| {
        let tolerance = row.number("tolerance_pct", "a tolerance in percent", Bound::Percent)?;
        let tempco = row.tempco("tempco_ppm_per_c")?;
        let dielectric = row.text("dielectric", false)?;
        if dielectric.is_empty() || dielectric.chars().count() > MAX_DIELECTRIC_CHARS {
            return Err(row.err(
                "dielectric",
                format!(
                    "expected a dielectric name of 1 to {MAX_DIELECTRIC_CHARS} characters \
                     (C0G, X7R, film ...), found {}",
                    row.found("dielectric")
                ),
            ));
        }
        let rated = row.number(
            "rated_v",
            "a rated voltage in volts",
            Bound::UpTo(MAX_RATED_V),
        )?;
        if rated <= 0.0 {
            return Err(row.err(
                "rated_v",
                format!(
                    "expected a rated voltage above zero, found {}",
                    row.found("rated_v")
                ),
            ));
        }
        let buy = Purchase::read(row)?;
        Ok(move |value: RowValue| CapacitorPart {
            part_id: value.part_id,
            value: Farads(value.value),
            tolerance: Percent(tolerance),
            tempco: PpmPerC(tempco),
            dielectric: dielectric.clone(),
            rated: Volts(rated),
            package: buy.package.clone(),
            unit_cost: buy.unit_cost,
            stock_qty: buy.stock_qty,
            family: value.family,
        })
    })
}
