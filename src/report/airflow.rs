//! The airflow command's reports: the printed summary, the per-column table, the JSON summary and SVG maps of the
//! top-surface airflow and the plenum pressure.
use std::fmt::Write as _;

use super::html::{Block, InputRecord, KeyFigure, Page};
use super::output::OutputSet;
use super::svg::{heat_map, line_chart, HeatMap, LineChart, Overlay, Series};
use crate::airflow::plenum_map::PlenumMap;
use crate::airflow::{
    AirflowSolution, BedLaw, Container, FlowSpec, Grid, PlenumModel, SolverSettings,
};
use crate::units::UnitSystem;

const MEMORY: &str = "writing to memory cannot fail";

/// What the container's plenum model is on `grid`, in a few words, and whether the file chose it.
pub fn plenum_model_text(c: &Container, grid: Grid) -> String {
    let model = match c.plenum_model_on(grid) {
        PlenumModel::Uniform => "uniform (one pressure under the whole floor)".into(),
        PlenumModel::Manifold(_) => {
            "duct (1-D along the length, one pressure across the width)".into()
        }
        PlenumModel::TwoD(p) => {
            let res = p.resolution_on(c, grid);
            let (r, n) = (res.per_column, res.columns_per_cell);
            if n > 1 {
                format!("2d (depth-averaged flow, one plenum cell under each {n} × {n} columns)")
            } else {
                format!("2d (depth-averaged flow, {r} × {r} plenum cells under each column)")
            }
        }
    };
    format!("{model}{}", default_note(c))
}

/// Said after a plenum model the container file did not name: the grid's default.
pub fn default_note(c: &Container) -> &'static str {
    if c.plenum.is_default() {
        " (the default for this grid)"
    } else {
        ""
    }
}

/// The printed summary of a solve.
pub fn human_summary(c: &Container, flow: &FlowSpec, s: &AirflowSolution, u: UnitSystem) -> String {
    let sm = &s.summary;
    let op = &s.operating_point;
    let g = s.grid;
    let mut o = String::new();
    let source = match flow {
        FlowSpec::Fan(f) => format!(
            "fan {}: {} at the air it draws",
            f.name,
            u.flow(op.fan_flow_m3_per_s)
        ),
        FlowSpec::Fixed { .. } => format!(
            "fixed flow: {} at the ambient air",
            u.flow(op.fan_flow_m3_per_s)
        ),
    };
    let _ = writeln!(
        o,
        "{}: {} of peanuts, mean depth {}, grid {}×{} columns × {} layers",
        c.name,
        u.bulk_volume(sm.bed_volume_m3),
        u.length(sm.bed_volume_m3 / c.floor_area_m2()),
        g.nx,
        g.ny,
        g.nz
    );
    let _ = writeln!(o, "plenum model: {}", plenum_model_text(c, s.grid));
    let _ = writeln!(
        o,
        "{source} ({}); into the plenum {} at the plenum air ({}), {} of dry air",
        u.density(sm.fan_air_density_kg_per_m3),
        u.flow(op.plenum_flow_m3_per_s),
        u.density(sm.plenum_air_density_kg_per_m3),
        u.mass_flow(op.dry_air_kg_per_s)
    );
    let _ = writeln!(
        o,
        "through the bed {}, leakage {} (at the plenum air)",
        u.flow(sm.bed_flow_m3_per_s),
        u.flow(sm.leakage_m3_per_s)
    );
    let _ = writeln!(
        o,
        "fan static pressure {}; inlet jet {}; plenum {} to {} (mean {})",
        u.pressure(op.fan_static_pressure_pa),
        u.velocity(op.inlet_velocity_m_per_s),
        u.pressure(fold(s, f64::INFINITY, f64::min)),
        u.pressure(fold(s, f64::NEG_INFINITY, f64::max)),
        u.pressure(sm.mean_plenum_pressure_pa)
    );
    let _ = writeln!(
        o,
        "air leaving the top: mean {} (lowest column {}, highest {}), CV {:.1} %, lowest/mean {:.2}",
        u.velocity(sm.mean_column_velocity_m_per_s),
        u.velocity(sm.min_column_velocity_m_per_s),
        u.velocity(sm.max_column_velocity_m_per_s),
        100.0 * sm.column_flow_cv,
        sm.min_over_mean
    );
    let _ = writeln!(
        o,
        "specific airflow {} of peanuts; mean dry-air flux {}",
        u.specific_airflow(sm.specific_airflow_m3_per_min_per_m3),
        u.mass_flux(sm.mean_mass_flux_kg_per_m2_s)
    );
    for a in airflow_advice(c, s) {
        let _ = writeln!(o, "{}", a.text(u));
    }
    let _ = writeln!(
        o,
        "solved: {} outer iterations, {} CG iterations, last relative change {:.1e}",
        s.converged.iters, s.converged.linear_iters, s.converged.residual
    );
    o
}

