//! Problem definition: the JSON file ([`file`]), its validation ([`validate`]) and the checked
//! [`Problem`] that the simulator and optimizer take.
//!
//! Configuration flows in two stages: [`file::ProblemFile`] mirrors the JSON with raw values;
//! [`validate::validate`] checks every field (errors name the JSON path) and builds the models.

pub mod file;
pub mod params;
pub mod validate;
pub mod warning;

use sha2::{Digest, Sha256};

use crate::core::error::{ProblemError, UnreachableInclination};
use crate::core::physics::earth::Geodetic;
use crate::core::physics::environment::Environment;
use crate::core::steering::Program;
use crate::core::vehicle::Vehicle;

pub use file::ProblemFile;
pub use warning::{Warning, WarningKind};

/// How the launch azimuth was chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AzimuthSource {
    /// Given directly.
    Fixed,
    /// Computed from a target inclination (rotating-Earth correction), with the branch.
    FromInclination {
        /// Target inclination, rad.
        inclination_rad: f64,
        /// Northerly (true) or southerly (false) branch.
        northerly: bool,
    },
}

/// Launch site.
#[derive(Debug, Clone, PartialEq)]
pub struct Site {
    /// Name.
    pub name: String,
    /// Geodetic position of the pad.
    pub geodetic: Geodetic,
}

/// How the target orbit is met at cutoff.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Insertion {
    /// At perigee (radius = perigee radius, flight-path angle 0).
    Perigee,
    /// Anywhere on the orbit (apsides only).
    Free,
    /// At a given state.
    State {
        /// Altitude at cutoff (radius − reference radius: 6378.137 km on WGS-84, the sphere's
        /// radius), m.
        alt_m: f64,
        /// Inertial speed, m/s.
        speed_mps: f64,
        /// Inertial flight-path angle, rad.
        flight_path_rad: f64,
    },
}

/// Target orbit (apsis altitudes above the reference radius: the WGS-84 equatorial radius or the
/// sphere's radius; osculating at cutoff).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Target {
    /// How the orbit is met.
    pub insertion: Insertion,
    /// Perigee altitude, m.
    pub perigee_alt_m: f64,
    /// Apogee altitude, m.
    pub apogee_alt_m: f64,
    /// Inclination, rad.
    pub inclination_rad: Option<f64>,
}

impl Target {
    /// Specific orbital energy of the target orbit, J/kg: −μ/(2a) (two-body, the model's GM,
    /// a = R + (h_p + h_a)/2 with R the reference radius), or for an insertion state on the flat
    /// check model `v²/2 + g h`.
    pub fn energy_j_kg(&self, env: &crate::core::physics::environment::Environment) -> f64 {
        use crate::core::physics::environment::EarthModel;
        match (env.earth, self.insertion) {
            (
                EarthModel::Flat { gravity_mps2 },
                Insertion::State {
                    alt_m, speed_mps, ..
                },
            ) => 0.5 * speed_mps * speed_mps + gravity_mps2 * alt_m,
            _ => {
                let a = env.reference_radius_m() + 0.5 * (self.perigee_alt_m + self.apogee_alt_m);
                -env.gm_m3_s2() / (2.0 * a)
            }
        }
    }
}

/// Path limits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    /// Largest sensed axial acceleration, m/s² (throttle holds it).
    pub max_axial_accel_mps2: Option<f64>,
    /// Largest dynamic pressure, Pa (reported against).
    pub max_dynamic_pressure_pa: Option<f64>,
    /// Lowest perigee altitude that counts as orbit, m.
    pub min_orbit_perigee_alt_m: f64,
    /// Largest q·α, Pa·deg (reported against; held by the refinement).
    pub max_q_alpha_pa_deg: Option<f64>,
}

/// Propellant reserves of the last stage.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Reserves {
    /// Flight performance reserve, fraction of the ideal ΔV.
    pub fpr_fraction_dv: f64,
    /// Flight performance reserve as a mass, kg.
    pub fpr_kg: f64,
    /// Unusable residuals, kg.
    pub residuals_kg: f64,
    /// Disposal propellant, kg.
    pub disposal_kg: f64,
}

