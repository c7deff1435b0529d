//! Geodesics between patch corners, and the bounds that spare most of them: the chord below,
//! the rolling ball below, Schur's comparison above; and a cache keyed by what GeographicLib's
//! Inverse depends on.
//!
//! Distances are geodesics on WGS84 (Karney 2013, geographiclib-rs `Inverse`), in metres.

use crate::access::buffer::{m_min, unit};
use crate::area::Ellipsoid;
use geographiclib_rs::{Geodesic, InverseGeodesic};
use rustc_hash::FxHashMap;

/// Geodesics kept for reuse per cache (about 50 MB).
const CACHE_ENTRIES: usize = 1 << 20;

/// GeographicLib's `AngDiff` (geographiclib-rs `geomath::ang_diff`, which is not public):
/// `y - x` reduced to [-180, 180] as an exact sum `d + t`.
fn ang_diff(x: f64, y: f64) -> (f64, f64) {
    fn sum(u: f64, v: f64) -> (f64, f64) {
        let s = u + v;
        let up = s - v;
        let vpp = s - up;
        (s, -((up - u) + (vpp - v)))
    }
    fn normalise(x: f64) -> f64 {
        let z = if x.is_finite() { x % 360.0 } else { f64::NAN };
        let z = if x == 0.0 { x } else { z };
        let y = if z < -180.0 {
            z + 360.0
        } else if z < 180.0 {
            z
        } else {
            z - 360.0
        };
        if y == -180.0 {
            180.0
        } else {
            y
        }
    }
    let (d, t) = sum(normalise(-x), normalise(y));
    let d = normalise(d);
    if d == 180.0 && t > 0.0 {
        sum(-180.0, t)
    } else {
        sum(d, t)
    }
}

/// The inputs GeographicLib's Inverse uses (both latitudes and the longitude difference as
/// `AngDiff` gives it): equal keys give bit-identical geodesics, by the ellipsoid's symmetry
/// about its axis.
fn inverse_key(a: (f64, f64), b: (f64, f64)) -> [u64; 4] {
    let (d, t) = ang_diff(a.1, b.1);
    [a.0.to_bits(), b.0.to_bits(), d.to_bits(), t.to_bits()]
}

/// Earth-centred coordinates (metres) of the point at geodetic (lat, lon) degrees on WGS84.
pub(crate) fn ecef(lat: f64, lon: f64) -> [f64; 3] {
    let ell = Ellipsoid::WGS84;
    let e2 = ell.e2();
    let (sp, cp) = lat.to_radians().sin_cos();
    let (sl, cl) = lon.to_radians().sin_cos();
    let n = ell.a / (1.0 - e2 * sp * sp).sqrt();
    [n * cp * cl, n * cp * sl, n * (1.0 - e2) * sp]
}

/// The squared chord to search within for geodesics up to `s_m` metres (a chord is never
/// longer than its geodesic), with a hair of margin for rounding.
pub(crate) fn search_bound(s_m: f64) -> f64 {
    if !s_m.is_finite() {
        return f64::INFINITY;
    }
    let b = s_m * (1.0 + 1e-9) + 1e-6;
    b * b
}

/// A lower bound (metres) on the geodesic between the points at (lat, lon) `a` and `b` (ECEF
/// `xa`, `xb`, metres).
///
/// A ball inside the ellipsoid touching it at a point t: projecting onto a convex set never
/// lengthens a curve, and the geodesic projects to a curve on the ball's sphere joining the
/// projections of `a` and `b`, so the geodesic is at least the great-circle arc between them,
/// r times the angle they make at the centre. The ball touches at the point of mean latitude
/// φ and longitude, and is the largest that does: radius r = (1 - e²) N(φ), centre on the
/// equatorial plane where the normal at t meets it (at e² N(φ) cos φ from the axis). That ball
/// lies inside the ellipsoid because its centre's nearest surface points are t and its mirror
/// image at -φ, at distance r: in the meridian plane of the centre, the squared distance to
/// the surface point of reduced latitude β is (a² - b²) cos² β - 2 a x0 cos β + x0² + b², least
/// at cos β = x0 / (a e²), where it equals b²(1 - x0² / (a² e²)) = r² (the medial axis of
/// the ellipse; any other meridian plane is farther). At the equator r = a(1 - e²), the
/// smallest radius of curvature of WGS84 (Blaschke's rolling ball), at the poles r = b.
/// The bound is about 10 m short at 1,000 km, where the chord is 1 km short. A relative 1e-9
/// and 1 µm are taken off for rounding.
pub(crate) fn ball_bound(a: (f64, f64), b: (f64, f64), xa: &[f64; 3], xb: &[f64; 3]) -> f64 {
    let (c, r) = midpoint_ball(a, b);
    let u = [xa[0] - c[0], xa[1] - c[1], xa[2] - c[2]];
    let v = [xb[0] - c[0], xb[1] - c[1], xb[2] - c[2]];
    let dot = u[0] * v[0] + u[1] * v[1] + u[2] * v[2];
    let cross = [
        u[1] * v[2] - u[2] * v[1],
        u[2] * v[0] - u[0] * v[2],
        u[0] * v[1] - u[1] * v[0],
    ];
    let sin = (cross[0] * cross[0] + cross[1] * cross[1] + cross[2] * cross[2]).sqrt();
    // atan2 keeps the angle accurate when it is small (acos would not).
    let angle = sin.atan2(dot);
    angle * r * (1.0 - 1e-9) - 1e-6
}

