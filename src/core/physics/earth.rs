//! WGS-84 Earth model: ellipsoid constants, geodetic ↔ ECEF conversion, local
//! up/east/north frames, point-mass + J2 gravity, the Earth-fixed ↔ inertial
//! rotation and the inertial speed of a point fixed on the ground.
//!
//! Owns only geometry and gravity of the Earth. It knows nothing of the
//! atmosphere, the vehicle or orbits (see `orbit`, which uses [`WGS84_A_M`] for
//! apsis altitudes). [`ecef_to_geodetic`] and [`gravity`] sit in every ODE
//! right-hand side evaluation: they allocate nothing and call few
//! transcendental functions.
//!
//! Angles are radians, distances metres, time seconds. "ECEF" is the
//! Earth-fixed frame (x to Greenwich on the equator, z along the spin axis);
//! "ECI" is an inertial frame sharing the z axis, rotated from ECEF by the Earth
//! rotation angle θ.
//!
//! Non-finite input never panics; it yields non-finite output (NaN or ∞).
//!
//! # References
//! - NIMA TR8350.2, *Department of Defense World Geodetic System 1984*, 3rd ed.,
//!   2000, Table 3.1 (defining parameters; values from memory).
//! - B. R. Bowring, "Transformation from spatial to geographical coordinates",
//!   Survey Review 23(181), 1976, and "The accuracy of geodetic latitude and
//!   height equations", Survey Review 28(218), 1985 (improved starting value).
//! - D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.,
//!   2013, §3.2 (site coordinates) and §8.6 (zonal harmonics).

use nalgebra::Vector3;

/// WGS-84 semi-major (equatorial) axis a, m. Source: NIMA TR8350.2 Table 3.1 (from memory).
pub const WGS84_A_M: f64 = 6_378_137.0;
/// WGS-84 inverse flattening 1/f (dimensionless). Source: NIMA TR8350.2 Table 3.1 (from memory).
pub const WGS84_INV_F: f64 = 298.257_223_563;
/// WGS-84 flattening f = (a − b)/a (dimensionless).
pub const WGS84_F: f64 = 1.0 / WGS84_INV_F;
/// WGS-84 first eccentricity squared e² = f(2 − f) ≈ 6.69437999014e-3 (dimensionless).
pub const WGS84_E2: f64 = WGS84_F * (2.0 - WGS84_F);
/// WGS-84 Earth rotation rate ω_E, rad/s. Source: NIMA TR8350.2 Table 3.1 (from memory).
pub const WGS84_OMEGA_RAD_S: f64 = 7.292_115e-5;
/// WGS-84 geocentric gravitational constant GM (atmosphere included), m³/s².
/// Source: NIMA TR8350.2 Table 3.1 (from memory).
pub const WGS84_GM_M3_S2: f64 = 3.986_004_418e14;
/// Unnormalised second zonal harmonic J2 (dimensionless), used with
/// [`WGS84_A_M`] as reference radius.
///
/// Source: from memory, not checked against the text. 1.08262668e-3 is
/// −√5·C̄₂,₀ for the EGM96 tide-free coefficient C̄₂,₀ = −4.84165371736e-4.
/// The C̄₂,₀ = −4.84166774985e-4 listed in NIMA TR8350.2 Table 3.1 would give
/// 1.08262982e-3; the difference (3e-6 relative) is far below what an ascent
/// simulation can resolve.
pub const J2: f64 = 1.082_626_68e-3;
/// Standard gravity g0, m/s² (exact by definition, CGPM 1901). Use only for Isp ↔ mass flow.
pub const G0_MPS2: f64 = 9.806_65;

/// WGS-84 semi-minor (polar) axis b = a(1 − f), m.
const WGS84_B_M: f64 = WGS84_A_M * (1.0 - WGS84_F);
/// Second eccentricity squared e'² = e²/(1 − e²) (dimensionless).
const WGS84_EP2: f64 = WGS84_E2 / (1.0 - WGS84_E2);
/// Above this squared radius (m²) the fast path would overflow; geodetic and
/// geocentric latitudes are then indistinguishable.
const FAR_FIELD_R2_M2: f64 = 1e300;

