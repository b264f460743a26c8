//! Command-line arguments.

use std::path::PathBuf;

use clap::{Parser, Subcommand};

/// anlage: simulate how gene circuits pattern rows and sheets of nuclei.
#[derive(Debug, Parser)]
#[command(name = "anlage", version, about, propagate_version = true)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Verbs.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Simulate a model and write profiles, states, boundaries, domains and a summary.
    Run {
        /// Model file (TOML).
        model: PathBuf,
        /// Output folder (default: `<model name>_run` next to the model file).
        #[arg(short, long)]
        out: Option<PathBuf>,
        /// Worker threads (default: all cores). Results are identical for any count.
        #[arg(long)]
        threads: Option<usize>,
        /// Print nothing but errors.
        #[arg(short, long)]
        quiet: bool,
    },
    /// Validate a model and describe what it holds, without simulating.
    Check {
        /// Model file (TOML).
        model: PathBuf,
    },
}
