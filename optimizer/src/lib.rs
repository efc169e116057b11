//! # spanfit core
//!
//! The pure core of spanfit. It takes a *need* (a transducer with a small
//! output span, an ADC window, supplies and an accuracy target) and a
//! *stock* (resistors, op-amps, references, in-amps), and designs the
//! op-amp interface `Vout = K * Vsensor + B` between them: topology, stage
//! gains, offset network, resistor values, and a verified error budget.
//!
//! Every design is a small netlist; one modified-nodal-analysis solver
//! ([`mna`]) gives its DC transfer and the sensitivity of the output to
//! every part, so the budget ([`analysis`]), the SPICE export ([`spice`]),
//! the schematic ([`schematic`]) and the BOM ([`bom`]) all come from the
//! same data.
//!
//! The crate does no I/O: no files, no printing, no clock. Callers hand it
//! text and bytes and get values back; time budgets are passed in as a
//! clock callback.
//!
//! ```
//! let need = spanfit::need::parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
//! let (k, b) = need.ideal_transfer();
//! assert!(k > 1.0 && b.is_finite());
//! ```
#![deny(missing_docs)]

pub mod analysis;
pub mod api;
pub mod bom;
pub mod demo;
pub mod design;
pub mod error;
pub mod filter;
mod lu;
pub mod mna;
pub mod mna_ac;
pub mod montecarlo;
pub mod need;
pub mod need_fields;
mod need_parse;
pub mod netlist;
pub mod report;
pub mod schematic;
pub mod search;
pub mod series;
pub mod shape;
pub mod si_input;
pub mod spice;
pub mod stock;
mod stock_parse;
pub mod sweep;
pub use stock_parse::stock_table;
pub mod topology;
pub mod units;

pub use error::{Error, Location, Result};
