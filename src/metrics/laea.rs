//! Cell centres of grid rows into the AOO grid's Lambert azimuthal equal-area CRS.
//!
//! On a WGS84 lon/lat grid the forward projection is done here, row by row: every cell of a
//! row has the same latitude, so its authalic latitude and the row's constants are computed
//! once, and each cell costs one sine and cosine of its longitude difference. Formulas: the
//! ellipsoidal oblique LAEA of Snyder (1987), USGS Professional Paper 1395, eqs. 3-12 (q),
//! 24-2, 24-3 and 24-10 to 24-14, as PROJ's `laea` uses them. Other grids (projected, another
//! datum, or an AOO grid centred within 0.01 degrees of a pole, where the oblique formulas
//! degenerate) go through PROJ.

use super::aoo::AooSpec;
use crate::area::Ellipsoid;
use crate::{GridSpec, Result};
use gdal::spatial_ref::CoordTransform;

/// Projects the cell centres of one row at a time.
pub(crate) enum RowProjector {
    /// The closed form on WGS84.
    Laea(Laea),
    /// PROJ, for every other grid.
    Proj {
        ct: CoordTransform,
        gt: [f64; 6],
        xs: Vec<f64>,
        ys: Vec<f64>,
    },
}

/// Constants of an oblique ellipsoidal LAEA, and the source grid's geotransform.
pub(crate) struct Laea {
    e: f64,
    e2: f64,
    qp: f64,
    rq: f64,
    d: f64,
    sin_b1: f64,
    cos_b1: f64,
    gt: [f64; 6],
    /// Per column of the grid, the sine and cosine of its centre's longitude difference
    /// (the same for every row, so computed once).
    sin_cos_dlon: Vec<(f64, f64)>,
}

/// Snyder's q (eq. 3-12) for sin(phi).
fn q(e: f64, e2: f64, s: f64) -> f64 {
    (1.0 - e2) * (s / (1.0 - e2 * s * s) - (1.0 / (2.0 * e)) * ((1.0 - e * s) / (1.0 + e * s)).ln())
}

impl Laea {
    /// The projection centred at (`lon0`, `lat0`) for a grid of `width` columns with
    /// geotransform `gt`.
    fn new(lon0: f64, lat0: f64, gt: [f64; 6], width: usize) -> Laea {
        let ell = Ellipsoid::WGS84;
        let (a, e2) = (ell.a, ell.e2());
        let e = e2.sqrt();
        let qp = q(e, e2, 1.0);
        let rq = a * (qp / 2.0).sqrt();
        let s1 = lat0.to_radians().sin();
        let sin_b1 = q(e, e2, s1) / qp;
        let cos_b1 = (1.0 - sin_b1 * sin_b1).sqrt();
        let m1 = lat0.to_radians().cos() / (1.0 - e2 * s1 * s1).sqrt();
        let d = a * m1 / (rq * cos_b1);
        let sin_cos_dlon = (0..width)
            .map(|c| {
                let lon = gt[0] + (c as f64 + 0.5) * gt[1];
                (lon - lon0).to_radians().sin_cos()
            })
            .collect();
        Laea {
            e,
            e2,
            qp,
            rq,
            d,
            sin_b1,
            cos_b1,
            gt,
            sin_cos_dlon,
        }
    }

    /// Project the centres of the columns of `runs` (`start..end`) of the row at latitude
    /// `lat` (degrees), appending (x, y) to `out`.
    pub(crate) fn row_at(&self, lat: f64, runs: &[(u32, u32)], out: &mut Vec<(f64, f64)>) {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU has AVX2 (checked just above).
            return unsafe { self.row_at_avx2(lat, runs, out) };
        }
        self.row_at_body(lat, runs, out)
    }

    /// [`Laea::row_at`] compiled for AVX2: the same operations in the same order (no fused
    /// multiply-add is formed), so the same coordinates.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn row_at_avx2(&self, lat: f64, runs: &[(u32, u32)], out: &mut Vec<(f64, f64)>) {
        self.row_at_body(lat, runs, out)
    }

    #[inline(always)]
    fn row_at_body(&self, lat: f64, runs: &[(u32, u32)], out: &mut Vec<(f64, f64)>) {
        let sin_b = (q(self.e, self.e2, lat.to_radians().sin()) / self.qp).clamp(-1.0, 1.0);
        let cos_b = (1.0 - sin_b * sin_b).sqrt();
        for &(a, b) in runs {
            out.extend(
                self.sin_cos_dlon[a as usize..b as usize]
                    .iter()
                    .map(|&(sl, cl)| {
                        let b = self.rq
                            * (2.0 / (1.0 + self.sin_b1 * sin_b + self.cos_b1 * cos_b * cl)).sqrt();
                        (
                            b * self.d * cos_b * sl,
                            (b / self.d) * (self.cos_b1 * sin_b - self.sin_b1 * cos_b * cl),
                        )
                    }),
            );
        }
    }
}

