//! A pass's data log: the logger's CSV file read into columns, the analysis of a logged pass,
//! its smoothing, and the analysis API (request and answer).

/// A logged pass analysed: launch, lockup, slip, clutch torque, slip power and energy, tire spin.
pub mod analysis;
/// Reading a logger's CSV export: delimiter, header, units line, decimal comma, blanks.
pub mod file;
/// The data-log analysis request (CSV text, column mapping) and its answer.
pub mod request;
/// Which column is which: a first guess from the header names, and choices that cannot be right.
pub mod roles;
/// Savitzky–Golay smoothing and derivatives.
pub mod savgol;
/// The stretch of a log a chart opens on: the launch to the lockup, a second either side.
pub mod span;
/// A long trace thinned to a bounded number of points, every event kept.
pub mod thin;

/// Runs two pieces of work and returns both results: one after the other, or at once on two
/// threads; which is the caller's choice (see [`InTurn`]).
pub trait Join {
    /// Whether [`Join::join`] runs the two at once: work is split in two only then.
    fn at_once(&self) -> bool;

    fn join<A: Send, B: Send>(
        &self,
        a: impl FnOnce() -> A + Send,
        b: impl FnOnce() -> B + Send,
    ) -> (A, B);

    /// [`Join::join`] for work on `samples` samples: one after the other below
    /// [`PIECES_FROM_SAMPLES`], where a second thread's start would cost about what it saves.
    fn join_for<A: Send, B: Send>(
        &self,
        samples: usize,
        a: impl FnOnce() -> A + Send,
        b: impl FnOnce() -> B + Send,
    ) -> (A, B) {
        if samples >= PIECES_FROM_SAMPLES {
            self.join(a, b)
        } else {
            InTurn.join(a, b)
        }
    }
}

/// Samples from which a log's work is split in two pieces ([`Join::join_for`]): each piece of
/// the analysis takes about 0.3 ms at 20,000 samples (3 ms at 215,000), against a few tens of
/// microseconds to start a thread.
pub const PIECES_FROM_SAMPLES: usize = 20_000;

/// [`Join`] one after the other, on the calling thread.
pub struct InTurn;

impl Join for InTurn {
    fn at_once(&self) -> bool {
        false
    }

    fn join<A: Send, B: Send>(
        &self,
        a: impl FnOnce() -> A + Send,
        b: impl FnOnce() -> B + Send,
    ) -> (A, B) {
        let a = a();
        (a, b())
    }
}

/// Both pieces at once on two threads: the tests' own (the crate starts none).
#[cfg(test)]
pub(crate) struct TwoThreads;

#[cfg(test)]
impl Join for TwoThreads {
    fn at_once(&self) -> bool {
        true
    }

    fn join<A: Send, B: Send>(
        &self,
        a: impl FnOnce() -> A + Send,
        b: impl FnOnce() -> B + Send,
    ) -> (A, B) {
        std::thread::scope(|s| {
            let second = s.spawn(b);
            let a = a();
            (a, second.join().expect("the second half"))
        })
    }
}
