//! Building blocks of a self-contained HTML report: escaping, sections,
//! notices, key–value lists, tables with a unit per column, inline SVG
//! figures, and a style sheet that prints on A4.
//!
//! A [`Report`] is a tree of [`Block`]s rendered to one HTML5 string with
//! everything inline: no external style sheet, font, image or script, so the
//! file can be mailed, archived and opened offline. All text is escaped;
//! figures take SVG documents made by this crate (`plot::*_svg`,
//! [`crate::plot::schematic_svg`]). Numbers go in as `f64` and are written
//! with a fixed number of decimals; a value that is not finite is written as
//! "n/a", never as NaN or inf.

use std::fmt::Write;

/// Escapes text for HTML element content and quoted attribute values.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            // control characters other than tab and newline are not valid HTML text
            c if c.is_control() && c != '\t' && c != '\n' => {}
            c => out.push(c),
        }
    }
    out
}

/// How serious a [`Block::Notice`] is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Level {
    /// Background information.
    Info,
    /// Something the reader should check (a model limit, a doubtful input).
    Warning,
    /// A safety caution (stored energy, pressure vessels).
    Caution,
    /// A verdict met (every limit).
    Pass,
    /// A verdict not met (a limit exceeded).
    Fail,
}

impl Level {
    fn class(self) -> &'static str {
        match self {
            Level::Info => "info",
            Level::Warning => "warning",
            Level::Caution => "caution",
            Level::Pass => "pass",
            Level::Fail => "fail",
        }
    }
    fn word(self) -> &'static str {
        match self {
            Level::Info => "Note",
            Level::Warning => "Warning",
            Level::Caution => "Caution",
            Level::Pass => "PASS",
            Level::Fail => "FAIL",
        }
    }
}

/// One table cell.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Text, escaped.
    Text(String),
    /// A number written with `decimals` decimals (in the column's unit); not
    /// finite is written "n/a".
    Number {
        /// The value.
        value: f64,
        /// Decimals written.
        decimals: usize,
    },
    /// Nothing.
    Empty,
}

impl Cell {
    /// A number cell.
    pub fn num(value: f64, decimals: usize) -> Self {
        Cell::Number { value, decimals }
    }
    /// A text cell.
    pub fn text(s: impl Into<String>) -> Self {
        Cell::Text(s.into())
    }
}

/// Writes `value` with `decimals` decimals and a typographic minus, or "n/a"
/// when it is not finite.
pub fn format_number(value: f64, decimals: usize) -> String {
    if !value.is_finite() {
        return "n/a".to_string();
    }
    let decimals = decimals.min(12);
    let s = format!("{value:.decimals$}");
    // no "-0.00"
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        return format!("{:.decimals$}", 0.0);
    }
    match s.strip_prefix('-') {
        Some(rest) => format!("−{rest}"),
        None => s,
    }
}

/// A table column: its header and, for quantities, its unit (one unit per
/// column, shown in the header).
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    /// Header text, e.g. "peak ripple".
    pub header: String,
    /// Unit of every number in the column, e.g. "bar"; `None` for text.
    pub unit: Option<String>,
}

impl Column {
    /// A text column.
    pub fn text(header: impl Into<String>) -> Self {
        Column {
            header: header.into(),
            unit: None,
        }
    }
    /// A quantity column with its unit.
    pub fn quantity(header: impl Into<String>, unit: impl Into<String>) -> Self {
        Column {
            header: header.into(),
            unit: Some(unit.into()),
        }
    }
}

/// A table with a caption, a unit per column and rows of cells.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Table {
    /// Caption above the table (may be empty).
    pub caption: String,
    /// The columns.
    pub columns: Vec<Column>,
    /// The rows; a row shorter than the columns is padded with empty cells,
    /// cells beyond the columns are dropped.
    pub rows: Vec<Vec<Cell>>,
}

/// A part of a report.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A titled section holding further blocks; `id` becomes the anchor
    /// (letters, digits and '-' kept, the rest replaced by '-').
    Section {
        /// Anchor for links and for tests.
        id: String,
        /// Heading text.
        title: String,
        /// Content.
        blocks: Vec<Block>,
    },
    /// A paragraph of text.
    Paragraph(String),
    /// A highlighted notice: info, warning or safety caution.
    Notice(Level, String),
    /// A bulleted list of notices of one level (e.g. all warnings).
    Notices(Level, Vec<String>),
    /// Key–value pairs (e.g. inputs with their unit and source).
    KeyValues(Vec<(String, String)>),
    /// A table.
    Table(Table),
    /// An SVG document drawn inline, with a caption.
    Figure {
        /// The SVG document (from this crate's plot functions).
        svg: String,
        /// Caption below the figure.
        caption: String,
    },
}