/// The embedded Runge–Kutta pair that integrates a flight (`model.integrator`).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum IntegratorMethod {
    /// Dormand–Prince 5(4) with its fourth-order continuous extension (the default up to
    /// December 2026).
    DormandPrince5,
    /// Dormand–Prince 8(5,3) with its seventh-order continuous extension (Hairer, Nørsett &
    /// Wanner's DOP853): fewer, longer steps at tight tolerances (the default).
    #[default]
    DormandPrince853,
}

/// Integrator settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IntegratorSettings {
    /// The Runge–Kutta pair (default Dormand–Prince 8(5,3)).
    pub method: IntegratorMethod,
    /// A rejected step that crossed a corner of the right-hand side (a node of a linear drag
    /// table in Mach, a layer base of the standard atmosphere) is retried to end on the corner
    /// (default true).
    pub end_steps_at_corners: bool,
    /// A segment (the integration from one event to the next) starts with the step size the
    /// previous segment's controller proposed, instead of a fresh estimate (default true; the
    /// first segment always estimates).
    pub carry_step_size: bool,
    /// Relative tolerance (default 1e-11: tight enough that terminal states are smooth to a few
    /// millimetres in the program's parameters, as finite-difference Jacobians need).
    pub rtol: f64,
    /// Absolute tolerance in the SI unit of each state (default 1e-8).
    pub atol: f64,
    /// Flight-time limit, s (default 20 000).
    pub max_flight_time_s: f64,
}

impl Default for IntegratorSettings {
    fn default() -> Self {
        Self {
            // Measured (docs/method.md §7, issue 11): at the same rtol 1e-11, medium demo 1 830
            // → 995 right-hand-side evaluations, 2.70 M → 1.65 M instructions, final masses
            // within 5.3e-5 kg of Dormand–Prince 5(4), finite-difference noise of the scaled
            // residuals 7e-8 → 3e-9.
            method: IntegratorMethod::DormandPrince853,
            end_steps_at_corners: true,
            carry_step_size: true,
            rtol: 1e-11,
            atol: 1e-8,
            max_flight_time_s: 20_000.0,
        }
    }
}

/// A checked problem: everything the simulator needs, SI units, radians.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Name for titles.
    pub name: String,
    /// Launch site.
    pub site: Site,
    /// Launch azimuth, rad clockwise from north.
    pub azimuth_rad: f64,
    /// How the azimuth was obtained.
    pub azimuth_source: AzimuthSource,
    /// An inclination out of direct reach is flown as a dog-leg (yaw in flight) instead of
    /// being refused.
    pub allow_dog_leg: bool,
    /// Target orbit.
    pub target: Option<Target>,
    /// Vehicle.
    pub vehicle: Vehicle,
    /// Ascent program.
    pub program: Program,
    /// Path limits.
    pub limits: Limits,
    /// Earth and atmosphere.
    pub environment: Environment,
    /// Integrator settings.
    pub integrator: IntegratorSettings,
    /// Propellant reserves.
    pub reserves: Reserves,
    /// SHA-256 of the input text (hex), or empty when built in code.
    pub input_sha256: String,
}

impl Problem {
    /// Parses and validates problem JSON text.
    pub fn from_json(text: &str) -> Result<Problem, ProblemError> {
        let file = parse(text)?;
        let mut p = validate::validate(&file)?;
        p.input_sha256 = sha256_hex(text.as_bytes());
        Ok(p)
    }

    /// The plane change still needed when the launch asks for an inclination that a direct ascent
    /// from this site cannot reach (i < |φ'| or i > 180° − |φ'|, φ' geocentric latitude); `None`
    /// when reachable or when the azimuth is given directly. The cost is the upper bound
    /// `2·v·sin(Δi/2)` at the circular speed of the target perigee (200 km without a target),
    /// from the nearest reachable inclination.
    pub fn unreachable_inclination(&self) -> Option<UnreachableInclination> {
        let AzimuthSource::FromInclination {
            inclination_rad, ..
        } = self.azimuth_source
        else {
            return None;
        };
        self.unreachable(
            "launch.inclination_deg",
            "set launch.allow_dog_leg to true to let the upper stage yaw into the plane",
            inclination_rad,
        )
    }

