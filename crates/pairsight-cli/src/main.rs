//! The `pairsight` command line.

fn main() {
    println!("pairsight {}", pairsight_core::VERSION);
}
