//! `cargo xtask test`: the one test command, the same on a laptop and in CI.
//! Every step runs unless a step it needs failed; the recap at the end lists
//! each runner's summary line, and the exit code is non-zero on any failure.

use crate::install::{self, CHROMEDRIVER, CHROMIUM};
use crate::sh::{self, Failure, Result};
use crate::steps::{libtest_totals, node_summary, Recap};
use crate::{dist, reference};
use std::path::{Path, PathBuf};
use std::process::Command;

/// Flags headless Chromium needs on these machines (no GPU, no sandbox, no
/// background traffic); the tests give it a fresh profile folder as well.
pub const CHROMIUM_FLAGS: [&str; 8] = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
];

/// Run every step and print the recap.
pub fn run() -> Result<()> {
    let root = sh::root();
    let mut recap = Recap::default();
    recap.step("install", &[], || {
        install::install(install::Scope::Test).map(|()| "tools ready".to_string())
    });
    recap.step("fmt", &[], || {
        sh::run(
            Command::new("cargo")
                .current_dir(&root)
                .args(["fmt", "--all", "--check"]),
        )
        .map(|()| "cargo fmt: formatted".to_string())
        .map_err(|e| Failure::new(format!("{e}; run `cargo fmt --all`")))
    });
    recap.step("clippy", &[], || {
        sh::run(Command::new("cargo").current_dir(&root).args([
            "clippy",
            "--workspace",
            "--all-targets",
            "--",
            "-D",
            "warnings",
        ]))
        .map(|()| "clippy: no warnings".to_string())
    });
    recap.step("reference", &[], reference::compute);
    recap.step("cargo test", &[], || {
        libtest(
            Command::new("cargo")
                .current_dir(&root)
                .args(["test", "--workspace"]),
        )
    });
    recap.step("fuzz (short)", &["install"], || fuzz_short(&root));
    // The 2,000,000-row run of `pairsight match` takes minutes in a debug
    // build and seconds in release, so it runs here, in release, by name.
    recap.step("large input", &[], || {
        libtest(Command::new("cargo").current_dir(&root).args([
            "test",
            "--release",
            "-p",
            "pairsight-cli",
            "--test",
            "large_input",
            "--",
            "--ignored",
            "--nocapture",
        ]))
    });
    recap.step("wasm build", &["install"], || {
        let built = dist::build()?;
        let size = format!(
            "wasm {}{} (budget {})",
            sh::human_size(built.wasm_size),
            if built.optimised {
                " after wasm-opt -Oz"
            } else {
                ", not optimised"
            },
            sh::human_size(dist::WASM_BUDGET)
        );
        if built.wasm_size > dist::WASM_BUDGET {
            Err(Failure::new(format!("{size}: over budget")))
        } else {
            Ok(size)
        }
    });
    recap.step("wasm tests", &["install"], || wasm_tests(&root));
    recap.step("browser tests", &["install", "wasm build"], || {
        browser_tests(&root)
    });
    println!("\n{}", recap.render());
    let (_, failed, skipped) = recap.counts();
    if failed + skipped > 0 {
        Err(Failure::new(
            "some steps did not pass (see the summary above)",
        ))
    } else {
        Ok(())
    }
}

/// Run a libtest-based command and summarise its `test result:` lines.
fn libtest(cmd: &mut Command) -> Result<String> {
    let (lines, ok) = sh::run_keeping_output(cmd)?;
    let (passed, failed, ignored, binaries) = libtest_totals(&lines);
    let summary =
        format!("{passed} passed; {failed} failed; {ignored} ignored ({binaries} test binaries)");
    if ok && binaries > 0 {
        Ok(summary)
    } else if ok {
        Err(Failure::new("no test results were reported"))
    } else {
        Err(Failure::new(format!(
            "`{}` failed: {summary}",
            sh::display(cmd)
        )))
    }
}

