//! Bill of materials: the parts of a built design, one row per distinct
//! part, and its CSV text.
//!
//! Columns (a contract other tools read): `refs,kind,value,part_id,
//! quantity,unit_cost,line_cost`. `refs` lists the reference designators
//! of the row separated by spaces (`R1 R3`), `line_cost` is `quantity x
//! unit_cost`. After the part rows come summary rows with an empty `refs`
//! field: `bom-line fee` (one fee per distinct part line, when the fee is
//! not zero) and `total` (parts plus fees).
//!
//! Text fields come from user CSVs (part ids), so every field is escaped:
//! quoted when it holds a comma, quote or line break, and prefixed with
//! `'` when it starts with `=`, `+`, `-`, `@`, a tab or a carriage return,
//! so a spreadsheet does not run it as a formula (the OWASP advice on CSV
//! injection, common practice).

use crate::design::Resistor;
use crate::schematic::{format_ohms, format_quantity};
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built};
use serde::Serialize;
use std::fmt::Write as _;

/// The CSV header line (without line break).
pub const HEADER: &str = "refs,kind,value,part_id,quantity,unit_cost,line_cost";

/// One line of the bill of materials: every placed part with this part id
/// (and, for inline resistors that share an id such as `custom`, this
/// value and grade).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BomRow {
    /// Reference designators, in natural order (`R2`, `R10`).
    pub refs: Vec<String>,
    /// `resistor`, `resistor network`, `capacitor`, `op-amp`, `in-amp` or
    /// `reference`. A network row lists the designators of the elements
    /// used and counts packages in `quantity`.
    pub kind: String,
    /// Value as shown to people (`10.0k`, `1.25 V`, `dual`, `Rk 49.4k`).
    pub value: String,
    /// Part number from the stock (or `custom`).
    pub part_id: String,
    /// Number of parts on the line.
    pub quantity: u32,
    /// Price of one.
    pub unit_cost: f64,
}

impl BomRow {
    /// `quantity x unit_cost`.
    pub fn line_cost(&self) -> f64 {
        f64::from(self.quantity) * self.unit_cost
    }
}

/// Sort key for designators: letters, then the number, then the rest
/// (`R2` before `R10`, `U1` before `U1A`).
fn natural_key(d: &str) -> (String, u64, String) {
    let letters: String = d.chars().take_while(|c| !c.is_ascii_digit()).collect();
    let rest = &d[letters.len()..];
    let digits: String = rest.chars().take_while(|c| c.is_ascii_digit()).collect();
    let number = digits.parse::<u64>().unwrap_or(0);
    (letters, number, rest[digits.len()..].to_string())
}

fn push(rows: &mut Vec<BomRow>, same: impl Fn(&BomRow) -> bool, designator: &str, new: BomRow) {
    match rows.iter_mut().find(|r| same(r)) {
        Some(r) => {
            r.refs.push(designator.to_string());
            r.quantity += 1;
        }
        None => rows.push(new),
    }
}

/// Put a resistor on the resistor rows: one row per part id and grade
/// (value, tolerance, TCR), its designators gathered.
fn add_resistor(rows: &mut Vec<(BomRow, [u64; 3])>, designator: &str, p: &Resistor) {
    let grade = [
        p.ohms.to_bits(),
        p.tolerance_pct.to_bits(),
        p.tcr_ppm_per_c.to_bits(),
    ];
    match rows
        .iter_mut()
        .find(|(row, g)| row.part_id == p.part_id && *g == grade)
    {
        Some((row, _)) => {
            row.refs.push(designator.to_string());
            row.quantity += 1;
        }
        None => rows.push((
            BomRow {
                refs: vec![designator.to_string()],
                kind: "resistor".into(),
                value: format_ohms(p.ohms),
                part_id: p.part_id.clone(),
                quantity: 1,
                unit_cost: p.unit_cost,
            },
            grade,
        )),
    }
}

