//! Plugin manifests: one shape for every kind (DESIGN.md §5).
//!
//! A manifest is YAML with `name`, `kind`, `api` and `description`, then the
//! kind's own fields. This module parses and validates manifests from text; finding
//! the files and running exec plugins belongs to the crates that use them.
//! The `sampling-scheme` body is table data owned by the sampling crate, so here it
//! is only recognised by its header.

use crate::curve::RecordKind;
use crate::spec::CharacteristicClass;
use crate::units::{AngleUnit, TorqueUnit};
use crate::yaml::{parse_document, DocumentError};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;

/// The manifest API version this build understands.
pub const PLUGIN_API: u32 = 1;
/// The exec protocol version sent to, and required of, exec plugins.
pub const EXEC_PROTOCOL: u32 = 1;

/// Kinds of plugin.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PluginKind {
    /// Reads a rig's export layout.
    RigFormat,
    /// Adds a per-part criterion.
    Check,
    /// A sampling scheme's tables and switching rules.
    SamplingScheme,
    /// A dispatch priority for the scheduler.
    DispatchRule,
    /// Receives each decided lot's results.
    Sink,
}

impl PluginKind {
    /// The label used in manifests.
    pub fn as_str(self) -> &'static str {
        match self {
            PluginKind::RigFormat => "rig-format",
            PluginKind::Check => "check",
            PluginKind::SamplingScheme => "sampling-scheme",
            PluginKind::DispatchRule => "dispatch-rule",
            PluginKind::Sink => "sink",
        }
    }
}

impl fmt::Display for PluginKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The fields every manifest starts with.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct PluginHeader {
    /// Unique name, used on the command line (`--rig-format NAME`).
    pub name: String,
    /// Which kind of plugin.
    pub kind: PluginKind,
    /// Manifest API version.
    pub api: u32,
    /// One line on what it is for.
    pub description: String,
}

/// How to run an exec plugin: argv only, never a shell.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ExecSpec {
    /// Program and arguments; `{file}` is replaced by the input path. A program
    /// given as a relative path with a `/` is taken from the plugin's folder.
    pub command: Vec<String>,
    /// Time limit, seconds.
    #[serde(default = "default_timeout_s")]
    pub timeout_s: f64,
    /// Protocol version the program speaks.
    pub protocol: u32,
}

fn default_timeout_s() -> f64 {
    30.0
}

/// How a rig-format plugin recognises its files.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct Detect {
    /// File extensions (without dot, any case); empty means any.
    #[serde(default)]
    pub extensions: Vec<String>,
    /// Strings that must all appear in the first `within_lines` lines.
    pub contains: Vec<String>,
    /// How many leading lines are searched.
    #[serde(default = "default_within_lines")]
    pub within_lines: usize,
}

fn default_within_lines() -> usize {
    40
}

/// Text encodings a declarative layout may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum TextEncoding {
    /// UTF-8, with or without a byte-order mark.
    #[serde(rename = "utf-8", alias = "utf-8-bom")]
    Utf8,
    /// Windows code page 1252.
    #[serde(rename = "windows-1252")]
    Windows1252,
}

/// Field separators.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum Delimiter {
    /// One byte, e.g. `,` `;` `|` or tab.
    Byte(u8),
    /// Runs of spaces or tabs (aligned columns).
    Whitespace,
}

impl TryFrom<String> for Delimiter {
    type Error = String;
    fn try_from(text: String) -> Result<Self, String> {
        match text.as_str() {
            "tab" | "\t" => Ok(Delimiter::Byte(b'\t')),
            "whitespace" => Ok(Delimiter::Whitespace),
            one if one.len() == 1
                && one != "."
                && one != "-"
                && !one.as_bytes()[0].is_ascii_alphanumeric() =>
            {
                Ok(Delimiter::Byte(one.as_bytes()[0]))
            }
            other => Err(format!(
                "`{other}` is not a delimiter (use one punctuation character, `tab` or `whitespace`)"
            )),
        }
    }
}

