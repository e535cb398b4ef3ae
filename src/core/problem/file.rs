//! The problem file as written by the user: a serde mirror of the JSON, raw values, no checks.
//!
//! Every dimensional key carries its unit (`_m`, `_kg`, `_n`, `_s`, `_deg`, `_pa`, `_m2`, `_mps`).
//! [`super::validate`] turns a [`ProblemFile`] into a checked [`super::Problem`]; nothing else in the
//! library reads these types. The format is documented in `docs/problem-format.md`.

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// Top level of a problem file.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ProblemFile {
    /// The JSON Schema this file follows, for editors (`docs/problem-format.schema.json`, printed by
    /// `kickturn schema`); kickturn itself ignores it.
    #[serde(rename = "$schema", default, skip_serializing_if = "Option::is_none")]
    pub schema: Option<String>,
    /// Short name used in report titles.
    pub name: String,
    /// Free text.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub description: Option<String>,
    /// Launch site.
    pub site: SiteFile,
    /// Launch direction: a fixed azimuth or a target inclination.
    pub launch: LaunchFile,
    /// Target orbit (optional for `fly`; needed by the optimizer).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub target: Option<TargetFile>,
    /// The vehicle.
    pub vehicle: VehicleFile,
    /// The ascent program.
    pub ascent: AscentFile,
    /// Path limits.
    #[serde(default)]
    pub limits: LimitsFile,
    /// Earth, atmosphere and integrator settings.
    #[serde(default)]
    pub model: ModelFile,
    /// Propellant reserves deducted from the margin.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reserves: Option<ReservesFile>,
    /// Launch-day dispersions for `kickturn dispersions` (placeholders when absent).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dispersions: Option<DispersionsFile>,
}

/// Launch-day dispersions of the vehicle and the air (all optional; a missing key takes its
/// invented placeholder default, docs/problem-format.md). Each stage (and the booster set) draws
/// its own thrust, Isp, propellant and dry mass; the drag and density factors are one each.
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct DispersionsFile {
    /// Thrust level (vacuum thrust at full throttle), % of nominal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thrust_percent: Option<SpreadFile>,
    /// Vacuum specific impulse, s added to nominal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub isp_s: Option<SpreadFile>,
    /// Propellant loaded, % of nominal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub propellant_percent: Option<SpreadFile>,
    /// Dry mass, % of nominal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dry_mass_percent: Option<SpreadFile>,
    /// Factor on every drag coefficient, % from 1.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cd_scale_percent: Option<SpreadFile>,
    /// Factor on the air density, % from 1.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub density_scale_percent: Option<SpreadFile>,
    /// Probability that the reserve covers the propellant need (default 0.997).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub probability: Option<f64>,
    /// Confidence of that statement (default 0.90).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub confidence: Option<f64>,
}

/// A spread: give exactly one of `normal_3sigma` (a normal distribution with this 3σ, mean 0) or
/// `uniform` ([low, high] bounds), in the unit of its key.
#[derive(Debug, Clone, Copy, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct SpreadFile {
    /// Three standard deviations of a zero-mean normal distribution.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub normal_3sigma: Option<f64>,
    /// Bounds of a uniform distribution, [low, high].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub uniform: Option<[f64; 2]>,
}

/// Propellant reserves of the last stage (all optional, default 0).
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ReservesFile {
    /// Flight performance reserve as a percentage of the ideal ΔV, %.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fpr_percent_dv: Option<f64>,
    /// Flight performance reserve as a mass, kg (added to the percentage form if both).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fpr_kg: Option<f64>,
    /// Unusable residual propellant, kg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residuals_kg: Option<f64>,
    /// Propellant kept for disposal (deorbit), kg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub disposal_kg: Option<f64>,
}

