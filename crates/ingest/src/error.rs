//! Why an export was rejected, said so a person can find and fix it.

use std::fmt;

/// What kind of problem rejected a file; tests and callers match on this.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RejectKind {
    /// The file could not be read from disk.
    Io,
    /// The file has no bytes, or only blank lines.
    Empty,
    /// A header (and maybe metadata) but no data rows.
    NoData,
    /// Binary content, not a text export.
    Binary,
    /// Bytes that are not valid in the layout's encoding.
    Encoding,
    /// A cell that should be a number is not one.
    NotANumber,
    /// A NaN or infinite value.
    NotFinite,
    /// A row with fewer fields than the columns need (a cut-off last line, say).
    Truncated,
    /// The angle or torque column is not in the header.
    MissingColumn,
    /// A unit twistlot does not know.
    UnknownUnit,
    /// No rig-format plugin recognises the file.
    Unrecognised,
    /// More than one rig-format plugin recognises the file.
    Ambiguous,
    /// An exec converter failed, timed out or printed something unreadable.
    Converter,
    /// A cell of a stroke or cycle column that is not one of the expected values.
    BadLabel,
    /// A record that reads but cannot be used as the kind its format says: a free decay
    /// whose time does not rise, or one the swing analysis refuses (too short, too damped,
    /// fewer than three swings, clipped, no clear equilibrium).
    Unusable,
}

/// A rejected export: the file, where in it, and why.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub struct IngestError {
    /// What went wrong.
    pub kind: RejectKind,
    /// The export's path as given.
    pub file: String,
    /// 1-based line, when the problem is on one line.
    pub line: Option<usize>,
    /// The column, when the problem is in one cell.
    pub column: Option<String>,
    /// The rig format in use, when one was chosen.
    pub rig_format: Option<String>,
    /// The explanation.
    pub message: String,
}

impl IngestError {
    /// A problem with the whole file.
    pub fn file(kind: RejectKind, file: &str, message: impl Into<String>) -> Self {
        IngestError {
            kind,
            file: file.to_string(),
            line: None,
            column: None,
            rig_format: None,
            message: message.into(),
        }
    }

    /// Sets the rig format the file was being read as.
    pub fn with_format(mut self, rig_format: &str) -> Self {
        self.rig_format = Some(rig_format.to_string());
        self
    }

    /// The reason without the file name (for tables that show the file beside it).
    pub fn reason(&self) -> String {
        let mut out = String::new();
        if let Some(line) = self.line {
            out.push_str(&format!("line {line}"));
        }
        if let Some(column) = &self.column {
            if !out.is_empty() {
                out.push_str(", ");
            }
            out.push_str(&format!("column `{column}`"));
        }
        if !out.is_empty() {
            out.push_str(": ");
        }
        out.push_str(&self.message);
        if let Some(format) = &self.rig_format {
            out.push_str(&format!(" (rig format `{format}`)"));
        }
        out
    }
}

impl fmt::Display for IngestError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let reason = self.reason();
        if self.line.is_some() || self.column.is_some() {
            write!(f, "{}, {reason}", self.file)
        } else {
            write!(f, "{}: {reason}", self.file)
        }
    }
}

/// A problem found while compiling a rig-format manifest into a reader.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("rig format `{name}`: {message}")]
pub struct FormatError {
    /// The plugin's name.
    pub name: String,
    /// What is wrong.
    pub message: String,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_names_file_line_column_and_format() {
        let err = IngestError {
            kind: RejectKind::NotANumber,
            file: "shift/rig-b/0412.txt".into(),
            line: Some(57),
            column: Some("Torque".into()),
            rig_format: Some("ostrel-semicolon".into()),
            message: "`12,5x` is not a number (decimal separator `,`)".into(),
        };
        assert_eq!(
            err.to_string(),
            "shift/rig-b/0412.txt, line 57, column `Torque`: `12,5x` is not a number (decimal separator `,`) (rig format `ostrel-semicolon`)"
        );
        let err = IngestError::file(RejectKind::Empty, "a.csv", "the file is empty");
        assert_eq!(err.to_string(), "a.csv: the file is empty");
    }
}
