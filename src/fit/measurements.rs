//! Reading bench measurements of a mirror from CSV text.
//!
//! Owns the CSV dialect of `mirrorpick fit` and its located errors; it must not fit
//! anything. Values become SI numbers here (A, V, K) and nothing past this module sees
//! the user's text.
//!
//! The dialect, kept small on purpose so every error can name its line and column:
//! * fields separated by commas; a field may be quoted with `"` (a doubled `""` inside
//!   stands for one quote), as spreadsheets write them;
//! * blank lines and lines whose first non-blank character is `#` are skipped (room for
//!   notes on how the data were taken);
//! * the first other line is the header. Required columns `i_in`, `v_out`, `i_out`;
//!   optional `t_ambient`. Names are matched without regard to case and surrounding
//!   blanks. Free text goes in columns named `note`, `notes`, `comment` or `comments`, or
//!   starting with `note_` or `comment_` (`note_range`); any other name is an error with
//!   a did-you-mean, because a misspelt `t_ambiant` silently ignored would fit 27 °C data
//!   at the default ambient;
//! * a value is an engineering quantity (`100uA`, `2.5 V`, `25 °C`) read by the project's
//!   quantity parser (`units`), so the rules are those of the YAML files: a bare number in
//!   a current or voltage column is in amperes or volts, and in `t_ambient` in degrees
//!   Celsius. A column named `t_ambient_k` reads bare numbers as kelvin instead (for logs
//!   from instruments that write kelvin); `t_ambient_c` is a synonym of `t_ambient`.
//!   Column names may also carry the SI unit the house CSV output uses (`i_in_a`,
//!   `v_out_v`, `i_out_a`), so a file written by the project reads back.

use crate::input::did_you_mean;
use crate::units::{self, Dimension, Field};

/// One measured point: the mirror's programming current, the output voltage the load
/// held, the output current read, and (when logged) the ambient temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measurement {
    pub i_in_a: f64,
    pub v_out_v: f64,
    pub i_out_a: f64,
    pub t_amb_k: Option<f64>,
    /// Line of the file the point came from (1-based), for messages about a point.
    pub line: usize,
}

/// A measurement file, read and checked.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasurementSet {
    /// The name the file was given by (used in messages and in provenance).
    pub source: String,
    pub points: Vec<Measurement>,
}

/// A located problem in a measurement file: `file:line:col: what is wrong; expected`.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{file}:{line}:{col}: {message}")]
pub struct CsvError {
    pub file: String,
    pub line: usize,
    pub col: usize,
    /// What is wrong and what was expected.
    pub message: String,
}

/// What a column holds, which fixes the unit its values must carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Column {
    InputCurrent,
    OutputVoltage,
    OutputCurrent,
    /// Ambient temperature; the flag says how a bare number is read.
    Ambient(BareTemperature),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum BareTemperature {
    Celsius,
    Kelvin,
}

impl Column {
    fn from_header(name: &str) -> Option<Column> {
        match name.trim().to_ascii_lowercase().as_str() {
            "i_in" | "i_in_a" => Some(Column::InputCurrent),
            "v_out" | "v_out_v" => Some(Column::OutputVoltage),
            "i_out" | "i_out_a" => Some(Column::OutputCurrent),
            "t_ambient" | "t_ambient_c" => Some(Column::Ambient(BareTemperature::Celsius)),
            "t_ambient_k" => Some(Column::Ambient(BareTemperature::Kelvin)),
            _ => None,
        }
    }

    fn slot(self) -> usize {
        match self {
            Column::InputCurrent => 0,
            Column::OutputVoltage => 1,
            Column::OutputCurrent => 2,
            Column::Ambient(_) => 3,
        }
    }
}

const REQUIRED: [&str; 3] = ["i_in", "v_out", "i_out"];

/// Every column name the reader knows, for did-you-mean.
const KNOWN: [&str; 10] = [
    "i_in",
    "v_out",
    "i_out",
    "t_ambient",
    "i_in_a",
    "v_out_v",
    "i_out_a",
    "t_ambient_c",
    "t_ambient_k",
    "note",
];

