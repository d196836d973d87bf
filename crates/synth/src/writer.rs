//! Writing a curve in any declarative layout, straight from its manifest.
//!
//! The writer is the reader's mirror: it follows the same manifest fields
//! (encoding, delimiter, decimal, metadata, marker, header, positions, units, sign),
//! so a round trip through every shipped layout checks the reader against the
//! manifest rather than against a second hand-written description.

use crate::decay::DecayRecord;
use std::fmt::Write as _;
use twistlot_model::plugin::{Delimiter, Layout, RigFormatManifest, TextEncoding, UnitSource};
use twistlot_model::{AngleUnit, CurveData, RecordKind, Stroke, TorqueUnit};

/// Canonical resolution the writer prints: 0.001° of angle and 0.001 N·mm of torque.
pub const RESOLUTION_DEG: f64 = 0.001;
/// Torque resolution, N·mm.
pub const RESOLUTION_NMM: f64 = 0.001;

/// Why a curve cannot be written in a layout.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum WriteError {
    /// The manifest is an exec converter, not a layout.
    #[error("rig format `{0}` is an exec converter; it has no layout to write")]
    NotALayout(String),
    /// A unit the writer cannot resolve.
    #[error("rig format `{0}`: {1}")]
    Unit(String, String),
    /// A free-decay record asked of a format of another kind.
    #[error("rig format `{0}` holds {1} records, not free decays")]
    Kind(String, RecordKind),
}

/// Decimal places needed to print `resolution` (in canonical units) in a unit of `factor` canonical units.
fn places(resolution: f64, factor: f64) -> usize {
    let in_unit = resolution / factor.abs();
    (-in_unit.log10()).ceil().max(0.0) as usize
}

/// Choices a layout leaves to the writing rig: units read from the file, line
/// endings, byte-order mark.
#[derive(Debug, Clone, PartialEq)]
pub struct WriteStyle {
    /// Angle unit when the layout reads it from the file.
    pub angle_unit: AngleUnit,
    /// Torque unit when the layout reads it from the file.
    pub torque_unit: TorqueUnit,
    /// Write CRLF line endings.
    pub crlf: bool,
    /// Start a UTF-8 file with a byte-order mark.
    pub bom: bool,
    /// Write stroke and cycle columns the layout can read (off: readers derive them).
    pub stroke_columns: bool,
}

impl WriteStyle {
    /// The demo rigs' habits, so the shipped layouts differ in more than their manifests.
    pub fn for_format(name: &str) -> WriteStyle {
        let (angle_unit, torque_unit, crlf, bom) = match name {
            "korvel-tab" => (AngleUnit::Degree, TorqueUnit::NewtonMetre, true, false),
            "ostrel-semi" => (AngleUnit::Degree, TorqueUnit::PoundForceInch, false, true),
            "pellam-fixed" => (AngleUnit::Radian, TorqueUnit::NewtonCentimetre, false, false),
            _ => (AngleUnit::Degree, TorqueUnit::NewtonMillimetre, false, false),
        };
        WriteStyle { angle_unit, torque_unit, crlf, bom, stroke_columns: name != "native" }
    }
}

/// The units written: fixed units as the manifest says, else the style's.
fn chosen_units(
    manifest: &RigFormatManifest,
    layout: &Layout,
    style: &WriteStyle,
) -> Result<(AngleUnit, TorqueUnit), WriteError> {
    let unit_error = |e: twistlot_model::UnknownUnit| WriteError::Unit(manifest.name.clone(), e.to_string());
    let angle = match &layout.columns.angle.unit {
        UnitSource::Fixed(unit) => unit.parse().map_err(unit_error)?,
        _ => style.angle_unit,
    };
    let torque = match layout.columns.torque.as_ref().map(|t| &t.unit) {
        Some(UnitSource::Fixed(unit)) => unit.parse().map_err(unit_error)?,
        _ => style.torque_unit,
    };
    Ok((angle, torque))
}

