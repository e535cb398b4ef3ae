//! Two-body orbit relations: osculating elements from an inertial state,
//! circular and vis-viva speeds, and the launch azimuth that reaches a target
//! inclination from a launch latitude.
//!
//! Owns Keplerian bookkeeping only; it does not propagate orbits and has no
//! Earth model beyond the reference radius [`WGS84_A_M`] used for apsis
//! altitudes (report convention: altitude of an apsis = r − 6378.137 km).
//! Units: metres, seconds, radians; μ in m³/s².
//!
//! # References
//! - H. D. Curtis, *Orbital Mechanics for Engineering Students*, Algorithm 4.2
//!   (elements from state vector), Example 4.3.
//! - D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.,
//!   2013, Algorithm 9 (RV2COE) and Example 2-5; §6.4.1 (launch azimuth, from memory).
//! - Kluever, *Space Flight Dynamics*, Example 3.3 (inertial launch azimuth).

use super::earth::WGS84_A_M;
use nalgebra::Vector3;
use std::f64::consts::{FRAC_PI_2, PI, TAU};

/// Below this eccentricity the orbit is treated as circular (ω := 0).
/// Same order as the `small` of Vallado's RV2COE.
const CIRCULAR_ECCENTRICITY: f64 = 1e-10;
/// Below this sin i (or above for sin of a near-180° i) the orbit is treated as
/// equatorial (Ω := 0).
const EQUATORIAL_SIN_INCLINATION: f64 = 1e-10;

/// Osculating two-body elements of an inertial state.
///
/// Conventions for the singular cases (Vallado RV2COE, with angles measured in
/// the direction of motion, i.e. right-handed about the angular momentum h):
/// - equatorial (sin i < 1e-10): `raan_rad` = 0 and the inertial x axis replaces
///   the ascending node, so `arg_perigee_rad` is the longitude of periapsis;
/// - circular (e < 1e-10): `arg_perigee_rad` = 0 and `true_anomaly_rad` is
///   measured from the node (argument of latitude u), or from the x axis when
///   also equatorial (true longitude);
/// - rectilinear (h = 0, e.g. vertical flight from a pole): the plane is
///   undefined, so h is taken along +z (equatorial conventions);
/// - r = 0: all fields are 0.
///
/// All angles are in [0, 2π) except `inclination_rad` in [0, π].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Elements {
    /// Semi-major axis a = −μ/(2ε), m; negative for hyperbolic, `f64::INFINITY`
    /// for parabolic (ε = 0 exactly).
    pub semi_major_axis_m: f64,
    /// Eccentricity e = |e|, dimensionless.
    pub eccentricity: f64,
    /// Inclination i, rad, in [0, π].
    pub inclination_rad: f64,
    /// Right ascension of the ascending node Ω, rad (0 for equatorial orbits).
    pub raan_rad: f64,
    /// Argument of periapsis ω, rad (longitude of periapsis when equatorial, 0 when circular).
    pub arg_perigee_rad: f64,
    /// True anomaly ν, rad (argument of latitude or true longitude when circular).
    pub true_anomaly_rad: f64,
    /// Specific angular momentum |r × v|, m²/s.
    pub specific_angular_momentum_m2_s: f64,
    /// Semi-latus rectum p = h²/μ, m.
    pub semi_latus_rectum_m: f64,
    /// Periapsis radius r_p = p/(1 + e), m.
    pub perigee_radius_m: f64,
    /// Apoapsis radius r_a = 2a − r_p, m; `f64::INFINITY` when e ≥ 1 or ε ≥ 0.
    pub apogee_radius_m: f64,
}

/// Angle from `from` to `to` measured right-handed about `axis` (unit), wrapped to [0, 2π).
fn angle_about(axis: &Vector3<f64>, from: &Vector3<f64>, to: &Vector3<f64>) -> f64 {
    wrap_two_pi(axis.dot(&from.cross(to)).atan2(from.dot(to)))
}

