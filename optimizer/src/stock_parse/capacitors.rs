//! The reader of `capacitors.csv`: single values or series families, read
//! through the same value and family parsing as `resistors.csv`.

use super::tables::{row_values, ValueKind};
use super::*;
use crate::stock::capacitor_code;

/// Longest dielectric text, in characters.
const MAX_DIELECTRIC_CHARS: usize = 16;

pub(super) fn capacitors(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(CapacitorPart, usize)>> {
    let mut ids = Ids::default();
    let mut parts = Vec::new();
    let kind = ValueKind {
        columns: CAPACITOR_VALUES,
        what: "a capacitance in farads",
        unit: "farads",
        noun: "capacitor",
        bound: Bound::Capacitance,
        code: capacitor_code,
    };
    for record in rows {
        let row = Row::new(file, columns, record)?;
        let part_id = row.text("part_id", true)?;
        ids.claim(&part_id, &row)?;
        let tolerance = row.number("tolerance_pct", "a tolerance in percent", Bound::Percent)?;
        let tempco = row.number(
            "tempco_ppm_per_c",
            "a temperature coefficient in ppm/degC",
            Bound::UpTo(MAX_TCR_PPM_PER_C),
        )?;
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
        let package = row.text("package", false)?;
        let unit_cost = row.number("unit_cost", "a unit cost", Bound::UpTo(MAX_UNIT_COST))?;
        let stock_qty = row.quantity("stock_qty")?;
        for value in row_values(&row, &part_id, &kind, parts.len(), &mut ids)? {
            parts.push((
                CapacitorPart {
                    part_id: value.part_id,
                    value: Farads(value.value),
                    tolerance: Percent(tolerance),
                    tempco: PpmPerC(tempco),
                    dielectric: dielectric.clone(),
                    rated: Volts(rated),
                    package: package.clone(),
                    unit_cost,
                    stock_qty,
                    family: value.family,
                },
                row.line,
            ));
        }
    }
    Ok(parts)
}
