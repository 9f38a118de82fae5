//! Renderer of [`ReportResult`]: one self-contained HTML document (see
//! [`crate::html`]) with the job statement, the warnings at the top, the
//! conclusion (each limit's verdict, the worst ripple per measurement
//! point, the strongest resonance crossing), the schematic, the inputs with
//! their origin, the worst ripple over the envelope with the findings, the
//! ripple per measurement point at the file's speeds, the resonance check,
//! the silencers, the safety cautions and, in the footer, the program
//! version and the input file's SHA-256.
//!
//! Every number shown is a field of the result, converted to the unit of
//! its column (one unit per column, chosen from the column's largest value
//! as in [`super::table`]) with 4 significant digits; charts are the
//! commands' own chart descriptions drawn as inline SVG.

use super::assess::{self as assess_render, limit_text, where_text};
use super::table::{DIGITS, Quantity, RPM, Unit};
use crate::Circuit;
use crate::analysis::envelope::{FindingKind, Verdict};
use crate::analysis::response::Coverage;
use crate::html::{Block, Cell, Column, Level, Report, Table};
use crate::plot::{self, PlotError};
use crate::results::assess::{AssessReport, Status};
use crate::results::describe::gas_pressure;
use crate::results::inputs::PartInputs;
use crate::results::report::ReportResult;
use crate::results::response::ResponseResult;
use crate::results::silencer::{RANGE_SPEEDS, SilencerResult, WorstWithout};
use crate::results::solve::SolveResult;
use crate::results::{Input, Origin, Value};

/// Section anchors, in the order they appear (tests find them by these).
pub mod anchors {
    /// The conclusion: verdicts, worst points, the answers in brief.
    pub const SUMMARY: &str = "summary";
    /// The schematic.
    pub const CIRCUIT: &str = "circuit";
    /// The inputs with their origin.
    pub const INPUTS: &str = "inputs";
    /// The worst ripple over the operating envelope (or the speed range)
    /// and each limit's verdict.
    pub const ENVELOPE: &str = "envelope";
    /// The ripple per measurement point.
    pub const RIPPLE: &str = "ripple";
    /// The resonance check.
    pub const RESONANCES: &str = "resonances";
    /// The silencers.
    pub const SILENCERS: &str = "silencers";
    /// The safety cautions.
    pub const SAFETY: &str = "safety";
}

/// Decimals that give `value` [`DIGITS`] significant digits (at least 0,
/// at most 9).
fn decimals(value: f64) -> usize {
    if value == 0.0 || !value.is_finite() {
        return 0;
    }
    (DIGITS as i32 - 1 - value.abs().log10().floor() as i32).clamp(0, 9) as usize
}

/// A number cell with [`DIGITS`] significant digits.
fn sig(value: f64) -> Cell {
    Cell::num(value, decimals(value))
}

/// A number cell of an SI value shown in `unit`.
fn in_unit(value_si: f64, unit: Unit) -> Cell {
    sig(unit.of(value_si))
}

/// A pressure column: its header and the unit of its values.
fn pressure_column(header: &str, values: impl IntoIterator<Item = f64>) -> (Column, Unit) {
    let unit = Quantity::Pressure.unit_for_all(values);
    (Column::quantity(header, unit.symbol), unit)
}

/// Where an input came from, in words; `line` is the line its part starts
/// on in the file.
fn origin_text(origin: Origin, line: Option<usize>) -> String {
    match (origin, line) {
        (Origin::File, Some(l)) => format!("given in the file (entry at line {l})"),
        (Origin::File, None) => "given in the file".into(),
        (Origin::Request, _) => "given on the command line".into(),
        (Origin::Default, _) => "default".into(),
        (Origin::Derived, _) => "derived".into(),
    }
}

/// An input's value and unit as shown: SI values converted to the units of
/// the trade (bar, mm, L, L/min, rpm, °C, cSt, degrees).
fn shown(input: &Input) -> (String, String) {
    let one = |v: f64| -> (f64, String) {
        match input.unit {
            "Pa" if v.abs() >= 1e8 => (v / 1e9, "GPa".into()),
            "Pa" if v == 0.0 => (0.0, "bar".into()),
            "Pa" => {
                let u = Quantity::Pressure.unit_for(v);
                (u.of(v), u.symbol.into())
            }
            "m" => {
                let u = Quantity::Length.unit_for(v);
                (u.of(v), u.symbol.into())
            }
            "m³" => {
                let u = Quantity::Volume.unit_for(v);
                (u.of(v), u.symbol.into())
            }
            "m³/s" => {
                let u = Quantity::Flow.unit_for(v);
                (u.of(v), u.symbol.into())
            }
            "rev/s" => (RPM.of(v), "rpm".into()),
            "K" => (v - crate::oil::ZERO_CELSIUS_K, "°C".into()),
            "m²/s" => (v * 1e6, "cSt".into()),
            "rad" => (v.to_degrees(), "°".into()),
            "1" if PERCENT.contains(&input.name.as_str()) => (v * 100.0, "%".into()),
            "1" => (v, String::new()),
            u => (v, u.into()),
        }
    };
    match &input.value {
        Value::Text(t) => (t.clone(), String::new()),
        Value::Number(v) if input.unit == "Pa abs" => (gas_pressure(*v), String::new()),
        Value::Number(v) => {
            let (x, u) = one(*v);
            (num(x), u)
        }
        Value::Range([lo, hi]) => {
            let (a, u) = one(*hi);
            let scale = if *hi != 0.0 { a / hi } else { 1.0 };
            let lo_shown = if input.unit == "K" {
                one(*lo).0
            } else {
                lo * scale
            };
            (format!("{} – {}", num(lo_shown), num(a)), u)
        }
    }
}

