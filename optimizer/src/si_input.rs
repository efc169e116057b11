//! Reading a number as a person types it into a form field: a plain
//! number (`0.025`, `2.5e-3`), a number with an SI prefix (`25m`, `4.7k`),
//! with the field's unit (`25 mV`, `100 nA`, `470 ohm`, `2 s` in a field
//! kept in milliseconds), or with a decimal comma (`2,5`).
//!
//! The value is built from the decimal text and the prefix's power of ten
//! in one correctly rounded conversion, so `25 mV` reads as exactly the
//! same `f64` as `0.025`. Each reading also says, in words, what it
//! understood (`0.025 V`), for the page to show beside the field.
//!
//! ```
//! use spanfit::si_input::read_quantity;
//! assert_eq!(read_quantity("25 mV", Some("V")).unwrap().value, 0.025);
//! assert_eq!(read_quantity("4.7k", Some("ohm")).unwrap().value, 4700.0);
//! assert!(read_quantity("25 mA", Some("V")).is_err());
//! ```

use serde::Serialize;

/// A number read from a field's text.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Reading {
    /// The value in the field's own unit.
    pub value: f64,
    /// What was understood, for people: the value and the field's unit.
    pub understood: String,
}

/// SI prefixes accepted after the number (the SI brochure's symbols; `u`
/// stands for micro where `µ` is hard to type, common practice).
const PREFIXES: &[(&str, i32)] = &[
    ("p", -12),
    ("n", -9),
    ("u", -6),
    ("µ", -6),
    ("μ", -6),
    ("m", -3),
    ("k", 3),
    ("M", 6),
    ("G", 9),
];

/// How a field's unit is written after a number: its base symbol (or
/// symbols), the power of ten of the field's unit over that base (`ms` is
/// `s` at -3), and whether prefixes may go in front of it.
struct UnitForm {
    names: &'static [&'static str],
    field_power: i32,
    prefixes: bool,
}

fn unit_form(unit: Option<&str>) -> UnitForm {
    let (names, field_power, prefixes): (&'static [&'static str], i32, bool) = match unit {
        Some("V") => (&["V", "v"], 0, true),
        Some("ohm") => (&["ohm", "ohms", "Ω", "Ohm", "Ohms"], 0, true),
        Some("Hz") => (&["Hz", "hz"], 0, true),
        Some("ms") => (&["s"], -3, true),
        Some("A") => (&["A"], 0, true),
        Some("%") => (&["%"], 0, false),
        Some("% FS") => (&["% FS", "%FS", "%"], 0, false),
        Some("degC") => (&["degC", "°C", "C"], 0, false),
        Some("bits") => (&["bits", "bit"], 0, false),
        // No unit: a number, with a prefix at most.
        _ => (&[], 0, true),
    };
    UnitForm {
        names,
        field_power,
        prefixes,
    }
}

/// The split of a text into its decimal mantissa and exponent, with the
/// rest of the text (prefix and unit) after it.
struct Number<'a> {
    mantissa: String,
    exponent: i32,
    rest: &'a str,
}

fn what_to_enter(unit: Option<&str>) -> String {
    match unit {
        Some("V") => "enter a number of volts such as 0.025, 25m or 25 mV".into(),
        Some("ohm") => "enter a number of ohms such as 4700, 4.7k or 4.7 kohm".into(),
        Some("Hz") => "enter a number of hertz such as 10, 1k or 1 kHz".into(),
        Some("ms") => "enter a number of milliseconds such as 2000 or 2 s".into(),
        Some(u) => format!("enter a number in {u}, such as 2.5"),
        None => "enter a number such as 2.5 or 2.5k".into(),
    }
}

/// Read the number at the start of `text`: sign, digits with one decimal
/// point or one decimal comma, and an optional `e` exponent.
fn leading_number<'a>(text: &'a str, unit: Option<&str>) -> Result<Number<'a>, String> {
    let bytes = text.as_bytes();
    let mut i = 0;
    let mut mantissa = String::new();
    if i < bytes.len() && (bytes[i] == b'+' || bytes[i] == b'-') {
        if bytes[i] == b'-' {
            mantissa.push('-');
        }
        i += 1;
    }
    let mut digits = 0;
    let mut seen_point = false;
    while i < bytes.len() {
        let c = bytes[i];
        if c.is_ascii_digit() {
            mantissa.push(char::from(c));
            digits += 1;
        } else if (c == b'.' || c == b',') && !seen_point {
            if c == b',' {
                let after = bytes[i + 1..]
                    .iter()
                    .take_while(|b| b.is_ascii_digit())
                    .count();
                if after == 3 {
                    return Err(format!(
                        "\"{text}\" is not a number: a comma with three digits after it may be a thousands separator; write the number without it, with a dot for the decimal point"
                    ));
                }
            }
            seen_point = true;
            mantissa.push('.');
        } else {
            break;
        }
        i += 1;
    }
    if digits == 0 {
        return Err(format!(
            "\"{text}\" is not a number; {}",
            what_to_enter(unit)
        ));
    }
    let mut exponent = 0i32;
    if i < bytes.len() && (bytes[i] == b'e' || bytes[i] == b'E') {
        let mut j = i + 1;
        let mut negative = false;
        if j < bytes.len() && (bytes[j] == b'+' || bytes[j] == b'-') {
            negative = bytes[j] == b'-';
            j += 1;
        }
        let start = j;
        while j < bytes.len() && bytes[j].is_ascii_digit() {
            j += 1;
        }
        if j > start {
            let digits = &text[start..j];
            let magnitude: i32 = digits.parse().map_err(|_| {
                format!("\"{text}\" is not a number: the exponent {digits} is too large")
            })?;
            exponent = if negative { -magnitude } else { magnitude };
            i = j;
        }
        // A lone `e` is left to the unit check (and refused there).
    }
    Ok(Number {
        mantissa,
        exponent,
        rest: &text[i..],
    })
}

