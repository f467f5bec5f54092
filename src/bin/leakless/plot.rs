//! SVG plots (plotters' SVG backend: text is SVG text, so no font files are needed): a trace
//! against frequency on a linear or dB amplitude axis and a linear or log frequency axis, with
//! labelled fault cursors whose labels sit in a strip above the plot, clear of the trace and
//! of the axes' labels; and a waterfall (frequency against time, colour for level).

use plotters::coord::ranged1d::{AsRangedCoord, ValueFormatter};
use plotters::prelude::*;

use crate::failure::{Failure, Outcome};

/// `--plot-y`: the amplitude axis.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum AmplitudeAxis {
    /// Decibels re 1 unit (10 log10 for power-like values, 20 log10 for amplitudes)
    Db,
    /// The values themselves
    Linear,
}

/// `--plot-x`: the frequency axis.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum FrequencyAxis {
    /// Linear from 0
    Linear,
    /// Logarithmic from the first line above 0 Hz
    Log,
}

/// The plot options of every subcommand that draws a spectrum.
#[derive(clap::Args, Clone, Debug)]
pub struct PlotArgs {
    /// Amplitude axis of the plot
    #[arg(long, value_name = "AXIS", value_enum, default_value_t = AmplitudeAxis::Db)]
    pub plot_y: AmplitudeAxis,
    /// Frequency axis of the plot
    #[arg(long, value_name = "AXIS", value_enum, default_value_t = FrequencyAxis::Linear)]
    pub plot_x: FrequencyAxis,
    /// Highest frequency shown on the plot, Hz (default: the highest line)
    #[arg(long, value_name = "HZ", value_parser = crate::options::positive_f64)]
    pub plot_max_hz: Option<f64>,
}

/// One trace to draw.
pub struct Trace<'a> {
    /// Title above the plot.
    pub title: &'a str,
    /// The x value of each point (Hz, or orders when `x_label` says so).
    pub x: &'a [f64],
    /// The value of each point, in its linear unit.
    pub values: &'a [f64],
    /// `true`: power-like values (10 log10 on a dB axis); `false`: amplitudes (20 log10).
    pub power_like: bool,
    /// The value axis label for a linear axis, e.g. "rms, m/s^2".
    pub linear_label: &'a str,
    /// The value axis label for a dB axis, e.g. "rms, dB re 1 m/s^2".
    pub db_label: &'a str,
    /// The x axis label, e.g. "frequency, Hz".
    pub x_label: &'a str,
    /// Cursors: (label, x).
    pub cursors: &'a [(String, f64)],
}

const WIDTH: u32 = 1000;
const HEIGHT: u32 = 560;
/// Height of one row of cursor labels, px.
const CURSOR_ROW: u32 = 14;
/// Rows of cursor labels at most; a label that fits no row is listed under the plot.
const CURSOR_ROWS: usize = 4;
/// Width of one character of a 12 px sans-serif label, px, rounded up (a label drawn narrower
/// than this estimate only leaves more room).
const CHAR_WIDTH: f64 = 7.0;

fn plot_error(e: impl std::fmt::Display) -> Failure {
    Failure::runtime(format!("plot: {e}"))
}

/// The trace as an SVG document.
pub fn trace_svg(trace: &Trace<'_>, args: &PlotArgs) -> Outcome<String> {
    let max_x = args
        .plot_max_hz
        .unwrap_or_else(|| trace.x.iter().cloned().fold(0.0, f64::max))
        .max(f64::MIN_POSITIVE);
    let points: Vec<(f64, f64)> = trace
        .x
        .iter()
        .zip(trace.values)
        .filter(|(&x, _)| x <= max_x && (args.plot_x == FrequencyAxis::Linear || x > 0.0))
        .map(|(&x, &v)| (x, to_axis(v, trace.power_like, args.plot_y)))
        .collect();
    if points.is_empty() {
        return Err(Failure::usage(
            "--plot-max-hz: no line at or below it; raise it",
        ));
    }
    let (y_low, y_high) = value_range(&points, args.plot_y);
    let points: Vec<(f64, f64)> = points.into_iter().map(|(x, y)| (x, y.max(y_low))).collect();
    let y_label = match args.plot_y {
        AmplitudeAxis::Db => trace.db_label,
        AmplitudeAxis::Linear => trace.linear_label,
    };
    let mut svg = String::new();
    match args.plot_x {
        FrequencyAxis::Linear => {
            render(&mut svg, trace, &points, 0.0..max_x, y_low..y_high, y_label)?
        }
        FrequencyAxis::Log => {
            let low = points[0].0;
            render(
                &mut svg,
                trace,
                &points,
                (low..max_x.max(low * 1.0001)).log_scale(),
                y_low..y_high,
                y_label,
            )?
        }
    }
    Ok(svg)
}

fn to_axis(value: f64, power_like: bool, axis: AmplitudeAxis) -> f64 {
    match axis {
        AmplitudeAxis::Linear => value,
        AmplitudeAxis::Db => {
            let v = value.abs().max(1e-30);
            if power_like {
                10.0 * v.log10()
            } else {
                20.0 * v.log10()
            }
        }
    }
}

