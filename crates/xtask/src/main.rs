//! Project tasks for pairsight, run as `cargo xtask <task>` (an alias in
//! `.cargo/config.toml`). Plain Rust, so a fresh clone needs nothing but
//! rustup and cargo to start; every other tool is installed by `install`.
//!
//! One module per concern: [`install`] (tools), [`dist`] (wasm build and the
//! `dist/` folder), [`bundle`] (the single-file app and its security policy),
//! [`serve`] (the local static server), [`reference`] (outside reference
//! values), [`test`] (the one test command), [`bench`] (benchmarks); [`sh`]
//! runs commands, [`steps`] keeps the score and [`wasm_exports`] checks
//! what wasm-opt wrote.

mod bench;
mod bundle;
mod dist;
mod install;
mod reference;
mod serve;
mod sh;
mod steps;
mod test;
mod wasm_exports;

use std::process::ExitCode;

const HELP: &str = "\
pairsight project tasks

usage: cargo xtask <task> [options]

tasks:
  demo [--port N]     install what is missing, build, then serve dist/ on
                      127.0.0.1 (port 8080 or the next free one); Ctrl-C stops
  test                the one test command (CI runs exactly this): install,
                      fmt, clippy, reference values, cargo tests, wasm build,
                      wasm tests in headless Chromium, browser end-to-end tests
  build               build the wasm core and write dist/ (served files) and
                      dist/pairsight.html (one self-contained file)
  serve [--port N]    serve an existing dist/ on 127.0.0.1
  install [--for-test]
                      install missing build tools; --for-test adds Chromium,
                      its driver and the npm packages of the browser tests
  reference           compute reference values with the Python libraries
                      (venv in target/refenv) into target/reference
  bench               run the benchmarks (criterion, then tests/bench/*.py)
  help                this text
";

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let (task, rest) = match args.split_first() {
        Some((t, r)) => (t.as_str(), r),
        None => ("help", &[][..]),
    };
    let outcome = match task {
        "demo" => port_arg(rest).and_then(serve::demo),
        "serve" => port_arg(rest).and_then(serve::serve_existing),
        "build" => no_args(task, rest).and_then(|()| dist::build().map(|_| ())),
        "install" => install_args(rest).and_then(install::install),
        "test" => no_args(task, rest).and_then(|()| test::run()),
        "reference" => no_args(task, rest).and_then(|()| reference::run()),
        "bench" => no_args(task, rest).and_then(|()| bench::run()),
        "help" | "-h" | "--help" => {
            print!("{HELP}");
            Ok(())
        }
        other => Err(sh::Failure::new(format!(
            "unknown task `{other}`; run `cargo xtask help` for the list"
        ))),
    };
    match outcome {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("xtask: {e}");
            ExitCode::FAILURE
        }
    }
}

fn no_args(task: &str, rest: &[String]) -> sh::Result<()> {
    match rest.first() {
        None => Ok(()),
        Some(a) => Err(sh::Failure::new(format!(
            "`{task}` takes no options, got `{a}`; see `cargo xtask help`"
        ))),
    }
}

fn install_args(rest: &[String]) -> sh::Result<install::Scope> {
    match rest {
        [] => Ok(install::Scope::Build),
        [f] if f == "--for-test" => Ok(install::Scope::Test),
        [a, ..] => Err(sh::Failure::new(format!(
            "`install` takes only --for-test, got `{a}`"
        ))),
    }
}

/// `--port N` (or `--port=N`); `None` means 8080 or the next free port.
fn port_arg(rest: &[String]) -> sh::Result<Option<u16>> {
    let value = match rest {
        [] => return Ok(None),
        [flag, v] if flag == "--port" => v.as_str(),
        [flag] if flag.starts_with("--port=") => &flag["--port=".len()..],
        _ => {
            return Err(sh::Failure::new(format!(
                "expected `--port N`, got `{}`",
                rest.join(" ")
            )))
        }
    };
    value.parse::<u16>().map(Some).map_err(|_| {
        sh::Failure::new(format!(
            "--port must be a number from 1 to 65535, got `{value}`"
        ))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn args(a: &[&str]) -> Vec<String> {
        a.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn port_forms() {
        assert_eq!(port_arg(&[]).ok(), Some(None));
        assert_eq!(port_arg(&args(&["--port", "9000"])).ok(), Some(Some(9000)));
        assert_eq!(port_arg(&args(&["--port=9001"])).ok(), Some(Some(9001)));
        assert!(port_arg(&args(&["--port", "x"])).is_err());
        assert!(port_arg(&args(&["--port", "70000"])).is_err());
        assert!(port_arg(&args(&["9000"])).is_err());
    }

    #[test]
    fn install_scope() {
        assert_eq!(install_args(&[]).ok(), Some(install::Scope::Build));
        assert_eq!(
            install_args(&args(&["--for-test"])).ok(),
            Some(install::Scope::Test)
        );
        assert!(install_args(&args(&["--all"])).is_err());
    }
}
