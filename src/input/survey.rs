//! A top-surface airflow survey: our CSV schema, its reader and its check against the container it was taken on.
//!
//! Schema (comma-separated, UTF-8, `#` starts a comment line, one row per block, any row order):
//!
//! ```text
//! block,x0_m,x1_m,y0_m,y1_m,funnel_mouth_m2,reading_m3_per_min
//! F1,0.0,0.4,0.0,0.3,0.0625,1.02
//! ```
//!
//! - `block`: a name, unique in the file.
//! - `x0_m`, `x1_m`: the block's extent along the length, m from the **front** wall (the container's x axis);
//!   `y0_m`, `y1_m`: across the width, m from the side wall at y = 0. Blocks must tile the whole top surface
//!   without gaps or overlaps (edge and corner blocks may be smaller than the rest).
//! - `funnel_mouth_m2`: the mouth area of the funnel the reading was taken through, m² (at most the block's area).
//! - `reading_m3_per_min`: the air flow through the funnel, m³/min, as the anemometer on its neck gives it (0 or
//!   more). The superficial velocity out of the surface is `reading / 60 / funnel_mouth_m2` (m/s), and the
//!   specific airflow the trade quotes is that velocity × 60 / the local depth (m³/min per m³ of peanuts).
//!
//! Readings are compared with the model at the plenum air: take the survey with the burner off (ambient air through
//! the bed) or give the plenum air the survey was taken at.
use std::path::{Path, PathBuf};

use crate::airflow::fit::{block_columns, SurveyBlock};
use crate::airflow::{Container, Grid};
use crate::error::InputError;
use crate::input::line_err;
use crate::input::read::header_columns;
use crate::input::{SEMICOLON_HINT, UNCLOSED_QUOTE};

/// The columns of a survey file, in the order written.
pub const SURVEY_COLUMNS: [&str; 7] = [
    "block",
    "x0_m",
    "x1_m",
    "y0_m",
    "y1_m",
    "funnel_mouth_m2",
    "reading_m3_per_min",
];

/// One row of a survey.
#[derive(Debug, Clone, PartialEq)]
pub struct SurveyRow {
    /// 1-based line in the file.
    pub line: u64,
    /// Block name.
    pub block: String,
    /// Start along the length from the front wall, m.
    pub x0_m: f64,
    /// End along the length, m.
    pub x1_m: f64,
    /// Start across the width, m.
    pub y0_m: f64,
    /// End across the width, m.
    pub y1_m: f64,
    /// Funnel mouth area, m².
    pub funnel_mouth_m2: f64,
    /// Flow through the funnel, m³/min.
    pub reading_m3_per_min: f64,
}

impl SurveyRow {
    /// Superficial velocity out of the surface, m/s.
    pub fn velocity_m_per_s(&self) -> f64 {
        self.reading_m3_per_min / 60.0 / self.funnel_mouth_m2
    }

    fn area_m2(&self) -> f64 {
        (self.x1_m - self.x0_m) * (self.y1_m - self.y0_m)
    }

    fn contains(&self, x: f64, y: f64) -> bool {
        x >= self.x0_m && x < self.x1_m && y >= self.y0_m && y < self.y1_m
    }
}

/// A survey as read (rows checked one by one, not yet against a container).
#[derive(Debug, Clone, PartialEq)]
pub struct Survey {
    /// The file.
    pub path: PathBuf,
    /// Its rows in file order.
    pub rows: Vec<SurveyRow>,
}

fn perr(path: &Path, line: Option<u64>, message: impl Into<String>) -> InputError {
    InputError::Parse {
        path: path.to_path_buf(),
        line,
        message: message.into(),
    }
}

/// Read a survey file through the one bounded reader.
pub fn read_survey(path: &Path) -> Result<Survey, InputError> {
    let text = crate::input::read_text(path)?;
    parse_survey(path, &text)
}

/// Parse survey text; `path` names the file in errors.
pub fn parse_survey(path: &Path, text: &str) -> Result<Survey, InputError> {
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());
    let parse_err = |e: csv::Error| perr(path, e.position().map(|p| p.line()), e.to_string());
    let headers = rdr.headers().map_err(parse_err)?.clone();
    let idx = header_columns(path, &headers, &SURVEY_COLUMNS.join(", "), &SURVEY_COLUMNS)?;
    let mut rows: Vec<SurveyRow> = Vec::new();
    for rec in rdr.records() {
        let rec = rec.map_err(parse_err)?;
        let line = rec.position().map(|p| p.line()).unwrap_or(0);
        rows.push(parse_row(path, line, &rec, &headers, &idx)?);
        let row = rows.last().expect("just pushed");
        if let Some(first) = rows[..rows.len() - 1].iter().find(|r| r.block == row.block) {
            return Err(line_err(
                path,
                line,
                "block",
                &row.block,
                format!("is already used on line {}", first.line),
            ));
        }
    }
    if rows.is_empty() {
        return Err(perr(
            path,
            None,
            "no data rows: a survey needs one row per block",
        ));
    }
    Ok(Survey {
        path: path.to_path_buf(),
        rows,
    })
}