    /// [`Self::unreachable_inclination`] for a solve: the target's inclination also counts when
    /// the launch azimuth is given directly (the optimizer steers to the target's plane).
    pub fn unreachable_target_inclination(&self) -> Option<UnreachableInclination> {
        match (
            self.azimuth_source,
            self.target.and_then(|t| t.inclination_rad),
        ) {
            (AzimuthSource::Fixed, Some(i)) => self.unreachable(
                "target.inclination_deg",
                "to let the upper stage yaw into the plane, give launch.inclination_deg with \
                 launch.allow_dog_leg: true in place of launch.azimuth_deg",
                i,
            ),
            _ => self.unreachable_inclination(),
        }
    }

    /// Why `inclination_rad` cannot be reached by a direct ascent from the site, if it cannot.
    fn unreachable(
        &self,
        field: &'static str,
        hint: &'static str,
        inclination_rad: f64,
    ) -> Option<UnreachableInclination> {
        let lat = self
            .environment
            .geocentric_latitude_rad(self.site.geodetic.latitude_rad)
            .abs();
        let (lo, hi) = (lat, std::f64::consts::PI - lat);
        let nearest = inclination_rad.clamp(lo, hi);
        let di = (inclination_rad - nearest).abs();
        if di <= 1e-12 {
            return None;
        }
        let env = &self.environment;
        let r = env.reference_radius_m() + self.target.map_or(200e3, |t| t.perigee_alt_m);
        let v = crate::core::physics::orbit::circular_speed_mps(r, env.gm_m3_s2());
        Some(UnreachableInclination {
            field,
            hint,
            inclination_deg: inclination_rad.to_degrees(),
            latitude_deg: lat.to_degrees(),
            plane_change_mps: 2.0 * v * (0.5 * di).sin(),
        })
    }
}

/// JSON Schema (draft 2020-12) of the problem file, generated from the file types and their doc
/// comments (what `kickturn schema` prints, for editors and for checking files before a run).
/// The schema knows the keys, types and required fields; ranges and the checks between fields
/// stay with [`validate`].
pub fn json_schema() -> serde_json::Value {
    let mut schema =
        serde_json::to_value(schemars::schema_for!(ProblemFile)).unwrap_or(serde_json::Value::Null);
    if let Some(o) = schema.as_object_mut() {
        o.insert("title".into(), "kickturn problem file".into());
    }
    schema
}

/// Parses problem JSON into the raw file mirror; errors carry the JSON path of the field.
/// A problem must be exactly one JSON value: anything after it (a second problem, a stray `}`
/// that closed the document early) is refused with its line and column. A UTF-8 byte order mark
/// at the start is accepted.
pub fn parse(text: &str) -> Result<ProblemFile, ProblemError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    // serde reads a struct from a list too (`[1, 2]` as its fields in order): refuse any
    // document that is not an object before it is read as one.
    if !text.trim_start().starts_with('{') {
        if let Ok(v) = serde_json::from_str::<serde_json::Value>(text) {
            let found = match v {
                serde_json::Value::Array(_) => "a list [ ]",
                serde_json::Value::String(_) => "a text in double quotes",
                serde_json::Value::Number(_) => "a number",
                serde_json::Value::Bool(_) => "true or false",
                _ => "null",
            };
            return Err(ProblemError::Format {
                path: "(document)".into(),
                message: format!("a problem file is one JSON object in {{ }}, found {found}"),
            });
        }
    }
    let de = &mut serde_json::Deserializer::from_str(text);
    let file: ProblemFile = serde_path_to_error::deserialize(&mut *de).map_err(|e| {
        let path = e.path().to_string();
        ProblemError::Format {
            path: if path.is_empty() || path == "?" {
                "(document)".into()
            } else {
                path
            },
            message: plain_words(&e.into_inner().to_string()),
        }
    })?;
    de.end().map_err(|e| ProblemError::Format {
        path: "(document)".into(),
        message: format!(
            "text after the problem's closing brace at line {} column {}: a problem file holds \
             exactly one JSON object (a stray `}}` before it ends the document early)",
            e.line(),
            e.column()
        ),
    })?;
    Ok(file)
}

