//! The plots and the report page, checked with an independent XML parser (roxmltree) and
//! against expectations computed here from the data: the decades a logarithmic axis must
//! label, the bars and lines that must be drawn, the escaping of hostile text.
//!
//! The data are closed forms of first-order kinetics (textbook integrated rate laws, e.g.
//! P. Atkins and J. de Paula, Physical Chemistry: A -> B -> C with c_A = c0 e^(-k1 t),
//! c_B = c0 k1/(k2 - k1) (e^(-k1 t) - e^(-k2 t)), c_C = c0 - c_A - c_B).

use roxmltree::{Document, Node};
use stoik_analysis::{element_index, flux_graph, step_rates, Span, DEFAULT_THRESHOLD};
use stoik_plot::{
    bar_chart_svg, color_hex, escape, flux_graph_svg, largest_series, profile_svg, AxisScale,
    HtmlReport, PlotError, ProfilePlot, Series, Table, EDGE_COLOR, LOG_FLOOR, NEGATIVE_COLOR,
    PALETTE, POSITIVE_COLOR,
};
use stoik_scenario::RunPlan;
use stoik_testsupport::mechanisms_dir;

const C0: f64 = 2.0;
const K1: f64 = 3.0e2;
const K2: f64 = 4.0;

/// Times from 1e-6 s to 1e1 s, 15 per decade, and the closed-form A, B, C.
fn consecutive() -> (Vec<f64>, [Vec<f64>; 3]) {
    let times: Vec<f64> = (0..=105)
        .map(|k| 10f64.powf(-6.0 + k as f64 / 15.0))
        .collect();
    let a: Vec<f64> = times.iter().map(|t| C0 * (-K1 * t).exp()).collect();
    let b: Vec<f64> = times
        .iter()
        .map(|t| C0 * K1 / (K2 - K1) * ((-K1 * t).exp() - (-K2 * t).exp()))
        .collect();
    let c: Vec<f64> = a.iter().zip(&b).map(|(a, b)| C0 - a - b).collect();
    (times, [a, b, c])
}

fn texts<'a>(doc: &'a Document) -> Vec<Node<'a, 'a>> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .collect()
}

/// Tick labels of one axis: `<text>` with the given anchor whose content parses as a number.
fn tick_labels(doc: &Document, anchor: &str) -> Vec<(String, f64)> {
    texts(doc)
        .into_iter()
        .filter(|n| n.attribute("text-anchor") == Some(anchor))
        .filter_map(|n| {
            let t = n.text()?.trim().to_string();
            let v: f64 = t.parse().ok()?;
            Some((t, v))
        })
        .collect()
}

/// Distinct stroke colours of the polylines, among `palette`.
fn line_colors(doc: &Document, palette: &[String]) -> Vec<String> {
    let mut colors: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .filter_map(|n| n.attribute("stroke").map(str::to_string))
        .filter(|c| palette.contains(c))
        .collect();
    colors.sort();
    colors.dedup();
    colors
}

/// The decades 10^k with `lo <= 10^k <= hi` (k integer).
fn decades(lo: f64, hi: f64) -> Vec<i32> {
    let mut k = lo.log10().floor() as i32;
    let mut out = Vec::new();
    while 10f64.powi(k) <= hi * (1.0 + 1e-12) {
        if 10f64.powi(k) >= lo * (1.0 - 1e-12) {
            out.push(k);
        }
        k += 1;
    }
    out
}

