//! Benchmarks (not tests): likelihood evaluations per second, GP log-likelihood time
//! against N for the dense and semiseparable solvers, Kepler solves per second
//! against a plain Newton iteration measured in the same run, and wall time to a
//! converged posterior on the demo target, the demo's audit (time per part), and batch
//! throughput (targets per minute).
//!
//! Run with `cargo run --release --bin bench [-- DEMO.toml]` (default
//! `data-demo/ostrel-12.toml`); `-- --gp` runs the GP solver and joint-model timings
//! alone.
//!
//! On Linux the figures are also given per second on a CPU (this thread's or the
//! process's CPU time from `/proc`), which other work on the machine inflates far less
//! than wall time; the load average is printed with them.

use std::hint::black_box;
use std::time::Instant;

use heft::data::RvSet;
use heft::gp::{Kernel, Points, Solver, Term};
use heft::model::Params;
use heft::orbit::{KeplerSolver, Orbit};

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

/// This thread's time on a CPU, seconds (Linux `/proc/thread-self/schedstat`, ns).
fn thread_cpu_seconds() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    let ns: f64 = text.split_whitespace().next()?.parse().ok()?;
    Some(ns * 1e-9)
}

/// This process's user + system CPU time, seconds (Linux `/proc/self/stat`, in clock
/// ticks of 1/100 s, the Linux user-space ABI value).
fn process_cpu_seconds() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/self/stat").ok()?;
    // Fields after the command name (which is in parentheses); utime and stime are the
    // 14th and 15th fields of the line, i.e. the 12th and 13th after it.
    let rest = &text[text.rfind(')')? + 1..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    let ticks: f64 = f.get(11)?.parse::<f64>().ok()? + f.get(12)?.parse::<f64>().ok()?;
    Some(ticks / 100.0)
}

/// The 1-minute load average (Linux `/proc/loadavg`), for reading the wall times.
fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|t| t.split_whitespace().next().map(str::to_owned))
        .unwrap_or_else(|| "unknown".into())
}

/// Wall and (where known) on-CPU seconds of `work`.
fn timed(work: impl FnOnce()) -> (f64, Option<f64>) {
    let cpu = thread_cpu_seconds();
    let start = Instant::now();
    work();
    let wall = start.elapsed().as_secs_f64();
    let cpu = cpu.zip(thread_cpu_seconds()).map(|(a, b)| b - a);
    (wall, cpu)
}

/// Rates per wall second and per CPU second.
struct Rate {
    wall: f64,
    cpu: Option<f64>,
}

impl Rate {
    /// `what` per unit as "x ns (y ns on a CPU)" with `scale` = 1e9 for ns, 1e6 for µs.
    fn per_item(&self, scale: f64, unit: &str) -> String {
        match self.cpu {
            Some(c) => format!(
                "{:.2} {unit} wall, {:.2} {unit} on a CPU",
                scale / self.wall,
                scale / c
            ),
            None => format!("{:.2} {unit} wall", scale / self.wall),
        }
    }
}

/// Solves Kepler's equation for every mean anomaly of a slice at one eccentricity and
/// returns a sum of the results.
type SolveAll = dyn Fn(&[f64], f64) -> f64;

/// Solves per second of each of `solvers` over a grid of M ∈ [0, 2π) and e ∈ [0, 0.95]:
/// `solve_all(ms, e)` solves for every M at one e (any per-eccentricity setup included
/// in the time) and returns a sum of the results, so that no solve can be optimised
/// away. The solvers take turns in short rounds, so that a change of machine load
/// affects all alike and their ratios stay meaningful.
fn solves_per_second(solvers: &[&SolveAll]) -> Vec<Rate> {
    let ms: Vec<f64> = (0..1000)
        .map(|i| i as f64 * std::f64::consts::TAU / 1000.0)
        .collect();
    let es: Vec<f64> = (0..=95).map(|i| i as f64 / 100.0).collect();
    let mut wall = vec![0.0; solvers.len()];
    let mut cpu = vec![Some(0.0); solvers.len()];
    let mut sum = 0.0;
    let rounds = 40;
    for _ in 0..rounds {
        for (i, solve_all) in solvers.iter().enumerate() {
            let (w, c) = timed(|| {
                for &e in &es {
                    sum += solve_all(black_box(&ms), black_box(e));
                }
            });
            wall[i] += w;
            cpu[i] = cpu[i].zip(c).map(|(a, b)| a + b);
        }
    }
    black_box(sum);
    let n = (rounds * ms.len() * es.len()) as f64;
    wall.iter()
        .zip(&cpu)
        .map(|(w, c)| Rate {
            wall: n / w,
            cpu: c.map(|c| n / c),
        })
        .collect()
}

