//! The SVG pictures parse, carry their labels and marks, and degrade to a
//! readable message instead of panicking.

use crate::util::{check_xml, root, run_in, temp_dir};
use quenchwise::kinetics::{KineticOptions, Kinetics};
use quenchwise::report::plot::{self, TradePoint};
use quenchwise::units::KelvinPerSecond;

fn card() -> Kinetics<'static> {
    static CARD: std::sync::OnceLock<quenchwise::kinetics::Melt> = std::sync::OnceLock::new();
    Kinetics::new(
        CARD.get_or_init(crate::util::demo_card),
        &KineticOptions::default(),
    )
    .unwrap()
}

#[test]
fn ttt_diagram_has_axes_nose_and_one_polyline_per_curve() {
    let k = card();
    let s = k.analyse().unwrap();
    let svg = plot::ttt_svg(
        &k,
        &s,
        &[(KelvinPerSecond(1e-3), "plate quench")],
        "TTT diagram",
    );
    check_xml(&svg).unwrap();
    assert!(svg.contains("time at temperature / s (log scale)"));
    assert!(svg.contains("temperature / °C"));
    assert!(svg.contains("K = °C + 273.15"));
    assert!(svg.contains("<circle"), "nose marker");
    assert!(svg.contains("nose "));
    // TTT curve, T_L line, T_g line, R_c line, equipment line (or its arrow).
    assert!(
        svg.matches("<polyline").count() >= 5,
        "{}",
        svg.matches("<polyline").count()
    );
    assert!(svg.contains("plate quench"));
}

#[test]
fn other_pictures_parse_and_label_their_axes() {
    let k = card();
    let s = k.analyse().unwrap();
    let f = plot::fraction_svg(&k, &s, "continuous cooling");
    check_xml(&f).unwrap();
    assert!(f.contains("crystallised volume fraction X") && f.contains("detectable fraction X_c"));
    let r = plot::rates_svg(&k, "rates");
    check_xml(&r).unwrap();
    assert!(r.contains("nucleation rate I") && r.contains("growth rate U / (m/s)"));
    let b = plot::composition_svg(
        &[("SiO2".into(), 72.0), ("Na2O".into(), 14.0)],
        "composition",
    );
    check_xml(&b).unwrap();
    assert!(b.contains("amount / mol%") && b.contains("SiO2 72.00"));
    let pts = [
        TradePoint {
            x: 0.2,
            critical_rate: 0.1,
            feasible: true,
            shortlisted: true,
        },
        TradePoint {
            x: 0.3,
            critical_rate: 10.0,
            feasible: false,
            shortlisted: false,
        },
    ];
    let t = plot::tradeoff_svg(&pts, "cost per kg of glass", 2.0, "trade-off");
    check_xml(&t).unwrap();
    assert!(t.contains("critical cooling rate R_c / (K/s)") && t.contains("shortlisted"));
}

#[test]
fn pictures_of_nothing_say_so() {
    let none = plot::tradeoff_svg(&[], "cost", 1.0, "trade-off");
    check_xml(&none).unwrap();
    assert!(none.contains("no candidate with a critical rate"));
    let infeasible = [TradePoint {
        x: 1.0,
        critical_rate: 5.0,
        feasible: false,
        shortlisted: false,
    }];
    let t = plot::tradeoff_svg(&infeasible, "cost", 1.0, "trade-off");
    assert!(t.contains("no candidate meets every limit"));
    let k = card();
    let mut s = k.analyse().unwrap();
    s.nose_time_s = f64::INFINITY;
    let n = plot::ttt_svg(&k, &s, &[], "TTT");
    check_xml(&n).unwrap();
    assert!(n.contains("no TTT curve"));
    s.critical_rate = KelvinPerSecond(0.0);
    assert!(plot::fraction_svg(&k, &s, "cc").contains("no critical cooling rate"));
    assert!(plot::composition_svg(&[], "c").contains("empty composition"));
}

