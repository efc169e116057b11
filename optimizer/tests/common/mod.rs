//! Helpers shared by the integration tests.

// Each test that includes these helpers uses only some of them.
#![allow(dead_code)]

pub mod bridge;
pub mod ngspice;
pub mod solve;