/// heft's solver: the table for e, then E, sin E and cos E for every M (eight at a time
/// where the processor has AVX-512; all three summed, so the solver is charged for the
/// sine and cosine the baseline does not return).
fn heft_solves(ms: &[f64], e: f64) -> f64 {
    let solver = KeplerSolver::new(e);
    let mut out = vec![solver.solve(0.0); ms.len()];
    solver.solve_slice(ms, &mut out);
    out.iter().map(|a| a.ecc_anom + a.sin + a.cos).sum()
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

fn likelihood_per_second(planets: usize, n: usize) -> Rate {
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
        regressors_per_instrument: false,
        noise: heft::model::Noise::Gaussian,
    };
    let mut evals = 0usize;
    let mut sum = 0.0;
    let (wall, cpu) = timed(|| {
        let start = Instant::now();
        while start.elapsed().as_secs_f64() < 1.0 {
            for _ in 0..100 {
                sum += black_box(&params).log_likelihood(black_box(&set));
            }
            evals += 100;
        }
    });
    black_box(sum);
    Rate {
        wall: evals as f64 / wall,
        cpu: cpu.map(|c| evals as f64 / c),
    }
}

/// Seconds per GP log-likelihood evaluation (kernel, factorisation and solve) of two
/// oscillator terms on `n` invented epochs with `solver`: repeated for at least
/// `min_seconds` of wall time; (wall, CPU where known).
fn gp_seconds(n: usize, solver: Solver, min_seconds: f64) -> (f64, Option<f64>) {
    let set = data(n);
    let white = vec![2.25; n];
    let scale = vec![1.0; n];
    let points = Points {
        time_d: &set.time_d,
        white: &white,
        scale: &scale,
    };
    let kernel = Kernel {
        terms: vec![
            Term::Oscillator {
                amplitude_mps: 4.0,
                period_d: 23.0,
                quality: 5.0,
            },
            Term::Oscillator {
                amplitude_mps: 2.0,
                period_d: 11.5,
                quality: 5.0,
            },
        ],
    };
    let mut evals = 0usize;
    let mut sum = 0.0;
    let (wall, cpu) = timed(|| {
        let start = Instant::now();
        while evals == 0 || start.elapsed().as_secs_f64() < min_seconds {
            sum += points
                .log_likelihood(black_box(&kernel), solver, black_box(&set.rv_mps))
                .expect("the bench covariance is positive definite");
            evals += 1;
        }
    });
    black_box(sum);
    (wall / evals as f64, cpu.map(|c| c / evals as f64))
}

/// GP log-likelihood time against N for the dense and the semiseparable solver, measured
/// in turn at each N, and their ratio. The dense solver stops at N = 4000 (its matrix
/// alone is 8 N² bytes: 800 MB at N = 10 000).
fn gp_scaling() {
    println!(
        "GP log-likelihood, two oscillator terms (ms per evaluation on a CPU where known, else wall):"
    );
    let ms = |(w, c): (f64, Option<f64>)| 1e3 * c.unwrap_or(w);
    let mut semi_per_point = Vec::new();
    for n in [100, 300, 1000, 2000, 4000, 10_000] {
        let semi = ms(gp_seconds(n, Solver::Semiseparable, 0.5));
        semi_per_point.push(semi / n as f64);
        if n <= 4000 {
            let dense = ms(gp_seconds(n, Solver::Dense, 0.5));
            println!(
                "  N = {n:>5}: dense {dense:10.3} ms, semiseparable {semi:8.4} ms; dense / semiseparable = {:.0} ×",
                dense / semi
            );
        } else {
            println!("  N = {n:>5}: semiseparable {semi:8.4} ms (dense not run)");
        }
    }
    let (lo, hi) = semi_per_point
        .iter()
        .fold((f64::INFINITY, 0.0_f64), |(a, b), &x| (a.min(x), b.max(x)));
    println!(
        "  semiseparable time per point from N = 100 to 10 000: {:.2} to {:.2} µs (linear in N when these agree)",
        1e3 * lo,
        1e3 * hi
    );
}

