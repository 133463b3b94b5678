//! CSV writing. The header and every row come from one column list, so they cannot
//! drift apart; quoting (RFC 4180: a field with a comma, quote or line break is quoted,
//! quotes doubled) is the `csv` crate's, the one writer every CSV output goes through.
//!
//! The bench-data reader (`fit::measurements`) stays hand-written: it reports every bad
//! field at its line and column with the quantity it expected, which the crate's
//! byte-offset errors would need a second pass to give.

use std::io::{self, Write};

/// One CSV column: its header (unit in the name, `vaf_v`) and how to read a row.
pub struct Column<T> {
    pub name: &'static str,
    pub get: fn(&T) -> String,
}

pub fn write<T>(columns: &[Column<T>], rows: &[T], out: &mut dyn Write) -> io::Result<()> {
    write_records(
        out,
        columns.iter().map(|c| c.name.to_string()).collect(),
        rows.iter()
            .map(|row| columns.iter().map(|c| (c.get)(row)).collect()),
    )
}

/// `header`, then one line per record, `\n`-terminated.
pub fn write_records(
    out: &mut dyn Write,
    header: Vec<String>,
    records: impl IntoIterator<Item = Vec<String>>,
) -> io::Result<()> {
    let mut w = ::csv::WriterBuilder::new()
        .terminator(::csv::Terminator::Any(b'\n'))
        .from_writer(out);
    w.write_record(&header).map_err(io::Error::other)?;
    for r in records {
        w.write_record(&r).map_err(io::Error::other)?;
    }
    w.flush()
}

/// A number as a CSV field: the shortest text that reads back to the same double
/// (`1.2e-14`, `0.06`, `200.0`).
pub fn num(v: f64) -> String {
    format!("{v:?}")
}

/// An optional number as a CSV field: empty when absent.
pub fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quotes_only_when_needed() {
        let mut buf = Vec::new();
        let rows = [vec!["plain".into(), "a,b".into(), "say \"hi\"".into()]];
        write_records(&mut buf, vec!["x".into(), "y".into(), "z".into()], rows).unwrap();
        assert_eq!(
            String::from_utf8(buf).unwrap(),
            "x,y,z\nplain,\"a,b\",\"say \"\"hi\"\"\"\n"
        );
    }

    #[test]
    fn header_and_rows_share_columns() {
        let cols = [
            Column::<(i32, &str)> {
                name: "n",
                get: |r| r.0.to_string(),
            },
            Column {
                name: "s",
                get: |r| r.1.to_string(),
            },
        ];
        let mut buf = Vec::new();
        write(&cols, &[(1, "x"), (2, "y,z")], &mut buf).unwrap();
        assert_eq!(String::from_utf8(buf).unwrap(), "n,s\n1,x\n2,\"y,z\"\n");
    }
}
