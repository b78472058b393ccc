//! `--plot FILE.svg|FILE.png`: the estimation error of each state over time
//! for each format (one panel per state), and the pole map.
//!
//! Text needs a TrueType font (plotters lays text out with it, for SVG as
//! well): `--font FILE`, else DejaVu Sans or Liberation Sans where the
//! system has them (Debian: `fonts-dejavu-core`).

use super::RunResult;
use super::output::state_units;
use crate::error::CliError;
use lookout_design::Design;
use nalgebra::Complex;
use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use std::path::Path;
use std::sync::OnceLock;

/// Fonts tried when `--font` is not given.
const FONT_PATHS: &[&str] = &[
    "/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf",
    "/usr/share/fonts/TTF/DejaVuSans.ttf",
    "/usr/share/fonts/dejavu/DejaVuSans.ttf",
    "/usr/share/fonts/truetype/liberation/LiberationSans-Regular.ttf",
    "/Library/Fonts/Arial.ttf",
    "C:\\Windows\\Fonts\\arial.ttf",
];

/// Largest font file read (bytes).
const MAX_FONT_BYTES: u64 = 64 << 20;

/// Width of every plot (pixels).
pub const WIDTH: u32 = 1400;
const PANEL_HEIGHT: u32 = 260;

/// One colour and stroke per format: the f64 reference wide and pale, the
/// others narrow on top of it, so coinciding curves stay visible.
fn style(i: usize) -> ShapeStyle {
    let (colour, width) = match i {
        0 => (RGBColor(150, 190, 240), 6),
        1 => (RGBColor(220, 120, 20), 2),
        2 => (RGBColor(30, 30, 30), 1),
        _ => (RGBColor(200, 20, 120), 1),
    };
    colour.stroke_width(width)
}

fn register_font(font: Option<&Path>) -> Result<(), CliError> {
    static LOADED: OnceLock<Result<(), String>> = OnceLock::new();
    LOADED
        .get_or_init(|| {
            let candidates: Vec<&Path> = match font {
                Some(p) => vec![p],
                None => FONT_PATHS.iter().map(Path::new).collect(),
            };
            let (path, bytes) = candidates
                .iter()
                .find_map(|p| {
                    lookout_design::emit::read_limited(p, MAX_FONT_BYTES)
                        .ok()
                        .map(|b| (*p, b))
                })
                .ok_or_else(|| match font {
                    Some(p) => format!("--font {}: cannot read it", p.display()),
                    None => "the plot needs a TrueType font: none of the usual system fonts was found; pass --font FILE.ttf".to_string(),
                })?;
            // Read once per process; plotters keeps the font for the
            // program's lifetime.
            let bytes: &'static [u8] = Box::leak(bytes.into_boxed_slice());
            plotters::style::register_font("sans-serif", FontStyle::Normal, bytes)
                .map_err(|_| format!("{}: not a usable TrueType font", path.display()))
        })
        .clone()
        .map_err(CliError::BadInput)
}

/// Most states one plot shows (one panel each; the image grows with them).
pub const MAX_PLOT_STATES: usize = 64;

/// Whether `--plot path` names a PNG (else an SVG) file; refused unless it
/// ends in .svg or .png (either case) and the design has at most
/// [`MAX_PLOT_STATES`] states.
pub fn check_path(path: &Path, n: usize) -> Result<bool, CliError> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    let png = match ext.as_deref() {
        Some("svg") => false,
        Some("png") => true,
        _ => {
            return Err(CliError::BadInput(format!(
                "--plot {}: the file name must end in .svg or .png",
                path.display()
            )));
        }
    };
    if n > MAX_PLOT_STATES {
        return Err(CliError::BadInput(format!(
            "--plot: {n} states are too many for one plot (at most {MAX_PLOT_STATES}); use --csv"
        )));
    }
    Ok(png)
}

/// Writes the plot; the format follows the file's extension (either case).
pub fn write(path: &Path, font: Option<&Path>, d: &Design, r: &RunResult) -> Result<(), CliError> {
    let n = d.n();
    let png = check_path(path, n)?;
    // The right column holds two square pole charts of 460 px.
    let height = (PANEL_HEIGHT * n.max(2) as u32 + 60).max(2 * 460 + 60);
    render(path, font, png, height, &RunPlot(d, r))
}