#[test]
fn a_profile_plot_has_one_line_per_species_and_the_data_decades_as_ticks() {
    let (times, [a, b, c]) = consecutive();
    let svg = profile_svg(&ProfilePlot {
        title: "A -> B -> C",
        times_s: &times,
        series: vec![
            Series {
                label: "A",
                values: &a,
            },
            Series {
                label: "B",
                values: &b,
            },
            Series {
                label: "C",
                values: &c,
            },
        ],
        value_axis_label: "concentration [mol/m3]",
        time_scale: AxisScale::Auto,
        value_scale: AxisScale::Auto,
    })
    .expect("drawn");
    let doc = Document::parse(&svg).expect("well-formed XML");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let palette: Vec<String> = PALETTE.iter().map(|&c| color_hex(c)).collect();
    assert_eq!(line_colors(&doc, &palette).len(), 3);
    let all_text: Vec<&str> = texts(&doc)
        .iter()
        .filter_map(|n| n.text())
        .map(str::trim)
        .collect();
    for label in ["A", "B", "C", "time [s] (log scale)"] {
        assert!(all_text.contains(&label), "{label} missing in {all_text:?}");
    }
    // Time: 1e-6 s to 1e1 s, 7 decades: a log axis labelled at every decade of the data.
    let x: Vec<String> = tick_labels(&doc, "middle")
        .into_iter()
        .map(|l| l.0)
        .collect();
    let expected: Vec<String> = decades(times[0], times[times.len() - 1])
        .into_iter()
        .map(|k| format!("1e{k}"))
        .collect();
    assert_eq!(x, expected);
    // Values: from the floor (the largest times LOG_FLOOR, above the smallest positive
    // value: A falls to 2e-1303) to the largest: the labels are powers of ten evenly spaced
    // by n decades, the first within n decades above the floor, the last within n decades
    // below the largest, at most eleven of them.
    let all: Vec<f64> = a.iter().chain(&b).chain(&c).copied().collect();
    let max = all.iter().copied().fold(f64::MIN, f64::max);
    let min_pos = all
        .iter()
        .copied()
        .filter(|&v| v > 0.0)
        .fold(f64::MAX, f64::min);
    let lo = min_pos.max(max * LOG_FLOOR);
    let y: Vec<(String, f64)> = tick_labels(&doc, "end");
    let exponents: Vec<i32> = y
        .iter()
        .map(|(t, v)| {
            let k = v.log10().round() as i32;
            assert_eq!(t, &format!("1e{k}"), "not a power of ten");
            k
        })
        .collect();
    assert!(exponents.len() >= 3 && exponents.len() <= 11, "{y:?}");
    let n = exponents[1] - exponents[0];
    assert!(
        n >= 1 && exponents.windows(2).all(|w| w[1] - w[0] == n),
        "{y:?}"
    );
    let (first, last) = (exponents[0], exponents[exponents.len() - 1]);
    let data_decades = decades(lo, max);
    assert!(
        first >= data_decades[0] - 1 && first < data_decades[0] + n,
        "{y:?}"
    );
    let top = data_decades[data_decades.len() - 1];
    assert!(last <= top + 1 && last > top - n, "{y:?}");
    // A drops below the floor: those points are left out and the plot says so.
    let left_out = a.iter().chain(&b).chain(&c).filter(|&&v| v < lo).count();
    assert!(left_out > 0);
    assert!(
        all_text
            .iter()
            .any(|t| t.starts_with(&format!("{left_out} point(s) not drawn"))),
        "{all_text:?}"
    );
}

#[test]
fn a_linear_profile_ticks_bracket_the_data_and_zero_time_is_kept() {
    // Temperature of a linear heating ramp T = 300 K + 50 K/s t from t = 0 to 4 s.
    let times: Vec<f64> = (0..=40).map(|k| 0.1 * k as f64).collect();
    let temperature: Vec<f64> = times.iter().map(|t| 300.0 + 50.0 * t).collect();
    let svg = profile_svg(&ProfilePlot {
        title: "ramp",
        times_s: &times,
        series: vec![Series {
            label: "T",
            values: &temperature,
        }],
        value_axis_label: "temperature [K]",
        time_scale: AxisScale::Auto,
        value_scale: AxisScale::Linear,
    })
    .expect("drawn");
    let doc = Document::parse(&svg).expect("well-formed XML");
    let x: Vec<f64> = tick_labels(&doc, "middle")
        .into_iter()
        .map(|l| l.1)
        .collect();
    let y: Vec<f64> = tick_labels(&doc, "end").into_iter().map(|l| l.1).collect();
    for (ticks, lo, hi) in [(&x, 0.0, 4.0), (&y, 300.0, 500.0)] {
        assert!(ticks.len() >= 3, "{ticks:?}");
        let step = ticks[1] - ticks[0];
        assert!(ticks
            .windows(2)
            .all(|w| ((w[1] - w[0]) - step).abs() < 1e-9 * step.abs().max(1.0)));
        assert!(
            ticks[0] <= lo + step && ticks[ticks.len() - 1] >= hi - step,
            "{ticks:?}"
        );
        assert!(
            ticks[0] >= lo - step && ticks[ticks.len() - 1] <= hi + step,
            "{ticks:?}"
        );
    }
    // Nothing is left out on linear axes.
    assert!(!texts(&doc)
        .iter()
        .filter_map(|n| n.text())
        .any(|t| t.contains("not drawn")));
}

