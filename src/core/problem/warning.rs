//! Plausibility warnings: values that validate (they could be meant) but look like a unit slip or
//! a typing slip. Values that cannot be meant are refused by [`super::validate`] instead; these
//! come back beside the validated problem, and the caller decides how to show them (the library
//! never prints).

use serde::Serialize;

use super::Problem;
use crate::core::physics::earth::G0_MPS2;

/// What kind of doubt a [`Warning`] raises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum WarningKind {
    /// The value looks like it was written in another unit than the key's.
    LikelyUnitSlip,
    /// Two values look swapped or far outside what an ascent vehicle has.
    Implausible,
}

/// One plausibility warning about a field of the problem file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Warning {
    /// JSON path of the field (`vehicle.stages[1].isp_vac_s`).
    pub field: String,
    /// What kind of doubt.
    pub kind: WarningKind,
    /// What looks wrong, with the likely fix.
    pub message: String,
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.field, self.message)
    }
}

/// Highest vacuum Isp of a chemical engine, s: about 465 s for LOX/LH2 (common practice); a
/// larger figure is more often an exhaust velocity in m/s (c = g0·Isp).
const MAX_CHEMICAL_ISP_S: f64 = 500.0;
/// Highest liftoff thrust-to-weight of ascent vehicles, about 2 (common practice); above this
/// a mass in tonnes is the likely slip.
const MAX_LIFTOFF_TW: f64 = 6.0;
/// Lowest vacuum thrust-to-weight of a chemical upper stage at ignition, about 0.3 (common
/// practice); under this a thrust in kN is the likely slip.
const MIN_UPPER_TW: f64 = 0.05;
/// Lowest dynamic-pressure limit that an ascent through the lower atmosphere can hold: max-Q of
/// launch vehicles lies between 20 and 60 kPa (common practice). Under 1 kPa is refused.
const LOW_Q_LIMIT_PA: f64 = 10e3;
/// An apsis altitude in km above this (a quarter beyond the Moon's distance) is more likely
/// written in metres.
const HIGH_APSIS_KM: f64 = 500_000.0;

/// The plausibility warnings of a validated problem, in file order.
pub fn warnings(p: &Problem) -> Vec<Warning> {
    let mut w = Vec::new();
    let mut add = |field: String, kind, message: String| {
        w.push(Warning {
            field,
            kind,
            message,
        })
    };
    let v = &p.vehicle;
    // Liftoff T/W (validation already requires > 1).
    let e0 = &v.stages[0].engine;
    let mut thrust = e0.thrust_vac_n;
    if let Some(b) = &v.boosters {
        thrust += f64::from(b.count) * b.engine.thrust_vac_n;
    }
    let tw = thrust / (v.liftoff_mass_kg() * G0_MPS2);
    if tw > MAX_LIFTOFF_TW {
        add(
            "vehicle".into(),
            WarningKind::LikelyUnitSlip,
            format!(
                "liftoff thrust-to-weight is {tw:.1} in vacuum (ascent vehicles lift off at 1.2 \
                 to 2): is a mass in tonnes? Masses are in kg"
            ),
        );
    }
    // Upper stages: thrust-to-weight at ignition (the stage, the ones above it and the payload).
    for i in 1..v.stages.len() {
        let above: f64 = v.stages[i..]
            .iter()
            .map(|s| s.dry_mass_kg + s.propellant_kg)
            .sum::<f64>()
            + v.payload_kg;
        let tw = v.stages[i].engine.thrust_vac_n / (above * G0_MPS2);
        if tw < MIN_UPPER_TW {
            add(
                format!("vehicle.stages[{i}].thrust_vac_n"),
                WarningKind::LikelyUnitSlip,
                format!(
                    "thrust-to-weight at ignition is {tw:.4} (chemical upper stages start at \
                     0.3 to 1.5): is it in kN? The field is in newtons"
                ),
            );
        }
    }
    let isp = |field: String, isp: f64, add: &mut dyn FnMut(String, WarningKind, String)| {
        if isp > MAX_CHEMICAL_ISP_S {
            add(
                field,
                WarningKind::LikelyUnitSlip,
                format!(
                    "{isp} s is above any chemical engine (about 465 s at most): is it an exhaust \
                     velocity in m/s? Isp = c / g0 = {:.1} s",
                    isp / G0_MPS2
                ),
            );
        }
    };
    for (i, s) in v.stages.iter().enumerate() {
        isp(
            format!("vehicle.stages[{i}].isp_vac_s"),
            s.engine.isp_vac_s,
            &mut add,
        );
        if s.dry_mass_kg > s.propellant_kg {
            add(
                format!("vehicle.stages[{i}]"),
                WarningKind::Implausible,
                format!(
                    "dry_mass_kg ({}) exceeds propellant_kg ({}): are they swapped?",
                    s.dry_mass_kg, s.propellant_kg
                ),
            );
        }
    }
    if let Some(b) = &v.boosters {
        isp(
            "vehicle.boosters.isp_vac_s".into(),
            b.engine.isp_vac_s,
            &mut add,
        );
    }
    if let Some(q) = p
        .limits
        .max_dynamic_pressure_pa
        .filter(|q| *q < LOW_Q_LIMIT_PA)
    {
        add(
            "limits.max_dynamic_pressure_pa".into(),
            WarningKind::Implausible,
            format!(
                "{q} Pa ({:.1} kPa) is below the max-Q of any ascent through the lower \
                 atmosphere (20 to 60 kPa): `fly` will report it exceeded and `solve` will \
                 throttle the first stage hard to hold it",
                q / 1e3
            ),
        );
    }
    if let Some(t) = &p.target {
        for (key, alt_m) in [
            ("target.perigee_alt_km", t.perigee_alt_m),
            ("target.apogee_alt_km", t.apogee_alt_m),
        ] {
            let km = alt_m / 1e3;
            if km > HIGH_APSIS_KM {
                add(
                    key.into(),
                    WarningKind::LikelyUnitSlip,
                    format!(
                        "{km} km is beyond the Moon: is it in metres? The field is in km \
                         ({:.1} km)",
                        km / 1e3
                    ),
                );
            }
        }
    }
    w
}
