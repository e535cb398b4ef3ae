//! Report charts: line charts, dual-axis line charts and a ΔV budget waterfall.
//!
//! Each chart is drawn twice, in memory, as `<stem>.png` (1200×800 px) and `<stem>.svg` (same
//! size in user units) and returned as bytes ([`FigureFile`]). The functions take plain slices and
//! strings, so this module depends on nothing else in the crate. Text uses DejaVu Sans embedded in the binary (`assets/DejaVuSans.ttf`, licence in
//! `assets/DejaVuSans-LICENSE.txt`), so no system font is needed.
//!
//! Bad data never panics: non-finite values (and magnitudes above 1e300, which no pixel scale can
//! hold) are skipped and curves break at them; a chart with nothing to draw says "no data".
//! Legends sit in a panel right of the plot and event labels in a band reserved above the data,
//! so neither covers a curve.

use std::ops::Range;
use std::sync::Once;

use plotters::chart::DualCoordChartContext;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{register_font, FontStyle};

/// DejaVu Sans (Debian fonts-dejavu-core), embedded so text renders without system fonts.
const FONT: &[u8] = include_bytes!(concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/assets/DejaVuSans.ttf"
));
/// Family the font is registered under; every text style below asks for it.
const FAMILY: &str = "sans-serif";
static FONT_ONCE: Once = Once::new();

/// Picture size, px (width, height).
const SIZE: (u32, u32) = (1200, 800);
/// Blank border around the plot and the legend, px; wider on the plot's right so the last x tick
/// label stays clear of the legend.
const MARGIN: u32 = 14;
const RIGHT_MARGIN: u32 = 34;
/// Height of the band holding the title, px.
const TITLE_BAND: u32 = 56;
/// Text heights, px: title, axis titles, tick labels, legend, event labels.
const TITLE_PX: u32 = 32;
const DESC_PX: u32 = 24;
const TICK_PX: u32 = 20;
const LEGEND_PX: u32 = 20;
const NOTE_PX: u32 = 18;
/// Space for tick labels plus axis title below the plot and beside it, px.
const X_AREA: u32 = 78;
const Y_AREA: u32 = 110;
/// Legend panel width bounds, swatch length, inner padding and row height, px.
const LEGEND_MIN: u32 = 150;
const LEGEND_MAX: u32 = 330;
const SWATCH: i32 = 36;
const PAD: i32 = 10;
const LEGEND_ROW: i32 = LEGEND_PX as i32 + 12;
/// Dash and gap length of limit lines, px.
const DASH: i32 = 10;
/// Height of one row of event labels, px.
const NOTE_ROW: i32 = NOTE_PX as i32 + 10;
/// Longest text (chars) measured; longer labels are cut before fitting.
const MAX_CHARS: usize = 200;
/// Values beyond this magnitude are treated like non-finite ones.
const MAX_ABS: f64 = 1e300;

/// Distinct line colours: the Okabe–Ito colour-blind-safe set (Okabe & Ito 2008, "Color Universal
/// Design", from memory) with its yellow swapped for brown, which reads better on white.
const PALETTE: [RGBColor; 8] = [
    RGBColor(0, 114, 178),   // blue
    RGBColor(213, 94, 0),    // vermillion
    RGBColor(0, 158, 115),   // bluish green
    RGBColor(204, 121, 167), // reddish purple
    RGBColor(230, 159, 0),   // orange
    RGBColor(86, 180, 233),  // sky blue
    RGBColor(60, 60, 60),    // near black
    RGBColor(140, 90, 40),   // brown
];
const GREY: RGBColor = RGBColor(110, 110, 110);
/// Waterfall colours: full bars, losses, gains.
const FULL_BAR: RGBColor = RGBColor(0, 90, 150);
const LOSS: RGBColor = PALETTE[1];
const GAIN: RGBColor = PALETTE[2];

/// One curve: label and y values (same length as the x values it is drawn against).
pub struct Series<'a> {
    /// Legend text.
    pub label: &'a str,
    /// Values in the unit of the axis the series is drawn on; a non-finite value leaves a gap.
    pub y: &'a [f64],
}

/// A vertical marker (an event) on time plots or a point marker on the profile plot.
///
/// Drawn as a dashed vertical line with its label in a band above the data, and a dot on every
/// curve that passes through `x`.
pub struct Marker<'a> {
    /// Position on the x axis, in the x axis unit; markers outside the data range are not drawn.
    pub x: f64,
    /// Text written beside the marker line.
    pub label: &'a str,
}

/// A shaded span of the x axis (a stage's burn on time plots), labelled at its foot.
pub struct Band<'a> {
    /// Start, in the x axis unit.
    pub from: f64,
    /// End, in the x axis unit.
    pub to: f64,
    /// Text written at the foot of the span when it is wide enough.
    pub label: &'a str,
}

/// Every part of a line chart, for [`chart`]: [`line_chart`] and [`dual_axis_chart`] are this
/// with no shading. Limits are `(label, value)` pairs; their legend reads `label value unit`,
/// the unit taken from the bracket of the axis title they are drawn against (`[kPa]`).
#[derive(Default)]
pub struct ChartSpec<'a> {
    /// File stem (`<stem>.png`, `<stem>.svg`).
    pub stem: &'a str,
    /// Title.
    pub title: &'a str,
    /// X axis title with its unit.
    pub x_label: &'a str,
    /// Left y axis title with its unit.
    pub y_label: &'a str,
    /// Right y axis title; `Some` draws the right axis for the `right` series.
    pub right_label: Option<&'a str>,
    /// X values shared by every series.
    pub x: &'a [f64],
    /// Series on the left axis.
    pub left: &'a [Series<'a>],
    /// Series on the right axis.
    pub right: &'a [Series<'a>],
    /// Horizontal limit lines on the left axis.
    pub left_limits: &'a [(&'a str, f64)],
    /// Horizontal limit lines on the right axis.
    pub right_limits: &'a [(&'a str, f64)],
    /// Vertical event markers.
    pub markers: &'a [Marker<'a>],
    /// Shaded spans behind the curves.
    pub bands: &'a [Band<'a>],
}

/// Draws the chart `spec` describes as `<stem>.png` and `<stem>.svg`.
pub fn chart(spec: &ChartSpec) -> Result<Vec<FigureFile>, PlotError> {
    let figure = LineFigure {
        title: spec.title,
        x_label: spec.x_label,
        y_label: spec.y_label,
        right_label: spec.right_label,
        x: spec.x,
        left: spec.left,
        right: spec.right,
        left_limits: spec.left_limits,
        right_limits: spec.right_limits,
        markers: spec.markers,
        bands: spec.bands,
    };
    render(spec.stem, &figure)
}

/// One drawn file: its name (`<stem>.png` or `<stem>.svg`) and its bytes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FigureFile {
    /// File name, without a folder.
    pub name: String,
    /// Contents (PNG bytes, or SVG text as UTF-8).
    pub bytes: Vec<u8>,
}

/// Why a chart could not be drawn (both PNG and SVG are drawn for each chart; either can fail).
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// The drawing library failed while rendering or encoding a file.
    #[error("cannot draw {name}: {message}")]
    Draw {
        /// File being drawn.
        name: String,
        /// Drawing library message.
        message: String,
    },
}

/// A line chart of several series against x, optional horizontal limit lines (label, y) drawn dashed,
/// optional vertical event markers; title, axis labels with units. Draws `<stem>.png` and `.svg`
/// and returns both. Empty/non-finite data must not panic (skip non-finite points; if nothing is
/// finite, draw an empty chart with the title and a note "no data").
#[allow(clippy::too_many_arguments)] // the report calls it with plain data, one argument per part
pub fn line_chart(
    stem: &str,
    title: &str,
    x_label: &str,
    y_label: &str,
    x: &[f64],
    series: &[Series],
    limits: &[(&str, f64)],
    markers: &[Marker],
) -> Result<Vec<FigureFile>, PlotError> {
    let figure = LineFigure {
        title,
        x_label,
        y_label,
        right_label: None,
        x,
        left: series,
        right: &[],
        left_limits: limits,
        right_limits: &[],
        markers,
        bands: &[],
    };
    render(stem, &figure)
}

/// The same as [`line_chart`] with a second y axis on the right for `right` series (e.g. dynamic
/// pressure kPa left, axial acceleration g right). `right_limits` are drawn against the right axis.
#[allow(clippy::too_many_arguments)] // the report calls it with plain data, one argument per part
pub fn dual_axis_chart(
    stem: &str,
    title: &str,
    x_label: &str,
    y_left_label: &str,
    y_right_label: &str,
    x: &[f64],
    left: &[Series],
    right: &[Series],
    left_limits: &[(&str, f64)],
    right_limits: &[(&str, f64)],
    markers: &[Marker],
) -> Result<Vec<FigureFile>, PlotError> {
    let figure = LineFigure {
        title,
        x_label,
        y_label: y_left_label,
        right_label: Some(y_right_label),
        x,
        left,
        right,
        left_limits,
        right_limits,
        markers,
        bands: &[],
    };
    render(stem, &figure)
}

/// Waterfall of a ΔV budget: a first full bar (e.g. "ideal ΔV"), then signed steps (losses negative,
/// gains positive), ending in a total bar (e.g. "inertial speed at cutoff"); values in m/s printed on
/// the bars. The total is `start + Σ steps` over the finite values; a non-finite value is shown as
/// "n/a" and left out of the sum.
pub fn waterfall(
    stem: &str,
    title: &str,
    y_label: &str,
    start: (&str, f64),
    steps: &[(&str, f64)],
    end_label: &str,
) -> Result<Vec<FigureFile>, PlotError> {
    let figure = WaterfallFigure {
        title,
        y_label,
        bars: waterfall_bars(start, steps, end_label),
        connectors: true,
    };
    render(stem, &figure)
}

