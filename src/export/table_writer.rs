//! The one way tables are written: the csv crate, one typed row per line.
//!
//! A table's header is the field names of its row type (see [`header_of`]),
//! followed, for tables whose width depends on the model, by one name per
//! gene or parameter. Cells are quoted only where they must be (a comma, a
//! double quote or a line break), so any name round-trips through a CSV reader.
//!
//! Numbers: the tables of runs, phase space and fits write an f64 as Rust's
//! `{}` prints it ([`shortest`]: the shortest text that reads back to the
//! same bits, never with an exponent: `5`, `0.0000001`); the tables that were
//! written by the csv crate from the start (screens, sensitivities, measured
//! boundaries and comparisons) keep its own form (`5.0`, `1e-7`).

use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

use serde::{Serialize, Serializer};

use super::{ExportError, write_atomic};

/// Writes `v` as Rust's `{}` does, through `f`, without allocating for
/// any text up to 64 bytes (every f64 from 1e-40 up to 1e40).
fn with_shortest<R>(v: f64, f: impl FnOnce(&str) -> R) -> R {
    struct Text {
        bytes: [u8; 64],
        len: usize,
    }
    impl std::fmt::Write for Text {
        fn write_str(&mut self, s: &str) -> std::fmt::Result {
            let end = self.len + s.len();
            self.bytes.get_mut(self.len..end).ok_or(std::fmt::Error)?.copy_from_slice(s.as_bytes());
            self.len = end;
            Ok(())
        }
    }
    let mut text = Text { bytes: [0; 64], len: 0 };
    match write!(text, "{v}") {
        // Only whole `str`s were copied in, so the bytes are UTF-8.
        Ok(()) => f(std::str::from_utf8(&text.bytes[..text.len]).unwrap_or_default()),
        Err(_) => f(&v.to_string()),
    }
}

/// Serialises an f64 cell as Rust's `{}` prints it (`5`, `0.25`,
/// `0.0000001`, `NaN`, `inf`); for `#[serde(serialize_with = "shortest")]`.
///
/// # Errors
/// The serializer's.
pub fn shortest<S: Serializer>(v: &f64, s: S) -> Result<S::Ok, S::Error> {
    with_shortest(*v, |text| s.serialize_str(text))
}

/// [`shortest`] for an optional cell: empty when absent.
///
/// # Errors
/// The serializer's.
pub fn shortest_opt<S: Serializer>(v: &Option<f64>, s: S) -> Result<S::Ok, S::Error> {
    match v {
        Some(v) => shortest(v, s),
        None => s.serialize_none(),
    }
}

/// A run of f64 cells (one per gene or parameter), each written by [`shortest`].
#[derive(Debug, Clone, Copy)]
pub struct Cells<'a>(pub &'a [f64]);

impl Serialize for Cells<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        struct One(f64);
        impl Serialize for One {
            fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
                shortest(&self.0, s)
            }
        }
        s.collect_seq(self.0.iter().map(|v| One(*v)))
    }
}

/// The header of a table of rows of type `T`: its field names, in order
/// (renamed ones as renamed).
///
/// # Errors
/// When `T` is not a struct of scalar cells.
pub fn header_of<T: Serialize + Default>() -> std::io::Result<Vec<String>> {
    let mut probe = csv::Writer::from_writer(Vec::new());
    probe.serialize(T::default())?;
    let bytes = probe.into_inner().map_err(|e| std::io::Error::other(e.to_string()))?;
    let mut reader = csv::Reader::from_reader(bytes.as_slice());
    Ok(reader.headers()?.iter().map(String::from).collect())
}

/// A CSV table being written: the header first, then rows, each with as
/// many cells as the header has names (a row of another width is an error).
pub struct TableWriter<W: Write> {
    out: csv::Writer<W>,
}

impl<W: Write> TableWriter<W> {
    /// Starts a table with this header.
    ///
    /// # Errors
    /// The writer's.
    pub fn new<H: AsRef<str>>(w: W, header: &[H]) -> std::io::Result<Self> {
        let mut out = csv::WriterBuilder::new().has_headers(false).from_writer(w);
        out.write_record(header.iter().map(|h| h.as_ref()))?;
        Ok(TableWriter { out })
    }

    /// Starts a table whose header is [`header_of`] its rows.
    ///
    /// # Errors
    /// The writer's.
    pub fn of<T: Serialize + Default>(w: W) -> std::io::Result<Self> {
        Self::new(w, &header_of::<T>()?)
    }

