//! End-to-end tests of `ripline report`: the HTML is parsed as a browser
//! parses it (scraper, on html5ever) for its sections, its self-containment
//! and its numbers, which are compared with the `--json` documents of the
//! commands the report composes (`solve`, `response`, `silencer`,
//! `assess`); bad input exits 2 and writes nothing.

use scraper::{ElementRef, Html, Selector};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn ripline(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the ripline binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-report-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn path(dir: &Path, name: &str) -> String {
    dir.join(name).to_str().unwrap().to_string()
}

fn repo(p: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(p)
}

fn sel(s: &str) -> Selector {
    Selector::parse(s).unwrap()
}

fn text(e: ElementRef<'_>) -> String {
    e.text().collect::<String>().trim().to_string()
}

/// Writes the report of `circuit` (`None`: the demo) to `out`; returns the
/// exit code and the HTML.
fn report(circuit: Option<&str>, out: &str) -> (i32, String) {
    let mut args = vec!["report"];
    args.extend(circuit);
    args.extend(["--out", out]);
    let o = ripline(&args);
    let code = o.status.code().unwrap_or(-1);
    assert!(
        code == 0 || code == 3,
        "{circuit:?}: exit {code}: {}",
        stderr(&o)
    );
    (code, std::fs::read_to_string(out).unwrap())
}

/// The `result` of a command's JSON document.
fn json(args: &[&str], out: &str) -> Value {
    let mut all = args.to_vec();
    all.extend(["--json", out]);
    let o = ripline(&all);
    assert!(
        matches!(o.status.code(), Some(0 | 3)),
        "{args:?}: {}",
        stderr(&o)
    );
    let v: Value = serde_json::from_str(&std::fs::read_to_string(out).unwrap()).unwrap();
    v["result"].clone()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

/// A table of the report: caption, headers and cell texts.
struct Table {
    caption: String,
    headers: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// The column whose header starts with `header`.
    fn col(&self, header: &str) -> usize {
        self.headers
            .iter()
            .position(|h| h.starts_with(header))
            .unwrap_or_else(|| panic!("no column `{header}` in {:?}", self.headers))
    }

    /// The SI value of one unit of the column (from the unit in its header).
    fn unit(&self, col: usize) -> f64 {
        let h = &self.headers[col];
        let unit = h
            .rsplit_once('(')
            .map_or("", |(_, u)| u.trim_end_matches(')'));
        match unit {
            "bar" => 1e5,
            "kPa" => 1e3,
            "Pa" | "Hz" | "dB" | "dB re 1 Pa" => 1.0,
            "rpm" => 1.0 / 60.0,
            u => panic!("unit `{u}` of {h}"),
        }
    }

    /// The row whose first cell is `first`.
    fn row(&self, first: &str) -> &[String] {
        self.rows
            .iter()
            .find(|r| r[0] == first)
            .unwrap_or_else(|| panic!("no row `{first}` in `{}`", self.caption))
    }
}

fn tables(scope: ElementRef<'_>) -> Vec<Table> {
    scope
        .select(&sel("table"))
        .map(|t| Table {
            caption: t
                .select(&sel("caption"))
                .next()
                .map(text)
                .unwrap_or_default(),
            headers: t.select(&sel("thead th")).map(text).collect(),
            rows: t
                .select(&sel("tbody tr"))
                .map(|r| r.select(&sel("td")).map(text).collect())
                .collect(),
        })
        .collect()
}

fn section<'a>(doc: &'a Html, id: &str) -> ElementRef<'a> {
    doc.select(&sel(&format!("section#{id}")))
        .next()
        .unwrap_or_else(|| panic!("no section #{id}"))
}

fn table<'a>(tables: &'a [Table], caption: &str) -> &'a Table {
    tables
        .iter()
        .find(|t| t.caption.starts_with(caption))
        .unwrap_or_else(|| panic!("no table `{caption}`"))
}

/// `shown` (a cell, in its column's unit `unit_si`) is `value_si` written
/// to the digits shown: within half a unit of its last digit.
fn shows(shown: &str, value_si: f64, unit_si: f64) {
    let t = shown.replace('−', "-");
    let parsed: f64 = t
        .parse()
        .unwrap_or_else(|_| panic!("`{shown}` is not a number"));
    let decimals = t.split_once('.').map_or(0, |(_, d)| d.len());
    let value = value_si / unit_si;
    let half = 0.5 * 10f64.powi(-(decimals as i32));
    assert!(
        (parsed - value).abs() <= half * (1.0 + 1e-9) + 1e-12 * value.abs(),
        "`{shown}` does not show {value}"
    );
}