/// Bars from zero, one per `(label, value)`, the value printed on each (same decimals for all).
/// `signed` colours negative bars as losses and positive ones as gains (a trade's payload
/// changes); otherwise every bar has one colour (payload per problem). The axis always includes
/// zero. A non-finite value is shown as "n/a".
pub fn bar_chart(
    stem: &str,
    title: &str,
    y_label: &str,
    bars: &[(&str, f64)],
    signed: bool,
) -> Result<Vec<FigureFile>, PlotError> {
    let bars = bars
        .iter()
        .map(|&(label, v)| Bar {
            label: label.into(),
            from: 0.0,
            to: if usable(v) { v } else { 0.0 },
            value: usable(v).then_some(v),
            step: signed,
        })
        .collect();
    let figure = WaterfallFigure {
        title,
        y_label,
        bars,
        connectors: false,
    };
    render(stem, &figure)
}

/// The file formats a figure can be written in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FigureFormat {
    /// Raster, 1200×800 px, text in the embedded font.
    Png,
    /// Vector; text drawn by the viewer's sans-serif font.
    Svg,
    /// Vector, converted from the SVG with the embedded font (svg2pdf, a crate of the typst
    /// project), one page per figure.
    Pdf,
}

/// Keeps the figures in `formats`: PNG and SVG files as drawn, and a `<stem>.pdf` made from each
/// `<stem>.svg` when PDF is asked for. Order: as drawn, each PDF after its SVG.
pub fn select_formats(
    files: Vec<FigureFile>,
    formats: &[FigureFormat],
) -> Result<Vec<FigureFile>, PlotError> {
    let mut out = Vec::new();
    for f in files {
        let is_svg = f.name.ends_with(".svg");
        if is_svg && formats.contains(&FigureFormat::Pdf) {
            let stem = f.name.trim_end_matches(".svg");
            out.push(FigureFile {
                name: format!("{stem}.pdf"),
                bytes: svg_to_pdf(&f.bytes).map_err(|m| draw_error(&format!("{stem}.pdf"), m))?,
            });
        }
        let keep = if is_svg {
            formats.contains(&FigureFormat::Svg)
        } else {
            formats.contains(&FigureFormat::Png)
        };
        if keep {
            out.push(f);
        }
    }
    Ok(out)
}

/// Converts one of our SVGs to a one-page PDF, its text set in the embedded DejaVu Sans (the
/// SVGs ask for `sans-serif`).
fn svg_to_pdf(svg: &[u8]) -> Result<Vec<u8>, String> {
    let mut options = svg2pdf::usvg::Options::default();
    let db = options.fontdb_mut();
    db.load_font_data(FONT.to_vec());
    db.set_sans_serif_family("DejaVu Sans");
    let text = std::str::from_utf8(svg).map_err(err)?;
    let tree = svg2pdf::usvg::Tree::from_str(text, &options).map_err(err)?;
    svg2pdf::to_pdf(
        &tree,
        svg2pdf::ConversionOptions::default(),
        svg2pdf::PageOptions::default(),
    )
    .map_err(err)
}

// ---------------------------------------------------------------------------------------------
// Output: one drawing routine, two backends.

type Xy = (f64, f64);
/// Unbroken pieces of one curve.
type Runs = Vec<Vec<Xy>>;
type PlotArea<DB> = DrawingArea<DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;
type Dual<'a, DB> = DualCoordChartContext<
    'a,
    DB,
    Cartesian2d<RangedCoordf64, RangedCoordf64>,
    Cartesian2d<RangedCoordf64, RangedCoordf64>,
>;

/// A chart that can draw itself on any plotters backend.
trait Figure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String>;
}

fn render(stem: &str, figure: &impl Figure) -> Result<Vec<FigureFile>, PlotError> {
    FONT_ONCE.call_once(|| {
        // Fails only for a corrupt embedded file; each chart then reports a font error.
        let _ = register_font(FAMILY, FontStyle::Normal, FONT);
    });
    let png = format!("{stem}.png");
    let svg = format!("{stem}.svg");
    Ok(vec![
        FigureFile {
            bytes: draw_png(figure).map_err(|m| draw_error(&png, m))?,
            name: png,
        },
        FigureFile {
            bytes: draw_svg(figure).map_err(|m| draw_error(&svg, m))?,
            name: svg,
        },
    ])
}

/// Draws into an RGB buffer and encodes it as PNG.
fn draw_png(figure: &impl Figure) -> Result<Vec<u8>, String> {
    let (w, h) = SIZE;
    let mut rgb = vec![0u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut rgb, SIZE).into_drawing_area();
        figure.draw(&root)?;
        root.present().map_err(err)?;
    }
    let image = image::RgbImage::from_raw(w, h, rgb).ok_or("buffer size")?;
    let mut png = std::io::Cursor::new(Vec::new());
    image
        .write_to(&mut png, image::ImageOutputFormat::Png)
        .map_err(err)?;
    Ok(png.into_inner())
}

fn draw_svg(figure: &impl Figure) -> Result<Vec<u8>, String> {
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, SIZE).into_drawing_area();
        figure.draw(&root)?;
        root.present().map_err(err)?;
    }
    Ok(text.into_bytes())
}

fn draw_error(name: &str, message: String) -> PlotError {
    PlotError::Draw {
        name: name.to_string(),
        message,
    }
}

fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

// ---------------------------------------------------------------------------------------------
// Line charts (one or two y axes).

struct LineFigure<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    /// `Some` draws a right axis with this title for the `right` series.
    right_label: Option<&'a str>,
    x: &'a [f64],
    left: &'a [Series<'a>],
    right: &'a [Series<'a>],
    left_limits: &'a [(&'a str, f64)],
    right_limits: &'a [(&'a str, f64)],
    markers: &'a [Marker<'a>],
    bands: &'a [Band<'a>],
}

/// Axis ranges and event-label placement of one line chart.
struct Frame {
    x: Range<f64>,
    left: Range<f64>,
    right: Range<f64>,
    labels: Vec<LabelSpot>,
    has_data: bool,
}

impl Frame {
    /// Unit axes and no labels, for a chart without usable data.
    fn empty() -> Self {
        let (x, left, right) = (0.0..1.0, 0.0..1.0, 0.0..1.0);
        let has_data = false;
        Frame {
            x,
            left,
            right,
            labels: Vec::new(),
            has_data,
        }
    }
}

/// An event label: marker x, text, row in the band (0 = top), box offset from the line and width, px.
struct LabelSpot {
    x: f64,
    text: String,
    row: i32,
    dx: i32,
    width: i32,
}

impl Figure for LineFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let body = draw_title(root, self.title)?;
        let plot = split_legend(&body, &self.legend_entries())?;
        let left: Vec<Runs> = self.left.iter().map(|s| finite_runs(self.x, s.y)).collect();
        let right: Vec<Runs> = self
            .right
            .iter()
            .map(|s| finite_runs(self.x, s.y))
            .collect();
        let frame = self.frame(&plot, &left, &right);
        let mut chart = build_dual(&plot, &frame, self.right_label.is_some())?;
        let (w, h) = plot_size(&plot, self.right_label.is_some());
        let fit = |text: &str, max: i32| fit_text(&plot, text, DESC_PX, max as u32);
        let right_label = self.right_label.map(|r| fit(r, h));
        let (x_label, y_label) = (fit(self.x_label, w), fit(self.y_label, h));
        draw_axes(&mut chart, &x_label, &y_label, right_label.as_deref())?;
        if !frame.has_data {
            return draw_no_data(chart.plotting_area());
        }
        draw_bands(&chart, self.bands, &frame)?;
        self.draw_limits(&chart, &frame)?;
        self.draw_curves(&chart, &left, &right, &frame)?;
        draw_event_labels(root, &chart, &frame)
    }
}