/// Wrap an angle (rad) to [0, 2π); −0 and tiny negatives that would round to 2π give 0.
fn wrap_two_pi(angle_rad: f64) -> f64 {
    let wrapped = angle_rad.rem_euclid(TAU);
    if wrapped >= TAU {
        0.0
    } else {
        wrapped
    }
}

/// √x for x ≥ 0, 0 for x < 0 (NaN stays NaN).
fn sqrt_or_zero(x: f64) -> f64 {
    if x < 0.0 {
        0.0
    } else {
        x.sqrt()
    }
}

impl Elements {
    /// Osculating elements from an inertial state: position `r` (m), velocity
    /// `v` (m/s), gravitational parameter `mu` (m³/s², must be > 0).
    ///
    /// h = r × v, e = ((v² − μ/r) r − (r·v) v)/μ, ε = v²/2 − μ/r, a = −μ/(2ε),
    /// p = h²/μ; i, Ω, ω, ν via `atan2` (never `acos`, so rounding cannot make a
    /// NaN). Curtis Algorithm 4.2 / Vallado Algorithm 9 (RV2COE); see the type
    /// documentation for the circular/equatorial conventions. Non-finite input
    /// gives non-finite fields.
    pub fn from_state(r: &Vector3<f64>, v: &Vector3<f64>, mu: f64) -> Elements {
        let r_norm = r.norm();
        if r_norm == 0.0 {
            return Elements::at_centre();
        }
        let h_vec = r.cross(v);
        let h = h_vec.norm();
        let v2 = v.norm_squared();
        let e_vec = ((v2 - mu / r_norm) * r - r.dot(v) * v) / mu;
        let e = e_vec.norm();
        let energy = 0.5 * v2 - mu / r_norm;
        let a = if energy == 0.0 {
            f64::INFINITY
        } else {
            -mu / (2.0 * energy)
        };
        let p = h * h / mu;
        let r_p = p / (1.0 + e);
        let r_a = if e < 1.0 && a > 0.0 && a.is_finite() {
            2.0 * a - r_p
        } else {
            f64::INFINITY
        };
        let angles = orientation(r, &h_vec, h, &e_vec, e);
        Elements {
            semi_major_axis_m: a,
            eccentricity: e,
            inclination_rad: angles[0],
            raan_rad: angles[1],
            arg_perigee_rad: angles[2],
            true_anomaly_rad: angles[3],
            specific_angular_momentum_m2_s: h,
            semi_latus_rectum_m: p,
            perigee_radius_m: r_p,
            apogee_radius_m: r_a,
        }
    }

    /// Documented result for r = 0 (the gravitational singularity): all zeros.
    fn at_centre() -> Elements {
        Elements {
            semi_major_axis_m: 0.0,
            eccentricity: 0.0,
            inclination_rad: 0.0,
            raan_rad: 0.0,
            arg_perigee_rad: 0.0,
            true_anomaly_rad: 0.0,
            specific_angular_momentum_m2_s: 0.0,
            semi_latus_rectum_m: 0.0,
            perigee_radius_m: 0.0,
            apogee_radius_m: 0.0,
        }
    }

    /// Perigee altitude, m: perigee radius − [`WGS84_A_M`] (report convention,
    /// spherical reference radius 6378.137 km).
    pub fn perigee_alt_m(&self) -> f64 {
        self.perigee_radius_m - WGS84_A_M
    }

    /// Apogee altitude, m: apogee radius − [`WGS84_A_M`]; `f64::INFINITY` for open orbits.
    pub fn apogee_alt_m(&self) -> f64 {
        self.apogee_radius_m - WGS84_A_M
    }
}