const SILENCER_KINDS: [&str; 5] = [
    "kind: pulsation_damper",
    "kind: inline_pulsation_damper",
    "kind: side_branch",
    "kind: expansion_chamber",
    "kind: helmholtz_resonator",
];

/// Every shipped circuit and the demo: the report has every section in
/// order (the conclusion first, right after the warnings), the schematic
/// and the charts as inline SVG, no address, script, external style sheet,
/// image or event handler (it works offline and without JavaScript), the
/// program's version and the input file's SHA-256 (FIPS 180-4, through
/// the `sha2` crate) in the footer, no NaN or infinity, and the same bytes
/// when written twice (no time stamp). Exit code 3 exactly when its
/// conclusion says FAIL.
#[test]
fn every_shipped_circuit_reports_every_section_self_contained() {
    let dir = scratch("shipped");
    let mut circuits: Vec<Option<String>> = std::fs::read_dir(repo("networks"))
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .map(|p| {
            Some(format!(
                "networks/{}",
                p.file_name().unwrap().to_string_lossy()
            ))
        })
        .collect();
    circuits.sort();
    assert!(circuits.len() >= 7, "{circuits:?}");
    circuits.push(None);
    for circuit in &circuits {
        let out = path(&dir, "r.html");
        let (code, html) = report(circuit.as_deref(), &out);
        let name = circuit.as_deref().unwrap_or("the demo");
        let doc = Html::parse_document(&html);
        let ids: Vec<String> = doc
            .select(&sel("main > section"))
            .filter_map(|s| s.value().attr("id").map(str::to_string))
            .collect();
        let yaml = circuit
            .as_ref()
            .map(|c| std::fs::read_to_string(repo(c)).unwrap());
        let has_silencer = yaml
            .as_ref()
            .is_some_and(|y| SILENCER_KINDS.iter().any(|k| y.contains(k)));
        let mut want = vec![
            "summary",
            "circuit",
            "inputs",
            "envelope",
            "ripple",
            "resonances",
        ];
        if has_silencer {
            want.push("silencers");
        }
        want.push("safety");
        assert_eq!(ids, want, "{name}");
        // the warnings, when there are any, before the conclusion
        let first_section = html.find("<section").unwrap();
        if let Some(w) = html.find("notice warning") {
            assert!(w < first_section, "{name}: warnings after a section");
        }
        // figures: the schematic, the envelope charts, the ripple and
        // response charts, all inline SVG
        let figures = doc.select(&sel("figure")).count();
        assert!(figures >= 3, "{name}: {figures} figures");
        assert_eq!(doc.select(&sel("figure > svg")).count(), figures, "{name}");
        assert!(
            section(&doc, "circuit")
                .select(&sel("svg g.symbol"))
                .next()
                .is_some()
        );
        // self-contained and static
        assert!(
            !html.contains("http://") && !html.contains("https://"),
            "{name}"
        );
        assert_eq!(
            doc.select(&sel("script, link, img, iframe, object, embed, base"))
                .count(),
            0,
            "{name}"
        );
        for e in doc.select(&sel("*")) {
            for (attr, value) in e.value().attrs() {
                assert!(!attr.starts_with("on"), "{name}: event handler {attr}");
                if attr == "href" || attr == "src" || attr.ends_with(":href") {
                    assert!(value.starts_with('#'), "{name}: {attr}={value}");
                }
            }
        }
        assert!(
            !html.contains("url(") && !html.contains("@import"),
            "{name}"
        );
        let visible: String = doc.root_element().text().collect();
        for bad in ["NaN", "inf ", "Infinity"] {
            assert!(!visible.contains(bad), "{name}: `{bad}` printed");
        }
        // footer: version and the input's SHA-256
        let footer: String = doc.select(&sel("footer")).map(text).collect();
        assert!(
            footer.contains(&format!("ripline {}", env!("CARGO_PKG_VERSION"))),
            "{footer}"
        );
        if let Some(y) = &yaml {
            let sha = ripline::results::report::sha256_hex(y.as_bytes());
            assert!(footer.contains(&sha), "{name}: {footer}");
        }
        // the verdict and the exit code agree
        let fail = doc.select(&sel("#summary .notice.fail")).count();
        let pass = doc.select(&sel("#summary .notice.pass")).count();
        assert_eq!(code == 3, fail == 1, "{name}: exit {code}");
        assert!(fail + pass <= 1);
        // the safety cautions: stored energy always
        let safety = text(section(&doc, "safety"));
        assert!(safety.contains("stored"), "{name}: {safety}");
        // deterministic
        let again = path(&dir, "again.html");
        let (_, second) = report(circuit.as_deref(), &again);
        assert!(second == html, "{name}: two runs differ");
    }
    std::fs::remove_dir_all(dir).unwrap();
}

