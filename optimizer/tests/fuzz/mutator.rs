//! A small byte mutator for the fuzz targets: a xorshift generator and the
//! usual mutations (flip, insert, delete, duplicate, splice, and tokens that
//! parsers and number checks care about). No external fuzzing engine, so it
//! runs on stable Rust inside `cargo test`.

/// xorshift64: fast, reproducible from its seed.
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed (zero is replaced, xorshift needs a bit set).
    pub fn new(seed: u64) -> Self {
        Rng(seed.max(1))
    }

    /// The next 64 random bits.
    pub fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }

    /// A number in `0..n` (`n > 0`).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// Tokens worth inserting: number edge cases, syntax of TOML, JSON and
/// CSV, keys, long and hostile text.
const TOKENS: &[&str] = &[
    "0",
    "-0",
    "1",
    "-1",
    "1e308",
    "-1e308",
    "5e-324",
    "1.7976931348623157e308",
    "nan",
    "inf",
    "-inf",
    "NaN",
    "1180591620717411303424",
    "9223372036854775808",
    "-9223372036854775809",
    "0.000001",
    "1e-6",
    "\"",
    "'",
    "{",
    "}",
    "[",
    "]",
    "[[",
    "]]",
    ",",
    ":",
    "=",
    "\n",
    "\r\n",
    "\t",
    "#",
    "\"\"\"",
    "\\",
    "\u{feff}",
    "\u{0}",
    "é",
    "<script>",
    "true",
    "false",
    "null",
    "\"ohms\"",
    "\"part_id\"",
    "\"kind\"",
    "\"divider\"",
    "\"supply\"",
    "signal_high_v",
    "time_limit_ms",
    "max_stages",
    "bits",
    "only",
    "series",
    "E96",
    "E192",
    "min_ohms",
    "max_ohms",
    "value_ohms",
    "stock_qty",
    "differential",
    "instrumentation-integrated",
    "1979-05-27T07:32:00Z",
];

/// `input` changed by one to eight mutations; `others` are splice donors.
pub fn mutate(rng: &mut Rng, input: &[u8], others: &[Vec<u8>]) -> Vec<u8> {
    let mut out = input.to_vec();
    for _ in 0..1 + rng.below(8) {
        let len = out.len();
        let at = rng.below(len + 1);
        match rng.below(8) {
            0 if len > 0 => {
                let i = rng.below(len);
                out[i] ^= 1 << rng.below(8);
            }
            1 => out.insert(at, rng.next() as u8),
            2 if len > 0 => {
                let n = 1 + rng.below(16.min(len - at.min(len - 1)));
                let start = at.min(len - 1);
                out.drain(start..(start + n).min(len));
            }
            3 if len > 0 => {
                let start = rng.below(len);
                let end = (start + 1 + rng.below(64)).min(len);
                let piece = out[start..end].to_vec();
                let times = 1 + rng.below(4);
                for _ in 0..times {
                    out.splice(at..at, piece.iter().copied());
                }
            }
            4 | 5 => {
                let t = TOKENS[rng.below(TOKENS.len())];
                out.splice(at..at, t.bytes());
            }
            6 if !others.is_empty() => {
                let donor = &others[rng.below(others.len())];
                if !donor.is_empty() {
                    let start = rng.below(donor.len());
                    let end = (start + 1 + rng.below(128)).min(donor.len());
                    out.splice(at..at, donor[start..end].iter().copied());
                }
            }
            7 if len > 0 => {
                // Replace a run of digits by a token (numbers are where the
                // range checks live).
                if let Some(d) = (at..len).find(|&i| out[i].is_ascii_digit()) {
                    let end = (d..len)
                        .find(|&i| !out[i].is_ascii_digit() && out[i] != b'.')
                        .unwrap_or(len);
                    let t = TOKENS[rng.below(20)];
                    out.splice(d..end, t.bytes());
                }
            }
            _ => out.push(rng.next() as u8),
        }
        // Keep inputs small enough to run many per second.
        out.truncate(64 << 10);
    }
    out
}
