//! Structure of the SVG charts on synthetic data: one panel per series, labels present and
//! escaped, no NaN in coordinates, nice tick values, statuses with fixed colours and a legend.
//!
//! With `SADDLE_GALLERY=DIR` set, the charts are also written to DIR for rendering and looking.

use saddle::output::svg::{
    panel_grid, panel_grid_with, panel_grids, status_colour, status_map, GridOptions, Panel,
    PanelGrid, Series, StatusMap, YRange,
};

/// Writes `svg` to `$SADDLE_GALLERY/name` when the variable is set.
fn keep(name: &str, svg: &str) {
    if let Ok(dir) = std::env::var("SADDLE_GALLERY") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(std::path::Path::new(&dir).join(name), svg).unwrap();
    }
}

/// Every numeric attribute value in the document (x, y, width, points...).
fn coordinates(svg: &str) -> Vec<String> {
    let mut out = Vec::new();
    for attr in [
        " x=\"",
        " y=\"",
        " x1=\"",
        " y1=\"",
        " x2=\"",
        " y2=\"",
        " cx=\"",
        " cy=\"",
        " width=\"",
        " height=\"",
        " points=\"",
    ] {
        let mut rest = svg;
        while let Some(i) = rest.find(attr) {
            rest = &rest[i + attr.len()..];
            let end = rest.find('"').unwrap();
            out.push(rest[..end].to_string());
            rest = &rest[end..];
        }
    }
    out
}

/// Asserts every coordinate parses as a finite number.
fn assert_coordinates_finite(svg: &str) {
    let coords = coordinates(svg);
    assert!(!coords.is_empty());
    for c in coords {
        for part in c.split([' ', ',']).filter(|p| !p.is_empty()) {
            let v: f64 = part
                .parse()
                .unwrap_or_else(|_| panic!("coordinate `{part}` is not a number"));
            assert!(v.is_finite(), "coordinate {part}");
        }
    }
}

/// The text content of every `<text ... class="CLASS">` element.
fn texts_of_class(svg: &str, class: &str) -> Vec<String> {
    let needle = format!("class=\"{class}\"");
    svg.lines()
        .filter(|l| l.starts_with("<text") && l.contains(&needle))
        .map(|l| {
            let start = l.find('>').unwrap() + 1;
            let end = l.rfind("</text>").unwrap();
            l[start..end].to_string()
        })
        .collect()
}

/// Minimal well-formedness: tags balance (ignoring self-closing ones) and no raw `&` or `<`
/// appears in text.
fn assert_balanced(svg: &str) {
    let mut stack: Vec<String> = Vec::new();
    let mut rest = svg;
    while let Some(i) = rest.find('<') {
        let after = &rest[i + 1..];
        let end = after.find('>').expect("unclosed tag");
        let tag = &after[..end];
        let text_before = &rest[..i];
        for (k, _) in text_before.match_indices('&') {
            let ent = &text_before[k..];
            assert!(
                ["&amp;", "&lt;", "&gt;", "&quot;", "&#39;"]
                    .iter()
                    .any(|e| ent.starts_with(e)),
                "raw & in text: {}",
                &ent[..ent.len().min(20)]
            );
        }
        if let Some(name) = tag.strip_prefix('/') {
            let open = stack.pop().expect("close without open");
            assert_eq!(open, name, "mismatched tags");
        } else if !tag.ends_with('/') {
            let name = tag.split_whitespace().next().unwrap().to_string();
            stack.push(name);
        }
        rest = &after[end + 1..];
    }
    assert!(stack.is_empty(), "unclosed: {stack:?}");
}

