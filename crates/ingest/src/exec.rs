//! Running exec plugins: argv only, a JSON request on stdin, the answer on stdout.

use crate::error::{IngestError, RejectKind};
use std::io::{Read, Write};
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::Duration;
use twistlot_model::plugin::{ExecSpec, EXEC_PROTOCOL};
use wait_timeout::ChildExt;

/// How much of a failing converter's stderr is quoted in the error.
const STDERR_QUOTE_CHARS: usize = 400;

/// Runs the converter on `path` and returns what it printed.
pub fn run_converter(
    file: &str,
    path: &Path,
    plugin: &str,
    spec: &ExecSpec,
    plugin_dir: &Path,
) -> Result<Vec<u8>, IngestError> {
    let fail = |message: String| IngestError::file(RejectKind::Converter, file, message).with_format(plugin);
    let absolute =
        std::path::absolute(path).map_err(|e| fail(format!("cannot resolve the file's path: {e}")))?;
    let absolute_text = absolute.to_string_lossy().to_string();
    let request = serde_json::json!({
        "protocol": EXEC_PROTOCOL,
        "plugin": plugin,
        "file": absolute_text,
    });
    run_program(spec, plugin_dir, &[("{file}", &absolute_text)], request.to_string().as_bytes()).map_err(fail)
}

/// Runs an exec plugin's program: argv with `{key}` replacements (never a shell),
/// `stdin` written to it, its stdout returned; stopped at the manifest's time limit.
/// The error says what happened, in words (the caller adds the plugin's name).
pub fn run_program(
    spec: &ExecSpec,
    plugin_dir: &Path,
    replacements: &[(&str, &str)],
    stdin_bytes: &[u8],
) -> Result<Vec<u8>, String> {
    let argv: Vec<String> = spec
        .command
        .iter()
        .map(|arg| replacements.iter().fold(arg.clone(), |acc, (key, value)| acc.replace(key, value)))
        .collect();
    let Some((program, args)) = argv.split_first() else {
        return Err("the manifest names no program".into());
    };
    // A relative program path with a slash is the plugin's own script or binary.
    let program_path = if program.contains('/') && Path::new(program).is_relative() {
        plugin_dir.join(program)
    } else {
        program.into()
    };
    let mut child = Command::new(&program_path)
        .args(args)
        .current_dir(if plugin_dir.as_os_str().is_empty() { Path::new(".") } else { plugin_dir })
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .map_err(|e| format!("program `{}` could not start: {e}", program_path.display()))?;
    if let Some(mut stdin) = child.stdin.take() {
        // A program that ignores stdin may close it early; that is not an error.
        let _ = stdin.write_all(stdin_bytes);
    }
    // Read both pipes on threads so a chatty program cannot block on a full pipe.
    let mut stdout = child.stdout.take();
    let mut stderr = child.stderr.take();
    let out_reader = std::thread::spawn(move || {
        let mut buf = Vec::new();
        if let Some(pipe) = stdout.as_mut() {
            let _ = pipe.read_to_end(&mut buf);
        }
        buf
    });
    let err_reader = std::thread::spawn(move || {
        let mut buf = Vec::new();
        if let Some(pipe) = stderr.as_mut() {
            let _ = pipe.read_to_end(&mut buf);
        }
        buf
    });
    let limit = Duration::from_secs_f64(spec.timeout_s);
    let status =
        match child.wait_timeout(limit).map_err(|e| format!("waiting for the program failed: {e}"))? {
            Some(status) => status,
            None => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!(
                    "the program did not finish within its limit of {} s and was stopped",
                    spec.timeout_s
                ));
            }
        };
    let out = out_reader.join().unwrap_or_default();
    let err = err_reader.join().unwrap_or_default();
    if !status.success() {
        let stderr_text = String::from_utf8_lossy(&err);
        // The end of stderr says what finally went wrong (a traceback ends with the error).
        let tail: Vec<&str> = stderr_text.trim().lines().rev().take(3).collect();
        let tail: String = tail.into_iter().rev().collect::<Vec<_>>().join(" | ");
        let skip = tail.chars().count().saturating_sub(STDERR_QUOTE_CHARS);
        let quoted: String = tail.chars().skip(skip).collect();
        let code = status.code().map(|c| c.to_string()).unwrap_or_else(|| "a signal".into());
        return Err(if quoted.is_empty() {
            format!("the program exited with {code}")
        } else {
            format!("the program exited with {code}: {quoted}")
        });
    }
    Ok(out)
}
