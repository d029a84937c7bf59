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
use plotters::style::text_anchor::{HPos, Pos, VPos};

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

/// A number as people write it on a plot: three significant figures, no
/// trailing zeros ("72", "1250", "0.25"), and outside 0.01–100 000 a power
/// of ten with a superscript exponent ("10⁻³", "2.5×10⁶").
pub fn plain(v: f64) -> String {
    if !v.is_finite() {
        return if v.is_nan() {
            "–".into()
        } else {
            format!("{v}")
        };
    }
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    let sign = if v < 0.0 { "−" } else { "" };
    if (1e-2..1e5).contains(&a) {
        let exp = a.log10().floor() as i32;
        let decimals = (2 - exp).max(0) as usize;
        let t = format!("{a:.decimals$}");
        let t = if t.contains('.') {
            t.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            t
        };
        return format!("{sign}{t}");
    }
    let mut exp = a.log10().floor() as i32;
    let mut mantissa = a / 10f64.powi(exp);
    // Round the mantissa to 2 significant figures; 9.99 becomes 10.
    mantissa = (mantissa * 10.0).round() / 10.0;
    if mantissa >= 10.0 {
        mantissa /= 10.0;
        exp += 1;
    }
    let power = format!("10{}", superscript(exp));
    if (mantissa - 1.0).abs() < 1e-9 {
        format!("{sign}{power}")
    } else {
        let m = format!("{mantissa:.1}");
        let m = m.trim_end_matches('0').trim_end_matches('.');
        format!("{sign}{m}×{power}")
    }
}

/// An integer as superscript digits: −3 → "⁻³".
fn superscript(n: i32) -> String {
    n.to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            '9' => '⁹',
            other => other,
        })
        .collect()
}

/// Tick label on a log axis: "0.01", "100", "10⁻⁷".
fn log_label(v: f64) -> String {
    plain(v)
}

/// How a legend entry is marked.
#[derive(Clone, Copy)]
enum Mark {
    Line(RGBColor, u32),
    Dot(RGBColor, i32),
    Ring(RGBColor),
    Patch(RGBColor),
}

/// Height in pixels of a legend strip below a chart: one row per entry,
/// one per note.
fn legend_height(entries: usize, notes: usize) -> u32 {
    if entries + notes == 0 {
        0
    } else {
        12 + 20 * entries as u32 + 17 * notes as u32
    }
}

/// The legend as a strip below the chart (so that it covers no data), then
/// the notes in smaller type.
fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    entries: &[(String, Mark)],
    notes: &[String],
) -> Res {
    let x = 78;
    for (i, (text, mark)) in entries.iter().enumerate() {
        let y = 12 + 20 * i as i32;
        match *mark {
            Mark::Line(c, w) => area
                .draw(&PathElement::new(
                    vec![(x, y), (x + 26, y)],
                    c.stroke_width(w),
                ))
                .map_err(e)?,
            Mark::Dot(c, r) => area
                .draw(&Circle::new((x + 13, y), r, c.filled()))
                .map_err(e)?,
            Mark::Ring(c) => area
                .draw(&Circle::new((x + 13, y), 5, c.stroke_width(2)))
                .map_err(e)?,
            Mark::Patch(c) => area
                .draw(&Rectangle::new([(x, y - 5), (x + 26, y + 5)], c.filled()))
                .map_err(e)?,
        }
        area.draw(&Text::new(
            text.clone(),
            (x + 36, y - 7),
            ("sans-serif", 13).into_font().color(&INK),
        ))
        .map_err(e)?;
    }
    let top = 12 + 20 * entries.len() as i32;
    for (i, n) in notes.iter().enumerate() {
        area.draw(&Text::new(
            n.clone(),
            (x - 50, top + 17 * i as i32 - 4),
            ("sans-serif", 12)
                .into_font()
                .style(FontStyle::Italic)
                .color(&INK),
        ))
        .map_err(e)?;
    }
    Ok(())
}

/// A quench option to draw: its cooling rate and its name.
pub type QuenchLine<'a> = (KelvinPerSecond, &'a str);