/// The good-practice advice on a solved container: its air per m³ of peanuts and how full it is.
pub fn airflow_advice(c: &Container, s: &AirflowSolution) -> Vec<crate::advice::Advice> {
    let sm = &s.summary;
    let fill = sm.bed_volume_m3 / (c.floor_area_m2() * c.wall_height_m);
    crate::advice::airflow_advice(sm.specific_airflow_m3_per_min_per_m3, fill)
}

fn fold(s: &AirflowSolution, init: f64, f: fn(f64, f64) -> f64) -> f64 {
    s.plenum_pressure_pa.iter().copied().fold(init, f)
}

/// What a solve was run with, for `summary.json`.
pub struct AirflowRun<'a> {
    /// The bed's resistance law as used.
    pub law: &'a BedLaw,
    /// The solver settings.
    pub settings: &'a SolverSettings,
    /// The air states used.
    pub air: serde_json::Value,
    /// The bed moisture used.
    pub bed: serde_json::Value,
}

/// The airflow command's files: `columns.csv`, `summary.json` and three SVG pictures.
pub fn airflow_outputs(
    c: &Container,
    flow: &FlowSpec,
    run: &AirflowRun<'_>,
    s: &AirflowSolution,
    u: UnitSystem,
) -> OutputSet {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "i",
        "j",
        "x_m",
        "y_m",
        "depth_m",
        "top_velocity_m_per_s",
        "dry_air_mass_flux_kg_per_m2_s",
        "bed_bottom_pressure_pa",
        "plenum_pressure_pa",
    ])
    .expect(MEMORY);
    for ((i, j), &v) in s.top_velocity_m_per_s.indexed_iter() {
        w.write_record([
            i.to_string(),
            j.to_string(),
            format!("{:.4}", (i as f64 + 0.5) * s.dx_m),
            format!("{:.4}", (j as f64 + 0.5) * s.dy_m),
            format!("{:.4}", s.depth_m[[i, j]]),
            format!("{v:.6}"),
            format!("{:.6}", s.mass_flux_kg_per_m2_s[[i, j]]),
            format!("{:.3}", s.bottom_pressure_pa[[i, j]]),
            // none over a closed pocket of the plenum (NaN in the solution)
            Some(s.plenum_pressure_pa[[i, j]])
                .filter(|p| !p.is_nan())
                .map_or_else(String::new, |p| format!("{p:.3}")),
        ])
        .expect(MEMORY);
    }
    let csv_bytes = w.into_inner().expect(MEMORY);
    let summary = serde_json::json!({
        "container": c.name,
        "flow": match flow {
            FlowSpec::Fan(f) => serde_json::json!({ "fan": f.name }),
            FlowSpec::Fixed { total_m3_per_s } => serde_json::json!({ "fixed_m3_per_min": total_m3_per_s * 60.0 }),
        },
        "air": run.air,
        "bed_moisture": run.bed,
        "bed_law": run.law,
        "fill": c.fill,
        "settings": run.settings,
        "operating_point": s.operating_point,
        "summary": s.summary,
        "converged": s.converged,
    });
    let json = serde_json::to_string_pretty(&summary).expect(MEMORY) + "\n";
    let overlays = crate::report::load::top_overlays(c);
    let note =
        "seen from above: air rises through the perforated floor, out of the page".to_string();
    let speed = s.top_velocity_m_per_s.mapv(|v| u.speed_value(v));
    let mean_speed = finite_mean(speed.iter().copied());
    let top = heat_map(&HeatMap {
        values: speed.view(),
        x_extent_m: c.length_m,
        y_extent_m: c.width_m,
        units: u,
        title: format!("{}: air leaving the top surface", c.name),
        x_label: "distance from front wall".into(),
        y_label: "across".into(),
        quantity: "superficial velocity".into(),
        unit: u.speed_unit().into(),
        range: None,
        min_span: 0.5 * mean_speed,
        marks: None,
        overlays: overlays.clone(),
        notes: vec![note.clone()],
    });
    let plenum_p = match &s.plenum_map {
        Some(m) => m.pressure_pa.mapv(|v| u.pressure_value(v)),
        None => s.plenum_pressure_pa.mapv(|v| u.pressure_value(v)),
    };
    let mean_p = finite_mean(plenum_p.iter().copied());
    let plenum = heat_map(&HeatMap {
        values: plenum_p.view(),
        x_extent_m: c.length_m,
        y_extent_m: c.width_m,
        units: u,
        title: format!("{}: plenum static pressure", c.name),
        x_label: "distance from front wall".into(),
        y_label: "across".into(),
        quantity: "static pressure".into(),
        unit: u.pressure_unit().into(),
        range: None,
        min_span: 0.1 * mean_p.abs(),
        marks: None,
        overlays: overlays.clone(),
        notes: vec!["the plenum under the floor, seen from above".into()],
    });
    let profile = plenum_profile_svg(c, s, u);
    let mut set = OutputSet::new();
    set.add("columns.csv", csv_bytes);
    set.add("summary.json", json);
    set.add("top_airflow.svg", top);
    set.add("plenum_pressure.svg", plenum);
    set.add("plenum_profile.svg", profile);
    if let Some(m) = &s.plenum_map {
        set.add("plenum_flow.svg", plenum_flow_svg(c, m, u, overlays, None));
        set.add("plenum.csv", plenum_csv(m));
    }
    set
}

