//! Desktop step rates of every lookout observer step beside the same update
//! written by hand, measured interleaved in one run.
//!
//! ```text
//! cargo run --release --example step_rate            # a readable table
//! cargo run --release --example step_rate -- --json  # one JSON object per line
//! cargo run --release --example step_rate -- --count lookout/predictor f32 4,1,2 10000
//! ```
//!
//! Each implementation is calibrated to batches of about 1 ms, warmed up,
//! then timed in 15 batches; the implementations of one group (form, scalar,
//! size) take turns batch by batch, and each reports the median of its
//! batches. `baseline_ratio` is a time over the dynamic-matrix baseline's,
//! `best_hand_ratio` over the faster of the plain loop and the fixed-size
//! nalgebra versions, all from the same run.
//!
//! `--count VARIANT SCALAR N,M,P K` runs K steps of one implementation and
//! nothing else timed: for instruction counts under callgrind
//! (`benches/callgrind.sh` runs it with K = 0 and K = 10000 and divides the
//! difference by K).

#[allow(dead_code)]
#[path = "../benches/workload/mod.rs"]
mod workload;

use std::time::{Duration, Instant};
use workload::{Entry, Group};

const BATCHES: usize = 15;
const BATCH: Duration = Duration::from_millis(1);
const WARM_UP: Duration = Duration::from_millis(3);

fn time(entry: &mut Entry, k: u64) -> Duration {
    let start = Instant::now();
    (entry.run)(k);
    start.elapsed()
}

/// Steps per batch so that one batch takes about [`BATCH`].
fn calibrate(entry: &mut Entry) -> u64 {
    let mut k = 16u64;
    loop {
        let t = time(entry, k);
        if t >= BATCH / 4 || k >= 1 << 30 {
            let per_step = t.as_secs_f64() / k as f64;
            return ((BATCH.as_secs_f64() / per_step.max(1e-12)) as u64).max(16);
        }
        k *= 2;
    }
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        (v[n / 2 - 1] + v[n / 2]) / 2.0
    }
}

/// Median nanoseconds per step of every entry of `g`, in entry order.
fn measure(g: &mut Group) -> Vec<f64> {
    let ks: Vec<u64> = g.entries.iter_mut().map(calibrate).collect();
    for (e, &k) in g.entries.iter_mut().zip(&ks) {
        let start = Instant::now();
        while start.elapsed() < WARM_UP {
            (e.run)(k / 4 + 1);
        }
    }
    let n = g.entries.len();
    let mut samples = vec![Vec::with_capacity(BATCHES); n];
    for b in 0..BATCHES {
        for i in (0..n).map(|i| (i + b) % n) {
            let t = time(&mut g.entries[i], ks[i]);
            samples[i].push(t.as_secs_f64() * 1e9 / ks[i] as f64);
        }
    }
    samples.into_iter().map(median).collect()
}

fn machine() -> String {
    std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split(':').nth(1))
                .map(|m| m.trim().to_string())
        })
        .unwrap_or_else(|| "unknown CPU".to_string())
}

fn count(args: &[String]) -> Result<(), String> {
    let usage =
        "usage: step_rate --count VARIANT SCALAR N,M,P K (e.g. lookout/predictor f32 4,1,2 10000)";
    let [variant, scalar, size, k] = args else {
        return Err(usage.into());
    };
    let dims: Vec<usize> = size
        .split(',')
        .map(|d| d.parse().map_err(|_| usage.to_string()))
        .collect::<Result<_, _>>()?;
    let &[n, m, p] = dims.as_slice() else {
        return Err(usage.into());
    };
    let k: u64 = k.parse().map_err(|_| usage.to_string())?;
    let (code, form) = variant.split_once('/').ok_or(usage)?;
    let mut groups = workload::groups(scalar, (n, m, p))
        .ok_or_else(|| format!("no benchmark of {scalar} at ({n},{m},{p})"))?;
    let entry = groups
        .iter_mut()
        .filter(|g| g.form == form)
        .flat_map(|g| g.entries.iter_mut())
        .find(|e| e.code == code)
        .ok_or_else(|| format!("no variant {variant}"))?;
    (entry.run)(k);
    Ok(())
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.first().map(String::as_str) == Some("--count") {
        if let Err(e) = count(&args[1..]) {
            eprintln!("{e}");
            std::process::exit(2);
        }
        return;
    }
    let json = args.iter().any(|a| a == "--json");
    if let Some(other) = args.iter().find(|a| *a != "--json") {
        eprintln!(
            "unknown argument {other}; usage: step_rate [--json] | --count VARIANT SCALAR N,M,P K"
        );
        std::process::exit(2);
    }
    let started = Instant::now();
    if !json {
        println!(
            "step medians on {} (ns per step; ratio = lookout / best hand-written)",
            machine()
        );
        println!(
            "{:<6} {:<10} {:<10} {:>8} {:>8} {:>8} {:>8} {:>8} {:>6}",
            "scalar", "form", "size", "lookout", "dmatrix", "loop", "sm_ref", "sm_gemv", "ratio"
        );
    }
    for mut g in workload::all_groups() {
        let ns = measure(&mut g);
        let dynamic = ns[1];
        let best_hand = ns[2].min(ns[3]).min(ns[4]);
        let (n, m, p) = g.size;
        if json {
            for (e, &t) in g.entries.iter().zip(&ns) {
                println!(
                    "{{\"variant\":\"{}/{}\",\"scalar\":\"{}\",\"n\":{n},\"m\":{m},\"p\":{p},\
                     \"ns_per_step\":{t:.3},\"macs\":{},\"ns_per_mac\":{:.4},\
                     \"baseline_ratio\":{:.3},\"best_hand_ratio\":{:.3}}}",
                    e.code,
                    g.form,
                    g.scalar,
                    g.macs,
                    t / g.macs as f64,
                    t / dynamic,
                    t / best_hand,
                );
            }
        } else {
            println!(
                "{:<6} {:<10} {:<10} {:>8.2} {:>8.2} {:>8.2} {:>8.2} {:>8.2} {:>6.2}",
                g.scalar,
                g.form,
                format!("({n},{m},{p})"),
                ns[0],
                ns[1],
                ns[2],
                ns[3],
                ns[4],
                ns[0] / best_hand
            );
        }
    }
    if !json {
        println!("total {:.1} s", started.elapsed().as_secs_f64());
    }
}