/// Colours of the quench options, in the order given (amber first, the
/// equipment's colour throughout).
const QUENCH_COLOURS: [RGBColor; 4] = [
    AMBER,
    RGBColor(120, 80, 160),
    RGBColor(40, 120, 190),
    RGBColor(110, 90, 40),
];

fn quench_colour(i: usize) -> RGBColor {
    QUENCH_COLOURS[i % QUENCH_COLOURS.len()]
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
/// the critical rate and each quench option (`equipment`, any number).
pub fn ttt_svg(
    k: &Kinetics,
    s: &KineticSummary,
    equipment: &[QuenchLine<'_>],
    title: &str,
) -> String {
    ttt_band_svg(k, s, equipment, None, title)
}

/// The note under every TTT diagram: why a cooling line may cross the curve.
pub const TTT_CROSSING_NOTE: [&str; 2] = [
    "The TTT curve is isothermal (time held at one temperature); a cooling line sums crystal along its path,",
    "so the R_c line may cross the curve: crossing it alone does not mean crystals (the fraction plot decides).",
];

/// As [`ttt_svg`], with the 5–95 % band of the critical rate from Monte
/// Carlo draws (K/s) as two cooling lines in a lighter brick, when given.
/// A cooling line too fast or too slow to cross the window is kept visible
/// as an arrow at the edge it leaves by, with a note in the legend.
pub fn ttt_band_svg(
    k: &Kinetics,
    s: &KineticSummary,
    equipment: &[QuenchLine<'_>],
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
    let mut lines = vec![(s.critical_rate, "critical rate R_c".to_string(), BRICK, 2)];
    for (i, (r, name)) in equipment.iter().enumerate() {
        lines.push((*r, name.to_string(), quench_colour(i), 3));
    }
    if let Some((lo, hi)) = band {
        lines.push((KelvinPerSecond(lo), "R_c 5 % quantile".to_string(), ROSE, 2));
        lines.push((
            KelvinPerSecond(hi),
            "R_c 95 % quantile".to_string(),
            ROSE,
            2,
        ));
    }
    lines.retain(|l| l.0 .0.is_finite() && l.0 .0 > 0.0);
    let notes: Vec<String> = TTT_CROSSING_NOTE.iter().map(|n| n.to_string()).collect();
    let legend_h = legend_height(lines.len() + 1, notes.len());
    let mut svg = String::new();
    let r: Res = (|| {
        let root =
            SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + legend_h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let (top, bottom) = root.split_vertically(SIZE.1);
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
        let mut chart = ChartBuilder::on(&top)
            .caption(caption, ("sans-serif", 17).into_font().color(&INK))
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(62)
            .build_cartesian_2d((x0..x1).log_scale(), y0..y1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_label_formatter(&|v| log_label(*v))
            .y_label_formatter(&|v| plain(*v))
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
            .map_err(e)?;
        let mut legend = vec![(
            "TTT curve: time to the detectable fraction X_c".to_string(),
            Mark::Line(TEAL, 3),
        )];
        for (t, label) in [(tl, "liquidus T_L"), (tg, "glass transition T_g")] {
            chart
                .draw_series(LineSeries::new(
                    vec![(x0, t), (x1, t)],
                    STONE.stroke_width(1),
                ))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("{label} {} °C", plain(t.round())),
                    (x0 * 1.6, t + 0.03 * (y1 - y0)),
                    ("sans-serif", 13).into_font().color(&INK),
                )))
                .map_err(e)?;
        }
        let span = tl - y0;
        let step = (x1 / x0).powf(0.06);
        let mut clamped = 0;
        for (rate, label, colour, width) in lines {
            let r = rate.0;
            let text = format!("{label}: {} K/s", plain(r));
            if r * x0 >= span {
                // Past the freeze temperature before the window opens: an
                // arrow at the left edge, pointing to shorter times.
                let y = tl - (0.12 + 0.07 * clamped as f64) * (y1 - y0);
                clamped += 1;
                arrow(&mut chart, (x0 * step * step, y), (x0, y), colour)?;
                legend.push((
                    format!(
                        "{text} ← faster than shown: below {} °C within {} s",
                        plain(y0.round()),
                        plain(x0)
                    ),
                    Mark::Line(colour, width),
                ));
                continue;
            }
            if r * x1 <= 0.03 * span {
                // Cools less than 3 % of the window before it closes: an
                // arrow at the right edge, pointing to longer times.
                let y = tl - (0.03 + 0.07 * clamped as f64) * (y1 - y0);
                clamped += 1;
                arrow(&mut chart, (x1 / step / step, y), (x1, y), colour)?;
                legend.push((
                    format!(
                        "{text} → slower than shown: still above {} °C at {} s",
                        plain((tl - r * x1).round()),
                        plain(x1)
                    ),
                    Mark::Line(colour, width),
                ));
                continue;
            }
            let n = 160;
            let curve: Vec<(f64, f64)> = (0..=n)
                .map(|i| x0 * (x1 / x0).powf(i as f64 / n as f64))
                .map(|t| (t, tl - r * t))
                .filter(|p| p.1 >= y0)
                .collect();
            chart
                .draw_series(LineSeries::new(curve, colour.stroke_width(width)))
                .map_err(e)?;
            legend.push((text, Mark::Line(colour, width)));
        }
        let nose = (tn, c(s.nose_temperature.0));
        chart
            .draw_series(std::iter::once(Circle::new(nose, 6, BRICK.filled())))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("nose {} °C, {} s", plain(nose.1.round()), plain(tn)),
                (tn * 2.0, nose.1 - 4.0),
                ("sans-serif", 13).into_font().color(&BRICK),
            )))
            .map_err(e)?;
        draw_legend(&bottom, &legend, &notes)?;
        root.present().map_err(e)
    })();
    match r {
        Ok(()) => svg,
        Err(m) => message_svg(title, &format!("the TTT diagram could not be drawn:\n{m}")),
    }
}

