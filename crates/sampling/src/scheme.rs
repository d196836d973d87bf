//! Sampling-scheme plugins: code letters, master tables and switching parameters as data.
//!
//! The tables live in a YAML file (`plugins/sampling-schemes/mil-std-105e.yaml`) rather
//! than in code so a plant can ship its own scheme in the same shape; this module only
//! reads, validates and looks them up.

use crate::switching::LimitNumbers;
use crate::SamplingError;
use serde::de::{MapAccess, Visitor};
use serde::{Deserialize, Deserializer, Serialize};
use std::fmt;
use std::str::FromStr;
use twistlot_model::plugin::{PluginKind, PLUGIN_API};
use twistlot_model::yaml::parse_document;
use twistlot_model::DocumentError;

/// The shipped MIL-STD-105E scheme file, as text.
pub fn shipped_mil_std_105e_text() -> &'static str {
    include_str!("../../../plugins/sampling-schemes/mil-std-105e.yaml")
}

pub use twistlot_model::{AttributePlan, Severity};

/// Inspection level of Table I.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub enum InspectionLevel {
    /// Special level S-1.
    S1,
    /// Special level S-2.
    S2,
    /// Special level S-3.
    S3,
    /// Special level S-4.
    S4,
    /// General level I.
    I,
    /// General level II (the usual one).
    II,
    /// General level III.
    III,
}

impl InspectionLevel {
    /// The label used in the standard and in part specs.
    pub fn as_str(self) -> &'static str {
        match self {
            InspectionLevel::S1 => "S-1",
            InspectionLevel::S2 => "S-2",
            InspectionLevel::S3 => "S-3",
            InspectionLevel::S4 => "S-4",
            InspectionLevel::I => "I",
            InspectionLevel::II => "II",
            InspectionLevel::III => "III",
        }
    }
}

impl fmt::Display for InspectionLevel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for InspectionLevel {
    type Err = SamplingError;
    fn from_str(text: &str) -> Result<Self, SamplingError> {
        let compact: String = text.trim().to_ascii_uppercase().chars().filter(|c| *c != ' ').collect();
        match compact.as_str() {
            "S-1" | "S1" => Ok(InspectionLevel::S1),
            "S-2" | "S2" => Ok(InspectionLevel::S2),
            "S-3" | "S3" => Ok(InspectionLevel::S3),
            "S-4" | "S4" => Ok(InspectionLevel::S4),
            "I" | "1" => Ok(InspectionLevel::I),
            "II" | "2" => Ok(InspectionLevel::II),
            "III" | "3" => Ok(InspectionLevel::III),
            _ => Err(SamplingError::UnknownLevel(text.to_string())),
        }
    }
}

impl TryFrom<String> for InspectionLevel {
    type Error = SamplingError;
    fn try_from(text: String) -> Result<Self, SamplingError> {
        text.parse()
    }
}

impl From<InspectionLevel> for String {
    fn from(level: InspectionLevel) -> String {
        level.as_str().to_string()
    }
}

/// One cell of a master table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cell {
    /// A plan: acceptance and rejection numbers.
    Plan {
        /// Acceptance number.
        accept: u64,
        /// Rejection number.
        reject: u64,
    },
    /// Use the first plan above in this column.
    Up,
    /// Use the first plan below in this column.
    Down,
}

impl FromStr for Cell {
    type Err = String;
    fn from_str(text: &str) -> Result<Self, String> {
        let text = text.trim();
        match text {
            "up" | "↑" => return Ok(Cell::Up),
            "down" | "↓" => return Ok(Cell::Down),
            _ => {}
        }
        let bad = || format!("`{text}` is not a cell (write `Ac/Re` such as `1/2`, `up` or `down`)");
        let (accept, reject) = text.split_once('/').ok_or_else(bad)?;
        let accept: u64 = accept.trim().parse().map_err(|_| bad())?;
        let reject: u64 = reject.trim().parse().map_err(|_| bad())?;
        if reject <= accept {
            return Err(format!("in `{text}` the rejection number must exceed the acceptance number"));
        }
        Ok(Cell::Plan { accept, reject })
    }
}

