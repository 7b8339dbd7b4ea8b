//! Reports: tables, SVG charts and heat maps.