/// WGS84 (lon, lat) points (degrees) in the LAEA centred at `centre`, by the closed form of
/// [`Laea::row_at`] (within a fraction of a millimetre of PROJ, tests_aoo.rs); `None` near
/// the poles' centres or when a point has no image (the antipode).
pub(crate) fn project_points(
    centre: (f64, f64),
    pts: &[(f64, f64)],
) -> Option<(Vec<f64>, Vec<f64>)> {
    if centre.1.abs() >= 89.99 {
        return None;
    }
    let l = Laea::new(centre.0, centre.1, [0.0; 6], 0);
    let (mut xs, mut ys) = (Vec::with_capacity(pts.len()), Vec::with_capacity(pts.len()));
    for &(lon, lat) in pts {
        let sin_b = (q(l.e, l.e2, lat.to_radians().sin()) / l.qp).clamp(-1.0, 1.0);
        let cos_b = (1.0 - sin_b * sin_b).sqrt();
        let (sl, cl) = (lon - centre.0).to_radians().sin_cos();
        let b = l.rq * (2.0 / (1.0 + l.sin_b1 * sin_b + l.cos_b1 * cos_b * cl)).sqrt();
        let (x, y) = (
            b * l.d * cos_b * sl,
            (b / l.d) * (l.cos_b1 * sin_b - l.sin_b1 * cos_b * cl),
        );
        if !(x.is_finite() && y.is_finite()) {
            return None;
        }
        xs.push(x);
        ys.push(y);
    }
    Some((xs, ys))
}

/// Half widths (x, y), metres, of the region an oblique ellipsoidal LAEA on WGS84 centred at
/// latitude `lat0` (degrees) maps the ellipsoid into: |x| <= 2 Rq D and |y| <= 2 Rq / D, since
/// x / D and y D are the spherical LAEA of radius Rq on the authalic sphere, whose image is the
/// disk of radius 2 Rq (Snyder 1987, eqs. 24-10 to 24-14). D = 1 at the poles.
pub(crate) fn disk_half_widths(lat0: f64) -> (f64, f64) {
    let l = Laea::new(0.0, lat0, [0.0; 6], 0);
    let d = if l.d.is_finite() && l.d > 0.0 {
        l.d
    } else {
        1.0
    };
    (2.0 * l.rq * d, 2.0 * l.rq / d)
}

impl RowProjector {
    pub(crate) fn new(aoo: &AooSpec, grid: &GridSpec) -> Result<RowProjector> {
        let (lon0, lat0) = aoo.centre;
        let src = crate::crs::grid_srs(grid)?;
        let on_wgs84 =
            grid.geographic && (grid.crs_wkt.trim().is_empty() || src == crate::crs::wgs84()?);
        if on_wgs84 && lat0.abs() < 89.99 {
            return Ok(RowProjector::Laea(Laea::new(
                lon0,
                lat0,
                grid.geo_transform,
                grid.width,
            )));
        }
        Ok(RowProjector::Proj {
            ct: crate::crs::transform(
                &src,
                &crate::crs::from_proj4(&aoo.proj, "AOO grid CRS")?,
                "AOO grid CRS",
            )?,
            gt: grid.geo_transform,
            xs: Vec::new(),
            ys: Vec::new(),
        })
    }

    /// Project the centres of the columns of `runs` (`start..end`, in order) in grid row
    /// `row`, appending (x, y) metres to `out` (cleared first).
    pub(crate) fn row(
        &mut self,
        row: usize,
        runs: &[(u32, u32)],
        out: &mut Vec<(f64, f64)>,
    ) -> Result<()> {
        out.clear();
        match self {
            RowProjector::Laea(l) => {
                let lat = l.gt[3] + (row as f64 + 0.5) * l.gt[5];
                l.row_at(lat, runs, out);
            }
            RowProjector::Proj { ct, gt, xs, ys } => {
                let y = gt[3] + (row as f64 + 0.5) * gt[5];
                let cols: Vec<u32> = runs.iter().flat_map(|&(a, b)| a..b).collect();
                for chunk in cols.chunks(65_536) {
                    xs.clear();
                    ys.clear();
                    xs.extend(chunk.iter().map(|&c| gt[0] + (c as f64 + 0.5) * gt[1]));
                    ys.resize(xs.len(), y);
                    crate::crs::transform_points(ct, xs, ys, "range cells to the AOO grid CRS")?;
                    out.extend(xs.iter().copied().zip(ys.iter().copied()));
                }
            }
        }
        Ok(())
    }
}