/// An arrow in data coordinates from `from` to `to`, its head at `to`.
fn arrow<DB: DrawingBackend, X, Y>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<X, Y>>,
    from: (f64, f64),
    to: (f64, f64),
    colour: RGBColor,
) -> Res
where
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    let area = chart.plotting_area().strip_coord_spec();
    let o = area.get_base_pixel();
    let local = |p: (i32, i32)| (p.0 - o.0, p.1 - o.1);
    let a = local(chart.backend_coord(&from));
    let b = local(chart.backend_coord(&to));
    let (dx, dy) = ((b.0 - a.0) as f64, (b.1 - a.1) as f64);
    let len = (dx * dx + dy * dy).sqrt().max(1.0);
    let (ux, uy) = (dx / len, dy / len);
    let head = |side: f64| {
        (
            b.0 - (10.0 * ux - 5.0 * side * uy) as i32,
            b.1 - (10.0 * uy + 5.0 * side * ux) as i32,
        )
    };
    area.draw(&PathElement::new(vec![a, b], colour.stroke_width(3)))
        .map_err(e)?;
    area.draw(&Polygon::new(
        vec![b, head(1.0), head(-1.0)],
        colour.filled(),
    ))
    .map_err(e)?;
    Ok(())
}

/// Transformed fraction after constant-rate cooling against the rate, with X_c.
pub fn fraction_svg(k: &Kinetics, s: &KineticSummary, title: &str) -> String {
    fraction_band_svg(k, s, None, &[], title)
}

