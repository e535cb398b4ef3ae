//! The environment seen by the vehicle at one instant: altitude, local frame, gravity, air and the
//! Earth-relative velocity, for the rotating WGS-84 Earth, a spherical Earth (radius and GM as
//! inputs, the textbook model) or a flat-Earth check model.
//!
//! Frames. `Wgs84`: the state is in an Earth-centred inertial frame that coincides with the
//! Earth-fixed frame at t = 0 (Greenwich angle θ_g0 = 0, so θ = ω_E·t). The air co-rotates with
//! the Earth: `v_rel = v − ω_E × r`. Altitude is geodetic (WGS-84 ellipsoid), the local vertical is
//! the ellipsoid normal. `Spherical`: the same frames about a sphere of radius R; gravity is the
//! point mass `g = −μ r/r³` (no J2), the altitude is `|r| − R`, the local vertical is radial and
//! the latitude is geocentric (on a sphere geodetic and geocentric latitude coincide).
//! `Flat`: x east, y north, z up, uniform gravity −g ẑ, no rotation; used to
//! reproduce closed-form solutions (Culler & Fried 1957, Bryson & Ho 1975).
//!
//! Orbit quantities (energy, elements, apsis altitudes) use [`Environment::gm_m3_s2`] and
//! [`Environment::reference_radius_m`]: the WGS-84 GM and equatorial radius, or the sphere's.

use nalgebra::Vector3;

use super::atmosphere::{us1976, AtmosphereState};
use super::earth::{self, Geodetic};

/// Shape, gravity and rotation of the Earth model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum EarthModel {
    /// WGS-84 ellipsoid, point-mass gravity plus optionally J2, rotation optional (checks).
    Wgs84 {
        /// Include the J2 zonal term.
        j2: bool,
        /// Rotate the Earth (and its atmosphere) at ω_E.
        rotation: bool,
    },
    /// Sphere of radius `radius_m`, point-mass gravity of parameter `gm_m3_s2` (no J2), turning
    /// at `rotation_rad_s` about the z axis (0: not rotating). Geocentric latitude = geodetic.
    Spherical {
        /// Radius R of the sphere, m (apsis altitudes are measured above it).
        radius_m: f64,
        /// Gravitational parameter μ = GM, m³/s².
        gm_m3_s2: f64,
        /// Rotation rate ω about the z axis, rad/s (the WGS-84 rate by default in the file).
        rotation_rad_s: f64,
    },
    /// Flat Earth, uniform gravity of this magnitude (m/s²), no rotation; for closed-form checks.
    Flat {
        /// Gravity magnitude, m/s².
        gravity_mps2: f64,
    },
}

impl EarthModel {
    /// Gravitational parameter μ of the central body, m³/s²: the WGS-84 GM or the sphere's. The
    /// flat check model has no central body; its flights are reported against the WGS-84 value.
    pub fn gm_m3_s2(&self) -> f64 {
        match *self {
            EarthModel::Spherical { gm_m3_s2, .. } => gm_m3_s2,
            EarthModel::Wgs84 { .. } | EarthModel::Flat { .. } => earth::WGS84_GM_M3_S2,
        }
    }

    /// Reference radius of orbit altitudes, m: the WGS-84 equatorial radius a, or the sphere's
    /// radius (apsis altitude = apsis radius − this; flat: the WGS-84 value, as for GM).
    pub fn reference_radius_m(&self) -> f64 {
        match *self {
            EarthModel::Spherical { radius_m, .. } => radius_m,
            EarthModel::Wgs84 { .. } | EarthModel::Flat { .. } => earth::WGS84_A_M,
        }
    }

    /// Gravitational acceleration at `r_m` (m), m/s²: WGS-84 point mass (+ J2), the sphere's
    /// point mass `−μ r/r³`, or the flat model's uniform `−g ẑ`.
    pub fn gravity_mps2(&self, r_m: &Vector3<f64>) -> Vector3<f64> {
        match *self {
            EarthModel::Wgs84 { j2, .. } => earth::gravity(r_m, j2),
            EarthModel::Spherical { gm_m3_s2, .. } => point_mass_gravity(r_m, gm_m3_s2),
            EarthModel::Flat { gravity_mps2 } => Vector3::new(0.0, 0.0, -gravity_mps2),
        }
    }

