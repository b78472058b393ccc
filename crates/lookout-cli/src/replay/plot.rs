//! `--plot FILE.svg|FILE.png`: per output, the f64 observer's innovations
//! over time with the ±z·σ band they stay in with the stated confidence (σ
//! from the design's predicted innovation covariance, else from the data),
//! and their normalised autocorrelation with Mehra's band (a white sequence
//! stays inside it at each lag with the stated confidence).

use super::{LEVEL, Replay};
use crate::error::CliError;
use crate::sim::plot::{Drawing, check_path, render, tick};
use lookout_design::Design;
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::Path;

const ROW_HEIGHT: u32 = 300;

struct ReplayPlot<'a>(&'a Design, &'a Replay);

/// Writes the plot (format from the extension).
pub fn write(path: &Path, font: Option<&Path>, d: &Design, r: &Replay) -> Result<(), CliError> {
    let png = check_path(path, d.p())?;
    let height = ROW_HEIGHT * d.p() as u32 + 60;
    render(path, font, png, height, &ReplayPlot(d, r))
}

impl Drawing for ReplayPlot<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), String> {
        let (d, r) = (self.0, self.1);
        let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
        root.fill(&WHITE).map_err(e)?;
        let (top, body) = root.split_vertically(50);
        let title = format!(
            "{}: f64 innovations with their {:.0} % band, and their autocorrelation with Mehra's band",
            d.model.name,
            LEVEL * 100.0
        );
        top.titled(&title, ("sans-serif", 20)).map_err(e)?;
        let (_, outputs) = super::log::column_names(d);
        let rows = body.split_evenly((d.p(), 2));
        for (j, name) in outputs.iter().enumerate() {
            let (Some(left), Some(right)) = (rows.get(2 * j), rows.get(2 * j + 1)) else {
                continue;
            };
            innovation_panel(left, d, r, j, name)?;
            correlation_panel(right, r, j, name)?;
        }
        Ok(())
    }
}

fn innovation_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    d: &Design,
    r: &Replay,
    j: usize,
    name: &str,
) -> Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    let Some(f) = r.formats.first() else {
        return Ok(());
    };
    let t = d.model.sample_period;
    let points: Vec<(f64, f64)> = (0..r.traj.steps)
        .filter_map(|k| {
            f.innovations
                .get(k)
                .and_then(|v| v.get(j))
                .map(|v| (k as f64 * t, *v))
        })
        .collect();
    let sigma = r
        .predicted
        .as_ref()
        .map(|s| s[(j, j)])
        .or_else(|| f.summary.as_ref().map(|s| s.covariance[(j, j)]))
        .unwrap_or(0.0)
        .sqrt();
    let z = lookout_design::replay::normal_quantile(LEVEL).unwrap_or(2.0);
    let band = z * sigma;
    let hi = points
        .iter()
        .fold(band, |m, p| m.max(p.1.abs()))
        .max(1e-300);
    let end = r.traj.steps as f64 * t;
    let mut chart = ChartBuilder::on(area)
        .margin(10)
        .caption(format!("innovation {name}"), ("sans-serif", 16))
        .x_label_area_size(36)
        .y_label_area_size(80)
        .build_cartesian_2d(0.0..end, -hi * 1.05..hi * 1.05)
        .map_err(e)?;
    chart
        .configure_mesh()
        .x_desc("time (s)")
        .y_label_formatter(&|v| tick(*v, 2.0 * hi))
        .draw()
        .map_err(e)?;
    chart
        .draw_series(
            points
                .iter()
                .map(|&p| Circle::new(p, 1, RGBColor(40, 90, 170).filled())),
        )
        .map_err(e)?;
    for level in [band, -band] {
        chart
            .draw_series(LineSeries::new(
                [(0.0, level), (end, level)],
                RED.stroke_width(2),
            ))
            .map_err(e)?;
    }
    Ok(())
}

fn correlation_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    r: &Replay,
    j: usize,
    name: &str,
) -> Result<(), String> {
    let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
    let Some(w) = r.formats.first().and_then(|f| f.whiteness.as_ref()) else {
        return Ok(());
    };
    let rho: Vec<(f64, f64)> = w
        .correlation
        .iter()
        .enumerate()
        .map(|(k, c)| ((k + 1) as f64, c[(j, j)]))
        .collect();
    let hi = rho.iter().fold(w.band, |m, p| m.max(p.1.abs())) * 1.1;
    let lags = w.lags as f64 + 0.5;
    let mut chart = ChartBuilder::on(area)
        .margin(10)
        .caption(format!("autocorrelation of {name}"), ("sans-serif", 16))
        .x_label_area_size(36)
        .y_label_area_size(60)
        .build_cartesian_2d(0.5..lags, -hi..hi)
        .map_err(e)?;
    chart
        .configure_mesh()
        .x_desc("lag (samples)")
        .draw()
        .map_err(e)?;
    chart
        .draw_series(rho.iter().map(|&(k, v)| {
            PathElement::new(
                vec![(k, 0.0), (k, v)],
                RGBColor(40, 90, 170).stroke_width(3),
            )
        }))
        .map_err(e)?;
    for level in [w.band, -w.band] {
        chart
            .draw_series(LineSeries::new(
                [(0.5, level), (lags, level)],
                RED.stroke_width(2),
            ))
            .map_err(e)?;
    }
    Ok(())
}
