//! A progress bar on stderr for long steps: drawn only when stderr is a
//! terminal, only once a step has run for about a second, and never with
//! `--quiet`. The library reports progress through a callback; only the
//! binary draws.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::time::{Duration, Instant};

/// A lazily shown progress bar.
pub struct Bar {
    bar: Option<ProgressBar>,
    started: Instant,
}

impl Bar {
    /// A bar for `total` steps labelled `what` (hidden when quiet or piped).
    pub fn new(total: u64, what: &str, quiet: bool) -> Bar {
        let show = !quiet && std::io::stderr().is_terminal();
        let bar = show.then(|| {
            let b = ProgressBar::with_draw_target(Some(total), ProgressDrawTarget::hidden());
            if let Ok(style) =
                ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} ({eta} left)")
            {
                b.set_style(style.progress_chars("=> "));
            }
            b.set_message(what.to_string());
            b
        });
        Bar {
            bar,
            started: Instant::now(),
        }
    }

    /// Reports `done` steps; starts drawing after about a second.
    pub fn set(&self, done: u64) {
        if let Some(b) = &self.bar {
            if b.is_hidden() && self.started.elapsed() > Duration::from_secs(1) {
                b.set_draw_target(ProgressDrawTarget::stderr());
            }
            b.set_position(done);
        }
    }

    /// Clears the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}