impl LineFigure<'_> {
    /// Palette offsets: left series, right series, left limits, right limits.
    fn offsets(&self) -> [usize; 4] {
        let (nl, nr, nll) = (self.left.len(), self.right.len(), self.left_limits.len());
        [0, nl, nl + nr, nl + nr + nll]
    }

    fn legend_entries(&self) -> Vec<LegendEntry> {
        let off = self.offsets();
        let dual = self.right_label.is_some();
        let mut entries = Vec::new();
        let groups = [
            ("left axis", self.left, self.left_limits, off[0], off[2]),
            ("right axis", self.right, self.right_limits, off[1], off[3]),
        ];
        for (heading, series, limits, s_off, l_off) in groups {
            if dual && !(series.is_empty() && limits.is_empty()) {
                entries.push(LegendEntry::heading(heading));
            }
            for (i, s) in series.iter().enumerate() {
                entries.push(LegendEntry::line(
                    s.label.to_string(),
                    pal(s_off + i),
                    false,
                ));
            }
            let unit = axis_unit(if heading == "left axis" {
                self.y_label
            } else {
                self.right_label.unwrap_or("")
            });
            for (i, &(label, y)) in limits.iter().enumerate().filter(|(_, l)| usable(l.1)) {
                let text = format!("{label} {}{unit}", fmt_num(y));
                let mut entry = LegendEntry::line(text, pal(l_off + i), true);
                entry.dash = limit_dash(l_off - off[2] + i);
                entries.push(entry);
            }
        }
        entries
    }

    fn frame<DB: DrawingBackend>(
        &self,
        plot: &DrawingArea<DB, Shift>,
        left: &[Runs],
        right: &[Runs],
    ) -> Frame {
        let xs = left.iter().chain(right).flatten().flatten().map(|p| p.0);
        let xb = Bounds::of(xs);
        if xb.is_empty() {
            return Frame::empty();
        }
        let x = xb.padded(0.0, 0.0);
        let (plot_w, plot_h) = plot_size(plot, self.right_label.is_some());
        let labels = place_labels(plot, self.markers, &x, plot_w, plot_h);
        // Leave a band on top for the event labels so they never cover a curve.
        let rows = labels.iter().map(|l| l.row + 1).max().unwrap_or(0);
        let band_px = if rows == 0 { 0 } else { rows * NOTE_ROW + 8 };
        let top = (f64::from(band_px) / f64::from(plot_h)).min(0.45);
        let left = y_range(left, self.left_limits, top);
        let mut right = y_range(right, self.right_limits, top);
        if !self.left_limits.is_empty() && !self.right_limits.is_empty() {
            // Limits often top their axes; a taller right axis keeps the two lines apart.
            right.end += 0.15 * (right.end - right.start);
        }
        let has_data = true;
        Frame {
            x,
            left,
            right,
            labels,
            has_data,
        }
    }

    fn draw_limits<DB: DrawingBackend>(&self, chart: &Dual<DB>, f: &Frame) -> Result<(), String> {
        let off = self.offsets();
        let areas = [
            chart.plotting_area(),
            chart.borrow_secondary().plotting_area(),
        ];
        let sets = [(self.left_limits, off[2]), (self.right_limits, off[3])];
        // Every other limit starts one dash later, so limits at the same height (common on a
        // dual-axis chart when each limit tops its axis) show interleaved colours.
        let px_wide = chart.plotting_area().get_pixel_range().0.len().max(1) as f64;
        let phase = f64::from(DASH) * (f.x.end - f.x.start) / px_wide;
        let mut k = 0;
        for (area, (limits, start)) in areas.into_iter().zip(sets) {
            for (i, &(_, y)) in limits.iter().enumerate().filter(|(_, l)| usable(l.1)) {
                let line = vec![(f.x.start + phase * f64::from(k % 2), y), (f.x.end, y)];
                let style = pal(start + i).stroke_width(2);
                let (on, off) = limit_dash(start - off[2] + i);
                area.draw(&DashedPathElement::new(line, on, off, style))
                    .map_err(err)?;
                k += 1;
            }
        }
        for spot in &f.labels {
            let line = vec![(spot.x, f.left.start), (spot.x, f.left.end)];
            let style = GREY.stroke_width(1);
            chart
                .plotting_area()
                .draw(&DashedPathElement::new(line, 6, 5, style))
                .map_err(err)?;
        }
        Ok(())
    }

    fn draw_curves<DB: DrawingBackend>(
        &self,
        chart: &Dual<DB>,
        left: &[Runs],
        right: &[Runs],
        f: &Frame,
    ) -> Result<(), String> {
        let off = self.offsets();
        let areas = [
            chart.plotting_area(),
            chart.borrow_secondary().plotting_area(),
        ];
        for (area, (curves, start)) in areas.into_iter().zip([(left, off[0]), (right, off[1])]) {
            for (i, runs) in curves.iter().enumerate() {
                draw_runs(area, runs, pal(start + i))?;
                draw_event_dots(area, runs, &f.labels, pal(start + i))?;
            }
        }
        Ok(())
    }
}

/// Splits `x`, `y` into unbroken pieces of usable points; a bad value in either ends a piece.
/// Extra values in the longer slice are ignored.
fn finite_runs(x: &[f64], y: &[f64]) -> Runs {
    let mut runs = Vec::new();
    let mut current = Vec::new();
    for (&xi, &yi) in x.iter().zip(y) {
        if usable(xi) && usable(yi) {
            current.push((xi, yi));
        } else if !current.is_empty() {
            runs.push(std::mem::take(&mut current));
        }
    }
    if !current.is_empty() {
        runs.push(current);
    }
    runs
}

fn y_range(curves: &[Runs], limits: &[(&str, f64)], top: f64) -> Range<f64> {
    let ys = curves.iter().flatten().flatten().map(|p| p.1);
    Bounds::of(ys.chain(limits.iter().map(|l| l.1))).padded(0.05, top)
}

/// Pixel size of the plotting rectangle that [`build_dual`] will make inside `plot`.
fn plot_size<DB: DrawingBackend>(plot: &DrawingArea<DB, Shift>, dual: bool) -> (i32, i32) {
    let (w, h) = plot.dim_in_pixel();
    let side = MARGIN + RIGHT_MARGIN + Y_AREA + if dual { Y_AREA } else { 0 };
    let w = w.saturating_sub(side).max(1);
    let h = h.saturating_sub(2 * MARGIN + X_AREA).max(1);
    (w as i32, h as i32)
}

/// Places event labels in rows so that no two overlap: each box sits right of its line, or left
/// of it near the right edge, in the highest row that is free there.
fn place_labels<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    markers: &[Marker],
    x: &Range<f64>,
    plot_w: i32,
    plot_h: i32,
) -> Vec<LabelSpot> {
    let mut order: Vec<&Marker> = markers.iter().filter(|m| x.contains(&m.x)).collect();
    order.sort_by(|a, b| a.x.total_cmp(&b.x));
    let max_rows = (plot_h * 2 / 5 / NOTE_ROW).max(1) as usize;
    let mut rows: Vec<Vec<Range<i32>>> = Vec::new();
    let mut spots = Vec::new();
    for m in order {
        let text = fit_text(area, m.label, NOTE_PX, (plot_w / 3).max(40) as u32);
        let width = text_width(area, &text, NOTE_PX) as i32 + 2 * 5;
        let px = ((m.x - x.start) / (x.end - x.start) * f64::from(plot_w)) as i32;
        let left = if px + 4 + width <= plot_w {
            px + 4
        } else {
            (px - 4 - width).max(0)
        };
        let row = free_row(&mut rows, left - 6..left + width + 6, max_rows);
        spots.push(LabelSpot {
            x: m.x,
            text,
            row,
            dx: left - px,
            width,
        });
    }
    spots
}

/// First row where `span` overlaps nothing (opening a new row if allowed, else the last row).
fn free_row(rows: &mut Vec<Vec<Range<i32>>>, span: Range<i32>, max_rows: usize) -> i32 {
    let clear = |row: &Vec<Range<i32>>| {
        row.iter()
            .all(|r| r.end <= span.start || span.end <= r.start)
    };
    let index = match rows.iter().position(clear) {
        Some(i) => i,
        None if rows.len() < max_rows => {
            rows.push(Vec::new());
            rows.len() - 1
        }
        None => rows.len() - 1,
    };
    rows[index].push(span);
    index as i32
}

fn build_dual<'a, DB: DrawingBackend>(
    plot: &'a DrawingArea<DB, Shift>,
    f: &Frame,
    right_axis: bool,
) -> Result<Dual<'a, DB>, String> {
    let mut builder = ChartBuilder::on(plot);
    builder.margin(MARGIN).margin_right(RIGHT_MARGIN);
    builder.x_label_area_size(X_AREA).y_label_area_size(Y_AREA);
    if right_axis {
        builder.right_y_label_area_size(Y_AREA);
    }
    let chart = builder
        .build_cartesian_2d(f.x.clone(), f.left.clone())
        .map_err(err)?;
    // A single-axis chart gets an unused secondary system too: one drawing path for both kinds.
    Ok(chart.set_secondary_coord(f.x.clone(), f.right.clone()))
}

fn draw_axes<DB: DrawingBackend>(
    chart: &mut Dual<DB>,
    x_label: &str,
    y_label: &str,
    right_label: Option<&str>,
) -> Result<(), String> {
    let (x_ticks, y_ticks) = (tick_format(chart.x_range()), tick_format(chart.y_range()));
    let right_ticks = tick_format(chart.borrow_secondary().y_range());
    chart
        .configure_mesh()
        .x_label_formatter(&x_ticks)
        .y_label_formatter(&y_ticks)
        .x_desc(x_label)
        .y_desc(y_label)
        .axis_desc_style(font(DESC_PX))
        .label_style(font(TICK_PX))
        .bold_line_style(BLACK.mix(0.12))
        .light_line_style(TRANSPARENT)
        .x_labels(10)
        .y_labels(8)
        .draw()
        .map_err(err)?;
    if let Some(label) = right_label {
        chart
            .configure_secondary_axes()
            .y_desc(label)
            .y_label_formatter(&right_ticks)
            .axis_desc_style(font(DESC_PX))
            .label_style(font(TICK_PX))
            .y_labels(8)
            .draw()
            .map_err(err)?;
    }
    Ok(())
}

fn draw_runs<DB: DrawingBackend>(
    area: &PlotArea<DB>,
    runs: &Runs,
    color: RGBColor,
) -> Result<(), String> {
    for run in runs {
        match run.as_slice() {
            [single] => area.draw(&Circle::new(*single, 3, color.filled())),
            points => area.draw(&PathElement::new(points, color.stroke_width(2))),
        }
        .map_err(err)?;
    }
    Ok(())
}

/// A dot where the curve passes each event, so events read on a profile plot too.
fn draw_event_dots<DB: DrawingBackend>(
    area: &PlotArea<DB>,
    runs: &Runs,
    labels: &[LabelSpot],
    color: RGBColor,
) -> Result<(), String> {
    for spot in labels {
        if let Some(y) = value_at(runs, spot.x) {
            area.draw(&Circle::new((spot.x, y), 6, WHITE.filled()))
                .map_err(err)?;
            area.draw(&Circle::new((spot.x, y), 4, color.filled()))
                .map_err(err)?;
        }
    }
    Ok(())
}