/// Impulse responses of the three-equation demo economy to a policy surprise, in the shape of
/// its solution (geometric decay at the rule's persistence 0.6; magnitudes invented for the demo).
fn harbour_grid() -> PanelGrid {
    let rho: f64 = 0.6;
    let h = 41;
    let decay = |a: f64| (0..h).map(|t| a * rho.powi(t)).collect::<Vec<f64>>();
    let panel = |title: &str, sub: &str, values: Vec<f64>| Panel {
        title: title.to_string(),
        subtitle: Some(sub.to_string()),
        series: vec![Series {
            name: "e_rate".to_string(),
            values,
        }],
    };
    PanelGrid {
        title: "Responses to a one-standard-deviation policy surprise (e_rate)".to_string(),
        x_label: "quarters after the impulse".to_string(),
        y_label: Some("deviation from steady state".to_string()),
        panels: vec![
            panel("gap", "output gap, percent", decay(-0.412)),
            panel("infl", "inflation, quarterly percent", decay(-0.0871)),
            panel("rate", "policy rate, quarterly percent", decay(0.1103)),
            panel("drift", "rule disturbance", decay(0.25)),
        ],
    }
}

#[test]
fn one_panel_per_variable_with_titles_units_and_axis_labels() {
    let grid = harbour_grid();
    let svg = panel_grid(&grid);
    keep("irf_harbour.svg", &svg);
    assert!(svg.starts_with("<svg xmlns=\"http://www.w3.org/2000/svg\""));
    assert_balanced(&svg);
    assert_coordinates_finite(&svg);
    assert_eq!(svg.matches("<g class=\"panel\"").count(), 4);
    assert_eq!(
        texts_of_class(&svg, "panel-title"),
        vec!["gap", "infl", "rate", "drift"]
    );
    assert_eq!(
        texts_of_class(&svg, "panel-subtitle"),
        vec![
            "output gap, percent",
            "inflation, quarterly percent",
            "policy rate, quarterly percent",
            "rule disturbance"
        ]
    );
    assert!(svg.contains("(e_rate)"), "the shock is named in the title");
    assert_eq!(
        texts_of_class(&svg, "x-label"),
        vec!["quarters after the impulse"]
    );
    assert_eq!(
        texts_of_class(&svg, "y-label"),
        vec!["deviation from steady state"]
    );
    // Every panel has a zero line (impulse responses include zero in range).
    assert_eq!(svg.matches("class=\"zero-line\"").count(), 4);
    // One series name: no legend.
    assert!(!svg.contains("class=\"legend\""));
}

#[test]
fn tick_labels_are_nice_numbers_and_periods_are_thinned() {
    let svg = panel_grid(&harbour_grid());
    let panels: Vec<&str> = svg.split("<g class=\"panel\"").skip(1).collect();
    assert_eq!(panels.len(), 4);
    for panel in panels {
        let labels = texts_of_class(panel, "y-tick");
        assert!(labels.len() >= 3, "{labels:?}");
        // One format per panel: the same number of decimals on every label.
        let decimals = |l: &String| l.split('.').nth(1).map_or(0, |d| d.len());
        assert!(
            labels.iter().all(|l| decimals(l) == decimals(&labels[0])),
            "{labels:?}"
        );
        let values: Vec<f64> = labels
            .iter()
            .map(|t| t.replace('\u{2212}', "-").parse::<f64>().unwrap())
            .collect();
        // Evenly spaced by a step of 1, 2 or 5 times a power of ten, zero among them.
        let step = (values[1] - values[0]).abs();
        let e = step.log10().floor();
        let m = step / 10f64.powf(e);
        assert!(
            [1.0, 2.0, 5.0, 10.0].iter().any(|n| (m - n).abs() < 1e-6),
            "step {step} is not nice: {labels:?}"
        );
        for w in values.windows(2) {
            assert!(
                ((w[1] - w[0]).abs() - step).abs() < 1e-9 * step.max(1.0),
                "{labels:?}"
            );
        }
        assert!(values.contains(&0.0), "{labels:?}");
    }
    let x_ticks = texts_of_class(&svg, "x-tick");
    let per_panel = x_ticks.len() / 4;
    assert!(
        (3..=9).contains(&per_panel),
        "{per_panel} period labels per panel"
    );
    assert_eq!(x_ticks[0], "0");
    assert!(x_ticks.contains(&"40".to_string()));
}

