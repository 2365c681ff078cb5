//! `pairsight effect` on the small invented cohort.

mod common;
use common::*;

#[test]
fn prints_a_table_per_design_and_outcome_with_the_caution() {
    let (data, study) = small();
    let o = pairsight([
        "effect".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
    ]);
    ok(&o);
    let out = stdout(&o);
    for needle in [
        "Design \"structured\"",
        "Design \"with-notes\"",
        "Outcome \"readmit_30d\" (binary; risk difference",
        "Outcome \"length_of_stay\" (continuous; mean difference",
        "95% interval",
        "McNemar exact",
        "Wilcoxon signed-rank",
        "risk ratio, matched",
        "hidden bias: Rosenbaum bound",
        "E-value:",
        "no unmeasured confounding",
        "research-ethics",
    ] {
        assert!(out.contains(needle), "{needle} missing from\n{out}");
    }
    assert_eq!(out.matches("  unmatched ").count(), 4);
    assert_eq!(out.matches("  matched ").count(), 4);
}

#[test]
fn one_design_only_and_an_unknown_design_is_bad_input() {
    let (data, study) = small();
    let o = pairsight([
        "effect".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--design".as_ref(),
        "with-notes".as_ref(),
    ]);
    ok(&o);
    let out = stdout(&o);
    assert!(out.contains("Design \"with-notes\"") && !out.contains("Design \"structured\""));

    let o = pairsight([
        "effect".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--design".as_ref(),
        "no-such-design".as_ref(),
    ]);
    let err = bad_input(&o);
    assert!(
        err.contains("small.study.toml") && err.contains("no-such-design"),
        "{err}"
    );
}

#[test]
fn a_bad_outcome_cell_names_row_and_column() {
    let (data, study) = small();
    let dir = fresh("effect-bad-cell");
    let text = std::fs::read_to_string(&data).unwrap();
    // Make one readmission cell a word: the column is no longer binary.
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut cells: Vec<String> = lines[5].split(',').map(str::to_string).collect();
    cells[7] = "maybe".into();
    lines[5] = cells.join(",");
    let data2 = dir.join("bad.csv");
    write(&data2, &(lines.join("\n") + "\n"));
    let o = pairsight([
        "effect".as_ref(),
        data2.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
    ]);
    let err = bad_input(&o);
    assert!(
        err.contains("bad.csv") && err.contains("readmit_30d"),
        "{err}"
    );
}
