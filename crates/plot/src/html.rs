//! A self-contained HTML report: one file, inline CSS and inline SVG, no script, no font or
//! anything else fetched from the network.
//!
//! A page is a title, a list of sections and a footer. Every text given to [`Table`] and
//! [`HtmlReport`] is HTML-escaped here; SVG is inserted as given (it must come from this
//! crate's plot functions, which escape their own text).

use std::fmt::Write;

/// `text` with the HTML special characters (`& < > " '`) escaped, fit for element content
/// and attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if c.is_control() && c != '\n' && c != '\t' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// A table of text cells, escaped when rendered. Cells that read as numbers are
/// right-aligned.
#[derive(Debug, Clone, Default)]
pub struct Table {
    headers: Vec<String>,
    rows: Vec<Vec<String>>,
    /// Per row, per cell: a `title` attribute (shown on hover), empty for none.
    titles: Vec<Vec<String>>,
}

impl Table {
    /// An empty table with these column headers.
    pub fn new<S: AsRef<str>>(headers: &[S]) -> Self {
        Table {
            headers: headers.iter().map(|h| h.as_ref().to_string()).collect(),
            rows: Vec::new(),
            titles: Vec::new(),
        }
    }

    /// Appends a row (plain text cells; fewer cells than headers leave the rest empty).
    pub fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
        self.titles.push(Vec::new());
    }

    /// Appends a row whose cells carry `title` attributes (escaped; an empty title gives
    /// none): e.g. a number shown rounded with its full-precision form in the title, which
    /// browsers show on hover and scripts can read.
    pub fn row_with_titles(&mut self, cells: Vec<String>, titles: Vec<String>) {
        self.rows.push(cells);
        self.titles.push(titles);
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// Whether the table has no row.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// The table as an HTML `<table>` element, every cell escaped.
    pub fn to_html(&self) -> String {
        let mut out = String::from("<table>\n<thead><tr>");
        for h in &self.headers {
            let _ = write!(out, "<th>{}</th>", escape(h));
        }
        out.push_str("</tr></thead>\n<tbody>\n");
        for (r, row) in self.rows.iter().enumerate() {
            out.push_str("<tr>");
            for k in 0..self.headers.len().max(row.len()) {
                let cell = row.get(k).map_or("", String::as_str);
                let numeric =
                    !cell.is_empty() && cell.trim_end_matches([' ', '%']).parse::<f64>().is_ok();
                let class = if numeric { " class=\"num\"" } else { "" };
                let title = match self.titles.get(r).and_then(|t| t.get(k)) {
                    Some(t) if !t.is_empty() => format!(" title=\"{}\"", escape(t)),
                    _ => String::new(),
                };
                let _ = write!(out, "<td{class}{title}>{}</td>", escape(cell));
            }
            out.push_str("</tr>\n");
        }
        out.push_str("</tbody>\n</table>\n");
        out
    }
}

/// An SVG document as an inline `<svg>` element: any XML declaration or comment before the
/// `<svg` tag is dropped.
fn inline_svg(svg: &str) -> &str {
    svg.find("<svg").map_or("", |i| svg[i..].trim_end())
}