/// Launch site, geodetic coordinates on the WGS-84 ellipsoid.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct SiteFile {
    /// Name of the (invented) site.
    pub name: String,
    /// Geodetic latitude, degrees north.
    pub latitude_deg: f64,
    /// Longitude, degrees east.
    pub longitude_deg: f64,
    /// Height of the pad above the ellipsoid, m.
    #[serde(default)]
    pub altitude_m: f64,
}

/// Launch direction. Give exactly one of `azimuth_deg` or `inclination_deg`.
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LaunchFile {
    /// Launch azimuth, degrees clockwise from north.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub azimuth_deg: Option<f64>,
    /// Target inclination, degrees, from which the azimuth is computed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub inclination_deg: Option<f64>,
    /// Which of the two azimuths reaching `inclination_deg`: `"northerly"` (default) or `"southerly"`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub branch: Option<BranchFile>,
    /// Allow an inclination a direct ascent cannot reach: launch due east (or west) and yaw the
    /// upper stage (a dog-leg), paying the plane change in flight (default false).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub allow_dog_leg: Option<bool>,
}

/// Azimuth branch for an inclination.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum BranchFile {
    /// Azimuth between 270° and 90° through north.
    Northerly,
    /// Azimuth between 90° and 270° through south.
    Southerly,
}

/// Target orbit: either apsides (`perigee_alt_km`, `apogee_alt_km`, optional `insertion`) or an
/// insertion state (`insertion_alt_km`, `insertion_speed_mps`, `insertion_flight_path_deg`).
/// Altitudes are radius − 6378.137 km (osculating, at cutoff).
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TargetFile {
    /// Perigee altitude, km.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub perigee_alt_km: Option<f64>,
    /// Apogee altitude, km.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub apogee_alt_km: Option<f64>,
    /// Where the apsis target is met: `"perigee"` (default: cutoff at perigee, flight-path angle 0)
    /// or `"free"` (anywhere on the orbit).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub insertion: Option<InsertionFile>,
    /// Insertion-state target: altitude at cutoff, km.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub insertion_alt_km: Option<f64>,
    /// Insertion-state target: inertial speed at cutoff, m/s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub insertion_speed_mps: Option<f64>,
    /// Insertion-state target: inertial flight-path angle at cutoff, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub insertion_flight_path_deg: Option<f64>,
    /// Inclination, degrees (optional).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub inclination_deg: Option<f64>,
}

/// Where an apsis target is met.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum InsertionFile {
    /// At perigee: cutoff radius = perigee radius, flight-path angle 0.
    Perigee,
    /// Anywhere on the target orbit.
    Free,
}

/// The vehicle: payload, serial stages (first fires at liftoff), optional boosters, jettisons.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct VehicleFile {
    /// Vehicle name.
    pub name: String,
    /// Payload mass, kg.
    pub payload_kg: f64,
    /// Serial stages, bottom first.
    pub stages: Vec<StageFile>,
    /// Strap-on boosters that ignite with the first stage.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub boosters: Option<BoosterFile>,
    /// Masses dropped on a condition (payload fairing, interstage, ...).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub jettisons: Vec<JettisonFile>,
}

/// One serial stage.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct StageFile {
    /// Stage name.
    pub name: String,
    /// Dry (burnout) mass, kg, dropped at separation.
    pub dry_mass_kg: f64,
    /// Usable propellant, kg.
    pub propellant_kg: f64,
    /// Vacuum thrust at full throttle, N.
    pub thrust_vac_n: f64,
    /// Vacuum specific impulse, s.
    pub isp_vac_s: f64,
    /// Nozzle exit area (all engines), m². Give this or `thrust_sl_n`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub exit_area_m2: Option<f64>,
    /// Sea-level thrust at full throttle, N; the exit area follows from it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thrust_sl_n: Option<f64>,
    /// Lowest throttle setting, fraction of full thrust (default 1: not throttleable).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_throttle: Option<f64>,
    /// Aerodynamics of the vehicle while this stage is the bottom stage.
    pub aero: AeroFile,
}

