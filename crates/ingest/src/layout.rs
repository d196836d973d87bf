//! Reading a declarative layout: preamble and metadata, header, data rows.
//!
//! One pass over the text. The header is resolved once into field indices and
//! unit factors, then every data row is split only as far as the last needed
//! field and its cells go straight through the decimal tokenizer.

use crate::error::{IngestError, RejectKind};
use crate::number::{parse_decimal, NumberError};
use std::collections::BTreeMap;
use twistlot_model::plugin::{ColumnPick, Delimiter, Layout, UnitSource};
use twistlot_model::{AngleUnit, Stroke, TorqueUnit};

/// What a layout yields before strokes are derived and a frame is built.
#[derive(Debug, Default)]
pub struct RawCurve {
    /// Metadata as (label, value) in file order.
    pub metadata: Vec<(String, String)>,
    /// Angles, degrees.
    pub angle_deg: Vec<f64>,
    /// Torques, N·mm.
    pub torque_nmm: Vec<f64>,
    /// Times, seconds.
    pub time_s: Option<Vec<f64>>,
    /// Strokes as recorded.
    pub stroke: Option<Vec<Stroke>>,
    /// Cycles as recorded.
    pub cycle: Option<Vec<u32>>,
}

struct Lines<'a> {
    text: &'a str,
    pos: usize,
    number: usize,
}

impl<'a> Lines<'a> {
    /// The next line without its terminator, its 1-based number, and whether it had a `\n`.
    fn next_line(&mut self) -> Option<(&'a str, usize, bool)> {
        if self.pos >= self.text.len() {
            return None;
        }
        let rest = &self.text[self.pos..];
        let (line, advance, terminated) = match memchr::memchr(b'\n', rest.as_bytes()) {
            Some(end) => (&rest[..end], end + 1, true),
            None => (rest, rest.len(), false),
        };
        self.pos += advance;
        self.number += 1;
        Some((line.strip_suffix('\r').unwrap_or(line), self.number, terminated))
    }
}

fn trim_cell(cell: &str) -> &str {
    let cell = cell.trim();
    cell.strip_prefix('"').and_then(|c| c.strip_suffix('"')).unwrap_or(cell).trim()
}

fn split_cells(line: &str, delimiter: Delimiter) -> Vec<&str> {
    match delimiter {
        Delimiter::Byte(byte) => line.split(byte as char).map(trim_cell).collect(),
        Delimiter::Whitespace => line.split_ascii_whitespace().map(trim_cell).collect(),
    }
}

/// The header cell's text without a trailing unit in brackets.
fn bare_name(cell: &str) -> &str {
    cell.find(['[', '(']).map(|i| cell[..i].trim()).unwrap_or(cell)
}

/// The unit written in brackets in a header cell.
fn bracketed_unit(cell: &str) -> Option<&str> {
    let open = cell.find(['[', '('])?;
    let close = cell[open..].find([']', ')'])? + open;
    Some(cell[open + 1..close].trim())
}

struct Field {
    index: usize,
    label: String,
}

struct Context<'a> {
    file: &'a str,
    format: &'a str,
}

