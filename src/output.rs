//! Atomic output folders.
//!
//! Everything is written into a temporary folder beside the destination
//! (`.NAME.areal-tmp-PID`), and renamed into place only when the run is complete. A
//! run that fails or is killed leaves the previous outputs (or none) and, at worst, a
//! hidden temporary folder that the next run removes. An existing destination is
//! replaced only with `overwrite`, only when it holds nothing but files areal writes,
//! and never when an input lives inside it.
//!
//! Replacing an existing folder is one atomic exchange on Linux (`renameat2` with
//! `RENAME_EXCHANGE`), so there is no moment at which DIR is missing or mixed. Where the
//! exchange is not available, the old folder is first renamed aside
//! (`.NAME.areal-old-PID`) and the new one renamed in; a run killed between the two
//! renames leaves the old folder aside, and the next run puts it back before anything else.

use crate::{Error, Result};
use std::fs;
use std::path::{Path, PathBuf};

/// File names areal writes into an output folder.
pub const OUTPUT_NAMES: &[&str] = &[
    "classes.tif",
    "classes.tif.aux.xml",
    "patches.csv",
    "records.csv",
    "summary.json",
    // The run file (crate::batch::runfile).
    "areal-run.toml",
    "report.html",
    "map.png",
    // Style files (crate::styles::STYLE_NAMES).
    "classes.qml",
    "range.qml",
    "patches.qml",
    "unreachable.qml",
    "accessible.qml",
    "records.qml",
    // Vector outputs (crate::vectors::VECTOR_NAMES).
    "range.gpkg",
    "range.geojson",
    "patches.geojson",
    "unreachable.geojson",
    "accessible.geojson",
    "records.geojson",
    "range-equal-area.gpkg",
    // `areal change` (crate::change).
    "change.tif",
    "change.tif.aux.xml",
    "change.csv",
    "change-map.png",
    "agreement.tif",
    "agreement.tif.aux.xml",
];

/// A temporary output folder that becomes `dest` on [`OutputDir::commit`].
pub struct OutputDir {
    dest: PathBuf,
    tmp: PathBuf,
    committed: bool,
}

impl OutputDir {
    /// Check the destination and create the temporary folder beside it.
    pub fn prepare(dest: &Path, overwrite: bool, inputs: &[&Path]) -> Result<Self> {
        let out_err = |reason: String| Error::Output {
            path: dest.to_path_buf(),
            reason,
        };
        let name = dest
            .file_name()
            .ok_or_else(|| {
                out_err("is not a folder name; give --out a folder such as out/".into())
            })?
            .to_string_lossy()
            .into_owned();
        let parent = parent_folder(dest).to_path_buf();
        let prefix = format!(".{name}.areal-tmp-");
        let old_prefix = format!(".{name}.areal-old-");
        if !dest.exists() {
            restore_aside(&parent, &old_prefix, dest);
        }
        if !parent.is_dir() {
            fs::create_dir_all(&parent).map_err(|e| {
                out_err(format!(
                    "cannot create the parent folder {}: {e}",
                    parent.display()
                ))
            })?;
        }
        if dest.exists() {
            if !dest.is_dir() {
                return Err(out_err(
                    "exists and is not a folder; choose another --out".into(),
                ));
            }
            let dest_abs = fs::canonicalize(dest).map_err(Error::io(dest))?;
            let inside: Vec<String> = inputs
                .iter()
                .filter(|input| fs::canonicalize(input).is_ok_and(|abs| abs.starts_with(&dest_abs)))
                .map(|input| {
                    let clash = input
                        .file_name()
                        .is_some_and(|n| OUTPUT_NAMES.contains(&n.to_string_lossy().as_ref()));
                    format!(
                        "{}{}",
                        input.display(),
                        if clash {
                            " (an output has this name)"
                        } else {
                            ""
                        }
                    )
                })
                .collect();
            if !inside.is_empty() {
                return Err(out_err(format!(
                    "holds the input{} {}; choose an --out folder that holds no inputs",
                    if inside.len() == 1 { "" } else { "s" },
                    inside.join(", ")
                )));
            }
            let entries: Vec<String> = fs::read_dir(dest)
                .map_err(Error::io(dest))?
                .filter_map(|e| e.ok())
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect();
            if !entries.is_empty() {
                if !overwrite {
                    return Err(out_err(
                        "exists and is not empty; pass --overwrite to replace it, or choose another --out".into(),
                    ));
                }
                // A subfolder counts as ours when it holds only our file names (the
                // per-future folders of `areal change`).
                let ours = |n: &str| {
                    OUTPUT_NAMES.contains(&n)
                        || n.starts_with('.')
                        || fs::read_dir(dest.join(n)).is_ok_and(|rd| {
                            rd.filter_map(|e| e.ok()).all(|e| {
                                e.file_type().is_ok_and(|t| t.is_file())
                                    && OUTPUT_NAMES
                                        .contains(&e.file_name().to_string_lossy().as_ref())
                            })
                        })
                };
                let foreign: Vec<&String> = entries.iter().filter(|n| !ours(n)).collect();
                if !foreign.is_empty() {
                    return Err(out_err(format!(
                        "holds files areal did not write ({}); --overwrite replaces only areal output folders",
                        foreign.iter().map(|s| s.as_str()).collect::<Vec<_>>().join(", ")
                    )));
                }
            }
        }
        // Remove leftovers of killed runs of this destination (not those of a run of the
        // same destination that is still going: it would fail half-way).
        if let Ok(rd) = fs::read_dir(&parent) {
            for e in rd.flatten() {
                let n = e.file_name().to_string_lossy().into_owned();
                let pid = n
                    .strip_prefix(&prefix)
                    .or_else(|| n.strip_prefix(&old_prefix));
                if pid.is_some_and(|pid| !process_alive(pid)) {
                    let _ = fs::remove_dir_all(e.path());
                }
            }
        }
        let tmp = parent.join(format!("{prefix}{}", std::process::id()));
        fs::create_dir(&tmp).map_err(|e| {
            out_err(format!(
                "cannot create a temporary folder in {}: {e}; is it writable?",
                parent.display()
            ))
        })?;
        Ok(OutputDir {
            dest: dest.to_path_buf(),
            tmp,
            committed: false,
        })
    }

