//! Every file the command line writes is whole or absent: a failure while
//! writing (a file-size limit hit mid-write, a folder that cannot be made,
//! a target that cannot be replaced) leaves no partial file under the final
//! name, no temporary file behind, and an earlier whole file untouched.
//! Writing to a temporary sibling and renaming it is common practice; POSIX
//! rename(2) replaces the target in one step (IEEE Std 1003.1, rename).

mod common;

use common::{bad_input, fresh, ok, pairsight, pairsight_match, small};
use std::os::unix::process::CommandExt as _;
use std::path::Path;
use std::process::{Command, Output};

/// Names of the entries of `dir`, sorted.
fn entries(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

/// No temporary file anywhere under `dir`.
fn no_leftovers(dir: &Path) {
    for e in std::fs::read_dir(dir).unwrap() {
        let e = e.unwrap();
        let name = e.file_name().to_string_lossy().into_owned();
        assert!(
            !name.ends_with(".partial"),
            "left behind: {}",
            e.path().display()
        );
        if e.file_type().unwrap().is_dir() {
            no_leftovers(&e.path());
        }
    }
}

/// Run `pairsight` with files limited to `max_bytes` each (RLIMIT_FSIZE,
/// POSIX setrlimit): a write past it fails with EFBIG part-way through.
fn pairsight_limited(args: &[&std::ffi::OsStr], max_bytes: u64) -> Output {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_pairsight"));
    cmd.args(args);
    // SAFETY: between fork and exec the closure calls only signal and
    // setrlimit, both async-signal-safe, on plain values it owns.
    unsafe {
        cmd.pre_exec(move || {
            // Without this the kernel ends the process with SIGXFSZ
            // instead of failing the write.
            libc::signal(libc::SIGXFSZ, libc::SIG_IGN);
            let lim = libc::rlimit {
                rlim_cur: max_bytes as libc::rlim_t,
                rlim_max: max_bytes as libc::rlim_t,
            };
            if libc::setrlimit(libc::RLIMIT_FSIZE, &lim) != 0 {
                return Err(std::io::Error::last_os_error());
            }
            Ok(())
        });
    }
    cmd.output().expect("the pairsight binary runs")
}

#[test]
fn a_packet_cut_short_mid_write_leaves_no_partial_file_and_the_old_one_intact() {
    let (data, study) = small();
    let out = fresh("whole-packet");
    let args = |dir: &Path| -> Vec<std::ffi::OsString> {
        vec![
            "packet".into(),
            data.clone().into(),
            "--study".into(),
            study.clone().into(),
            "--out".into(),
            dir.into(),
            "--reviewers".into(),
            "ana".into(),
            "--sets-per-design".into(),
            "4".into(),
        ]
    };
    // A first, complete run.
    let first = pairsight(args(&out));
    ok(&first);
    let packet = out.join("packet-ana.html");
    let whole = std::fs::read(&packet).unwrap();
    assert!(whole.ends_with(b"</html>\n"));
    let before = entries(&out);

    // The same run again with files capped well below the packet's size: the
    // write fails part-way, after some bytes reached the disk.
    let cap = (whole.len() / 3) as u64;
    let a = args(&out);
    let refs: Vec<&std::ffi::OsStr> = a.iter().map(|s| s.as_os_str()).collect();
    let cut = pairsight_limited(&refs, cap);
    let err = bad_input(&cut);
    assert!(err.contains("cannot write"), "{err}");
    assert!(
        err.contains("packet-ana.html"),
        "the message names the file: {err}"
    );
    assert_eq!(
        std::fs::read(&packet).unwrap(),
        whole,
        "the earlier packet is untouched"
    );
    assert_eq!(entries(&out), before, "nothing new in the folder");
    no_leftovers(&out);

    // Into a fresh folder: no packet at all, and no key (written after it).
    let empty = fresh("whole-packet-none");
    let a = args(&empty);
    let refs: Vec<&std::ffi::OsStr> = a.iter().map(|s| s.as_os_str()).collect();
    bad_input(&pairsight_limited(&refs, cap));
    assert_eq!(entries(&empty), Vec::<String>::new());
}

#[test]
fn a_failure_after_some_files_leaves_only_whole_files() {
    let (data, study) = small();
    let out = fresh("whole-match");
    // The second design's folder cannot be made: a file stands in its place.
    std::fs::write(out.join("with-notes"), "in the way").unwrap();
    let r = pairsight_match(&data, &study, &out, &[]);
    let err = bad_input(&r);
    assert!(err.contains("with-notes"), "{err}");
    // The first design's files are each complete, as a run of it alone writes them.
    let alone = fresh("whole-match-alone");
    ok(&pairsight_match(
        &data,
        &study,
        &alone,
        &["--design", "structured"],
    ));
    let got = entries(&out.join("structured"));
    assert_eq!(got, entries(&alone.join("structured")));
    assert!(got.iter().any(|n| n == "matched.csv"), "{got:?}");
    for name in &got {
        assert_eq!(
            std::fs::read(out.join("structured").join(name)).unwrap(),
            std::fs::read(alone.join("structured").join(name)).unwrap(),
            "{name} is whole"
        );
    }
    assert_eq!(
        std::fs::read_to_string(out.join("with-notes")).unwrap(),
        "in the way"
    );
    no_leftovers(&out);
}

#[test]
fn a_target_that_cannot_be_replaced_keeps_no_temporary_file() {
    let (data, study) = small();
    let out = fresh("whole-report");
    // A folder (not empty) where the report file should go: rename refuses.
    let target = out.join("report.html");
    std::fs::create_dir_all(target.join("inside")).unwrap();
    let r = pairsight([
        "report".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        target.as_os_str(),
    ]);
    let err = bad_input(&r);
    assert!(err.contains("report.html"), "{err}");
    assert_eq!(entries(&out), vec!["report.html".to_string()]);
    assert!(target.is_dir());
    no_leftovers(&out);
}

#[test]
fn the_demo_files_are_written_whole() {
    let out = fresh("whole-demo");
    let r = pairsight([
        "demo".as_ref(),
        "--patients".as_ref(),
        "200".as_ref(),
        "--out".as_ref(),
        out.as_os_str(),
    ]);
    ok(&r);
    assert_eq!(
        entries(&out),
        vec!["cohort.csv", "demo.study.toml", "truth.json"]
    );
    // Capped below the cohort's size: nothing under a final name.
    let cut = fresh("whole-demo-cut");
    let size = std::fs::metadata(out.join("cohort.csv")).unwrap().len();
    let r = pairsight_limited(
        &[
            "demo".as_ref(),
            "--patients".as_ref(),
            "200".as_ref(),
            "--out".as_ref(),
            cut.as_os_str(),
        ],
        size / 2,
    );
    bad_input(&r);
    assert_eq!(entries(&cut), Vec::<String>::new());
}