/// [i, Ω, ω, ν] (rad) from r, h (vector and norm) and e (vector and norm),
/// with the singular-case conventions documented on [`Elements`].
fn orientation(
    r: &Vector3<f64>,
    h_vec: &Vector3<f64>,
    h: f64,
    e_vec: &Vector3<f64>,
    e: f64,
) -> [f64; 4] {
    let h_hat = if h > 0.0 { h_vec / h } else { Vector3::z() };
    // |k × h| = h sin i; node vector n = k × h = (−h_y, h_x, 0).
    let node = Vector3::new(-h_hat.y, h_hat.x, 0.0);
    let sin_i = node.norm();
    let inclination = sin_i.atan2(h_hat.z);
    let equatorial = sin_i < EQUATORIAL_SIN_INCLINATION;
    let (raan, reference) = if equatorial {
        (0.0, Vector3::x())
    } else {
        (wrap_two_pi(node.y.atan2(node.x)), node)
    };
    if e < CIRCULAR_ECCENTRICITY {
        [inclination, raan, 0.0, angle_about(&h_hat, &reference, r)]
    } else {
        let arg_perigee = angle_about(&h_hat, &reference, e_vec);
        [
            inclination,
            raan,
            arg_perigee,
            angle_about(&h_hat, e_vec, r),
        ]
    }
}

/// Circular orbit speed √(μ/r), m/s, at radius `radius_m` (m) with `mu` (m³/s²).
/// Returns 0 if μ/r < 0 (invalid input) rather than NaN.
pub fn circular_speed_mps(radius_m: f64, mu: f64) -> f64 {
    sqrt_or_zero(mu / radius_m)
}

/// Vis-viva speed √(μ(2/r − 1/a)), m/s, at radius `radius_m` (m) on a conic of
/// semi-major axis `semi_major_axis_m` (m; negative for hyperbolas, infinite
/// for a parabola). Returns 0 where the radius lies beyond apoapsis (v² < 0).
pub fn vis_viva_speed_mps(radius_m: f64, semi_major_axis_m: f64, mu: f64) -> f64 {
    sqrt_or_zero(mu * (2.0 / radius_m - 1.0 / semi_major_axis_m))
}

/// Which of the two launch azimuths reaching an inclination.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AzimuthBranch {
    /// Heading with a northward component (ascending-node pass): β_I = asin(cos i / cos φ).
    Northerly,
    /// Heading with a southward component (descending-node pass): 180° − β_I.
    Southerly,
}

/// Error when the inclination cannot be reached by a direct ascent from that
/// latitude: reachable inclinations are |φ| ≤ i ≤ 180° − |φ|. Also returned for
/// |φ| > 90°, i outside [0°, 180°] or non-finite angles.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoLaunchAzimuth {
    /// Launch latitude φ, rad.
    pub latitude_rad: f64,
    /// Requested inclination i, rad.
    pub inclination_rad: f64,
}

impl std::fmt::Display for NoLaunchAzimuth {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let lat_deg = self.latitude_rad.to_degrees();
        let inc_deg = self.inclination_rad.to_degrees();
        let min_deg = lat_deg.abs();
        write!(
            f,
            "inclination {inc_deg:.3}° cannot be reached by a direct ascent from latitude \
             {lat_deg:.3}°: the minimum reachable inclination is |latitude| = {min_deg:.3}° \
             (maximum {:.3}°)",
            180.0 - min_deg
        )
    }
}

impl std::error::Error for NoLaunchAzimuth {}

