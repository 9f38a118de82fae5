//! Writes a generated circuit file to standard output, for the scaling
//! measurements of DEVELOPERS.md ("Benchmarks"): invented scenarios, see
//! `ripline::generated`.
//!
//! ```text
//! cargo run --release --example generate_circuit -- branched 300 [LOOPS] > b300.yaml
//! cargo run --release --example generate_circuit -- chain 5000 > c5000.yaml
//! ```

use std::process::ExitCode;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let number = |i: usize| args.get(i).and_then(|s| s.parse::<usize>().ok());
    let text = match (args.first().map(String::as_str), number(1)) {
        (Some("branched"), Some(n)) if n >= 8 => {
            ripline::generated::branched_circuit(n, number(2).unwrap_or(0))
        }
        (Some("chain"), Some(n)) if n >= 1 => ripline::generated::chain_circuit(n),
        _ => {
            eprintln!(
                "usage: generate_circuit branched ELEMENTS [LOOPS] | chain TUBES (ELEMENTS ≥ 8)"
            );
            return ExitCode::from(2);
        }
    };
    print!("{text}");
    ExitCode::SUCCESS
}
