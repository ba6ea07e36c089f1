//! Benchmarks (not tests): likelihood evaluations per second, Kepler solves per second
//! against a plain Newton iteration measured in the same run, and wall time to a
//! converged posterior on the demo target, the demo's audit (time per part), and batch
//! throughput (targets per minute).
//!
//! Run with `cargo run --bin bench [-- DEMO.toml]` (default `data-demo/ostrel-12.toml`).

use std::hint::black_box;
use std::time::Instant;

use heft::data::RvSet;
use heft::model::Params;
use heft::orbit::{Orbit, eccentric_anomaly};

/// Plain Newton iteration for Kepler's equation started at E = M, to 1e-12 rad: the
/// baseline the solver is compared with.
fn newton_from_m(m: f64, e: f64) -> f64 {
    let mut x = m;
    for _ in 0..100 {
        let d = (x - e * x.sin() - m) / (1.0 - e * x.cos());
        x -= d;
        if d.abs() < 1e-12 {
            break;
        }
    }
    x
}

/// Solves per second of `solve` over a grid of M ∈ [0, 2π) and e ∈ [0, 0.95].
fn solves_per_second(solve: &dyn Fn(f64, f64) -> f64) -> f64 {
    let ms: Vec<f64> = (0..1000)
        .map(|i| i as f64 * std::f64::consts::TAU / 1000.0)
        .collect();
    let es: Vec<f64> = (0..=95).map(|i| i as f64 / 100.0).collect();
    let start = Instant::now();
    let mut sum = 0.0;
    let mut n = 0usize;
    while start.elapsed().as_secs_f64() < 1.0 {
        for &e in &es {
            for &m in &ms {
                sum += solve(black_box(m), black_box(e));
            }
        }
        n += ms.len() * es.len();
    }
    black_box(sum);
    n as f64 / start.elapsed().as_secs_f64()
}

/// An invented data set of `n` epochs over 1000 d, one instrument.
fn data(n: usize) -> RvSet {
    let t: Vec<f64> = (0..n)
        .map(|i| -500.0 + 1000.0 * i as f64 / n as f64 + (i as f64).sin())
        .collect();
    let rv: Vec<f64> = t.iter().map(|t| 5.0 * (t / 7.0).sin()).collect();
    RvSet::from_columns(
        "bench",
        0.0,
        t,
        rv,
        vec![1.5; n],
        vec![0; n],
        vec!["A".into()],
    )
}

fn likelihood_per_second(planets: usize, n: usize) -> f64 {
    let set = data(n);
    let orbits = [
        Orbit::new(11.8, 5.0, 0.2, 1.0, 3.0).expect("valid orbit"),
        Orbit::new(47.3, 8.0, 0.3, 3.8, 10.0).expect("valid orbit"),
    ];
    let params = Params {
        planets: orbits[..planets].to_vec(),
        offsets_mps: vec![0.5],
        jitters_mps: vec![1.0],
        trend: vec![0.1],
        regressors: vec![],
    };
    let start = Instant::now();
    let mut evals = 0usize;
    let mut sum = 0.0;
    while start.elapsed().as_secs_f64() < 1.0 {
        for _ in 0..100 {
            sum += black_box(&params).log_likelihood(black_box(&set));
        }
        evals += 100;
    }
    black_box(sum);
    evals as f64 / start.elapsed().as_secs_f64()
}

/// Wall time of the demo's audit (maximum-likelihood fit, then the audit), per part.
fn audit_timing(demo: &str) {
    let mut target = match heft::target::load(std::path::Path::new(demo)) {
        Ok(t) => t,
        Err(e) => return println!("audit of {demo}: {e}"),
    };
    target.settings.sample = false;
    target.settings.audit = true;
    let start = Instant::now();
    match heft::pipeline::run_target(&target, &mut |_| {}) {
        Ok(a) => {
            let total = start.elapsed().as_secs_f64();
            if let Some(au) = &a.audit {
                let t = &au.timing;
                let audit =
                    t.detection_s + t.aliases_s + t.variants_s + t.activity_s + t.jackknife_s;
                println!(
                    "audit of {demo}: {audit:.1} s (detection {:.1}, aliases {:.1}, variants and cross-validation {:.1}, activity {:.1}, jackknife {:.1}); fit and audit {total:.1} s; verdict {}",
                    t.detection_s,
                    t.aliases_s,
                    t.variants_s,
                    t.activity_s,
                    t.jackknife_s,
                    au.verdict
                );
            }
        }
        Err(e) => println!("audit of {demo}: failed: {e}"),
    }
}