    /// Writes one row: a row type, or for a wide table a tuple of a row
    /// type and [`Cells`].
    ///
    /// # Errors
    /// The writer's, or a row of the wrong width.
    pub fn row(&mut self, row: impl Serialize) -> std::io::Result<()> {
        Ok(self.out.serialize(row)?)
    }

    /// Flushes the table into its writer.
    ///
    /// # Errors
    /// The writer's.
    pub fn finish(mut self) -> std::io::Result<()> {
        self.out.flush()
    }
}

/// Writes `rows` as a CSV table into `w`, the header from the row type's
/// field names (the header alone when there are no rows).
///
/// # Errors
/// The writer's.
pub fn write_rows_to<T: Serialize + Default>(rows: &[T], w: impl Write) -> std::io::Result<()> {
    let mut table = TableWriter::of::<T>(w)?;
    for r in rows {
        table.row(r)?;
    }
    table.finish()
}

/// [`write_rows_to`] the file `path`, atomically.
///
/// # Errors
/// [`ExportError`] if the file cannot be written.
pub fn write_rows<T: Serialize + Default>(rows: &[T], path: &Path) -> Result<(), ExportError> {
    write_atomic(path, |w| write_rows_to(rows, w))
}

/// The header `names` with the column `from` renamed `to` (a sheet's
/// profiles are indexed by `column` where a row's are by `nucleus`).
pub(crate) fn renamed(mut names: Vec<String>, from: &str, to: &str) -> Vec<String> {
    for n in names.iter_mut().filter(|n| *n == from) {
        *n = to.to_string();
    }
    names
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Serialize, Default)]
    struct Probe<'a> {
        name: &'a str,
        #[serde(rename = "x_um", serialize_with = "shortest")]
        x: f64,
        #[serde(serialize_with = "shortest_opt")]
        y: Option<f64>,
        z: f64,
    }

    /// Rust's `{}` form, unlike the csv crate's own, has no exponent and no
    /// `.0` on whole numbers; long texts fall back to an allocation.
    #[test]
    fn shortest_cells_print_as_rust_display() {
        for v in [5.0, 0.25, 1e-7, -0.0, 1e21, 123456.789, f64::NAN, f64::INFINITY, 1e-300, f64::MAX, 0.1 + 0.2] {
            assert_eq!(with_shortest(v, str::to_string), v.to_string());
        }
        let mut out = Vec::new();
        let mut t = TableWriter::of::<Probe>(&mut out).unwrap();
        t.row(Probe { name: "a", x: 5.0, y: None, z: 5.0 }).unwrap();
        t.row((Probe { name: "b", x: 1e-7, y: Some(2.0), z: 1e-7 },)).unwrap();
        t.finish().unwrap();
        assert_eq!(String::from_utf8(out).unwrap(), "name,x_um,y,z\na,5,,5.0\nb,0.0000001,2,1e-7\n");
    }

    /// Names with commas and quotes are quoted, and read back whole; a row
    /// of the wrong width is refused.
    #[test]
    fn quoted_cells_round_trip_and_widths_are_checked() {
        let mut out = Vec::new();
        let mut t = TableWriter::new(&mut out, &["name", "a,\"b\""]).unwrap();
        t.row(("x, \"y\"", Cells(&[0.5]))).unwrap();
        t.finish().unwrap();
        assert_eq!(String::from_utf8(out.clone()).unwrap(), "name,\"a,\"\"b\"\"\"\n\"x, \"\"y\"\"\",0.5\n");
        let mut r = csv::Reader::from_reader(out.as_slice());
        assert_eq!(r.headers().unwrap().get(1), Some("a,\"b\""));
        let back: Vec<(String, f64)> = r.deserialize().collect::<Result<_, _>>().unwrap();
        assert_eq!(back, [("x, \"y\"".to_string(), 0.5)]);
        for wrong in [vec![], vec![1.0, 2.0]] {
            let mut t = TableWriter::new(Vec::new(), &["name", "value"]).unwrap();
            assert!(t.row(("one", Cells(&wrong))).is_err(), "{} values", wrong.len());
        }
    }

    #[test]
    fn empty_tables_have_their_header() {
        let mut out = Vec::new();
        write_rows_to::<Probe>(&[], &mut out).unwrap();
        assert_eq!(out, b"name,x_um,y,z\n");
        assert_eq!(renamed(header_of::<Probe>().unwrap(), "z", "w"), ["name", "x_um", "y", "w"]);
    }
}
