//! Reading CSV files into rows of text with exact positions, so that every problem can
//! be reported as `FILE:LINE:COLUMN: message`.

use std::path::Path;

mod tracker;

use tracker::{TrackState, Tracker};

pub use super::export::{needs_guard, unguard};
pub use super::problems::{MAX_PROBLEMS, Problem, ProblemLog, Problems};

/// Longest field accepted, so a broken file cannot exhaust memory row by row.
pub const MAX_FIELD_BYTES: usize = 1 << 20;
/// Most columns a row may have (an item file's extra attributes included).
pub const MAX_COLUMNS: usize = 1_000;

/// The declared shape of one CSV kind.
pub struct Shape {
    pub required: &'static [&'static str],
    pub optional: &'static [&'static str],
    /// Columns accepted and ignored (e.g. reader-only columns of an export).
    pub ignored: &'static [&'static str],
    /// Whether unknown columns are kept (as item attributes) instead of refused.
    pub extra_allowed: bool,
}

/// One data row as read: its physical line and its fields under the file's header. It
/// lives until the next row is read, so a file of any size costs one row of memory.
#[derive(Clone, Copy)]
pub struct Row<'a> {
    pub line: u64,
    pub file: &'a str,
    pub header: &'a [String],
    fields: &'a csv::StringRecord,
}

impl<'a> Row<'a> {
    /// The text of field `column` (0-based).
    pub fn field(&self, column: usize) -> &'a str {
        self.fields.get(column).unwrap_or("")
    }

    /// Index of a named column, if present.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.header.iter().position(|h| h == name)
    }

    pub fn problem(&self, column: usize, message: impl Into<String>) -> Problem {
        Problem {
            file: self.file.to_string(),
            line: self.line,
            column,
            message: message.into(),
        }
    }
}

/// A CSV file read one row at a time, in memory bounded by the longest row: UTF-8 with
/// an optional BOM, a header row, RFC 4180 quoting, and LF, CRLF or CR line endings
/// (also mixed). Line numbers are physical lines, counted by `Tracker` whatever the
/// endings. Problems of form (bad bytes, ragged rows, a broken header) go to the log
/// given to each call, with their line and column.
pub struct CsvRows<R> {
    file: String,
    header: Vec<String>,
    header_ok: bool,
    reader: csv::Reader<Tracker<R>>,
    state: std::rc::Rc<std::cell::RefCell<TrackState>>,
    fields: csv::StringRecord,
    line: u64,
    /// Problems this reader reported itself (form, header), apart from the rows' checks.
    own_problems: usize,
    ended: bool,
}

/// What reading one record gave.
enum Record {
    Read,
    Skipped,
    End,
}

impl<R: std::io::BufRead> CsvRows<R> {
    /// Starts reading `input` and reads up to its header row (blank lines before it are
    /// skipped); problems with the header go to `log`.
    pub fn new(file: &str, input: R, shape: &Shape, log: &mut ProblemLog) -> CsvRows<R> {
        let tracker = Tracker::new(input);
        let state = tracker.state.clone();
        let reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(tracker);
        let mut rows = CsvRows {
            file: file.to_string(),
            header: Vec::new(),
            header_ok: false,
            reader,
            state,
            fields: csv::StringRecord::new(),
            line: 0,
            own_problems: 0,
            ended: false,
        };
        rows.read_header(shape, log);
        rows
    }

    fn read_header(&mut self, shape: &Shape, log: &mut ProblemLog) {
        loop {
            match self.read_record(log) {
                Record::End => return self.finish(shape, log),
                Record::Skipped if log.is_full() => return,
                Record::Skipped => continue,
                Record::Read => {}
            }
            if self.fields.iter().all(|f| f.trim().is_empty()) {
                continue; // Blank lines before the header.
            }
            let names: Vec<String> = self
                .fields
                .iter()
                .map(|f| f.trim().to_lowercase())
                .collect();
            let before = log.0.len();
            let (file, line) = (self.file.clone(), self.line);
            let mut found = 0;
            check_header(&names, shape, &mut |column, message| {
                found += 1;
                log.push(Problem {
                    file: file.clone(),
                    line,
                    column,
                    message,
                })
            });
            self.own_problems += found;
            self.header_ok = found == 0 && log.0.len() == before && self.own_problems == 0;
            self.header = names;
            return;
        }
    }

    /// The header's column names, lower-cased (empty when the file has no header).
    pub fn header(&self) -> &[String] {
        &self.header
    }

    /// Whether the header names the shape's columns without problems (else no row is given).
    pub fn header_ok(&self) -> bool {
        self.header_ok
    }

    /// The file's name, as messages call it.
    pub fn file(&self) -> &str {
        &self.file
    }

    /// Bytes of the input read so far (for progress).
    pub fn bytes_read(&self) -> u64 {
        self.state.borrow().offset
    }

