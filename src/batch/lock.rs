//! One batch per output folder and shard at a time: a lock file
//! `DIR/.areal-batch/lock-SHARD` created with `O_EXCL`, holding the owner's host, process id
//! and process start time. A lock whose owner is on this host and no longer running (or whose
//! process id now belongs to a process started at another time) is stale and taken over.
//! A lock held from another host cannot be checked and is refused with the way to remove it.

use crate::{Error, Result};
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

/// A held lock; removed when dropped.
#[derive(Debug)]
pub struct BatchLock {
    path: PathBuf,
}

fn host() -> String {
    fs::read_to_string("/proc/sys/kernel/hostname")
        .or_else(|_| fs::read_to_string("/etc/hostname"))
        .map(|h| h.trim().to_string())
        .unwrap_or_else(|_| "unknown-host".into())
}

/// Start time of a process (field 22 of /proc/PID/stat), None when it is not running.
fn start_time(pid: u32) -> Option<String> {
    let stat = fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    // The command name (field 2) is in parentheses and may hold spaces.
    let rest = &stat[stat.rfind(')')? + 1..];
    let fields: Vec<&str> = rest.split_whitespace().collect();
    // rest starts at field 3 (state); a zombie is not running.
    if fields.first() == Some(&"Z") {
        return None;
    }
    fields.get(19).map(|s| s.to_string())
}

fn owner_line() -> String {
    let pid = std::process::id();
    format!(
        "host={} pid={pid} start={}\n",
        host(),
        start_time(pid).unwrap_or_default()
    )
}

/// Whether the owner recorded in a lock file is gone (known only on this host).
fn is_stale(text: &str) -> Option<bool> {
    let get = |k: &str| {
        text.split_whitespace()
            .find_map(|f| f.strip_prefix(&format!("{k}=")[..]))
            .map(|s| s.to_string())
    };
    if get("host")? != host() {
        return None;
    }
    let pid: u32 = get("pid")?.parse().ok()?;
    Some(start_time(pid) != get("start").filter(|s| !s.is_empty()))
}

impl BatchLock {
    /// Take the lock `name` in `dir` (the batch's `.areal-batch` folder).
    pub fn take(dir: &Path, name: &str, out: &Path) -> Result<BatchLock> {
        let path = dir.join(format!("lock-{name}"));
        for _ in 0..3 {
            match fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
            {
                Ok(mut f) => {
                    f.write_all(owner_line().as_bytes())
                        .and_then(|_| f.sync_all())
                        .map_err(Error::io(&path))?;
                    return Ok(BatchLock { path });
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    let text = fs::read_to_string(&path).unwrap_or_default();
                    match is_stale(&text) {
                        Some(true) => {
                            // Dead owner: take the lock over (rename first, so two
                            // newcomers cannot both remove it).
                            let aside = path.with_extension(format!("stale-{}", std::process::id()));
                            if fs::rename(&path, &aside).is_ok() {
                                let _ = fs::remove_file(&aside);
                            }
                        }
                        Some(false) => {
                            return Err(Error::Output {
                                path: out.to_path_buf(),
                                reason: format!(
                                    "another batch is running into this folder and shard ({}, lock {}); wait for it to finish, or use another --out or --shard",
                                    text.trim(),
                                    path.display()
                                ),
                            })
                        }
                        None => {
                            return Err(Error::Output {
                                path: out.to_path_buf(),
                                reason: format!(
                                    "is locked by a batch on another host or of unknown owner ({}); if no batch runs into it any more, remove {}",
                                    text.trim(),
                                    path.display()
                                ),
                            })
                        }
                    }
                }
                Err(e) => return Err(Error::io(&path)(e)),
            }
        }
        Err(Error::Output {
            path: out.to_path_buf(),
            reason: format!("could not take the lock {}; run again", path.display()),
        })
    }
}

impl Drop for BatchLock {
    fn drop(&mut self) {
        let _ = fs::remove_file(&self.path);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn second_holder_is_refused_and_a_dead_owner_is_taken_over() {
        let t = tempfile::tempdir().unwrap();
        let a = BatchLock::take(t.path(), "all", t.path()).unwrap();
        let e = BatchLock::take(t.path(), "all", t.path())
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("another batch is running")
                && e.contains(&format!("pid={}", std::process::id())),
            "{e}"
        );
        // Other shards are independent.
        let b = BatchLock::take(t.path(), "1of3", t.path()).unwrap();
        drop((a, b));
        // A lock left by a process that no longer runs (4194304 is above Linux's pid_max).
        fs::write(
            t.path().join("lock-all"),
            format!("host={} pid=4194304 start=1\n", host()),
        )
        .unwrap();
        let c = BatchLock::take(t.path(), "all", t.path()).unwrap();
        drop(c);
        assert!(!t.path().join("lock-all").exists());
        fs::write(t.path().join("lock-all"), "host=elsewhere pid=1 start=1\n").unwrap();
        let e = BatchLock::take(t.path(), "all", t.path())
            .unwrap_err()
            .to_string();
        assert!(e.contains("another host"), "{e}");
    }
}