/// Names bench logs commonly use for the columns, which edit distance alone would not
/// connect (`temp` is five edits from `t_ambient`).
const SYNONYMS: [(&str, &str); 21] = [
    ("temp", "t_ambient"),
    ("temperature", "t_ambient"),
    ("t", "t_ambient"),
    ("ta", "t_ambient"),
    ("t_a", "t_ambient"),
    ("tamb", "t_ambient"),
    ("t_amb", "t_ambient"),
    ("ambient", "t_ambient"),
    ("iin", "i_in"),
    ("iref", "i_in"),
    ("i_ref", "i_in"),
    ("i_prog", "i_in"),
    ("iout", "i_out"),
    ("io", "i_out"),
    ("i_o", "i_out"),
    ("ic", "i_out"),
    ("i_c", "i_out"),
    ("vout", "v_out"),
    ("vo", "v_out"),
    ("v_o", "v_out"),
    ("vce", "v_out"),
];

/// True for the free-text columns the reader skips on purpose.
fn is_note_column(name: &str) -> bool {
    let n = name.trim().to_ascii_lowercase();
    matches!(n.as_str(), "note" | "notes" | "comment" | "comments")
        || n.starts_with("note_")
        || n.starts_with("comment_")
}

/// The known column a mistyped or differently named column most likely means.
fn suggest_column(name: &str) -> Option<String> {
    let n = name.trim().to_ascii_lowercase();
    SYNONYMS
        .iter()
        .find(|(alias, _)| *alias == n)
        .map(|(_, known)| known.to_string())
        .or_else(|| did_you_mean(&n, KNOWN))
}

/// One field of a line and the 1-based character column it starts at.
#[derive(Debug)]
struct CsvField {
    text: String,
    col: usize,
}

/// Reads a measurement file from its text. `source` names it in messages.
pub fn parse_measurements(source: &str, text: &str) -> Result<MeasurementSet, CsvError> {
    let located = |line: usize, col: usize, message: String| CsvError {
        file: source.to_string(),
        line,
        col,
        message,
    };
    let err = |line: usize, col: usize, problem: String, expected: &str| {
        located(line, col, format!("{problem}; expected {expected}"))
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l))
        .filter(|(_, l)| {
            let t = l.trim();
            !t.is_empty() && !t.starts_with('#')
        });

    let Some((header_line, header)) = lines.next() else {
        return Err(err(
            1,
            1,
            "the file has no header line".into(),
            "a first line naming the columns, like `i_in,v_out,i_out,t_ambient`",
        ));
    };
    let header_fields = split_fields(header).map_err(|(col, p)| {
        err(
            header_line,
            col,
            p,
            "comma-separated column names like `i_in,v_out,i_out`",
        )
    })?;
    // slot -> (index in the row, column kind)
    let mut slots: [Option<(usize, Column)>; 4] = [None; 4];
    for (idx, f) in header_fields.iter().enumerate() {
        match Column::from_header(&f.text) {
            Some(c) => {
                if let Some((prev, _)) = slots[c.slot()] {
                    return Err(err(
                        header_line,
                        f.col,
                        format!(
                            "column `{}` repeats column {} (`{}`)",
                            f.text.trim(),
                            prev + 1,
                            header_fields[prev].text.trim()
                        ),
                        "each quantity in one column only",
                    ));
                }
                slots[c.slot()] = Some((idx, c));
            }
            None if is_note_column(&f.text) => {}
            None => {
                let name = f.text.trim();
                let hint = suggest_column(name)
                    .map(|k| format!(" (did you mean `{k}`?)"))
                    .unwrap_or_default();
                let problem = if name.is_empty() {
                    "this column has no name".to_string()
                } else {
                    format!("unknown column `{name}`{hint}")
                };
                return Err(err(
                    header_line,
                    f.col + leading_blanks(&f.text),
                    problem,
                    "the columns `i_in`, `v_out`, `i_out` and optionally `t_ambient` \
                     (`t_ambient_k` for bare kelvin), plus free text in columns named \
                     `note`, `comment` or `note_...`",
                ));
            }
        }
    }
    for name in REQUIRED.iter() {
        let slot = Column::from_header(name).map(Column::slot);
        if slot.is_some_and(|s| slots[s].is_none()) {
            return Err(err(
                header_line,
                1,
                format!("the header has no `{name}` column"),
                "a header with at least `i_in`, `v_out` and `i_out` (and optionally `t_ambient`)",
            ));
        }
    }

    let mut points = Vec::new();
    for (line_no, line) in lines {
        let fields = split_fields(line).map_err(|(col, p)| {
            err(
                line_no,
                col,
                p,
                "comma-separated values, quotes closed on the same line",
            )
        })?;
        if fields.len() != header_fields.len() {
            let col = fields
                .last()
                .map(|f| f.col + f.text.chars().count())
                .unwrap_or(1);
            return Err(err(
                line_no,
                col,
                format!(
                    "this row has {} field{} but the header has {}",
                    fields.len(),
                    if fields.len() == 1 { "" } else { "s" },
                    header_fields.len()
                ),
                "one value per header column",
            ));
        }
        let mut values = [None; 4];
        for (idx, column) in slots.iter().flatten() {
            let f = &fields[*idx];
            let v = parse_value(&f.text, *column)
                .map_err(|message| located(line_no, f.col + leading_blanks(&f.text), message))?;
            values[column.slot()] = Some(v);
        }
        let [Some(i_in_a), Some(v_out_v), Some(i_out_a), t_amb_k] = values else {
            unreachable!("the three required slots were checked in the header")
        };
        points.push(Measurement {
            i_in_a,
            v_out_v,
            i_out_a,
            t_amb_k,
            line: line_no,
        });
    }
    if points.is_empty() {
        return Err(err(
            header_line + 1,
            1,
            "the file has a header but no measurements".into(),
            "one row per measured point below the header",
        ));
    }
    Ok(MeasurementSet {
        source: source.to_string(),
        points,
    })
}