fn parse_row(
    path: &Path,
    line: u64,
    rec: &csv::StringRecord,
    headers: &csv::StringRecord,
    idx: &[usize],
) -> Result<SurveyRow, InputError> {
    if rec.iter().any(|f| f.contains(['\n', '\r'])) {
        return Err(perr(path, Some(line), UNCLOSED_QUOTE));
    }
    if rec.len() == 1 && rec[0].contains(';') {
        return Err(perr(
            path,
            Some(line),
            format!("row is separated by ';': {SEMICOLON_HINT}"),
        ));
    }
    if rec.len() > headers.len() {
        let k = headers.len();
        return Err(perr(
            path,
            Some(line),
            format!(
                "field {} ({:?}) has no column: the header names {k} ({})",
                k + 1,
                &rec[k],
                headers.iter().collect::<Vec<_>>().join(", ")
            ),
        ));
    }
    let get = |k: usize| {
        rec.get(idx[k])
            .ok_or_else(|| line_err(path, line, SURVEY_COLUMNS[k], "", "is missing on this line"))
    };
    let block = get(0)?.to_string();
    if block.is_empty() {
        return Err(line_err(path, line, "block", "", "must not be empty"));
    }
    let num = |k: usize| -> Result<f64, InputError> {
        let s = get(k)?;
        match s.parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(v),
            _ => Err(line_err(
                path,
                line,
                SURVEY_COLUMNS[k],
                s,
                "must be a finite number",
            )),
        }
    };
    let row = SurveyRow {
        line,
        block,
        x0_m: num(1)?,
        x1_m: num(2)?,
        y0_m: num(3)?,
        y1_m: num(4)?,
        funnel_mouth_m2: num(5)?,
        reading_m3_per_min: num(6)?,
    };
    check_row(path, &row, rec, idx)?;
    Ok(row)
}

/// Checks of one row on its own (extent ordered, mouth positive, reading not negative).
fn check_row(
    path: &Path,
    r: &SurveyRow,
    rec: &csv::StringRecord,
    idx: &[usize],
) -> Result<(), InputError> {
    let bad = |k: usize, expected: String| {
        line_err(path, r.line, SURVEY_COLUMNS[k], &rec[idx[k]], expected)
    };
    if r.x0_m < 0.0 {
        return Err(bad(1, "must be 0 or more (m from the front wall)".into()));
    }
    if r.x1_m <= r.x0_m {
        return Err(bad(2, format!("must be greater than x0_m ({} m)", r.x0_m)));
    }
    if r.y0_m < 0.0 {
        return Err(bad(
            3,
            "must be 0 or more (m from the side wall at y = 0)".into(),
        ));
    }
    if r.y1_m <= r.y0_m {
        return Err(bad(4, format!("must be greater than y0_m ({} m)", r.y0_m)));
    }
    if r.funnel_mouth_m2 <= 0.0 {
        return Err(bad(5, "must be a positive area in m²".into()));
    }
    if r.funnel_mouth_m2 > r.area_m2() * (1.0 + 1e-9) {
        return Err(bad(
            5,
            format!(
                "is larger than the block ({:.4} m²): a funnel that overhangs its block samples its neighbours",
                r.area_m2()
            ),
        ));
    }
    if r.reading_m3_per_min < 0.0 {
        return Err(bad(
            6,
            "must be 0 or more: an anemometer reading is the size of a flow".into(),
        ));
    }
    Ok(())
}

/// Length tolerance for block edges meeting walls and each other, m (0.1 mm: far below a tape's reading).
const EDGE_TOL_M: f64 = 1e-4;

impl Survey {
    /// Check the survey against the container: every block inside the footprint, no overlaps, the whole surface
    /// covered.
    pub fn check_against(&self, c: &Container) -> Result<(), InputError> {
        for r in &self.rows {
            let beyond = |name: &str, v: f64, wall: f64, what: &str| {
                line_err(
                    &self.path,
                    r.line,
                    name,
                    &v.to_string(),
                    format!(
                        "m is beyond the {what} of container {:?} ({wall} m): was the survey taken on another container?",
                        c.name
                    ),
                )
            };
            if r.x1_m > c.length_m + EDGE_TOL_M {
                return Err(beyond("x1_m", r.x1_m, c.length_m, "length"));
            }
            if r.y1_m > c.width_m + EDGE_TOL_M {
                return Err(beyond("y1_m", r.y1_m, c.width_m, "width"));
            }
        }
        self.check_overlaps()?;
        self.check_coverage(c)
    }

