//! Reading CSV files into rows of text with exact positions, so that every problem can
//! be reported as `FILE:LINE:COLUMN: message`.

use std::path::Path;

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

/// Where the quote grammar stands after the bytes seen so far.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Quoting {
    /// Outside quotes, at the start of a field.
    FieldStart,
    /// Outside quotes, inside a field.
    Unquoted,
    /// Inside a quoted field.
    Quoted,
    /// Inside a quoted field, just after a `"`: either `""` or the closing quote.
    QuoteInQuoted,
}

/// What `Tracker` has learned about the stream so far.
struct TrackState {
    /// Bytes handed to the CSV reader so far.
    offset: u64,
    /// Offsets where a physical line starts that no record has passed yet.
    line_starts: std::collections::VecDeque<u64>,
    /// Line starts already passed (the line of the last record is this + 1).
    lines_passed: u64,
    /// Physical line and field number of the byte being read (for problems).
    line: u64,
    column: usize,
    field_bytes: usize,
    quoting: Quoting,
    previous_cr: bool,
    /// The last byte was an LF that ended a line by itself (not the LF of a CRLF).
    previous_lone_lf: bool,
    bom_checked: bool,
    opened_quote: (u64, usize),
    failure: Option<(u64, usize, String)>,
}

impl TrackState {
    /// The physical line (1-based) of the byte at `offset`; offsets must not decrease.
    fn line_of(&mut self, offset: u64) -> u64 {
        while self.line_starts.front().is_some_and(|&s| s <= offset) {
            self.line_starts.pop_front();
            self.lines_passed += 1;
        }
        self.lines_passed + 1
    }

    fn unclosed_quote(&self) -> Option<(u64, usize)> {
        matches!(self.quoting, Quoting::Quoted).then_some(self.opened_quote)
    }

    fn end_line(&mut self, next_offset: u64) {
        self.line += 1;
        self.line_starts.push_back(next_offset);
    }

    /// Looks at one byte; returns a problem when the stream must stop.
    fn see(&mut self, b: u8, at: u64) -> Option<(u64, usize, String)> {
        if b == 0 {
            return Some((
                self.line,
                self.column,
                format!("field contains a NUL byte at byte {}", self.field_bytes + 1),
            ));
        }
        // Physical lines, whatever the quoting: LF, CRLF, LF-CR (as some older systems
        // write) and a lone CR each end one.
        let cr_then_lf = self.previous_cr && b == b'\n';
        let lf_then_cr = self.previous_lone_lf && b == b'\r';
        self.previous_cr = b == b'\r' && !lf_then_cr;
        self.previous_lone_lf = b == b'\n' && !cr_then_lf;
        // After CRLF the next line is taken to start at the LF: the CSV reader reports a
        // record that follows CRLF from that byte (and likewise after LF-CR).
        if (b == b'\r' && !lf_then_cr) || (b == b'\n' && !cr_then_lf) {
            self.end_line(at + 1);
        }
        if self.quoting == Quoting::QuoteInQuoted {
            if b == b'"' {
                self.quoting = Quoting::Quoted;
                return self.grow();
            }
            self.quoting = Quoting::Unquoted;
        }
        match (self.quoting, b) {
            (Quoting::Quoted, b'"') => self.quoting = Quoting::QuoteInQuoted,
            (Quoting::Quoted, _) => return self.grow(),
            (Quoting::FieldStart, b'"') => {
                self.quoting = Quoting::Quoted;
                self.opened_quote = (self.line, self.column);
            }
            (_, b',') => {
                self.quoting = Quoting::FieldStart;
                self.field_bytes = 0;
                self.column += 1;
                if self.column > MAX_COLUMNS {
                    return Some((
                        self.line,
                        self.column,
                        format!(
                            "a row has more than {MAX_COLUMNS} columns; the limit is {MAX_COLUMNS}"
                        ),
                    ));
                }
            }
            (_, b'\n' | b'\r') => {
                self.quoting = Quoting::FieldStart;
                self.field_bytes = 0;
                self.column = 1;
            }
            _ => {
                self.quoting = Quoting::Unquoted;
                return self.grow();
            }
        }
        None
    }

    fn grow(&mut self) -> Option<(u64, usize, String)> {
        self.field_bytes += 1;
        (self.field_bytes > MAX_FIELD_BYTES).then(|| {
            (
                self.line,
                self.column,
                format!("field is longer than the limit of {MAX_FIELD_BYTES} bytes"),
            )
        })
    }
}

/// A reader between the file and the CSV parser that counts physical lines, follows the
/// quotes, and stops the stream at a NUL byte, an over-long field or too many columns,
/// so that a broken or hostile file costs neither unbounded memory nor time.
struct Tracker<R> {
    inner: R,
    state: std::rc::Rc<std::cell::RefCell<TrackState>>,
}

impl<R: std::io::BufRead> Tracker<R> {
    fn new(inner: R) -> Tracker<R> {
        Tracker {
            inner,
            state: std::rc::Rc::new(std::cell::RefCell::new(TrackState {
                offset: 0,
                line_starts: std::collections::VecDeque::new(),
                lines_passed: 0,
                line: 1,
                column: 1,
                field_bytes: 0,
                quoting: Quoting::FieldStart,
                previous_cr: false,
                previous_lone_lf: false,
                bom_checked: false,
                opened_quote: (1, 1),
                failure: None,
            })),
        }
    }
}

/// True when a file starts like UTF-16: a UTF-16 byte order mark, or NUL bytes in every
/// other position of its first characters (UTF-16 spells ASCII letters that way), which
/// would otherwise be reported as a bare "NUL byte".
fn looks_like_utf16(start: &[u8]) -> bool {
    if start.starts_with(b"\xFF\xFE") || start.starts_with(b"\xFE\xFF") {
        return true;
    }
    let head = &start[..start.len().min(8) & !1];
    head.len() >= 4
        && (head.chunks(2).all(|c| c[0] != 0 && c[1] == 0)
            || head.chunks(2).all(|c| c[0] == 0 && c[1] != 0))
}

impl<R: std::io::BufRead> std::io::Read for Tracker<R> {
    fn read(&mut self, out: &mut [u8]) -> std::io::Result<usize> {
        let mut state = self.state.borrow_mut();
        if state.failure.is_some() {
            return Err(std::io::Error::other("stopped"));
        }
        if !state.bom_checked {
            let start = self.inner.fill_buf()?;
            if looks_like_utf16(start) {
                state.failure = Some((
                    1,
                    1,
                    "the file is UTF-16 text, not UTF-8; save it as UTF-8 (in a spreadsheet: \"CSV UTF-8\")".into(),
                ));
                return Err(std::io::Error::other("stopped"));
            }
            if start.starts_with(b"\xEF\xBB\xBF") {
                self.inner.consume(3);
            }
            state.bom_checked = true;
        }
        let available = self.inner.fill_buf()?;
        let n = available.len().min(out.len());
        for (k, &b) in available[..n].iter().enumerate() {
            let at = state.offset + k as u64;
            if let Some(failure) = state.see(b, at) {
                state.failure = Some(failure);
                return Err(std::io::Error::other("stopped"));
            }
        }
        out[..n].copy_from_slice(&available[..n]);
        self.inner.consume(n);
        state.offset += n as u64;
        Ok(n)
    }
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
