//! The figures people look at, built from a flight or a sweep with [`super::plots`]: altitude and
//! speed, attitude angles, loads with their limits, the altitude–downrange profile with events,
//! the ΔV waterfall (bookkeeping named in the title), cumulative losses, and sweep curves.

pub use super::plots::FigureFile;
use super::plots::{
    bar_chart, chart, dual_axis_chart, line_chart, waterfall, Band, ChartSpec, Marker, PlotError,
    Series,
};
use crate::app::outcome::FlightReport;
use crate::app::study::{Axis, CompareReport, Point, TradeReport};
use crate::core::sim::{ArcKind, EventKind, Flight, Snapshot};

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

/// Every flight figure, drawn in memory: PNG and SVG of each. When one coast takes up most of
/// the time axis, the time histories come twice: over the whole flight and as an ascent close-up
/// (`<stem>_ascent`) that ends shortly after that coast begins.
pub fn flight_figures(r: &FlightReport, f: &Flight) -> Result<Vec<FigureFile>, PlotError> {
    let h = &f.history;
    let mk = markers(r, false);
    let bands = stage_bands(r);
    let ctx = TimeAxis {
        r,
        h,
        t: col(h, |s| s.t_s),
        markers: as_markers(&mk),
        bands: as_bands(&bands),
        stem_suffix: "",
        title_suffix: String::new(),
    };
    let mut out = time_figures(&ctx)?;
    out.extend(profile(r, h)?);
    out.extend(ground_track(r, h)?);
    out.extend(budget_waterfall(
        r,
        &ctx.title("ΔV budget (Earth-relative)"),
    )?);
    out.extend(arc_waterfall(
        r,
        &ctx.title("speed gained per arc (Earth-relative)"),
    )?);
    if let Some(end_s) = ascent_end_s(r) {
        let cut: Vec<Snapshot> = h.iter().filter(|s| s.t_s <= end_s).copied().collect();
        let close = TimeAxis {
            r,
            h: &cut,
            t: col(&cut, |s| s.t_s),
            markers: as_markers(&mk),
            bands: as_bands(&bands),
            stem_suffix: "_ascent",
            title_suffix: format!(" (ascent, first {end_s:.0} s)"),
        };
        out.extend(time_figures(&close)?);
    }
    Ok(out)
}

/// What each flight figure shows, for captions: (file stem, caption). The report writes these
/// under the figures; a stem ending in `_ascent` is the ascent close-up of the same figure.
pub const CAPTIONS: [(&str, &str); 10] = [
    ("altitude_speed", "Geodetic altitude (left axis) and Earth-relative and inertial speed (right axis) against time; shaded spans are the burns, dashed lines the events."),
    ("angles", "Flight-path angle (Earth-relative), thrust-axis pitch above the local horizontal and angle of attack against time."),
    ("loads", "Dynamic pressure (left axis) and sensed axial acceleration (right axis) with the file's limits: q limit dashed, g limit dotted."),
    ("mass_throttle", "Vehicle mass (left axis) and core throttle (right axis, 0 when not firing) against time; mass steps down at staging and jettison."),
    ("mach", "Mach number against time (in the air model; 0 where there is no air)."),
    ("profile", "Altitude against downrange distance with the events."),
    ("ground_track", "Ground track (geodetic latitude and longitude) and the vacuum instantaneous impact point (IIP): where the vehicle would land if thrust stopped at that instant, on a Keplerian ballistic arc without air (Bate, Mueller & White 1971, ch. 6); the IIP track ends where the orbit's perigee clears the Earth."),
    ("budget", "ΔV budget, Earth-relative bookkeeping: ideal ΔV minus the losses plus the rotating-frame terms gives the inertial speed at cutoff. The axis may start above zero (marked as broken) so the smaller terms read."),
    ("budget_arcs", "Earth-relative speed gained arc by arc, then the Earth-rotation term, ending at the inertial speed at cutoff."),
    ("losses", "Cumulative gravity, drag, steering and back-pressure losses (Earth-relative bookkeeping) against time."),
];

