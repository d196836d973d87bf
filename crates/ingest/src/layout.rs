//! Reading a declarative layout: preamble and metadata, header, data rows.
//!
//! One pass over the text. The header is resolved once into field indices and
//! unit factors, then every data row is split only as far as the last needed
//! field and its cells go straight through the decimal tokenizer.

use crate::error::{IngestError, RejectKind};
use crate::number::{parse_decimal, NumberError};
use std::collections::BTreeMap;
use twistlot_model::plugin::{ColumnPick, Delimiter, Layout, MetadataRule, UnitSource};
use twistlot_model::{AngleUnit, Stroke, TorqueUnit};

/// What a layout yields before strokes are derived and a frame is built.
#[derive(Debug, Default)]
pub struct RawCurve {
    /// Metadata as (label, value) in file order.
    pub metadata: Vec<(String, String)>,
    /// Angles, degrees.
    pub angle_deg: Vec<f64>,
    /// Torques, N·mm (empty when the layout has no torque column: a free decay).
    pub torque_nmm: Vec<f64>,
    /// Times, seconds.
    pub time_s: Option<Vec<f64>>,
    /// Strokes as recorded.
    pub stroke: Option<Vec<Stroke>>,
    /// Cycles as recorded.
    pub cycle: Option<Vec<u32>>,
}

impl RawCurve {
    /// Appends a quickly read row, converting to canonical units.
    #[inline]
    fn push_quick(
        &mut self,
        row: &QuickRow,
        angle_factor: f64,
        torque_factor: Option<f64>,
        seconds_per_unit: f64,
    ) {
        self.angle_deg.push(row.angle * angle_factor);
        if let Some(factor) = torque_factor {
            self.torque_nmm.push(row.torque * factor);
        }
        if let Some(t) = self.time_s.as_mut() {
            t.push(row.time * seconds_per_unit);
        }
        if let (Some(s), Some(value)) = (self.stroke.as_mut(), row.stroke) {
            s.push(value);
        }
        if let (Some(c), Some(value)) = (self.cycle.as_mut(), row.cycle) {
            c.push(value);
        }
    }
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

/// Trims ASCII blanks and one pair of surrounding double quotes.
#[inline]
fn trim_cell_ascii(cell: &str) -> &str {
    let cell = cell.trim_ascii();
    match cell.strip_prefix('"').and_then(|c| c.strip_suffix('"')) {
        Some(inner) => inner.trim_ascii(),
        None => cell,
    }
}

/// Splits a data row into at most `max` cells. One pass over the bytes: rows are
/// short, so a plain loop beats setting up a vector search per delimiter. The
/// delimiters are ASCII, so every cut falls on a character boundary.
#[inline]
fn split_row<'a>(line: &'a str, delimiter: Delimiter, max: usize, cells: &mut Vec<&'a str>) {
    let bytes = line.as_bytes();
    match delimiter {
        Delimiter::Byte(byte) => {
            let mut start = 0;
            for (i, &b) in bytes.iter().enumerate() {
                if b == byte {
                    cells.push(&line[start..i]);
                    if cells.len() == max {
                        return;
                    }
                    start = i + 1;
                }
            }
            cells.push(&line[start..]);
        }
        Delimiter::Whitespace => {
            let mut i = 0;
            let n = bytes.len();
            while i < n && cells.len() < max {
                while i < n && (bytes[i] == b' ' || bytes[i] == b'\t') {
                    i += 1;
                }
                if i == n {
                    break;
                }
                let start = i;
                while i < n && bytes[i] != b' ' && bytes[i] != b'\t' {
                    i += 1;
                }
                cells.push(&line[start..i]);
            }
        }
    }
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

/// What a needed field of a data row holds.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Role {
    Angle,
    Torque,
    Time,
    Stroke,
    Cycle,
}

/// One row read the quick way, in the file's units.
#[derive(Default)]
struct QuickRow {
    angle: f64,
    torque: f64,
    time: f64,
    stroke: Option<Stroke>,
    cycle: Option<u32>,
}