/// Geodetic position of a point relative to the WGS-84 ellipsoid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Geodetic {
    /// Geodetic latitude φ (angle of the ellipsoid normal above the equator), rad, in [−π/2, π/2].
    pub latitude_rad: f64,
    /// Longitude λ, east positive, rad, in (−π, π].
    pub longitude_rad: f64,
    /// Height h above the ellipsoid along its normal, m.
    pub altitude_m: f64,
}

/// Prime-vertical radius of curvature N(φ) = a/√(1 − e² sin²φ), m, from sin φ.
fn prime_vertical_radius_m(sin_lat: f64) -> f64 {
    WGS84_A_M / (1.0 - WGS84_E2 * sin_lat * sin_lat).sqrt()
}

/// ECEF position (m) of a geodetic point:
/// r = ((N+h)cosφcosλ, (N+h)cosφsinλ, (N(1−e²)+h)sinφ), Vallado eq. 3-14 (from memory;
/// also domain brief §1).
pub fn geodetic_to_ecef(g: &Geodetic) -> Vector3<f64> {
    let (sin_lat, cos_lat) = g.latitude_rad.sin_cos();
    let (sin_lon, cos_lon) = g.longitude_rad.sin_cos();
    let n = prime_vertical_radius_m(sin_lat);
    let rho = (n + g.altitude_m) * cos_lat;
    Vector3::new(
        rho * cos_lon,
        rho * sin_lon,
        (n * (1.0 - WGS84_E2) + g.altitude_m) * sin_lat,
    )
}

/// Normalise the 2-vector (c, s); (1, 0) when it is zero so that callers stay NaN-free.
fn unit2(c: f64, s: f64) -> (f64, f64) {
    let norm = (c * c + s * s).sqrt();
    if norm == 0.0 {
        (1.0, 0.0)
    } else {
        (c / norm, s / norm)
    }
}

/// Geodetic latitude, as its sine and cosine, and height of a point given by its distance from
/// the spin axis and its height above the equatorial plane. Because both are unchanged by a
/// rotation about the spin axis, the point may be given in the Earth-fixed or in the inertial
/// frame. No trigonometric function: the simulator builds the local frame from `sin_lat` and
/// `cos_lat` directly.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeridianPoint {
    /// sin φ of the geodetic latitude φ (dimensionless).
    pub sin_lat: f64,
    /// cos φ of the geodetic latitude φ (dimensionless, ≥ 0).
    pub cos_lat: f64,
    /// Height h above the ellipsoid along its normal, m.
    pub altitude_m: f64,
}

/// Geodetic latitude (sine, cosine) and height of the point at distance `p_m` (m, ≥ 0) from the
/// spin axis and `z_m` (m) above the equatorial plane; finite, in-range input only (see
/// [`ecef_to_geodetic`] for the far field).
///
/// One step of Bowring's formula from Bowring's 1985 starting value, with the parametric
/// latitude β carried as (cos β, sin β):
/// tan β₀ = (1−f)(z/p)(1 + e'² b/r),
/// tan φ = (z + e'² b sin³β₀)/(p − e² a cos³β₀),
/// h = p cos φ + z sin φ − a√(1 − e² sin²φ).
/// The height is insensitive to small latitude errors.
///
/// Accuracy of the single step: Bowring (1985, from memory) gives the improved start so that
/// one step is enough for points near the Earth. Measured here against the converged iteration
/// (unit test `one_bowring_step_is_converged`): latitude error below 3e-13 rad (2 µm along the
/// meridian) and height error below 1e-6 m from −10 km to 10 000 km altitude, poles and equator
/// included; both far below the 1 mm this simulator needs.
/// Cost: four square roots, no `atan2`, no `sin_cos`.
///
/// Far field (p² + z² ≥ 1e300 m²) and NaN: geocentric latitude and the distance from the centre
/// as height, as in [`ecef_to_geodetic`].
#[inline]
pub fn meridian_point(p_m: f64, z_m: f64) -> MeridianPoint {
    let r2 = p_m * p_m + z_m * z_m;
    // Written so that NaN takes the far-field path too.
    if r2.is_nan() || r2 >= FAR_FIELD_R2_M2 {
        return far_field_meridian(p_m, z_m);
    }
    let r = r2.sqrt();
    let start = if r > 0.0 {
        1.0 + WGS84_EP2 * WGS84_B_M / r
    } else {
        1.0
    };
    let (cb, sb) = unit2(p_m, (1.0 - WGS84_F) * z_m * start);
    let num = z_m + WGS84_EP2 * WGS84_B_M * sb * sb * sb;
    // den < 0 only inside the evolute; clamping keeps the latitude in [−π/2, π/2].
    let den = (p_m - WGS84_E2 * WGS84_A_M * cb * cb * cb).max(0.0);
    let (cos_lat, sin_lat) = unit2(den, num);
    MeridianPoint {
        sin_lat,
        cos_lat,
        altitude_m: p_m * cos_lat + z_m * sin_lat
            - WGS84_A_M * (1.0 - WGS84_E2 * sin_lat * sin_lat).sqrt(),
    }
}

