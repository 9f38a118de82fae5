//! `plan-bench`: the bench designer (issue 14 item 2).
//!
//! * The decomposition's condition number of a two-transducer bench on a
//!   lossless line against its closed form, itself checked against
//!   mpmath's complex SVD (tests/oracles/design_refs.py).
//! * The predicted Monte Carlo uncertainty of |Qs| and |Zs| against the
//!   spread of synth + fit over seeds, within a stated χ² bound.
//! * The command end to end, and its bad input (exit 2, nothing written).

use ripline::C64;
use ripline::estimate::bench::{Bench, ConditionKind};
use ripline::estimate::design::{self, Limit};
use ripline::estimate::fit::HarmonicStatus;
use ripline::estimate::rng::Rng;
use ripline::estimate::{FitOptions, Quiet, fit, selfcheck};
use ripline::uncertainty::stats::chi2_quantile;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn ripline(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the ripline binary runs")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-plan-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Closed form of the 2-norm condition number of the column-equilibrated
/// two-row decomposition matrix diag(√w)[[e^{−jkx1}, e^{jkx1}],
/// [e^{−jkx2}, e^{jkx2}]] on a lossless line (derived by hand): both
/// columns have the norm √(w1 + w2), the normalised Gram matrix is
/// [[1, ρ], [ρ*, 1]] with ρ = (w1 e^{2jkx1} + w2 e^{2jkx2})/(w1 + w2), so
/// σ² = 1 ± |ρ| and cond = √((1 + |ρ|)/(1 − |ρ|)). Equal weights give
/// |ρ| = |cos kΔx|: cond = max(|cot(kΔx/2)|, |tan(kΔx/2)|), singular at
/// kΔx = nπ (Seybert & Ross 1977).
fn pair_condition(w1: f64, w2: f64, kx1: f64, kx2: f64) -> f64 {
    let rho = (C64::from_polar(w1, 2.0 * kx1) + C64::from_polar(w2, 2.0 * kx2)).norm() / (w1 + w2);
    ((1.0 + rho) / (1.0 - rho)).sqrt()
}

#[test]
fn the_closed_form_matches_mpmath() {
    // tests/oracles/design_refs.py: mpmath 1.3.0 mp.svd_c of the matrix.
    let pi = std::f64::consts::PI;
    for (w1, w2, kx1, kdx, want) in [
        (1.0, 1.0, 0.3, pi / 4.0, 2.414_213_562_373_1),
        (1.0, 4.0, 0.3, 0.6 * pi, 2.167_238_979_698_24),
        (2.5, 1.0, 1.1, 0.93 * pi, 10.047_911_830_763_1),
    ] {
        let got = pair_condition(w1, w2, kx1, kx1 + kdx);
        assert!((got / want - 1.0).abs() < 1e-12, "{got} vs {want}");
    }
}

/// A two-transducer, two-systems bench on a lossless line (an invented
/// scenario), transducers at 0.2 m and 0.2 + `dx` m.
fn pair_bench(dx: f64) -> Bench {
    let text = format!(
        "title: pair bench (invented)
fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}
pump: {{name: p, speed: 1500 rpm, pumping_elements: 9}}
harmonics: 10
reference_line: {{bore: 10 mm, rigid: true, model: lossless}}
speed_of_sound: 1356 m/s
transducers:
  - {{name: a, position: 0.2 m}}
  - {{name: b, position: {} m}}
method: two_systems
records: {{unit: bar, sample_rate: 6 kHz}}
conditions:
  - {{name: one, line_length: 3 m, termination: {{resistance: 6e10 Pa.s/m3}}, records: a.csv}}
  - {{name: two, line_length: 2.5 m, termination: {{resistance: 3e8 Pa.s/m3, volume: 1 L}}, records: b.csv}}
synthesis:
  flow_ripple:
    - {{harmonic: 1, amplitude: 0.6 L/min, phase: 0 deg}}
    - {{harmonic: 2, amplitude: 0.3 L/min, phase: 40 deg}}
  source_impedance: {{volume: 0.1 L, leakage_resistance: 1.2e12 Pa.s/m3}}
  noise: 1 %
  seed: 1
  duration: 0.5 s
",
        0.2 + dx
    );
    ripline::io::bench_file::parse_bench(&text, "pair.yaml").unwrap()
}