    /// Short name of the model for reports: `wgs84`, `sphere` or `flat`.
    pub fn key(&self) -> &'static str {
        match self {
            EarthModel::Wgs84 { .. } => "wgs84",
            EarthModel::Spherical { .. } => "sphere",
            EarthModel::Flat { .. } => "flat",
        }
    }
}

/// Point-mass gravity `g = −μ r/r³` (m/s²) at `r_m` (m) for μ = `mu_m3_s2` (Newton; any text,
/// e.g. Bate, Mueller & White 1971 §1.3). Zero at r = 0, like [`earth::gravity`].
fn point_mass_gravity(r_m: &Vector3<f64>, mu_m3_s2: f64) -> Vector3<f64> {
    let r2 = r_m.norm_squared();
    if r2 == 0.0 {
        return Vector3::zeros();
    }
    let inv_r = 1.0 / r2.sqrt();
    -(mu_m3_s2 * inv_r * inv_r * inv_r) * r_m
}

/// Atmosphere model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AtmosphereModel {
    /// U.S. Standard Atmosphere 1976 (see [`super::atmosphere`]).
    Us1976,
    /// No air: zero density and pressure.
    Vacuum,
    /// The same air at every altitude (closed-form checks).
    Constant(AtmosphereState),
    /// U.S. Standard Atmosphere 1976 with every density times this factor (a dispersed day;
    /// pressure and temperature as the standard).
    Us1976Scaled(f64),
}

/// Earth and atmosphere together.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Environment {
    /// Earth model.
    pub earth: EarthModel,
    /// Atmosphere model.
    pub atmosphere: AtmosphereModel,
}

/// Local conditions at one state. Vectors are in the integration frame. Latitude and longitude
/// are not here (the right-hand side never needs the angles): see [`Environment::geodetic`].
#[derive(Debug, Clone, Copy)]
pub struct Local {
    /// Altitude above the ellipsoid (sphere: |r| − R; flat: z), m.
    pub altitude_m: f64,
    /// Local vertical (ellipsoid normal; sphere: radial), unit.
    pub up: Vector3<f64>,
    /// Local east, unit.
    pub east: Vector3<f64>,
    /// Local north, unit.
    pub north: Vector3<f64>,
    /// Gravitational acceleration, m/s².
    pub gravity_mps2: Vector3<f64>,
    /// Velocity relative to the co-rotating air, m/s.
    pub v_rel_mps: Vector3<f64>,
    /// Centrifugal acceleration −ω×(ω×r) of the rotating frame, m/s².
    pub centrifugal_mps2: Vector3<f64>,
    /// Air properties.
    pub air: AtmosphereState,
}

const VACUUM: AtmosphereState = AtmosphereState {
    temperature_k: 0.0,
    pressure_pa: 0.0,
    density_kg_m3: 0.0,
    speed_of_sound_mps: 1.0,
};

impl Environment {
    /// Earth angular velocity vector in the integration frame, rad/s.
    pub fn omega_rad_s(&self) -> Vector3<f64> {
        match self.earth {
            EarthModel::Wgs84 { rotation: true, .. } => {
                Vector3::new(0.0, 0.0, earth::WGS84_OMEGA_RAD_S)
            }
            EarthModel::Spherical { rotation_rad_s, .. } => Vector3::new(0.0, 0.0, rotation_rad_s),
            _ => Vector3::zeros(),
        }
    }

    /// Earth rotation angle at time `t_s`, rad (θ = ω t, θ_g0 = 0).
    pub fn rotation_angle_rad(&self, t_s: f64) -> f64 {
        self.omega_rad_s().z * t_s
    }