fn leading_blanks(s: &str) -> usize {
    s.chars().take_while(|c| c.is_whitespace()).count()
}

/// Splits one line into fields. Errors carry the 1-based column and the problem.
fn split_fields(line: &str) -> Result<Vec<CsvField>, (usize, String)> {
    let chars: Vec<char> = line.chars().collect();
    let mut fields = Vec::new();
    let mut i = 0;
    loop {
        let start = i;
        let mut text = String::new();
        // A quoted field may have blanks before the opening quote.
        let first = chars[i..].iter().position(|c| !c.is_whitespace());
        if let Some(off) = first.filter(|&off| chars[i + off] == '"') {
            let open = i + off;
            i = open + 1;
            loop {
                match chars.get(i) {
                    None => {
                        return Err((open + 1, "this quote is never closed".into()));
                    }
                    Some('"') if chars.get(i + 1) == Some(&'"') => {
                        text.push('"');
                        i += 2;
                    }
                    Some('"') => {
                        i += 1;
                        break;
                    }
                    Some(c) => {
                        text.push(*c);
                        i += 1;
                    }
                }
            }
            while let Some(c) = chars.get(i) {
                if *c == ',' {
                    break;
                }
                if !c.is_whitespace() {
                    return Err((i + 1, format!("unexpected `{c}` after a closing quote")));
                }
                i += 1;
            }
            fields.push(CsvField {
                text,
                col: open + 2,
            });
        } else {
            while let Some(c) = chars.get(i) {
                if *c == ',' {
                    break;
                }
                text.push(*c);
                i += 1;
            }
            fields.push(CsvField {
                text,
                col: start + 1,
            });
        }
        if i >= chars.len() {
            break;
        }
        i += 1; // the comma
        if i == chars.len() {
            // A trailing comma ends the line with one empty field.
            fields.push(CsvField {
                text: String::new(),
                col: i + 1,
            });
            break;
        }
    }
    Ok(fields)
}

/// Parses one value for a column into SI (A, V or K) with the project's quantity parser.
fn parse_value(raw: &str, column: Column) -> Result<f64, String> {
    let (name, field) = match column {
        Column::InputCurrent => ("i_in", &I_IN),
        Column::OutputVoltage => ("v_out", &V_OUT),
        Column::OutputCurrent => ("i_out", &I_OUT),
        Column::Ambient(_) => ("t_ambient", &T_AMBIENT),
    };
    if raw.trim().is_empty() {
        return Err(format!(
            "`{name}` is empty; expected {}, written like {}",
            field.dimension.noun(),
            field.dimension.example()
        ));
    }
    let text = raw.trim();
    if column == Column::Ambient(BareTemperature::Kelvin) {
        if let Ok(k) = units::parse(text, Dimension::Number) {
            if !(T_AMBIENT.min..=T_AMBIENT.max).contains(&k) {
                return Err(format!(
                    "`t_ambient_k`: `{text}` is out of range for a bench ambient temperature: \
                     expected {} K to {} K (this column reads bare numbers as kelvin)",
                    T_AMBIENT.min, T_AMBIENT.max
                ));
            }
            return Ok(k);
        }
    }
    units::parse_field(text, field).map_err(|e| format!("`{name}`: {e}"))
}

