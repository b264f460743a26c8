//! Errors from reading and checking a model file.

use std::path::PathBuf;

/// A model file that cannot be used, with where and how to fix it.
#[derive(Debug, thiserror::Error)]
pub enum ModelError {
    /// The file could not be read.
    #[error("cannot read model file {}", file.display())]
    Read {
        /// File.
        file: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
    /// TOML syntax, a wrong type, a missing or unknown field.
    #[error("{}:{line}:{column}: {message}", file.display())]
    Syntax {
        /// File.
        file: PathBuf,
        /// Line (1-based).
        line: usize,
        /// Column (1-based).
        column: usize,
        /// What the TOML reader said.
        message: String,
    },
    /// A field with a value it may not have.
    #[error("{}:{line}:{column}: `{field}` {problem}; {fix}", file.display())]
    Invalid {
        /// File.
        file: PathBuf,
        /// Line (1-based).
        line: usize,
        /// Column (1-based).
        column: usize,
        /// Dotted field path, e.g. `gene[2].decay`.
        field: String,
        /// What is wrong.
        problem: String,
        /// How to fix it.
        fix: String,
    },
    /// A name that refers to nothing.
    #[error("{}:{line}:{column}: `{field}` names unknown {kind} `{name}`; known: {known}", file.display())]
    UnknownName {
        /// File.
        file: PathBuf,
        /// Line (1-based).
        line: usize,
        /// Column (1-based).
        column: usize,
        /// Field.
        field: String,
        /// What kind of thing was expected.
        kind: String,
        /// The name given.
        name: String,
        /// The names that exist.
        known: String,
    },
    /// Two things with one name.
    #[error("{}:{line}:{column}: {kind} `{name}` reuses the name of the {first_kind} at line {first_line}; give each a different name", file.display())]
    Duplicate {
        /// File.
        file: PathBuf,
        /// Line (1-based).
        line: usize,
        /// Column (1-based).
        column: usize,
        /// Gene, gradient or link.
        kind: String,
        /// The name.
        name: String,
        /// What the name was first given to.
        first_kind: String,
        /// Line of the first definition.
        first_line: usize,
    },
    /// ANLAGE_MEMORY_GIB is not a positive number.
    #[error(
        "ANLAGE_MEMORY_GIB is `{text}`; set it to a positive number of GiB (e.g. 8) or unset it for the 12 GiB default"
    )]
    BadBudget {
        /// The variable's text.
        text: String,
    },
    /// The run would need more memory than allowed.
    #[error("{}:{line}:{column}: `tissue.nuclei` asks for {} of memory (working arrays and the part of the recording held in memory), over the {} budget; use fewer nuclei, genes or snapshots, or raise the budget with ANLAGE_MEMORY_GIB=<GiB>", file.display(), size_text(*needed_gib), size_text(*budget_gib))]
    TooLarge {
        /// File.
        file: PathBuf,
        /// Line (1-based).
        line: usize,
        /// Column (1-based).
        column: usize,
        /// Needed, GiB.
        needed_gib: f64,
        /// Allowed, GiB.
        budget_gib: f64,
    },
}

/// A memory size given in GiB, for messages: GiB with one decimal from 1 GiB
/// up, whole MiB below.
fn size_text(gib: f64) -> String {
    if gib >= 1.0 { format!("{gib:.1} GiB") } else { format!("{:.0} MiB", gib * 1024.0) }
}
