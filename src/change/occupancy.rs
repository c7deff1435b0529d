//! Modelled AOO of the present range and of each future range, counted on the AOO grid of
//! the metrics (`metrics::aoo`: LAEA centred on the records used, 16 origins, minimum
//! reported): a grid cell is occupied when the centre of at least one raster cell of the
//! range falls in it. Every range cell is transformed once, whatever the number of ranges.

use crate::metrics::aoo::{self, AooCounter, AooGrid, RowProjector};
use crate::{GridSpec, Result};

/// Most cells added over all counters before the AOO is left out (memory: 8 bytes a cell).
pub(crate) const MAX_AOO_CELLS: u64 = 30_000_000;

/// Counters for the present range and, per future, no, limited and full dispersal.
pub(crate) struct Occupancy {
    project: RowProjector,
    pub(crate) cell_km: f64,
    pub(crate) present: AooCounter,
    /// Per future: [no dispersal, limited, full].
    pub(crate) futures: Vec<[AooCounter; 3]>,
    added: u64,
    /// More than [`MAX_AOO_CELLS`] were added: the counters were dropped.
    pub(crate) overflow: bool,
    cols: Vec<u32>,
    xy: Vec<(f64, f64)>,
    /// Per cell of the row being added: bit 0 present, then 3 bits per future.
    member: Vec<u64>,
}

impl Occupancy {
    /// Counters on the AOO grid centred on `records` ((lon, lat) degrees), for
    /// `n_futures` futures (at most 20).
    pub(crate) fn new(
        grid: &GridSpec,
        records: &[(f64, f64)],
        cell_km: f64,
        n_futures: usize,
    ) -> Result<Occupancy> {
        let (lon0, lat0) = aoo::centre_of(records);
        let g = AooGrid::new(lon0, lat0, cell_km)?;
        let project = g.spec().projector(grid)?;
        let counter = || AooCounter::new(g.cell_m);
        Ok(Occupancy {
            project,
            cell_km,
            present: counter(),
            futures: (0..n_futures)
                .map(|_| [counter(), counter(), counter()])
                .collect(),
            added: 0,
            overflow: false,
            cols: Vec::new(),
            xy: Vec::new(),
            member: Vec::new(),
        })
    }

    /// Add the cells of `row`: `present[c] == 1` marks the present range, `futures[f][c]`
    /// the change class of future f (1 stable, 3 and 4 gains); `dispersal` tells whether
    /// class 3 exists.
    pub(crate) fn add_row(&mut self, row: usize, present: &[u8], futures: &[&[u8]]) -> Result<()> {
        if self.overflow {
            return Ok(());
        }
        if self.added > MAX_AOO_CELLS {
            // Free the memory; the report says why the AOO is missing.
            self.overflow = true;
            self.present = AooCounter::new(1000.0);
            self.futures.clear();
            return Ok(());
        }
        self.member.clear();
        self.cols.clear();
        for c in 0..present.len() {
            let mut m = (present[c] == 1) as u64;
            for (f, cls) in futures.iter().enumerate() {
                let k = cls[c];
                let bits = match k {
                    1 => 0b111,
                    3 => 0b110,
                    4 => 0b100,
                    _ => 0,
                };
                m |= bits << (1 + 3 * f);
            }
            if m != 0 {
                self.member.push(m);
                self.cols.push(c as u32);
            }
        }
        if self.cols.is_empty() {
            return Ok(());
        }
        self.project.row(row, &self.cols, &mut self.xy)?;
        for (&m, &(x, y)) in self.member.iter().zip(&self.xy) {
            if m & 1 == 1 {
                self.present.add(x, y);
                self.added += 1;
            }
            for (f, cs) in self.futures.iter_mut().enumerate() {
                for (k, counter) in cs.iter_mut().enumerate() {
                    if (m >> (1 + 3 * f + k)) & 1 == 1 {
                        counter.add(x, y);
                        self.added += 1;
                    }
                }
            }
        }
        Ok(())
    }
}
