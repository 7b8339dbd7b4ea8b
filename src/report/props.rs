//! The demo's property table: a crop at a day's worth of air states, ambient and heated, as a printed table and as
//! `properties.csv`.
use crate::props::psychro::AirState;
use crate::units::{wb_from_db, UnitSystem, J_PER_BTU, KG_PER_LB};

/// One row of the property table.
pub struct PropertyRow {
    /// The air state's name.
    pub label: &'static str,
    /// The ambient air.
    pub ambient: AirState,
    /// The same air heated.
    pub heated: AirState,
    /// Kernel EMC at the heated air, d.b.
    pub kernel_emc_db: f64,
    /// Hull EMC at the heated air, d.b.
    pub hull_emc_db: f64,
    /// Whole-pod EMC at the heated air, d.b.
    pub pod_emc_db: f64,
}

/// The printed table and the CSV bytes.
pub fn property_table(rows: &[PropertyRow], u: UnitSystem) -> (String, Vec<u8>) {
    let t_head = format!("T {}", u.temp_unit());
    let p_head = format!("plenum {}", u.temp_unit());
    let h_head = match u {
        UnitSystem::Si => "kJ/kg da",
        UnitSystem::Us => "BTU/lb da",
    };
    let mut text =
        String::from("Bramble Fork buying point (invented demo data): peanut-inshell properties\n");
    text.push_str(&format!(
        "{:<20} {:>8} {:>7} {:>9} {:>8} {:>11} {:>11} {:>11} {:>10}\n",
        "air state", t_head, "RH %", p_head, "RH %", "kernel %wb", "hull %wb", "pod %wb", h_head
    ));
    let mut csv = String::from(
        "air_state,ambient_t_c,ambient_rh_pct,plenum_t_c,plenum_rh_pct,humidity_ratio_kg_per_kg,\
         kernel_emc_wb_pct,hull_emc_wb_pct,pod_emc_wb_pct,heat_kj_per_kg_dry_air\n",
    );
    for r in rows {
        let heat_kj = r.ambient.heat_to_j_per_kg(r.heated.t_c) / 1000.0;
        let cells = [
            r.label.to_string(),
            format!("{:.2}", r.ambient.t_c),
            format!("{:.1}", 100.0 * r.ambient.rh()),
            format!("{:.2}", r.heated.t_c),
            format!("{:.1}", 100.0 * r.heated.rh()),
            format!("{:.6}", r.ambient.w),
            format!("{:.2}", 100.0 * wb_from_db(r.kernel_emc_db)),
            format!("{:.2}", 100.0 * wb_from_db(r.hull_emc_db)),
            format!("{:.2}", 100.0 * wb_from_db(r.pod_emc_db)),
            format!("{heat_kj:.2}"),
        ];
        let heat_text = match u {
            UnitSystem::Si => cells[9].clone(),
            UnitSystem::Us => format!("{:.2}", heat_kj * 1000.0 * KG_PER_LB / J_PER_BTU),
        };
        text.push_str(&format!(
            "{:<20} {:>8} {:>7} {:>9} {:>8} {:>11} {:>11} {:>11} {:>10}\n",
            cells[0],
            format!("{:.2}", u.temp_value(r.ambient.t_c)),
            cells[2],
            format!("{:.2}", u.temp_value(r.heated.t_c)),
            cells[4],
            cells[6],
            cells[7],
            cells[8],
            heat_text
        ));
        csv.push_str(&cells.join(","));
        csv.push('\n');
    }
    (text, csv.into_bytes())
}
