//! Batches of species (`areal batch`, `areal gather`) and run files (`areal rerun`,
//! `areal verify`).
//!
//! A batch reads a manifest ([`manifest`]), takes the lock of its output folder and shard
//! ([`lock`]), and runs [`crate::run_range`] for each species of its shard on `jobs` worker
//! threads, each species into `DIR/<species>/` (atomic, with its run file, [`runfile`]). A
//! species whose folder is complete and was made from the same inputs and options is kept
//! (resume). Per species, `DIR/.areal-batch/status/<species>` records the outcome (ok with
//! the seconds, or failed with the error line); it is removed before the species starts and
//! written after its folder is in place, so a kill at any moment leaves either the old state
//! or the new one. An unsharded batch ends with [`gather::gather`].
//!
//! Layout of DIR: `<species>/` run folders, `batch.csv`, `batch.gpkg`, `richness.tif`, and
//! `.areal-batch/` (`species.csv`: the manifest's species in order; `status/`; `ranges/`: each
//! species' range for batch.gpkg, made by its worker; `lock-*`).

pub mod gather;
pub mod lock;
pub mod manifest;
mod ranges;
pub mod richness;
pub mod runfile;
pub mod settings;

use crate::{Error, Result};
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::Instant;

pub use gather::{gather, GatherReport, BATCH_COLUMNS};
pub use manifest::{Manifest, Species};

/// Which rows a batch runs: those whose 0-based index modulo `count` is `index`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// This shard, 0-based.
    pub index: usize,
    /// Number of shards.
    pub count: usize,
}

impl Shard {
    /// Parse `I/N`.
    pub fn parse(s: &str) -> Result<Shard> {
        let bad = || Error::InvalidOption {
            option: "--shard",
            reason: format!("\"{s}\" is not I/N with 0 <= I < N (e.g. --shard 0/3)"),
        };
        let (i, n) = s.split_once('/').ok_or_else(bad)?;
        let (index, count) = (
            i.trim().parse().map_err(|_| bad())?,
            n.trim().parse().map_err(|_| bad())?,
        );
        if count == 0 || index >= count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }

    /// The shard of a Slurm array task, from `SLURM_ARRAY_TASK_ID` with
    /// `SLURM_ARRAY_TASK_COUNT`, or with `SLURM_ARRAY_TASK_MIN`/`MAX` (index = id - min,
    /// count = max - min + 1). None outside an array job.
    pub fn from_slurm(env: impl Fn(&str) -> Option<String>) -> Result<Option<Shard>> {
        if env("SLURM_ARRAY_TASK_ID").is_none() {
            return Ok(None);
        }
        let num = |k: &str| -> Result<Option<usize>> {
            env(k)
                .map(|v| {
                    v.trim().parse::<usize>().map_err(|_| Error::InvalidOption {
                        option: "--shard",
                        reason: format!("{k}={v} is not a number; give --shard I/N"),
                    })
                })
                .transpose()
        };
        let id = num("SLURM_ARRAY_TASK_ID")?.expect("set");
        let (min, max) = (num("SLURM_ARRAY_TASK_MIN")?, num("SLURM_ARRAY_TASK_MAX")?);
        let shard = match (min, max, num("SLURM_ARRAY_TASK_COUNT")?) {
            (Some(min), Some(max), _) if max >= min && id >= min && id <= max => Shard {
                index: id - min,
                count: max - min + 1,
            },
            (min, _, Some(count)) => Shard {
                index: id - min.unwrap_or(0).min(id),
                count,
            },
            _ => {
                return Err(Error::InvalidOption {
                    option: "--shard",
                    reason: format!(
                        "SLURM_ARRAY_TASK_ID={id} without SLURM_ARRAY_TASK_COUNT or MIN/MAX; give --shard I/N"
                    ),
                })
            }
        };
        if shard.count == 0 || shard.index >= shard.count {
            return Err(Error::InvalidOption {
                option: "--shard",
                reason: format!("the Slurm array variables give shard {}/{}, which does not exist; use a contiguous --array (step 1) or give --shard I/N", shard.index, shard.count),
            });
        }
        Ok(Some(shard))
    }

