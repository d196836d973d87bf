//! The minijinja environment that turns contexts into documents.
//!
//! The shipped templates are compiled into the binary ([`BUILT_IN`]), so a copied or
//! installed `twistlot` writes its reports from any folder. A plant overrides any of
//! them, one file at a time, by putting a file of the same name in its template folder
//! (a partial such as the style sheet included). HTML templates escape every value,
//! because serials, operators and free text come straight from rig exports; the only
//! markup let through is chart SVG this crate drew itself ([`SvgMarkup`]).
//!
//! [`SvgMarkup`]: crate::SvgMarkup

use crate::ReportError;
use minijinja::value::{Value, ValueKind};
use minijinja::{AutoEscape, Environment, Error, ErrorKind, UndefinedBehavior};
use serde::Serialize;
use std::fmt::Write as _;
use std::path::{Component, Path, PathBuf};

/// The shipped templates: (file name, text).
pub const BUILT_IN: &[(&str, &str)] = &[
    ("_report.css.j2", include_str!("../../../templates/_report.css.j2")),
    ("lot_report.html.j2", include_str!("../../../templates/lot_report.html.j2")),
    ("lot_report.md.j2", include_str!("../../../templates/lot_report.md.j2")),
    ("plan.html.j2", include_str!("../../../templates/plan.html.j2")),
    ("shift_summary.html.j2", include_str!("../../../templates/shift_summary.html.j2")),
    ("tests.csv.j2", include_str!("../../../templates/tests.csv.j2")),
    ("worklist.csv.j2", include_str!("../../../templates/worklist.csv.j2")),
];

/// Where a template came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum TemplateSource {
    /// Compiled into the binary.
    BuiltIn,
    /// A file in a template folder.
    File(PathBuf),
}

/// Renders report templates: a plant's override folder first, then the base templates.
#[derive(Debug)]
pub struct Renderer {
    env: Environment<'static>,
    folders: Vec<PathBuf>,
    built_in: bool,
}

impl Renderer {
    /// The built-in templates, overridden file by file by `override_dir` (which must exist).
    pub fn new(override_dir: Option<&Path>) -> Result<Self, ReportError> {
        Renderer::build(override_dir.into_iter().collect(), true)
    }

    /// Templates from `base_dir` instead of the built-ins, overridden by `override_dir`.
    pub fn with_base_folder(base_dir: &Path, override_dir: Option<&Path>) -> Result<Self, ReportError> {
        Renderer::build(override_dir.into_iter().chain([base_dir]).collect(), false)
    }

    fn build(dirs: Vec<&Path>, built_in: bool) -> Result<Self, ReportError> {
        // The first folder holding a file of the asked-for name wins.
        let mut folders = Vec::new();
        for dir in dirs {
            let meta = std::fs::metadata(dir)
                .map_err(|source| ReportError::TemplateDir { path: dir.to_path_buf(), source })?;
            if !meta.is_dir() {
                return Err(ReportError::TemplateDir {
                    path: dir.to_path_buf(),
                    source: std::io::Error::new(std::io::ErrorKind::NotADirectory, "not a folder"),
                });
            }
            folders.push(dir.to_path_buf());
        }

        let mut env = Environment::new();
        let search = folders.clone();
        env.set_loader(move |name| load_template(&search, built_in, name));
        env.set_auto_escape_callback(auto_escape_for);
        // A misspelt field in a plant's template should fail loudly, not print nothing.
        env.set_undefined_behavior(UndefinedBehavior::Strict);
        env.set_trim_blocks(true);
        env.set_lstrip_blocks(true);
        env.set_keep_trailing_newline(true);
        env.set_formatter(|out, state, value| {
            if value.is_none() {
                let shown = if is_csv(state.name()) { "" } else { "—" };
                return out.write_str(shown).map_err(|_| Error::new(ErrorKind::WriteFailure, "write failed"));
            }
            minijinja::escape_formatter(out, state, value)
        });
        env.add_filter("csv_field", csv_field_filter);
        env.add_filter("fixed", fixed_filter);
        env.add_filter("sig", sig_filter);
        env.add_filter("metric", metric_filter);
        env.add_filter("md_text", md_text_filter);
        env.add_filter("failed_findings", failed_findings_filter);
        Ok(Renderer { env, folders, built_in })
    }

