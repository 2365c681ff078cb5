//! Installing what the build and the tests need, only when it is missing, and
//! saying what is done. Safe to run again and again.

use crate::sh::{self, Failure, Result};
use std::path::Path;
use std::process::Command;

/// What the tools are for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    /// Building the page: wasm target, wasm-bindgen, wasm-opt.
    Build,
    /// Also testing it: Chromium, its WebDriver, Node and the npm packages.
    Test,
}

/// The browser the tests drive; Debian's package puts it here.
pub const CHROMIUM: &str = "/usr/bin/chromium";
/// Chromium's WebDriver, used by wasm-bindgen-test-runner.
pub const CHROMEDRIVER: &str = "/usr/bin/chromedriver";

const WASM_TARGET: &str = "wasm32-unknown-unknown";

/// Install everything `scope` needs that is not there yet.
pub fn install(scope: Scope) -> Result<()> {
    println!("== install: checking tools");
    let mut apt = Apt::default();
    wasm_target()?;
    wasm_bindgen_cli()?;
    wasm_opt(&mut apt)?;
    if scope == Scope::Test {
        cargo_fuzz()?;
        browser(&mut apt)?;
        node(&mut apt)?;
        npm_packages()?;
    }
    println!("== install: done");
    Ok(())
}

fn wasm_target() -> Result<()> {
    let installed = sh::query("rustup", &["target", "list", "--installed"]).ok_or_else(|| {
        Failure::new(
            "rustup not found: install Rust with rustup (https://rustup.rs), then run this again",
        )
    })?;
    if installed.lines().any(|l| l.trim() == WASM_TARGET) {
        println!("ok: rust target {WASM_TARGET}");
        return Ok(());
    }
    println!("installing: rust target {WASM_TARGET}");
    sh::run(Command::new("rustup").args(["target", "add", WASM_TARGET]))
}

/// The wasm-bindgen version that Cargo.lock pins. The command-line tool must
/// match it exactly, or the generated glue and the wasm disagree.
pub fn pinned_wasm_bindgen() -> Result<String> {
    let path = sh::root().join("Cargo.lock");
    let text = std::fs::read_to_string(&path)
        .map_err(|e| Failure::new(format!("cannot read {}: {e}", path.display())))?;
    lock_version(&text, "wasm-bindgen").ok_or_else(|| {
        Failure::new("Cargo.lock has no wasm-bindgen entry; run `cargo generate-lockfile`")
    })
}

/// cargo-fuzz, which builds and runs the fuzz targets of `tests/fuzz`.
const CARGO_FUZZ: &str = "0.13.2";

fn cargo_fuzz() -> Result<()> {
    if reported_version("cargo-fuzz").as_deref() == Some(CARGO_FUZZ) {
        println!("ok: cargo-fuzz {CARGO_FUZZ}");
        return Ok(());
    }
    println!("installing: cargo-fuzz {CARGO_FUZZ} (runs the fuzz targets)");
    sh::run(Command::new("cargo").args([
        "install",
        "cargo-fuzz",
        "--version",
        &format!("={CARGO_FUZZ}"),
        "--locked",
    ]))
}

/// The version of `package` in a Cargo.lock text.
pub fn lock_version(lock: &str, package: &str) -> Option<String> {
    #[derive(serde::Deserialize)]
    struct Lock {
        #[serde(default)]
        package: Vec<Package>,
    }
    #[derive(serde::Deserialize)]
    struct Package {
        name: String,
        version: String,
    }
    let lock: Lock = toml::from_str(lock).ok()?;
    lock.package
        .into_iter()
        .find(|p| p.name == package)
        .map(|p| p.version)
}

/// The version a `--version` line reports ("wasm-bindgen 0.2.130" -> "0.2.130").
fn reported_version(program: &str) -> Option<String> {
    let out = sh::query(program, &["--version"])?;
    out.split_whitespace().nth(1).map(str::to_string)
}

fn wasm_bindgen_cli() -> Result<()> {
    let want = pinned_wasm_bindgen()?;
    let have = reported_version("wasm-bindgen");
    let runner = reported_version("wasm-bindgen-test-runner");
    if have.as_deref() == Some(want.as_str()) && runner.as_deref() == Some(want.as_str()) {
        println!("ok: wasm-bindgen-cli {want}");
        return Ok(());
    }
    match have {
        Some(v) => {
            println!("installing: wasm-bindgen-cli {want} (found {v}; it must match Cargo.lock)")
        }
        None => println!("installing: wasm-bindgen-cli {want} (takes a few minutes, once)"),
    }
    // Not `--locked`: one dependency locked by the CLI's own lockfile is no
    // longer in the registry, so a locked install cannot resolve.
    sh::run(Command::new("cargo").args([
        "install",
        "wasm-bindgen-cli",
        "--version",
        &format!("={want}"),
    ]))
}

/// The wasm-opt from npm's binaryen package (pinned in
/// `crates/xtask/tools/package-lock.json`), when installed.
pub fn npm_wasm_opt() -> Option<std::path::PathBuf> {
    let p = sh::root().join("crates/xtask/tools/node_modules/.bin/wasm-opt");
    p.is_file().then_some(p)
}

/// wasm-opt: npm's binaryen when Node.js is there (recent enough for the
/// features Rust's wasm32 target emits), else Debian's binaryen.
fn wasm_opt(apt: &mut Apt) -> Result<()> {
    if sh::which("npm").is_some() && sh::which("node").is_some() {
        return npm_ci(
            "crates/xtask/tools",
            "binaryen's wasm-opt (shrinks the wasm)",
        );
    }
    if sh::which("wasm-opt").is_some() {
        println!("ok: wasm-opt");
        return Ok(());
    }
    if apt.usable() {
        println!("installing: binaryen (wasm-opt, shrinks the wasm)");
        return apt.install(&["binaryen"]);
    }
    println!(
        "note: wasm-opt not found and Debian packages cannot be installed here (needs root and apt-get); \
         the wasm will be built without size optimisation. Install binaryen to shrink it."
    );
    Ok(())
}

