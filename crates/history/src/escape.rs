//! Partition values made safe for folder names, and back.
//!
//! A part number or shift name becomes one folder name, `part=<value>` or
//! `shift=<value>`. Hive (and Spark, which copied it) percent-encodes the characters a
//! path or a partition parser would misread, and every Hive reader (polars, Spark,
//! DuckDB, Trino) percent-decodes partition values, so the same escaping keeps the
//! value readable by all of them. We encode a little more than Hive does, never less:
//! any percent-encoded byte decodes the same way in those readers.

use std::fmt;

/// The longest folder name most file systems accept, in bytes.
pub const MAX_FOLDER_NAME_BYTES: usize = 255;

/// The folder value Hive readers read back as a null (a test whose export names no part).
pub const NULL_PARTITION: &str = "__HIVE_DEFAULT_PARTITION__";

/// Why an identifier cannot name a partition.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum IdError {
    /// The identifier is empty (or only white space).
    #[error("{what} is empty; every {what} stored in the history needs a name")]
    Empty {
        /// `part` or `shift`.
        what: &'static str,
    },
    /// The escaped folder name would be longer than file systems accept.
    #[error(
        "{what} `{shown}` is too long for a folder name: escaped it takes {bytes} bytes, \
         the limit is {limit}; shorten the {what}"
    )]
    TooLong {
        /// `part` or `shift`.
        what: &'static str,
        /// The identifier, cut to its first 60 characters.
        shown: String,
        /// Bytes of `<key>=<escaped value>`.
        bytes: usize,
        /// [`MAX_FOLDER_NAME_BYTES`].
        limit: usize,
    },
    /// A folder name that is not `key=value` with a well-formed escaped value.
    #[error("folder `{folder}` is not a `{key}=<value>` partition folder of the history")]
    NotAPartition {
        /// The folder name found.
        folder: String,
        /// The key expected.
        key: &'static str,
    },
}

/// True for a byte Hive's `escapePathName` escapes (on any system), or that this store
/// escapes in addition: NUL, space, `<`, `>`, `|` (Windows forbids the last three in
/// names, and Hive escapes them on Windows), and every control character.
fn must_escape(byte: u8) -> bool {
    // Hive's set: 0x01-0x1F, " # % ' * / : = ? \ 0x7F { [ ] ^.
    matches!(
        byte,
        0x00..=0x1F
            | b'"'
            | b'#'
            | b'%'
            | b'\''
            | b'*'
            | b'/'
            | b':'
            | b'='
            | b'?'
            | b'\\'
            | 0x7F
            | b'{'
            | b'['
            | b']'
            | b'^'
            | b' '
            | b'<'
            | b'>'
            | b'|'
    )
}

fn push_escaped(out: &mut String, byte: u8) {
    const HEX: &[u8; 16] = b"0123456789ABCDEF";
    out.push('%');
    out.push(HEX[usize::from(byte >> 4)] as char);
    out.push(HEX[usize::from(byte & 0x0F)] as char);
}

/// Escapes a partition value: every byte [`must_escape`] names becomes `%XX` (upper-case
/// hex); a trailing `.` becomes `%2E` (Windows drops trailing dots from names); a value
/// spelled like [`NULL_PARTITION`] has its first `_` escaped so it is not read as null.
/// Other characters, non-ASCII included, stay as they are.
pub fn escape_value(value: &str) -> String {
    let mut out = String::with_capacity(value.len() + 8);
    let bytes = value.as_bytes();
    let mut start = 0;
    for (index, &byte) in bytes.iter().enumerate() {
        let last = index + 1 == bytes.len();
        let escape = must_escape(byte) || (last && byte == b'.') || (index == 0 && value == NULL_PARTITION);
        if escape {
            // Escaped bytes are ASCII, so the slice boundaries fall between characters.
            out.push_str(&value[start..index]);
            push_escaped(&mut out, byte);
            start = index + 1;
        }
    }
    out.push_str(&value[start..]);
    out
}

/// Decodes an escaped value: each `%XX` becomes its byte. `None` when a `%` is not
/// followed by two hex digits or the bytes are not UTF-8 (never the case for a value
/// [`escape_value`] wrote).
pub fn unescape_value(escaped: &str) -> Option<String> {
    let bytes = escaped.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut index = 0;
    while index < bytes.len() {
        if bytes[index] == b'%' {
            let hex = bytes.get(index + 1..index + 3)?;
            let text = std::str::from_utf8(hex).ok()?;
            out.push(u8::from_str_radix(text, 16).ok()?);
            index += 3;
        } else {
            out.push(bytes[index]);
            index += 1;
        }
    }
    String::from_utf8(out).ok()
}

/// A validated partition key and value, and its folder name.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Partition {
    key: &'static str,
    value: Option<String>,
    folder: String,
}

impl Partition {
    /// The partition `key=<escaped value>`; refuses an empty value or one whose folder
    /// name would exceed [`MAX_FOLDER_NAME_BYTES`].
    pub fn new(key: &'static str, value: &str) -> Result<Partition, IdError> {
        if value.trim().is_empty() {
            return Err(IdError::Empty { what: key });
        }
        let folder = format!("{key}={}", escape_value(value));
        if folder.len() > MAX_FOLDER_NAME_BYTES {
            return Err(IdError::TooLong {
                what: key,
                shown: value.chars().take(60).collect(),
                bytes: folder.len(),
                limit: MAX_FOLDER_NAME_BYTES,
            });
        }
        Ok(Partition { key, value: Some(value.to_string()), folder })
    }