/// The caption of a figure file stem (`loads`, `loads_ascent`), if it has one.
pub fn caption(stem: &str) -> Option<String> {
    let (base, close) = match stem.strip_suffix("_ascent") {
        Some(b) => (b, true),
        None => (stem, false),
    };
    let text = CAPTIONS.iter().find(|(s, _)| *s == base)?.1;
    Some(if close {
        format!("{text} Ascent close-up: the time axis ends shortly after the long coast begins.")
    } else {
        text.to_string()
    })
}

/// The figures drawn against time (whole flight, or the ascent close-up).
fn time_figures(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let mut out = altitude_speed(c)?;
    out.extend(angles(c)?);
    out.extend(loads(c)?);
    out.extend(mass_throttle(c)?);
    out.extend(mach(c)?);
    out.extend(losses(c)?);
    Ok(out)
}

/// Where the ascent close-up ends, s: when one coast lasts more than half the flight, a little
/// after that coast begins; `None` when no coast dominates the time axis.
fn ascent_end_s(r: &FlightReport) -> Option<f64> {
    let total = r.arcs.iter().map(|a| a.t1_s).fold(0.0, f64::max);
    let long = r
        .arcs
        .iter()
        .filter(|a| a.kind == ArcKind::Coast && a.t1_s - a.t0_s > 0.5 * total)
        .min_by(|a, b| a.t0_s.total_cmp(&b.t0_s))?;
    (long.t0_s > 0.0).then_some(long.t0_s * 1.1)
}

/// One shaded band per burn arc, labelled with the arc's name.
fn stage_bands(r: &FlightReport) -> Vec<(f64, f64, String)> {
    r.arcs
        .iter()
        .filter(|a| a.kind == ArcKind::Burn)
        .map(|a| (a.t0_s, a.t1_s, a.label.clone()))
        .collect()
}

fn as_bands(b: &[(f64, f64, String)]) -> Vec<Band<'_>> {
    b.iter()
        .map(|(from, to, label)| Band {
            from: *from,
            to: *to,
            label,
        })
        .collect()
}

/// What every time-history figure shares: the report, the history, its times, event markers,
/// burn bands, and the stem and title suffixes of a close-up.
struct TimeAxis<'a> {
    r: &'a FlightReport,
    h: &'a [Snapshot],
    t: Vec<f64>,
    markers: Vec<Marker<'a>>,
    bands: Vec<Band<'a>>,
    stem_suffix: &'static str,
    title_suffix: String,
}

impl TimeAxis<'_> {
    fn title(&self, what: &str) -> String {
        format!("{}: {what}{}", self.r.vehicle, self.title_suffix)
    }

    fn stem(&self, base: &str) -> String {
        format!("{base}{}", self.stem_suffix)
    }

    /// A time chart of this history: left series, optional right axis, limits.
    fn draw(&self, base: &str, what: &str, axes: Axes) -> Result<Vec<FigureFile>, PlotError> {
        chart(&ChartSpec {
            stem: &self.stem(base),
            title: &self.title(what),
            x_label: "time since liftoff [s]",
            y_label: axes.left_label,
            right_label: axes.right_label,
            x: &self.t,
            left: axes.left,
            right: axes.right,
            left_limits: axes.left_limits,
            right_limits: axes.right_limits,
            markers: &self.markers,
            bands: &self.bands,
        })
    }
}

/// The axes of one time chart.
#[derive(Default)]
struct Axes<'a> {
    left_label: &'a str,
    right_label: Option<&'a str>,
    left: &'a [Series<'a>],
    right: &'a [Series<'a>],
    left_limits: &'a [(&'a str, f64)],
    right_limits: &'a [(&'a str, f64)],
}

fn altitude_speed(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let alt = col(c.h, |s| s.altitude_m / 1e3);
    let v_rel = col(c.h, |s| s.speed_rel_mps / 1e3);
    let v_in = col(c.h, |s| s.speed_inertial_mps / 1e3);
    let left = [Series {
        label: "altitude",
        y: &alt,
    }];
    let right = [
        Series {
            label: "Earth-relative speed",
            y: &v_rel,
        },
        Series {
            label: "inertial speed",
            y: &v_in,
        },
    ];
    c.draw(
        "altitude_speed",
        "altitude and speed",
        Axes {
            left_label: &format!("{} [km]", c.r.earth.altitude_label()),
            right_label: Some("speed [km/s]"),
            left: &left,
            right: &right,
            ..Axes::default()
        },
    )
}

