//! Reading the runs of `bandsaw check` from files: one number per line (with `#` comments), a
//! column of a CSV file, a JSON array, or a JSON object of benchmark name → runs (a suite).
//! Every refusal names the file and, where there is one, the line.

use serde_json::{Map, Value};

/// What a file holds: the runs of one benchmark, or a suite of named benchmarks (each a data
/// form of the service, passed on as given).
#[derive(Debug, Clone, PartialEq)]
pub enum Runs {
    One(Value),
    Suite(Map<String, Value>),
}

/// A file that cannot be read as runs: "file:line: what is wrong".
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{place}: {message}")]
pub struct InputError {
    pub place: String,
    pub message: String,
}

impl InputError {
    fn at(file: &str, line: Option<u64>, message: impl Into<String>) -> Self {
        let place = match line {
            Some(l) => format!("{file}:{l}"),
            None => file.to_string(),
        };
        InputError {
            place,
            message: message.into(),
        }
    }
}

/// Read the file at `path` ("-": standard input), from `column` of a CSV file when given.
pub fn read(path: &str, column: Option<&str>) -> Result<Runs, InputError> {
    let bytes = if path == "-" {
        let mut b = Vec::new();
        std::io::Read::read_to_end(&mut std::io::stdin(), &mut b).map(|_| b)
    } else {
        std::fs::read(path)
    }
    .map_err(|e| InputError::at(path, None, format!("cannot read the file: {e}")))?;
    let text = String::from_utf8(bytes).map_err(|_| InputError::at(path, None, "is not UTF-8 text"))?;
    // Spreadsheet programs start UTF-8 files with a byte-order mark.
    parse(path, text.strip_prefix('\u{feff}').unwrap_or(&text), column)
}

/// Read runs from `text`, the contents of the file called `file`.
pub fn parse(file: &str, text: &str, column: Option<&str>) -> Result<Runs, InputError> {
    if let Some(c) = column {
        return csv_column(file, text, c);
    }
    match text.trim_start().chars().next() {
        Some('[') | Some('{') => json(file, text),
        _ => lines(file, text),
    }
}

/// A finite number, or why not.
fn number(token: &str) -> Result<f64, String> {
    match token.parse::<f64>() {
        Ok(x) if x.is_finite() => Ok(x),
        Ok(_) => Err(format!("{token:?} is not a finite number")),
        Err(_) => Err(format!("{token:?} is not a number")),
    }
}

fn runs_of(values: Vec<f64>, file: &str) -> Result<Runs, InputError> {
    if values.is_empty() {
        return Err(InputError::at(file, None, "holds no runs"));
    }
    Ok(Runs::One(Value::from(values)))
}

/// One number per line; `#` starts a comment; blank lines are skipped.
fn lines(file: &str, text: &str) -> Result<Runs, InputError> {
    let mut values = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let at = Some(i as u64 + 1);
        let content = line.split('#').next().unwrap_or("").trim();
        if content.is_empty() {
            continue;
        }
        if content.split_whitespace().count() > 1 || content.contains(',') {
            return Err(InputError::at(
                file,
                at,
                format!("one number per line is expected; got {content:?} (for a CSV file name its column with --column)"),
            ));
        }
        values.push(number(content).map_err(|m| InputError::at(file, at, m))?);
    }
    runs_of(values, file)
}

/// A JSON file of runs as read: an array, or an object whose benchmark names are unique (a
/// plain JSON reader keeps the last of two equal names without a word).
enum Top {
    Array(Vec<Value>),
    Suite(Map<String, Value>),
}

impl<'de> serde::Deserialize<'de> for Top {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        use serde::de::{self, MapAccess, SeqAccess, Visitor};
        struct Runs;
        impl<'de> Visitor<'de> for Runs {
            type Value = Top;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("an array of runs, or an object of benchmark name → runs")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut a: A) -> Result<Top, A::Error> {
                let mut runs = Vec::new();
                while let Some(x) = a.next_element()? {
                    runs.push(x);
                }
                Ok(Top::Array(runs))
            }
            fn visit_map<A: MapAccess<'de>>(self, mut a: A) -> Result<Top, A::Error> {
                let mut suite = Map::new();
                while let Some(name) = a.next_key::<String>()? {
                    if suite.contains_key(&name) {
                        return Err(de::Error::custom(format!("benchmark {name:?} is named twice")));
                    }
                    suite.insert(name, a.next_value()?);
                }
                Ok(Top::Suite(suite))
            }
        }
        d.deserialize_any(Runs)
    }
}