/// As [`fraction_svg`], with the 5–95 % band of the critical rate from
/// Monte Carlo draws (K/s) shaded, when given (the rate axis widens to hold
/// it), and a vertical line per quench option (`equipment`): one outside the
/// axis is drawn at the edge it lies beyond, with an arrow and a note.
pub fn fraction_band_svg(
    k: &Kinetics,
    s: &KineticSummary,
    band: Option<(f64, f64)>,
    equipment: &[QuenchLine<'_>],
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
    let quenches: Vec<(f64, String, RGBColor)> = equipment
        .iter()
        .enumerate()
        .filter(|(_, q)| q.0 .0.is_finite() && q.0 .0 > 0.0)
        .map(|(i, q)| (q.0 .0, q.1.to_string(), quench_colour(i)))
        .collect();
    let entries = 3 + usize::from(band.is_some()) + quenches.len();
    let legend_h = legend_height(entries, 0);
    let mut svg = String::new();
    let r: Res = (|| {
        let root =
            SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + legend_h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let (top, bottom) = root.split_vertically(SIZE.1);
        let mut chart = ChartBuilder::on(&top)
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
        let mut legend = Vec::new();
        if let Some((lo, hi)) = band {
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(lo, 1e-16), (hi, 1.0)],
                    ROSE.mix(0.3).filled(),
                )))
                .map_err(e)?;
            legend.push((
                format!("R_c 5–95 % band: {} – {} K/s", plain(lo), plain(hi)),
                Mark::Patch(ROSE),
            ));
        }
        chart
            .draw_series(LineSeries::new(
                pts.into_iter().filter(|p| p.1 >= 1e-16),
                TEAL.stroke_width(3),
            ))
            .map_err(e)?;
        legend.push((
            "X after cooling at constant rate".to_string(),
            Mark::Line(TEAL, 3),
        ));
        chart
            .draw_series(LineSeries::new(
                vec![(r0, xc), (r1, xc)],
                STONE.stroke_width(1),
            ))
            .map_err(e)?;
        legend.push((
            format!("detectable fraction X_c = {}", plain(xc)),
            Mark::Line(STONE, 1),
        ));
        chart
            .draw_series(std::iter::once(Circle::new((rc, xc), 6, BRICK.filled())))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("R_c = {} K/s", plain(rc)),
                (rc * 1.5, xc * 30.0),
                ("sans-serif", 13).into_font().color(&BRICK),
            )))
            .map_err(e)?;
        legend.push((
            format!("critical rate R_c = {} K/s", plain(rc)),
            Mark::Dot(BRICK, 5),
        ));
        let edge = (r1 / r0).powf(0.05);
        for (i, (rate, name, colour)) in quenches.iter().enumerate() {
            let y = 1e-14 * 1e3f64.powi(i as i32);
            let text = format!("{name}: {} K/s", plain(*rate));
            if *rate < r0 {
                arrow(&mut chart, (r0 * edge * edge, y), (r0, y), *colour)?;
                legend.push((
                    format!("{text} ← below the axis (slower than shown)"),
                    Mark::Line(*colour, 3),
                ));
            } else if *rate > r1 {
                arrow(&mut chart, (r1 / edge / edge, y), (r1, y), *colour)?;
                legend.push((
                    format!("{text} → above the axis (faster than shown)"),
                    Mark::Line(*colour, 3),
                ));
            } else {
                chart
                    .draw_series(LineSeries::new(
                        vec![(*rate, 1e-16), (*rate, 1.0)],
                        colour.stroke_width(3),
                    ))
                    .map_err(e)?;
                legend.push((text, Mark::Line(*colour, 3)));
            }
        }
        draw_legend(&bottom, &legend, &[])?;
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// The viscosity–temperature curve of a melt, log10(η / Pa·s) against °C,
/// its fixpoints marked (`fixpoints`: name, log10 η, temperature in K) and,
/// when a fit supplied them, the measured points (K, log10 η) as rings.
pub fn viscosity_svg(
    curve: &crate::properties::ViscosityCurve,
    fixpoints: &[(&str, f64, f64)],
    measured: &[(f64, f64)],
    title: &str,
) -> String {
    let marks: Vec<(String, f64, f64)> = fixpoints
        .iter()
        .filter(|f| f.2.is_finite() && f.2 > 0.0)
        .map(|f| (f.0.to_string(), c(f.2), f.1))
        .collect();
    let measured: Vec<(f64, f64)> = measured
        .iter()
        .filter(|m| m.0.is_finite() && m.1.is_finite())
        .map(|m| (c(m.0), m.1))
        .collect();
    let temps: Vec<f64> = marks
        .iter()
        .map(|m| m.1)
        .chain(measured.iter().map(|m| m.0))
        .collect();
    if temps.len() < 2 {
        return message_svg(title, "too few viscosity fixpoints to draw a curve");
    }
    let lo = temps.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = temps.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let pad = 0.08 * (hi - lo).max(50.0);
    let (t0, t1) = (lo - pad, hi + pad);
    let line: Vec<(f64, f64)> = (0..=200)
        .map(|i| t0 + (t1 - t0) * i as f64 / 200.0)
        .map(|t| {
            (
                t,
                curve
                    .log10_viscosity(crate::units::Celsius(t).to_kelvin())
                    .0,
            )
        })
        .filter(|p| p.1.is_finite() && p.1 > -2.0 && p.1 < 16.0)
        .collect();
    let mut legend = vec![
        ("model viscosity curve".to_string(), Mark::Line(TEAL, 3)),
        ("fixpoints".to_string(), Mark::Dot(BRICK, 5)),
    ];
    if !measured.is_empty() {
        legend.push(("measured points of the fit".to_string(), Mark::Ring(AMBER)));
    }
    let legend_h = legend_height(legend.len(), 0);
    let mut svg = String::new();
    let r: Res = (|| {
        let root =
            SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + legend_h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let (top, bottom) = root.split_vertically(SIZE.1);
        let mut chart = ChartBuilder::on(&top)
            .caption(
                format!("{title} — temperature in °C (K = °C + 273.15)"),
                ("sans-serif", 17).into_font().color(&INK),
            )
            .margin(14)
            .x_label_area_size(46)
            .y_label_area_size(62)
            .build_cartesian_2d(t0..t1, -1.0f64..15.0)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_label_formatter(&|v| plain(*v))
            .y_label_formatter(&|v| plain(*v))
            .x_desc("temperature / °C")
            .y_desc("log10(η / Pa·s)")
            .axis_desc_style(("sans-serif", 15).into_font().color(&INK))
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .light_line_style(GROUND.mix(0.0))
            .bold_line_style(STONE.mix(0.25))
            .draw()
            .map_err(e)?;
        chart
            .draw_series(LineSeries::new(line, TEAL.stroke_width(3)))
            .map_err(e)?;
        for (name, t, level) in &marks {
            chart
                .draw_series(std::iter::once(Circle::new(
                    (*t, *level),
                    5,
                    BRICK.filled(),
                )))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    format!(
                        "{name} {} °C (10{} Pa·s)",
                        plain(t.round()),
                        superscript_level(*level)
                    ),
                    (
                        if *t > 0.5 * (t0 + t1) {
                            *t - 0.015 * (t1 - t0)
                        } else {
                            *t + 0.015 * (t1 - t0)
                        },
                        *level + 0.25,
                    ),
                    // Labels right of the middle end at their point, so
                    // that none runs off the picture.
                    if *t > 0.5 * (t0 + t1) {
                        ("sans-serif", 13)
                            .into_font()
                            .color(&INK)
                            .pos(Pos::new(HPos::Right, VPos::Bottom))
                    } else {
                        ("sans-serif", 13)
                            .into_font()
                            .color(&INK)
                            .pos(Pos::new(HPos::Left, VPos::Bottom))
                    },
                )))
                .map_err(e)?;
        }
        chart
            .draw_series(
                measured
                    .iter()
                    .map(|p| Circle::new(*p, 5, AMBER.stroke_width(2))),
            )
            .map_err(e)?;
        draw_legend(&bottom, &legend, &[])?;
        root.present().map_err(e)
    })();
    r.map(|_| svg).unwrap_or_else(|m| message_svg(title, &m))
}

