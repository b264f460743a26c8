//! Reading input files with a bound on their size, so that a wrong path
//! (a device such as /dev/zero, a huge file) is refused instead of read until
//! memory runs out.

use std::io::Read;
use std::path::Path;

/// Largest model file read, bytes (64 MiB).
pub const MAX_MODEL_BYTES: u64 = 64 << 20;
/// Largest table read (measured boundaries, summaries), bytes (256 MiB).
pub const MAX_TABLE_BYTES: u64 = 256 << 20;

/// Reads a text file of at most `limit` bytes.
///
/// # Errors
/// The read's error, or [`std::io::ErrorKind::FileTooLarge`] with the limit
/// in words when the file holds more.
pub fn read_text(path: &Path, limit: u64) -> std::io::Result<String> {
    let mut text = String::new();
    std::fs::File::open(path)?.take(limit + 1).read_to_string(&mut text)?;
    if text.len() as u64 > limit {
        return Err(std::io::Error::new(
            std::io::ErrorKind::FileTooLarge,
            format!("it holds more than {} MiB, more than such a file can sensibly hold", limit >> 20),
        ));
    }
    Ok(text)
}