impl From<Delimiter> for String {
    fn from(delimiter: Delimiter) -> String {
        match delimiter {
            Delimiter::Byte(b'\t') => "tab".to_string(),
            Delimiter::Byte(byte) => (byte as char).to_string(),
            Delimiter::Whitespace => "whitespace".to_string(),
        }
    }
}

/// Where a column's unit comes from.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum UnitSource {
    /// Written in the manifest.
    Fixed(String),
    /// In brackets in the header cell: `Torque [N·m]` or `Torque (N·m)`.
    Header,
    /// The value of a metadata label in the file.
    Metadata(String),
}

impl TryFrom<String> for UnitSource {
    type Error = String;
    fn try_from(text: String) -> Result<Self, String> {
        if text == "from-header" {
            Ok(UnitSource::Header)
        } else if let Some(label) = text.strip_prefix("from-metadata:") {
            Ok(UnitSource::Metadata(label.trim().to_string()))
        } else {
            Ok(UnitSource::Fixed(text))
        }
    }
}

impl From<UnitSource> for String {
    fn from(source: UnitSource) -> String {
        match source {
            UnitSource::Fixed(unit) => unit,
            UnitSource::Header => "from-header".to_string(),
            UnitSource::Metadata(label) => format!("from-metadata:{label}"),
        }
    }
}

/// Which field holds a column: by header name or by 1-based position.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct ColumnPick {
    /// Header cell text (a trailing unit in brackets is ignored when matching).
    #[serde(default)]
    pub name: Option<String>,
    /// 1-based field position.
    #[serde(default)]
    pub position: Option<usize>,
}

/// A measured column: where it is, its unit, its sign.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MeasuredColumn {
    /// Where the column is.
    #[serde(flatten)]
    pub pick: ColumnPick,
    /// Unit, or where to read it.
    pub unit: UnitSource,
    /// +1 or −1: multiplies the values (rigs that count clockwise negative).
    #[serde(default = "plus_one")]
    pub sign: f64,
}

fn plus_one() -> f64 {
    1.0
}

/// A time column.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TimeColumn {
    /// Where the column is.
    #[serde(flatten)]
    pub pick: ColumnPick,
    /// Seconds per unit of the column (0.001 for milliseconds).
    #[serde(default = "one")]
    pub seconds_per_unit: f64,
}

fn one() -> f64 {
    1.0
}

/// A stroke column with the rig's labels for the two directions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StrokeColumn {
    /// Where the column is.
    #[serde(flatten)]
    pub pick: ColumnPick,
    /// Label of the loading stroke.
    pub load: String,
    /// Label of the unloading stroke.
    pub unload: String,
}

/// Column roles of a declarative layout.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Columns {
    /// Leg angle.
    pub angle: MeasuredColumn,
    /// Torque: required for a torque curve, absent for a free decay.
    #[serde(default)]
    pub torque: Option<MeasuredColumn>,
    /// Time, when recorded.
    #[serde(default)]
    pub time: Option<TimeColumn>,
    /// Stroke, when recorded.
    #[serde(default)]
    pub stroke: Option<StrokeColumn>,
    /// Cycle number, when recorded.
    #[serde(default)]
    pub cycle: Option<ColumnPick>,
}

/// How metadata lines are read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MetadataRule {
    /// Prefix that marks a metadata line (stripped before reading), e.g. `#`.
    #[serde(default)]
    pub prefix: Option<String>,
    /// Separator between label and value, e.g. `:` or `=`.
    pub separator: String,
    /// Export label → twistlot key (`serial`, `part`, `lot`, `rig`, `operator`,
    /// `started`); labels not listed are kept under their own name.
    #[serde(default)]
    pub keys: BTreeMap<String, String>,
}

/// A declarative export layout.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Layout {
    /// Text encoding.
    pub encoding: TextEncoding,
    /// Field separator.
    pub delimiter: Delimiter,
    /// Decimal separator, `.` or `,`.
    pub decimal: char,
    /// Metadata lines before the data.
    #[serde(default)]
    pub metadata: Option<MetadataRule>,
    /// A line that ends the preamble; the header (or data) follows it.
    #[serde(default)]
    pub data_marker: Option<String>,
    /// Whether a header row names the columns.
    #[serde(default = "yes")]
    pub header: bool,
    /// Lines to skip after the header (a units row, say).
    #[serde(default)]
    pub skip_after_header: usize,
    /// Column roles.
    pub columns: Columns,
}

