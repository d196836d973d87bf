//! The tables' columns, defined once: the frames are built from these definitions, the
//! scans read with their types, and `SCHEMA.md` is checked against them.

use crate::HistoryError;
use polars::prelude::*;
use serde::Serialize;
use std::path::Path;

/// Version of the column layout, stored on every row as `schema_version`. Raise it when a
/// column changes meaning or type; adding a column keeps older files readable (it reads
/// as null there).
pub const SCHEMA_VERSION: u32 = 1;

/// A column's type as stored.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// UTF-8 text.
    Text,
    /// UTF-8 text holding a JSON document.
    Json,
    /// 64-bit float.
    F64,
    /// 64-bit signed integer (counts too: Spark reads unsigned 64-bit Parquet as a decimal).
    I64,
    /// 32-bit unsigned integer.
    U32,
    /// Boolean.
    Bool,
    /// Timestamp in milliseconds, no time zone.
    Time,
}

impl Kind {
    /// The polars type the column has.
    pub fn dtype(self) -> DataType {
        match self {
            Kind::Text | Kind::Json => DataType::String,
            Kind::F64 => DataType::Float64,
            Kind::I64 => DataType::Int64,
            Kind::U32 => DataType::UInt32,
            Kind::Bool => DataType::Boolean,
            Kind::Time => DataType::Datetime(TimeUnit::Milliseconds, None),
        }
    }

    /// The Parquet type, as SCHEMA.md names it.
    pub fn parquet_name(self) -> &'static str {
        match self {
            Kind::Text => "string",
            Kind::Json => "string (JSON)",
            Kind::F64 => "double",
            Kind::I64 => "int64",
            Kind::U32 => "uint32",
            Kind::Bool => "boolean",
            Kind::Time => "timestamp(ms)",
        }
    }
}

/// One cell, as a row's getter gives it.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// Text or JSON text.
    Text(Option<String>),
    /// A float.
    F64(Option<f64>),
    /// A signed integer.
    I64(Option<i64>),
    /// An unsigned 32-bit integer.
    U32(Option<u32>),
    /// A boolean.
    Bool(Option<bool>),
    /// Milliseconds since 1970-01-01T00:00:00.
    Time(Option<i64>),
}

/// One column of a table: name, type, unit, meaning and how a row gives its value.
pub struct ColumnDef<R> {
    /// Column name.
    pub name: &'static str,
    /// Stored type.
    pub kind: Kind,
    /// Unit, empty when none.
    pub unit: &'static str,
    /// What it holds.
    pub doc: &'static str,
    /// The cell of a row.
    pub get: fn(&R) -> Value,
}

/// Text cell.
pub fn text(value: Option<&str>) -> Value {
    Value::Text(value.map(str::to_string))
}

/// JSON text cell. Serialising these plain records cannot fail; a failure would be a
/// bug, stored as JSON `null` rather than losing the row.
pub fn json<T: Serialize + ?Sized>(value: &T) -> Value {
    Value::Text(Some(serde_json::to_string(value).unwrap_or_else(|_| "null".to_string())))
}

/// A count as stored (saturating: counts beyond 2⁶³ do not occur).
pub fn count(value: u64) -> i64 {
    i64::try_from(value).unwrap_or(i64::MAX)
}

/// Builds a frame of `rows` with `columns`, every column typed as its definition says
/// (also when all its cells are null, so every file of a table has one schema).
pub fn build_frame<R>(columns: &[ColumnDef<R>], rows: &[R]) -> Result<DataFrame, PolarsError> {
    let mut out = Vec::with_capacity(columns.len());
    for def in columns {
        let name = PlSmallStr::from_static(def.name);
        let cells = rows.iter().map(|row| (def.get)(row));
        let series = match def.kind {
            Kind::Text | Kind::Json => Series::new(
                name,
                cells.map(|v| if let Value::Text(v) = v { v } else { None }).collect::<Vec<Option<String>>>(),
            ),
            Kind::F64 => Series::new(
                name,
                cells.map(|v| if let Value::F64(v) = v { v } else { None }).collect::<Vec<_>>(),
            ),
            Kind::I64 => Series::new(
                name,
                cells.map(|v| if let Value::I64(v) = v { v } else { None }).collect::<Vec<_>>(),
            ),
            Kind::U32 => Series::new(
                name,
                cells.map(|v| if let Value::U32(v) = v { v } else { None }).collect::<Vec<_>>(),
            ),
            Kind::Bool => Series::new(
                name,
                cells.map(|v| if let Value::Bool(v) = v { v } else { None }).collect::<Vec<_>>(),
            ),
            Kind::Time => Series::new(
                name,
                cells.map(|v| if let Value::Time(v) = v { v } else { None }).collect::<Vec<Option<i64>>>(),
            )
            .into_datetime(TimeUnit::Milliseconds, None),
        };
        out.push(series.into_column());
    }
    DataFrame::new(rows.len(), out)
}

