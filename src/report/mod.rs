//! Reports: tables, SVG charts and heat maps.

pub mod gantt;
pub mod load;
pub mod svg;
