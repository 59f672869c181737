//! Progress of long command-line work (import, export, backup, restore) on a terminal: one
//! line on stderr, rewritten in place with `\r` at most four times a second, and cleared when
//! the work is done. Nothing at all is written when stderr is not a terminal (a script, a test
//! reading the output, the server), so the commands' output stays as it was.

use std::io::{IsTerminal, Write};
use std::time::{Duration, Instant};

/// How often the line may change.
const EVERY: Duration = Duration::from_millis(250);

/// A progress line, or nothing (see the module's documentation).
#[derive(Debug)]
pub struct Progress {
    on: bool,
    /// When the line was last written (None: not yet).
    last: Option<Instant>,
    /// The length of the line on screen, to blank out what a shorter line leaves.
    width: usize,
}

impl Progress {
    /// Shows nothing (the web layer, tests, anything not at a terminal).
    pub fn none() -> Self {
        Self {
            on: false,
            last: None,
            width: 0,
        }
    }

    /// Shows progress when stderr is a terminal.
    pub fn on_terminal() -> Self {
        Self {
            on: std::io::stderr().is_terminal(),
            ..Self::none()
        }
    }

    /// Whether anything is shown.
    pub fn is_on(&self) -> bool {
        self.on
    }

    /// `importing cover_heights: 412 000 / 1 000 000 rows` (or `412 000 rows` without a total),
    /// at most every 250 ms, and always for the last row of a table.
    pub fn rows(&mut self, verb: &str, table: &str, done: u64, total: Option<u64>) {
        if !self.on || (total != Some(done) && !self.due()) {
            return;
        }
        let line = match total {
            Some(total) => format!(
                "{verb} {table}: {} / {} rows",
                grouped(done),
                grouped(total)
            ),
            None => format!("{verb} {table}: {} rows", grouped(done)),
        };
        self.show(&line);
    }

    /// A step without a count (`checking the copy`), shown at once.
    pub fn step(&mut self, text: &str) {
        if self.on {
            self.show(text);
        }
    }

    /// Clears the line, so what the command prints next starts on a clean line.
    pub fn done(&mut self) {
        if self.on && self.width > 0 {
            let mut err = std::io::stderr().lock();
            let _ = write!(err, "\r{:width$}\r", "", width = self.width);
            let _ = err.flush();
            self.width = 0;
        }
    }

    fn due(&self) -> bool {
        self.last.is_none_or(|at| at.elapsed() >= EVERY)
    }

    fn show(&mut self, line: &str) {
        let len = line.chars().count();
        let mut err = std::io::stderr().lock();
        let _ = write!(
            err,
            "\r{line}{:pad$}",
            "",
            pad = self.width.saturating_sub(len)
        );
        let _ = err.flush();
        self.width = len;
        self.last = Some(Instant::now());
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        self.done();
    }
}

/// A count with its thousands set apart by spaces: `1 000 000`.
pub fn grouped(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(' ');
        }
        out.push(c);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_are_grouped_by_thousands() {
        // SI brochure (BIPM, 9th edition, 5.4.4): digits may be divided into groups of three
        // separated by a space.
        assert_eq!(grouped(0), "0");
        assert_eq!(grouped(999), "999");
        assert_eq!(grouped(1000), "1 000");
        assert_eq!(grouped(412_000), "412 000");
        assert_eq!(grouped(1_000_000), "1 000 000");
    }

    #[test]
    fn nothing_is_shown_when_off() {
        let mut p = Progress::none();
        p.rows("importing", "t", 1, Some(2));
        p.step("x");
        assert_eq!(p.width, 0);
        assert!(p.last.is_none());
    }
}
