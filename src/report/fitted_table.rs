//! Terminal tables that fit a width: long labels wrap first, then while the table is wider than
//! the terminal the column with the lowest priority is left out (the rightmost of equal ones),
//! then the widest cells wrap. Without a width (output to a pipe or a file, or
//! `--wide`) every column is shown. A new column only needs its place in the list and a
//! priority.

use comfy_table::{presets, Cell, ColumnConstraint, ContentArrangement, Table, Width};

/// A column: header, how much it matters on a narrow terminal, and its cell for a row.
pub(crate) struct Column<'a, T> {
    pub header: &'static str,
    /// Higher stays longer; [`ALWAYS`] never leaves.
    pub priority: u8,
    pub cell: Box<dyn Fn(&T) -> Cell + 'a>,
    /// When fitting a width, wrap this column's cells at this many characters.
    pub wrap_at: Option<u16>,
}

/// The priority of a column that is never left out (labels and the verdict).
pub(crate) const ALWAYS: u8 = u8::MAX;

impl<'a, T> Column<'a, T> {
    pub fn new(header: &'static str, priority: u8, cell: impl Fn(&T) -> Cell + 'a) -> Self {
        Column { header, priority, cell: Box::new(cell), wrap_at: None }
    }

    /// Wraps long cells (names, paths) at `chars` when the table must fit a width.
    pub fn wrap_at(mut self, chars: u16) -> Self {
        self.wrap_at = Some(chars);
        self
    }
}

/// A table rendered for a width, with the headers of the columns left out.
pub(crate) struct Fitted {
    pub table: Table,
    pub hidden: Vec<&'static str>,
}

impl Fitted {
    /// "RMS dev. m, peak thrust N" for a note under the table (headers on one line).
    pub fn hidden_list(&self) -> String {
        self.hidden.iter().map(|h| h.replace('\n', " ")).collect::<Vec<_>>().join(", ")
    }
}

fn build<T>(columns: &[&Column<'_, T>], rows: &[T], fitting: bool) -> Table {
    let mut t = Table::new();
    t.load_style(presets::UTF8_FULL_CONDENSED).set_content_arrangement(ContentArrangement::Disabled);
    t.set_header(columns.iter().map(|c| c.header).collect::<Vec<_>>());
    for r in rows {
        t.add_row(columns.iter().map(|c| (c.cell)(r)).collect::<Vec<Cell>>());
    }
    if fitting {
        for (i, c) in columns.iter().enumerate() {
            if let (Some(w), Some(col)) = (c.wrap_at, t.column_mut(i)) {
                col.set_constraint(ColumnConstraint::UpperBoundary(Width::Fixed(w)));
            }
        }
    }
    t
}

/// Widest line of a rendered table, in characters, not counting ANSI colour sequences.
pub(crate) fn rendered_width(t: &Table) -> usize {
    let visible = |line: &str| {
        let (mut n, mut in_escape) = (0, false);
        for ch in line.chars() {
            match (in_escape, ch) {
                (false, '\u{1b}') => in_escape = true,
                (false, _) => n += 1,
                (true, c) if c.is_ascii_alphabetic() => in_escape = false,
                (true, _) => {}
            }
        }
        n
    };
    t.to_string().lines().map(visible).max().unwrap_or(0)
}

/// The table of `rows` in `columns`, fitted to `max_width` characters when given; `style`
/// finishes the table that is kept (colour).
pub(crate) fn fitted_table<T>(
    columns: &[Column<'_, T>],
    rows: &[T],
    max_width: Option<usize>,
    style: impl Fn(&mut Table),
) -> Fitted {
    let mut shown: Vec<&Column<T>> = columns.iter().collect();
    let mut hidden = Vec::new();
    if let Some(width) = max_width {
        while rendered_width(&build(&shown, rows, true)) > width {
            let lowest = shown
                .iter()
                .enumerate()
                .filter(|(_, c)| c.priority != ALWAYS)
                .min_by_key(|(i, c)| (c.priority, std::cmp::Reverse(*i)))
                .map(|(i, _)| i);
            let Some(i) = lowest else { break };
            hidden.push(shown.remove(i).header);
        }
    }
    hidden.sort_by_key(|h| columns.iter().position(|c| c.header == *h));
    let mut table = build(&shown, rows, max_width.is_some());
    if let Some(width) = max_width {
        if rendered_width(&table) > width {
            let w = u16::try_from(width).unwrap_or(u16::MAX);
            table.set_content_arrangement(ContentArrangement::Dynamic).set_width(w);
        }
    }
    style(&mut table);
    Fitted { table, hidden }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn columns() -> Vec<Column<'static, (u32, &'static str)>> {
        vec![
            Column::new("name", ALWAYS, |r: &(u32, &str)| Cell::new(r.1)),
            Column::new("low", 1, |r: &(u32, &str)| Cell::new(r.0 * 1000)),
            Column::new("high", 5, |r: &(u32, &str)| Cell::new(r.0 * 2000)),
            Column::new("also low", 1, |r: &(u32, &str)| Cell::new(r.0 * 3000)),
        ]
    }

    #[test]
    fn narrow_widths_drop_the_lowest_priority_rightmost_first_and_no_width_keeps_all() {
        let rows = [(123_456u32, "a leg name"), (7, "b")];
        let all = fitted_table(&columns(), &rows, None, |_| {});
        assert!(all.hidden.is_empty());
        let full = rendered_width(&all.table);
        // One character narrower than everything: the rightmost lowest-priority column goes.
        let one = fitted_table(&columns(), &rows, Some(full - 1), |_| {});
        assert_eq!(one.hidden, vec!["also low"]);
        assert!(rendered_width(&one.table) < full);
        // Very narrow: only the column that always stays, wrapped to the width.
        let tiny = fitted_table(&columns(), &rows, Some(12), |_| {});
        assert_eq!(tiny.hidden, vec!["low", "high", "also low"]);
        assert!(rendered_width(&tiny.table) <= 12, "{}", tiny.table);
        assert_eq!(tiny.hidden_list(), "low, high, also low");
    }
}
