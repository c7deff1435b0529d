//! Run files: `areal-run.toml` in every run folder.
//!
//! It holds areal's version, the working folder, every option with its value (defaults
//! included, [`settings::from_range_options`]), each input's path (as given), size and
//! SHA-256, and each output's SHA-256. [`write`] is called by [`crate::run_range`] inside the
//! temporary folder, so the run file is committed with the outputs it describes. [`rerun`]
//! runs it again, [`verify`] checks a folder against it, [`matches`] tells a batch whether a
//! folder can be kept on resume. Nothing in the run file varies between two runs of the same
//! inputs and options in the same folder.

use super::settings::{self, Settings};
use crate::{Error, ProgressHandle, RangeOptions, RangeResult, Result};
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;
use std::fs;
use std::io::Read;
use std::path::{Path, PathBuf};

/// Name of the run file in a run folder.
pub const RUN_FILE: &str = "areal-run.toml";

/// One input file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InputFile {
    /// The path as given to the run (relative paths are relative to `cwd`).
    pub path: String,
    /// Size in bytes.
    pub bytes: u64,
    /// SHA-256, lower-case hex.
    pub sha256: String,
}

/// The contents of `areal-run.toml`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunFile {
    /// Version of areal that made the folder.
    pub areal_version: String,
    /// The working folder of the run (relative input paths are relative to it).
    pub cwd: String,
    /// Every option with its value ("" = not given).
    pub options: Settings,
    /// `suitability`, `records` and, when M is a polygon file, `accessible`.
    pub inputs: BTreeMap<String, InputFile>,
    /// SHA-256 of each output file, by name.
    pub outputs: BTreeMap<String, String>,
}

/// SHA-256 of a file, lower-case hex, and its size.
pub fn sha256_file(path: &Path, input: bool) -> Result<(String, u64)> {
    let io_err = |e| {
        if input {
            Error::input_io(path)(e)
        } else {
            Error::io(path)(e)
        }
    };
    let mut f = fs::File::open(path).map_err(io_err)?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 20];
    let mut n = 0u64;
    loop {
        let k = f.read(&mut buf).map_err(io_err)?;
        if k == 0 {
            break;
        }
        n += k as u64;
        h.update(&buf[..k]);
    }
    Ok((h.finalize().iter().map(|b| format!("{b:02x}")).collect(), n))
}

fn input_file(path: &Path) -> Result<InputFile> {
    let (sha256, bytes) = sha256_file(path, true)?;
    Ok(InputFile {
        path: path.display().to_string(),
        bytes,
        sha256,
    })
}

/// The inputs of a run by role.
fn inputs_of(
    suitability: &Path,
    records: &Path,
    opts: &RangeOptions,
) -> Result<BTreeMap<String, InputFile>> {
    let mut m = BTreeMap::new();
    m.insert("suitability".into(), input_file(suitability)?);
    m.insert("records".into(), input_file(records)?);
    if let Some(p) = &opts.access.polygon {
        m.insert("accessible".into(), input_file(p)?);
    }
    Ok(m)
}

fn hash_outputs(dir: &Path) -> Result<BTreeMap<String, String>> {
    let mut out = BTreeMap::new();
    for e in fs::read_dir(dir).map_err(Error::io(dir))? {
        let e = e.map_err(Error::io(dir))?;
        let name = e.file_name().to_string_lossy().into_owned();
        if name == RUN_FILE || !e.path().is_file() {
            continue;
        }
        out.insert(name, sha256_file(&e.path(), false)?.0);
    }
    Ok(out)
}

fn cwd() -> String {
    std::env::current_dir()
        .map(|p| p.display().to_string())
        .unwrap_or_default()
}

/// The inputs' hashes, computed on a thread of their own while the run works (reading a
/// global raster through SHA-256 takes a second or more).
pub(crate) struct InputHashes(std::thread::JoinHandle<Result<BTreeMap<String, InputFile>>>);

impl InputHashes {
    pub(crate) fn start(suitability: &Path, records: &Path, opts: &RangeOptions) -> InputHashes {
        let (s, r, o) = (
            suitability.to_path_buf(),
            records.to_path_buf(),
            opts.clone(),
        );
        InputHashes(std::thread::spawn(move || inputs_of(&s, &r, &o)))
    }

    /// Write the run file of a finished run into its (temporary) folder `dir`, with these
    /// input hashes and the hashes of the outputs in `dir`.
    pub(crate) fn write(self, dir: &Path, opts: &RangeOptions) -> Result<()> {
        let inputs = self.0.join().expect("hashing the inputs does not panic")?;
        let rf = RunFile {
            areal_version: env!("CARGO_PKG_VERSION").to_string(),
            cwd: cwd(),
            options: settings::from_range_options(opts),
            inputs,
            outputs: hash_outputs(dir)?,
        };
        let text = format!(
            "# areal run file: `areal rerun` runs it again, `areal verify` checks the folder against it.\n{}",
            toml::to_string(&rf).expect("run file serialises")
        );
        crate::output::write_text(&dir.join(RUN_FILE), &text)
    }
}

