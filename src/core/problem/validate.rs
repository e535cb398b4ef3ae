//! Checks a [`ProblemFile`] field by field and builds the [`Problem`]. Every error names the JSON
//! path of the field and the reason.

use super::file::*;
use super::{
    AzimuthSource, Insertion, IntegratorMethod, IntegratorSettings, Limits, Problem, Site, Target,
};
use crate::core::error::{in_range as range, ProblemError};
use crate::core::physics::aero::DragTable;
use crate::core::physics::earth::{self, Geodetic, G0_MPS2, WGS84_E2};
use crate::core::physics::environment::{AtmosphereModel, EarthModel, Environment};
use crate::core::physics::orbit::{self, AzimuthBranch};
use crate::core::steering::*;
use crate::core::vehicle::*;

type R<T> = Result<T, ProblemError>;

/// Formats a number for a message: scientific notation when very large or very small.
fn num(x: f64) -> String {
    if x != 0.0 && x.is_finite() && (x.abs() >= 1e7 || x.abs() < 1e-4) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// Most arcs in a program: each arc is flown as its own segments, and a flight stops as runaway
/// after 10 000 segments.
pub const MAX_ARCS: usize = 200;
/// Most points in a C_D(Mach) table.
pub const MAX_CD_POINTS: usize = 500;
/// Most stages.
pub const MAX_STAGES: usize = 20;
/// Most jettisoned items.
pub const MAX_JETTISONS: usize = 50;

/// Refuses a list longer than `max`, naming the field and why.
fn at_most(field: &str, len: usize, max: usize, why: &str) -> R<()> {
    if len > max {
        return bad(field, format!("{len} entries; at most {max} ({why})"));
    }
    Ok(())
}

fn bad<T>(field: &str, reason: impl Into<String>) -> R<T> {
    Err(ProblemError::invalid(field, reason))
}

fn positive(field: &str, x: f64) -> R<f64> {
    if x.is_finite() && x > 0.0 {
        Ok(x)
    } else {
        bad(
            field,
            format!("must be a finite number > 0, got {}", num(x)),
        )
    }
}

/// Validates the whole file.
pub fn validate(f: &ProblemFile) -> R<Problem> {
    let site = site(&f.site)?;
    let environment = environment(&f.model)?;
    let target = f
        .target
        .as_ref()
        .map(|t| target(t, &environment))
        .transpose()?;
    let vehicle = vehicle(&f.vehicle)?;
    let program = program(&f.ascent, &vehicle, target.is_some(), &environment)?;
    let integrator = integrator(&f.model)?;
    let limits = limits(&f.limits)?;
    if let Some(t) = &target {
        check_target_floor(t, &limits, f.target.as_ref())?;
    }
    check_liftoff_thrust(&vehicle, &site, &environment)?;
    let (azimuth_rad, azimuth_source) = azimuth(&f.launch, &site, target.as_ref(), &environment)?;
    let p = Problem {
        name: f.name.clone(),
        site,
        azimuth_rad,
        azimuth_source,
        allow_dog_leg: f.launch.allow_dog_leg.unwrap_or(false),
        target,
        vehicle,
        program,
        limits,
        environment,
        integrator,
        reserves: reserves(f.reserves.as_ref())?,
        input_sha256: String::new(),
    };
    // The dispersions section is checked here, so that every command names a wrong key in it;
    // `kickturn dispersions` builds the model again from the file.
    if f.dispersions.is_some() {
        crate::core::dispersion::Model::from_file(f.dispersions.as_ref(), &p)?;
    }
    Ok(p)
}

fn site(s: &SiteFile) -> R<Site> {
    let lat = range("site.latitude_deg", s.latitude_deg, -90.0, 90.0, true)?;
    let lon = range("site.longitude_deg", s.longitude_deg, -360.0, 360.0, true)?;
    let alt = range("site.altitude_m", s.altitude_m, -500.0, 9000.0, true)?;
    Ok(Site {
        name: s.name.clone(),
        geodetic: Geodetic {
            latitude_rad: lat.to_radians(),
            longitude_rad: lon.to_radians(),
            altitude_m: alt,
        },
    })
}

fn target(t: &TargetFile, env: &Environment) -> R<Target> {
    let state = (
        t.insertion_alt_km,
        t.insertion_speed_mps,
        t.insertion_flight_path_deg,
    );
    let (rp, ra, insertion) =
        match (t.perigee_alt_km, t.apogee_alt_km, state) {
            (Some(rp), Some(ra), (None, None, None)) => {
                let rp = range("target.perigee_alt_km", rp, 80.0, 1.0e6, true)?;
                let ra = range("target.apogee_alt_km", ra, 80.0, 1.0e6, true)?;
                if ra < rp {
                    return bad(
                        "target.apogee_alt_km",
                        format!("apogee {ra} km is below perigee {rp} km"),
                    );
                }
                let ins = match t.insertion.unwrap_or(InsertionFile::Perigee) {
                    InsertionFile::Perigee => Insertion::Perigee,
                    InsertionFile::Free => Insertion::Free,
                };
                (rp, ra, ins)
            }
            (None, None, (Some(h), Some(v), Some(g))) if t.insertion.is_none() => {
                insertion_state(h, v, g, env)?
            }
            _ => return bad(
                "target",
                "give perigee_alt_km and apogee_alt_km (optionally insertion), or all three of \
                 insertion_alt_km, insertion_speed_mps and insertion_flight_path_deg",
            ),
        };
    let inc = t
        .inclination_deg
        .map(|i| range("target.inclination_deg", i, 0.0, 180.0, true))
        .transpose()?;
    Ok(Target {
        insertion,
        perigee_alt_m: rp * 1e3,
        apogee_alt_m: ra * 1e3,
        inclination_rad: inc.map(f64::to_radians),
    })
}

/// A target whose perigee lies below the orbit floor (`limits.min_orbit_perigee_alt_km`, 100 km by
/// default: common practice, below it an orbit decays within a few revolutions) would be
/// "reached" by a flight the reports call suborbital: refused.
fn check_target_floor(t: &Target, l: &Limits, file: Option<&TargetFile>) -> R<()> {
    if t.perigee_alt_m >= l.min_orbit_perigee_alt_m {
        return Ok(());
    }
    let field = if file.is_some_and(|f| f.perigee_alt_km.is_some()) {
        "target.perigee_alt_km"
    } else {
        "target"
    };
    bad(
        field,
        format!(
            "perigee {:.1} km is below the orbit floor limits.min_orbit_perigee_alt_km = {:.1} km \
             (a perigee that low is not an orbit; lower the floor deliberately if you mean it)",
            t.perigee_alt_m / 1e3,
            l.min_orbit_perigee_alt_m / 1e3
        ),
    )
}

/// Apsides (km) of the orbit through an insertion state (two-body with the model's GM; altitudes
/// r − R, R the reference radius: 6378.137 km on WGS-84, the sphere's radius).
fn insertion_state(h_km: f64, v: f64, g_deg: f64, env: &Environment) -> R<(f64, f64, Insertion)> {
    let h = range("target.insertion_alt_km", h_km, 80.0, 1.0e5, true)?;
    let (r_ref, mu) = (env.reference_radius_m(), env.gm_m3_s2());
    let r = r_ref + h * 1e3;
    let v_esc = (2.0 * mu / r).sqrt();
    let v = range("target.insertion_speed_mps", v, 0.0, v_esc, false).map_err(|_| {
        ProblemError::invalid(
            "target.insertion_speed_mps",
            format!("{v} m/s is not below the escape speed {v_esc:.1} m/s at that altitude"),
        )
    })?;
    let g = range("target.insertion_flight_path_deg", g_deg, -30.0, 30.0, true)?.to_radians();
    let energy = 0.5 * v * v - mu / r;
    let hm = r * v * g.cos();
    let e = (1.0 + 2.0 * energy * hm * hm / (mu * mu)).max(0.0).sqrt();
    let p = hm * hm / mu;
    let (rp, ra) = (p / (1.0 + e), p / (1.0 - e));
    let rp_alt_km = (rp - r_ref) / 1e3;
    if rp_alt_km < 80.0 {
        return bad(
            "target",
            format!(
                "the insertion state gives a perigee of {rp_alt_km:.1} km, inside the atmosphere"
            ),
        );
    }
    let ins = Insertion::State {
        alt_m: h * 1e3,
        speed_mps: v,
        flight_path_rad: g,
    };
    Ok((rp_alt_km, (ra - r_ref) / 1e3, ins))
}

fn aero(path: &str, a: &AeroFile) -> R<DragTable> {
    positive(&format!("{path}.ref_area_m2"), a.ref_area_m2)?;
    at_most(
        &format!("{path}.cd_mach"),
        a.cd_mach.len(),
        MAX_CD_POINTS,
        "a drag table needs tens of points",
    )?;
    if a.cd_mach.is_empty() {
        return bad(
            &format!("{path}.cd_mach"),
            "needs at least one [Mach, C_D] pair",
        );
    }
    for (i, p) in a.cd_mach.iter().enumerate() {
        let fp = format!("{path}.cd_mach[{i}]");
        range(&fp, p[0], 0.0, 100.0, true)?;
        range(&fp, p[1], 0.0, 20.0, true)?;
        if i > 0 && p[0] <= a.cd_mach[i - 1][0] {
            return bad(&fp, "Mach numbers must be strictly increasing");
        }
    }
    use crate::core::physics::aero::CdInterpolation;
    use crate::core::problem::file::CdInterpolationFile;
    let how = match a.cd_interpolation {
        None | Some(CdInterpolationFile::Linear) => CdInterpolation::Linear,
        Some(CdInterpolationFile::MonotoneCubic) => CdInterpolation::MonotoneCubic,
    };
    Ok(DragTable::with(a.ref_area_m2, &a.cd_mach, how))
}

fn engine(path: &str, t_vac: f64, isp: f64, ae: Option<f64>, t_sl: Option<f64>) -> R<Engine> {
    let thrust_vac_n = positive(&format!("{path}.thrust_vac_n"), t_vac)?;
    let isp_vac_s = range(&format!("{path}.isp_vac_s"), isp, 0.0, 10_000.0, false)?;
    let exit_area_m2 = match (ae, t_sl) {
        (Some(a), None) => range(&format!("{path}.exit_area_m2"), a, 0.0, 1e4, true)?,
        (None, Some(t)) => {
            let f = format!("{path}.thrust_sl_n");
            // A vacuum thrust below the sea-level one by about a thousand is a thrust in kN:
            // name that field, not the one written in newtons.
            if t > thrust_vac_n && t <= 2000.0 * thrust_vac_n && thrust_vac_n < 1e5 {
                return bad(
                    &format!("{path}.thrust_vac_n"),
                    format!(
                        "{} N is below thrust_sl_n ({} N); is it in kN? Both fields are in \
                         newtons",
                        thrust_vac_n, t
                    ),
                );
            }
            range(&f, t, 0.0, thrust_vac_n, false)?;
            (thrust_vac_n - t) / P_SL_PA
        }
        (Some(_), Some(_)) => {
            return bad(path, "give either exit_area_m2 or thrust_sl_n, not both")
        }
        (None, None) => return bad(path, "missing field: give exit_area_m2 or thrust_sl_n"),
    };
    Ok(Engine {
        thrust_vac_n,
        isp_vac_s,
        exit_area_m2,
    })
}

/// A throttle fraction in (0, 1]; default 1 (not throttleable).
fn throttle_fraction(field: &str, x: Option<f64>) -> R<f64> {
    match x {
        None => Ok(1.0),
        Some(k) if k.is_finite() && k > 0.0 && k <= 1.0 => Ok(k),
        Some(k) => bad(field, format!("{k} is outside the allowed range (0, 1]")),
    }
}

fn stage(i: usize, s: &StageFile) -> R<Stage> {
    let p = format!("vehicle.stages[{i}]");
    Ok(Stage {
        name: s.name.clone(),
        dry_mass_kg: positive(&format!("{p}.dry_mass_kg"), s.dry_mass_kg)?,
        propellant_kg: positive(&format!("{p}.propellant_kg"), s.propellant_kg)?,
        engine: engine(
            &p,
            s.thrust_vac_n,
            s.isp_vac_s,
            s.exit_area_m2,
            s.thrust_sl_n,
        )?,
        min_throttle: throttle_fraction(&format!("{p}.min_throttle"), s.min_throttle)?,
        aero: aero(&format!("{p}.aero"), &s.aero)?,
    })
}

fn boosters(b: &BoosterFile) -> R<Boosters> {
    let p = "vehicle.boosters";
    if b.count == 0 || b.count > 64 {
        return bad(
            &format!("{p}.count"),
            format!("must be 1 to 64, got {}", b.count),
        );
    }
    Ok(Boosters {
        name: b.name.clone(),
        count: b.count,
        dry_mass_kg: positive(&format!("{p}.dry_mass_kg"), b.dry_mass_kg)?,
        propellant_kg: positive(&format!("{p}.propellant_kg"), b.propellant_kg)?,
        engine: engine(
            p,
            b.thrust_vac_n,
            b.isp_vac_s,
            b.exit_area_m2,
            b.thrust_sl_n,
        )?,
        aero: aero(&format!("{p}.aero"), &b.aero)?,
    })
}

fn jettison(i: usize, j: &JettisonFile) -> R<Jettison> {
    let p = format!("vehicle.jettisons[{i}]");
    let when = match j.when {
        JettisonWhenFile::TimeS(t) => JettisonWhen::Time(positive(&format!("{p}.when.time_s"), t)?),
        JettisonWhenFile::AltitudeM(h) => {
            JettisonWhen::Altitude(positive(&format!("{p}.when.altitude_m"), h)?)
        }
        JettisonWhenFile::HeatingBelowWM2(q) => {
            JettisonWhen::HeatingBelow(positive(&format!("{p}.when.heating_below_w_m2"), q)?)
        }
    };
    Ok(Jettison {
        name: j.name.clone(),
        mass_kg: positive(&format!("{p}.mass_kg"), j.mass_kg)?,
        when,
    })
}

fn vehicle(v: &VehicleFile) -> R<Vehicle> {
    let payload_kg = range("vehicle.payload_kg", v.payload_kg, 0.0, 1e8, true)?;
    at_most(
        "vehicle.stages",
        v.stages.len(),
        MAX_STAGES,
        "a launch vehicle",
    )?;
    at_most(
        "vehicle.jettisons",
        v.jettisons.len(),
        MAX_JETTISONS,
        "each jettison is an event of the flight",
    )?;
    if v.stages.is_empty() {
        return bad("vehicle.stages", "needs at least one stage");
    }
    let stages = v
        .stages
        .iter()
        .enumerate()
        .map(|(i, s)| stage(i, s))
        .collect::<R<Vec<_>>>()?;
    let boosters = v.boosters.as_ref().map(boosters).transpose()?;
    let jettisons = v
        .jettisons
        .iter()
        .enumerate()
        .map(|(i, j)| jettison(i, j))
        .collect::<R<Vec<_>>>()?;
    Ok(Vehicle {
        name: v.name.clone(),
        payload_kg,
        stages,
        boosters,
        jettisons,
    })
}

fn liftoff(l: &LiftoffFile) -> R<Liftoff> {
    let p = "ascent.liftoff";
    let rise = match l.vertical_rise {
        RiseEndFile::TimeS(t) => RiseEnd::Time(range(
            &format!("{p}.vertical_rise.time_s"),
            t,
            0.0,
            600.0,
            true,
        )?),
        RiseEndFile::SpeedMps(v) => RiseEnd::Speed(range(
            &format!("{p}.vertical_rise.speed_mps"),
            v,
            0.0,
            2000.0,
            false,
        )?),
    };
    let kick = range(&format!("{p}.kick_deg"), l.kick_deg, 0.0, 89.0, true)?;
    let (rate, pitch_over_s) = match (l.pitch_rate_deg_s, l.pitch_over_s) {
        (Some(r), None) => (
            range(&format!("{p}.pitch_rate_deg_s"), r, 0.0, 90.0, false)?,
            None,
        ),
        (None, Some(d)) => {
            let d = range(&format!("{p}.pitch_over_s"), d, 0.0, 600.0, false)?;
            (kick / d, Some(d))
        }
        (Some(_), Some(_)) => {
            return bad(
                &format!("{p}.pitch_over_s"),
                "give the pitch-over by its rate (`pitch_rate_deg_s`) or by its duration \
                 (`pitch_over_s`), not both",
            )
        }
        (None, None) => {
            return bad(
                &format!("{p}.pitch_rate_deg_s"),
                "missing: give the pitch-over rate (`pitch_rate_deg_s`, deg/s) or its \
                 duration (`pitch_over_s`, s)",
            )
        }
    };
    Ok(Liftoff {
        rise,
        pitch_rate_rad_s: rate.to_radians(),
        pitch_over_s,
        kick_rad: kick.to_radians(),
    })
}

fn cutoff(path: &str, c: Option<CutoffFile>, has_target: bool) -> R<Cutoff> {
    Ok(match c.unwrap_or(CutoffFile::Depletion) {
        CutoffFile::Depletion => Cutoff::Depletion,
        CutoffFile::TargetOrbit if !has_target => {
            return bad(path, "\"target_orbit\" needs a `target` section")
        }
        CutoffFile::TargetOrbit => Cutoff::TargetOrbit,
        CutoffFile::ApogeeAltKm(h) => {
            Cutoff::ApogeeAlt(range(&format!("{path}.apogee_alt_km"), h, 0.0, 1e6, false)? * 1e3)
        }
        CutoffFile::PerigeeAltKm(h) => Cutoff::PerigeeAlt(
            range(&format!("{path}.perigee_alt_km"), h, -6000.0, 1e6, false)? * 1e3,
        ),
        CutoffFile::DurationS(t) => Cutoff::Duration(positive(&format!("{path}.duration_s"), t)?),
    })
}

fn arc(i: usize, a: &ArcFile, has_target: bool, env: &Environment) -> R<Arc> {
    let p = format!("ascent.arcs[{i}]");
    Ok(match a {
        ArcFile::Burn(b) => {
            let mut steering = Steering::from_file(&format!("{p}.burn.steering"), &b.steering)?;
            let cutoff = cutoff(&format!("{p}.burn.cutoff"), b.cutoff, has_target)?;
            if let (Steering::Guidance(g), SteeringFile::Guidance(gf)) =
                (&mut steering, &b.steering)
            {
                let aim_path = format!("{p}.burn.steering.guidance.aim");
                g.aim = gf
                    .aim
                    .as_ref()
                    .map(|a| {
                        // The aim has the target's form: name its own fields in errors.
                        target(a, env).map_err(|e| match e {
                            ProblemError::Invalid { field, reason } => ProblemError::Invalid {
                                field: field.replacen("target", &aim_path, 1),
                                reason,
                            },
                            e => e,
                        })
                    })
                    .transpose()?;
                // Guidance aims at the target orbit (or its own aim) and ends on its energy
                // (an intermediate aim: on its apogee or perigee).
                if !has_target && g.aim.is_none() {
                    return bad(
                        &format!("{p}.burn.steering.guidance"),
                        "closed-loop guidance needs a `target` section (or an `aim`) to aim at",
                    );
                }
                let ok = match cutoff {
                    Cutoff::TargetOrbit => has_target,
                    Cutoff::ApogeeAlt(_) | Cutoff::PerigeeAlt(_) => g.aim.is_some(),
                    _ => false,
                };
                if !ok {
                    return bad(
                        &format!("{p}.burn.cutoff"),
                        "a guided burn must be cut off by \"target_orbit\" (the guidance aims at the target's energy), or with an `aim` by the aim's apogee_alt_km or perigee_alt_km",
                    );
                }
            }
            Arc::Burn { steering, cutoff }
        }
        ArcFile::Coast(CoastFile::DurationS(t)) => Arc::Coast(CoastEnd::Duration(positive(
            &format!("{p}.coast.duration_s"),
            *t,
        )?)),
        ArcFile::Coast(CoastFile::ToApogee) => Arc::Coast(CoastEnd::ToApogee),
    })
}

fn program(a: &AscentFile, v: &Vehicle, has_target: bool, env: &Environment) -> R<Program> {
    at_most(
        "ascent.arcs",
        a.arcs.len(),
        MAX_ARCS,
        "each arc is flown as its own segments, and a flight stops as runaway after 10 000",
    )?;
    if a.arcs.is_empty() {
        return bad("ascent.arcs", "needs at least one arc; the first is a burn");
    }
    let arcs = a
        .arcs
        .iter()
        .enumerate()
        .map(|(i, x)| arc(i, x, has_target, env))
        .collect::<R<Vec<_>>>()?;
    let liftoff = a.liftoff.as_ref().map(liftoff).transpose()?;
    fn law(x: &Arc) -> Option<&dyn SteeringLaw> {
        match x {
            Arc::Burn { steering, .. } => Some(steering.law()),
            Arc::Coast(_) => None,
        }
    }
    let Some(first) = law(&arcs[0]) else {
        return bad("ascent.arcs[0]", "the first arc must be a burn");
    };
    if first.starts_with_liftoff() && liftoff.is_none() {
        return bad(
            "ascent.liftoff",
            format!(
                "missing: a {} from the pad needs the liftoff manoeuvre",
                first.file_key().replace('_', " ")
            ),
        );
    }
    if liftoff.is_some() && !first.starts_with_liftoff() {
        return bad(
            "ascent.liftoff",
            "given, but the first arc is not a gravity turn: the liftoff manoeuvre would be ignored",
        );
    }
    for (i, a) in arcs.iter().enumerate() {
        let continued = law(a).is_some_and(|l| l.continues_previous());
        let has_law = arcs[..i]
            .iter()
            .any(|b| law(b).is_some_and(|l| l.is_continuable()));
        if continued && !has_law {
            return bad(
                &format!("ascent.arcs[{i}].burn.steering"),
                "\"linear_tangent_continued\" needs an earlier linear_tangent arc whose law it continues",
            );
        }
    }
    let depleting = arcs
        .iter()
        .filter(|x| {
            matches!(
                x,
                Arc::Burn {
                    cutoff: Cutoff::Depletion,
                    ..
                }
            )
        })
        .count();
    if depleting > v.stages.len() {
        return bad(
            "ascent.arcs",
            format!(
                "{depleting} burns run to depletion but the vehicle has {} stages",
                v.stages.len()
            ),
        );
    }
    let bucket = a
        .throttle_bucket
        .map(|b| bucket(&b, &v.stages[0]))
        .transpose()?;
    Ok(Program {
        liftoff,
        bucket,
        arcs,
    })
}

fn bucket(b: &BucketFile, s0: &Stage) -> R<Bucket> {
    let p = "ascent.throttle_bucket";
    Ok(Bucket {
        start_s: range(&format!("{p}.start_s"), b.start_s, 0.0, 1e4, true)?,
        duration_s: positive(&format!("{p}.duration_s"), b.duration_s)?,
        throttle: range(
            &format!("{p}.throttle"),
            b.throttle,
            s0.min_throttle,
            1.0,
            true,
        )
        .map_err(|_| {
            ProblemError::invalid(
                format!("{p}.throttle"),
                format!(
                    "{} is outside [{}, 1] (first stage min_throttle to full)",
                    b.throttle, s0.min_throttle
                ),
            )
        })?,
    })
}

fn environment(m: &ModelFile) -> R<Environment> {
    let earth = match m.earth.unwrap_or(EarthFile::Wgs84) {
        EarthFile::Wgs84 => EarthModel::Wgs84 {
            j2: m.j2.unwrap_or(true),
            rotation: m.earth_rotation.unwrap_or(true),
        },
        EarthFile::Sphere(s) => sphere(m, &s)?,
    };
    Ok(Environment {
        earth,
        atmosphere: match m.atmosphere.unwrap_or(AtmosphereFile::Us1976) {
            AtmosphereFile::Us1976 => AtmosphereModel::Us1976,
            AtmosphereFile::Vacuum => AtmosphereModel::Vacuum,
        },
    })
}

/// The spherical Earth of `model.earth.sphere`: radius 100 km to 100 000 km (any planet-sized
/// body; a smaller value is a unit slip), GM > 0, rotation 0 to 1e-3 rad/s (about 14 times the
/// Earth's rate; faster spins a sphere of Earth size near its own orbital speed at the equator).
fn sphere(m: &ModelFile, s: &SphereFile) -> R<EarthModel> {
    const P: &str = "model.earth.sphere";
    if m.j2 == Some(true) {
        return bad(
            "model.j2",
            "a spherical Earth has point-mass gravity only (no J2): leave j2 out or set it false, \
             or choose \"earth\": \"wgs84\"",
        );
    }
    let radius_m = range(&format!("{P}.radius_m"), s.radius_m, 1e5, 1e8, true).map_err(|e| {
        if (1e2..1e5).contains(&s.radius_m) {
            ProblemError::invalid(
                format!("{P}.radius_m"),
                format!(
                    "{} is below 100 000 m; is it in km? The field is in metres ({} km = {} m)",
                    s.radius_m,
                    s.radius_m,
                    s.radius_m * 1e3
                ),
            )
        } else {
            e
        }
    })?;
    let gm_m3_s2 = positive(&format!("{P}.gm_m3_s2"), s.gm_m3_s2)?;
    let rotation_rad_s = match (s.rotation_rad_s, m.earth_rotation) {
        (Some(w), Some(false)) if w != 0.0 => {
            return bad(
                &format!("{P}.rotation_rad_s"),
                format!(
                    "{w} rad/s contradicts model.earth_rotation = false: give one of them (0 or \
                     earth_rotation false for a sphere that does not turn)"
                ),
            )
        }
        (_, Some(false)) => 0.0,
        (w, _) => range(
            &format!("{P}.rotation_rad_s"),
            w.unwrap_or(earth::WGS84_OMEGA_RAD_S),
            0.0,
            1e-3,
            true,
        )?,
    };
    Ok(EarthModel::Spherical {
        radius_m,
        gm_m3_s2,
        rotation_rad_s,
    })
}

fn integrator(m: &ModelFile) -> R<IntegratorSettings> {
    let d = IntegratorSettings::default();
    Ok(IntegratorSettings {
        method: match m.integrator {
            None => d.method,
            Some(IntegratorFile::Dopri5) => IntegratorMethod::DormandPrince5,
            Some(IntegratorFile::Dop853) => IntegratorMethod::DormandPrince853,
        },
        end_steps_at_corners: m.end_steps_at_corners.unwrap_or(d.end_steps_at_corners),
        carry_step_size: m.carry_step_size.unwrap_or(d.carry_step_size),
        rtol: range("model.rtol", m.rtol.unwrap_or(d.rtol), 1e-14, 1e-3, true)?,
        atol: range("model.atol", m.atol.unwrap_or(d.atol), 1e-14, 1.0, true)?,
        max_flight_time_s: range(
            "model.max_flight_time_s",
            m.max_flight_time_s.unwrap_or(d.max_flight_time_s),
            0.0,
            1e6,
            false,
        )?,
    })
}

fn reserves(r: Option<&ReservesFile>) -> R<super::Reserves> {
    let Some(r) = r else {
        return Ok(super::Reserves::default());
    };
    let mass = |field: &str, x: Option<f64>| {
        x.map_or(Ok(0.0), |v| {
            range(&format!("reserves.{field}"), v, 0.0, 1e8, true)
        })
    };
    Ok(super::Reserves {
        fpr_fraction_dv: r.fpr_percent_dv.map_or(Ok(0.0), |v| {
            range("reserves.fpr_percent_dv", v, 0.0, 20.0, true)
        })? / 100.0,
        fpr_kg: mass("fpr_kg", r.fpr_kg)?,
        residuals_kg: mass("residuals_kg", r.residuals_kg)?,
        disposal_kg: mass("disposal_kg", r.disposal_kg)?,
    })
}

fn limits(l: &LimitsFile) -> R<Limits> {
    let acc = l
        .max_axial_accel_g
        .map(|g| range("limits.max_axial_accel_g", g, 0.1, 100.0, true))
        .transpose()?;
    let q = l
        .max_dynamic_pressure_pa
        .map(|q| positive("limits.max_dynamic_pressure_pa", q))
        .transpose()?;
    // Launch vehicles peak at 20 to 60 kPa (common practice): under 1 kPa the value cannot be
    // meant, and a kilopascal figure is the likely slip.
    if let Some(q) = q.filter(|q| *q < 1000.0) {
        return bad(
            "limits.max_dynamic_pressure_pa",
            format!(
                "{} Pa is under 1 kPa, far below any ascent's max-Q (20 to 60 kPa); is it in \
                 kPa? The field is in pascals ({} kPa = {} Pa)",
                q,
                q,
                q * 1e3
            ),
        );
    }
    let rp = range(
        "limits.min_orbit_perigee_alt_km",
        l.min_orbit_perigee_alt_km.unwrap_or(100.0),
        0.0,
        1e5,
        true,
    )?;
    // q·α limits of launch vehicles are tens to hundreds of kPa·deg (common practice); under
    // 100 Pa·deg the value cannot be meant (a kPa·deg figure is the likely slip).
    let q_alpha = l
        .max_q_alpha_pa_deg
        .map(|v| positive("limits.max_q_alpha_pa_deg", v))
        .transpose()?;
    if let Some(v) = q_alpha.filter(|v| *v < 100.0) {
        return bad(
            "limits.max_q_alpha_pa_deg",
            format!(
                "{v} Pa·deg is far below any vehicle's q·α limit (tens to hundreds of kPa·deg); \
                 is it in kPa·deg? The field is in Pa·deg ({v} kPa·deg = {} Pa·deg)",
                v * 1e3
            ),
        );
    }
    Ok(Limits {
        max_axial_accel_mps2: acc.map(|g| g * G0_MPS2),
        max_dynamic_pressure_pa: q,
        min_orbit_perigee_alt_m: rp * 1e3,
        max_q_alpha_pa_deg: q_alpha,
    })
}

/// Liftoff thrust-to-weight at the pad must exceed 1 (full throttle, local air pressure).
fn check_liftoff_thrust(v: &Vehicle, site: &Site, env: &Environment) -> R<()> {
    let p_a = env.air(site.geodetic.altitude_m).pressure_pa;
    let e = &v.stages[0].engine;
    let mut thrust = e.thrust_vac_n - p_a * e.exit_area_m2;
    if let Some(b) = &v.boosters {
        thrust += f64::from(b.count) * (b.engine.thrust_vac_n - p_a * b.engine.exit_area_m2);
    }
    let tw = thrust / (v.liftoff_mass_kg() * G0_MPS2);
    if tw.is_finite() && tw > 1.0 {
        Ok(())
    } else {
        bad(
            "vehicle.stages[0]",
            format!(
                "liftoff thrust-to-weight is {tw:.3} (thrust {:.0} kN at the pad, mass {:.0} kg): \
                 it must exceed 1{}",
                thrust / 1e3,
                v.liftoff_mass_kg(),
                if tw < 0.01 {
                    "; is a thrust in kN or a mass in grams? Thrusts are in newtons, masses in kg"
                } else {
                    ""
                }
            ),
        )
    }
}

/// Geocentric latitude of a point on the WGS-84 ellipsoid: tan φ' = (1 − e²) tan φ (see
/// [`Environment::geocentric_latitude_rad`] for the model's own).
pub fn geocentric_latitude_rad(geodetic_lat_rad: f64) -> f64 {
    ((1.0 - WGS84_E2) * geodetic_lat_rad.tan()).atan()
}

fn azimuth(
    l: &LaunchFile,
    site: &Site,
    target: Option<&Target>,
    env: &Environment,
) -> R<(f64, AzimuthSource)> {
    match (l.azimuth_deg, l.inclination_deg) {
        (Some(_), None) if l.allow_dog_leg.is_some() => bad(
            "launch.allow_dog_leg",
            "applies only with inclination_deg; with azimuth_deg the direction is already given",
        ),
        (Some(_), None) if l.branch.is_some() => bad(
            "launch.branch",
            "applies only with inclination_deg; with azimuth_deg the direction is already given",
        ),
        (Some(az), None) => {
            let az = range("launch.azimuth_deg", az, -360.0, 360.0, true)?;
            Ok((az.rem_euclid(360.0).to_radians(), AzimuthSource::Fixed))
        }
        (None, Some(inc)) => {
            let inc = range("launch.inclination_deg", inc, 0.0, 180.0, true)?.to_radians();
            if let Some(ti) = target.and_then(|t| t.inclination_rad) {
                if (ti - inc).abs() > 1e-9 {
                    return bad(
                        "launch.inclination_deg",
                        format!(
                            "{:.4}° contradicts target.inclination_deg {:.4}°",
                            inc.to_degrees(),
                            ti.to_degrees()
                        ),
                    );
                }
            }
            let northerly = l.branch != Some(BranchFile::Southerly);
            let branch = if northerly {
                AzimuthBranch::Northerly
            } else {
                AzimuthBranch::Southerly
            };
            let r_orbit = env.reference_radius_m() + target.map_or(200e3, |t| t.perigee_alt_m);
            let v_orb = orbit::circular_speed_mps(r_orbit, env.gm_m3_s2());
            let v_rot = env.surface_rotation_speed_mps(&site.geodetic);
            let lat_c = env.geocentric_latitude_rad(site.geodetic.latitude_rad);
            // An unreachable inclination flies the nearest reachable one (due east/west at
            // i = |φ'|); the caller reports the plane change it would still need.
            let az =
                orbit::launch_azimuth_rad(lat_c, inc, v_orb, v_rot, branch).unwrap_or_else(|_| {
                    let due = if inc <= std::f64::consts::FRAC_PI_2 {
                        90f64
                    } else {
                        270.0
                    };
                    due.to_radians()
                });
            Ok((
                az.rem_euclid(std::f64::consts::TAU),
                AzimuthSource::FromInclination {
                    inclination_rad: inc,
                    northerly,
                },
            ))
        }
        (Some(_), Some(_)) => bad(
            "launch",
            "give either azimuth_deg or inclination_deg, not both",
        ),
        (None, None) => bad(
            "launch",
            "missing field: give azimuth_deg or inclination_deg",
        ),
    }
}