/// The printed resolution in canonical units (degrees, N·mm) for this layout: a
/// round trip is exact to within half of it.
pub fn printed_resolution(
    manifest: &RigFormatManifest,
    style: &WriteStyle,
) -> Result<(f64, f64), WriteError> {
    let layout = manifest.layout.as_ref().ok_or_else(|| WriteError::NotALayout(manifest.name.clone()))?;
    let (angle, torque) = chosen_units(manifest, layout, style)?;
    let angle_places = places(RESOLUTION_DEG, angle.deg_per_unit());
    let torque_places = places(RESOLUTION_NMM, torque.nmm_per_unit());
    Ok((
        10f64.powi(-(angle_places as i32)) * angle.deg_per_unit(),
        10f64.powi(-(torque_places as i32)) * torque.nmm_per_unit(),
    ))
}

/// Writes a free-decay record with `metadata` (canonical key → value; add `inertia_kgm2`)
/// in a `record: free-decay` manifest's layout: time and angle columns, no torque.
pub fn write_decay_layout(
    manifest: &RigFormatManifest,
    style: &WriteStyle,
    metadata: &[(&str, String)],
    record: &DecayRecord,
) -> Result<Vec<u8>, WriteError> {
    if manifest.record != RecordKind::FreeDecay {
        return Err(WriteError::Kind(manifest.name.clone(), manifest.record));
    }
    let curve = CurveData {
        angle_deg: record.angle_deg.clone(),
        time_s: Some(record.time_s.clone()),
        ..CurveData::default()
    };
    write_layout(manifest, style, metadata, &curve)
}