/// Linear interpolation of the first curve segment that spans `x`.
fn value_at(runs: &Runs, x: f64) -> Option<f64> {
    runs.iter().flat_map(|run| run.windows(2)).find_map(|w| {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        let inside = (x0 <= x && x <= x1) || (x1 <= x && x <= x0);
        let dx = x1 - x0;
        let t = if dx.abs() > 0.0 { (x - x0) / dx } else { 0.0 };
        inside
            .then_some(y0 + t * (y1 - y0))
            .filter(|y| y.is_finite())
    })
}

fn draw_event_labels<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    chart: &Dual<DB>,
    f: &Frame,
) -> Result<(), String> {
    let top = chart.plotting_area().get_pixel_range().1.start;
    let style = font(NOTE_PX)
        .color(&GREY)
        .pos(Pos::new(HPos::Left, VPos::Center));
    for spot in &f.labels {
        let (px, _) = chart.backend_coord(&(spot.x, f.left.start));
        let (x0, y0) = (px + spot.dx, top + 4 + spot.row * NOTE_ROW);
        let corners = [(x0, y0), (x0 + spot.width, y0 + NOTE_ROW - 4)];
        root.draw(&Rectangle::new(corners, WHITE.filled()))
            .map_err(err)?;
        root.draw(&Rectangle::new(corners, GREY.mix(0.6).stroke_width(1)))
            .map_err(err)?;
        let at = (x0 + 5, y0 + (NOTE_ROW - 4) / 2);
        root.draw(&Text::new(spot.text.clone(), at, style.clone()))
            .map_err(err)?;
    }
    Ok(())
}

fn draw_no_data<DB: DrawingBackend>(area: &PlotArea<DB>) -> Result<(), String> {
    let style = font(DESC_PX)
        .color(&GREY)
        .pos(Pos::new(HPos::Center, VPos::Center));
    let (x, y) = (area.get_x_range(), area.get_y_range());
    let centre = ((x.start + x.end) / 2.0, (y.start + y.end) / 2.0);
    area.draw(&Text::new("no data", centre, style)).map_err(err)
}

// ---------------------------------------------------------------------------------------------
// Waterfall.

struct WaterfallFigure<'a> {
    title: &'a str,
    y_label: &'a str,
    bars: Vec<Bar>,
    /// A waterfall: running-total connectors and a possibly broken axis; else plain bars from 0.
    connectors: bool,
}

/// One waterfall bar from `from` to `to` (m/s); `value` is `None` for a non-finite input.
struct Bar {
    label: String,
    from: f64,
    to: f64,
    value: Option<f64>,
    step: bool,
}

impl Bar {
    fn color(&self) -> RGBColor {
        match self.value {
            Some(v) if self.step && v < 0.0 => LOSS,
            _ if self.step => GAIN,
            _ => FULL_BAR,
        }
    }

    /// The bar's value with `decimals` places (the same for every bar of a chart).
    fn value_text(&self, decimals: usize) -> String {
        match self.value {
            None => "n/a".to_string(),
            Some(v) if self.step && v >= 0.0 => format!("+{v:.decimals$}"),
            Some(v) => format!("{v:.decimals$}"),
        }
    }
}

/// Start bar, one floating bar per step on the running total, and the total bar.
fn waterfall_bars(start: (&str, f64), steps: &[(&str, f64)], end_label: &str) -> Vec<Bar> {
    let first = usable(start.1).then_some(start.1);
    let mut total = first.unwrap_or(0.0);
    let mut any = first.is_some();
    let full = |label: &str, to: f64, value| Bar {
        label: label.into(),
        from: 0.0,
        to,
        value,
        step: false,
    };
    let mut bars = vec![full(start.0, total, first)];
    for &(label, v) in steps {
        let from = total;
        let ok = usable(v) && usable(total + v);
        if ok {
            total += v;
            any = true;
        }
        bars.push(Bar {
            label: label.into(),
            from,
            to: total,
            value: ok.then_some(v),
            step: true,
        });
    }
    bars.push(full(end_label, total, any.then_some(total)));
    bars
}

impl Figure for WaterfallFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let body = draw_title(root, self.title)?;
        let n = self.bars.len().max(1);
        let slot = (plot_size(&body, false).0 / n as i32).max(8);
        // Bar names wrap onto up to five lines; where slots are narrow they are set smaller
        // (down to 13 px), then given a sixth and a seventh line, before any name is cut (a
        // trade of 15 factors: "Azalea second stage vacuum thrust (+0.9 kN)" needs six).
        let wrap_all = |(px, lines): (u32, usize)| -> Vec<Vec<String>> {
            self.bars
                .iter()
                .map(|b| wrap_text(&body, &b.label, px, (slot - 8).max(8) as u32, lines))
                .collect()
        };
        let whole = |names: &Vec<Vec<String>>| {
            names
                .iter()
                .zip(&self.bars)
                .all(|(n, b)| b.label.contains('…') || !n.concat().contains('…'))
        };
        let (name_px, names) = [(TICK_PX, 5), (17, 5), (15, 5), (13, 5), (13, 6), (13, 7)]
            .into_iter()
            .map(|fit| (fit.0, wrap_all(fit)))
            .find(|(_, n)| whole(n))
            .unwrap_or_else(|| (13, wrap_all((13, 7))));
        let lines = names.iter().map(Vec::len).max().unwrap_or(1) as u32;
        let has_data = self.bars.iter().any(|b| b.value.is_some());
        let y = match (has_data, self.connectors) {
            (false, _) => 0.0..1.0,
            (true, true) => bar_range(&self.bars),
            (true, false) => zero_range(&self.bars),
        };
        let broken = y.start > 0.0;
        let chart = self.bar_chart(&body, n, lines * (name_px + 4), y, broken)?;
        draw_bar_names(root, &chart, &names, name_px)?;
        if !has_data {
            return draw_no_data(chart.plotting_area());
        }
        draw_bars(chart.plotting_area(), &self.bars, self.connectors)?;
        if broken {
            draw_breaks(root, &chart, &self.bars)?;
        }
        let digits = if self.connectors { 4.0 } else { 2.0 };
        draw_bar_values(root, &chart, &self.bars, slot, digits)
    }
}

impl WaterfallFigure<'_> {
    /// Axes for `n` bar slots with `lines` lines of category names below.
    fn bar_chart<'a, DB: DrawingBackend>(
        &self,
        body: &'a DrawingArea<DB, Shift>,
        n: usize,
        names_px: u32,
        y: Range<f64>,
        broken: bool,
    ) -> Result<BarChart<'a, DB>, String> {
        let y_ticks = tick_format(y.clone());
        let y_title = if broken {
            format!("{} (axis from {})", self.y_label, fmt_num(y.start))
        } else {
            self.y_label.to_string()
        };
        let y_label = fit_text(body, &y_title, DESC_PX, plot_size(body, false).1 as u32);
        let mut chart = ChartBuilder::on(body)
            .margin(MARGIN)
            .margin_right(RIGHT_MARGIN)
            .x_label_area_size(16 + names_px)
            .y_label_area_size(Y_AREA)
            .build_cartesian_2d(0.0..n as f64, y)
            .map_err(err)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .x_labels(0)
            .y_label_formatter(&y_ticks)
            .y_desc(y_label)
            .axis_desc_style(font(DESC_PX))
            .label_style(font(TICK_PX))
            .bold_line_style(BLACK.mix(0.12))
            .light_line_style(TRANSPARENT)
            .draw()
            .map_err(err)?;
        Ok(chart)
    }
}

/// Value range, room above for the value labels and below for negative bars. The axis starts
/// at zero unless every step and the total stay high above it (a budget whose losses are a small
/// part of the ideal ΔV): then it starts a little below the lowest step, at a round value, and
/// the full bars are drawn broken ([`draw_breaks`]), so that small steps are not slivers.
fn bar_range(bars: &[Bar]) -> Range<f64> {
    let b = Bounds::of(bars.iter().flat_map(|b| [0.0, b.from, b.to]));
    let span = if b.hi > b.lo { b.hi - b.lo } else { 1.0 };
    let below = if b.lo < 0.0 { 0.08 * span } else { 0.0 };
    // Steps span from..to; a full bar after the first counts by its top only.
    let low_steps = Bounds::of(
        bars.iter()
            .skip(1)
            .filter(|b| b.value.is_some())
            .flat_map(|b| [if b.step { b.from } else { b.to }, b.to]),
    );
    if b.lo >= 0.0 && !low_steps.is_empty() && low_steps.lo > 0.4 * b.hi {
        let pad = 0.15 * (b.hi - low_steps.lo).max(0.02 * b.hi);
        let floor = round_down(low_steps.lo - pad);
        if floor > 0.0 {
            return floor..b.hi + 0.1 * (b.hi - floor);
        }
    }
    b.lo - below..b.hi + 0.1 * span
}

/// `v` rounded down to one or two significant digits of a 1-2-5 step (7613 → 7000, 1480 → 1000).
fn round_down(v: f64) -> f64 {
    if !(v > 0.0 && v.is_finite()) {
        return 0.0;
    }
    let step = 10f64.powf(v.log10().floor());
    (v / step).floor() * step
}

/// Decimal places for every value label of a chart: `digits` + 1 significant digits of the
/// largest value (a waterfall asks for 4: 9595.3 → 1 place, so a 6.7 m/s term keeps a digit;
/// plain bars for 2: 74.96 → 74.9), at most three.
fn bar_decimals(bars: &[Bar], digits: f64) -> usize {
    let top = bars
        .iter()
        .filter_map(|b| b.value)
        .map(f64::abs)
        .fold(0.0, f64::max);
    if top > 0.0 && top.is_finite() {
        (digits - top.log10().floor()).clamp(0.0, 3.0) as usize
    } else {
        0
    }
}

