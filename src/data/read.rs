//! Reading RV tables into raw columns, through polars.
//!
//! Text tables (CSV, TSV or whitespace-separated) are scanned line by line first: comment
//! and blank lines are dropped, the separator is found from the first remaining line, the
//! header is recognised, every row's field count is checked and its line number kept. The
//! rows are then rewritten in memory as plain CSV with every column a string, and polars
//! reads that from a cursor. Parquet files go straight to polars. Either way the result is
//! a [`Table`] of named raw columns with the 1-based line (or row) number of each row;
//! turning cells into numbers, with errors that name the row, is left to the caller.

use std::io::Cursor;
use std::path::Path;
use std::sync::Arc;

use polars::prelude::*;

use super::error::{DataError, DataErrorKind};

/// How the rows of a table were written.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Format {
    /// Comma-separated; fields may be quoted with `"`.
    Csv,
    /// Tab-separated (single tabs; empty fields allowed).
    Tsv,
    /// Separated by any run of spaces and tabs.
    Whitespace,
    /// Apache Parquet.
    Parquet,
}

/// The cells of one column.
#[derive(Clone, Debug, PartialEq)]
pub(crate) enum Cells {
    /// Text as written (text tables, string columns of Parquet files); `None` if empty.
    Text(Vec<Option<String>>),
    /// Numbers (numeric Parquet columns); `None` if null.
    Number(Vec<Option<f64>>),
    /// A Parquet column of a type that is neither numeric nor text (its name).
    Other(String),
}

/// One named column.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct RawColumn {
    /// Name from the header, or the positional default of a headerless table.
    pub name: String,
    /// The cells.
    pub cells: Cells,
}

/// A table as read, before any interpretation of its cells.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Table {
    /// How it was written.
    pub format: Format,
    /// True when the column names come from the file (a header line, or Parquet).
    pub named: bool,
    /// Line number of the header line in a text file.
    pub header_row: Option<usize>,
    /// 1-based line (text) or row (Parquet) number of each data row.
    pub rows: Vec<usize>,
    /// The columns, in file order.
    pub columns: Vec<RawColumn>,
}

/// Names given to the columns of a headerless table, in order.
pub(crate) const HEADERLESS: [&str; 4] = ["time", "rv", "rv_err", "instrument"];

/// Reads the table at `path`: Parquet when the extension is `.parquet` (any case), text
/// otherwise.
pub(crate) fn read_table(path: &Path) -> Result<Table, DataError> {
    let is_parquet = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("parquet"));
    if is_parquet {
        return read_parquet(path);
    }
    let bytes =
        std::fs::read(path).map_err(|e| DataError::whole_file(path, DataErrorKind::Io(e)))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        DataError::whole_file(path, DataErrorKind::NotText(e.utf8_error().valid_up_to()))
    })?;
    read_text(path, &text)
}

/// Reads a text table; `path` only names the file in errors.
pub(crate) fn read_text(path: &Path, text: &str) -> Result<Table, DataError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    // (line number, line) of every line that is neither blank nor a comment.
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, line)| (i + 1, line))
        .filter(|(_, line)| {
            let t = line.trim();
            !t.is_empty() && !t.starts_with('#')
        })
        .peekable();
    let Some(&(first_row, first_line)) = lines.peek() else {
        return Err(DataError::whole_file(path, DataErrorKind::Empty));
    };
    let format = detect_format(first_line);
    let first = split(format, first_line).map_err(|k| DataError::at_row(path, first_row, k))?;
    let named = is_header(&first);
    let names: Vec<String> = if named {
        lines.next();
        first
    } else {
        if !(3..=4).contains(&first.len()) {
            return Err(DataError::at_row(
                path,
                first_row,
                DataErrorKind::Header(format!(
                    "a table without a header must have the columns time, rv, rv_err and optionally instrument, in that order; this one has {} columns: add a header line naming them",
                    first.len()
                )),
            ));
        }
        HEADERLESS[..first.len()]
            .iter()
            .map(|s| s.to_string())
            .collect()
    };
    let n_cols = names.len();

    // Normalised CSV for polars: positional names, every field quoted, empty fields left
    // empty (null).
    let mut csv = String::with_capacity(text.len() + text.len() / 4);
    let header: Vec<String> = (0..n_cols).map(|i| format!("c{i}")).collect();
    csv.push_str(&header.join(","));
    csv.push('\n');
    let mut rows = Vec::new();
    for (row, line) in lines {
        let fields = split(format, line).map_err(|k| DataError::at_row(path, row, k))?;
        if fields.len() != n_cols {
            return Err(DataError::at_row(
                path,
                row,
                DataErrorKind::ColumnCount {
                    expected: n_cols,
                    found: fields.len(),
                },
            ));
        }
        for (i, field) in fields.iter().enumerate() {
            if i > 0 {
                csv.push(',');
            }
            if !field.is_empty() {
                csv.push('"');
                csv.push_str(&field.replace('"', "\"\""));
                csv.push('"');
            }
        }
        csv.push('\n');
        rows.push(row);
    }
    if rows.is_empty() {
        return Err(DataError::whole_file(path, DataErrorKind::Empty));
    }

    let schema: Schema = header
        .iter()
        .map(|name| (PlSmallStr::from(name.as_str()), DataType::String))
        .collect();
    let df = CsvReadOptions::default()
        .with_has_header(true)
        .with_schema(Some(Arc::new(schema)))
        .into_reader_with_file_handle(Cursor::new(csv.into_bytes()))
        .finish()
        .map_err(|e| DataError::whole_file(path, DataErrorKind::Table(e.to_string())))?;
    if df.height() != rows.len() {
        return Err(DataError::whole_file(
            path,
            DataErrorKind::Table(format!(
                "polars read {} rows where {} were expected",
                df.height(),
                rows.len()
            )),
        ));
    }
    let mut columns = Vec::with_capacity(n_cols);
    for (name, key) in names.into_iter().zip(&header) {
        let strings = df
            .column(key)
            .and_then(|c| c.str().cloned())
            .map_err(|e| DataError::whole_file(path, DataErrorKind::Table(e.to_string())))?;
        let cells = strings
            .iter()
            .map(|s| s.filter(|s| !s.is_empty()).map(str::to_string))
            .collect();
        columns.push(RawColumn {
            name,
            cells: Cells::Text(cells),
        });
    }
    Ok(Table {
        format,
        named,
        header_row: named.then_some(first_row),
        rows,
        columns,
    })
}

