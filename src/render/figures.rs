//! The figures people look at, built from a flight or a sweep with [`super::plots`]: altitude and
//! speed, attitude angles, loads with their limits, the altitude–downrange profile with events,
//! the ΔV waterfall (bookkeeping named in the title), cumulative losses, and sweep curves.

pub use super::plots::FigureFile;
use super::plots::{dual_axis_chart, line_chart, waterfall, Marker, PlotError, Series};
use crate::app::outcome::FlightReport;
use crate::app::study::{Axis, Point};
use crate::core::sim::{EventKind, Flight, Snapshot};

fn col(h: &[Snapshot], f: impl Fn(&Snapshot) -> f64) -> Vec<f64> {
    h.iter().map(f).collect()
}

/// Events worth a marker on time plots (max-Q, staging, jettison, cutoff...).
fn markers(r: &FlightReport, by_downrange: bool) -> Vec<(f64, String)> {
    r.events
        .iter()
        .filter(|e| {
            !matches!(
                e.kind,
                EventKind::Liftoff | EventKind::PitchOverEnd | EventKind::Ignition
            )
        })
        .map(|e| {
            let x = if by_downrange {
                e.at.downrange_m / 1e3
            } else {
                e.at.t_s
            };
            (x, short_label(&e.kind).to_string())
        })
        .collect()
}

/// Short event names for figure markers.
fn short_label(k: &EventKind) -> &'static str {
    match k {
        EventKind::Liftoff => "liftoff",
        EventKind::PitchOverStart => "pitch-over",
        EventKind::PitchOverEnd => "kick done",
        EventKind::GravityTurnStart => "α = 0",
        EventKind::BucketStart => "bucket in",
        EventKind::BucketEnd => "bucket out",
        EventKind::AccelLimitOnset => "g limit",
        EventKind::MinThrottle => "min throttle",
        EventKind::BoosterSeparation => "boosters off",
        EventKind::Burnout => "burnout",
        EventKind::Ignition => "ignition",
        EventKind::Cutoff => "cutoff",
        EventKind::Jettison => "jettison",
        EventKind::CoastEnd => "coast end",
        EventKind::Apogee => "apogee",
        EventKind::MaxQ => "max-Q",
        EventKind::Impact => "impact",
        EventKind::TimeLimit => "time limit",
    }
}

fn as_markers(m: &[(f64, String)]) -> Vec<Marker<'_>> {
    m.iter().map(|(x, l)| Marker { x: *x, label: l }).collect()
}

/// Every flight figure, drawn in memory: PNG and SVG of each.
pub fn flight_figures(r: &FlightReport, f: &Flight) -> Result<Vec<FigureFile>, PlotError> {
    let h = &f.history;
    let mk = markers(r, false);
    let ctx = TimeAxis {
        r,
        h,
        t: col(h, |s| s.t_s),
        markers: as_markers(&mk),
    };
    let mut out = altitude_speed(&ctx)?;
    out.extend(angles(&ctx)?);
    out.extend(loads(
        r,
        h,
        &ctx.t,
        &ctx.title("dynamic pressure and axial load"),
        &ctx.markers,
    )?);
    out.extend(profile(r, h)?);
    out.extend(budget_waterfall(
        r,
        &ctx.title("ΔV budget (Earth-relative)"),
    )?);
    out.extend(arc_waterfall(
        r,
        &ctx.title("speed gained per arc (Earth-relative)"),
    )?);
    out.extend(losses(&ctx)?);
    Ok(out)
}

/// What every time-history figure shares: the report, the history, its times and event markers.
struct TimeAxis<'a> {
    r: &'a FlightReport,
    h: &'a [Snapshot],
    t: Vec<f64>,
    markers: Vec<Marker<'a>>,
}

impl TimeAxis<'_> {
    fn title(&self, what: &str) -> String {
        format!("{}: {what}", self.r.vehicle)
    }
}

