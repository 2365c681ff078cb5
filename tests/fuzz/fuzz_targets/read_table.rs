//! Any bytes as a cohort file: an error or a sound table, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use pairsight_core::ingest::read_table;

fuzz_target!(|data: &[u8]| {
    if let Ok(t) = read_table(data) {
        assert!(t.n_cols() >= 2 && t.n_rows() >= 1);
        let mut names = std::collections::BTreeSet::new();
        for c in &t.columns {
            assert_eq!(c.cells.len(), t.n_rows());
            assert!(!c.name.is_empty() && names.insert(c.name.as_str()));
            for r in 0..t.n_rows() {
                if let Some(x) = c.number(r) {
                    assert!(x.is_finite());
                }
            }
            let _ = c.levels();
        }
        let _ = t.summary();
    }
});