/// Writes `curve` with `metadata` (canonical key → value) in the manifest's layout.
///
/// Stroke and cycle columns are written as the style says (positioned cycle
/// columns always, so positions hold). A free-decay layout gets its time and angle
/// columns only (see [`write_decay_layout`]).
pub fn write_layout(
    manifest: &RigFormatManifest,
    style: &WriteStyle,
    metadata: &[(&str, String)],
    curve: &CurveData,
) -> Result<Vec<u8>, WriteError> {
    let layout = manifest.layout.as_ref().ok_or_else(|| WriteError::NotALayout(manifest.name.clone()))?;
    let (angle_unit, torque_unit) = chosen_units(manifest, layout, style)?;
    let eol = if style.crlf { "\r\n" } else { "\n" };
    let sep = match layout.delimiter {
        Delimiter::Byte(b) => (b as char).to_string(),
        Delimiter::Whitespace => "  ".to_string(),
    };
    let mut out = String::with_capacity(curve.len() * 32 + 512);
    let prefix = layout.metadata.as_ref().and_then(|m| m.prefix.clone());
    let separator = layout.metadata.as_ref().map(|m| m.separator.clone()).unwrap_or_else(|| ":".into());
    let quote_meta = layout.delimiter == Delimiter::Byte(b';');

    // Metadata, with the layout's own labels (written after the banner below).
    let label_for = |key: &str| -> String {
        layout
            .metadata
            .as_ref()
            .and_then(|m| m.keys.iter().find(|(_, v)| v.as_str() == key).map(|(k, _)| k.clone()))
            .unwrap_or_else(|| key.to_string())
    };
    let mut meta_lines: Vec<(String, String)> =
        metadata.iter().map(|(k, v)| (label_for(k), v.clone())).collect();
    if let Some(UnitSource::Metadata(label)) = layout.columns.torque.as_ref().map(|t| &t.unit) {
        meta_lines.push((label.clone(), torque_unit.symbol().to_string()));
    }
    if let UnitSource::Metadata(label) = &layout.columns.angle.unit {
        meta_lines.push((label.clone(), angle_unit.symbol().to_string()));
    }
    let mut meta_text = String::new();
    if layout.metadata.is_some() {
        for (label, value) in &meta_lines {
            let p = prefix.as_deref().map(|p| format!("{p} ")).unwrap_or_default();
            if quote_meta {
                let _ = write!(meta_text, "{p}\"{label}\"{separator}\"{value}\"{eol}");
            } else {
                let _ = write!(meta_text, "{p}{label}{separator}{value}{eol}");
            }
        }
    }

    // Banner: whatever detection needs that the rest of the file will not contain.
    let header_names = [
        layout.columns.angle.pick.name.as_ref(),
        layout.columns.torque.as_ref().and_then(|t| t.pick.name.as_ref()),
        layout.columns.time.as_ref().and_then(|t| t.pick.name.as_ref()),
    ];
    let banner: Vec<&str> = manifest
        .detect
        .contains
        .iter()
        .map(String::as_str)
        .filter(|s| Some(*s) != layout.data_marker.as_deref())
        .filter(|s| !header_names.iter().any(|n| n.map(String::as_str) == Some(*s)))
        .filter(|s| !meta_text.contains(*s))
        .collect();
    if !banner.is_empty() {
        let _ = write!(
            out,
            "{}{} export{eol}",
            prefix.as_deref().map(|p| format!("{p} ")).unwrap_or_default(),
            banner.join(" ")
        );
    }
    out.push_str(&meta_text);
    if let Some(marker) = &layout.data_marker {
        let _ = write!(out, "{marker}{eol}");
    }

    // Columns in field order: (position, header cell, kind).
    #[derive(Clone, Copy)]
    enum Kind {
        Angle,
        Torque,
        Time(f64),
        Stroke,
        Cycle,
        Point,
    }
    let columns = &layout.columns;
    let header_cell = |name: &Option<String>, unit: Option<&str>, source: Option<&UnitSource>| -> String {
        let name = name.clone().unwrap_or_default();
        match (source, unit) {
            (Some(UnitSource::Header), Some(unit)) => {
                if layout.delimiter == Delimiter::Byte(b';') {
                    format!("{name} ({unit})")
                } else {
                    format!("{name} [{unit}]")
                }
            }
            _ => name,
        }
    };
    let mut fields: Vec<(Option<usize>, String, Kind)> = vec![(
        columns.angle.pick.position,
        header_cell(&columns.angle.pick.name, Some(angle_unit.symbol()), Some(&columns.angle.unit)),
        Kind::Angle,
    )];
    if let Some(torque) = &columns.torque {
        fields.push((
            torque.pick.position,
            header_cell(&torque.pick.name, Some(torque_unit.symbol()), Some(&torque.unit)),
            Kind::Torque,
        ));
    }
    let korvel_style_time = matches!(&columns.time, Some(t) if t.seconds_per_unit != 1.0);
    if let (Some(time), Some(_)) = (&columns.time, &curve.time_s) {
        let unit = if korvel_style_time { "ms" } else { "s" };
        let cell = if layout.header && time.pick.name.as_deref() != Some("time_s") {
            format!("{} [{unit}]", time.pick.name.clone().unwrap_or_default())
        } else {
            time.pick.name.clone().unwrap_or_default()
        };
        fields.push((time.pick.position, cell, Kind::Time(time.seconds_per_unit)));
    }
    if let Some(stroke) = &columns.stroke {
        if style.stroke_columns {
            fields.push((stroke.pick.position, stroke.pick.name.clone().unwrap_or_default(), Kind::Stroke));
        }
    }
    if let Some(cycle) = &columns.cycle {
        if style.stroke_columns || cycle.position.is_some() {
            fields.push((cycle.position, cycle.name.clone().unwrap_or_default(), Kind::Cycle));
        }
    }
    // Positioned layouts: fill the gaps (a point counter, say) so positions hold.
    let mut ordered: Vec<(String, Kind)> = Vec::new();
    if fields.iter().any(|f| f.0.is_some()) {
        let last = fields.iter().filter_map(|f| f.0).max().unwrap_or(0);
        for position in 1..=last {
            match fields.iter().find(|f| f.0 == Some(position)) {
                Some(f) => ordered.push((f.1.clone(), f.2)),
                None => ordered.push(("n".into(), Kind::Point)),
            }
        }
    } else {
        // Named layouts: time first when present, as most rigs do.
        fields.sort_by_key(|f| match f.2 {
            Kind::Time(_) => 0,
            Kind::Angle => 1,
            Kind::Torque => 2,
            Kind::Stroke => 3,
            Kind::Cycle => 4,
            Kind::Point => 5,
        });
        ordered = fields.into_iter().map(|f| (f.1, f.2)).collect();
    }
    if layout.header {
        let cells: Vec<&str> = ordered.iter().map(|(h, _)| h.as_str()).collect();
        let _ = write!(out, "{}{eol}", cells.join(&sep));
    }

    let angle_places = places(RESOLUTION_DEG, angle_unit.deg_per_unit());
    let torque_places = places(RESOLUTION_NMM, torque_unit.nmm_per_unit());
    // A swing's periods are measured on the time column, so it keeps microseconds.
    let time_places = if manifest.record == RecordKind::FreeDecay { 6 } else { 3 };
    let torque_sign = columns.torque.as_ref().map_or(1.0, |t| t.sign);
    let comma = layout.decimal == ',';
    let stroke_labels = columns.stroke.as_ref().map(|s| (s.load.clone(), s.unload.clone()));
    let mut row = String::new();
    for i in 0..curve.len() {
        row.clear();
        for (k, (_, kind)) in ordered.iter().enumerate() {
            if k > 0 {
                row.push_str(&sep);
            }
            let start = row.len();
            match *kind {
                Kind::Angle => {
                    let v = angle_unit.from_deg(curve.angle_deg[i]) * columns.angle.sign;
                    let _ = write!(row, "{v:.angle_places$}");
                }
                Kind::Torque => {
                    let v = torque_unit.from_nmm(curve.torque_nmm[i]) * torque_sign;
                    let _ = write!(row, "{v:.torque_places$}");
                }
                Kind::Time(seconds_per_unit) => {
                    let t = curve.time_s.as_ref().map(|t| t[i]).unwrap_or(0.0) / seconds_per_unit;
                    let _ = write!(row, "{t:.time_places$}");
                }
                Kind::Stroke => {
                    let (load, unload) = stroke_labels.clone().unwrap_or_default();
                    row.push_str(if curve.stroke[i] == Stroke::Load { &load } else { &unload });
                }
                Kind::Cycle => {
                    let _ = write!(row, "{}", curve.cycle[i]);
                }
                Kind::Point => {
                    let _ = write!(row, "{}", i + 1);
                }
            }
            if comma {
                // Only the cell just written: delimiters are never commas here.
                let cell: String = row[start..].replace('.', ",");
                row.truncate(start);
                row.push_str(&cell);
            }
        }
        out.push_str(&row);
        out.push_str(eol);
    }

    Ok(match layout.encoding {
        TextEncoding::Windows1252 => encoding_rs::WINDOWS_1252.encode(&out).0.into_owned(),
        TextEncoding::Utf8 if style.bom => {
            let mut bytes = b"\xEF\xBB\xBF".to_vec();
            bytes.extend_from_slice(out.as_bytes());
            bytes
        }
        TextEncoding::Utf8 => out.into_bytes(),
    })
}

