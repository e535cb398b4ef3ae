//! Time-history CSV: one row per recorded instant, units in the column names. Cumulative losses
//! named `_rel_` are in the Earth-relative bookkeeping.

use std::io::Write;

use crate::sim::Snapshot;

/// Column headers, in order.
pub const COLUMNS: [&str; 21] = [
    "t_s",
    "altitude_m",
    "downrange_m",
    "latitude_deg",
    "longitude_deg",
    "speed_rel_mps",
    "speed_inertial_mps",
    "flight_path_rel_deg",
    "flight_path_inertial_deg",
    "pitch_deg",
    "alpha_deg",
    "mach",
    "dynamic_pressure_pa",
    "axial_accel_g",
    "throttle",
    "mass_kg",
    "ideal_mps",
    "gravity_loss_rel_mps",
    "drag_loss_rel_mps",
    "steering_loss_rel_mps",
    "back_pressure_loss_mps",
];

/// Writes the history as CSV to `w`.
pub fn write_history<W: Write>(w: W, rows: &[Snapshot]) -> Result<(), csv::Error> {
    let mut out = csv::Writer::from_writer(w);
    out.write_record(COLUMNS)?;
    for s in rows {
        let vals = [
            s.t_s,
            s.altitude_m,
            s.downrange_m,
            s.latitude_deg,
            s.longitude_deg,
            s.speed_rel_mps,
            s.speed_inertial_mps,
            s.flight_path_rel_deg,
            s.flight_path_inertial_deg,
            s.pitch_deg,
            s.alpha_deg,
            s.mach,
            s.dynamic_pressure_pa,
            s.axial_accel_g,
            s.throttle,
            s.mass_kg,
            s.ideal_mps,
            s.gravity_loss_rel_mps,
            s.drag_loss_rel_mps,
            s.steering_loss_rel_mps,
            s.back_pressure_loss_mps,
        ];
        let rec: Vec<String> = vals.iter().map(|v| format!("{v:.6}")).collect();
        out.write_record(&rec)?;
    }
    out.flush()?;
    Ok(())
}