fn angles(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let gamma = col(c.h, |s| s.flight_path_rel_deg);
    let pitch = col(c.h, |s| s.pitch_deg);
    let alpha = col(c.h, |s| s.alpha_deg);
    let left = [
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
    ];
    c.draw(
        "angles",
        "attitude angles",
        Axes {
            left_label: "angle [deg]",
            left: &left,
            ..Axes::default()
        },
    )
}

fn mass_throttle(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let mass = col(c.h, |s| s.mass_kg / 1e3);
    let throttle = col(c.h, |s| s.throttle);
    let left = [Series {
        label: "mass",
        y: &mass,
    }];
    let right = [Series {
        label: "core throttle",
        y: &throttle,
    }];
    c.draw(
        "mass_throttle",
        "mass and throttle",
        Axes {
            left_label: "mass [t]",
            right_label: Some("throttle [fraction of full thrust]"),
            left: &left,
            right: &right,
            ..Axes::default()
        },
    )
}

fn mach(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let m = col(c.h, |s| s.mach);
    let left = [Series {
        label: "Mach number",
        y: &m,
    }];
    c.draw(
        "mach",
        "Mach number",
        Axes {
            left_label: "Mach number [-]",
            left: &left,
            ..Axes::default()
        },
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
        &format!("{} [km]", r.earth.altitude_label()),
        &down,
        &[Series {
            label: "trajectory",
            y: &alt,
        }],
        &[],
        &as_markers(&mk),
    )
}

/// Ground track and vacuum IIP track against longitude. The two curves share one x array: each
/// keeps its own points and leaves the other's as gaps (NaN), and a jump across the ±180°
/// meridian breaks a curve.
fn ground_track(r: &FlightReport, h: &[Snapshot]) -> Result<Vec<FigureFile>, PlotError> {
    let track: Vec<(f64, f64)> = h
        .iter()
        .map(|s| (s.longitude_deg, s.latitude_deg))
        .collect();
    let iip: Vec<(f64, f64)> = h
        .iter()
        .map(|s| {
            s.vacuum_iip_deg
                .map_or((f64::NAN, f64::NAN), |(la, lo)| (lo, la))
        })
        .collect();
    let mut x = Vec::with_capacity(2 * h.len() + 2);
    let mut y_track = Vec::with_capacity(x.capacity());
    let mut y_iip = Vec::with_capacity(x.capacity());
    for (pts, own) in [(&track, true), (&iip, false)] {
        let mut last: Option<f64> = None;
        for &(lon, lat) in pts.iter() {
            if last.is_some_and(|l| (lon - l).abs() > 180.0) {
                x.push(f64::NAN);
                y_track.push(f64::NAN);
                y_iip.push(f64::NAN);
            }
            last = lon.is_finite().then_some(lon);
            x.push(lon);
            y_track.push(if own { lat } else { f64::NAN });
            y_iip.push(if own { f64::NAN } else { lat });
        }
        x.push(f64::NAN);
        y_track.push(f64::NAN);
        y_iip.push(f64::NAN);
    }
    // The IIP first, so the (much shorter) ground track is drawn over it.
    let series = [
        Series {
            label: "vacuum impact point (IIP)",
            y: &y_iip,
        },
        Series {
            label: "ground track",
            y: &y_track,
        },
    ];
    chart(&ChartSpec {
        stem: "ground_track",
        title: &format!("{}: ground track and vacuum impact point", r.vehicle),
        x_label: "longitude [deg east]",
        y_label: &format!("{} [deg]", r.earth.latitude_label()),
        x: &x,
        left: &series,
        ..ChartSpec::default()
    })
}

