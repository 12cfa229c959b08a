//! # isodisc-runner
//!
//! Drives the model with weather files and writes results: the `isodisc` command.

pub mod forcing;