    /// Gravitational parameter μ used for orbits, m³/s² (see [`EarthModel::gm_m3_s2`]).
    pub fn gm_m3_s2(&self) -> f64 {
        self.earth.gm_m3_s2()
    }

    /// Reference radius of orbit altitudes, m: the WGS-84 equatorial radius or the sphere's
    /// radius (see [`EarthModel::reference_radius_m`]).
    pub fn reference_radius_m(&self) -> f64 {
        self.earth.reference_radius_m()
    }

    /// Specific mechanical energy, J/kg: `v²/2 − μ/r` (point-mass potential, the model's GM), or
    /// `v²/2 + g z` on the flat check model.
    pub fn specific_energy_j_kg(&self, r_m: &Vector3<f64>, v_mps: &Vector3<f64>) -> f64 {
        match self.earth {
            EarthModel::Wgs84 { .. } | EarthModel::Spherical { .. } => {
                0.5 * v_mps.norm_squared() - self.gm_m3_s2() / r_m.norm()
            }
            EarthModel::Flat { gravity_mps2 } => 0.5 * v_mps.norm_squared() + gravity_mps2 * r_m.z,
        }
    }

    /// Orbital altitude `|r| − R` (m; R the reference radius, the report convention) or `z` on
    /// the flat model.
    pub fn radial_altitude_m(&self, r_m: &Vector3<f64>) -> f64 {
        match self.earth {
            EarthModel::Wgs84 { .. } | EarthModel::Spherical { .. } => {
                r_m.norm() - self.reference_radius_m()
            }
            EarthModel::Flat { .. } => r_m.z,
        }
    }

    /// Geocentric latitude (rad) of a point on the surface at geodetic latitude
    /// `geodetic_lat_rad`: tan φ' = (1 − e²) tan φ on the WGS-84 ellipsoid; the same angle on
    /// the sphere (and the flat model).
    pub fn geocentric_latitude_rad(&self, geodetic_lat_rad: f64) -> f64 {
        match self.earth {
            EarthModel::Wgs84 { .. } => ((1.0 - earth::WGS84_E2) * geodetic_lat_rad.tan()).atan(),
            EarthModel::Spherical { .. } | EarthModel::Flat { .. } => geodetic_lat_rad,
        }
    }

    /// Inertial speed of the pad at `site` due to the Earth's rotation, m/s (the eastward speed
    /// the launch-azimuth correction subtracts): ω_E (N + h) cos φ on WGS-84 (always the WGS-84
    /// rate, as the azimuth correction has always used), ω (R + h) cos φ on the sphere at its own
    /// rate, 0 on the flat model.
    pub fn surface_rotation_speed_mps(&self, site: &Geodetic) -> f64 {
        match self.earth {
            EarthModel::Wgs84 { .. } => earth::surface_rotation_speed_mps(site),
            EarthModel::Spherical {
                radius_m,
                rotation_rad_s,
                ..
            } => rotation_rad_s * (radius_m + site.altitude_m) * site.latitude_rad.cos().abs(),
            EarthModel::Flat { .. } => 0.0,
        }
    }

    /// Inertial flight-path angle against the plane normal to the geocentric radius (flat model:
    /// against the horizontal plane), rad.
    pub fn flight_path_angle_rad(&self, r_m: &Vector3<f64>, v_mps: &Vector3<f64>) -> f64 {
        let up = match self.earth {
            EarthModel::Wgs84 { .. } | EarthModel::Spherical { .. } => r_m / r_m.norm().max(1e-9),
            EarthModel::Flat { .. } => Vector3::z(),
        };
        (up.dot(v_mps) / v_mps.norm().max(1e-9))
            .clamp(-1.0, 1.0)
            .asin()
    }

