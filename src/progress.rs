//! Progress of the long stages, for the CLI's bars (the library never draws anything).

/// Receives progress of the long stages. Implementations must be cheap: `advance` is
/// called once per strip.
pub trait Progress: Send + Sync {
    /// A stage starts with `total` units of work.
    fn start(&self, stage: &str, total: u64);
    /// `n` more units are done.
    fn advance(&self, n: u64);
    /// The stage is over.
    fn finish(&self);
}

/// An optional, shareable [`Progress`].
#[derive(Clone, Default)]
pub struct ProgressHandle(pub Option<std::sync::Arc<dyn Progress>>);

impl std::fmt::Debug for ProgressHandle {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(if self.0.is_some() {
            "ProgressHandle(Some)"
        } else {
            "ProgressHandle(None)"
        })
    }
}

impl ProgressHandle {
    pub(crate) fn start(&self, stage: &str, total: u64) {
        if let Some(p) = &self.0 {
            p.start(stage, total);
        }
    }
    pub(crate) fn advance(&self, n: u64) {
        if let Some(p) = &self.0 {
            p.advance(n);
        }
    }
    pub(crate) fn finish(&self) {
        if let Some(p) = &self.0 {
            p.finish();
        }
    }
}

/// Stage timings on stderr when `AREAL_TIMINGS` is set (for profiling; the CLI's output is
/// unchanged otherwise).
pub(crate) struct StageClock {
    on: bool,
    last: std::time::Instant,
    last_cpu: f64,
}

impl StageClock {
    pub(crate) fn new() -> Self {
        StageClock {
            on: std::env::var_os("AREAL_TIMINGS").is_some(),
            last: std::time::Instant::now(),
            last_cpu: cpu_seconds(),
        }
    }

    /// Print the wall and CPU time (all threads of the process) since the last lap, labelled
    /// `stage`. CPU seconds vary less than wall seconds on a shared machine.
    pub(crate) fn lap(&mut self, stage: &str) {
        if self.on {
            let now = std::time::Instant::now();
            let cpu = cpu_seconds();
            eprintln!(
                "areal: timing: {stage}: {:.3} s ({:.3} CPU s)",
                (now - self.last).as_secs_f64(),
                cpu - self.last_cpu
            );
            self.last = now;
            self.last_cpu = cpu;
        }
    }
}

/// User + system CPU seconds of the whole process so far (0 where unknown).
fn cpu_seconds() -> f64 {
    #[cfg(target_os = "linux")]
    {
        // SAFETY: getrusage only writes the struct it is given.
        let mut u: libc::rusage = unsafe { std::mem::zeroed() };
        if unsafe { libc::getrusage(libc::RUSAGE_SELF, &mut u) } == 0 {
            let tv = |t: libc::timeval| t.tv_sec as f64 + t.tv_usec as f64 * 1e-6;
            return tv(u.ru_utime) + tv(u.ru_stime);
        }
    }
    0.0
}
