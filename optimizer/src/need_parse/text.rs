//! Text helpers shared by the need, stock and design readers: UTF-8
//! decoding with a location, line and column of an offset, and the
//! shortening of user text and numbers echoed in messages.

use crate::error::{Error, Location, Result};

/// The text of `bytes`, or an error naming the line, column and byte offset
/// of the first byte that is not UTF-8.
pub(crate) fn decode_utf8<'a>(bytes: &'a [u8], file: &str) -> Result<&'a str> {
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(text),
        Err(e) => {
            let offset = e.valid_up_to();
            let good = std::str::from_utf8(&bytes[..offset]).unwrap_or_default();
            let (line, column) = line_col(good, offset);
            let mut at = Location::file(file);
            at.line = Some(line);
            at.column = Some(column.to_string());
            Err(Error::input(
                at,
                format!(
                    "not valid UTF-8: byte 0x{:02X} at byte offset {offset} (line {line}); \
                     save the file as UTF-8",
                    bytes[offset]
                ),
            ))
        }
    }
}

/// 1-based line and column (in characters) of a byte offset in `text`.
/// Offsets past the end or inside a character are moved back to the
/// nearest character start.
pub(crate) fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let mut offset = offset.min(text.len());
    while !text.is_char_boundary(offset) {
        offset -= 1;
    }
    let before = &text[..offset];
    let line = before.bytes().filter(|&b| b == b'\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let column = before[line_start..].chars().count() + 1;
    (line, column)
}

/// Most characters of user text echoed in a message; longer text is cut
/// and ends in `…`.
pub(crate) const MAX_ECHO_CHARS: usize = 80;

/// Most names (keys, columns) listed in one message; the rest are counted
/// ("and 12 more").
pub(crate) const MAX_LISTED_NAMES: usize = 8;

/// A short, printable rendering of user text for messages: control
/// characters escaped, text over [`MAX_ECHO_CHARS`] characters cut and
/// ended with `…`.
pub(crate) fn shown(text: &str) -> String {
    let mut out = String::new();
    for (i, c) in text.chars().enumerate() {
        if i == MAX_ECHO_CHARS {
            out.push('…');
            break;
        }
        out.extend(c.escape_debug());
    }
    out
}

/// User-supplied names joined with `, `: at most [`MAX_LISTED_NAMES`],
/// each cut by [`shown`] and put in backquotes, then "and N more".
pub(crate) fn listed<S: AsRef<str>>(names: &[S]) -> String {
    let mut out: Vec<String> = names
        .iter()
        .take(MAX_LISTED_NAMES)
        .map(|n| format!("`{}`", shown(n.as_ref())))
        .collect();
    if names.len() > MAX_LISTED_NAMES {
        out.push(format!("and {} more", names.len() - MAX_LISTED_NAMES));
    }
    out.join(", ")
}

/// A number as messages show it: plain when short, in exponent form when
/// it would take many digits (`1e308`, not 309 digits).
pub(crate) fn short_number(x: f64) -> String {
    let plain = format!("{x}");
    if plain.len() > 16 {
        format!("{x:e}")
    } else {
        plain
    }
}

/// Like [`shown`] for a parser's own message, which may quote input: cut
/// at four times [`MAX_ECHO_CHARS`].
pub(super) fn shown_long(text: &str) -> String {
    let cut: String = text.chars().take(4 * MAX_ECHO_CHARS).collect();
    if cut.len() < text.len() {
        format!("{cut}…")
    } else {
        cut
    }
}
