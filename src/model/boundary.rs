//! The boundary corners of every patch, found from two rows of runs at a time.
//!
//! A grid corner lies on the boundary of patch P when at least one of the four cells around
//! it belongs to P and not all four do (cells off the raster belong to no patch; on a wrapping
//! grid column `width - 1` neighbours column 0). These are the only points the distances
//! between patches and the convex hull need: the nearest points of two unions of north-up
//! cells are cell corners on their boundaries, and a hull vertex is a boundary point.
//!
//! Corner line L runs between rows L - 1 and L (L = 0 is the raster's north edge). Along a
//! line the runs of the two rows cut the columns into stretches where the cell above and the
//! cell below do not change, so the work is O(runs + boundary corners).

use super::{RangeModel, Run};
use crate::Result;
use rayon::prelude::*;

/// Corner lines per parallel band of [`RangeModel::boundary_corners`].
const BAND_LINES: usize = 1024;

/// Boundary corners grouped by patch: the corners of patch id `p` are
/// `line[start[p - 1]..start[p]]` and `col[..]` alike, in (line, column) order.
#[derive(Debug, Default)]
pub struct BoundaryCorners {
    /// Corner offsets per patch (`patches + 1` entries).
    pub start: Vec<usize>,
    /// Corner line of each corner (0 = the raster's north edge).
    pub line: Vec<u32>,
    /// Corner column of each corner (0..width, or 0..=width on a grid that does not wrap).
    pub col: Vec<u32>,
}

impl BoundaryCorners {
    /// Number of corners.
    pub fn len(&self) -> usize {
        self.line.len()
    }

    /// Whether there is none.
    pub fn is_empty(&self) -> bool {
        self.line.is_empty()
    }

    /// The corner range of patch `id`.
    pub fn of(&self, id: u32) -> std::ops::Range<usize> {
        self.start[id as usize - 1]..self.start[id as usize]
    }
}

/// Patch id of the cell in column `c` of a row given by its sorted runs; 0 for none.
struct RowCursor<'a> {
    runs: &'a [Run],
}

impl RowCursor<'_> {
    /// The id at column `c` (binary search; rows are short lists of runs).
    fn at(&self, c: u32) -> u32 {
        let i = self.runs.partition_point(|r| r.end <= c);
        match self.runs.get(i) {
            Some(r) if r.start <= c => r.patch,
            _ => 0,
        }
    }
}

impl RangeModel {
    /// The boundary corners of every patch that `keep` selects (by id).
    pub fn boundary_corners(&self, keep: &(dyn Fn(u32) -> bool + Sync)) -> Result<BoundaryCorners> {
        let g = &self.grid;
        let (w, h) = (g.width as u32, g.height);
        let wrap = g.wraps_antimeridian();
        // Lines in bands on every core; a band reads the row above its first line too.
        // Entries come back in band order, so in (line, column) order as from one sweep.
        let bands: Vec<std::ops::Range<usize>> = (0..=h)
            .step_by(BAND_LINES)
            .map(|l| l..(l + BAND_LINES).min(h + 1))
            .collect();
        let per_band = bands
            .into_par_iter()
            .map(|lines| -> Result<Vec<(u32, u32, u32)>> {
                let mut entries = Vec::new(); // (patch, line, col)
                let mut prev: Vec<Run> = Vec::new();
                // Line l lies between rows l - 1 and l.
                self.for_rows(
                    lines.start.saturating_sub(1)..lines.end.min(h),
                    &mut |r, runs| {
                        if r + 1 > lines.start {
                            corners_of_line(r as u32, &prev, runs, w, wrap, keep, &mut entries);
                        }
                        prev.clear();
                        prev.extend_from_slice(runs);
                        Ok(())
                    },
                )?;
                if lines.end == h + 1 {
                    corners_of_line(h as u32, &prev, &[], w, wrap, keep, &mut entries);
                }
                Ok(entries)
            })
            .collect::<Result<Vec<_>>>()?;
        let entries: Vec<(u32, u32, u32)> = per_band.into_iter().flatten().collect();
        // Group by patch, keeping (line, column) order within each: a counting sort.
        let n = self.patches.len();
        let mut start = vec![0usize; n + 1];
        for e in &entries {
            start[e.0 as usize] += 1; // patch p counted at index p
        }
        for p in 1..=n {
            start[p] += start[p - 1]; // now start[p] = corners of patches 1..=p
        }
        let mut line = vec![0u32; entries.len()];
        let mut col = vec![0u32; entries.len()];
        let mut next = start.clone();
        for (p, l, c) in entries {
            let k = &mut next[p as usize - 1];
            line[*k] = l;
            col[*k] = c;
            *k += 1;
        }
        Ok(BoundaryCorners { start, line, col })
    }
}

