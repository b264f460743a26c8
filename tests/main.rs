//! Integration tests, one binary: `cargo test` (or `cargo nextest run`).

mod analytic;
mod bifurcation;
mod cli;
mod common;
mod compare;
mod convergence;
mod demos;
mod edge_params;
mod edges;
mod fit;
mod fold_curves;
#[allow(dead_code)] // also the core of examples/fuzz_models.rs
mod fuzz_core;
mod gradient_table;
mod growth;
mod hostile;
mod imaging;
mod initial_formula;
mod interrupt;
mod measure;
mod phase;

mod pictures;
mod properties;
mod rates;
mod replicates;
mod report_page;
mod safety;
mod screen;
mod sheet_readouts;
mod slurm;
mod sweep;
mod tables;

mod validation;
mod vector;