/// Inertial launch azimuth, rad clockwise from north in [0, 2π), that puts a
/// launch from latitude `latitude_rad` (the caller passes the geocentric latitude) into inclination
/// `inclination_rad`: sin β_I = cos i / cos φ (Kluever Ex. 3.3; spherical
/// trigonometry), evaluated as β_I = atan2(cos i, √(sin(i+|φ|) sin(i−|φ|)))
/// so that i = |φ| gives exactly 90°. `Southerly` gives 180° − β_I. Retrograde orbits (i > 90°)
/// give westerly azimuths (β in (270°, 360°) for `Northerly`).
/// Assumes insertion at the launch latitude.
pub fn inertial_azimuth_rad(
    latitude_rad: f64,
    inclination_rad: f64,
    branch: AzimuthBranch,
) -> Result<f64, NoLaunchAzimuth> {
    let unreachable = NoLaunchAzimuth {
        latitude_rad,
        inclination_rad,
    };
    // `contains` is false for NaN, so non-finite angles are rejected here too.
    if !(-FRAC_PI_2..=FRAC_PI_2).contains(&latitude_rad) || !(0.0..=PI).contains(&inclination_rad) {
        return Err(unreachable);
    }
    // sin β_I = cos i / cos φ and cos β_I = √(cos²φ − cos²i)/cos φ, with
    // cos²φ − cos²i = sin(i + |φ|) sin(i − |φ|): well conditioned at i = |φ|
    // (due east) where asin is not, and negative exactly when i is unreachable.
    let abs_lat = latitude_rad.abs();
    let cos2_margin = (inclination_rad + abs_lat).sin() * (inclination_rad - abs_lat).sin();
    if cos2_margin < 0.0 {
        return Err(unreachable);
    }
    let beta = inclination_rad.cos().atan2(cos2_margin.sqrt());
    Ok(match branch {
        AzimuthBranch::Northerly => wrap_two_pi(beta),
        AzimuthBranch::Southerly => wrap_two_pi(PI - beta),
    })
}

/// Launch azimuth corrected for the Earth's rotation, rad clockwise from north
/// in [0, 2π): the heading of the Earth-relative velocity to add,
/// tan β_R = (v_orb sin β_I − v_rot)/(v_orb cos β_I), evaluated with `atan2` so
/// both branches land in the right quadrant (common form, e.g. Vallado §6.4.1,
/// from memory). `orbit_speed_mps` is the inertial speed at insertion (m/s),
/// `site_rotation_speed_mps` the eastward speed of the pad (m/s, e.g.
/// [`super::earth::surface_rotation_speed_mps`]).
pub fn launch_azimuth_rad(
    latitude_rad: f64,
    inclination_rad: f64,
    orbit_speed_mps: f64,
    site_rotation_speed_mps: f64,
    branch: AzimuthBranch,
) -> Result<f64, NoLaunchAzimuth> {
    let beta_i = inertial_azimuth_rad(latitude_rad, inclination_rad, branch)?;
    let (sin_b, cos_b) = beta_i.sin_cos();
    let east_mps = orbit_speed_mps * sin_b - site_rotation_speed_mps;
    let north_mps = orbit_speed_mps * cos_b;
    Ok(wrap_two_pi(east_mps.atan2(north_mps)))
}

#[cfg(test)]
mod tests {
    use super::super::earth::WGS84_GM_M3_S2;
    use super::*;
    use approx::assert_relative_eq;

    const KM: f64 = 1000.0;

    #[test]
    fn circular_speeds_wgs84() {
        // Source: domain brief §3(e) [der], WGS-84 μ and a: 7905.37, 7793.15, 7784.26, 7668.56 m/s
        for (alt_km, want) in [
            (0.0, 7905.37),
            (185.0, 7793.15),
            (200.0, 7784.26),
            (400.0, 7668.56),
        ] {
            let v = circular_speed_mps(WGS84_A_M + alt_km * KM, WGS84_GM_M3_S2);
            assert_relative_eq!(v, want, epsilon = 0.005);
        }
    }