/// Most rows of a pump's crossing table (the largest ripple first).
const MAX_CROSSING_ROWS: usize = 12;

/// Inputs that are fractions, shown in percent.
const PERCENT: [&str; 3] = ["margin", "air_content", "flow_non_uniformity"];

/// A number as text: whole numbers without decimals, others with
/// [`DIGITS`] significant digits (very large or small ones in
/// e-notation), a typographic minus.
fn num(v: f64) -> String {
    let t = if v.fract() == 0.0 && v.abs() < 1e7 {
        format!("{v:.0}")
    } else {
        super::table::sig(v, DIGITS)
    };
    match t.strip_prefix('-') {
        Some(rest) if t != "-0" => format!("−{rest}"),
        Some(_) => "0".into(),
        None => t,
    }
}

/// "harmonic_count" → "harmonic count".
fn words(key: &str) -> String {
    key.replace('_', " ")
}

/// A table of inputs: quantity, value, unit, origin.
fn inputs_table(caption: &str, inputs: &[Input], line: Option<usize>) -> Block {
    Block::Table(Table {
        caption: caption.into(),
        columns: vec![
            Column::text("input"),
            Column::text("value"),
            Column::text("unit"),
            Column::text("origin"),
        ],
        rows: inputs
            .iter()
            .map(|i| {
                let (v, u) = shown(i);
                vec![
                    Cell::text(words(&i.name)),
                    Cell::text(v),
                    Cell::text(u),
                    Cell::text(origin_text(i.origin, line)),
                ]
            })
            .collect(),
    })
}

/// "length 2.5 m; bore 20 mm" for the inputs of one origin class.
fn joined(inputs: &[Input], keep: impl Fn(Origin) -> bool) -> String {
    let parts: Vec<String> = inputs
        .iter()
        .filter(|i| keep(i.origin))
        .map(|i| {
            let (v, u) = shown(i);
            if u.is_empty() {
                format!("{} {v}", words(&i.name))
            } else {
                format!("{} {v} {u}", words(&i.name))
            }
        })
        .collect();
    if parts.is_empty() {
        "—".into()
    } else {
        parts.join("; ")
    }
}

/// One row per part (pump or element): what the file gives, what is a
/// default and what is derived.
fn parts_table(caption: &str, parts: &[PartInputs]) -> Block {
    Block::Table(Table {
        caption: caption.into(),
        columns: vec![
            Column::text("name"),
            Column::text("kind"),
            Column::text("place"),
            Column::text("file line"),
            Column::text("given in the file"),
            Column::text("defaults"),
            Column::text("derived"),
        ],
        rows: parts
            .iter()
            .map(|p| {
                vec![
                    Cell::text(&p.name),
                    Cell::text(words(p.kind)),
                    Cell::text(p.place.replace('`', "")),
                    p.line.map_or(Cell::Empty, |l| Cell::num(l as f64, 0)),
                    Cell::text(joined(&p.inputs, |o| o == Origin::File)),
                    Cell::text(joined(&p.inputs, |o| o == Origin::Default)),
                    Cell::text(joined(&p.inputs, |o| o == Origin::Derived)),
                ]
            })
            .collect(),
    })
}

fn section(id: &str, title: impl Into<String>, blocks: Vec<Block>) -> Block {
    Block::Section {
        id: id.into(),
        title: title.into(),
        blocks,
    }
}

/// The report as an HTML document. `circuit` is the circuit the report
/// is about (drawn as the schematic).
///
/// # Errors
/// A chart that cannot be drawn ([`PlotError`]).
pub fn html(r: &ReportResult, circuit: &Circuit) -> Result<String, PlotError> {
    let name = r.subject.title.as_deref().unwrap_or(&r.subject.file);
    let mut report = Report::new(format!("Pressure ripple report: {name}"));
    report.subtitle = r.job.clone();
    // warnings first, before any section
    if r.warnings.is_empty() {
        report.blocks.push(Block::Notice(
            Level::Info,
            "No warnings: every model used is within its stated limits for this circuit.".into(),
        ));
    } else {
        report.blocks.push(Block::Notices(
            Level::Warning,
            r.warnings.iter().map(ToString::to_string).collect(),
        ));
    }
    report.blocks.push(summary(r));
    report.blocks.push(section(
        anchors::CIRCUIT,
        "The circuit",
        vec![Block::Figure {
            svg: plot::schematic_svg(circuit),
            caption: format!(
                "The circuit of {} drawn from its topology: pumps on the left, elements on their connections, shunts above their node, measurement points as red diamonds.",
                r.subject.file
            ),
        }],
    ));
    report.blocks.push(inputs(r));
    report.blocks.push(envelope(r)?);
    report.blocks.push(ripple(&r.ripple)?);
    let mut blocks = Vec::new();
    for resp in &r.resonances {
        blocks.extend(resonance(resp, r.resonances.len() > 1)?);
    }
    report.blocks.push(section(
        anchors::RESONANCES,
        "Resonance check over the speed range",
        blocks,
    ));
    if !r.silencers.is_empty() || !r.skipped_silencers.is_empty() {
        report.blocks.push(silencers(r)?);
    }
    report.blocks.push(section(
        anchors::SAFETY,
        "Safety",
        r.cautions
            .iter()
            .map(|c| Block::Notice(Level::Caution, c.clone()))
            .collect(),
    ));
    report.footer = vec![
        format!(
            "{} · input file {} · SHA-256 {}",
            r.program, r.subject.file, r.input_sha256
        ),
        "Amplitudes are peak values; overall levels are rms. CSV and JSON outputs of the same analyses (ripline solve, response, silencer) carry every number in SI with full precision.".into(),
    ];
    Ok(report.to_html())
}