/// Push (patch, line, column) for every boundary corner on line `l`.
fn corners_of_line(
    l: u32,
    above: &[Run],
    below: &[Run],
    w: u32,
    wrap: bool,
    keep: &dyn Fn(u32) -> bool,
    out: &mut Vec<(u32, u32, u32)>,
) {
    if above.is_empty() && below.is_empty() {
        return;
    }
    let (a, b) = (RowCursor { runs: above }, RowCursor { runs: below });
    // Columns where the cell above or below may change: run ends of both rows.
    // Each row's runs are in column order and apart, so its ends ascend: merge the two.
    let mut cuts: Vec<u32> = Vec::with_capacity(2 * (above.len() + below.len()) + 2);
    let mut x = above.iter().flat_map(|r| [r.start, r.end]).peekable();
    let mut y = below.iter().flat_map(|r| [r.start, r.end]).peekable();
    loop {
        let next = match (x.peek(), y.peek()) {
            (Some(&p), Some(&q)) if p <= q => x.next(),
            (Some(_), Some(_)) => y.next(),
            (Some(_), None) => x.next(),
            (None, _) => y.next(),
        };
        let Some(c) = next else { break };
        if cuts.last() != Some(&c) {
            cuts.push(c);
        }
    }
    debug_assert!(cuts.windows(2).all(|p| p[0] < p[1]));
    let last_col = if wrap { w - 1 } else { w };
    let west_of = |c: u32| -> Option<u32> {
        if c > 0 {
            Some(c - 1)
        } else if wrap {
            Some(w - 1)
        } else {
            None
        }
    };
    let cell = |cur: &RowCursor, c: Option<u32>| c.filter(|&c| c < w).map_or(0, |c| cur.at(c));
    let push = |ids: [u32; 4], c: u32, out: &mut Vec<(u32, u32, u32)>| {
        for (i, &p) in ids.iter().enumerate() {
            if p != 0 && !ids[..i].contains(&p) && ids.iter().any(|&q| q != p) && keep(p) {
                out.push((p, l, c));
            }
        }
    };
    // A corner at column c touches cells c - 1 and c of both rows. Corners at the cuts (and at
    // the raster edges) are tested one by one; between two cuts the four cells are the same
    // two above and two below, so the whole stretch is one case.
    let mut c = 0u32;
    let mut k = 0usize;
    while c <= last_col {
        // Test corner c itself.
        let wc = west_of(c);
        let ids = [
            cell(&a, wc),
            cell(&a, Some(c)),
            cell(&b, wc),
            cell(&b, Some(c)),
        ];
        push(ids, c, out);
        // The stretch of corners strictly after c up to the next cut (exclusive).
        while k < cuts.len() && cuts[k] <= c {
            k += 1;
        }
        let next = cuts
            .get(k)
            .copied()
            .unwrap_or(last_col + 1)
            .min(last_col + 1);
        if next > c + 1 {
            // Corners c+1 .. next-1 all see above = a.at(c), below = b.at(c) on both sides.
            let (up, down) = (cell(&a, Some(c)), cell(&b, Some(c)));
            if up != down {
                for cc in c + 1..next {
                    for p in [up, down] {
                        if p != 0 && keep(p) {
                            out.push((p, l, cc));
                        }
                    }
                }
            }
        }
        c = next;
    }
}

impl RangeModel {
    /// The corners' WGS84 (lon, lat), degrees: longitudes into [-180, 180) and latitudes
    /// clamped to [-90, 90] on a lon/lat grid; through PROJ on a projected one.
    pub fn corner_lonlat(&self, corners: &BoundaryCorners) -> Result<Vec<(f64, f64)>> {
        let gt = self.grid.geo_transform;
        let mut xs: Vec<f64> = corners
            .col
            .iter()
            .map(|&c| gt[0] + c as f64 * gt[1])
            .collect();
        let mut ys: Vec<f64> = corners
            .line
            .iter()
            .map(|&l| gt[3] + l as f64 * gt[5])
            .collect();
        if self.grid.geographic {
            for x in xs.iter_mut() {
                *x = crate::grid::normalise_lon(*x);
            }
            for y in ys.iter_mut() {
                *y = y.clamp(-90.0, 90.0);
            }
        } else {
            let to = crate::crs::LonLat::new(&self.grid)?;
            let ct = to.transform().expect("a projected grid has a transform");
            for (cx, cy) in xs.chunks_mut(65_536).zip(ys.chunks_mut(65_536)) {
                crate::crs::transform_points(ct, cx, cy, "range raster cell corners to WGS84")?;
            }
        }
        Ok(xs.into_iter().zip(ys).collect())
    }
}
