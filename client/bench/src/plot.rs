//! The performance plot (SVG, drawn with plotters): evaluation cost per value against batch
//! size, and population-solve cost per point against the number of levels, each beside the
//! numpy / scipy baselines measured in the same run.

use super::measure::Failure;
use plotters::prelude::*;
use serde_json::Value;
use std::path::Path;

/// (x, y) pairs of `key_x`, `key_y` from the objects of the array at `pointer`.
fn series(v: &Value, pointer: &str, key_x: &str, key_y: &str, scale: f64) -> Vec<(f64, f64)> {
    v.pointer(pointer)
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
        .filter_map(|p| Some((p.get(key_x)?.as_f64()?, p.get(key_y)?.as_f64()? * scale)))
        .filter(|&(x, y)| x > 0.0 && y > 0.0)
        .collect()
}

/// The smallest and largest y over all series, widened to whole decades.
fn decades(all: &[&[(f64, f64)]]) -> (f64, f64) {
    let ys = all.iter().flat_map(|s| s.iter().map(|p| p.1));
    let (lo, hi) = ys.fold((f64::INFINITY, 0.0f64), |(lo, hi), y| (lo.min(y), hi.max(y)));
    if !lo.is_finite() {
        return (1.0, 10.0);
    }
    (10f64.powf(lo.log10().floor()), 10f64.powf(hi.log10().ceil()))
}

/// An axis label without trailing zeros: 1, 10, 1e+03 ... or 0.5.
fn compact(v: f64) -> String {
    if (1e-2..1e4).contains(&v) {
        let s = format!("{v:.2}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{v:.0e}")
    }
}

type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::combinators::LogCoord<f64>, plotters::coord::combinators::LogCoord<f64>>,
>;

fn line(
    chart: &mut Chart<'_, '_>,
    points: &[(f64, f64)],
    colour: RGBColor,
    label: &str,
) -> Result<(), Failure> {
    if points.is_empty() {
        return Ok(());
    }
    chart
        .draw_series(LineSeries::new(points.iter().copied(), colour.stroke_width(2)))?
        .label(label)
        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2)));
    chart.draw_series(points.iter().map(|&p| Circle::new(p, 3, colour.filled())))?;
    Ok(())
}

/// Draws both panels into `path`.
pub(crate) fn draw(path: &Path, rust: &Value, core: &Value, py: &Value) -> Result<(), Failure> {
    let root = SVGBackend::new(path, (1200, 500)).into_drawing_area();
    root.fill(&WHITE)?;
    let (left, right) = root.split_horizontally(600);

    let ours = series(rust, "/evaluation/batch_curve", "batch", "seconds_per_value", 1e9);
    let rule = series(
        rust,
        "/evaluation/batch_curve",
        "batch",
        "rule_seconds_per_value",
        1e9,
    );
    let interp = series(
        py,
        "/evaluation/batch_curve",
        "batch",
        "interp_seconds_per_value",
        1e9,
    );
    let spline = series(
        py,
        "/evaluation/batch_curve",
        "batch",
        "cubic_spline_seconds_per_value",
        1e9,
    );
    let (lo, hi) = decades(&[&ours, &rule, &interp, &spline]);
    let x_max = ours.iter().map(|p| p.0).fold(10.0, f64::max);
    let mut chart = ChartBuilder::on(&left)
        .caption(
            "Evaluation cost per value vs batch size (one table)",
            ("sans-serif", 18),
        )
        .margin(15)
        .x_label_area_size(45)
        .y_label_area_size(65)
        .build_cartesian_2d((1f64..x_max).log_scale(), (lo..hi).log_scale())?;
    chart
        .configure_mesh()
        .x_labels(8)
        .y_labels(8)
        .x_label_formatter(&|x| compact(*x))
        .y_label_formatter(&|y| compact(*y))
        .x_desc("temperatures per call")
        .y_desc("ns per value")
        .draw()?;
    line(
        &mut chart,
        &ours,
        RGBColor(200, 30, 30),
        "ratewell client library (monotone cubic)",
    )?;
    line(
        &mut chart,
        &rule,
        RGBColor(230, 140, 20),
        "ratewell rule, RateTable::evaluate_into",
    )?;
    line(
        &mut chart,
        &interp,
        RGBColor(30, 90, 200),
        "numpy.interp (linear, log-log)",
    )?;
    line(&mut chart, &spline, RGBColor(30, 150, 60), "scipy CubicSpline")?;
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()?;

    let engine = series(core, "/solves/rows", "levels", "engine_seconds_per_point", 1e6);
    let workspace = series(core, "/solves/rows", "levels", "workspace_seconds_per_point", 1e6);
    let numpy = series(py, "/solves", "levels", "seconds_per_point", 1e6);
    let (lo, hi) = decades(&[&engine, &workspace, &numpy]);
    let mut chart = ChartBuilder::on(&right)
        .caption(
            "Population solve cost per (Te, ne) point vs levels",
            ("sans-serif", 18),
        )
        .margin(15)
        .x_label_area_size(45)
        .y_label_area_size(65)
        .build_cartesian_2d((4f64..250f64).log_scale(), (lo..hi).log_scale())?;
    chart
        .configure_mesh()
        .x_labels(6)
        .y_labels(8)
        .x_label_formatter(&|x| compact(*x))
        .y_label_formatter(&|y| compact(*y))
        .x_desc("levels N")
        .y_desc("microseconds per point")
        .draw()?;
    line(
        &mut chart,
        &engine,
        RGBColor(200, 30, 30),
        "ratewell engine (rates, solve, lines; 2 threads)",
    )?;
    line(
        &mut chart,
        &workspace,
        RGBColor(230, 140, 20),
        "ratewell workspace (assembly + solve; 1 thread)",
    )?;
    line(
        &mut chart,
        &numpy,
        RGBColor(30, 90, 200),
        "numpy.linalg.solve, stacked (assembly + solve)",
    )?;
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()?;
    root.present()?;
    Ok(())
}
