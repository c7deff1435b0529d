//! Where the runs live: in memory while they fit a budget, in a spill file beyond it.
//!
//! Runs arrive row by row, each as (start, end, serial). While the total stays within the
//! budget they are kept in one vector; past it, everything so far and every later row go to
//! a file (12 bytes a run, little-endian) in the run's working folder, and only the row index
//! stays in memory. At the end, serials become patch ids: in place for the runs in memory,
//! on the fly, as rows are streamed back, for a spilled store.

use super::Run;
use crate::{Error, Result};
use std::fs::File;
use std::io::{BufReader, BufWriter, Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

/// Bytes one run takes in memory and on disk.
pub(crate) const RUN_BYTES: usize = 12;

/// The runs of every row.
#[derive(Debug)]
pub(crate) struct RunStore {
    /// Runs of row r: `row_start[r]..row_start[r + 1]` (in `runs` or in the file).
    row_start: Vec<u64>,
    runs: Vec<Run>,
    spill: Option<Spill>,
    budget_runs: usize,
    spill_dir: Option<PathBuf>,
    /// `ids[serial]` for a spilled store, applied while reading.
    ids: Option<Vec<u32>>,
}

#[derive(Debug)]
struct Spill {
    path: PathBuf,
    writer: Option<BufWriter<File>>,
    /// Removed with the store when it is not inside a folder that is removed anyway.
    owned: bool,
}

impl Drop for Spill {
    fn drop(&mut self) {
        self.writer.take();
        if self.owned {
            let _ = std::fs::remove_file(&self.path);
        }
    }
}

fn spill_err(path: &Path, e: std::io::Error) -> Error {
    Error::Io {
        path: path.to_path_buf(),
        source: e,
    }
}

impl RunStore {
    /// An empty store keeping at most `budget_bytes` of runs in memory; beyond that it spills
    /// into `spill_dir` (the system's temporary folder when `None`).
    pub(crate) fn new(budget_bytes: usize, spill_dir: Option<PathBuf>) -> RunStore {
        RunStore {
            row_start: vec![0],
            runs: Vec::new(),
            spill: None,
            budget_runs: (budget_bytes / RUN_BYTES).max(1),
            spill_dir,
            ids: None,
        }
    }

    /// Whether the runs went to a file.
    pub(crate) fn spilled(&self) -> bool {
        self.spill.is_some()
    }

    /// Total runs.
    pub(crate) fn len(&self) -> u64 {
        *self.row_start.last().expect("row_start starts with 0")
    }

    /// Rows stored.
    pub(crate) fn rows(&self) -> usize {
        self.row_start.len() - 1
    }

    /// Append the next row's runs (`patch` holding the serial).
    pub(crate) fn push_row(&mut self, runs: impl Iterator<Item = Run>) -> Result<()> {
        let before = self.runs.len();
        self.runs.extend(runs);
        let added = (self.runs.len() - before) as u64;
        self.row_start.push(self.len() + added);
        if self.spill.is_none() && self.runs.len() > self.budget_runs {
            self.start_spill()?;
        }
        if let Some(sp) = &mut self.spill {
            let w = sp.writer.as_mut().expect("writer open until finish");
            let mut buf = Vec::with_capacity(self.runs.len() * RUN_BYTES);
            for r in &self.runs {
                buf.extend_from_slice(&r.start.to_le_bytes());
                buf.extend_from_slice(&r.end.to_le_bytes());
                buf.extend_from_slice(&r.patch.to_le_bytes());
            }
            w.write_all(&buf).map_err(|e| spill_err(&sp.path, e))?;
            self.runs.clear();
        }
        Ok(())
    }

    fn start_spill(&mut self) -> Result<()> {
        let (dir, owned) = match &self.spill_dir {
            Some(d) => (d.clone(), true),
            None => (std::env::temp_dir(), true),
        };
        let path = dir.join(format!(
            "areal-runs-{}-{:p}.bin",
            std::process::id(),
            self as *const _
        ));
        let f = File::create(&path).map_err(|e| spill_err(&path, e))?;
        self.spill = Some(Spill {
            path,
            writer: Some(BufWriter::with_capacity(1 << 20, f)),
            owned,
        });
        Ok(())
    }

    /// Turn serials into patch ids (`ids[serial]`); no more rows may be pushed.
    pub(crate) fn resolve(&mut self, ids: Vec<u32>) -> Result<()> {
        match &mut self.spill {
            None => {
                for r in &mut self.runs {
                    r.patch = ids[r.patch as usize];
                }
            }
            Some(sp) => {
                if let Some(mut w) = sp.writer.take() {
                    w.flush().map_err(|e| spill_err(&sp.path, e))?;
                }
                self.ids = Some(ids);
            }
        }
        Ok(())
    }

    /// Call `f` for every row in `rows`, in order, with its runs (patch ids resolved).
    pub(crate) fn for_rows(
        &self,
        rows: std::ops::Range<usize>,
        f: &mut dyn FnMut(usize, &[Run]) -> Result<()>,
    ) -> Result<()> {
        let rows = rows.start.min(self.rows())..rows.end.min(self.rows());
        let Some(sp) = &self.spill else {
            for r in rows {
                let (a, b) = (self.row_start[r] as usize, self.row_start[r + 1] as usize);
                f(r, &self.runs[a..b])?;
            }
            return Ok(());
        };
        let ids = self.ids.as_ref();
        let mut file = File::open(&sp.path).map_err(|e| spill_err(&sp.path, e))?;
        file.seek(SeekFrom::Start(
            self.row_start[rows.start] * RUN_BYTES as u64,
        ))
        .map_err(|e| spill_err(&sp.path, e))?;
        let mut rd = BufReader::with_capacity(1 << 20, file);
        let (mut bytes, mut runs) = (Vec::new(), Vec::new());
        for r in rows {
            let n = (self.row_start[r + 1] - self.row_start[r]) as usize;
            bytes.resize(n * RUN_BYTES, 0);
            rd.read_exact(&mut bytes)
                .map_err(|e| spill_err(&sp.path, e))?;
            runs.clear();
            runs.extend(bytes.chunks_exact(RUN_BYTES).map(|b| {
                let u = |i: usize| u32::from_le_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]]);
                let serial = u(8);
                Run {
                    start: u(0),
                    end: u(4),
                    patch: ids.map_or(serial, |ids| ids[serial as usize]),
                }
            }));
            f(r, &runs)?;
        }
        Ok(())
    }
}
