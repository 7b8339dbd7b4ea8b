//! The one self-contained HTML report a command writes beside its other files (`report.html`): the answer first,
//! then pictures (inline SVG), tables, the summary as printed, the inputs as run (name, size, SHA-256) and the
//! cautions. Inline CSS, no network (a content security policy forbids every request), no script framework; the
//! only script is a few lines that zoom wide pictures (the season's dryer chart).
//!
//! Every command builds a [`Page`] from its own results and calls [`Page::render`]; nothing here knows which
//! command it serves, so a new command (a design comparison, say) only fills a `Page`. Pure string building, no I/O.
use std::fmt::Write as _;
use std::path::Path;

use sha2::{Digest, Sha256};

/// One figure of the answer at the top of the page: "ready in" → "31.5 h, Tue 2026-09-15 03:30".
#[derive(Debug, Clone, PartialEq)]
pub struct KeyFigure {
    /// What the figure is.
    pub label: String,
    /// The figure with its unit.
    pub value: String,
    /// A short note under it (may be empty).
    pub note: String,
}

impl KeyFigure {
    /// A figure with a note.
    pub fn new(
        label: impl Into<String>,
        value: impl Into<String>,
        note: impl Into<String>,
    ) -> Self {
        KeyFigure {
            label: label.into(),
            value: value.into(),
            note: note.into(),
        }
    }
}

/// A table: a heading row and rows of cells, already formatted with their units.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Table {
    /// Caption above the table.
    pub caption: String,
    /// Column headings.
    pub head: Vec<String>,
    /// Rows of cells.
    pub rows: Vec<Vec<String>>,
}

/// One part of the page's body, in order.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A section heading.
    Heading(String),
    /// A paragraph of plain text.
    Para(String),
    /// A picture: an SVG document (as our writers make it) and its caption; `zoom` adds zoom buttons and a
    /// scrolling frame for pictures too wide to read at page width.
    Picture {
        /// The SVG text.
        svg: String,
        /// Caption under the picture.
        caption: String,
        /// Whether to offer zoom.
        zoom: bool,
    },
    /// Pictures side by side (as many to a row as the page's width holds), each with its caption: for pictures
    /// read against each other on one scale.
    Gallery(Vec<(String, String)>),
    /// A table.
    Table(Table),
    /// Preformatted text (the terminal summary as printed).
    Pre(String),
}

/// One input file as run: its name, size and SHA-256, so a reader can tell later whether a file is the one used.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputRecord {
    /// The path as the command was given it (or as a bundled name resolved to).
    pub path: String,
    /// Size, bytes.
    pub bytes: u64,
    /// SHA-256 of the contents, lower-case hex.
    pub sha256: String,
}

impl InputRecord {
    /// The record of a file from its contents.
    pub fn of(path: &Path, contents: &[u8]) -> Self {
        let digest = Sha256::digest(contents);
        let mut hex = String::with_capacity(64);
        for b in digest {
            let _ = write!(hex, "{b:02x}");
        }
        InputRecord {
            path: path.display().to_string(),
            bytes: contents.len() as u64,
            sha256: hex,
        }
    }
}

/// A whole report page.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Page {
    /// Title (the scenario or buying point and what was run).
    pub title: String,
    /// One or two sentences under the title: what was run.
    pub lead: String,
    /// The answer: the few figures the reader came for.
    pub answer: Vec<KeyFigure>,
    /// Advice and notes shown right under the answer (settings outside good practice, limits not met).
    pub notes: Vec<String>,
    /// Pictures, tables and text, in order.
    pub body: Vec<Block>,
    /// The terminal summary as printed (shown folded).
    pub summary: Option<String>,
    /// The inputs as run.
    pub inputs: Vec<InputRecord>,
    /// The cautions (the program's one caution text).
    pub cautions: String,
}

/// Escape text for HTML (and inline SVG).
pub fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