    #[test]
    fn gto_vis_viva() {
        // Source: domain brief §3(e) [der]: GTO 200 × 35 786 km, v_p = 10238.85, v_a = 1597.39 m/s
        let r_p = WGS84_A_M + 200.0 * KM;
        let r_a = WGS84_A_M + 35_786.0 * KM;
        let sma = 0.5 * (r_p + r_a);
        assert_relative_eq!(
            vis_viva_speed_mps(r_p, sma, WGS84_GM_M3_S2),
            10238.85,
            epsilon = 0.005
        );
        assert_relative_eq!(
            vis_viva_speed_mps(r_a, sma, WGS84_GM_M3_S2),
            1597.39,
            epsilon = 0.005
        );
        // Source: closed form: a = r gives the circular speed; a = ∞ gives escape speed √2·v_c
        let r = 7.0e6;
        let v_c = circular_speed_mps(r, WGS84_GM_M3_S2);
        assert_relative_eq!(
            vis_viva_speed_mps(r, r, WGS84_GM_M3_S2),
            v_c,
            max_relative = 1e-15
        );
        let v_esc = vis_viva_speed_mps(r, f64::INFINITY, WGS84_GM_M3_S2);
        assert_relative_eq!(v_esc, 2f64.sqrt() * v_c, max_relative = 1e-15);
    }

    #[test]
    fn speeds_clamp_invalid_input_to_zero() {
        // Source: documented convention (beyond apoapsis v² < 0)
        assert_relative_eq!(vis_viva_speed_mps(3.0e7, 1.0e7, WGS84_GM_M3_S2), 0.0);
        assert_relative_eq!(circular_speed_mps(-1.0, WGS84_GM_M3_S2), 0.0);
    }

    #[test]
    fn curtis_example_4_3() {
        // Source: Curtis, Orbital Mechanics for Engineering Students, Ex. 4.3 (μ = 398600 km³/s²)
        let mu = 398_600.0 * KM.powi(3);
        let r = Vector3::new(-6045.0, -3490.0, 2500.0) * KM;
        let v = Vector3::new(-3.457, 6.618, 2.533) * KM;
        let el = Elements::from_state(&r, &v, mu);
        assert_relative_eq!(
            el.specific_angular_momentum_m2_s,
            58_310.0e6,
            max_relative = 1e-4
        );
        assert_relative_eq!(el.inclination_rad.to_degrees(), 153.2, epsilon = 0.05);
        assert_relative_eq!(el.raan_rad.to_degrees(), 255.3, epsilon = 0.05);
        assert_relative_eq!(el.eccentricity, 0.1712, epsilon = 5e-5);
        assert_relative_eq!(el.arg_perigee_rad.to_degrees(), 20.07, epsilon = 0.005);
        assert_relative_eq!(el.true_anomaly_rad.to_degrees(), 28.45, epsilon = 0.005);
        // Source: domain brief §3(e) [der] recomputation: a = 8788.1, r_p = 7283.5, r_a = 10292.7 km
        assert_relative_eq!(el.semi_major_axis_m / KM, 8788.1, epsilon = 0.05);
        assert_relative_eq!(el.perigee_radius_m / KM, 7283.5, epsilon = 0.05);
        assert_relative_eq!(el.apogee_radius_m / KM, 10292.7, epsilon = 0.05);
    }

    #[test]
    fn vallado_example_2_5() {
        // Source: Vallado, Fundamentals of Astrodynamics and Applications, 4th ed., Ex. 2-5
        // (μ = 398600.4418 km³/s²); tolerances 0.01 km / 0.01° per domain brief §3(e)
        let mu = 398_600.441_8 * KM.powi(3);
        let r = Vector3::new(6524.834, 6862.875, 6448.296) * KM;
        let v = Vector3::new(4.901327, 5.533756, -1.976341) * KM;
        let el = Elements::from_state(&r, &v, mu);
        assert_relative_eq!(el.semi_latus_rectum_m / KM, 11_067.790, epsilon = 0.01);
        assert_relative_eq!(el.semi_major_axis_m / KM, 36_127.343, epsilon = 0.01);
        assert_relative_eq!(el.eccentricity, 0.832853, epsilon = 1e-6);
        assert_relative_eq!(el.inclination_rad.to_degrees(), 87.870, epsilon = 0.01);
        assert_relative_eq!(el.raan_rad.to_degrees(), 227.898, epsilon = 0.01);
        assert_relative_eq!(el.arg_perigee_rad.to_degrees(), 53.38, epsilon = 0.01);
        assert_relative_eq!(el.true_anomaly_rad.to_degrees(), 92.335, epsilon = 0.01);
    }

