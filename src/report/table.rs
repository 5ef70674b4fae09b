//! A plain text table: header, rows of cells, columns aligned (numbers right, text left).

use std::fmt::Write as _;

/// A text table built row by row.
#[derive(Debug, Clone, Default)]
pub struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column names.
    pub fn new<S: Into<String>>(header: impl IntoIterator<Item = S>) -> Self {
        Table {
            header: header.into_iter().map(Into::into).collect(),
            rows: Vec::new(),
        }
    }
    /// Appends a row (missing cells are blank).
    pub fn row<S: Into<String>>(&mut self, cells: impl IntoIterator<Item = S>) {
        self.rows.push(cells.into_iter().map(Into::into).collect());
    }
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.rows.len()
    }
    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }
    /// Renders the table; numeric cells are right-aligned.
    pub fn render(&self) -> String {
        let cols = self.header.len();
        let mut w: Vec<usize> = self.header.iter().map(|h| h.chars().count()).collect();
        for r in &self.rows {
            for (i, c) in r.iter().enumerate().take(cols) {
                w[i] = w[i].max(c.chars().count());
            }
        }
        let is_num = |c: &str| {
            !c.is_empty()
                && c.chars()
                    .all(|ch| ch.is_ascii_digit() || "+-.eE%≥".contains(ch))
        };
        // A column is numeric (right-aligned, header too) when its non-blank cells are.
        let numeric_col: Vec<bool> = (0..cols)
            .map(|i| {
                let mut cells = self
                    .rows
                    .iter()
                    .filter_map(|r| r.get(i))
                    .filter(|c| !c.is_empty() && c.as_str() != "-");
                let mut any = false;
                let all = cells.all(|c| {
                    any = true;
                    is_num(c)
                });
                any && all
            })
            .collect();
        let mut out = String::new();
        let line = |out: &mut String, cells: &[String]| {
            let mut s = String::new();
            for (i, width) in w.iter().enumerate() {
                let c = cells.get(i).map(String::as_str).unwrap_or("");
                let numeric = numeric_col[i];
                if i > 0 {
                    s.push_str("  ");
                }
                if numeric {
                    let _ = write!(s, "{c:>width$}");
                } else {
                    let _ = write!(s, "{c:<width$}");
                }
            }
            out.push_str(s.trim_end());
            out.push('\n');
        };
        line(&mut out, &self.header);
        let rule: Vec<String> = w.iter().map(|n| "-".repeat(*n)).collect();
        line(&mut out, &rule);
        for r in &self.rows {
            line(&mut out, r);
        }
        out
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn aligns_numbers_right() {
        let mut t = super::Table::new(["name", "n"]);
        t.row(["a", "1"]);
        t.row(["bb", "100"]);
        assert_eq!(t.render(), "name    n\n----  ---\na       1\nbb    100\n");
    }
}
