//! Pictures as SVG text: TTT diagrams with cooling lines, transformed fraction
//! against cooling rate, the screen's trade-offs, composition bars, I(T),
//! U(T), and the residuals of a fit. Every axis carries its unit; temperatures are in °C with K named in the
//! caption. When there is nothing sensible to draw, the picture says why.
//!
//! Our own style: a warm off-white ground, slate text, teal for the crystal
//! curve, amber for the user's equipment, brick red for the critical rate.

use crate::kinetics::{KineticSummary, Kinetics};
use crate::units::{kelvin_to_celsius as c, KelvinPerSecond};
use plotters::prelude::*;

const GROUND: RGBColor = RGBColor(252, 250, 245);
const INK: RGBColor = RGBColor(47, 55, 66);
const TEAL: RGBColor = RGBColor(20, 110, 112);
const AMBER: RGBColor = RGBColor(214, 140, 30);
const BRICK: RGBColor = RGBColor(170, 60, 50);
const STONE: RGBColor = RGBColor(150, 150, 140);
const MOSS: RGBColor = RGBColor(90, 130, 60);
/// The band of a Monte Carlo critical rate: a lighter brick.
const ROSE: RGBColor = RGBColor(214, 140, 130);

/// Picture size in pixels.
pub const SIZE: (u32, u32) = (760, 500);

type Res = Result<(), String>;

/// Tick label on a log axis: 10^k as "1e-7", "0.01", "100".
fn log_label(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let a = v.abs();
    if (1e-2..1e4).contains(&a) {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{v:.0e}")
    }
}

fn e<E: std::fmt::Debug>(err: E) -> String {
    format!("{err:?}")
}

/// A picture that only carries a title and a message.
pub fn message_svg(title: &str, message: &str) -> String {
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        let _ = root.fill(&GROUND);
        let _ = root.draw(&Text::new(
            title.to_string(),
            (30, 40),
            ("sans-serif", 22).into_font().color(&INK),
        ));
        for (i, line) in message.lines().enumerate() {
            let _ = root.draw(&Text::new(
                line.to_string(),
                (30, 100 + 28 * i as i32),
                ("sans-serif", 17).into_font().color(&BRICK),
            ));
        }
        let _ = root.present();
    }
    s
}

/// TTT diagram: time to the detectable fraction (log axis) against temperature,
/// the nose marked, T_L and T_g as lines, and constant-rate cooling lines for
/// the equipment rate and the critical rate.
pub fn ttt_svg(
    k: &Kinetics,
    s: &KineticSummary,
    equipment: Option<(KelvinPerSecond, &str)>,
    title: &str,
) -> String {
    ttt_band_svg(k, s, equipment, None, title)
}

