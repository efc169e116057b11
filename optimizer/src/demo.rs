//! The embedded demo: an invented scenario (see `parts-data/README.md`),
//! compiled into the binary so `spanfit demo` and the page work with no
//! files at all.

use crate::stock::StockFile;

/// The demo need (TOML), `examples/demo-need.toml`.
pub const NEED_TOML: &str = include_str!("../../examples/demo-need.toml");

/// The demo stock tables, by file name.
pub const STOCK: [(&str, &str); 6] = [
    (
        "resistors.csv",
        include_str!("../../parts-data/demo-stock/resistors.csv"),
    ),
    (
        "opamps.csv",
        include_str!("../../parts-data/demo-stock/opamps.csv"),
    ),
    (
        "references.csv",
        include_str!("../../parts-data/demo-stock/references.csv"),
    ),
    (
        "inamps.csv",
        include_str!("../../parts-data/demo-stock/inamps.csv"),
    ),
    (
        "capacitors.csv",
        include_str!("../../parts-data/demo-stock/capacitors.csv"),
    ),
    (
        "networks.csv",
        include_str!("../../parts-data/demo-stock/networks.csv"),
    ),
];

/// The demo stock as parser input.
pub fn stock_files() -> Vec<StockFile> {
    STOCK
        .iter()
        .map(|(name, text)| StockFile {
            name: (*name).to_string(),
            bytes: text.as_bytes().to_vec(),
        })
        .collect()
}