/// True when the profile picture runs across the width: a side inlet's axis, with a plenum model that resolves
/// the width (the 2-D plenum; the uniform plenum holds one pressure everywhere, so its line runs along the length).
fn profile_across(c: &Container, s: &AirflowSolution) -> bool {
    c.inlet.wall.is_side() && s.plenum_map.is_some()
}

/// What `plenum_profile.svg` shows, for the report's caption.
fn profile_caption(c: &Container, s: &AirflowSolution) -> &'static str {
    if profile_across(c, s) {
        "Pressure across the width, along the axis of the side inlet"
    } else {
        "Pressure along the length"
    }
}

/// `plenum_profile.svg`: the plenum pressure along the inlet's axis with the bed-bottom pressure beside it. For an
/// end inlet (or a plenum that does not resolve the width) along the length, for a side inlet across the width.
fn plenum_profile_svg(c: &Container, s: &AirflowSolution, u: UnitSystem) -> String {
    let conv = |v: Vec<(f64, f64)>| -> Vec<(f64, f64)> {
        v.into_iter()
            .map(|(x, p)| (u.length_value(x), u.pressure_value(p)))
            .collect()
    };
    let mean = |v: ndarray::ArrayView1<f64>| v.mean().unwrap_or(f64::NAN);
    let b = &s.bottom_pressure_pa;
    let (title, x_label, lines, bed) = match &s.plenum_map {
        Some(m) if profile_across(c, s) => {
            let (x0, x1) = c.inlet_span_m();
            let centre = 0.5 * (x0 + x1);
            let lines = vec![
                Series {
                    name: format!(
                        "plenum, through the inlet centre ({} from front wall)",
                        u.length(centre)
                    ),
                    points: conv(m.pressure_across(centre / c.length_m)),
                },
                Series {
                    name: "plenum, along the front wall".into(),
                    points: conv(m.pressure_across(0.0)),
                },
                Series {
                    name: "plenum, along the rear wall".into(),
                    points: conv(m.pressure_across(1.0)),
                },
            ];
            let bed = Series {
                name: "bed bottom (above floor, mean along the length)".into(),
                points: conv(
                    (0..s.grid.ny)
                        .map(|j| ((j as f64 + 0.5) * s.dy_m, mean(b.column(j))))
                        .collect(),
                ),
            };
            (
                "pressure across the width",
                "distance from left wall",
                lines,
                bed,
            )
        }
        _ => {
            let bed = Series {
                name: "bed bottom (above floor, mean across)".into(),
                points: conv(
                    (0..s.grid.nx)
                        .map(|i| ((i as f64 + 0.5) * s.dx_m, mean(b.row(i))))
                        .collect(),
                ),
            };
            let lines = plenum_lines(s, u);
            (
                "pressure along the length",
                "distance from front wall",
                lines,
                bed,
            )
        }
    };
    line_chart(&LineChart {
        title: format!("{}: {title}", c.name),
        x_label: x_label.into(),
        x_unit: u.length_unit().into(),
        y_label: "static pressure".into(),
        y_unit: u.pressure_unit().into(),
        series: lines.into_iter().chain([bed]).collect(),
        ..LineChart::default()
    })
}

