//! Unit tests of the need reader: defaults, ranges, messages.
//!
//! The cases sit in a `#[cfg(test)]` item so that tools that tell test
//! code from library code by that attribute (the tidy test) see them as
//! tests.

#[cfg(test)]
mod cases {
    use super::super::*;

    const MINIMAL: &str = "[sensor]\nsignal_low_v = 0\nsignal_high_v = 0.01\n\
                           [adc]\nlow_v = 0\nhigh_v = 3.3\nbits = 12\n\
                           [supply]\npositive_v = 5\n\
                           [accuracy]\nmax_error_pct_fs = 1\n";

    fn message(text: &str) -> String {
        match parse_need(text.as_bytes(), "t.toml") {
            Ok(_) => panic!("expected an error for:\n{text}"),
            Err(e) => e.to_string(),
        }
    }

    #[test]
    fn defaults_apply_to_a_minimal_need() {
        let need = parse_need(MINIMAL.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.label, defaults::LABEL);
        assert_eq!(need.sensor.output, SensorOutput::SingleEnded);
        assert_eq!(need.sensor.common_mode, Volts(0.0));
        assert_eq!(need.sensor.quantity, None);
        assert_eq!(need.adc.margin, Percent(0.0));
        assert_eq!(need.supply.negative, Volts(0.0));
        assert_eq!(need.supply.tolerance, Percent(5.0));
        assert!(!need.supply.ratiometric);
        assert_eq!(need.accuracy.basis, Basis::WorstCase);
        assert_eq!(need.accuracy.yield_pct, 99.0);
        assert_eq!(need.accuracy.temp_min, Celsius(0.0));
        assert_eq!(need.accuracy.temp_max, Celsius(70.0));
        assert_eq!(need.accuracy.calibration, Calibration::None);
        assert_eq!(need.accuracy.bandwidth, Hertz(10.0));
        assert_eq!(need.search.max_stages, 3);
        assert_eq!(need.search.topologies, Topology::ALL.to_vec());
        assert_eq!(need.search.resistor_series, vec![Series::E96]);
        assert_eq!(need.search.objective, Objective::Cost);
        assert_eq!(need.search.bom_line_cost, 0.0);
        assert_eq!(need.search.max_parts, 30);
        assert_eq!(need.search.time_limit_ms, 2000);
        assert_eq!(need.stock.path, None);
        assert!(need.stock.only);
        // Integers in TOML are accepted where volts are expected.
        assert_eq!(need.adc.high, Volts(3.3));
        assert_eq!(need.supply.positive, Volts(5.0));
    }

    #[test]
    fn unknown_key_names_table_line_and_allowed_keys() {
        let text = MINIMAL.replace("bits = 12", "bits = 12\nbitz = 3");
        let m = message(&text);
        assert!(m.contains("line 8"), "{m}");
        assert!(m.contains("adc.bitz"), "{m}");
        assert!(m.contains("low_v, high_v, bits, margin_pct"), "{m}");
        let m = message(&format!("{MINIMAL}[extra]\nx = 1\n"));
        assert!(m.contains("unknown table `extra`"), "{m}");
        assert!(
            m.contains("sensor, adc, supply, accuracy, search, stock"),
            "{m}"
        );
    }

    /// Every raw table is recognised from its unknown-key message, so the
    /// first-key map above stays in step with the structs.
    #[test]
    fn every_table_is_named_in_unknown_key_messages() {
        for table in ["sensor", "adc", "supply", "accuracy", "search", "stock"] {
            let text = if MINIMAL.contains(&format!("[{table}]")) {
                MINIMAL.replace(&format!("[{table}]"), &format!("[{table}]\nzz = 1"))
            } else {
                format!("{MINIMAL}[{table}]\nzz = 1\n")
            };
            let m = message(&text);
            assert!(m.contains(&format!("{table}.zz")), "{m}");
            let json = format!("{{\"{table}\": {{\"zz\": 1}}}}");
            let m = parse_need(json.as_bytes(), "t.json")
                .unwrap_err()
                .to_string();
            assert!(m.contains(&format!("{table}.zz")), "{m}");
            assert!(m.contains("line 1"), "{m}");
        }
    }

