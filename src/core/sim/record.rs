//! Derived quantities at one instant (for the event table, the time history and max-Q).

use nalgebra::Vector3;
use serde::Serialize;

use super::dynamics::FlightModel;
use super::dynamics::{forces, ix, Mode, State};
use crate::core::physics::earth::{self, G0_MPS2};
use crate::core::physics::environment::EarthModel;
use crate::core::steering::ActiveLaw;

/// Flight quantities at one instant. Angles in degrees, as reported.
#[derive(Debug, Clone, Copy, Serialize, PartialEq)]
pub struct Snapshot {
    /// Time since liftoff, s.
    pub t_s: f64,
    /// Geodetic altitude, m.
    pub altitude_m: f64,
    /// Ground distance from the pad along a sphere of the reference radius (6378.137 km on
    /// WGS-84; the sphere's radius on the spherical model), m.
    pub downrange_m: f64,
    /// Geodetic latitude, deg.
    pub latitude_deg: f64,
    /// Earth-fixed longitude, deg.
    pub longitude_deg: f64,
    /// Earth-relative speed, m/s.
    pub speed_rel_mps: f64,
    /// Inertial speed, m/s.
    pub speed_inertial_mps: f64,
    /// Earth-relative flight-path angle, deg.
    pub flight_path_rel_deg: f64,
    /// Inertial flight-path angle, deg.
    pub flight_path_inertial_deg: f64,
    /// Thrust-axis pitch above the local horizontal, deg.
    pub pitch_deg: f64,
    /// Thrust-axis heading (its horizontal projection, clockwise from north), deg; kept out of
    /// the reports (the refinement starts its attitude tables from it).
    #[serde(skip)]
    pub heading_deg: f64,
    /// Angle between the thrust axis and the Earth-relative velocity, deg.
    pub alpha_deg: f64,
    /// Mach number.
    pub mach: f64,
    /// Dynamic pressure, Pa.
    pub dynamic_pressure_pa: f64,
    /// Sensed axial acceleration (thrust + aerodynamic force along the axis) / m, in g0.
    pub axial_accel_g: f64,
    /// Core throttle (0 when not firing).
    pub throttle: f64,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Cumulative ideal ΔV, m/s.
    pub ideal_mps: f64,
    /// Cumulative gravity loss (Earth-relative bookkeeping), m/s.
    pub gravity_loss_rel_mps: f64,
    /// Cumulative drag loss (Earth-relative bookkeeping), m/s.
    pub drag_loss_rel_mps: f64,
    /// Cumulative steering loss (Earth-relative bookkeeping), m/s.
    pub steering_loss_rel_mps: f64,
    /// Cumulative back-pressure loss, m/s.
    pub back_pressure_loss_mps: f64,
    /// Vacuum instantaneous impact point (geodetic latitude, Earth-fixed longitude), deg: where
    /// the vehicle would land if thrust and air stopped now (`Environment::vacuum_iip`); `None`
    /// once the conic clears the Earth. Kept out of the reports' JSON (figures draw it).
    #[serde(skip)]
    pub vacuum_iip_deg: Option<(f64, f64)>,
}

fn angle_deg(a: &Vector3<f64>, b: &Vector3<f64>) -> f64 {
    let n = a.norm() * b.norm();
    if n > 0.0 {
        (a.dot(b) / n).clamp(-1.0, 1.0).acos().to_degrees()
    } else {
        0.0
    }
}

fn elevation_deg(v: &Vector3<f64>, up: &Vector3<f64>) -> f64 {
    90.0 - angle_deg(v, up)
}

/// Ground distance from the pad, m.
fn downrange_m(p: &FlightModel, t: f64, r: &Vector3<f64>) -> f64 {
    match p.environment.earth {
        EarthModel::Flat { .. } => r.x.hypot(r.y),
        EarthModel::Wgs84 { .. } | EarthModel::Spherical { .. } => {
            // The pad's inertial position at t = 0 is its Earth-fixed one (θ_g0 = 0).
            let pad = p.environment.pad_state(&p.site.geodetic).0;
            let now = earth::eci_to_ecef(r, p.environment.rotation_angle_rad(t));
            p.environment.reference_radius_m() * angle_deg(&pad, &now).to_radians()
        }
    }
}

/// Flight quantities at (t, y) under `mode` and the arc's active law.
pub fn snapshot(p: &FlightModel, mode: &Mode, law: &dyn ActiveLaw, t: f64, y: &State) -> Snapshot {
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let m = y[ix::M];
    let loc = p.environment.local(t, &r, &v);
    let geo = p.environment.geodetic(t, &r);
    let f = forces(p, mode, law, t, m, &loc);
    let thrusting = f.thrust_vac_n > 0.0;
    let axis = if thrusting { f.dir } else { loc.v_rel_mps };
    Snapshot {
        t_s: t,
        altitude_m: loc.altitude_m,
        downrange_m: downrange_m(p, t, &r),
        latitude_deg: geo.latitude_rad.to_degrees(),
        longitude_deg: geo.longitude_rad.to_degrees(),
        speed_rel_mps: loc.v_rel_mps.norm(),
        speed_inertial_mps: v.norm(),
        flight_path_rel_deg: elevation_deg(&loc.v_rel_mps, &loc.up),
        flight_path_inertial_deg: elevation_deg(&v, &loc.up),
        pitch_deg: elevation_deg(&axis, &loc.up),
        heading_deg: axis.dot(&loc.east).atan2(axis.dot(&loc.north)).to_degrees(),
        alpha_deg: if thrusting {
            angle_deg(&f.dir, &loc.v_rel_mps)
        } else {
            0.0
        },
        mach: f.mach,
        dynamic_pressure_pa: f.q_pa,
        axial_accel_g: (f.thrust_n + f.aero_n.dot(&f.dir)) / m / G0_MPS2,
        throttle: f.throttle,
        mass_kg: m,
        ideal_mps: y[ix::IDEAL],
        gravity_loss_rel_mps: y[ix::GRAV_R],
        drag_loss_rel_mps: y[ix::DRAG_R],
        steering_loss_rel_mps: y[ix::STEER_R],
        back_pressure_loss_mps: y[ix::PRESS],
        vacuum_iip_deg: p
            .environment
            .vacuum_iip(t, &r, &v)
            .map(|g| (g.latitude_rad.to_degrees(), g.longitude_rad.to_degrees())),
    }
}
