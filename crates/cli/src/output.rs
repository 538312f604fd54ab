//! Writing results to standard output: a closed pipe (`caldera ... | head`) ends the output
//! quietly instead of failing.

use std::io::Write as _;

/// Writes `text` to standard output.
pub(crate) fn print(text: &str) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}