    fn lock_name(shard: Option<Shard>) -> String {
        shard.map_or("all".into(), |s| format!("{}of{}", s.index, s.count))
    }
}

/// How a batch runs.
#[derive(Debug, Clone)]
pub struct BatchOptions {
    /// Species run at once.
    pub jobs: usize,
    /// Run only this shard (and do not gather).
    pub shard: Option<Shard>,
    /// Redo every species, complete or not.
    pub force: bool,
}

/// One species' outcome in this run.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Ran and finished.
    Ran,
    /// Complete from an earlier run with the same inputs and options; kept.
    Kept,
    /// Failed with this error line.
    Failed(String),
}

/// Told about each species as it ends (called from worker threads).
pub trait BatchProgress: Send + Sync {
    /// `total` species will be looked at.
    fn start(&self, total: usize);
    /// One more species is done.
    fn species_done(&self, name: &str, outcome: &Outcome, seconds: f64);
}

/// What a batch did.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchReport {
    /// Species of this shard.
    pub species: usize,
    /// Species run now.
    pub ran: usize,
    /// Species kept from an earlier run.
    pub kept: usize,
    /// Species that failed.
    pub failed: usize,
    /// The batch files, for an unsharded batch.
    pub gathered: Option<GatherReport>,
}

/// The outcome recorded for a species.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Status {
    Ok { seconds: String },
    Failed { message: String, seconds: String },
}

/// `DIR/.areal-batch`, created if missing.
pub(crate) fn state_dir(out: &Path) -> Result<PathBuf> {
    let d = out.join(".areal-batch");
    fs::create_dir_all(d.join("status")).map_err(|e| Error::Output {
        path: out.to_path_buf(),
        reason: format!("cannot create the batch folder: {e}"),
    })?;
    Ok(d)
}

/// fsync `tmp`, rename it to `dest` and fsync the folder (SQLite's practice).
pub(crate) fn durable(tmp: &Path, dest: &Path) -> Result<()> {
    fs::File::open(tmp)
        .and_then(|f| f.sync_all())
        .map_err(Error::io(tmp))?;
    fs::rename(tmp, dest).map_err(Error::io(dest))?;
    crate::output::sync_dir(crate::output::parent_folder(dest))
}

/// Remove temporary files of dead processes in `dir`: `.areal-tmp-PID-NAME` (gather) and
/// `.NAME.tmp-PID-THREAD` (status files), left by a batch killed while writing them.
pub(crate) fn remove_dead_tmp(dir: &Path) {
    let Ok(rd) = fs::read_dir(dir) else { return };
    for e in rd.flatten() {
        let n = e.file_name().to_string_lossy().into_owned();
        let pid = if let Some(rest) = n.strip_prefix(".areal-tmp-") {
            rest.split('-').next()
        } else if n.starts_with('.') {
            n.rsplit_once(".tmp-")
                .and_then(|(_, r)| r.split('-').next())
        } else {
            None
        };
        let Some(pid) = pid.and_then(|p| p.parse::<u32>().ok()) else {
            continue;
        };
        if pid != std::process::id()
            && !Path::new("/proc").join(pid.to_string()).exists()
            && cfg!(target_os = "linux")
        {
            let _ = fs::remove_file(e.path());
        }
    }
}

/// Write a small file atomically and durably.
fn write_durable(dest: &Path, text: &str) -> Result<()> {
    write_durable_bytes(dest, text.as_bytes())
}

/// Write a file atomically and durably.
pub(crate) fn write_durable_bytes(dest: &Path, bytes: &[u8]) -> Result<()> {
    let tmp = dest.with_file_name(format!(
        ".{}.tmp-{}-{:?}",
        dest.file_name().unwrap_or_default().to_string_lossy(),
        std::process::id(),
        std::thread::current().id()
    ));
    let mut f = fs::File::create(&tmp).map_err(Error::io(&tmp))?;
    f.write_all(bytes).map_err(Error::io(&tmp))?;
    drop(f);
    durable(&tmp, dest)
}

fn status_path(out: &Path, name: &str) -> PathBuf {
    out.join(".areal-batch").join("status").join(name)
}