fn altitude_speed(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let alt = col(c.h, |s| s.altitude_m / 1e3);
    let v_rel = col(c.h, |s| s.speed_rel_mps / 1e3);
    let v_in = col(c.h, |s| s.speed_inertial_mps / 1e3);
    dual_axis_chart(
        "altitude_speed",
        &c.title("altitude and speed"),
        "time since liftoff [s]",
        "geodetic altitude [km]",
        "speed [km/s]",
        &c.t,
        &[Series {
            label: "altitude",
            y: &alt,
        }],
        &[
            Series {
                label: "Earth-relative speed",
                y: &v_rel,
            },
            Series {
                label: "inertial speed",
                y: &v_in,
            },
        ],
        &[],
        &[],
        &c.markers,
    )
}

fn angles(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let gamma = col(c.h, |s| s.flight_path_rel_deg);
    let pitch = col(c.h, |s| s.pitch_deg);
    let alpha = col(c.h, |s| s.alpha_deg);
    line_chart(
        "angles",
        &c.title("attitude angles"),
        "time since liftoff [s]",
        "angle [deg]",
        &c.t,
        &[
            Series {
                label: "flight-path angle (Earth-relative)",
                y: &gamma,
            },
            Series {
                label: "pitch (thrust axis)",
                y: &pitch,
            },
            Series {
                label: "angle of attack",
                y: &alpha,
            },
        ],
        &[],
        &c.markers,
    )
}

fn profile(r: &FlightReport, h: &[Snapshot]) -> Result<Vec<FigureFile>, PlotError> {
    let alt = col(h, |s| s.altitude_m / 1e3);
    let down = col(h, |s| s.downrange_m / 1e3);
    let mk = markers(r, true);
    line_chart(
        "profile",
        &format!("{}: altitude against downrange", r.vehicle),
        "downrange [km]",
        "geodetic altitude [km]",
        &down,
        &[Series {
            label: "trajectory",
            y: &alt,
        }],
        &[],
        &as_markers(&mk),
    )
}

fn losses(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let g = col(c.h, |s| s.gravity_loss_rel_mps);
    let d = col(c.h, |s| s.drag_loss_rel_mps);
    let st = col(c.h, |s| s.steering_loss_rel_mps);
    let bp = col(c.h, |s| s.back_pressure_loss_mps);
    line_chart(
        "losses",
        &c.title("cumulative losses (Earth-relative)"),
        "time since liftoff [s]",
        "loss [m/s]",
        &c.t,
        &[
            Series {
                label: "gravity",
                y: &g,
            },
            Series {
                label: "drag",
                y: &d,
            },
            Series {
                label: "steering",
                y: &st,
            },
            Series {
                label: "back-pressure",
                y: &bp,
            },
        ],
        &[],
        &c.markers,
    )
}

fn loads(
    r: &FlightReport,
    h: &[Snapshot],
    t: &[f64],
    title: &str,
    m: &[Marker],
) -> Result<Vec<FigureFile>, PlotError> {
    let q = col(h, |s| s.dynamic_pressure_pa / 1e3);
    let a = col(h, |s| s.axial_accel_g);
    let ql: Vec<(&str, f64)> = r
        .max_dynamic_pressure_limit_pa
        .map(|l| ("q limit", l / 1e3))
        .into_iter()
        .collect();
    let al: Vec<(&str, f64)> = r
        .max_axial_accel_limit_g
        .map(|l| ("acceleration limit", l))
        .into_iter()
        .collect();
    dual_axis_chart(
        "loads",
        title,
        "time since liftoff [s]",
        "dynamic pressure [kPa]",
        "sensed axial acceleration [g0]",
        t,
        &[Series {
            label: "dynamic pressure",
            y: &q,
        }],
        &[Series {
            label: "axial acceleration",
            y: &a,
        }],
        &ql,
        &al,
        m,
    )
}