/// As [`ttt_svg`], with the 5–95 % band of the critical rate from Monte
/// Carlo draws (K/s) as two cooling lines in a lighter brick, when given.
pub fn ttt_band_svg(
    k: &Kinetics,
    s: &KineticSummary,
    equipment: Option<(KelvinPerSecond, &str)>,
    band: Option<(f64, f64)>,
    title: &str,
) -> String {
    let pts: Vec<(f64, f64)> = k
        .ttt_curve(300)
        .iter()
        .filter(|p| p.time_s.is_finite() && p.time_s > 0.0)
        .map(|p| (p.time_s, c(p.temperature.0)))
        .collect();
    if pts.is_empty() || !s.nose_time_s.is_finite() {
        return message_svg(title, "no TTT curve in the kinetic window:\nnothing crystallises between the liquidus and the freeze temperature");
    }
    let mut svg = String::new();
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let tl = c(s.liquidus.0);
        let tg = c(s.glass_transition.0);
        let (y0, y1) = (c(s.freeze_temperature.0) - 30.0, tl + 40.0);
        let tn = s.nose_time_s;
        let x0 = (tn / 1e3).max(1e-9);
        let x1 = pts
            .iter()
            .map(|p| p.0)
            .fold(tn * 10.0, f64::max)
            .min(tn * 1e7);
        let caption = format!("{title} — temperature in °C (K = °C + 273.15)");
        let mut chart = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(62)
            .build_cartesian_2d((x0..x1).log_scale(), y0..y1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_label_formatter(&|v| log_label(*v))
            .x_desc("time at temperature / s (log scale)")
            .y_desc("temperature / °C")
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        let clip: Vec<(f64, f64)> = pts
            .iter()
            .copied()
            .filter(|p| p.0 >= x0 && p.0 <= x1)
            .collect();
        chart
            .draw_series(LineSeries::new(clip, TEAL.stroke_width(3)))
            .map_err(e)?
            .label("TTT curve (X = X_c)")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 22, y)], TEAL.stroke_width(3)));
        for (t, label) in [(tl, "liquidus T_L"), (tg, "glass transition T_g")] {
            chart
                .draw_series(LineSeries::new(
                    vec![(x0, t), (x1, t)],
                    STONE.stroke_width(1),
                ))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("{label} {t:.0} °C"),
                    (x0 * 1.6, t + 0.03 * (y1 - y0)),
                    ("sans-serif", 13).into_font().color(&INK),
                )))
                .map_err(e)?;
        }
        let mut lines = vec![(s.critical_rate, "critical rate R_c".to_string(), BRICK)];
        if let Some((r, name)) = equipment {
            lines.push((r, name.to_string(), AMBER));
        }
        if let Some((lo, hi)) = band {
            lines.push((KelvinPerSecond(lo), "R_c 5 % quantile".to_string(), ROSE));
            lines.push((KelvinPerSecond(hi), "R_c 95 % quantile".to_string(), ROSE));
        }
        for (rate, label, colour) in lines {
            if rate.0.is_nan() || rate.0 <= 0.0 {
                continue;
            }
            let n = 120;
            let curve: Vec<(f64, f64)> = (0..=n)
                .map(|i| x0 * (x1 / x0).powf(i as f64 / n as f64))
                .map(|t| (t, tl - rate.0 * t))
                .filter(|p| p.1 >= y0)
                .collect();
            chart
                .draw_series(LineSeries::new(curve, colour.stroke_width(2)))
                .map_err(e)?
                .label(format!("{label}: {:.3e} K/s", rate.0))
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 22, y)], colour.stroke_width(2))
                });
        }
        let nose = (tn, c(s.nose_temperature.0));
        chart
            .draw_series(std::iter::once(Circle::new(nose, 6, BRICK.filled())))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("nose {:.0} °C, {:.3e} s", nose.1, tn),
                (tn * 2.0, nose.1 - 4.0),
                ("sans-serif", 13).into_font().color(&BRICK),
            )))
            .map_err(e)?;
        chart
            .configure_series_labels()
            .background_style(GROUND.mix(0.9))
            .border_style(STONE)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .position(SeriesLabelPosition::LowerRight)
            .draw()
            .map_err(e)?;
        root.present().map_err(e)
    })();
    match r {
        Ok(()) => svg,
        Err(m) => message_svg(title, &format!("the TTT diagram could not be drawn:\n{m}")),
    }
}

/// Transformed fraction after constant-rate cooling against the rate, with X_c.
pub fn fraction_svg(k: &Kinetics, s: &KineticSummary, title: &str) -> String {
    fraction_band_svg(k, s, None, title)
}