/// The numbers of the drilling-rig damper report are those of the JSON of
/// `solve`, `response` and `silencer` on the same file, to the digits the
/// report shows.
#[test]
fn the_reports_numbers_are_those_of_the_commands_json() {
    let dir = scratch("numbers");
    let file = "networks/drill_rig_feed_damper.yaml";
    let (_, html) = report(Some(file), &path(&dir, "r.html"));
    let doc = Html::parse_document(&html);

    // ripple per point: overall rms, level, peak-to-peak; each harmonic
    let solve = json(&["solve", file], &path(&dir, "solve.json"));
    let t = tables(section(&doc, "ripple"));
    let overall = table(&t, "Overall ripple per measurement point");
    let src = &solve["sources"][0];
    let points = src["points"].as_array().unwrap();
    assert_eq!(overall.rows.len(), points.len());
    let (rms, level, pp) = (
        overall.col("overall rms"),
        overall.col("level"),
        overall.col("peak-to-peak"),
    );
    for p in points {
        let row = overall.row(p["point"].as_str().unwrap());
        shows(&row[rms], num(&p["rms_pa"]), overall.unit(rms));
        shows(&row[level], num(&p["level_db"]), 1.0);
        shows(&row[pp], num(&p["peak_to_peak_pa"]), overall.unit(pp));
    }
    let per = table(&t, "Ripple per harmonic");
    for p in points {
        let col = per.col(&format!("amplitude at {}", p["point"].as_str().unwrap()));
        for (k, h) in p["harmonics"].as_array().unwrap().iter().enumerate() {
            shows(&per.rows[k][0], num(&h["order"]), 1.0);
            shows(&per.rows[k][1], num(&h["freq_hz"]), 1.0);
            shows(
                &per.rows[k][col],
                num(&h["pressure_pa"]["amplitude"]),
                per.unit(col),
            );
        }
    }

    // resonances: each row's resonance, Q and ripple at the crossing
    let response = json(&["response", file], &path(&dir, "response.json"));
    let t = tables(section(&doc, "resonances"));
    let cross = table(&t, "Harmonics of pump");
    let (f, q, order, at, ripple) = (
        cross.col("resonance"),
        cross.col("Q"),
        cross.col("harmonic"),
        cross.col("at speed"),
        cross.col("ripple at the crossing"),
    );
    assert!(!cross.rows.is_empty());
    for row in &cross.rows {
        let shown_f: f64 = row[f].parse().unwrap();
        let r = response["resonances"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| (num(&r["resonance"]["freq_hz"]) - shown_f).abs() <= 0.005)
            .unwrap_or_else(|| panic!("no resonance at {shown_f} Hz in the JSON"));
        match r["resonance"]["quality"].as_f64() {
            Some(quality) => shows(&row[q], quality, 1.0),
            None => assert_eq!(row[q], "—"),
        }
        let h = r["harmonics"]
            .as_array()
            .unwrap()
            .iter()
            .find(|h| h["order"].as_u64().unwrap().to_string() == row[order])
            .unwrap();
        shows(&row[at], num(&h["coverage"]["speed_rev_s"]), 1.0 / 60.0);
        if let Some(p) = h["ripple_pa"].as_f64() {
            shows(&row[ripple], p, cross.unit(ripple));
        }
    }

    // the damper's losses at each point
    let t = tables(section(&doc, "silencers"));
    for tap in ["pump outlet", "head block"] {
        let s = json(
            &["silencer", file, "--element", "damper", "--tap", tap],
            &path(&dir, "silencer.json"),
        );
        let losses = table(&t, &format!("At {tap}: losses per harmonic"));
        let (tl, il, wo, wi) = (
            losses.col("TL"),
            losses.col("IL"),
            losses.col("without"),
            losses.col("with ("),
        );
        for h in s["harmonics"].as_array().unwrap() {
            let row = losses.row(&h["order"].to_string());
            shows(&row[tl], num(&h["transmission_loss_db"]), 1.0);
            shows(&row[il], num(&h["insertion_loss_db"]), 1.0);
            shows(&row[wo], num(&h["without_pa"]), losses.unit(wo));
            shows(&row[wi], num(&h["with_pa"]), losses.unit(wi));
        }
        let row = losses.row("overall rms");
        shows(&row[wo], num(&s["rms_without_pa"]), losses.unit(wo));
        shows(&row[wi], num(&s["rms_with_pa"]), losses.unit(wi));
    }
    std::fs::remove_dir_all(dir).unwrap();
}