fn budget_waterfall(r: &FlightReport, title: &str) -> Result<Vec<FigureFile>, PlotError> {
    let b = &r.budget;
    waterfall(
        "budget",
        title,
        "speed [m/s]",
        ("ideal ΔV", b.ideal_mps),
        &[
            ("gravity loss", -b.gravity_loss_mps),
            ("drag loss", -b.drag_loss_mps),
            ("steering loss", -b.steering_loss_mps),
            ("back-pressure loss", -b.back_pressure_loss_mps),
            ("rotating-frame gain", b.rotating_frame_mps),
            ("Earth rotation at cutoff", b.earth_rotation_mps),
        ],
        "inertial speed at cutoff",
    )
}

/// Waterfall of the Earth-relative speed gained arc by arc (ideal minus that arc's losses), then
/// the Earth-rotation term, ending at the inertial speed at cutoff.
fn arc_waterfall(r: &FlightReport, title: &str) -> Result<Vec<FigureFile>, PlotError> {
    let mut steps: Vec<(&str, f64)> = r
        .arcs
        .iter()
        .map(|p| (p.label.as_str(), p.speed_change_mps))
        .collect();
    steps.push(("Earth rotation at cutoff", r.budget.earth_rotation_mps));
    waterfall(
        "budget_arcs",
        title,
        "speed [m/s]",
        (
            "Earth-relative speed at liftoff",
            r.budget.initial_speed_mps,
        ),
        &steps,
        "inertial speed at cutoff",
    )
}

/// Sweep curves: payload or margin, and each loss, against the swept value (drawn in memory).
pub fn sweep_figures(name: &str, axis: Axis, pts: &[Point]) -> Result<Vec<FigureFile>, PlotError> {
    draw_sweep(name, axis, pts)
}

fn draw_sweep(name: &str, axis: Axis, pts: &[Point]) -> Result<Vec<FigureFile>, PlotError> {
    let x: Vec<f64> = pts.iter().map(|p| p.value).collect();
    let get = |f: &dyn Fn(&crate::app::solve::SolveReport) -> f64| -> Vec<f64> {
        pts.iter()
            .map(|p| p.report.as_ref().map_or(f64::NAN, |r| f(r)))
            .collect()
    };
    let x_label = match axis {
        Axis::Azimuth => "launch azimuth [deg from north]",
        Axis::Inclination => "target inclination [deg]",
        Axis::Altitude => "circular target altitude [km]",
        Axis::Payload => "payload [kg]",
    };
    let title = |what: &str| format!("{name}: {what}");
    let payload = get(&|r| r.payload_kg);
    let margin = get(&|r| r.margin_kg);
    let mut out = line_chart(
        "sweep_mass",
        &title("payload and margin after reserves"),
        x_label,
        "mass [kg]",
        &x,
        &[
            Series {
                label: "payload",
                y: &payload,
            },
            Series {
                label: "margin after reserves",
                y: &margin,
            },
        ],
        &[],
        &[],
    )?;
    let g = get(&|r| r.flight.budget.gravity_loss_mps);
    let d = get(&|r| r.flight.budget.drag_loss_mps);
    let s = get(&|r| r.flight.budget.steering_loss_mps);
    let bp = get(&|r| r.flight.budget.back_pressure_loss_mps);
    let rot = get(&|r| r.flight.budget.earth_rotation_mps);
    out.extend(line_chart(
        "sweep_losses",
        &title("losses (Earth-relative)"),
        x_label,
        "[m/s]",
        &x,
        &[
            Series {
                label: "gravity loss",
                y: &g,
            },
            Series {
                label: "drag loss",
                y: &d,
            },
            Series {
                label: "steering loss",
                y: &s,
            },
            Series {
                label: "back-pressure loss",
                y: &bp,
            },
            Series {
                label: "Earth rotation at cutoff",
                y: &rot,
            },
        ],
        &[],
        &[],
    )?);
    Ok(out)
}

