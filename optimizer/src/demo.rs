//! The embedded demo: an invented scenario (see `parts-data/README.md`),
//! compiled into the binary so `spanfit demo` and the page work with no
//! files at all.

use crate::stock::StockFile;

/// The demo need (TOML), `examples/demo-need.toml`.
pub const NEED_TOML: &str = include_str!("../../examples/demo-need.toml");

/// The demo stock tables, by file name.
pub const STOCK: [(&str, &str); 5] = [
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

/// The demo stock folder's matched networks (`networks.csv`). They are
/// not in the embedded demo stock ([`stock_files`]): they are read only
/// where the folder itself is (a need whose `stock.path` names
/// `parts-data/demo-stock`, and the network example's tests).
pub const NETWORKS_CSV: &str = include_str!("../../parts-data/demo-stock/networks.csv");