/// A set of identical strap-on boosters.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BoosterFile {
    /// Name of the booster type.
    pub name: String,
    /// Number of boosters.
    pub count: u32,
    /// Dry mass of one booster, kg.
    pub dry_mass_kg: f64,
    /// Propellant of one booster, kg.
    pub propellant_kg: f64,
    /// Vacuum thrust of one booster, N (boosters always run at full thrust).
    pub thrust_vac_n: f64,
    /// Vacuum specific impulse, s.
    pub isp_vac_s: f64,
    /// Exit area of one booster, m². Give this or `thrust_sl_n`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub exit_area_m2: Option<f64>,
    /// Sea-level thrust of one booster, N.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thrust_sl_n: Option<f64>,
    /// Aerodynamics of the whole vehicle while the boosters are attached.
    pub aero: AeroFile,
}

/// Reference area and drag coefficient against Mach number for one configuration.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct AeroFile {
    /// Reference area, m².
    pub ref_area_m2: f64,
    /// `[Mach, C_D]` pairs, Mach strictly increasing; linear between points, constant beyond.
    pub cd_mach: Vec<[f64; 2]>,
    /// How C_D varies between points: `linear` (default) or `monotone_cubic` (smooth, no
    /// overshoot: fewer rejected integration steps).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cd_interpolation: Option<CdInterpolationFile>,
}

/// Interpolation of a C_D table between its points.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq, Eq, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum CdInterpolationFile {
    /// Straight lines.
    Linear,
    /// Monotone piecewise cubic (Fritsch–Carlson).
    MonotoneCubic,
}

/// A mass dropped on a condition.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct JettisonFile {
    /// Name (e.g. "fairing").
    pub name: String,
    /// Mass dropped, kg.
    pub mass_kg: f64,
    /// Condition that drops it.
    pub when: JettisonWhenFile,
}

/// Condition for a jettison (one key).
#[derive(Debug, Clone, Copy, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum JettisonWhenFile {
    /// At this time after liftoff, s.
    TimeS(f64),
    /// When the geodetic altitude first exceeds this, m.
    AltitudeM(f64),
    /// When the free-molecular heating ½ρV³ (Earth-relative V) has risen above and then falls
    /// below this, W/m².
    HeatingBelowWM2(f64),
}

/// The ascent program: liftoff manoeuvre, then arcs in order.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct AscentFile {
    /// Vertical rise, pitch-over and attitude hold before the gravity turn.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub liftoff: Option<LiftoffFile>,
    /// Optional throttle bucket on the first stage (through max-Q).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub throttle_bucket: Option<BucketFile>,
    /// Burns and coasts from liftoff on. The first arc is a burn.
    pub arcs: Vec<ArcFile>,
}

/// Liftoff manoeuvre of the gravity-turn program.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LiftoffFile {
    /// End of the vertical rise.
    pub vertical_rise: RiseEndFile,
    /// Constant pitch-over rate, deg/s. Give this or `pitch_over_s`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pitch_rate_deg_s: Option<f64>,
    /// Pitch-over duration, s: the rate is then the kick over it. Give this or
    /// `pitch_rate_deg_s`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pitch_over_s: Option<f64>,
    /// Kick angle: pitch-over from the vertical, degrees.
    pub kick_deg: f64,
}

/// End of the vertical rise (one key).
#[derive(Debug, Clone, Copy, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum RiseEndFile {
    /// After this time from liftoff, s.
    TimeS(f64),
    /// When the Earth-relative speed reaches this, m/s.
    SpeedMps(f64),
}

/// Throttle bucket: reduced throttle over a time window on the first stage.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BucketFile {
    /// Start, s after liftoff.
    pub start_s: f64,
    /// Duration, s.
    pub duration_s: f64,
    /// Throttle during the bucket, fraction of full thrust.
    pub throttle: f64,
}

