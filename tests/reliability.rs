//! Regression tests of the tool's promises to a careless or hostile user
//! (each case found by a robustness review): an output never overwrites an
//! input; outputs appear all together or not at all, also when the run is
//! interrupted; inputs are read only from regular files and up to a cap;
//! synthesised records stay in the folder given; every user-controlled size
//! has a stated limit; no inf or NaN is printed; every problem with what the
//! user gave exits with code 2 and a short, located, readable message.
//!
//! The promises are the project's own (README "Limits", DEVELOPERS.md error
//! table); inputs are generated in temporary folders. Unix only: the cases
//! use links, pipes, devices and signals.
#![cfg(unix)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn ripline_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("the ripline binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-rel-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn files_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn repo(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

/// Exit code 2, no panic, and the message contains every fragment.
#[track_caller]
fn refused(o: &Output, fragments: &[&str]) {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    for f in fragments {
        assert!(err.contains(f), "`{f}` missing in:\n{err}");
    }
}

/// A copy of the demo bench (file and records) in `dir`.
fn demo_bench(dir: &Path) -> PathBuf {
    std::fs::create_dir_all(dir.join("data")).unwrap();
    for f in [
        "data/system_a.csv",
        "data/system_b.csv",
        "data/system_c.csv",
    ] {
        std::fs::copy(repo(&format!("networks/bench/{f}")), dir.join(f)).unwrap();
    }
    let bench = dir.join("bench.yaml");
    std::fs::copy(repo("networks/bench/demo_bench.yaml"), &bench).unwrap();
    bench
}

/// A two-condition bench whose first condition reads `records` (a
/// time series in bar at 6 kHz), the second the good test record.
fn bench_reading(dir: &Path, records: &str) -> PathBuf {
    std::fs::create_dir_all(dir.join("data")).unwrap();
    std::fs::copy(
        repo("tests/bad/bench/data/good.csv"),
        dir.join("data/good.csv"),
    )
    .unwrap();
    let bench = dir.join("bench.yaml");
    std::fs::write(
        &bench,
        format!(
            "# invented test bench
fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}
pump: {{speed: 1500 rpm, pumping_elements: 9}}
reference_line: {{bore: 10 mm, rigid: true}}
transducers:
  - {{name: p1, position: 0.25 m}}
  - {{name: p2, position: 0.58 m}}
  - {{name: p3, position: 1.05 m}}
method: two_systems
records: {{unit: bar, sample_rate: 6 kHz}}
conditions:
  - name: A
    line_length: 3 m
    records: {records}
  - name: B
    line_length: 2 m
    records: data/good.csv
"
        ),
    )
    .unwrap();
    bench
}

// 1. An output may never be an input.