/// The plenum pressure along the length: on the centre line and along both side walls when the plenum model
/// resolves the width (the 2-D plenum), one line otherwise (the duct and the uniform plenum hold one pressure
/// across the width).
fn plenum_lines(s: &AirflowSolution, u: UnitSystem) -> Vec<Series> {
    let conv = |v: Vec<(f64, f64)>| -> Vec<(f64, f64)> {
        v.into_iter()
            .map(|(x, p)| (u.length_value(x), u.pressure_value(p)))
            .collect()
    };
    match &s.plenum_map {
        Some(m) => vec![
            Series {
                name: "plenum, centre line".into(),
                points: conv(m.pressure_along(0.5)),
            },
            Series {
                name: "plenum, side wall at y = 0".into(),
                points: conv(m.pressure_along(0.0)),
            },
            Series {
                name: "plenum, side wall at y = width".into(),
                points: conv(m.pressure_along(1.0)),
            },
        ],
        None => vec![Series {
            name: "plenum (one pressure across the width)".into(),
            points: (0..s.grid.nx)
                .map(|i| {
                    let p = s.plenum_pressure_pa.row(i).mean().unwrap_or(f64::NAN);
                    (
                        u.length_value((i as f64 + 0.5) * s.dx_m),
                        u.pressure_value(p),
                    )
                })
                .collect(),
        }],
    }
}

/// Most arrows drawn along the length and across the width of a plenum map.
const ARROWS_ALONG: usize = 32;
const ARROWS_ACROSS: usize = 12;

/// The plenum's air speed seen from above with arrows for its direction (each arrow the mean velocity of a block
/// of plenum cells, the longest as long as 0.9 of a block). `range` fixes the colour scale (in the report's speed
/// unit) for maps read against each other.
pub fn plenum_flow_svg(
    c: &Container,
    m: &PlenumMap,
    u: UnitSystem,
    overlays: Vec<Overlay>,
    range: Option<(f64, f64)>,
) -> String {
    let speed = m.speed_m_per_s();
    let (nx, ny) = speed.dim();
    let (sx, sy) = (nx.div_ceil(ARROWS_ALONG), ny.div_ceil(ARROWS_ACROSS));
    let mut blocks = Vec::new();
    for bi in (0..nx).step_by(sx) {
        for bj in (0..ny).step_by(sy) {
            let (i1, j1) = ((bi + sx).min(nx), (bj + sy).min(ny));
            let n = ((i1 - bi) * (j1 - bj)) as f64;
            let mean = |a: &ndarray::Array2<f64>| a.slice(ndarray::s![bi..i1, bj..j1]).sum() / n;
            let centre = (
                0.5 * (bi + i1) as f64 * m.dx_m,
                0.5 * (bj + j1) as f64 * m.dy_m,
            );
            blocks.push((centre, mean(&m.u_m_per_s), mean(&m.v_m_per_s)));
        }
    }
    let vmax = blocks.iter().map(|b| b.1.hypot(b.2)).fold(0.0, f64::max);
    let cell = (sx as f64 * m.dx_m).min(sy as f64 * m.dy_m);
    let scale = if vmax > 0.0 { 0.9 * cell / vmax } else { 0.0 };
    let mut all = overlays;
    all.extend(blocks.iter().map(|&((x, y), bu, bv)| Overlay::Arrow {
        x_m: x - 0.5 * bu * scale,
        y_m: y - 0.5 * bv * scale,
        dx_m: bu * scale,
        dy_m: bv * scale,
    }));
    let speed_u = speed.mapv(|v| u.speed_value(v));
    let mean = finite_mean(speed_u.iter().copied());
    heat_map(&HeatMap {
        values: speed_u.view(),
        x_extent_m: c.length_m,
        y_extent_m: c.width_m,
        units: u,
        title: format!("{}: air in the plenum", c.name),
        x_label: "distance from front wall".into(),
        y_label: "across".into(),
        quantity: "depth-mean speed".into(),
        unit: u.speed_unit().into(),
        range,
        min_span: 0.5 * mean,
        marks: None,
        overlays: all,
        notes: vec![
            "the plenum under the floor, seen from above (2-D plenum model, speeds averaged over its height)"
                .into(),
            format!("the longest arrow stands for {}", u.velocity(vmax)),
        ],
    })
}