/// Split what follows the number into its power of ten relative to the
/// field's unit: a prefix alone scales the field's own unit, a written
/// (base) unit also brings the field's power (`2 s` in a millisecond
/// field is 2000). `None` when the text is neither.
fn prefix_and_unit(rest: &str, form: &UnitForm) -> Option<i32> {
    let rest = rest.trim();
    if rest.is_empty() {
        return Some(0);
    }
    if form.names.contains(&rest) {
        return Some(-form.field_power);
    }
    if !form.prefixes {
        return None;
    }
    for (symbol, power) in PREFIXES {
        if let Some(after) = rest.strip_prefix(symbol) {
            if after.is_empty() {
                return Some(*power);
            }
            if form.names.contains(&after) {
                return Some(*power - form.field_power);
            }
        }
    }
    None
}

/// Read `text` as a value of a field whose unit is `unit` (the unit as
/// the need's field list writes it: `V`, `ohm`, `Hz`, `ms`, `%`, `% FS`,
/// `degC`, `bits`, or none). `Err` holds a message saying what was wrong
/// and what to enter, without the field's name (the caller adds it).
pub fn read_quantity(text: &str, unit: Option<&str>) -> Result<Reading, String> {
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err(format!("a value is needed; {}", what_to_enter(unit)));
    }
    let number = leading_number(trimmed, unit)?;
    let form = unit_form(unit);
    let Some(prefix_power) = prefix_and_unit(number.rest, &form) else {
        let expected = if form.names.is_empty() {
            "no unit".to_string()
        } else {
            format!("the unit {}", unit.unwrap_or(""))
        };
        return Err(format!(
            "\"{trimmed}\" is not understood here: this field takes {expected}; {}",
            what_to_enter(unit)
        ));
    };
    let power = i64::from(number.exponent) + i64::from(prefix_power);
    let value: f64 = format!("{}e{}", number.mantissa, power)
        .parse()
        .map_err(|_| format!("\"{trimmed}\" is not a number; {}", what_to_enter(unit)))?;
    if !value.is_finite() {
        return Err(format!("\"{trimmed}\" is too large a number"));
    }
    let understood = match unit {
        Some(u) => format!("{value} {u}"),
        None => format!("{value}"),
    };
    Ok(Reading { value, understood })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn value(text: &str, unit: Option<&str>) -> f64 {
        read_quantity(text, unit).unwrap().value
    }

    #[test]
    fn prefixes_and_units_give_the_same_number_as_plain_text() {
        // Each pair must be the identical f64 (one correctly rounded
        // conversion), not merely close.
        assert_eq!(value("25 mV", Some("V")), 0.025);
        assert_eq!(value("25m", Some("V")), 0.025);
        assert_eq!(value("25mV", Some("V")), 0.025);
        assert_eq!(value("2.5e-3", Some("V")), 0.0025);
        assert_eq!(value("2,5", Some("V")), 2.5);
        assert_eq!(value("4.7k", Some("ohm")), 4700.0);
        assert_eq!(value("4.7 kΩ", Some("ohm")), 4700.0);
        assert_eq!(value("1 Mohm", Some("ohm")), 1.0e6);
        assert_eq!(value("-1.5 V", Some("V")), -1.5);
        assert_eq!(value("100 nA", Some("A")), 1.0e-7);
        assert_eq!(value("2 s", Some("ms")), 2000.0);
        assert_eq!(value("150", Some("ms")), 150.0);
        assert_eq!(value("150 ms", Some("ms")), 150.0);
        assert_eq!(value("2k", Some("ms")), 2000.0);
        assert_eq!(value("1 kHz", Some("Hz")), 1000.0);
        assert_eq!(value("0.1 %", Some("% FS")), 0.1);
        assert_eq!(value("12 bits", Some("bits")), 12.0);
        assert_eq!(value("3u", None), 3.0e-6);
        assert_eq!(value("3µ", None), 3.0e-6);
    }

    #[test]
    fn the_understood_text_names_the_unit() {
        assert_eq!(
            read_quantity("25 mV", Some("V")).unwrap().understood,
            "0.025 V"
        );
        assert_eq!(
            read_quantity("2 s", Some("ms")).unwrap().understood,
            "2000 ms"
        );
    }

    #[test]
    fn wrong_units_and_words_are_refused_with_what_to_enter() {
        let e = read_quantity("100 nA", Some("V")).unwrap_err();
        assert!(e.contains("the unit V") && e.contains("25 mV"), "{e}");
        let e = read_quantity("three", Some("V")).unwrap_err();
        assert!(e.starts_with("\"three\" is not a number"), "{e}");
        assert!(read_quantity("5 m%", Some("%")).is_err());
        assert!(read_quantity("1,000", Some("V")).is_err());
        assert!(read_quantity("", Some("V")).is_err());
        assert!(read_quantity("1e", Some("V")).is_err());
        assert!(read_quantity("1 V V", Some("V")).is_err());
        assert!(read_quantity("1e999", Some("V")).is_err());
        assert!(read_quantity("5 k", Some("bits")).is_err());
    }
}