    /// Renders template `name` (e.g. `lot_report.html.j2`) with `ctx`.
    pub fn render(&self, name: &str, ctx: &impl Serialize) -> Result<String, ReportError> {
        let result = self.env.get_template(name).and_then(|t| t.render(ctx));
        result.map_err(|err| {
            let mut error = template_error(name, &err);
            if err.kind() == ErrorKind::TemplateNotFound {
                if let ReportError::Template { detail, .. } = &mut error {
                    let mut searched: Vec<String> =
                        self.folders.iter().map(|f| f.display().to_string()).collect();
                    if self.built_in {
                        searched.push("the built-in templates".to_string());
                    }
                    detail.push_str(&format!(" (looked in {})", searched.join(", ")));
                }
            }
            error
        })
    }

    /// Where template `name` is loaded from, if anywhere.
    pub fn template_source(&self, name: &str) -> Option<TemplateSource> {
        if !is_plain_name(name) {
            return None;
        }
        if let Some(path) = self.folders.iter().map(|f| f.join(name)).find(|p| p.is_file()) {
            return Some(TemplateSource::File(path));
        }
        (self.built_in && BUILT_IN.iter().any(|(n, _)| *n == name)).then_some(TemplateSource::BuiltIn)
    }
}

fn load_template(folders: &[PathBuf], built_in: bool, name: &str) -> Result<Option<String>, Error> {
    // Names come from templates too (`include`), so they must not climb out of the folders.
    if !is_plain_name(name) {
        return Ok(None);
    }
    for folder in folders {
        let path = folder.join(name);
        match std::fs::read_to_string(&path) {
            Ok(text) => return Ok(Some(text)),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => continue,
            Err(e) => {
                return Err(Error::new(
                    ErrorKind::InvalidOperation,
                    format!("could not read template file {}", path.display()),
                )
                .with_source(e))
            }
        }
    }
    Ok(built_in.then(|| BUILT_IN.iter().find(|(n, _)| *n == name).map(|(_, t)| t.to_string())).flatten())
}

fn is_plain_name(name: &str) -> bool {
    !name.is_empty()
        && !name.contains('\\')
        && Path::new(name).components().all(|c| matches!(c, Component::Normal(_)))
}

/// The template's own type, with any `.j2`/`.jinja` suffix taken off.
fn output_name(name: &str) -> &str {
    [".j2", ".jinja2", ".jinja"].iter().find_map(|s| name.strip_suffix(s)).unwrap_or(name)
}

fn auto_escape_for(name: &str) -> AutoEscape {
    let out = output_name(name);
    if [".html", ".htm", ".xhtml", ".svg", ".xml"].iter().any(|ext| out.ends_with(ext)) {
        AutoEscape::Html
    } else {
        AutoEscape::None
    }
}

fn is_csv(name: &str) -> bool {
    output_name(name).ends_with(".csv")
}

fn template_error(requested: &str, err: &Error) -> ReportError {
    let mut detail = match err.detail() {
        Some(d) => format!("{}: {d}", err.kind()),
        None => err.kind().to_string(),
    };
    let mut source = std::error::Error::source(err);
    while let Some(cause) = source {
        let _ = write!(detail, ": {cause}");
        source = cause.source();
    }
    ReportError::Template { name: err.name().unwrap_or(requested).to_owned(), line: err.line(), detail }
}

/// Quotes one CSV field as RFC 4180 asks: in double quotes, with inner quotes doubled,
/// when it holds a comma, a quote or a line break. Semicolons, tabs and edge spaces are
/// quoted too, because spreadsheets in comma-decimal locales split or trim on them.
pub fn csv_field(text: &str) -> String {
    let needs_quotes =
        text.contains([',', '"', '\n', '\r', ';', '\t']) || text.starts_with(' ') || text.ends_with(' ');
    if needs_quotes {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_owned()
    }
}

fn csv_field_filter(value: Value) -> String {
    if value.is_none() || value.is_undefined() {
        String::new()
    } else if let Some(text) = value.as_str() {
        csv_field(text)
    } else {
        csv_field(&value.to_string())
    }
}

/// `{{ x | fixed(2) }}`: a number with that many decimals; none stays none (shown as "—").
fn fixed_filter(value: Value, digits: Option<usize>) -> Result<Value, Error> {
    if value.is_none() || value.is_undefined() {
        return Ok(Value::from(()));
    }
    if value.kind() != ValueKind::Number {
        return Err(Error::new(ErrorKind::InvalidOperation, format!("fixed: `{value}` is not a number")));
    }
    let number = f64::try_from(value)?;
    Ok(Value::from(format!("{number:.*}", digits.unwrap_or(3).min(12))))
}