    /// Path of an output file inside the temporary folder.
    pub fn file(&self, name: &str) -> PathBuf {
        self.tmp.join(name)
    }

    /// The final destination.
    pub fn dest(&self) -> &Path {
        &self.dest
    }

    /// Move the finished folder into place: one atomic exchange where the system has
    /// it, else two renames (see the module documentation).
    pub fn commit(mut self) -> Result<()> {
        self.sync()?;
        if self.dest.exists() && exchange(&self.tmp, &self.dest).is_ok() {
            // The old outputs are now at the temporary path.
            self.committed = true;
            sync_dir(parent_folder(&self.dest))?;
            let _ = fs::remove_dir_all(&self.tmp);
            return Ok(());
        }
        let old = if self.dest.exists() {
            let old = self.tmp.with_file_name(
                self.tmp
                    .file_name()
                    .unwrap()
                    .to_string_lossy()
                    .replace("areal-tmp", "areal-old"),
            );
            fs::rename(&self.dest, &old).map_err(Error::io(&self.dest))?;
            Some(old)
        } else {
            None
        };
        fs::rename(&self.tmp, &self.dest).map_err(Error::io(&self.dest))?;
        self.committed = true;
        sync_dir(parent_folder(&self.dest))?;
        if let Some(old) = old {
            let _ = fs::remove_dir_all(old);
        }
        Ok(())
    }
}

/// The folder holding `path`: "." for a bare name such as `run1` (whose `parent()` is the
/// empty path, which no system call accepts).
pub(crate) fn parent_folder(path: &Path) -> &Path {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

impl OutputDir {
    /// fsync every file and the temporary folder itself, so that after the rename a power
    /// cut cannot leave a folder that looks complete but is not (SQLite's practice).
    fn sync(&self) -> Result<()> {
        for e in fs::read_dir(&self.tmp).map_err(Error::io(&self.tmp))? {
            let p = e.map_err(Error::io(&self.tmp))?.path();
            if p.is_file() {
                fs::File::open(&p)
                    .and_then(|f| f.sync_all())
                    .map_err(Error::io(&p))?;
            }
        }
        sync_dir(&self.tmp)
    }
}

/// fsync a folder (its entries: new names and renames); where folders cannot be opened
/// (not Unix) this does nothing.
pub(crate) fn sync_dir(dir: &Path) -> Result<()> {
    if cfg!(unix) {
        fs::File::open(dir)
            .and_then(|f| f.sync_all())
            .map_err(Error::io(dir))?;
    }
    Ok(())
}

/// Swap two existing paths atomically (Linux `renameat2(RENAME_EXCHANGE)`).
#[cfg(target_os = "linux")]
fn exchange(a: &Path, b: &Path) -> std::io::Result<()> {
    use std::ffi::CString;
    use std::os::unix::ffi::OsStrExt;
    let c = |p: &Path| {
        CString::new(p.as_os_str().as_bytes())
            .map_err(|e| std::io::Error::new(std::io::ErrorKind::InvalidInput, e))
    };
    let (ca, cb) = (c(a)?, c(b)?);
    // SAFETY: both strings are valid NUL-terminated paths that outlive the call.
    let rv = unsafe {
        libc::renameat2(
            libc::AT_FDCWD,
            ca.as_ptr(),
            libc::AT_FDCWD,
            cb.as_ptr(),
            libc::RENAME_EXCHANGE,
        )
    };
    if rv == 0 {
        Ok(())
    } else {
        Err(std::io::Error::last_os_error())
    }
}

/// No atomic exchange here: the caller falls back to two renames.
#[cfg(not(target_os = "linux"))]
fn exchange(_a: &Path, _b: &Path) -> std::io::Result<()> {
    Err(std::io::Error::from(std::io::ErrorKind::Unsupported))
}

/// Whether the process with this id (a temporary folder's suffix) is still running.
/// Only Linux can tell (`/proc`); elsewhere every leftover counts as dead.
fn process_alive(pid: &str) -> bool {
    let Ok(pid) = pid.parse::<u32>() else {
        return false;
    };
    cfg!(target_os = "linux")
        && pid != std::process::id()
        && Path::new("/proc").join(pid.to_string()).exists()
}

/// Put back a previous output folder left aside by a run killed between two renames.
fn restore_aside(parent: &Path, old_prefix: &str, dest: &Path) {
    let Ok(rd) = fs::read_dir(parent) else { return };
    let aside = rd
        .flatten()
        .filter(|e| e.file_name().to_string_lossy().starts_with(old_prefix))
        .find(|e| e.path().join("summary.json").is_file());
    if let Some(e) = aside {
        let _ = fs::rename(e.path(), dest);
    }
}

impl Drop for OutputDir {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.tmp);
        }
    }
}