/// The conclusion: the verdict against the limits, the worst ripple per
/// measurement point, the resonances crossed, the silencers' effect.
fn summary(r: &ReportResult) -> Block {
    let mut blocks = Vec::new();
    let mut kv = Vec::new();
    match &r.assessment {
        Some(a) if !a.assessment.verdicts.is_empty() => {
            let v = &a.assessment.verdicts;
            let with = |s: Status| -> Vec<&Verdict> {
                v.iter()
                    .enumerate()
                    .filter(|&(i, _)| a.status(i) == s)
                    .map(|(_, v)| v)
                    .collect()
            };
            let failed = with(Status::Fail);
            let uncertain = with(Status::Uncertain);
            let list = |vs: &[&Verdict]| {
                vs.iter()
                    .map(|v| format!("{} at {}", limit_text(v), v.tap))
                    .collect::<Vec<_>>()
                    .join("; ")
            };
            let over = if a.envelope.is_some() {
                "over the operating envelope"
            } else {
                "over the speed range"
            };
            if let Some(b) = &a.verdict_bands {
                blocks.push(Block::Notice(
                    Level::Info,
                    format!(
                        "Verdicts with uncertainty: {} % bands of each worst value over the uncertain inputs ({}). PASS only when the whole band is within the limit; FAIL when the nominal worst is over it; UNCERTAIN when the nominal worst is within the limit but its band reaches over it.",
                        crate::html::format_number(b.info.coverage * 100.0, 1),
                        match b.info.method {
                            crate::uncertainty::bands::Method::MonteCarlo =>
                                format!("Monte Carlo, {} draws, seed {}", b.info.draws, b.info.seed),
                            crate::uncertainty::bands::Method::Linear => "first order".to_string(),
                        }
                    ),
                ));
            }
            blocks.push(if failed.is_empty() && !uncertain.is_empty() {
                Block::Notice(
                    Level::Warning,
                    format!(
                        "UNCERTAIN: no limit exceeded {over} by the nominal prediction, but the band of {} of {} reaches over it: {}.",
                        uncertain.len(),
                        v.len(),
                        list(&uncertain)
                    ),
                )
            } else if failed.is_empty() {
                Block::Notice(
                    Level::Pass,
                    format!("every limit met {over} ({n} of {n}).", n = v.len()),
                )
            } else {
                Block::Notice(
                    Level::Fail,
                    format!(
                        "{} of {} limits exceeded {over}: {}.",
                        failed.len(),
                        v.len(),
                        failed
                            .iter()
                            .map(|v| format!("{} at {}", limit_text(v), v.tap))
                            .collect::<Vec<_>>()
                            .join("; ")
                    ),
                )
            });
            for (i, v) in v.iter().enumerate() {
                kv.push((
                    format!("{} at {}", limit_text(v), v.tap),
                    verdict_text(a, i),
                ));
            }
        }
        Some(_) => blocks.push(Block::Notice(
            Level::Info,
            "No verdict: the file has no `limits` section. The figures below are for the reader's judgement; add limits to get PASS or FAIL."
                .into(),
        )),
        None => {}
    }
    if let Some(a) = &r.assessment {
        for (tap, w) in a.assessment.taps.iter().zip(&a.assessment.worst) {
            kv.push((
                format!("worst ripple at {tap}"),
                match w {
                    Some(w) => format!(
                        "{} rms ({}) at {}; largest harmonic {} ({} Hz)",
                        Quantity::Pressure.show(w.value_pa),
                        level_re_1pa(w.value_pa),
                        where_text(w.speed_rev_s, &w.point),
                        w.order,
                        crate::html::format_number(w.frequency_hz, 1)
                    ),
                    None => "no ripple reaches it".into(),
                },
            ));
        }
        if let Some(f) = a
            .assessment
            .findings
            .iter()
            .find(|f| f.kind == FindingKind::Resonance)
        {
            kv.push((
                "strongest resonance crossing".into(),
                format!(
                    "{} Hz met by harmonic {} at {}: {} rms ({}) at {}",
                    crate::html::format_number(f.resonance_hz.unwrap_or(f.frequency_hz), 1),
                    f.order,
                    where_text(f.speed_rev_s, &f.point),
                    Quantity::Pressure.show(f.rms_pa),
                    level_re_1pa(f.rms_pa),
                    f.tap
                ),
            ));
        }
    }
    if let Some(top) = r
        .ripple
        .totals
        .iter()
        .max_by(|a, b| a.rms_pa.total_cmp(&b.rms_pa))
    {
        let speeds: Vec<String> = r
            .ripple
            .sources
            .iter()
            .map(|s| format!("{:.0} rpm", s.speed_rev_s * 60.0))
            .fold(Vec::new(), |mut v, s| {
                if !v.contains(&s) {
                    v.push(s);
                }
                v
            });
        kv.push((
            "highest ripple at the file's speed".into(),
            format!(
                "{} rms at {}{} ({})",
                Quantity::Pressure.show(top.rms_pa),
                top.point,
                top.level_db.map_or(String::new(), |l| format!(
                    " ({l:.1} dB re {})",
                    super::reference_text(r.ripple.db_ref_pa)
                )),
                speeds.join(", ")
            ),
        ));
    }
    for resp in &r.resonances {
        let crossed = resp.resonances.iter().filter(|v| v.crossed()).count();
        kv.push((
            format!("resonances, pump {}", resp.pump.name),
            format!(
                "{crossed} of {} resonances crossed by a harmonic over {}",
                resp.resonances.len(),
                resp.speed_range.describe()
            ),
        ));
    }
    for s in &r.silencers {
        if let Some(w) = &s.worst_over_speeds {
            kv.push((
                format!("silencer {} at {}", element_names(s), s.tap),
                worst_with_and_without(w),
            ));
        } else if s.rms_with_pa > 0.0 {
            kv.push((
                format!("silencer {} at {}", element_names(s), s.tap),
                format!(
                    "overall ripple {:.2} dB lower with it at {:.0} rpm",
                    20.0 * (s.rms_without_pa / s.rms_with_pa).log10(),
                    s.pump.speed_rev_s * 60.0
                ),
            ));
        }
    }
    kv.push((
        "warnings".into(),
        if r.warnings.is_empty() {
            "none".into()
        } else {
            format!("{} (listed above)", r.warnings.len())
        },
    ));
    kv.push((
        "circuit file".into(),
        format!("{} (SHA-256 {})", r.subject.file, r.input_sha256),
    ));
    blocks.push(Block::KeyValues(kv));
    section(anchors::SUMMARY, "Conclusion", blocks)
}

