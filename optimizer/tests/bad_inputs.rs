//! Bad inputs, as data: a catalogue of malformed needs and stocks, each
//! with the substrings its error message must hold (the place: file, line,
//! column or key, and what was expected). Also the inputs that must be
//! *accepted*: the demo need and stock, a JSON need equal to the TOML one,
//! hostile markup kept as data, quoted commas, CRLF files.
//!
//! Only the public API is used: `spanfit::need::parse_need` and
//! `spanfit::stock::{parse_stock, StockFile}`.

use spanfit::demo;
use spanfit::need::{parse_need, Need};
use spanfit::series::Series;
use spanfit::stock::{parse_stock, Stock, StockFile};

/// What a case feeds to the parsers.
enum Input {
    /// A need file: its name and bytes.
    Need(&'static str, Vec<u8>),
    /// A set of stock files.
    Stock(Vec<StockFile>),
}

/// One bad input and what its message must say.
struct Case {
    what: &'static str,
    input: Input,
    expect: Vec<String>,
}

const NEED_FILE: &str = "demo-need.toml";

/// The demo need with one piece of text replaced (the piece must be there).
fn need_with(from: &str, to: &str) -> String {
    assert!(
        demo::NEED_TOML.contains(from),
        "the demo need has no `{from}`"
    );
    demo::NEED_TOML.replacen(from, to, 1)
}

/// 1-based number of the first line of `text` that starts with `prefix`.
fn line_of(text: &str, prefix: &str) -> usize {
    text.lines()
        .position(|l| l.starts_with(prefix))
        .map(|i| i + 1)
        .unwrap_or_else(|| panic!("no line starts with `{prefix}`"))
}

/// A need case: the demo need edited, and the message must name the line
/// of `marker` and hold `expect`.
fn need_case(what: &'static str, from: &str, to: &str, marker: &str, expect: &[&str]) -> Case {
    let text = need_with(from, to);
    let mut expect: Vec<String> = expect.iter().map(|s| s.to_string()).collect();
    expect.push(format!("line {}", line_of(&text, marker)));
    expect.push(NEED_FILE.to_string());
    Case {
        what,
        input: Input::Need(NEED_FILE, text.into_bytes()),
        expect,
    }
}

/// A need case that checks only the listed substrings (key-level errors).
fn need_case_keyed(what: &'static str, text: String, expect: &[&str]) -> Case {
    let mut expect: Vec<String> = expect.iter().map(|s| s.to_string()).collect();
    expect.push(NEED_FILE.to_string());
    Case {
        what,
        input: Input::Need(NEED_FILE, text.into_bytes()),
        expect,
    }
}

/// The demo stock text of one table.
fn demo_table(name: &str) -> &'static str {
    demo::STOCK
        .iter()
        .find(|(n, _)| *n == name)
        .map(|(_, t)| *t)
        .unwrap_or_else(|| panic!("no demo table {name}"))
}

/// The demo stock with one table replaced (or removed, for `None`).
fn stock_with(name: &str, bytes: Option<Vec<u8>>) -> Vec<StockFile> {
    let mut files: Vec<StockFile> = demo::stock_files()
        .into_iter()
        .filter(|f| f.name != name)
        .collect();
    if let Some(bytes) = bytes {
        files.push(StockFile {
            name: name.to_string(),
            bytes,
        });
    }
    files
}

/// A stock case: `name` gets the demo header plus `rows`.
fn stock_case(what: &'static str, name: &str, rows: &str, expect: &[&str]) -> Case {
    let header = demo_table(name).lines().next().unwrap_or_default();
    let text = format!("{header}\n{rows}");
    let mut expect: Vec<String> = expect.iter().map(|s| s.to_string()).collect();
    expect.push(name.to_string());
    Case {
        what,
        input: Input::Stock(stock_with(name, Some(text.into_bytes()))),
        expect,
    }
}

