//! Where the map looks and how its pixels relate to the Earth: the frame, pixel <-> lon/lat,
//! graticule lines and the scale bar.

use super::image::Window;
use crate::crs::{grid_srs, transform, wgs84};
use crate::normalise_lon;
use crate::{GridSpec, Result};
use gdal::spatial_ref::CoordTransform;
use geographiclib_rs::{Geodesic, InverseGeodesic};

/// Pixel positions of a map window to and from WGS84 lon/lat.
pub struct MapGeo {
    grid: GridSpec,
    window: Window,
    /// Grid CRS -> WGS84, None on geographic grids.
    to_ll: Option<CoordTransform>,
    /// WGS84 -> grid CRS, None on geographic grids.
    from_ll: Option<CoordTransform>,
}

impl MapGeo {
    /// For `window` of `grid`.
    pub fn new(grid: &GridSpec, window: Window) -> Result<Self> {
        let (to_ll, from_ll) = if grid.geographic {
            (None, None)
        } else {
            let (g, w) = (grid_srs(grid)?, wgs84()?);
            (
                Some(transform(&g, &w, "raster CRS to WGS84 (map)")?),
                Some(transform(&w, &g, "WGS84 to the raster CRS (map)")?),
            )
        };
        Ok(MapGeo {
            grid: grid.clone(),
            window,
            to_ll,
            from_ll,
        })
    }

    /// Grid (col, row), continuous, to image pixel (x, y).
    pub fn cell_to_px(&self, col: f64, row: f64) -> (f64, f64) {
        let w = &self.window;
        let f = w.factor as f64;
        let mut c = col - w.col0 as f64;
        if self.grid.wraps_antimeridian() && c < 0.0 {
            c += self.grid.width as f64;
        }
        (c / f, (row - w.row0 as f64) / f)
    }

    /// Image pixel (x, y) to lon/lat (longitude unwrapped: may pass 180).
    pub fn px_to_lonlat(&self, x: f64, y: f64) -> Option<(f64, f64)> {
        let w = &self.window;
        let f = w.factor as f64;
        let gt = self.grid.geo_transform;
        let (gx, gy) = (
            gt[0] + (w.col0 as f64 + x * f) * gt[1],
            gt[3] + (w.row0 as f64 + y * f) * gt[5],
        );
        match &self.to_ll {
            None => Some((gx, gy)),
            Some(ct) => {
                let (mut xs, mut ys) = ([gx], [gy]);
                ct.transform_coords(&mut xs, &mut ys, &mut []).ok()?;
                (xs[0].is_finite() && ys[0].is_finite()).then_some((xs[0], ys[0]))
            }
        }
    }

    /// Lon/lat to image pixel (x, y); on geographic grids the longitude is taken by whole
    /// turns to the one nearest the window.
    pub fn lonlat_to_px(&self, lon: f64, lat: f64) -> Option<(f64, f64)> {
        let gt = self.grid.geo_transform;
        let (gx, gy) = match &self.from_ll {
            None => {
                let (x_left, _) = self.px_to_lonlat(0.0, 0.0)?;
                let span = self.window.cols as f64 * gt[1];
                let mid = x_left + span / 2.0;
                (mid + normalise_lon(lon - mid), lat)
            }
            Some(ct) => {
                let (mut xs, mut ys) = ([lon], [lat]);
                ct.transform_coords(&mut xs, &mut ys, &mut []).ok()?;
                (xs[0], ys[0])
            }
        };
        let col = (gx - gt[0]) / gt[1];
        let row = (gy - gt[3]) / gt[5];
        let w = &self.window;
        let f = w.factor as f64;
        Some(((col - w.col0 as f64) / f, (row - w.row0 as f64) / f))
    }

    /// Kilometres per image pixel along the horizontal through the image centre (geodesic
    /// on WGS84: true at the map's centre).
    pub fn km_per_px_at_centre(&self, iw: f64, ih: f64) -> Option<f64> {
        let (cx, cy) = (iw / 2.0, ih / 2.0);
        let d = (iw / 10.0).max(1.0);
        let (lon1, lat1) = self.px_to_lonlat(cx - d, cy)?;
        let (lon2, lat2) = self.px_to_lonlat(cx + d, cy)?;
        let s: f64 = Geodesic::wgs84().inverse(lat1, lon1, lat2, lon2);
        (s > 0.0).then_some(s / 1000.0 / (2.0 * d))
    }
}

/// A round length (1, 2 or 5 times a power of ten) not above `x`.
pub fn round_length(x: f64) -> f64 {
    let p = 10f64.powf(x.log10().floor());
    [5.0, 2.0, 1.0]
        .into_iter()
        .map(|m| m * p)
        .find(|&v| v <= x)
        .unwrap_or(p)
}

/// A graticule step in degrees giving about 3 to 8 lines over `span` degrees.
pub fn graticule_step(span: f64) -> f64 {
    const STEPS: [f64; 13] = [
        0.01, 0.02, 0.05, 0.1, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 60.0,
    ];
    STEPS.into_iter().find(|s| span / s <= 8.0).unwrap_or(90.0)
}

