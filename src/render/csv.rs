//! CSV renderings: the time history (one row per recorded instant, units in the column names;
//! cumulative losses named `_rel_` are in the Earth-relative bookkeeping), study points (one
//! column set for sweeps and comparisons) and trade factors.
//!
//! A study that is still running writes its CSV one finished row at a time (`*_stream_*`): the
//! same columns with an `index` column first (the row's place in input order; rows come in the
//! order they finish, and sweep and comparison rows always carry every result column). When the
//! study ends the file is replaced by the whole table in input order ([`points`], [`trade`]).

use std::io::Write;

use crate::app::study::{CompareReport, Point, TradeFactor, TradeReport};
use crate::core::sim::Snapshot;

/// Runs `write` on an in-memory CSV writer and returns the text (writing to memory cannot fail;
/// a formatting error leaves what was written so far).
fn to_string(write: impl FnOnce(&mut csv::Writer<Vec<u8>>) -> Result<(), csv::Error>) -> String {
    let mut out = csv::Writer::from_writer(Vec::new());
    let _ = write(&mut out);
    let bytes = out.into_inner().unwrap_or_default();
    String::from_utf8_lossy(&bytes).into_owned()
}

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

/// The time history as CSV text.
pub fn history(rows: &[Snapshot]) -> String {
    to_string(|out| history_rows(out, rows))
}

/// Writes the history as CSV to `w`.
pub fn write_history<W: Write>(w: W, rows: &[Snapshot]) -> Result<(), csv::Error> {
    let mut out = csv::Writer::from_writer(w);
    history_rows(&mut out, rows)
}