/// A broken-axis mark: a white gap with slanted edges across each full bar and the axis line
/// near the foot, since those bars do not start at the axis' first value.
fn draw_breaks<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    chart: &BarChart<DB>,
    bars: &[Bar],
) -> Result<(), String> {
    let y0 = chart.plotting_area().get_pixel_range().1.end;
    let x_axis = chart.plotting_area().get_pixel_range().0.start;
    let y = y0 - 22;
    let mut xs: Vec<(i32, i32)> = vec![(x_axis - 8, x_axis + 8)];
    for (i, _) in bars
        .iter()
        .enumerate()
        .filter(|(_, b)| !b.step && b.value.is_some())
    {
        let (a, _) = chart.backend_coord(&(i as f64 + 0.1, 0.0));
        let (b, _) = chart.backend_coord(&(i as f64 + 0.9, 0.0));
        xs.push((a, b));
    }
    for (a, b) in xs {
        let gap = [(a, y + 4), (b, y - 4), (b, y - 12), (a, y - 4)];
        root.draw(&Polygon::new(gap.to_vec(), WHITE.filled()))
            .map_err(err)?;
        for dy in [0, -8] {
            let line = vec![(a, y + 4 + dy), (b, y - 4 + dy)];
            root.draw(&PathElement::new(line, BLACK.stroke_width(1)))
                .map_err(err)?;
        }
    }
    Ok(())
}

/// Value range of plain bars: zero and every bar, room above for the value labels.
fn zero_range(bars: &[Bar]) -> Range<f64> {
    let b = Bounds::of(bars.iter().flat_map(|b| [0.0, b.to]));
    let span = if b.hi > b.lo { b.hi - b.lo } else { 1.0 };
    let below = if b.lo < 0.0 { 0.1 * span } else { 0.0 };
    b.lo - below..b.hi + 0.1 * span
}

fn draw_bars<DB: DrawingBackend>(
    area: &PlotArea<DB>,
    bars: &[Bar],
    connectors: bool,
) -> Result<(), String> {
    for (i, bar) in bars.iter().enumerate() {
        let x = i as f64;
        let (lo, hi) = (bar.from.min(bar.to), bar.from.max(bar.to));
        // A full bar on a broken axis starts at the axis' first value.
        let lo = lo.max(area.get_y_range().start);
        if bar.value.is_some() {
            let corners = [(x + 0.18, lo), (x + 0.82, hi)];
            area.draw(&Rectangle::new(corners, bar.color().filled()))
                .map_err(err)?;
        }
        if connectors && i + 1 < bars.len() {
            // Connector: the running total carried to the next bar.
            let line = vec![(x + 0.82, bar.to), (x + 1.18, bar.to)];
            area.draw(&PathElement::new(line, GREY.stroke_width(1)))
                .map_err(err)?;
        }
    }
    Ok(())
}

type BarChart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

fn draw_bar_values<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    chart: &BarChart<DB>,
    bars: &[Bar],
    slot: i32,
    digits: f64,
) -> Result<(), String> {
    let decimals = bar_decimals(bars, digits);
    for (i, bar) in bars.iter().enumerate() {
        let text = bar.value_text(decimals);
        // Shrink the value text only if it is wider than its bar slot.
        let width = text_width(root, &text, TICK_PX).max(1) as i32;
        let px = (TICK_PX as i32 * (slot - 6) / width).clamp(11, TICK_PX as i32) as u32;
        let style = font(px).pos(Pos::new(HPos::Center, VPos::Bottom));
        let (x, y) = chart.backend_coord(&(i as f64 + 0.5, bar.from.max(bar.to)));
        root.draw(&Text::new(text, (x, y - 5), style))
            .map_err(err)?;
    }
    Ok(())
}

fn draw_bar_names<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    chart: &BarChart<DB>,
    names: &[Vec<String>],
    px: u32,
) -> Result<(), String> {
    let bottom = chart.plotting_area().get_pixel_range().1.end;
    let style = font(px).pos(Pos::new(HPos::Center, VPos::Top));
    for (i, lines) in names.iter().enumerate() {
        let (x, _) = chart.backend_coord(&(i as f64 + 0.5, 0.0));
        for (k, line) in lines.iter().enumerate() {
            let y = bottom + 8 + k as i32 * (px as i32 + 4);
            root.draw(&Text::new(line.clone(), (x, y), style.clone()))
                .map_err(err)?;
        }
    }
    Ok(())
}

/// Greedy wrap to `max_w` px at spaces and after hyphens, at most `max_lines` lines; the last
/// line is cut with "…" if it still does not fit.
fn wrap_text<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    px: u32,
    max_w: u32,
    max_lines: usize,
) -> Vec<String> {
    // Pieces: (text, joined to the previous piece without a space).
    let mut pieces: Vec<(String, bool)> = Vec::new();
    for word in text.split_whitespace() {
        let parts: Vec<&str> = word.split_inclusive('-').collect();
        for (k, part) in parts.iter().enumerate() {
            pieces.push(((*part).to_string(), k > 0));
        }
    }
    let mut lines: Vec<String> = Vec::new();
    let mut current = String::new();
    for (piece, glued) in pieces {
        let candidate = match (current.is_empty(), glued) {
            (true, _) => piece.clone(),
            (false, true) => format!("{current}{piece}"),
            (false, false) => format!("{current} {piece}"),
        };
        let fits = text_width(area, &candidate, px) <= max_w;
        if current.is_empty() || fits || lines.len() + 1 >= max_lines.max(1) {
            current = candidate;
        } else {
            lines.push(std::mem::replace(&mut current, piece));
        }
    }
    lines.push(current);
    lines.iter().map(|l| fit_text(area, l, px, max_w)).collect()
}

/// The unit in the bracket that ends an axis title ("dynamic pressure [kPa]" → " kPa"), with a
/// leading space; empty when the title has none.
fn axis_unit(axis_title: &str) -> String {
    match (axis_title.rfind('['), axis_title.rfind(']')) {
        (Some(a), Some(b)) if a < b => format!(" {}", &axis_title[a + 1..b]),
        _ => String::new(),
    }
}

/// Dash and gap lengths (px) of the `i`-th limit line: dashed, dotted, long dash, so that two
/// limits at the same height still read apart.
fn limit_dash(i: usize) -> (i32, i32) {
    [(DASH, DASH), (3, 5), (22, 8)][i % 3]
}

/// Shades every second band lightly behind the curves and writes its label at its foot.
fn draw_bands<DB: DrawingBackend>(
    chart: &Dual<DB>,
    bands: &[Band],
    f: &Frame,
) -> Result<(), String> {
    let area = chart.plotting_area();
    let tints = [
        RGBColor(0, 114, 178).mix(0.07),
        RGBColor(213, 94, 0).mix(0.07),
    ];
    let style = font(NOTE_PX)
        .color(&GREY)
        .pos(Pos::new(HPos::Center, VPos::Bottom));
    for (i, b) in bands.iter().enumerate() {
        let (lo, hi) = (b.from.max(f.x.start), b.to.min(f.x.end));
        if !(usable(lo) && usable(hi) && hi > lo) {
            continue;
        }
        let corners = [(lo, f.left.start), (hi, f.left.end)];
        area.draw(&Rectangle::new(corners, tints[i % 2].filled()))
            .map_err(err)?;
        let (x0, y0) = chart.backend_coord(&(lo, f.left.start));
        let (x1, _) = chart.backend_coord(&(hi, f.left.start));
        let room = (x1 - x0 - 6).max(0) as u32;
        if room >= 40 {
            let root = area.strip_coord_spec();
            // A narrow band shows the label's part after ": " (the stage) or before it (the
            // arc), whichever fits whole, before cutting.
            let (head, tail) = b.label.split_once(": ").unwrap_or((b.label, b.label));
            let text = [b.label, tail, head]
                .into_iter()
                .find(|t| text_width(&root, t, NOTE_PX) <= room);
            // A band too narrow for even its short name stays unlabelled rather than cut.
            if let Some(text) = text {
                let (ox, oy) = area.get_base_pixel();
                let at = ((x0 + x1) / 2 - ox, y0 - 4 - oy);
                root.draw(&Text::new(printable(text), at, style.clone()))
                    .map_err(err)?;
            }
        }
    }
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Shared pieces: title, legend, text, ranges, colours.

/// White background and centred title; returns the area below the title band.
fn draw_title<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
) -> Result<DrawingArea<DB, Shift>, String> {
    root.fill(&WHITE).map_err(err)?;
    let (w, _) = root.dim_in_pixel();
    // A long title is set smaller (down to the axis-title size) before it is cut.
    let room = w.saturating_sub(2 * MARGIN);
    let px = (DESC_PX..=TITLE_PX)
        .rev()
        .find(|&px| text_width(root, &printable(title), px) <= room)
        .unwrap_or(DESC_PX);
    let text = fit_text(root, title, px, room);
    let style = font(px).pos(Pos::new(HPos::Center, VPos::Center));
    let at = (w as i32 / 2, TITLE_BAND as i32 / 2 + 4);
    root.draw(&Text::new(text, at, style)).map_err(err)?;
    Ok(root.split_vertically(TITLE_BAND).1)
}

/// One legend row: a line swatch (dashed for limits), or a plain heading when `color` is `None`.
struct LegendEntry {
    text: String,
    color: Option<RGBColor>,
    dashed: bool,
    /// Dash and gap lengths of a dashed swatch, px.
    dash: (i32, i32),
}

impl LegendEntry {
    fn line(text: String, color: RGBColor, dashed: bool) -> Self {
        Self {
            text,
            color: Some(color),
            dashed,
            dash: (9, 6),
        }
    }