/// A master table: rows by code letter (top to bottom), one cell per AQL.
#[derive(Debug, Clone, PartialEq)]
pub struct MasterTable {
    /// Code letters with their sample sizes, top to bottom.
    pub rows: Vec<(String, u64)>,
    /// `cells[row][aql_index]`.
    pub cells: Vec<Vec<Cell>>,
}

impl MasterTable {
    fn row_of(&self, letter: &str) -> Option<usize> {
        self.rows.iter().position(|(l, _)| l == letter)
    }

    /// Follows arrows from (`row`, `column`) to a plan: (row reached, accept, reject).
    fn resolve(&self, mut row: usize, column: usize) -> Option<(usize, u64, u64)> {
        // Each step moves one row the same way, so the walk ends within rows.len() steps.
        for _ in 0..=self.rows.len() {
            match self.cells.get(row)?.get(column)? {
                Cell::Plan { accept, reject } => return Some((row, *accept, *reject)),
                Cell::Up => row = row.checked_sub(1)?,
                Cell::Down => row += 1,
            }
        }
        None
    }
}

/// Switching parameters of the scheme (MIL-STD-105E §8.3).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SwitchingRules {
    /// Normal → tightened when this many lots are rejected …
    pub tightened_after_rejected: u32,
    /// … within this many consecutive lots.
    pub tightened_within_lots: u32,
    /// Tightened → normal after this many consecutive accepted lots.
    pub normal_after_accepted: u32,
    /// Normal → reduced after this many consecutive accepted lots (plus the other conditions).
    pub reduced_after_accepted: u32,
    /// Limit numbers for the switch to reduced (MIL-STD-105E Table VIII).
    pub limit_numbers: LimitNumbers,
    /// Discontinue when this many lots in a row of tightened inspection were not accepted.
    pub discontinue_after_rejected_on_tightened: u32,
}

/// The switching section as written in the scheme file.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSwitching {
    tightened_after_rejected: u32,
    tightened_within_lots: u32,
    normal_after_accepted: u32,
    reduced_after_accepted: u32,
    limit_numbers: Ordered<String>,
    discontinue_after_rejected_on_tightened: u32,
}

/// A loaded, validated sampling scheme.
#[derive(Debug, Clone, PartialEq)]
pub struct Scheme {
    /// Plugin name.
    pub name: String,
    /// One line on what it is for.
    pub description: String,
    /// Where the scheme was read from.
    pub origin: String,
    /// The AQL series, percent, ascending.
    pub aql_series_pct: Vec<f64>,
    /// Levels in the order of the code-letter rows' columns.
    pub levels: Vec<InspectionLevel>,
    /// Code-letter rows: upper lot size (None = no upper end) and a letter per level.
    pub code_letters: Vec<(Option<u64>, Vec<String>)>,
    /// Normal inspection table.
    pub normal: MasterTable,
    /// Tightened inspection table.
    pub tightened: MasterTable,
    /// Reduced inspection table.
    pub reduced: MasterTable,
    /// Switching parameters.
    pub switching: SwitchingRules,
}

/// A YAML map read as a list of entries in file order (the grid's row order matters).
#[derive(Debug, Clone)]
struct Ordered<V>(Vec<(String, V)>);