/// Writes an invented single-planet target (`n` epochs of a sinusoid plus deterministic
/// noise) into `dir/name/`; `full` turns on sampling and the audit.
fn small_target(dir: &std::path::Path, name: &str, n: usize, full: bool) -> std::path::PathBuf {
    let sub = dir.join(name);
    std::fs::create_dir_all(&sub).expect("temporary folder");
    let period = 4.1 + 0.37 * name.len() as f64;
    let mut csv = String::from("time,rv,rv_err\n");
    for k in 0..n {
        let t = 2_460_000.0 + 1.9 * k as f64 + 0.3 * (1.7 * k as f64).sin();
        let rv = 12.0 * (std::f64::consts::TAU * t / period).sin() + 1.5 * (k as f64 * 2.3).cos();
        csv.push_str(&format!("{t:.5},{rv:.3},1.5\n"));
    }
    std::fs::write(sub.join("rv.csv"), csv).expect("write data");
    let target = sub.join("target.toml");
    std::fs::write(
        &target,
        format!(
            "name = \"{name}\"\n[star]\nmass_msun = 1.0\nmass_err_msun = 0.05\n[[data]]\nfile = \"rv.csv\"\n[settings]\norbit = \"circular\"\ntrend = 0\nmax_signals = 1\ndraws = 2000\nsample = {full}\naudit = {full}\n"
        ),
    )
    .expect("write target");
    target
}

/// Batch throughput in targets per minute on 2 threads: small targets (fit and derivation)
/// and full ones (posterior and audit).
fn batch_throughput() {
    let dir = std::env::temp_dir().join(format!("heft-bench-{}", std::process::id()));
    for (kind, count, full) in [("small", 16, false), ("full", 4, true)] {
        let targets: Vec<std::path::PathBuf> = (0..count)
            .map(|i| small_target(&dir, &format!("{kind}{i:02}"), 40, full))
            .collect();
        let start = Instant::now();
        let outcomes = heft::runs::run_batch(&targets, 2);
        let secs = start.elapsed().as_secs_f64();
        let failed = outcomes.iter().filter(|o| o.error.is_some()).count();
        println!(
            "batch of {count} {kind} targets (40 epochs, 2 threads): {secs:.1} s, {:.0} targets/min, {failed} failed",
            60.0 * count as f64 / secs
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

fn main() {
    let demo = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "data-demo/ostrel-12.toml".into());
    let profile = if cfg!(debug_assertions) {
        "dev profile: heft at opt-level 1, dependencies at 3"
    } else {
        "optimised build"
    };
    println!("heft benchmarks ({profile})");
    println!("rayon threads: {}", rayon::current_num_threads());
    let fast = solves_per_second(&eccentric_anomaly);
    let plain = solves_per_second(&newton_from_m);
    println!(
        "Kepler solves, e in [0, 0.95]: heft {:.1} M/s ({:.1} ns a solve); plain Newton from E = M {:.1} M/s ({:.1} ns); ratio {:.2}",
        fast / 1e6,
        1e9 / fast,
        plain / 1e6,
        1e9 / plain,
        fast / plain
    );
    for planets in [1, 2] {
        for n in [150, 1500] {
            let rate = likelihood_per_second(planets, n);
            println!(
                "log-likelihood, {planets} planet(s), {n} epochs: {:.0} evaluations/s ({:.2} µs each)",
                rate,
                1e6 / rate
            );
        }
    }
    match heft::target::load(std::path::Path::new(&demo)) {
        Ok(mut target) => {
            // Timed with sampling on and the audit off, whatever the target file says.
            target.settings.sample = true;
            target.settings.audit = false;
            let start = Instant::now();
            match heft::pipeline::run_target(&target, &mut |_| {}) {
                Ok(a) => {
                    let secs = start.elapsed().as_secs_f64();
                    match &a.posterior {
                        Some(p) => {
                            let d = &p.chains.diagnostics;
                            println!(
                                "demo {demo}: whole pipeline {secs:.1} s; sampler {} steps × {} walkers × {} ensembles, converged: {}, chain {:.0} τ, max R̂ {:.4}, min ESS {:.0}",
                                d.steps,
                                d.walkers,
                                d.ensembles,
                                d.converged,
                                d.tau_multiple,
                                d.max_rhat,
                                d.min_ess
                            );
                        }
                        None => println!("demo {demo}: {secs:.1} s without a posterior"),
                    }
                }
                Err(e) => println!("demo {demo}: failed: {e}"),
            }
        }
        Err(e) => println!("demo {demo}: {e}"),
    }
    audit_timing(&demo);
    batch_throughput();
}