    fn heading(text: &str) -> Self {
        Self {
            text: text.to_string(),
            color: None,
            dashed: false,
            dash: (9, 6),
        }
    }
}

/// Draws the legend in a panel right of the plot (so it covers no data) and returns the plot part.
fn split_legend<DB: DrawingBackend>(
    body: &DrawingArea<DB, Shift>,
    entries: &[LegendEntry],
) -> Result<DrawingArea<DB, Shift>, String> {
    let body_w = body.dim_in_pixel().0;
    if entries.is_empty() {
        return Ok(body.margin(0, 0, 0, 0));
    }
    let text_w = entries
        .iter()
        .map(|e| text_width(body, &e.text, LEGEND_PX))
        .max()
        .unwrap_or(0);
    let width = (text_w + (SWATCH + 3 * PAD) as u32 + MARGIN).clamp(LEGEND_MIN, LEGEND_MAX);
    let (plot, legend) = body.split_horizontally(body_w.saturating_sub(width));
    draw_legend(&legend, entries)?;
    Ok(plot)
}

fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    entries: &[LegendEntry],
) -> Result<(), String> {
    let right = area.dim_in_pixel().0 as i32 - MARGIN as i32;
    let top = MARGIN as i32;
    let max_text = (right - SWATCH - 3 * PAD).max(10) as u32;
    // A long entry wraps onto a second line (cut only beyond that), so a legend keeps its words.
    let lines: Vec<Vec<String>> = entries
        .iter()
        .map(|e| wrap_text(area, &e.text, LEGEND_PX, max_text, 2))
        .collect();
    let line_h = LEGEND_PX as i32 + 4;
    let extra = |n: usize| (n.max(1) as i32 - 1) * line_h;
    let bottom = top
        + PAD
        + lines
            .iter()
            .map(|l| LEGEND_ROW + extra(l.len()))
            .sum::<i32>();
    let corners = [(0, top), (right, bottom)];
    area.draw(&Rectangle::new(corners, WHITE.filled()))
        .map_err(err)?;
    area.draw(&Rectangle::new(corners, GREY.mix(0.6).stroke_width(1)))
        .map_err(err)?;
    let mut y = top + PAD / 2 + LEGEND_ROW / 2;
    for (entry, text) in entries.iter().zip(&lines) {
        let text_x = match entry.color {
            Some(color) => {
                draw_swatch(area, (PAD, y), color, entry.dashed.then_some(entry.dash))?;
                2 * PAD + SWATCH
            }
            None => PAD,
        };
        let color = if entry.color.is_some() { BLACK } else { GREY };
        let style = font(LEGEND_PX)
            .color(&color)
            .pos(Pos::new(HPos::Left, VPos::Center));
        for (k, line) in text.iter().enumerate() {
            let at = (text_x, y + k as i32 * line_h);
            area.draw(&Text::new(line.clone(), at, style.clone()))
                .map_err(err)?;
        }
        y += LEGEND_ROW + extra(text.len());
    }
    Ok(())
}

fn draw_swatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    (x, y): (i32, i32),
    color: RGBColor,
    dash: Option<(i32, i32)>,
) -> Result<(), String> {
    let line = vec![(x, y), (x + SWATCH, y)];
    let style = color.stroke_width(3);
    if let Some((on, off)) = dash {
        area.draw(&DashedPathElement::new(line, on, off, style))
            .map_err(err)
    } else {
        area.draw(&PathElement::new(line, style)).map_err(err)
    }
}

fn font(px: u32) -> TextStyle<'static> {
    (FAMILY, px).into_font().color(&BLACK)
}

fn text_width<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, text: &str, px: u32) -> u32 {
    area.estimate_text_size(text, &font(px))
        .map_or(0, |(w, _)| w)
}

/// `text` cut at the end with "…" so that it is at most `max_w` px wide.
/// `text` with every character XML 1.0 cannot carry (control characters other than tab and line
/// breaks, surrogates are impossible in `str`, and the non-characters U+FFFE and U+FFFF)
/// replaced by U+FFFD, so that a name from the problem file always gives well-formed SVG
/// (XML 1.0, 5th ed., §2.2 "Characters"). Markup characters are escaped by the SVG backend.
pub fn printable(text: &str) -> String {
    text.chars()
        .map(|c| {
            let allowed = matches!(c, '\t' | '\n' | '\r')
                || (!c.is_control() && c != '\u{fffe}' && c != '\u{ffff}');
            if allowed {
                c
            } else {
                '\u{fffd}'
            }
        })
        .collect()
}

fn fit_text<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    px: u32,
    max_w: u32,
) -> String {
    let text = &printable(text);
    let mut chars: Vec<char> = text.chars().take(MAX_CHARS).collect();
    let mut out: String = chars.iter().collect();
    if chars.len() < text.chars().count() {
        out.push('…');
    }
    while text_width(area, &out, px) > max_w && chars.pop().is_some() {
        out = chars.iter().chain(['…'].iter()).collect();
    }
    out
}

/// A value for a label: four significant digits (whole numbers from 1000 up), trailing zeros
/// dropped; scientific notation outside 1e-3..1e7.
fn fmt_num(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        return "0".to_string();
    }
    if !(1e-3..1e7).contains(&a) {
        return format!("{v:.3e}");
    }
    let decimals = (3.0 - a.log10().floor()).clamp(0.0, 6.0) as usize;
    trim_zeros(format!("{v:.decimals$}"))
}

/// Tick labels for an axis over `range`: enough decimals to tell about ten ticks apart, trailing
/// zeros dropped; scientific notation when the axis reaches 1e7 in magnitude.
fn tick_format(range: Range<f64>) -> impl Fn(&f64) -> String {
    let step = (range.end - range.start).abs() / 10.0;
    let big = range.start.abs().max(range.end.abs()) >= 1e7;
    let decimals = if step > 0.0 && step.is_finite() {
        (1.0 - step.log10().floor()).clamp(0.0, 9.0) as usize
    } else {
        0
    };
    move |v: &f64| {
        if big && *v != 0.0 {
            format!("{v:.3e}")
        } else {
            trim_zeros(format!("{v:.decimals$}"))
        }
    }
}

/// "12.500" → "12.5", "3.000" → "3", "-0.00" → "0".
fn trim_zeros(text: String) -> String {
    let trimmed = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.')
    } else {
        &text
    };
    if trimmed == "-0" {
        "0".to_string()
    } else {
        trimmed.to_string()
    }
}

fn pal(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

/// A value that can be placed on an axis: finite and at most 1e300 in magnitude.
fn usable(v: f64) -> bool {
    v.is_finite() && v.abs() <= MAX_ABS
}

/// Smallest interval holding the usable values seen; empty when `lo > hi`.
#[derive(Clone, Copy, Debug)]
struct Bounds {
    lo: f64,
    hi: f64,
}

impl Bounds {
    fn of(values: impl Iterator<Item = f64>) -> Self {
        let start = Self {
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
        };
        values.filter(|v| usable(*v)).fold(start, |b, v| Self {
            lo: b.lo.min(v),
            hi: b.hi.max(v),
        })
    }

    fn is_empty(&self) -> bool {
        self.lo > self.hi
    }

    /// Widens by `pad` × span on each side plus a band of `top` (fraction of the final height)
    /// above; a single value opens to ±max(5 %, 1). Empty bounds give 0..1.
    fn padded(self, pad: f64, top: f64) -> Range<f64> {
        if self.is_empty() {
            return 0.0..1.0;
        }
        let (mut lo, mut hi) = (self.lo, self.hi);
        if hi - lo <= 0.0 {
            let half = (lo.abs() * 0.05).max(1.0);
            (lo, hi) = (lo - half, hi + half);
        }
        let span = hi - lo;
        let (lo, hi) = (lo - pad * span, hi + pad * span);
        let top = top.clamp(0.0, 0.9);
        lo..lo + (hi - lo) / (1.0 - top)
    }
}

/// Bars from zero, one per label (positive and negative coloured apart), values printed on the
/// bars: e.g. rank correlations of the contributors. Draws `<stem>.png` and `.svg`.
pub fn bars(
    stem: &str,
    title: &str,
    y_label: &str,
    labels: &[&str],
    values: &[f64],
) -> Result<Vec<FigureFile>, PlotError> {
    let pairs: Vec<(&str, f64)> = labels.iter().copied().zip(values.iter().copied()).collect();
    bar_chart(stem, title, y_label, &pairs, true)
}

/// A scatter of (x, y) points with both axes through zero marked; non-finite points are skipped.
/// Draws `<stem>.png` and `.svg`.
pub fn scatter(
    stem: &str,
    title: &str,
    x_label: &str,
    y_label: &str,
    x: &[f64],
    y: &[f64],
) -> Result<Vec<FigureFile>, PlotError> {
    let figure = ScatterFigure {
        title,
        x_label,
        y_label,
        points: x
            .iter()
            .zip(y)
            .filter(|(a, b)| usable(**a) && usable(**b))
            .map(|(a, b)| (*a, *b))
            .collect(),
    };
    render(stem, &figure)
}

struct ScatterFigure<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    points: Vec<Xy>,
}

