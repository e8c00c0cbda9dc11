//! The byte-level guard between an input file and the CSV parser: physical line numbers
//! whatever the line endings, the quote grammar, and the stops (NUL bytes, over-long
//! fields, too many columns, UTF-16) that keep a broken or hostile file cheap.

use super::{MAX_COLUMNS, MAX_FIELD_BYTES};

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
pub(super) struct TrackState {
    /// Bytes handed to the CSV reader so far.
    pub(super) offset: u64,
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
    pub(super) failure: Option<(u64, usize, String)>,
}

impl TrackState {
    /// The physical line (1-based) of the byte at `offset`; offsets must not decrease.
    pub(super) fn line_of(&mut self, offset: u64) -> u64 {
        while self.line_starts.front().is_some_and(|&s| s <= offset) {
            self.line_starts.pop_front();
            self.lines_passed += 1;
        }
        self.lines_passed + 1
    }

    pub(super) fn unclosed_quote(&self) -> Option<(u64, usize)> {
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
pub(super) struct Tracker<R> {
    inner: R,
    pub(super) state: std::rc::Rc<std::cell::RefCell<TrackState>>,
}

impl<R: std::io::BufRead> Tracker<R> {
    pub(super) fn new(inner: R) -> Tracker<R> {
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