/// Adds "did you mean `x`?" to serde's unknown-field and unknown-variant messages, choosing the
/// expected name nearest in edit distance (Levenshtein 1966) when it is close enough.
fn with_hint(msg: &str) -> String {
    let (Some(got), Some(list)) = (msg.split('`').nth(1), msg.split("expected one of ").nth(1))
    else {
        return msg.to_string();
    };
    // Names compare with and without their unit suffix (`latitude` is `latitude_deg`, not
    // `altitude_m`), and common shorthands of the trade stand for the schema's words.
    let typed = [expand(stem(got)), expand(got)];
    let best = list
        .split('`')
        .skip(1)
        .step_by(2)
        .map(|c| {
            let d = typed
                .iter()
                .map(|t| levenshtein(t, stem(c)))
                .chain([levenshtein(got, c), levenshtein(got, stem(c))])
                .min()
                .unwrap_or(usize::MAX);
            (d, c)
        })
        .min();
    match best {
        Some((d, c)) if d <= got.len().max(3) / 2 => format!("{msg} (did you mean `{c}`?)"),
        _ => msg.to_string(),
    }
}

/// Rewrites the parser's words (`invalid type: map, expected a string at line 3 column 9`) in
/// plain ones (`expected text in double quotes here, found an object { } (line 3, column 9)`).
fn plain_words(msg: &str) -> String {
    let (body, at) = match msg.rfind(" at line ") {
        Some(i) => (
            &msg[..i],
            Some(msg[i + 4..].replacen(" column", ", column", 1)),
        ),
        None => (msg, None),
    };
    let hinted = with_hint(body);
    let body = hinted.as_str();
    let expected_found = |rest: &str, found: &dyn Fn(&str) -> String| match rest
        .split_once(", expected ")
    {
        Some((got, want)) => format!("expected {} here, found {}", wanted_words(want), found(got)),
        None => body.to_string(),
    };
    let body = if let Some(rest) = body.strip_prefix("invalid type: ") {
        expected_found(rest, &found_words)
    } else if let Some(rest) = body.strip_prefix("invalid value: ") {
        expected_found(rest, &found_words)
    } else if let Some(rest) = body.strip_prefix("invalid length ") {
        expected_found(rest, &|n: &str| format!("a list of {n} entries"))
    } else if let Some(key) = body.strip_prefix("missing field ") {
        format!("missing field {key}: this object needs it")
    } else {
        body.to_string()
    };
    match at {
        Some(a) => format!("{body} ({a})"),
        None => body,
    }
}

/// What the parser expected, in plain words.
fn wanted_words(want: &str) -> String {
    let length = |s: &str| s.rsplit(' ').next().and_then(|n| n.parse::<usize>().ok());
    match want {
        "f64" | "f32" => "a number".into(),
        "u8" | "u16" | "u32" | "u64" | "usize" => "a whole number (0 or more)".into(),
        "a string" => "text in double quotes".into(),
        "a boolean" => "true or false".into(),
        "a sequence" => "a list in [ ]".into(),
        w if w.starts_with("an array of length") || w.starts_with("a tuple of size") => {
            match length(w) {
                Some(n) => format!("a list of {n} numbers"),
                None => w.to_string(),
            }
        }
        w if w.starts_with("struct ") || w == "a map" => "an object in { }".into(),
        w if w.starts_with("enum ") || w.contains("variant") => {
            "one of the names or one-key objects allowed here".into()
        }
        w => w.to_string(),
    }
}

/// What the parser found, in plain words.
fn found_words(got: &str) -> String {
    let quoted = |s: &str| s.split('`').nth(1).map(str::to_string);
    match got {
        "map" => "an object { }".into(),
        "sequence" => "a list [ ]".into(),
        "null" | "unit value" => "null".into(),
        g if g.starts_with("string ") => format!("the text {}", &g[7..]),
        g if g.starts_with("floating point") || g.starts_with("integer") => {
            format!("the number {}", quoted(g).unwrap_or_default())
        }
        g if g.starts_with("boolean") => quoted(g).unwrap_or_else(|| g.to_string()),
        g => g.to_string(),
    }
}