fn losses(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let g = col(c.h, |s| s.gravity_loss_rel_mps);
    let d = col(c.h, |s| s.drag_loss_rel_mps);
    let st = col(c.h, |s| s.steering_loss_rel_mps);
    let bp = col(c.h, |s| s.back_pressure_loss_mps);
    let left = [
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
    ];
    c.draw(
        "losses",
        "cumulative losses (Earth-relative)",
        Axes {
            left_label: "loss [m/s]",
            left: &left,
            ..Axes::default()
        },
    )
}

fn loads(c: &TimeAxis) -> Result<Vec<FigureFile>, PlotError> {
    let q = col(c.h, |s| s.dynamic_pressure_pa / 1e3);
    let a = col(c.h, |s| s.axial_accel_g);
    let ql: Vec<(&str, f64)> =
        c.r.max_dynamic_pressure_limit_pa
            .map(|l| ("q limit", l / 1e3))
            .into_iter()
            .collect();
    let al: Vec<(&str, f64)> =
        c.r.max_axial_accel_limit_g
            .map(|l| ("g limit", l))
            .into_iter()
            .collect();
    let left = [Series {
        label: "dynamic pressure",
        y: &q,
    }];
    let right = [Series {
        label: "axial acceleration",
        y: &a,
    }];
    c.draw(
        "loads",
        "dynamic pressure and axial load",
        Axes {
            left_label: "dynamic pressure [kPa]",
            right_label: Some("sensed axial acceleration [g0]"),
            left: &left,
            right: &right,
            left_limits: &ql,
            right_limits: &al,
        },
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
    // The margin (often a few kg at --max-payload) gets its own axis: on the payload's
    // tonne-scale axis it would lie flat on zero.
    let mut out = dual_axis_chart(
        "sweep_mass",
        &title("payload and margin after reserves"),
        x_label,
        "payload [kg]",
        "margin after reserves [kg]",
        &x,
        &[Series {
            label: "payload",
            y: &payload,
        }],
        &[Series {
            label: "margin after reserves",
            y: &margin,
        }],
        &[],
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
        "loss or gain [m/s]",
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

/// Compare figures: the payload of each problem (`compare_payload`) and each solved problem's ΔV
/// budget waterfall (`compare_budget_<n>`, n from 1 in argument order).
pub fn compare_figures(r: &CompareReport) -> Result<Vec<FigureFile>, PlotError> {
    let payloads: Vec<(&str, f64)> = r
        .problems
        .iter()
        .map(|(name, p)| {
            let v = p.report.as_ref().map_or(f64::NAN, |s| s.payload_kg);
            (name.as_str(), v)
        })
        .collect();
    let mut out = bar_chart(
        "compare_payload",
        "payload of each compared problem",
        "payload [kg]",
        &payloads,
        false,
    )?;
    for (i, (name, p)) in r.problems.iter().enumerate() {
        if let Some(s) = &p.report {
            out.extend(budget_waterfall(
                &s.flight,
                &format!("{name}: ΔV budget (Earth-relative)"),
            )?);
            // Give the pair its own stem so the problems do not overwrite each other.
            let n = out.len();
            for f in &mut out[n - 2..] {
                f.name = f
                    .name
                    .replacen("budget", &format!("compare_budget_{}", i + 1), 1);
            }
        }
    }
    Ok(out)
}

/// Trade figure (`trade`): the payload (or margin) change for one step of each factor, signed,
/// in kg, so that factors of different units sit on one axis.
pub fn trade_figures(r: &TradeReport) -> Result<Vec<FigureFile>, PlotError> {
    let what = match r.objective {
        crate::core::optimize::Objective::MaxPayload => "payload",
        crate::core::optimize::Objective::LeastPropellant => "margin",
    };
    let labels: Vec<String> = r
        .factors
        .iter()
        .map(|f| {
            format!(
                "{} (+{} {})",
                trade_bar_name(f),
                crate::app::show(f.step),
                f.step_unit
            )
        })
        .collect();
    let bars: Vec<(&str, f64)> = r
        .factors
        .iter()
        .zip(&labels)
        .map(|(f, l)| (l.as_str(), f.factor * f.step))
        .collect();
    bar_chart(
        "trade",
        &format!("{}: {what} change for one step of each factor", r.problem),
        &format!("{what} change [kg]"),
        &bars,
        true,
    )
}

/// A trade factor's name under its bar: the table's name without the qualifiers the table
/// spells out ("(all configurations)", "(jettisoned)", "(reserves.residuals_kg)"), and "each"
/// for "each booster", so that the names fit the narrow bar slots of a long trade (15 bars on
/// the small demo) without being cut.
fn trade_bar_name(f: &crate::app::study::TradeFactor) -> String {
    use crate::app::study::Traded;
    match f.param {
        Traded::Drag => "drag coefficient".to_string(),
        Traded::Reserve => "last-stage reserve".to_string(),
        Traded::Jettison { .. } => f.name.trim_end_matches(" (jettisoned)").to_string(),
        Traded::BoosterDryMass | Traded::BoosterPropellant | Traded::BoosterThrust => {
            f.name.replace(" (each booster)", " (each)")
        }
        _ => f.name.clone(),
    }
}

/// Captions of the study figures, by file stem.
pub fn study_captions(files: &[FigureFile]) -> Vec<(String, String)> {
    files
        .iter()
        .filter_map(|f| f.name.strip_suffix(".svg"))
        .map(|stem| {
            let text = match stem {
                "compare_payload" => "Payload of each compared problem (the file's payload, or the largest payload with --max-payload).".to_string(),
                "trade" => "Change in payload (with --max-payload) or in margin after reserves for one step of each factor, from central differences of re-solved problems; the step is in the factor's own unit (see the table).".to_string(),
                "sweep_mass" => "Payload (left axis) and margin after reserves (right axis) against the swept value.".to_string(),
                "sweep_family" => "Payload against the swept value, one sweep per value of the --family axis (each point a full solve).".to_string(),
                "sweep_losses" => "Losses and the Earth-rotation term against the swept value (Earth-relative bookkeeping).".to_string(),
                s if s.starts_with("compare_budget_") => "ΔV budget of one compared problem (Earth-relative bookkeeping; the axis may start above zero, marked as broken).".to_string(),
                _ => String::new(),
            };
            (stem.to_string(), text)
        })
        .collect()
}

/// The family figure (`sweep_family`): payload against the swept value, one curve per value of
/// the family axis (`--family`).
pub fn family_figure(
    name: &str,
    axis: Axis,
    family_axis: Axis,
    curves: &[(f64, Vec<Point>)],
) -> Result<Vec<FigureFile>, PlotError> {
    let x: Vec<f64> = curves
        .first()
        .map(|(_, pts)| pts.iter().map(|p| p.value).collect())
        .unwrap_or_default();
    let ys: Vec<Vec<f64>> = curves
        .iter()
        .map(|(_, pts)| {
            pts.iter()
                .map(|p| p.report.as_ref().map_or(f64::NAN, |r| r.payload_kg))
                .collect()
        })
        .collect();
    let (fam_name, fam_unit) = axis_words(family_axis);
    let labels: Vec<String> = curves
        .iter()
        .map(|(v, _)| format!("{fam_name} {} {fam_unit}", crate::app::show(*v)))
        .collect();
    let series: Vec<Series> = labels
        .iter()
        .zip(&ys)
        .map(|(label, y)| Series { label, y })
        .collect();
    let (ax_name, ax_unit) = axis_words(axis);
    line_chart(
        "sweep_family",
        &format!("{name}: payload against {ax_name}, one curve per {fam_name}"),
        &format!("{ax_name} [{ax_unit}]"),
        "payload [kg]",
        &x,
        &series,
        &[],
        &[],
    )
}

/// An axis' name and unit for figure text.
fn axis_words(a: Axis) -> (&'static str, &'static str) {
    match a {
        Axis::Azimuth => ("launch azimuth", "deg"),
        Axis::Inclination => ("target inclination", "deg"),
        Axis::Altitude => ("circular target altitude", "km"),
        Axis::Payload => ("payload", "kg"),
    }
}