pub(crate) fn read_status(out: &Path, name: &str) -> Option<Status> {
    let text = fs::read_to_string(status_path(out, name)).ok()?;
    let (head, message) = text.split_once('\n').unwrap_or((&text, ""));
    let (kind, seconds) = head.split_once(' ').unwrap_or((head, ""));
    match kind {
        "ok" => Some(Status::Ok {
            seconds: seconds.into(),
        }),
        "failed" => Some(Status::Failed {
            message: message.trim_end().into(),
            seconds: seconds.into(),
        }),
        _ => None,
    }
}

fn write_status(out: &Path, name: &str, s: &Status) -> Result<()> {
    let text = match s {
        Status::Ok { seconds } => format!("ok {seconds}\n"),
        Status::Failed { message, seconds } => format!("failed {seconds}\n{message}\n"),
    };
    write_durable(&status_path(out, name), &text)
}

/// The manifest's species, in order, as recorded in DIR.
pub(crate) fn read_species_list(out: &Path) -> Result<Vec<String>> {
    let p = out.join(".areal-batch").join("species.csv");
    let text = fs::read_to_string(&p).map_err(|_| Error::Output {
        path: out.to_path_buf(),
        reason:
            "holds no batch (no .areal-batch/species.csv); give the --out folder of an areal batch"
                .into(),
    })?;
    Ok(text.lines().skip(1).map(|l| l.to_string()).collect())
}

/// Whether an error means the disk (or a file size limit) is full: the error says so, or a
/// failed output step is followed by a failed 1 MB probe write into `out` (GDAL does not
/// always pass the system's "no space" on).
fn disk_full(e: &Error, out: &Path) -> bool {
    let t = e.to_string();
    if [
        "No space left",
        "File too large",
        "Disk quota exceeded",
        "Free disk space",
    ]
    .iter()
    .any(|s| t.contains(s))
    {
        return true;
    }
    if !matches!(
        e,
        Error::Output { .. } | Error::Io { .. } | Error::Gdal { .. }
    ) {
        return false;
    }
    let probe = out.join(format!(".areal-space-probe-{}", std::process::id()));
    let full = fs::File::create(&probe)
        .and_then(|mut f| {
            f.write_all(&vec![0u8; 1 << 20])?;
            f.sync_all()
        })
        .is_err();
    let _ = fs::remove_file(&probe);
    full
}

