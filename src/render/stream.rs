//! The point stream of a study: JSON Lines that a running sweep, comparison or trade writes one
//! line at a time, so that a run stopped before its end leaves every point it finished.
//!
//! Every line is one JSON object with a `record` key:
//!
//! - first, one `"header"`: `format` (`kickturn-points`), `format_version` (1), `tool` (name and
//!   version), `study` (`sweep`, `compare` or `trade`), `planned_points`, `value` (what each
//!   point's `value` is: the swept column such as `azimuth_deg`, `problem_index` or
//!   `signed_step`), `objective` and `input_sha256` (one per input file);
//! - then one `"point"` per finished point, in the order the points finish: `index` (the point's
//!   place in input order, the same as in the `--json` report), for a comparison `problem` (its
//!   name), for a trade `parameter` and `name` (the traded parameter), then the fields of the
//!   point in the `--json` report (`value`, `status`, `message` when unsolved, `report`);
//! - last, only when the run ends normally, one `"complete"`: `complete` (true), `points` (how
//!   many were written) and `succeeded` (the study's own verdict, as its exit code).
//!
//! A file without the `"complete"` line is the partial result of an interrupted run.

use serde::Serialize;

use crate::app::study::{Point, Traded};
use crate::app::tool_version;
use crate::core::optimize::Objective;

/// Name of the stream format, in its header line.
pub const FORMAT: &str = "kickturn-points";
/// Version of the stream format, in its header line.
pub const FORMAT_VERSION: u32 = 1;

/// What a study is, as its header line names it.
#[derive(Debug, Clone, Serialize)]
pub struct StreamHeader<'a> {
    /// `sweep`, `compare` or `trade`.
    pub study: &'a str,
    /// Number of points the run will solve.
    pub planned_points: usize,
    /// What each point's `value` is (`azimuth_deg`, `problem_index`, `signed_step`).
    pub value: &'a str,
    /// Objective of every solve.
    pub objective: Objective,
    /// SHA-256 of each input file.
    pub input_sha256: &'a [String],
}

/// What a point stands for beyond its index and value.
#[derive(Debug, Clone, Copy)]
pub enum PointLabel<'a> {
    /// A sweep point: its value says it all.
    Sweep,
    /// A compared problem and its name.
    Problem(&'a str),
    /// One side of a traded parameter and its readable name.
    Traded(Traded, &'a str),
}

/// One JSON object as a line (a serialization error, which plain data cannot raise, gives `{}`).
fn line<T: Serialize>(value: &T) -> String {
    let mut s = serde_json::to_string(value).unwrap_or_else(|_| "{}".into());
    s.push('\n');
    s
}

/// The first line.
pub fn header_line(h: &StreamHeader<'_>) -> String {
    #[derive(Serialize)]
    struct Line<'a> {
        record: &'static str,
        format: &'static str,
        format_version: u32,
        tool: String,
        #[serde(flatten)]
        header: &'a StreamHeader<'a>,
    }
    line(&Line {
        record: "header",
        format: FORMAT,
        format_version: FORMAT_VERSION,
        tool: tool_version(),
        header: h,
    })
}

/// The line of finished point `index` (input order).
pub fn point_line(index: usize, label: PointLabel<'_>, p: &Point) -> String {
    #[derive(Serialize)]
    struct Line<'a> {
        record: &'static str,
        index: usize,
        #[serde(skip_serializing_if = "Option::is_none")]
        problem: Option<&'a str>,
        #[serde(skip_serializing_if = "Option::is_none")]
        parameter: Option<Traded>,
        #[serde(skip_serializing_if = "Option::is_none")]
        name: Option<&'a str>,
        #[serde(flatten)]
        point: &'a Point,
    }
    let (problem, parameter, name) = match label {
        PointLabel::Sweep => (None, None, None),
        PointLabel::Problem(n) => (Some(n), None, None),
        PointLabel::Traded(t, n) => (None, Some(t), Some(n)),
    };
    line(&Line {
        record: "point",
        index,
        problem,
        parameter,
        name,
        point: p,
    })
}

/// The last line, written only when the run ends normally.
pub fn complete_line(points: usize, succeeded: bool) -> String {
    #[derive(Serialize)]
    struct Line {
        record: &'static str,
        complete: bool,
        points: usize,
        succeeded: bool,
    }
    line(&Line {
        record: "complete",
        complete: true,
        points,
        succeeded,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::app::study::PointStatus;

    #[test]
    fn every_line_is_one_json_object_ending_in_a_newline() {
        let p = Point {
            value: 30.0,
            status: PointStatus::BadInput,
            message: Some("vehicle.payload_kg: must be ≥ 0".into()),
            report: None,
        };
        let shas = ["ab".to_string()];
        let h = header_line(&StreamHeader {
            study: "sweep",
            planned_points: 3,
            value: "azimuth_deg",
            objective: Objective::LeastPropellant,
            input_sha256: &shas,
        });
        let pt = point_line(2, PointLabel::Traded(Traded::Drag, "drag"), &p);
        let end = complete_line(3, false);
        for l in [&h, &pt, &end] {
            assert!(l.ends_with('\n') && l.matches('\n').count() == 1, "{l}");
        }
        let v: serde_json::Value = serde_json::from_str(&h).unwrap_or_default();
        assert_eq!(v["record"], "header");
        assert_eq!(v["planned_points"], 3);
        assert_eq!(v["study"], "sweep");
        assert_eq!(v["objective"], "least_propellant");
        let v: serde_json::Value = serde_json::from_str(&pt).unwrap_or_default();
        assert_eq!(v["index"], 2);
        assert_eq!(v["parameter"]["kind"], "drag");
        assert_eq!(v["value"], 30.0);
        assert_eq!(v["status"], "bad_input");
        assert!(v.get("report").is_none());
        let v: serde_json::Value = serde_json::from_str(&end).unwrap_or_default();
        assert_eq!(v["complete"], true);
        assert_eq!(v["succeeded"], false);
    }
}