/// Plausible ranges of the columns. Currents must be above zero (magnitudes in the sink
/// form, MODEL.md); voltages are magnitudes from the mirror rail.
const I_IN: Field = Field::new("a programming current", Dimension::Current, 1e-12, 1.0);
const I_OUT: Field = Field::new("an output current", Dimension::Current, 1e-12, 1.0);
const V_OUT: Field = Field::new(
    "an output voltage (magnitude from the mirror rail)",
    Dimension::Voltage,
    0.0,
    1000.0,
);
const T_AMBIENT: Field = Field::new(
    "a bench ambient temperature",
    Dimension::Temperature,
    173.15,
    473.15,
);

#[cfg(test)]
mod tests {
    use super::*;

    fn read(text: &str) -> Result<MeasurementSet, String> {
        parse_measurements("bench.csv", text).map_err(|e| e.to_string())
    }

    #[test]
    fn reads_units_quotes_comments_and_bare_si_numbers() {
        let set = read(
            "# mirror A, 2026-11-30\n\
             i_in, v_out ,i_out,t_ambient,Note\r\n\
             100uA,2.5 V,101.3 µA,25 °C,first\n\
             \n\
             1e-4,\"5\",1.0151e-4,298.15 K,\"a \"\"quoted\"\" note, with comma\"\n",
        )
        .unwrap();
        assert_eq!(set.points.len(), 2);
        let p = set.points[0];
        assert!((p.i_in_a - 100e-6).abs() < 1e-18);
        assert!((p.v_out_v - 2.5).abs() < 1e-15);
        assert!((p.i_out_a - 101.3e-6).abs() < 1e-18);
        assert!((p.t_amb_k.unwrap() - 298.15).abs() < 1e-12);
        assert_eq!(p.line, 3);
        assert_eq!(set.points[1].line, 5);
        assert!((set.points[1].v_out_v - 5.0).abs() < 1e-15);
    }

    #[test]
    fn note_columns_are_skipped_by_name() {
        let set = read("i_in,v_out,i_out,notes,note_range,Comment\n1mA,3,1mA,a,10 mA,b\n").unwrap();
        assert_eq!(set.points.len(), 1);
    }

    #[test]
    fn the_column_name_can_fix_the_unit_of_bare_temperatures() {
        let set = read("i_in,v_out,i_out,t_ambient_c\n1mA,3,1mA,-40\n").unwrap();
        assert!((set.points[0].t_amb_k.unwrap() - 233.15).abs() < 1e-12);
        let set = read("I_IN,V_OUT,I_OUT,T_AMBIENT_K\n1mA,3,1mA,300\n").unwrap();
        assert!((set.points[0].t_amb_k.unwrap() - 300.0).abs() < 1e-12);
    }