    /// Altitudes (m, increasing) where the air's properties have a corner or a step (see
    /// [`super::atmosphere::CORNER_ALTITUDES_M`]); none without the standard atmosphere.
    pub fn air_corner_altitudes_m(&self) -> &'static [f64] {
        match self.atmosphere {
            AtmosphereModel::Us1976 | AtmosphereModel::Us1976Scaled(_) => {
                &super::atmosphere::CORNER_ALTITUDES_M
            }
            AtmosphereModel::Vacuum | AtmosphereModel::Constant(_) => &[],
        }
    }

    /// The speed of sound of [`Environment::air`] at altitude `altitude_m` (m), m/s, without
    /// the rest of the air's state.
    pub fn speed_of_sound_mps(&self, altitude_m: f64) -> f64 {
        match self.atmosphere {
            AtmosphereModel::Us1976 | AtmosphereModel::Us1976Scaled(_) => {
                super::atmosphere::us1976_speed_of_sound_mps(altitude_m)
            }
            AtmosphereModel::Vacuum => VACUUM.speed_of_sound_mps,
            AtmosphereModel::Constant(a) => a.speed_of_sound_mps,
        }
    }

    /// Air at altitude `altitude_m`.
    pub fn air(&self, altitude_m: f64) -> AtmosphereState {
        match self.atmosphere {
            AtmosphereModel::Us1976 => us1976(altitude_m),
            AtmosphereModel::Vacuum => VACUUM,
            AtmosphereModel::Constant(a) => a,
            AtmosphereModel::Us1976Scaled(k) => {
                let mut a = us1976(altitude_m);
                a.density_kg_m3 *= k;
                a
            }
        }
    }

    /// Initial inertial state of a point resting on the pad: position and velocity (m, m/s).
    pub fn pad_state(&self, site: &Geodetic) -> (Vector3<f64>, Vector3<f64>) {
        match self.earth {
            EarthModel::Wgs84 { .. } => {
                let r = earth::geodetic_to_ecef(site);
                (r, self.omega_rad_s().cross(&r))
            }
            EarthModel::Spherical { radius_m, .. } => {
                // r = (R + h)(cos φ cos λ, cos φ sin λ, sin φ): the ECEF position on the sphere,
                // which is the inertial one at t = 0 (θ_g0 = 0).
                let (sin_lat, cos_lat) = site.latitude_rad.sin_cos();
                let (sin_lon, cos_lon) = site.longitude_rad.sin_cos();
                let r = (radius_m + site.altitude_m)
                    * Vector3::new(cos_lat * cos_lon, cos_lat * sin_lon, sin_lat);
                (r, self.omega_rad_s().cross(&r))
            }
            EarthModel::Flat { .. } => (Vector3::new(0.0, 0.0, site.altitude_m), Vector3::zeros()),
        }
    }

    /// Geodetic latitude, Earth-fixed longitude (rad) and altitude (m) at time `t_s` and
    /// inertial position `r_m`, for reports (flat model: 0, 0, z). Uses `atan2` and a rotation
    /// to Earth-fixed axes, which [`Environment::local`] avoids.
    pub fn geodetic(&self, t_s: f64, r_m: &Vector3<f64>) -> Geodetic {
        match self.earth {
            EarthModel::Wgs84 { .. } => {
                earth::ecef_to_geodetic(&earth::eci_to_ecef(r_m, self.rotation_angle_rad(t_s)))
            }
            EarthModel::Spherical { radius_m, .. } => spherical_coordinates(
                &earth::eci_to_ecef(r_m, self.rotation_angle_rad(t_s)),
                radius_m,
            ),
            EarthModel::Flat { .. } => Geodetic {
                latitude_rad: 0.0,
                longitude_rad: 0.0,
                altitude_m: r_m.z,
            },
        }
    }

    /// Vacuum instantaneous impact point of the inertial state (`r_m`, `v_mps`) at time `t_s`:
    /// geodetic latitude and Earth-fixed longitude (rad) where the free-flight conic meets the
    /// sphere through the ellipsoid surface below the vehicle ([`super::iip`]; on the spherical
    /// model the sphere itself), the Earth having turned for the time of flight. `None` on the
    /// flat model, for an orbit whose perigee clears that sphere, or for an escape trajectory.
    /// For reports; not called while integrating.
    pub fn vacuum_iip(
        &self,
        t_s: f64,
        r_m: &Vector3<f64>,
        v_mps: &Vector3<f64>,
    ) -> Option<Geodetic> {
        match self.earth {
            EarthModel::Wgs84 { .. } => {}
            EarthModel::Spherical {
                radius_m, gm_m3_s2, ..
            } => {
                let hit = super::iip::vacuum_impact(r_m, v_mps, gm_m3_s2, radius_m)?;
                let theta = self.rotation_angle_rad(t_s + hit.time_of_flight_s);
                return Some(spherical_coordinates(
                    &earth::eci_to_ecef(&hit.r_m, theta),
                    radius_m,
                ));
            }
            EarthModel::Flat { .. } => return None,
        }
        // Ellipsoid radius at the present geocentric latitude φc:
        // R = a √((1 − e²) / (1 − e² cos² φc)) (the ellipse r(φc) in polar form).
        let r = r_m.norm();
        let cos2 = if r > 0.0 {
            1.0 - (r_m.z / r).powi(2)
        } else {
            1.0
        };
        let radius =
            earth::WGS84_A_M * ((1.0 - earth::WGS84_E2) / (1.0 - earth::WGS84_E2 * cos2)).sqrt();
        let hit = super::iip::vacuum_impact(r_m, v_mps, earth::WGS84_GM_M3_S2, radius)?;
        let theta = self.rotation_angle_rad(t_s + hit.time_of_flight_s);
        let g = earth::ecef_to_geodetic(&earth::eci_to_ecef(&hit.r_m, theta));
        Some(g)
    }

    /// The altitude of [`Environment::local`] at position `r_m` (m): geodetic height on WGS-84,
    /// `|r| − R` on the sphere, `z` on the flat model, m. Computed as `local` computes it.
    pub fn altitude_m(&self, r_m: &Vector3<f64>) -> f64 {
        match self.earth {
            EarthModel::Wgs84 { .. } => {
                let p = (r_m.x * r_m.x + r_m.y * r_m.y).sqrt();
                earth::meridian_point(p, r_m.z).altitude_m
            }
            EarthModel::Spherical { radius_m, .. } => r_m.norm() - radius_m,
            EarthModel::Flat { .. } => r_m.z,
        }
    }

    /// Local conditions at time `t_s`, position `r_m`, inertial velocity `v_mps`. No allocation.
    /// The time is not used by the models offered: in the inertial frame the rotating Earth's
    /// geodetic latitude, height and local frame depend on `r_m` alone (see `local_wgs84`).
    pub fn local(&self, _t_s: f64, r_m: &Vector3<f64>, v_mps: &Vector3<f64>) -> Local {
        match self.earth {
            EarthModel::Wgs84 { j2, .. } => self.local_wgs84(r_m, v_mps, j2),
            EarthModel::Spherical {
                radius_m, gm_m3_s2, ..
            } => self.local_spherical(r_m, v_mps, radius_m, gm_m3_s2),
            EarthModel::Flat { gravity_mps2 } => Local {
                altitude_m: r_m.z,
                up: Vector3::z(),
                east: Vector3::x(),
                north: Vector3::y(),
                gravity_mps2: Vector3::new(0.0, 0.0, -gravity_mps2),
                v_rel_mps: *v_mps,
                centrifugal_mps2: Vector3::zeros(),
                air: self.air(r_m.z),
            },
        }
    }

    /// Local conditions on the WGS-84 model; the time is not needed (see below).
    fn local_wgs84(&self, r: &Vector3<f64>, v: &Vector3<f64>, j2: bool) -> Local {
        let omega = self.omega_rad_s();
        // Geodetic latitude and height depend only on the distance p from the spin axis and on
        // z, which the rotation θ = ω t about that axis leaves unchanged: no rotation to
        // Earth-fixed axes. The local frame in inertial axes is the Earth-fixed one at λ + θ,
        // the inertial azimuth of r, so cos(λ + θ) = x/p and sin(λ + θ) = y/p; with
        // (sin φ, cos φ) from the geodetic step, U = (cosφ cos(λ+θ), cosφ sin(λ+θ), sinφ),
        // E = (−sin(λ+θ), cos(λ+θ), 0), N = U × E (domain brief §1). No trigonometric call.
        let p = (r.x * r.x + r.y * r.y).sqrt();
        let m = earth::meridian_point(p, r.z);
        let (cos_az, sin_az) = if p > 0.0 {
            (r.x / p, r.y / p)
        } else {
            (1.0, 0.0)
        };
        let (sin_lat, cos_lat) = (m.sin_lat, m.cos_lat);
        let w_x_r = omega.cross(r);
        Local {
            altitude_m: m.altitude_m,
            up: Vector3::new(cos_lat * cos_az, cos_lat * sin_az, sin_lat),
            east: Vector3::new(-sin_az, cos_az, 0.0),
            north: Vector3::new(-sin_lat * cos_az, -sin_lat * sin_az, cos_lat),
            gravity_mps2: earth::gravity(r, j2),
            v_rel_mps: v - w_x_r,
            centrifugal_mps2: -omega.cross(&w_x_r),
            air: self.air(m.altitude_m),
        }
    }
}