const RESISTOR_HEADER: &str =
    "part_id,value_ohms,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty";

/// A resistors.csv case with the mixed header above.
fn resistor_case(what: &'static str, rows: &str, expect: &[&str]) -> Case {
    let text = format!("{RESISTOR_HEADER}\n{rows}");
    let mut expect: Vec<String> = expect.iter().map(|s| s.to_string()).collect();
    expect.push("resistors.csv".to_string());
    Case {
        what,
        input: Input::Stock(stock_with("resistors.csv", Some(text.into_bytes()))),
        expect,
    }
}

const OPAMP_ROW: &str =
    "OA-X,1,1.8,5.5,0.0,0.0,0.02,0.02,800,3,0.01,0.01,100,1.0,30,0.005,80,0.35,400,90,25,50,";

/// An op-amp row with one cell replaced (by column position).
fn opamp_row(column: usize, value: &str) -> String {
    let mut cells: Vec<&str> = OPAMP_ROW.split(',').collect();
    cells[column] = value;
    cells.join(",")
}

/// Fifty megabytes of one line, built once for both parsers.
fn fifty_megabytes() -> Vec<u8> {
    vec![b'x'; 50 * 1024 * 1024]
}

fn catalogue() -> Vec<Case> {
    let big = fifty_megabytes();
    let big_len = big.len();
    let mut big_need = b"# ".to_vec();
    big_need.extend_from_slice(&big);
    let mut big_stock = demo_table("opamps.csv").as_bytes().to_vec();
    big_stock.extend_from_slice(&big);
    drop(big);

    let mut bad_utf8_need = need_with("label = \"", "label = \"\u{1}").into_bytes();
    let bad_at = bad_utf8_need
        .iter()
        .position(|&b| b == 1)
        .unwrap_or_default();
    bad_utf8_need[bad_at] = 0xFF;
    let bad_utf8_line = line_of(demo::NEED_TOML, "label = \"");

    let mut bad_utf8_refs = demo_table("references.csv").as_bytes().to_vec();
    bad_utf8_refs
        .extend_from_slice(b"VR-9,1.0,0.1,20,0.2,20,0.5,1\nVR-\xC3(,1.0,0.1,20,0.2,20,0.5,1\n");
    let refs_bad_line = demo_table("references.csv").lines().count() + 2;

    let long_line = format!(
        "{}\n# {}\n",
        demo_table("inamps.csv").trim_end(),
        "y".repeat(100 * 1024)
    );
    let long_line_no = demo_table("inamps.csv").lines().count() + 1;

    let json_syntax = "{\n  \"sensor\": {\n    \"signal_low_v\": 0.0,,\n  }\n}\n";

    vec![
        // ----- needs -----
        need_case(
            "unknown key in a table",
            "bits = 16",
            "bits = 16\nbitz = 3",
            "bitz",
            &["adc.bitz", "unknown key", "low_v, high_v, bits, margin_pct"],
        ),
        need_case(
            "unknown table",
            "[stock]",
            "[stocks]",
            "[stocks]",
            &["unknown table `stocks`", "sensor, adc, supply, accuracy, search, stock"],
        ),
        need_case_keyed(
            "missing required key",
            need_with("bits = 16\n", ""),
            &["adc.bits", "missing", "from 1 to 32"],
        ),
        need_case_keyed(
            "missing required table",
            need_with(
                "[supply]\npositive_v = 5.0\nnegative_v = 0.0\ntolerance_pct = 5.0\n\
                 ratiometric = false\n",
                "",
            ),
            &["missing table [supply]", "positive_v"],
        ),
        need_case(
            "text where a number belongs",
            "high_v = 3.0",
            "high_v = \"3 V\"",
            "high_v",
            &["adc.high_v", "expected a number (volts)", "`3 V`"],
        ),
        need_case(
            "NaN",
            "signal_high_v = 0.025",
            "signal_high_v = nan",
            "signal_high_v",
            &["sensor.signal_high_v", "finite", "nan"],
        ),
        need_case(
            "infinity",
            "max_error_pct_fs = 0.5",
            "max_error_pct_fs = inf",
            "max_error_pct_fs",
            &["accuracy.max_error_pct_fs", "finite", "inf"],
        ),
        need_case(
            "negative source resistance",
            "source_ohms = 350.0",
            "source_ohms = -350.0",
            "source_ohms",
            &["sensor.source_ohms", "zero ohms or more", "-350"],
        ),
        need_case(
            "ADC window above the positive rail",
            "high_v = 3.0",
            "high_v = 5.5",
            "high_v",
            &["adc.high_v", "above the positive rail", "supply.positive_v = 5 V"],
        ),
        need_case(
            "ADC window below the negative rail",
            "\nlow_v = 0.0",
            "\nlow_v = -1.0",
            "low_v",
            &["adc.low_v", "below the negative rail"],
        ),
        need_case(
            "ADC low >= high",
            "high_v = 3.0",
            "high_v = 0.0",
            "high_v",
            &["adc.high_v", "must be above adc.low_v"],
        ),
        need_case(
            "sensor span of zero",
            "signal_high_v = 0.025",
            "signal_high_v = 0.0",
            "signal_high_v",
            &["sensor.signal_high_v", "equals sensor.signal_low_v"],
        ),
        need_case(
            "bad series name",
            "resistor_series = [\"E96\"]",
            "resistor_series = [\"E96\", \"E97\"]",
            "resistor_series",
            &["search.resistor_series", "`E97`", "\"E192\""],
        ),
        need_case(
            "unknown topology",
            "topologies = [",
            "topologies = [\"cascode\", ",
            "topologies",
            &["search.topologies", "`cascode`", "\"non-inverting\""],
        ),
        need_case(
            "TOML syntax error",
            "bits = 16",
            "bits = = 16",
            "bits = =",
            &["TOML"],
        ),
        Case {
            what: "JSON syntax error",
            input: Input::Need("need.json", json_syntax.as_bytes().to_vec()),
            expect: vec![
                "need.json".into(),
                "line 3".into(),
                "column".into(),
                "not valid JSON".into(),
            ],
        },
        Case {
            what: "JSON unknown key",
            input: Input::Need(
                "need.json",
                b"{\n \"adc\": {\n  \"low_v\": 0,\n  \"hi_v\": 3\n }\n}".to_vec(),
            ),
            expect: vec![
                "need.json".into(),
                "line 4".into(),
                "adc.hi_v".into(),
                "high_v".into(),
            ],
        },
        Case {
            what: "empty need file",
            input: Input::Need(NEED_FILE, b" \n\t\n".to_vec()),
            expect: vec![NEED_FILE.into(), "empty".into(), "[sensor]".into()],
        },
        Case {
            what: "50 MB need",
            input: Input::Need(NEED_FILE, big_need),
            expect: vec![
                NEED_FILE.into(),
                format!("{} bytes", big_len + 2),
                "the limit is 1 MiB".into(),
            ],
        },
        Case {
            what: "non-UTF-8 need",
            input: Input::Need(NEED_FILE, bad_utf8_need),
            expect: vec![
                NEED_FILE.into(),
                format!("line {bad_utf8_line}"),
                format!("byte offset {bad_at}"),
                "UTF-8".into(),
            ],
        },
        need_case_keyed(
            "differential sensor without common mode",
            need_with("common_mode_v = 2.5\n", ""),
            &["sensor.common_mode_v", "differential"],
        ),
        need_case(
            "zero bits",
            "bits = 16",
            "bits = 0",
            "bits",
            &["adc.bits", "from 1 to 32", "found 0"],
        ),
        need_case(
            "margin of half the window",
            "margin_pct = 2.0",
            "margin_pct = 50",
            "margin_pct",
            &["adc.margin_pct", "less than 50"],
        ),
        need_case(
            "temperature range upside down",
            "temp_min_c = -10.0",
            "temp_min_c = 60.0",
            "temp_min_c",
            &["accuracy.temp_min_c", "above accuracy.temp_max_c"],
        ),
        need_case(
            "four stages",
            "max_stages = 3",
            "max_stages = 4",
            "max_stages",
            &["search.max_stages", "from 1 to 3"],
        ),
        need_case(
            "no topologies",
            "topologies = [\"non-inverting\", \"inverting\", \"difference\", \"instrumentation\"]",
            "topologies = []",
            "topologies",
            &["search.topologies", "empty"],
        ),
        need_case(
            "label too long",
            "label = \"Hollow Ridge manifold pressure bridge (invented)\"",
            &format!("label = \"{}\"", "L".repeat(201)),
            "label",
            &["sensor.label", "201 characters", "limit is 200"],
        ),
        need_case(
            "yield of 100 %",
            "yield_pct = 99.0",
            "yield_pct = 100.0",
            "yield_pct",
            &["accuracy.yield_pct", "below 100"],
        ),
        need_case(
            "text where a boolean belongs",
            "ratiometric = false",
            "ratiometric = \"no\"",
            "ratiometric",
            &["supply.ratiometric", "expected true or false"],
        ),
        need_case(
            "positive rail not above negative",
            "negative_v = 0.0",
            "negative_v = 5.0",
            "positive_v",
            &["supply.positive_v", "must be above supply.negative_v"],
        ),
        need_case(
            "negative BOM line cost",
            "bom_line_cost = 0.05",
            "bom_line_cost = -0.05",
            "bom_line_cost",
            &["search.bom_line_cost", "zero or more"],
        ),
        need_case(
            "zero time limit",
            "time_limit_ms = 2000",
            "time_limit_ms = 0",
            "time_limit_ms",
            &["search.time_limit_ms", "from 1"],
        ),
        // ----- stock -----
        resistor_case(
            "negative ohms",
            "R1,-100,,,,1,100,0603,0.01,10\n",
            &["line 2, column value_ohms", "expected a number of ohms", "`-100`"],
        ),
        resistor_case(
            "zero ohms",
            "R1,100,,,,1,100,0603,0.01,10\nR2,0,,,,1,100,0603,0.01,10\n",
            &["line 3, column value_ohms", "`0`"],
        ),
        resistor_case(
            "text where a number belongs",
            "R1,100,,,,1,abc,0603,0.01,10\n",
            &[
                "line 2, column tcr_ppm_per_c",
                "expected a temperature coefficient in ppm/degC, found `abc`",
            ],
        ),
        resistor_case(
            "NaN in a cell",
            "R1,NaN,,,,1,100,0603,0.01,10\n",
            &["line 2, column value_ohms", "finite", "`NaN`"],
        ),
        resistor_case(
            "infinity in a cell",
            "R1,100,,,,1,100,0603,inf,10\n",
            &["line 2, column unit_cost", "finite", "`inf`"],
        ),
        resistor_case(
            "negative tolerance",
            "R1,100,,,,-1,100,0603,0.01,10\n",
            &["line 2, column tolerance_pct", "`-1`"],
        ),
        resistor_case(
            "bad series name",
            "F1,,E97,10,1000,1,100,0603,0.01,\n",
            &["line 2, column series", "E6, E12, E24, E48, E96, E192", "`E97`"],
        ),
        resistor_case(
            "family range upside down",
            "F1,,E96,1000,10,1,100,0603,0.01,\n",
            &["line 2, column max_ohms", "below min_ohms"],
        ),
        resistor_case(
            "both a value and a family",
            "F1,100,E96,10,1000,1,100,0603,0.01,\n",
            &["line 2, column value_ohms", "both"],
        ),
        resistor_case(
            "family missing its range",
            "F1,,E96,10,,1,100,0603,0.01,\n",
            &["line 2, column max_ohms", "`max_ohms` is empty"],
        ),
        resistor_case(
            "quantity that is not a whole number",
            "R1,100,,,,1,100,0603,0.01,2.5\n",
            &["line 2, column stock_qty", "whole number", "`2.5`"],
        ),
        resistor_case(
            "control character in a part id",
            "\"R\u{7}1\",100,,,,1,100,0603,0.01,10\n",
            &["line 2, column part_id", "control character"],
        ),
        resistor_case(
            "part id too long",
            &format!("{},100,,,,1,100,0603,0.01,10\n", "P".repeat(65)),
            &["line 2, column part_id", "65 characters", "limit is 64"],
        ),
        resistor_case(
            "row with a missing field",
            "R1,100,,,,1,100,0603,0.01\n",
            &["line 2", "9 fields", "10 columns"],
        ),
        resistor_case(
            "unterminated quote",
            "R1,100,,,,1,100,\"0603,0.01,10\nR2,100,,,,1,100,0603,0.01,10\n",
            &["line 2", "never closed"],
        ),
        resistor_case(
            "family id clashing with a single part",
            "F1-10R0,10,,,,1,100,0603,0.01,10\nF1,,E12,10,100,1,100,0603,0.01,\n",
            &["line 3, column part_id", "`F1-10R0`", "line 2"],
        ),
        stock_case(
            "duplicate part id",
            "opamps.csv",
            &format!("{OPAMP_ROW}\n{OPAMP_ROW}\n"),
            &["line 3, column part_id", "`OA-X`", "already used on line 2"],
        ),
        stock_case(
            "three channels",
            "opamps.csv",
            &opamp_row(1, "3"),
            &["line 2, column channels", "1, 2 or 4", "`3`"],
        ),
        stock_case(
            "negative current-noise corner",
            "opamps.csv",
            &opamp_row(22, "-5"),
            &["line 2, column in_corner_hz", "`-5`", "1/f current noise corner"],
        ),
        stock_case(
            "supply_min above supply_max",
            "opamps.csv",
            &opamp_row(2, "6.0"),
            &["line 2, column supply_max_v", "below supply_min_v"],
        ),
        stock_case(
            "negative cost",
            "references.csv",
            "VR-1,2.5,0.1,20,0.2,20,-0.6,300,25,10\n",
            &["line 2, column unit_cost", "`-0.6`"],
        ),
        stock_case(
            "zero gain resistor",
            "inamps.csv",
            "IA-X,0,0.1,25,50,200,0.5,2,90,2.7,5.5,0.1,0.1,0.05,0.05,50,1.0,2.10,80,100,15,10\n",
            &["line 2, column gain_resistor_ohms", "`0`"],
        ),
        Case {
            what: "missing column",
            input: Input::Stock(stock_with(
                "opamps.csv",
                Some(
                    demo_table("opamps.csv")
                        .replace(",gbw_mhz", "")
                        .into_bytes(),
                ),
            )),
            expect: vec![
                "opamps.csv".into(),
                "line 1".into(),
                "missing column `gbw_mhz`".into(),
            ],
        },
        Case {
            what: "unknown column",
            input: Input::Stock(stock_with(
                "references.csv",
                Some(b"part_id,volts,colour,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n".to_vec()),
            )),
            expect: vec![
                "references.csv".into(),
                "line 1, column colour".into(),
                "unknown column `colour`".into(),
                "part_id, volts, initial_pct".into(),
            ],
        },
        Case {
            what: "header only: no resistors",
            input: Input::Stock(stock_with(
                "resistors.csv",
                Some(format!("{RESISTOR_HEADER}\n").into_bytes()),
            )),
            expect: vec!["resistors.csv has no rows".into(), "no resistors".into()],
        },
        Case {
            what: "empty stock: no amplifiers",
            input: Input::Stock(
                stock_with("opamps.csv", None)
                    .into_iter()
                    .filter(|f| f.name != "inamps.csv")
                    .collect(),
            ),
            expect: vec!["stock".into(), "no amplifiers".into(), "resistors.csv".into()],
        },
        Case {
            what: "empty stock: no files",
            input: Input::Stock(Vec::new()),
            expect: vec!["stock".into(), "no stock files".into(), "resistors.csv".into()],
        },
        Case {
            what: "empty file",
            input: Input::Stock(stock_with("opamps.csv", Some(Vec::new()))),
            expect: vec!["opamps.csv is empty".into(), "header".into()],
        },
        Case {
            what: "unknown file name",
            input: Input::Stock(vec![StockFile {
                name: "inductors.csv".into(),
                bytes: b"part_id\n".to_vec(),
            }]),
            expect: vec![
                "inductors.csv".into(),
                "expected one of resistors.csv, opamps.csv, references.csv, inamps.csv, \
                 capacitors.csv"
                    .into(),
            ],
        },
        Case {
            what: "50 MB line in a stock file",
            input: Input::Stock(stock_with("opamps.csv", Some(big_stock))),
            expect: vec!["opamps.csv".into(), "the limit is 8 MiB".into()],
        },
        Case {
            what: "line over 64 KiB",
            input: Input::Stock(stock_with("inamps.csv", Some(long_line.into_bytes()))),
            expect: vec![
                "inamps.csv".into(),
                format!("line {long_line_no}"),
                "64 KiB".into(),
            ],
        },
        resistor_case(
            "resistor TCR of 1.8e308",
            "R-X,1000,,,,1.0,1.8e308,0603,0.01,",
            &["line 2", "tcr_ppm_per_c", "from 0 to 1e5"],
        ),
        resistor_case(
            "resistor unit cost of 1e300",
            "R-X,1000,,,,1.0,100,0603,1e300,",
            &["line 2", "unit_cost", "from 0 to 1e6"],
        ),
        stock_case(
            "op-amp GBW of 1e300",
            "opamps.csv",
            &opamp_row(13, "1e300"),
            &["line 2", "gbw_mhz", "at most 1e9"],
        ),
        Case {
            what: "9,000 unknown columns: the message lists a few and counts the rest",
            input: Input::Stock(stock_with(
                "references.csv",
                Some(
                    format!(
                        "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty,{}\n",
                        (0..9000).map(|i| format!("x{i}")).collect::<Vec<_>>().join(",")
                    )
                    .into_bytes(),
                ),
            )),
            expect: vec![
                "references.csv".into(),
                "line 1, column x0".into(),
                "`x7`, and 8992 more".into(),
            ],
        },
        Case {
            what: "non-UTF-8 stock",
            input: Input::Stock(stock_with("references.csv", Some(bad_utf8_refs))),
            expect: vec![
                "references.csv".into(),
                format!("line {refs_bad_line}"),
                "UTF-8".into(),
                "0xC3".into(),
            ],
        },
    ]
}

