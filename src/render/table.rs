//! Text tables whose columns are as wide as their widest cell (names of any length keep the
//! columns aligned), and the one angle range the text uses for headings and azimuths.

/// Alignment of a column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Text columns.
    Left,
    /// Numbers.
    Right,
}

/// A text table: a header row and rows of cells, each column sized to its content.
#[derive(Debug, Clone, Default)]
pub struct Table {
    head: Vec<String>,
    align: Vec<Align>,
    rows: Vec<(Vec<String>, Option<String>)>,
}

impl Table {
    /// A table with these column headers and alignments.
    pub fn new(columns: &[(&str, Align)]) -> Self {
        Table {
            head: columns.iter().map(|(h, _)| (*h).to_string()).collect(),
            align: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }

    /// Adds a row; a row with fewer cells leaves the later columns empty.
    pub fn row(&mut self, cells: Vec<String>) {
        self.rows.push((cells, None));
    }

    /// Adds a row whose `note` (a message) runs on after its cells without widening a column.
    pub fn row_with_note(&mut self, cells: Vec<String>, note: String) {
        self.rows.push((cells, Some(note)));
    }

    /// The table, each line indented by `indent`, columns two spaces apart, without trailing
    /// blanks.
    pub fn render(&self, indent: &str) -> String {
        let width = |s: &str| s.chars().count();
        let mut w: Vec<usize> = self.head.iter().map(|h| width(h)).collect();
        for (r, _) in &self.rows {
            for (i, c) in r.iter().enumerate() {
                if let Some(x) = w.get_mut(i) {
                    *x = (*x).max(width(c));
                }
            }
        }
        let mut out = String::new();
        let mut line = |cells: &[String], note: Option<&str>| {
            let mut l = String::from(indent);
            for (i, c) in cells.iter().enumerate() {
                if i > 0 {
                    l.push_str("  ");
                }
                let pad = w.get(i).copied().unwrap_or(0).saturating_sub(width(c));
                match self.align.get(i).copied().unwrap_or(Align::Left) {
                    Align::Right => {
                        l.push_str(&" ".repeat(pad));
                        l.push_str(c);
                    }
                    Align::Left => {
                        l.push_str(c);
                        l.push_str(&" ".repeat(pad));
                    }
                }
            }
            if let Some(n) = note {
                l.push_str("  ");
                l.push_str(n);
            }
            out.push_str(l.trim_end());
            out.push('\n');
        };
        line(&self.head, None);
        for (r, note) in &self.rows {
            line(r, note.as_deref());
        }
        out
    }
}

/// An azimuth or heading as the text shows it: degrees in [0, 360) at `decimals` places (a value
/// that rounds to 360 shows as 0), so that −13.1° and 346.9° never stand side by side.
pub fn angle_0_360(deg: f64, decimals: usize) -> String {
    let scale = 10f64.powi(decimals as i32);
    let mut a = ((deg * scale).round() / scale).rem_euclid(360.0);
    if (a - 360.0).abs() < 0.5 / scale {
        a = 0.0;
    }
    // −0.0 (from a tiny negative angle) prints as "-0.000".
    a += 0.0;
    format!("{a:.decimals$}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_fit_their_widest_cell() {
        let mut t = Table::new(&[("name", Align::Left), ("kg", Align::Right)]);
        t.row(vec!["a very long stage name".into(), "1.0".into()]);
        t.row(vec!["b".into(), "12345.0".into()]);
        assert_eq!(
            t.render("  "),
            "  name                         kg\n  a very long stage name      1.0\n  b                       12345.0\n"
        );
    }

    #[test]
    fn angles_lie_in_0_360() {
        assert_eq!(angle_0_360(-13.1, 1), "346.9");
        assert_eq!(angle_0_360(356.2, 1), "356.2");
        assert_eq!(angle_0_360(-0.00001, 3), "0.000");
        assert_eq!(angle_0_360(359.99996, 3), "0.000");
        assert_eq!(angle_0_360(720.5, 1), "0.5");
    }
}