    /// The partition of rows whose value is missing (read back as null).
    pub fn null(key: &'static str) -> Partition {
        Partition { key, value: None, folder: format!("{key}={NULL_PARTITION}") }
    }

    /// A partition value given as an option: `None` is the null partition.
    pub fn optional(key: &'static str, value: Option<&str>) -> Result<Partition, IdError> {
        match value {
            Some(value) => Partition::new(key, value),
            None => Ok(Partition::null(key)),
        }
    }

    /// Reads a folder name back; an error when it is not this key's partition folder in
    /// the spelling [`escape_value`] gives.
    pub fn from_folder(key: &'static str, folder: &str) -> Result<Partition, IdError> {
        let bad = || IdError::NotAPartition { folder: folder.to_string(), key };
        let escaped = folder.strip_prefix(key).and_then(|rest| rest.strip_prefix('=')).ok_or_else(bad)?;
        if escaped == NULL_PARTITION {
            return Ok(Partition::null(key));
        }
        let value = unescape_value(escaped).ok_or_else(bad)?;
        let partition = Partition::new(key, &value).map_err(|_| bad())?;
        // Only the canonical spelling is ours: `a%41` is not the folder of `aA`.
        if partition.folder != folder {
            return Err(bad());
        }
        Ok(partition)
    }

    /// The value (`None` for the null partition).
    pub fn value(&self) -> Option<&str> {
        self.value.as_deref()
    }

    /// The folder name, `key=<escaped value>`.
    pub fn folder(&self) -> &str {
        &self.folder
    }
}

impl fmt::Display for Partition {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.folder)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use std::path::{Component, Path};

    #[test]
    fn hive_special_characters_are_percent_encoded() {
        // From memory: Hive FileUtils.escapePathName writes `/` as %2F, `=` as %3D, `:` as %3A, `%` as %25.
        assert_eq!(escape_value("TS/22=10:a%"), "TS%2F22%3D10%3Aa%25");
        // Common practice, no published source: a trailing dot is dropped by Windows, so it is encoded.
        assert_eq!(escape_value(".."), ".%2E");
        assert_eq!(escape_value("a\\b\0c"), "a%5Cb%00c");
        assert_eq!(escape_value("TS-2210"), "TS-2210");
        assert_eq!(escape_value("Feder-ä"), "Feder-ä");
    }

    #[test]
    fn a_value_spelled_like_the_null_partition_is_not_read_as_null() {
        let partition = Partition::new("part", NULL_PARTITION).unwrap();
        assert_ne!(partition.folder(), Partition::null("part").folder());
        let back = Partition::from_folder("part", partition.folder()).unwrap();
        assert_eq!(back.value(), Some(NULL_PARTITION));
        assert_eq!(Partition::from_folder("part", "part=__HIVE_DEFAULT_PARTITION__").unwrap().value(), None);
    }

    #[test]
    fn empty_and_over_long_ids_are_refused_with_the_reason() {
        let err = Partition::new("shift", "  ").unwrap_err();
        assert!(err.to_string().contains("shift is empty"), "{err}");
        let long = "/".repeat(90); // 270 bytes escaped
        let err = Partition::new("part", &long).unwrap_err();
        assert!(err.to_string().contains("too long for a folder name"), "{err}");
        assert!(Partition::new("part", &"x".repeat(250)).is_ok());
    }

    #[test]
    fn foreign_folders_are_not_taken_for_partitions() {
        assert!(Partition::from_folder("part", "shift=a").is_err());
        assert!(Partition::from_folder("part", "part=a%2").is_err());
        assert!(Partition::from_folder("part", "part=a%41").is_err(), "non-canonical spelling");
        assert!(Partition::from_folder("part", ".tmp").is_err());
    }

    proptest! {
        #[test]
        fn escaped_values_stay_inside_the_table_folder_and_round_trip(
            value in prop_oneof![any::<String>(), "[./\\\\=%\\x00\\x01:* _A-Za-z]{0,12}", "[/a]{80,120}"]
        ) {
            match Partition::new("part", &value) {
                Ok(partition) => {
                    let folder = partition.folder();
                    prop_assert!(!folder.contains(['/', '\\', '\0']));
                    let table = Path::new("/history/tests");
                    let joined = table.join(folder);
                    prop_assert_eq!(joined.parent(), Some(table));
                    prop_assert!(matches!(joined.components().next_back(), Some(Component::Normal(_))));
                    prop_assert_eq!(unescape_value(&folder["part=".len()..]), Some(value.clone()));
                    let back = Partition::from_folder("part", folder).unwrap();
                    prop_assert_eq!(back.value(), Some(value.as_str()));
                }
                Err(IdError::Empty { .. }) => prop_assert!(value.trim().is_empty()),
                Err(IdError::TooLong { bytes, .. }) => {
                    prop_assert!(bytes > MAX_FOLDER_NAME_BYTES);
                    prop_assert_eq!(bytes, "part=".len() + escape_value(&value).len());
                }
                Err(other) => prop_assert!(false, "unexpected refusal {other}"),
            }
        }
    }
}
