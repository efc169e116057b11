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

fn with_capacitors(text: &str) -> Result<Stock> {
    let mut files = crate::demo::stock_files();
    files.retain(|f| f.name != "capacitors.csv");
    files.push(StockFile {
        name: "capacitors.csv".into(),
        bytes: text.as_bytes().to_vec(),
    });
    parse_stock(&files)
}

const CAP_HEADER: &str = "part_id,value_farads,series,min_farads,max_farads,tolerance_pct,\
                          tempco_ppm_per_c,dielectric,rated_v,package,unit_cost,stock_qty\n";

#[test]
fn capacitor_families_expand_like_resistor_families() {
    let stock = with_capacitors(&format!(
        "{CAP_HEADER}C-A,,E12,1e-11,1e-8,5,30,C0G,50,0603,0.01,\nC-B,4.7e-7,,,,5,200,film,50,1206,0.1,7\n"
    ))
    .unwrap();
    // E12 over three decades, ends included: 3 x 12 + 1 values (IEC 60063).
    let family: Vec<_> = stock
        .capacitors
        .iter()
        .filter(|c| c.family.as_deref() == Some("C-A"))
        .collect();
    assert_eq!(family.len(), 37);
    assert_eq!(family[0].part_id, "C-A-10p0");
    assert_eq!(family.last().unwrap().part_id, "C-A-10n0");
    assert!(stock.capacitor("C-A-4n70").is_some());
    let film = stock.capacitor("C-B").unwrap();
    assert_eq!(film.value.0, 4.7e-7);
    assert_eq!(film.dielectric, "film");
    assert_eq!(film.stock_qty, Some(7));
    assert!(stock
        .capacitors
        .windows(2)
        .all(|w| w[0].value.0 <= w[1].value.0));
}

#[test]
fn capacitor_value_codes() {
    use crate::stock::capacitor_code;
    assert_eq!(capacitor_code(1e-10), "100p");
    assert_eq!(capacitor_code(4.7e-9), "4n70");
    assert_eq!(capacitor_code(2.2e-6), "2u20");
    assert_eq!(capacitor_code(1e-11), "10p0");
}

#[test]
fn capacitor_rows_are_checked_with_their_location() {
    let bad = |row: &str| {
        with_capacitors(&format!("{CAP_HEADER}{row}\n"))
            .unwrap_err()
            .to_string()
    };
    let e = bad("C-A,-1e-9,,,,5,30,C0G,50,0603,0.01,");
    assert!(e.contains("line 2") && e.contains("value_farads"), "{e}");
    let e = bad("C-A,1e-9,,,,5,30,,50,0603,0.01,");
    assert!(e.contains("dielectric"), "{e}");
    let e = bad("C-A,1e-9,,,,5,30,C0G,0,0603,0.01,");
    assert!(e.contains("rated_v") && e.contains("above zero"), "{e}");
    let e = bad("C-A,,E12,1e-8,1e-9,5,30,C0G,50,0603,0.01,");
    assert!(e.contains("max_farads"), "{e}");
    let e = with_capacitors(
        "part_id,tolerance_pct,tempco_ppm_per_c,dielectric,rated_v,package,unit_cost,stock_qty\n",
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("value_farads"), "{e}");
}

#[test]
fn output_ohms_is_optional_with_a_default() {
    let stock = parse_stock(&crate::demo::stock_files()).unwrap();
    assert!(stock
        .opamps
        .iter()
        .all(|p| p.output_ohms == crate::stock::DEFAULT_OUTPUT_OHMS));
    assert!(!stock.capacitors.is_empty());
}

/// The demo op-amp header and one row, with `extra` columns and cells
/// appended.
fn opamp_file(extra_header: &str, extra_cells: &str) -> StockFile {
    StockFile {
        name: "opamps.csv".into(),
        bytes: format!(
            "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,\
             input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,\
             vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,\
             cmrr_min_db,unit_cost,stock_qty{extra_header}\n\
             OA-T,1,1.8,5.5,0,0,0.02,0.02,800,3,0.01,0.01,100,1,30,0.005,80,0.35,400{extra_cells}\n"
        )
        .into_bytes(),
    }
}

fn reference_file(extra_header: &str, extra_cells: &str) -> StockFile {
    StockFile {
        name: "references.csv".into(),
        bytes: format!(
            "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,\
             stock_qty{extra_header}\nVR-T,2.5,0.1,20,0.2,20,0.6,300{extra_cells}\n"
        )
        .into_bytes(),
    }
}

fn one_resistor() -> StockFile {
    StockFile {
        name: "resistors.csv".into(),
        bytes: b"part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                 R-1,1000,1,100,0603,0.01,\n"
            .to_vec(),
    }
}

