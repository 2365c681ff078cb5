//! Project tasks.

fn main() {
    println!("xtask");
}
