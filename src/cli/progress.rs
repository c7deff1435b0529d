//! Progress bars on stderr (indicatif), only when stderr is a terminal and not --quiet.

use areal::{Progress, ProgressHandle};
use indicatif::{ProgressBar, ProgressStyle};
use std::io::IsTerminal;
use std::sync::{Arc, Mutex};

struct Bars {
    bar: Mutex<Option<ProgressBar>>,
}

impl Progress for Bars {
    fn start(&self, stage: &str, total: u64) {
        let bar = ProgressBar::new(total);
        bar.set_style(
            ProgressStyle::with_template("{msg:40} [{bar:30}] {pos}/{len} rows, {eta} left")
                .expect("valid template")
                .progress_chars("=> "),
        );
        bar.set_message(stage.to_string());
        *self.bar.lock().unwrap() = Some(bar);
    }
    fn advance(&self, n: u64) {
        if let Some(b) = &*self.bar.lock().unwrap() {
            b.inc(n);
        }
    }
    fn finish(&self) {
        if let Some(b) = self.bar.lock().unwrap().take() {
            b.finish_and_clear();
        }
    }
}

/// A progress handle for the CLI: bars on a terminal, nothing otherwise.
pub(crate) fn bar(quiet: bool) -> ProgressHandle {
    if quiet || !std::io::stderr().is_terminal() {
        return ProgressHandle::default();
    }
    ProgressHandle(Some(Arc::new(Bars {
        bar: Mutex::new(None),
    })))
}
