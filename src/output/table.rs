//! Aligned terminal tables with marked cells: a text mark always, colour only on a terminal.

/// A table cell; `flagged` cells get a `!` and, on a terminal, red.
#[derive(Debug, Clone)]
pub struct Cell {
    pub text: String,
    pub flagged: bool,
}

impl Cell {
    pub fn new(text: impl Into<String>) -> Self {
        Self {
            text: text.into(),
            flagged: false,
        }
    }
    pub fn flagged(text: impl Into<String>, flagged: bool) -> Self {
        Self {
            text: text.into(),
            flagged,
        }
    }
}

impl From<String> for Cell {
    fn from(s: String) -> Self {
        Cell::new(s)
    }
}

impl From<&str> for Cell {
    fn from(s: &str) -> Self {
        Cell::new(s)
    }
}

#[derive(Debug, Clone, Default)]
pub struct Table {
    pub headers: Vec<String>,
    pub rows: Vec<Vec<Cell>>,
    /// Columns (by index) aligned left; the rest, numbers, align right.
    pub left: Vec<usize>,
}

impl Table {
    pub fn new(headers: &[&str]) -> Self {
        Self {
            headers: headers.iter().map(|s| s.to_string()).collect(),
            rows: Vec::new(),
            left: vec![0],
        }
    }

    pub fn push(&mut self, row: Vec<Cell>) {
        self.rows.push(row);
    }

    pub fn render(&self, colour: bool) -> String {
        let ncol = self.headers.len();
        let shown = |c: &Cell| {
            if c.flagged {
                format!("{}!", c.text)
            } else {
                c.text.clone()
            }
        };
        let mut width: Vec<usize> = self.headers.iter().map(|h| h.chars().count()).collect();
        for row in &self.rows {
            for (i, c) in row.iter().enumerate().take(ncol) {
                width[i] = width[i].max(shown(c).chars().count());
            }
        }
        let mut out = String::new();
        let line = |cells: Vec<(String, bool)>, out: &mut String| {
            let mut parts = Vec::with_capacity(ncol);
            for (i, (text, flagged)) in cells.into_iter().enumerate() {
                let pad = width[i].saturating_sub(text.chars().count());
                let padded = if self.left.contains(&i) {
                    format!("{text}{}", " ".repeat(pad))
                } else {
                    format!("{}{text}", " ".repeat(pad))
                };
                parts.push(if flagged && colour {
                    format!("\x1b[31m{padded}\x1b[0m")
                } else {
                    padded
                });
            }
            out.push_str(parts.join("  ").trim_end());
            out.push('\n');
        };
        line(
            self.headers.iter().map(|h| (h.clone(), false)).collect(),
            &mut out,
        );
        line(
            width.iter().map(|w| ("-".repeat(*w), false)).collect(),
            &mut out,
        );
        for row in &self.rows {
            let mut cells: Vec<(String, bool)> =
                row.iter().map(|c| (shown(c), c.flagged)).collect();
            cells.resize(ncol, (String::new(), false));
            line(cells, &mut out);
        }
        out
    }
}
