//! Reading CSV files into rows of text with exact positions, so that every problem can
//! be reported as `FILE:LINE:COLUMN: message`.

use std::fmt;
use std::path::Path;

/// Longest field accepted, so a broken file cannot exhaust memory row by row.
pub const MAX_FIELD_BYTES: usize = 1 << 20;
/// How many problems one file reports before stopping.
pub const MAX_PROBLEMS: usize = 20;

/// One problem in an input file; line and column are 1-based.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problem {
    pub file: String,
    pub line: u64,
    pub column: usize,
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{}:{}:{}: {}",
            self.file, self.line, self.column, self.message
        )
    }
}

/// All problems found in one import; the import changed nothing.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problems(pub Vec<Problem>);

impl fmt::Display for Problems {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, p) in self.0.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{p}")?;
        }
        Ok(())
    }
}

/// A data row: its line in the file and one text per header column.
#[derive(Debug, Clone)]
pub struct Row {
    pub line: u64,
    pub fields: Vec<String>,
}

/// The declared shape of one CSV kind.
pub struct Shape {
    pub required: &'static [&'static str],
    pub optional: &'static [&'static str],
    /// Columns accepted and ignored (e.g. reader-only columns of an export).
    pub ignored: &'static [&'static str],
    /// Whether unknown columns are kept (as item attributes) instead of refused.
    pub extra_allowed: bool,
}

/// A parsed file: header names (lower-cased) and rows.
#[derive(Debug)]
pub struct Table {
    pub file: String,
    pub header: Vec<String>,
    pub rows: Vec<Row>,
}

impl Table {
    /// Index of a named column, if present.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.header.iter().position(|h| h == name)
    }

    pub fn problem(&self, line: u64, column: usize, message: impl Into<String>) -> Problem {
        Problem {
            file: self.file.clone(),
            line,
            column,
            message: message.into(),
        }
    }
}

/// Collects problems up to the cap.
#[derive(Default)]
pub struct ProblemLog(pub Vec<Problem>);

impl ProblemLog {
    pub fn push(&mut self, p: Problem) {
        if self.0.len() < MAX_PROBLEMS {
            self.0.push(p);
        }
    }

    pub fn is_full(&self) -> bool {
        self.0.len() >= MAX_PROBLEMS
    }

    pub fn into_result(self) -> Result<(), Problems> {
        if self.0.is_empty() {
            Ok(())
        } else {
            Err(Problems(self.0))
        }
    }
}

/// Reads a CSV file from disk; `display_name` is what messages call it.
pub fn read_file(path: &Path, shape: &Shape) -> Result<Table, Problems> {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.display().to_string());
    match std::fs::read(path) {
        Ok(bytes) => parse(&name, &bytes, shape),
        Err(e) => Err(Problems(vec![Problem {
            file: name,
            line: 0,
            column: 0,
            message: format!("cannot read the file: {e}"),
        }])),
    }
}

/// Parses CSV bytes: UTF-8 with an optional BOM, a header row, RFC 4180 quoting.
pub fn parse(file: &str, bytes: &[u8], shape: &Shape) -> Result<Table, Problems> {
    let problem = |line: u64, column: usize, message: String| Problem {
        file: file.to_string(),
        line,
        column,
        message,
    };
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(Problems(vec![problem(
            1,
            1,
            format!(
                "the file is empty; expected a header row with {}",
                shape.required.join(", ")
            ),
        )]));
    }
    if let Some((line, column)) = unclosed_quote(bytes) {
        return Err(Problems(vec![problem(
            line,
            column,
            "a quoted field is never closed (a \" is missing)".into(),
        )]));
    }
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(bytes);
    let mut log = ProblemLog::default();
    let mut header: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    let mut record = csv::ByteRecord::new();
    loop {
        match reader.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                let line = e.position().map_or(0, |p| p.line());
                log.push(problem(line, 1, format!("unreadable CSV: {e}")));
                break;
            }
        }
        let line = record.position().map_or(0, |p| p.line());
        let mut fields = Vec::with_capacity(record.len());
        let mut row_ok = true;
        for (i, raw) in record.iter().enumerate() {
            match check_field(raw) {
                Ok(text) => fields.push(text),
                Err(message) => {
                    log.push(problem(line, i + 1, message));
                    row_ok = false;
                }
            }
        }
        if !row_ok {
            continue;
        }
        match &header {
            None => {
                let names: Vec<String> = fields.iter().map(|f| f.trim().to_lowercase()).collect();
                check_header(&names, shape, &mut |column, message| {
                    log.push(problem(line, column, message))
                });
                header = Some(names);
            }
            Some(names) => {
                if fields.len() == 1 && fields[0].trim().is_empty() {
                    continue; // A blank line.
                }
                if fields.len() != names.len() {
                    let column = fields.len().min(names.len()) + 1;
                    log.push(problem(
                        line,
                        column,
                        format!(
                            "this row has {} fields but the header has {}",
                            fields.len(),
                            names.len()
                        ),
                    ));
                    continue;
                }
                rows.push(Row { line, fields });
            }
        }
        if log.is_full() {
            break;
        }
    }
    log.into_result()?;
    Ok(Table {
        file: file.to_string(),
        header: header.unwrap_or_default(),
        rows,
    })
}

