//! Progress on standard error: the command line's [`Progress`].
//!
//! A step is shown once it has run for a while (one second, or `COLLATIO_PROGRESS_AFTER`
//! seconds): on a terminal as a bar (when the amount of work is known) or a spinner, redrawn in
//! place and cleared when the step ends; otherwise as a plain line naming the step, repeated at
//! most every five seconds while the step runs. Nothing is printed on standard output.

use collatio::progress::Progress;
use std::io::IsTerminal;
use std::sync::mpsc::{Receiver, RecvTimeoutError, Sender};
use std::sync::{Arc, Mutex, MutexGuard};
use std::time::{Duration, Instant};

/// Time between two plain lines of the same step.
const PLAIN_EVERY: Duration = Duration::from_secs(5);
/// How often the step's age is checked.
const TICK: Duration = Duration::from_millis(100);

/// How progress is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Mode {
    /// A bar or spinner (standard error is a terminal).
    Bar,
    /// A plain line every few seconds.
    Plain,
}

/// The step running now.
struct Step {
    name: String,
    total: Option<u64>,
    done: u64,
    started: Instant,
    /// When its last plain line was printed.
    printed: Option<Instant>,
    bar: Option<indicatif::ProgressBar>,
}

struct State {
    mode: Mode,
    after: Duration,
    step: Option<Step>,
}

/// Shows the steps of long work on standard error until dropped.
pub struct Reporter {
    state: Option<Arc<Mutex<State>>>,
    stop: Option<Sender<()>>,
    ticker: Option<std::thread::JoinHandle<()>>,
}

impl Reporter {
    /// A reporter; `off` (`--no-progress`) shows nothing.
    pub fn new(off: bool) -> Reporter {
        if off {
            return Reporter {
                state: None,
                stop: None,
                ticker: None,
            };
        }
        let mode = if std::io::stderr().is_terminal() {
            Mode::Bar
        } else {
            Mode::Plain
        };
        let after = std::env::var("COLLATIO_PROGRESS_AFTER")
            .ok()
            .and_then(|s| s.trim().parse::<f64>().ok())
            .filter(|s| s.is_finite() && (0.0..=3600.0).contains(s))
            .map_or(Duration::from_secs(1), Duration::from_secs_f64);
        let state = Arc::new(Mutex::new(State {
            mode,
            after,
            step: None,
        }));
        let (stop, stopped) = std::sync::mpsc::channel();
        let shared = Arc::clone(&state);
        let ticker = std::thread::Builder::new()
            .name("progress".into())
            .spawn(move || tick(&shared, &stopped))
            .ok();
        Reporter {
            state: Some(state),
            stop: Some(stop),
            ticker,
        }
    }

    fn lock(&self) -> Option<MutexGuard<'_, State>> {
        self.state
            .as_ref()
            .map(|s| s.lock().unwrap_or_else(|e| e.into_inner()))
    }

    /// Ends the step shown (its bar cleared), before other lines are printed.
    pub fn clear(&self) {
        if let Some(mut state) = self.lock() {
            end_step(&mut state);
        }
    }
}

impl Drop for Reporter {
    fn drop(&mut self) {
        self.clear();
        drop(self.stop.take());
        if let Some(ticker) = self.ticker.take() {
            let _ = ticker.join();
        }
    }
}

impl Progress for Reporter {
    fn step(&self, name: &str, total: Option<u64>) {
        let Some(mut state) = self.lock() else {
            return;
        };
        end_step(&mut state);
        state.step = Some(Step {
            name: collatio::report::format::printable(name),
            total,
            done: 0,
            started: Instant::now(),
            printed: None,
            bar: None,
        });
        if state.after.is_zero() {
            show(&mut state);
        }
    }

    fn advance(&self, units: u64) {
        let Some(mut state) = self.lock() else {
            return;
        };
        if let Some(step) = state.step.as_mut() {
            step.done = step.done.saturating_add(units);
            if let Some(bar) = &step.bar {
                bar.inc(units);
            }
        }
    }
}

/// Clears the bar of the step running, if any, and forgets the step.
fn end_step(state: &mut State) {
    if let Some(bar) = state.step.take().and_then(|s| s.bar) {
        bar.finish_and_clear();
    }
}

/// Checks the running step's age until the reporter is dropped.
fn tick(state: &Mutex<State>, stopped: &Receiver<()>) {
    loop {
        match stopped.recv_timeout(TICK) {
            Err(RecvTimeoutError::Timeout) => {}
            _ => return,
        }
        let mut state = state.lock().unwrap_or_else(|e| e.into_inner());
        let after = state.after;
        if state
            .step
            .as_ref()
            .is_some_and(|s| s.started.elapsed() >= after)
        {
            show(&mut state);
        }
    }
}

/// Shows the running step: a bar drawn once (it redraws itself), or a plain line when none was
/// printed for [`PLAIN_EVERY`].
fn show(state: &mut State) {
    let mode = state.mode;
    let Some(step) = state.step.as_mut() else {
        return;
    };
    match mode {
        Mode::Bar => {
            if step.bar.is_none() {
                let (bar, template) = match step.total {
                    Some(n) => (
                        indicatif::ProgressBar::new(n),
                        "{msg} {pos}/{len} {wide_bar} {eta}",
                    ),
                    None => (
                        indicatif::ProgressBar::new_spinner(),
                        "{spinner} {msg} {elapsed}",
                    ),
                };
                bar.set_style(
                    indicatif::ProgressStyle::with_template(template)
                        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
                );
                bar.set_message(step.name.clone());
                bar.set_position(step.done);
                bar.enable_steady_tick(TICK);
                step.bar = Some(bar);
            }
        }
        Mode::Plain => {
            if step.printed.is_some_and(|t| t.elapsed() < PLAIN_EVERY) {
                return;
            }
            step.printed = Some(Instant::now());
            let seconds = step.started.elapsed().as_secs();
            match step.total {
                Some(n) => eprintln!(
                    "collatio: progress: {} {}/{n} ({seconds} s)",
                    step.name, step.done
                ),
                None => eprintln!("collatio: progress: {} ({seconds} s)", step.name),
            }
        }
    }
}