/// The rows of a built design: resistors, then amplifier packages, then
/// references, each group in designator order. A dual or quad op-amp
/// package serving several sections is one part.
// Long because it builds the three groups of rows (resistors, amplifier
// packages, references) in one pass over the built design.
pub fn rows(built: &Built, stock: &Stock) -> Vec<BomRow> {
    let mut resistors: Vec<(BomRow, [u64; 3])> = Vec::new();
    for r in built.resistors.iter().filter(|r| r.part.network.is_none()) {
        add_resistor(&mut resistors, &r.designator, &r.part);
    }
    // A matched network: one row per part id, one part per package, the
    // designators of its elements listed.
    let mut networks: Vec<BomRow> = Vec::new();
    for package in crate::design::network_packages(built.resistors.iter().map(|r| &r.part)) {
        let refs: Vec<String> = package
            .elements
            .iter()
            .map(|&i| built.resistors[i].designator.clone())
            .collect();
        match networks.iter_mut().find(|r| r.part_id == package.part_id) {
            Some(row) => {
                row.refs.extend(refs);
                row.quantity += 1;
            }
            None => networks.push(BomRow {
                refs,
                kind: "resistor network".into(),
                value: stock
                    .network(&package.part_id)
                    .map(network_value)
                    .unwrap_or_default(),
                part_id: package.part_id.clone(),
                quantity: 1,
                unit_cost: package.unit_cost,
            }),
        }
    }
    let mut amplifiers: Vec<BomRow> = Vec::new();
    for pkg in &built.packages {
        let (kind, value) = match pkg.kind {
            AmplifierKind::OpAmp(_) => (
                "op-amp",
                match pkg.channels {
                    1 => "single".to_string(),
                    2 => "dual".to_string(),
                    4 => "quad".to_string(),
                    n => format!("{n}-channel"),
                },
            ),
            AmplifierKind::InAmp(i) => (
                "in-amp",
                stock
                    .inamps
                    .get(i)
                    .map(|p| format!("Rk {}", format_ohms(p.gain_resistor.0)))
                    .unwrap_or_default(),
            ),
        };
        push(
            &mut amplifiers,
            |r| r.part_id == pkg.part_id && r.kind == kind,
            &pkg.designator,
            BomRow {
                refs: vec![pkg.designator.clone()],
                kind: kind.into(),
                value,
                part_id: pkg.part_id.clone(),
                quantity: 1,
                unit_cost: pkg.unit_cost,
            },
        );
    }
    let mut references: Vec<BomRow> = Vec::new();
    for src in &built.sources {
        let Some(r) = src.reference.and_then(|i| stock.references.get(i)) else {
            continue;
        };
        push(
            &mut references,
            |row| row.part_id == r.part_id,
            &src.designator,
            BomRow {
                refs: vec![src.designator.clone()],
                kind: "reference".into(),
                value: format_quantity(r.volts.0, "V"),
                part_id: r.part_id.clone(),
                quantity: 1,
                unit_cost: r.unit_cost,
            },
        );
    }
    // The filter at the ADC input: its resistor joins the resistor rows
    // (one row per part id and grade), its capacitor a row of its own.
    // Capacitors (the filter's and those across a stage's `rf`): one row
    // per part id and value.
    let mut capacitors: Vec<BomRow> = Vec::new();
    let mut add_capacitor = |designator: &str, c: &crate::stock::CapacitorPart| {
        let value = format!("{} {}", format_quantity(c.value.0, "F"), c.dielectric);
        push(
            &mut capacitors,
            |row| row.part_id == c.part_id && row.value == value && row.unit_cost == c.unit_cost,
            designator,
            BomRow {
                refs: vec![designator.to_string()],
                kind: "capacitor".into(),
                value: value.clone(),
                part_id: c.part_id.clone(),
                quantity: 1,
                unit_cost: c.unit_cost,
            },
        );
    };
    for c in &built.feedback_capacitors {
        add_capacitor(&c.designator, &c.part);
    }
    if let Some(f) = &built.filter {
        add_resistor(&mut resistors, &f.series_ref, &f.series);
        add_capacitor(&f.shunt_ref, &f.shunt);
    }
    let mut out: Vec<BomRow> = Vec::new();
    for mut group in [
        resistors.into_iter().map(|(r, _)| r).collect::<Vec<_>>(),
        networks,
        capacitors,
        amplifiers,
        references,
    ] {
        for r in group.iter_mut() {
            r.refs.sort_by_key(|d| natural_key(d));
        }
        group.sort_by(|a, b| {
            let ka = a.refs.first().map(|d| natural_key(d));
            let kb = b.refs.first().map(|d| natural_key(d));
            ka.cmp(&kb)
        });
        out.extend(group);
    }
    out
}

/// The value text of a network: each value of its elements with how many
/// elements have it, in order of first appearance (`2 x 10.0k + 2 x 100k`).
fn network_value(part: &crate::stock::NetworkPart) -> String {
    let mut runs: Vec<(f64, usize)> = Vec::new();
    for v in &part.values {
        match runs.iter_mut().find(|(value, _)| *value == v.0) {
            Some((_, n)) => *n += 1,
            None => runs.push((v.0, 1)),
        }
    }
    runs.iter()
        .map(|&(v, n)| format!("{n} x {}", format_ohms(v)))
        .collect::<Vec<_>>()
        .join(" + ")
}

