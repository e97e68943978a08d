//! CSV tables with named columns: every reader of CSV input goes through here, so unknown
//! and missing columns are reported alike everywhere.

use super::diag::{BadInput, closest};
use std::path::Path;

/// A CSV file read with its header checked against the known columns.
pub struct Table {
    pub file: String,
    columns: Vec<String>,
    reader: csv::Reader<Box<dyn std::io::Read>>,
}

/// One data row and its 1-based line in the file.
pub struct Row {
    pub line: usize,
    pub record: csv::StringRecord,
}

impl Table {
    /// Opens `path`, checking that every column is known and every required one present.
    pub fn open(
        path: &Path,
        known: &[&'static str],
        required: &[&'static str],
    ) -> Result<Table, BadInput> {
        let file = path.display().to_string();
        let handle = std::fs::File::open(path)
            .map_err(|e| BadInput::file(&file, format!("cannot read: {e}")))?;
        Self::from_reader(
            &file,
            Box::new(std::io::BufReader::with_capacity(1 << 20, handle)),
            known,
            required,
        )
    }

    pub fn from_reader(
        file: &str,
        input: Box<dyn std::io::Read>,
        known: &[&'static str],
        required: &[&'static str],
    ) -> Result<Table, BadInput> {
        let mut reader = csv::ReaderBuilder::new().flexible(false).from_reader(input);
        let headers = reader
            .headers()
            .map_err(|e| csv_error(file, e))?
            .iter()
            .map(|h| h.trim().to_string())
            .collect::<Vec<_>>();
        if headers.iter().all(|h| h.is_empty()) {
            return Err(BadInput::at(
                file,
                1,
                format!(
                    "the file is empty; expected a header line with columns {}",
                    required.join(",")
                ),
            ));
        }
        for h in &headers {
            if !known.contains(&h.as_str()) {
                let hint = closest(h, known)
                    .map(|c| format!("; did you mean `{c}`?"))
                    .unwrap_or_else(|| format!("; known columns: {}", known.join(", ")));
                return Err(BadInput::at(file, 1, format!("unknown column `{h}`{hint}")));
            }
        }
        for r in required {
            if !headers.iter().any(|h| h == r) {
                return Err(BadInput::at(
                    file,
                    1,
                    format!("missing required column `{r}`"),
                ));
            }
        }
        Ok(Table {
            file: file.to_string(),
            columns: headers,
            reader,
        })
    }

    /// The position of a column, if the file has it.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c == name)
    }

    /// The next row, or `None` at the end of the file.
    pub fn next_row(&mut self) -> Result<Option<Row>, BadInput> {
        let mut record = csv::StringRecord::new();
        match self.reader.read_record(&mut record) {
            Ok(false) => Ok(None),
            Ok(true) => Ok(Some(Row {
                line: record.position().map(|p| p.line() as usize).unwrap_or(0),
                record,
            })),
            Err(e) => Err(csv_error(&self.file, e)),
        }
    }
}

impl Row {
    /// The cell in column `index`, `None` when the column is absent or the cell is empty.
    pub fn get(&self, index: Option<usize>) -> Option<&str> {
        index
            .and_then(|i| self.record.get(i))
            .map(str::trim)
            .filter(|s| !s.is_empty())
    }
}

fn csv_error(file: &str, e: csv::Error) -> BadInput {
    let line = e.position().map(|p| p.line() as usize);
    let message = match e.kind() {
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => {
            format!("expected {expected_len} fields as in the header, found {len}")
        }
        csv::ErrorKind::Utf8 { .. } => "not UTF-8 text (binary data?)".to_string(),
        _ => format!("not valid CSV: {e}"),
    };
    match line {
        Some(l) => BadInput::at(file, l, message),
        None => BadInput::file(file, message),
    }
}