fn yes() -> bool {
    true
}

/// A `rig-format` plugin.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RigFormatManifest {
    /// Name.
    pub name: String,
    /// Always `rig-format`.
    pub kind: PluginKind,
    /// API version.
    pub api: u32,
    /// Description.
    pub description: String,
    /// Which kind of record the format's files hold (default `torque-curve`; `free-decay`
    /// for swing exports: a time and an angle column, no torque, stroke or cycle column).
    #[serde(default)]
    pub record: RecordKind,
    /// How files of this format are recognised.
    pub detect: Detect,
    /// The declarative layout (give this or `exec`).
    #[serde(default)]
    pub layout: Option<Layout>,
    /// A converter that prints the native format (give this or `layout`).
    #[serde(default)]
    pub exec: Option<ExecSpec>,
}

/// A `check` plugin: an extra criterion as a minijinja expression.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CheckManifest {
    /// Name (used as the characteristic's name in findings).
    pub name: String,
    /// Always `check`.
    pub kind: PluginKind,
    /// API version.
    pub api: u32,
    /// Description.
    pub description: String,
    /// Part numbers it applies to; empty means every part.
    #[serde(default)]
    pub parts: Vec<String>,
    /// Expression over `metrics` and `spec` that is true when the part passes.
    pub expression: String,
    /// Message given when it fails.
    pub message: String,
    /// Class of the criterion.
    pub class: CharacteristicClass,
}

/// A `dispatch-rule` plugin.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DispatchRuleManifest {
    /// Name.
    pub name: String,
    /// Always `dispatch-rule`.
    pub kind: PluginKind,
    /// API version.
    pub api: u32,
    /// Description.
    pub description: String,
    /// Expression over the lot's fields giving a priority (higher goes first).
    pub expression: String,
}

/// A `sink` plugin: an exec program that receives each lot's results as JSON.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SinkManifest {
    /// Name.
    pub name: String,
    /// Always `sink`.
    pub kind: PluginKind,
    /// API version.
    pub api: u32,
    /// Description.
    pub description: String,
    /// The program.
    pub exec: ExecSpec,
}

/// A parsed manifest of any kind.
#[derive(Debug, Clone, PartialEq)]
pub enum Manifest {
    /// A rig format.
    RigFormat(Box<RigFormatManifest>),
    /// A check.
    Check(CheckManifest),
    /// A sampling scheme: header only; the sampling crate reads the body.
    SamplingScheme(PluginHeader),
    /// A dispatch rule.
    DispatchRule(DispatchRuleManifest),
    /// A sink.
    Sink(SinkManifest),
}

impl Manifest {
    /// Parses and validates a manifest; `origin` names the file in errors.
    pub fn from_yaml(origin: &str, text: &str) -> Result<Manifest, DocumentError> {
        #[derive(Deserialize)]
        struct Probe {
            name: String,
            kind: PluginKind,
            api: u32,
            description: String,
        }
        let probe: Probe = parse_document(origin, text)?;
        if probe.api != PLUGIN_API {
            return Err(DocumentError::at_field(
                origin,
                text,
                "api",
                format!("api {} is not understood by this twistlot (it reads api {PLUGIN_API})", probe.api),
            ));
        }
        if probe.name.trim().is_empty() || probe.name.contains(char::is_whitespace) {
            return Err(DocumentError::at_field(origin, text, "name", "a plugin name must be one word"));
        }
        let manifest = match probe.kind {
            PluginKind::RigFormat => {
                let m: RigFormatManifest = parse_document(origin, text)?;
                validate_rig_format(origin, text, &m)?;
                Manifest::RigFormat(Box::new(m))
            }
            PluginKind::Check => Manifest::Check(parse_document(origin, text)?),
            PluginKind::DispatchRule => Manifest::DispatchRule(parse_document(origin, text)?),
            PluginKind::Sink => {
                let m: SinkManifest = parse_document(origin, text)?;
                validate_exec(origin, text, "exec", &m.exec)?;
                Manifest::Sink(m)
            }
            PluginKind::SamplingScheme => Manifest::SamplingScheme(PluginHeader {
                name: probe.name.clone(),
                kind: probe.kind,
                api: probe.api,
                description: probe.description.clone(),
            }),
        };
        Ok(manifest)
    }

