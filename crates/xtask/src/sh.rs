//! Running other programs: every command is printed before it runs, and a
//! failure says which command failed and what to try.

use std::fmt;
use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

/// Why a task could not finish; the message says what to do about it.
#[derive(Debug, Clone, PartialEq)]
pub struct Failure(String);

impl Failure {
    /// A failure with its message.
    pub fn new(message: impl Into<String>) -> Self {
        Failure(message.into())
    }
}

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl From<std::io::Error> for Failure {
    fn from(e: std::io::Error) -> Self {
        Failure(e.to_string())
    }
}

/// Result of a task.
pub type Result<T> = std::result::Result<T, Failure>;

/// The workspace root (two levels above this crate).
pub fn root() -> PathBuf {
    let here = Path::new(env!("CARGO_MANIFEST_DIR"));
    here.ancestors()
        .nth(2)
        .map(Path::to_path_buf)
        .unwrap_or_else(|| here.to_path_buf())
}

/// A command line as it would be typed, for messages.
pub fn display(cmd: &Command) -> String {
    let mut parts = vec![cmd.get_program().to_string_lossy().into_owned()];
    parts.extend(cmd.get_args().map(|a| {
        let a = a.to_string_lossy();
        if a.contains(' ') {
            format!("'{a}'")
        } else {
            a.into_owned()
        }
    }));
    parts.join(" ")
}

fn spawn_failure(cmd: &Command, e: std::io::Error) -> Failure {
    Failure::new(format!("could not start `{}`: {e}", display(cmd)))
}

/// Run a command with the terminal attached; fail unless it exits with 0.
pub fn run(cmd: &mut Command) -> Result<()> {
    println!("$ {}", display(cmd));
    let status = cmd.status().map_err(|e| spawn_failure(cmd, e))?;
    if status.success() {
        Ok(())
    } else {
        Err(Failure::new(format!(
            "`{}` failed ({status})",
            display(cmd)
        )))
    }
}

/// Run a command, echo its standard output line by line as it arrives and
/// also keep it, so a caller can pick out summary lines. Standard error stays
/// attached to the terminal. Returns the lines and whether it exited with 0.
pub fn run_keeping_output(cmd: &mut Command) -> Result<(Vec<String>, bool)> {
    println!("$ {}", display(cmd));
    let mut child = cmd
        .stdout(Stdio::piped())
        .spawn()
        .map_err(|e| spawn_failure(cmd, e))?;
    let mut lines = Vec::new();
    if let Some(out) = child.stdout.take() {
        let stdout = std::io::stdout();
        for line in BufReader::new(out).lines() {
            let line = line?;
            let mut lock = stdout.lock();
            writeln!(lock, "{line}")?;
            lock.flush()?;
            lines.push(line);
        }
    }
    let status = child.wait()?;
    Ok((lines, status.success()))
}

/// The standard output of a quick query command (a version, a list), or
/// `None` when the program is absent or fails.
pub fn query(program: &str, args: &[&str]) -> Option<String> {
    let out = Command::new(program)
        .args(args)
        .stderr(Stdio::null())
        .output()
        .ok()?;
    out.status
        .success()
        .then(|| String::from_utf8_lossy(&out.stdout).into_owned())
}

/// Where a program is found on `PATH`, if anywhere.
pub fn which(program: &str) -> Option<PathBuf> {
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .map(|dir| dir.join(program))
        .find(|p| p.is_file())
}

/// Whether this process runs as root (so it may install Debian packages).
pub fn is_root() -> bool {
    query("id", &["-u"]).is_some_and(|s| s.trim() == "0")
}

/// A size in bytes for people: "1.23 MB" (SI units, as the size budget is
/// stated in them).
pub fn human_size(bytes: u64) -> String {
    let b = bytes as f64;
    if b >= 1e6 {
        format!("{:.2} MB", b / 1e6)
    } else if b >= 1e3 {
        format!("{:.1} kB", b / 1e3)
    } else {
        format!("{bytes} B")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn root_holds_the_workspace_manifest() {
        let text = std::fs::read_to_string(root().join("Cargo.toml")).unwrap_or_default();
        assert!(text.contains("[workspace]"));
    }

    #[test]
    fn display_quotes_spaced_arguments() {
        let mut c = Command::new("echo");
        c.args(["a", "b c"]);
        assert_eq!(display(&c), "echo a 'b c'");
    }

    #[test]
    fn sizes_in_si_units() {
        assert_eq!(human_size(999), "999 B");
        assert_eq!(human_size(1_500), "1.5 kB");
        assert_eq!(human_size(2_000_000), "2.00 MB");
    }

    #[test]
    fn failing_and_missing_commands_are_errors() {
        assert!(run(&mut Command::new("false")).is_err());
        let e = run(&mut Command::new("pairsight-no-such-program")).unwrap_err();
        assert!(e.to_string().contains("could not start"), "{e}");
        let (lines, ok) = run_keeping_output(Command::new("echo").arg("kept")).unwrap();
        assert!(ok);
        assert_eq!(lines, ["kept"]);
    }
}
