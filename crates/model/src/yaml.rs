//! Reading YAML documents with errors that name the origin, line and field.

use serde::de::DeserializeOwned;
use std::fmt;

/// A YAML document that could not be read or did not validate.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub struct DocumentError {
    /// Where the text came from (usually a file path).
    pub origin: String,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// Dotted path of the offending field, when known.
    pub field: Option<String>,
    /// What is wrong, in words a person can act on.
    pub message: String,
}

impl fmt::Display for DocumentError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.origin)?;
        if let Some(line) = self.line {
            write!(f, ", line {line}")?;
        }
        if let Some(field) = &self.field {
            write!(f, ", field `{field}`")?;
        }
        write!(f, ": {}", self.message)
    }
}

impl DocumentError {
    /// An error about `field` in `text`; the line is found by walking the YAML keys.
    pub fn at_field(origin: &str, text: &str, field: &str, message: impl Into<String>) -> Self {
        DocumentError {
            origin: origin.to_string(),
            line: locate_key(text, field),
            field: Some(field.to_string()),
            message: message.into(),
        }
    }
}

/// Deserialises `text` into `T`, turning serde_yaml's error into a [`DocumentError`]
/// with the line and (where serde_yaml knows it) the field path.
pub fn parse_document<T: DeserializeOwned>(origin: &str, text: &str) -> Result<T, DocumentError> {
    if text.trim().is_empty() {
        return Err(DocumentError {
            origin: origin.to_string(),
            line: None,
            field: None,
            message: "the document is empty".to_string(),
        });
    }
    serde_yaml::from_str(text).map_err(|err| from_yaml_error(origin, &err))
}

/// Converts a serde_yaml error, splitting off the `path: ` prefix and the
/// ` at line L column C` suffix serde_yaml puts in its message.
pub fn from_yaml_error(origin: &str, err: &serde_yaml::Error) -> DocumentError {
    let mut message = err.to_string();
    if let Some(pos) = message.find(" at line ") {
        message.truncate(pos);
    }
    let mut field = None;
    // serde_yaml prefixes the dotted path of the failing value: `a.b[0].c: message`.
    if let Some((path, rest)) = message.split_once(": ") {
        if !path.contains(' ') && !path.is_empty() && path != "." {
            field = Some(path.to_string());
            message = rest.to_string();
        }
    }
    if field.is_none() {
        field = backticked(&message, "missing field `").or_else(|| backticked(&message, "unknown field `"));
    }
    DocumentError { origin: origin.to_string(), line: err.location().map(|loc| loc.line()), field, message }
}

fn backticked(message: &str, after: &str) -> Option<String> {
    let start = message.find(after)? + after.len();
    let len = message[start..].find('`')?;
    Some(message[start..start + len].to_string())
}

/// Finds the 1-based line of a dotted key path (`a.b.c`, list indices ignored) in
/// block-style YAML, by following indentation. Returns the deepest line found.
pub fn locate_key(text: &str, dotted: &str) -> Option<usize> {
    let parts: Vec<&str> =
        dotted.split('.').map(|p| p.split('[').next().unwrap_or(p)).filter(|p| !p.is_empty()).collect();
    let mut found = None;
    let mut depth = 0;
    // Indentation of the keys at the current depth; set by the first key seen there.
    let mut level_indent: Option<usize> = None;
    let mut parent_indent: Option<usize> = None;
    for (index, raw) in text.lines().enumerate() {
        if depth == parts.len() {
            break;
        }
        let trimmed = raw.trim_start();
        if trimmed.is_empty() || trimmed.starts_with('#') {
            continue;
        }
        let mut indent = raw.len() - trimmed.len();
        let mut body = trimmed;
        while let Some(rest) = body.strip_prefix("- ") {
            indent += 2;
            body = rest.trim_start();
        }
        if parent_indent.is_some_and(|parent| indent <= parent) {
            break;
        }
        let level = *level_indent.get_or_insert(indent);
        if indent < level {
            break;
        }
        if indent > level {
            continue;
        }
        let Some((key, _)) = body.split_once(':') else { continue };
        let key = key.trim().trim_matches('"').trim_matches('\'');
        if key == parts[depth] {
            found = Some(index + 1);
            depth += 1;
            parent_indent = Some(indent);
            level_indent = None;
        }
    }
    found
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Debug, serde::Deserialize)]
    #[serde(deny_unknown_fields)]
    #[allow(dead_code)]
    struct Inner {
        value: f64,
    }

    #[derive(Debug, serde::Deserialize)]
    #[serde(deny_unknown_fields)]
    #[allow(dead_code)]
    struct Outer {
        name: String,
        inner: Inner,
    }

    #[test]
    fn type_errors_carry_line_and_field() {
        let text = "name: a\ninner:\n  value: lots\n";
        let err = parse_document::<Outer>("x.yaml", text).unwrap_err();
        assert_eq!(err.line, Some(3));
        assert_eq!(err.field.as_deref(), Some("inner.value"));
        assert!(err.to_string().starts_with("x.yaml, line 3, field `inner.value`: "), "{err}");
    }

    #[test]
    fn missing_and_unknown_fields_are_named() {
        let err = parse_document::<Outer>("x.yaml", "inner:\n  value: 1\n").unwrap_err();
        assert!(err.to_string().contains("name"), "{err}");
        let err =
            parse_document::<Outer>("x.yaml", "name: a\ninner:\n  value: 1\n  colour: red\n").unwrap_err();
        assert_eq!(err.line, Some(4));
        assert!(err.to_string().contains("colour"), "{err}");
    }

    #[test]
    fn empty_documents_are_refused() {
        let err = parse_document::<Outer>("x.yaml", "  \n").unwrap_err();
        assert_eq!(err.message, "the document is empty");
    }

    #[test]
    fn keys_are_located_by_indentation() {
        let text = "a: 1\nb:\n  c: 2\n  d:\n    c: 3\nc: 4\n";
        assert_eq!(locate_key(text, "b.c"), Some(3));
        assert_eq!(locate_key(text, "b.d.c"), Some(5));
        assert_eq!(locate_key(text, "c"), Some(6));
        assert_eq!(locate_key(text, "zz"), None);
    }
}