    /// The common header.
    pub fn header(&self) -> PluginHeader {
        let make = |name: &str, kind, api, description: &str| PluginHeader {
            name: name.to_string(),
            kind,
            api,
            description: description.to_string(),
        };
        match self {
            Manifest::RigFormat(m) => make(&m.name, m.kind, m.api, &m.description),
            Manifest::Check(m) => make(&m.name, m.kind, m.api, &m.description),
            Manifest::SamplingScheme(h) => h.clone(),
            Manifest::DispatchRule(m) => make(&m.name, m.kind, m.api, &m.description),
            Manifest::Sink(m) => make(&m.name, m.kind, m.api, &m.description),
        }
    }
}

fn validate_exec(origin: &str, text: &str, field: &str, exec: &ExecSpec) -> Result<(), DocumentError> {
    if exec.command.is_empty() || exec.command[0].trim().is_empty() {
        return Err(DocumentError::at_field(
            origin,
            text,
            &format!("{field}.command"),
            "name the program to run",
        ));
    }
    if exec.protocol != EXEC_PROTOCOL {
        return Err(DocumentError::at_field(
            origin,
            text,
            &format!("{field}.protocol"),
            format!(
                "exec protocol {} is not spoken by this twistlot (it speaks {EXEC_PROTOCOL})",
                exec.protocol
            ),
        ));
    }
    if !(exec.timeout_s.is_finite() && exec.timeout_s > 0.0) {
        return Err(DocumentError::at_field(
            origin,
            text,
            &format!("{field}.timeout_s"),
            "the time limit must be positive",
        ));
    }
    Ok(())
}

fn validate_rig_format(origin: &str, text: &str, m: &RigFormatManifest) -> Result<(), DocumentError> {
    let fail = |field: &str, message: String| Err(DocumentError::at_field(origin, text, field, message));
    if m.detect.contains.is_empty() && m.detect.extensions.is_empty() {
        return fail(
            "detect",
            "give at least one `contains` string or extension to recognise files by".into(),
        );
    }
    match (&m.layout, &m.exec) {
        (Some(_), Some(_)) => return fail("exec", "give `layout` or `exec`, not both".into()),
        (None, None) => return fail("layout", "give a `layout` or an `exec` converter".into()),
        (None, Some(exec)) => return validate_exec(origin, text, "exec", exec),
        (Some(layout), None) => {
            if layout.decimal != '.' && layout.decimal != ',' {
                return fail(
                    "layout.decimal",
                    format!("`{}` is not a decimal separator (`.` or `,`)", layout.decimal),
                );
            }
            if layout.decimal == ',' && layout.delimiter == Delimiter::Byte(b',') {
                return fail(
                    "layout.delimiter",
                    "a comma cannot be both the delimiter and the decimal separator".into(),
                );
            }
            let columns = &layout.columns;
            validate_record_columns(m.record, columns).or_else(|(field, message)| fail(field, message))?;
            let mut picks: Vec<(&str, &ColumnPick)> = vec![("layout.columns.angle", &columns.angle.pick)];
            if let Some(torque) = &columns.torque {
                picks.push(("layout.columns.torque", &torque.pick));
            }
            if let Some(time) = &columns.time {
                picks.push(("layout.columns.time", &time.pick));
            }
            if let Some(stroke) = &columns.stroke {
                picks.push(("layout.columns.stroke", &stroke.pick));
            }
            if let Some(cycle) = &columns.cycle {
                picks.push(("layout.columns.cycle", cycle));
            }
            for (field, pick) in picks {
                match (&pick.name, pick.position) {
                    (Some(_), Some(_)) => return fail(field, "give `name` or `position`, not both".into()),
                    (None, None) => return fail(field, "give the column's `name` or `position`".into()),
                    (Some(_), None) if !layout.header => {
                        return fail(
                            field,
                            "a column is picked by name but the layout has no header row".into(),
                        )
                    }
                    (None, Some(0)) => return fail(field, "positions count from 1".into()),
                    _ => {}
                }
            }
            let measured = std::iter::once(("layout.columns.angle", &columns.angle))
                .chain(columns.torque.as_ref().map(|t| ("layout.columns.torque", t)));
            for (field, column) in measured {
                if column.sign != 1.0 && column.sign != -1.0 {
                    return fail(
                        &format!("{field}.sign"),
                        format!("sign must be 1 or -1, found {}", column.sign),
                    );
                }
                if column.unit == UnitSource::Header && !layout.header {
                    return fail(
                        &format!("{field}.unit"),
                        "the unit is read from a header the layout does not have".into(),
                    );
                }
            }
            if let UnitSource::Fixed(unit) = &columns.angle.unit {
                if let Err(err) = unit.parse::<AngleUnit>() {
                    return fail("layout.columns.angle.unit", err.to_string());
                }
            }
            if let Some(UnitSource::Fixed(unit)) = columns.torque.as_ref().map(|t| &t.unit) {
                if let Err(err) = unit.parse::<TorqueUnit>() {
                    return fail("layout.columns.torque.unit", err.to_string());
                }
            }
            if let Some(rule) = &layout.metadata {
                if rule.separator.is_empty() {
                    return fail("layout.metadata.separator", "the separator cannot be empty".into());
                }
                if layout.data_marker.is_none() && rule.prefix.is_none() {
                    return fail(
                        "layout.metadata",
                        "metadata lines need a `prefix`, or the layout a `data_marker` that ends them".into(),
                    );
                }
            }
        }
    }
    Ok(())
}