#[test]
fn two_transducer_conditioning_follows_the_closed_form_in_k_dx() {
    let speed = 25.0;
    for dx in [0.12, 0.3, 0.55] {
        let bench = pair_bench(dx);
        let synthesis = bench.synthesis.clone().unwrap();
        let c = bench.nominal_speed_of_sound_m_s();
        let plans = design::conditioning(&bench, &synthesis, speed, 0.01).unwrap();
        let spectra = design::predicted_spectra(&bench, &synthesis, speed, 0.01).unwrap();
        let x = bench.positions();
        let mut checked = 0;
        for p in plans.iter().filter(|p| p.order <= 2) {
            let k = std::f64::consts::TAU * p.freq_hz / c;
            // The worst of the pump-run conditions, weighted 1/u² as fit weights.
            let want = bench
                .conditions
                .iter()
                .zip(&spectra)
                .filter(|(cond, _)| cond.kind == ConditionKind::Pump)
                .map(|(_, s)| {
                    let ph = s.pump.iter().find(|l| l.order == p.order).unwrap();
                    let w: Vec<f64> = ph.uncertainty.iter().map(|u| u.unwrap().powi(-2)).collect();
                    pair_condition(w[0], w[1], k * x[0], k * x[1])
                })
                .fold(0.0, f64::max);
            assert!(
                (p.decomposition_condition / want - 1.0).abs() < 1e-9,
                "dx {dx}, harmonic {}: {} vs {want} (kΔx = {:.3}π)",
                p.order,
                p.decomposition_condition,
                k * dx / std::f64::consts::PI
            );
            // Close to a half wavelength the pair limits the estimate.
            if (k * dx / std::f64::consts::PI - 1.0).abs() < 0.02 {
                assert_eq!(p.limit, Limit::Decomposition);
            }
            checked += 1;
        }
        assert_eq!(checked, 2);
    }
    // At kΔx = π (harmonic 1 at 225 Hz: Δx = c/(2f) = 3.0133 m is off the
    // line, so use harmonic 2 at 450 Hz: Δx = 1.50667 m) the pair is
    // singular: a condition number above 1e6 (or none at all).
    let dx = 1356.0 / (2.0 * 450.0);
    let bench = pair_bench(dx);
    let synthesis = bench.synthesis.clone().unwrap();
    let plans = design::conditioning(&bench, &synthesis, 25.0, 0.01).unwrap();
    let h2 = plans.iter().find(|p| p.order == 2).unwrap();
    assert!(
        h2.decomposition_condition > 1e6 || !h2.decomposition_condition.is_finite(),
        "{}",
        h2.decomposition_condition
    );
}

/// The planner's predicted standard uncertainty against the spread of the
/// estimates over seeds of synth + fit (records synthesised with noise,
/// extracted and fitted as `fit` does) on the CI two-systems bench.
///
/// Bound: with n seeds, (n − 1)s²/σ² ~ χ²(n − 1) for the observed variance
/// s², and the predicted variance from D Monte Carlo draws is
/// σ²χ²(D − 1)/(D − 1); so the ratio s²/σ̂² lies, with probability at
/// least 1 − 2α (Bonferroni over the two χ² intervals), within
/// [q_α(n−1)/(n−1) ÷ q_{1−α}(D−1)/(D−1), q_{1−α}(n−1)/(n−1) ÷ q_α(D−1)/(D−1)].
/// α = 1e-4 per side and quantity (16 quantities: a false failure under
/// 0.7 %). The χ² quantiles are Wilson–Hilferty's (checked against scipy
/// in `uncertainty::stats`).
#[test]
fn predicted_uncertainty_agrees_with_the_spread_of_synth_and_fit() {
    let bench =
        ripline::io::bench_file::load_bench(Path::new("tests/data/stats/two_systems_ci.yaml"))
            .unwrap();
    let synthesis = bench.synthesis.clone().unwrap();
    let (seeds, draws) = (120usize, 2000usize);
    let speed = bench.pump.speed_rev_s;
    let mut plans = design::conditioning(&bench, &synthesis, speed, synthesis.noise).unwrap();
    design::uncertainties(
        &bench,
        &synthesis,
        speed,
        synthesis.noise,
        draws,
        5,
        &mut plans,
    )
    .unwrap();
    let n_h = bench.harmonics as usize;
    let mut errors: Vec<(Vec<f64>, Vec<f64>)> = vec![(Vec::new(), Vec::new()); n_h];
    for s in 0..seeds as u64 {
        let data =
            selfcheck::synthetic_spectra(&bench, &synthesis, &mut Rng::new(1000 + s)).unwrap();
        let r = fit(
            &bench,
            &data,
            &FitOptions {
                draws: 0,
                ..FitOptions::default()
            },
            &mut Quiet,
        )
        .unwrap();
        for h in &r.harmonics {
            let (q, z) = selfcheck::truth(&bench, &synthesis, h.order);
            let e = &mut errors[(h.order - 1) as usize];
            e.0.push(h.flow.value.norm() / q.norm() - 1.0);
            e.1.push(h.impedance.value.norm() / z.norm() - 1.0);
        }
    }
    let alpha = 1e-4;
    let nu_o = (seeds - 1) as f64;
    let nu_p = (draws - 1) as f64;
    let lo = chi2_quantile(alpha, nu_o) / nu_o / (chi2_quantile(1.0 - alpha, nu_p) / nu_p);
    let hi = chi2_quantile(1.0 - alpha, nu_o) / nu_o / (chi2_quantile(alpha, nu_p) / nu_p);
    let var = |v: &[f64]| {
        let m = v.iter().sum::<f64>() / v.len() as f64;
        v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (v.len() - 1) as f64
    };
    let mut compared = 0;
    for p in plans
        .iter()
        .filter(|p| p.status == HarmonicStatus::Estimated)
    {
        let e = &errors[(p.order - 1) as usize];
        assert_eq!(e.0.len(), seeds);
        for (name, obs, pred) in [
            ("|Qs|", var(&e.0), p.flow_relative_u.unwrap()),
            ("|Zs|", var(&e.1), p.impedance_relative_u.unwrap()),
        ] {
            let ratio = obs / (pred * pred);
            println!(
                "harmonic {} {name}: observed {:.4} %, predicted {:.4} %, variance ratio {ratio:.3} in [{lo:.3}, {hi:.3}]",
                p.order,
                100.0 * obs.sqrt(),
                100.0 * pred
            );
            assert!(
                (lo..=hi).contains(&ratio),
                "harmonic {} {name}: variance ratio {ratio:.3} outside [{lo:.3}, {hi:.3}]",
                p.order
            );
            compared += 1;
        }
    }
    assert!(compared >= 6, "{compared} quantities compared");
}

