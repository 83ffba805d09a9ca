//! Copies the command line's source (src/main.rs) for the `cli_options` target, without its
//! inner doc comments (`//!`), which `include!` cannot take inside a module.
use std::path::Path;

fn main() {
    let main_rs = Path::new(env!("CARGO_MANIFEST_DIR")).join("../src/main.rs");
    println!("cargo:rerun-if-changed={}", main_rs.display());
    let text = std::fs::read_to_string(&main_rs).expect("src/main.rs is readable");
    let items: String = text
        .lines()
        .filter(|line| !line.trim_start().starts_with("//!"))
        .map(|line| format!("{line}\n"))
        .collect();
    let out = Path::new(&std::env::var("OUT_DIR").expect("cargo sets OUT_DIR")).join("cli.rs");
    std::fs::write(out, items).expect("OUT_DIR is writable");
}
