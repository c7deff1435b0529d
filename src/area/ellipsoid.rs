//! Ellipsoids and the exact area of lon/lat cells.
//!
//! Inputs: latitudes and longitude spans in degrees, ellipsoid semi-major axis `a` in metres and
//! flattening `f` (0 for a sphere). Output: areas in m².
//!
//! The area of the cell φ1 ≤ φ ≤ φ2, λ1 ≤ λ ≤ λ1 + Δλ, whose edges are parallels and meridians, is
//! `A = (a²/2)·Δλ·[q(φ2) − q(φ1)]` (Δλ in radians) with Snyder's (1987, USGS PP 1395, p. 16,
//! eq. 3-12) authalic function
//! `q(φ) = (1 − e²)·[sinφ/(1 − e² sin²φ) + atanh(e sinφ)/e]`.
//! The difference q(φ2) − q(φ1) is evaluated with a difference formula (see [`Ellipsoid::q_diff`])
//! so that thin cells keep their digits.

/// An ellipsoid of revolution: semi-major axis `a` (metres) and flattening `f` (0 = sphere).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ellipsoid {
    /// Semi-major axis, metres.
    pub a: f64,
    /// Flattening (a − b)/a; 0 for a sphere.
    pub f: f64,
}

impl Ellipsoid {
    /// WGS 84: a = 6 378 137 m, 1/f = 298.257 223 563 (NIMA TR8350.2, defining parameters).
    pub const WGS84: Ellipsoid = Ellipsoid {
        a: 6_378_137.0,
        f: 1.0 / 298.257_223_563,
    };

    /// GRS 1980: a = 6 378 137 m, 1/f = 298.257 222 101 (used by ETRS89, NAD83).
    pub const GRS80: Ellipsoid = Ellipsoid {
        a: 6_378_137.0,
        f: 1.0 / 298.257_222_101,
    };

    /// An ellipsoid from the semi-major axis (m) and the inverse flattening; an inverse
    /// flattening of 0 (GDAL's convention) or infinity means a sphere.
    pub fn from_inverse_flattening(a: f64, inv_f: f64) -> Ellipsoid {
        let f = if inv_f == 0.0 || !inv_f.is_finite() {
            0.0
        } else {
            1.0 / inv_f
        };
        Ellipsoid { a, f }
    }

    /// First eccentricity squared e² = f(2 − f).
    pub fn e2(&self) -> f64 {
        self.f * (2.0 - self.f)
    }

    /// First eccentricity e.
    pub fn e(&self) -> f64 {
        self.e2().sqrt()
    }

    /// Semi-minor axis b = a(1 − f), metres.
    pub fn b(&self) -> f64 {
        self.a * (1.0 - self.f)
    }

    /// Whether the figure is a sphere (f = 0).
    pub fn is_sphere(&self) -> bool {
        self.f == 0.0
    }

    /// Snyder (1987) eq. 3-12, q(φ) for geodetic latitude `phi_rad` (radians).
    pub fn q(&self, phi_rad: f64) -> f64 {
        let s = phi_rad.sin();
        let e2 = self.e2();
        (1.0 - e2) * (s / (1.0 - e2 * s * s) + atanh_e_over_e(self.e(), s))
    }

    /// q at the pole, q_p = q(90°).
    pub fn q_p(&self) -> f64 {
        self.q(std::f64::consts::FRAC_PI_2)
    }

    /// Authalic radius R_q = a·sqrt(q_p/2) (Snyder 1987 eq. 3-13), metres.
    pub fn authalic_radius(&self) -> f64 {
        self.a * (self.q_p() / 2.0).sqrt()
    }

    /// Surface area of the whole ellipsoid, 2π a² q_p, m².
    pub fn surface_area_m2(&self) -> f64 {
        2.0 * std::f64::consts::PI * self.a * self.a * self.q_p()
    }

    /// q(φ2) − q(φ1) without the cancellation of subtracting two values near 1.
    ///
    /// With s = sinφ: `s2/(1−e²s2²) − s1/(1−e²s1²) = Δs·(1 + e²s1s2)/((1−e²s1²)(1−e²s2²))` and
    /// `atanh(e s2) − atanh(e s1) = atanh(e·Δs/(1 − e²s1s2))`, where
    /// `Δs = 2·cos((φ1+φ2)/2)·sin((φ2−φ1)/2)` is computed without cancellation.
    pub fn q_diff(&self, phi1_rad: f64, phi2_rad: f64) -> f64 {
        let (s1, s2) = (phi1_rad.sin(), phi2_rad.sin());
        let ds = 2.0 * (0.5 * (phi1_rad + phi2_rad)).cos() * (0.5 * (phi2_rad - phi1_rad)).sin();
        let e2 = self.e2();
        let first = ds * (1.0 + e2 * s1 * s2) / ((1.0 - e2 * s1 * s1) * (1.0 - e2 * s2 * s2));
        let second = atanh_e_over_e(self.e(), ds / (1.0 - e2 * s1 * s2));
        (1.0 - e2) * (first + second)
    }
}

/// atanh(e·x)/e, with its limit x for a sphere.
fn atanh_e_over_e(e: f64, x: f64) -> f64 {
    if e == 0.0 {
        x
    } else {
        (e * x).atanh() / e
    }
}

/// Snyder (1987) eq. 3-12 on WGS 84: q(φ) for geodetic latitude `phi_rad` in radians.
pub fn authalic_q(phi_rad: f64) -> f64 {
    Ellipsoid::WGS84.q(phi_rad)
}

/// Exact area (m²) on WGS 84 of the lon/lat cell between the parallels `lat_south_deg` and
/// `lat_north_deg` spanning `dlon_deg` degrees of longitude. The order of the two latitudes and
/// the sign of `dlon_deg` do not matter; the result is non-negative.
pub fn lonlat_cell_area_m2(lat_south_deg: f64, lat_north_deg: f64, dlon_deg: f64) -> f64 {
    lonlat_cell_area_m2_on(&Ellipsoid::WGS84, lat_south_deg, lat_north_deg, dlon_deg)
}

/// As [`lonlat_cell_area_m2`], on the ellipsoid `ell`: `(a²/2)·Δλ·[q(φ2) − q(φ1)]`.
pub fn lonlat_cell_area_m2_on(
    ell: &Ellipsoid,
    lat_south_deg: f64,
    lat_north_deg: f64,
    dlon_deg: f64,
) -> f64 {
    let (s, n) = if lat_south_deg <= lat_north_deg {
        (lat_south_deg, lat_north_deg)
    } else {
        (lat_north_deg, lat_south_deg)
    };
    let dq = ell.q_diff(s.to_radians(), n.to_radians());
    0.5 * ell.a * ell.a * dlon_deg.abs().to_radians() * dq
}
