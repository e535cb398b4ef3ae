//! Vacuum instantaneous impact point (IIP): where the vehicle would strike the surface if its
//! thrust stopped now and it flew on without air, on the two-body (Keplerian) conic through the
//! present state, down to a sphere of given radius.
//!
//! Method: Bate, Mueller & White, *Fundamentals of Astrodynamics* (1971), ch. 6 "Ballistic
//! missile trajectories" (the free-flight conic from burnout to re-entry) with ch. 4's Kepler
//! equation for the time of flight (from memory). The conic's true anomaly at impact solves
//! `R = p / (1 + e cos ν)` on the descending branch; the impact point is the present position
//! turned by `Δν` in the orbit plane; the time of flight is `(M_i − M_0)/n` with
//! `M = E − e sin E`. Drag, J2 and the ellipsoid's shape are left out, as a vacuum IIP does.

use nalgebra::Vector3;

/// The point where the free-flight conic meets the sphere.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impact {
    /// Impact position in the same inertial frame as the state, m (its norm is the sphere's
    /// radius).
    pub r_m: Vector3<f64>,
    /// Time from the present state to impact, s.
    pub time_of_flight_s: f64,
}

/// Vacuum IIP of the state (`r_m`, `v_mps`, inertial) under gravitational parameter `mu_m3_s2`,
/// on a sphere of radius `radius_m`. `None` when the conic never comes down to the sphere (an
/// orbit whose perigee clears it, an escape trajectory) or the input is degenerate. A state on
/// or under the sphere is its own impact point (time of flight 0).
pub fn vacuum_impact(
    r_m: &Vector3<f64>,
    v_mps: &Vector3<f64>,
    mu_m3_s2: f64,
    radius_m: f64,
) -> Option<Impact> {
    let r = r_m.norm();
    if !(r.is_finite() && r > 0.0 && radius_m > 0.0 && mu_m3_s2 > 0.0) {
        return None;
    }
    if r <= radius_m {
        return Some(Impact {
            r_m: *r_m * (radius_m / r),
            time_of_flight_s: 0.0,
        });
    }
    let h_vec = r_m.cross(v_mps);
    let h = h_vec.norm();
    let v2 = v_mps.norm_squared();
    let energy = 0.5 * v2 - mu_m3_s2 / r;
    if energy.is_nan() || energy >= 0.0 || h <= 0.0 {
        // Escape, or a radial fall (h = 0: no plane to turn in; not met on an ascent).
        return None;
    }
    let p = h * h / mu_m3_s2;
    let e_vec = ((v2 - mu_m3_s2 / r) * r_m - r_m.dot(v_mps) * v_mps) / mu_m3_s2;
    let e = e_vec.norm();
    if e < 1e-12 || p / (1.0 + e) >= radius_m {
        return None; // perigee clears the sphere
    }
    // True anomaly now, in [0, 2π): cos ν = e·r/(e r), and ν > π while descending (r·v < 0).
    let two_pi = std::f64::consts::TAU;
    let cos_nu0 = (e_vec.dot(r_m) / (e * r)).clamp(-1.0, 1.0);
    let nu0 = if r_m.dot(v_mps) >= 0.0 {
        cos_nu0.acos()
    } else {
        two_pi - cos_nu0.acos()
    };
    // Descending crossing of the sphere: ν_i = 2π − acos((p/R − 1)/e).
    let nu_i = two_pi - ((p / radius_m - 1.0) / e).clamp(-1.0, 1.0).acos();
    let dnu = (nu_i - nu0).rem_euclid(two_pi);
    let u = r_m / r;
    let w = h_vec.cross(r_m).normalize();
    let r_impact = (u * dnu.cos() + w * dnu.sin()) * radius_m;
    let a = -mu_m3_s2 / (2.0 * energy);
    let n = (mu_m3_s2 / (a * a * a)).sqrt();
    let mean = |nu: f64| {
        let big_e = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (nu / 2.0).tan()).atan();
        (big_e - e * big_e.sin()).rem_euclid(two_pi)
    };
    let dm = (mean(nu_i) - mean(nu0)).rem_euclid(two_pi);
    Some(Impact {
        r_m: r_impact,
        time_of_flight_s: dm / n,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const MU: f64 = 3.986_004_418e14;
    const R: f64 = 6_378_137.0;

    #[test]
    fn orbit_with_perigee_above_the_sphere_has_no_impact() {
        let r = Vector3::new(R + 200e3, 0.0, 0.0);
        let v = Vector3::new(0.0, (MU / (R + 200e3)).sqrt(), 0.0);
        assert_eq!(vacuum_impact(&r, &v, MU, R), None);
        assert_eq!(
            vacuum_impact(&r, &(v * 1.5), MU, R),
            None,
            "escape trajectory"
        );
    }

    #[test]
    fn horizontal_launch_from_apogee_lands_symmetric() {
        // A horizontal state at apogee: the conic is symmetric about its major axis, so the
        // descending crossing lies at ν_i and the ascending one at 2π − ν_i. Closed form
        // (Bate, Mueller & White 1971, eq. 6.2-4 family, from memory): the range angle from
        // apogee Ψ satisfies cos(π − Ψ) = (p/R − 1)/e, with p and e from the state.
        let ra = R + 300e3;
        let v0 = 5000.0;
        let r = Vector3::new(ra, 0.0, 0.0);
        let v = Vector3::new(0.0, v0, 0.0);
        let imp = vacuum_impact(&r, &v, MU, R).expect("falls back");
        assert_relative_eq!(imp.r_m.norm(), R, max_relative = 1e-12);
        let h = ra * v0;
        let p = h * h / MU;
        let e = 1.0 - p / ra; // apogee: r_a = p / (1 − e)
        let psi = std::f64::consts::PI - ((p / R - 1.0) / e).acos();
        let got = imp.r_m.y.atan2(imp.r_m.x);
        assert_relative_eq!(got, psi, epsilon = 1e-9);
        // Time of flight from apogee (M = π) to the crossing, by Kepler's equation.
        let a = 0.5 * (ra + p / (1.0 + e));
        let nu = std::f64::consts::PI + psi;
        let ecc = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (nu / 2.0).tan()).atan();
        let m = (ecc - e * ecc.sin()).rem_euclid(std::f64::consts::TAU);
        let want = (m - std::f64::consts::PI) / (MU / a.powi(3)).sqrt();
        assert_relative_eq!(imp.time_of_flight_s, want, max_relative = 1e-9);
        assert!(imp.time_of_flight_s > 0.0 && imp.time_of_flight_s < 3000.0);
    }

    #[test]
    fn vertical_shot_and_bad_input() {
        let r = Vector3::new(R, 0.0, 0.0);
        let imp = vacuum_impact(&r, &Vector3::zeros(), MU, R).expect("on the sphere");
        assert_relative_eq!(imp.time_of_flight_s, 0.0);
        let nan = Vector3::new(f64::NAN, 0.0, 0.0);
        assert_eq!(vacuum_impact(&nan, &Vector3::zeros(), MU, R), None);
        let up = Vector3::new(R + 10e3, 0.0, 0.0);
        assert_eq!(
            vacuum_impact(&up, &Vector3::new(100.0, 0.0, 0.0), MU, R),
            None,
            "radial: no plane"
        );
    }
}
