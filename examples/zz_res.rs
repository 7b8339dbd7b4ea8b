// Temporary probe (not committed): 2-D plenum grid resolution (cells per column) against time and answer.
use dryfront::airflow::plenum_shape::{Plenum2d, Plenum2dParams};
use dryfront::airflow::solve::{solve_with_plenum, solve_with_plenum_from};
use dryfront::airflow::*;
use dryfront::props::psychro::AirState;
fn cpu() -> f64 {
    let s = std::fs::read_to_string("/proc/self/stat").unwrap();
    let f: Vec<&str> = s.rsplit(')').next().unwrap().split_whitespace().collect();
    (f[11].parse::<f64>().unwrap() + f[12].parse::<f64>().unwrap()) / 100.0
}
fn main() {
    let a: Vec<usize> = std::env::args()
        .skip(1)
        .map(|s| s.parse().unwrap())
        .collect();
    let grid = Grid {
        nx: a[0],
        ny: a[1],
        nz: a[2],
    };
    let rs = &a[3..];
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("models");
    let cp = root.join("containers/trailer-6m.json");
    let fp = root.join("fans/vane-3kw.json");
    let c = Container::from_json_str(&std::fs::read_to_string(&cp).unwrap(), &cp).unwrap();
    let f = FanCurve::from_json_str(&std::fs::read_to_string(&fp).unwrap(), &fp).unwrap();
    let law = BedLaw {
        law: ResistanceLaw::Shedd(dryfront::props::resistance::Shedd {
            a: 3.80e3,
            b: 111.0,
        }),
        packing_factor: 1.5,
        horizontal_ratio: 1.0,
    };
    let air = AirPath::same(AirState::from_rh(30.0, 0.5, 101_325.0));
    let warm_air = AirPath::same(AirState::from_rh(35.0, 0.4, 101_325.0));
    let disc = c.discretize(grid).unwrap();
    let flow = FlowSpec::Fan(f);
    let mut sols = Vec::new();
    for &r in rs {
        let p2 = Plenum2dParams {
            cells_per_column: (r > 0).then_some(r),
            ..Plenum2dParams::default()
        };
        let settings = SolverSettings {
            grid,
            plenum: PlenumModel::TwoD(p2),
            ..SolverSettings::default()
        };
        let mut pl = Plenum2d::new(&c, grid, &p2);
        let t0 = cpu();
        let s = solve_with_plenum(&c, &disc, &flow, &law, &air, &settings, &mut pl).unwrap();
        let t1 = cpu();
        let cold_it = pl.total_iters;
        let wt: f64 = std::env::var("WTOL")
            .ok()
            .and_then(|v| v.parse().ok())
            .unwrap_or(1e-8);
        let ws = SolverSettings {
            tolerance: wt,
            ..settings
        };
        let w = solve_with_plenum_from(
            &c,
            &disc,
            &flow,
            &law,
            &warm_air,
            &ws,
            &mut pl,
            Some(&s.warm),
        )
        .unwrap();
        if std::env::var("SEQ").is_ok() {
            println!(
                "cold {:?}\nwarm {:?}",
                s.changes
                    .iter()
                    .map(|x| format!("{x:.1e}"))
                    .collect::<Vec<_>>(),
                w.changes
                    .iter()
                    .map(|x| format!("{x:.1e}"))
                    .collect::<Vec<_>>()
            );
        }
        let t2 = cpu();
        println!(
            "r={r}: cold {} outer {} simplec {:.2}s; warm {} outer {} simplec {:.2}s; Q {:.4} m3/min CV {:.4} min/mean {:.4} pl mean {:.2} range {:.2}",
            s.converged.iters, cold_it, t1 - t0, w.converged.iters, pl.total_iters - cold_it, t2 - t1,
            s.summary.fan_flow_m3_per_s * 60.0, s.summary.column_flow_cv, s.summary.min_over_mean,
            s.summary.mean_plenum_pressure_pa, s.summary.plenum_pressure_range_pa
        );
        sols.push(s);
    }
    let last = sols.last().unwrap();
    for (s, r) in sols.iter().zip(rs) {
        let mut dv: f64 = 0.0;
        let mut dp: f64 = 0.0;
        let m =
            last.top_velocity_m_per_s.iter().sum::<f64>() / last.top_velocity_m_per_s.len() as f64;
        for (x, y) in s
            .top_velocity_m_per_s
            .iter()
            .zip(last.top_velocity_m_per_s.iter())
        {
            dv = dv.max((x - y).abs() / m);
        }
        for (x, y) in s
            .plenum_pressure_pa
            .iter()
            .zip(last.plenum_pressure_pa.iter())
        {
            dp = dp.max((x - y).abs());
        }
        println!(
            "r={r} vs r={}: max column top-velocity diff {:.4} of mean; max plenum p diff {:.2} Pa",
            rs.last().unwrap(),
            dv,
            dp
        );
    }
}