/// One arc of the ascent (one key: `burn` or `coast`).
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum ArcFile {
    /// Powered arc on the current stage.
    Burn(BurnFile),
    /// Unpowered arc.
    Coast(CoastFile),
}

/// A powered arc.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BurnFile {
    /// Steering law for this arc.
    pub steering: SteeringFile,
    /// When the burn ends (default: propellant depletion).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cutoff: Option<CutoffFile>,
}

/// Steering law of a burn.
#[derive(Debug, Clone, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum SteeringFile {
    /// Zero angle of attack (thrust along the Earth-relative velocity); on the first arc it starts
    /// with the liftoff manoeuvre.
    GravityTurn,
    /// Linear tangent law in a frame frozen at the arc's start.
    LinearTangent(LinearTangentFile),
    /// The linear tangent law of the previous linear-tangent arc continued (same frozen frame,
    /// same clock): one law across several upper burns.
    LinearTangentContinued,
    /// Pitch against time since liftoff, in the launch-azimuth plane.
    PitchTable(Vec<[f64; 2]>),
    /// Pitch above the local horizontal and heading from north against time since liftoff:
    /// `[time_s, pitch_deg, heading_deg]` triples (what `solve --refine` writes).
    AttitudeTable(Vec<[f64; 3]>),
    /// Closed-loop guidance to the target orbit (powered explicit guidance, re-solved every
    /// guidance cycle); the arc's cutoff must be `"target_orbit"`.
    Guidance(GuidanceFile),
}

/// Settings of closed-loop guidance (all optional).
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct GuidanceFile {
    /// Guidance cycle, s (default 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cycle_s: Option<f64>,
    /// Time to go below which the steering is held, s (default 4, at least two cycles).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub hold_s: Option<f64>,
    /// The orbit this burn aims at, in the form of `target` (default: the problem's `target`);
    /// for an intermediate burn, such as a transfer burn cut off on its apogee.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub aim: Option<TargetFile>,
}

/// Linear tangent law tan θ = tan θ0 − c·τ, τ time since the arc's start, θ above the horizontal
/// plane frozen (inertially) at the arc's start.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LinearTangentFile {
    /// Pitch above the frozen horizontal at the arc's start, degrees.
    pub pitch0_deg: f64,
    /// Rate c of the tangent, 1/s.
    pub tan_rate_per_s: f64,
    /// Out-of-plane rate w: the thrust direction is ∝ ĥ0 + (tan θ0 − c τ) Û0 + w τ n̂0 with
    /// n̂0 = ĥ0 × Û0 (to the right of the heading: a positive rate turns the plane clockwise seen from above), 1/s (default 0: no yaw).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub yaw_rate_per_s: Option<f64>,
    /// Heading of the thrust plane, degrees from north (default: the launch azimuth on the first
    /// arc, the inertial velocity heading at the arc's start on later arcs).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub heading_deg: Option<f64>,
}

/// Burn cutoff (string `"depletion"` / `"target_orbit"`, or one key with a value).
#[derive(Debug, Clone, Copy, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum CutoffFile {
    /// Burn until the stage's propellant is gone.
    Depletion,
    /// Cut when the orbital energy reaches the target orbit's (semi-major axis of the target).
    TargetOrbit,
    /// Cut when the osculating apogee altitude reaches this, km.
    ApogeeAltKm(f64),
    /// Cut when the osculating perigee altitude reaches this, km.
    PerigeeAltKm(f64),
    /// Cut after this burn duration, s.
    DurationS(f64),
}

/// An unpowered arc.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum CoastFile {
    /// Coast for this long, s.
    DurationS(f64),
    /// Coast until the radial velocity changes sign (apogee).
    ToApogee,
}