#[test]
fn text_is_escaped_and_long_titles_shortened() {
    let grid = PanelGrid {
        title: "Paths <simulated> & \"quoted\"".to_string(),
        x_label: "period".to_string(),
        y_label: None,
        panels: vec![Panel {
            title: "a_variable_with_an_extraordinarily_long_name_that_cannot_fit_in_one_small_panel_at_all_whatsoever".to_string(),
            subtitle: Some("units: 'percent' <of GDP> & more".to_string()),
            series: vec![Series {
                name: "path".to_string(),
                values: vec![1.0, 2.0, 3.0],
            }],
        }; 6],
    };
    let svg = panel_grid(&grid);
    keep("escaping.svg", &svg);
    assert_balanced(&svg);
    assert!(svg.contains("Paths &lt;simulated&gt; &amp; &quot;quoted&quot;"));
    assert!(svg.contains("&#39;percent&#39; &lt;of GDP&gt; &amp; more"));
    let titles = texts_of_class(&svg, "panel-title");
    assert_eq!(titles.len(), 6);
    assert!(titles.iter().all(|t| t.ends_with('…')), "{titles:?}");
    // The full title is kept as a tooltip.
    assert!(svg.contains("<title>a_variable_with_an_extraordinarily_long_name"));
}

#[test]
fn non_finite_constant_and_negligible_series_are_handled() {
    let mut values = vec![0.5; 20];
    values[3] = f64::NAN;
    values[7] = f64::INFINITY;
    let grid = PanelGrid {
        title: "Awkward data".to_string(),
        x_label: "period".to_string(),
        y_label: None,
        panels: vec![
            Panel {
                title: "gaps".to_string(),
                subtitle: None,
                series: vec![Series {
                    name: "s".to_string(),
                    values: values.clone(),
                }],
            },
            Panel {
                title: "constant".to_string(),
                subtitle: None,
                series: vec![Series {
                    name: "s".to_string(),
                    values: vec![4.2; 20],
                }],
            },
            Panel {
                title: "roundoff".to_string(),
                subtitle: None,
                series: vec![Series {
                    name: "s".to_string(),
                    values: (0..20).map(|i| 1e-17 * (i as f64).sin()).collect(),
                }],
            },
            Panel {
                title: "nothing".to_string(),
                subtitle: None,
                series: vec![Series {
                    name: "s".to_string(),
                    values: vec![f64::NAN; 20],
                }],
            },
            Panel {
                title: "single".to_string(),
                subtitle: None,
                series: vec![Series {
                    name: "s".to_string(),
                    values: vec![2.0],
                }],
            },
        ],
    };
    for y_range in [YRange::IncludeZero, YRange::Data] {
        let svg = panel_grid_with(
            &grid,
            &GridOptions {
                y_range,
                ..GridOptions::default()
            },
        );
        if y_range == YRange::Data {
            keep("awkward_levels.svg", &svg);
        } else {
            keep("awkward.svg", &svg);
        }
        assert_balanced(&svg);
        assert_coordinates_finite(&svg);
        assert!(!svg.contains("NaN") && !svg.contains("inf"));
        assert_eq!(svg.matches("<g class=\"panel\"").count(), 5);
        let messages = texts_of_class(&svg, "panel-message");
        assert!(messages.contains(&"zero throughout (to rounding)".to_string()));
        assert!(messages.contains(&"no finite values to draw".to_string()));
        // The NaN and the infinity split the first panel's line in three pieces.
        let first = &svg[svg.find("data-title=\"gaps\"").unwrap()..];
        let first = &first[..first.find("</g>\n</g>").unwrap()];
        assert_eq!(first.matches("<polyline").count(), 3);
    }
}

