//! The layer step four columns at a time (`step_columns4`, what a drying run uses) against one column at a time
//! (`step_column`): the same to the bit when the material steps its four pods one by one, and within round-off on
//! the bundled peanut, whose four pods go through the four-lane path of its pod law.
mod deep_bed_support;

use deep_bed_support::{peanut, SteppedBy};
use dryfront::drying::layer::{
    step_column, step_columns4, ColumnForcing, ColumnMut, ColumnStepTotals, LayerAir, LayerMaterial,
};
use dryfront::drying::material::CropMaterial;

/// One column's cells: hull, kernel, curve start, temperature, dry matter.
type Cells = [Vec<f64>; 5];

/// Four columns unlike each other: a wet one that dries, a cool damp one that takes up water and gets
/// condensation from warm humid air, one with an empty cell and no air at all, and a short one of 6 layers.
fn columns() -> ([Cells; 4], [ColumnForcing; 4]) {
    let column = |n: usize, hull: f64, kernel: f64, t: f64| -> Cells {
        let d = (0..n).map(|k| 20.0 + k as f64).collect();
        [
            (0..n).map(|k| hull - 0.004 * k as f64).collect(),
            (0..n).map(|k| kernel + 0.002 * k as f64).collect(),
            vec![kernel; n],
            (0..n).map(|k| t + 0.1 * k as f64).collect(),
            d,
        ]
    };
    let mut third = column(10, 0.30, 0.22, 20.0);
    third[4][4] = 0.0;
    let cells = [
        column(10, 0.45, 0.30, 18.0),
        column(10, 0.09, 0.08, 12.0),
        third,
        column(6, 0.25, 0.20, 25.0),
    ];
    let forcing = |t_c: f64, w: f64, g: f64| ColumnForcing {
        air_in: LayerAir { t_c, w },
        dry_air_kg_per_m2_s: g,
        p_pa: 101_325.0,
        dt_s: 360.0,
    };
    (
        cells,
        [
            forcing(35.0, 0.010, 0.25),
            forcing(30.0, 0.026, 0.30),
            forcing(35.0, 0.010, 0.0),
            forcing(40.0, 0.012, 0.15),
        ],
    )
}

fn view(c: &mut Cells) -> ColumnMut<'_> {
    let [h, k, s, t, d] = c;
    ColumnMut {
        hull_db: h,
        kernel_db: k,
        curve_start_db: s,
        temp_c: t,
        dry_matter_kg_per_m2: d,
    }
}

/// Four columns after ten steps, and what each step returned.
type Stepped = ([Cells; 4], Vec<[(LayerAir, ColumnStepTotals); 4]>);

/// Four columns stepped ten times together and one by one.
fn both_ways<M: LayerMaterial>(material: &M) -> [Stepped; 2] {
    let (start, forcing) = columns();
    let (mut together, mut alone) = (start.clone(), start);
    let (mut out_together, mut out_alone) = (Vec::new(), Vec::new());
    for _ in 0..10 {
        let [a, b, c, d] = &mut together;
        out_together.push(step_columns4(
            material,
            [view(a), view(b), view(c), view(d)],
            forcing,
        ));
        let mut one = [(forcing[0].air_in, ColumnStepTotals::default()); 4];
        for (l, cells) in alone.iter_mut().enumerate() {
            one[l] = step_column(material, view(cells), forcing[l]);
        }
        out_alone.push(one);
    }
    [(together, out_together), (alone, out_alone)]
}

#[test]
fn four_columns_step_together_as_one_by_one_to_the_bit_with_pods_stepped_one_by_one() {
    // the peanut with the trait's default four-at-a-time step (one pod after another)
    let one_by_one = SteppedBy(peanut().1, |p: &CropMaterial, m, t_c, rh, dt_s| {
        p.thin_layer_step(m, t_c, rh, dt_s)
    });
    let [together, alone] = both_ways(&one_by_one);
    assert_eq!(together, alone);
    // the cases are what they say: the humid column took up water and condensed some
    let totals = &together.1[0][1].1;
    assert!(totals.water_removed_kg_per_m2 < 0.0 && totals.condensate_kg_per_m2 > 0.0);
}

/// Ten steps of the bundled peanut: moisture, temperatures and exhaust air within 1e-14 relative (measured 6.4e-15),
/// the step totals within 1e-13 (measured 6.8e-14: a column's net water can be a small difference of its cells'):
/// round-off in the pod law's exponentials, carried through ten steps, the equilibrium cap's root and condensation.
#[test]
fn four_columns_step_together_as_one_by_one_to_round_off_on_the_bundled_peanut() {
    let [(cells4, out4), (cells1, out1)] = both_ways(&peanut().1);
    let close = |a: f64, b: f64, tol: f64| (a - b).abs() <= tol * a.abs().max(b.abs()).max(1e-30);
    for (c4, c1) in cells4.iter().zip(&cells1) {
        for (v4, v1) in c4.iter().zip(c1) {
            for (a, b) in v4.iter().zip(v1) {
                assert!(close(*a, *b, 1e-14), "{a} against {b}");
            }
        }
    }
    for (s4, s1) in out4.iter().zip(&out1) {
        for ((air4, t4), (air1, t1)) in s4.iter().zip(s1) {
            assert!(close(air4.t_c, air1.t_c, 1e-14) && close(air4.w, air1.w, 1e-14));
            assert!(close(
                t4.water_removed_kg_per_m2,
                t1.water_removed_kg_per_m2,
                1e-13
            ));
            assert!(close(
                t4.condensate_kg_per_m2,
                t1.condensate_kg_per_m2,
                1e-13
            ));
            assert!(close(
                t4.sorption_heat_j_per_m2,
                t1.sorption_heat_j_per_m2,
                1e-13
            ));
            assert_eq!(t4.below_floor.is_some(), t1.below_floor.is_some());
        }
    }
    assert_ne!(cells4, cells1, "the four-lane path was not taken");
}

/// Columns stepped over different time steps cannot share one four-pod call: each goes through `step_column`, so
/// the group's results are the one-by-one results to the bit (and the column with the shorter step is not stepped
/// with the others' step).
#[test]
fn four_columns_with_different_time_steps_step_one_by_one() {
    let material = peanut().1;
    let (start, mut forcing) = columns();
    forcing[1].dt_s = 180.0;
    let (mut together, mut alone) = (start.clone(), start);
    let [a, b, c, d] = &mut together;
    let out4 = step_columns4(&material, [view(a), view(b), view(c), view(d)], forcing);
    for (l, cells) in alone.iter_mut().enumerate() {
        assert_eq!(out4[l], step_column(&material, view(cells), forcing[l]));
    }
    assert_eq!(together, alone);
}