/// The value axis: on dB, 100 dB below the top decade-of-ten or the whole trace if it spans
/// less; on linear, 0 to the top plus 5 %.
fn value_range(points: &[(f64, f64)], axis: AmplitudeAxis) -> (f64, f64) {
    let top = points.iter().map(|p| p.1).fold(f64::MIN, f64::max);
    let floor = points.iter().map(|p| p.1).fold(f64::MAX, f64::min);
    match axis {
        AmplitudeAxis::Db => {
            let top_db = (top / 10.0).ceil() * 10.0;
            let bottom = ((floor / 10.0).floor() * 10.0).max(top_db - 100.0);
            (bottom.min(top_db - 10.0), top_db)
        }
        AmplitudeAxis::Linear => (floor.min(0.0), if top > 0.0 { top * 1.05 } else { 1.0 }),
    }
}

/// Rows for cursor labels: each label goes into the first row where it does not touch the
/// previous label; `None` when no row has room.
fn cursor_rows(pixels: &[(f64, usize)]) -> Vec<Option<usize>> {
    let mut row_end = [f64::MIN; CURSOR_ROWS];
    pixels
        .iter()
        .map(|&(x, chars)| {
            let half = chars as f64 * CHAR_WIDTH / 2.0;
            let row = (0..CURSOR_ROWS).find(|&r| x - half > row_end[r] + 4.0)?;
            row_end[row] = x + half;
            Some(row)
        })
        .collect()
}

fn render<X>(
    svg: &mut String,
    trace: &Trace<'_>,
    points: &[(f64, f64)],
    x_range: X,
    y_range: std::ops::Range<f64>,
    y_label: &str,
) -> Outcome<()>
where
    X: AsRangedCoord<Value = f64>,
    X::CoordDescType: ValueFormatter<f64>,
{
    let cursors: Vec<&(String, f64)> = trace
        .cursors
        .iter()
        .filter(|(_, f)| {
            points.first().is_some_and(|p| *f >= p.0) && points.last().is_some_and(|p| *f <= p.0)
        })
        .collect();
    let strip = if cursors.is_empty() {
        0
    } else {
        CURSOR_ROW * CURSOR_ROWS as u32 + 6
    };
    {
        let root = SVGBackend::with_string(svg, (WIDTH, HEIGHT)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(trace.title, ("sans-serif", 15))
            .margin(12)
            .margin_top(12 + strip)
            .x_label_area_size(44)
            .y_label_area_size(76)
            .build_cartesian_2d(x_range, y_range.clone())
            .map_err(plot_error)?;
        chart
            .configure_mesh()
            .x_desc(trace.x_label)
            .y_desc(y_label)
            .label_style(("sans-serif", 12))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(plot_error)?;
        // Cursors under the trace, as dashed lines; their labels above the plot area.
        let cursor_colour = RGBColor(200, 50, 50);
        for (_, f) in &cursors {
            chart
                .draw_series(DashedLineSeries::new(
                    [(*f, y_range.start), (*f, y_range.end)],
                    4,
                    3,
                    cursor_colour.stroke_width(1),
                ))
                .map_err(plot_error)?;
        }
        chart
            .draw_series(LineSeries::new(
                points.iter().cloned(),
                RGBColor(31, 78, 156).stroke_width(1),
            ))
            .map_err(plot_error)?;
        let pixels: Vec<(f64, usize)> = cursors
            .iter()
            .map(|(label, f)| {
                (
                    chart.backend_coord(&(*f, y_range.end)).0 as f64,
                    label.chars().count(),
                )
            })
            .collect();
        let top_of_plot = chart.backend_coord(&(points[0].0, y_range.end)).1;
        let mut unplaced = Vec::new();
        for ((label, _), (row, (x, _))) in cursors
            .iter()
            .zip(cursor_rows(&pixels).into_iter().zip(&pixels))
        {
            match row {
                Some(row) => {
                    let y = top_of_plot - 4 - (CURSOR_ROWS - 1 - row) as i32 * CURSOR_ROW as i32;
                    let style = TextStyle::from(("sans-serif", 12).into_font())
                        .color(&cursor_colour)
                        .pos(plotters::style::text_anchor::Pos::new(
                            plotters::style::text_anchor::HPos::Center,
                            plotters::style::text_anchor::VPos::Bottom,
                        ));
                    root.draw(&Text::new(label.clone(), (*x as i32, y), style))
                        .map_err(plot_error)?;
                }
                None => unplaced.push(label.as_str()),
            }
        }
        if !unplaced.is_empty() {
            let text = format!("cursors without room for a label: {}", unplaced.join(", "));
            root.draw(&Text::new(
                text,
                (12, HEIGHT as i32 - 14),
                ("sans-serif", 11).into_font().color(&cursor_colour),
            ))
            .map_err(plot_error)?;
        }
        root.present().map_err(plot_error)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    // Labels that would touch go to the next row; a label with no row left is reported.
    #[test]
    fn cursor_labels_never_overlap() {
        let rows = cursor_rows(&[
            (100.0, 4),
            (110.0, 4),
            (120.0, 4),
            (300.0, 4),
            (125.0, 4),
            (130.0, 4),
        ]);
        assert_eq!(
            rows,
            vec![Some(0), Some(1), Some(2), Some(0), Some(3), None]
        );
    }
}