/// The columns a record kind needs and forbids; `Err` names the field and what to do.
fn validate_record_columns(record: RecordKind, columns: &Columns) -> Result<(), (&'static str, String)> {
    match record {
        RecordKind::TorqueCurve if columns.torque.is_none() => Err((
            "layout.columns",
            "a torque-curve format needs a `torque` column (or say `record: free-decay` for swing exports)"
                .into(),
        )),
        RecordKind::TorqueCurve => Ok(()),
        RecordKind::FreeDecay => {
            if columns.time.is_none() {
                return Err(("layout.columns", "a free-decay format needs a `time` column".into()));
            }
            // A free decay is one record of angle over time: no torque, and never split into strokes.
            let forbidden = [
                ("layout.columns.torque", columns.torque.is_some(), "a free-decay record has no torque"),
                (
                    "layout.columns.stroke",
                    columns.stroke.is_some(),
                    "a free decay is never split into strokes",
                ),
                ("layout.columns.cycle", columns.cycle.is_some(), "a free decay has no load cycles"),
            ];
            match forbidden.into_iter().find(|(_, present, _)| *present) {
                Some((field, _, why)) => Err((field, format!("{why}; remove this column from the layout"))),
                None => Ok(()),
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const NATIVE: &str = r##"
name: native
kind: rig-format
api: 1
description: twistlot's own export
detect:
  contains: ["angle_deg", "torque_nmm"]
layout:
  encoding: utf-8
  delimiter: ","
  decimal: "."
  metadata: { prefix: "#", separator: ":" }
  columns:
    angle: { name: angle_deg, unit: deg }
    torque: { name: torque_nmm, unit: N·mm }
"##;

    #[test]
    fn a_layout_manifest_loads() {
        let Manifest::RigFormat(m) = Manifest::from_yaml("native.yaml", NATIVE).unwrap() else {
            panic!("not a rig format");
        };
        let layout = m.layout.as_ref().unwrap();
        assert_eq!(layout.delimiter, Delimiter::Byte(b','));
        assert_eq!(layout.columns.angle.sign, 1.0);
        assert_eq!(m.detect.within_lines, 40);
    }

    const DECAY: &str = r##"
name: swing
kind: rig-format
api: 1
description: a swing bench's export
record: free-decay
detect:
  contains: ["record: free-decay"]
layout:
  encoding: utf-8
  delimiter: ","
  decimal: "."
  metadata: { prefix: "#", separator: ":" }
  columns:
    time: { name: time_s }
    angle: { name: angle_deg, unit: deg }
"##;

    #[test]
    fn the_record_kind_defaults_to_a_torque_curve_and_free_decay_needs_time_and_no_torque() {
        let Manifest::RigFormat(native) = Manifest::from_yaml("native.yaml", NATIVE).unwrap() else {
            panic!("not a rig format");
        };
        assert_eq!(native.record, RecordKind::TorqueCurve);
        let Manifest::RigFormat(decay) = Manifest::from_yaml("swing.yaml", DECAY).unwrap() else {
            panic!("not a rig format");
        };
        assert_eq!(decay.record, RecordKind::FreeDecay);
        assert!(decay.layout.unwrap().columns.torque.is_none());

        let no_time = DECAY.replace("    time: { name: time_s }\n", "");
        let err = Manifest::from_yaml("swing.yaml", &no_time).unwrap_err();
        assert!(err.message.contains("`time` column"), "{err}");
        let with_torque = DECAY.replace("    time:", "    torque: { name: t, unit: N·mm }\n    time:");
        let err = Manifest::from_yaml("swing.yaml", &with_torque).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("layout.columns.torque"), "{err}");
        let with_stroke =
            DECAY.replace("    time:", "    stroke: { name: d, load: a, unload: b }\n    time:");
        let err = Manifest::from_yaml("swing.yaml", &with_stroke).unwrap_err();
        assert!(err.message.contains("never split into strokes"), "{err}");
        let no_torque = NATIVE.replace("    torque: { name: torque_nmm, unit: N·mm }\n", "");
        let err = Manifest::from_yaml("native.yaml", &no_torque).unwrap_err();
        assert!(err.message.contains("needs a `torque` column"), "{err}");
        let unknown = DECAY.replace("record: free-decay", "record: pendulum");
        assert!(Manifest::from_yaml("swing.yaml", &unknown).unwrap_err().to_string().contains("pendulum"));
    }

    #[test]
    fn unknown_units_name_the_line_and_field() {
        let text = NATIVE.replace("unit: N·mm", "unit: N·parsec");
        let err = Manifest::from_yaml("native.yaml", &text).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("layout.columns.torque.unit"));
        let line = text.lines().position(|l| l.contains("parsec")).unwrap() + 1;
        assert_eq!(err.line, Some(line));
        assert!(err.message.contains("N·parsec"));
    }

    #[test]
    fn misspelt_fields_are_refused() {
        let text = NATIVE.replace("decimal:", "decimals:");
        let err = Manifest::from_yaml("native.yaml", &text).unwrap_err();
        assert!(err.to_string().contains("decimals"), "{err}");
        assert!(err.line.is_some());
    }

    #[test]
    fn newer_api_is_refused() {
        let text = NATIVE.replace("api: 1", "api: 7");
        let err = Manifest::from_yaml("native.yaml", &text).unwrap_err();
        assert_eq!(err.line, Some(4));
        assert!(err.message.contains("api 7"));
    }

    #[test]
    fn comma_cannot_be_both_delimiter_and_decimal() {
        let text = NATIVE.replace("decimal: \".\"", "decimal: \",\"");
        let err = Manifest::from_yaml("native.yaml", &text).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("layout.delimiter"));
    }

    #[test]
    fn exec_manifests_need_a_protocol_they_speak() {
        let text = "name: conv\nkind: rig-format\napi: 1\ndescription: d\ndetect: { extensions: [dat], contains: [] }\nexec:\n  command: [python3, conv.py, \"{file}\"]\n  protocol: 3\n";
        let err = Manifest::from_yaml("conv.yaml", text).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("exec.protocol"));
        assert_eq!(err.line, Some(8));
    }

    #[test]
    fn unknown_kind_is_refused_with_its_line() {
        let err =
            Manifest::from_yaml("x.yaml", "name: x\nkind: teleporter\napi: 1\ndescription: d\n").unwrap_err();
        assert!(err.message.contains("teleporter"), "{err}");
        assert_eq!(err.line, Some(2));
    }
}