    fn check_overlaps(&self) -> Result<(), InputError> {
        for (k, b) in self.rows.iter().enumerate() {
            for a in &self.rows[..k] {
                let ox = a.x1_m.min(b.x1_m) - a.x0_m.max(b.x0_m);
                let oy = a.y1_m.min(b.y1_m) - a.y0_m.max(b.y0_m);
                if ox > EDGE_TOL_M && oy > EDGE_TOL_M {
                    return Err(line_err(
                        &self.path,
                        b.line,
                        "block",
                        &b.block,
                        format!(
                            "overlaps block {:?} (line {}) by {ox:.3} × {oy:.3} m: blocks must not overlap",
                            a.block, a.line
                        ),
                    ));
                }
            }
        }
        Ok(())
    }

    /// Every cell of the grid made by all block edges and the walls must lie in some block.
    fn check_coverage(&self, c: &Container) -> Result<(), InputError> {
        let edges = |lo: fn(&SurveyRow) -> f64, hi: fn(&SurveyRow) -> f64, wall: f64| {
            let mut v: Vec<f64> = self.rows.iter().flat_map(|r| [lo(r), hi(r)]).collect();
            v.extend([0.0, wall]);
            v.sort_by(f64::total_cmp);
            v.dedup_by(|a, b| (*a - *b).abs() <= EDGE_TOL_M);
            v
        };
        let xs = edges(|r| r.x0_m, |r| r.x1_m, c.length_m);
        let ys = edges(|r| r.y0_m, |r| r.y1_m, c.width_m);
        let covered: f64 = self.rows.iter().map(SurveyRow::area_m2).sum();
        for w in xs.windows(2) {
            for v in ys.windows(2) {
                let (x, y) = (0.5 * (w[0] + w[1]), 0.5 * (v[0] + v[1]));
                if x > c.length_m || y > c.width_m || self.rows.iter().any(|r| r.contains(x, y)) {
                    continue;
                }
                let near = self.nearest(x, y);
                return Err(line_err(
                    &self.path,
                    near.line,
                    "block",
                    &near.block,
                    format!(
                        "borders a part of the surface no block covers (around x = {x:.2} m, y = {y:.2} m; the \
                         blocks cover {covered:.2} of {:.2} m²): is a block missing?",
                        c.floor_area_m2()
                    ),
                ));
            }
        }
        Ok(())
    }

    fn nearest(&self, x: f64, y: f64) -> &SurveyRow {
        let dist = |r: &SurveyRow| {
            let dx = (r.x0_m - x).max(x - r.x1_m).max(0.0);
            let dy = (r.y0_m - y).max(y - r.y1_m).max(0.0);
            dx * dx + dy * dy
        };
        self.rows
            .iter()
            .min_by(|a, b| dist(a).total_cmp(&dist(b)))
            .expect("a survey has rows")
    }

    /// The blocks in the model's terms, each with the standard deviation `sd_fraction × max(u, ū/4)` (ū the mean
    /// reading: a dead spot reading 0 is still trusted only to a quarter of the mean). Checks the survey against
    /// the container and that every block holds at least one column centre of `grid`.
    pub fn blocks_for(
        &self,
        c: &Container,
        grid: Grid,
        sd_fraction: f64,
    ) -> Result<Vec<SurveyBlock>, InputError> {
        self.check_against(c)?;
        let mean = self
            .rows
            .iter()
            .map(SurveyRow::velocity_m_per_s)
            .sum::<f64>()
            / self.rows.len() as f64;
        let blocks: Vec<SurveyBlock> = self
            .rows
            .iter()
            .map(|r| {
                let u = r.velocity_m_per_s();
                SurveyBlock {
                    name: r.block.clone(),
                    x0_m: r.x0_m,
                    x1_m: r.x1_m,
                    y0_m: r.y0_m,
                    y1_m: r.y1_m,
                    measured_m_per_s: u,
                    sd_m_per_s: sd_fraction * u.max(0.25 * mean).max(1e-9),
                }
            })
            .collect();
        let cols = block_columns(c, grid, &blocks);
        if let Some(k) = cols.iter().position(Vec::is_empty) {
            let r = &self.rows[k];
            return Err(line_err(
                &self.path,
                r.line,
                "block",
                &r.block,
                format!(
                    "holds no column centre of the {}×{} grid (columns {:.3} × {:.3} m): give --nx/--ny fine enough for the smallest block",
                    grid.nx,
                    grid.ny,
                    c.length_m / grid.nx as f64,
                    c.width_m / grid.ny as f64
                ),
            ));
        }
        Ok(blocks)
    }
}