#[test]
fn several_series_get_a_legend_and_consistent_colours() {
    let names = ["e_rate", "e_cost"];
    let grids: Vec<PanelGrid> = (0..2)
        .map(|g| PanelGrid {
            title: format!("Grid {g}"),
            x_label: "period".to_string(),
            y_label: None,
            panels: (0..3)
                .map(|p| Panel {
                    title: format!("v{p}"),
                    subtitle: None,
                    series: names
                        .iter()
                        .enumerate()
                        .map(|(k, n)| Series {
                            name: n.to_string(),
                            values: (0..12).map(|t| (k as f64 + 1.0) * 0.8f64.powi(t)).collect(),
                        })
                        .collect(),
                })
                .collect(),
        })
        .collect();
    let svg = panel_grids(&grids, &GridOptions::default());
    keep("two_series.svg", &svg);
    assert_balanced(&svg);
    assert_eq!(svg.matches("class=\"legend\"").count(), 2);
    assert_eq!(svg.matches("<g class=\"panel\"").count(), 6);
    // Each name keeps one colour everywhere.
    for n in names {
        let mut colours = std::collections::HashSet::new();
        let tag = format!("data-name=\"{n}\">\n<polyline");
        for (i, _) in svg.match_indices(&tag) {
            let rest = &svg[i..];
            let s = rest.find("stroke=\"").unwrap() + 8;
            colours.insert(rest[s..s + 7].to_string());
        }
        assert_eq!(colours.len(), 1, "{n}: {colours:?}");
    }
}

#[test]
fn long_simulations_stay_small() {
    let values: Vec<f64> = (0..1_000_000)
        .map(|i| ((i as f64) * 0.001).sin() + 0.1 * ((i as f64) * 0.37).cos())
        .collect();
    let grid = PanelGrid {
        title: "A long path".to_string(),
        x_label: "period".to_string(),
        y_label: None,
        panels: vec![Panel {
            title: "x".to_string(),
            subtitle: None,
            series: vec![Series {
                name: "x".to_string(),
                values,
            }],
        }],
    };
    let svg = panel_grid(&grid);
    assert!(svg.len() < 200_000, "{} bytes", svg.len());
    assert_coordinates_finite(&svg);
    let x_ticks = texts_of_class(&svg, "x-tick");
    assert!(x_ticks.len() <= 10 && x_ticks.len() >= 2, "{x_ticks:?}");
}

#[test]
fn empty_inputs_give_a_valid_document() {
    let svg = panel_grid(&PanelGrid {
        title: String::new(),
        x_label: String::new(),
        y_label: None,
        panels: vec![],
    });
    assert_balanced(&svg);
    assert!(svg.contains("no panels to draw"));
    let svg = panel_grids(&[], &GridOptions::default());
    assert_balanced(&svg);
    let svg = status_map(&StatusMap {
        title: String::new(),
        x_name: "a".to_string(),
        x_values: vec![],
        y: None,
        status: vec![],
    });
    assert_balanced(&svg);
    assert_coordinates_finite(&svg);
}

/// The determinacy region of the three-equation economy: determinate iff
/// kappa*(phi_pi - 1) + (1 - beta)*phi_y > 0 (Bullard and Mitra 2002, "Learning about monetary
/// policy rules", J. Monetary Economics 49, condition for determinacy of the Taylor rule),
/// with beta = 0.99 and kappa = 0.1 as in the demo; used here only as a shape to draw.
fn bullard_mitra_map(nx: usize, ny: usize) -> StatusMap {
    let (beta, kappa) = (0.99, 0.1);
    let xs: Vec<f64> = (0..nx).map(|i| 3.0 * i as f64 / (nx - 1) as f64).collect();
    let ys: Vec<f64> = (0..ny).map(|j| 2.0 * j as f64 / (ny - 1) as f64).collect();
    let mut status = Vec::new();
    for &x in &xs {
        for &y in &ys {
            let s = kappa * (x - 1.0) + (1.0 - beta) * y;
            status.push(if s > 0.0 {
                "determinate"
            } else {
                "indeterminate"
            });
        }
    }
    // A few points where the steady state failed, to show the error class.
    status[3] = "error";
    status[4] = "error";
    StatusMap {
        title: "Determinacy of the harbour economy over the policy rule".to_string(),
        x_name: "phi_pi".to_string(),
        x_values: xs,
        y: Some(("phi_y".to_string(), ys)),
        status: status.into_iter().map(String::from).collect(),
    }
}

