//! Helpers shared by the integration tests.

// Each test that includes these helpers uses only some of them.
#![allow(dead_code)]

pub mod bridge;
pub mod ngspice;
pub mod solve;

/// A JSON number as f64 (NaN for anything else, so a comparison with it
/// fails).
pub fn number(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}