/// `{{ x | sig(4) }}`: a number to that many significant figures; none stays none.
fn sig_filter(value: Value, figures: Option<u32>) -> Result<Value, Error> {
    if value.is_none() || value.is_undefined() {
        return Ok(Value::from(()));
    }
    if value.kind() != ValueKind::Number {
        return Err(Error::new(ErrorKind::InvalidOperation, format!("sig: `{value}` is not a number")));
    }
    let number = f64::try_from(value)?;
    Ok(Value::from(crate::charts::significant(number, figures.unwrap_or(4).clamp(1, 15))))
}

/// `{{ x | metric("torque") }}`: a number at the precision its kind of metric supports
/// (see [`crate::format`]); none and undefined stay none (an empty CSV field, "—" elsewhere).
fn metric_filter(value: Value, kind: String) -> Result<Value, Error> {
    let Some(kind) = crate::format::MetricKind::named(&kind) else {
        return Err(Error::new(
            ErrorKind::InvalidOperation,
            format!("metric: `{kind}` is not a metric kind (rate, r2, stderr, torque, angle, percent, count, other)"),
        ));
    };
    if value.is_none() || value.is_undefined() {
        return Ok(Value::from(()));
    }
    if value.kind() != ValueKind::Number {
        return Err(Error::new(ErrorKind::InvalidOperation, format!("metric: `{value}` is not a number")));
    }
    Ok(Value::from(crate::format::format_metric(f64::try_from(value)?, kind)))
}

/// `{{ test.findings | failed_findings }}`: the findings that did not pass, as
/// "characteristic: message" joined by "; " (empty when every finding passed).
fn failed_findings_filter(findings: Value) -> Result<String, Error> {
    let mut parts = Vec::new();
    for finding in findings.try_iter()? {
        let verdict = finding.get_attr("verdict")?;
        if verdict.as_str() == Some("pass") {
            continue;
        }
        parts.push(format!("{}: {}", finding.get_attr("characteristic")?, finding.get_attr("message")?));
    }
    Ok(parts.join("; "))
}

