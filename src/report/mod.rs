//! Reports: tables, SVG charts and heat maps.

pub mod gantt;
pub mod svg;