/// A JSON array of runs, or a JSON object of benchmark name → runs.
fn json(file: &str, text: &str) -> Result<Runs, InputError> {
    let top: Top = serde_json::from_str(text).map_err(|e| {
        let (line, column) = (e.line() as u64, e.column());
        // serde_json's message ends with the place, which the error already leads with.
        let message = e.to_string();
        let what = message.split(" at line ").next().unwrap_or(&message);
        let kind = if e.is_data() { "" } else { "not valid JSON: " };
        InputError::at(file, Some(line), format!("column {column}: {kind}{what}"))
    })?;
    match top {
        Top::Array(a) if a.is_empty() => Err(InputError::at(file, None, "holds no runs")),
        Top::Array(a) => Ok(Runs::One(Value::Array(a))),
        Top::Suite(o) if o.is_empty() => Err(InputError::at(file, None, "names no benchmarks")),
        Top::Suite(o) => Ok(Runs::Suite(o)),
    }
}

/// The column called `column` of a CSV file with a header row; empty cells are missing runs.
fn csv_column(file: &str, text: &str, column: &str) -> Result<Runs, InputError> {
    let mut reader = csv::ReaderBuilder::new().flexible(true).from_reader(text.as_bytes());
    let headers = reader
        .headers()
        .map_err(|e| InputError::at(file, Some(1), format!("cannot read the header row: {e}")))?
        .clone();
    if headers.iter().filter(|h| h.trim() == column).count() > 1 {
        return Err(InputError::at(file, Some(1), format!("has more than one column {column:?}")));
    }
    let Some(index) = headers.iter().position(|h| h.trim() == column) else {
        let names: Vec<&str> = headers.iter().map(str::trim).collect();
        return Err(InputError::at(
            file,
            Some(1),
            format!("has no column {column:?}; its columns are {}", names.join(", ")),
        ));
    };
    let mut values = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let line = e.position().map(|p| p.line());
            InputError::at(file, line, format!("cannot read the row: {e}"))
        })?;
        let line = record.position().map(|p| p.line());
        // An empty cell is a missing run; a row too short to have the cell is a broken row.
        let Some(cell) = record.get(index).map(str::trim) else {
            return Err(InputError::at(
                file,
                line,
                format!("the row has {} cells, so none in column {column:?}", record.len()),
            ));
        };
        if !cell.is_empty() {
            values.push(number(cell).map_err(|m| InputError::at(file, line, format!("column {column:?}: {m}")))?);
        }
    }
    runs_of(values, file)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn one(file: &str, text: &str, column: Option<&str>) -> Value {
        match parse(file, text, column) {
            Ok(Runs::One(v)) => v,
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn every_form_reads_the_same_runs() {
        let want = json!([12.5, 13.0, 12.75]);
        assert_eq!(one("a.txt", "# ms per parse\n12.5\n\n13  # warm\n12.75\n", None), want);
        assert_eq!(one("a.json", " [12.5, 13.0, 12.75]", None), want);
        assert_eq!(one("a.csv", "run,ms,note\n1,12.5,x\n2,13,\n3,12.75,y\n4,,lost\n", Some("ms")), want);
        let suite = parse("s.json", r#"{"b": [1, 2], "a": [3]}"#, None).unwrap();
        let Runs::Suite(s) = suite else { panic!() };
        assert_eq!(s.keys().collect::<Vec<_>>(), ["b", "a"], "in the file's order");
    }

    #[test]
    fn a_bad_file_names_its_line() {
        let err = |text: &str, column: Option<&str>| parse("runs.txt", text, column).unwrap_err().to_string();
        assert_eq!(err("1\n2\nfast\n", None), r#"runs.txt:3: "fast" is not a number"#);
        assert!(err("1\n2 3\n", None).starts_with("runs.txt:2: one number per line"));
        assert_eq!(err("1\ninf\n", None), r#"runs.txt:2: "inf" is not a finite number"#);
        assert_eq!(err("# nothing\n\n", None), "runs.txt: holds no runs");
        assert_eq!(err("[1, 2,\n 3,, 4]", None), "runs.txt:2: column 4: not valid JSON: expected value");
        assert_eq!(
            err("a,b\n1,2\n", Some("c")),
            r#"runs.txt:1: has no column "c"; its columns are a, b"#
        );
        assert_eq!(err("a,b\n1,2\n3,x\n", Some("b")), r#"runs.txt:3: column "b": "x" is not a number"#);
        assert_eq!(err("{}", None), "runs.txt: names no benchmarks");
        assert_eq!(
            err("{\"parse\": [1, 2],\n \"parse\": [3]}", None),
            r#"runs.txt:2: column 8: benchmark "parse" is named twice"#
        );
        assert_eq!(
            err("a,b\n1,2\n3\n", Some("b")),
            r#"runs.txt:3: the row has 1 cells, so none in column "b""#
        );
        assert_eq!(err("b,b\n1,2\n", Some("b")), r#"runs.txt:1: has more than one column "b""#);
    }
}