fn files_in(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect()
}

#[test]
fn the_command_ranks_designs_and_writes_its_tables() {
    let dir = scratch("run");
    let csv = dir.join("plan.csv");
    let json = dir.join("plan.json");
    let svg = dir.join("plan.svg");
    let o = ripline(&[
        "plan-bench",
        "networks/bench/demo_bench.yaml",
        "--speed-range",
        "1400..1600",
        "--speeds",
        "3",
        "--points",
        "3",
        "--draws",
        "20",
        "--csv",
        csv.to_str().unwrap(),
        "--json",
        json.to_str().unwrap(),
        "--plot",
        svg.to_str().unwrap(),
    ]);
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(
        out.contains("conclusion:") && out.contains("weakest: harmonic"),
        "{out}"
    );
    assert!(!out.contains("NaN") && !out.contains("inf"), "{out}");
    let text = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(
        text.lines().next(),
        Some(
            "design,speed_rev_s,harmonic,frequency_hz,condition_number,decomposition_condition,limit,status,flow_relative_u,flow_phase_u_deg,impedance_relative_u,impedance_phase_u_deg,reason"
        )
    );
    // Two designs × 3 speeds × 10 harmonics.
    assert_eq!(text.lines().count(), 1 + 2 * 3 * 10);
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let r = &v["result"];
    assert_eq!(r["speeds_rev_s"].as_array().unwrap().len(), 3);
    // The ranking is best first and the best is never worse than the
    // bench as written on the ranking's first key.
    let ranking = r["ranking"].as_array().unwrap();
    for w in ranking.windows(2) {
        assert!(w[0]["cells_over_limit"].as_u64() <= w[1]["cells_over_limit"].as_u64());
    }
    assert!(r["best"]["cells_over_limit"].as_u64() <= r["current"]["cells_over_limit"].as_u64());
    assert!(std::fs::read_to_string(&svg).unwrap().contains("<svg"));
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn bad_options_are_named_with_exit_2_and_nothing_written() {
    let dir = scratch("bad");
    let csv = dir.join("plan.csv");
    let c = csv.to_str().unwrap();
    let demo = "networks/bench/demo_bench.yaml";
    let secondary = "tests/data/stats/secondary_capacitance_ci.yaml";
    let nosynth = dir.join("nosynth.yaml");
    let text = std::fs::read_to_string(demo).unwrap();
    let cut = text.find("synthesis:").unwrap();
    std::fs::write(&nosynth, &text[..cut]).unwrap();
    let ns = nosynth.to_str().unwrap();
    let cases: [(Vec<&str>, &str); 9] = [
        (vec![secondary, "--length", "1..2"], "--length: "),
        (vec![secondary, "--volume", "1L..2L"], "--volume: "),
        (vec![secondary, "--system", "x"], "--system: "),
        (vec![demo, "--spacing", "0.5..0.2"], "--spacing 0.5..0.2"),
        (
            vec![demo, "--speed-range", "1500..1500"],
            "--speed-range 1500..1500",
        ),
        (
            vec![demo, "--length", "2"],
            "--length 2: write the range as LOW..HIGH",
        ),
        (vec![demo, "--system", "nope"], "no condition called `nope`"),
        (
            vec![demo, "--ratio", "0.5..2"],
            "the ratio must be at least 1",
        ),
        (vec![ns], "needs a `synthesis` section"),
    ];
    for (args, want) in cases {
        let mut all = vec!["plan-bench"];
        all.extend(args.iter().copied());
        all.extend(["--draws", "0", "--csv", c]);
        let o = ripline(&all);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(want), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
        assert!(!csv.exists(), "{args:?}: an output was written");
    }
    assert_eq!(files_in(&dir), vec!["nosynth.yaml".to_string()]);
    std::fs::remove_dir_all(dir).unwrap();
}
