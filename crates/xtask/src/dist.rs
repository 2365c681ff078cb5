//! Building the page: the wasm core in release, wasm-bindgen's glue, wasm-opt,
//! then `dist/` (files for a local server) and `dist/pairsight.html` (the
//! single self-contained file).
//!
//! wasm-bindgen runs with `--target no-modules`: its glue is a classic script
//! that defines one global, so the same glue serves both worker flavours, a
//! worker loaded from `worker.js` (which pulls the glue in with
//! `importScripts`) and the single file's worker made from a blob: URL (glue
//! and worker code joined into one text). ES-module glue would need a module
//! worker and import paths, which a blob: worker cannot resolve.

use crate::sh::{self, Failure, Result};
use crate::{bundle, wasm_exports};
use std::path::{Path, PathBuf};
use std::process::Command;

/// The size budget of the optimised wasm (the brief: under 2 MB).
pub const WASM_BUDGET: u64 = 2_000_000;

/// What a build produced.
#[derive(Debug, Clone)]
pub struct Built {
    /// `dist/pairsight.html`.
    pub single_file: PathBuf,
    /// Bytes of the wasm as shipped.
    pub wasm_size: u64,
    /// Whether wasm-opt ran.
    pub optimised: bool,
}

/// Build everything and write `dist/`.
pub fn build() -> Result<Built> {
    let root = sh::root();
    println!("== build: wasm core (profile web: release, optimised for size)");
    sh::run(Command::new("cargo").current_dir(&root).args([
        "build",
        "-p",
        "pairsight-wasm",
        "--target",
        "wasm32-unknown-unknown",
        "--profile",
        "web",
    ]))?;
    let raw = root.join("target/wasm32-unknown-unknown/web/pairsight_wasm.wasm");
    let glue_dir = root.join("target/wasm-bindgen");
    sh::run(
        Command::new(tool("wasm-bindgen")?)
            .arg(&raw)
            .arg("--out-dir")
            .arg(&glue_dir)
            .args(["--target", "no-modules", "--no-typescript"]),
    )?;
    let bg = glue_dir.join("pairsight_wasm_bg.wasm");
    let (wasm_path, optimised) = optimise(&bg)?;
    let wasm = read(&wasm_path)?;
    let glue = read_text(&glue_dir.join("pairsight_wasm.js"))?;

    println!("== build: dist/");
    let web = root.join("web");
    let dist = root.join("dist");
    if dist.exists() {
        std::fs::remove_dir_all(&dist)
            .map_err(|e| Failure::new(format!("cannot clear {}: {e}", dist.display())))?;
    }
    copy_tree(&web, &dist)?;
    let template = read_text(&web.join("index.html"))?;
    write(
        &dist.join("index.html"),
        bundle::served_page(&template, "main.js")?.as_bytes(),
    )?;
    write(&dist.join("pairsight_wasm.js"), glue.as_bytes())?;
    write(&dist.join("pairsight_wasm_bg.wasm"), &wasm)?;

    let worker = read_text(&web.join("worker.js"))?;
    let single = bundle::single_file(&bundle::SingleFile {
        template: &template,
        css: &read_text(&web.join("style.css"))?,
        app_js: &bundle::join_modules(&web, "main.js")?,
        worker_js: &format!("{glue}\n{worker}"),
        wasm: &wasm,
    })?;
    let single_path = dist.join("pairsight.html");
    write(&single_path, single.as_bytes())?;

    let wasm_size = wasm.len() as u64;
    println!(
        "wasm: {} {} (raw {}; budget {}){}",
        sh::human_size(wasm_size),
        if optimised {
            "after wasm-opt -Oz"
        } else {
            "not optimised"
        },
        sh::human_size(file_size(&bg)),
        sh::human_size(WASM_BUDGET),
        if wasm_size > WASM_BUDGET {
            "  OVER BUDGET"
        } else {
            ""
        },
    );
    println!(
        "single file: {} ({})",
        single_path.display(),
        sh::human_size(single.len() as u64)
    );
    Ok(Built {
        single_file: single_path,
        wasm_size,
        optimised,
    })
}

/// A wasm-bindgen tool, preferring the one on PATH, then cargo's bin folder
/// (where `cargo install` puts it even when that folder is not on PATH).
pub fn tool(name: &str) -> Result<PathBuf> {
    if let Some(p) = sh::which(name) {
        return Ok(p);
    }
    let cargo_home = std::env::var_os("CARGO_HOME")
        .map(PathBuf::from)
        .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".cargo")));
    cargo_home
        .map(|h| h.join("bin").join(name))
        .filter(|p| p.is_file())
        .ok_or_else(|| Failure::new(format!("{name} not found; run `cargo xtask install`")))
}

