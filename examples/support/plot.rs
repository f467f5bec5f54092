//! A small SVG line plot of a spectrum: level in dB against frequency, labelled axes and units.
//! Host-only helper for the examples (std); the library itself never draws.

use std::fmt::Write as _;

/// What to draw: one trace of (frequency, level) points plus labelled markers.
pub struct SpectrumPlot<'a> {
    /// Plot title, e.g. the scenario and settings.
    pub title: &'a str,
    /// Frequency of each point, Hz.
    pub frequencies_hz: &'a [f64],
    /// Value of each point in its linear unit (converted to dB here).
    pub values: &'a [f64],
    /// `true` if `values` are power-like (10 log10), `false` if amplitude-like (20 log10).
    pub power_like: bool,
    /// The y-axis label, e.g. "acceleration PSD, dB re 1 (m/s^2)^2/Hz".
    pub y_label: &'a str,
    /// Vertical markers with a short label, e.g. ("1x", 24.7).
    pub markers: &'a [(String, f64)],
}

const WIDTH: f64 = 960.0;
const HEIGHT: f64 = 540.0;
const LEFT: f64 = 80.0;
const RIGHT: f64 = 20.0;
const TOP: f64 = 40.0;
const BOTTOM: f64 = 60.0;

impl SpectrumPlot<'_> {
    /// Renders the plot as an SVG document.
    pub fn to_svg(&self) -> String {
        let db: Vec<f64> = self
            .values
            .iter()
            .map(|&v| {
                let v = v.abs().max(1e-30);
                if self.power_like {
                    10.0 * v.log10()
                } else {
                    20.0 * v.log10()
                }
            })
            .collect();
        let f_max = self
            .frequencies_hz
            .iter()
            .cloned()
            .fold(0.0, f64::max)
            .max(1.0);
        // `+ 0.0` turns a top of -0 into 0, so the tick reads "0", not "-0".
        let top_db = (db.iter().cloned().fold(f64::MIN, f64::max) / 10.0).ceil() * 10.0 + 0.0;
        // Show 100 dB below the top, or the whole trace if it spans less.
        let floor = db.iter().cloned().fold(f64::MAX, f64::min);
        let bottom_db = ((floor / 10.0).floor() * 10.0).max(top_db - 100.0);
        let span_db = (top_db - bottom_db).max(10.0);
        let plot_w = WIDTH - LEFT - RIGHT;
        let plot_h = HEIGHT - TOP - BOTTOM;
        let x_of = |f: f64| LEFT + plot_w * f / f_max;
        let y_of = |d: f64| TOP + plot_h * (top_db - d.max(bottom_db)) / span_db;

        let mut s = String::new();
        let _ = writeln!(
            s,
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{HEIGHT}" viewBox="0 0 {WIDTH} {HEIGHT}" font-family="sans-serif" font-size="12">"#
        );
        let _ = writeln!(s, r#"<rect width="100%" height="100%" fill="white"/>"#);
        let _ = writeln!(
            s,
            r#"<text x="{}" y="24" text-anchor="middle" font-size="15">{}</text>"#,
            WIDTH / 2.0,
            escape(self.title)
        );
        // Grid and tick labels.
        let f_step = nice_step(f_max / 10.0);
        let mut f = 0.0;
        while f <= f_max + 1e-9 {
            let x = x_of(f);
            let _ = writeln!(
                s,
                r##"<line x1="{x:.1}" y1="{TOP}" x2="{x:.1}" y2="{:.1}" stroke="#ddd"/><text x="{x:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
                TOP + plot_h,
                TOP + plot_h + 16.0,
                trim(f)
            );
            f += f_step;
        }
        let mut d = top_db;
        while d >= bottom_db - 1e-9 {
            let y = y_of(d);
            let _ = writeln!(
                s,
                r##"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#ddd"/><text x="{:.1}" y="{:.1}" text-anchor="end">{d:.0}</text>"##,
                LEFT + plot_w,
                LEFT - 6.0,
                y + 4.0
            );
            d -= 10.0;
        }
        let _ = writeln!(
            s,
            r#"<rect x="{LEFT}" y="{TOP}" width="{plot_w}" height="{plot_h}" fill="none" stroke="black"/>"#
        );
        let _ = writeln!(
            s,
            r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">frequency, Hz</text>"#,
            LEFT + plot_w / 2.0,
            HEIGHT - 18.0
        );
        let _ = writeln!(
            s,
            r#"<text transform="translate(22 {:.1}) rotate(-90)" text-anchor="middle">{}</text>"#,
            TOP + plot_h / 2.0,
            escape(self.y_label)
        );
        // Markers under the trace, labels reading up from the bottom of the plot to just
        // under its top edge (anchored at their end, so they never run into the title).
        for (label, f) in self.markers {
            if *f > f_max {
                continue;
            }
            let x = x_of(*f);
            let _ = writeln!(
                s,
                r##"<line x1="{x:.1}" y1="{TOP}" x2="{x:.1}" y2="{:.1}" stroke="#c33" stroke-dasharray="3,3"/><text x="{:.1}" y="{:.1}" fill="#c33" text-anchor="end" transform="rotate(-90 {:.1} {:.1})">{}</text>"##,
                TOP + plot_h,
                x + 4.0,
                TOP + 6.0,
                x + 4.0,
                TOP + 6.0,
                escape(label)
            );
        }
        // The trace.
        let mut path = String::new();
        for (i, (&f, &d)) in self.frequencies_hz.iter().zip(&db).enumerate() {
            let _ = write!(
                path,
                "{}{:.2},{:.2}",
                if i == 0 { "M" } else { " L" },
                x_of(f),
                y_of(d)
            );
        }
        let _ = writeln!(
            s,
            r##"<path d="{path}" fill="none" stroke="#1f4e9c" stroke-width="1"/>"##
        );
        s.push_str("</svg>\n");
        s
    }
}

/// 1, 2 or 5 times a power of ten, at least `raw`.
fn nice_step(raw: f64) -> f64 {
    let p = 10f64.powf(raw.max(1e-12).log10().floor());
    for m in [1.0, 2.0, 5.0, 10.0] {
        if m * p >= raw {
            return m * p;
        }
    }
    10.0 * p
}

fn trim(f: f64) -> String {
    if f >= 1000.0 && (f / 1000.0).fract() == 0.0 {
        format!("{}k", f / 1000.0)
    } else {
        format!("{f}")
    }
}

fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}