impl Environment {
    /// Local conditions on the spherical model: up = r̂, latitude geocentric (sin φ = z/r,
    /// cos φ = p/r), the same east and north as on WGS-84 (domain brief §1), altitude |r| − R,
    /// point-mass gravity.
    fn local_spherical(&self, r: &Vector3<f64>, v: &Vector3<f64>, radius_m: f64, mu: f64) -> Local {
        let omega = self.omega_rad_s();
        let p = (r.x * r.x + r.y * r.y).sqrt();
        let rn = r.norm();
        let (cos_az, sin_az) = if p > 0.0 {
            (r.x / p, r.y / p)
        } else {
            (1.0, 0.0)
        };
        let (sin_lat, cos_lat) = if rn > 0.0 {
            (r.z / rn, p / rn)
        } else {
            (0.0, 1.0)
        };
        let altitude_m = rn - radius_m;
        let w_x_r = omega.cross(r);
        Local {
            altitude_m,
            up: Vector3::new(cos_lat * cos_az, cos_lat * sin_az, sin_lat),
            east: Vector3::new(-sin_az, cos_az, 0.0),
            north: Vector3::new(-sin_lat * cos_az, -sin_lat * sin_az, cos_lat),
            gravity_mps2: point_mass_gravity(r, mu),
            v_rel_mps: v - w_x_r,
            centrifugal_mps2: -omega.cross(&w_x_r),
            air: self.air(altitude_m),
        }
    }
}

