//! One stock table as the stock reader reads it, for an editor: the header
//! and the rows as cell texts with the line each row starts on. The page
//! shows and edits stock tables through this instead of a CSV reader of
//! its own, so blank and `#` comment lines, quoting and trimming are the
//! core's, and every row is validated by the same checks as a whole stock
//! (the checks across tables, such as a part id used in two tables, are
//! left to [`crate::stock::parse_stock`]).
//!
//! This module sits inside the stock reader (`stock_parse`), whose private
//! steps it calls in the same order as [`crate::stock::parse_stock`] does
//! for each file.

use super::{
    capacitors, checked_text, expected_file_names, inamps, networks, opamps, read_csv, references,
    resistors, shown, split_header, Row, Table,
};
use crate::error::{Error, Location, Result};
use serde::Serialize;

/// A stock table as read: cell texts, trimmed, quotes undone.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockTable {
    /// The table's file name as the core knows it (`resistors.csv`).
    pub file: &'static str,
    /// `resistors`, `opamps`, `references`, `inamps`, `capacitors` or
    /// `networks`.
    pub kind: &'static str,
    /// The header's column names, as written (in the file's order).
    pub header: Vec<String>,
    /// The data rows, each as many cells as the header.
    pub rows: Vec<Vec<String>>,
    /// The 1-based line each data row starts on.
    pub line_numbers: Vec<usize>,
    /// The first row check that failed (a value out of range, a repeated
    /// id, ...), located by line and column, or null: the rows come back
    /// all the same so an editor can show them and point at the cell.
    /// Errors of the text, of the header or of a row's field count still
    /// refuse the table.
    pub problem: Option<crate::report::ErrorReport>,
}

