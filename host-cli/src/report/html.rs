//! The page: one self-contained HTML file, inline SVG charts, no scripts.

use std::fmt::Write as _;

use super::table::esc;

/// The page's style sheet (our own look: slate header, ochre rule, paper background).
const CSS: &str = r#"
:root { --ink:#222b33; --muted:#5b6670; --paper:#f4f2ec; --card:#ffffff; --rule:#d9a441;
        --line:#dce1e4; --bad:#f4d3d7; --badink:#8a1f2c; --good:#dcefe2; --warn:#fbeccd; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", sans-serif; }
header { background:var(--ink); color:#f4f2ec; padding:22px 32px 18px; border-bottom:5px solid var(--rule); }
header h1 { margin:0 0 4px; font-size:24px; font-weight:650; letter-spacing:.2px; }
header p { margin:2px 0; color:#c9cfd4; font-size:14px; }
main { max-width:1180px; margin:0 auto; padding:18px 24px 40px; }
section { background:var(--card); border:1px solid var(--line); border-radius:6px; margin:18px 0; padding:8px 22px 18px; }
h2 { font-size:20px; margin:14px 0 8px; display:flex; align-items:center; gap:10px; }
h2 .num { display:inline-block; min-width:30px; height:30px; line-height:30px; text-align:center;
          border-radius:50%; background:var(--rule); color:var(--ink); font-size:15px; font-weight:700; }
h3 { font-size:16px; margin:18px 0 6px; color:#2f3b45; }
p.note, li.note { color:var(--muted); font-size:13.5px; }
.caution { background:#fff8e8; border-left:6px solid var(--rule); padding:10px 16px; margin:16px 0; border-radius:4px; }
.chart { margin:10px 0 4px; overflow-x:auto; }
.chart svg { width:100%; max-width:960px; height:auto; display:block; border:1px solid var(--line); border-radius:4px; }
.tablewrap { overflow-x:auto; margin:6px 0 10px; }
table { border-collapse:collapse; font-size:12.5px; font-variant-numeric:tabular-nums; }
th, td { border-bottom:1px solid var(--line); padding:3px 6px; text-align:right; white-space:nowrap; }
th { background:#eef1f3; font-weight:600; position:sticky; top:0; white-space:normal; vertical-align:bottom; }
td:first-child, th:first-child { text-align:left; }
td.below { background:var(--bad); color:var(--badink); font-weight:600; }
td.ok { background:var(--good); }
td.warn { background:var(--warn); }
td.wrap { white-space:normal; text-align:left; min-width:300px; }
td.wrapn { white-space:normal; text-align:left; min-width:150px; }
p.csvlink { margin:2px 0 0; font-size:12px; color:var(--muted); }
.verdicts { display:grid; grid-template-columns: repeat(auto-fill, minmax(330px, 1fr)); gap:10px; margin:10px 0; }
.verdict { border:1px solid var(--line); border-radius:5px; padding:8px 12px; background:#fbfbfa; }
.verdict b.tag { display:inline-block; padding:1px 8px; border-radius:10px; font-size:12px; margin-left:6px; }
.tag.not_random { background:var(--bad); color:var(--badink); }
.tag.possible { background:var(--warn); }
.tag.random, .tag.no_gaps { background:var(--good); }
.tag.too_few_gaps, .tag.no_data, .tag.too_short { background:#e6e8ea; }
.verdict .bias { font-size:13px; margin:4px 0 0; }
.verdict .bias.above { color:var(--badink); font-weight:600; }
.verdict p { margin:6px 0 0; font-size:13.5px; }
details { margin:8px 0; }
summary { cursor:pointer; color:#2f3b45; font-weight:600; }
footer { color:var(--muted); font-size:12.5px; text-align:center; padding:10px 0 30px; }
"#;

/// A page under construction.
pub struct Page {
    body: String,
}

impl Page {
    /// A page with a header.
    pub fn new(title: &str, lines: &[String]) -> Page {
        let mut body = String::new();
        let _ = write!(body, "<header><h1>{}</h1>", esc(title));
        for l in lines {
            let _ = write!(body, "<p>{}</p>", esc(l));
        }
        body.push_str("</header><main>");
        Page { body }
    }

    /// Opens a numbered section.
    pub fn section(&mut self, num: &str, id: &str, title: &str) {
        let _ = write!(
            self.body,
            "<section id=\"{id}\"><h2><span class=\"num\">{num}</span>{}</h2>",
            esc(title)
        );
    }

    /// Closes a section.
    pub fn end_section(&mut self) {
        self.body.push_str("</section>");
    }

    /// A sub-heading.
    pub fn h3(&mut self, t: &str) {
        let _ = write!(self.body, "<h3>{}</h3>", esc(t));
    }

    /// A paragraph of plain text.
    pub fn p(&mut self, t: &str) {
        let _ = write!(self.body, "<p>{}</p>", esc(t));
    }

    /// A muted note.
    pub fn note(&mut self, t: &str) {
        let _ = write!(self.body, "<p class=\"note\">{}</p>", esc(t));
    }

    /// Raw HTML (tables, charts, built by this module's callers).
    pub fn raw(&mut self, html: &str) {
        self.body.push_str(html);
    }

    /// A chart with a caption.
    pub fn chart(&mut self, name: &str, svg: &str, caption: &str) {
        let _ = write!(
            self.body,
            "<figure class=\"chart\" data-chart=\"{name}\">{svg}<figcaption class=\"note\">{}</figcaption></figure>",
            esc(caption)
        );
    }

    /// The caution box.
    pub fn caution(&mut self, t: &str) {
        let _ = write!(
            self.body,
            "<div class=\"caution\" role=\"note\"><b>Caution.</b> {}</div>",
            esc(t)
        );
    }

    /// Collapsible block start.
    pub fn details(&mut self, summary: &str) {
        let _ = write!(self.body, "<details><summary>{}</summary>", esc(summary));
    }

    /// Collapsible block end.
    pub fn end_details(&mut self) {
        self.body.push_str("</details>");
    }

    /// The finished document.
    pub fn finish(mut self, title: &str, footer: &str) -> String {
        let _ = write!(self.body, "</main><footer>{}</footer>", esc(footer));
        format!(
            "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\
<title>{}</title><style>{CSS}</style></head><body>{}</body></html>\n",
            esc(title),
            self.body
        )
    }
}
