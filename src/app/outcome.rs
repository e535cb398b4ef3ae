//! The outcome of a flight and the rules that judge it: orbit status ([`Status`]: the perigee
//! threshold), the target deviation against the one insertion tolerance the optimizer also uses
//! ([`APSIS_TOL_KM`], [`INCLINATION_TOL_DEG`]), and [`FlightReport`], the typed document every
//! renderer and the `--json` output start from. Nothing here formats text.

use nalgebra::Vector3;
use serde::Serialize;

use crate::core::budget::{arc_budgets, budget, ArcBudget, Bookkeeping, Budget};
use crate::core::optimize::targeting;
use crate::core::physics::environment::{EarthModel, Environment};
use crate::core::physics::orbit::Elements;
use crate::core::problem::Problem;
use crate::core::sim::{EndReason, EventRecord, Extremum, Flight, SimStats};

/// Caution printed with every report.
pub const CAUTION: &str = "Preliminary design only: not for flight software, range safety or \
licensing. Defer to local codes and licensed practice.";

/// Outcome of a flight.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// Perigee at or above the orbit threshold.
    Orbit,
    /// Program completed but perigee below the threshold.
    Suborbital,
    /// Program completed on an escape trajectory (eccentricity ≥ 1): not an orbit.
    Escape,
    /// Hit the ground.
    GroundImpact,
    /// Flight-time limit reached.
    TimeLimit,
    /// Integrator failure or runaway events.
    IntegrationFailure,
    /// A burn had no stage left.
    NoStageLeft,
}

/// Osculating two-body orbit at cutoff (the model's GM); apsis altitudes are radius − R, R the
/// reference radius (6378.137 km on WGS-84, the sphere's radius on the spherical model).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OrbitSummary {
    /// Perigee altitude (r_p − R), km.
    pub perigee_alt_km: f64,
    /// Apogee altitude (r_a − R), km; null when unbound.
    pub apogee_alt_km: Option<f64>,
    /// Inclination, deg.
    pub inclination_deg: f64,
    /// Altitude at cutoff (r − R), km.
    pub insertion_alt_km: f64,
    /// Inertial speed at cutoff, m/s.
    pub insertion_speed_mps: f64,
    /// Inertial flight-path angle at cutoff, deg.
    pub flight_path_angle_deg: f64,
    /// Eccentricity.
    pub eccentricity: f64,
    /// Hyperbolic excess speed `√(v² − 2μ/r)` of an escape trajectory, m/s (absent for an
    /// orbit).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_infinity_mps: Option<f64>,
}

/// Echo of the target orbit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TargetSummary {
    /// Perigee altitude, km.
    pub perigee_alt_km: f64,
    /// Apogee altitude, km.
    pub apogee_alt_km: f64,
    /// Inclination, deg.
    pub inclination_deg: Option<f64>,
}

/// Orbit reached minus target (km, deg).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TargetDeviation {
    /// Perigee altitude error, km.
    pub perigee_km: f64,
    /// Apogee altitude error, km (null when the orbit is unbound).
    pub apogee_km: Option<f64>,
    /// Inclination error, deg (null without a target inclination).
    pub inclination_deg: Option<f64>,
    /// Within the insertion tolerances: apsides ±0.1 km, inclination ±0.001°.
    pub met: bool,
}

/// Insertion tolerance on apsis altitudes, km (the optimizer's, [`targeting::INSERTION_TOL`]).
pub const APSIS_TOL_KM: f64 = targeting::APSIS_TOL_KM;
/// Insertion tolerance on inclination, deg (the optimizer's, [`targeting::INSERTION_TOL`]).
pub const INCLINATION_TOL_DEG: f64 = targeting::ANGLE_TOL_DEG;

fn deviation(o: &OrbitSummary, t: &TargetSummary) -> TargetDeviation {
    let dp = o.perigee_alt_km - t.perigee_alt_km;
    let da = o.apogee_alt_km.map(|a| a - t.apogee_alt_km);
    let di = t.inclination_deg.map(|i| o.inclination_deg - i);
    TargetDeviation {
        perigee_km: dp,
        apogee_km: da,
        inclination_deg: di,
        met: dp.abs() <= APSIS_TOL_KM
            && da.is_some_and(|a| a.abs() <= APSIS_TOL_KM)
            && di.is_none_or(|i| i.abs() <= INCLINATION_TOL_DEG),
    }
}