/// Latitude (geocentric = geodetic on a sphere), longitude (rad) and height above a sphere of
/// radius `radius_m` (m) of an Earth-fixed position (m).
fn spherical_coordinates(r_ecef_m: &Vector3<f64>, radius_m: f64) -> Geodetic {
    let p = r_ecef_m.x.hypot(r_ecef_m.y);
    Geodetic {
        latitude_rad: r_ecef_m.z.atan2(p),
        longitude_rad: r_ecef_m.y.atan2(r_ecef_m.x),
        altitude_m: p.hypot(r_ecef_m.z) - radius_m,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_drop_from_rest_above_the_pad_lands_below_it_and_the_flat_model_has_no_iip() {
        let env = Environment {
            earth: EarthModel::Wgs84 {
                j2: false,
                rotation: true,
            },
            atmosphere: AtmosphereModel::Vacuum,
        };
        let above = Geodetic {
            latitude_rad: 31.2_f64.to_radians(),
            longitude_rad: -47.3_f64.to_radians(),
            altitude_m: 10_000.0,
        };
        let (r, v) = env.pad_state(&above);
        let g = env.vacuum_iip(0.0, &r, &v).expect("a drop lands");
        // A 10 km drop lasts about √(2h/g) = 45 s; the Coriolis drift over it is metres
        // (eastward deflection ω g t³ cos φ / 3 ≈ 2 m, from memory), far below 0.001° (~100 m).
        assert!((g.latitude_rad - above.latitude_rad).to_degrees().abs() < 1e-3);
        assert!((g.longitude_rad - above.longitude_rad).to_degrees().abs() < 1e-3);
        assert!(
            g.altitude_m.abs() < 50.0,
            "on the surface: {}",
            g.altitude_m
        );
        let flat = Environment {
            earth: EarthModel::Flat { gravity_mps2: 9.8 },
            atmosphere: AtmosphereModel::Vacuum,
        };
        assert!(flat.vacuum_iip(0.0, &r, &v).is_none());
    }

    fn sphere(radius_m: f64, gm_m3_s2: f64, rotation_rad_s: f64) -> Environment {
        Environment {
            earth: EarthModel::Spherical {
                radius_m,
                gm_m3_s2,
                rotation_rad_s,
            },
            atmosphere: AtmosphereModel::Vacuum,
        }
    }

    fn site(lat_deg: f64, lon_deg: f64, alt_m: f64) -> Geodetic {
        Geodetic {
            latitude_rad: lat_deg.to_radians(),
            longitude_rad: lon_deg.to_radians(),
            altitude_m: alt_m,
        }
    }

    #[test]
    fn a_sphere_of_the_wgs84_radius_and_rate_gives_the_spherical_rotation_gain() {
        // Source: domain brief §3(d) [der]: due-east gain on a sphere, ω_E a cos φ =
        // 465.101 cos φ: 408.74 m/s at 28.5°, 402.79 at 30°, 328.88 at 45° (the ellipsoid's
        // ω_E N cos φ is larger: 409.05, 403.13, 329.43, so a sphere that used N would fail).
        let env = sphere(
            earth::WGS84_A_M,
            earth::WGS84_GM_M3_S2,
            earth::WGS84_OMEGA_RAD_S,
        );
        for (lat_deg, want) in [(28.5, 408.74), (30.0, 402.79), (45.0, 328.88)] {
            for s in [site(lat_deg, -80.0, 0.0), site(-lat_deg, 33.0, 0.0)] {
                let (r, v) = env.pad_state(&s);
                assert!((v.norm() - want).abs() < 0.005, "{lat_deg}: {}", v.norm());
                assert!((env.surface_rotation_speed_mps(&s) - want).abs() < 0.005);
                // On the sphere the pad lies at radius R + h and its latitude is geocentric.
                assert!((r.norm() - earth::WGS84_A_M).abs() < 1e-6);
                let g = env.geodetic(0.0, &r);
                assert!((g.latitude_rad - s.latitude_rad).abs() < 1e-14);
                assert!((g.longitude_rad - s.longitude_rad).abs() < 1e-14);
                assert!(g.altitude_m.abs() < 1e-6);
                assert!(
                    (env.geocentric_latitude_rad(s.latitude_rad) - s.latitude_rad).abs() < 1e-15
                );
            }
        }
        // Not rotating: no pad speed.
        let still = sphere(earth::WGS84_A_M, earth::WGS84_GM_M3_S2, 0.0);
        assert!(still.pad_state(&site(28.5, 0.0, 0.0)).1.norm() < 1e-12);
    }

    #[test]
    fn sphere_gravity_is_the_point_mass_and_its_vertical_is_radial() {
        // Source: Newton's point-mass field |g| = μ/r² along −r̂ (Bate, Mueller & White 1971,
        // §1.3); altitude |r| − R and radial vertical by definition of the spherical model. A
        // lunar-sized body (GM 4.9048695e12 m³/s², R 1737.4 km, from memory; any values serve)
        // so that a stray WGS-84 constant would show.
        let (mu, radius) = (4.904_869_5e12, 1_737_400.0);
        let env = sphere(radius, mu, 0.0);
        let r = Vector3::new(1.2e6, -0.7e6, 1.1e6);
        let loc = env.local(0.0, &r, &Vector3::zeros());
        let rn = r.norm();
        assert!((loc.gravity_mps2.norm() - mu / (rn * rn)).abs() < 1e-12);
        assert!((loc.gravity_mps2.normalize() + r / rn).norm() < 1e-14);
        assert!((loc.up - r / rn).norm() < 1e-15);
        assert!((loc.altitude_m - (rn - radius)).abs() < 1e-9);
        assert!(loc.east.dot(&loc.up).abs() < 1e-15 && loc.north.dot(&loc.up).abs() < 1e-15);
        assert!((loc.north - loc.up.cross(&loc.east)).norm() < 1e-15);
        assert!((env.radial_altitude_m(&r) - (rn - radius)).abs() < 1e-9);
        assert!((env.specific_energy_j_kg(&r, &Vector3::zeros()) + mu / rn).abs() < 1e-9);
        assert!(
            (env.gm_m3_s2() - mu).abs() < 1e-3 && (env.reference_radius_m() - radius).abs() < 1e-9
        );
        // A drop from rest above a slowly turning sphere lands below on the surface: a 50 km
        // fall lasts √(2h/g) ≈ 250 s, and the Coriolis drift ω g t³ cos φ / 3 (from memory)
        // is about 8 m at ω = 1e-6 rad/s, 5e-6 rad of arc. (A drop from rest on a sphere that
        // does not turn is a radial fall, which has no plane: `None`, as documented in `iip`.)
        let turning = sphere(radius, mu, 1e-6);
        let above = site(12.0, 34.0, 50_000.0);
        let (r0, v0) = turning.pad_state(&above);
        let hit = turning.vacuum_iip(0.0, &r0, &v0).expect("a drop lands");
        assert!((hit.latitude_rad - above.latitude_rad).abs() < 1e-5);
        assert!((hit.longitude_rad - above.longitude_rad).abs() < 1e-5);
        assert!(hit.altitude_m.abs() < 1e-6);
    }

    #[test]
    fn on_the_equator_the_sphere_of_the_wgs84_radius_is_the_ellipsoid_without_j2() {
        // Source: on the equator the WGS-84 normal is radial and the geodetic height is p − a
        // (N(0) = a; domain brief §1), so without J2 the two models see the same altitude, frame
        // and gravity there. Off the equator they differ: at 45° geocentric the ellipsoid lies
        // about 10.7 km inside the sphere of radius a (R(φc) = a √((1 − e²)/(1 − e² cos² φc)),
        // the ellipse in polar form), so the geodetic height is that much larger.
        let wgs = Environment {
            earth: EarthModel::Wgs84 {
                j2: false,
                rotation: true,
            },
            atmosphere: AtmosphereModel::Us1976,
        };
        let sph = Environment {
            earth: EarthModel::Spherical {
                radius_m: earth::WGS84_A_M,
                gm_m3_s2: earth::WGS84_GM_M3_S2,
                rotation_rad_s: earth::WGS84_OMEGA_RAD_S,
            },
            atmosphere: AtmosphereModel::Us1976,
        };
        let r = Vector3::new(4.0e6, 5.5e6, 0.0);
        let v = Vector3::new(-6.0e3, 4.0e3, 0.0);
        let (a, b) = (wgs.local(0.0, &r, &v), sph.local(0.0, &r, &v));
        assert!((a.altitude_m - b.altitude_m).abs() < 1e-6);
        assert!((a.up - b.up).norm() < 1e-15 && (a.north - b.north).norm() < 1e-15);
        assert!((a.gravity_mps2 - b.gravity_mps2).norm() < 1e-12);
        assert!((a.v_rel_mps - b.v_rel_mps).norm() < 1e-12);
        assert!((a.air.density_kg_m3 - b.air.density_kg_m3).abs() < 1e-15);
        let c = std::f64::consts::FRAC_1_SQRT_2;
        let r45 = Vector3::new(7.0e6 * c, 0.0, 7.0e6 * c);
        let dh = wgs.local(0.0, &r45, &v).altitude_m - sph.local(0.0, &r45, &v).altitude_m;
        assert!((dh - 10_700.0).abs() < 100.0, "{dh}");
    }
}
