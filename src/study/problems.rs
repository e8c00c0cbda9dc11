//! Problems with input, each with its place (file, line, column), so a screen can list
//! them as a table and the command line can print them as `FILE:LINE:COLUMN: message`.

use std::fmt;

/// How many problems one file reports before stopping.
pub const MAX_PROBLEMS: usize = 20;

/// One problem in an input file; line and column are 1-based (line 0 = the whole file;
/// an empty file name = no file at all).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problem {
    pub file: String,
    pub line: u64,
    pub column: usize,
    pub message: String,
}

impl Problem {
    /// A problem with no file behind it (an unknown scale name, say).
    pub fn general(message: impl Into<String>) -> Problem {
        Problem {
            file: String::new(),
            line: 0,
            column: 0,
            message: message.into(),
        }
    }
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.file.is_empty() {
            return f.write_str(&self.message);
        }
        if self.line == 0 {
            // A problem with the whole file (unreadable, a folder, a pipe).
            return write!(f, "{}: {}", self.file, self.message);
        }
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
