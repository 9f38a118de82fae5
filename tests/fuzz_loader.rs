//! Mutation fuzzing of the circuit loader and solver, driven by proptest so
//! that it runs in CI on the stable toolchain (cargo-fuzz needs a nightly
//! compiler, which this project's machines do not have).
//!
//! Seed corpus: every circuit in networks/, the demo bench file and a bench
//! record (time-series CSV). Each case applies one to four random mutations
//! (delete, duplicate or swap lines, replace a value with an extreme or junk
//! token, re-indent, truncate, insert bytes; in a CSV, replace a cell) and
//! requires that loading either fails with a located, non-empty message or
//! succeeds, and that a successful load either solves to finite numbers or
//! fails cleanly: never a panic, never NaN or inf in a result.
//!
//! The output-path options are fuzzed through the output group itself: random
//! sets of targets (files, folders, paths ending in `/`, links to an input,
//! missing folders, pipes, duplicates) are either refused with the option
//! named and the folder left exactly as it was, or committed with every
//! target a regular file holding its contents and the input unchanged.
//!
//! Case counts keep the whole file to a few seconds.

use proptest::prelude::*;
use ripline::analysis::ripple::harmonic_ripple;
use ripline::estimate::Quiet;
use ripline::io::output::StagedOutputs;
use ripline::network::Plan;
use std::path::{Path, PathBuf};

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

/// Junk for a CSV cell.
const JUNK_CELLS: &[&str] = &[
    "",
    "nan",
    "NaN",
    "inf",
    "-inf",
    "1e302",
    "-1e308",
    "1e-320",
    "0x10",
    "1,5",
    "\"1\"",
    "\"",
    "  ",
    "1e",
    "--1",
    "١",
    "9999999999999999999999999",
    "t",
    "#",
    "p1",
];

/// A mutation of a CSV: a cell replaced, or one of the line mutations.
#[derive(Debug, Clone)]
enum CsvMutation {
    Cell(
        prop::sample::Index,
        prop::sample::Index,
        prop::sample::Index,
    ),
    LongCell(prop::sample::Index, usize),
    Lines(Mutation),
}

fn csv_mutation() -> impl Strategy<Value = CsvMutation> {
    let idx = any::<prop::sample::Index>;
    prop_oneof![
        3 => (idx(), idx(), idx()).prop_map(|(a, b, c)| CsvMutation::Cell(a, b, c)),
        1 => (idx(), 1usize..200_000).prop_map(|(a, n)| CsvMutation::LongCell(a, n)),
        2 => mutation().prop_map(CsvMutation::Lines),
    ]
}

fn apply_csv(text: &str, m: &CsvMutation) -> String {
    let (line, cell, junk) = match m {
        CsvMutation::Lines(m) => return apply(text, m),
        CsvMutation::Cell(line, cell, j) => (
            line,
            Some(cell),
            JUNK_CELLS[j.index(JUNK_CELLS.len())].to_string(),
        ),
        CsvMutation::LongCell(line, n) => (line, None, "7".repeat(*n)),
    };
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let k = line.index(lines.len());
    let mut cells: Vec<String> = lines[k].split(',').map(str::to_string).collect();
    let c = cell.map_or(0, |c| c.index(cells.len()));
    cells[c] = junk;
    lines[k] = cells.join(",");
    lines.join("\n")
}

fn repo(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

/// A bench file whose first condition reads `rec.csv` and second the test
/// record, in `dir`.
fn bench_with_record(dir: &Path) -> PathBuf {
    let bench = dir.join("bench.yaml");
    std::fs::copy(repo("tests/bad/bench/data/good.csv"), dir.join("good.csv")).unwrap();
    std::fs::write(
        &bench,
        "# invented fuzz bench
fluid: {density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}
pump: {speed: 1500 rpm, pumping_elements: 9}
reference_line: {bore: 10 mm, rigid: true}
transducers:
  - {name: p1, position: 0.25 m}
  - {name: p2, position: 0.58 m}
  - {name: p3, position: 1.05 m}
method: two_systems
records: {unit: bar, sample_rate: 6 kHz}
conditions:
  - {name: A, line_length: 3 m, records: rec.csv}
  - {name: B, line_length: 2 m, records: good.csv}
",
    )
    .unwrap();
    bench
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-fuzz-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn listing(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let p = e.unwrap().path();
            let bytes = if p.is_file() {
                std::fs::read(&p).unwrap()
            } else {
                Vec::new()
            };
            (p.file_name().unwrap().to_string_lossy().into_owned(), bytes)
        })
        .collect();
    v.sort();
    v
}