/// Files without the optional columns keep reading, with the documented
/// defaults; given columns are read.
#[test]
fn optional_part_columns_default_when_absent_and_read_when_given() {
    let stock = parse_stock(&[one_resistor(), opamp_file("", ""), reference_file("", "")])
        .expect("old files read");
    let amp = &stock.opamps[0];
    assert_eq!(amp.ib_doubling_c, None);
    assert_eq!(amp.psrr_min.0, crate::stock::DEFAULT_PSRR_DB);
    let reference = &stock.references[0];
    assert_eq!(
        reference.load_regulation_ppm_per_ma,
        crate::stock::DEFAULT_LOAD_REGULATION_PPM_PER_MA
    );
    assert_eq!(reference.max_load_ma, crate::stock::DEFAULT_MAX_LOAD_MA);

    let stock = parse_stock(&[
        one_resistor(),
        opamp_file(",ib_doubling_c,psrr_min_db", ",10,96"),
        reference_file(",load_regulation_ppm_per_ma,max_load_ma", ",25,5"),
    ])
    .expect("new columns read");
    assert_eq!(stock.opamps[0].ib_doubling_c, Some(10.0));
    assert_eq!(stock.opamps[0].psrr_min.0, 96.0);
    assert_eq!(stock.references[0].load_regulation_ppm_per_ma, 25.0);
    assert_eq!(stock.references[0].max_load_ma, 5.0);

    // Empty cells take the defaults too.
    let stock = parse_stock(&[
        one_resistor(),
        opamp_file(",ib_doubling_c,psrr_min_db", ",,"),
        reference_file(",load_regulation_ppm_per_ma,max_load_ma", ",,"),
    ])
    .expect("empty cells read");
    assert_eq!(stock.opamps[0].ib_doubling_c, None);
    assert_eq!(
        stock.references[0].max_load_ma,
        crate::stock::DEFAULT_MAX_LOAD_MA
    );
}

/// A bad value in an optional column is refused with its file, line and
/// column, and says what was expected.
#[test]
fn bad_optional_part_values_name_file_line_and_column() {
    for (file, column, want) in [
        (
            opamp_file(",ib_doubling_c", ",0.5"),
            "ib_doubling_c",
            "from 1 to 1000",
        ),
        (
            opamp_file(",psrr_min_db", ",-3"),
            "psrr_min_db",
            "above zero",
        ),
        (
            opamp_file(",psrr_min_db", ",loud"),
            "psrr_min_db",
            "power-supply rejection",
        ),
        (
            opamp_file(",in_corner_hz", ",-1"),
            "in_corner_hz",
            "from 0 to",
        ),
        (
            opamp_file(",in_corner_hz", ",inf"),
            "in_corner_hz",
            "a finite one",
        ),
        (
            opamp_file(",in_corner_hz", ",NaN"),
            "in_corner_hz",
            "1/f current noise corner",
        ),
        (
            opamp_file(",in_corner_hz", ",slow"),
            "in_corner_hz",
            "1/f current noise corner",
        ),
        (
            reference_file(",max_load_ma", ",0"),
            "max_load_ma",
            "above zero",
        ),
        (
            reference_file(",load_regulation_ppm_per_ma", ",NaN"),
            "load_regulation_ppm_per_ma",
            "load regulation",
        ),
    ] {
        let name = file.name.clone();
        let e = parse_stock(&[one_resistor(), file])
            .expect_err("a bad optional value is refused")
            .to_string();
        assert!(
            e.contains(&format!("{name}, line 2, column {column}")),
            "{e}"
        );
        assert!(e.contains(want), "{e}");
    }
}

/// `in_corner_hz`: absent or empty is white current noise (0, the
/// documented default), a value is read as given, and the voltage-noise
/// corner beside it is untouched.
#[test]
fn the_current_noise_corner_defaults_to_white_and_reads_when_given() {
    for (header, cells) in [("", ""), (",in_corner_hz", ","), (",in_corner_hz", ",0")] {
        let stock =
            parse_stock(&[one_resistor(), opamp_file(header, cells)]).expect("the file reads");
        assert_eq!(stock.opamps[0].in_corner_hz, 0.0, "{header:?} {cells:?}");
        assert_eq!(crate::stock::DEFAULT_IN_CORNER_HZ, 0.0);
    }
    let stock = parse_stock(&[
        one_resistor(),
        opamp_file(",en_corner_hz,in_corner_hz", ",7,250"),
    ])
    .expect("the file reads");
    assert_eq!(stock.opamps[0].in_corner_hz, 250.0);
    assert_eq!(stock.opamps[0].en_corner_hz, 7.0);
}
