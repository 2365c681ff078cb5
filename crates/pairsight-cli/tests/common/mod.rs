//! Helpers of the command-line tests: run the built binary, find the
//! fixtures, make a fresh folder per test.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The repository root.
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

/// The small invented cohort and its study file.
pub fn small() -> (PathBuf, PathBuf) {
    let f = root().join("tests/fixtures");
    (f.join("small.csv"), f.join("small.study.toml"))
}

/// An empty folder of its own for one test.
pub fn fresh(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("cli-{name}"));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Run `pairsight` with arguments.
pub fn pairsight<I, S>(args: I) -> Output
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    Command::new(env!("CARGO_BIN_EXE_pairsight"))
        .args(args)
        .output()
        .expect("the pairsight binary runs")
}

/// Run `pairsight match DATA --study STUDY --out OUT`, then `extra`.
pub fn pairsight_match(data: &Path, study: &Path, out: &Path, extra: &[&str]) -> Output {
    let mut args: Vec<&std::ffi::OsStr> = vec![
        "match".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ];
    args.extend(extra.iter().map(std::ffi::OsStr::new));
    pairsight(args)
}

/// Standard output as text.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// Standard error as text.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Assert a run succeeded, showing its error output if not.
pub fn ok(o: &Output) {
    assert!(
        o.status.success(),
        "exit {:?}\nstdout:\n{}\nstderr:\n{}",
        o.status.code(),
        stdout(o),
        stderr(o)
    );
}

/// Assert a run failed as bad input: exit code 2, a message, no panic.
pub fn bad_input(o: &Output) -> String {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "stderr:\n{err}");
    assert!(
        !err.contains("panicked"),
        "a panic reached the user:\n{err}"
    );
    assert!(err.starts_with("pairsight: "), "{err}");
    err
}

/// Write a file, creating its folder.
pub fn write(path: &Path, text: &str) {
    if let Some(d) = path.parent() {
        std::fs::create_dir_all(d).unwrap();
    }
    std::fs::write(path, text).unwrap();
}

/// Read a CSV file into a header and rows.
pub fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header = lines
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    (header, rows)
}
