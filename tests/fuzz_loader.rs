//! Mutation fuzzing of the circuit loader and solver, driven by proptest so
//! that it runs in CI on the stable toolchain (cargo-fuzz needs a nightly
//! compiler, which this project's machines do not have).
//!
//! Seed corpus: every circuit in networks/. Each case applies one to four
//! random mutations (delete, duplicate or swap lines, replace a value with an
//! extreme or junk token, re-indent, truncate, insert bytes) and requires that
//! loading either fails with a located, non-empty message or succeeds, and
//! that a successful load either solves to finite numbers or fails cleanly:
//! never a panic, never NaN or inf in a result.

use proptest::prelude::*;
use ripline::analysis::ripple::harmonic_ripple;
use ripline::network::Plan;
use std::path::Path;

fn corpus() -> Vec<String> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("networks");
    let mut files: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| std::fs::read_to_string(p).unwrap())
        .collect()
}

const JUNK: &[&str] = &[
    "0",
    "-1",
    "-0.0",
    "1e308",
    "1e-308",
    ".nan",
    ".inf",
    "-.inf",
    "abc",
    "",
    "~",
    "[]",
    "{}",
    "\"12 furlong\"",
    "\"0 mm\"",
    "\"-3 bar\"",
    "99999999999999999999",
    "1e400",
    "{a: [b, {c: d}]}",
    "&anchor x",
    "*anchor",
    "!!binary aGVsbG8=",
    "\"\\u0000\"",
    "2 mm mm",
    "tube",
    "- x",
];

#[derive(Debug, Clone)]
enum Mutation {
    DeleteLine(prop::sample::Index),
    DuplicateLine(prop::sample::Index),
    SwapLines(prop::sample::Index, prop::sample::Index),
    ReplaceValue(prop::sample::Index, prop::sample::Index),
    Reindent(prop::sample::Index, usize),
    Truncate(prop::sample::Index),
    InsertBytes(prop::sample::Index, Vec<u8>),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    let idx = any::<prop::sample::Index>;
    prop_oneof![
        1 => idx().prop_map(Mutation::DeleteLine),
        1 => idx().prop_map(Mutation::DuplicateLine),
        1 => (idx(), idx()).prop_map(|(a, b)| Mutation::SwapLines(a, b)),
        4 => (idx(), idx()).prop_map(|(a, b)| Mutation::ReplaceValue(a, b)),
        1 => (idx(), 0usize..9).prop_map(|(a, n)| Mutation::Reindent(a, n)),
        1 => idx().prop_map(Mutation::Truncate),
        1 => (idx(), proptest::collection::vec(any::<u8>(), 1..6)).prop_map(|(a, b)| Mutation::InsertBytes(a, b)),
    ]
}

fn apply(text: &str, m: &Mutation) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    if lines.is_empty() {
        return String::new();
    }
    match m {
        Mutation::DeleteLine(i) => {
            lines.remove(i.index(lines.len()));
        }
        Mutation::DuplicateLine(i) => {
            let k = i.index(lines.len());
            lines.insert(k, lines[k].clone());
        }
        Mutation::SwapLines(a, b) => {
            let (a, b) = (a.index(lines.len()), b.index(lines.len()));
            lines.swap(a, b);
        }
        Mutation::ReplaceValue(i, j) => {
            let k = i.index(lines.len());
            if let Some(pos) = lines[k].find(": ") {
                let junk = JUNK[j.index(JUNK.len())];
                lines[k] = format!("{}: {junk}", &lines[k][..pos]);
            }
        }
        Mutation::Reindent(i, n) => {
            let k = i.index(lines.len());
            lines[k] = format!("{}{}", " ".repeat(*n), lines[k].trim_start());
        }
        Mutation::Truncate(i) => {
            let joined = lines.join("\n");
            let mut cut = i.index(joined.len() + 1);
            while !joined.is_char_boundary(cut) {
                cut -= 1;
            }
            return joined[..cut].to_string();
        }
        Mutation::InsertBytes(i, bytes) => {
            let k = i.index(lines.len());
            let mut line = lines[k].clone().into_bytes();
            line.extend_from_slice(bytes);
            lines[k] = String::from_utf8_lossy(&line).into_owned();
        }
    }
    lines.join("\n")
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

    #[test]
    fn mutated_circuits_never_panic_or_print_nan(
        seed in any::<prop::sample::Index>(),
        mutations in proptest::collection::vec(mutation(), 1..5),
    ) {
        let corpus = corpus();
        let mut text = corpus[seed.index(corpus.len())].clone();
        for m in &mutations {
            text = apply(&text, m);
        }
        match ripline::io::parse_circuit(&text, "fuzz.yaml") {
            Err(e) => {
                let msg = e.to_string();
                prop_assert!(msg.starts_with("fuzz.yaml"), "unlocated message: {msg}");
                prop_assert!(msg.len() > "fuzz.yaml: ".len(), "empty message");
            }
            Ok(circuit) => {
                let plan = Plan::compile(&circuit).expect("a loaded circuit compiles");
                if let Ok(report) = harmonic_ripple(&plan, 0, circuit.harmonics) {
                    for tap in &report.taps {
                        prop_assert!(tap.rms_pa().is_finite(), "{}: non-finite rms", tap.name);
                        prop_assert!(tap.peak_to_peak_pa().is_finite());
                    }
                }
            }
        }
    }
}