/// Target names for the output-group fuzz: plain files, spellings of the
/// same file, folders, a path ending in `/`, a link to the input, a missing
/// folder, a pipe, the input itself.
const TARGETS: &[&str] = &[
    "a.csv",
    "./a.csv",
    "b.svg",
    "sub/c.png",
    "sub/../b.svg",
    "a.csv/",
    "sub",
    "sub/",
    ".",
    "",
    "in.yaml",
    "./sub/../in.yaml",
    "link.csv",
    "missing/x.csv",
    "pipe.csv",
    "old.csv",
];

proptest! {
    #![proptest_config(ProptestConfig { cases: 60, ..ProptestConfig::default() })]

    #[test]
    fn mutated_bench_records_never_panic_or_give_nan(
        mutations in proptest::collection::vec(csv_mutation(), 1..4),
    ) {
        let dir = scratch("records");
        let bench_path = bench_with_record(&dir);
        let mut text = std::fs::read_to_string(repo("tests/bad/bench/data/good.csv")).unwrap();
        for m in &mutations {
            text = apply_csv(&text, m);
        }
        std::fs::write(dir.join("rec.csv"), &text).unwrap();
        let bench = ripline::io::bench_file::load_bench(&bench_path).unwrap();
        let pump = ripline::estimate::extract::PumpFrequency::Search {
            nominal_hz: bench.pump.pumping_frequency_hz(),
        };
        match ripline::io::records::load_condition(&bench, &bench.conditions[0], pump, &mut Quiet) {
            Err(e) => {
                let msg = e.to_string();
                prop_assert!(msg.contains("rec.csv"), "unlocated message: {msg}");
                prop_assert!(msg.len() < 1000, "a long message: {} bytes", msg.len());
            }
            Ok(spectra) => {
                for p in spectra.pump.iter().chain(&spectra.secondary) {
                    prop_assert!(p.freq_hz.is_finite());
                    prop_assert!(p.pressures.iter().all(|x| x.re.is_finite() && x.im.is_finite()));
                }
            }
        }
        std::fs::remove_dir_all(dir).unwrap();
    }

    #[test]
    fn mutated_bench_files_never_panic(
        mutations in proptest::collection::vec(mutation(), 1..5),
    ) {
        let mut text = std::fs::read_to_string(repo("networks/bench/demo_bench.yaml")).unwrap();
        for m in &mutations {
            text = apply(&text, m);
        }
        if let Err(e) = ripline::io::bench_file::parse_bench(&text, "fuzz.yaml") {
            let msg = e.to_string();
            prop_assert!(msg.starts_with("fuzz.yaml"), "unlocated message: {msg}");
        }
    }

    #[cfg(unix)]
    #[test]
    fn output_groups_are_all_or_nothing(
        picks in proptest::collection::vec(any::<prop::sample::Index>(), 1..5),
    ) {
        let dir = scratch("outputs");
        std::fs::create_dir(dir.join("sub")).unwrap();
        std::fs::write(dir.join("in.yaml"), b"input").unwrap();
        std::fs::write(dir.join("old.csv"), b"old").unwrap();
        std::os::unix::fs::symlink(dir.join("in.yaml"), dir.join("link.csv")).unwrap();
        let _ = std::process::Command::new("mkfifo").arg(dir.join("pipe.csv")).status();
        let before = listing(&dir);
        let names: Vec<&str> = picks.iter().map(|i| TARGETS[i.index(TARGETS.len())]).collect();
        let paths: Vec<PathBuf> = names.iter().map(|n| {
            // `dir` joined with a name ending in `/` keeps the slash.
            PathBuf::from(format!("{}/{n}", dir.display()))
        }).collect();
        let targets: Vec<(&str, &Path, bool)> =
            paths.iter().map(|p| ("--out", p.as_path(), false)).collect();
        match StagedOutputs::plan(&targets, &[dir.join("in.yaml")]) {
            Err(e) => {
                prop_assert!(e.to_string().starts_with("--out "), "{e}");
                prop_assert_eq!(listing(&dir), before);
            }
            Ok(mut group) => {
                for (i, p) in paths.iter().enumerate() {
                    group.stage_bytes(p, format!("result {i}").as_bytes()).unwrap();
                }
                group.commit().unwrap();
                for (i, p) in paths.iter().enumerate() {
                    prop_assert_eq!(std::fs::read(p).unwrap(), format!("result {i}").into_bytes());
                }
                prop_assert_eq!(std::fs::read(dir.join("in.yaml")).unwrap(), b"input");
                let partial = listing(&dir).iter().any(|(n, _)| n.contains(".partial-"))
                    || listing(&dir.join("sub")).iter().any(|(n, _)| n.contains(".partial-"));
                prop_assert!(!partial, "a staged file was left");
            }
        }
        std::fs::remove_dir_all(dir).unwrap();
    }
}