/// Write a small text file in one go (the folder rename provides atomicity).
pub(crate) fn write_text(path: &Path, text: &str) -> Result<()> {
    fs::write(path, text).map_err(Error::io(path))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_non_empty_folder_without_overwrite_and_keeps_it() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        fs::create_dir(&dest).unwrap();
        fs::write(dest.join("summary.json"), "old").unwrap();
        let e = OutputDir::prepare(&dest, false, &[])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("--overwrite"), "{e}");
        assert_eq!(
            fs::read_to_string(dest.join("summary.json")).unwrap(),
            "old"
        );
    }

    #[test]
    fn overwrite_swaps_the_whole_folder() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        fs::create_dir(&dest).unwrap();
        fs::write(dest.join("summary.json"), "old").unwrap();
        fs::write(dest.join("patches.csv"), "old").unwrap();
        let o = OutputDir::prepare(&dest, true, &[]).unwrap();
        fs::write(o.file("summary.json"), "new").unwrap();
        o.commit().unwrap();
        assert_eq!(
            fs::read_to_string(dest.join("summary.json")).unwrap(),
            "new"
        );
        assert!(!dest.join("patches.csv").exists());
        assert_eq!(
            fs::read_dir(t.path()).unwrap().count(),
            1,
            "no temporary folders left"
        );
    }

    #[test]
    fn folder_left_aside_by_a_killed_commit_is_put_back() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        let aside = t.path().join(".out.areal-old-4242");
        fs::create_dir(&aside).unwrap();
        fs::write(aside.join("summary.json"), "old").unwrap();
        let e = OutputDir::prepare(&dest, false, &[])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("--overwrite"), "{e}");
        assert_eq!(
            fs::read_to_string(dest.join("summary.json")).unwrap(),
            "old"
        );
        assert!(!aside.exists());
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn exchange_swaps_two_folders() {
        let t = tempfile::tempdir().unwrap();
        let (a, b) = (t.path().join("a"), t.path().join("b"));
        fs::create_dir(&a).unwrap();
        fs::create_dir(&b).unwrap();
        fs::write(a.join("f"), "a").unwrap();
        fs::write(b.join("f"), "b").unwrap();
        exchange(&a, &b).unwrap();
        assert_eq!(fs::read_to_string(a.join("f")).unwrap(), "b");
        assert_eq!(fs::read_to_string(b.join("f")).unwrap(), "a");
    }

    #[test]
    fn leftovers_of_dead_runs_go_but_a_running_one_is_kept() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        // PID 1 is always alive on Linux; 4194304 is above the kernel's pid_max limit.
        let dead = t.path().join(".out.areal-tmp-4194304");
        let live = t.path().join(".out.areal-tmp-1");
        fs::create_dir(&dead).unwrap();
        fs::create_dir(&live).unwrap();
        let o = OutputDir::prepare(&dest, false, &[]).unwrap();
        assert!(!dead.exists());
        assert_eq!(live.exists(), cfg!(target_os = "linux"));
        drop(o);
    }

    #[test]
    fn dropped_without_commit_leaves_nothing() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        {
            let o = OutputDir::prepare(&dest, false, &[]).unwrap();
            fs::write(o.file("summary.json"), "partial").unwrap();
        }
        assert_eq!(fs::read_dir(t.path()).unwrap().count(), 0);
    }

    #[test]
    fn refuses_foreign_files_and_inputs_inside() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        fs::create_dir(&dest).unwrap();
        fs::write(dest.join("suitability.tif"), "x").unwrap();
        let e = OutputDir::prepare(&dest, true, &[&dest.join("suitability.tif")])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("holds the input"), "{e}");
        let e = OutputDir::prepare(&dest, true, &[])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("did not write"), "{e}");
    }
}