    #[test]
    fn located_errors_name_line_column_problem_and_expectation() {
        let cases = [
            "i_in,v_out,i_out\n100uA,2.5V,101uV\n",
            "i_in,v_out,i_out\n100uA, 2.5 Q,101uA\n",
            "i_in,v_out,i_ot\n",
            "i_in,v_out,i_out\n1mA,2\n",
            "i_in,v_out,i_out\n2MA,2,1mA\n",
            "i_in,v_out,i_out\n-1mA,2,1mA\n",
            "i_in,v_out,i_out\n1mA,\"2,1mA\n",
            "i_in,v_out,i_out\n1mA,,1mA\n",
            "i_in,v_out,i_out,I_IN\n",
            "# only a note\n\n",
            "i_in,v_out,i_out\n",
            "i_in,v_out,i_out\n1xA,2,1mA\n",
            "i_in,v_out,i_out,t_ambient_k\n1mA,2,1mA,25\n",
            "i_in,v_out,i_out\n1mA,2,\"1mA\"x\n",
            "i_in,v_out,i_out,t_ambiant\n1mA,2,1mA,27\n",
            "i_in,v_out,i_out, temp\n1mA,2,1mA,27\n",
            "i_in,v_out,i_out,range\n1mA,2,1mA,x\n",
            "i_in,i_out\n1mA,1mA\n",
        ];
        let expected = [
            "bench.csv:2:12: `i_out`: `101uV` is a voltage, but a current was expected here; write it like `100 uA` or `1.5 mA`",
            "bench.csv:2:8: `v_out`: `2.5 Q` is not a voltage; write it like `12 V` or `650 mV`",
            "bench.csv:1:12: unknown column `i_ot` (did you mean `i_out`?); expected the columns `i_in`, `v_out`, `i_out` and optionally `t_ambient` (`t_ambient_k` for bare kelvin), plus free text in columns named `note`, `comment` or `note_...`",
            "bench.csv:2:6: this row has 2 fields but the header has 3; expected one value per header column",
            "bench.csv:2:1: `i_in`: `2MA` is out of range for a programming current: expected 1.00 pA to 1.00 A; `M` means mega (10^6); for milli write `m`, as in `2mA`",
            "bench.csv:2:1: `i_in`: `-1mA` is out of range for a programming current: expected 1.00 pA to 1.00 A",
            "bench.csv:2:5: this quote is never closed; expected comma-separated values, quotes closed on the same line",
            "bench.csv:2:5: `v_out` is empty; expected a voltage, written like `12 V` or `650 mV`",
            "bench.csv:1:18: column `I_IN` repeats column 1 (`i_in`); expected each quantity in one column only",
            "bench.csv:1:1: the file has no header line; expected a first line naming the columns, like `i_in,v_out,i_out,t_ambient`",
            "bench.csv:2:1: the file has a header but no measurements; expected one row per measured point below the header",
            "bench.csv:2:1: `i_in`: `1xA` is not a current; write it like `100 uA` or `1.5 mA`",
            "bench.csv:2:11: `t_ambient_k`: `25` is out of range for a bench ambient temperature: expected 173.15 K to 473.15 K (this column reads bare numbers as kelvin)",
            "bench.csv:2:12: unexpected `x` after a closing quote; expected comma-separated values, quotes closed on the same line",
            "bench.csv:1:18: unknown column `t_ambiant` (did you mean `t_ambient`?); expected the columns `i_in`, `v_out`, `i_out` and optionally `t_ambient` (`t_ambient_k` for bare kelvin), plus free text in columns named `note`, `comment` or `note_...`",
            "bench.csv:1:19: unknown column `temp` (did you mean `t_ambient`?); expected the columns `i_in`, `v_out`, `i_out` and optionally `t_ambient` (`t_ambient_k` for bare kelvin), plus free text in columns named `note`, `comment` or `note_...`",
            "bench.csv:1:18: unknown column `range`; expected the columns `i_in`, `v_out`, `i_out` and optionally `t_ambient` (`t_ambient_k` for bare kelvin), plus free text in columns named `note`, `comment` or `note_...`",
            "bench.csv:1:1: the header has no `v_out` column; expected a header with at least `i_in`, `v_out` and `i_out` (and optionally `t_ambient`)",
        ];
        for (c, e) in cases.iter().zip(expected) {
            assert_eq!(read(c).unwrap_err(), e);
        }
    }

    proptest::proptest! {
        /// Values written in plain SI with units, next to a quoted note holding commas and
        /// quotes, read back exactly.
        #[test]
        fn written_rows_read_back(
            rows in proptest::collection::vec(
                (1e-9f64..1.0, 0.0f64..100.0, 1e-9f64..1.0, -50.0f64..150.0, "[a-z ,\"]{0,12}"),
                1..20,
            )
        ) {
            let mut text = String::from("note,i_in,v_out,i_out,t_ambient\n");
            for (i_in, v, i_out, t, note) in &rows {
                let quoted = format!("\"{}\"", note.replace('"', "\"\""));
                text.push_str(&format!("{quoted},{i_in:e} A, {v} V,{i_out:e}A,{t} °C\n"));
            }
            let set = parse_measurements("p.csv", &text).unwrap();
            proptest::prop_assert_eq!(set.points.len(), rows.len());
            for (p, (i_in, v, i_out, t, _)) in set.points.iter().zip(&rows) {
                proptest::prop_assert_eq!(p.i_in_a, *i_in);
                proptest::prop_assert_eq!(p.v_out_v, *v);
                proptest::prop_assert_eq!(p.i_out_a, *i_out);
                proptest::prop_assert!((p.t_amb_k.unwrap() - (t + 273.15)).abs() < 1e-9);
            }
        }
    }
}