/// Reads a Parquet file; rows are numbered from 1.
fn read_parquet(path: &Path) -> Result<Table, DataError> {
    let bytes =
        std::fs::read(path).map_err(|e| DataError::whole_file(path, DataErrorKind::Io(e)))?;
    super::check_parquet(&bytes).map_err(|e| {
        DataError::whole_file(
            path,
            DataErrorKind::Table(format!("damaged Parquet file: {e}")),
        )
    })?;
    // A damaged file can make the decoder panic rather than fail: that is an error too.
    let df = crate::contain::contain(|| ParquetReader::new(Cursor::new(bytes)).finish())
        .map_err(|e| format!("damaged Parquet file (the decoder failed: {e})"))
        .and_then(|r| r.map_err(|e| e.to_string()))
        .map_err(|e| DataError::whole_file(path, DataErrorKind::Table(e)))?;
    if df.height() == 0 {
        return Err(DataError::whole_file(path, DataErrorKind::Empty));
    }
    let table_err =
        |e: PolarsError| DataError::whole_file(path, DataErrorKind::Table(e.to_string()));
    let mut columns = Vec::with_capacity(df.width());
    for column in df.columns() {
        let dtype = column.dtype();
        let cells = if dtype.is_primitive_numeric() {
            let values = column.cast(&DataType::Float64).map_err(table_err)?;
            Cells::Number(values.f64().map_err(table_err)?.iter().collect())
        } else {
            match column.cast(&DataType::String) {
                Ok(strings) => Cells::Text(
                    strings
                        .str()
                        .map_err(table_err)?
                        .iter()
                        .map(|s| s.map(|s| s.trim().to_string()).filter(|s| !s.is_empty()))
                        .collect(),
                ),
                Err(_) => Cells::Other(dtype.to_string()),
            }
        };
        columns.push(RawColumn {
            name: column.name().to_string(),
            cells,
        });
    }
    Ok(Table {
        format: Format::Parquet,
        named: true,
        header_row: None,
        rows: (1..=df.height()).collect(),
        columns,
    })
}

/// The separator, from the first non-comment line: a comma makes CSV; else a tab makes
/// TSV when splitting at single tabs leaves no empty field; else runs of whitespace.
fn detect_format(line: &str) -> Format {
    if line.contains(',') {
        Format::Csv
    } else if line.contains('\t') && line.split('\t').all(|f| !f.trim().is_empty()) {
        Format::Tsv
    } else {
        Format::Whitespace
    }
}

/// The trimmed fields of one line.
fn split(format: Format, line: &str) -> Result<Vec<String>, DataErrorKind> {
    match format {
        Format::Csv => split_csv(line),
        // A line without tabs in a tab-separated file is split at whitespace.
        Format::Tsv if line.contains('\t') => {
            Ok(line.split('\t').map(|f| f.trim().to_string()).collect())
        }
        Format::Tsv | Format::Whitespace | Format::Parquet => {
            Ok(line.split_whitespace().map(str::to_string).collect())
        }
    }
}

/// Splits a CSV line at commas outside double quotes; `""` inside quotes is one quote.
fn split_csv(line: &str) -> Result<Vec<String>, DataErrorKind> {
    let mut fields = Vec::new();
    let mut field = String::new();
    let mut quoted = false;
    let mut in_quotes = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        if in_quotes {
            if c == '"' {
                if chars.peek() == Some(&'"') {
                    field.push('"');
                    chars.next();
                } else {
                    in_quotes = false;
                }
            } else {
                field.push(c);
            }
        } else if c == ',' {
            fields.push(finish_field(&field, quoted));
            field.clear();
            quoted = false;
        } else if c == '"' && !quoted && field.trim().is_empty() {
            field.clear();
            quoted = true;
            in_quotes = true;
        } else {
            field.push(c);
        }
    }
    if in_quotes {
        return Err(DataErrorKind::Syntax(
            "unclosed double quote (quoted fields cannot span lines)".into(),
        ));
    }
    fields.push(finish_field(&field, quoted));
    Ok(fields)
}

