//! A small aligned-column text table.

use std::io::{self, Write};

/// Column alignment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Left-aligned (text).
    Left,
    /// Right-aligned (numbers).
    Right,
}

/// A text table built row by row and written with aligned columns.
#[derive(Debug, Clone, Default)]
pub struct Table {
    header: Vec<String>,
    align: Vec<Align>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column headers and alignments.
    pub fn new(columns: &[(&str, Align)]) -> Table {
        Table {
            header: columns.iter().map(|(h, _)| h.to_string()).collect(),
            align: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends a row (missing cells are blank, extra cells are ignored).
    pub fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// True if the table has no rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Writes the table with `indent` spaces before each line.
    pub fn write(&self, w: &mut dyn Write, indent: usize) -> io::Result<()> {
        let n = self.header.len();
        let mut width: Vec<usize> = self.header.iter().map(|h| h.chars().count()).collect();
        for r in &self.rows {
            for (k, c) in r.iter().take(n).enumerate() {
                width[k] = width[k].max(c.chars().count());
            }
        }
        let pad = " ".repeat(indent);
        let line = |w: &mut dyn Write, cells: &[String]| -> io::Result<()> {
            let mut s = pad.clone();
            for (k, wk) in width.iter().enumerate() {
                let c = cells.get(k).map(String::as_str).unwrap_or("");
                let fill = wk.saturating_sub(c.chars().count());
                if k > 0 {
                    s.push_str("  ");
                }
                match self.align[k] {
                    Align::Left => {
                        s.push_str(c);
                        if k + 1 < n {
                            s.push_str(&" ".repeat(fill));
                        }
                    }
                    Align::Right => {
                        s.push_str(&" ".repeat(fill));
                        s.push_str(c);
                    }
                }
            }
            writeln!(w, "{}", s.trim_end())
        };
        line(w, &self.header)?;
        let rule: Vec<String> = width.iter().map(|&k| "-".repeat(k)).collect();
        line(w, &rule)?;
        for r in &self.rows {
            line(w, r)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn aligns() {
        let mut t = Table::new(&[("a", Align::Left), ("num", Align::Right)]);
        t.row(vec!["xyz".into(), "1.5".into()]);
        t.row(vec!["q".into(), "10.25".into()]);
        let mut out = Vec::new();
        t.write(&mut out, 0).unwrap();
        let s = String::from_utf8(out).unwrap();
        assert_eq!(s, "a      num\n---  -----\nxyz    1.5\nq    10.25\n");
    }
}
