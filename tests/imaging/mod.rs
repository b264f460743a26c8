//! Synthetic stained-embryo images with known truth (invented data), and
//! `measure` scored against them.

pub mod accuracy;
pub mod generator;
#[cfg(test)]
mod measuring;
