//! An independent reference for `areal change`, written apart from the library: brute force
//! over every pair of cells, GeographicLib (geographiclib-rs, Karney 2013) Inverse
//! distances, closed-form ellipsoidal cell areas (Snyder 1987, authalic latitude function
//! q), a plain breadth-first patch labeller. Only small grids.
#![allow(dead_code)]

pub mod fixtures;

use geographiclib_rs::{Geodesic, InverseGeodesic};

/// WGS84 (NIMA TR8350.2).
const A: f64 = 6_378_137.0;
const F: f64 = 1.0 / 298.257_223_563;

/// Area of a lon/lat cell on WGS84, m2: (a²/2)·Δλ·(q(φ2) − q(φ1)) with
/// q(φ) = (1−e²)[sinφ/(1−e²sin²φ) − 1/(2e)·ln((1−e sinφ)/(1+e sinφ))] (Snyder 1987, eq. 3-12).
pub fn lonlat_cell_area_m2(lat1: f64, lat2: f64, dlon_deg: f64) -> f64 {
    let e2 = F * (2.0 - F);
    let e = e2.sqrt();
    let q = |lat: f64| {
        let s = lat.to_radians().sin();
        (1.0 - e2)
            * (s / (1.0 - e2 * s * s) - (1.0 / (2.0 * e)) * ((1.0 - e * s) / (1.0 + e * s)).ln())
    };
    (A * A / 2.0 * dlon_deg.to_radians() * (q(lat2) - q(lat1))).abs()
}

/// A grid: size, geotransform, cell centres as WGS84 lon/lat, cell areas.
pub struct RefGrid {
    pub w: usize,
    pub h: usize,
    pub wrap: bool,
    /// Per cell (row-major): WGS84 (lon, lat) of the centre.
    pub centre: Vec<(f64, f64)>,
    /// Per cell: area, m2.
    pub area: Vec<f64>,
}

impl RefGrid {
    /// A lon/lat grid (degrees).
    pub fn lonlat(w: usize, h: usize, west: f64, north: f64, cell: f64) -> RefGrid {
        let mut centre = Vec::new();
        let mut area = Vec::new();
        for r in 0..h {
            let top = north - r as f64 * cell;
            for c in 0..w {
                centre.push((west + (c as f64 + 0.5) * cell, top - cell / 2.0));
                area.push(lonlat_cell_area_m2(top - cell, top, cell));
            }
        }
        RefGrid {
            w,
            h,
            wrap: (w as f64 * cell - 360.0).abs() < 1e-9,
            centre,
            area,
        }
    }
}

/// Inputs of the reference.
pub struct RefCase<'a> {
    pub grid: &'a RefGrid,
    pub present: &'a [f32],
    pub future: &'a [f32],
    pub nodata: f32,
    pub t: f64,
    /// Cells in M (None: whole raster).
    pub in_m: Option<&'a [bool]>,
    pub dispersal_m: Option<f64>,
}

fn is_data(v: f32, nodata: f32) -> bool {
    v.is_finite() && v != nodata
}

/// The change classes, cell for cell.
pub fn classes(c: &RefCase) -> Vec<u8> {
    let n = c.grid.w * c.grid.h;
    let range: Vec<usize> = (0..n)
        .filter(|&i| {
            is_data(c.present[i], c.nodata)
                && c.present[i] as f64 >= c.t
                && c.in_m.is_none_or(|m| m[i])
        })
        .collect();
    let geod = Geodesic::wgs84();
    (0..n)
        .map(|i| {
            if !is_data(c.present[i], c.nodata) || !is_data(c.future[i], c.nodata) {
                return 255;
            }
            let now = range.binary_search(&i).is_ok();
            let later = c.future[i] as f64 >= c.t;
            match (now, later) {
                (true, true) => 1,
                (true, false) => 2,
                (false, false) => 0,
                (false, true) => {
                    let Some(d) = c.dispersal_m else { return 4 };
                    let (lon, lat) = c.grid.centre[i];
                    let near = range.iter().any(|&j| {
                        let (lo2, la2) = c.grid.centre[j];
                        let s: f64 = geod.inverse(lat, lon, la2, lo2);
                        s <= d
                    });
                    if near {
                        3
                    } else {
                        4
                    }
                }
            }
        })
        .collect()
}

/// Geodesic distance, m.
pub fn distance_m(a: (f64, f64), b: (f64, f64)) -> f64 {
    Geodesic::wgs84().inverse(a.1, a.0, b.1, b.0)
}

/// Patches (8- or 4-connected, wrapping columns when `wrap`) of equal class 1..=4:
/// (class, cells) sorted.
pub fn patches(k: &[u8], w: usize, h: usize, wrap: bool, eight: bool) -> Vec<(u8, usize)> {
    let mut seen = vec![false; w * h];
    let mut out = Vec::new();
    for start in 0..w * h {
        let cls = k[start];
        if seen[start] || cls == 0 || cls == 255 {
            continue;
        }
        seen[start] = true;
        let mut stack = vec![start];
        let mut n = 0;
        while let Some(i) = stack.pop() {
            n += 1;
            let (r, c) = ((i / w) as i64, (i % w) as i64);
            for dr in -1..=1i64 {
                for dc in -1..=1i64 {
                    if (dr == 0 && dc == 0) || (!eight && dr != 0 && dc != 0) {
                        continue;
                    }
                    let (rr, mut cc) = (r + dr, c + dc);
                    if rr < 0 || rr >= h as i64 {
                        continue;
                    }
                    if cc < 0 || cc >= w as i64 {
                        if !wrap {
                            continue;
                        }
                        cc = cc.rem_euclid(w as i64);
                    }
                    let j = rr as usize * w + cc as usize;
                    if !seen[j] && k[j] == cls {
                        seen[j] = true;
                        stack.push(j);
                    }
                }
            }
        }
        out.push((cls, n));
    }
    out.sort();
    out
}

/// Sum of cell areas of class `k`, km2 (optionally only in M).
pub fn area_km2(cls: &[u8], g: &RefGrid, k: u8, in_m: Option<&[bool]>) -> f64 {
    (0..cls.len())
        .filter(|&i| cls[i] == k && in_m.is_none_or(|m| m[i]))
        .map(|i| g.area[i])
        .sum::<f64>()
        / 1e6
}

/// Deterministic pseudo-random numbers in [0, 1) (a 64-bit LCG, Knuth's MMIX constants).
pub struct Lcg(pub u64);
impl Lcg {
    pub fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A smooth-ish random field: sum of a few bumps plus noise, in [0, 1].
pub fn field(w: usize, h: usize, seed: u64) -> Vec<f32> {
    let mut rng = Lcg(seed);
    let bumps: Vec<(f64, f64, f64)> = (0..6)
        .map(|_| {
            (
                rng.next() * w as f64,
                rng.next() * h as f64,
                2.0 + rng.next() * 5.0,
            )
        })
        .collect();
    let mut v = Vec::with_capacity(w * h);
    for r in 0..h {
        for c in 0..w {
            let s: f64 = bumps
                .iter()
                .map(|&(x, y, s)| {
                    let d2 = (c as f64 - x).powi(2) + (r as f64 - y).powi(2);
                    (-d2 / (2.0 * s * s)).exp()
                })
                .sum();
            v.push((s.min(1.0) * 0.85 + rng.next() * 0.15) as f32);
        }
    }
    v
}
