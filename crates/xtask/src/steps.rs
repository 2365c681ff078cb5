//! Keeping the score of a multi-step task: each step passes, fails or is
//! skipped because a step it needs did not pass; the recap lists every step
//! with its runner's summary line and ends with `xtask: N passed, N failed`.

use crate::sh::Result;
use std::time::Instant;

/// How a step ended.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Passed, with the runner's summary line.
    Passed(String),
    /// Failed, with the reason.
    Failed(String),
    /// Not run, because the named step did not pass.
    Skipped(String),
}

/// The steps run so far.
#[derive(Debug, Default)]
pub struct Recap {
    steps: Vec<(String, Outcome, f64)>,
}

impl Recap {
    /// Run `body` as step `name` unless one of `needs` did not pass.
    pub fn step(&mut self, name: &str, needs: &[&str], body: impl FnOnce() -> Result<String>) {
        if let Some(missing) = needs.iter().find(|n| !self.passed(n)) {
            println!("\n== {name}: skipped ({missing} did not pass)");
            self.steps.push((
                name.to_string(),
                Outcome::Skipped(format!("needs {missing}")),
                0.0,
            ));
            return;
        }
        println!("\n== {name}");
        let start = Instant::now();
        let outcome = match body() {
            Ok(summary) => Outcome::Passed(summary),
            Err(e) => Outcome::Failed(e.to_string()),
        };
        let secs = start.elapsed().as_secs_f64();
        match &outcome {
            Outcome::Passed(s) => println!("== {name}: ok ({secs:.0} s) {s}"),
            Outcome::Failed(e) => println!("== {name}: FAILED ({secs:.0} s) {e}"),
            Outcome::Skipped(_) => {}
        }
        self.steps.push((name.to_string(), outcome, secs));
    }

    /// Whether the step named `name` ran and passed.
    pub fn passed(&self, name: &str) -> bool {
        self.steps
            .iter()
            .any(|(n, o, _)| n == name && matches!(o, Outcome::Passed(_)))
    }

    /// Counts of passed, failed and skipped steps.
    pub fn counts(&self) -> (usize, usize, usize) {
        let count = |f: fn(&Outcome) -> bool| self.steps.iter().filter(|(_, o, _)| f(o)).count();
        (
            count(|o| matches!(o, Outcome::Passed(_))),
            count(|o| matches!(o, Outcome::Failed(_))),
            count(|o| matches!(o, Outcome::Skipped(_))),
        )
    }

    /// The recap as printed at the end, last line `xtask: N passed, N failed`
    /// (with the skipped count in parentheses when there are any).
    pub fn render(&self) -> String {
        let width = self
            .steps
            .iter()
            .map(|(n, _, _)| n.len())
            .max()
            .unwrap_or(0);
        let mut out = String::from("== summary\n");
        for (name, outcome, secs) in &self.steps {
            let (mark, text) = match outcome {
                Outcome::Passed(s) => ("ok     ", s.as_str()),
                Outcome::Failed(s) => ("FAILED ", s.as_str()),
                Outcome::Skipped(s) => ("skipped", s.as_str()),
            };
            out.push_str(&format!("  {mark} {name:<width$}  {secs:>5.0} s  {text}\n"));
        }
        let (passed, failed, skipped) = self.counts();
        out.push_str(&format!("xtask: {passed} passed, {failed} failed"));
        if skipped > 0 {
            out.push_str(&format!(" ({skipped} skipped)"));
        }
        out
    }
}

/// Totals of cargo's libtest lines `test result: ok. 3 passed; 0 failed; 1
/// ignored; ...`, summed over every test binary: (passed, failed, ignored,
/// number of result lines).
pub fn libtest_totals(lines: &[String]) -> (u64, u64, u64, usize) {
    let mut totals = (0, 0, 0, 0);
    for line in lines
        .iter()
        .filter(|l| l.trim_start().starts_with("test result:"))
    {
        totals.0 += count_before(line, "passed");
        totals.1 += count_before(line, "failed");
        totals.2 += count_before(line, "ignored");
        totals.3 += 1;
    }
    totals
}

/// The number written just before `word` ("3 passed" -> 3), or 0.
fn count_before(line: &str, word: &str) -> u64 {
    let words: Vec<&str> = line
        .split(|c: char| c.is_whitespace() || c == ';' || c == '.' || c == ',')
        .filter(|w| !w.is_empty())
        .collect();
    words
        .windows(2)
        .find(|w| w[1] == word)
        .and_then(|w| w[0].parse().ok())
        .unwrap_or(0)
}

/// The summary of node's test runner: its `tests`, `pass` and `fail` lines
/// (spec reporter `ℹ pass 5`, TAP reporter `# pass 5`) joined into one.
pub fn node_summary(lines: &[String]) -> Option<String> {
    let mut parts = Vec::new();
    for key in ["tests", "pass", "fail", "skipped", "cancelled"] {
        let found = lines.iter().rev().find_map(|l| {
            let t = l.trim_start().trim_start_matches(['ℹ', '#']).trim();
            let rest = t.strip_prefix(key)?.strip_prefix(' ')?;
            rest.trim().parse::<u64>().ok()
        });
        if let Some(n) = found {
            parts.push(format!("{key} {n}"));
        }
    }
    (!parts.is_empty()).then(|| parts.join(", "))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sh::Failure;

    fn lines(text: &str) -> Vec<String> {
        text.lines().map(str::to_string).collect()
    }

    #[test]
    fn later_steps_skip_when_a_need_fails() {
        let mut r = Recap::default();
        r.step("install", &[], || Ok("tools ready".into()));
        r.step("build", &["install"], || Err(Failure::new("no wasm")));
        r.step("e2e", &["build"], || Ok("never".into()));
        r.step("fmt", &[], || Ok("clean".into()));
        assert_eq!(r.counts(), (2, 1, 1));
        let text = r.render();
        assert!(
            text.ends_with("xtask: 2 passed, 1 failed (1 skipped)"),
            "{text}"
        );
        assert!(
            text.contains("FAILED  build") && text.contains("needs build"),
            "{text}"
        );
    }

    #[test]
    fn clean_run_has_the_plain_last_line() {
        let mut r = Recap::default();
        r.step("a", &[], || Ok(String::new()));
        assert!(r.render().ends_with("xtask: 1 passed, 0 failed"));
    }

    #[test]
    fn libtest_lines_are_summed() {
        let out = lines(
            "running 3 tests\ntest a ... ok\n\
             test result: ok. 3 passed; 0 failed; 1 ignored; 0 measured; 0 filtered out; finished in 0.01s\n\
             test result: FAILED. 10 passed; 2 failed; 0 ignored; 0 measured; 0 filtered out\n",
        );
        assert_eq!(libtest_totals(&out), (13, 2, 1, 2));
        assert_eq!(libtest_totals(&lines("nothing")), (0, 0, 0, 0));
    }

    #[test]
    fn node_summary_from_either_reporter() {
        let spec = lines("✔ loads (12ms)\nℹ tests 5\nℹ suites 0\nℹ pass 4\nℹ fail 1\nℹ cancelled 0\nℹ skipped 0\n");
        assert_eq!(
            node_summary(&spec).as_deref(),
            Some("tests 5, pass 4, fail 1, skipped 0, cancelled 0")
        );
        let tap = lines("ok 1 - x\n# tests 1\n# pass 1\n# fail 0\n");
        assert_eq!(
            node_summary(&tap).as_deref(),
            Some("tests 1, pass 1, fail 0")
        );
        assert_eq!(node_summary(&lines("no summary")), None);
    }
}