/// The quick path for well-formed rows: one pass over the bytes, numbers parsed as
/// their field ends, nothing allocated. Any surprise (quotes, a bad cell, a short
/// row) returns `None` and the row goes through the general path, which gives the
/// precise error, so both paths accept exactly the same rows.
struct QuickReader {
    /// Role per field position up to the last needed one.
    slots: Vec<Option<Role>>,
    delimiter: Delimiter,
    decimal: u8,
    load: Vec<u8>,
    unload: Vec<u8>,
}

impl QuickReader {
    /// Reads one whole row from the start of `data`, line break included, and says
    /// how many bytes it took. Numbers are parsed straight from the bytes, so each
    /// byte is looked at once. Rows without a final `\n` go the general way.
    #[inline]
    fn read_line(&self, data: &[u8]) -> Option<(QuickRow, usize)> {
        let n = data.len();
        let mut pos = 0;
        let last = self.slots.len().checked_sub(1)?;
        let mut row = QuickRow::default();
        let (delimiter, whitespace) = match self.delimiter {
            Delimiter::Byte(d) => (d, false),
            Delimiter::Whitespace => (b' ', true),
        };
        // Blanks around a cell: spaces, and tabs unless tabs separate the cells.
        let blank = |b: u8| b == b' ' || (b == b'\t' && (whitespace || delimiter != b'\t'));
        for (k, slot) in self.slots.iter().enumerate() {
            while pos < n && blank(data[pos]) {
                pos += 1;
            }
            let start = pos;
            let numeric = match slot {
                Some(Role::Angle | Role::Torque | Role::Time) => {
                    let (value, used) = crate::number::parse_decimal_prefix(&data[pos..], self.decimal)?;
                    match slot {
                        Some(Role::Angle) => row.angle = value,
                        Some(Role::Torque) => row.torque = value,
                        _ => row.time = value,
                    }
                    pos += used;
                    true
                }
                _ => {
                    while pos < n
                        && !blank(data[pos])
                        && !matches!(data[pos], b'\n' | b'\r')
                        && data[pos] != delimiter
                    {
                        pos += 1;
                    }
                    false
                }
            };
            let end = pos;
            while pos < n && blank(data[pos]) {
                pos += 1;
            }
            let at = *data.get(pos)?;
            let row_ends = at == b'\n' || at == b'\r';
            let next_field = if whitespace { pos > end && !row_ends } else { at == delimiter };
            if !(row_ends || next_field) || (row_ends && k < last) || (!numeric && start == end && whitespace)
            {
                return None;
            }
            if next_field && !whitespace && k < last {
                pos += 1;
            }
            if numeric {
                continue;
            }
            let Some(role) = slot else { continue };
            let cell = &data[start..end];
            match role {
                Role::Stroke => {
                    row.stroke = Some(if cell.eq_ignore_ascii_case(&self.load) {
                        Stroke::Load
                    } else if cell.eq_ignore_ascii_case(&self.unload) {
                        Stroke::Unload
                    } else {
                        return None;
                    })
                }
                Role::Cycle => {
                    if cell.is_empty() || cell.len() > 9 || !cell.iter().all(u8::is_ascii_digit) {
                        return None;
                    }
                    let cycle = cell.iter().fold(0u32, |acc, &b| acc * 10 + u32::from(b - b'0'));
                    row.cycle = Some(cycle).filter(|c| *c > 0);
                    row.cycle?;
                }
                _ => {}
            }
        }
        // The rest of the row (columns nobody needs) up to and including the line break.
        let used = match data.get(pos) {
            Some(b'\n') => pos + 1,
            _ => pos + memchr::memchr(b'\n', &data[pos..])? + 1,
        };
        Some((row, used))
    }
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
    read_layout_with(file, format, layout, text, true)
}