fn check_field(raw: &[u8]) -> Result<String, String> {
    if raw.len() > MAX_FIELD_BYTES {
        return Err(format!(
            "field is {} bytes long; the limit is {} bytes",
            raw.len(),
            MAX_FIELD_BYTES
        ));
    }
    if let Some(at) = raw.iter().position(|b| *b == 0) {
        return Err(format!("field contains a NUL byte at byte {}", at + 1));
    }
    match std::str::from_utf8(raw) {
        Ok(text) => Ok(text.to_string()),
        Err(e) => Err(format!(
            "field is not valid UTF-8 (byte {} of the field); save the file as UTF-8",
            e.valid_up_to() + 1
        )),
    }
}

fn check_header(names: &[String], shape: &Shape, report: &mut dyn FnMut(usize, String)) {
    if !shape.required.iter().any(|r| names.iter().any(|n| n == r)) {
        report(
            1,
            format!(
                "no header row: the first line must name the columns ({}…); it reads \"{}\"",
                shape.required.join(", "),
                names.join(",")
            ),
        );
        return;
    }
    for (i, name) in names.iter().enumerate() {
        if names[..i].contains(name) {
            report(i + 1, format!("column \"{name}\" appears more than once"));
        } else if name.is_empty() {
            report(i + 1, "a column has no name".into());
        } else if !shape.extra_allowed
            && !shape.required.contains(&name.as_str())
            && !shape.optional.contains(&name.as_str())
            && !shape.ignored.contains(&name.as_str())
        {
            let mut known: Vec<&str> = shape.required.to_vec();
            known.extend_from_slice(shape.optional);
            report(
                i + 1,
                format!(
                    "unknown column \"{name}\"; expected columns are {}",
                    known.join(", ")
                ),
            );
        }
    }
    for required in shape.required {
        if !names.iter().any(|n| n == required) {
            report(
                names.len() + 1,
                format!("required column \"{required}\" is missing"),
            );
        }
    }
}

/// Finds a quote opened and never closed: returns its line and column (field number).
fn unclosed_quote(bytes: &[u8]) -> Option<(u64, usize)> {
    let mut line = 1u64;
    let mut column = 1usize;
    let mut in_quotes = false;
    let mut at_field_start = true;
    let mut opened = (0u64, 0usize);
    let mut i = 0;
    while i < bytes.len() {
        let b = bytes[i];
        if in_quotes {
            if b == b'"' {
                if bytes.get(i + 1) == Some(&b'"') {
                    i += 1;
                } else {
                    in_quotes = false;
                }
            } else if b == b'\n' {
                line += 1;
            }
        } else {
            match b {
                b'"' if at_field_start => {
                    in_quotes = true;
                    opened = (line, column);
                }
                b',' => {
                    column += 1;
                    at_field_start = true;
                    i += 1;
                    continue;
                }
                b'\n' => {
                    line += 1;
                    column = 1;
                    at_field_start = true;
                    i += 1;
                    continue;
                }
                _ => {}
            }
            at_field_start = false;
        }
        i += 1;
    }
    in_quotes.then_some(opened)
}

#[cfg(test)]
mod tests {
    use super::*;

    const SHAPE: Shape = Shape {
        required: &["a", "b"],
        optional: &["c"],
        ignored: &[],
        extra_allowed: false,
    };

    #[test]
    fn quoted_newlines_keep_line_numbers() {
        let t = parse("x.csv", b"a,b\n\"1\n2\",3\n4,5\n", &SHAPE).unwrap();
        assert_eq!(t.rows[0].fields[0], "1\n2");
        assert_eq!(t.rows[1].line, 4);
    }

    #[test]
    fn unclosed_quote_is_located() {
        let e = parse("x.csv", b"a,b\n1,2\n3,\"4\n5,6\n", &SHAPE).unwrap_err();
        assert_eq!(
            e.0[0].to_string(),
            "x.csv:3:2: a quoted field is never closed (a \" is missing)"
        );
    }
}
