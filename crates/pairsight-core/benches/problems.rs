// Shared by the engine benches: load a problem written by
// tests/bench/engine.py (raw little-endian f64 in $PAIRSIGHT_BENCH_PROBLEMS),
// or generate one with the core's seeded generator when run alone.

use std::path::PathBuf;

use pairsight_core::rng::Rng;

/// Raw f64 values of `<dir>/<name>.f64`, if the directory is set and the
/// file holds exactly `len` values.
pub fn load(name: &str, len: usize) -> Option<Vec<f64>> {
    let dir = PathBuf::from(std::env::var_os("PAIRSIGHT_BENCH_PROBLEMS")?);
    let bytes = std::fs::read(dir.join(format!("{name}.f64"))).ok()?;
    if bytes.len() != len * 8 {
        eprintln!("{name}.f64 has the wrong size; generating instead");
        return None;
    }
    Some(
        bytes
            .chunks_exact(8)
            .map(|b| f64::from_le_bytes([b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]]))
            .collect(),
    )
}

/// Values from the file, or `gen` with a seeded generator.
pub fn load_or(name: &str, len: usize, seed: u64, gen: impl Fn(&mut Rng) -> f64) -> Vec<f64> {
    load(name, len).unwrap_or_else(|| {
        let mut r = Rng::new(seed);
        (0..len).map(|_| gen(&mut r)).collect()
    })
}