/// As [`fraction_svg`], with the 5–95 % band of the critical rate from
/// Monte Carlo draws (K/s) shaded, when given; the rate axis widens to hold it.
pub fn fraction_band_svg(
    k: &Kinetics,
    s: &KineticSummary,
    band: Option<(f64, f64)>,
    title: &str,
) -> String {
    let rc = s.critical_rate.0;
    if !(rc > 0.0 && rc.is_finite()) {
        return message_svg(title, "no critical cooling rate to draw around");
    }
    let band = band.filter(|(lo, hi)| lo.is_finite() && hi.is_finite() && *lo > 0.0 && lo <= hi);
    let (r0, r1) = match band {
        Some((lo, hi)) => ((rc / 1e3).min(lo / 3.0), (rc * 1e3).max(hi * 3.0)),
        None => (rc / 1e3, rc * 1e3),
    };
    let xc = k.options().detectable_fraction;
    let rates: Vec<f64> = (0..=60)
        .map(|i| r0 * (r1 / r0).powf(i as f64 / 60.0))
        .collect();
    let pts: Vec<(f64, f64)> = rates
        .iter()
        .filter_map(|&r| {
            k.fraction_at_rate(KelvinPerSecond(r))
                .ok()
                .map(|x| (r, x.max(1e-30)))
        })
        .collect();
    let mut svg = String::new();
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(70)
            .build_cartesian_2d((r0..r1).log_scale(), (1e-16f64..1.0).log_scale())
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_label_formatter(&|v| log_label(*v))
            .y_label_formatter(&|v| log_label(*v))
            .x_desc("cooling rate from the liquidus / (K/s), log scale")
            .y_desc("crystallised volume fraction X")
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        if let Some((lo, hi)) = band {
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(lo, 1e-16), (hi, 1.0)],
                    ROSE.mix(0.3).filled(),
                )))
                .map_err(e)?
                .label(format!("R_c 5–95 % band: {lo:.3e} – {hi:.3e} K/s"))
                .legend(|(x, y)| {
                    Rectangle::new([(x, y - 5), (x + 22, y + 5)], ROSE.mix(0.5).filled())
                });
        }
        chart
            .draw_series(LineSeries::new(
                pts.into_iter().filter(|p| p.1 >= 1e-16),
                TEAL.stroke_width(3),
            ))
            .map_err(e)?
            .label("X after cooling at constant rate")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 22, y)], TEAL.stroke_width(3)));
        chart
            .draw_series(LineSeries::new(
                vec![(r0, xc), (r1, xc)],
                STONE.stroke_width(1),
            ))
            .map_err(e)?
            .label(format!("detectable fraction X_c = {xc:e}"))
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 22, y)], STONE));
        chart
            .draw_series(std::iter::once(Circle::new((rc, xc), 6, BRICK.filled())))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("R_c = {rc:.3e} K/s"),
                (rc * 1.5, xc * 30.0),
                ("sans-serif", 13).into_font().color(&BRICK),
            )))
            .map_err(e)?;
        chart
            .configure_series_labels()
            .background_style(GROUND.mix(0.9))
            .border_style(STONE)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .draw()
            .map_err(e)?;
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// Nucleation rate I(T) and growth rate U(T) over the kinetic window, two panels.
pub fn rates_svg(k: &Kinetics, title: &str) -> String {
    let pts = k.ttt_curve(300);
    let i: Vec<(f64, f64)> = pts
        .iter()
        .filter(|p| p.nucleation_per_m3_s > 0.0)
        .map(|p| (c(p.temperature.0), p.nucleation_per_m3_s))
        .collect();
    let u: Vec<(f64, f64)> = pts
        .iter()
        .filter(|p| p.growth_m_per_s > 0.0)
        .map(|p| (c(p.temperature.0), p.growth_m_per_s))
        .collect();
    if i.is_empty() || u.is_empty() {
        return message_svg(
            title,
            "nucleation or growth rate vanishes across the kinetic window",
        );
    }
    let mut svg = String::new();
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + 140)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let root = root
            .titled(title, ("sans-serif", 17).into_font().color(&INK))
            .map_err(e)?;
        let panels = root.split_evenly((2, 1));
        let (t0, t1) = (c(pts[0].temperature.0), c(pts[pts.len() - 1].temperature.0));
        for (area, data, label, colour) in [
            (&panels[0], &i, "nucleation rate I / (m⁻³ s⁻¹)", TEAL),
            (&panels[1], &u, "growth rate U / (m/s)", MOSS),
        ] {
            let hi = data.iter().map(|p| p.1).fold(0.0, f64::max);
            let lo = (hi * 1e-30).max(data.iter().map(|p| p.1).fold(f64::INFINITY, f64::min));
            let mut chart = ChartBuilder::on(area)
                .margin(10)
                .x_label_area_size(40)
                .y_label_area_size(70)
                .build_cartesian_2d(t0..t1, (lo..hi * 3.0).log_scale())
                .map_err(e)?;
            chart
                .configure_mesh()
                .y_label_formatter(&|v| log_label(*v))
                .x_desc("temperature / °C")
                .y_desc(label)
                .axis_desc_style(("sans-serif", 14).into_font().color(&INK))
                .label_style(("sans-serif", 12).into_font().color(&INK))
                .light_line_style(GROUND.mix(0.0))
                .bold_line_style(STONE.mix(0.25))
                .draw()
                .map_err(e)?;
            chart
                .draw_series(LineSeries::new(
                    data.iter().copied().filter(|p| p.1 >= lo),
                    colour.stroke_width(3),
                ))
                .map_err(e)?;
        }
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// Tick label on a linear axis: no trailing zeros, no "-0".
fn axis_label(v: f64) -> String {
    let s = if v.abs() >= 100.0 {
        format!("{v:.0}")
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

/// Residuals of a fit to draw: in-sample points, or held-out predictions.
#[derive(Debug, Clone, PartialEq)]
pub struct ResidualSeries {
    pub label: String,
    /// (x, fitted − measured).
    pub points: Vec<(f64, f64)>,
    /// Drawn as rings (predictions for points the fit did not see).
    pub held_out: bool,
}

/// Residuals (fitted − measured) against a quantity: the fit's own points as
/// teal dots, held-out predictions as amber rings, zero as a line and ±2σ
/// (σ the fit's residual standard deviation) as a band of two lines.
pub fn residuals_svg(
    series: &[ResidualSeries],
    x_desc: &str,
    y_desc: &str,
    sigma: Option<f64>,
    title: &str,
) -> String {
    let all: Vec<(f64, f64)> = series
        .iter()
        .flat_map(|s| s.points.iter().copied())
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .collect();
    if all.is_empty() {
        return message_svg(title, "no residuals to draw");
    }
    let (mut x0, mut x1) = all.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |a, p| {
        (a.0.min(p.0), a.1.max(p.0))
    });
    if x1 <= x0 {
        x0 -= 1.0;
        x1 += 1.0;
    }
    let pad = 0.05 * (x1 - x0);
    let band = sigma.map(|s| 2.0 * s).unwrap_or(0.0);
    let ymax = all
        .iter()
        .map(|p| p.1.abs())
        .fold(band, f64::max)
        .max(1e-12)
        * 1.15;
    let mut svg = String::new();
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(70)
            .build_cartesian_2d(x0 - pad..x1 + pad, -ymax..ymax)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_label_formatter(&|v| axis_label(*v))
            .y_label_formatter(&|v| axis_label(*v))
            .x_desc(x_desc)
            .y_desc(y_desc)
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(LineSeries::new(
                vec![(x0 - pad, 0.0), (x1 + pad, 0.0)],
                INK.stroke_width(1),
            ))
            .map_err(e)?;
        if band > 0.0 {
            for y in [band, -band] {
                chart
                    .draw_series(LineSeries::new(
                        vec![(x0 - pad, y), (x1 + pad, y)],
                        STONE.stroke_width(1),
                    ))
                    .map_err(e)?;
            }
            chart
                .draw_series(std::iter::once(Text::new(
                    "±2σ of the fit".to_string(),
                    (x0, band * 1.04),
                    ("sans-serif", 12).into_font().color(&INK),
                )))
                .map_err(e)?;
        }
        for s in series {
            let pts: Vec<(f64, f64)> = s
                .points
                .iter()
                .copied()
                .filter(|p| p.0.is_finite() && p.1.is_finite())
                .collect();
            if s.held_out {
                chart
                    .draw_series(
                        pts.iter()
                            .map(|p| Circle::new(*p, 5, AMBER.stroke_width(2))),
                    )
                    .map_err(e)?
                    .label(s.label.clone())
                    .legend(|(x, y)| Circle::new((x + 10, y), 5, AMBER.stroke_width(2)));
            } else {
                chart
                    .draw_series(pts.iter().map(|p| Circle::new(*p, 4, TEAL.filled())))
                    .map_err(e)?
                    .label(s.label.clone())
                    .legend(|(x, y)| Circle::new((x + 10, y), 4, TEAL.filled()));
            }
        }
        chart
            .configure_series_labels()
            .background_style(GROUND.mix(0.9))
            .border_style(STONE)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .position(SeriesLabelPosition::LowerRight)
            .draw()
            .map_err(e)?;
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// One point of the screen's trade-off plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TradePoint {
    pub x: f64,
    pub critical_rate: f64,
    pub feasible: bool,
    pub shortlisted: bool,
}

/// Critical rate (log axis) against another quantity for all evaluated candidates.
pub fn tradeoff_svg(points: &[TradePoint], x_desc: &str, allowed_rate: f64, title: &str) -> String {
    let usable: Vec<&TradePoint> = points
        .iter()
        .filter(|p| p.x.is_finite() && p.critical_rate.is_finite() && p.critical_rate > 0.0)
        .collect();
    if usable.is_empty() {
        return message_svg(
            title,
            "no candidate with a critical rate and this quantity to plot",
        );
    }
    let (mut x0, mut x1) = usable
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.x), b.max(p.x))
        });
    if x1 <= x0 {
        x0 -= 1.0;
        x1 += 1.0;
    }
    let pad = 0.04 * (x1 - x0);
    let (mut y0, mut y1) = usable
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.critical_rate), b.max(p.critical_rate))
        });
    y0 = y0.min(allowed_rate) / 3.0;
    y1 = y1.max(allowed_rate) * 3.0;
    let none_feasible = !usable.iter().any(|p| p.feasible);
    let mut svg = String::new();
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let caption = if none_feasible {
            format!("{title} (no candidate meets every limit)")
        } else {
            title.to_string()
        };
        let mut chart = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(70)
            .build_cartesian_2d(x0 - pad..x1 + pad, (y0..y1).log_scale())
            .map_err(e)?;
        chart
            .configure_mesh()
            .y_label_formatter(&|v| log_label(*v))
            .x_desc(x_desc)
            .y_desc("critical cooling rate R_c / (K/s)")
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| !p.feasible)
                    .map(|p| Circle::new((p.x, p.critical_rate), 2, STONE.mix(0.5).filled())),
            )
            .map_err(e)?
            .label("rejected by a limit")
            .legend(|(x, y)| Circle::new((x + 10, y), 3, STONE.filled()));
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| p.feasible && !p.shortlisted)
                    .map(|p| Circle::new((p.x, p.critical_rate), 2, TEAL.mix(0.7).filled())),
            )
            .map_err(e)?
            .label("meets every limit")
            .legend(|(x, y)| Circle::new((x + 10, y), 3, TEAL.filled()));
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| p.shortlisted)
                    .map(|p| Circle::new((p.x, p.critical_rate), 6, BRICK.filled())),
            )
            .map_err(e)?
            .label("shortlisted")
            .legend(|(x, y)| Circle::new((x + 10, y), 5, BRICK.filled()));
        chart
            .draw_series(LineSeries::new(
                vec![(x0 - pad, allowed_rate), (x1 + pad, allowed_rate)],
                AMBER.stroke_width(2),
            ))
            .map_err(e)?
            .label("equipment rate / safety factor")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 22, y)], AMBER.stroke_width(2)));
        chart
            .configure_series_labels()
            .background_style(GROUND.mix(0.9))
            .border_style(STONE)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .draw()
            .map_err(e)?;
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// One recipe of the probability trade-off: a quantity (cost per kg, or
/// melting temperature) against P(glassy at the equipment rate).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProbabilityPoint {
    pub x: f64,
    pub probability: f64,
    pub shortlisted: bool,
}