/// The Earth model a flight was flown over, for reports.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EarthSummary {
    /// `wgs84`, `sphere` or `flat` (closed-form checks).
    pub model: &'static str,
    /// Reference radius of the orbit altitudes, m (WGS-84: the equatorial radius).
    pub radius_m: f64,
    /// Gravitational parameter of the orbit elements, m³/s².
    pub gm_m3_s2: f64,
    /// Rotation rate, rad/s (0 when not rotating).
    pub rotation_rad_s: f64,
    /// J2 term in the gravity.
    pub j2: bool,
}

impl EarthSummary {
    /// The summary of `env`'s Earth model.
    pub fn of(env: &Environment) -> Self {
        EarthSummary {
            model: env.earth.key(),
            radius_m: env.reference_radius_m(),
            gm_m3_s2: env.gm_m3_s2(),
            rotation_rad_s: env.omega_rad_s().z,
            j2: matches!(env.earth, EarthModel::Wgs84 { j2: true, .. }),
        }
    }

    /// True for the WGS-84 ellipsoid (the default, named by the conventions; the `--json`
    /// documents of a WGS-84 flight carry no `earth` key, so that they read as before).
    pub fn is_wgs84(&self) -> bool {
        self.model == "wgs84"
    }

    /// How reports name the height of a point: `geodetic altitude` (WGS-84, and the flat
    /// model's z) or `altitude above the sphere`.
    pub fn altitude_label(&self) -> &'static str {
        if self.model == "sphere" {
            "altitude above the sphere"
        } else {
            "geodetic altitude"
        }
    }

    /// How reports name the latitude: `geodetic latitude`, or on the sphere `latitude`
    /// (geocentric and geodetic latitude coincide there).
    pub fn latitude_label(&self) -> &'static str {
        if self.model == "sphere" {
            "latitude"
        } else {
            "geodetic latitude"
        }
    }

    /// A line naming the model and its constants, e.g. `spherical Earth: radius 6371.000 km,
    /// GM 3.986004418e14 m³/s², rotation 7.292115e-5 rad/s, no J2`.
    pub fn describe(&self) -> String {
        let rotation = if self.rotation_rad_s == 0.0 {
            "not rotating".to_string()
        } else {
            format!("rotation {:e} rad/s", self.rotation_rad_s)
        };
        match self.model {
            "sphere" => format!(
                "spherical Earth: radius {:.3} km, GM {:e} m³/s², {rotation}, no J2 \
                 (point-mass gravity)",
                self.radius_m / 1e3,
                self.gm_m3_s2
            ),
            "flat" => "flat Earth (closed-form check model)".to_string(),
            _ => format!(
                "WGS-84 ellipsoid: GM {:e} m³/s², {rotation}, {}",
                self.gm_m3_s2,
                if self.j2 { "J2" } else { "no J2" }
            ),
        }
    }
}

