//! The committed demo folder is exactly what the generator makes with the
//! default parameters, and `pairsight demo` writes the same bytes.

use pairsight_core::demo::{generate, DemoParams};
use std::path::PathBuf;

fn committed(name: &str) -> String {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../demo")
        .join(name);
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

const REGENERATE: &str =
    "regenerate with `cargo run --release -p pairsight-cli -- demo --out demo`";

#[test]
fn committed_demo_matches_the_generator_byte_for_byte() {
    let demo = generate(&DemoParams::default()).unwrap();
    assert!(
        committed("cohort.csv") == demo.cohort_csv,
        "demo/cohort.csv differs from the generator; {REGENERATE}"
    );
    assert!(
        committed("demo.study.toml") == demo.study_toml,
        "demo/demo.study.toml differs; {REGENERATE}"
    );
    assert!(
        committed("truth.json") == demo.truth_json().unwrap(),
        "demo/truth.json differs; {REGENERATE}"
    );
}

#[test]
fn the_command_writes_the_committed_bytes() {
    let out = std::env::temp_dir().join(format!("pairsight-demo-test-{}", std::process::id()));
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_pairsight"))
        .args(["demo", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        status.status.success(),
        "{}",
        String::from_utf8_lossy(&status.stderr)
    );
    let stdout = String::from_utf8_lossy(&status.stdout);
    assert!(stdout.contains("invented"), "{stdout}");
    for name in ["cohort.csv", "demo.study.toml", "truth.json"] {
        let written = std::fs::read_to_string(out.join(name)).unwrap();
        assert!(
            written == committed(name),
            "{name} differs from demo/{name}"
        );
    }
    std::fs::remove_dir_all(&out).unwrap();
}

#[test]
fn bad_arguments_are_messages_not_panics() {
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_pairsight"))
        .args(["demo", "--patients", "0", "--out"])
        .arg(std::env::temp_dir().join("pairsight-demo-never-written"))
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("patients"), "{stderr}");
    assert!(!stderr.contains("panicked"), "{stderr}");
}