/// Geodetic coordinates of an ECEF position (m).
///
/// Latitude and height from [`meridian_point`] (one Bowring step; accuracy there), latitude
/// and longitude as angles by `atan2`. For reports; the simulator's hot path uses
/// [`meridian_point`] and never forms the angles.
///
/// Accuracy (tested): round trip through [`geodetic_to_ecef`] within 1e-6 m and
/// 1e-12 rad from −10 km to 10 000 km altitude, poles and equator included.
/// Points on the spin axis give φ = ±π/2; the Earth's centre gives
/// (0, 0, −a). Deep inside the Earth (within the evolute, > 6000 km down) the
/// result is still finite but not meaningful.
pub fn ecef_to_geodetic(r_ecef_m: &Vector3<f64>) -> Geodetic {
    let (x, y, z) = (r_ecef_m.x, r_ecef_m.y, r_ecef_m.z);
    let p2 = x * x + y * y;
    let r2 = p2 + z * z;
    if r2.is_nan() || r2 >= FAR_FIELD_R2_M2 {
        return far_field_geodetic(r_ecef_m);
    }
    let m = meridian_point(p2.sqrt(), z);
    Geodetic {
        latitude_rad: m.sin_lat.atan2(m.cos_lat),
        longitude_rad: y.atan2(x),
        altitude_m: m.altitude_m,
    }
}

/// [`meridian_point`] in the far field (|r| > 1e150 m) or for non-finite input.
#[cold]
fn far_field_meridian(p_m: f64, z_m: f64) -> MeridianPoint {
    let r = p_m.hypot(z_m);
    MeridianPoint {
        sin_lat: z_m / r,
        cos_lat: p_m / r,
        altitude_m: r,
    }
}

/// Far-field (|r| > 1e150 m) or non-finite input: geocentric latitude and |r| as
/// height, computed with overflow-safe `hypot`.
#[cold]
fn far_field_geodetic(r: &Vector3<f64>) -> Geodetic {
    let p = r.x.hypot(r.y);
    Geodetic {
        latitude_rad: r.z.atan2(p),
        longitude_rad: r.y.atan2(r.x),
        altitude_m: p.hypot(r.z),
    }
}

/// Local up, east, north unit vectors (ECEF components) at geodetic latitude
/// and longitude (rad), returned as `(up, east, north)`:
/// U = (cosφcosλ, cosφsinλ, sinφ), E = (−sinλ, cosλ, 0),
/// N = U × E = (−sinφcosλ, −sinφsinλ, cosφ) (domain brief §1).
/// U is the ellipsoid normal (the pad vertical), not the radial direction.
pub fn local_frame(
    latitude_rad: f64,
    longitude_rad: f64,
) -> (Vector3<f64>, Vector3<f64>, Vector3<f64>) {
    let (sin_lat, cos_lat) = latitude_rad.sin_cos();
    let (sin_lon, cos_lon) = longitude_rad.sin_cos();
    let up = Vector3::new(cos_lat * cos_lon, cos_lat * sin_lon, sin_lat);
    let east = Vector3::new(-sin_lon, cos_lon, 0.0);
    let north = Vector3::new(-sin_lat * cos_lon, -sin_lat * sin_lon, cos_lat);
    (up, east, north)
}