/// Writes the gantry rig's JSON document (the exec example's input layout).
pub fn write_gantry_json(metadata: &[(&str, String)], curve: &CurveData) -> Vec<u8> {
    let keys = [
        ("serial", "sn"),
        ("part", "pn"),
        ("lot", "lot"),
        ("rig", "station"),
        ("operator", "op"),
        ("started", "t0"),
    ];
    let meta: serde_json::Map<String, serde_json::Value> = metadata
        .iter()
        .map(|(k, v)| {
            let key = keys.iter().find(|(c, _)| c == k).map(|(_, g)| *g).unwrap_or(k);
            (key.to_string(), serde_json::Value::String(v.clone()))
        })
        .collect();
    let samples: Vec<serde_json::Value> = (0..curve.len())
        .map(|i| {
            let t = curve.time_s.as_ref().map(|t| t[i]).unwrap_or(0.0);
            let round = |v: f64, places: i32| (v * 10f64.powi(places)).round() / 10f64.powi(places);
            serde_json::json!([
                round(t, 3),
                round(curve.angle_deg[i].to_radians(), 6),
                round(curve.torque_nmm[i] / 1000.0, 7)
            ])
        })
        .collect();
    let doc = serde_json::json!({
        "format": "gantry-tq/1",
        "units": { "angle": "rad", "torque": "N.m" },
        "meta": meta,
        "samples": samples,
    });
    doc.to_string().into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimal_places_follow_the_unit() {
        assert_eq!(places(RESOLUTION_DEG, 1.0), 3);
        assert_eq!(places(RESOLUTION_DEG, AngleUnit::Radian.deg_per_unit()), 5);
        assert_eq!(places(RESOLUTION_NMM, 1000.0), 6);
        assert_eq!(places(RESOLUTION_NMM, TorqueUnit::PoundForceInch.nmm_per_unit()), 6);
    }
}
