//! CSV writing (RFC 4180 quoting). The header and every row come from one column list,
//! so they cannot drift apart.

use std::io::{self, Write};

/// One CSV column: its header (unit in the name, `vaf_v`) and how to read a row.
pub struct Column<T> {
    pub name: &'static str,
    pub get: fn(&T) -> String,
}

/// Quote a field when it holds a comma, quote or line break.
pub fn escape(field: &str) -> String {
    if field.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", field.replace('"', "\"\""))
    } else {
        field.to_string()
    }
}

pub fn write<T>(columns: &[Column<T>], rows: &[T], out: &mut dyn Write) -> io::Result<()> {
    let header: Vec<&str> = columns.iter().map(|c| c.name).collect();
    writeln!(out, "{}", header.join(","))?;
    for row in rows {
        let fields: Vec<String> = columns.iter().map(|c| escape(&(c.get)(row))).collect();
        writeln!(out, "{}", fields.join(","))?;
    }
    Ok(())
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
        assert_eq!(escape("plain"), "plain");
        assert_eq!(escape("a,b"), "\"a,b\"");
        assert_eq!(escape("say \"hi\""), "\"say \"\"hi\"\"\"");
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
