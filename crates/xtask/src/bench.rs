//! Benchmarks: criterion benches of the core, then every `tests/bench/*.py`
//! script (reference timings with the Python libraries, for the speed ratios
//! the brief sets), each given `--out target/bench`.

use crate::reference::{python_scripts, venv_python};
use crate::sh::{self, Result};
use std::process::Command;

/// `cargo xtask bench`.
pub fn run() -> Result<()> {
    let root = sh::root();
    println!("== bench: criterion (pairsight-core)");
    sh::run(
        Command::new("cargo")
            .current_dir(&root)
            .args(["bench", "-p", "pairsight-core"]),
    )?;
    let scripts = python_scripts(&root.join("tests/bench"))?;
    if scripts.is_empty() {
        println!("== bench: no tests/bench/*.py scripts yet");
        return Ok(());
    }
    let python = venv_python()?;
    let out = root.join("target/bench");
    std::fs::create_dir_all(&out)?;
    for script in scripts {
        println!("== bench: {}", script.display());
        sh::run(
            Command::new(&python)
                .arg(&script)
                .arg("--out")
                .arg(&out)
                .current_dir(&root),
        )?;
    }
    Ok(())
}
