//! The loop of the hostile-model fuzzers (the design's and the
//! simulator's): which cases to run, from the environment, and the tally
//! and failure report at the end.
//!
//! `LOOKOUT_FUZZ_SEED` (default 16), `LOOKOUT_FUZZ_CASES` (a number of
//! cases; each fuzzer has its default), `LOOKOUT_FUZZ_SECONDS` (run cases
//! until this much time has passed instead), `LOOKOUT_FUZZ_CASE` (run that
//! one case and print its model and outcome).

use super::generator::{self, Rng};
use std::collections::BTreeMap;
use std::time::{Duration, Instant};

fn env_u64(name: &str) -> Option<u64> {
    std::env::var(name).ok().and_then(|v| v.trim().parse().ok())
}

/// Runs `run_case` over generated models: `Ok(label)` is tallied,
/// `Err(why)` is a failure. `seen` gets every case's number, model text and
/// label (for dumping). Panics at the end, listing the first failures.
pub fn fuzz(
    name: &str,
    default_cases: u64,
    run_case: impl Fn(&str) -> Result<String, String>,
    mut seen: impl FnMut(u64, &str, &str),
) -> BTreeMap<String, usize> {
    let seed = env_u64("LOOKOUT_FUZZ_SEED").unwrap_or(16);
    // Panics are caught and reported with their case; keep stderr quiet.
    std::panic::set_hook(Box::new(|_| {}));
    if let Some(case) = env_u64("LOOKOUT_FUZZ_CASE") {
        let text = generator::model(&mut Rng::for_case(seed, case));
        let _ = std::panic::take_hook();
        println!("{text}");
        println!("{:?}", run_case(&text));
        return BTreeMap::new();
    }
    let deadline = env_u64("LOOKOUT_FUZZ_SECONDS").map(|s| Instant::now() + Duration::from_secs(s));
    let cases = env_u64("LOOKOUT_FUZZ_CASES").unwrap_or(default_cases);
    let mut tally: BTreeMap<String, usize> = BTreeMap::new();
    let mut failures = Vec::new();
    let mut case = 0u64;
    while deadline.map_or(case < cases, |d| Instant::now() < d) {
        let text = generator::model(&mut Rng::for_case(seed, case));
        let started = Instant::now();
        let outcome = run_case(&text);
        // Reported, not asserted (no timing thresholds in tests).
        let took = started.elapsed();
        if took > Duration::from_secs(2) {
            eprintln!("{name}: case {case} took {:.1} s", took.as_secs_f64());
        }
        match outcome {
            Ok(label) => {
                seen(case, &text, &label);
                *tally.entry(label).or_default() += 1;
            }
            Err(why) => failures.push(format!("case {case}: {why}\n{text}")),
        }
        case += 1;
    }
    let _ = std::panic::take_hook();
    eprintln!("{name}: seed {seed}, {case} cases");
    for (label, count) in &tally {
        eprintln!("  {count:6}  {label}");
    }
    assert!(
        failures.is_empty(),
        "{} of {case} cases failed (seed {seed}); rerun one with LOOKOUT_FUZZ_SEED={seed} LOOKOUT_FUZZ_CASE=k:\n{}",
        failures.len(),
        failures
            .iter()
            .take(5)
            .cloned()
            .collect::<Vec<_>>()
            .join("\n")
    );
    tally
}
