//! Tables written both as CSV files (full precision) and as HTML (rounded).

use std::fmt::Write as _;
use std::path::Path;

use anyhow::Result;

/// One table cell: its CSV text, its HTML text, and an optional CSS class.
#[derive(Clone, Debug)]
pub struct Cell {
    csv: String,
    html: String,
    class: Option<&'static str>,
}

impl Cell {
    /// Marks the cell with a CSS class.
    pub fn class(mut self, c: &'static str) -> Cell {
        self.class = Some(c);
        self
    }
}

/// Text.
pub fn text(s: impl Into<String>) -> Cell {
    let s = s.into();
    Cell {
        html: esc(&s),
        csv: s,
        class: None,
    }
}

/// A count.
pub fn int(n: impl Into<u64>) -> Cell {
    let n = n.into();
    Cell {
        csv: n.to_string(),
        html: n.to_string(),
        class: None,
    }
}

/// A number in CSV: the shortest form that reads back to the same value, in
/// scientific notation when tiny (below 1e-4) or huge, so that no field is
/// a 300-digit decimal.
pub fn csv_number(x: f64) -> String {
    if x != 0.0 && (x.abs() < 1e-4 || x.abs() >= 1e15) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// A number: CSV gets the shortest round-trip form ([`csv_number`]), HTML
/// `dp` decimals, or two significant digits in scientific notation when the
/// decimals would show only zeros; empty when absent.
pub fn num(v: Option<f64>, dp: usize) -> Cell {
    match v {
        Some(x) if x.is_finite() => Cell {
            csv: csv_number(x),
            html: if x != 0.0 && x.abs() < 0.5 * 10f64.powi(-(dp as i32)) {
                format!("{x:.1e}")
            } else {
                format!("{x:.dp$}")
            },
            class: None,
        },
        _ => Cell {
            csv: String::new(),
            html: "&ndash;".into(),
            class: None,
        },
    }
}

/// A fraction: CSV as the fraction, HTML as a percentage with `dp` decimals.
pub fn pct(v: Option<f64>, dp: usize) -> Cell {
    match v {
        Some(x) if x.is_finite() => Cell {
            csv: csv_number(x),
            html: format!("{:.dp$}&#8239;%", 100.0 * x),
            class: None,
        },
        _ => num(None, 0),
    }
}

/// A p-value: CSV full precision, HTML in scientific notation when small.
pub fn pval(v: Option<f64>) -> Cell {
    match v {
        Some(x) if x.is_finite() => Cell {
            csv: csv_number(x),
            html: if x < 1e-3 {
                format!("{x:.1e}")
            } else {
                format!("{x:.3}")
            },
            class: None,
        },
        _ => num(None, 0),
    }
}

/// A table with a file name (without `.csv`), CSV column names and HTML labels.
#[derive(Clone, Debug)]
pub struct Table {
    /// File stem.
    pub name: &'static str,
    /// `(csv name, html label)` per column.
    pub columns: Vec<(String, String)>,
    /// Rows of cells.
    pub rows: Vec<Vec<Cell>>,
}

impl Table {
    /// An empty table.
    pub fn new(name: &'static str, columns: &[(&'static str, &str)]) -> Table {
        Table {
            name,
            columns: columns
                .iter()
                .map(|(c, h)| ((*c).to_string(), (*h).to_string()))
                .collect(),
            rows: Vec::new(),
        }
    }

    /// Adds a row.
    pub fn push(&mut self, row: Vec<Cell>) {
        debug_assert_eq!(row.len(), self.columns.len(), "{}", self.name);
        self.rows.push(row);
    }

    /// The CSV text: header of column names, one line per row. Fields holding a
    /// comma, quote or line break are quoted.
    pub fn csv(&self) -> String {
        let mut s = String::new();
        let field = |f: &str| {
            if f.contains([',', '"', '\n', '\r']) {
                format!("\"{}\"", f.replace('"', "\"\""))
            } else {
                f.to_string()
            }
        };
        let head: Vec<String> = self.columns.iter().map(|c| field(&c.0)).collect();
        s.push_str(&head.join(","));
        s.push('\n');
        for r in &self.rows {
            let line: Vec<String> = r.iter().map(|c| field(&c.csv)).collect();
            s.push_str(&line.join(","));
            s.push('\n');
        }
        s
    }

    /// Writes `dir/<name>.csv` ([`crate::output`]: replaced atomically).
    pub fn write(&self, dir: &Path) -> Result<()> {
        let p = dir.join(format!("{}.csv", self.name));
        crate::output::write_file(&p, "a report table", self.csv().as_bytes())
    }

    /// The table as HTML, with a link to its CSV file.
    pub fn html(&self) -> String {
        let mut s = String::new();
        let _ = write!(s, "<div class=\"tablewrap\"><table><thead><tr>");
        for (_, h) in &self.columns {
            let _ = write!(s, "<th>{}</th>", esc(h));
        }
        s.push_str("</tr></thead><tbody>");
        for r in &self.rows {
            s.push_str("<tr>");
            for c in r {
                match c.class {
                    Some(k) => {
                        let _ = write!(s, "<td class=\"{k}\">{}</td>", c.html);
                    }
                    None => {
                        let _ = write!(s, "<td>{}</td>", c.html);
                    }
                }
            }
            s.push_str("</tr>");
        }
        let _ = write!(
            s,
            "</tbody></table><p class=\"csvlink\">Table file: <a href=\"{0}.csv\">{0}.csv</a></p></div>",
            self.name
        );
        s
    }
}

/// Escapes text for HTML.
pub fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c => o.push(c),
        }
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_and_html() {
        let mut t = Table::new("t", &[("a", "A"), ("b", "B <x>")]);
        t.push(vec![text("x,y"), num(Some(0.1 + 0.2), 2)]);
        t.push(vec![pct(Some(0.5), 1), num(None, 1)]);
        assert_eq!(t.csv(), "a,b\n\"x,y\",0.30000000000000004\n0.5,\n");
        let h = t.html();
        assert!(
            h.contains("<th>B &lt;x&gt;</th>") && h.contains("<td>0.30</td>"),
            "{h}"
        );
        assert!(h.contains("50.0&#8239;%"));
        // Tiny numbers: scientific notation that reads back exactly in CSV,
        // two significant digits in HTML (no 300-digit decimals).
        let p = 2.333766480074161e-17;
        let c = pval(Some(p));
        assert_eq!(c.csv, "2.333766480074161e-17");
        assert_eq!(c.csv.parse::<f64>().unwrap(), p);
        assert_eq!(c.html, "2.3e-17");
        assert_eq!(num(Some(1e-300), 3).csv, "1e-300");
        assert_eq!(num(Some(0.0004), 2).html, "4.0e-4");
        assert_eq!(num(Some(0.25), 2).csv, "0.25");
    }
}
