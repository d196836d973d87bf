//! Reading one export: recognise, decode, parse, derive strokes, build the frame.

use crate::error::{IngestError, RejectKind};
use crate::exec::run_converter;
use crate::format::{FormatSet, Reader, RigFormat};
use crate::layout::{read_layout, RawCurve};
use crate::strokes::derive_strokes;
use crate::text::{check_text_like, decode};
use polars::prelude::*;
use std::path::Path;
use twistlot_model::curve::column;
use twistlot_model::{CurveData, DecayData, RecordKind, Stroke, TestMetadata};

/// One accepted export in canonical form.
#[derive(Debug, Clone)]
pub struct Export {
    /// The test's metadata, with source file and content hash.
    pub metadata: TestMetadata,
    /// The rig format that read it.
    pub rig_format: String,
    /// The kind of record, as the rig format's manifest states it.
    pub kind: RecordKind,
    /// The canonical frame (DESIGN.md §4): a torque curve's, or for a free decay
    /// `test_id`, `point`, `time_s` and `angle_deg` only (never split into strokes).
    pub frame: DataFrame,
}

impl Export {
    /// Number of points.
    pub fn points(&self) -> usize {
        self.frame.height()
    }

    /// The curve as plain columns, for the computations in `stats` (torque curves only).
    pub fn curve(&self) -> Result<CurveData, PolarsError> {
        curve_from_frame(&self.frame)
    }

    /// The free-decay record as plain columns, for the swing analysis in `physics`.
    pub fn decay(&self) -> Result<DecayData, PolarsError> {
        let floats = |name: &str| -> PolarsResult<Vec<f64>> {
            Ok(self.frame.column(name)?.f64()?.into_no_null_iter().collect())
        };
        Ok(DecayData { time_s: floats(column::TIME_S)?, angle_deg: floats(column::ANGLE_DEG)? })
    }
}

/// Reads an export from disk, choosing the format by detection unless one is forced.
pub fn read_path(path: &Path, formats: &FormatSet, forced: Option<&str>) -> Result<Export, IngestError> {
    let file = path.display().to_string();
    let bytes = std::fs::read(path)
        .map_err(|e| IngestError::file(RejectKind::Io, &file, format!("cannot read: {e}")))?;
    read_bytes(&file, path, &bytes, formats, forced)
}

/// Reads an export held in memory; `path` is used by exec converters.
pub fn read_bytes(
    file: &str,
    path: &Path,
    bytes: &[u8],
    formats: &FormatSet,
    forced: Option<&str>,
) -> Result<Export, IngestError> {
    check_text_like(file, bytes)?;
    let format = match forced {
        Some(name) => formats.by_name(name).ok_or_else(|| {
            IngestError::file(
                RejectKind::Unrecognised,
                file,
                format!(
                    "there is no rig format named `{name}` (known: {})",
                    formats.formats().iter().map(|f| f.name.as_str()).collect::<Vec<_>>().join(", ")
                ),
            )
        })?,
        None => formats.detect(file, bytes)?,
    };
    read_with(file, path, bytes, format)
}

/// Reads an export with a given format.
pub fn read_with(file: &str, path: &Path, bytes: &[u8], format: &RigFormat) -> Result<Export, IngestError> {
    let raw = match &format.reader {
        Reader::Layout(layout) => {
            let text = decode(file, bytes, layout.encoding).map_err(|e| e.with_format(&format.name))?;
            read_layout(file, &format.name, layout, &text)?
        }
        Reader::Exec { spec, plugin_dir } => {
            let printed = run_converter(file, path, &format.name, spec, plugin_dir)?;
            let native = match format.record {
                RecordKind::TorqueCurve => RigFormat::native_shared(),
                RecordKind::FreeDecay => RigFormat::native_decay_shared(),
            };
            let Reader::Layout(layout) = &native.reader else {
                return Err(IngestError::file(
                    RejectKind::Converter,
                    file,
                    "the native format is not a layout",
                ));
            };
            let text =
                decode(file, &printed, layout.encoding).map_err(|e| converter_output(e, &format.name))?;
            if text.trim().is_empty() {
                return Err(IngestError::file(RejectKind::Converter, file, "the converter printed nothing")
                    .with_format(&format.name));
            }
            read_layout(file, &native.name, layout, &text).map_err(|e| converter_output(e, &format.name))?
        }
    };
    let mut metadata = TestMetadata {
        source_file: file.to_string(),
        content_hash: blake3::hash(bytes).to_hex().to_string(),
        ..TestMetadata::default()
    };
    for (key, value) in &raw.metadata {
        metadata.set(key, value);
    }
    let frame = match format.record {
        RecordKind::TorqueCurve => build_frame(&metadata.test_id(), raw),
        RecordKind::FreeDecay => {
            let time_s = check_decay(file, &raw).map_err(|e| e.with_format(&format.name))?;
            build_decay_frame(&metadata.test_id(), time_s, raw.angle_deg)
        }
    }
    .map_err(|e| {
        IngestError::file(RejectKind::Io, file, format!("could not build the curve frame: {e}"))
            .with_format(&format.name)
    })?;
    Ok(Export { metadata, rig_format: format.name.clone(), kind: format.record, frame })
}

