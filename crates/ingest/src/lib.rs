//! Reading rig exports of any plugin-described layout into canonical polars frames.
//!
//! For: recognising which rig format a file is ([`FormatSet::detect`]), decoding
//! it (UTF-8 with or without BOM, Windows-1252), reading metadata, header and data
//! rows with a tight decimal tokenizer, converting units to N·mm and degrees,
//! deriving load/unload strokes and cycles when the rig does not record them,
//! running exec converters, and accounting for every file as accepted or rejected
//! with a reason that names file, line and column. A format whose manifest says
//! `record: free-decay` yields a free-decay frame instead (time and angle, no torque,
//! never split into strokes; [`Export::decay`]).
//!
//! Not for: finding plugin manifests on disk (the pipeline does that and hands
//! compiled [`RigFormat`]s in), judging curves (`stats`), or printing.
//!
//! Main types: [`RigFormat`], [`FormatSet`], [`Export`] (metadata plus the curve
//! [`polars::prelude::DataFrame`]), [`IngestError`] with its [`RejectKind`],
//! [`FileSummary`].

pub mod batch;
pub mod error;
pub mod exec;
pub mod format;
pub mod layout;
pub mod number;
pub mod read;
pub mod strokes;
pub mod text;

pub use batch::{
    expand_inputs, flag_duplicate_serials, ingest_ordered, FileOutcome, FileStatus, FileSummary,
};
pub use error::{FormatError, IngestError, RejectKind};
pub use format::{FormatSet, Reader, RigFormat};
pub use read::{curve_from_frame, read_bytes, read_path, read_with, rejected_file_lot, Export};