    #[test]
    fn wrong_type_names_key_line_and_expected_type() {
        let m = message(&MINIMAL.replace("bits = 12", "bits = \"twelve\""));
        assert!(m.contains("adc.bits"), "{m}");
        assert!(m.contains("line 7, column 8"), "{m}");
        assert!(m.contains("expected a whole number"), "{m}");
        let m = message(&MINIMAL.replace("bits = 12", "bits = 12.5"));
        assert!(m.contains("found the number `12.5`"), "{m}");
        let m = message(&MINIMAL.replace("positive_v = 5", "positive_v = true"));
        assert!(m.contains("supply.positive_v"), "{m}");
        assert!(
            m.contains("expected a number (volts), found the boolean `true`"),
            "{m}"
        );
        let m = message(&format!("{MINIMAL}[stock]\nonly = \"yes\"\n"));
        assert!(m.contains("stock.only"), "{m}");
        assert!(m.contains("expected true or false"), "{m}");
        let m = message(&format!("{MINIMAL}[search]\nmax_stages = 1979-05-27\n"));
        assert!(m.contains("a date/time"), "{m}");
        let m = message(&MINIMAL.replace("[adc]\n", "adc = 5\n[adcx]\n"));
        assert!(m.contains("line"), "{m}");
    }

    #[test]
    fn non_finite_values_are_refused() {
        for literal in ["nan", "inf", "-inf", "+nan"] {
            let m = message(&MINIMAL.replace("high_v = 3.3", &format!("high_v = {literal}")));
            assert!(m.contains("adc.high_v"), "{m}");
            assert!(m.contains("expected a finite number"), "{m}");
        }
    }

    /// The need text with `key` (a path of [`NUMBER_RANGES`]) set to
    /// `value`, added to its table.
    fn with_key(key: &str, value: &str) -> String {
        let (table, name) = key.split_once('.').unwrap();
        let mut lines: Vec<String> = MINIMAL.lines().map(str::to_string).collect();
        let header = format!("[{table}]");
        let start = match lines.iter().position(|l| *l == header) {
            Some(i) => i,
            None => {
                lines.push(header);
                lines.len() - 1
            }
        };
        let end = (start + 1..lines.len())
            .find(|&i| lines[i].starts_with('['))
            .unwrap_or(lines.len());
        let line = format!("{name} = {value}");
        match (start + 1..end).find(|&i| lines[i].starts_with(&format!("{name} = "))) {
            Some(i) => lines[i] = line,
            None => lines.insert(start + 1, line),
        }
        let mut text = lines.join("\n") + "\n";
        if key == "sensor.common_mode_v" {
            text = text.replace("[sensor]\n", "[sensor]\noutput = \"differential\"\n");
        }
        if key == "sensor.common_mode_tolerance_pct" {
            text = text.replace(
                "[sensor]\n",
                "[sensor]\noutput = \"differential\"\ncommon_mode_v = 2.5\n",
            );
        }
        if key.starts_with("sensor.quantity_") {
            text = text.replace("[sensor]\n", "[sensor]\nquantity_unit = \"bar\"\n");
            for other in ["quantity_low", "quantity_high"] {
                if !key.ends_with(other) {
                    text = text.replace("[sensor]\n", &format!("[sensor]\n{other} = 0.5\n"));
                }
            }
        }
        text
    }

    /// Every number of a need has a finite range: values far outside it
    /// (and the tiniest and largest doubles) are refused with the key, its
    /// line and the range.
    #[test]
    fn every_number_key_has_a_range_that_is_enforced() {
        for r in NUMBER_RANGES {
            for value in ["1e308", "-1e308", "-1.7976931348623157e308"] {
                let m = message(&with_key(r.key, value));
                assert!(m.contains(r.key), "{}: {m}", r.key);
                assert!(m.contains("line "), "{}: {m}", r.key);
                assert!(m.contains(&format!("{}", r.max)), "{}: {m}", r.key);
            }
            // The ends themselves are inside, unless a key's own rule
            // refuses them (then with its own message, still keyed).
            for end in [r.min, r.max] {
                if let Err(e) = parse_need(with_key(r.key, &format!("{end:?}")).as_bytes(), "t") {
                    assert!(
                        e.to_string().contains(r.key) || e.to_string().contains("line"),
                        "{e}"
                    );
                }
            }
        }
        let m = message(&MINIMAL.replace("signal_high_v = 0.01", "signal_high_v = 5e-324"));
        assert!(m.contains("sensor span") && m.contains("at least"), "{m}");
        let m = message(&MINIMAL.replace("high_v = 3.3", "high_v = 0.0000001"));
        assert!(m.contains("adc.high_v"), "{m}");
    }

