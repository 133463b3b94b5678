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
//!   blanks; other columns (notes, instrument ranges) are ignored;
//! * a value is an engineering quantity (`100uA`, `2.5 V`, `25 °C`). A bare number in a
//!   current or voltage column is read in SI base units (amperes, volts). A bare number
//!   in `t_ambient` is refused, because bench logs write both kelvin and degrees Celsius:
//!   write the unit, or name the column `t_ambient_c` or `t_ambient_k`, which fixes the
//!   unit of bare numbers in that column.

use std::fmt;

use crate::model::ZERO_CELSIUS_K;

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

/// A located problem in a measurement file: `file:line:col: what; expected`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CsvError {
    pub file: String,
    pub line: usize,
    pub col: usize,
    pub problem: String,
    pub expected: String,
}

impl fmt::Display for CsvError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{}:{}:{}: {}; {}",
            self.file, self.line, self.col, self.problem, self.expected
        )
    }
}

impl std::error::Error for CsvError {}

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
    Refused,
    Celsius,
    Kelvin,
}

impl Column {
    fn from_header(name: &str) -> Option<Column> {
        match name.trim().to_ascii_lowercase().as_str() {
            "i_in" | "i_in_a" => Some(Column::InputCurrent),
            "v_out" | "v_out_v" => Some(Column::OutputVoltage),
            "i_out" | "i_out_a" => Some(Column::OutputCurrent),
            "t_ambient" => Some(Column::Ambient(BareTemperature::Refused)),
            "t_ambient_c" => Some(Column::Ambient(BareTemperature::Celsius)),
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

/// One field of a line and the 1-based character column it starts at.
#[derive(Debug)]
struct Field {
    text: String,
    col: usize,
}

/// Reads a measurement file from its text. `source` names it in messages.
pub fn parse_measurements(source: &str, text: &str) -> Result<MeasurementSet, CsvError> {
    let err = |line: usize, col: usize, problem: String, expected: &str| CsvError {
        file: source.to_string(),
        line,
        col,
        problem,
        expected: expected.to_string(),
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
    let mut unknown: Vec<&Field> = Vec::new();
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
            None => unknown.push(f),
        }
    }
    for (slot, name) in REQUIRED.iter().enumerate() {
        if slots[slot].is_none() {
            let hint = unknown
                .iter()
                .map(|f| (edit_distance(&f.text.trim().to_ascii_lowercase(), name), f))
                .filter(|(d, _)| *d <= 2)
                .min_by_key(|(d, _)| *d)
                .map(|(_, f)| format!(" (is `{}` meant to be `{}`?)", f.text.trim(), name))
                .unwrap_or_default();
            return Err(err(
                header_line,
                1,
                format!("the header has no `{name}` column{hint}"),
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
            let v = parse_value(&f.text, *column).map_err(|(problem, expected)| {
                err(line_no, f.col + leading_blanks(&f.text), problem, &expected)
            })?;
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
fn split_fields(line: &str) -> Result<Vec<Field>, (usize, String)> {
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
            fields.push(Field {
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
            fields.push(Field {
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
            fields.push(Field {
                text: String::new(),
                col: i + 1,
            });
            break;
        }
    }
    Ok(fields)
}

/// Parses one value for a column into SI (A, V or K). Errors are (problem, expected).
fn parse_value(raw: &str, column: Column) -> Result<f64, (String, String)> {
    let text = raw.trim();
    let (article, what, example) = match column {
        Column::InputCurrent => (
            "a",
            "programming current `i_in`",
            "`100uA`, `1.5 mA` or `2e-4`",
        ),
        Column::OutputVoltage => ("an", "output voltage `v_out`", "`2.5 V`, `500mV` or `12`"),
        Column::OutputCurrent => ("an", "output current `i_out`", "`101.3uA` or `1.013e-4`"),
        Column::Ambient(_) => ("an", "ambient temperature", "`25 °C`, `-40 C` or `298.15 K`"),
    };
    if text.is_empty() {
        return Err((
            format!("the {what} is empty"),
            format!("a value like {example}"),
        ));
    }
    let Some((number, rest)) = split_number(text) else {
        return Err((
            format!("`{text}` is not a number with a unit"),
            format!("{article} {what} written like {example}"),
        ));
    };
    let rest = rest.trim();
    let value = match column {
        Column::InputCurrent | Column::OutputCurrent | Column::OutputVoltage => {
            let unit = if column == Column::OutputVoltage {
                "V"
            } else {
                "A"
            };
            let scale = if rest.is_empty() {
                1.0
            } else {
                match rest.strip_suffix(unit).map(str::trim_end) {
                    Some(prefix) => si_prefix(prefix).ok_or_else(|| {
                        (
                            format!("`{prefix}` in `{text}` is not an SI prefix"),
                            "one of f p n u µ m k M (or Meg) G before the unit, like `100uA`"
                                .to_string(),
                        )
                    })?,
                    None => {
                        return Err((
                            format!("`{text}` is not in {}", unit_name(unit)),
                            format!("{article} {what} written like {example}"),
                        ))
                    }
                }
            };
            let v = number * scale;
            let (lo, hi, hint) = if unit == "A" {
                (
                    0.0,
                    10.0,
                    "between 0 and 10 A (note `m` is milli, `M` is mega)",
                )
            } else {
                (0.0, 1000.0, "between 0 and 1000 V, measured from the mirror rail (magnitudes: a source's voltages are entered as positive)")
            };
            let positive_needed = unit == "A";
            if !v.is_finite() || v > hi || v < lo || (positive_needed && v == 0.0) {
                let why = if positive_needed && v <= 0.0 {
                    format!("the {what} `{text}` is not above zero")
                } else {
                    format!("the {what} `{text}` is out of range")
                };
                return Err((why, format!("a value {hint}")));
            }
            v
        }
        Column::Ambient(bare) => {
            let kelvin = match rest {
                "" => match bare {
                    BareTemperature::Celsius => number + ZERO_CELSIUS_K,
                    BareTemperature::Kelvin => number,
                    BareTemperature::Refused => {
                        return Err((
                            format!("the ambient temperature `{text}` has no unit"),
                            "a unit, like `25 °C` or `298.15 K` (or name the column `t_ambient_c` or `t_ambient_k`)".to_string(),
                        ))
                    }
                },
                "°C" | "C" | "degC" | "℃" => number + ZERO_CELSIUS_K,
                "K" => number,
                _ => {
                    return Err((
                        format!("`{text}` is not a temperature"),
                        format!("{article} {what} written like {example}"),
                    ))
                }
            };
            if !(kelvin > 73.15 && kelvin < 573.15) {
                return Err((
                    format!("the ambient temperature `{text}` is out of range"),
                    "a bench temperature between -200 °C and 300 °C".to_string(),
                ));
            }
            kelvin
        }
    };
    Ok(value)
}

fn unit_name(unit: &str) -> &'static str {
    if unit == "A" {
        "amperes"
    } else {
        "volts"
    }
}

/// SI prefixes (SI Brochure, 9th edition, table 7) as engineers type them.
fn si_prefix(p: &str) -> Option<f64> {
    Some(match p {
        "" => 1.0,
        "f" => 1e-15,
        "p" => 1e-12,
        "n" => 1e-9,
        "u" | "µ" | "μ" => 1e-6,
        "m" => 1e-3,
        "k" => 1e3,
        "M" | "Meg" | "meg" => 1e6,
        "G" => 1e9,
        _ => return None,
    })
}

/// Splits a leading decimal number (sign, digits, point, exponent) from the rest.
fn split_number(s: &str) -> Option<(f64, &str)> {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let digits_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    if i < b.len() && b[i] == b'.' {
        i += 1;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
    }
    if i == digits_start || (i == digits_start + 1 && b[digits_start] == b'.') {
        return None;
    }
    // An exponent only when digits follow, so `5e` is not eaten from a unit.
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if j < b.len() && b[j].is_ascii_digit() {
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            i = j;
        }
    }
    let n: f64 = s[..i].parse().ok()?;
    Some((n, &s[i..]))
}

/// Levenshtein distance, for did-you-mean hints on header names.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != *cb);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

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
             i_in, v_out ,i_out,t_ambient,note\r\n\
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
    fn the_column_name_can_fix_the_unit_of_bare_temperatures() {
        let set = read("i_in,v_out,i_out,t_ambient_c\n1mA,3,1mA,-40\n").unwrap();
        assert!((set.points[0].t_amb_k.unwrap() - 233.15).abs() < 1e-12);
        let set = read("I_IN,V_OUT,I_OUT,T_AMBIENT_K\n1mA,3,1mA,300\n").unwrap();
        assert!((set.points[0].t_amb_k.unwrap() - 300.0).abs() < 1e-12);
    }

    #[test]
    fn located_errors_name_line_column_problem_and_expectation() {
        assert_eq!(
            read("i_in,v_out,i_out\n100uA,2.5V,101uV\n").unwrap_err(),
            "bench.csv:2:12: `101uV` is not in amperes; \
             an output current `i_out` written like `101.3uA` or `1.013e-4`"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n100uA, 2.5 Q,101uA\n").unwrap_err(),
            "bench.csv:2:8: `2.5 Q` is not in volts; \
             an output voltage `v_out` written like `2.5 V`, `500mV` or `12`"
        );
        assert_eq!(
            read("i_in,v_out,i_ot\n").unwrap_err(),
            "bench.csv:1:1: the header has no `i_out` column (is `i_ot` meant to be `i_out`?); \
             a header with at least `i_in`, `v_out` and `i_out` (and optionally `t_ambient`)"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n1mA,2\n").unwrap_err(),
            "bench.csv:2:6: this row has 2 fields but the header has 3; \
             one value per header column"
        );
        assert_eq!(
            read("i_in,v_out,i_out,t_ambient\n1mA,2,1mA,25\n").unwrap_err(),
            "bench.csv:2:11: the ambient temperature `25` has no unit; a unit, like `25 °C` \
             or `298.15 K` (or name the column `t_ambient_c` or `t_ambient_k`)"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n2MA,2,1mA\n").unwrap_err(),
            "bench.csv:2:1: the programming current `i_in` `2MA` is out of range; \
             a value between 0 and 10 A (note `m` is milli, `M` is mega)"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n-1mA,2,1mA\n").unwrap_err(),
            "bench.csv:2:1: the programming current `i_in` `-1mA` is not above zero; \
             a value between 0 and 10 A (note `m` is milli, `M` is mega)"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n1mA,\"2,1mA\n").unwrap_err(),
            "bench.csv:2:5: this quote is never closed; \
             comma-separated values, quotes closed on the same line"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n1mA,,1mA\n").unwrap_err(),
            "bench.csv:2:5: the output voltage `v_out` is empty; \
             a value like `2.5 V`, `500mV` or `12`"
        );
        assert_eq!(
            read("i_in,v_out,i_out,I_IN\n").unwrap_err(),
            "bench.csv:1:18: column `I_IN` repeats column 1 (`i_in`); each quantity in one column only"
        );
        assert_eq!(
            read("# only a note\n\n").unwrap_err(),
            "bench.csv:1:1: the file has no header line; \
             a first line naming the columns, like `i_in,v_out,i_out,t_ambient`"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n").unwrap_err(),
            "bench.csv:2:1: the file has a header but no measurements; \
             one row per measured point below the header"
        );
        assert_eq!(
            read("i_in,v_out,i_out\n1xA,2,1mA\n").unwrap_err(),
            "bench.csv:2:1: `x` in `1xA` is not an SI prefix; \
             one of f p n u µ m k M (or Meg) G before the unit, like `100uA`"
        );
    }

    #[test]
    fn numbers_split_from_units_without_eating_them() {
        assert_eq!(split_number("5e-3A"), Some((5e-3, "A")));
        assert_eq!(split_number("2.5 V"), Some((2.5, " V")));
        assert_eq!(split_number("1e"), Some((1.0, "e")));
        assert_eq!(split_number(".5"), Some((0.5, "")));
        assert_eq!(split_number("."), None);
        assert_eq!(split_number("V"), None);
    }
}