    #[test]
    fn gto_insertion_apsis_altitudes() {
        // Source: domain brief §3(e) [der]: state at perigee of GTO 200 × 35 786 km has
        // v_p = 10238.85 m/s; apsis altitude = r − 6378.137 km (report convention)
        let r_p = WGS84_A_M + 200.0 * KM;
        let sma = WGS84_A_M + 0.5 * (200.0 + 35_786.0) * KM;
        let v_p = vis_viva_speed_mps(r_p, sma, WGS84_GM_M3_S2);
        let r = Vector3::new(r_p, 0.0, 0.0);
        let v = Vector3::new(0.0, v_p * 0.5, v_p * 0.75f64.sqrt()); // i = 60°
        let el = Elements::from_state(&r, &v, WGS84_GM_M3_S2);
        assert_relative_eq!(el.perigee_alt_m(), 200.0 * KM, epsilon = 1e-3);
        assert_relative_eq!(el.apogee_alt_m(), 35_786.0 * KM, epsilon = 1e-3);
        assert_relative_eq!(el.inclination_rad.to_degrees(), 60.0, epsilon = 1e-12);
        assert_relative_eq!(el.true_anomaly_rad, 0.0, epsilon = 1e-12);
    }

    #[test]
    fn circular_inclined_uses_argument_of_latitude() {
        // Source: Vallado RV2COE convention: e = 0 → ω = 0, ν = u (node to r)
        let mu = WGS84_GM_M3_S2;
        let (radius, u, inc) = (7.0e6_f64, 0.7_f64, 0.9_f64);
        // Node on +x (Ω = 0): r = R(u) in the plane spanned by x̂ and (0, cos i, sin i).
        let in_plane = Vector3::new(0.0, inc.cos(), inc.sin());
        let r = radius * (u.cos() * Vector3::x() + u.sin() * in_plane);
        let v_dir = -u.sin() * Vector3::x() + u.cos() * in_plane;
        let v = circular_speed_mps(radius, mu) * v_dir;
        let el = Elements::from_state(&r, &v, mu);
        assert!(el.eccentricity < 1e-10);
        assert_relative_eq!(el.arg_perigee_rad, 0.0);
        assert_relative_eq!(el.true_anomaly_rad, u, epsilon = 1e-12);
        assert_relative_eq!(el.inclination_rad, inc, epsilon = 1e-12);
        assert_relative_eq!(el.raan_rad, 0.0, epsilon = 1e-12);
        assert_relative_eq!(el.apogee_radius_m, radius, max_relative = 1e-12);
    }

    #[test]
    fn equatorial_conventions() {
        // Source: Vallado RV2COE conventions: Ω = 0; ω = longitude of periapsis;
        // circular equatorial: ν = true longitude; retrograde measured along the motion
        let mu = WGS84_GM_M3_S2;
        let r = Vector3::new(0.0, 7.0e6, 0.0); // true longitude 90°
        let v_c = circular_speed_mps(7.0e6, mu);
        let el = Elements::from_state(&r, &Vector3::new(-v_c, 0.0, 0.0), mu);
        assert_relative_eq!(el.raan_rad, 0.0);
        assert_relative_eq!(el.arg_perigee_rad, 0.0);
        assert_relative_eq!(el.true_anomaly_rad.to_degrees(), 90.0, epsilon = 1e-9);
        // Retrograde: moving clockwise seen from +z, so the same point is at 270°.
        let el = Elements::from_state(&r, &Vector3::new(v_c, 0.0, 0.0), mu);
        assert_relative_eq!(el.inclination_rad, PI, epsilon = 1e-15);
        assert_relative_eq!(el.true_anomaly_rad.to_degrees(), 270.0, epsilon = 1e-9);
        // Elliptical prograde at periapsis on +y: longitude of periapsis 90°, ν = 0.
        let el = Elements::from_state(&r, &Vector3::new(-1.1 * v_c, 0.0, 0.0), mu);
        assert_relative_eq!(el.raan_rad, 0.0);
        assert_relative_eq!(el.arg_perigee_rad.to_degrees(), 90.0, epsilon = 1e-9);
        assert_relative_eq!(el.true_anomaly_rad, 0.0, epsilon = 1e-12);
    }