#[test]
fn non_finite_values_are_refused_with_their_place_named() {
    let times = [0.0, 1.0, 2.0];
    let values = [1.0, f64::NAN, 3.0];
    let plot = ProfilePlot {
        title: "t",
        times_s: &times,
        series: vec![Series {
            label: "X",
            values: &values,
        }],
        value_axis_label: "c",
        time_scale: AxisScale::Linear,
        value_scale: AxisScale::Linear,
    };
    match profile_svg(&plot) {
        Err(e @ PlotError::NonFinite { index: 1, .. }) => {
            assert!(e.to_string().contains("`X`"), "{e}")
        }
        other => panic!("{other:?}"),
    }
    let bars = [("R1".to_string(), 1.0), ("R2".to_string(), f64::INFINITY)];
    assert!(matches!(
        bar_chart_svg("b", "v", &bars),
        Err(PlotError::NonFinite { index: 1, .. })
    ));
    assert!(matches!(
        bar_chart_svg("b", "v", &[]),
        Err(PlotError::Empty(_))
    ));
    let short = [1.0];
    let plot = ProfilePlot {
        series: vec![Series {
            label: "X",
            values: &short,
        }],
        ..plot
    };
    assert!(matches!(
        profile_svg(&plot),
        Err(PlotError::LengthMismatch { .. })
    ));
}

#[test]
fn a_bar_chart_has_one_bar_per_value_coloured_by_sign() {
    // Contributions to B's production at t = 1e-3 s in A -> B -> C: k1 c_A made by step 1,
    // -k2 c_B taken by step 2.
    let t = 1e-3f64;
    let ca = C0 * (-K1 * t).exp();
    let cb = C0 * K1 / (K2 - K1) * ((-K1 * t).exp() - (-K2 * t).exp());
    let bars = vec![
        ("R1 A -> B".to_string(), K1 * ca),
        ("R2 B -> C".to_string(), -K2 * cb),
        ("R3 <A&B> \"q\"".to_string(), 0.25 * K1 * ca),
    ];
    let svg = bar_chart_svg("B at t = 1e-3 s", "contribution [mol/(m3 s)]", &bars).expect("drawn");
    let doc = Document::parse(&svg).expect("well-formed XML");
    let fills = |color: String| {
        doc.descendants()
            .filter(|n| n.has_tag_name("rect") && n.attribute("fill") == Some(color.as_str()))
            .count()
    };
    let positive = bars.iter().filter(|b| b.1 > 0.0).count();
    let negative = bars.iter().filter(|b| b.1 < 0.0).count();
    assert_eq!(fills(color_hex(POSITIVE_COLOR)), positive);
    assert_eq!(fills(color_hex(NEGATIVE_COLOR)), negative);
    let all_text: Vec<&str> = texts(&doc)
        .iter()
        .filter_map(|n| n.text())
        .map(str::trim)
        .collect();
    for (label, _) in &bars {
        assert!(
            all_text.contains(&label.as_str()),
            "{label} not in {all_text:?}"
        );
    }
    // The value axis: evenly spaced ticks that include zero and reach both ends of the data.
    let x: Vec<f64> = tick_labels(&doc, "middle")
        .into_iter()
        .map(|l| l.1)
        .collect();
    let step = x[1] - x[0];
    assert!(x.contains(&0.0), "{x:?}");
    let (lo, hi) = (-K2 * cb, K1 * ca);
    assert!(
        x[0] <= lo + step && x[x.len() - 1] >= hi - step,
        "{x:?} for {lo}..{hi}"
    );
}

#[test]
fn the_flux_graph_has_one_arrow_per_edge_and_escapes_names() {
    let plan =
        RunPlan::load(&mechanisms_dir().join("hydrogen-oxygen.scenario.toml")).expect("demo loads");
    let mut mechanism = plan.mechanism().clone();
    let rates = step_rates(
        &plan,
        &[Span::Window {
            from_s: 1.0e-4,
            to_s: 3.0e-4,
        }],
    )
    .expect("runs");
    let graph = flux_graph(
        &mechanism,
        element_index(&mechanism, "O").expect("O"),
        &rates[0],
        DEFAULT_THRESHOLD,
    )
    .expect("graph");
    // A hostile name for one species of the graph (the drawing takes names from here).
    let renamed = graph.nodes[0];
    mechanism.species[renamed].name = "<b>&\"O'".to_string();
    let svg = flux_graph_svg(&graph, &mechanism).expect("drawn");
    let doc = Document::parse(&svg).expect("well-formed XML");
    let arrows = doc
        .descendants()
        .filter(|n| {
            n.has_tag_name("polygon") && n.attribute("fill") == Some(color_hex(EDGE_COLOR).as_str())
        })
        .count();
    assert_eq!(arrows, graph.edges.len());
    assert!(arrows > 3);
    let all_text: Vec<&str> = texts(&doc)
        .iter()
        .filter_map(|n| n.text())
        .map(str::trim)
        .collect();
    for &s in &graph.nodes {
        assert!(all_text.contains(&mechanism.species[s].name.as_str()));
    }
}