/// A self-contained HTML report.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Report {
    /// Document title (the `<title>` and the top heading).
    pub title: String,
    /// Line under the title (e.g. the job statement); may be empty.
    pub subtitle: String,
    /// The content, in order.
    pub blocks: Vec<Block>,
    /// Small print at the end (e.g. program version and input file hash).
    pub footer: Vec<String>,
}

/// The style sheet: readable on screen, A4 portrait in print, figures and
/// table rows never split over pages, table headers repeated on each page.
const CSS: &str = "\
@page { size: A4 portrait; margin: 16mm 14mm 18mm 14mm; }
html { font-family: 'DejaVu Sans', Arial, Helvetica, sans-serif; font-size: 11pt; color: #1a1a1a; }
body { max-width: 190mm; margin: 1.5em auto; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 18pt; margin: 0 0 0.2em 0; }
h2 { font-size: 14pt; border-bottom: 1px solid #999; margin-top: 1.6em; break-after: avoid; }
h3 { font-size: 12pt; break-after: avoid; }
p.subtitle { font-size: 12pt; color: #444; margin-top: 0; }
table { border-collapse: collapse; margin: 0.6em 0 1em 0; font-size: 9.5pt; max-width: 100%; }
caption { text-align: left; font-weight: bold; padding-bottom: 0.3em; }
th, td { border: 1px solid #bbb; padding: 0.2em 0.4em; vertical-align: top; }
th { background: #eee; text-align: left; }
th .unit { font-weight: normal; color: #555; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
thead { display: table-header-group; }
tr, figure, .notice { break-inside: avoid; page-break-inside: avoid; }
figure { margin: 0.8em 0; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { font-size: 9.5pt; color: #444; margin-top: 0.3em; }
dl.kv { display: grid; grid-template-columns: fit-content(40%) minmax(0, 1fr); gap: 0.15em 1.2em; }
dl.kv dt { font-weight: bold; }
dl.kv dd { margin: 0; overflow-wrap: anywhere; }
.notice { border-left: 5px solid; padding: 0.4em 0.8em; margin: 0.6em 0; }
.notice.info { border-color: #3a78c2; background: #eef4fb; }
.notice.warning { border-color: #d08a00; background: #fff6e0; }
.notice.caution { border-color: #c00000; background: #fdeaea; }
.notice.pass { border-color: #2e7d32; background: #e8f5e9; font-size: 12pt; }
.notice.fail { border-color: #c00000; background: #fdeaea; font-size: 12pt; }
footer { margin-top: 2em; border-top: 1px solid #999; font-size: 9pt; color: #555; }
@media print {
  body { max-width: none; margin: 0; padding: 0; }
  a { color: inherit; text-decoration: none; }
  .notice { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
";

/// Anchor text: ASCII letters, digits and '-' kept, the rest '-'.
fn anchor(id: &str) -> String {
    let a: String = id
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    if a.is_empty() { "section".into() } else { a }
}

/// The SVG namespace declaration, which an `<svg>` element inside HTML
/// does not need (the HTML parser puts it in that namespace, WHATWG HTML
/// §13.2.6.5); dropped so that the document names no address at all.
const SVG_XMLNS: &str = " xmlns=\"http://www.w3.org/2000/svg\"";

/// An SVG document ready to be placed inside HTML: any XML declaration or
/// doctype before the `<svg` element is dropped, nothing after its end, and
/// the root's namespace declaration ([`SVG_XMLNS`]).
fn inline_svg(svg: &str) -> String {
    let start = svg.find("<svg").unwrap_or(svg.len());
    let end = svg
        .rfind("</svg>")
        .map_or(svg.len(), |i| i + "</svg>".len());
    if start > end {
        return String::new();
    }
    let svg = &svg[start..end];
    let tag_end = svg.find('>').unwrap_or(svg.len());
    let (tag, rest) = svg.split_at(tag_end);
    format!("{}{rest}", tag.replacen(SVG_XMLNS, "", 1))
}

impl Report {
    /// An empty report with a title.
    pub fn new(title: impl Into<String>) -> Self {
        Report {
            title: title.into(),
            ..Default::default()
        }
    }

    /// Renders the whole document.
    pub fn to_html(&self) -> String {
        let mut out = String::new();
        let _ = write!(
            out,
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
             <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
             <meta name=\"generator\" content=\"ripline {}\">\n<title>{}</title>\n\
             <style>\n{CSS}</style>\n</head>\n<body>\n<header>\n<h1>{}</h1>\n",
            env!("CARGO_PKG_VERSION"),
            escape(&self.title),
            escape(&self.title)
        );
        if !self.subtitle.is_empty() {
            let _ = writeln!(out, "<p class=\"subtitle\">{}</p>", escape(&self.subtitle));
        }
        out.push_str("</header>\n<main>\n");
        for b in &self.blocks {
            write_block(&mut out, b, 2);
        }
        out.push_str("</main>\n");
        if !self.footer.is_empty() {
            out.push_str("<footer>\n");
            for line in &self.footer {
                let _ = writeln!(out, "<p>{}</p>", escape(line));
            }
            out.push_str("</footer>\n");
        }
        out.push_str("</body>\n</html>\n");
        out
    }
}

fn write_block(out: &mut String, b: &Block, level: usize) {
    match b {
        Block::Section { id, title, blocks } => {
            let h = level.min(6);
            let _ = writeln!(
                out,
                "<section id=\"{}\">\n<h{h}>{}</h{h}>",
                anchor(id),
                escape(title)
            );
            for inner in blocks {
                write_block(out, inner, level + 1);
            }
            out.push_str("</section>\n");
        }
        Block::Paragraph(t) => {
            let _ = writeln!(out, "<p>{}</p>", escape(t));
        }
        Block::Notice(l, t) => {
            let _ = writeln!(
                out,
                "<div class=\"notice {}\" role=\"note\"><strong>{}:</strong> {}</div>",
                l.class(),
                l.word(),
                escape(t)
            );
        }
        Block::Notices(l, items) => {
            if items.is_empty() {
                return;
            }
            let _ = writeln!(
                out,
                "<div class=\"notice {}\" role=\"note\"><strong>{}{}:</strong>\n<ul>",
                l.class(),
                l.word(),
                if items.len() > 1 { "s" } else { "" }
            );
            for t in items {
                let _ = writeln!(out, "<li>{}</li>", escape(t));
            }
            out.push_str("</ul>\n</div>\n");
        }
        Block::KeyValues(kv) => {
            out.push_str("<dl class=\"kv\">\n");
            for (k, v) in kv {
                let _ = writeln!(out, "<dt>{}</dt><dd>{}</dd>", escape(k), escape(v));
            }
            out.push_str("</dl>\n");
        }
        Block::Table(t) => write_table(out, t),
        Block::Figure { svg, caption } => {
            let _ = writeln!(out, "<figure>\n{}", inline_svg(svg));
            if !caption.is_empty() {
                let _ = writeln!(out, "<figcaption>{}</figcaption>", escape(caption));
            }
            out.push_str("</figure>\n");
        }
    }
}

fn write_table(out: &mut String, t: &Table) {
    out.push_str("<table>\n");
    if !t.caption.is_empty() {
        let _ = writeln!(out, "<caption>{}</caption>", escape(&t.caption));
    }
    out.push_str("<thead><tr>");
    for c in &t.columns {
        match &c.unit {
            Some(u) => {
                let _ = write!(
                    out,
                    "<th>{} <span class=\"unit\">({})</span></th>",
                    escape(&c.header),
                    escape(u)
                );
            }
            None => {
                let _ = write!(out, "<th>{}</th>", escape(&c.header));
            }
        }
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for row in &t.rows {
        out.push_str("<tr>");
        for i in 0..t.columns.len() {
            match row.get(i).unwrap_or(&Cell::Empty) {
                Cell::Text(s) => {
                    let _ = write!(out, "<td>{}</td>", escape(s));
                }
                Cell::Number { value, decimals } => {
                    let _ = write!(
                        out,
                        "<td class=\"num\">{}</td>",
                        format_number(*value, *decimals)
                    );
                }
                Cell::Empty => out.push_str("<td></td>"),
            }
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody>\n</table>\n");
}

#[cfg(test)]
mod tests {
    use super::*;
    use scraper::{Html, Selector};

    fn sel(s: &str) -> Selector {
        Selector::parse(s).expect("selector")
    }

    fn sample() -> Report {
        let chart = crate::plot::BarChart {
            title: "Ripple <per> harmonic".into(),
            categories: vec!["1".into(), "2".into()],
            series: vec![crate::plot::Series {
                name: "gauge".into(),
                values: vec![1.0, 0.1],
                bands: None,
            }],
            ..Default::default()
        };
        Report {
            title: "Report & <check>".into(),
            subtitle: "Job: \"reduce\" the ripple".into(),
            blocks: vec![
                Block::Notices(
                    Level::Warning,
                    vec!["a <b> warning".into(), "another".into()],
                ),
                Block::Section {
                    id: "Ripple per tap".into(),
                    title: "Ripple per tap".into(),
                    blocks: vec![
                        Block::Table(Table {
                            caption: "Overall".into(),
                            columns: vec![
                                Column::text("tap"),
                                Column::quantity("rms", "bar"),
                                Column::quantity("level", "dB re 1 µPa"),
                            ],
                            rows: vec![
                                vec![Cell::text("gauge"), Cell::num(1.23456, 3), Cell::num(-0.0004, 2)],
                                vec![Cell::text("inlet"), Cell::num(f64::NAN, 3)],
                                vec![Cell::text("x"), Cell::num(f64::INFINITY, 1), Cell::num(-2.5, 1)],
                            ],
                        }),
                        Block::Figure {
                            svg: crate::plot::grouped_bar_chart_svg(&chart).expect("chart"),
                            caption: "bars".into(),
                        },
                        Block::Figure {
                            svg: "<?xml version=\"1.0\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"10\" height=\"10\"></svg>".into(),
                            caption: String::new(),
                        },
                    ],
                },
                Block::KeyValues(vec![("speed".into(), "1500 rpm (given)".into())]),
                Block::Notice(Level::Caution, "stored energy".into()),
            ],
            footer: vec!["ripline 0.1.0, input sha256 abc".into()],
        }
    }

    /// Parsed as a browser parses it (html5ever through scraper): the
    /// structure, the escaped text read back unchanged, one unit per column
    /// in the headers, numbers with their decimals, "n/a" for non-finite
    /// values, inline SVG, and nothing external.
    #[test]
    fn report_parses_with_sections_tables_and_figures() {
        let html = sample().to_html();
        let doc = Html::parse_document(&html);
        let title: Vec<String> = doc
            .select(&sel("title"))
            .map(|e| e.text().collect())
            .collect();
        assert_eq!(title, ["Report & <check>"]);
        let sub: String = doc
            .select(&sel("p.subtitle"))
            .flat_map(|e| e.text())
            .collect();
        assert_eq!(sub, "Job: \"reduce\" the ripple");
        let section = doc
            .select(&sel("section#ripple-per-tap"))
            .next()
            .expect("section");
        let h: String = section.select(&sel("h2")).flat_map(|e| e.text()).collect();
        assert_eq!(h, "Ripple per tap");
        let headers: Vec<String> = doc.select(&sel("th")).map(|e| e.text().collect()).collect();
        assert_eq!(headers, ["tap", "rms (bar)", "level (dB re 1 µPa)"]);
        let cells: Vec<String> = doc.select(&sel("td")).map(|e| e.text().collect()).collect();
        assert_eq!(
            cells,
            [
                "gauge", "1.235", "0.00", "inlet", "n/a", "", "x", "n/a", "−2.5"
            ]
        );
        assert!(!html.contains("NaN") && !html.contains("inf<"));
        let warnings: Vec<String> = doc
            .select(&sel(".notice.warning li"))
            .map(|e| e.text().collect())
            .collect();
        assert_eq!(warnings, ["a <b> warning", "another"]);
        // the warnings come before the first section
        assert!(html.find("notice warning").unwrap() < html.find("<section").unwrap());
        assert_eq!(doc.select(&sel("figure svg")).count(), 2);
        assert!(!html.contains("<?xml"));
        let svg_text: String = doc
            .select(&sel("figure svg text"))
            .flat_map(|e| e.text())
            .collect();
        assert!(svg_text.contains("Ripple <per> harmonic"), "{svg_text}");
        assert_eq!(doc.select(&sel(".notice.caution")).count(), 1);
        // self-contained: no scripts, no external style sheets, images or links
        assert_eq!(
            doc.select(&sel("script, link, img, iframe, object"))
                .count(),
            0
        );
        assert_eq!(
            doc.select(&sel("[href], [src]")).count(),
            0,
            "external reference"
        );
        assert!(html.contains("@page { size: A4"));
        // no address at all (the inline SVG needs no namespace declaration;
        // the parser still puts it in the SVG namespace)
        assert!(!html.contains("http"), "{html}");
        let svg = doc.select(&sel("figure svg")).nth(1).unwrap();
        assert_eq!(&*svg.value().name.ns, "http://www.w3.org/2000/svg");
    }

    #[test]
    fn escaping_and_numbers() {
        assert_eq!(escape("a<b>&\"c'\u{7}"), "a&lt;b&gt;&amp;&quot;c&#39;");
        assert_eq!(format_number(-1.005e-7, 3), "0.000");
        assert_eq!(format_number(-12.345, 1), "−12.3");
        assert_eq!(format_number(f64::NEG_INFINITY, 1), "n/a");
        assert_eq!(anchor("Ripple per tap #2"), "ripple-per-tap--2");
    }
}