    #[test]
    fn open_and_degenerate_orbits_are_nan_free() {
        // Source: closed form: μ = 2, r = 1, v = 2 is exactly parabolic (ε = 0, e = 1, r_p = 1)
        let el = Elements::from_state(&Vector3::x(), &(2.0 * Vector3::y()), 2.0);
        assert!(el.semi_major_axis_m.is_infinite() && el.semi_major_axis_m > 0.0);
        assert_relative_eq!(el.eccentricity, 1.0);
        assert_relative_eq!(el.perigee_radius_m, 1.0);
        assert!(el.apogee_radius_m.is_infinite() && el.apogee_radius_m > 0.0);
        // Hyperbolic: a < 0 (closed form a = −μ/(2ε) = −0.5 for μ = 1, ε = 1).
        let el = Elements::from_state(&Vector3::x(), &(2.0 * Vector3::y()), 1.0);
        assert_relative_eq!(el.semi_major_axis_m, -0.5);
        assert!(el.apogee_alt_m().is_infinite() && el.apogee_alt_m() > 0.0);
        // Vertical rise from the pole (h = 0) and the centre: documented conventions.
        let r = Vector3::new(0.0, 0.0, 6.4e6);
        let el = Elements::from_state(&r, &Vector3::new(0.0, 0.0, 100.0), WGS84_GM_M3_S2);
        assert_relative_eq!(el.eccentricity, 1.0, epsilon = 1e-12);
        assert_relative_eq!(el.perigee_radius_m, 0.0);
        assert!(fields(&el).iter().all(|x| !x.is_nan()));
        let el = Elements::from_state(&Vector3::zeros(), &Vector3::x(), WGS84_GM_M3_S2);
        assert!(fields(&el).iter().all(|x| x.is_finite()));
    }

    fn fields(el: &Elements) -> [f64; 10] {
        [
            el.semi_major_axis_m,
            el.eccentricity,
            el.inclination_rad,
            el.raan_rad,
            el.arg_perigee_rad,
            el.true_anomaly_rad,
            el.specific_angular_momentum_m2_s,
            el.semi_latus_rectum_m,
            el.perigee_radius_m,
            el.apogee_radius_m,
        ]
    }

    #[test]
    fn launch_azimuth_28_5_deg_to_iss_like_orbit() {
        // Source: domain brief §3(c) [der] (Kluever Ex. 3.3 method): φ = 28.5°, i = 51.65°
        // → β_I = 44.912° (southerly 135.088°), β_R = 42.701° with v_orb = 7784.26, v_rot = 408.74
        let (lat, inc) = (28.5_f64.to_radians(), 51.65_f64.to_radians());
        let north = inertial_azimuth_rad(lat, inc, AzimuthBranch::Northerly).unwrap();
        let south = inertial_azimuth_rad(lat, inc, AzimuthBranch::Southerly).unwrap();
        assert_relative_eq!(north.to_degrees(), 44.912, epsilon = 5e-4);
        assert_relative_eq!(south.to_degrees(), 135.088, epsilon = 5e-4);
        let beta_r =
            launch_azimuth_rad(lat, inc, 7784.26, 408.74, AzimuthBranch::Northerly).unwrap();
        assert_relative_eq!(beta_r.to_degrees(), 42.701, epsilon = 5e-4);
        // Source: mirror symmetry of the atan2 form: southerly β_R = 180° − northerly β_R
        let beta_r_s =
            launch_azimuth_rad(lat, inc, 7784.26, 408.74, AzimuthBranch::Southerly).unwrap();
        assert_relative_eq!(beta_r_s, PI - beta_r, epsilon = 1e-12);
    }

