//! Problems with known answers, shared by tests and benches.