impl Context<'_> {
    fn error(
        &self,
        kind: RejectKind,
        line: Option<usize>,
        column: Option<&str>,
        message: String,
    ) -> IngestError {
        IngestError {
            kind,
            file: self.file.to_string(),
            line,
            column: column.map(str::to_string),
            rig_format: Some(self.format.to_string()),
            message,
        }
    }

    fn pick(
        &self,
        pick: &ColumnPick,
        header: Option<&(Vec<&str>, usize)>,
        role: &str,
    ) -> Result<Field, IngestError> {
        if let Some(position) = pick.position {
            let label = header
                .and_then(|(cells, _)| cells.get(position - 1).map(|c| c.to_string()))
                .unwrap_or_else(|| format!("{role} (field {position})"));
            return Ok(Field { index: position - 1, label });
        }
        let name = pick.name.as_deref().unwrap_or_default();
        let Some((cells, line)) = header else {
            return Err(self.error(
                RejectKind::MissingColumn,
                None,
                Some(name),
                "the file has no header row".into(),
            ));
        };
        match cells
            .iter()
            .position(|cell| bare_name(cell).eq_ignore_ascii_case(name) || cell.eq_ignore_ascii_case(name))
        {
            Some(index) => Ok(Field { index, label: cells[index].to_string() }),
            None => Err(self.error(
                RejectKind::MissingColumn,
                Some(*line),
                Some(name),
                format!("no {role} column `{name}` in the header (found: {})", cells.join(", ")),
            )),
        }
    }

    fn unit_text(
        &self,
        source: &UnitSource,
        field: &Field,
        header_line: Option<usize>,
        metadata: &[(String, String, usize)],
    ) -> Result<(String, Option<usize>), IngestError> {
        match source {
            UnitSource::Fixed(unit) => Ok((unit.clone(), None)),
            UnitSource::Header => match bracketed_unit(&field.label) {
                Some(unit) => Ok((unit.to_string(), header_line)),
                None => Err(self.error(
                    RejectKind::UnknownUnit,
                    header_line,
                    Some(&field.label),
                    "the header cell carries no unit in brackets, and the layout reads the unit from there"
                        .into(),
                )),
            },
            UnitSource::Metadata(label) => {
                match metadata.iter().find(|(l, _, _)| l.eq_ignore_ascii_case(label)) {
                    Some((_, value, line)) => Ok((value.clone(), Some(*line))),
                    None => Err(self.error(
                        RejectKind::UnknownUnit,
                        None,
                        Some(&field.label),
                        format!("the metadata line `{label}` that gives the unit is missing"),
                    )),
                }
            }
        }
    }
}

/// The line put back after the preamble, else the next one.
fn take_line<'a>(
    pending: &mut Option<(&'a str, usize, bool)>,
    lines: &mut Lines<'a>,
) -> Option<(&'a str, usize, bool)> {
    pending.take().or_else(|| lines.next_line())
}