/// Unit suffixes of the schema's keys, longest first.
const UNIT_SUFFIXES: [&str; 14] = [
    "_percent_dv",
    "_per_s",
    "_deg_s",
    "_mps",
    "_m2",
    "_deg",
    "_km",
    "_kg",
    "_pa",
    "_s",
    "_n",
    "_m",
    "_g",
    "_rad",
];

/// A key without its unit suffix.
fn stem(key: &str) -> &str {
    UNIT_SUFFIXES
        .iter()
        .find_map(|u| key.strip_suffix(u))
        .filter(|s| !s.is_empty())
        .unwrap_or(key)
}

/// Shorthands of the trade written out as the schema spells them.
fn expand(stem: &str) -> String {
    match stem {
        "max_q" | "q_max" | "maxq" | "qmax" | "max_dynamic_pressure" => "max_dynamic_pressure",
        "max_g" | "g_max" | "max_accel" | "max_acceleration" => "max_axial_accel",
        "isp" => "isp_vac",
        "thrust" => "thrust_vac",
        "lat" => "latitude",
        "lon" | "long" => "longitude",
        "alt" => "altitude",
        other => other,
    }
    .to_string()
}

/// Edit distance between two strings (insertions, deletions, substitutions).
fn levenshtein(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != *cb)).min(row[j] + 1).min(cur + 1);
            prev = cur;
        }
    }
    row[b.len()]
}

/// Hex SHA-256 of bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_fields_get_the_nearest_name() {
        let e = parse(r#"{"name": "x", "sitte": {}}"#)
            .err()
            .map(|e| e.to_string());
        assert!(e.is_some_and(|m| m.contains("did you mean `site`?")));
        assert_eq!(levenshtein("isp_s", "isp_vac_s"), 4);
        assert_eq!(levenshtein("", "abc"), 3);
    }

    #[test]
    fn a_hint_compares_names_without_their_unit_and_knows_shorthands() {
        // Issue 12: `latitude` suggested `altitude_m`; `max_q_pa` got no suggestion.
        let hint = |got: &str, list: &str| {
            with_hint(&format!("unknown field `{got}`, expected one of {list}"))
        };
        let site = "`name`, `latitude_deg`, `longitude_deg`, `altitude_m`";
        assert!(hint("latitude", site).ends_with("(did you mean `latitude_deg`?)"));
        assert!(hint("lat", site).ends_with("(did you mean `latitude_deg`?)"));
        let limits = "`max_dynamic_pressure_pa`, `max_axial_accel_g`, `min_orbit_perigee_alt_km`";
        assert!(hint("max_q_pa", limits).ends_with("(did you mean `max_dynamic_pressure_pa`?)"));
        assert!(hint("max_g", limits).ends_with("(did you mean `max_axial_accel_g`?)"));
        // Far from everything: no guess.
        assert!(!hint("colour", site).contains("did you mean"));
    }

    #[test]
    fn parser_words_are_rewritten_in_plain_ones_with_the_field_path() {
        // Issue 12: raw parser text leaked (`expected f64`, `invalid type: map, expected a
        // string`).
        let msg = |text: &str| parse(text).err().map(|e| e.to_string()).unwrap_or_default();
        let m = msg(r#"{"name": {"a": 1}}"#);
        assert_eq!(
            m,
            "name: expected text in double quotes here, found an object { } (line 1, column 9)"
        );
        let m = msg(r#"{"name": "x", "site": {"name": "s", "latitude_deg": "28"}}"#);
        assert!(
            m.starts_with(
                "site.latitude_deg: expected a number here, found the text \"28\" (line 1,"
            ),
            "{m}"
        );
        assert_eq!(
            plain_words("invalid length 3, expected an array of length 2 at line 4 column 2"),
            "expected a list of 2 numbers here, found a list of 3 entries (line 4, column 2)"
        );
        assert_eq!(
            plain_words("invalid type: integer `3`, expected a boolean"),
            "expected true or false here, found the number 3"
        );
    }
}
