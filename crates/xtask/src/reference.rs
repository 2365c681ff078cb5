//! Reference values from outside libraries: every `tests/reference/*.py`
//! script runs in a virtual environment (`target/refenv`, built from
//! `tests/reference/requirements.txt`) and writes its JSON into
//! `target/reference`, where the checks in `tests/checks` read it.

use crate::sh::{self, Failure, Result};
use std::path::{Path, PathBuf};
use std::process::Command;

/// `cargo xtask reference`.
pub fn run() -> Result<()> {
    let summary = compute()?;
    println!("reference: {summary}");
    Ok(())
}

/// Run every script; the summary says how many ran.
pub fn compute() -> Result<String> {
    let root = sh::root();
    let scripts = python_scripts(&root.join("tests/reference"))?;
    if scripts.is_empty() {
        return Ok("no scripts in tests/reference yet; nothing to compute".to_string());
    }
    let python = venv_python()?;
    let out = root.join("target/reference");
    std::fs::create_dir_all(&out)?;
    let mut failed = Vec::new();
    for script in &scripts {
        let outcome = sh::run(
            Command::new(&python)
                .arg(script)
                .arg("--out")
                .arg(&out)
                .current_dir(&root),
        );
        if let Err(e) = outcome {
            println!("{e}");
            failed.push(file_name(script));
        }
    }
    if failed.is_empty() {
        let n = scripts.len();
        let noun = if n == 1 { "script" } else { "scripts" };
        Ok(format!("{n} {noun} wrote {}", out.display()))
    } else {
        Err(Failure::new(format!(
            "{} of {} reference scripts failed: {}",
            failed.len(),
            scripts.len(),
            failed.join(", ")
        )))
    }
}

/// The `*.py` files of a folder, sorted by name; none if the folder is absent.
pub fn python_scripts(dir: &Path) -> Result<Vec<PathBuf>> {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return Ok(Vec::new());
    };
    let mut scripts: Vec<PathBuf> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "py") && p.is_file())
        .collect();
    scripts.sort();
    Ok(scripts)
}

fn file_name(p: &Path) -> String {
    p.file_name().map_or_else(
        || p.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    )
}

/// The Python of `target/refenv`, created and brought up to date with
/// `tests/reference/requirements.txt` when needed (a stamp in the venv holds
/// the requirements it was installed from, so an unchanged list costs nothing).
pub fn venv_python() -> Result<PathBuf> {
    let root = sh::root();
    let venv = root.join("target/refenv");
    let python = venv.join("bin/python");
    if !python.is_file() {
        println!("creating: Python virtual environment {}", venv.display());
        sh::run(Command::new("python3").args(["-m", "venv"]).arg(&venv)).map_err(|e| {
            Failure::new(format!(
                "{e}; the reference values need Python 3 with venv (Debian: `apt-get install python3-venv`)"
            ))
        })?;
    }
    let req_path = root.join("tests/reference/requirements.txt");
    let wanted = std::fs::read(&req_path).map_err(|e| {
        Failure::new(format!(
            "cannot read {}: {e}; it lists the reference libraries with their versions",
            req_path.display()
        ))
    })?;
    let stamp = venv.join(".requirements-stamp");
    if std::fs::read(&stamp).ok().as_deref() != Some(wanted.as_slice()) {
        println!(
            "installing: reference libraries from {}",
            req_path.display()
        );
        sh::run(
            Command::new(&python)
                .args([
                    "-m",
                    "pip",
                    "install",
                    "--disable-pip-version-check",
                    "-q",
                    "-r",
                ])
                .arg(&req_path),
        )?;
        std::fs::write(&stamp, &wanted)?;
    } else {
        println!("ok: reference libraries in {}", venv.display());
    }
    Ok(python)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scripts_are_the_sorted_python_files() {
        let dir = std::env::temp_dir().join(format!("xtask-ref-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        for f in ["b.py", "a.py", "README.md", "requirements.txt"] {
            std::fs::write(dir.join(f), "").unwrap();
        }
        let found: Vec<String> = python_scripts(&dir)
            .unwrap()
            .iter()
            .map(|p| file_name(p))
            .collect();
        assert_eq!(found, ["a.py", "b.py"]);
        assert!(python_scripts(&dir.join("absent")).unwrap().is_empty());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