/// The largest ball inside WGS84 that touches it at geodetic (lat, lon) degrees: its centre
/// (ECEF, metres) and radius (1 - e²) N(φ) (see [`ball_bound`] for why it lies inside).
pub(crate) fn inscribed_ball(lat: f64, lon: f64) -> ([f64; 3], f64) {
    let ell = Ellipsoid::WGS84;
    let e2 = ell.e2();
    // The touching point is t = N (n_x, n_y, (1 - e²) n_z) for the unit normal n, so the
    // centre t - r n = e² N (n_x, n_y, 0) follows from n alone.
    let n = unit(lat, lon);
    let big_n = ell.a / (1.0 - e2 * n[2] * n[2]).sqrt();
    (
        [e2 * big_n * n[0], e2 * big_n * n[1], 0.0],
        (1.0 - e2) * big_n,
    )
}

/// The largest inscribed ball touching at the mean latitude and longitude of (lat, lon)
/// degrees `a` and `b` (the longitude taken the short way round): centre and radius, metres.
pub(crate) fn midpoint_ball(a: (f64, f64), b: (f64, f64)) -> ([f64; 3], f64) {
    let lat = 0.5 * (a.0 + b.0);
    let mut dl = b.1 - a.1;
    if dl > 180.0 {
        dl -= 360.0;
    } else if dl < -180.0 {
        dl += 360.0;
    }
    inscribed_ball(lat, a.1 + 0.5 * dl)
}

/// The longest geodesic whose chord is `d_m` metres (Schur's comparison theorem with the
/// smallest radius of curvature of WGS84); infinite past a half turn.
pub(crate) fn longest_geodesic(d_m: f64) -> f64 {
    let rho = m_min();
    let x = d_m / (2.0 * rho);
    if x >= 1.0 {
        return f64::INFINITY;
    }
    2.0 * rho * x.asin() * (1.0 + 1e-9) + 1e-6
}

/// GeographicLib's Inverse with a bounded cache: pairs facing each other across a straight
/// gap along a parallel all have one length, and are computed once.
pub(crate) struct Geodesics {
    geod: Geodesic,
    cache: FxHashMap<[u64; 4], f64>,
}

impl Geodesics {
    pub(crate) fn new() -> Geodesics {
        Geodesics {
            geod: Geodesic::wgs84(),
            cache: FxHashMap::default(),
        }
    }

    /// The geodesic (metres) between (lat, lon) degrees `a` and `b`.
    pub(crate) fn dist(&mut self, a: (f64, f64), b: (f64, f64)) -> f64 {
        let key = inverse_key(a, b);
        if let Some(&s) = self.cache.get(&key) {
            return s;
        }
        let s: f64 = self.geod.inverse(a.0, a.1, b.0, b.1);
        if self.cache.len() >= CACHE_ENTRIES {
            self.cache.clear(); // memory stays bounded; ties are met close together
        }
        self.cache.insert(key, s);
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The two bounds against GeographicLib's Inverse (Karney 2013, geographiclib-rs) on pairs
    // from 1 m to 19,000 km, at every latitude: the ball bound never exceeds the geodesic and
    // comes within 0.2 % of it below 10,000 km; the chord never exceeds it either.
    #[test]
    fn ball_bound_is_below_the_geodesic_and_close_to_it() {
        let g = Geodesic::wgs84();
        let mut s = 99u64;
        let mut rnd = || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        for k in 0..20_000 {
            let a = (-90.0 + 180.0 * rnd(), -180.0 + 360.0 * rnd());
            let scale = [1e-5, 1e-3, 0.1, 10.0, 80.0][k % 5];
            let b = (
                (a.0 + scale * (2.0 * rnd() - 1.0)).clamp(-90.0, 90.0),
                a.1 + scale * (2.0 * rnd() - 1.0),
            );
            let exact: f64 = g.inverse(a.0, a.1, b.0, b.1);
            let (xa, xb) = (ecef(a.0, a.1), ecef(b.0, b.1));
            let lb = ball_bound(a, b, &xa, &xb);
            assert!(
                lb <= exact,
                "{a:?} {b:?}: bound {lb} above geodesic {exact}"
            );
            if exact < 1.0e7 && exact > 1.0 {
                assert!(
                    lb > exact * 0.998,
                    "{a:?} {b:?}: bound {lb}, geodesic {exact}"
                );
            }
            // The chord, up to the rounding margin `search_bound` allows.
            let chord = d2(&xa, &xb).sqrt();
            assert!(chord * chord <= search_bound(exact), "{a:?} {b:?}");
            assert!(longest_geodesic(chord) >= exact);
        }
    }

    fn d2(a: &[f64; 3], b: &[f64; 3]) -> f64 {
        super::super::kdtree::d2(a, b)
    }
}