/// The page's style sheet: readable at 1366 px wide, plots scaled to the column.
const STYLE: &str = "body{font-family:system-ui,-apple-system,'Segoe UI',Roboto,sans-serif;margin:0;color:#1d1d1f;background:#f6f6f8}
main{max-width:1180px;margin:0 auto;padding:16px 28px 40px;background:#fff}
h1{font-size:1.6em;margin:.4em 0 .2em}h2{font-size:1.25em;margin:1.6em 0 .4em;border-bottom:1px solid #ddd;padding-bottom:.2em}
h3{font-size:1.05em;margin:1.2em 0 .3em}p.meta{color:#555;margin:.2em 0}
nav ul{padding-left:1.2em;margin:.4em 0}nav li{margin:.1em 0}
pre{background:#f3f3f6;padding:10px 12px;overflow-x:auto;font-size:.85em;line-height:1.35;border-radius:4px}
table{border-collapse:collapse;margin:.5em 0 1em;font-size:.88em}th,td{padding:3px 10px;border-bottom:1px solid #e2e2e2;text-align:left;vertical-align:top}
th{background:#eef0f6}td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}tbody tr:nth-child(even){background:#fafafc}
figure{margin:.6em 0 1.2em}figure svg{max-width:100%;height:auto;display:block}
.caution{border-left:4px solid #c0392b;background:#fdf0ee;padding:8px 12px;margin:1.2em 0}
footer{color:#555;font-size:.85em;margin-top:2em}";

/// One section of the page.
#[derive(Debug, Clone)]
struct Section {
    title: String,
    body: String,
}

/// A report page being assembled: [`HtmlReport::new`], sections in order, then
/// [`HtmlReport::render`].
#[derive(Debug, Clone)]
pub struct HtmlReport {
    title: String,
    meta: Vec<String>,
    caution: Option<String>,
    sections: Vec<Section>,
}

impl HtmlReport {
    /// A page titled `title` (escaped).
    pub fn new(title: &str) -> Self {
        HtmlReport {
            title: title.to_string(),
            meta: Vec::new(),
            caution: None,
            sections: Vec::new(),
        }
    }

    /// A line under the title (e.g. the command and the files read), escaped.
    pub fn meta(&mut self, line: &str) {
        self.meta.push(line.to_string());
    }

    /// A caution shown boxed under the title and repeated in the footer, escaped.
    pub fn caution(&mut self, text: &str) {
        self.caution = Some(text.to_string());
    }

    /// A section of preformatted text lines (e.g. what the command printed), escaped.
    pub fn text_section(&mut self, title: &str, lines: &[String]) {
        let mut body = String::from("<pre>");
        for line in lines {
            body.push_str(&escape(line));
            body.push('\n');
        }
        body.push_str("</pre>\n");
        self.push(title, body);
    }

    /// A section of figures (SVG documents from this crate's plot functions), each with an
    /// escaped caption (empty: none).
    pub fn figure_section(&mut self, title: &str, figures: &[(String, String)]) {
        let mut body = String::new();
        for (caption, svg) in figures {
            body.push_str("<figure>\n");
            body.push_str(inline_svg(svg));
            body.push('\n');
            if !caption.is_empty() {
                let _ = writeln!(body, "<figcaption>{}</figcaption>", escape(caption));
            }
            body.push_str("</figure>\n");
        }
        self.push(title, body);
    }

    /// A ranked-quantity section: a title, an optional introduction (escaped), a table and
    /// a chart of it (an SVG document, e.g. from [`crate::bar_chart_svg`]), the table first.
    /// This is the form of the rates-of-production sections and the one meant for local
    /// sensitivities (ranked table + bar chart).
    pub fn table_and_chart_section(&mut self, title: &str, intro: &str, table: &Table, svg: &str) {
        self.table_and_charts_section(title, intro, table, &[svg]);
    }

    /// A ranked-quantity section with the chart first: a title, an optional introduction
    /// (escaped), the chart (an SVG document, e.g. from [`crate::bar_chart_svg`]) and the
    /// table under it. The local-sensitivity page uses it, so that the ranking is what the
    /// page opens on and the table with every number follows.
    pub fn chart_and_table_section(&mut self, title: &str, intro: &str, svg: &str, table: &Table) {
        let mut body = String::new();
        if !intro.is_empty() {
            let _ = writeln!(body, "<p>{}</p>", escape(intro));
        }
        let _ = writeln!(body, "<figure>\n{}\n</figure>", inline_svg(svg));
        body.push_str(&table.to_html());
        self.push(title, body);
    }

    /// Like [`HtmlReport::table_and_chart_section`] with any number of charts (none: the
    /// table alone).
    pub fn table_and_charts_section(
        &mut self,
        title: &str,
        intro: &str,
        table: &Table,
        svgs: &[&str],
    ) {
        let mut body = String::new();
        if !intro.is_empty() {
            let _ = writeln!(body, "<p>{}</p>", escape(intro));
        }
        body.push_str(&table.to_html());
        for svg in svgs {
            let _ = writeln!(body, "<figure>\n{}\n</figure>", inline_svg(svg));
        }
        self.push(title, body);
    }

    fn push(&mut self, title: &str, body: String) {
        self.sections.push(Section {
            title: title.to_string(),
            body,
        });
    }

    /// Section titles in order.
    pub fn section_titles(&self) -> Vec<&str> {
        self.sections.iter().map(|s| s.title.as_str()).collect()
    }

    /// The page as one HTML5 document: title, lines under it, the caution, a table of
    /// contents, the sections (`<section id="s1">`, ...) and a footer.
    pub fn render(&self) -> String {
        let mut out = String::new();
        let _ = writeln!(
            out,
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>{}</title>\n<style>\n{STYLE}\n</style>\n</head>\n<body>\n<main>\n<h1>{}</h1>",
            escape(&self.title),
            escape(&self.title)
        );
        for line in &self.meta {
            let _ = writeln!(out, "<p class=\"meta\">{}</p>", escape(line));
        }
        if let Some(c) = &self.caution {
            let _ = writeln!(out, "<p class=\"caution\">{}</p>", escape(c));
        }
        if self.sections.len() > 1 {
            out.push_str("<nav><ul>\n");
            for (k, s) in self.sections.iter().enumerate() {
                let _ = writeln!(
                    out,
                    "<li><a href=\"#s{}\">{}</a></li>",
                    k + 1,
                    escape(&s.title)
                );
            }
            out.push_str("</ul></nav>\n");
        }
        for (k, s) in self.sections.iter().enumerate() {
            let _ = writeln!(
                out,
                "<section id=\"s{}\">\n<h2>{}</h2>\n{}</section>",
                k + 1,
                escape(&s.title),
                s.body
            );
        }
        out.push_str("<footer>");
        if let Some(c) = &self.caution {
            let _ = write!(out, "<p>{}</p>", escape(c));
        }
        let _ = writeln!(
            out,
            "<p>Written by stoik {}.</p></footer>\n</main>\n</body>\n</html>",
            env!("CARGO_PKG_VERSION")
        );
        out
    }
}