fn browser(apt: &mut Apt) -> Result<()> {
    let mut missing = Vec::new();
    if !Path::new(CHROMIUM).is_file() {
        missing.push("chromium");
    }
    if !Path::new(CHROMEDRIVER).is_file() {
        missing.push("chromium-driver");
    }
    if missing.is_empty() {
        println!("ok: {CHROMIUM}, {CHROMEDRIVER}");
        return Ok(());
    }
    if !apt.usable() {
        return Err(Failure::new(format!(
            "the browser tests need {}; install with `sudo apt-get install {}` (this run is not root or has no apt-get)",
            missing.join(" and "),
            missing.join(" ")
        )));
    }
    println!(
        "installing: {} (headless browser for the tests)",
        missing.join(", ")
    );
    apt.install(&missing)
}

/// The oldest Node.js the browser tests run on (playwright-core's own floor).
const NODE_MAJOR: u32 = 20;

fn node(apt: &mut Apt) -> Result<()> {
    if sh::which("node").is_none() || sh::which("npm").is_none() {
        if !apt.usable() {
            return Err(Failure::new(format!(
                "the browser tests need Node.js {NODE_MAJOR} or later with npm; install them \
                 (e.g. `sudo apt-get install nodejs npm`, or from nodejs.org)"
            )));
        }
        println!("installing: nodejs, npm (runner of the browser tests)");
        apt.install(&["nodejs", "npm"])?;
    }
    let reported = sh::query("node", &["--version"]).unwrap_or_default();
    match node_major(&reported) {
        Some(major) if major >= NODE_MAJOR => {
            println!("ok: node {}, npm", reported.trim());
            Ok(())
        }
        _ => Err(Failure::new(format!(
            "the browser tests need Node.js {NODE_MAJOR} or later, found `{}`; install a newer one \
             (nodejs.org lists the releases)",
            reported.trim()
        ))),
    }
}

/// The major version in `node --version` output ("v20.20.2" -> 20).
fn node_major(reported: &str) -> Option<u32> {
    reported
        .trim()
        .strip_prefix('v')?
        .split('.')
        .next()?
        .parse()
        .ok()
}

/// The npm packages of the browser tests.
fn npm_packages() -> Result<()> {
    npm_ci("tests/e2e", "playwright-core (no browser download)")
}

/// `npm ci` in `folder`, unless node_modules already matches the committed
/// lockfile (a stamp holds the lockfile it was installed from).
fn npm_ci(folder: &str, what: &str) -> Result<()> {
    let dir = sh::root().join(folder);
    let lock_path = dir.join("package-lock.json");
    let lock = std::fs::read(&lock_path)
        .map_err(|e| Failure::new(format!("cannot read {}: {e}", lock_path.display())))?;
    let stamp = dir.join("node_modules/.pairsight-lock-stamp");
    if std::fs::read(&stamp).ok().as_deref() == Some(lock.as_slice()) {
        println!("ok: npm packages of {folder}");
        return Ok(());
    }
    println!("installing: npm packages of {folder} from package-lock.json: {what}");
    sh::run(
        Command::new("npm")
            .args(["ci", "--no-audit", "--no-fund"])
            .current_dir(&dir)
            // playwright-core downloads nothing, but say so in case a
            // dependency ever tries.
            .env("PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD", "1"),
    )?;
    std::fs::write(&stamp, &lock)?;
    Ok(())
}

/// Debian packages, installed only as root with apt-get present; the package
/// lists are refreshed once per run, before the first install.
#[derive(Default)]
struct Apt {
    updated: bool,
}

impl Apt {
    fn usable(&self) -> bool {
        sh::is_root() && sh::which("apt-get").is_some()
    }

    fn install(&mut self, packages: &[&str]) -> Result<()> {
        if !self.updated {
            sh::run(Command::new("apt-get").arg("update"))?;
            self.updated = true;
        }
        sh::run(
            Command::new("apt-get")
                .args(["install", "-y"])
                .args(packages)
                .env("DEBIAN_FRONTEND", "noninteractive"),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_version_in_a_lockfile() {
        let lock = r#"
version = 4

[[package]]
name = "wasm-bindgen-macro"
version = "0.2.999"

[[package]]
name = "wasm-bindgen"
version = "0.2.130"
source = "registry+https://github.com/rust-lang/crates.io-index"
"#;
        assert_eq!(
            lock_version(lock, "wasm-bindgen").as_deref(),
            Some("0.2.130")
        );
        assert_eq!(lock_version(lock, "serde"), None);
        assert_eq!(lock_version("not toml [", "wasm-bindgen"), None);
    }

    #[test]
    fn node_major_versions() {
        assert_eq!(node_major("v20.20.2\n"), Some(20));
        assert_eq!(node_major("v18.19.0"), Some(18));
        assert_eq!(node_major("20.1"), None);
        assert_eq!(node_major(""), None);
    }

    #[test]
    fn the_workspace_pins_wasm_bindgen_exactly() {
        // The workspace manifest pins `=X`; the lockfile must carry that X.
        let manifest = std::fs::read_to_string(sh::root().join("Cargo.toml")).unwrap_or_default();
        let pinned = pinned_wasm_bindgen().expect("Cargo.lock readable");
        assert!(
            manifest.contains(&format!("wasm-bindgen = \"={pinned}\"")),
            "Cargo.toml should pin wasm-bindgen = \"={pinned}\""
        );
    }
}