const STYLE: &str = "body{font-family:sans-serif;margin:1.5em auto;max-width:1280px;padding:0 1em;color:#1a1a1a;\
line-height:1.4}h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.25em;border-bottom:1px solid #ccc;\
margin-top:1.8em}.lead{color:#444}.answer{display:flex;flex-wrap:wrap;gap:.8em;margin:1em 0}\
.answer div{border:1px solid #c9d3e0;background:#f5f8fc;border-radius:6px;padding:.6em .9em;min-width:11em}\
.answer .v{font-size:1.35em;font-weight:bold}.answer .l,.answer .n{font-size:.85em;color:#444}\
.notes li{margin:.3em 0}figure{margin:1.2em 0}figure svg{max-width:100%;height:auto}\
figcaption{font-size:.9em;color:#444;max-width:70em}.zoombox{overflow:auto;max-height:80vh;border:1px solid #ddd}\
.zoombox svg{max-width:none}.zoomctl button{margin-right:.4em}table{border-collapse:collapse;margin:.6em 0}\
td,th{border:1px solid #ccc;padding:.2em .5em;text-align:right}th{background:#f0f0f0}\
td:first-child,th:first-child{text-align:left}caption{text-align:left;font-weight:bold;padding:.3em 0}\
pre{background:#f7f7f7;padding:.8em;overflow:auto;font-size:.85em}.hash{font-family:monospace;font-size:.85em}\
.caution{border-left:4px solid #b2182b;padding:.4em .9em;background:#fbf3f3}\
.gallery{display:grid;grid-template-columns:repeat(auto-fill,minmax(560px,1fr));gap:.8em}.gallery figure{margin:.4em 0}";

/// Zoom for wide pictures: buttons set the picture's width to the frame, or to 1, 2 or 4 times its drawn size.
const ZOOM_JS: &str = "document.querySelectorAll('.zoomfig').forEach(function(f){var s=f.querySelector('svg');\
var w=s.viewBox.baseVal.width;f.querySelectorAll('button').forEach(function(b){b.addEventListener('click',\
function(){var z=b.getAttribute('data-z');s.style.width=z==='fit'?'100%':(w*Number(z))+'px';s.style.height='auto';});});});";

impl Page {
    /// The page as one HTML document.
    pub fn render(&self) -> String {
        let mut h = String::with_capacity(64 * 1024);
        let _ = write!(
            h,
            "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
             <meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'; \
             script-src 'unsafe-inline'\">\
             <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\
             <title>{}</title><style>{STYLE}</style></head>\n<body>\n<h1>{}</h1>\n<p class=\"lead\">{}</p>\n",
            esc(&self.title),
            esc(&self.title),
            esc(&self.lead)
        );
        self.answer_html(&mut h);
        let mut zoom = false;
        for b in &self.body {
            zoom |= matches!(b, Block::Picture { zoom: true, .. });
            block_html(&mut h, b);
        }
        if let Some(s) = self.summary.as_ref().filter(|s| !s.trim().is_empty()) {
            let _ = write!(
                h,
                "<h2>Summary as printed</h2>\n<pre>{}</pre>\n",
                esc(s.trim_end())
            );
        }
        self.inputs_html(&mut h);
        let _ = write!(
            h,
            "<h2>Cautions</h2>\n<p class=\"caution\">{}</p>\n<p class=\"lead\">Written by dryfront {}.</p>\n",
            esc(&self.cautions),
            env!("CARGO_PKG_VERSION")
        );
        if zoom {
            let _ = writeln!(h, "<script>{ZOOM_JS}</script>");
        }
        h.push_str("</body></html>\n");
        h
    }

    fn answer_html(&self, h: &mut String) {
        h.push_str("<div class=\"answer\">\n");
        for f in &self.answer {
            let _ = writeln!(
                h,
                "<div><div class=\"l\">{}</div><div class=\"v\">{}</div><div class=\"n\">{}</div></div>",
                esc(&f.label),
                esc(&f.value),
                esc(&f.note)
            );
        }
        h.push_str("</div>\n");
        if !self.notes.is_empty() {
            h.push_str("<ul class=\"notes\">\n");
            for n in &self.notes {
                let _ = writeln!(h, "<li>{}</li>", esc(n));
            }
            h.push_str("</ul>\n");
        }
    }