/// Escapes text for Markdown so export text cannot add markup or break a table.
fn md_text_filter(value: Value) -> Value {
    if value.is_none() || value.is_undefined() {
        return value;
    }
    let text = value.to_string();
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '|' | '&' | '~' | '#' => {
                out.push('\\');
                out.push(c);
            }
            '\n' | '\r' => out.push(' '),
            other => out.push(other),
        }
    }
    Value::from(out)
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
    use std::fs;

    fn folder(files: &[(&str, &str)]) -> tempfile::TempDir {
        let dir = tempfile::tempdir().unwrap();
        for (name, text) in files {
            fs::write(dir.path().join(name), text).unwrap();
        }
        dir
    }

    #[derive(Serialize)]
    struct Ctx<'a> {
        text: &'a str,
        number: Option<f64>,
    }

    #[test]
    fn quotes_csv_fields_that_need_it() {
        // Source: RFC 4180 §2 rules 5–7 (quote fields with commas, quotes, line breaks; double inner quotes).
        assert_eq!(csv_field("plain"), "plain");
        assert_eq!(csv_field("a,b"), "\"a,b\"");
        assert_eq!(csv_field("say \"hi\", twice"), "\"say \"\"hi\"\", twice\"");
        assert_eq!(csv_field("two\nlines"), "\"two\nlines\"");
        assert_eq!(csv_field(""), "");
    }

    proptest! {
        #[test]
        fn csv_fields_read_back_unchanged(fields in prop::collection::vec(".*", 1..6)) {
            let line: Vec<String> = fields.iter().map(|f| csv_field(f)).collect();
            // A leading id column, as in every template: a lone empty field would be a blank line.
            let text = format!("id,{}\n", line.join(","));
            let mut reader = csv::ReaderBuilder::new().has_headers(false).from_reader(text.as_bytes());
            let record = reader.records().next().unwrap().unwrap();
            let read: Vec<&str> = record.iter().skip(1).collect();
            prop_assert_eq!(read, fields.iter().map(String::as_str).collect::<Vec<_>>());
        }
    }

    #[test]
    fn escapes_by_output_type() {
        let dir = folder(&[
            ("a.html.j2", "{{ text }}|{{ number }}"),
            ("a.md.j2", "{{ text }}|{{ number }}|{{ text | md_text }}"),
            ("a.csv.j2", "{{ text | csv_field }},{{ number }},{{ number | csv_field }}"),
            ("a.json.j2", "{{ text }}"),
        ]);
        let r = Renderer::with_base_folder(dir.path(), None).unwrap();
        let ctx = Ctx { text: "<b>x|y</b>, \"q\"", number: None };
        assert_eq!(r.render("a.html.j2", &ctx).unwrap(), "&lt;b&gt;x|y&lt;&#x2f;b&gt;, &quot;q&quot;|—");
        assert_eq!(r.render("a.md.j2", &ctx).unwrap(), "<b>x|y</b>, \"q\"|—|\\<b\\>x\\|y\\</b\\>, \"q\"");
        assert_eq!(r.render("a.csv.j2", &ctx).unwrap(), "\"<b>x|y</b>, \"\"q\"\"\",,");
        assert_eq!(r.render("a.json.j2", &ctx).unwrap(), "<b>x|y</b>, \"q\"");
    }

    #[test]
    fn number_filters_format_and_pass_none_through() {
        let dir =
            folder(&[("n.html.j2", "{{ number | fixed(2) }} {{ number | sig(3) }} {{ number | fixed }}")]);
        let r = Renderer::with_base_folder(dir.path(), None).unwrap();
        assert_eq!(
            r.render("n.html.j2", &Ctx { text: "", number: Some(1.23456) }).unwrap(),
            "1.23 1.23 1.235"
        );
        assert_eq!(r.render("n.html.j2", &Ctx { text: "", number: None }).unwrap(), "— — —");
        let bad = folder(&[("b.html.j2", "{{ text | fixed(2) }}")]);
        let err = Renderer::with_base_folder(bad.path(), None)
            .unwrap()
            .render("b.html.j2", &Ctx { text: "x", number: None });
        assert!(err.unwrap_err().to_string().contains("not a number"));
    }

    #[test]
    fn metric_filter_prints_at_the_metrics_precision_and_names_a_bad_kind() {
        let dir = folder(&[
            ("m.csv.j2", "{{ number | metric(\"torque\") }},{{ number | metric(\"rate\") }}"),
            ("bad.csv.j2", "{{ number | metric(\"furlongs\") }}"),
        ]);
        let r = Renderer::with_base_folder(dir.path(), None).unwrap();
        // Common practice, no published source: each metric printed to its own resolution.
        let ctx = Ctx { text: "", number: Some(195.31099999999998) };
        assert_eq!(r.render("m.csv.j2", &ctx).unwrap(), "195.31,195.3110");
        assert_eq!(r.render("m.csv.j2", &Ctx { text: "", number: None }).unwrap(), ",");
        let err = r.render("bad.csv.j2", &ctx).unwrap_err().to_string();
        assert!(err.contains("`furlongs` is not a metric kind"), "{err}");
    }

    #[test]
    fn override_folder_wins_and_falls_back() {
        let shipped =
            folder(&[("r.html.j2", "shipped {% include \"part.j2\" %}"), ("part.j2", "shipped part")]);
        let plant = folder(&[("part.j2", "plant part")]);
        let r = Renderer::with_base_folder(shipped.path(), Some(plant.path())).unwrap();
        let ctx = Ctx { text: "", number: None };
        assert_eq!(r.render("r.html.j2", &ctx).unwrap(), "shipped plant part");
        assert_eq!(r.template_source("part.j2"), Some(TemplateSource::File(plant.path().join("part.j2"))));
        assert_eq!(
            r.template_source("r.html.j2"),
            Some(TemplateSource::File(shipped.path().join("r.html.j2")))
        );
        let plain = Renderer::with_base_folder(shipped.path(), None).unwrap();
        assert_eq!(plain.render("r.html.j2", &ctx).unwrap(), "shipped shipped part");
    }

    #[test]
    fn syntax_error_names_template_and_line() {
        let dir = folder(&[("broken.html.j2", "line one\nline two\n{% if text %}\nno end\n{{ text }\n")]);
        let err = Renderer::with_base_folder(dir.path(), None)
            .unwrap()
            .render("broken.html.j2", &Ctx { text: "", number: None });
        let err = err.unwrap_err();
        let ReportError::Template { name, line, .. } = &err else { panic!("{err:?}") };
        assert_eq!(name, "broken.html.j2");
        assert_eq!(*line, Some(5));
        let message = err.to_string();
        assert!(message.starts_with("template `broken.html.j2`, line 5: syntax error"), "{message}");
    }

    #[test]
    fn error_in_included_template_names_that_template() {
        let dir =
            folder(&[("outer.html.j2", "a\n{% include \"inner.j2\" %}"), ("inner.j2", "ok\n{{ missing }}")]);
        let err = Renderer::with_base_folder(dir.path(), None)
            .unwrap()
            .render("outer.html.j2", &Ctx { text: "", number: None });
        let message = err.unwrap_err().to_string();
        assert!(message.contains("inner.j2"), "{message}");
        assert!(message.contains("undefined"), "{message}");
    }

    #[test]
    fn unknown_field_fails_loudly() {
        let dir = folder(&[("t.html.j2", "{{ txet }}")]);
        let err = Renderer::with_base_folder(dir.path(), None)
            .unwrap()
            .render("t.html.j2", &Ctx { text: "", number: None });
        let ReportError::Template { name, line, detail } = err.unwrap_err() else { panic!() };
        assert_eq!((name.as_str(), line), ("t.html.j2", Some(1)));
        assert!(detail.contains("undefined"), "{detail}");
    }

    #[test]
    fn missing_template_says_where_it_looked() {
        let dir = folder(&[]);
        let err = Renderer::with_base_folder(dir.path(), None)
            .unwrap()
            .render("nope.html.j2", &Ctx { text: "", number: None });
        let message = err.unwrap_err().to_string();
        assert!(
            message.contains("nope.html.j2") && message.contains(&dir.path().display().to_string()),
            "{message}"
        );
    }

    #[test]
    fn include_cannot_leave_the_folders() {
        let outer = tempfile::tempdir().unwrap();
        fs::write(outer.path().join("secret.j2"), "secret").unwrap();
        let inner = outer.path().join("templates");
        fs::create_dir(&inner).unwrap();
        fs::write(inner.join("t.html.j2"), "{% include \"../secret.j2\" %}").unwrap();
        let err = Renderer::with_base_folder(&inner, None)
            .unwrap()
            .render("t.html.j2", &Ctx { text: "", number: None });
        assert!(err.is_err());
        assert!(!is_plain_name("/etc/passwd") && !is_plain_name("a\\b") && is_plain_name("parts/x.j2"));
    }

    #[test]
    fn built_in_templates_need_no_folder_and_yield_to_an_override() {
        let r = Renderer::new(None).unwrap();
        assert_eq!(r.template_source("tests.csv.j2"), Some(TemplateSource::BuiltIn));
        let plant = folder(&[("tests.csv.j2", "plant {{ text }}")]);
        let r = Renderer::new(Some(plant.path())).unwrap();
        assert_eq!(r.render("tests.csv.j2", &Ctx { text: "x", number: None }).unwrap(), "plant x");
        let err = r.render("nope.j2", &Ctx { text: "", number: None }).unwrap_err().to_string();
        assert!(err.contains("the built-in templates"), "{err}");
    }

    #[test]
    fn every_shipped_template_is_compiled_in() {
        // The source tree is read here only to prove the list above is complete.
        let shipped = crate_dir().join("../../templates");
        let mut names: Vec<String> = fs::read_dir(&shipped)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .collect();
        names.sort();
        let mut built_in: Vec<&str> = BUILT_IN.iter().map(|(n, _)| *n).collect();
        built_in.sort();
        assert_eq!(names, built_in);
    }

    #[test]
    fn missing_folder_is_an_error() {
        let dir = folder(&[]);
        let gone = dir.path().join("gone");
        assert!(matches!(Renderer::with_base_folder(&gone, None), Err(ReportError::TemplateDir { .. })));
        assert!(matches!(
            Renderer::with_base_folder(dir.path(), Some(&gone)),
            Err(ReportError::TemplateDir { .. })
        ));
    }

    #[test]
    fn auto_escape_follows_the_output_type() {
        assert!(matches!(auto_escape_for("lot_report.html.j2"), AutoEscape::Html));
        assert!(matches!(auto_escape_for("x.htm"), AutoEscape::Html));
        for name in ["lot_report.md.j2", "tests.csv.j2", "lot.json.j2", "_report.css.j2"] {
            assert!(matches!(auto_escape_for(name), AutoEscape::None), "{name}");
        }
    }
}
