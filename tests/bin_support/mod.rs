//! Helpers shared by the tests that run the `kickturn` binary (tests/cli.rs, solve.rs,
//! stream.rs): the repository root, one run of the binary, and its stdout as JSON.
#![allow(dead_code)] // each test crate uses its own subset

use std::path::PathBuf;
use std::process::{Command, Output};

/// The repository root (where `problems/` lies); the binary runs there.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs `kickturn ARGS` in the repository root and returns its output.
pub fn kickturn(args: &[&str]) -> Output {
    match Command::new(env!("CARGO_BIN_EXE_kickturn"))
        .args(args)
        .current_dir(root())
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("cannot run kickturn: {e}"),
    }
}

/// The run's stdout as JSON (panics with stdout and stderr when it is not).
pub fn json_of(out: &Output) -> serde_json::Value {
    serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "stdout is not JSON ({e}): {}; stderr: {}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        )
    })
}