/// A free decay must carry a time that rises from sample to sample: the swing analysis
/// measures periods on it. Returns the time column.
fn check_decay(file: &str, raw: &RawCurve) -> Result<Vec<f64>, IngestError> {
    let Some(time_s) = &raw.time_s else {
        return Err(IngestError::file(
            RejectKind::MissingColumn,
            file,
            "a free-decay record needs a time column, and the file has none",
        ));
    };
    if let Some(i) = (1..time_s.len()).find(|&i| time_s[i] <= time_s[i - 1]) {
        return Err(IngestError::file(
            RejectKind::Unusable,
            file,
            format!(
                "data row {}: time {} s does not follow {} s; a free-decay record must be in rising time \
                 order without repeats",
                i + 1,
                time_s[i],
                time_s[i - 1]
            ),
        ));
    }
    Ok(time_s.clone())
}

/// Builds a free decay's frame: `test_id`, `point`, `time_s`, `angle_deg`; no strokes.
pub fn build_decay_frame(test_id: &str, time_s: Vec<f64>, angle_deg: Vec<f64>) -> PolarsResult<DataFrame> {
    let n = angle_deg.len();
    DataFrame::new(
        n,
        vec![
            Column::new_scalar(column::TEST_ID.into(), Scalar::from(PlSmallStr::from_str(test_id)), n),
            Column::new(column::POINT.into(), (0..n as u32).collect::<Vec<u32>>()),
            Float64Chunked::from_vec(column::TIME_S.into(), time_s).into_series().into(),
            Float64Chunked::from_vec(column::ANGLE_DEG.into(), angle_deg).into_series().into(),
        ],
    )
}

/// The lot a rejected file's metadata names, read again from the file with the rig
/// format the rejection names: the reader does not keep it on the error, which stays
/// small because every file's result passes through it. `None` when the file cannot be
/// read again, the format is an exec converter, or the metadata names no lot.
pub fn rejected_file_lot(path: &Path, formats: &FormatSet, rig_format: Option<&str>) -> Option<String> {
    let format = formats.by_name(rig_format?)?;
    let Reader::Layout(layout) = &format.reader else { return None };
    let bytes = std::fs::read(path).ok()?;
    let text = decode("", &bytes, layout.encoding).ok()?;
    crate::layout::preamble_lot(layout, &text)
}

fn converter_output(mut err: IngestError, plugin: &str) -> IngestError {
    err.kind = RejectKind::Converter;
    err.message = format!("its output is not the native format: {}", err.message);
    err.rig_format = Some(plugin.to_string());
    err
}

/// Builds the canonical frame, deriving strokes and cycles the file did not carry.
pub fn build_frame(test_id: &str, raw: RawCurve) -> PolarsResult<DataFrame> {
    let n = raw.angle_deg.len();
    let (stroke, cycle) = match (raw.stroke, raw.cycle) {
        (Some(stroke), Some(cycle)) => (stroke, cycle),
        (Some(stroke), None) => {
            let cycle = cycles_from_strokes(&stroke);
            (stroke, cycle)
        }
        (None, given) => {
            let (stroke, derived) = derive_strokes(&raw.angle_deg);
            (stroke, given.unwrap_or(derived))
        }
    };
    let mut columns = vec![
        Column::new_scalar(column::TEST_ID.into(), Scalar::from(PlSmallStr::from_str(test_id)), n),
        Column::new(column::POINT.into(), (0..n as u32).collect::<Vec<u32>>()),
        // from_vec moves the buffers into the frame instead of copying them.
        Float64Chunked::from_vec(column::ANGLE_DEG.into(), raw.angle_deg).into_series().into(),
        Float64Chunked::from_vec(column::TORQUE_NMM.into(), raw.torque_nmm).into_series().into(),
        Column::new(column::STROKE.into(), stroke.iter().map(|s| s.as_str()).collect::<Vec<&str>>()),
        UInt32Chunked::from_vec(column::CYCLE.into(), cycle).into_series().into(),
    ];
    if let Some(time) = raw.time_s {
        columns.push(Float64Chunked::from_vec(column::TIME_S.into(), time).into_series().into());
    }
    DataFrame::new(n, columns)
}

/// A new cycle begins at each loading stroke that follows an unloading one.
fn cycles_from_strokes(strokes: &[Stroke]) -> Vec<u32> {
    let mut cycle = 1;
    let mut previous = Stroke::Load;
    strokes
        .iter()
        .map(|&s| {
            if s == Stroke::Load && previous == Stroke::Unload {
                cycle += 1;
            }
            previous = s;
            cycle
        })
        .collect()
}

/// Copies a canonical frame's columns into a [`CurveData`].
pub fn curve_from_frame(frame: &DataFrame) -> PolarsResult<CurveData> {
    let floats = |name: &str| -> PolarsResult<Vec<f64>> {
        Ok(frame.column(name)?.f64()?.into_no_null_iter().collect())
    };
    let stroke = frame
        .column(column::STROKE)?
        .str()?
        .iter()
        .map(|s| if s == Some(Stroke::Unload.as_str()) { Stroke::Unload } else { Stroke::Load })
        .collect();
    let cycle = frame.column(column::CYCLE)?.u32()?.into_no_null_iter().collect();
    let time_s = match frame.column(column::TIME_S) {
        Ok(col) => Some(col.f64()?.into_no_null_iter().collect()),
        Err(_) => None,
    };
    Ok(CurveData {
        angle_deg: floats(column::ANGLE_DEG)?,
        torque_nmm: floats(column::TORQUE_NMM)?,
        stroke,
        cycle,
        time_s,
    })
}