#[test]
fn an_output_that_is_an_input_is_refused_and_the_input_kept() {
    let dir = scratch("input");
    // A circuit file named .csv, and the same file as --csv.
    let circuit = dir.join("c.csv");
    std::fs::copy(repo("networks/drill_rig_feed.yaml"), &circuit).unwrap();
    let before = std::fs::read(&circuit).unwrap();
    let o = ripline_in(&dir, &["solve", "c.csv", "--csv", "c.csv"]);
    refused(&o, &["--csv c.csv", "is the input file c.csv"]);
    // Through another spelling of the path, and through a link.
    let o = ripline_in(&dir, &["solve", "c.csv", "--csv", "./sub/../c.csv"]);
    assert_eq!(o.status.code(), Some(2), "a missing folder: {}", stderr(&o));
    std::os::unix::fs::symlink(&circuit, dir.join("link.csv")).unwrap();
    let o = ripline_in(&dir, &["solve", "c.csv", "--csv", "link.csv"]);
    refused(&o, &["--csv link.csv", "is the input file"]);
    assert_eq!(std::fs::read(&circuit).unwrap(), before);

    // A record the bench reads, and the bench file itself.
    let bench = demo_bench(&dir.join("b"));
    let record = dir.join("b/data/system_a.csv");
    let record_before = std::fs::read(&record).unwrap();
    let bench_before = std::fs::read(&bench).unwrap();
    let o = ripline_in(
        &dir,
        &["fit", "b/bench.yaml", "--csv", "b/data/system_a.csv"],
    );
    refused(&o, &["--csv b/data/system_a.csv", "is the input file"]);
    let o = ripline_in(
        &dir,
        &["fit", "b/bench.yaml", "--source-out", "b/bench.yaml"],
    );
    refused(&o, &["--source-out b/bench.yaml", "is the input file"]);
    assert_eq!(std::fs::read(&record).unwrap(), record_before);
    assert_eq!(std::fs::read(&bench).unwrap(), bench_before);

    // synth told to write a record over the bench file.
    let text = String::from_utf8(bench_before.clone()).unwrap();
    std::fs::write(
        &bench,
        text.replace("records: data/system_a.csv", "records: bench.yaml"),
    )
    .unwrap();
    let edited = std::fs::read(&bench).unwrap();
    let o = ripline_in(&dir, &["synth", "b/bench.yaml"]);
    refused(&o, &["records b/bench.yaml", "is the input file"]);
    assert_eq!(std::fs::read(&bench).unwrap(), edited);
    assert_eq!(files_in(&dir.join("b")), ["bench.yaml", "data"]);
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn a_pump_source_file_the_circuit_reads_is_an_input() {
    let dir = scratch("source");
    let bench = demo_bench(&dir);
    let o = ripline_in(
        &dir,
        &[
            "fit",
            bench.to_str().unwrap(),
            "--draws",
            "0",
            "--source-out",
            "pump.yaml",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    // The source file, under a .csv name, read by a circuit.
    std::fs::rename(dir.join("pump.yaml"), dir.join("pump.csv")).unwrap();
    std::fs::write(
        dir.join("c.yaml"),
        "fluid: {density: 870, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}
pump: {node: a, source_file: pump.csv}
elements:
  - {name: line, kind: tube, from: a, to: b, length: 2.5 m, bore: 10 mm, wall: 2 mm, material: steel}
  - {name: valve, kind: load_valve, at: b, resistance: 3e10}
",
    )
    .unwrap();
    let before = std::fs::read(dir.join("pump.csv")).unwrap();
    let o = ripline_in(&dir, &["solve", "c.yaml"]);
    assert!(o.status.success(), "the circuit is valid: {}", stderr(&o));
    let o = ripline_in(&dir, &["solve", "c.yaml", "--csv", "pump.csv"]);
    refused(&o, &["--csv pump.csv", "is the input file"]);
    assert_eq!(std::fs::read(dir.join("pump.csv")).unwrap(), before);
    std::fs::remove_dir_all(dir).unwrap();
}

// 2. All-or-nothing outputs.

#[test]
fn no_output_is_written_when_any_target_is_unusable() {
    let dir = scratch("group");
    let circuit = repo("networks/drill_rig_feed.yaml");
    let c = circuit.to_str().unwrap();
    std::fs::write(dir.join("old.csv"), b"kept").unwrap();
    std::fs::create_dir(dir.join("folder.svg")).unwrap();
    let cases: Vec<(Vec<&str>, &str)> = vec![
        // A plot target that is a folder: the CSV before it must not appear.
        (
            vec!["solve", c, "--csv", "a.csv", "--plot", "folder.svg"],
            "--plot folder.svg: is a folder",
        ),
        (
            vec!["profile", c, "--csv", "old.csv", "--plot", "folder.svg"],
            "is a folder",
        ),
        (
            vec!["response", c, "--csv", "a.csv", "--plot", "folder.svg"],
            "is a folder",
        ),
        (
            vec!["sweep", c, "--csv", "a.csv", "--plot", "folder.svg"],
            "is a folder",
        ),
        // Two outputs the same file.
        (
            vec![
                "silencer",
                "networks/drill_rig_feed_damper.yaml",
                "--element",
                "damper",
                "--csv",
                "x.csv",
                "--harmonic-csv",
                "./x.csv",
            ],
            "--harmonic-csv ./x.csv: is the same file as --csv x.csv",
        ),
        // A path ending in `/`, and a folder that does not exist.
        (vec!["solve", c, "--csv", "a.csv/"], "names a folder"),
        (vec!["solve", c, "--csv", "no/such/a.csv"], "does not exist"),
    ];
    for (args, fragment) in cases {
        let args: Vec<String> = args
            .iter()
            .map(|a| {
                if a.starts_with("networks/") {
                    repo(a).display().to_string()
                } else {
                    (*a).to_string()
                }
            })
            .collect();
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let o = ripline_in(&dir, &args);
        refused(&o, &[fragment]);
        assert_eq!(
            files_in(&dir),
            ["folder.svg", "old.csv"],
            "{args:?} left files"
        );
        assert_eq!(std::fs::read(dir.join("old.csv")).unwrap(), b"kept");
    }
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn a_folder_that_takes_no_new_file_is_exit_2() {
    let dir = scratch("readonly");
    let ro = dir.join("ro");
    std::fs::create_dir(&ro).unwrap();
    let mut perms = std::fs::metadata(&ro).unwrap().permissions();
    std::os::unix::fs::PermissionsExt::set_mode(&mut perms, 0o555);
    std::fs::set_permissions(&ro, perms.clone()).unwrap();
    // A superuser writes anyway; then there is nothing to test here.
    if std::fs::write(ro.join("probe"), b"").is_ok() {
        std::fs::remove_file(ro.join("probe")).unwrap();
    } else {
        let o = ripline_in(&dir, &["solve", "--csv", "ro/a.csv"]);
        refused(&o, &["--csv ro/a.csv", "cannot write a new file"]);
    }
    std::os::unix::fs::PermissionsExt::set_mode(&mut perms, 0o755);
    std::fs::set_permissions(&ro, perms).unwrap();
    std::fs::remove_dir_all(dir).unwrap();
}

/// SIGINT and SIGTERM during the work: the staged files go, exit code 130.
#[test]
fn an_interrupted_run_leaves_no_staged_file() {
    let dir = scratch("signal");
    let bench = demo_bench(&dir);
    for signal in ["-INT", "-TERM"] {
        let mut child = Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args([
                "fit",
                bench.to_str().unwrap(),
                "--draws",
                "20000",
                "--csv",
                "out.csv",
                "--plot",
                "out.svg",
            ])
            .current_dir(&dir)
            .stderr(std::process::Stdio::null())
            .stdout(std::process::Stdio::null())
            .spawn()
            .unwrap();
        // The staged files are reserved before the work starts.
        let start = std::time::Instant::now();
        while !files_in(&dir).iter().any(|f| f.contains(".partial-")) {
            assert!(start.elapsed().as_secs() < 60, "no staged file appeared");
            std::thread::sleep(std::time::Duration::from_millis(20));
        }
        let status = Command::new("kill")
            .args([signal, &child.id().to_string()])
            .status()
            .unwrap();
        assert!(status.success());
        let code = child.wait().unwrap().code();
        assert_eq!(code, Some(130), "{signal}");
        assert_eq!(files_in(&dir), ["bench.yaml", "data"], "{signal}");
    }
    std::fs::remove_dir_all(dir).unwrap();
}

// 3. Inputs are regular files, read with a hard cap.

#[test]
fn devices_pipes_and_folders_are_refused_without_reading() {
    let dir = scratch("special");
    let fifo = dir.join("pipe.yaml");
    let made = Command::new("mkfifo").arg(&fifo).status();
    let mut inputs = vec!["/dev/zero", "/dev/urandom", "."];
    if made.is_ok_and(|s| s.success()) {
        inputs.push("pipe.yaml");
    }
    for input in inputs {
        // A pipe with no writer would block a reader forever.
        let o = ripline_in(&dir, &["check", input]);
        refused(&o, &[input]);
        let err = stderr(&o);
        assert!(
            err.contains("not a regular file") || err.contains("is a folder"),
            "{err}"
        );
    }
    // The same for a record a bench file reads.
    let bench = bench_reading(&dir, "/dev/zero");
    let o = ripline_in(&dir, &["fit", bench.to_str().unwrap()]);
    refused(&o, &["/dev/zero", "not a regular file"]);
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn a_record_over_the_cap_is_refused() {
    let dir = scratch("cap");
    let bench = bench_reading(&dir, "data/big.csv");
    let cap = ripline::io::MAX_RECORD_BYTES as usize;
    let mut big = String::with_capacity(cap + 64);
    big.push_str("p1,p2,p3\n");
    while big.len() <= cap {
        big.push_str("1.000000,2.000000,3.000000\n");
    }
    std::fs::write(dir.join("data/big.csv"), big).unwrap();
    let o = ripline_in(&dir, &["fit", bench.to_str().unwrap()]);
    refused(
        &o,
        &["data/big.csv", "larger than 33554432 bytes are refused"],
    );
    std::fs::remove_dir_all(dir).unwrap();
}

// 4. synth keeps its records inside the folder given.

#[test]
fn synth_writes_only_inside_its_folder() {
    let dir = scratch("contain");
    let bench = demo_bench(&dir.join("b"));
    let text = std::fs::read_to_string(&bench).unwrap();
    std::fs::create_dir(dir.join("out")).unwrap();
    let outside = dir.join("outside.csv");
    for (records, fragment) in [
        ("../../x.csv", "`../../x.csv`"),
        (outside.to_str().unwrap(), "outside.csv"),
    ] {
        std::fs::write(
            &bench,
            text.replace("records: data/system_b.csv", &format!("records: {records}")),
        )
        .unwrap();
        let o = ripline_in(&dir, &["synth", "b/bench.yaml", "--out-dir", "out"]);
        // The condition is the second one, its `records` key on line 29.
        refused(
            &o,
            &[
                "b/bench.yaml:37:",
                "conditions[1].records",
                fragment,
                "inside the --out-dir folder out",
            ],
        );
        assert!(files_in(&dir.join("out")).is_empty());
        assert_eq!(files_in(&dir), ["b", "out"]);
    }
    // Accepted: records land under --out-dir, folders made as needed.
    std::fs::write(&bench, &text).unwrap();
    let o = ripline_in(&dir, &["synth", "b/bench.yaml", "--out-dir", "out"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        files_in(&dir.join("out/data")),
        ["system_a.csv", "system_b.csv", "system_c.csv"]
    );
    std::fs::remove_dir_all(dir).unwrap();
}

// 5. Limits on what a user controls, each refused up front.

#[test]
fn deeply_nested_or_huge_yaml_is_refused_before_the_parser() {
    let dir = scratch("nest");
    std::fs::write(
        dir.join("flow.yaml"),
        format!("title: {}\n", "[".repeat(100_000)),
    )
    .unwrap();
    std::fs::write(
        dir.join("block.yaml"),
        format!("elements:\n  {}x\n", "- ".repeat(100_000)),
    )
    .unwrap();
    let o = ripline_in(&dir, &["check", "flow.yaml"]);
    refused(&o, &["flow.yaml:1:71:", "nested more than 64 levels"]);
    let o = ripline_in(&dir, &["check", "block.yaml"]);
    refused(&o, &["block.yaml:2:", "nested more than 64 levels"]);
    // 400,000 tiny mappings (3.6 MB): three nodes each.
    std::fs::write(
        dir.join("wide.yaml"),
        "taps:\n".to_string() + &"- {a: 1}\n".repeat(400_000),
    )
    .unwrap();
    let o = ripline_in(&dir, &["check", "wide.yaml"]);
    refused(
        &o,
        &["wide.yaml:333335:3:", "more than 1000000 keys and values"],
    );
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn work_limits_of_fit_tune_and_sweep() {
    let dir = scratch("work");
    let bench = demo_bench(&dir);
    let o = ripline_in(&dir, &["fit", bench.to_str().unwrap(), "--draws", "20001"]);
    refused(&o, &["--draws must be at most 20000"]);
    let o = ripline_in(
        &dir,
        &[
            "fit",
            bench.to_str().unwrap(),
            "--draws",
            "18446744073709551615",
        ],
    );
    refused(&o, &["--draws"]);
    let damper = repo("networks/drill_rig_feed_damper.yaml");
    let d = damper.to_str().unwrap();
    let tune = |extra: &[&str]| {
        let mut args = vec!["tune", d, "--element", "damper", "--tap", "head block"];
        args.extend_from_slice(extra);
        ripline_in(&dir, &args)
    };
    let o = tune(&[
        "--vary",
        "gas_volume=0.05L..2L",
        "--samples",
        "100000",
        "--speeds",
        "1000",
    ]);
    refused(&o, &["ripple evaluations, more than 2000000"]);
    // The damper operates at 200 bar gauge: a precharge above it is no damper.
    let o = tune(&["--vary", "precharge=100 bar gauge..250 bar gauge"]);
    refused(
        &o,
        &["above the damper's lowest operating pressure of 201.0"],
    );
    let o = tune(&["--vary", "precharge=210 bar gauge..250 bar gauge"]);
    refused(&o, &["above the damper's lowest operating pressure"]);
    // A sweep over the cell cap: 20,001 speeds × 3 points × 200 harmonics.
    let o = ripline_in(
        &dir,
        &[
            "sweep",
            repo("networks/loader_engine_pumps.yaml").to_str().unwrap(),
            "--speed",
            "1000..3000",
            "--step",
            "0.1",
            "--harmonics",
            "200",
        ],
    );
    refused(&o, &["amplitudes, more than 2000000"]);
    assert_eq!(files_in(&dir), ["bench.yaml", "data"]);
    std::fs::remove_dir_all(dir).unwrap();
}

// 6. No inf or NaN: the dB reference and the band are bounded.

#[test]
fn the_db_reference_and_the_band_are_bounded() {
    let dir = scratch("ranges");
    let engine = repo("networks/loader_engine_pumps.yaml");
    for bad in ["1e-320 Pa", "0 Pa", "-1 Pa", "1e300 bar", "inf Pa", "NaN"] {
        let option = format!("--db-ref={bad}");
        let o = ripline_in(&dir, &["solve", &option]);
        refused(&o, &["--db-ref"]);
        let o = ripline_in(&dir, &["sweep", engine.to_str().unwrap(), &option]);
        refused(&o, &["--db-ref"]);
    }
    // The smallest reference accepted prints finite levels and a readable
    // reference.
    let o = ripline_in(&dir, &["solve", "--db-ref", "1e-6 Pa"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    assert!(out.contains("dB re 1e-6 Pa"), "{out}");
    assert!(!out.contains("inf") && !out.contains("NaN"), "{out}");
    let c = repo("networks/drill_rig_feed.yaml");
    for band in ["1e6..1e12", "1e-9..10", "0..10"] {
        let o = ripline_in(&dir, &["response", c.to_str().unwrap(), "--band", band]);
        refused(&o, &["--band"]);
    }
    std::fs::remove_dir_all(dir).unwrap();
}

// 7. Messages: located, short, readable.

#[test]
fn a_second_yaml_document_is_located() {
    let dir = scratch("docs");
    let text = std::fs::read_to_string(repo("networks/drill_rig_feed.yaml")).unwrap();
    let lines = text.lines().count();
    std::fs::write(dir.join("two.yaml"), format!("{text}---\ntitle: again\n")).unwrap();
    let o = ripline_in(&dir, &["check", "two.yaml"]);
    refused(
        &o,
        &[
            &format!("two.yaml:{}:1:", lines + 1),
            "more than one document",
        ],
    );
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn long_values_are_cut_and_numbers_printed_readably() {
    let dir = scratch("messages");
    // A 5 MB cell.
    let bench = bench_reading(&dir, "data/cell.csv");
    let cell = "7".repeat(100) + &"x".repeat(5_000_000);
    std::fs::write(dir.join("data/cell.csv"), format!("p1,p2,p3\n1,{cell},3\n")).unwrap();
    let o = ripline_in(&dir, &["fit", bench.to_str().unwrap()]);
    refused(&o, &["data/cell.csv:2", "column `p2`", "is not a number"]);
    assert!(stderr(&o).len() < 400, "{} bytes", stderr(&o).len());

    // A time step of 1e300 s: Rust prints such a number with 301 digits.
    let bench = bench_reading(&dir, "data/slow.csv");
    let text = std::fs::read_to_string(&bench).unwrap();
    std::fs::write(
        &bench,
        text.replace(
            "records: {unit: bar, sample_rate: 6 kHz}",
            "records: {unit: bar, time_column: t}",
        ),
    )
    .unwrap();
    let rows: String = (0..50).map(|i| format!("{}e300,1,2,3\n", i)).collect();
    std::fs::write(dir.join("data/slow.csv"), format!("t,p1,p2,p3\n{rows}")).unwrap();
    let o = ripline_in(&dir, &["fit", bench.to_str().unwrap()]);
    refused(
        &o,
        &[
            "data/slow.csv",
            "column `t`",
            "sample rate of 1.000e-300 Hz",
        ],
    );
    let err = stderr(&o);
    assert!(
        !err.contains("0000000000000000000"),
        "a long number printed: {err}"
    );

    // Values of 1e302 bar: out of range, not "constant".
    let bench = bench_reading(&dir, "data/huge.csv");
    let rows: String = (0..4000)
        .map(|i| format!("1e302,{},2\n", f64::from(i).sin()))
        .collect();
    std::fs::write(dir.join("data/huge.csv"), format!("p1,p2,p3\n{rows}")).unwrap();
    let o = ripline_in(&dir, &["fit", bench.to_str().unwrap()]);
    refused(
        &o,
        &[
            "data/huge.csv:2",
            "column `p1`",
            "outside a plausible pressure",
        ],
    );
    assert!(!stderr(&o).contains("constant"), "{}", stderr(&o));
    std::fs::remove_dir_all(dir).unwrap();
}

/// The line (from 1) of the first line of `text` that contains `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    text.lines().position(|l| l.contains(needle)).unwrap() + 1
}

/// Circuits over the size limits of `ripline::limits` (README, Limits and
/// safeguards) are refused with exit 2 at the first element, node, pump or
/// tap beyond the limit, and nothing is written; a response or a profile
/// too large to hold is refused before it is computed.
#[test]
fn circuits_over_the_size_limits_are_refused_where_they_pass_it() {
    use ripline::limits::{MAX_ELEMENTS, MAX_NODES, MAX_PUMPS, MAX_TAPS};
    let dir = scratch("size");
    let write = |name: &str, text: &str| std::fs::write(dir.join(name), text).unwrap();
    // A chain of 50,000 tubes and a load valve: one element too many.
    let chain = ripline::generated::chain_circuit(MAX_ELEMENTS);
    write("chain.yaml", &chain);
    let o = ripline_in(&dir, &["check", "chain.yaml", "--json", "c.json"]);
    let at = format!("chain.yaml:{}:", line_of(&chain, "name: consumer"));
    refused(
        &o,
        &[
            &at,
            "elements[50000]",
            "the circuit has 50001 elements; ripline accepts at most 50000 elements",
        ],
    );
    // 25,001 tubes that share no node name 50,002 nodes: tube 25,000
    // (from 0) names nodes 50,001 and 50,002.
    let mut apart = chain[..chain.find("\nelements:").unwrap()].to_string() + "\nelements:\n";
    for i in 0..=MAX_NODES / 2 {
        let from = if i == 0 {
            "n0".to_string()
        } else {
            format!("a{i}")
        };
        apart += &format!(
            "  - {{name: s{i}, kind: tube, from: {from}, to: b{i}, length: 1 m, bore: 16 mm, rigid: true}}\n"
        );
    }
    write("apart.yaml", &apart);
    let o = ripline_in(&dir, &["check", "apart.yaml"]);
    let at = format!("apart.yaml:{}:", line_of(&apart, "name: s25000,"));
    refused(
        &o,
        &[
            &at,
            "elements[25000]: with this element the circuit has 50002 nodes; ripline accepts at most 50000 nodes",
        ],
    );
    // 1001 taps and 101 pumps on a short chain.
    let short = ripline::generated::chain_circuit(3);
    let mut taps = short.clone() + "taps:\n";
    for i in 0..=MAX_TAPS {
        taps += &format!("  - {{name: tap{i}, node: n1}}\n");
    }
    write("taps.yaml", &taps);
    let o = ripline_in(&dir, &["check", "taps.yaml"]);
    let at = format!("taps.yaml:{}:", line_of(&taps, "name: tap1000,"));
    refused(&o, &[&at, "1001 taps; ripline accepts at most 1000 taps"]);
    let pump_line = short.lines().find(|l| l.starts_with("pump:")).unwrap();
    let mut pumps = short.replace(pump_line, "pumps:");
    for i in 0..=MAX_PUMPS {
        let one = pump_line.replacen("pump: {", &format!("  - {{name: p{i}, "), 1);
        pumps = pumps.replacen("pumps:\n", &format!("pumps:\n{one}\n"), 1);
    }
    write("pumps.yaml", &pumps);
    let o = ripline_in(&dir, &["check", "pumps.yaml"]);
    let at = format!("pumps.yaml:{}:", line_of(&pumps, "name: p0,"));
    refused(
        &o,
        &[
            &at,
            "pumps[100]",
            "101 pumps; ripline accepts at most 100 pumps",
        ],
    );
    // A response of 25 nodes at 200,000 frequencies: 5 million values.
    write("b30.yaml", &ripline::generated::branched_circuit(30, 0));
    let o = ripline_in(
        &dir,
        &[
            "response", "b30.yaml", "--points", "200000", "--csv", "r.csv",
        ],
    );
    refused(
        &o,
        &[
            "b30.yaml: ",
            "measurement points × 200000 frequencies",
            "more than ripline's limit of 2000000",
        ],
    );
    // A profile of 1000 lines over 90 m long at 2250 Hz: 4001 samples each.
    let long = ripline::generated::chain_circuit(1000)
        .replace("length: ", "length: 9")
        .replace("{harmonic: 1,", "{harmonic: 10,");
    write("long.yaml", &long);
    let o = ripline_in(
        &dir,
        &["profile", "long.yaml", "--harmonic", "10", "--csv", "p.csv"],
    );
    refused(
        &o,
        &[
            "long.yaml: ",
            "samples 4001000 points",
            "more than ripline's limit of 3000000",
        ],
    );
    assert_eq!(
        files_in(&dir),
        [
            "apart.yaml",
            "b30.yaml",
            "chain.yaml",
            "long.yaml",
            "pumps.yaml",
            "taps.yaml"
        ]
    );
    std::fs::remove_dir_all(dir).unwrap();
}