/// wasm-opt -Oz when available. A failing wasm-opt, or one whose output
/// lost or changed an export, is reported and the unoptimised wasm used, so
/// an old binaryen never blocks a build nor breaks the page.
fn optimise(bg: &Path) -> Result<(PathBuf, bool)> {
    let Some(wasm_opt) = crate::install::npm_wasm_opt().or_else(|| sh::which("wasm-opt")) else {
        println!("note: wasm-opt not found; shipping the wasm unoptimised (`cargo xtask install` adds it)");
        return Ok((bg.to_path_buf(), false));
    };
    let out = bg.with_extension("opt.wasm");
    // Rust's wasm32 target emits these post-MVP features by default; older
    // binaryen releases must be told they may keep them.
    let features = [
        "--enable-bulk-memory",
        "--enable-mutable-globals",
        "--enable-nontrapping-float-to-int",
        "--enable-sign-ext",
        "--enable-reference-types",
        "--enable-multivalue",
    ];
    let outcome = sh::run(
        Command::new(&wasm_opt)
            .arg("-Oz")
            .args(features)
            .arg(bg)
            .arg("-o")
            .arg(&out),
    );
    if let Err(e) = outcome {
        println!("warning: {e}; shipping the wasm unoptimised");
        return Ok((bg.to_path_buf(), false));
    }
    let before = wasm_exports::exports(&read(bg)?);
    let after = wasm_exports::exports(&read(&out)?);
    if before.is_none() || before != after {
        let version = sh::query(&wasm_opt.to_string_lossy(), &["--version"]).unwrap_or_default();
        println!(
            "warning: {} changed the module's exports (older binaryen releases rewrite the \
             externref table wrongly); shipping the wasm unoptimised. A newer binaryen fixes this.",
            version.trim()
        );
        return Ok((bg.to_path_buf(), false));
    }
    Ok((out, true))
}

fn copy_tree(from: &Path, to: &Path) -> Result<()> {
    std::fs::create_dir_all(to)?;
    let entries = std::fs::read_dir(from)
        .map_err(|e| Failure::new(format!("cannot read {}: {e}", from.display())))?;
    let mut entries: Vec<_> = entries.collect::<std::io::Result<_>>()?;
    entries.sort_by_key(|e| e.file_name());
    for entry in entries {
        let path = entry.path();
        let target = to.join(entry.file_name());
        if path.is_dir() {
            copy_tree(&path, &target)?;
        } else if entry.file_name() != "index.html" {
            std::fs::copy(&path, &target).map_err(|e| {
                Failure::new(format!(
                    "cannot copy {} to {}: {e}",
                    path.display(),
                    target.display()
                ))
            })?;
        }
    }
    Ok(())
}

fn read(path: &Path) -> Result<Vec<u8>> {
    std::fs::read(path).map_err(|e| Failure::new(format!("cannot read {}: {e}", path.display())))
}

fn read_text(path: &Path) -> Result<String> {
    std::fs::read_to_string(path)
        .map_err(|e| Failure::new(format!("cannot read {}: {e}", path.display())))
}

fn write(path: &Path, bytes: &[u8]) -> Result<()> {
    std::fs::write(path, bytes)
        .map_err(|e| Failure::new(format!("cannot write {}: {e}", path.display())))
}

fn file_size(path: &Path) -> u64 {
    std::fs::metadata(path).map_or(0, |m| m.len())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_page_sources_join_cleanly() {
        // The real web/ modules follow the joiner's conventions; a violation
        // shows up here, before any browser runs.
        let web = sh::root().join("web");
        let joined = bundle::join_modules(&web, "main.js").expect("web/ joins");
        assert!(joined.contains("// ---- main.js"));
        let template = std::fs::read_to_string(web.join("index.html")).expect("template");
        bundle::served_page(&template, "main.js").expect("template slots");
    }

    #[test]
    fn copy_tree_skips_the_template() {
        let base = std::env::temp_dir().join(format!("xtask-copy-{}", std::process::id()));
        let (src, dst) = (base.join("src"), base.join("dst"));
        std::fs::create_dir_all(src.join("screens")).unwrap();
        std::fs::write(src.join("index.html"), "t").unwrap();
        std::fs::write(src.join("a.js"), "a").unwrap();
        std::fs::write(src.join("screens/b.js"), "b").unwrap();
        copy_tree(&src, &dst).unwrap();
        assert!(dst.join("a.js").is_file() && dst.join("screens/b.js").is_file());
        assert!(!dst.join("index.html").exists());
        std::fs::remove_dir_all(&base).unwrap();
    }
}