/// The viscosity fixpoints of a curve, (name, log10 η / Pa·s, T / K), for
/// [`viscosity_svg`]; a level the curve never reaches is left out.
pub fn viscosity_fixpoints(
    curve: &crate::properties::ViscosityCurve,
) -> Vec<(&'static str, f64, f64)> {
    viscosity_fixpoints_with(curve, crate::properties::fixpoints::MELTING)
}

/// As [`viscosity_fixpoints`], the melting temperature at
/// log10(η / Pa·s) = `melting_level` (a screen config's
/// `[furnace] melting_viscosity_pa_s`).
pub fn viscosity_fixpoints_with(
    curve: &crate::properties::ViscosityCurve,
    melting_level: f64,
) -> Vec<(&'static str, f64, f64)> {
    use crate::properties::fixpoints as f;
    [
        ("melting", melting_level),
        ("working point", f::WORKING),
        ("softening point", f::SOFTENING),
        ("glass transition", f::GLASS_TRANSITION),
        ("strain point", f::STRAIN),
    ]
    .into_iter()
    .filter_map(|(name, level)| {
        curve
            .temperature_at(crate::units::Log10PaS(level))
            .ok()
            .map(|t| (name, level, t.0))
    })
    .collect()
}

/// A power of ten for a viscosity level: 12 → "¹²", 6.6 → "^6.6".
fn superscript_level(v: f64) -> String {
    if (v - v.round()).abs() < 1e-9 {
        superscript(v.round() as i32)
    } else {
        format!("^{}", plain(v))
    }
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
    let legend_h = legend_height(series.len(), 0);
    let mut svg = String::new();
    let r: Res = (|| {
        let root =
            SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + legend_h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let (top, bottom) = root.split_vertically(SIZE.1);
        let mut legend: Vec<(String, Mark)> = Vec::new();
        let mut chart = ChartBuilder::on(&top)
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
                    .map_err(e)?;
                legend.push((s.label.clone(), Mark::Ring(AMBER)));
            } else {
                chart
                    .draw_series(pts.iter().map(|p| Circle::new(*p, 4, TEAL.filled())))
                    .map_err(e)?;
                legend.push((s.label.clone(), Mark::Dot(TEAL, 4)));
            }
        }
        draw_legend(&bottom, &legend, &[])?;
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
    let legend_h = legend_height(4, 0);
    let mut svg = String::new();
    let r: Res = (|| {
        let root =
            SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + legend_h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let (top, bottom) = root.split_vertically(SIZE.1);
        let caption = if none_feasible {
            format!("{title} (no candidate meets every limit)")
        } else {
            title.to_string()
        };
        let mut chart = ChartBuilder::on(&top)
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
            .map_err(e)?;
        let mut legend = vec![("rejected by a limit".to_string(), Mark::Dot(STONE, 3))];
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| p.feasible && !p.shortlisted)
                    .map(|p| Circle::new((p.x, p.critical_rate), 2, TEAL.mix(0.7).filled())),
            )
            .map_err(e)?;
        legend.push(("meets every limit".to_string(), Mark::Dot(TEAL, 3)));
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| p.shortlisted)
                    .map(|p| Circle::new((p.x, p.critical_rate), 6, BRICK.filled())),
            )
            .map_err(e)?;
        legend.push(("shortlisted".to_string(), Mark::Dot(BRICK, 5)));
        chart
            .draw_series(LineSeries::new(
                vec![(x0 - pad, allowed_rate), (x1 + pad, allowed_rate)],
                AMBER.stroke_width(2),
            ))
            .map_err(e)?;
        legend.push((
            format!(
                "equipment rate / safety factor: {} K/s",
                plain(allowed_rate)
            ),
            Mark::Line(AMBER, 2),
        ));
        draw_legend(&bottom, &legend, &[])?;
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
    let legend_h = legend_height(2 + usize::from(min_probability.is_some()), 0);
    let mut svg = String::new();
    let r: Res = (|| {
        let root =
            SVGBackend::with_string(&mut svg, (SIZE.0, SIZE.1 + legend_h)).into_drawing_area();
        root.fill(&GROUND).map_err(e)?;
        let (top, bottom) = root.split_vertically(SIZE.1);
        let mut chart = ChartBuilder::on(&top)
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
            .map_err(e)?;
        let mut legend = vec![("drawn".to_string(), Mark::Dot(TEAL, 3))];
        chart
            .draw_series(
                usable
                    .iter()
                    .filter(|p| p.shortlisted)
                    .map(|p| Circle::new((p.x, p.probability), 6, BRICK.filled())),
            )
            .map_err(e)?;
        legend.push(("shortlisted".to_string(), Mark::Dot(BRICK, 5)));
        if let Some(m) = min_probability {
            chart
                .draw_series(LineSeries::new(
                    vec![(x0 - pad, m), (x1 + pad, m)],
                    AMBER.stroke_width(2),
                ))
                .map_err(e)?;
            legend.push((
                format!("min_probability {}", plain(m)),
                Mark::Line(AMBER, 2),
            ));
        }
        draw_legend(&bottom, &legend, &[])?;
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