/// "PASS: worst 0.1326 bar at 1800 rpm, 120 bar (harmonic 2, 540.0 Hz);
/// margin +1.23 dB (0.0123 bar to spare)".
fn verdict_text(a: &AssessReport, i: usize) -> String {
    let v = &a.assessment.verdicts[i];
    let word = a.status(i).word();
    let band = a
        .verdict_bands
        .as_ref()
        .and_then(|b| b.verdicts.get(i))
        .and_then(|b| b.worst_pa)
        .and_then(|b| b.interval())
        .map_or(String::new(), |(lo, hi)| {
            format!(
                "; band {} .. {}",
                Quantity::Pressure.show(lo),
                Quantity::Pressure.show(hi)
            )
        });
    let text = match (&v.worst, v.margin_db) {
        (Some(w), Some(margin)) => format!(
            "{word}: worst {} at {} (harmonic {}, {} Hz); margin {} dB ({} {})",
            Quantity::Pressure.show(w.value_pa),
            where_text(w.speed_rev_s, &w.point),
            w.order,
            crate::html::format_number(w.frequency_hz, 1),
            signed(margin, 2),
            Quantity::Pressure.show(v.margin_pa.abs()),
            if v.margin_pa < 0.0 {
                "over"
            } else {
                "to spare"
            }
        ),
        _ => format!("{word}: no ripple reaches it anywhere"),
    };
    let over = v.over_limit.as_ref().map_or(String::new(), |o| {
        format!(
            "; {}{}",
            super::assess::over_limit_text(
                o,
                a.assessment.speed_range_rev_s,
                a.assessment.points.len()
            ),
            super::assess::bottomed_text(o).map_or(String::new(), |c| format!("; {c}"))
        )
    });
    format!("{text}{band}{over}")
}

/// `+1.23` or `−0.45` with `decimals` decimals.
fn signed(v: f64, decimals: usize) -> String {
    let t = crate::html::format_number(v, decimals);
    if t.starts_with('−') || v == 0.0 {
        t
    } else {
        format!("+{t}")
    }
}

/// "97.0 dB re 1 Pa" (levels of `assess` are re 1 Pa).
fn level_re_1pa(rms_pa: f64) -> String {
    crate::results::level_db(rms_pa, 1.0)
        .map_or_else(|| "no ripple".into(), |l| format!("{l:.1} dB re 1 Pa"))
}

