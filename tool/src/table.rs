//! Aligned plain-text tables.

/// Renders `rows` (the first is the header) as columns separated by two spaces, with a rule under
/// the header. `right[i]` right-aligns column i (numbers). Widths count characters, so `µ` and
/// `Ω` take one column. Trailing spaces are trimmed.
pub fn render(rows: &[Vec<String>], right: &[bool]) -> String {
    let cols = rows.iter().map(Vec::len).max().unwrap_or(0);
    let mut width = vec![0usize; cols];
    for row in rows {
        for (i, cell) in row.iter().enumerate() {
            width[i] = width[i].max(cell.chars().count());
        }
    }
    let mut out = String::new();
    for (r, row) in rows.iter().enumerate() {
        let mut line = String::new();
        for (i, cell) in row.iter().enumerate() {
            if i > 0 {
                line.push_str("  ");
            }
            let pad = width[i] - cell.chars().count();
            let is_right = right.get(i).copied().unwrap_or(false) && r > 0;
            if is_right {
                line.extend(std::iter::repeat_n(' ', pad));
                line.push_str(cell);
            } else {
                line.push_str(cell);
                line.extend(std::iter::repeat_n(' ', pad));
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
        if r == 0 {
            let total: usize = width.iter().sum::<usize>() + 2 * cols.saturating_sub(1);
            out.extend(std::iter::repeat_n('-', total));
            out.push('\n');
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_line_up() {
        let rows = vec![
            vec!["what".to_string(), "value".to_string()],
            vec!["τ".to_string(), "2.188 ms".to_string()],
            vec!["current".to_string(), "150.0 mA".to_string()],
        ];
        let t = render(&rows, &[false, true]);
        assert_eq!(
            t,
            "what     value\n-----------------\nτ        2.188 ms\ncurrent  150.0 mA\n"
        );
    }
}