impl Figure for ScatterFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let body = draw_title(root, self.title)?;
        let xr = Bounds::of(self.points.iter().map(|p| p.0).chain([0.0])).padded(0.05, 0.0);
        let yr = Bounds::of(self.points.iter().map(|p| p.1).chain([0.0])).padded(0.05, 0.0);
        let (xt, yt) = (tick_format(xr.clone()), tick_format(yr.clone()));
        let mut chart = ChartBuilder::on(&body)
            .margin(MARGIN)
            .margin_right(RIGHT_MARGIN)
            .x_label_area_size(X_AREA)
            .y_label_area_size(Y_AREA)
            .build_cartesian_2d(xr.clone(), yr.clone())
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_label_formatter(&xt)
            .y_label_formatter(&yt)
            .x_desc(self.x_label)
            .y_desc(self.y_label)
            .axis_desc_style(font(DESC_PX))
            .label_style(font(TICK_PX))
            .bold_line_style(BLACK.mix(0.12))
            .light_line_style(TRANSPARENT)
            .draw()
            .map_err(err)?;
        let axis = GREY.stroke_width(1);
        chart
            .draw_series([
                PathElement::new(vec![(xr.start, 0.0), (xr.end, 0.0)], axis),
                PathElement::new(vec![(0.0, yr.start), (0.0, yr.end)], axis),
            ])
            .map_err(err)?;
        if self.points.is_empty() {
            return draw_no_data(chart.plotting_area());
        }
        chart
            .draw_series(
                self.points
                    .iter()
                    .map(|p| Circle::new(*p, 4, PALETTE[0].mix(0.6).filled())),
            )
            .map_err(err)?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Invented ascent: 0..=400 s, altitude in km and speed in km/s from smooth made-up formulas.
    fn invented_ascent() -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let t: Vec<f64> = (0..=400).map(f64::from).collect();
        let altitude_km = t
            .iter()
            .map(|&s| 200.0 * (1.0 - (-(s / 160.0).powi(2)).exp()))
            .collect();
        let speed_km_s = t.iter().map(|&s| 7.8 * (s / 400.0).powf(1.4)).collect();
        (t, altitude_km, speed_km_s)
    }

    /// Checks both files: PNG header and size, SVG text.
    fn check_files(paths: &[FigureFile], title: &str) {
        assert_eq!(paths.len(), 2);
        assert!(paths[0].name.ends_with(".png"), "{}", paths[0].name);
        assert!(paths[1].name.ends_with(".svg"), "{}", paths[1].name);
        let png = &paths[0].bytes;
        // Source: PNG specification (ISO/IEC 15948), 5.2 "PNG signature".
        assert_eq!(&png[..8], &[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A]);
        // Source: PNG specification, 11.2.2 "IHDR": big-endian width then height after the chunk
        // length and type, i.e. bytes 16..20 and 20..24.
        assert_eq!(
            u32::from_be_bytes([png[16], png[17], png[18], png[19]]),
            1200
        );
        assert_eq!(
            u32::from_be_bytes([png[20], png[21], png[22], png[23]]),
            800
        );
        assert!(png.len() > 10_000, "PNG only {} bytes", png.len());
        let svg = svg_text(paths);
        assert!(svg.contains("<svg"), "not an SVG");
        assert!(svg.contains(title), "SVG lacks the title");
    }

    fn svg_text(paths: &[FigureFile]) -> String {
        String::from_utf8(paths[1].bytes.clone()).expect("SVG is UTF-8")
    }

    #[test]
    fn line_chart_writes_png_and_svg() {
        let (t, alt, _) = invented_ascent();
        let downrange: Vec<f64> = t.iter().map(|s| 0.004 * s * s).collect();
        let series = [
            Series {
                label: "altitude",
                y: &alt,
            },
            Series {
                label: "downrange distance",
                y: &downrange,
            },
        ];
        let markers = [
            Marker {
                x: 12.0,
                label: "pitch kick",
            },
            Marker {
                x: 72.0,
                label: "max-Q",
            },
            Marker {
                x: 150.0,
                label: "stage separation",
            },
            Marker {
                x: 154.0,
                label: "upper stage ignition",
            },
            Marker {
                x: 395.0,
                label: "cutoff",
            },
        ];
        let limits = [("target altitude", 200.0)];
        let title = "Invented ascent: altitude";
        let paths = line_chart(
            "alt",
            title,
            "time [s]",
            "distance [km]",
            &t,
            &series,
            &limits,
            &markers,
        )
        .expect("chart written");
        check_files(&paths, title);
        let svg = svg_text(&paths);
        for text in [
            "pitch kick",
            "upper stage ignition",
            "target altitude 200 km",
            "time [s]",
        ] {
            assert!(svg.contains(text), "SVG lacks {text}");
        }
        assert!(!svg.contains("no data"));
    }

    #[test]
    fn line_chart_survives_nan_and_empty_input() {
        let x = [0.0, 1.0, f64::NAN, 3.0, 4.0, f64::INFINITY, 6.0];
        let y = [1.0, f64::NAN, 2.0, 3.0, f64::NEG_INFINITY, 5.0, 1e308];
        let short = [1.0, 2.0];
        let series = [
            Series {
                label: "gappy",
                y: &y,
            },
            Series {
                label: "short",
                y: &short,
            },
        ];
        let limits = [("nan limit", f64::NAN), ("inf limit", f64::INFINITY)];
        let markers = [
            Marker {
                x: f64::NAN,
                label: "nan",
            },
            Marker {
                x: 1e9,
                label: "far",
            },
        ];
        let paths = line_chart("gappy", "Gappy", "x", "y", &x, &series, &limits, &markers)
            .expect("gappy chart");
        assert!(!svg_text(&paths).contains("no data"));
        let all_nan = [f64::NAN; 5];
        let nan_series = [Series {
            label: "all NaN",
            y: &all_nan,
        }];
        let cases: [(&str, &[f64], &[Series]); 3] = [
            ("nan", &all_nan, &nan_series),
            ("empty", &[], &[]),
            ("no-series", &x, &[]),
        ];
        for (stem, xs, ss) in cases {
            let paths = line_chart(stem, "Empty", "x", "y", xs, ss, &limits, &markers)
                .expect("empty chart");
            assert!(svg_text(&paths).contains("no data"), "{stem}: no note");
        }
    }

    #[test]
    fn line_chart_handles_extreme_and_flat_values() {
        let x = [0.0, 1.0, 2.0];
        let huge = [-1e300, 0.0, 1e300];
        let flat = [5.0, 5.0, 5.0];
        let tiny = [1e10, 1e10 + 1e-6, 1e10];
        for (stem, y) in [("huge", &huge), ("flat", &flat), ("tiny", &tiny)] {
            let series = [Series { label: stem, y }];
            let paths = line_chart(stem, "Extreme", "x", "y", &x, &series, &[], &[])
                .expect("extreme chart");
            check_files(&paths, "Extreme");
        }
    }

    #[test]
    fn dual_axis_chart_writes_png_and_svg() {
        let t: Vec<f64> = (0..=300).map(f64::from).collect();
        // Invented bell-shaped dynamic pressure and a rising axial acceleration.
        let q_kpa: Vec<f64> = t
            .iter()
            .map(|s| 32.0 * (-((s - 70.0) / 30.0).powi(2)).exp())
            .collect();
        let accel_g: Vec<f64> = t.iter().map(|s| 1.3 + 3.0 * s / 300.0).collect();
        let left = [Series {
            label: "dynamic pressure",
            y: &q_kpa,
        }];
        let right = [Series {
            label: "axial acceleration",
            y: &accel_g,
        }];
        let markers = [
            Marker {
                x: 70.0,
                label: "max-Q",
            },
            Marker {
                x: 280.0,
                label: "throttle down",
            },
        ];
        let title = "Invented ascent: loads";
        let paths = dual_axis_chart(
            "loads",
            title,
            "time [s]",
            "dynamic pressure [kPa]",
            "axial acceleration [g]",
            &t,
            &left,
            &right,
            &[("q limit", 35.0)],
            &[("g limit", 4.5)],
            &markers,
        )
        .expect("dual chart written");
        check_files(&paths, title);
        let svg = svg_text(&paths);
        for text in [
            "axial acceleration [g]",
            "right axis",
            "q limit 35 kPa",
            "g limit 4.5 g",
        ] {
            assert!(svg.contains(text), "SVG lacks {text}");
        }
        assert!(
            !svg.contains("q limit 35."),
            "limit value printed with noise digits"
        );
        assert_ne!(
            limit_dash(0),
            limit_dash(1),
            "limits in distinct dash styles"
        );
    }

    #[test]
    fn dual_axis_chart_survives_nan_and_empty_input() {
        let t = [0.0, 1.0, 2.0];
        let nan = [f64::NAN; 3];
        let ok = [1.0, 2.0, 3.0];
        let nan_s = [Series {
            label: "nan",
            y: &nan,
        }];
        let ok_s = [Series {
            label: "ok",
            y: &ok,
        }];
        let paths = dual_axis_chart(
            "right-only",
            "Right only",
            "t",
            "l",
            "r",
            &t,
            &nan_s,
            &ok_s,
            &[],
            &[],
            &[],
        )
        .expect("right-only chart");
        assert!(!svg_text(&paths).contains("no data"));
        let paths = dual_axis_chart(
            "empty",
            "Empty dual",
            "t",
            "l",
            "r",
            &[],
            &[],
            &[],
            &[],
            &[],
            &[],
        )
        .expect("empty dual chart");
        assert!(svg_text(&paths).contains("no data"));
    }

    #[test]
    fn waterfall_writes_png_and_svg() {
        let steps = [
            ("gravity loss", -1350.0),
            ("drag loss", -140.0),
            ("steering loss", -60.0),
            ("Earth rotation gain", 408.0),
        ];
        let title = "Invented ΔV budget";
        let paths = waterfall(
            "budget",
            title,
            "speed [m/s]",
            ("ideal ΔV", 9400.0),
            &steps,
            "inertial speed at cutoff",
        )
        .expect("waterfall written");
        check_files(&paths, title);
        let svg = svg_text(&paths);
        // 9400 − 1350 − 140 − 60 + 408 = 8258 (arithmetic on the invented inputs).
        for text in ["9400", "-1350", "+408", "8258", "ideal ΔV"] {
            assert!(svg.contains(text), "SVG lacks {text}");
        }
    }

    #[test]
    fn a_budget_waterfall_starts_near_the_final_speed_with_one_precision() {
        let bars = waterfall_bars(
            ("ideal", 9594.6),
            &[
                ("gravity", -1695.7),
                ("steering", -6.73),
                ("rotation", 2.667),
            ],
            "final",
        );
        // Lowest step 7895 (9594.6 − 1695.7 − 6.73 + 2.667 = 7894.8): the axis starts at a
        // round value below it, far above zero.
        let y = bar_range(&bars);
        assert_relative_eq!(y.start, 7000.0);
        assert_eq!(bar_decimals(&bars, 4.0), 1);
        assert_eq!(bars[2].value_text(1), "-6.7");
        assert_eq!(bars[3].value_text(1), "+2.7");
        // Large losses keep the zero line.
        let deep = waterfall_bars(("ideal", 100.0), &[("loss", -90.0)], "end");
        assert_relative_eq!(bar_range(&deep).start, 0.0);
        let paths =
            bar_chart("bars", "Bars", "kg", &[("a", -3.0), ("b", 5.0)], true).expect("bar chart");
        assert!(svg_text(&paths).contains("+5.0"));
    }

    #[test]
    fn long_legend_entries_wrap_and_units_come_from_the_axis() {
        assert_eq!(axis_unit("dynamic pressure [kPa]"), " kPa");
        assert_eq!(axis_unit("Mach"), "");
        let x = [0.0, 1.0];
        let y = [0.0, 1.0];
        let series = [Series {
            label: "flight-path angle (Earth-relative)",
            y: &y,
        }];
        let paths = line_chart("wrap", "Wrap", "x", "y", &x, &series, &[], &[]).expect("chart");
        let svg = svg_text(&paths);
        assert!(svg.contains("flight-path angle (Earth-") && svg.contains("relative)"));
        assert!(
            !svg.contains("(Earth-relative)"),
            "the entry is drawn on two lines"
        );
        assert!(!svg.contains('…'), "a wrapped legend is not cut");
    }

    #[test]
    fn waterfall_bars_carry_the_running_total() {
        let bars = waterfall_bars(
            ("start", 100.0),
            &[("loss", -30.0), ("bad", f64::NAN), ("gain", 5.0)],
            "end",
        );
        assert_eq!(bars.len(), 5);
        // Running totals by hand: 100 → 70 → 70 (NaN skipped) → 75.
        let tops: Vec<f64> = bars.iter().map(|b| b.to).collect();
        for (got, want) in tops.iter().zip([100.0, 70.0, 70.0, 75.0, 75.0]) {
            assert_relative_eq!(*got, want);
        }
        assert_relative_eq!(bars[1].from, 100.0);
        assert!(bars[2].value.is_none());
        assert_eq!(bars[2].value_text(0), "n/a");
        assert_eq!(bars[3].value_text(0), "+5");
        assert_eq!(bars[1].value_text(1), "-30.0");
        assert_eq!(bars[1].color(), LOSS);
        assert_eq!(bars[3].color(), GAIN);
    }

    #[test]
    fn waterfall_survives_nan_and_empty_input() {
        let paths = waterfall(
            "nan",
            "NaN budget",
            "m/s",
            ("start", f64::NAN),
            &[("x", f64::INFINITY)],
            "end",
        )
        .expect("nan waterfall");
        assert!(svg_text(&paths).contains("no data"));
        let paths =
            waterfall("empty", "Bare budget", "m/s", ("", 0.0), &[], "").expect("empty waterfall");
        assert!(!svg_text(&paths).contains("no data"));
        let paths = waterfall(
            "neg",
            "Negative budget",
            "m/s",
            ("start", 50.0),
            &[("loss", -400.0)],
            "end",
        )
        .expect("negative waterfall");
        assert!(svg_text(&paths).contains("-350"));
    }

    #[test]
    fn drawing_is_in_memory_and_repeatable() {
        let x = [0.0, 1.0, 2.0];
        let y = [0.0, 1.0, 4.0];
        let series = [Series { label: "y", y: &y }];
        let a = line_chart("same", "Same", "x", "y", &x, &series, &[], &[]).expect("drawn");
        let b = line_chart("same", "Same", "x", "y", &x, &series, &[], &[]).expect("drawn");
        assert_eq!(a, b, "the same chart must give the same bytes");
        assert_eq!(a[0].name, "same.png");
        assert_eq!(a[1].name, "same.svg");
    }

    #[test]
    fn runs_break_at_bad_values() {
        let x = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0];
        let y = [0.0, 1.0, f64::NAN, 3.0, 4.0, 2e300];
        let runs = finite_runs(&x, &y);
        assert_eq!(runs.iter().map(Vec::len).collect::<Vec<_>>(), vec![2, 2]);
        assert_relative_eq!(runs[1][0].1, 3.0);
        // Linear interpolation halfway between (3, 3) and (4, 4).
        assert_eq!(
            value_at(&runs, 3.5).map(|v| (v * 1e9).round() / 1e9),
            Some(3.5)
        );
        assert_eq!(value_at(&runs, 2.0), None);
    }

    #[test]
    fn overlong_labels_are_cut_to_fit() {
        let long = "very long label ".repeat(40);
        let x = [0.0, 1.0];
        let y = [0.0, 1.0];
        let series = [Series {
            label: &long,
            y: &y,
        }];
        let markers = [Marker {
            x: 0.5,
            label: &long,
        }];
        let limits = [(long.as_str(), 0.5)];
        let paths = line_chart("long", &long, &long, &long, &x, &series, &limits, &markers)
            .expect("long-label chart");
        let svg = svg_text(&paths);
        assert!(
            !svg.contains(long.trim_end()),
            "an overlong label was drawn whole"
        );
        assert!(
            svg.contains("very long label very"),
            "cut labels keep their start"
        );
        assert!(svg.contains('…'), "cut labels end with an ellipsis");
        let steps = [(long.as_str(), -1.0)];
        waterfall("long-bars", &long, &long, (&long, 10.0), &steps, &long)
            .expect("long-label waterfall");
    }

    #[test]
    fn fifteen_trade_bars_keep_their_names_whole() {
        // The small demo's trade: 15 bars in 1200 px; the longest names need six lines at the
        // smallest size (they were cut with "…" at five); the steps carry their units.
        let names = [
            "Azalea first stage dry mass (+20 kg)",
            "Azalea first stage propellant (+200 kg)",
            "Azalea first stage vacuum Isp (+1 s)",
            "Azalea first stage vacuum thrust (+4.2 kN)",
            "Azalea second stage dry mass (+6 kg)",
            "Azalea second stage propellant (+45 kg)",
            "Azalea second stage vacuum Isp (+1 s)",
            "Azalea second stage vacuum thrust (+0.9)",
            "Azalea kick stage dry mass (+2.5 kg)",
            "Azalea kick stage propellant (+8 kg)",
            "Azalea kick stage vacuum Isp (+1 s)",
            "Azalea kick stage vacuum thrust (+0.12 kN)",
            "drag coefficient (+5 % of C_D)",
            "payload fairing mass (+1.2 kg)",
            "last-stage reserve (+1 kg)",
        ];
        let bars: Vec<(&str, f64)> = names
            .iter()
            .enumerate()
            .map(|(i, n)| (*n, i as f64 - 7.0))
            .collect();
        let paths = bar_chart("trade", "Trade", "margin change [kg]", &bars, true).expect("bars");
        let svg = svg_text(&paths);
        assert!(!svg.contains('…'), "a bar name was cut");
        // The step and its unit may fall on two lines of the wrapped name.
        assert!(svg.contains("(+0.9") && svg.contains("kN)") && svg.contains("coefficient"));
        assert!(svg.contains("C_D)"), "the unit of the C_D step");
    }

    #[test]
    fn numbers_print_without_noise() {
        assert_eq!(fmt_num(35.0), "35");
        assert_eq!(fmt_num(4.5), "4.5");
        assert_eq!(fmt_num(8258.3), "8258");
        assert_eq!(fmt_num(-0.012_345), "-0.01235");
        assert_eq!(fmt_num(-0.000_123_4), "-1.234e-4");
        assert_eq!(fmt_num(0.0), "0");
        let ticks = tick_format(0.0..400.0);
        assert_eq!(
            (ticks(&50.0), ticks(&-0.0)),
            ("50".to_string(), "0".to_string())
        );
        let ticks = tick_format(0.8..4.3);
        assert_eq!(
            (ticks(&1.5), ticks(&2.0)),
            ("1.5".to_string(), "2".to_string())
        );
        assert_eq!(tick_format(-1e300..1e300)(&5e299), "5.000e299");
    }

    #[test]
    fn bounds_pad_and_open_flat_ranges() {
        let r = Bounds::of([0.0, 10.0].into_iter()).padded(0.1, 0.0);
        assert_relative_eq!(r.start, -1.0);
        assert_relative_eq!(r.end, 11.0);
        // A top band of 25 % of the final height: the padded span 12 becomes 16.
        let r = Bounds::of([0.0, 10.0].into_iter()).padded(0.1, 0.25);
        assert_relative_eq!(r.end, 15.0);
        let r = Bounds::of([50.0].into_iter()).padded(0.0, 0.0);
        assert_relative_eq!(r.start, 47.5);
        assert_relative_eq!(r.end, 52.5);
        let r = Bounds::of([f64::NAN].into_iter()).padded(0.05, 0.0);
        assert_relative_eq!(r.end - r.start, 1.0);
    }
}