struct RunPlot<'a>(&'a Design, &'a RunResult);

impl Drawing for RunPlot<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        draw(root, self.0, self.1)
    }
}

/// A picture that can be drawn on either backend.
pub trait Drawing {
    /// Draws on `root`.
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String>;
}

/// Draws `what` at [`WIDTH`] × `height` with the font registered, in memory,
/// and writes it whole through [`lookout_design::emit::write_file`] (never
/// through a device, FIFO or directory; never half written): PNG when `png`,
/// else SVG.
pub fn render(
    path: &Path,
    font: Option<&Path>,
    png: bool,
    height: u32,
    what: &impl Drawing,
) -> Result<(), CliError> {
    register_font(font)?;
    let fail =
        |e: String| CliError::Failure(format!("{}: cannot draw the plot: {e}", path.display()));
    let bytes = if png {
        let mut rgb = vec![0_u8; WIDTH as usize * height as usize * 3];
        {
            let root = BitMapBackend::with_buffer(&mut rgb, (WIDTH, height)).into_drawing_area();
            what.draw(&root).map_err(fail)?;
            root.present().map_err(|e| fail(e.to_string()))?;
        }
        let mut out = Vec::new();
        image::ImageEncoder::write_image(
            image::codecs::png::PngEncoder::new(&mut out),
            &rgb,
            WIDTH,
            height,
            image::ColorType::Rgb8,
        )
        .map_err(|e| fail(format!("PNG encoding failed: {e}")))?;
        out
    } else {
        let mut svg = String::new();
        {
            let root = SVGBackend::with_string(&mut svg, (WIDTH, height)).into_drawing_area();
            what.draw(&root).map_err(fail)?;
            root.present().map_err(|e| fail(e.to_string()))?;
        }
        svg.into_bytes()
    };
    lookout_design::emit::write_file(path, &bytes)
        .map(|_| ())
        .map_err(CliError::from)
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    d: &Design,
    r: &RunResult,
) -> Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    root.fill(&WHITE).map_err(e)?;
    let title = format!(
        "{}: estimation error (true state − estimate) per number format, {} steps of {} s",
        d.model.name, r.traj.steps, d.model.sample_period
    );
    let (top, body) = root.split_vertically(50);
    top.titled(&title, ("sans-serif", 22)).map_err(e)?;
    let (left, right) = body.split_horizontally(WIDTH - 470);
    let panels = left.split_evenly((d.n(), 1));
    let names = d.state_names();
    let units = state_units(d);
    let t = d.model.sample_period;
    let n = r.traj.n;
    for (i, area) in panels.iter().enumerate() {
        let series: Vec<Vec<(f64, f64)>> = r
            .formats
            .iter()
            .map(|(run, _)| {
                r.traj
                    .truth
                    .iter()
                    .skip(i)
                    .step_by(n)
                    .zip(run.estimate.iter().skip(i).step_by(n))
                    .enumerate()
                    .map(|(k, (x, xh))| (k as f64 * t, x - xh))
                    .collect()
            })
            .collect();
        let (lo, hi) = series
            .iter()
            .flatten()
            .filter(|p| p.1.is_finite())
            .fold((0.0f64, 0.0f64), |(lo, hi), p| (lo.min(p.1), hi.max(p.1)));
        let pad = ((hi - lo) * 0.08).max(1e-12);
        // Headroom above the data for the legend, so it hides no curve.
        let room = (hi - lo).max(1e-12) * 0.5;
        let unit = units.get(i).cloned().unwrap_or_default();
        let name = names.get(i).cloned().unwrap_or_default();
        let mut chart = ChartBuilder::on(area)
            .margin(10)
            .caption(name, ("sans-serif", 18))
            .x_label_area_size(40)
            .y_label_area_size(90)
            .build_cartesian_2d(0.0..r.traj.steps as f64 * t, (lo - pad)..(hi + room))
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_desc("time (s)")
            .y_desc(if unit.is_empty() {
                "error".to_string()
            } else {
                format!("error ({unit})")
            })
            .y_label_formatter(&|v| tick(*v, hi - lo))
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(e)?;
        for (j, ((run, m), points)) in r.formats.iter().zip(series).enumerate() {
            let s = style(j);
            let dev = m.max_deviation_from_f64.get(i).copied().unwrap_or(0.0);
            let label = if j == 0 {
                run.format.name().to_string()
            } else {
                let unit = if unit.is_empty() {
                    String::new()
                } else {
                    format!(" {unit}")
                };
                format!(
                    "{} (largest deviation from f64: {dev:.1e}{unit})",
                    run.format.name()
                )
            };
            chart
                .draw_series(LineSeries::new(points, s))
                .map_err(e)?
                .label(label)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], s));
        }
        marks(&mut chart, r, t, lo - pad).map_err(e)?;
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font(("sans-serif", 14))
            .draw()
            .map_err(e)?;
    }
    pole_map(&right.margin(10, 10, 10, 10), d).map_err(|x| x.to_string())
}

