//! Printing rows as an aligned table or as CSV.

/// Rows of text under a header.
pub struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column names.
    pub fn new(header: &[&str]) -> Table {
        Table { header: header.iter().map(|h| h.to_string()).collect(), rows: Vec::new() }
    }

    /// Adds a row (as many cells as the header).
    pub fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }
}

/// Quotes a CSV field when it holds a comma, a quote or a line break (RFC 4180).
pub fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// Prints the table to stdout.
pub fn print_rows(table: &Table, csv: bool) {
    if csv {
        for row in std::iter::once(&table.header).chain(&table.rows) {
            println!("{}", row.iter().map(|c| csv_field(c)).collect::<Vec<_>>().join(","));
        }
        return;
    }
    let columns = table.header.len();
    let mut widths: Vec<usize> = table.header.iter().map(|h| h.chars().count()).collect();
    for row in &table.rows {
        for (i, cell) in row.iter().enumerate().take(columns) {
            widths[i] = widths[i].max(cell.chars().count());
        }
    }
    for row in std::iter::once(&table.header).chain(&table.rows) {
        let mut line = String::new();
        for (i, cell) in row.iter().enumerate() {
            if i + 1 == row.len() {
                line.push_str(cell);
            } else {
                line.push_str(cell);
                line.push_str(&" ".repeat(widths[i] - cell.chars().count() + 2));
            }
        }
        println!("{}", line.trim_end());
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_fields_are_quoted_only_when_needed() {
        assert_eq!(csv_field("plain"), "plain");
        assert_eq!(csv_field("a,b"), "\"a,b\"");
        assert_eq!(csv_field("say \"hi\""), "\"say \"\"hi\"\"\"");
    }
}