    pub fn problem(&self, line: u64, column: usize, message: impl Into<String>) -> Problem {
        Problem {
            file: self.file.clone(),
            line,
            column,
            message: message.into(),
        }
    }

    /// The next data row; None at the end of the file, once the stream had to stop, or
    /// once `log` is full. When the header is wrong no row is given: the rest of the
    /// file is only read for problems of form.
    pub fn next_row(&mut self, log: &mut ProblemLog) -> Option<Row<'_>> {
        loop {
            if self.ended || log.is_full() {
                return None;
            }
            match self.read_record(log) {
                Record::End => {
                    self.finish(&NO_SHAPE, log);
                    return None;
                }
                Record::Skipped => continue,
                Record::Read => {}
            }
            match self.row_problem() {
                Some(None) => continue, // A blank line.
                Some(Some(problem)) => {
                    self.own_problems += 1;
                    log.push(problem);
                    continue;
                }
                None if !self.header_ok => continue,
                None => break,
            }
        }
        Some(Row {
            line: self.line,
            file: &self.file,
            header: &self.header,
            fields: &self.fields,
        })
    }

    /// Why the record just read is not a data row: Some(None) for a blank line, Some(problem)
    /// for a ragged row or a repeated header, None for a data row.
    fn row_problem(&self) -> Option<Option<Problem>> {
        let fields = &self.fields;
        if fields.len() == 1 && fields[0].trim().is_empty() {
            return Some(None);
        }
        let names = &self.header;
        if fields.len() != names.len() {
            let column = fields.len().min(names.len()) + 1;
            let message = format!(
                "this row has {} fields but the header has {}",
                fields.len(),
                names.len()
            );
            return Some(Some(self.problem(self.line, column, message)));
        }
        if fields.iter().zip(names).all(|(f, n)| same_name(f, n)) {
            let message = "this line repeats the header row (files joined together?); remove it";
            return Some(Some(self.problem(self.line, 1, message)));
        }
        None
    }

    /// Reads the next record into `fields` as text, reporting problems of form.
    fn read_record(&mut self, log: &mut ProblemLog) -> Record {
        let mut bytes = std::mem::take(&mut self.fields).into_byte_record();
        match self.reader.read_byte_record(&mut bytes) {
            Ok(true) => {}
            Ok(false) => return Record::End,
            Err(e) => {
                self.stream_stopped(&e, log);
                return Record::End;
            }
        }
        self.line = bytes
            .position()
            .map_or(1, |p| self.state.borrow_mut().line_of(p.byte()));
        match csv::StringRecord::from_byte_record(bytes) {
            Ok(fields) => {
                self.fields = fields;
                Record::Read
            }
            Err(e) => {
                let bytes = e.into_byte_record();
                for (i, raw) in bytes.iter().enumerate() {
                    if let Err(message) = check_field(raw) {
                        self.own_problems += 1;
                        log.push(self.problem(self.line, i + 1, message));
                    }
                }
                Record::Skipped
            }
        }
    }

    /// The CSV reader stopped: at the place `Tracker` refused, or where the parser failed.
    fn stream_stopped(&mut self, e: &csv::Error, log: &mut ProblemLog) {
        let failure = self.state.borrow_mut().failure.take();
        let (line, column, message) = match failure {
            Some(found) => found,
            None => {
                let line = e
                    .position()
                    .map_or(1, |p| self.state.borrow_mut().line_of(p.byte()));
                (line, 1, format!("unreadable CSV: {e}"))
            }
        };
        self.own_problems += 1;
        log.push(self.problem(line, column, message));
        self.ended = true;
    }

    /// At the end of the stream: an unclosed quote, or no header at all.
    fn finish(&mut self, shape: &Shape, log: &mut ProblemLog) {
        if self.ended {
            return;
        }
        self.ended = true;
        if self.own_problems > 0 {
            return;
        }
        let unclosed = self.state.borrow().unclosed_quote();
        if let Some((line, column)) = unclosed {
            self.own_problems += 1;
            let message = "a quoted field is never closed (a \" is missing)";
            log.push(self.problem(line, column, message));
        } else if self.header.is_empty() {
            self.own_problems += 1;
            let message = format!(
                "the file is empty; expected a header row with {}",
                shape.required.join(", ")
            );
            log.push(self.problem(1, 1, message));
        }
    }
}

impl<'a> CsvRows<Box<dyn std::io::BufRead + 'a>> {
    /// Reads a file from disk; `display_name` is what messages call it.
    pub fn open(path: &Path, shape: &Shape, log: &mut ProblemLog) -> Result<Self, Problems> {
        let name = display_name(path);
        let file =
            open_regular(path).map_err(|message| Problems(vec![whole_file(&name, message)]))?;
        let input: Box<dyn std::io::BufRead> =
            Box::new(std::io::BufReader::with_capacity(1 << 16, file));
        Ok(CsvRows::new(&name, input, shape, log))
    }
}

