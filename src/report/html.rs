//! A self-contained HTML page: inline CSS, inline SVG charts, no scripts and no network
//! requests, so it opens anywhere and can be mailed as one file.

use std::fmt::Write as _;

/// One block of a report section.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A paragraph of plain text (escaped).
    Paragraph(String),
    /// Preformatted text, e.g. a model summary (escaped).
    Preformatted(String),
    /// An inline SVG document (its XML declaration is dropped) with a caption.
    Chart {
        /// The SVG text.
        svg: String,
        /// Caption under the chart.
        caption: String,
    },
    /// A table with a header row; cells are escaped.
    Table {
        /// Column headings.
        header: Vec<String>,
        /// Rows of cells.
        rows: Vec<Vec<String>>,
    },
    /// A bulleted list of warnings (escaped), highlighted.
    Warnings(Vec<String>),
}

/// A titled section of the report.
#[derive(Debug, Clone, PartialEq)]
pub struct Section {
    /// Heading.
    pub heading: String,
    /// Content.
    pub blocks: Vec<Block>,
}

/// A whole report page.
#[derive(Debug, Clone, PartialEq)]
pub struct Page {
    /// Page title (also the top heading).
    pub title: String,
    /// A line under the title (e.g. version, date, seed).
    pub subtitle: String,
    /// The caution shown at the top and bottom of the page.
    pub caution: String,
    /// The sections, in order.
    pub sections: Vec<Section>,
}

/// Escape text for HTML element content and attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

const STYLE: &str = "
body{margin:0;font-family:system-ui,-apple-system,'Segoe UI',sans-serif;color:#1d2a24;background:#f6f5f0;line-height:1.45}
header{background:#23443a;color:#f6f5f0;padding:1.4rem 2rem 1.1rem}
header h1{margin:0;font-size:1.6rem;font-weight:600;letter-spacing:.01em}
header p{margin:.3rem 0 0;opacity:.85;font-size:.9rem}
main{max-width:1100px;margin:0 auto;padding:1rem 2rem 3rem}
section{background:#fff;border:1px solid #dcd9cc;border-radius:6px;margin:1.2rem 0;padding:.6rem 1.4rem 1rem}
h2{font-size:1.15rem;color:#23443a;border-bottom:2px solid #c9b77a;padding-bottom:.25rem}
.caution{background:#fff7e0;border-left:5px solid #b8860b;padding:.7rem 1rem;margin:1rem 0;font-size:.95rem}
.warnings{background:#fdeeee;border-left:5px solid #a33;padding:.5rem 1rem .5rem 2rem}
pre{background:#f3f2ec;padding:.8rem;overflow-x:auto;font-size:.8rem;border-radius:4px}
figure{margin:1rem 0}figcaption{font-size:.85rem;color:#555;margin-top:.3rem}
figure svg{max-width:100%;height:auto}
table{border-collapse:collapse;font-size:.85rem;margin:.5rem 0}
th,td{padding:.25rem .6rem;border-bottom:1px solid #e4e1d6;text-align:right}
th{background:#ece9dd;color:#23443a}td:first-child,th:first-child{text-align:left}
footer{font-size:.8rem;color:#666;text-align:center;padding:1rem}
";

/// Drop an XML declaration or DOCTYPE that would be invalid inside HTML.
fn inline_svg(svg: &str) -> &str {
    let mut s = svg.trim_start();
    while s.starts_with("<?") || s.starts_with("<!") {
        match s.find('>') {
            Some(i) => s = s[i + 1..].trim_start(),
            None => break,
        }
    }
    s
}

/// Render the page as one HTML document.
pub fn render(page: &Page) -> String {
    let mut out = String::new();
    let _ = write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\
         <title>{}</title><style>{STYLE}</style></head><body>\n<header><h1>{}</h1><p>{}</p></header>\n<main>\n\
         <p class=\"caution\"><strong>Caution.</strong> {}</p>\n",
        escape(&page.title),
        escape(&page.title),
        escape(&page.subtitle),
        escape(&page.caution)
    );
    for (i, section) in page.sections.iter().enumerate() {
        let _ = writeln!(
            out,
            "<section id=\"s{i}\"><h2>{}</h2>",
            escape(&section.heading)
        );
        for block in &section.blocks {
            render_block(&mut out, block);
        }
        out.push_str("</section>\n");
    }
    let _ = write!(
        out,
        "<p class=\"caution\"><strong>Caution.</strong> {}</p>\n</main>\n<footer>Made with stemcast {}.</footer>\n</body></html>\n",
        escape(&page.caution),
        env!("CARGO_PKG_VERSION")
    );
    out
}

fn render_block(out: &mut String, block: &Block) {
    match block {
        Block::Paragraph(t) => {
            let _ = writeln!(out, "<p>{}</p>", escape(t));
        }
        Block::Preformatted(t) => {
            let _ = writeln!(out, "<pre>{}</pre>", escape(t));
        }
        Block::Chart { svg, caption } => {
            let _ = writeln!(
                out,
                "<figure class=\"chart\">{}<figcaption>{}</figcaption></figure>",
                inline_svg(svg),
                escape(caption)
            );
        }
        Block::Table { header, rows } => {
            out.push_str("<table><thead><tr>");
            for h in header {
                let _ = write!(out, "<th>{}</th>", escape(h));
            }
            out.push_str("</tr></thead><tbody>\n");
            for row in rows {
                out.push_str("<tr>");
                for c in row {
                    let _ = write!(out, "<td>{}</td>", escape(c));
                }
                out.push_str("</tr>\n");
            }
            out.push_str("</tbody></table>\n");
        }
        Block::Warnings(ws) => {
            if ws.is_empty() {
                return;
            }
            out.push_str("<ul class=\"warnings\">");
            for w in ws {
                let _ = write!(out, "<li>{}</li>", escape(w));
            }
            out.push_str("</ul>\n");
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_markup_and_inlines_svg_without_declaration() {
        let page = Page {
            title: "A <b> & c".into(),
            subtitle: "s".into(),
            caution: "careful".into(),
            sections: vec![Section {
                heading: "h".into(),
                blocks: vec![Block::Chart {
                    svg: "<?xml version=\"1.0\"?>\n<svg width=\"1\"></svg>".into(),
                    caption: "c".into(),
                }],
            }],
        };
        let html = render(&page);
        assert!(html.contains("<title>A &lt;b&gt; &amp; c</title>"));
        assert!(html.contains("<figure class=\"chart\"><svg width=\"1\"></svg>"));
        assert!(!html.contains("<?xml"));
        assert_eq!(html.matches("careful").count(), 2);
        assert!(!html.contains("<script"));
    }
}
