//! The design variants of `dryfront design`: the scenario's load on other containers, fans, plenum models or fill
//! depths. A variant is written as `key=value` pairs joined by `,`; variants are joined by `;`:
//!
//! `scenario; plenum=2d; depth=1.0; container=trailer-6m,fan=vane-3kw`
//!
//! Keys: `container` and `fan` (a bundled name or a path, read through the one resolver), `plenum` (`duct`,
//! `uniform` or `2d`), `depth` (a level fill this deep, m, or ft under `--units us`). The word `scenario` is the
//! scenario as it is. A key given twice in one variant, an unknown key, a depth above the container's walls or a
//! container whose plenum model rejects its geometry is an error naming `--variants`, the variant and the key.
use std::path::PathBuf;
use std::sync::Arc;

use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::{Fill, PLENUM_MODEL_NAMES};
use crate::error::InputError;
use crate::input::scenario::{read_container, read_fan};
use crate::load::{FillSpec, LoadSpec};
use crate::units::UnitSystem;

/// Most variants one design run compares (each is a whole drying run).
pub const MAX_VARIANTS: usize = 12;

/// One variant as written: the overrides it asks for.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Variant {
    /// The variant's text, trimmed (its label in tables and pictures).
    pub label: String,
    /// Container, bundled name or path.
    pub container: Option<String>,
    /// Fan, bundled name or path.
    pub fan: Option<String>,
    /// Plenum model name.
    pub plenum: Option<String>,
    /// Level fill depth, m.
    pub depth_m: Option<f64>,
}

fn bad(variant: &str, expected: impl AsRef<str>) -> InputError {
    InputError::argument("--variants", format!("{variant:?}"), expected.as_ref())
}

/// Parse the `--variants` text (depths in `units`).
pub fn parse_variants(text: &str, units: UnitSystem) -> Result<Vec<Variant>, InputError> {
    let list: Vec<Variant> = text
        .split(';')
        .map(|v| parse_one(v.trim(), units))
        .collect::<Result<_, _>>()?;
    if list.len() < 2 || list.len() > MAX_VARIANTS {
        return Err(bad(
            text,
            format!("give 2 to {MAX_VARIANTS} variants separated by ';'"),
        ));
    }
    for (k, v) in list.iter().enumerate() {
        if list[..k].iter().any(|w| w.label == v.label) {
            return Err(bad(&v.label, "is given twice"));
        }
    }
    Ok(list)
}

fn parse_one(text: &str, units: UnitSystem) -> Result<Variant, InputError> {
    let mut v = Variant {
        label: text.to_string(),
        ..Variant::default()
    };
    if text == "scenario" {
        return Ok(v);
    }
    if text.is_empty() {
        return Err(bad(
            text,
            "an empty variant: write `scenario` for the scenario as it is",
        ));
    }
    for pair in text.split(',') {
        let (key, value) = pair
            .split_once('=')
            .map(|(k, v)| (k.trim(), v.trim()))
            .ok_or_else(|| bad(text, format!("{pair:?} is not key=value")))?;
        if value.is_empty() {
            return Err(bad(text, format!("{key}= needs a value")));
        }
        let twice = || bad(text, format!("gives {key} twice"));
        match key {
            "container" if v.container.is_none() => v.container = Some(value.into()),
            "fan" if v.fan.is_none() => v.fan = Some(value.into()),
            "plenum" if v.plenum.is_none() => v.plenum = Some(value.into()),
            "depth" if v.depth_m.is_none() => {
                let d: f64 = value
                    .parse()
                    .ok()
                    .filter(|d: &f64| d.is_finite() && *d > 0.0)
                    .ok_or_else(|| bad(text, format!("depth={value} is not a positive number")))?;
                v.depth_m = Some(units.length_to_si_m(d));
            }
            "container" | "fan" | "plenum" | "depth" => return Err(twice()),
            other => {
                return Err(bad(
                    text,
                    format!("{other:?} is not a key; expected container, fan, plenum or depth"),
                ))
            }
        }
    }
    Ok(v)
}

/// The scenario's load as `v` changes it, with the files it read.
pub fn apply(base: &LoadSpec, v: &Variant) -> Result<(LoadSpec, Vec<PathBuf>), InputError> {
    let mut spec = base.clone();
    let mut read = Vec::new();
    let wrap = |key: &str| {
        let label = v.label.clone();
        let key = key.to_string();
        move |e: InputError| bad(&label, format!("{key}: {e}"))
    };
    let mut container = match &v.container {
        Some(name) => {
            let (c, p) = read_container(None, name, "container").map_err(wrap("container"))?;
            read.push(p);
            c
        }
        None => (*base.container).clone(),
    };
    if let Some(name) = &v.fan {
        let (f, p) = read_fan(None, name, "fan").map_err(wrap("fan"))?;
        read.push(p);
        spec.flow = FlowSpec::Fan(f);
    }
    if let Some(name) = &v.plenum {
        container.plenum = container.plenum.switched_to(name).ok_or_else(|| {
            bad(
                &v.label,
                format!("plenum={name} is not a plenum model; expected {PLENUM_MODEL_NAMES}"),
            )
        })?;
    }
    if let Some(d) = v.depth_m {
        if d > container.wall_height_m {
            return Err(bad(
                &v.label,
                format!(
                    "depth {d:.2} m is above the {:.2} m walls of {}",
                    container.wall_height_m, container.name
                ),
            ));
        }
        container.fill = Fill::Level { depth_m: d };
        spec.fill = FillSpec::Container;
    }
    let here = PathBuf::from(format!("--variants {:?}", v.label));
    container.validate(&here).map_err(wrap("container"))?;
    spec.container = Arc::new(container);
    spec.name = format!("{} ({})", base.name, v.label);
    Ok((spec, read))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn variants_parse_with_units_and_labels() {
        let v =
            parse_variants("scenario; plenum=2d ;depth=4,fan=vane-3kw", UnitSystem::Us).unwrap();
        assert_eq!(v.len(), 3);
        assert_eq!(
            v[0],
            Variant {
                label: "scenario".into(),
                ..Variant::default()
            }
        );
        assert_eq!(v[1].plenum.as_deref(), Some("2d"));
        assert_eq!(v[2].label, "depth=4,fan=vane-3kw");
        assert!((v[2].depth_m.unwrap() - 4.0 * 0.3048).abs() < 1e-12);
        assert_eq!(v[2].fan.as_deref(), Some("vane-3kw"));
    }

    #[test]
    fn bad_variants_name_the_option_and_what_is_wrong() {
        for (text, says) in [
            ("scenario", "give 2 to"),
            ("scenario;scenario", "twice"),
            ("scenario;depth=1,depth=2", "gives depth twice"),
            ("scenario;colour=red", "not a key"),
            ("scenario;depth=-1", "positive"),
            ("scenario;plenum", "not key=value"),
            ("scenario;;plenum=2d", "empty variant"),
            ("scenario;fan=", "needs a value"),
        ] {
            let e = parse_variants(text, UnitSystem::Si)
                .unwrap_err()
                .to_string();
            assert!(e.contains("--variants") && e.contains(says), "{text}: {e}");
        }
    }
}
