//! Tests of the stock reader.

use super::*;

fn csv(text: &str) -> Vec<Record> {
    read_csv(text, "t.csv").unwrap()
}

fn fields(records: &[Record]) -> Vec<Vec<&str>> {
    records
        .iter()
        .map(|r| r.fields.iter().map(String::as_str).collect())
        .collect()
}

#[test]
fn reader_handles_quotes_line_ends_comments_and_blank_lines() {
    let r = csv("a,b,c\r\n\"x,1\",\"say \"\"hi\"\"\",\r\n\r\n# note\n  \nlast,\"two\nlines\",z");
    assert_eq!(
        fields(&r),
        vec![
            vec!["a", "b", "c"],
            vec!["x,1", "say \"hi\"", ""],
            vec!["last", "two\nlines", "z"],
        ]
    );
    assert_eq!(r.iter().map(|r| r.line).collect::<Vec<_>>(), vec![1, 2, 6]);
    // A lone CR ends a line too; a trailing line end adds no record.
    let r = csv("a,b\rc,d\r");
    assert_eq!(fields(&r), vec![vec!["a", "b"], vec!["c", "d"]]);
    assert_eq!(r[1].line, 2);
    // Quoted empty field and spaces before a quote.
    let r = csv("a, \"\" ,b\n");
    assert_eq!(fields(&r), vec![vec!["a", "", "b"]]);
}

#[test]
fn reader_refuses_broken_quoting_with_the_line() {
    let e = read_csv("a,b\nc,\"open\n\nmore", "t.csv").unwrap_err();
    assert!(e.to_string().contains("line 2"), "{e}");
    assert!(e.to_string().contains("never closed"), "{e}");
    let e = read_csv("a,b\nc,\"x\"y\n", "t.csv").unwrap_err();
    assert!(e.to_string().contains("line 2"), "{e}");
    assert!(e.to_string().contains("after its closing quote"), "{e}");
    let e = read_csv("a,b\nc,x\"y\n", "t.csv").unwrap_err();
    assert!(
        e.to_string().contains("quote inside an unquoted value"),
        "{e}"
    );
}

#[test]
fn file_names_are_recognised_by_their_last_component() {
    assert_eq!(
        Table::from_file_name("parts/demo/Resistors.CSV"),
        Some(Table::Resistors)
    );
    assert_eq!(
        Table::from_file_name("C:\\x\\inamps.csv"),
        Some(Table::InAmps)
    );
    assert_eq!(Table::from_file_name("resistor.csv"), None);
}

#[test]
fn line_length_is_checked_per_line() {
    let mut bytes = b"part_id\n".to_vec();
    bytes.extend(vec![b'x'; MAX_LINE_BYTES + 1]);
    let e = checked_text(&bytes, "t.csv").unwrap_err().to_string();
    assert!(e.contains("line 2"), "{e}");
    assert!(e.contains("64 KiB"), "{e}");
    bytes.truncate(8 + MAX_LINE_BYTES);
    assert!(checked_text(&bytes, "t.csv").is_ok());
}

#[test]
fn family_part_ids_use_value_codes() {
    let files = vec![
        StockFile {
            name: "resistors.csv".into(),
            bytes: b"part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,\
unit_cost,stock_qty\nF,E12,10,100,1,100,0603,0.01,\n"
                .to_vec(),
        },
        StockFile {
            name: "opamps.csv".into(),
            bytes: crate::demo::STOCK[1].1.as_bytes().to_vec(),
        },
    ];
    let stock = parse_stock(&files).unwrap();
    let ids: Vec<&str> = stock.resistors.iter().map(|r| r.part_id.as_str()).collect();
    assert_eq!(
        ids,
        vec![
            "F-10R0", "F-12R0", "F-15R0", "F-18R0", "F-22R0", "F-27R0", "F-33R0", "F-39R0",
            "F-47R0", "F-56R0", "F-68R0", "F-82R0", "F-100R"
        ]
    );
    assert!(stock
        .resistors
        .iter()
        .all(|r| r.family.as_deref() == Some("F")));
    assert!(stock.resistors.iter().all(|r| r.stock_qty.is_none()));
}