/// Reads `text` (already decoded) with `layout`.
pub fn read_layout(file: &str, format: &str, layout: &Layout, text: &str) -> Result<RawCurve, IngestError> {
    let cx = Context { file, format };
    let mut lines = Lines { text, pos: 0, number: 0 };
    let mut metadata: Vec<(String, String, usize)> = Vec::new();
    let rule = layout.metadata.as_ref();
    let read_meta = |line: &str, number: usize, metadata: &mut Vec<(String, String, usize)>| {
        let Some(rule) = rule else { return };
        let body = match &rule.prefix {
            Some(prefix) => match line.trim_start().strip_prefix(prefix.as_str()) {
                Some(body) => body,
                None => return,
            },
            None => line,
        };
        if let Some((label, value)) = body.split_once(rule.separator.as_str()) {
            let label = trim_cell(label);
            if !label.is_empty() {
                metadata.push((label.to_string(), trim_cell(value).to_string(), number));
            }
        }
    };

    // Preamble: up to the marker, or the leading prefixed lines.
    let mut pending: Option<(&str, usize, bool)> = None;
    if let Some(marker) = &layout.data_marker {
        loop {
            match lines.next_line() {
                Some((line, _, _)) if line.trim() == marker.as_str() => break,
                Some((line, number, _)) => read_meta(line, number, &mut metadata),
                None => {
                    return Err(cx.error(
                        RejectKind::NoData,
                        None,
                        None,
                        format!("the line `{marker}` that starts the data never appears"),
                    ))
                }
            }
        }
    } else {
        let prefix = rule.and_then(|r| r.prefix.as_deref());
        while let Some((line, number, terminated)) = lines.next_line() {
            if line.trim().is_empty() {
                continue;
            }
            match prefix {
                Some(prefix) if line.trim_start().starts_with(prefix) => {
                    read_meta(line, number, &mut metadata)
                }
                _ => {
                    pending = Some((line, number, terminated));
                    break;
                }
            }
        }
    }

    // Header.
    let header: Option<(Vec<&str>, usize)> = if layout.header {
        loop {
            match take_line(&mut pending, &mut lines) {
                Some((line, _, _)) if line.trim().is_empty() => continue,
                Some((line, number, _)) => break Some((split_cells(line, layout.delimiter), number)),
                None => {
                    let kind = if metadata.is_empty() { RejectKind::Empty } else { RejectKind::NoData };
                    return Err(cx.error(kind, None, None, "there is no header row and no data".into()));
                }
            }
        }
    } else {
        None
    };
    for _ in 0..layout.skip_after_header {
        take_line(&mut pending, &mut lines);
    }

    let columns = &layout.columns;
    let header_line = header.as_ref().map(|(_, n)| *n);
    let angle = cx.pick(&columns.angle.pick, header.as_ref(), "angle")?;
    let torque = cx.pick(&columns.torque.pick, header.as_ref(), "torque")?;
    let optional = |pick: Option<&ColumnPick>, role: &str| -> Result<Option<Field>, IngestError> {
        match pick {
            None => Ok(None),
            // Optional columns a header names but a file lacks are simply absent.
            Some(pick) => match cx.pick(pick, header.as_ref(), role) {
                Ok(field) => Ok(Some(field)),
                Err(err) if err.kind == RejectKind::MissingColumn && pick.name.is_some() => Ok(None),
                Err(err) => Err(err),
            },
        }
    };
    let time = optional(columns.time.as_ref().map(|t| &t.pick), "time")?;
    let stroke = optional(columns.stroke.as_ref().map(|s| &s.pick), "stroke")?;
    let cycle = optional(columns.cycle.as_ref(), "cycle")?;

    let (angle_unit, angle_unit_line) = cx.unit_text(&columns.angle.unit, &angle, header_line, &metadata)?;
    let angle_unit: AngleUnit = angle_unit.parse().map_err(|e: twistlot_model::UnknownUnit| {
        cx.error(RejectKind::UnknownUnit, angle_unit_line, Some(&angle.label), e.to_string())
    })?;
    let (torque_unit, torque_unit_line) =
        cx.unit_text(&columns.torque.unit, &torque, header_line, &metadata)?;
    let torque_unit: TorqueUnit = torque_unit.parse().map_err(|e: twistlot_model::UnknownUnit| {
        cx.error(RejectKind::UnknownUnit, torque_unit_line, Some(&torque.label), e.to_string())
    })?;
    let angle_factor = angle_unit.deg_per_unit() * columns.angle.sign;
    let torque_factor = torque_unit.nmm_per_unit() * columns.torque.sign;
    let seconds_per_unit = columns.time.as_ref().map(|t| t.seconds_per_unit).unwrap_or(1.0);
    let stroke_labels = columns.stroke.as_ref().map(|s| (s.load.clone(), s.unload.clone()));

    // Which fields each row needs, in field order.
    #[derive(Clone, Copy)]
    enum Role {
        Angle,
        Torque,
        Time,
        Stroke,
        Cycle,
    }
    let mut wanted: Vec<(usize, Role, &str)> = vec![
        (angle.index, Role::Angle, angle.label.as_str()),
        (torque.index, Role::Torque, torque.label.as_str()),
    ];
    if let Some(f) = &time {
        wanted.push((f.index, Role::Time, f.label.as_str()));
    }
    if let Some(f) = &stroke {
        wanted.push((f.index, Role::Stroke, f.label.as_str()));
    }
    if let Some(f) = &cycle {
        wanted.push((f.index, Role::Cycle, f.label.as_str()));
    }
    wanted.sort_by_key(|w| w.0);
    let last_needed = wanted.last().map(|w| w.0).unwrap_or(0);

    let size_hint = text.len().saturating_sub(lines.pos) / 16;
    let mut raw = RawCurve {
        angle_deg: Vec::with_capacity(size_hint),
        torque_nmm: Vec::with_capacity(size_hint),
        time_s: time.as_ref().map(|_| Vec::with_capacity(size_hint)),
        stroke: stroke.as_ref().map(|_| Vec::with_capacity(size_hint)),
        cycle: cycle.as_ref().map(|_| Vec::with_capacity(size_hint)),
        ..RawCurve::default()
    };
    let decimal = layout.decimal as u8;
    let mut cells: Vec<&str> = Vec::with_capacity(last_needed + 1);
    while let Some((line, number, terminated)) = take_line(&mut pending, &mut lines) {
        if line.trim().is_empty() {
            continue;
        }
        cells.clear();
        match layout.delimiter {
            Delimiter::Byte(byte) => {
                let bytes = line.as_bytes();
                let mut start = 0;
                for end in memchr::memchr_iter(byte, bytes) {
                    cells.push(&line[start..end]);
                    start = end + 1;
                    if cells.len() > last_needed {
                        break;
                    }
                }
                if cells.len() <= last_needed {
                    cells.push(&line[start..]);
                }
            }
            Delimiter::Whitespace => cells.extend(line.split_ascii_whitespace().take(last_needed + 1)),
        }
        if cells.len() <= last_needed {
            let (missing_index, missing) =
                wanted.iter().find(|w| w.0 >= cells.len()).map(|w| (w.0, w.2)).unwrap_or((last_needed, ""));
            let what = if terminated { "the row" } else { "the last line is cut off: it" };
            return Err(cx.error(
                RejectKind::Truncated,
                Some(number),
                Some(missing),
                format!(
                    "{what} has {} field(s), but the `{missing}` column needs field {}",
                    cells.len(),
                    missing_index + 1
                ),
            ));
        }
        for &(index, role, label) in &wanted {
            let cell = trim_cell(cells[index]);
            match role {
                Role::Angle | Role::Torque | Role::Time => {
                    let value = parse_decimal(cell.as_bytes(), decimal).map_err(|err| {
                        let (kind, message) = match err {
                            NumberError::NotANumber if cell.is_empty() && !terminated => (
                                RejectKind::Truncated,
                                "the last line is cut off: the cell is empty".to_string(),
                            ),
                            NumberError::NotANumber if cell.is_empty() => {
                                (RejectKind::NotANumber, "the cell is empty".to_string())
                            }
                            NumberError::NotANumber => (
                                RejectKind::NotANumber,
                                format!("`{cell}` is not a number (decimal separator `{}`)", layout.decimal),
                            ),
                            NumberError::NotFinite => {
                                (RejectKind::NotFinite, format!("`{cell}` is not a finite number"))
                            }
                        };
                        cx.error(kind, Some(number), Some(label), message)
                    })?;
                    match role {
                        Role::Angle => raw.angle_deg.push(value * angle_factor),
                        Role::Torque => raw.torque_nmm.push(value * torque_factor),
                        _ => {
                            if let Some(t) = raw.time_s.as_mut() {
                                t.push(value * seconds_per_unit)
                            }
                        }
                    }
                }
                Role::Stroke => {
                    let (load, unload) =
                        stroke_labels.as_ref().map(|(l, u)| (l.as_str(), u.as_str())).unwrap_or_default();
                    let value = if cell.eq_ignore_ascii_case(load) {
                        Stroke::Load
                    } else if cell.eq_ignore_ascii_case(unload) {
                        Stroke::Unload
                    } else {
                        return Err(cx.error(
                            RejectKind::BadLabel,
                            Some(number),
                            Some(label),
                            format!("`{cell}` is neither the loading label `{load}` nor the unloading label `{unload}`"),
                        ));
                    };
                    if let Some(s) = raw.stroke.as_mut() {
                        s.push(value)
                    }
                }
                Role::Cycle => {
                    let value = cell.parse::<u32>().ok().filter(|c| *c > 0).ok_or_else(|| {
                        cx.error(
                            RejectKind::BadLabel,
                            Some(number),
                            Some(label),
                            format!("`{cell}` is not a cycle number (1, 2, …)"),
                        )
                    })?;
                    if let Some(c) = raw.cycle.as_mut() {
                        c.push(value)
                    }
                }
            }
        }
    }
    if raw.angle_deg.is_empty() {
        return Err(cx.error(
            RejectKind::NoData,
            header_line,
            None,
            "the file has a header but no data rows".into(),
        ));
    }
    let keys: BTreeMap<&str, &str> =
        rule.map(|r| r.keys.iter().map(|(k, v)| (k.as_str(), v.as_str())).collect()).unwrap_or_default();
    raw.metadata = metadata
        .into_iter()
        .map(|(label, value, _)| {
            let key = keys
                .iter()
                .find(|(k, _)| k.eq_ignore_ascii_case(&label))
                .map(|(_, v)| v.to_string())
                .unwrap_or(label);
            (key, value)
        })
        .collect();
    Ok(raw)
}