/// One CSV field: `'` before a leading `=`, `+`, `-`, `@`, tab or carriage
/// return (a spreadsheet would read it as a formula), then quoted with
/// doubled quotes when it holds a comma, quote or line break.
pub fn csv_field(text: &str) -> String {
    let mut t = String::with_capacity(text.len() + 2);
    if text.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        t.push('\'');
    }
    t.push_str(text);
    if t.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", t.replace('"', "\"\""))
    } else {
        t
    }
}

/// A price as CSV text: rounded to a millionth, trailing zeros dropped
/// (`0.004`, `2.1`, `0`).
pub fn money(v: f64) -> String {
    if !v.is_finite() {
        return "0".into();
    }
    let t = format!("{:.6}", v);
    let t = t.trim_end_matches('0').trim_end_matches('.');
    if t == "-0" || t.is_empty() {
        "0".into()
    } else {
        t.to_string()
    }
}

/// The bill of materials as a table of cell texts: the header (the CSV
/// columns) and one row per part line, then the summary rows. The cells
/// are the values as written, not escaped; [`table_csv`] escapes them.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct BomTable {
    /// Column names, as in [`HEADER`].
    pub header: Vec<String>,
    /// Part rows, then the `bom-line fee` row (when the fee is not zero)
    /// and the `total` row, each as many cells as the header.
    pub rows: Vec<Vec<String>>,
}

/// The BOM as a table: header, part rows, summary rows.
/// `bom_line_cost` is the fee per distinct part line (`search.bom_line_cost`
/// of the need); the `total` row is the parts plus those fees.
pub fn table(rows: &[BomRow], bom_line_cost: f64) -> BomTable {
    let mut out = Vec::with_capacity(rows.len() + 2);
    let mut parts = 0.0;
    let mut quantity = 0u64;
    for r in rows {
        let line = r.line_cost();
        parts += line;
        quantity += u64::from(r.quantity);
        out.push(vec![
            r.refs.join(" "),
            r.kind.clone(),
            r.value.clone(),
            r.part_id.clone(),
            r.quantity.to_string(),
            money(r.unit_cost),
            money(line),
        ]);
    }
    let fee = if bom_line_cost.is_finite() && bom_line_cost > 0.0 {
        bom_line_cost
    } else {
        0.0
    };
    let fees = fee * rows.len() as f64;
    if fee > 0.0 {
        out.push(vec![
            String::new(),
            "bom-line fee".into(),
            "per distinct part line".into(),
            String::new(),
            rows.len().to_string(),
            money(fee),
            money(fees),
        ]);
    }
    out.push(vec![
        String::new(),
        "total".into(),
        String::new(),
        String::new(),
        quantity.to_string(),
        String::new(),
        money(parts + fees),
    ]);
    BomTable {
        header: HEADER.split(',').map(str::to_string).collect(),
        rows: out,
    }
}

/// A table as CSV text: every cell escaped by [`csv_field`], `\n` line
/// ends.
pub fn table_csv(table: &BomTable) -> String {
    let mut s = String::new();
    for cells in std::iter::once(&table.header).chain(&table.rows) {
        let line: Vec<String> = cells.iter().map(|c| csv_field(c)).collect();
        let _ = writeln!(s, "{}", line.join(","));
    }
    s
}

