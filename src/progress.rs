//! Progress of long work, reported by the library and shown by the caller.
//!
//! The library never prints: the steps of a comparison, a search or a corpus build are
//! announced to a [`Progress`] the caller passes in (the command line shows them on standard
//! error, as a bar on a terminal and as a periodic plain line otherwise). Reporting progress
//! changes nothing in the results.
//!
//! ```
//! use collatio::progress::{NoProgress, Progress};
//! let progress: &dyn Progress = &NoProgress;
//! progress.step("aligning", None);
//! progress.advance(1);
//! ```

/// Receives the steps of long work. Calls may come from several threads at once
/// ([`Progress::advance`] from the workers of a parallel step).
pub trait Progress: Sync {
    /// A new step begins (the previous one, if any, has ended): its name in a few words
    /// (`"chance figures"`), and the number of units of work when known.
    fn step(&self, name: &str, total: Option<u64>);
    /// `units` more units of the current step are done.
    fn advance(&self, units: u64);
}

/// Progress that is not shown.
#[derive(Debug, Clone, Copy, Default)]
pub struct NoProgress;

impl Progress for NoProgress {
    fn step(&self, _name: &str, _total: Option<u64>) {}
    fn advance(&self, _units: u64) {}
}