    /// A number too large for TOML names its key and range.
    #[test]
    fn a_huge_whole_number_names_key_and_range() {
        let m = message(&format!(
            "{MINIMAL}[search]\ntime_limit_ms = 1180591620717411303424\n"
        ));
        assert!(m.contains("search.time_limit_ms"), "{m}");
        assert!(m.contains("from 1 to 3600000"), "{m}");
        let json = "{\"search\": {\"time_limit_ms\": 1180591620717411303424}}";
        let need = MINIMAL_JSON.replace(
            "}}",
            "}, \"search\": {\"time_limit_ms\": 1180591620717411303424}}",
        );
        let m = parse_need(need.as_bytes(), "t.json")
            .unwrap_err()
            .to_string();
        assert!(
            m.contains("search.time_limit_ms") && m.contains("from 1 to 3600000"),
            "{json} {m}"
        );
    }

    const MINIMAL_JSON: &str = "{\"sensor\": {\"signal_low_v\": 0, \"signal_high_v\": 0.01}, \
        \"adc\": {\"low_v\": 0, \"high_v\": 3.3, \"bits\": 12}, \"supply\": {\"positive_v\": 5}, \
        \"accuracy\": {\"max_error_pct_fs\": 1}}";

    /// Messages: never an empty TOML message, columns from 1, JSON that is
    /// not an object answered as JSON, echoed text cut.
    #[test]
    fn messages_speak_the_format_and_stay_short() {
        assert!(parse_need(MINIMAL_JSON.as_bytes(), "t.json").is_ok());
        let m = parse_need(b"{\n\"sensor\": {\n", "t.json")
            .unwrap_err()
            .to_string();
        assert!(m.contains("column 1") && !m.contains("column 0"), "{m}");
        for (text, kind) in [
            ("[1, 2]", "a list"),
            ("\"abc\"", "a string"),
            ("42", "a number"),
        ] {
            let m = parse_need(text.as_bytes(), "t").unwrap_err().to_string();
            assert!(
                m.contains("JSON") && m.contains(kind) && !m.contains("TOML:"),
                "{m}"
            );
        }
        let long = "k".repeat(200_000);
        let m = message(&MINIMAL.replace("bits = 12", &format!("bits = 12\n{long} = 1")));
        assert!(m.len() < 600, "{} chars: {}", m.len(), &m[..300]);
        assert!(m.contains('…'), "{m}");
        let m = message(&MINIMAL.replace("bits = 12", &format!("bits = \"{long}\"")));
        assert!(m.len() < 600, "{} chars", m.len());
        for bad in ["= 1", "[adc", "x = ", "a = 1\na = 2", "x = 1979-05-27T"] {
            let m = message(bad);
            assert!(!m.trim_end().ends_with(':'), "{m}");
            assert!(m.contains("line 1") || m.contains("line 2"), "{m}");
        }
    }

    #[test]
    fn cross_key_checks() {
        let m = message(&MINIMAL.replace("signal_high_v = 0.01", "signal_high_v = 0"));
        assert!(m.contains("sensor.signal_high_v"), "{m}");
        let m = message(&MINIMAL.replace("high_v = 3.3", "high_v = 6"));
        assert!(m.contains("above the positive rail"), "{m}");
        let m = message(&MINIMAL.replace("low_v = 0\n", "low_v = -1\n"));
        assert!(m.contains("adc.low_v"), "{m}");
        assert!(m.contains("below the negative rail"), "{m}");
        let m = message(&format!("{MINIMAL}temp_min_c = 80\n"));
        assert!(m.contains("70 degC, the default"), "{m}");
        let m = message(&MINIMAL.replace("positive_v = 5", "positive_v = 5\nnegative_v = 5"));
        assert!(m.contains("must be above supply.negative_v"), "{m}");
    }

    #[test]
    fn differential_needs_common_mode_and_single_ended_refuses_it() {
        let m = message(&MINIMAL.replace("[adc]", "output = \"differential\"\n[adc]"));
        assert!(m.contains("sensor.common_mode_v"), "{m}");
        let m = message(&MINIMAL.replace("[adc]", "common_mode_v = 2.5\n[adc]"));
        assert!(m.contains("applies only to output"), "{m}");
        let ok = MINIMAL.replace(
            "[adc]",
            "output = \"differential\"\ncommon_mode_v = 2.5\n[adc]",
        );
        let need = parse_need(ok.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.common_mode, Volts(2.5));
    }

    #[test]
    fn quantity_keys_go_together() {
        let m = message(&MINIMAL.replace("[adc]", "quantity_low = 0\n[adc]"));
        assert!(m.contains("quantity_high"), "{m}");
        let full = MINIMAL.replace(
            "[adc]",
            "quantity_low = 0\nquantity_high = 10\nquantity_unit = \"bar\"\n[adc]",
        );
        let need = parse_need(full.as_bytes(), "t.toml").unwrap();
        let q = need.sensor.quantity.unwrap();
        assert_eq!((q.low, q.high, q.unit.as_str()), (0.0, 10.0, "bar"));
    }