#[test]
fn largest_series_ranks_by_peak() {
    // Peaks of A, B, C above: A at t = 0 (c0), C at the end (about c0), B at
    // t* = ln(k1/k2)/(k1 - k2).
    let (_, [a, b, c]) = consecutive();
    let peak = |v: &[f64]| v.iter().copied().fold(f64::MIN, f64::max);
    let peaks = [peak(&b), peak(&a), peak(&c)];
    let order = largest_series(&peaks, 2);
    assert_eq!(order.len(), 2);
    assert!(!order.contains(&0), "B's peak is below c0: {peaks:?}");
}

#[test]
fn the_report_page_escapes_every_text_and_holds_its_sections() {
    let hostile = "<script>alert('x')</script> & \"q\"";
    let mut report = HtmlReport::new(hostile);
    report.meta(hostile);
    report.caution("careful");
    report.text_section("Summary", &[hostile.to_string()]);
    let mut table = Table::new(&["name", "value"]);
    table.row(vec![hostile.to_string(), "1.5e-3".to_string()]);
    table.row(vec!["B".to_string(), "2.0 %".to_string()]);
    let svg = bar_chart_svg("t", "v", &[(hostile.to_string(), 1.0)]).expect("drawn");
    report.table_and_chart_section("Sensitivities of <X>", "ranked", &table, &svg);
    let html = report.render();
    assert!(!html.contains("<script"), "unescaped text");
    assert!(html.contains(&escape(hostile)));
    assert!(html.contains("Sensitivities of &lt;X&gt;"));
    assert_eq!(html.matches("<section").count(), 2);
    assert_eq!(html.matches("<tr>").count(), 3);
    assert_eq!(html.matches("<td class=\"num\">").count(), 2);
    assert_eq!(html.matches("<svg").count(), 1);
    assert!(!html.contains("<?xml"));
    assert_eq!(html.matches("careful").count(), 2);
    assert_eq!(
        report.section_titles(),
        vec!["Summary", "Sensitivities of <X>"]
    );
}

#[test]
fn chart_first_sections_put_the_figure_above_the_table_and_escape_cell_titles() {
    let hostile = "\"><script>x</script>";
    let mut table = Table::new(&["step", "S"]);
    table.row_with_titles(
        vec!["R1".to_string(), "-8.2571e-1".to_string()],
        vec![String::new(), hostile.to_string()],
    );
    table.row_with_titles(
        vec!["R2".to_string(), "1.5e-3".to_string()],
        vec![String::new(), "1.5000000000000002e-3".to_string()],
    );
    let svg = bar_chart_svg(
        "t",
        "v",
        &[("R1".to_string(), -0.8), ("R2".to_string(), 1.5e-3)],
    )
    .expect("drawn");
    let mut report = HtmlReport::new("page");
    report.chart_and_table_section("Sensitivities", "ranked", &svg, &table);
    let html = report.render();
    assert!(html.find("<figure>").unwrap() < html.find("<table>").unwrap());
    assert!(
        !html.contains("<script"),
        "a title broke out of its attribute"
    );
    assert!(html.contains(&format!("<td class=\"num\" title=\"{}\">", escape(hostile))));
    assert!(html.contains("<td class=\"num\" title=\"1.5000000000000002e-3\">1.5e-3</td>"));
    // A cell with an empty title has no attribute.
    assert_eq!(html.matches("<td>R").count(), 2);
}

#[test]
fn a_long_profile_is_thinned_to_the_plot_resolution() {
    // 200,001 rows of first-order decay c = c0 exp(-k t) with k = 3 1/s over 2 s: the line
    // keeps its ends and at most four points per 1/1500 of the time axis.
    let times: Vec<f64> = (0..=200_000).map(|k| k as f64 * 1e-5).collect();
    let c: Vec<f64> = times.iter().map(|t| C0 * (-3.0 * t).exp()).collect();
    let svg = profile_svg(&ProfilePlot {
        title: "decay",
        times_s: &times,
        series: vec![Series {
            label: "A",
            values: &c,
        }],
        value_axis_label: "concentration [mol/m3]",
        time_scale: AxisScale::Linear,
        value_scale: AxisScale::Linear,
    })
    .expect("drawn");
    let doc = Document::parse(&svg).expect("well-formed XML");
    let line = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .find(|n| n.attribute("stroke") == Some(color_hex(PALETTE[0]).as_str()))
        .expect("the line");
    let points = line
        .attribute("points")
        .expect("points")
        .split_whitespace()
        .count();
    assert!(points > 1500 && points <= 4 * 1500 + 4, "{points} points");
    assert!(svg.len() < 400_000, "{} bytes", svg.len());
}