    #[test]
    fn launch_azimuth_30_deg_to_50_deg() {
        // Source: domain brief §3(c) [der]: φ = 30°, i = 50° → β_I = 47.921°, β_R = 45.856°
        // (inputs as in the first worked example: 200 km circular v_orb = 7784.26 m/s,
        // spherical v_rot = 465.101 cos 30° = 402.79 m/s)
        let (lat, inc) = (30.0_f64.to_radians(), 50.0_f64.to_radians());
        let beta_i = inertial_azimuth_rad(lat, inc, AzimuthBranch::Northerly).unwrap();
        assert_relative_eq!(beta_i.to_degrees(), 47.921, epsilon = 5e-4);
        let beta_r =
            launch_azimuth_rad(lat, inc, 7784.26, 402.79, AzimuthBranch::Northerly).unwrap();
        assert_relative_eq!(beta_r.to_degrees(), 45.856, epsilon = 5e-4);
    }

    #[test]
    fn launch_azimuth_edge_cases() {
        // Source: closed form: i = |φ| → due east (90°); polar i = 90° → due north / south;
        // retrograde i = 180° − |φ| → due west (270°)
        let lat = 28.5_f64.to_radians();
        let east = inertial_azimuth_rad(lat, lat, AzimuthBranch::Northerly).unwrap();
        assert_relative_eq!(east, PI / 2.0, epsilon = 1e-12);
        let south_east = inertial_azimuth_rad(-lat, lat, AzimuthBranch::Southerly).unwrap();
        assert_relative_eq!(south_east, PI / 2.0, epsilon = 1e-12);
        let polar = inertial_azimuth_rad(lat, PI / 2.0, AzimuthBranch::Northerly).unwrap();
        assert_relative_eq!(polar, 0.0, epsilon = 1e-15);
        let polar_s = inertial_azimuth_rad(lat, PI / 2.0, AzimuthBranch::Southerly).unwrap();
        assert_relative_eq!(polar_s, PI, epsilon = 1e-15);
        // PI − lat carries ~2e-16 rad of rounding and β grows like its square root at
        // this tangency, hence 1e-7.
        let west = inertial_azimuth_rad(lat, PI - lat, AzimuthBranch::Northerly).unwrap();
        assert_relative_eq!(west, 1.5 * PI, epsilon = 1e-7);
        let west_s = inertial_azimuth_rad(-lat, PI - lat, AzimuthBranch::Southerly).unwrap();
        assert_relative_eq!(west_s, 1.5 * PI, epsilon = 1e-7);
    }

    #[test]
    fn unreachable_inclination_is_an_error() {
        // Source: domain brief §3(c): solvable only if |φ| ≤ i ≤ 180° − |φ|
        let lat = 28.5_f64.to_radians();
        for inc_deg in [28.4, 0.0, 151.6, 180.0, -1.0, 181.0, f64::NAN] {
            let err = inertial_azimuth_rad(lat, f64::to_radians(inc_deg), AzimuthBranch::Northerly)
                .unwrap_err();
            assert_relative_eq!(err.latitude_rad, lat);
        }
        let err =
            launch_azimuth_rad(-lat, 0.4, 7784.26, 408.74, AzimuthBranch::Southerly).unwrap_err();
        let msg = err.to_string();
        assert!(msg.contains("-28.500°"), "{msg}");
        assert!(msg.contains("22.918°"), "{msg}");
        assert!(
            msg.contains("minimum reachable inclination is |latitude| = 28.500°"),
            "{msg}"
        );
        assert!(inertial_azimuth_rad(1.6, 1.0, AzimuthBranch::Northerly).is_err());
    }
}