impl<'de, V: Deserialize<'de>> Deserialize<'de> for Ordered<V> {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct OrderedVisitor<V>(std::marker::PhantomData<V>);
        impl<'de, V: Deserialize<'de>> Visitor<'de> for OrderedVisitor<V> {
            type Value = Ordered<V>;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a map keyed by code letter")
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Self::Value, A::Error> {
                let mut out = Vec::new();
                while let Some((key, value)) = map.next_entry::<String, V>()? {
                    out.push((key, value));
                }
                Ok(Ordered(out))
            }
        }
        deserializer.deserialize_map(OrderedVisitor(std::marker::PhantomData))
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawScheme {
    name: String,
    kind: PluginKind,
    api: u32,
    description: String,
    aql_series_pct: Vec<f64>,
    levels: Vec<String>,
    code_letters: Vec<RawLetterRow>,
    tables: RawTables,
    switching: RawSwitching,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawLetterRow {
    lot_max: Option<u64>,
    letters: Vec<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTables {
    normal: RawTable,
    tightened: RawTable,
    reduced: RawTable,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTable {
    sample_sizes: Ordered<u64>,
    grid: Ordered<Vec<String>>,
}

impl Scheme {
    /// The MIL-STD-105E scheme shipped with twistlot.
    pub fn shipped() -> Result<Scheme, SamplingError> {
        Scheme::from_yaml("plugins/sampling-schemes/mil-std-105e.yaml", shipped_mil_std_105e_text())
    }

    /// Reads and validates a scheme; `origin` names the file in errors.
    pub fn from_yaml(origin: &str, text: &str) -> Result<Scheme, SamplingError> {
        let raw: RawScheme = parse_document(origin, text)?;
        let fail = |field: &str, message: String| -> SamplingError {
            SamplingError::Document(DocumentError::at_field(origin, text, field, message))
        };
        if raw.kind != PluginKind::SamplingScheme {
            return Err(fail("kind", format!("this is a `{}` plugin, not a sampling scheme", raw.kind)));
        }
        if raw.api != PLUGIN_API {
            return Err(fail(
                "api",
                format!("api {} is not understood (this twistlot reads api {PLUGIN_API})", raw.api),
            ));
        }
        if raw.name.trim().is_empty() || raw.name.contains(char::is_whitespace) {
            return Err(fail("name", "a plugin name must be one word".into()));
        }

        let aqls = raw.aql_series_pct;
        if aqls.is_empty() {
            return Err(fail("aql_series_pct", "list at least one AQL".into()));
        }
        if aqls.iter().any(|a| !(a.is_finite() && *a > 0.0)) || aqls.windows(2).any(|w| w[0] >= w[1]) {
            return Err(fail("aql_series_pct", "AQLs must be positive and strictly ascending".into()));
        }

        let mut levels = Vec::new();
        for level in &raw.levels {
            let parsed: InspectionLevel =
                level.parse().map_err(|e: SamplingError| fail("levels", e.to_string()))?;
            if levels.contains(&parsed) {
                return Err(fail("levels", format!("level {parsed} is listed twice")));
            }
            levels.push(parsed);
        }

        let mut tables = Vec::new();
        for (label, table) in [
            ("normal", raw.tables.normal),
            ("tightened", raw.tables.tightened),
            ("reduced", raw.tables.reduced),
        ] {
            tables.push(build_table(label, table, aqls.len()).map_err(|(f, m)| fail(&f, m))?);
        }
        let reduced = tables.pop().ok_or_else(|| fail("tables", "missing table".into()))?;
        let tightened = tables.pop().ok_or_else(|| fail("tables", "missing table".into()))?;
        let normal = tables.pop().ok_or_else(|| fail("tables", "missing table".into()))?;

        if raw.code_letters.is_empty() {
            return Err(fail("code_letters", "give at least one row".into()));
        }
        let mut previous_max = 0u64;
        let mut previous_rows: Option<Vec<usize>> = None;
        let mut code_letters = Vec::new();
        for (index, row) in raw.code_letters.iter().enumerate() {
            let last = index + 1 == raw.code_letters.len();
            match row.lot_max {
                None if !last => {
                    return Err(fail(
                        "code_letters",
                        format!("row {} has no `lot_max` but is not the last", index + 1),
                    ))
                }
                Some(_) if last => {
                    return Err(fail(
                        "code_letters",
                        "the last row must have `lot_max: null` (no upper end)".into(),
                    ))
                }
                Some(max) if max <= previous_max => {
                    return Err(fail(
                        "code_letters",
                        format!("row {}: `lot_max` {max} must exceed {previous_max}", index + 1),
                    ))
                }
                _ => {}
            }
            previous_max = row.lot_max.unwrap_or(u64::MAX);
            if row.letters.len() != levels.len() {
                return Err(fail(
                    "code_letters",
                    format!(
                        "row {} has {} letters for {} levels",
                        index + 1,
                        row.letters.len(),
                        levels.len()
                    ),
                ));
            }
            let mut positions = Vec::new();
            for letter in &row.letters {
                for (label, table) in [("normal", &normal), ("tightened", &tightened), ("reduced", &reduced)]
                {
                    if table.row_of(letter).is_none() {
                        return Err(fail(
                            &format!("tables.{label}.sample_sizes"),
                            format!(
                                "code letter {letter} (row {} of code_letters) has no row here",
                                index + 1
                            ),
                        ));
                    }
                }
                positions.push(normal.row_of(letter).unwrap_or(0));
            }
            if let Some(prev) = &previous_rows {
                if prev.iter().zip(&positions).any(|(a, b)| b < a) {
                    return Err(fail(
                        "code_letters",
                        format!("row {}: a larger lot must not get an earlier code letter", index + 1),
                    ));
                }
            }
            previous_rows = Some(positions);
            code_letters.push((row.lot_max, row.letters.clone()));
        }

        let s = &raw.switching;
        if s.tightened_after_rejected == 0
            || s.tightened_within_lots < s.tightened_after_rejected
            || s.normal_after_accepted == 0
            || s.reduced_after_accepted == 0
            || s.discontinue_after_rejected_on_tightened == 0
        {
            return Err(fail(
                "switching",
                "counts must be positive and `tightened_within_lots` at least `tightened_after_rejected`"
                    .into(),
            ));
        }
        let limit_numbers = LimitNumbers::from_rows(&aqls, &s.limit_numbers.0)
            .map_err(|message| fail("switching.limit_numbers", message))?;
        let switching = SwitchingRules {
            tightened_after_rejected: s.tightened_after_rejected,
            tightened_within_lots: s.tightened_within_lots,
            normal_after_accepted: s.normal_after_accepted,
            reduced_after_accepted: s.reduced_after_accepted,
            limit_numbers,
            discontinue_after_rejected_on_tightened: s.discontinue_after_rejected_on_tightened,
        };

        Ok(Scheme {
            name: raw.name,
            description: raw.description,
            origin: origin.to_string(),
            aql_series_pct: aqls,
            levels,
            code_letters,
            normal,
            tightened,
            reduced,
            switching,
        })
    }

    /// The master table for a severity.
    pub fn table(&self, severity: Severity) -> &MasterTable {
        match severity {
            Severity::Normal => &self.normal,
            Severity::Tightened => &self.tightened,
            Severity::Reduced => &self.reduced,
        }
    }

    /// Table I: the sample size code letter for a lot.
    pub fn code_letter(&self, lot_size: u64, level: InspectionLevel) -> Result<String, SamplingError> {
        if lot_size == 0 {
            return Err(SamplingError::EmptyLot);
        }
        let column = self
            .levels
            .iter()
            .position(|l| *l == level)
            .ok_or_else(|| SamplingError::LevelNotInScheme(level.to_string(), self.name.clone()))?;
        let row = self
            .code_letters
            .iter()
            .find(|(max, _)| max.is_none_or(|max| lot_size <= max))
            .ok_or(SamplingError::EmptyLot)?;
        Ok(row.1[column].clone())
    }

    /// Index of an AQL in the series (relative tolerance 1e-9).
    pub fn aql_index(&self, aql_pct: f64) -> Result<usize, SamplingError> {
        self.aql_series_pct
            .iter()
            .position(|a| (a - aql_pct).abs() <= 1e-9 * a.max(aql_pct.abs()))
            .ok_or_else(|| SamplingError::AqlNotInSeries(aql_pct, self.name.clone()))
    }

    /// The plan for a lot: code letter from Table I, then the severity's table, following arrows.
    pub fn plan(
        &self,
        lot_size: u64,
        level: InspectionLevel,
        aql_pct: f64,
        severity: Severity,
    ) -> Result<AttributePlan, SamplingError> {
        let letter = self.code_letter(lot_size, level)?;
        self.plan_for_letter(&letter, lot_size, aql_pct, severity)
    }

    /// The plan starting from a given code letter (Table I already applied).
    pub fn plan_for_letter(
        &self,
        letter: &str,
        lot_size: u64,
        aql_pct: f64,
        severity: Severity,
    ) -> Result<AttributePlan, SamplingError> {
        if lot_size == 0 {
            return Err(SamplingError::EmptyLot);
        }
        let column = self.aql_index(aql_pct)?;
        let table = self.table(severity);
        let start = table.row_of(letter).ok_or_else(|| SamplingError::UnknownLetter(letter.to_string()))?;
        // Validation guarantees every arrow reaches a plan; the error is for safety only.
        let (row, accept, reject) =
            table.resolve(start, column).ok_or_else(|| SamplingError::UnknownLetter(letter.to_string()))?;
        let (code_letter, table_n) = table.rows[row].clone();
        let hundred_percent = table_n >= lot_size;
        Ok(AttributePlan {
            code_letter,
            lot_size_letter: Some(letter.to_string()),
            sample_size: table_n.min(lot_size),
            accept,
            reject,
            severity,
            hundred_percent,
        })
    }
}

fn build_table(label: &str, raw: RawTable, columns: usize) -> Result<MasterTable, (String, String)> {
    let field = |sub: &str| format!("tables.{label}.{sub}");
    let rows = raw.sample_sizes.0;
    if rows.is_empty() {
        return Err((field("sample_sizes"), "list at least one code letter".into()));
    }
    for window in rows.windows(2) {
        if window[1].1 < window[0].1 {
            return Err((
                field("sample_sizes"),
                format!(
                    "sample sizes must not shrink down the table ({} after {})",
                    window[1].0, window[0].0
                ),
            ));
        }
    }
    if rows.iter().any(|(_, n)| *n == 0) {
        return Err((field("sample_sizes"), "sample sizes must be positive".into()));
    }
    let grid = raw.grid.0;
    if grid.len() != rows.len() || grid.iter().zip(&rows).any(|((g, _), (r, _))| g != r) {
        return Err((
            field("grid"),
            "the grid must have one row per code letter, in the order of `sample_sizes`".into(),
        ));
    }
    let mut cells = Vec::new();
    for (letter, texts) in &grid {
        if texts.len() != columns {
            return Err((
                field(&format!("grid.{letter}")),
                format!("row {letter} has {} cells for {columns} AQLs", texts.len()),
            ));
        }
        let row: Vec<Cell> = texts
            .iter()
            .map(|t| t.parse::<Cell>())
            .collect::<Result<_, _>>()
            .map_err(|m| (field(&format!("grid.{letter}")), format!("row {letter}: {m}")))?;
        cells.push(row);
    }
    let table = MasterTable { rows, cells };
    // Every arrow must land on a plan, and plans must not loosen against the grain:
    // along a row (larger AQL) and down a column (larger sample) Ac never falls.
    for r in 0..table.rows.len() {
        let letter = &table.rows[r].0;
        let mut last_accept = None;
        for c in 0..columns {
            if table.resolve(r, c).is_none() {
                return Err((
                    field(&format!("grid.{letter}")),
                    format!("row {letter}, AQL column {}: the arrow leads off the grid", c + 1),
                ));
            }
            if let Cell::Plan { accept, .. } = table.cells[r][c] {
                if last_accept.is_some_and(|a| accept < a) {
                    return Err((
                        field(&format!("grid.{letter}")),
                        format!("row {letter}: acceptance numbers must not fall as the AQL grows"),
                    ));
                }
                last_accept = Some(accept);
            }
        }
    }
    for c in 0..columns {
        let mut last_accept = None;
        for r in 0..table.rows.len() {
            if let Cell::Plan { accept, .. } = table.cells[r][c] {
                if last_accept.is_some_and(|a| accept < a) {
                    return Err((
                        field("grid"),
                        format!("AQL column {}: acceptance numbers must not fall down the table", c + 1),
                    ));
                }
                last_accept = Some(accept);
            }
        }
    }
    Ok(table)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use InspectionLevel::*;
    use Severity::*;

    fn scheme() -> Scheme {
        Scheme::shipped().unwrap()
    }

    fn cell(letter: &str, aql: f64, severity: Severity) -> (String, u64, u64, u64) {
        // A lot far larger than any sample, so no 100% inspection interferes.
        let p = scheme().plan_for_letter(letter, 10_000_000, aql, severity).unwrap();
        assert!(!p.hundred_percent);
        (p.code_letter, p.sample_size, p.accept, p.reject)
    }

    fn t(letter: &str, n: u64, ac: u64, re: u64) -> (String, u64, u64, u64) {
        (letter.to_string(), n, ac, re)
    }

    #[test]
    fn shipped_scheme_loads() {
        let s = scheme();
        assert_eq!(s.name, "mil-std-105e");
        assert_eq!(s.aql_series_pct.len(), 26);
        assert_eq!(s.normal.rows.len(), 16);
        assert_eq!(s.switching.normal_after_accepted, 5);
    }

    #[test]
    fn table_one_code_letters() {
        let s = scheme();
        // Source: MIL-STD-105E Table I, lot 501–1200, level II: J
        assert_eq!(s.code_letter(1000, II).unwrap(), "J");
        // Source: MIL-STD-105E Table I, lot 2–8, level III: B
        assert_eq!(s.code_letter(5, III).unwrap(), "B");
        // Source: MIL-STD-105E Table I, lot 1201–3200, level II: K
        assert_eq!(s.code_letter(2000, II).unwrap(), "K");
        // Source: MIL-STD-105E Table I, lot 3201–10000, level I: J
        assert_eq!(s.code_letter(3201, I).unwrap(), "J");
        // Source: MIL-STD-105E Table I, lot 281–500, level S-4: E
        assert_eq!(s.code_letter(500, S4).unwrap(), "E");
        // Source: MIL-STD-105E Table I, lot 35001–150000, level S-1: D
        assert_eq!(s.code_letter(100_000, S1).unwrap(), "D");
        // Source: MIL-STD-105E Table I, lot 500001 and over, level III: R
        assert_eq!(s.code_letter(2_000_000, III).unwrap(), "R");
        // Source: MIL-STD-105E Table I, lot 151–280, level S-3: D
        assert_eq!(s.code_letter(151, S3).unwrap(), "D");
        assert_eq!(s.code_letter(0, II), Err(SamplingError::EmptyLot));
    }

    #[test]
    fn table_two_a_normal() {
        // Source: MIL-STD-105E Table II-A, letter J (n=80), AQL 1.0: Ac 2 Re 3 (re-checked against a published copy of Table II-A, level II, AQL 0.65–15)
        assert_eq!(cell("J", 1.0, Normal), t("J", 80, 2, 3));
        // Source: MIL-STD-105E Table II-A, letter J (n=80), AQL 2.5: Ac 5 Re 6 (same copy)
        assert_eq!(cell("J", 2.5, Normal), t("J", 80, 5, 6));
        // Source: MIL-STD-105E Table II-A, letter K (n=125), AQL 0.65: Ac 2 Re 3 (same copy)
        assert_eq!(cell("K", 0.65, Normal), t("K", 125, 2, 3));
        // Source: MIL-STD-105E Table II-A, letter H, AQL 0.65: down arrow to J (n=80) Ac 1 Re 2 (same copy)
        assert_eq!(cell("H", 0.65, Normal), t("J", 80, 1, 2));
        // Source: MIL-STD-105E Table II-A, letter G, AQL 0.65: up arrow to F (n=20) Ac 0 Re 1 (same copy)
        assert_eq!(cell("G", 0.65, Normal), t("F", 20, 0, 1));
        // Source: MIL-STD-105E Table II-A, letter Q (n=1250), AQL 1.0: Ac 21 Re 22 (same copy)
        assert_eq!(cell("Q", 1.0, Normal), t("Q", 1250, 21, 22));
        // Source: MIL-STD-105E Table II-A, letter K, AQL 15: up arrow to J (n=80) Ac 21 Re 22 (same copy)
        assert_eq!(cell("K", 15.0, Normal), t("J", 80, 21, 22));
        // From memory: MIL-STD-105E Table II-A, letter D, AQL 0.10: down arrow to K (n=125) Ac 0 Re 1
        assert_eq!(cell("D", 0.10, Normal), t("K", 125, 0, 1));
        // From memory: MIL-STD-105E Table II-A, letter B (n=3), AQL 1000: Ac 44 Re 45
        assert_eq!(cell("B", 1000.0, Normal), t("B", 3, 44, 45));
    }

    #[test]
    fn table_two_b_tightened() {
        // Source: MIL-STD-105E Table II-B, letter K (n=125), AQL 0.65: Ac 1 Re 2 (re-checked against a published copy of Table II-B, AQL 0.65–15)
        assert_eq!(cell("K", 0.65, Tightened), t("K", 125, 1, 2));
        // Source: MIL-STD-105E Table II-B, letter J (n=80), AQL 6.5: Ac 8 Re 9 (same copy)
        assert_eq!(cell("J", 6.5, Tightened), t("J", 80, 8, 9));
        // Source: MIL-STD-105E Table II-B, letter G (n=32), AQL 0.65: Ac 0 Re 1 (same copy)
        assert_eq!(cell("G", 0.65, Tightened), t("G", 32, 0, 1));
        // Source: MIL-STD-105E Table II-B, letter H, AQL 0.65: down arrow to K (n=125) Ac 1 Re 2 (same copy)
        assert_eq!(cell("H", 0.65, Tightened), t("K", 125, 1, 2));
        // Source: MIL-STD-105E Table II-B, letter L, AQL 10: up arrow to K (n=125) Ac 18 Re 19 (same copy)
        assert_eq!(cell("L", 10.0, Tightened), t("K", 125, 18, 19));
    }

    #[test]
    fn table_two_c_reduced() {
        // From memory: MIL-STD-105E Table II-C, letter K (n=50), AQL 0.65: Ac 1 Re 3 (Montgomery, Introduction to SQC, the MIL STD 105E example: N=2000, level II)
        assert_eq!(cell("K", 0.65, Reduced), t("K", 50, 1, 3));
        // From memory: MIL-STD-105E Table II-C, letter J (n=32), AQL 1.0: Ac 1 Re 3
        assert_eq!(cell("J", 1.0, Reduced), t("J", 32, 1, 3));
        // From memory: MIL-STD-105E Table II-C, letter L (n=80), AQL 1.0: Ac 2 Re 5
        assert_eq!(cell("L", 1.0, Reduced), t("L", 80, 2, 5));
        // From memory: MIL-STD-105E Table II-C, letter H (n=20), AQL 0.65: down arrow to J (n=32) Ac 0 Re 2
        assert_eq!(cell("H", 0.65, Reduced), t("J", 32, 0, 2));
    }

    #[test]
    fn lot_lookup_and_hundred_percent() {
        let s = scheme();
        // From memory: Montgomery, Introduction to SQC, MIL STD 105E example: N=2000, AQL 0.65%, level II: K, n=125, Ac 2, Re 3
        let p = s.plan(2000, II, 0.65, Normal).unwrap();
        assert_eq!((p.code_letter.as_str(), p.sample_size, p.accept, p.reject), ("K", 125, 2, 3));
        // From memory: MIL-STD-105E Table I (lot 26–50, II: D) and Table II-A (D at AQL 0.10: down to K, n=125):
        // the sample exceeds the lot, so every unit is inspected with Ac 0.
        let p = s.plan(40, II, 0.10, Normal).unwrap();
        assert!(p.hundred_percent);
        assert_eq!((p.code_letter.as_str(), p.sample_size, p.accept, p.reject), ("K", 40, 0, 1));
        // The lot size's own letter is kept beside the one the arrow led to.
        assert_eq!(p.lot_size_letter.as_deref(), Some("D"));
        // From memory: MIL-STD-105E Table I lot 281–500, level II: H; Table II-A, H at AQL 0.65: down arrow to J (n=80) Ac 1 Re 2.
        let p = s.plan(450, II, 0.65, Normal).unwrap();
        assert_eq!(
            (p.lot_size_letter.as_deref(), p.code_letter.as_str(), p.sample_size),
            (Some("H"), "J", 80)
        );
        assert!(matches!(s.plan(1000, II, 0.7, Normal), Err(SamplingError::AqlNotInSeries(..))));
    }

    #[test]
    fn plan_serialises_with_the_agreed_names() {
        let p = scheme().plan(1000, II, 1.0, Tightened).unwrap();
        let json = serde_json::to_value(&p).unwrap();
        assert_eq!(json["code_letter"], "J");
        assert_eq!(json["severity"], "tightened");
        for key in ["sample_size", "accept", "reject", "hundred_percent"] {
            assert!(json.get(key).is_some(), "{key}");
        }
    }

    #[test]
    fn levels_and_severities_parse() {
        for (text, level) in
            [("I", I), ("II", II), ("III", III), ("S-1", S1), ("S-2", S2), ("s-3", S3), ("S4", S4)]
        {
            assert_eq!(text.parse::<InspectionLevel>().unwrap(), level);
        }
        assert!("IV".parse::<InspectionLevel>().is_err());
        assert_eq!("Tightened".parse::<Severity>().unwrap(), Tightened);
        assert!("lax".parse::<Severity>().is_err());
    }

    fn load_err(text: &str) -> String {
        match Scheme::from_yaml("x.yaml", text) {
            Ok(_) => panic!("the broken scheme loaded"),
            Err(err) => err.to_string(),
        }
    }

    #[test]
    fn bad_tables_are_refused_with_field_and_line() {
        let text = shipped_mil_std_105e_text();
        // An up arrow in the top row leads off the grid.
        let broken = text.replacen("A: [down, down, down, down, down, down, down, down, down, down, down, down, down, down, 0/1, down", "A: [up, down, down, down, down, down, down, down, down, down, down, down, down, down, 0/1, down", 1);
        assert_ne!(broken, text);
        let err = load_err(&broken);
        assert!(
            err.contains("x.yaml") && err.contains("tables.normal.grid.A") && err.contains("off the grid"),
            "{err}"
        );
        assert!(err.contains("line "), "{err}");

        let broken = text.replacen("1/2, 2/3, 3/4", "1/2, 0/3, 3/4", 1);
        let err = load_err(&broken);
        assert!(err.contains("must not fall"), "{err}");

        let broken = text.replacen(
            "{ lot_max: 15, letters: [A, A, A, A, A, B, C] }",
            "{ lot_max: 15, letters: [A, A, A, A, A, B] }",
            1,
        );
        let err = load_err(&broken);
        assert!(err.contains("code_letters") && err.contains("6 letters"), "{err}");

        // Table VIII: a limit number that falls along its row is refused where the file says.
        let broken = text.replacen(
            "0   0   2   4   8  14  22  40  68 115 181\"",
            "0   0   2   4   8  14  22  40  68 115  18\"",
            1,
        );
        assert_ne!(broken, text);
        let err = load_err(&broken);
        assert!(err.contains("switching.limit_numbers") && err.contains("must not fall"), "{err}");

        let broken = text.replacen("kind: sampling-scheme", "kind: sink", 1);
        assert!(load_err(&broken).contains("not a sampling scheme"));

        let broken = text.replacen("down, 0/1, down, down, 1/2", "down, 1/1, down, down, 1/2", 1);
        assert_ne!(broken, text);
        let err = load_err(&broken);
        assert!(err.contains("rejection number must exceed"), "{err}");
    }

    #[test]
    fn the_common_manifest_reader_accepts_the_file() {
        let manifest =
            twistlot_model::Manifest::from_yaml("mil-std-105e.yaml", shipped_mil_std_105e_text()).unwrap();
        assert_eq!(manifest.header().kind, PluginKind::SamplingScheme);
        assert_eq!(manifest.header().name, "mil-std-105e");
    }

    #[test]
    fn a_plant_scheme_loads_from_its_own_text() {
        let text = shipped_mil_std_105e_text().replacen("name: mil-std-105e", "name: plant-x", 1);
        let s = Scheme::from_yaml("plant/plant-x.yaml", &text).unwrap();
        assert_eq!(s.name, "plant-x");
        assert_eq!(s.origin, "plant/plant-x.yaml");
    }

    fn row_index(s: &Scheme, letter: &str) -> usize {
        s.normal.rows.iter().position(|(l, _)| l == letter).unwrap()
    }

    proptest! {
        #[test]
        fn code_letter_grows_with_lot_size(a in 1u64..2_000_000, b in 1u64..2_000_000, level in 0usize..7) {
            let s = scheme();
            let level = s.levels[level];
            let (small, large) = (a.min(b), a.max(b));
            let small = row_index(&s, &s.code_letter(small, level).unwrap());
            let large = row_index(&s, &s.code_letter(large, level).unwrap());
            prop_assert!(small <= large);
        }

        #[test]
        fn every_cell_resolves_and_never_exceeds_the_lot(lot in 1u64..100_000, aql in 0usize..26, level in 0usize..7, sev in 0usize..3) {
            let s = scheme();
            let severity = [Normal, Tightened, Reduced][sev];
            let p = s.plan(lot, s.levels[level], s.aql_series_pct[aql], severity).unwrap();
            prop_assert!(p.sample_size <= lot);
            prop_assert!(p.reject > p.accept);
            prop_assert_eq!(p.hundred_percent, p.sample_size == lot && s.table(severity).rows.iter().any(|(l, n)| *l == p.code_letter && *n >= lot));
        }
    }
}