/// The wheel-loader envelope demo: each limit's verdict, worst value,
/// speed and margins, each point's worst over the envelope and the ranked
/// findings are those of `assess --json`; the conclusion says FAIL and
/// the command exits 3 with the report written, as `assess` does.
#[test]
fn the_envelope_verdicts_are_those_of_assess() {
    let dir = scratch("verdicts");
    let file = "networks/loader_work_envelope.yaml";
    let (code, html) = report(Some(file), &path(&dir, "r.html"));
    let a = json(&["assess", file], &path(&dir, "assess.json"));
    let a = &a["assessment"];
    let doc = Html::parse_document(&html);
    let t = tables(section(&doc, "envelope"));
    let verdicts = table(&t, "Each limit against the worst of the envelope");
    let list = a["verdicts"].as_array().unwrap();
    assert_eq!(verdicts.rows.len(), list.len());
    let failed = list.iter().filter(|v| v["pass"] == false).count();
    assert!(failed > 0, "the demo fails a limit");
    assert_eq!(code, 3);
    let fail_notice: String = doc
        .select(&sel("#summary .notice.fail"))
        .map(text)
        .collect();
    assert!(
        fail_notice.contains(&format!("{failed} of {} limits exceeded", list.len())),
        "{fail_notice}"
    );
    let (worst, speed, order, margin_db) = (
        verdicts.col("worst"),
        verdicts.col("at speed"),
        verdicts.col("harmonic"),
        verdicts.col("margin (dB)"),
    );
    // the margin as a pressure: the last column
    let margin = verdicts.headers.len() - 1;
    assert!(verdicts.headers[margin].starts_with("margin (") && margin != margin_db);
    for (row, v) in verdicts.rows.iter().zip(list) {
        assert_eq!(row[0], v["tap"].as_str().unwrap());
        assert!(row[1].ends_with(v["limit"]["written"].as_str().unwrap()));
        assert_eq!(row[2], if v["pass"] == true { "PASS" } else { "FAIL" });
        let w = &v["worst"];
        shows(&row[worst], num(&w["value_pa"]), verdicts.unit(worst));
        shows(&row[speed], num(&w["speed_rev_s"]), 1.0 / 60.0);
        shows(&row[order], num(&w["order"]), 1.0);
        shows(&row[margin_db], num(&v["margin_db"]), 1.0);
        shows(&row[margin], num(&v["margin_pa"]), verdicts.unit(margin));
    }
    let per_point = table(&t, "Worst overall ripple per measurement point");
    let rms = per_point.col("worst overall rms");
    for (tap, w) in a["taps"]
        .as_array()
        .unwrap()
        .iter()
        .zip(a["worst"].as_array().unwrap())
    {
        let row = per_point.row(tap.as_str().unwrap());
        shows(&row[rms], num(&w["value_pa"]), per_point.unit(rms));
    }
    let findings = table(&t, "Findings ranked by level");
    let (level, rms) = (findings.col("level"), findings.col("rms"));
    assert!(!findings.rows.is_empty() && findings.rows.len() <= 10);
    for (row, f) in findings.rows.iter().zip(a["findings"].as_array().unwrap()) {
        assert_eq!(row[1], f["kind"].as_str().unwrap().replace('_', " "));
        assert_eq!(row[2], f["tap"].as_str().unwrap());
        shows(&row[level], num(&f["level_db"]), 1.0);
        shows(&row[rms], num(&f["rms_pa"]), findings.unit(rms));
    }
    // a gas-charged damper: the pressure-vessel caution too
    let safety = text(section(&doc, "safety"));
    assert!(safety.contains("pressure vessel"), "{safety}");
    std::fs::remove_dir_all(dir).unwrap();
}

