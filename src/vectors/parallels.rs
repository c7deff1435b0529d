//! Lon/lat polygons whose geodesic area is their cell area: vertices inserted along parallels.
//!
//! A pixel edge along a parallel is not a geodesic. Tools that measure a polygon with geodesic
//! edges (GeographicLib, PROJ's geod, QGIS's ellipsoidal measure) take the shortest path
//! between its two ends, which runs poleward of the parallel. On a sphere of radius R the area
//! between a parallel at latitude φ and the geodesic through two of its points Δλ apart
//! (radians) is, to leading order in Δλ,
//!
//! `e(φ, Δλ) = R² · sin φ · cos² φ · Δλ³ / 12`
//!
//! (the geodesic's offset from the parallel is `sin φ cos φ (Δλ²/8 − λ²/2)` at longitude λ from
//! the middle; integrate `R² cos φ` times it). On the ellipsoid the parallel's geodesic curvature
//! is tan φ / N, which gives the same expression with R = N(φ), the prime-vertical radius.
//! Cutting the edge into n equal pieces divides its error by n². With the region on the
//! left of every edge, the geodesic adds the area of top edges (going west) and removes that of
//! bottom edges in the northern hemisphere (mirrored in the south), so the polygon's error is
//!
//! `E(d) = −Σ sign · N²(φ) sin φ cos² φ · |Δλ| · p² / 12`, p = |Δλ| / ceil(|Δλ| / d),
//!
//! over its parallel edges, each cut into pieces no longer than d. Top and bottom edges of the
//! same span cancel, which is why a compact polygon of small cells needs nothing; a long edge
//! facing short ones does. The rule, per polygon (exterior and holes): d is the longest edge
//! span D when that fits, else the largest d below it (halving, then 8 bisection steps) for
//! which
//!
//! `|E(d)| + B(d) ≤ EPS · A`,
//!
//! where A is the polygon's exact area (sums of `(a²/2) Δλ q(φ)` over its parallel edges,
//! Snyder 1987 eq. 3-12) and B(d) charges what the leading-order formula may miss on each
//! term x of E, which cancellation must not hide: `B = Σ |x| (TAU2 · p² + TAU0)`. Measured
//! against GeographicLib on one-row strips (1° to 30" cells, 1° to 80° latitude, pieces of one
//! cell to 30°), the formula's relative error per edge is below 0.17 p² (p in radians) plus
//! 4e-5; TAU2 = 0.25 and TAU0 = 1e-4 leave a margin. Edges on a pole (zero length) are never
//! cut.

use super::trace::PixelPolygon;
use crate::area::Ellipsoid;
use crate::GridSpec;
use geo_types::{Coord, LineString, Polygon};

/// Target: the geodesic area of a polygon is within EPS (relative) of its cell area.
pub(crate) const EPS: f64 = 0.5e-6;
/// Charge per term of E for what the leading-order formula may miss: x (TAU2 p² + TAU0).
const TAU2: f64 = 0.25;
const TAU0: f64 = 1e-4;

/// Lon/lat polygon (the grid's own longitudes, not wrapped) of a pixel polygon on a
/// geographic grid, with parallels cut by the rule above; also the vertices added.
pub(crate) fn lonlat_polygon(p: &PixelPolygon, grid: &GridSpec) -> (Polygon<f64>, usize) {
    let gt = grid.geo_transform;
    let lon = |c: u32| gt[0] + c as f64 * gt[1];
    let lat = |r: u32| gt[3] + r as f64 * gt[5];
    let rings: Vec<&[(u32, u32)]> = std::iter::once(p.exterior.as_slice())
        .chain(p.holes.iter().map(|h| h.as_slice()))
        .collect();
    // Parallel edges: (latitude deg, signed span deg).
    let mut edges: Vec<(f64, f64)> = Vec::new();
    for ring in &rings {
        for w in ring.windows(2) {
            if w[0].1 == w[1].1 && w[0].0 != w[1].0 {
                edges.push((lat(w[0].1), lon(w[1].0) - lon(w[0].0)));
            }
        }
    }
    let d = piece_deg(&edges);
    let mut added = 0;
    let mut line = |ring: &[(u32, u32)]| {
        let mut out = Vec::with_capacity(ring.len());
        for w in ring.windows(2) {
            let (x0, y0, x1) = (lon(w[0].0), lat(w[0].1), lon(w[1].0));
            out.push(Coord { x: x0, y: y0 });
            if w[0].1 == w[1].1 && y0.abs() < 90.0 - 1e-9 {
                let n = ((x1 - x0).abs() / d).ceil().max(1.0) as usize;
                for i in 1..n {
                    out.push(Coord {
                        x: x0 + (x1 - x0) * i as f64 / n as f64,
                        y: y0,
                    });
                }
                added += n - 1;
            }
        }
        let last = ring[ring.len() - 1];
        out.push(Coord {
            x: lon(last.0),
            y: lat(last.1),
        });
        LineString(out)
    };
    let ext = line(rings[0]);
    let holes = rings[1..].iter().map(|r| line(r)).collect();
    (Polygon::new(ext, holes), added)
}

/// The longest piece (degrees of longitude) for parallel edges (latitude, signed span) of one
/// polygon, by the rule of the module docs; infinite when no edge needs cutting.
pub(crate) fn piece_deg(edges: &[(f64, f64)]) -> f64 {
    let ell = Ellipsoid::WGS84;
    let e2 = ell.e2();
    // Exact area: -(a²/2) Σ q(φ) Δλ, taken relative to the first latitude for precision.
    let Some(&(lat0, _)) = edges.first() else {
        return f64::INFINITY;
    };
    let phi0 = lat0.to_radians();
    let area: f64 = -0.5
        * ell.a
        * ell.a
        * edges
            .iter()
            .map(|&(lat, dl)| ell.q_diff(phi0, lat.to_radians()) * dl.to_radians())
            .sum::<f64>();
    // Per edge: k = N² sin φ cos² φ / 12 (signed), span |Δλ| in radians, direction sign.
    let terms: Vec<(f64, f64, f64)> = edges
        .iter()
        .filter(|e| e.0.abs() < 90.0 - 1e-9)
        .map(|&(lat, dl)| {
            let (s, c) = lat.to_radians().sin_cos();
            let n2 = ell.a * ell.a / (1.0 - e2 * s * s);
            (n2 * s * c * c / 12.0, dl.abs().to_radians(), dl.signum())
        })
        .collect();
    let max_span = terms.iter().map(|t| t.1).fold(0.0, f64::max);
    let budget = EPS * area.abs();
    let estimate = |d: f64| -> (f64, f64) {
        let (mut e, mut b) = (0.0, 0.0);
        for &(k, span, sign) in &terms {
            let p = span / (span / d).ceil().max(1.0);
            let x = k * span * p * p;
            e -= sign * x;
            b += x.abs() * (TAU2 * p * p + TAU0);
        }
        (e, b)
    };
    let fits = |d: f64| {
        let (e, b) = estimate(d);
        e.abs() + b <= budget
    };
    if max_span == 0.0 || fits(max_span) {
        return f64::INFINITY;
    }
    // Halve until it fits, then bisect between the last two (the pieces only shrink).
    let mut d = max_span / 2.0;
    let mut k = 0;
    while !fits(d) && k < 60 {
        d /= 2.0;
        k += 1;
    }
    let (mut lo, mut hi) = (d, 2.0 * d);
    for _ in 0..8 {
        let mid = 0.5 * (lo + hi);
        if fits(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo.to_degrees()
}