    fn inputs_html(&self, h: &mut String) {
        h.push_str("<h2>Inputs as run</h2>\n");
        if self.inputs.is_empty() {
            h.push_str("<p>No input files (everything came from the command line).</p>\n");
            return;
        }
        h.push_str("<table><tr><th>file</th><th>bytes</th><th>SHA-256</th></tr>\n");
        for i in &self.inputs {
            let _ = writeln!(
                h,
                "<tr><td>{}</td><td>{}</td><td class=\"hash\">{}</td></tr>",
                esc(&i.path),
                i.bytes,
                i.sha256
            );
        }
        h.push_str("</table>\n");
    }
}

fn block_html(h: &mut String, b: &Block) {
    match b {
        Block::Heading(t) => {
            let _ = writeln!(h, "<h2>{}</h2>", esc(t));
        }
        Block::Para(t) => {
            let _ = writeln!(h, "<p>{}</p>", esc(t));
        }
        Block::Pre(t) => {
            let _ = writeln!(h, "<pre>{}</pre>", esc(t.trim_end()));
        }
        Block::Picture { svg, caption, zoom } => {
            if *zoom {
                h.push_str(
                    "<figure class=\"zoomfig\"><div class=\"zoomctl\">zoom: <button data-z=\"fit\">fit</button>\
                     <button data-z=\"1\">1×</button><button data-z=\"2\">2×</button><button data-z=\"4\">4×</button>\
                     </div><div class=\"zoombox\">",
                );
                h.push_str(svg);
                h.push_str("</div>");
            } else {
                h.push_str("<figure>");
                h.push_str(svg);
            }
            let _ = writeln!(h, "<figcaption>{}</figcaption></figure>", esc(caption));
        }
        Block::Gallery(pics) => {
            h.push_str("<div class=\"gallery\">");
            for (svg, caption) in pics {
                h.push_str("<figure>");
                h.push_str(svg);
                let _ = write!(h, "<figcaption>{}</figcaption></figure>", esc(caption));
            }
            h.push_str("</div>\n");
        }
        Block::Table(t) => table_html(h, t),
    }
}

fn table_html(h: &mut String, t: &Table) {
    h.push_str("<table>");
    if !t.caption.is_empty() {
        let _ = write!(h, "<caption>{}</caption>", esc(&t.caption));
    }
    h.push_str("<tr>");
    for c in &t.head {
        let _ = write!(h, "<th>{}</th>", esc(c));
    }
    h.push_str("</tr>\n");
    for r in &t.rows {
        h.push_str("<tr>");
        for c in r {
            let _ = write!(h, "<td>{}</td>", esc(c));
        }
        h.push_str("</tr>\n");
    }
    h.push_str("</table>\n");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_known_text() {
        // FIPS 180-2 appendix B.1: SHA-256("abc").
        let r = InputRecord::of(Path::new("a.txt"), b"abc");
        assert_eq!(
            r.sha256,
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(r.bytes, 3);
    }

    #[test]
    fn page_escapes_text_and_forbids_requests() {
        let page = Page {
            title: "Load <1> & co".into(),
            answer: vec![KeyFigure::new("ready in", "31.5 h", "")],
            body: vec![Block::Picture {
                svg: "<svg></svg>".into(),
                caption: "c".into(),
                zoom: true,
            }],
            cautions: "careful".into(),
            ..Page::default()
        };
        let h = page.render();
        assert!(h.contains("<h1>Load &lt;1&gt; &amp; co</h1>"));
        assert!(h.contains("default-src 'none'"));
        assert!(h.contains("<svg></svg>") && h.contains("<script>"));
        assert!(!h.contains("http://") && !h.contains("https://"));
    }
}