/// One metadata line's (label, value), when `line` is one under `rule`.
fn metadata_pair<'l>(rule: &MetadataRule, line: &'l str) -> Option<(&'l str, &'l str)> {
    let body = match &rule.prefix {
        Some(prefix) => line.trim_start().strip_prefix(prefix.as_str())?,
        None => line,
    };
    let (label, value) = body.split_once(rule.separator.as_str())?;
    let label = trim_cell(label);
    (!label.is_empty()).then(|| (label, trim_cell(value)))
}

/// The lot named in the metadata lines before the data (the preamble): what a report
/// needs to list a rejected file under its own lot. Only metadata lines are looked at,
/// never a guess from the data.
pub fn preamble_lot(layout: &Layout, text: &str) -> Option<String> {
    let rule = layout.metadata.as_ref()?;
    let lot_labels: Vec<&str> =
        rule.keys.iter().filter(|(_, key)| key.as_str() == "lot").map(|(label, _)| label.as_str()).collect();
    let is_lot = |label: &str| {
        label.eq_ignore_ascii_case("lot") || lot_labels.iter().any(|l| l.eq_ignore_ascii_case(label))
    };
    let mut lines = Lines { text, pos: 0, number: 0 };
    while let Some((line, _, _)) = lines.next_line() {
        match &layout.data_marker {
            Some(marker) if line.trim() == marker.as_str() => return None,
            Some(_) => {}
            None if line.trim().is_empty() => continue,
            None => {
                let prefixed = rule.prefix.as_deref().is_some_and(|p| line.trim_start().starts_with(p));
                if !prefixed {
                    return None;
                }
            }
        }
        if let Some((label, value)) = metadata_pair(rule, line) {
            if is_lot(label) && !value.is_empty() {
                return Some(value.to_string());
            }
        }
    }
    None
}