#[test]
fn eval_writes_a_ttt_plot() {
    let d = temp_dir("plot-eval");
    let card = root().join("demo-datasets/melt-card.toml");
    run_in(
        &d,
        &[
            "eval",
            "--melt",
            card.to_str().unwrap(),
            "--plot",
            "ttt.svg",
        ],
    )
    .code(0);
    check_xml(&std::fs::read_to_string(d.join("ttt.svg")).unwrap()).unwrap();
}

/// Every `<text>` of an SVG as (y, text), entities left as they are.
fn texts(svg: &str) -> Vec<(f64, String)> {
    let mut out = Vec::new();
    let mut rest = svg;
    while let Some(i) = rest.find("<text") {
        rest = &rest[i..];
        let end = rest.find('>').unwrap();
        let tag = &rest[..end];
        let y = tag
            .split(" y=\"")
            .nth(1)
            .and_then(|v| v.split('"').next())
            .and_then(|v| v.parse::<f64>().ok())
            .unwrap_or(f64::NAN);
        let close = rest.find("</text>").unwrap();
        out.push((y, rest[end + 1..close].trim().to_string()));
        rest = &rest[close..];
    }
    out
}

fn text_y(all: &[(f64, String)], starts: &str) -> f64 {
    all.iter()
        .find(|t| t.1.starts_with(starts))
        .unwrap_or_else(|| panic!("no text starting {starts:?} in {all:?}"))
        .0
}

#[test]
fn numbers_on_plots_read_as_people_write_them() {
    // Source: common practice (ISO 80000-1 writes numbers plainly and powers
    // of ten with superscripts; no trailing ".0").
    assert_eq!(plot::plain(72.0), "72");
    assert_eq!(plot::plain(1250.0), "1250");
    assert_eq!(plot::plain(20.0), "20");
    assert_eq!(plot::plain(0.25), "0.25");
    assert_eq!(plot::plain(1e-3), "10⁻³");
    assert_eq!(plot::plain(1e-6), "10⁻⁶");
    assert_eq!(plot::plain(2.5e6), "2.5×10⁶");
    assert_eq!(plot::plain(123_456.0), "1.2×10⁵");
    assert_eq!(plot::plain(-40.0), "−40");
    let k = card();
    let s = k.analyse().unwrap();
    let svg = plot::ttt_svg(&k, &s, &[(KelvinPerSecond(20.0), "plate quench")], "TTT");
    let f = plot::fraction_band_svg(
        &k,
        &s,
        None,
        &[(KelvinPerSecond(20.0), "plate quench")],
        "CC",
    );
    for doc in [&svg, &f] {
        for (_, t) in texts(doc) {
            // No computer exponents ("1e-3", "2.000e1") and no "1250.0".
            let bad = t.split(|c: char| c.is_whitespace() || c == ',').any(|w| {
                let w = w.trim_end_matches(':');
                w.ends_with(".0")
                    || (w.contains('e')
                        && w.trim_start_matches('-')
                            .starts_with(|c: char| c.is_ascii_digit()))
            });
            assert!(!bad, "computer number in {t:?}");
        }
    }
    assert!(svg.contains("plate quench: 20 K/s"));
    assert!(texts(&svg)
        .iter()
        .any(|t| t.1.starts_with("nose ") && t.1.ends_with(" s")));
}