/// Steps with any reading dropped or an outlier, and steps the f64
/// observer gated.
fn event_steps(r: &RunResult) -> [(Vec<usize>, RGBColor, &'static str); 3] {
    let p = r.traj.p.max(1);
    let any = |flags: &[bool]| -> Vec<usize> {
        flags
            .chunks(p)
            .enumerate()
            .filter(|(_, c)| c.iter().any(|&f| f))
            .map(|(k, _)| k)
            .collect()
    };
    let dropped: Vec<bool> = r.traj.valid.iter().map(|v| !v).collect();
    let gated = r
        .formats
        .first()
        .map(|(run, _)| run.gated_steps.clone())
        .unwrap_or_default();
    [
        (any(&dropped), RGBColor(140, 140, 140), "reading dropped"),
        (any(&r.traj.outlier), RGBColor(240, 150, 0), "outlier"),
        (gated, RGBColor(200, 0, 0), "gated (f64)"),
    ]
}

/// Short ticks along the bottom of an error panel at the dropped, outlying
/// and gated readings (one row each, in the legend when any occur).
fn marks<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    r: &RunResult,
    t: f64,
    bottom: f64,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    for (row, (steps, colour, label)) in event_steps(r).into_iter().enumerate() {
        if steps.is_empty() {
            continue;
        }
        let offset = 4 + 8 * i32::try_from(row).unwrap_or(0);
        chart
            .draw_series(steps.iter().map(|&k| {
                EmptyElement::at((k as f64 * t, bottom))
                    + PathElement::new(vec![(0, -offset), (0, -offset - 6)], colour.stroke_width(2))
            }))?
            .label(format!("{label} ({})", steps.len()))
            .legend(move |(x, y)| {
                PathElement::new(
                    vec![(x + 10, y - 5), (x + 10, y + 5)],
                    colour.stroke_width(2),
                )
            });
    }
    Ok(())
}

/// Tick label for an axis spanning `span`: plain decimals with as many
/// digits as the span needs, scientific notation for very small or large
/// values.
pub fn tick(v: f64, span: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let span = if span > 0.0 { span } else { v.abs() };
    if v.abs() >= 1e4 || span < 1e-3 {
        return format!("{v:.2e}");
    }
    let digits = (2.0 - span.log10().floor()).clamp(0.0, 6.0) as usize;
    format!("{v:.digits$}")
}

/// The pole map: the whole unit disc on top, below it a square zoom on the
/// poles (they crowd near z = 1 at fast sampling).
fn pole_map<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    d: &Design,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    let mut all: Vec<Complex<f64>> = d
        .plant_poles
        .iter()
        .chain(&d.error_poles)
        .copied()
        .collect();
    if let Some(f) = &d.fixed_point {
        all.extend(f.error_poles.iter().copied());
    }
    let reach = all.iter().map(|z| z.norm()).fold(1.0, f64::max) * 1.15;
    let side = area.dim_in_pixel().0;
    let (full, rest) = area.split_vertically(side);
    pole_chart(
        &full,
        d,
        (-reach, reach),
        (-reach, reach),
        "poles (z-plane)",
        false,
    )?;
    let (re_lo, re_hi, im_lo, im_hi) = all.iter().fold(
        (
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::INFINITY,
            f64::NEG_INFINITY,
        ),
        |(a, b, c, e), z| (a.min(z.re), b.max(z.re), c.min(z.im), e.max(z.im)),
    );
    let half = ((re_hi - re_lo).max(im_hi - im_lo) * 0.6).max(0.01);
    let (cx, cy) = ((re_lo + re_hi) / 2.0, (im_lo + im_hi) / 2.0);
    let zoom_side = rest.dim_in_pixel().0.min(rest.dim_in_pixel().1);
    let (zoom, _) = rest.split_vertically(zoom_side);
    // Square, with the poles in the lower part and a band above them for
    // the legend.
    pole_chart(
        &zoom,
        d,
        (cx - 1.5 * half, cx + 1.5 * half),
        (cy - 1.0 * half, cy + 2.0 * half),
        "zoom on the poles",
        true,
    )
}

