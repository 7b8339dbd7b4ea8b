//! Reports: tables, SVG charts and heat maps.
pub mod gantt;