/// Gravitational acceleration (m/s²) at position `r_m` (m) in any Earth-centred
/// frame whose z axis is the spin axis.
///
/// Point mass g = −μ r/r³, plus, when `with_j2`,
/// −(3/2) J2 μ a²/r⁵ · (x(1 − 5z²/r²), y(1 − 5z²/r²), z(3 − 5z²/r²)),
/// the gradient of the J2 zonal potential (Vallado §8.6.1, from memory; domain
/// brief §1). Sign: on the equator the J2 term points inward (it adds
/// (3/2)J2μa²/r⁴ to the pull of the equatorial bulge); over the poles it points
/// outward (it removes 3J2μa²/r⁴).
///
/// Uses μ = [`WGS84_GM_M3_S2`] and a = [`WGS84_A_M`]. One square root, one
/// division. Returns zero at r = 0 (singular point).
pub fn gravity(r_m: &Vector3<f64>, with_j2: bool) -> Vector3<f64> {
    let r2 = r_m.norm_squared();
    if r2 == 0.0 {
        return Vector3::zeros();
    }
    let inv_r = 1.0 / r2.sqrt();
    // μ/r³; written with 1/r so that |r| beyond 1e154 m gives 0, not ∞/∞.
    let mu_inv_r3 = WGS84_GM_M3_S2 * inv_r * inv_r * inv_r;
    let mut g = -mu_inv_r3 * r_m;
    if with_j2 {
        let z_over_r = r_m.z * inv_r;
        let five_z2_r2 = 5.0 * z_over_r * z_over_r;
        let a_over_r = WGS84_A_M * inv_r;
        // (3/2) J2 μ a²/r⁵ = (3/2) J2 (a/r)² μ/r³
        let k = 1.5 * J2 * a_over_r * a_over_r * mu_inv_r3;
        g.x -= k * r_m.x * (1.0 - five_z2_r2);
        g.y -= k * r_m.y * (1.0 - five_z2_r2);
        g.z -= k * r_m.z * (3.0 - five_z2_r2);
    }
    g
}

/// Rotate an ECEF vector into the inertial frame: v_ECI = R3(−θ) v_ECEF, where
/// θ (rad) is the Earth rotation angle (Greenwich from the inertial x axis).
/// Rotates directions only; velocities also need the ω × r transport term.
pub fn ecef_to_eci(v: &Vector3<f64>, theta_rad: f64) -> Vector3<f64> {
    let (s, c) = theta_rad.sin_cos();
    Vector3::new(c * v.x - s * v.y, s * v.x + c * v.y, v.z)
}

/// Rotate an inertial vector into ECEF: v_ECEF = R3(θ) v_ECI, the inverse of
/// [`ecef_to_eci`] for the same θ (rad).
pub fn eci_to_ecef(v: &Vector3<f64>, theta_rad: f64) -> Vector3<f64> {
    let (s, c) = theta_rad.sin_cos();
    Vector3::new(c * v.x + s * v.y, -s * v.x + c * v.y, v.z)
}