fn error_of(input: &Input) -> Option<String> {
    match input {
        Input::Need(name, bytes) => parse_need(bytes, name).err().map(|e| e.to_string()),
        Input::Stock(files) => parse_stock(files).err().map(|e| e.to_string()),
    }
}

#[test]
fn every_bad_input_is_refused_with_its_place_named() {
    let cases = catalogue();
    assert!(cases.len() >= 30, "only {} cases", cases.len());
    let mut failures = Vec::new();
    for case in &cases {
        match error_of(&case.input) {
            None => failures.push(format!("{}: accepted, expected an error", case.what)),
            Some(message) => {
                for want in &case.expect {
                    if !message.contains(want.as_str()) {
                        failures.push(format!(
                            "{}: message lacks `{want}`:\n    {message}",
                            case.what
                        ));
                    }
                }
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// No message grows with the input: each is at most 2,000 characters.
#[test]
fn every_message_is_short() {
    for case in catalogue() {
        if let Some(message) = error_of(&case.input) {
            let n = message.chars().count();
            assert!(n <= 2000, "{}: {n} characters", case.what);
        }
    }
}

fn demo_need() -> Need {
    parse_need(demo::NEED_TOML.as_bytes(), NEED_FILE).expect("the demo need parses")
}

fn demo_stock() -> Stock {
    parse_stock(&demo::stock_files()).expect("the demo stock parses")
}

#[test]
fn demo_need_parses() {
    let need = demo_need();
    // Values as the demo file writes them.
    assert_eq!(need.sensor.signal_high.0, 0.025);
    assert_eq!(need.adc.bits, 16);
    assert_eq!(need.search.resistor_series, vec![Series::E96]);
    assert_eq!(need.stock.path.as_deref(), Some("../parts-data/demo-stock"));
}

#[test]
fn demo_stock_parses() {
    let stock = demo_stock();
    // Two E96 families over 10 ohm .. 1 Mohm.
    let per_family = Series::E96.values_in(10.0, 1.0e6).len();
    assert_eq!(stock.resistors.len(), 2 * per_family);
    let rows = |name: &str| {
        demo_table(name)
            .lines()
            .skip(1)
            .filter(|l| !l.trim().is_empty())
            .count()
    };
    assert_eq!(stock.opamps.len(), rows("opamps.csv"));
    assert_eq!(stock.references.len(), rows("references.csv"));
    assert_eq!(stock.inamps.len(), rows("inamps.csv"));
    // Sorted by value, then by cost.
    assert!(stock.resistors.windows(2).all(|w| {
        w[0].value.0 < w[1].value.0
            || (w[0].value.0 == w[1].value.0 && w[0].unit_cost <= w[1].unit_cost)
    }));
    assert!(stock.resistor("HR-F1-4K99").is_some());
    assert!(stock.resistor("HR-F01-1M00").is_some());
    assert!(stock.opamp("OA-ZD2").is_some_and(|p| p.channels == 2));
}

/// The demo need written out by hand as JSON must give the same `Need`.
#[test]
fn json_need_equals_toml_need() {
    let json = r#"
    {
      "sensor": {
        "label": "Hollow Ridge manifold pressure bridge (invented)",
        "signal_low_v": 0.0, "signal_high_v": 0.025,
        "quantity_low": 0, "quantity_high": 10, "quantity_unit": "bar",
        "output": "differential", "common_mode_v": 2.5, "source_ohms": 350
      },
      "adc": { "low_v": 0, "high_v": 3.0, "bits": 16, "margin_pct": 2.0 },
      "supply": { "positive_v": 5, "negative_v": 0, "tolerance_pct": 5, "ratiometric": false },
      "accuracy": {
        "max_error_pct_fs": 0.5, "basis": "worst-case", "yield_pct": 99,
        "temp_min_c": -10, "temp_max_c": 50, "calibration": "offset", "bandwidth_hz": 10
      },
      "search": {
        "max_stages": 3,
        "topologies": ["non-inverting", "inverting", "difference", "instrumentation"],
        "resistor_series": ["E96"], "objective": "cost", "bom_line_cost": 0.05,
        "max_parts": 20, "time_limit_ms": 2000
      },
      "stock": { "path": "../parts-data/demo-stock", "only": true }
    }"#;
    let from_json = parse_need(json.as_bytes(), "demo-need.json").expect("the JSON need parses");
    assert_eq!(from_json, demo_need());
}

#[test]
fn family_expansion_counts() {
    let rows = "F1,,E96,10,1000000,1,100,0603,0.01,\nF2,,E96,10,10000000,1,100,0603,0.02,\n";
    let files = stock_with(
        "resistors.csv",
        Some(format!("{RESISTOR_HEADER}\n{rows}").into_bytes()),
    );
    let stock = parse_stock(&files).expect("families parse");
    let count = |family: &str| {
        stock
            .resistors
            .iter()
            .filter(|r| r.family.as_deref() == Some(family))
            .count()
    };
    // 10 ohm .. 1 Mohm is five decades: 5 * 96 + 1 (IEC 60063 E96).
    assert_eq!(count("F1"), 481);
    // 10 ohm .. 10 Mohm is six decades: 6 * 96 + 1.
    assert_eq!(count("F2"), 577);
    assert!(stock.resistors.iter().all(
        |r| r.stock_qty.is_none() && r.part_id.starts_with(r.family.as_deref().unwrap_or("?"))
    ));
}

/// Markup in names is data: accepted and kept exactly as written.
#[test]
fn hostile_markup_is_kept_as_data() {
    let id = "<script>alert(\"x\")</script>";
    let package = "<img src=x onerror=alert(1)>";
    let rows = format!(
        "\"{}\",100,,,,1,100,\"{}\",0.01,10\n",
        id.replace('"', "\"\""),
        package
    );
    let files = stock_with(
        "resistors.csv",
        Some(format!("{RESISTOR_HEADER}\n{rows}").into_bytes()),
    );
    let stock = parse_stock(&files).expect("markup is accepted as data");
    assert_eq!(stock.resistors.len(), 1);
    assert_eq!(stock.resistors[0].part_id, id);
    assert_eq!(stock.resistors[0].package, package);

    let label = "<b onmouseover=\"steal()\">&amp; ]]> '--</b>";
    let text = need_with(
        "label = \"Hollow Ridge manifold pressure bridge (invented)\"",
        &format!("label = \"{}\"", label.replace('"', "\\\"")),
    );
    let need = parse_need(text.as_bytes(), NEED_FILE).expect("markup label accepted");
    assert_eq!(need.sensor.label, label);
}

#[test]
fn quoted_field_with_embedded_comma_works() {
    let rows = "R1,100,,,,1,100,\"0603, thin film\",0.01,10\n";
    let files = stock_with(
        "resistors.csv",
        Some(format!("{RESISTOR_HEADER}\n{rows}").into_bytes()),
    );
    let stock = parse_stock(&files).expect("quoted comma parses");
    assert_eq!(stock.resistors[0].package, "0603, thin film");
    assert_eq!(stock.resistors[0].value.0, 100.0);
}

#[test]
fn crlf_bom_comments_and_column_order_do_not_matter() {
    let plain = demo_stock();
    let crlf: Vec<StockFile> = demo::stock_files()
        .into_iter()
        .map(|f| {
            let text = String::from_utf8(f.bytes).unwrap_or_default();
            let mut bytes = "\u{feff}# invented demo stock\r\n\r\n".as_bytes().to_vec();
            bytes.extend_from_slice(text.replace('\n', "\r\n").as_bytes());
            StockFile {
                name: f.name,
                bytes,
            }
        })
        .collect();
    assert_eq!(parse_stock(&crlf).expect("CRLF parses"), plain);

    // Reverse the column order of every table.
    let reversed: Vec<StockFile> = demo::stock_files()
        .into_iter()
        .map(|f| {
            let text = String::from_utf8(f.bytes).unwrap_or_default();
            let out: Vec<String> = text
                .lines()
                .map(|l| l.split(',').rev().collect::<Vec<_>>().join(","))
                .collect();
            StockFile {
                name: f.name,
                bytes: out.join("\n").into_bytes(),
            }
        })
        .collect();
    assert_eq!(parse_stock(&reversed).expect("reordered parses"), plain);
}

#[test]
fn header_only_tables_other_than_resistors_are_empty_not_errors() {
    let files = stock_with(
        "references.csv",
        Some(
            demo_table("references.csv")
                .lines()
                .next()
                .unwrap_or_default()
                .as_bytes()
                .to_vec(),
        ),
    );
    let stock = parse_stock(&files).expect("a stock without references parses");
    assert!(stock.references.is_empty());
    assert!(!stock.resistors.is_empty());
}
