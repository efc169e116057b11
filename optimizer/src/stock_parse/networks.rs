//! The reader of `networks.csv`: matched resistor networks, several
//! elements in one package with an absolute tolerance and TCR and the
//! tighter ratio tolerance and TCR tracking between elements.

use super::tables::Purchase;
use super::*;

/// Fewest and most elements a network package may hold.
pub(crate) const ELEMENTS_RANGE: (u32, u32) = (2, 16);

pub(crate) fn networks(
    columns: &Columns,
    rows: &[Record],
    file: &str,
) -> Result<Vec<(NetworkPart, usize)>> {
    one_per_row(columns, rows, file, |row, part_id| {
        let count = element_count(row)?;
        let values = element_values(row, count)?;
        let abs_tolerance = row.number(
            "abs_tolerance_pct",
            "an absolute tolerance in percent",
            Bound::Percent,
        )?;
        let ratio_tolerance = row.number(
            "ratio_tolerance_pct",
            "a ratio tolerance in percent",
            Bound::Percent,
        )?;
        let abs_tcr = row.tempco("abs_tcr_ppm_per_c")?;
        let tracking_tcr = row.number(
            "tracking_tcr_ppm_per_c",
            "a TCR tracking in ppm/degC",
            Bound::UpTo(MAX_TCR_PPM_PER_C),
        )?;
        // The absolute figures alone bound any ratio to twice them; a
        // ratio figure above that is a slip (the columns swapped).
        for (column, ratio, absolute, abs_column) in [
            (
                "ratio_tolerance_pct",
                ratio_tolerance,
                abs_tolerance,
                "abs_tolerance_pct",
            ),
            (
                "tracking_tcr_ppm_per_c",
                tracking_tcr,
                abs_tcr,
                "abs_tcr_ppm_per_c",
            ),
        ] {
            if ratio > 2.0 * absolute {
                return Err(row.err(
                    column,
                    format!(
                        "{column} ({ratio}) is more than twice {abs_column} ({absolute}); \
                         expected the matching figure at most twice the absolute one (the \
                         absolute figures alone bound a ratio to that)"
                    ),
                ));
            }
        }
        let buy = Purchase::read(row)?;
        Ok(NetworkPart {
            part_id,
            values: values.into_iter().map(Ohms).collect(),
            abs_tolerance: Percent(abs_tolerance),
            ratio_tolerance: Percent(ratio_tolerance),
            abs_tcr: PpmPerC(abs_tcr),
            tracking_tcr: PpmPerC(tracking_tcr),
            package: buy.package,
            unit_cost: buy.unit_cost,
            stock_qty: buy.stock_qty,
        })
    })
}

/// The `count` cell: a whole number of elements in [`ELEMENTS_RANGE`].
fn element_count(row: &Row<'_>) -> Result<u32> {
    let (min, max) = ELEMENTS_RANGE;
    match row.cell("count").parse::<u32>() {
        Ok(n) if (min..=max).contains(&n) => Ok(n),
        _ => Err(row.err(
            "count",
            format!(
                "expected a whole number of elements from {min} to {max}, found {}",
                row.found("count")
            ),
        )),
    }
}

/// The `value_ohms` cell: one value for every element, or `count` values
/// separated by `;`, element 1 first.
fn element_values(row: &Row<'_>, count: u32) -> Result<Vec<f64>> {
    let cell = row.cell("value_ohms");
    let pieces: Vec<&str> = cell.split(';').map(str::trim).collect();
    let expected = format!(
        "one resistance in ohms for every element, or {count} resistances separated by `;` \
         (element 1 first)"
    );
    if pieces.len() != 1 && pieces.len() != count as usize {
        return Err(row.err(
            "value_ohms",
            format!(
                "expected {expected}; found {} values for {count} elements",
                pieces.len()
            ),
        ));
    }
    let (min, max) = OHMS_RANGE;
    let mut values = Vec::with_capacity(count as usize);
    for (i, piece) in pieces.iter().enumerate() {
        let value: f64 = piece.parse().map_err(|_| {
            row.err(
                "value_ohms",
                format!(
                    "expected {expected}; value {} is `{}`, not a number",
                    i + 1,
                    shown(piece)
                ),
            )
        })?;
        if !(value.is_finite() && (min..=max).contains(&value)) {
            return Err(row.err(
                "value_ohms",
                format!(
                    "expected each resistance from {min} to {max:e} ohms; value {} is `{}`",
                    i + 1,
                    shown(piece)
                ),
            ));
        }
        values.push(value);
    }
    if values.len() == 1 {
        values = vec![values[0]; count as usize];
    }
    Ok(values)
}