/// Run the batch of `manifest` into `out`.
pub fn run_batch(
    manifest: &Manifest,
    out: &Path,
    opts: &BatchOptions,
    progress: Option<&dyn BatchProgress>,
) -> Result<BatchReport> {
    let state = state_dir(out)?;
    let _lock = lock::BatchLock::take(&state, &Shard::lock_name(opts.shard), out)?;
    remove_dead_tmp(&state);
    remove_dead_tmp(&state.join("status"));
    remove_dead_tmp(&state.join("ranges"));
    // The species list: the same for every shard of one manifest.
    let list = std::iter::once("species".to_string())
        .chain(manifest.species.iter().map(|s| s.name.clone()))
        .collect::<Vec<_>>()
        .join("\n")
        + "\n";
    let list_path = state.join("species.csv");
    match fs::read_to_string(&list_path) {
        Ok(old) if old == list => {}
        Ok(_) if !opts.force => {
            return Err(Error::Output {
                path: out.to_path_buf(),
                reason: format!(
                    "holds a batch of another manifest (its species differ from those of {}); use another --out, or --force to redo the batch here",
                    manifest.path.display()
                ),
            })
        }
        _ => write_durable(&list_path, &list)?,
    }
    let mine: Vec<&Species> = manifest
        .species
        .iter()
        .filter(|s| opts.shard.is_none_or(|sh| s.index % sh.count == sh.index))
        .collect();
    if let Some(p) = progress {
        p.start(mine.len());
    }
    let next = AtomicUsize::new(0);
    let stop = AtomicBool::new(false);
    let fatal: Mutex<Option<Error>> = Mutex::new(None);
    let counts = Mutex::new((0usize, 0usize, 0usize));
    std::thread::scope(|scope| {
        for _ in 0..opts.jobs.max(1).min(mine.len().max(1)) {
            scope.spawn(|| loop {
                if stop.load(Ordering::SeqCst) {
                    return;
                }
                let i = next.fetch_add(1, Ordering::SeqCst);
                let Some(sp) = mine.get(i) else { return };
                let dest = out.join(&sp.name);
                let t0 = Instant::now();
                let outcome = if !opts.force
                    && runfile::matches(&dest, &sp.suitability, &sp.records, &sp.options)
                {
                    if read_status(out, &sp.name).is_none() {
                        let _ = write_status(out, &sp.name, &Status::Ok { seconds: String::new() });
                    }
                    Outcome::Kept
                } else {
                    let _ = fs::remove_file(status_path(out, &sp.name));
                    match crate::run_range(&sp.suitability, &sp.records, &sp.options, &dest, true) {
                        Ok(_) => {
                            let seconds = format!("{:.3}", t0.elapsed().as_secs_f64());
                            // The range for batch.gpkg; gather makes it itself if this fails.
                            let _ = ranges::store(out, &sp.name);
                            if let Err(e) = write_status(out, &sp.name, &Status::Ok { seconds }) {
                                if disk_full(&e, out) {
                                    stop.store(true, Ordering::SeqCst);
                                }
                            }
                            Outcome::Ran
                        }
                        Err(e) if disk_full(&e, out) => {
                            stop.store(true, Ordering::SeqCst);
                            let mut f = fatal.lock().unwrap_or_else(|p| p.into_inner());
                            f.get_or_insert(Error::Output {
                                path: dest.clone(),
                                reason: format!(
                                    "the disk is full ({}); the species finished so far are complete: free space and run the same command again to resume",
                                    e.to_string().replace('\n', " ")
                                ),
                            });
                            return;
                        }
                        Err(e) => {
                            let message = e.to_string().replace('\n', " ");
                            let seconds = format!("{:.3}", t0.elapsed().as_secs_f64());
                            let _ = write_status(
                                out,
                                &sp.name,
                                &Status::Failed { message: message.clone(), seconds },
                            );
                            Outcome::Failed(message)
                        }
                    }
                };
                {
                    let mut c = counts.lock().unwrap_or_else(|p| p.into_inner());
                    match outcome {
                        Outcome::Ran => c.0 += 1,
                        Outcome::Kept => c.1 += 1,
                        Outcome::Failed(_) => c.2 += 1,
                    }
                }
                if let Some(p) = progress {
                    p.species_done(&sp.name, &outcome, t0.elapsed().as_secs_f64());
                }
            });
        }
    });
    if let Some(e) = fatal.into_inner().unwrap_or_else(|p| p.into_inner()) {
        return Err(e);
    }
    let (ran, kept, failed) = counts.into_inner().unwrap_or_else(|p| p.into_inner());
    let gathered = if opts.shard.is_none() {
        Some(gather(out)?)
    } else {
        None
    };
    Ok(BatchReport {
        species: mine.len(),
        ran,
        kept,
        failed,
        gathered,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_from_slurm_variables() {
        let env = |pairs: &'static [(&'static str, &'static str)]| {
            move |k: &str| pairs.iter().find(|p| p.0 == k).map(|p| p.1.to_string())
        };
        assert_eq!(Shard::from_slurm(env(&[])).unwrap(), None);
        assert_eq!(
            Shard::from_slurm(env(&[
                ("SLURM_ARRAY_TASK_ID", "2"),
                ("SLURM_ARRAY_TASK_COUNT", "3")
            ]))
            .unwrap(),
            Some(Shard { index: 2, count: 3 })
        );
        assert_eq!(
            Shard::from_slurm(env(&[
                ("SLURM_ARRAY_TASK_ID", "11"),
                ("SLURM_ARRAY_TASK_MIN", "10"),
                ("SLURM_ARRAY_TASK_MAX", "13")
            ]))
            .unwrap(),
            Some(Shard { index: 1, count: 4 })
        );
        assert!(Shard::from_slurm(env(&[("SLURM_ARRAY_TASK_ID", "2")])).is_err());
        assert_eq!(Shard::parse("1/3").unwrap(), Shard { index: 1, count: 3 });
        assert!(Shard::parse("3/3").is_err() && Shard::parse("x").is_err());
    }
}
