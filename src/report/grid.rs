//! A table's cells, already formatted: what every tabular format (terminal, HTML, Markdown) lays out.

/// Named columns of formatted cells.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Grid {
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
    /// Columns of text (left-aligned); every other column holds numbers.
    pub text: Vec<String>,
    /// Columns left out, and named once in the caption, when every row holds the same value.
    pub fold: Vec<String>,
}

impl Grid {
    pub fn is_text(&self, column: usize) -> bool {
        self.text.contains(&self.header[column])
    }

    /// Names as the owned strings a grid keeps.
    pub fn names(names: &[&str]) -> Vec<String> {
        names.iter().map(|n| n.to_string()).collect()
    }

    /// The grid without its constant foldable columns, and those columns as (name, value).
    pub fn folded(&self) -> (Grid, Vec<(String, String)>) {
        let constant = |c: usize| {
            self.fold.contains(&self.header[c])
                && !self.rows.is_empty()
                && self.rows.iter().all(|r| r[c] == self.rows[0][c])
        };
        let keep: Vec<usize> = (0..self.header.len()).filter(|&c| !constant(c)).collect();
        // A column that is "-" throughout says nothing: it leaves without a caption entry.
        let folded = (0..self.header.len())
            .filter(|&c| constant(c) && self.rows[0][c] != "-")
            .map(|c| (self.header[c].to_string(), self.rows[0][c].clone()))
            .collect();
        let grid = Grid {
            header: keep.iter().map(|&c| self.header[c].clone()).collect(),
            rows: self
                .rows
                .iter()
                .map(|r| keep.iter().map(|&c| r[c].clone()).collect())
                .collect(),
            text: self.text.clone(),
            fold: Vec::new(),
        };
        (grid, folded)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constant_columns_fold_into_the_caption() {
        let g = Grid {
            header: Grid::names(&["season", "league", "team"]),
            rows: vec![
                vec!["2026".into(), "-".into(), "A".into()],
                vec!["2026".into(), "-".into(), "B".into()],
            ],
            text: Grid::names(&["team"]),
            fold: Grid::names(&["season", "league"]),
        };
        let (kept, folded) = g.folded();
        assert_eq!(kept.header, vec!["team".to_string()]);
        // A column of "-" says nothing and leaves no caption entry.
        assert_eq!(folded, vec![("season".to_string(), "2026".to_string())]);
        assert!(kept.is_text(0));
    }
}