/// The wasm crate's wasm-bindgen tests in headless Chromium through its
/// WebDriver. Release profile: the tests run the code as it ships, and the
/// dependencies are already built by the wasm build.
fn wasm_tests(root: &Path) -> Result<String> {
    let runner = dist::tool("wasm-bindgen-test-runner")?;
    let dir = root.join("target/wasm-test");
    let profile = fresh_dir(&dir.join("profile"))?;
    let config = dir.join("webdriver.json");
    std::fs::write(&config, webdriver_json(&profile))?;
    libtest(
        Command::new("cargo")
            .current_dir(root)
            .args([
                "test",
                "-p",
                "pairsight-wasm",
                "--target",
                "wasm32-unknown-unknown",
                "--release",
            ])
            .env("CARGO_TARGET_WASM32_UNKNOWN_UNKNOWN_RUNNER", runner)
            .env("CHROMEDRIVER", CHROMEDRIVER)
            .env("WASM_BINDGEN_TEST_WEBDRIVER_JSON", &config)
            .env("WASM_BINDGEN_TEST_TIMEOUT", "120"),
    )
}

/// Capabilities for wasm-bindgen-test-runner: which browser binary, our
/// flags and a fresh profile folder (the runner adds its own headless flags).
pub fn webdriver_json(profile: &Path) -> String {
    let mut args: Vec<String> = CHROMIUM_FLAGS.iter().map(|f| f.to_string()).collect();
    args.push(format!("--user-data-dir={}", profile.display()));
    let config = serde_json::json!({
        "goog:chromeOptions": { "binary": CHROMIUM, "args": args }
    });
    serde_json::to_string_pretty(&config).unwrap_or_default()
}

fn fresh_dir(dir: &Path) -> Result<PathBuf> {
    if dir.exists() {
        std::fs::remove_dir_all(dir)?;
    }
    std::fs::create_dir_all(dir)?;
    Ok(dir.to_path_buf())
}

/// Inputs each fuzz target runs in `cargo xtask test`: a fixed number from
/// a fixed seed, so the step gives the same verdict every time; longer
/// timed runs are by hand (`tests/fuzz/run-short.sh`, docs/validation.md).
const FUZZ_RUNS: &str = "20000";

/// The fuzz targets of `tests/fuzz`, each for [`FUZZ_RUNS`] inputs.
fn fuzz_short(root: &Path) -> Result<String> {
    let (lines, ok) = sh::run_keeping_output(
        Command::new("sh")
            .current_dir(root)
            .arg("tests/fuzz/run-short.sh")
            .env("FUZZ_RUNS", FUZZ_RUNS)
            .env("FUZZ_SEED", "1"),
    )?;
    let passed = lines
        .iter()
        .filter(|l| l.starts_with("ok: fuzz target"))
        .count();
    if ok && passed > 0 {
        Ok(format!(
            "{passed} fuzz targets, {FUZZ_RUNS} inputs each from seed 1: no finding"
        ))
    } else {
        Err(Failure::new(format!(
            "a fuzz target failed ({passed} passed); the input is under tests/fuzz/artifacts/"
        )))
    }
}

/// The end-to-end tests: node's test runner driving Chromium with
/// playwright-core against `dist/pairsight.html`.
fn browser_tests(root: &Path) -> Result<String> {
    let dir = root.join("tests/e2e");
    let (lines, ok) = sh::run_keeping_output(
        Command::new("node")
            .current_dir(&dir)
            .args(["--test", "--test-reporter=spec"])
            .env("PAIRSIGHT_DIST", root.join("dist"))
            .env("PAIRSIGHT_ARTIFACTS", root.join("artifacts"))
            .env("PAIRSIGHT_CHROMIUM", CHROMIUM)
            .envs(
                std::env::current_exe()
                    .ok()
                    .map(|exe| ("PAIRSIGHT_XTASK", exe)),
            ),
    )?;
    let summary = node_summary(&lines).unwrap_or_else(|| "no summary line".to_string());
    if ok && lines.iter().any(|l| l.contains("pass")) {
        Ok(format!("node --test: {summary}"))
    } else {
        Err(Failure::new(format!("node --test: {summary}")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn webdriver_config_names_browser_flags_and_profile() {
        let text = webdriver_json(Path::new("/tmp/p \"q\""));
        let v: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
        let opts = &v["goog:chromeOptions"];
        assert_eq!(opts["binary"], "/usr/bin/chromium");
        let args: Vec<&str> = opts["args"]
            .as_array()
            .unwrap()
            .iter()
            .filter_map(|a| a.as_str())
            .collect();
        for flag in CHROMIUM_FLAGS {
            assert!(args.contains(&flag), "{flag}: {text}");
        }
        assert!(args.contains(&"--user-data-dir=/tmp/p \"q\""), "{text}");
    }
}
