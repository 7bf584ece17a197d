//! Prints the spec the structured fuzz target builds from each input file, for triage
//! of a finding (`fuzz/artifacts/structured/crash-*`) or a look at the corpus.
//!
//! ```text
//! cd fuzz && cargo run --release --example show_input -- artifacts/structured/crash-*
//! ```

fn main() {
    for f in std::env::args().skip(1) {
        match std::fs::read(&f) {
            Ok(data) => {
                let s = detent_fuzz::build_structured(&data);
                println!("// {f}: {:?}\n{}", s.depth, s.built.text);
            }
            Err(e) => eprintln!("{f}: {e}"),
        }
    }
}