/// The worst ripple over the operating envelope (or the speed range), each
/// limit's verdict, the findings ranked by level and a chart per point.
fn envelope(r: &ReportResult) -> Result<Block, PlotError> {
    let Some(a) = &r.assessment else {
        return Ok(section(
            anchors::ENVELOPE,
            "Worst ripple over the speed range",
            vec![Block::Notice(
                Level::Info,
                format!(
                    "Not assessed: {}",
                    r.no_assessment.as_deref().unwrap_or("no speed range")
                ),
            )],
        ));
    };
    let x = &a.assessment;
    let spans = assess_render::envelope_spans(a);
    let mut blocks = vec![Block::Paragraph(format!(
        "Shaft {} swept over {:.0}–{:.0} rpm ({} speeds, each worst speed refined between them to 0.01 dB) at {}. Levels are rms in dB re 1 Pa, as ripline assess gives them.",
        a.assessment.shaft,
        x.speed_range_rev_s.0 * 60.0,
        x.speed_range_rev_s.1 * 60.0,
        x.sweeps.first().map_or(0, |s| s.sweep.speeds_rev_s.len()),
        if spans.is_empty() {
            "the circuit as written (the file has no `envelope` section)".to_string()
        } else {
            format!(
                "each of {} envelope points: {}",
                x.points.len(),
                spans.join("; ").replace('`', "")
            )
        }
    ))];
    if !a.silent_orders.is_empty() {
        blocks.push(Block::Notice(
            Level::Info,
            format!(
                "Left out: harmonic {} (no source flow in the pump's table).",
                a.silent_orders
                    .iter()
                    .map(u32::to_string)
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        ));
    }
    if !x.verdicts.is_empty() {
        let (worst_col, worst_unit) = pressure_column(
            "worst",
            x.verdicts
                .iter()
                .filter_map(|v| v.worst.as_ref())
                .map(|w| w.value_pa),
        );
        let (margin_col, margin_unit) =
            pressure_column("margin", x.verdicts.iter().map(|v| v.margin_pa));
        let rows = x
            .verdicts
            .iter()
            .enumerate()
            .map(|(i, v)| {
                let mut row = vec![
                    Cell::text(&v.tap),
                    Cell::text(limit_text(v)),
                    Cell::text(a.status(i).word()),
                ];
                match (&v.worst, v.margin_db) {
                    (Some(w), Some(m)) => row.extend([
                        in_unit(w.value_pa, worst_unit),
                        Cell::num(w.speed_rev_s * 60.0, 0),
                        Cell::text(w.point.label()),
                        Cell::num(f64::from(w.order), 0),
                        Cell::num(w.frequency_hz, 1),
                        Cell::num(m, 2),
                        in_unit(v.margin_pa, margin_unit),
                    ]),
                    _ => row.push(Cell::text("no ripple reaches it")),
                }
                if let Some(b) = a.verdict_bands.as_ref().and_then(|b| b.verdicts.get(i))
                    && v.worst.is_some()
                {
                    let (lo, hi) = b
                        .worst_pa
                        .and_then(|w| w.interval())
                        .unwrap_or((f64::NAN, f64::NAN));
                    row.extend([
                        in_unit(lo, worst_unit),
                        in_unit(hi, worst_unit),
                        Cell::num(b.margin_db.unwrap_or(f64::NAN), 2),
                    ]);
                }
                row
            })
            .collect();
        let mut columns = vec![
            Column::text("point"),
            Column::text("limit"),
            Column::text("verdict"),
            worst_col.clone(),
            Column::quantity("at speed", "rpm"),
            Column::text("envelope point"),
            Column::text("harmonic"),
            Column::quantity("frequency", "Hz"),
            Column::quantity("margin", "dB"),
            margin_col,
        ];
        if a.verdict_bands.is_some() {
            let unit = worst_col.unit.clone().unwrap_or_default();
            columns.extend([
                Column::quantity("band low", unit.clone()),
                Column::quantity("band high", unit),
                Column::quantity("margin of band high", "dB"),
            ]);
        }
        blocks.push(Block::Table(Table {
            caption:
                "Each limit against the worst of the envelope (margin: positive below the limit)"
                    .into(),
            columns,
            rows,
        }));
    }
    let (rms_col, rms_unit) = pressure_column(
        "worst overall rms",
        x.worst.iter().flatten().map(|w| w.value_pa),
    );
    blocks.push(Block::Table(Table {
        caption: "Worst overall ripple per measurement point".into(),
        columns: vec![
            Column::text("point"),
            rms_col,
            Column::quantity("level", "dB re 1 Pa"),
            Column::quantity("at speed", "rpm"),
            Column::text("envelope point"),
            Column::text("largest harmonic"),
            Column::quantity("its frequency", "Hz"),
        ],
        rows: x
            .taps
            .iter()
            .zip(&x.worst)
            .map(|(tap, w)| match w {
                Some(w) => vec![
                    Cell::text(tap),
                    in_unit(w.value_pa, rms_unit),
                    crate::results::level_db(w.value_pa, 1.0)
                        .map_or(Cell::Empty, |l| Cell::num(l, 1)),
                    Cell::num(w.speed_rev_s * 60.0, 0),
                    Cell::text(w.point.label()),
                    Cell::num(f64::from(w.order), 0),
                    Cell::num(w.frequency_hz, 1),
                ],
                None => vec![Cell::text(tap), Cell::text("no ripple reaches it")],
            })
            .collect(),
    }));
    let shown = x.ranked(a.top, a.floor_db);
    let (f_col, f_unit) = pressure_column("rms", shown.iter().map(|f| f.rms_pa));
    blocks.push(Block::Table(Table {
        caption: format!(
            "Findings ranked by level: {} of {} (at most {}, none more than {} dB below its point's overall worst; ripline assess {} --csv lists every one)",
            shown.len(),
            x.findings.len(),
            a.top,
            a.floor_db,
            r.subject.file
        ),
        columns: vec![
            Column::text("#"),
            Column::text("kind"),
            Column::text("point"),
            Column::quantity("level", "dB re 1 Pa"),
            f_col,
            Column::text("harmonic"),
            Column::quantity("at speed", "rpm"),
            Column::quantity("frequency", "Hz"),
            Column::quantity("resonance", "Hz"),
            Column::text("envelope point"),
        ],
        rows: shown
            .iter()
            .enumerate()
            .map(|(i, f)| {
                vec![
                    Cell::num((i + 1) as f64, 0),
                    Cell::text(f.kind.name()),
                    Cell::text(&f.tap),
                    Cell::num(f.level_db, 1),
                    in_unit(f.rms_pa, f_unit),
                    Cell::num(f64::from(f.order), 0),
                    Cell::num(f.speed_rev_s * 60.0, 0),
                    Cell::num(f.frequency_hz, 1),
                    f.resonance_hz.map_or(Cell::text("—"), |h| Cell::num(h, 1)),
                    Cell::text(f.point.label()),
                ]
            })
            .collect(),
    }));
    for (ti, tap) in x.taps.iter().enumerate() {
        blocks.push(Block::Figure {
            svg: plot::stacked_line_charts_svg(&assess_render::charts(a, ti))?,
            caption: format!(
                "Overall ripple at {tap} against speed over the envelope{}, the worst point marked.",
                if a.limits.iter().any(|l| &l.tap == tap) {
                    ", with its rms limit"
                } else {
                    ""
                }
            ),
        });
    }
    let title = if a.envelope.is_some() {
        "Worst ripple over the operating envelope"
    } else {
        "Worst ripple over the speed range"
    };
    Ok(section(
        anchors::ENVELOPE,
        if x.verdicts.is_empty() {
            title.to_string()
        } else {
            format!("{title}, against the limits")
        },
        blocks,
    ))
}

fn element_names(s: &SilencerResult) -> String {
    s.elements
        .iter()
        .map(|e| e.name.as_str())
        .collect::<Vec<_>>()
        .join(" + ")
}

fn inputs(r: &ReportResult) -> Block {
    let ci = &r.circuit_inputs;
    let mut general = ci.general.clone();
    general.extend(r.inputs.iter().filter(|i| i.name != "harmonics").cloned());
    let mut blocks = vec![
        Block::Paragraph(
            "Each input with its origin: given in the file, ripline's default, or derived from other inputs. Values are shown in the units of the trade; the analyses use them in SI."
                .into(),
        ),
        inputs_table("Settings", &general, None),
        inputs_table("Fluid at its operating point", &ci.fluid, None),
        parts_table("Pumps", &ci.pumps),
        parts_table("Elements", &ci.elements),
    ];
    let described: Vec<(String, String)> = r
        .check
        .elements
        .iter()
        .filter(|e| !e.description.is_empty())
        .map(|e| (e.name.clone(), e.description.clone()))
        .collect();
    if !described.is_empty() {
        blocks.push(Block::Paragraph(
            "What follows from the elements' inputs (as ripline check reports it):".into(),
        ));
        blocks.push(Block::KeyValues(described));
    }
    section(anchors::INPUTS, "Inputs", blocks)
}

fn ripple(s: &SolveResult) -> Result<Block, PlotError> {
    let several = s.several_sources();
    let mut blocks = vec![Block::Paragraph(format!(
        "At the pumps' speeds in the file, harmonics 1–{}; amplitudes are peak values, overall levels rms in dB re {}.",
        s.harmonics,
        super::reference_text(s.db_ref_pa)
    ))];
    // overall per point
    let (rms_col, rms_unit) = pressure_column(
        "overall rms",
        s.sources
            .iter()
            .flat_map(|src| src.points.iter().map(|p| p.rms_pa)),
    );
    let (pp_col, pp_unit) = pressure_column(
        "peak-to-peak",
        s.sources
            .iter()
            .flat_map(|src| src.points.iter().map(|p| p.peak_to_peak_pa)),
    );
    let mut columns = vec![Column::text("point")];
    if several {
        columns.push(Column::text("source"));
    }
    columns.extend([rms_col, Column::quantity("level", "dB"), pp_col]);
    let mut rows = Vec::new();
    for (i, total) in s.totals.iter().enumerate() {
        for src in &s.sources {
            let p = &src.points[i];
            let mut row = vec![Cell::text(&p.point)];
            if several {
                row.push(Cell::text(&src.name));
            }
            row.extend([
                in_unit(p.rms_pa, rms_unit),
                p.level_db
                    .map_or(Cell::text("no ripple"), |l| Cell::num(l, 1)),
                in_unit(p.peak_to_peak_pa, pp_unit),
            ]);
            rows.push(row);
        }
        if several {
            rows.push(vec![
                Cell::text(&total.point),
                Cell::text("all sources (in power)"),
                in_unit(total.rms_pa, rms_unit),
                total
                    .level_db
                    .map_or(Cell::text("no ripple"), |l| Cell::num(l, 1)),
                Cell::Empty,
            ]);
        }
    }
    blocks.push(Block::Table(Table {
        caption: "Overall ripple per measurement point".into(),
        columns,
        rows,
    }));
    // harmonics: one column per point
    for src in &s.sources {
        let mut columns = vec![
            Column::text(src.order_basis.header()),
            Column::quantity("frequency", "Hz"),
        ];
        let units: Vec<Unit> = src
            .points
            .iter()
            .map(|p| {
                let (col, unit) = pressure_column(
                    &format!("amplitude at {}", p.point),
                    p.harmonics.iter().map(|h| h.pressure_pa.amplitude),
                );
                columns.push(col);
                unit
            })
            .collect();
        let rows = (0..src.points.first().map_or(0, |p| p.harmonics.len()))
            .map(|k| {
                let h = &src.points[0].harmonics[k];
                let mut row = vec![Cell::num(f64::from(h.order), 0), Cell::num(h.freq_hz, 2)];
                row.extend(
                    src.points
                        .iter()
                        .zip(&units)
                        .map(|(p, u)| in_unit(p.harmonics[k].pressure_pa.amplitude, *u)),
                );
                row
            })
            .collect();
        blocks.push(Block::Table(Table {
            caption: format!(
                "Ripple per {} of source {} at {:.0} rpm (phases are in the CSV and JSON of ripline solve)",
                src.order_basis.header(),
                src.name,
                src.speed_rev_s * 60.0
            ),
            columns,
            rows,
        }));
    }
    blocks.push(Block::Figure {
        svg: plot::grouped_bar_chart_svg(&super::solve::chart(s))?,
        caption:
            "Pressure ripple amplitude per harmonic at each measurement point (logarithmic axis)."
                .into(),
    });
    Ok(section(
        anchors::RIPPLE,
        "Ripple per measurement point",
        blocks,
    ))
}

fn resonance(r: &ResponseResult, several: bool) -> Result<Vec<Block>, PlotError> {
    let mut blocks = Vec::new();
    let z = f64::from(r.pump.pumping_elements);
    let s = &r.speed_range;
    let intro = format!(
        "Pump {} at node {}, {} pumping elements; speed range {}, so the pumping frequency runs {}. Resonances are the peaks (at least 3 dB prominent) of the pressure per unit source flow between {} and {} Hz; a harmonic band that contains a resonance crosses it, one ending within {:.0} % of it is near.",
        r.pump.name,
        r.pump.node,
        r.pump.pumping_elements,
        s.describe_origin().replace('`', ""),
        if s.is_single() {
            format!("{} Hz", crate::html::format_number(z * s.low_rev_s, 2))
        } else {
            format!(
                "{}–{} Hz",
                crate::html::format_number(z * s.low_rev_s, 2),
                crate::html::format_number(z * s.high_rev_s, 2)
            )
        },
        crate::html::format_number(r.grid.low_hz, 2),
        crate::html::format_number(r.grid.high_hz, 2),
        r.margin * 100.0
    );
    if several {
        blocks.push(Block::Paragraph(format!("Pump {}:", r.pump.name)));
    }
    blocks.push(Block::Paragraph(intro));
    if !r.silent_orders.is_empty() {
        blocks.push(Block::Notice(
            Level::Info,
            format!(
                "Left out: harmonic {} of pump {} (no source flow in its table).",
                r.silent_orders
                    .iter()
                    .map(u32::to_string)
                    .collect::<Vec<_>>()
                    .join(", "),
                r.pump.name
            ),
        ));
    }
    // one row per (resonance, harmonic that meets it), the largest ripple first
    let mut met: Vec<(usize, &crate::results::response::Verdict)> = r
        .resonances
        .iter()
        .enumerate()
        .flat_map(|(i, v)| v.harmonics.iter().map(move |h| (i, h)))
        .collect();
    met.sort_by(|a, b| {
        let key = |x: &(usize, &crate::results::response::Verdict)| x.1.ripple_pa.unwrap_or(-1.0);
        key(b).total_cmp(&key(a)).then(
            r.resonances[a.0]
                .resonance
                .freq_hz
                .total_cmp(&r.resonances[b.0].resonance.freq_hz),
        )
    });
    let left_out = met.len().saturating_sub(MAX_CROSSING_ROWS);
    met.truncate(MAX_CROSSING_ROWS);
    let (est_col, est_unit) = pressure_column(
        "ripple at the crossing",
        met.iter().filter_map(|(_, h)| h.ripple_pa),
    );
    let rows: Vec<Vec<Cell>> = met
        .iter()
        .map(|(i, h)| {
            let v = &r.resonances[*i];
            let (how, speed) = match h.coverage {
                Coverage::Crossed { speed_rev_s } => ("crossed", speed_rev_s),
                Coverage::Near { speed_rev_s, .. } => ("near", speed_rev_s),
            };
            let how = match h.coverage {
                Coverage::Near { gap, .. } => format!("{how} ({:.1} % away)", gap * 100.0),
                Coverage::Crossed { .. } => how.to_string(),
            };
            vec![
                Cell::num(v.resonance.freq_hz, 2),
                v.resonance
                    .quality
                    .map_or(Cell::text("—"), |q| Cell::num(q, 1)),
                Cell::text(&v.resonance.point),
                Cell::num(f64::from(h.order), 0),
                Cell::text(how),
                Cell::num(speed * 60.0, 0),
                match (h.ripple_pa, &h.coverage) {
                    (Some(p), _) => in_unit(p, est_unit),
                    (None, Coverage::Crossed { .. }) => Cell::text("unbounded (lossless model)"),
                    (None, Coverage::Near { .. }) => Cell::Empty,
                },
            ]
        })
        .collect();
    let crossed = r.resonances.iter().filter(|v| v.crossed()).count();
    blocks.push(Block::Paragraph(format!(
        "{} resonances found; {crossed} crossed by a harmonic band, {} clear.",
        r.resonances.len(),
        r.resonances
            .iter()
            .filter(|v| v.harmonics.is_empty())
            .count()
    )));
    if !rows.is_empty() {
        blocks.push(Block::Table(Table {
            caption: format!(
                "Harmonics of pump {} that cross or near a resonance, the largest ripple first (ripple ≈ peak level × source flow at that speed)",
                r.pump.name
            ),
            columns: vec![
                Column::quantity("resonance", "Hz"),
                Column::text("Q"),
                Column::text("highest at"),
                Column::text("harmonic"),
                Column::text("meets it"),
                Column::quantity("at speed", "rpm"),
                est_col,
            ],
            rows,
        }));
    }
    if left_out > 0 {
        blocks.push(Block::Paragraph(format!(
            "{left_out} more crossings and near misses, each with a smaller ripple, are listed by `ripline response {}`.",
            r.subject.file
        )));
    }
    let clear: Vec<String> = r
        .resonances
        .iter()
        .filter(|v| v.harmonics.is_empty())
        .map(|v| crate::html::format_number(v.resonance.freq_hz, 1))
        .collect();
    if !clear.is_empty() {
        blocks.push(Block::Paragraph(format!(
            "Clear (no harmonic within the margin): {} Hz.",
            clear.join(", ")
        )));
    }
    blocks.push(Block::Figure {
        svg: plot::stacked_line_charts_svg(&super::response::charts(r))?,
        caption: format!(
            "Response of the circuit per unit source flow of pump {} with the harmonic bands over the speed range shaded, and the impedance the pump sees.",
            r.pump.name
        ),
    });
    Ok(blocks)
}

fn silencers(r: &ReportResult) -> Result<Block, PlotError> {
    let mut blocks = Vec::new();
    // one subsection per silencer, the points after one another
    let mut names: Vec<String> = Vec::new();
    for s in &r.silencers {
        let n = element_names(s);
        if !names.contains(&n) {
            names.push(n);
        }
    }
    for name in &names {
        let at: Vec<&SilencerResult> = r
            .silencers
            .iter()
            .filter(|s| &element_names(s) == name)
            .collect();
        let first = at[0];
        let mut inner: Vec<Block> = first
            .elements
            .iter()
            .flat_map(|e| e.description.iter().cloned().map(Block::Paragraph))
            .collect();
        let t = &first.reference;
        inner.push(Block::KeyValues(vec![
            (
                "transmission loss".into(),
                format!(
                    "between anechoic pipes: upstream {} (Z0 {:.4e} Pa·s/m³), downstream {} (Z0 {:.4e} Pa·s/m³)",
                    t.upstream, t.upstream_z0_pa_s_m3, t.downstream, t.downstream_z0_pa_s_m3
                ),
            ),
            (
                "insertion loss".into(),
                format!(
                    "20·log10|P without / P with| at each point, the silencer {}",
                    first.without
                ),
            ),
            (
                "driven by".into(),
                format!(
                    "pump {} at {:.0} rpm",
                    first.pump.name,
                    first.pump.speed_rev_s * 60.0
                ),
            ),
        ]));
        for s in at {
            inner.extend(silencer_at(s)?);
        }
        for k in r.skipped_silencers.iter().filter(|k| &k.element == name) {
            inner.push(Block::Notice(
                Level::Info,
                format!("Not analysed at {}: {}", k.tap, k.reason),
            ));
        }
        blocks.push(section(&format!("silencer-{name}"), name.clone(), inner));
    }
    for k in r
        .skipped_silencers
        .iter()
        .filter(|k| !names.contains(&k.element))
    {
        blocks.push(Block::Notice(
            Level::Info,
            format!("{} at {}: not analysed ({})", k.element, k.tap, k.reason),
        ));
    }
    Ok(section(anchors::SILENCERS, "Silencers", blocks))
}

/// The worst overall ripple over the speed range without a silencer and
/// with it, in words: "worst ripple over the speed range 32.18 dB lower with
/// it: 4.160 bar rms at 1918 rpm without, 0.1024 bar rms at 2057 rpm with".
fn worst_with_and_without(w: &WorstWithout) -> String {
    let change = 20.0 * (w.without_pa / w.with_pa).log10();
    format!(
        "worst ripple over the speed range {:.2} dB {} with it: {} rms at {:.0} rpm without, {} rms at {:.0} rpm with",
        change.abs(),
        if change >= 0.0 { "lower" } else { "higher" },
        Quantity::Pressure.show(w.without_pa),
        w.without_speed_rev_s * 60.0,
        Quantity::Pressure.show(w.with_pa),
        w.with_speed_rev_s * 60.0
    )
}

/// One silencer's losses at one point: per harmonic, over the speed range,
/// and the chart.
fn silencer_at(s: &SilencerResult) -> Result<Vec<Block>, PlotError> {
    let mut inner = Vec::new();
    if let Some(w) = &s.worst_over_speeds {
        inner.push(Block::Notice(
            Level::Info,
            format!(
                "At {}: {} (each worst found between the speeds to 0.01 dB).",
                s.tap,
                worst_with_and_without(w)
            ),
        ));
    }
    let (wo_col, wo) = pressure_column(
        "without",
        s.harmonics
            .iter()
            .map(|h| h.without_pa)
            .chain([s.rms_without_pa]),
    );
    let (wi_col, wi) = pressure_column(
        "with",
        s.harmonics.iter().map(|h| h.with_pa).chain([s.rms_with_pa]),
    );
    let mut rows: Vec<Vec<Cell>> = s
        .harmonics
        .iter()
        .map(|h| {
            vec![
                Cell::num(f64::from(h.order), 0),
                Cell::num(h.freq_hz, 2),
                Cell::num(h.transmission_loss_db, 2),
                Cell::num(h.insertion_loss_db, 2),
                in_unit(h.without_pa, wo),
                in_unit(h.with_pa, wi),
            ]
        })
        .collect();
    rows.push(vec![
        Cell::text("overall rms"),
        Cell::Empty,
        Cell::Empty,
        if s.rms_with_pa > 0.0 {
            Cell::num(20.0 * (s.rms_without_pa / s.rms_with_pa).log10(), 2)
        } else {
            Cell::Empty
        },
        in_unit(s.rms_without_pa, wo),
        in_unit(s.rms_with_pa, wi),
    ]);
    inner.push(Block::Table(Table {
        caption: format!(
            "At {}: losses per harmonic at {:.0} rpm and the ripple amplitude (peak) without and with it",
            s.tap,
            s.pump.speed_rev_s * 60.0
        ),
        columns: vec![
            Column::text("harmonic"),
            Column::quantity("frequency", "Hz"),
            Column::quantity("TL", "dB"),
            Column::quantity("IL", "dB"),
            wo_col,
            wi_col,
        ],
        rows,
    }));
    if !s.over_speeds.is_empty() {
        inner.push(Block::Table(Table {
            caption: format!(
                "At {}: insertion loss of each harmonic over the speed range {} ({RANGE_SPEEDS} speeds)",
                s.tap,
                s.speed_range.describe()
            ),
            columns: vec![
                Column::text("harmonic"),
                Column::quantity("smallest IL", "dB"),
                Column::quantity("at", "rpm"),
                Column::quantity("largest IL", "dB"),
                Column::quantity("at", "rpm"),
            ],
            rows: s
                .over_speeds
                .iter()
                .map(|o| {
                    vec![
                        Cell::num(f64::from(o.order), 0),
                        Cell::num(o.smallest.0, 2),
                        Cell::num(o.smallest.1 * 60.0, 0),
                        Cell::num(o.largest.0, 2),
                        Cell::num(o.largest.1 * 60.0, 0),
                    ]
                })
                .collect(),
        }));
    }
    inner.push(Block::Figure {
        svg: plot::stacked_line_charts_svg(&super::silencer::charts(s))?,
        caption: format!(
            "Transmission loss of {} and its insertion loss at {} against frequency, the harmonic bands shaded.",
            element_names(s),
            s.tap
        ),
    });
    Ok(inner)
}