/// A degree label: `20°E`, `5.5°S`, `0°`, `180°`.
pub fn degree_label(v: f64, is_lon: bool) -> String {
    let v = if is_lon { normalise_lon(v) } else { v };
    let v = if is_lon && (v + 180.0).abs() < 1e-9 {
        180.0
    } else {
        v
    };
    let a = v.abs();
    let num = if (a - a.round()).abs() < 1e-9 {
        format!("{}", a.round())
    } else {
        let s = format!("{a:.2}");
        s.trim_end_matches('0').to_string()
    };
    let hemi = match (is_lon, v) {
        (_, x) if x.abs() < 1e-9 || (is_lon && (a - 180.0).abs() < 1e-9) => "",
        (true, x) if x > 0.0 => "E",
        (true, _) => "W",
        (false, x) if x > 0.0 => "N",
        (false, _) => "S",
    };
    format!("{num}°{hemi}")
}

/// The frame: the smallest window holding every occupied column bin and row (class-1
/// cells, M, records), padded; whole rows/columns when it would cover most of the grid.
///
/// `col_bins[i]` tells whether any content lies in grid columns `i*bin..(i+1)*bin`;
/// `rows` is the content's row range. On a wrapping grid the column interval is circular:
/// the frame leaves out the largest empty gap, so a range across the antimeridian is one
/// piece.
pub fn choose_frame(
    grid: &GridSpec,
    col_bins: &[bool],
    bin: usize,
    rows: Option<(usize, usize)>,
) -> (usize, usize, usize, usize) {
    let (w, h) = (grid.width, grid.height);
    let wraps = grid.wraps_antimeridian();
    let (Some((r0, r1)), true) = (rows, col_bins.iter().any(|&b| b)) else {
        return (0, 0, w, h);
    };
    let nb = col_bins.len();
    // Column interval [c0, c1) in bins, possibly c1 > nb on a wrapping grid.
    let (b0, b1) = if wraps {
        // Largest circular run of empty bins.
        let (mut best_len, mut best_end) = (0usize, 0usize);
        let mut run = 0usize;
        for i in 0..2 * nb {
            if col_bins[i % nb] {
                run = 0;
            } else {
                run += 1;
                if run > best_len && run <= nb {
                    best_len = run;
                    best_end = i + 1;
                }
            }
        }
        if best_len == 0 {
            (0, nb)
        } else {
            let start = best_end % nb;
            (start, start + nb - best_len)
        }
    } else {
        let first = col_bins.iter().position(|&b| b).unwrap_or(0);
        let last = col_bins.iter().rposition(|&b| b).unwrap_or(nb - 1);
        (first, last + 1)
    };
    let (mut c0, mut c1) = (
        b0 * bin,
        (b1 * bin).min(if wraps { b0 * bin + w } else { w }),
    );
    let (mut rr0, mut rr1) = (r0, r1 + 1);
    // Pad by 8% of the larger side (at least 2 cells).
    let pad = ((c1 - c0).max(rr1 - rr0) as f64 * 0.08).ceil() as usize + 2;
    rr0 = rr0.saturating_sub(pad);
    rr1 = (rr1 + pad).min(h);
    if wraps {
        c0 = (c0 + w - pad.min(w)) % w;
        c1 = c0 + ((c1 - b0 * bin) + 2 * pad).min(w);
        if c1 - c0 >= w {
            // Whole width: start at the middle of the largest gap (0 when nothing crosses
            // the seam).
            let crosses = col_bins[0] && col_bins[nb - 1];
            let gap = (nb - (b1 - b0)) * bin;
            c0 = if crosses { (b1 * bin + gap / 2) % w } else { 0 };
            c1 = c0 + w;
        }
    } else {
        c0 = c0.saturating_sub(pad);
        c1 = (c1 + pad).min(w);
    }
    // Most of the grid anyway: show it whole.
    let (cols, nrows) = (c1 - c0, rr1 - rr0);
    if cols as f64 >= 0.85 * w as f64 && nrows as f64 >= 0.85 * h as f64 {
        let start = if wraps && cols >= w { c0 } else { 0 };
        return (start, 0, w, h);
    }
    (c0, rr0, cols, nrows)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_and_steps() {
        assert_eq!(degree_label(20.0, true), "20°E");
        assert_eq!(degree_label(-5.5, false), "5.5°S");
        assert_eq!(degree_label(190.0, true), "170°W");
        assert_eq!(degree_label(-180.0, true), "180°");
        assert_eq!(degree_label(0.0, false), "0°");
        assert_eq!(graticule_step(360.0), 60.0);
        assert_eq!(graticule_step(5.0), 1.0);
        assert_eq!(round_length(740.0), 500.0);
        assert_eq!(round_length(0.3), 0.2);
    }

    #[test]
    fn a_range_across_the_seam_of_a_global_grid_is_framed_in_one_piece() {
        // 360 x 180 one-degree grid; content in the first and last 10 columns (170E..170W).
        let grid = GridSpec::lonlat(360, 180, -180.0, 90.0, 1.0);
        let bins: Vec<bool> = (0..360).map(|c| !(10..350).contains(&c)).collect();
        let (c0, r0, cols, rows) = choose_frame(&grid, &bins, 1, Some((80, 99)));
        // Starts west of column 350 and runs across the seam, not 340 columns wide.
        assert!(c0 < 350 && c0 > 300, "c0 {c0}");
        assert!(c0 + cols > 370 && cols < 60, "cols {cols}");
        assert!(r0 < 80 && r0 + rows > 100);
    }
}
