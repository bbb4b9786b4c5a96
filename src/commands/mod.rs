//! One module per subcommand: the logic behind each `candor` command, in the
//! library so tests and other programs can call it without a process.
//!
//! A command takes its parsed arguments and an [`Output`], writes what it
//! has to say into the output and returns a [`Status`]; it never prints or
//! exits, so the binary alone decides how text reaches the terminal and
//! how statuses and errors become exit codes. This is the top stage: it
//! may import every other module, and nothing imports it.

pub mod args;
pub mod check;
pub mod data;
pub mod demo;
pub mod gate;
pub mod list;
pub mod merge;
pub mod report;
pub mod run;
pub mod score;

/// What a command has to say, kept apart by destination so that results
/// (tables, JSON, CSV) can be piped while notes still reach the terminal.
#[derive(Debug, Default)]
pub struct Output {
    /// For standard output.
    pub text: String,
    /// For standard error: notes, warnings and per-cell failures, one per
    /// line, in the order they arose.
    pub notes: String,
}

impl Output {
    /// Adds one line for standard error.
    pub fn note(&mut self, line: impl AsRef<str>) {
        self.notes.push_str(line.as_ref());
        self.notes.push('\n');
    }
}

/// How a command that did not fail outright ended; each has its own exit
/// code so CI can tell a regression from a crash.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// Everything asked for was done.
    Success,
    /// `gate`: a rule is broken.
    Regression,
    /// `run`: some cells or methods failed; the rest of the results are
    /// complete and their errors are recorded.
    CellsFailed,
}

impl Status {
    /// The process exit code for this status.
    pub fn code(self) -> u8 {
        match self {
            Status::Success => 0,
            Status::Regression => 1,
            Status::CellsFailed => 3,
        }
    }
}