#[test]
fn status_map_colours_cells_by_status_with_a_legend() {
    let map = bullard_mitra_map(61, 41);
    let svg = status_map(&map);
    keep("sweep_map.svg", &svg);
    assert_balanced(&svg);
    assert_coordinates_finite(&svg);
    let legend: Vec<&str> = svg
        .match_indices("class=\"legend-entry\" data-status=\"")
        .map(|(i, m)| {
            let rest = &svg[i + m.len()..];
            &rest[..rest.find('"').unwrap()]
        })
        .collect();
    assert_eq!(legend, vec!["determinate", "indeterminate", "error"]);
    assert!(svg.contains("determinate (") && svg.contains("indeterminate ("));
    // Runs of one status are merged: far fewer rectangles than points, but every column has one.
    let cells = svg.matches("<rect x=").count();
    assert!((61..61 * 41 / 4).contains(&cells), "{cells} rectangles");
    // Fixed colours per status.
    assert_eq!(status_colour("determinate"), "#009E73");
    assert_ne!(status_colour("indeterminate"), status_colour("determinate"));
    assert!(svg.contains(status_colour("determinate")));
    assert_eq!(texts_of_class(&svg, "x-label"), vec!["phi_pi"]);
    assert_eq!(texts_of_class(&svg, "y-label"), vec!["phi_y"]);
    let x_ticks = texts_of_class(&svg, "x-tick");
    assert!(x_ticks.contains(&"0".to_string()) || x_ticks.contains(&"0.0".to_string()));
}

#[test]
fn status_strip_for_one_parameter() {
    let xs: Vec<f64> = (0..31).map(|i| 0.1 * i as f64).collect();
    let status: Vec<String> = xs
        .iter()
        .map(|&x| {
            if x < 1.0 {
                "indeterminate"
            } else if x < 2.5 {
                "determinate"
            } else {
                "no_stable_solution"
            }
        })
        .map(String::from)
        .collect();
    let svg = status_map(&StatusMap {
        title: "Status along phi_pi".to_string(),
        x_name: "phi_pi".to_string(),
        x_values: xs,
        y: None,
        status,
    });
    keep("sweep_strip.svg", &svg);
    assert_balanced(&svg);
    assert_coordinates_finite(&svg);
    // Three runs, three rectangles (plus legend swatches and the frame).
    // Three runs and three legend entries.
    assert_eq!(svg.matches("data-status=\"").count(), 6);
    assert!(svg.contains("no stable solution ("));
    assert!(texts_of_class(&svg, "y-label").is_empty());
}