/// The plenum field cell by cell: position, velocity, speed and static pressure (SI).
fn plenum_csv(m: &PlenumMap) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "i",
        "j",
        "x_m",
        "y_m",
        "u_m_per_s",
        "v_m_per_s",
        "speed_m_per_s",
        "static_pressure_pa",
    ])
    .expect(MEMORY);
    for ((i, j), &p) in m.pressure_pa.indexed_iter() {
        let (a, b) = (m.u_m_per_s[[i, j]], m.v_m_per_s[[i, j]]);
        w.write_record([
            i.to_string(),
            j.to_string(),
            format!("{:.4}", (i as f64 + 0.5) * m.dx_m),
            format!("{:.4}", (j as f64 + 0.5) * m.dy_m),
            format!("{a:.4}"),
            format!("{b:.4}"),
            format!("{:.4}", a.hypot(b)),
            format!("{p:.3}"),
        ])
        .expect(MEMORY);
    }
    w.into_inner().expect(MEMORY)
}

fn finite_mean(v: impl Iterator<Item = f64>) -> f64 {
    let (sum, n) = v
        .filter(|x| x.is_finite())
        .fold((0.0, 0usize), |(s, n), x| (s + x, n + 1));
    if n == 0 {
        0.0
    } else {
        sum / n as f64
    }
}

/// The HTML report of an airflow solve, showing the pictures of its file set; `printed` is the terminal summary.
pub fn airflow_page(
    c: &Container,
    s: &AirflowSolution,
    u: UnitSystem,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let sm = &s.summary;
    let pic = |name: &str, caption: &str| Block::Picture {
        svg: set.text(name).to_string(),
        caption: format!("{caption} (also written as {name})"),
        zoom: false,
    };
    Page {
        title: format!("{} — airflow", c.name),
        lead: format!(
            "Steady airflow through {} ({} of peanuts), grid {}×{}×{}.",
            c.name,
            u.bulk_volume(sm.bed_volume_m3),
            s.grid.nx,
            s.grid.ny,
            s.grid.nz
        ),
        answer: vec![
            KeyFigure::new(
                "through the bed",
                u.flow(sm.bed_flow_m3_per_s),
                format!(
                    "{} of peanuts",
                    u.specific_airflow(sm.specific_airflow_m3_per_min_per_m3)
                ),
            ),
            KeyFigure::new(
                "fan static pressure",
                u.pressure(s.operating_point.fan_static_pressure_pa),
                format!("plenum mean {}", u.pressure(sm.mean_plenum_pressure_pa)),
            ),
            KeyFigure::new(
                "evenness",
                format!("CV {:.1} %", 100.0 * sm.column_flow_cv),
                format!("lowest column / mean {:.2}", sm.min_over_mean),
            ),
        ],
        notes: airflow_advice(c, s).iter().map(|a| a.text(u)).collect(),
        body: vec![
            Block::Heading("Pictures".into()),
            pic("top_airflow.svg", "Air leaving the top surface"),
            pic("plenum_pressure.svg", "Static pressure in the plenum"),
            pic("plenum_profile.svg", profile_caption(c, s)),
        ]
        .into_iter()
        .chain(
            set.has("plenum_flow.svg")
                .then(|| pic("plenum_flow.svg", "Air in the plenum: speed and direction")),
        )
        .collect(),
        summary: Some(printed),
        inputs,
        cautions: crate::report::load::CAUTIONS.into(),
    }
}