    #[test]
    fn lists_are_checked_item_by_item_and_deduplicated() {
        let m = message(&format!(
            "{MINIMAL}[search]\nresistor_series = [\"E96\", \"E97\"]\n"
        ));
        assert!(m.contains("search.resistor_series"), "{m}");
        assert!(m.contains("item 2"), "{m}");
        assert!(m.contains("\"E192\""), "{m}");
        let need = parse_need(
            format!("{MINIMAL}[search]\ntopologies = [\"inverting\", \"inverting\"]\nresistor_series = \"E24\"\n")
                .as_bytes(),
            "t.toml",
        )
        .unwrap();
        assert_eq!(need.search.topologies, vec![Topology::Inverting]);
        assert_eq!(need.search.resistor_series, vec![Series::E24]);
    }

    #[test]
    fn line_col_counts_characters() {
        let text = "ab\ncdé f\n";
        assert_eq!(line_col(text, 0), (1, 1));
        assert_eq!(line_col(text, 3), (2, 1));
        // 'é' is two bytes; the space after it is column 4.
        assert_eq!(line_col(text, 7), (2, 4));
        // Inside 'é' moves back to its start.
        assert_eq!(line_col(text, 6), (2, 3));
        assert_eq!(line_col(text, 999), (3, 1));
    }

    #[test]
    fn bad_utf8_names_line_and_offset() {
        let mut bytes = b"[sensor]\nlabel = \"a".to_vec();
        bytes.push(0xFF);
        bytes.extend_from_slice(b"\"\n");
        let m = parse_need(&bytes, "t.toml").unwrap_err().to_string();
        assert!(m.contains("line 2"), "{m}");
        assert!(m.contains("byte offset 19"), "{m}");
        assert!(m.contains("0xFF"), "{m}");
    }

    #[test]
    fn byte_order_mark_is_ignored() {
        let text = format!("\u{feff}{MINIMAL}");
        assert!(parse_need(text.as_bytes(), "t.toml").is_ok());
        let json = "\u{feff}  {\"sensor\": {}}";
        let m = parse_need(json.as_bytes(), "t.json")
            .unwrap_err()
            .to_string();
        assert!(m.contains("missing table [adc]"), "{m}");
    }

    /// `sensor.excitation` and `sensor.common_mode_tolerance_pct`: the
    /// defaults, what each sensor wiring allows, and the refusals naming
    /// the key.
    #[test]
    fn excitation_and_common_mode_tolerance() {
        let need = parse_need(MINIMAL.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.excitation, Excitation::Independent);
        assert_eq!(need.sensor.common_mode_tolerance, Percent(0.0));
        let differential = MINIMAL.replace(
            "[sensor]\n",
            "[sensor]\noutput = \"differential\"\ncommon_mode_v = 2.5\n",
        );
        let need = parse_need(differential.as_bytes(), "t.toml").unwrap();
        assert_eq!(
            need.sensor.common_mode_tolerance,
            Percent(crate::need::DEFAULT_COMMON_MODE_TOLERANCE_PCT)
        );
        let given =
            differential.replace("[sensor]\n", "[sensor]\ncommon_mode_tolerance_pct = 0.5\n");
        let need = parse_need(given.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.common_mode_tolerance, Percent(0.5));
        let supply = differential.replace("[sensor]\n", "[sensor]\nexcitation = \"supply\"\n");
        let need = parse_need(supply.as_bytes(), "t.toml").unwrap();
        assert_eq!(need.sensor.excitation, Excitation::Supply);
        assert_eq!(need.sensor.common_mode_tolerance, Percent(0.0));
        let m = message(&supply.replace("[sensor]\n", "[sensor]\ncommon_mode_tolerance_pct = 1\n"));
        assert!(m.contains("sensor.common_mode_tolerance_pct"), "{m}");
        assert!(m.contains("supply.tolerance_pct"), "{m}");
        let m =
            message(&MINIMAL.replace("[sensor]\n", "[sensor]\ncommon_mode_tolerance_pct = 1\n"));
        assert!(m.contains("only to output = \"differential\""), "{m}");
        let m = message(&MINIMAL.replace("[sensor]\n", "[sensor]\nexcitation = \"mains\"\n"));
        assert!(m.contains("sensor.excitation"), "{m}");
        assert!(m.contains("\"independent\", \"supply\""), "{m}");
    }
}