#[test]
fn status_map_survives_mismatch_and_huge_or_odd_axes() {
    // Fewer statuses than points, descending and non-monotone axes, a very fine axis.
    let map = StatusMap {
        title: "odd".to_string(),
        x_name: "a".to_string(),
        x_values: vec![3.0, 2.0, 1.0],
        y: Some(("b".to_string(), vec![0.0, 5.0, 1.0, f64::NAN])),
        status: vec!["determinate".to_string(); 7],
    };
    let svg = status_map(&map);
    assert_balanced(&svg);
    assert_coordinates_finite(&svg);
    assert!(svg.contains("missing points are left white"));
    assert!(svg.contains("b (grid index)"));

    let n = 5000;
    let xs: Vec<f64> = (0..n).map(|i| i as f64).collect();
    let status: Vec<String> = (0..n)
        .map(|i| {
            if i % 2 == 0 {
                "determinate"
            } else {
                "rank_failure"
            }
            .to_string()
        })
        .collect();
    let svg = status_map(&StatusMap {
        title: "fine".to_string(),
        x_name: "a".to_string(),
        x_values: xs,
        y: None,
        status,
    });
    assert!(svg.len() < 200_000, "{}", svg.len());
    assert!(svg.contains("drawn at every 9th point"));
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    fn value() -> impl Strategy<Value = f64> {
        prop_oneof![
            8 => -1e3f64..1e3,
            1 => -1e-14f64..1e-14,
            1 => Just(f64::NAN),
            1 => Just(f64::INFINITY),
            1 => Just(f64::NEG_INFINITY),
            1 => Just(1e305),
            1 => Just(-1e305),
            1 => Just(0.0),
            1 => -1e12f64..1e12,
        ]
    }

    fn panel() -> impl Strategy<Value = Panel> {
        (
            ".{0,80}",
            proptest::option::of(".{0,120}"),
            proptest::collection::vec((".{0,12}", proptest::collection::vec(value(), 0..60)), 0..4),
        )
            .prop_map(|(title, subtitle, series)| Panel {
                title,
                subtitle,
                series: series
                    .into_iter()
                    .map(|(name, values)| Series { name, values })
                    .collect(),
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]

        /// Any data and any text give a balanced document with finite coordinates.
        #[test]
        fn any_grid_renders(
            title in ".{0,100}",
            panels in proptest::collection::vec(panel(), 0..10),
            levels in any::<bool>(),
            first in -5i64..5,
        ) {
            let grid = PanelGrid { title, x_label: "period".into(), y_label: Some("y <&>".into()), panels };
            let svg = panel_grid_with(&grid, &GridOptions {
                y_range: if levels { YRange::Data } else { YRange::IncludeZero },
                first_period: first,
                ..GridOptions::default()
            });
            assert_balanced(&svg);
            assert_coordinates_finite(&svg);
            prop_assert_eq!(svg.matches("<g class=\"panel\"").count(), grid.panels.len());
        }

        /// Any statuses and axis values give a balanced map with finite coordinates.
        #[test]
        fn any_status_map_renders(
            xs in proptest::collection::vec(value(), 0..20),
            ys in proptest::option::of(proptest::collection::vec(value(), 0..20)),
            status in proptest::collection::vec(
                prop_oneof![
                    Just("determinate".to_string()),
                    Just("indeterminate".to_string()),
                    Just("no_stable_solution".to_string()),
                    Just("rank_failure".to_string()),
                    Just("error".to_string()),
                    ".{0,10}",
                ],
                0..500,
            ),
        ) {
            let map = StatusMap {
                title: "t".into(),
                x_name: "a <b>".into(),
                x_values: xs,
                y: ys.map(|v| ("c & d".to_string(), v)),
                status,
            };
            let svg = status_map(&map);
            assert_balanced(&svg);
            assert_coordinates_finite(&svg);
        }
    }
}

#[test]
fn many_and_single_panel_layouts() {
    let mk = |n: usize| PanelGrid {
        title: format!(
            "Responses of {n} variables to a one-standard-deviation impulse in e_tech (technology)"
        ),
        x_label: "periods after the impulse".to_string(),
        y_label: Some("deviation from steady state".to_string()),
        panels: (0..n)
            .map(|i| Panel {
                title: format!("var_{i}"),
                subtitle: Some(format!("variable number {i}, percent of steady state")),
                series: vec![Series {
                    name: "e_tech".to_string(),
                    values: (0..=40)
                        .map(|t| {
                            let t = t as f64;
                            (i as f64 - 5.0)
                                * 10f64.powi(i as i32 - 6)
                                * (t * 0.3).sin()
                                * 0.9f64.powf(t)
                        })
                        .collect(),
                }],
            })
            .collect(),
    };
    for n in [1usize, 12] {
        let svg = panel_grid(&mk(n));
        keep(&format!("layout_{n}.svg"), &svg);
        assert_balanced(&svg);
        assert_coordinates_finite(&svg);
        assert_eq!(svg.matches("<g class=\"panel\"").count(), n);
    }
}