/// Everything `fly` reports (the `--json` document).
#[derive(Debug, Clone, Serialize)]
pub struct FlightReport {
    /// Tool name and version.
    pub tool: String,
    /// SHA-256 of the problem file.
    pub input_sha256: String,
    /// Problem name.
    pub problem: String,
    /// Vehicle name.
    pub vehicle: String,
    /// Launch site name.
    pub site: String,
    /// Launch azimuth flown, deg from north.
    pub azimuth_deg: f64,
    /// Outcome.
    pub status: Status,
    /// Why the flight ended.
    pub end: EndReason,
    /// Budget, Earth-relative bookkeeping.
    pub budget: Budget,
    /// Budget, inertial bookkeeping.
    pub budget_inertial: Budget,
    /// Per-arc budgets (Earth-relative bookkeeping).
    /// (The JSON key stays `phases` so that every output document of this version reads as
    /// before; the schema renames it with the output-format changes.)
    #[serde(rename = "phases")]
    pub arcs: Vec<ArcBudget>,
    /// Osculating orbit at cutoff.
    pub orbit: OrbitSummary,
    /// Target orbit, if given.
    pub target: Option<TargetSummary>,
    /// Orbit reached minus target, if a target is given.
    pub target_deviation: Option<TargetDeviation>,
    /// Propellant left in the current and later stages, kg.
    pub propellant_remaining_kg: f64,
    /// Mass at cutoff, kg.
    pub final_mass_kg: f64,
    /// Maximum dynamic pressure, Pa.
    pub max_dynamic_pressure_pa: f64,
    /// Max-Q details.
    pub max_q: Option<MaxQ>,
    /// Maximum sensed axial acceleration, g0.
    pub max_axial_accel_g: f64,
    /// Limit on dynamic pressure, Pa, if given.
    pub max_dynamic_pressure_limit_pa: Option<f64>,
    /// Limit on axial acceleration, g0, if given.
    pub max_axial_accel_limit_g: Option<f64>,
    /// Maximum q·α (dynamic pressure times the thrust axis's total angle of attack, while
    /// thrusting), Pa·deg.
    pub max_q_alpha_pa_deg: f64,
    /// Where it occurs.
    pub max_q_alpha: Option<Extremum>,
    /// Limit on q·α, Pa·deg, if given.
    pub max_q_alpha_limit_pa_deg: Option<f64>,
    /// Events in time order.
    pub events: Vec<EventRecord>,
    /// Integrator work.
    pub stats: SimStats,
    /// The Earth model flown (omitted from the JSON for the default WGS-84 ellipsoid, which the
    /// conventions name).
    #[serde(skip_serializing_if = "EarthSummary::is_wgs84")]
    pub earth: EarthSummary,
    /// Conventions used in this report.
    pub conventions: Vec<String>,
    /// Safety caution.
    pub caution: &'static str,
}

/// Conventions stated in every report of a WGS-84 flight (see [`conventions`]).
pub const CONVENTIONS: [&str; 5] = [
    "apsis and insertion altitudes are radius minus 6378.137 km (WGS-84 equatorial radius)",
    "orbital elements are osculating two-body elements (GM = 3.986004418e14) at cutoff",
    "event-table altitudes are geodetic (WGS-84); flight-path angles are Earth-relative unless named inertial",
    "budget: losses projected on the Earth-relative velocity; budget_inertial: on the inertial velocity",
    "orbit.flight_path_angle_deg is measured from the plane normal to the geocentric radius; event and history flight-path angles from the local (ellipsoid) horizontal",
];

/// The conventions stated in a report of a flight over `env`'s Earth: [`CONVENTIONS`] for
/// WGS-84 (and the flat check model), the same statements for the sphere's radius and GM.
pub fn conventions(env: &Environment) -> Vec<String> {
    match env.earth {
        EarthModel::Spherical {
            radius_m, gm_m3_s2, ..
        } => vec![
            format!(
                "apsis and insertion altitudes are radius minus {:.3} km (the spherical Earth's \
                 radius)",
                radius_m / 1e3
            ),
            format!(
                "orbital elements are osculating two-body elements (GM = {gm_m3_s2:e}) at cutoff"
            ),
            format!(
                "{}; event-table altitudes are heights above the sphere and latitudes \
                 geocentric; flight-path angles are Earth-relative unless named inertial",
                EarthSummary::of(env).describe()
            ),
            CONVENTIONS[3].to_string(),
            "orbit.flight_path_angle_deg, event and history flight-path angles are measured from \
             the plane normal to the radius (the sphere's local horizontal)"
                .to_string(),
        ],
        EarthModel::Wgs84 { .. } | EarthModel::Flat { .. } => {
            CONVENTIONS.iter().map(|c| c.to_string()).collect()
        }
    }
}

/// Osculating orbit of the final state over `env`'s Earth (its GM and reference radius).
pub fn orbit_summary(env: &Environment, y: &crate::core::sim::dynamics::State) -> OrbitSummary {
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let (mu, r_ref) = (env.gm_m3_s2(), env.reference_radius_m());
    let el = Elements::from_state(&r, &v, mu);
    let sin_g = r.dot(&v) / (r.norm() * v.norm()).max(1e-12);
    OrbitSummary {
        perigee_alt_km: (el.perigee_radius_m - r_ref) / 1e3,
        apogee_alt_km: el
            .apogee_radius_m
            .is_finite()
            .then(|| (el.apogee_radius_m - r_ref) / 1e3),
        inclination_deg: el.inclination_rad.to_degrees(),
        insertion_alt_km: (r.norm() - r_ref) / 1e3,
        insertion_speed_mps: v.norm(),
        flight_path_angle_deg: sin_g.clamp(-1.0, 1.0).asin().to_degrees(),
        eccentricity: el.eccentricity,
        v_infinity_mps: (el.eccentricity >= 1.0)
            .then(|| (v.norm_squared() - 2.0 * mu / r.norm()).max(0.0).sqrt()),
    }
}