/// P(glassy at the equipment rate) against a quantity for every recipe the
/// Monte Carlo stage drew, the shortlist marked, and `min_probability` as a
/// line when the screen asks for one.
pub fn probability_svg(
    points: &[ProbabilityPoint],
    x_desc: &str,
    min_probability: Option<f64>,
    title: &str,
) -> String {
    let usable: Vec<&ProbabilityPoint> = points
        .iter()
        .filter(|p| p.x.is_finite() && p.probability.is_finite())
        .collect();
    if usable.is_empty() {
        return message_svg(title, "no recipe was drawn with this quantity to plot");
    }
    let (mut x0, mut x1) = usable
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.x), b.max(p.x))
        });
    if x1 <= x0 {
        x0 -= 1.0;
        x1 += 1.0;
    }
    let pad = 0.04 * (x1 - x0);
    let mut svg = String::new();
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(70)
            .build_cartesian_2d(x0 - pad..x1 + pad, -0.03f64..1.03)
            .map_err(e)?;
        chart
            .configure_mesh()
            .y_label_formatter(&|v| axis_label(*v))
            .x_desc(x_desc)
            .y_desc("P(glassy at the equipment rate)")
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| !p.shortlisted)
                    .map(|p| Circle::new((p.x, p.probability), 3, TEAL.mix(0.7).filled())),
            )
            .map_err(e)?
            .label("drawn")
            .legend(|(x, y)| Circle::new((x + 10, y), 3, TEAL.filled()));
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| p.shortlisted)
                    .map(|p| Circle::new((p.x, p.probability), 6, BRICK.filled())),
            )
            .map_err(e)?
            .label("shortlisted")
            .legend(|(x, y)| Circle::new((x + 10, y), 5, BRICK.filled()));
        if let Some(m) = min_probability {
            chart
                .draw_series(LineSeries::new(
                    vec![(x0 - pad, m), (x1 + pad, m)],
                    AMBER.stroke_width(2),
                ))
                .map_err(e)?
                .label(format!("min_probability {m}"))
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 22, y)], AMBER.stroke_width(2))
                });
        }
        chart
            .configure_series_labels()
            .background_style(GROUND.mix(0.9))
            .border_style(STONE)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .position(SeriesLabelPosition::LowerLeft)
            .draw()
            .map_err(e)?;
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// A recipe's composition as horizontal bars (mol%).
pub fn composition_svg(parts: &[(String, f64)], title: &str) -> String {
    let parts: Vec<&(String, f64)> = parts.iter().filter(|p| p.1 > 0.0).collect();
    if parts.is_empty() {
        return message_svg(title, "empty composition");
    }
    let mut svg = String::new();
    let h = 90 + 34 * parts.len() as u32;
    let r: Res = (|| {
        let root = SVGBackend::with_string(&mut svg, (SIZE.0, h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let max = parts.iter().map(|p| p.1).fold(0.0, f64::max) * 1.15;
        let n = parts.len();
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..max, 0.0..n as f64)
            .map_err(e)?;
        chart
            .configure_mesh()
            .disable_y_mesh()
            .disable_y_axis()
            .x_desc("amount / mol%")
            .axis_desc_style(("sans-serif", 14).into_font().color(&INK))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        for (k, (name, v)) in parts.iter().enumerate() {
            let y = (n - 1 - k) as f64;
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(0.0, y + 0.18), (*v, y + 0.82)],
                    TEAL.mix(0.85).filled(),
                )))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("{name} {v:.2}"),
                    (*v + max * 0.01, y + 0.62),
                    ("sans-serif", 13).into_font().color(&INK),
                )))
                .map_err(e)?;
        }
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}
