//! Smoke tests of the `twistlot` binary itself.
//!
//! Besides checking the interface promises below, this file makes `cargo test
//! --workspace` build the binary, which the end-to-end tests in `tests/` then run.

use std::process::{Command, Output};

fn twistlot(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_twistlot")).args(args).output().expect("run the twistlot binary")
}

#[test]
fn help_states_every_exit_code() {
    let out = twistlot(&["--help"]);
    assert_eq!(out.status.code(), Some(0));
    let help = String::from_utf8_lossy(&out.stdout);
    for promise in
        ["0 when everything was read", "3 when", "1 when the command could not run", "2 for bad arguments"]
    {
        assert!(help.contains(promise), "--help lacks `{promise}`:\n{help}");
    }
    for subcommand in ["ingest", "plugins", "synth"] {
        assert!(help.contains(subcommand), "--help does not list `{subcommand}`:\n{help}");
    }
}

#[test]
fn ingest_help_states_the_exit_codes_too() {
    let out = twistlot(&["ingest", "--help"]);
    assert_eq!(out.status.code(), Some(0));
    let help = String::from_utf8_lossy(&out.stdout);
    assert!(help.contains("3 when") && help.contains("--rig-format"), "{help}");
}

#[test]
fn version_is_the_package_version() {
    let out = twistlot(&["--version"]);
    assert_eq!(out.status.code(), Some(0));
    assert_eq!(
        String::from_utf8_lossy(&out.stdout).trim(),
        format!("twistlot {}", env!("CARGO_PKG_VERSION"))
    );
}

#[test]
fn bad_arguments_exit_with_2() {
    for args in
        [&["--no-such-flag"][..], &["ingest"], &["ingest", ".", "--format", "xml"], &["no-such-command"]]
    {
        let out = twistlot(args);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {}", String::from_utf8_lossy(&out.stderr));
    }
}

#[test]
fn a_command_that_cannot_run_exits_with_1() {
    let out = twistlot(&["ingest", ".", "--rig-format", "no-such-format"]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("no-such-format") && err.contains("native"), "names the known formats: {err}");
}