/// Inertial speed (m/s) of a point fixed on the Earth: ω_E (N + h) cos φ, the
/// distance from the spin axis times the rotation rate (domain brief §1).
pub fn surface_rotation_speed_mps(g: &Geodetic) -> f64 {
    let (sin_lat, cos_lat) = g.latitude_rad.sin_cos();
    WGS84_OMEGA_RAD_S * (prime_vertical_radius_m(sin_lat) + g.altitude_m) * cos_lat.abs()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn geo(lat_deg: f64, lon_deg: f64, alt_m: f64) -> Geodetic {
        Geodetic {
            latitude_rad: lat_deg.to_radians(),
            longitude_rad: lon_deg.to_radians(),
            altitude_m: alt_m,
        }
    }

    #[test]
    fn derived_constants() {
        // Source: NIMA TR8350.2 Table 3.1 (from memory): e² = 6.69437999014e-3, b = 6356752.3142 m
        assert_relative_eq!(WGS84_E2, 6.694_379_990_14e-3, epsilon = 1e-14);
        assert_relative_eq!(WGS84_B_M, 6_356_752.314_2, epsilon = 1e-4);
        // Source: CGPM 1901 definition of standard gravity (exact)
        assert_relative_eq!(G0_MPS2, 9.80665, epsilon = 0.0);
    }

    #[test]
    fn equatorial_rotation_speed() {
        // Source: domain brief §3(d) [der]: ω_E a = 465.101 m/s
        let v = surface_rotation_speed_mps(&geo(0.0, 0.0, 0.0));
        assert_relative_eq!(v, 465.101, epsilon = 0.0005);
        assert_relative_eq!(WGS84_OMEGA_RAD_S * WGS84_A_M, 465.101, epsilon = 0.0005);
    }

    #[test]
    fn due_east_rotation_gain_wgs84() {
        // Source: domain brief §3(d) [der]: ω_E N cosφ = 409.05 / 403.13 / 329.43 m/s
        for (lat_deg, want) in [(28.5, 409.05), (30.0, 403.13), (45.0, 329.43)] {
            let v = surface_rotation_speed_mps(&geo(lat_deg, -80.0, 0.0));
            assert_relative_eq!(v, want, epsilon = 0.005);
            // Southern hemisphere: same speed.
            let v_s = surface_rotation_speed_mps(&geo(-lat_deg, 10.0, 0.0));
            assert_relative_eq!(v_s, want, epsilon = 0.005);
        }
    }

    #[test]
    fn rotation_speed_is_distance_from_axis_times_omega() {
        // Source: closed form |ω × r| = ω √(x² + y²) for a point fixed on the Earth
        let g = geo(37.0, 120.0, 1500.0);
        let r = geodetic_to_ecef(&g);
        let want = WGS84_OMEGA_RAD_S * r.x.hypot(r.y);
        assert_relative_eq!(surface_rotation_speed_mps(&g), want, max_relative = 1e-14);
    }

    #[test]
    fn ecef_of_reference_points() {
        // Source: closed form (domain brief §1): equator r = (a+h, 0, 0); pole z = b + h
        let r = geodetic_to_ecef(&geo(0.0, 0.0, 1000.0));
        assert_relative_eq!(
            r,
            Vector3::new(WGS84_A_M + 1000.0, 0.0, 0.0),
            epsilon = 1e-9
        );
        let r = geodetic_to_ecef(&geo(90.0, 0.0, 1000.0));
        assert_relative_eq!(r.z, WGS84_B_M + 1000.0, epsilon = 1e-6);
        assert_relative_eq!(r.x.hypot(r.y), 0.0, epsilon = 1e-9);
        let r = geodetic_to_ecef(&geo(0.0, 90.0, 0.0));
        assert_relative_eq!(r, Vector3::new(0.0, WGS84_A_M, 0.0), epsilon = 1e-9);
    }

    #[test]
    fn geodetic_of_reference_points() {
        // Source: closed form: on the axis φ = ±90°, h = |z| − b; on the equator φ = 0, h = p − a
        let g = ecef_to_geodetic(&Vector3::new(0.0, 0.0, WGS84_B_M + 500.0));
        assert_relative_eq!(g.latitude_rad, std::f64::consts::FRAC_PI_2, epsilon = 1e-15);
        assert_relative_eq!(g.altitude_m, 500.0, epsilon = 1e-6);
        let g = ecef_to_geodetic(&Vector3::new(0.0, 0.0, -WGS84_B_M - 500.0));
        assert_relative_eq!(
            g.latitude_rad,
            -std::f64::consts::FRAC_PI_2,
            epsilon = 1e-15
        );
        assert_relative_eq!(g.altitude_m, 500.0, epsilon = 1e-6);
        let g = ecef_to_geodetic(&Vector3::new(0.0, -7.0e6, 0.0));
        assert_relative_eq!(g.latitude_rad, 0.0, epsilon = 1e-15);
        assert_relative_eq!(
            g.longitude_rad,
            -std::f64::consts::FRAC_PI_2,
            epsilon = 1e-15
        );
        assert_relative_eq!(g.altitude_m, 7.0e6 - WGS84_A_M, epsilon = 1e-6);
    }

    #[test]
    fn geodetic_ecef_round_trip() {
        // Source: inverse of the closed-form forward map (domain brief §1); task
        // tolerance 1e-6 m, 1e-12 rad over −10 km .. 10 000 km
        let lats = [
            -90.0,
            -89.999_999,
            -89.0,
            -60.0,
            -45.0,
            -28.5,
            -1e-9,
            0.0,
            1e-9,
            0.3,
            10.0,
            28.5,
            45.0,
            63.4,
            80.0,
            89.0,
            89.999_999,
            90.0,
        ];
        let alts = [
            -10_000.0,
            -5_000.0,
            0.0,
            1.0,
            1000.0,
            50_000.0,
            185_000.0,
            400_000.0,
            2_000_000.0,
            10_000_000.0,
        ];
        for &lat in &lats {
            for &alt in &alts {
                for lon in [-179.0, -45.0, 0.0, 80.6, 180.0] {
                    let g = geo(lat, lon, alt);
                    let back = ecef_to_geodetic(&geodetic_to_ecef(&g));
                    assert_relative_eq!(back.latitude_rad, g.latitude_rad, epsilon = 1e-12);
                    assert_relative_eq!(back.altitude_m, g.altitude_m, epsilon = 1e-6);
                    if lat.abs() < 90.0 {
                        let dlon = (back.longitude_rad - g.longitude_rad).sin();
                        assert_relative_eq!(dlon, 0.0, epsilon = 1e-12);
                    }
                }
            }
        }
    }

    /// Bowring's iteration run to convergence (ten steps), as (φ rad, h m): the reference for
    /// the single step of `meridian_point`.
    fn converged_geodetic(p: f64, z: f64) -> (f64, f64) {
        let (mut cb, mut sb) = unit2(p, (1.0 - WGS84_F) * z);
        let (mut num, mut den) = (z, p);
        for _ in 0..10 {
            num = z + WGS84_EP2 * WGS84_B_M * sb * sb * sb;
            den = p - WGS84_E2 * WGS84_A_M * cb * cb * cb;
            (cb, sb) = unit2(den, (1.0 - WGS84_F) * num);
        }
        let (c, s) = unit2(den, num);
        (
            num.atan2(den),
            p * c + z * s - WGS84_A_M * (1.0 - WGS84_E2 * s * s).sqrt(),
        )
    }

    #[test]
    fn one_bowring_step_is_converged() {
        // Source: Bowring 1976/1985 iteration (from memory) run to convergence; bound stated in
        // the `meridian_point` documentation (3e-13 rad, 1e-6 m) from −10 km to 10 000 km.
        for lat_deg in (0..=90).map(f64::from) {
            for alt in [-10_000.0, 0.0, 11_000.0, 86_000.0, 200_000.0, 2e6, 1e7] {
                let r = geodetic_to_ecef(&geo(lat_deg, 0.0, alt));
                let (p, z) = (r.x.hypot(r.y), r.z);
                let m = meridian_point(p, z);
                let (lat_ref, h_ref) = converged_geodetic(p, z);
                assert_relative_eq!(m.sin_lat.atan2(m.cos_lat), lat_ref, epsilon = 3e-13);
                assert_relative_eq!(m.altitude_m, h_ref, epsilon = 1e-6);
                assert_relative_eq!(m.sin_lat.hypot(m.cos_lat), 1.0, epsilon = 1e-15);
            }
        }
    }

    #[test]
    fn geocentric_tilt_of_pad_vertical() {
        // Source: domain brief §1 [der]: φ − φ' = 0.1611° at 28.5°, max 0.1924° at 45°;
        // closed form tanφ' = (1 − e²) tanφ on the ellipsoid
        for (lat_deg, want_deg) in [(28.5, 0.1611), (45.0, 0.1924)] {
            let r = geodetic_to_ecef(&geo(lat_deg, 0.0, 0.0));
            let geocentric = r.z.atan2(r.x.hypot(r.y));
            let tilt_deg = lat_deg - geocentric.to_degrees();
            assert_relative_eq!(tilt_deg, want_deg, epsilon = 5e-5);
            let closed = ((1.0 - WGS84_E2) * lat_deg.to_radians().tan()).atan();
            assert_relative_eq!(geocentric, closed, epsilon = 1e-14);
            // Up vector vs radial direction differ by the same angle.
            let (up, _, _) = local_frame(lat_deg.to_radians(), 0.0);
            let angle = up.angle(&r).to_degrees();
            assert_relative_eq!(angle, want_deg, epsilon = 5e-5);
        }
    }

    #[test]
    fn centre_and_huge_inputs_are_finite() {
        // Source: documented conventions of ecef_to_geodetic (not a physical check)
        let g = ecef_to_geodetic(&Vector3::zeros());
        assert_relative_eq!(g.latitude_rad, 0.0);
        assert_relative_eq!(g.altitude_m, -WGS84_A_M);
        let g = ecef_to_geodetic(&Vector3::new(1e200, 0.0, 1e200));
        assert_relative_eq!(g.latitude_rad, std::f64::consts::FRAC_PI_4, epsilon = 1e-15);
        assert_relative_eq!(g.altitude_m, 1e200 * 2f64.sqrt(), max_relative = 1e-15);
        let g = ecef_to_geodetic(&Vector3::new(1.0, 0.0, 0.5));
        assert!(g.latitude_rad.is_finite() && g.altitude_m.is_finite());
    }

    #[test]
    fn local_frame_is_orthonormal_right_handed() {
        // Source: domain brief §1: N = U × E
        for (lat, lon) in [(0.0, 0.0), (28.5, -80.6), (-45.0, 135.0), (90.0, 10.0)] {
            let (u, e, n) = local_frame(f64::to_radians(lat), f64::to_radians(lon));
            assert_relative_eq!(u.norm(), 1.0, epsilon = 1e-15);
            assert_relative_eq!(e.norm(), 1.0, epsilon = 1e-15);
            assert_relative_eq!(n.norm(), 1.0, epsilon = 1e-15);
            assert_relative_eq!(u.dot(&e), 0.0, epsilon = 1e-15);
            assert_relative_eq!(u.cross(&e), n, epsilon = 1e-15);
        }
    }

    #[test]
    fn local_frame_matches_ellipsoid_derivatives() {
        // Source: closed form: ∂r/∂h = U, ∂r/∂λ ∥ E, ∂r/∂φ ∥ N (central differences)
        let g = geo(28.5, -80.6, 300.0);
        let (u, e, n) = local_frame(g.latitude_rad, g.longitude_rad);
        let d = |dlat: f64, dlon: f64, dh: f64| {
            let plus = Geodetic {
                latitude_rad: g.latitude_rad + dlat,
                longitude_rad: g.longitude_rad + dlon,
                altitude_m: g.altitude_m + dh,
            };
            let minus = Geodetic {
                latitude_rad: g.latitude_rad - dlat,
                longitude_rad: g.longitude_rad - dlon,
                altitude_m: g.altitude_m - dh,
            };
            (geodetic_to_ecef(&plus) - geodetic_to_ecef(&minus)).normalize()
        };
        assert_relative_eq!(d(0.0, 0.0, 1.0), u, epsilon = 1e-9);
        assert_relative_eq!(d(0.0, 1e-7, 0.0), e, epsilon = 1e-8);
        assert_relative_eq!(d(1e-7, 0.0, 0.0), n, epsilon = 1e-8);
    }

    #[test]
    fn point_mass_gravity_magnitude() {
        // Source: Newton, g = μ/r² toward the centre
        let r = Vector3::new(3.0e6, -4.0e6, 5.0e6);
        let g = gravity(&r, false);
        assert_relative_eq!(
            g.norm(),
            WGS84_GM_M3_S2 / r.norm_squared(),
            max_relative = 1e-14
        );
        assert_relative_eq!(g.normalize(), -r.normalize(), epsilon = 1e-14);
        // μ/a² = 9.798285 m/s² (from the WGS-84 constants, closed form)
        let g = gravity(&Vector3::new(WGS84_A_M, 0.0, 0.0), false);
        assert_relative_eq!(g.x, -9.798_285, epsilon = 1e-6);
    }

    #[test]
    fn j2_on_equator_adds_inward_pull() {
        // Source: domain brief §1 formula with z = 0, r = a: g_J2 = −(3/2)J2 μ/a² r̂,
        // i.e. |g| grows by (3/2) J2 μ/a² ≈ 0.015911 m/s²
        let r = Vector3::new(0.0, WGS84_A_M, 0.0);
        let dg = gravity(&r, true) - gravity(&r, false);
        let want = 1.5 * J2 * WGS84_GM_M3_S2 / (WGS84_A_M * WGS84_A_M);
        assert_relative_eq!(dg, Vector3::new(0.0, -want, 0.0), epsilon = 1e-15);
        assert_relative_eq!(want, 0.015_911, epsilon = 1e-6);
        let total = gravity(&r, true).norm() - gravity(&r, false).norm();
        assert_relative_eq!(total, want, epsilon = 1e-13);
    }

    #[test]
    fn j2_over_pole_is_outward_along_z() {
        // Source: domain brief §1 formula with x = y = 0, z = r: g_J2 = +3 J2 μ a²/r⁴ ẑ
        let r = Vector3::new(0.0, 0.0, WGS84_B_M);
        let dg = gravity(&r, true) - gravity(&r, false);
        let want = 3.0 * J2 * WGS84_GM_M3_S2 * WGS84_A_M.powi(2) / WGS84_B_M.powi(4);
        assert_relative_eq!(dg.x, 0.0, epsilon = 0.0);
        assert_relative_eq!(dg.y, 0.0, epsilon = 0.0);
        // 1e-12: the difference of two ~9.8 m/s² vectors loses ~3 digits of a 0.03 m/s² term.
        assert_relative_eq!(dg.z, want, max_relative = 1e-12);
        let dg_south = gravity(&-r, true) - gravity(&-r, false);
        assert_relative_eq!(dg_south.z, -want, max_relative = 1e-12);
    }

    /// J2 part of the potential (positive convention, g = ∇U):
    /// U_J2 = −(μ J2 a²/r³) (3z²/r² − 1)/2. Source: Vallado §8.6.1 (from memory).
    fn j2_potential(r: &Vector3<f64>) -> f64 {
        let rn = r.norm();
        let s2 = (r.z / rn).powi(2);
        -WGS84_GM_M3_S2 * J2 * WGS84_A_M.powi(2) / rn.powi(3) * (3.0 * s2 - 1.0) / 2.0
    }

    #[test]
    fn j2_acceleration_is_gradient_of_zonal_potential() {
        // Source: zonal-harmonic potential (Vallado §8.6.1, from memory), central differences
        let h = 10.0;
        for r in [
            Vector3::new(6.0e6, 1.0e6, 2.5e6),
            Vector3::new(-1.0e6, 3.0e6, -6.2e6),
            Vector3::new(7.1e6, -0.2e6, 0.1e6),
        ] {
            let dg = gravity(&r, true) - gravity(&r, false);
            let mut fd = Vector3::zeros();
            for i in 0..3 {
                let mut step = Vector3::zeros();
                step[i] = h;
                fd[i] = (j2_potential(&(r + step)) - j2_potential(&(r - step))) / (2.0 * h);
            }
            assert_relative_eq!(dg, fd, epsilon = 1e-10);
        }
    }

    #[test]
    fn gravity_degenerate_inputs_are_finite() {
        // Source: documented conventions (zero at the centre, vanishing far away)
        assert_relative_eq!(gravity(&Vector3::zeros(), true), Vector3::zeros());
        let g = gravity(&Vector3::new(1e200, 1e200, 1e200), true);
        assert_relative_eq!(g, Vector3::zeros());
    }

    #[test]
    fn eci_ecef_rotation() {
        // Source: R3(−θ) rotates the Greenwich x axis to (cosθ, sinθ, 0) in ECI
        let theta = 0.3_f64;
        let x = ecef_to_eci(&Vector3::x(), theta);
        assert_relative_eq!(
            x,
            Vector3::new(theta.cos(), theta.sin(), 0.0),
            epsilon = 1e-15
        );
        let v = Vector3::new(1.0, -2.0, 3.0);
        let back = eci_to_ecef(&ecef_to_eci(&v, 2.1), 2.1);
        assert_relative_eq!(back, v, epsilon = 1e-14);
        // A quarter turn: ECEF y axis points along ECI −x.
        let y = ecef_to_eci(&Vector3::y(), std::f64::consts::FRAC_PI_2);
        assert_relative_eq!(y, -Vector3::x(), epsilon = 1e-15);
    }
}