fn status(p: &Problem, f: &Flight, orbit: &OrbitSummary) -> Status {
    match f.end {
        EndReason::GroundImpact => Status::GroundImpact,
        EndReason::TimeLimit => Status::TimeLimit,
        EndReason::IntegrationFailure { .. } | EndReason::EventLimit => Status::IntegrationFailure,
        EndReason::NoStageLeft { .. } => Status::NoStageLeft,
        EndReason::Completed if orbit.apogee_alt_km.is_none() => Status::Escape,
        EndReason::Completed => {
            if orbit.perigee_alt_km * 1e3 >= p.limits.min_orbit_perigee_alt_m {
                Status::Orbit
            } else {
                Status::Suborbital
            }
        }
    }
}

impl FlightReport {
    /// Builds the report of flight `f` of problem `p`.
    pub fn new(p: &Problem, f: &Flight) -> Self {
        let env = &p.environment;
        let orbit = orbit_summary(env, &f.y1);
        let target = p.target.map(|t| TargetSummary {
            perigee_alt_km: t.perigee_alt_m / 1e3,
            apogee_alt_km: t.apogee_alt_m / 1e3,
            inclination_deg: t.inclination_rad.map(f64::to_degrees),
        });
        FlightReport {
            tool: super::tool_version(),
            input_sha256: p.input_sha256.clone(),
            problem: p.name.clone(),
            vehicle: p.vehicle.name.clone(),
            site: p.site.name.clone(),
            azimuth_deg: p.azimuth_rad.to_degrees(),
            status: status(p, f, &orbit),
            end: f.end.clone(),
            budget: budget(env, &f.y0, &f.y1, Bookkeeping::EarthRelative),
            budget_inertial: budget(env, &f.y0, &f.y1, Bookkeeping::Inertial),
            arcs: arc_budgets(env, &f.arcs),
            orbit,
            target_deviation: target.as_ref().map(|t| deviation(&orbit, t)),
            target,
            propellant_remaining_kg: f.propellant_remaining_kg,
            final_mass_kg: f.y1[crate::core::sim::dynamics::ix::M],
            max_dynamic_pressure_pa: f.max_q.map_or(0.0, |m| m.value),
            max_q: f.max_q.map(MaxQ::from),
            max_axial_accel_g: f.max_axial_accel.map_or(0.0, |m| m.value),
            max_dynamic_pressure_limit_pa: p.limits.max_dynamic_pressure_pa,
            max_axial_accel_limit_g: p
                .limits
                .max_axial_accel_mps2
                .map(|a| a / crate::core::physics::earth::G0_MPS2),
            max_q_alpha_pa_deg: f.max_q_alpha.map_or(0.0, |m| m.value),
            max_q_alpha: f.max_q_alpha,
            max_q_alpha_limit_pa_deg: p.limits.max_q_alpha_pa_deg,
            events: f.events.clone(),
            stats: f.stats,
            earth: EarthSummary::of(env),
            conventions: conventions(env),
            caution: CAUTION,
        }
    }

    /// True when the vehicle reached orbit.
    pub fn reached_orbit(&self) -> bool {
        self.status == Status::Orbit
    }
}

/// Max-Q and the flight state there.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MaxQ {
    /// Maximum dynamic pressure, Pa (the key other programs read; `value_pa` says its unit).
    pub value: f64,
    /// Maximum dynamic pressure, Pa (the same number under a key with its unit).
    pub value_pa: f64,
    /// Flight state at max-Q.
    pub at: crate::core::sim::Snapshot,
}

impl From<Extremum> for MaxQ {
    fn from(e: Extremum) -> Self {
        MaxQ {
            value: e.value,
            value_pa: e.value,
            at: e.at,
        }
    }
}