/// [`read_layout`], with the quick row reader switchable so tests can check that
/// both paths read every file the same way.
fn read_layout_with<'t>(
    file: &str,
    format: &str,
    layout: &Layout,
    text: &'t str,
    use_quick_reader: bool,
) -> Result<RawCurve, IngestError> {
    let cx = Context { file, format };
    let mut lines = Lines { text, pos: 0, number: 0 };
    let mut metadata: Vec<(String, String, usize)> = Vec::new();
    let rule = layout.metadata.as_ref();
    let read_meta = |line: &str, number: usize, metadata: &mut Vec<(String, String, usize)>| {
        if let Some((label, value)) = rule.and_then(|rule| metadata_pair(rule, line)) {
            metadata.push((label.to_string(), value.to_string(), number));
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
    // A free-decay layout has no torque column; a torque-curve layout always has one.
    let torque = columns.torque.as_ref().map(|t| cx.pick(&t.pick, header.as_ref(), "torque")).transpose()?;
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
    let torque_factor = match (&columns.torque, &torque) {
        (Some(column), Some(field)) => {
            let (unit, unit_line) = cx.unit_text(&column.unit, field, header_line, &metadata)?;
            let unit: TorqueUnit = unit.parse().map_err(|e: twistlot_model::UnknownUnit| {
                cx.error(RejectKind::UnknownUnit, unit_line, Some(&field.label), e.to_string())
            })?;
            Some(unit.nmm_per_unit() * column.sign)
        }
        _ => None,
    };
    let angle_factor = angle_unit.deg_per_unit() * columns.angle.sign;
    let seconds_per_unit = columns.time.as_ref().map(|t| t.seconds_per_unit).unwrap_or(1.0);
    let stroke_labels = columns.stroke.as_ref().map(|s| (s.load.clone(), s.unload.clone()));

    // Which fields each row needs, in field order.
    let mut wanted: Vec<(usize, Role, &str)> = vec![(angle.index, Role::Angle, angle.label.as_str())];
    if let Some(f) = &torque {
        wanted.push((f.index, Role::Torque, f.label.as_str()));
    }
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
        torque_nmm: Vec::with_capacity(if torque.is_some() { size_hint } else { 0 }),
        time_s: time.as_ref().map(|_| Vec::with_capacity(size_hint)),
        stroke: stroke.as_ref().map(|_| Vec::with_capacity(size_hint)),
        cycle: cycle.as_ref().map(|_| Vec::with_capacity(size_hint)),
        ..RawCurve::default()
    };
    let decimal = layout.decimal as u8;
    let mut slots = vec![None; last_needed + 1];
    for &(index, role, _) in &wanted {
        slots[index] = Some(role);
    }
    let (load_label, unload_label) = stroke_labels.clone().unwrap_or_default();
    let quick = QuickReader {
        slots,
        delimiter: layout.delimiter,
        decimal,
        load: load_label.into_bytes(),
        unload: unload_label.into_bytes(),
    };
    let mut cells: Vec<&str> = Vec::with_capacity(last_needed + 1);
    let mut row = |raw: &mut RawCurve,
                   line: &'t str,
                   number: usize,
                   terminated: bool|
     -> Result<(), IngestError> {
        let bytes = line.as_bytes();
        if bytes.first().is_none_or(|b| b.is_ascii_whitespace()) && bytes.iter().all(u8::is_ascii_whitespace)
        {
            return Ok(());
        }
        cells.clear();
        split_row(line, layout.delimiter, last_needed + 1, &mut cells);
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
            let cell = trim_cell_ascii(cells[index]);
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
                        Role::Torque => raw.torque_nmm.push(value * torque_factor.unwrap_or(1.0)),
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
        Ok(())
    };
    if let Some((line, number, terminated)) = pending.take() {
        row(&mut raw, line, number, terminated)?;
    }
    let bytes = text.as_bytes();
    loop {
        // Well-formed rows take the quick path; anything else (blank lines, a bad
        // cell, the last line without a break) goes through `row` for its error.
        while let Some((quick_row, used)) =
            use_quick_reader.then(|| quick.read_line(&bytes[lines.pos..])).flatten()
        {
            raw.push_quick(&quick_row, angle_factor, torque_factor, seconds_per_unit);
            lines.pos += used;
            lines.number += 1;
        }
        match lines.next_line() {
            Some((line, number, terminated)) => row(&mut raw, line, number, terminated)?,
            None => break,
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

#[cfg(test)]
mod tests {
    /// This crate's folder as cargo names it when running the test (not as compiled in),
    /// so a test binary from a shared build cache reads this checkout's files.
    fn crate_dir() -> std::path::PathBuf {
        std::env::var_os("CARGO_MANIFEST_DIR")
            .map_or_else(|| std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")), std::path::PathBuf::from)
    }

    use super::*;
    use proptest::prelude::*;
    use twistlot_model::Manifest;

    fn layout(relative: &str) -> Layout {
        let path = crate_dir().join("../../plugins/rig-formats").join(relative);
        let text = std::fs::read_to_string(path).unwrap();
        match Manifest::from_yaml(relative, &text).unwrap() {
            Manifest::RigFormat(m) => m.layout.unwrap(),
            _ => panic!("not a layout"),
        }
    }

    fn same_either_way(layout: &Layout, text: &str) -> Result<(), TestCaseError> {
        let quick = read_layout_with("f", "x", layout, text, true);
        let general = read_layout_with("f", "x", layout, text, false);
        match (quick, general) {
            (Ok(a), Ok(b)) => {
                prop_assert_eq!(a.angle_deg, b.angle_deg);
                prop_assert_eq!(a.torque_nmm, b.torque_nmm);
                prop_assert_eq!(a.time_s, b.time_s);
                prop_assert_eq!(a.stroke, b.stroke);
                prop_assert_eq!(a.cycle, b.cycle);
            }
            (Err(a), Err(b)) => prop_assert_eq!(a, b),
            (a, b) => prop_assert!(false, "quick {:?} vs general {:?}", a.is_ok(), b.is_ok()),
        }
        Ok(())
    }

    #[test]
    fn the_lot_of_a_rejected_file_comes_from_its_metadata_lines_only() {
        let native = "# serial: S-1\n# lot: L-7\nangle_deg,torque_nmm\n0,0\n1,2x\n";
        let err = read_layout("f.csv", "native", &layout("native.yaml"), native).unwrap_err();
        assert_eq!(err.line, Some(5));
        assert_eq!(preamble_lot(&layout("native.yaml"), native).as_deref(), Some("L-7"));
        // A layout whose own label for the lot is mapped (`Batch` → lot), before its data marker.
        let ostrel =
            "OSTREL DEMO-SEMI\n\"Batch\";\"L-8\"\n[curve]\nAngle (deg);Torque (lbf·in);Dir\n0,0;1,x;+\n";
        assert!(read_layout("f.csv", "ostrel-semi", &layout("ostrel-semi.yaml"), ostrel).is_err());
        assert_eq!(preamble_lot(&layout("ostrel-semi.yaml"), ostrel).as_deref(), Some("L-8"));
        // A lot that appears only after the metadata ended is not taken.
        let late = "# serial: S-1\nangle_deg,torque_nmm\n0,0\n# lot: L-9\n1,2x\n";
        assert_eq!(preamble_lot(&layout("native.yaml"), late), None);
    }

    /// Cells a rig might write, and some it should not.
    fn cell() -> impl Strategy<Value = String> {
        prop_oneof![
            4 => (-5000.0f64..5000.0, 0usize..7).prop_map(|(v, p)| format!("{v:.p$}")),
            1 => Just(String::new()),
            1 => Just(" 12.5 ".to_string()),
            1 => Just("1e3".to_string()),
            1 => Just("\"7\"".to_string()),
            1 => Just("x".to_string()),
            1 => Just("NaN".to_string()),
        ]
    }

    proptest! {
        #[test]
        fn native_rows_read_the_same_by_both_paths(
            rows in proptest::collection::vec((cell(), cell(), cell()), 1..12),
            crlf in any::<bool>(),
            final_break in any::<bool>(),
        ) {
            let eol = if crlf { "\r\n" } else { "\n" };
            let mut text = format!("# serial: 1{eol}time_s,angle_deg,torque_nmm{eol}");
            for (i, (t, a, m)) in rows.iter().enumerate() {
                text.push_str(&format!("{t},{a},{m}"));
                if i + 1 < rows.len() || final_break {
                    text.push_str(eol);
                }
            }
            same_either_way(&layout("native.yaml"), &text)?;
        }

        #[test]
        fn free_decay_rows_without_torque_read_the_same_by_both_paths(
            rows in proptest::collection::vec((cell(), cell()), 1..12),
        ) {
            let mut text = String::from("# record: free-decay\ntime_s,angle_deg\n");
            for (t, a) in &rows {
                text.push_str(&format!("{t},{a}\n"));
            }
            let decay = layout("native-decay.yaml");
            same_either_way(&decay, &text)?;
            if let Ok(raw) = read_layout("f", "x", &decay, &text) {
                prop_assert!(raw.torque_nmm.is_empty() && raw.stroke.is_none());
                prop_assert_eq!(raw.time_s.map(|t| t.len()), Some(raw.angle_deg.len()));
            }
        }

        #[test]
        fn aligned_comma_decimal_and_labelled_rows_read_the_same(
            rows in proptest::collection::vec((cell(), cell(), 0u32..4, any::<bool>()), 1..12),
        ) {
            let mut pellam = String::from("! PELLAM DEMO-FIXED\n! TORQUE UNIT: N·cm\n");
            let mut ostrel = String::from("OSTREL DEMO-SEMI\n[curve]\nAngle (deg);Torque (lbf·in);Dir\n");
            for (i, (a, m, cycle, load)) in rows.iter().enumerate() {
                pellam.push_str(&format!("{}  0.1  {a}  {m}  {cycle}\n", i + 1));
                let dir = if *load { "+" } else { "-" };
                ostrel.push_str(&format!("{};{};{dir}\n", a.replace('.', ","), m.replace('.', ",")));
            }
            same_either_way(&layout("pellam-fixed.yaml"), &pellam)?;
            same_either_way(&layout("ostrel-semi.yaml"), &ostrel)?;
        }
    }
}