/// Path limits.
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LimitsFile {
    /// Largest sensed axial acceleration, in units of g0; the core throttles to hold it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_axial_accel_g: Option<f64>,
    /// Largest dynamic pressure, Pa (reported against).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_dynamic_pressure_pa: Option<f64>,
    /// Lowest perigee altitude that counts as orbit, km (default 100).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_orbit_perigee_alt_km: Option<f64>,
    /// Largest q·α (dynamic pressure times total angle of attack), Pa·deg: reported against by
    /// `fly` and `solve`, held by `solve --refine`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_q_alpha_pa_deg: Option<f64>,
}

/// Model and integrator settings. Defaults: WGS-84 with J2, rotating, US 1976 atmosphere.
#[derive(Debug, Clone, Default, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ModelFile {
    /// Earth model: `"wgs84"` (default: the WGS-84 ellipsoid) or
    /// `{"sphere": {"radius_m": …, "gm_m3_s2": …}}` (a sphere with point-mass gravity, no J2;
    /// apsis altitudes are measured above the sphere).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub earth: Option<EarthFile>,
    /// Include the J2 gravity term (default true on WGS-84; the sphere has none, so `true` with
    /// a sphere is refused).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub j2: Option<bool>,
    /// Earth rotation on (default true). Off is for checks.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub earth_rotation: Option<bool>,
    /// `"us1976"` (default) or `"vacuum"`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub atmosphere: Option<AtmosphereFile>,
    /// Integrator: `"dop853"` (default: Dormand–Prince 8(5,3), Hairer, Nørsett & Wanner's
    /// DOP853) or `"dopri5"` (Dormand–Prince 5(4), the default up to December 2026;
    /// docs/method.md §7).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub integrator: Option<IntegratorFile>,
    /// Retry a rejected step that crossed a corner of the right-hand side (a node of a linear
    /// drag table, a layer base of the standard atmosphere) so that it ends on the corner
    /// (default true; docs/method.md §7).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub end_steps_at_corners: Option<bool>,
    /// Start each integration segment (from one event to the next) with the step size the
    /// previous one ended with, instead of a fresh estimate (default true; docs/method.md §7).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub carry_step_size: Option<bool>,
    /// Relative tolerance of the integrator (default 1e-11).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rtol: Option<f64>,
    /// Absolute tolerance of the integrator, SI units of each state (default 1e-8).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub atol: Option<f64>,
    /// Flight-time limit, s (default 20 000).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_flight_time_s: Option<f64>,
}

/// Earth model choice: the string `"wgs84"` or the object `{"sphere": {...}}`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum EarthFile {
    /// WGS-84 ellipsoid (geodetic altitude, ellipsoid-normal vertical), GM 3.986004418e14 m³/s²,
    /// J2 per `model.j2`; apsis altitudes above the equatorial radius 6378.137 km.
    Wgs84,
    /// A sphere: point-mass gravity `−μ r/r³` (no J2), altitude `|r| − R`, radial vertical,
    /// geocentric latitude = geodetic.
    Sphere(SphereFile),
}

/// A spherical Earth.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct SphereFile {
    /// Radius of the sphere, m (1e5 to 1e8; e.g. 6378137 for the WGS-84 equatorial radius,
    /// 6371000 for the mean radius). Apsis altitudes are measured above it.
    pub radius_m: f64,
    /// Gravitational parameter GM, m³/s² (> 0; e.g. 3.986004418e14).
    pub gm_m3_s2: f64,
    /// Rotation rate, rad/s (0 to 1e-3; default the WGS-84 rate 7.292115e-5; 0 or
    /// `model.earth_rotation: false` for a non-rotating sphere).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rotation_rad_s: Option<f64>,
}

/// Integrator choice (`model.integrator`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum IntegratorFile {
    /// Dormand–Prince 5(4) with its fourth-order continuous extension (the default).
    Dopri5,
    /// Dormand–Prince 8(5,3) with its seventh-order continuous extension.
    Dop853,
}

/// Atmosphere model choice.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum AtmosphereFile {
    /// U.S. Standard Atmosphere 1976, tabulated densities above 86 km.
    Us1976,
    /// No atmosphere (vacuum checks).
    Vacuum,
}