/// Read a run file.
pub fn read(path: &Path) -> Result<RunFile> {
    let text = fs::read_to_string(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => Error::MissingInput {
            path: path.to_path_buf(),
            what: "run file (areal-run.toml)",
        },
        _ => Error::InputIo {
            path: path.to_path_buf(),
            source: e,
        },
    })?;
    toml::from_str(&text).map_err(|e| Error::RunFile {
        path: path.to_path_buf(),
        reason: format!(
            "is not an areal run file: {}; give the areal-run.toml of a run folder",
            e.to_string().replace('\n', " ")
        ),
    })
}

/// Resolve a recorded input path against the run's working folder.
fn resolve(rf: &RunFile, p: &str) -> PathBuf {
    Path::new(&rf.cwd).join(p)
}

/// Check that every input still has its recorded size and checksum.
pub fn check_inputs(rf: &RunFile, run_file: &Path) -> Result<()> {
    for (role, f) in &rf.inputs {
        let p = resolve(rf, &f.path);
        if !p.is_file() {
            return Err(Error::RunFile {
                path: run_file.to_path_buf(),
                reason: format!(
                    "the {role} input {} is missing; put it back at that path",
                    p.display()
                ),
            });
        }
        let (sha, bytes) = sha256_file(&p, true)?;
        if sha != f.sha256 || bytes != f.bytes {
            return Err(Error::RunFile {
                path: run_file.to_path_buf(),
                reason: format!(
                    "the {role} input {} has changed since the run (SHA-256 {sha}, {bytes} bytes; \
                     the run used {}, {} bytes); restore the original file to reproduce the run",
                    p.display(),
                    f.sha256,
                    f.bytes
                ),
            });
        }
    }
    Ok(())
}

/// What [`verify`] found.
#[derive(Debug, Clone, PartialEq)]
pub struct Verified {
    /// Outputs checked.
    pub outputs: usize,
}

/// Check the outputs of the run folder `dir` against its run file.
pub fn verify(dir: &Path) -> Result<Verified> {
    let path = dir.join(RUN_FILE);
    let rf = read(&path)?;
    let now = hash_outputs(dir)?;
    let mut problems = Vec::new();
    for (name, sha) in &rf.outputs {
        match now.get(name) {
            None => problems.push(format!("{name} is missing")),
            Some(s) if s != sha => problems.push(format!("{name} has changed")),
            _ => {}
        }
    }
    for name in now.keys().filter(|n| !rf.outputs.contains_key(*n)) {
        problems.push(format!("{name} is not an output of the run"));
    }
    if !problems.is_empty() {
        return Err(Error::RunFile {
            path,
            reason: format!(
                "{}; the folder no longer holds the outputs the run made (run `areal rerun` on a copy of the run file to remake them)",
                problems.join(", ")
            ),
        });
    }
    Ok(Verified {
        outputs: rf.outputs.len(),
    })
}

/// Whether `dir` is a complete run folder made from these inputs and options: a run file with
/// the same option values and input paths, inputs with the recorded checksums, outputs intact.
pub fn matches(dir: &Path, suitability: &Path, records: &Path, opts: &RangeOptions) -> bool {
    let Ok(rf) = read(&dir.join(RUN_FILE)) else {
        return false;
    };
    rf.options == settings::from_range_options(opts)
        && rf.areal_version == env!("CARGO_PKG_VERSION")
        && inputs_of(suitability, records, opts).is_ok_and(|i| i == rf.inputs)
        && verify(dir).is_ok()
}

/// `areal rerun`: run the run file `path` again into the new folder `out`, in the run's own
/// working folder, and check that every output is byte-identical to the recorded one.
pub fn rerun(path: &Path, out: &Path, progress: ProgressHandle) -> Result<RangeResult> {
    let rf = read(path)?;
    check_inputs(&rf, path)?;
    let out_abs = std::path::absolute(out).map_err(Error::io(out))?;
    let opts = settings::to_range_options(&rf.options, Path::new(""), progress)?;
    let (s, r) = (&rf.inputs["suitability"].path, &rf.inputs["records"].path);
    std::env::set_current_dir(&rf.cwd).map_err(|e| Error::RunFile {
        path: path.to_path_buf(),
        reason: format!(
            "cannot enter the run's working folder {}: {e}; relative input paths are relative to it",
            rf.cwd
        ),
    })?;
    let result = crate::run_range(Path::new(s), Path::new(r), &opts, &out_abs, false)?;
    let again = read(&out_abs.join(RUN_FILE))?;
    let differ: Vec<&String> = rf
        .outputs
        .iter()
        .filter(|(n, sha)| again.outputs.get(*n) != Some(sha))
        .map(|(n, _)| n)
        .collect();
    if !differ.is_empty() || again.options != rf.options {
        return Err(Error::Processing {
            what: format!("rerun of {}", path.display()),
            reason: format!(
                "the new outputs in {} differ from the recorded ones ({}); was the run made by another areal version ({})?",
                out_abs.display(),
                differ
                    .iter()
                    .map(|s| s.as_str())
                    .collect::<Vec<_>>()
                    .join(", "),
                rf.areal_version
            ),
        });
    }
    Ok(result)
}