/// The shape used when the end of a file is met after its header was read (the
/// required columns are only named when the file has no header).
const NO_SHAPE: Shape = Shape {
    required: &[],
    optional: &[],
    ignored: &[],
    extra_allowed: true,
};

/// Whether a field reads as a header name (trimmed and lower-cased).
fn same_name(field: &str, name: &str) -> bool {
    let field = field.trim();
    if field.is_ascii() {
        field.eq_ignore_ascii_case(name)
    } else {
        field.to_lowercase() == name
    }
}

/// The name messages give a file: its last component.
pub fn display_name(path: &Path) -> String {
    path.file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.display().to_string())
}

/// A problem with the file as a whole (it has no line or column).
pub fn whole_file(name: &str, message: String) -> Problem {
    Problem {
        file: name.to_string(),
        line: 0,
        column: 0,
        message,
    }
}

/// Opens an input file only if it is a regular file: a FIFO would block for good, a
/// device such as `/dev/zero` never ends, and a directory has no lines. A study this
/// process has open is refused too (reading it with plain file I/O would drop SQLite's
/// locks on it; see `study::open_files`). The FIFO check happens before `open`, which
/// would itself block on a FIFO, and again on the opened file.
pub fn open_regular(path: &Path) -> Result<std::fs::File, String> {
    let kind = |m: &std::fs::Metadata| -> Option<&'static str> {
        let t = m.file_type();
        if t.is_file() {
            None
        } else if t.is_dir() {
            Some("it is a folder, not a file")
        } else {
            Some("it is not a regular file (a pipe, socket or device); give a saved file")
        }
    };
    let metadata = std::fs::metadata(path).map_err(|e| format!("cannot read the file: {e}"))?;
    if let Some(why) = kind(&metadata) {
        return Err(format!("cannot read the file: {why}"));
    }
    if super::file_guard::is_study_file(path) {
        return Err(
            "this is the study itself (or one of its -wal/-shm/-journal files), not a CSV file"
                .into(),
        );
    }
    let file = std::fs::File::open(path).map_err(|e| format!("cannot read the file: {e}"))?;
    let metadata = file
        .metadata()
        .map_err(|e| format!("cannot read the file: {e}"))?;
    if let Some(why) = kind(&metadata) {
        return Err(format!("cannot read the file: {why}"));
    }
    Ok(file)
}

fn check_field(raw: &[u8]) -> Result<&str, String> {
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
        Ok(text) => Ok(text),
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
    let mut seen = std::collections::HashSet::with_capacity(names.len());
    for (i, name) in names.iter().enumerate() {
        if !seen.insert(name.as_str()) {
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Reads a whole CSV text for its problems only.
    fn problems_of(file: &str, bytes: &[u8], shape: &Shape) -> Result<(), Problems> {
        let mut log = ProblemLog::default();
        let mut rows = CsvRows::new(file, bytes, shape, &mut log);
        while rows.next_row(&mut log).is_some() {}
        log.into_result()
    }

    const SHAPE: Shape = Shape {
        required: &["a", "b"],
        optional: &["c"],
        ignored: &[],
        extra_allowed: false,
    };

    #[test]
    fn quoted_newlines_keep_line_numbers() {
        let mut log = ProblemLog::default();
        let mut rows = CsvRows::new("x.csv", &b"a,b\n\"1\n2\",3\n4,5\n"[..], &SHAPE, &mut log);
        let first = rows
            .next_row(&mut log)
            .map(|r| (r.line, r.field(0).to_string()));
        assert_eq!(first, Some((2, "1\n2".to_string())));
        let second = rows.next_row(&mut log).map(|r| r.line);
        assert_eq!(second, Some(4));
        assert!(rows.next_row(&mut log).is_none() && log.0.is_empty());
    }

    #[test]
    fn unclosed_quote_is_located() {
        let e = problems_of("x.csv", b"a,b\n1,2\n3,\"4\n5,6\n", &SHAPE).unwrap_err();
        assert_eq!(
            e.0[0].to_string(),
            "x.csv:3:2: a quoted field is never closed (a \" is missing)"
        );
    }

    #[test]
    fn rows_of_a_broken_header_are_not_given() {
        let mut log = ProblemLog::default();
        let mut rows = CsvRows::new("x.csv", &b"a,d\n1,2\n3\n"[..], &SHAPE, &mut log);
        assert!(!rows.header_ok());
        assert!(rows.next_row(&mut log).is_none());
        let found: Vec<String> = log.0.iter().map(|p| p.to_string()).collect();
        assert_eq!(
            found,
            [
                "x.csv:1:2: unknown column \"d\"; expected columns are a, b, c",
                "x.csv:1:3: required column \"b\" is missing",
                "x.csv:3:2: this row has 1 fields but the header has 2",
            ]
        );
    }
}