/// The Markdown table of a table's columns, as SCHEMA.md carries it.
pub fn markdown_columns<R>(partition_columns: &[(&str, &str)], columns: &[ColumnDef<R>]) -> String {
    let mut out = String::from("| column | type | unit | meaning |\n| --- | --- | --- | --- |\n");
    for (name, doc) in partition_columns {
        out.push_str(&format!("| `{name}` | string (folder) |  | {doc} |\n"));
    }
    for c in columns {
        out.push_str(&format!("| `{}` | {} | {} | {} |\n", c.name, c.kind.parquet_name(), c.unit, c.doc));
    }
    out
}

/// Column-wise access to a collected frame, with errors that name the table file.
pub struct Cells<'a> {
    df: &'a DataFrame,
    origin: &'a Path,
}

impl<'a> Cells<'a> {
    /// Reads `df`, which came from `origin` (a file or a table folder).
    pub fn new(df: &'a DataFrame, origin: &'a Path) -> Self {
        Cells { df, origin }
    }

    /// Rows in the frame.
    pub fn height(&self) -> usize {
        self.df.height()
    }

    fn column(&self, name: &str) -> Result<&'a Column, HistoryError> {
        self.df.column(name).map_err(|e| self.broken(name, e))
    }

    fn broken(&self, name: &str, e: PolarsError) -> HistoryError {
        HistoryError::Corrupt { path: self.origin.to_path_buf(), message: format!("column `{name}`: {e}") }
    }

    /// A text column.
    pub fn text(&self, name: &str) -> Result<Vec<Option<String>>, HistoryError> {
        let column = self.column(name)?;
        let values = column.str().map_err(|e| self.broken(name, e))?;
        Ok(values.iter().map(|v| v.map(str::to_string)).collect())
    }

    /// A float column.
    pub fn f64(&self, name: &str) -> Result<Vec<Option<f64>>, HistoryError> {
        let column = self.column(name)?;
        Ok(column.f64().map_err(|e| self.broken(name, e))?.iter().collect())
    }

    /// A signed integer column.
    pub fn i64(&self, name: &str) -> Result<Vec<Option<i64>>, HistoryError> {
        let column = self.column(name)?;
        Ok(column.i64().map_err(|e| self.broken(name, e))?.iter().collect())
    }

    /// An unsigned 32-bit column.
    pub fn u32(&self, name: &str) -> Result<Vec<Option<u32>>, HistoryError> {
        let column = self.column(name)?;
        Ok(column.u32().map_err(|e| self.broken(name, e))?.iter().collect())
    }

    /// A boolean column.
    pub fn bool(&self, name: &str) -> Result<Vec<Option<bool>>, HistoryError> {
        let column = self.column(name)?;
        Ok(column.bool().map_err(|e| self.broken(name, e))?.iter().collect())
    }

    /// A timestamp column, as milliseconds.
    pub fn time(&self, name: &str) -> Result<Vec<Option<i64>>, HistoryError> {
        let column = self.column(name)?;
        Ok(column.datetime().map_err(|e| self.broken(name, e))?.physical().iter().collect())
    }

    /// A JSON column decoded into `T` (a null cell is `None`).
    pub fn json<T: serde::de::DeserializeOwned>(&self, name: &str) -> Result<Vec<Option<T>>, HistoryError> {
        self.text(name)?
            .into_iter()
            .enumerate()
            .map(|(row, cell)| {
                cell.map(|text| {
                    serde_json::from_str(&text).map_err(|e| HistoryError::Corrupt {
                        path: self.origin.to_path_buf(),
                        message: format!("column `{name}`, row {row}: not the expected JSON: {e}"),
                    })
                })
                .transpose()
            })
            .collect()
    }

    /// Refuses rows written under a newer schema than this build reads.
    pub fn check_schema_version(&self) -> Result<(), HistoryError> {
        for version in self.u32("schema_version")?.into_iter().flatten() {
            if version > SCHEMA_VERSION {
                return Err(HistoryError::NewerSchema {
                    path: self.origin.to_path_buf(),
                    found: version,
                    supported: SCHEMA_VERSION,
                });
            }
        }
        Ok(())
    }
}

impl Cells<'_> {
    /// An error naming the table file or folder these cells came from.
    pub fn corrupt(&self, message: String) -> HistoryError {
        HistoryError::Corrupt { path: self.origin.to_path_buf(), message }
    }
}