#[test]
fn every_quench_option_is_drawn_and_the_legend_sits_below_the_data() {
    let k = card();
    let s = k.analyse().unwrap();
    let rc = s.critical_rate.0;
    // One option far faster and one far slower than the window shows, one inside.
    let fast = rc * 1e12;
    let slow = rc * 1e-12;
    let options = [
        (KelvinPerSecond(fast), "roller quench"),
        (KelvinPerSecond(rc * 10.0), "plate quench"),
        (KelvinPerSecond(slow), "crucible in air"),
    ];
    let svg = plot::ttt_svg(&k, &s, &options, "TTT of the demo card");
    check_xml(&svg).unwrap();
    let all = texts(&svg);
    // Source: common practice (a legend must not hide data: here it sits
    // under the x-axis title, outside the plotting area).
    let axis = text_y(&all, "time at temperature");
    for name in [
        "roller quench",
        "plate quench",
        "crucible in air",
        "critical rate R_c",
    ] {
        assert!(text_y(&all, name) > axis, "{name} legend above the x axis");
    }
    assert!(text_y(&all, "roller quench").is_finite());
    let t = |n: &str| all.iter().find(|t| t.1.starts_with(n)).unwrap().1.clone();
    assert!(
        t("roller quench").contains("← faster than shown"),
        "{}",
        t("roller quench")
    );
    assert!(
        t("crucible in air").contains("→ slower than shown"),
        "{}",
        t("crucible in air")
    );
    // The off-scale options are kept visible as arrows (filled heads).
    assert!(svg.matches("<polygon").count() >= 2);
    // The note on why a cooling line may cross the isothermal curve.
    // Source: common practice (TTT curves are isothermal; continuous cooling
    // is summed along the path by the additivity rule).
    assert!(svg.contains("The TTT curve is isothermal"));
    assert!(text_y(&all, "The TTT curve is isothermal") > axis);
    let f = plot::fraction_band_svg(&k, &s, None, &options, "CC");
    check_xml(&f).unwrap();
    let all = texts(&f);
    let axis = text_y(&all, "cooling rate from the liquidus");
    assert!(text_y(&all, "plate quench") > axis);
    assert!(f.contains("above the axis (faster than shown)"));
    assert!(f.contains("below the axis (slower than shown)"));
}

#[test]
fn viscosity_plot_marks_the_fixpoints_where_the_curve_has_them() {
    let card = crate::util::demo_card();
    let curve = &card.viscosity;
    let fix = plot::viscosity_fixpoints(curve);
    assert_eq!(fix.len(), 5);
    for (name, level, t) in &fix {
        // Source: ASTM C338 (softening point 10^6.6 Pa·s), ASTM C336 (strain
        // point 10^13.5 Pa·s); working point 10^3 Pa·s, T_g ≈ 10^12 Pa·s
        // (common practice). The plotted temperature is where the curve
        // reaches that level.
        let at = curve.log10_viscosity(quenchwise::units::Kelvin(*t)).0;
        assert!((at - level).abs() < 1e-6, "{name}: {at} vs {level}");
    }
    let svg = plot::viscosity_svg(curve, &fix, &[], "Viscosity of the demo card");
    check_xml(&svg).unwrap();
    assert!(svg.contains("log10(η / Pa·s)") && svg.contains("temperature / °C"));
    let soft = fix.iter().find(|f| f.0 == "softening point").unwrap();
    let label = format!(
        "softening point {} °C",
        plot::plain((soft.2 - 273.15).round())
    );
    assert!(svg.contains(&label), "{label}");
    assert!(svg.contains("Viscosity of the demo card"));
}

#[test]
fn standalone_plots_say_which_glass() {
    let d = temp_dir("plot-title");
    run_in(
        &d,
        &[
            "eval",
            "--mol",
            "SiO2=72 Na2O=14 CaO=10 Al2O3=4",
            "--plot",
            "ttt.svg",
            "--viscosity-plot",
            "eta.svg",
        ],
    )
    .code(0);
    for f in ["ttt.svg", "eta.svg"] {
        let svg = std::fs::read_to_string(d.join(f)).unwrap();
        check_xml(&svg).unwrap();
        // In the program's oxide order (as every table writes it).
        assert!(
            svg.contains("72 SiO2 · 4 Al2O3 · 14 Na2O · 10 CaO (mol%)"),
            "{f}"
        );
    }
}
