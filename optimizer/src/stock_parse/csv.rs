//! The RFC 4180 reader of the stock tables: records with the 1-based
//! line each starts on, so every message can name file, line and column.

use super::*;

/// One CSV record and the line it starts on.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Record {
    /// 1-based line of the record's first character.
    pub(super) line: usize,
    /// Field texts, quotes removed and doubled quotes undone.
    pub(super) fields: Vec<String>,
}

/// Split `text` into records (RFC 4180, with the extensions listed in the
/// module header). Fields are returned as written, not trimmed.
// Long because it is one byte-level state machine (quotes, line ends,
// comments); split, its state would have to travel between functions.
pub(super) fn read_csv(text: &str, file: &str) -> Result<Vec<Record>> {
    let b = text.as_bytes();
    let len = b.len();
    let mut records = Vec::new();
    let mut i = 0;
    let mut line = 1;
    // Step over a line end at `i` (CRLF, LF or CR), counting the line.
    let line_end_len = |i: usize| -> usize {
        match b.get(i) {
            Some(b'\r') if b.get(i + 1) == Some(&b'\n') => 2,
            Some(b'\r') | Some(b'\n') => 1,
            _ => 0,
        }
    };
    while i < len {
        // Blank and comment lines are skipped whole.
        let end = b[i..]
            .iter()
            .position(|&c| c == b'\n' || c == b'\r')
            .map_or(len, |p| i + p);
        let physical = &text[i..end];
        if physical.trim().is_empty() || physical.trim_start().starts_with('#') {
            i = end + line_end_len(end);
            line += 1;
            continue;
        }
        let record_line = line;
        let mut fields = Vec::new();
        loop {
            // Spaces before an opening quote are allowed.
            let mut j = i;
            while j < len && (b[j] == b' ' || b[j] == b'\t') {
                j += 1;
            }
            if j < len && b[j] == b'"' {
                let quote_line = line;
                i = j + 1;
                let mut value = String::new();
                let mut segment = i;
                loop {
                    if i >= len {
                        return Err(Error::input(
                            at_line(file, quote_line),
                            "a quoted field opened on this line is never closed; expected a \
                             closing `\"` (write a quote inside a field as `\"\"`)",
                        ));
                    }
                    match b[i] {
                        b'"' if b.get(i + 1) == Some(&b'"') => {
                            value.push_str(&text[segment..=i]);
                            i += 2;
                            segment = i;
                        }
                        b'"' => {
                            value.push_str(&text[segment..i]);
                            i += 1;
                            break;
                        }
                        b'\r' | b'\n' => {
                            i += line_end_len(i);
                            line += 1;
                        }
                        _ => i += 1,
                    }
                }
                while i < len && (b[i] == b' ' || b[i] == b'\t') {
                    i += 1;
                }
                fields.push(value);
            } else {
                let start = i;
                while i < len && !matches!(b[i], b',' | b'\n' | b'\r') {
                    if b[i] == b'"' {
                        return Err(Error::input(
                            at_line(file, line),
                            format!(
                                "field {} has a quote inside an unquoted value; expected the \
                                 whole field in quotes with inner quotes doubled (`\"a \"\"b\"\"\"`)",
                                fields.len() + 1
                            ),
                        ));
                    }
                    i += 1;
                }
                fields.push(text[start..i].to_string());
            }
            match b.get(i) {
                None => break,
                Some(b',') => i += 1,
                Some(b'\r') | Some(b'\n') => {
                    i += line_end_len(i);
                    line += 1;
                    break;
                }
                Some(_) => {
                    return Err(Error::input(
                        at_line(file, line),
                        format!(
                            "field {} has text after its closing quote; expected a comma or the \
                             end of the line",
                            fields.len()
                        ),
                    ))
                }
            }
        }
        records.push(Record {
            line: record_line,
            fields,
        });
    }
    Ok(records)
}