fn finish_field(field: &str, quoted: bool) -> String {
    if quoted {
        // Text after the closing quote (normally only spaces) is kept, trimmed.
        field.trim_end().to_string()
    } else {
        field.trim().to_string()
    }
}

/// A first line is a header unless its first field or most of its fields are numbers (so a
/// data row with one bad value is still taken as data, and its bad value reported as such).
fn is_header(fields: &[String]) -> bool {
    let is_number = |f: &String| f.parse::<f64>().is_ok();
    let numeric = fields.iter().filter(|f| is_number(f)).count();
    !fields.first().is_some_and(is_number) && 2 * numeric <= fields.len()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn text(cells: &Cells) -> Vec<Option<&str>> {
        match cells {
            Cells::Text(v) => v.iter().map(|s| s.as_deref()).collect(),
            _ => panic!("expected text cells"),
        }
    }

    #[test]
    fn detects_formats() {
        assert_eq!(detect_format("time,rv,rv_err"), Format::Csv);
        assert_eq!(detect_format("time\trv\trv_err"), Format::Tsv);
        assert_eq!(detect_format("1.0\t\t2.0  3"), Format::Whitespace);
        assert_eq!(detect_format("  1.0   2.0 3 "), Format::Whitespace);
    }

    #[test]
    fn csv_quotes_and_spaces() {
        assert_eq!(
            split_csv(r#" 1.5 , "LOOM, new" ,"say ""hi""",,x"#).unwrap(),
            vec!["1.5", "LOOM, new", r#"say "hi""#, "", "x"]
        );
        assert!(split_csv(r#"1,"open"#).is_err());
    }

    #[test]
    fn header_detection() {
        let f = |s: &str| s.split(',').map(str::to_string).collect::<Vec<_>>();
        assert!(is_header(&f("time,rv,rv_err")));
        assert!(is_header(&f("bjd,rv,rv_err,fwhm")));
        assert!(!is_header(&f("2456000.5,1.0,0.5")));
        assert!(!is_header(&f("2456000.5,1.0,0.5,LOOM")));
        assert!(!is_header(&f("2456000.5,abc,0.5")));
        assert!(!is_header(&f("2456000.5,abc,0.5,LOOM")));
        assert!(!is_header(&f("x2456000.5,1,0.5")));
    }

    #[test]
    fn keeps_line_numbers_across_comments_and_blank_lines() {
        let t = read_text(
            Path::new("x.txt"),
            "# comment\n\ntime rv rv_err\n1 2 3\n\n# more\n4 5 6\n",
        )
        .unwrap();
        assert!(t.named);
        assert_eq!(t.header_row, Some(3));
        assert_eq!(t.rows, vec![4, 7]);
        assert_eq!(t.columns[1].name, "rv");
        assert_eq!(text(&t.columns[1].cells), vec![Some("2"), Some("5")]);
    }

    #[test]
    fn tsv_keeps_empty_fields() {
        let t = read_text(
            Path::new("x.tsv"),
            "time\trv\trv_err\tfwhm\n1\t2\t3\t\n4\t5\t6\t7\r\n",
        )
        .unwrap();
        assert_eq!(t.format, Format::Tsv);
        assert_eq!(text(&t.columns[3].cells), vec![None, Some("7")]);
    }

    #[test]
    fn tsv_line_without_tabs_splits_at_whitespace() {
        let t = read_text(Path::new("x.tsv"), "time\trv\trv_err\n1 2  3\n").unwrap();
        assert_eq!(text(&t.columns[2].cells), vec![Some("3")]);
    }

    #[test]
    fn headerless_names() {
        let t = read_text(Path::new("x.csv"), "1,2,3,LOOM\n4,5,6,\"LOOM N\"\n").unwrap();
        assert!(!t.named);
        assert_eq!(t.rows, vec![1, 2]);
        let names: Vec<_> = t.columns.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, HEADERLESS);
        assert_eq!(
            text(&t.columns[3].cells),
            vec![Some("LOOM"), Some("LOOM N")]
        );
    }

    #[test]
    fn column_count_error_names_row() {
        let e = read_text(Path::new("a.csv"), "time,rv,rv_err\n1,2,3\n\n4,5\n").unwrap_err();
        assert_eq!(e.to_string(), "a.csv: row 4: expected 3 columns, found 2");
    }

    #[test]
    fn empty_tables() {
        for text in ["", "# only a comment\n\n", "time,rv,rv_err\n"] {
            let e = read_text(Path::new("a.csv"), text).unwrap_err();
            assert_eq!(e.to_string(), "a.csv: no data rows", "{text:?}");
        }
    }
}
