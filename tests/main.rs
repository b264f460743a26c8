//! Integration tests, one binary: `cargo test` (or `cargo nextest run`).

mod analytic;
mod cli;
mod common;
mod compare;
mod convergence;
mod demos;
mod fit;
mod imaging;
mod interrupt;
mod measure;
mod phase;

mod pictures;
mod properties;
mod rates;
mod safety;
mod screen;

mod validation;