fn history_rows<W: Write>(out: &mut csv::Writer<W>, rows: &[Snapshot]) -> Result<(), csv::Error> {
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

/// Result columns of a solved study point, after `swept_<label>` and `status`.
const POINT_RESULTS: [&str; 16] = [
    "payload_kg",
    "propellant_used_kg",
    "margin_kg",
    "margin_mps",
    "ideal_mps",
    "gravity_loss_mps",
    "drag_loss_mps",
    "steering_loss_mps",
    "back_pressure_loss_mps",
    "earth_rotation_mps",
    "rotating_frame_mps",
    "inclination_deg",
    "perigee_alt_km",
    "max_dynamic_pressure_kpa",
    "max_axial_accel_g",
    "trajectories",
];

/// Columns of a study point row: (header, value).
fn point_row(label: &str, p: &Point) -> Vec<(String, String)> {
    // The swept value gets its own column name: `payload_kg` is also a result column.
    let status = p.status.as_str().to_string();
    let mut v = vec![
        (format!("swept_{label}"), format!("{}", p.value)),
        ("status".into(), status),
    ];
    let f = |x: f64| format!("{x:.3}");
    if let Some(r) = &p.report {
        let b = &r.flight.budget;
        let o = &r.flight.orbit;
        let values = [
            r.payload_kg,
            r.propellant_used_kg,
            r.margin_kg,
            r.margin_mps,
            b.ideal_mps,
            b.gravity_loss_mps,
            b.drag_loss_mps,
            b.steering_loss_mps,
            b.back_pressure_loss_mps,
            b.earth_rotation_mps,
            b.rotating_frame_mps,
            o.inclination_deg,
            o.perigee_alt_km,
            r.flight.max_dynamic_pressure_pa / 1e3,
            r.flight.max_axial_accel_g,
        ];
        for (h, x) in POINT_RESULTS.iter().zip(values) {
            v.push(((*h).into(), f(x)));
        }
        v.push((
            "trajectories".into(),
            r.convergence.trajectories.to_string(),
        ));
    }
    v
}

/// One CSV record (fields quoted as needed) and its line end, as text.
fn line<I, S>(fields: I) -> String
where
    I: IntoIterator<Item = S>,
    S: AsRef<[u8]>,
{
    to_string(|out| {
        out.write_record(fields)?;
        out.flush()?;
        Ok(())
    })
}

/// The header line of a study's streamed CSV: `index`, `swept_<label>`, `status` and every result
/// column.
pub fn points_stream_header(label: &str) -> String {
    let swept = format!("swept_{label}");
    let head = ["index", swept.as_str(), "status"];
    line(head.iter().chain(POINT_RESULTS.iter()))
}

/// One streamed row of point `index` (input order), in the columns of [`points_stream_header`];
/// an unsolved point leaves the result columns empty.
pub fn points_stream_row(label: &str, index: usize, p: &Point) -> String {
    let r = point_row(label, p);
    let mut rec = vec![index.to_string()];
    rec.extend(r.iter().map(|(_, v)| v.clone()));
    rec.resize(3 + POINT_RESULTS.len(), String::new());
    line(rec)
}

/// Columns of the trade CSV (`step_unit` last: the first five kept their places).
const TRADE_COLUMNS: [&str; 6] = ["parameter", "step", "factor", "unit", "ok", "step_unit"];

fn trade_record(f: &TradeFactor) -> [String; 6] {
    [
        f.name.clone(),
        f.step.to_string(),
        f.factor.to_string(),
        f.unit.to_string(),
        f.ok.to_string(),
        f.step_unit.to_string(),
    ]
}

/// The header line of a comparison's streamed CSV: `index`, `problem` (its name) and the
/// columns of [`points_stream_header`] after `index`.
pub fn compare_stream_header() -> String {
    let swept = "swept_index";
    let head = ["index", "problem", swept, "status"];
    line(head.iter().chain(POINT_RESULTS.iter()))
}

/// One streamed row of a comparison: problem `index` (argument order) and its name.
pub fn compare_stream_row(index: usize, name: &str, p: &Point) -> String {
    let r = point_row("index", p);
    let mut rec = vec![index.to_string(), name.to_string()];
    rec.extend(r.iter().map(|(_, v)| v.clone()));
    rec.resize(4 + POINT_RESULTS.len(), String::new());
    line(rec)
}

/// A comparison as CSV text: a `problem` column with each problem's name, then the columns of
/// [`points`] (`swept_index` is its place in the argument list).
pub fn compare(r: &CompareReport) -> String {
    let pts: Vec<Point> = r.problems.iter().map(|(_, p)| p.clone()).collect();
    let table = points("index", &pts);
    let mut lines = table.lines();
    let mut out = String::new();
    if let Some(head) = lines.next() {
        out.push_str(&line(["problem"]).replace('\n', ","));
        out.push_str(head);
        out.push('\n');
    }
    // Each row after the header belongs to one problem, in order (a name is quoted as CSV
    // needs; the rows of `points` hold no newline).
    for ((name, _), row) in r.problems.iter().zip(lines) {
        let field = line([name.as_str()]);
        out.push_str(field.trim_end_matches('\n'));
        out.push(',');
        out.push_str(row);
        out.push('\n');
    }
    out
}

/// The header line of a trade's streamed CSV: `index` and the trade columns.
pub fn trade_stream_header() -> String {
    line(std::iter::once(&"index").chain(TRADE_COLUMNS.iter()))
}

/// One streamed trade row: factor `index` (its place in the finished table), once both of its
/// points are finished.
pub fn trade_stream_row(index: usize, f: &TradeFactor) -> String {
    line(std::iter::once(index.to_string()).chain(trade_record(f)))
}

/// Study points as CSV text; `label` names the swept column (`swept_<label>`). Every row has
/// every column; unsolved points leave the result columns empty.
pub fn points(label: &str, pts: &[Point]) -> String {
    let header: Vec<String> = pts
        .iter()
        .map(|p| point_row(label, p))
        .max_by_key(Vec::len)
        .map(|r| r.into_iter().map(|(h, _)| h).collect())
        .unwrap_or_default();
    to_string(|out| {
        out.write_record(&header)?;
        for p in pts {
            let r = point_row(label, p);
            let rec: Vec<String> = header
                .iter()
                .map(|h| {
                    r.iter()
                        .find(|(k, _)| k == h)
                        .map(|(_, v)| v.clone())
                        .unwrap_or_default()
                })
                .collect();
            out.write_record(&rec)?;
        }
        out.flush()?;
        Ok(())
    })
}

/// Trade factors as CSV text.
pub fn trade(r: &TradeReport) -> String {
    to_string(|out| {
        out.write_record(TRADE_COLUMNS)?;
        for f in &r.factors {
            out.write_record(trade_record(f))?;
        }
        out.flush()?;
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::app::study::PointStatus;

    #[test]
    fn a_streamed_row_has_every_column_of_the_streamed_header() {
        let p = Point {
            value: 42.5,
            status: PointStatus::Unreachable,
            message: Some("target.inclination_deg: 10 is below the site latitude".into()),
            report: None,
        };
        let head = points_stream_header("inclination_deg");
        let row = points_stream_row("inclination_deg", 7, &p);
        assert!(head.starts_with("index,swept_inclination_deg,status,payload_kg,"));
        assert!(head.ends_with(",trajectories\n"));
        assert_eq!(head.split(',').count(), 19);
        assert_eq!(row, format!("7,42.5,unreachable{}\n", ",".repeat(16)));
        assert_eq!(
            trade_stream_header(),
            "index,parameter,step,factor,unit,ok,step_unit\n"
        );
        assert!(compare_stream_header().starts_with("index,problem,swept_index,status,"));
        assert_eq!(
            compare_stream_row(1, "a, \"b\"", &p),
            format!("1,\"a, \"\"b\"\"\",42.5,unreachable{}\n", ",".repeat(16))
        );
    }
}
