//! Reading CSV files into rows of text with exact positions, so that every problem can
//! be reported as `FILE:LINE:COLUMN: message`.

use std::path::Path;

pub use super::export::{needs_guard, unguard};
pub use super::problems::{MAX_PROBLEMS, Problem, ProblemLog, Problems};

/// Longest field accepted, so a broken file cannot exhaust memory row by row.
pub const MAX_FIELD_BYTES: usize = 1 << 20;
/// Most columns a row may have (an item file's extra attributes included).
pub const MAX_COLUMNS: usize = 1_000;

/// A data row: its line in the file and where its fields are in the table's text
/// (fields `first .. first + header.len()` of [`Table::field`]).
#[derive(Debug, Clone, Copy)]
pub struct Row {
    pub line: u64,
    first: usize,
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

/// A parsed file: header names (lower-cased) and rows. Every field's text lives in one
/// buffer with its end offset beside it, so a million-row file costs its own size plus
/// a word per field, not an allocation per field.
#[derive(Debug)]
pub struct Table {
    pub file: String,
    pub header: Vec<String>,
    pub rows: Vec<Row>,
    text: String,
    ends: Vec<u32>,
}

impl Table {
    /// The text of field `column` (0-based) of `row`.
    pub fn field(&self, row: &Row, column: usize) -> &str {
        let at = row.first + column;
        let start = if at == 0 {
            0
        } else {
            self.ends[at - 1] as usize
        };
        &self.text[start..self.ends[at] as usize]
    }

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

/// Reads a CSV file from disk, streaming; `display_name` is what messages call it.
pub fn read_file(path: &Path, shape: &Shape) -> Result<Table, Problems> {
    let name = display_name(path);
    let file = open_regular(path).map_err(|message| Problems(vec![whole_file(&name, message)]))?;
    parse_reader(
        &name,
        std::io::BufReader::with_capacity(1 << 16, file),
        shape,
    )
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

/// Parses CSV bytes: UTF-8 with an optional BOM, a header row, RFC 4180 quoting.
pub fn parse(file: &str, bytes: &[u8], shape: &Shape) -> Result<Table, Problems> {
    parse_reader(file, bytes, shape)
}

/// Parses CSV from a stream in bounded memory per row: UTF-8 with an optional BOM, a
/// header row, RFC 4180 quoting, and LF, CRLF or CR line endings (also mixed). Line
/// numbers are physical lines, counted by `Tracker` whatever the endings.
pub fn parse_reader(
    file: &str,
    input: impl std::io::BufRead,
    shape: &Shape,
) -> Result<Table, Problems> {
    let problem = |line: u64, column: usize, message: String| Problem {
        file: file.to_string(),
        line,
        column,
        message,
    };
    let tracker = Tracker::new(input);
    let state = tracker.state.clone();
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(tracker);
    let mut log = ProblemLog::default();
    let mut header: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    let mut text = String::new();
    let mut ends: Vec<u32> = Vec::new();
    let mut record = csv::ByteRecord::new();
    loop {
        match reader.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                let failure = state.borrow_mut().failure.take();
                match failure {
                    Some((line, column, message)) => log.push(problem(line, column, message)),
                    None => {
                        let line = e
                            .position()
                            .map_or(1, |p| state.borrow_mut().line_of(p.byte()));
                        log.push(problem(line, 1, format!("unreadable CSV: {e}")));
                    }
                }
                break;
            }
        }
        let line = record
            .position()
            .map_or(1, |p| state.borrow_mut().line_of(p.byte()));
        let mut fields: Vec<&str> = Vec::with_capacity(record.len());
        let mut row_ok = true;
        for (i, raw) in record.iter().enumerate() {
            match check_field(raw) {
                Ok(field) => fields.push(field),
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
                if fields.iter().all(|f| f.trim().is_empty()) {
                    continue; // Blank lines before the header.
                }
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
                if fields
                    .iter()
                    .zip(names)
                    .all(|(f, n)| f.trim().to_lowercase() == *n)
                {
                    log.push(problem(
                        line,
                        1,
                        "this line repeats the header row (files joined together?); remove it"
                            .into(),
                    ));
                    continue;
                }
                let size = text.len() + fields.iter().map(|f| f.len()).sum::<usize>();
                let Ok(size) = u32::try_from(size) else {
                    log.push(problem(
                        line,
                        1,
                        format!("the file holds more than {} bytes of fields; split it into smaller files", u32::MAX),
                    ));
                    break;
                };
                rows.push(Row {
                    line,
                    first: ends.len(),
                });
                for f in &fields {
                    text.push_str(f);
                    ends.push(text.len() as u32);
                }
                debug_assert_eq!(text.len() as u32, size);
            }
        }
        if log.is_full() {
            break;
        }
    }
    if log.0.is_empty() {
        let unclosed = state.borrow().unclosed_quote();
        if let Some((line, column)) = unclosed {
            log.push(problem(
                line,
                column,
                "a quoted field is never closed (a \" is missing)".into(),
            ));
        }
    }
    if header.is_none() && log.0.is_empty() {
        log.push(problem(
            1,
            1,
            format!(
                "the file is empty; expected a header row with {}",
                shape.required.join(", ")
            ),
        ));
    }
    log.into_result()?;
    Ok(Table {
        file: file.to_string(),
        header: header.unwrap_or_default(),
        rows,
        text,
        ends,
    })
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

    const SHAPE: Shape = Shape {
        required: &["a", "b"],
        optional: &["c"],
        ignored: &[],
        extra_allowed: false,
    };

    #[test]
    fn quoted_newlines_keep_line_numbers() {
        let t = parse("x.csv", b"a,b\n\"1\n2\",3\n4,5\n", &SHAPE).unwrap();
        assert_eq!(t.field(&t.rows[0], 0), "1\n2");
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
