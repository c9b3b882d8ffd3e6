//! What the integration tests share: scratch files, the binary, the test pattern a simulated
//! board sends. Included by `tests/it`, `tests/serial.rs` and `tests/net.rs`.
// Helpers unwrap: a panic is the failure report.
#![allow(clippy::unwrap_used, dead_code)]

use std::path::PathBuf;

/// A file `name` in this run's scratch folder for `area` (created).
pub fn tmp(area: &str, name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("leadline-{area}-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d.join(name)
}

/// The leadline binary as a command, to add arguments (paths too) and run or spawn.
pub fn command() -> std::process::Command {
    std::process::Command::new(env!("CARGO_BIN_EXE_leadline"))
}

/// Runs `cmd` and fails the test with its stderr unless it succeeded.
pub fn run_ok(cmd: &mut std::process::Command) -> std::process::Output {
    let out = cmd.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// Runs the leadline binary with `args` and returns its output.
pub fn leadline<I, S>(args: I) -> std::process::Output
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    command().args(args).output().unwrap()
}

/// Runs the leadline binary and fails the test with its stderr unless it succeeded.
pub fn leadline_ok<I, S>(args: I) -> std::process::Output
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    let out = leadline(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// The test pattern a simulated board sends: every 12-bit code in turn, different per channel.
pub fn pattern(frame: u64, ch: usize) -> i32 {
    ((frame * 7 + ch as u64 * 1000) % 4096) as i32
}