fn pole_chart<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    d: &Design,
    x: (f64, f64),
    y: (f64, f64),
    caption: &str,
    legend: bool,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    let span = x.1 - x.0;
    let mut chart = ChartBuilder::on(area)
        .caption(caption, ("sans-serif", 18))
        .margin(5)
        .x_label_area_size(40)
        .y_label_area_size(60)
        .build_cartesian_2d(x.0..x.1, y.0..y.1)?;
    chart
        .configure_mesh()
        .x_desc("Re z")
        .y_desc("Im z")
        .x_labels(5)
        .y_labels(5)
        .x_label_formatter(&|v| tick(*v, span))
        .y_label_formatter(&|v| tick(*v, span))
        .label_style(("sans-serif", 14))
        .axis_desc_style(("sans-serif", 15))
        .draw()?;
    // Only the points inside the view, so the circle is clipped cleanly.
    let circle: Vec<(f64, f64)> = (0..=20_000)
        .map(|k| {
            // From −π to π: an arc around z = 1 is one unbroken run of points.
            let a = (k as f64 / 20_000.0 - 0.5) * std::f64::consts::TAU;
            (a.cos(), a.sin())
        })
        .filter(|p| p.0 >= x.0 && p.0 <= x.1 && p.1 >= y.0 && p.1 <= y.1)
        .collect();
    chart
        .draw_series(LineSeries::new(circle, BLACK.stroke_width(1)))?
        .label("unit circle")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK));
    let blue = RGBColor(30, 90, 200);
    let red = RGBColor(210, 40, 40);
    let green = RGBColor(20, 140, 60);
    chart
        .draw_series(
            d.plant_poles
                .iter()
                .map(|z| Cross::new((z.re, z.im), 8, blue.stroke_width(2))),
        )?
        .label("plant poles (eig Ad)")
        .legend(move |(x, y)| Cross::new((x + 10, y), 6, blue.stroke_width(2)));
    // Filled: an open circle means a zero to control engineers.
    chart
        .draw_series(
            d.error_poles
                .iter()
                .map(|z| Circle::new((z.re, z.im), 6, red.filled())),
        )?
        .label("designed error poles (eig F; ×k: repeated k times)")
        .legend(move |(x, y)| Circle::new((x + 10, y), 5, red.filled()));
    chart.draw_series(repeated(&d.error_poles).into_iter().map(|(z, k)| {
        EmptyElement::at((z.re, z.im))
            + Text::new(
                format!("×{k}"),
                (8, -18),
                ("sans-serif", 14).into_font().color(&red),
            )
    }))?;
    if let Some(fixed) = &d.fixed_point {
        let name = lookout_design::fixed_point::format_name(fixed.format);
        chart
            .draw_series(
                fixed
                    .error_poles
                    .iter()
                    .map(|z| TriangleMarker::new((z.re, z.im), 5, green.filled())),
            )?
            .label(format!("quantised error poles ({name})"))
            .legend(move |(x, y)| TriangleMarker::new((x + 10, y), 5, green.filled()));
    }
    if legend {
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font(("sans-serif", 14))
            .draw()?;
    }
    Ok(())
}

/// Poles that occur more than once (within 1e-9 of the unit circle's
/// scale, relative), with their multiplicity.
fn repeated(poles: &[Complex<f64>]) -> Vec<(Complex<f64>, usize)> {
    let mut groups: Vec<(Complex<f64>, usize)> = Vec::new();
    for z in poles {
        match groups
            .iter_mut()
            .find(|(g, _)| (g - z).norm() <= 1e-9 * g.norm().max(1.0))
        {
            Some((_, k)) => *k += 1,
            None => groups.push((*z, 1)),
        }
    }
    groups.retain(|&(_, k)| k > 1);
    groups
}
