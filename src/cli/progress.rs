//! Progress on stderr for long work (`plan` with a large budget,
//! `timeline --recompute`, `advise` on a large incident): drawn only when
//! stderr is a terminal, never with `--json`, and only once the work has
//! run for about a second, so quick commands print nothing extra.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

/// How long work runs before its progress is shown.
const SHOW_AFTER: Duration = Duration::from_secs(1);

/// A progress bar or spinner on stderr; cleared when dropped.
pub struct Work {
    bar: ProgressBar,
    stop: Arc<AtomicBool>,
    reveal: Option<JoinHandle<()>>,
}

impl Work {
    /// A bar of `len` steps (`len` 0: a spinner) for `what`. `json`: the
    /// command prints JSON, so nothing is drawn.
    pub fn new(what: &str, len: u64, json: bool) -> Work {
        let bar =
            ProgressBar::with_draw_target((len > 0).then_some(len), ProgressDrawTarget::hidden());
        let style = if len > 0 {
            ProgressStyle::with_template(
                "{spinner} {msg} [{bar:20}] {pos}/{len} {elapsed}, ~{eta} left",
            )
        } else {
            ProgressStyle::with_template("{spinner} {msg} {elapsed}")
        };
        if let Ok(style) = style {
            bar.set_style(style.progress_chars("=> "));
        }
        bar.set_message(what.to_string());
        let stop = Arc::new(AtomicBool::new(false));
        let reveal = (!json && std::io::stderr().is_terminal()).then(|| {
            let (bar, stop) = (bar.clone(), stop.clone());
            std::thread::spawn(move || {
                let start = Instant::now();
                while start.elapsed() < SHOW_AFTER {
                    if stop.load(Ordering::Relaxed) {
                        return;
                    }
                    std::thread::sleep(Duration::from_millis(50));
                }
                if !stop.load(Ordering::Relaxed) {
                    bar.set_draw_target(ProgressDrawTarget::stderr());
                    bar.enable_steady_tick(Duration::from_millis(120));
                }
            })
        });
        Work { bar, stop, reveal }
    }

    /// A spinner for work whose length is not known.
    pub fn spinner(what: &str, json: bool) -> Work {
        Work::new(what, 0, json)
    }

    /// Replaces the text beside the spinner (e.g. the best so far).
    pub fn set_message(&self, msg: &str) {
        self.bar.set_message(msg.to_string());
    }

    pub fn inc(&self, n: u64) {
        self.bar.inc(n);
    }
}

impl Drop for Work {
    fn drop(&mut self) {
        self.stop.store(true, Ordering::Relaxed);
        if let Some(h) = self.reveal.take() {
            let _ = h.join();
        }
        self.bar.finish_and_clear();
    }
}