/// Seconds (CPU where known, else wall) per call of `work`, repeated for at least
/// `min_seconds` of wall time.
fn seconds_per_call(min_seconds: f64, mut work: impl FnMut()) -> f64 {
    let mut calls = 0usize;
    let (wall, cpu) = timed(|| {
        let start = Instant::now();
        while calls == 0 || start.elapsed().as_secs_f64() < min_seconds {
            work();
            calls += 1;
        }
    });
    cpu.unwrap_or(wall) / calls as f64
}

/// The dense pieces of the joint activity model: `K⁻¹` from a Cholesky factor by
/// [`heft::gp::spd_inverse`] against nalgebra's solve against the identity (same run),
/// and one log-likelihood and one analytic gradient of the joint model of N RVs and N
/// indicator values.
fn joint_timing() {
    use heft::gp::{Coupling, JointKernel, JointPoints};
    println!("joint activity model (N RVs + N indicator values, dense):");
    for n in [110, 500] {
        let set = data(n);
        let m = 2 * n;
        let time_d: Vec<f64> = set.time_d.iter().chain(&set.time_d).copied().collect();
        let series: Vec<usize> = (0..m).map(|i| usize::from(i >= n)).collect();
        let white = vec![2.25; m];
        let r: Vec<f64> = set.rv_mps.iter().chain(&set.rv_mps).copied().collect();
        let latent = Term::QuasiPeriodic {
            amplitude_mps: 1.0,
            evolution_d: 40.0,
            period_d: 13.0,
            smoothness: 0.5,
        };
        let couplings = vec![
            Coupling {
                level: 4.0,
                slope: 10.0,
            },
            Coupling {
                level: 2.0,
                slope: 0.0,
            },
        ];
        let kernel = JointKernel::new(latent, couplings).expect("valid kernel");
        let points = JointPoints {
            time_d: &time_d,
            series: &series,
            white: &white,
        };
        let chol = nalgebra::Cholesky::new(points.covariance(&kernel)).expect("positive definite");
        let ours = seconds_per_call(0.5, || {
            black_box(heft::gp::spd_inverse(black_box(&chol)));
        });
        let general = seconds_per_call(0.5, || {
            black_box(black_box(&chol).inverse());
        });
        let ln_l = seconds_per_call(0.5, || {
            black_box(points.log_likelihood(&kernel, black_box(&r)).ok());
        });
        let grad = seconds_per_call(0.5, || {
            black_box(points.gradient(&kernel, black_box(&r)).ok());
        });
        println!(
            "  N = {n:>4} ({m} rows): K⁻¹ {:.2} ms vs nalgebra's {:.2} ms ({:.1} ×); log-likelihood {:.2} ms, gradient {:.2} ms",
            1e3 * ours,
            1e3 * general,
            general / ours,
            1e3 * ln_l,
            1e3 * grad
        );
    }
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

/// Wall time of the demo's fit (no sampling, no audit) started cold and started from the
/// cold run's solution, best of three each.
fn warm_start_speedup(demo: &str) {
    let mut target = match heft::target::load(std::path::Path::new(demo)) {
        Ok(t) => t,
        Err(e) => return println!("warm start on {demo}: {e}"),
    };
    target.settings.sample = false;
    target.settings.audit = false;
    let time = |warm: &[heft::pipeline::WarmPlanet]| {
        (0..3)
            .map(|_| {
                let start = Instant::now();
                let a = heft::pipeline::run_target_from(&target, warm, &mut |_| {});
                (start.elapsed().as_secs_f64(), a)
            })
            .min_by(|a, b| a.0.total_cmp(&b.0))
            .expect("three runs")
    };
    let (cold, analysis) = time(&[]);
    let Ok(analysis) = analysis else {
        return println!("warm start on {demo}: the cold run failed");
    };
    let warm = heft::pipeline::WarmPlanet::from_results(&heft::report::results_json(&analysis));
    let (hot, _) = time(&warm);
    println!(
        "demo fit without sampling or audit: cold {cold:.2} s, warm-started from its own solution {hot:.2} s, {:.2}× faster",
        cold / hot
    );
}

fn main() {
    let demo = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "data-demo/ostrel-12.toml".into());
    if demo == "--gp" {
        println!("load average at start {}", load_average());
        gp_scaling();
        return joint_timing();
    }
    let profile = if cfg!(debug_assertions) {
        "dev profile: heft at opt-level 1, dependencies at 3"
    } else {
        "optimised build"
    };
    println!("heft benchmarks ({profile})");
    println!(
        "rayon threads: {}; load average at start {}",
        rayon::current_num_threads(),
        load_average()
    );
    let newton = |ms: &[f64], e: f64| ms.iter().map(|&m| newton_from_m(m, e)).sum();
    let rates = solves_per_second(&[&heft_solves, &newton]);
    let plain = &rates[1];
    println!(
        "Kepler solves, e in [0, 0.95] (E, sin E and cos E for heft; E for the baseline): plain Newton from E = M {} a solve",
        plain.per_item(1e9, "ns")
    );
    let heft = &rates[0];
    let cpu_ratio = heft
        .cpu
        .zip(plain.cpu)
        .map_or(String::new(), |(a, b)| format!(", {:.2} × on a CPU", a / b));
    println!(
        "  heft: {} a solve; {:.2} × the baseline's rate (wall){cpu_ratio}",
        heft.per_item(1e9, "ns"),
        heft.wall / plain.wall
    );
    for planets in [1, 2] {
        for n in [150, 1500] {
            let rate = likelihood_per_second(planets, n);
            println!(
                "log-likelihood, {planets} planet(s), {n} epochs: {:.0} evaluations/s wall, {} each",
                rate.wall,
                rate.per_item(1e6, "µs")
            );
        }
    }
    gp_scaling();
    match heft::target::load(std::path::Path::new(&demo)) {
        Ok(mut target) => {
            // Timed with sampling on and the audit off, whatever the target file says.
            target.settings.sample = true;
            target.settings.audit = false;
            let start = Instant::now();
            let cpu_start = process_cpu_seconds();
            // The sampler reports progress from its first to its last step.
            let mut sampling: Option<(Instant, Instant)> = None;
            let mut note = |_: &heft::sample::Progress| {
                let now = Instant::now();
                sampling = Some((sampling.map_or(now, |s| s.0), now));
            };
            match heft::pipeline::run_target(&target, &mut note) {
                Ok(a) => {
                    let secs = start.elapsed().as_secs_f64();
                    let cpu = cpu_start
                        .zip(process_cpu_seconds())
                        .map_or(String::new(), |(a, b)| {
                            format!(" ({:.1} CPU s in all threads)", b - a)
                        });
                    let sampler_secs = sampling.map_or(0.0, |(a, b)| (b - a).as_secs_f64());
                    match &a.posterior {
                        Some(p) => {
                            let d = &p.chains.diagnostics;
                            println!(
                                "demo {demo}: whole pipeline {secs:.1} s wall{cpu}, of which sampling {sampler_secs:.1} s; load average now {}; sampler {} steps × {} walkers × {} ensembles, converged: {}, chain {:.0} τ, max R̂ {:.4}, min ESS {:.0}",
                                load_average(),
                                d.steps,
                                d.walkers,
                                d.ensembles,
                                d.converged,
                                d.tau_multiple,
                                d.max_rhat,
                                d.min_ess
                            );
                            let mut taus: Vec<(f64, &str)> = d
                                .parameters
                                .iter()
                                .map(|p| (p.tau_steps, p.name.as_str()))
                                .collect();
                            taus.sort_by(|a, b| b.0.total_cmp(&a.0));
                            let slowest: Vec<String> = taus
                                .iter()
                                .take(4)
                                .map(|(t, n)| format!("{n} {t:.0}"))
                                .collect();
                            println!("  slowest parameters (τ in steps): {}", slowest.join(", "));
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
    warm_start_speedup(&demo);
}