/// The figures of a dispersion study: the histogram of the propellant remaining with the reserve
/// bound and the nominal marked, the perigee and apogee errors of every sample in orbit, and the
/// contributors' rank correlations.
pub fn dispersion_figures(
    r: &crate::app::dispersions::DispersionReport,
) -> Result<Vec<FigureFile>, PlotError> {
    let title = format!("{} samples, seed {}", r.samples, r.seed);
    // Histogram as a step curve: 30 bins over the samples on target.
    let prop: Vec<f64> = r
        .runs
        .iter()
        .filter(|s| s.target_met)
        .map(|s| s.propellant_remaining_kg)
        .collect();
    let (lo, hi) = prop
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(*v), b.max(*v))
        });
    let bins = 30usize;
    let (mut x, mut y) = (Vec::new(), Vec::new());
    if lo.is_finite() && hi.is_finite() {
        let w = ((hi - lo) / bins as f64).max(1e-9);
        let mut counts = vec![0.0; bins];
        for v in &prop {
            let k = (((v - lo) / w) as usize).min(bins - 1);
            counts[k] += 1.0;
        }
        for (k, c) in counts.iter().enumerate() {
            let x0 = lo + w * k as f64;
            x.extend([x0, x0 + w]);
            y.extend([*c, *c]);
        }
    }
    let mut marks = vec![(r.reserve.nominal_remaining_kg, "nominal".to_string())];
    if let Some(b) = r.reserve.remaining_at_probability_kg {
        marks.push((
            b,
            format!(
                "reserve bound: {:.0} kg",
                r.reserve.reserve_kg.unwrap_or(f64::NAN)
            ),
        ));
    }
    let mut out = line_chart(
        "dispersions-propellant",
        &format!(
            "propellant remaining at insertion ({title}; p {}, c {})",
            r.reserve.probability, r.reserve.confidence
        ),
        "propellant remaining, kg",
        "samples per bin",
        &x,
        &[Series {
            label: "samples on target",
            y: &y,
        }],
        &[],
        &as_markers(&marks),
    )?;
    // Perigee and apogee errors against the sample index.
    let orbit: Vec<&crate::app::dispersions::Sample> = r
        .runs
        .iter()
        .filter(|s| s.perigee_error_km.is_some())
        .collect();
    let per: Vec<f64> = orbit
        .iter()
        .map(|s| s.perigee_error_km.unwrap_or(f64::NAN))
        .collect();
    let apo: Vec<f64> = orbit
        .iter()
        .map(|s| s.apogee_error_km.unwrap_or(f64::NAN))
        .collect();
    out.extend(super::plots::scatter(
        "dispersions-orbit-errors",
        &format!("orbit errors, reached − target ({title})"),
        "perigee error, km",
        "apogee error, km",
        &per,
        &apo,
    )?);
    let top = &r.contributors[..r.contributors.len().min(8)];
    let names: Vec<String> = top.iter().map(|c| readable(&c.name)).collect();
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    let rho: Vec<f64> = top.iter().map(|c| c.rank_correlation_propellant).collect();
    out.extend(super::plots::bars(
        "dispersions-contributors",
        &format!("contributors to the propellant remaining ({title})"),
        "Spearman rank correlation",
        &names,
        &rho,
    )?);
    Ok(out)
}

/// `stages[1].thrust_percent` as `stage 2 thrust %` (words that wrap under a bar).
fn readable(name: &str) -> String {
    let mut s = name.to_string();
    if let Some(rest) = s.strip_prefix("stages[") {
        if let Some((k, tail)) = rest.split_once("].") {
            let k: usize = k.parse().unwrap_or(0);
            s = format!("stage {} {tail}", k + 1);
        }
    }
    s.replace("boosters.", "boosters ")
        .replace("_percent", " %")
        .replace("isp_s", "Isp s")
        .replace('_', " ")
}