/// The BOM as CSV (header, part rows, summary rows; `\n` line ends): the
/// text of [`table`].
pub fn csv(rows: &[BomRow], bom_line_cost: f64) -> String {
    table_csv(&table(rows, bom_line_cost))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(refs: &[&str], part_id: &str, q: u32, cost: f64) -> BomRow {
        BomRow {
            refs: refs.iter().map(|s| s.to_string()).collect(),
            kind: "resistor".into(),
            value: "10.0k".into(),
            part_id: part_id.into(),
            quantity: q,
            unit_cost: cost,
        }
    }

    #[test]
    fn fields_are_escaped() {
        assert_eq!(csv_field("HR-F1-10K0"), "HR-F1-10K0");
        assert_eq!(csv_field("a,b"), "\"a,b\"");
        assert_eq!(csv_field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(csv_field("two\nlines"), "\"two\nlines\"");
        // Formula injection (OWASP CSV injection advice, common practice).
        assert_eq!(csv_field("=HYPERLINK(\"x\")"), "\"'=HYPERLINK(\"\"x\"\")\"");
        assert_eq!(csv_field("+1"), "'+1");
        assert_eq!(csv_field("-2"), "'-2");
        assert_eq!(csv_field("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(csv_field("\tx"), "'\tx");
        assert_eq!(csv_field("=1,2"), "\"'=1,2\"");
    }

    #[test]
    fn prices_print_short() {
        assert_eq!(money(0.004), "0.004");
        assert_eq!(money(3.0 * 0.004), "0.012");
        assert_eq!(money(2.1), "2.1");
        assert_eq!(money(0.0), "0");
        assert_eq!(money(f64::NAN), "0");
    }

    #[test]
    fn natural_order_of_designators() {
        let mut v = vec!["R10", "R2", "U1A", "R1", "U1"];
        v.sort_by_key(|d| natural_key(d));
        assert_eq!(v, ["R1", "R2", "R10", "U1", "U1A"]);
    }

    /// A built design: equal resistors share a row, a dual op-amp serving
    /// two sections is one part, the reference has its own row.
    #[test]
    fn rows_group_by_part_id() {
        let need = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let json = r#"{"stages": [
            {"shape": "difference", "amplifier": "OA-RR2",
             "resistors": {"r1": "HR-F1-10K0", "r2": "HR-F1-20K0", "r3": "HR-F1-10K0", "r4": "HR-F1-20K0"},
             "offset": {"kind": "divider", "source": "VR-125", "top": "HR-F1-20K0",
                        "bottom": {"ohms": 1234.5, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25, "unit_cost": 0.5},
                        "buffered": true}}]}"#;
        let design = crate::design::parse_design(json.as_bytes(), "d.json", &stock).unwrap();
        let built = crate::topology::build(&need, &stock, &design).unwrap();
        let rows = rows(&built, &stock);
        let find = |id: &str| rows.iter().find(|r| r.part_id == id).unwrap();
        // Divider top R1, bottom R2 (custom), then r1..r4 = R3..R6.
        assert_eq!(find("HR-F1-20K0").refs, ["R1", "R4", "R6"]);
        assert_eq!(find("HR-F1-20K0").quantity, 3);
        assert_eq!(find("HR-F1-20K0").value, "20.0k");
        assert_eq!(find("HR-F1-10K0").refs, ["R3", "R5"]);
        assert_eq!(find("custom").value, "1.2345k");
        assert_eq!(find("custom").line_cost(), 0.5);
        let amp = find("OA-RR2");
        assert_eq!(
            (amp.kind.as_str(), amp.quantity, amp.value.as_str()),
            ("op-amp", 1, "dual")
        );
        assert_eq!(amp.refs, ["U1"]);
        let vr = find("VR-125");
        assert_eq!(
            (vr.kind.as_str(), vr.value.as_str()),
            ("reference", "1.25 V")
        );
        // Every placed part is on exactly one row.
        let total: u32 = rows.iter().map(|r| r.quantity).sum();
        assert_eq!(total as usize, crate::analysis::part_count(&built));
        // Resistors first, then amplifiers, then references.
        let kinds: Vec<&str> = rows.iter().map(|r| r.kind.as_str()).collect();
        assert_eq!(
            kinds,
            ["resistor", "resistor", "resistor", "op-amp", "reference"]
        );
    }

    #[test]
    fn csv_has_header_rows_and_totals() {
        let rows = vec![
            row(&["R1", "R3"], "=evil", 2, 0.004),
            row(&["R2"], "HR,X", 1, 0.045),
        ];
        let text = csv(&rows, 0.05);
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], HEADER);
        assert_eq!(lines[1], "R1 R3,resistor,10.0k,'=evil,2,0.004,0.008");
        assert_eq!(lines[2], "R2,resistor,10.0k,\"HR,X\",1,0.045,0.045");
        assert_eq!(lines[3], ",bom-line fee,per distinct part line,,2,0.05,0.1");
        // 0.008 + 0.045 + 0.1
        assert_eq!(lines[4], ",total,,,3,,0.153");
        assert_eq!(lines.len(), 5);
        // No fee row when the fee is zero.
        let text = csv(&rows, 0.0);
        assert!(!text.contains("bom-line fee"));
        assert!(text.ends_with(",total,,,3,,0.053\n"));
    }

    /// The table holds the cells unescaped; the CSV is the same rows with
    /// every cell escaped.
    #[test]
    fn table_and_csv_hold_the_same_rows() {
        let rows = vec![row(&["R1"], "=evil", 1, 0.5), row(&["R2"], "HR,X", 2, 0.25)];
        let t = table(&rows, 0.05);
        assert_eq!(t.header.join(","), HEADER);
        assert_eq!(t.rows.len(), rows.len() + 2);
        assert!(t.rows.iter().all(|r| r.len() == t.header.len()));
        assert_eq!(t.rows[0][3], "=evil");
        assert_eq!(t.rows[1][3], "HR,X");
        assert_eq!(t.rows[3][1], "total");
        let text = csv(&rows, 0.05);
        for (line, cells) in text.lines().skip(1).zip(&t.rows) {
            let escaped: Vec<String> = cells.iter().map(|c| csv_field(c)).collect();
            assert_eq!(line, escaped.join(","));
        }
        assert!(text.contains("'=evil") && text.contains("\"HR,X\""));
    }
}
