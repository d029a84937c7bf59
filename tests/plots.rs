//! The SVG pictures parse, carry their labels and marks, and degrade to a
//! readable message instead of panicking.

use crate::util::{check_xml, root, run_in, temp_dir};
use quenchwise::kinetics::{KineticOptions, Kinetics};
use quenchwise::report::plot::{self, TradePoint};
use quenchwise::units::KelvinPerSecond;

fn card() -> Kinetics {
    Kinetics::new(&crate::util::demo_card(), &KineticOptions::default()).unwrap()
}

#[test]
fn ttt_diagram_has_axes_nose_and_one_polyline_per_curve() {
    let k = card();
    let s = k.analyse().unwrap();
    let svg = plot::ttt_svg(
        &k,
        &s,
        Some((KelvinPerSecond(1e-3), "plate quench")),
        "TTT diagram",
    );
    check_xml(&svg).unwrap();
    assert!(svg.contains("time at temperature / s (log scale)"));
    assert!(svg.contains("temperature / °C"));
    assert!(svg.contains("K = °C + 273.15"));
    assert!(svg.contains("<circle"), "nose marker");
    assert!(svg.contains("nose "));
    // TTT curve, T_L line, T_g line, R_c line, equipment line (+ legend swatches).
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
    let n = plot::ttt_svg(&k, &s, None, "TTT");
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
