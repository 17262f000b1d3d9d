//! Progress on long work: a bar on a terminal, plain periodic lines otherwise.

use indicatif::{ProgressBar, ProgressStyle};
use std::io::IsTerminal;
use std::time::{Duration, Instant};

pub struct Progress {
    bar: Option<ProgressBar>,
    total: u64,
    done: u64,
    start: Instant,
    last_line: Instant,
    quiet: bool,
}

impl Progress {
    /// `quiet` prints nothing (tests, library use).
    pub fn new(total: usize, quiet: bool) -> Progress {
        let bar = if !quiet && std::io::stderr().is_terminal() {
            let b = ProgressBar::new(total as u64);
            b.set_style(
                ProgressStyle::with_template(
                    "{elapsed_precise} [{bar:40}] {pos}/{len} specs  {per_sec}  eta {eta}",
                )
                .unwrap_or_else(|_| ProgressStyle::default_bar())
                .progress_chars("=> "),
            );
            Some(b)
        } else {
            None
        };
        let now = Instant::now();
        Progress {
            bar,
            total: total as u64,
            done: 0,
            start: now,
            last_line: now,
            quiet,
        }
    }

    pub fn inc(&mut self) {
        self.done += 1;
        if let Some(b) = &self.bar {
            b.inc(1);
            return;
        }
        if self.quiet {
            return;
        }
        let now = Instant::now();
        if now.duration_since(self.last_line) >= Duration::from_secs(10) || self.done == self.total
        {
            self.last_line = now;
            let secs = now.duration_since(self.start).as_secs_f64();
            let rate = self.done as f64 / secs.max(1e-9);
            let eta = (self.total - self.done) as f64 / rate.max(1e-9);
            eprintln!(
                "forkmap: {}/{} specs ({:.0}%), {:.1} specs/s, eta {:.0}s",
                self.done,
                self.total,
                100.0 * self.done as f64 / self.total.max(1) as f64,
                rate,
                eta
            );
        }
    }

    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish();
        }
    }
}

/// A duration for people: `93s`, `12.5 min`, `3.2 h` (plan's estimates, the null's).
pub fn human(s: f64) -> String {
    if !s.is_finite() {
        "unknown".into()
    } else if s < 120.0 {
        format!("{s:.0}s")
    } else if s < 7200.0 {
        format!("{:.1} min", s / 60.0)
    } else {
        format!("{:.1} h", s / 3600.0)
    }
}