/// Every malformed circuit in tests/bad/ (and a bad option or output
/// name): exit code 2, a message naming the file, no panic, and no report
/// written.
#[test]
fn bad_input_exits_2_and_writes_nothing() {
    let dir = scratch("bad");
    let out = path(&dir, "r.html");
    let mut files: Vec<PathBuf> = std::fs::read_dir(repo("tests/bad"))
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    assert!(files.len() >= 50);
    for f in &files {
        let name = format!("tests/bad/{}", f.file_name().unwrap().to_string_lossy());
        let o = ripline(&["report", &name, "--out", &out]);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{name}: {err}");
        assert!(err.contains(&name), "{name}: {err}");
        assert!(!err.contains("panicked"), "{err}");
        assert!(!Path::new(&out).exists(), "{name}: a report was written");
    }
    let good = "networks/drill_rig_feed.yaml";
    let txt = path(&dir, "r.txt");
    for (args, fragment) in [
        (vec!["report", good, "--out", &txt], "--out"),
        (
            vec!["report", good, "--out", &out, "--margin=-5%"],
            "--margin",
        ),
        (
            vec!["report", good, "--out", &out, "--harmonics", "0"],
            "--harmonics",
        ),
        (
            vec!["report", good, "--out", &out, "--db-ref", "1 furlong"],
            "--db-ref",
        ),
        (
            vec!["report", "tests/no_such_file.yaml", "--out", &out],
            "no_such_file",
        ),
        // --bands with nothing uncertain, and with no limits to give
        // verdict bands to (as `assess --bands` refuses them)
        (
            vec!["report", good, "--out", &out, "--bands", "first-order"],
            "no value of the circuit has a tolerance",
        ),
        (
            vec![
                "report",
                "networks/calibration/log_loader.yaml",
                "--out",
                &out,
                "--bands",
                "first-order",
            ],
            "no `limits` section",
        ),
    ] {
        let o = ripline(&args);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(fragment), "{args:?}: {err}");
        assert!(
            std::fs::read_dir(&dir).unwrap().next().is_none(),
            "{args:?}: wrote"
        );
    }
    std::fs::remove_dir_all(dir).unwrap();
}

/// A circuit with warnings (a damper below its precharge) still renders,
/// with the warnings listed before the first section and the count in the
/// conclusion.
#[test]
fn warnings_come_first() {
    let dir = scratch("warnings");
    let (_, html) = report(
        Some("tests/circuits/damper_below_precharge.yaml"),
        &path(&dir, "r.html"),
    );
    let doc = Html::parse_document(&html);
    let warnings: Vec<String> = doc
        .select(&sel("main > .notice.warning li"))
        .map(text)
        .collect();
    assert!(
        warnings.iter().any(|w| w.contains("precharge")),
        "{warnings:?}"
    );
    assert!(html.find("notice warning").unwrap() < html.find("<section").unwrap());
    let summary = text(section(&doc, "summary"));
    assert!(
        summary.contains(&format!("{} (listed above)", warnings.len())),
        "{summary}"
    );
    std::fs::remove_dir_all(dir).unwrap();
}

/// The example in docs/ (README: "docs/report-example.html") is a whole
/// report of the drilling-rig damper demo, small enough to keep in the
/// repository (under 300 kB), and self-contained.
#[test]
fn the_example_report_in_docs_is_whole() {
    let html = std::fs::read_to_string(repo("docs/report-example.html")).unwrap();
    assert!(html.len() < 300_000, "{} bytes", html.len());
    let doc = Html::parse_document(&html);
    for id in [
        "summary",
        "circuit",
        "inputs",
        "envelope",
        "ripple",
        "resonances",
        "silencers",
        "safety",
    ] {
        section(&doc, id);
    }
    let footer: String = doc.select(&sel("footer")).map(text).collect();
    assert!(
        footer.contains("networks/drill_rig_feed_damper.yaml"),
        "{footer}"
    );
    assert!(!html.contains("http") && !html.contains("<script"));
}

/// `--harmonics` reaches every part: the ripple table, the envelope's
/// worst points and findings, the resonance check and the silencer tables
/// list no harmonic above it.
#[test]
fn harmonics_option_reaches_every_part() {
    let dir = scratch("harmonics");
    let out = path(&dir, "r.html");
    let o = ripline(&[
        "report",
        "networks/drill_rig_feed_damper.yaml",
        "--out",
        &out,
        "--harmonics",
        "3",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let html = std::fs::read_to_string(&out).unwrap();
    let doc = Html::parse_document(&html);
    let mut seen = 0;
    for id in ["envelope", "ripple", "resonances", "silencers"] {
        for t in tables(section(&doc, id)) {
            let Some(col) = t
                .headers
                .iter()
                .position(|h| h == "harmonic" || h == "largest harmonic")
            else {
                continue;
            };
            for row in t
                .rows
                .iter()
                .filter(|r| r.len() > col && r[0] != "overall rms")
            {
                let k: u32 = row[col].parse().unwrap_or_else(|_| panic!("{row:?}"));
                assert!((1..=3).contains(&k), "{id}: `{}`: {row:?}", t.caption);
                seen += 1;
            }
        }
    }
    assert!(seen >= 10, "{seen}");
    std::fs::remove_dir_all(dir).unwrap();
}
