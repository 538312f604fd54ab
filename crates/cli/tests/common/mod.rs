//! Helpers shared by the CLI tests.

use std::process::Command;

/// Runs the `caldera` binary; returns (exit code, standard output, standard error).
pub fn caldera(args: &[&str]) -> (i32, String, String) {
    let output = Command::new(env!("CARGO_BIN_EXE_caldera"))
        .args(args)
        .output()
        .expect("the caldera binary runs");
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&output.stdout).into_owned(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}