/// Read and validate one stock file on its own. `file_name` picks the
/// table (`resistors.csv`, `opamps.csv`, `references.csv`, `inamps.csv`,
/// `capacitors.csv`, `networks.csv`, any case, any folder) and names the file in errors.
pub fn read_stock_table(file_name: &str, bytes: &[u8]) -> Result<StockTable> {
    let table = Table::from_file_name(file_name).ok_or_else(|| {
        Error::input(
            Location::file(file_name),
            format!(
                "unknown stock file `{}`; expected one of {}",
                shown(file_name),
                expected_file_names()
            ),
        )
    })?;
    let text = checked_text(bytes, file_name)?;
    let records = read_csv(text, file_name)?;
    let (columns, rows) = split_header(&records, table, file_name)?;
    // A row with another number of fields than the header is a defect of
    // the text: the table is refused, as a ragged row cannot be shown.
    for record in rows {
        Row::new(file_name, &columns, record)?;
    }
    let checked = match table {
        Table::Resistors => resistors(&columns, rows, file_name).map(drop),
        Table::OpAmps => opamps(&columns, rows, file_name).map(drop),
        Table::References => references(&columns, rows, file_name).map(drop),
        Table::InAmps => inamps(&columns, rows, file_name).map(drop),
        Table::Capacitors => capacitors(&columns, rows, file_name).map(drop),
        Table::Networks => networks(&columns, rows, file_name).map(drop),
    };
    let trimmed = |fields: &[String]| fields.iter().map(|f| f.trim().to_string()).collect();
    let file = table.file_name();
    Ok(StockTable {
        file,
        kind: file.trim_end_matches(".csv"),
        header: records
            .first()
            .map(|h| trimmed(&h.fields))
            .unwrap_or_default(),
        rows: rows.iter().map(|r| trimmed(&r.fields)).collect(),
        line_numbers: rows.iter().map(|r| r.line).collect(),
        problem: checked.err().map(|e| e.report()),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stock::{parse_stock, StockFile};

    fn file(name: &str, text: &str) -> StockFile {
        StockFile {
            name: name.to_string(),
            bytes: text.as_bytes().to_vec(),
        }
    }

    /// Every demo table reads, its rows as many as the stock reader's
    /// records, each as wide as the header.
    #[test]
    fn the_demo_tables_read() {
        for (name, text) in crate::demo::STOCK {
            let t = read_stock_table(name, text.as_bytes()).unwrap();
            assert_eq!(t.file, name);
            assert_eq!(format!("{}.csv", t.kind), name);
            assert!(!t.rows.is_empty(), "{name}");
            assert_eq!(t.rows.len(), t.line_numbers.len());
            assert!(t.rows.iter().all(|r| r.len() == t.header.len()), "{name}");
            assert!(t.header.iter().any(|h| h == "part_id"));
            // Line numbers point at the rows' lines in the text.
            let lines: Vec<&str> = text.lines().collect();
            for (row, &line) in t.rows.iter().zip(&t.line_numbers) {
                assert!(
                    lines[line - 1].contains(row[0].as_str()),
                    "{name} line {line}"
                );
            }
        }
    }

    #[test]
    fn comments_blank_lines_quotes_and_spaces_are_the_readers() {
        let text = "# shelf B\npart_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\n\
                    R-A , 1000,1,100,\"0603, thin\",0.01,5\n   # old row\n\"R-B\",2000,1,100,0603,0.02,\n";
        let t = read_stock_table("shelf/Resistors.CSV", text.as_bytes()).unwrap();
        assert_eq!((t.file, t.kind), ("resistors.csv", "resistors"));
        assert_eq!(t.header[1], "value_ohms");
        assert_eq!(t.line_numbers, [4, 6]);
        assert_eq!(t.rows[0][0], "R-A");
        assert_eq!(t.rows[0][4], "0603, thin");
        assert_eq!(t.rows[1][0], "R-B");
        assert_eq!(t.rows[1][6], "");
    }

    /// A bad cell is the same error, at the same place, as the whole-stock
    /// reader gives; the rows come back with it, for an editor to show.
    #[test]
    fn errors_are_the_stock_readers() {
        let bad = "part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                   R-A,1000,1,100,0603,cheap,5\n";
        let table = read_stock_table("resistors.csv", bad.as_bytes()).unwrap();
        let whole = parse_stock(&[file("resistors.csv", bad)]).unwrap_err();
        let r = table.problem.expect("the bad cell is named");
        assert_eq!(r, whole.report());
        assert_eq!(
            (r.line, r.column_name.as_deref()),
            (Some(2), Some("unit_cost"))
        );
        assert_eq!(
            table.rows,
            [["R-A", "1000", "1", "100", "0603", "cheap", "5"]]
        );
        assert!(
            read_stock_table("resistors.csv", crate::demo::STOCK[0].1.as_bytes())
                .unwrap()
                .problem
                .is_none()
        );
        // A ragged row is a defect of the text: refused, as the whole
        // stock reader refuses it.
        let ragged = "part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                      R-A,1000,1,100\n";
        let ours = read_stock_table("resistors.csv", ragged.as_bytes()).unwrap_err();
        assert_eq!(
            ours,
            parse_stock(&[file("resistors.csv", ragged)]).unwrap_err()
        );
        let unknown = read_stock_table("inductors.csv", b"x\n").unwrap_err();
        let whole = parse_stock(&[file("inductors.csv", "x\n")]).unwrap_err();
        assert_eq!(unknown, whole);
        let empty = read_stock_table("opamps.csv", b"").unwrap_err();
        assert!(empty.to_string().contains("opamps.csv is empty"), "{empty}");
    }

    /// A table with only a header reads as no rows (a stock needs rows;
    /// a table being edited may not have them yet).
    #[test]
    fn a_header_alone_is_an_empty_table() {
        let text = crate::demo::STOCK
            .iter()
            .find(|(n, _)| *n == "references.csv")
            .map(|(_, t)| t.lines().find(|l| l.starts_with("part_id")).unwrap_or(""))
            .unwrap();
        let t = read_stock_table("references.csv", text.as_bytes()).unwrap();
        assert!(t.rows.is_empty() && t.line_numbers.is_empty());
        assert!(!t.header.is_empty());
    }
}
