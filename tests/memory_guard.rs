//! The memory guard and the run-time guard of the simulating commands
//! (issue #24, items 4 and 10): `report`'s memory estimate against its
//! measured peak resident memory, `report --max-memory` and the count a
//! refusal suggests, and the refusal of a run estimated to take hours
//! unless `--allow-long-run` accepts it.
//!
//! Peaks are read with `wait4` for the one child measured, so tests running
//! beside it do not count. Memory peaks repeat from run to run; nothing
//! here asserts on time.

mod common;

use common::{furrow, stderr};
use std::path::{Path, PathBuf};
use std::process::Command;

/// Writes the demo inputs into `dir/name` with `extra` flags of
/// `demo-data` and the plan's horizon set to `horizon`; returns the plan.
fn demo_plan(dir: &Path, name: &str, extra: &[&str], horizon: usize) -> PathBuf {
    let mut args = vec!["demo-data", name];
    args.extend_from_slice(extra);
    let o = furrow(dir, &args);
    assert!(o.status.success(), "demo-data failed: {}", stderr(&o));
    let plan = dir.join(name).join("plan.toml");
    let text = std::fs::read_to_string(&plan).expect("the demo plan");
    let text: String = text
        .lines()
        .map(|l| {
            if l.starts_with("horizon =") {
                format!("horizon = {horizon}")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    std::fs::write(&plan, text + "\n").expect("write the plan");
    plan
}

/// The MiB a refusal says the run would need.
fn estimate_mib(text: &str) -> Option<u64> {
    let at = text.find("would need about ")? + "would need about ".len();
    text[at..].split(' ').next()?.parse().ok()
}

/// The count a refusal suggests with `--scenarios N`.
fn suggested(text: &str) -> Option<usize> {
    let at = text.find("--scenarios ")? + "--scenarios ".len();
    text[at..]
        .split(|c: char| !c.is_ascii_digit())
        .next()?
        .parse()
        .ok()
}

/// Runs the binary with `args` in `dir`; returns whether it succeeded, its
/// stderr and its peak resident memory in KiB.
fn run_measured(dir: &Path, args: &[&str]) -> (bool, String, u64) {
    let err = dir.join("measured.err");
    let child = Command::new(env!("CARGO_BIN_EXE_furrow"))
        .args(args)
        .current_dir(dir)
        .stdout(std::process::Stdio::null())
        .stderr(std::fs::File::create(&err).expect("an error file"))
        .spawn()
        .expect("the furrow binary starts");
    let pid = child.id() as libc::pid_t;
    let mut status: libc::c_int = 0;
    // SAFETY: rusage is plain data that wait4 fills in; `pid` is our own
    // child, not yet waited for (the Child handle is dropped unwaited).
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    let r = unsafe { libc::wait4(pid, &mut status, 0, &mut usage) };
    assert_eq!(r, pid, "wait4 failed");
    drop(child);
    let ok = libc::WIFEXITED(status) && libc::WEXITSTATUS(status) == 0;
    let text = std::fs::read_to_string(&err).unwrap_or_default();
    (ok, text, usage.ru_maxrss as u64)
}

/// The guard's estimate for `furrow report PLAN --scenarios N` (read from
/// its refusal under a 1 MiB limit).
fn report_estimate(dir: &Path, plan: &str, scenarios: &str) -> u64 {
    let o = furrow(
        dir,
        &[
            "report",
            plan,
            "--scenarios",
            scenarios,
            "--max-memory",
            "1",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    estimate_mib(&stderr(&o)).expect("the refusal names the estimate")
}

#[test]
fn report_memory_estimate_undercounts_no_more_than_a_quarter() {
    // Two moderate sizes where the futures matrices are nearly all of the
    // memory and the keyword loop is short (the test binary is a debug
    // build): 40 clusters of one keyword over 60 months at 1,500 futures,
    // and 100 clusters of two keywords over 36 months at 1,000 futures.
    // Both plans fund most clusters, so the stress runs keep as many
    // matrices as the estimate counts (it is an upper bound: a plan that
    // funds nothing keeps none).
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path();
    demo_plan(dir, "wide", &["--clusters", "40", "--keywords", "40"], 60);
    demo_plan(dir, "many", &["--clusters", "100", "--keywords", "200"], 36);
    for (plan, n) in [("wide/plan.toml", "1500"), ("many/plan.toml", "1000")] {
        let est_mib = report_estimate(dir, plan, n);
        let (ok, err, peak_kib) = run_measured(
            dir,
            &[
                "report",
                plan,
                "--scenarios",
                n,
                "--quiet",
                "--out",
                "out",
                "--max-memory",
                "100000",
            ],
        );
        assert!(ok, "the report failed: {err}");
        let peak_mib = peak_kib as f64 / 1024.0;
        let ratio = peak_mib / est_mib as f64;
        // Measured peaks are repeatable (docs/reliability.md); the guard
        // promises the estimate within 25 % of them.
        assert!(
            (0.75..=1.25).contains(&ratio),
            "{plan} at {n} futures: estimate {est_mib} MiB, measured peak {peak_mib:.0} MiB (ratio {ratio:.2})"
        );
    }
}

#[test]
fn report_honours_max_memory_and_its_suggested_scenarios_fit() {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path();
    demo_plan(dir, "wide", &["--clusters", "40", "--keywords", "40"], 60);
    let plan = "wide/plan.toml";
    // Before the fix `report` had no --max-memory (a usage error, exit 2).
    let o = furrow(
        dir,
        &[
            "report",
            plan,
            "--scenarios",
            "200000",
            "--max-memory",
            "100",
            "--quiet",
            "--out",
            "out",
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let text = stderr(&o);
    assert!(text.contains("--max-memory"), "{text}");
    assert!(!dir.join("out").exists(), "a refused report wrote a folder");
    let fits = suggested(&text).expect("the refusal suggests a count");
    assert!((100..200_000).contains(&fits), "{text}");
    // The suggested count passes the guard under the same limit and the
    // report runs.
    let fits = fits.to_string();
    let o = furrow(
        dir,
        &[
            "report",
            plan,
            "--scenarios",
            &fits,
            "--max-memory",
            "100",
            "--quiet",
            "--out",
            "out",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(dir.join("out/summary.json").exists());
}

#[test]
fn report_refuses_a_limit_below_the_smallest_run() {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path();
    demo_plan(dir, "demo", &[], 12);
    let o = furrow(
        dir,
        &["report", "demo/plan.toml", "--max-memory", "1", "--quiet"],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let text = stderr(&o);
    assert!(text.contains("raise --max-memory to at least"), "{text}");
}

/// A plan of 100,000 keywords over 60 months: at 100,000 futures the
/// keyword loop alone is 6e11 keyword-months, hours on any machine.
fn long_plan(dir: &Path) -> PathBuf {
    demo_plan(dir, "big", &["--keywords", "100000"], 60)
}

#[test]
fn huge_keyword_list_is_refused_before_simulating() {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path();
    let plan = long_plan(dir);
    let plan = plan.to_str().expect("a UTF-8 path");
    let o = furrow(
        dir,
        &[
            "report",
            plan,
            "--scenarios",
            "100000",
            "--max-memory",
            "1000000",
            "--out",
            "out",
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let text = stderr(&o);
    assert!(text.contains("--allow-long-run"), "{text}");
    assert!(text.contains("would take about"), "{text}");
    assert!(text.contains(" h "), "the estimate is hours: {text}");
    assert!(!dir.join("out").exists(), "a refused report wrote a folder");
}

#[test]
fn allow_long_run_lets_a_long_run_pass_the_check() {
    use furrow::pipeline::{guard, Limits, Work};
    use furrow::plan::Overrides;
    use furrow::simulate::budget::DEFAULT_MAX_RUN_SECONDS;
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let plan = long_plan(tmp.path());
    let o = Overrides {
        scenarios: Some(100_000),
        ..Overrides::default()
    };
    let inputs = furrow::inputs::load::load(&plan, &o).expect("the plan loads");
    let model = furrow::simulate::prepare(&inputs).expect("the model prepares");
    let refused = Limits {
        work: Work::Report,
        max_seconds: Some(DEFAULT_MAX_RUN_SECONDS),
        on_costs: None,
    };
    let e = guard(&inputs, &model, u64::MAX, &refused).expect_err("refused without the flag");
    assert!(matches!(e, furrow::Error::RunTime(_)), "{e}");
    // With --allow-long-run (no time limit) the check passes and the
    // estimate is told before anything runs.
    let told = std::sync::Mutex::new(None);
    let tell = |c: &furrow::simulate::budget::Costs| {
        *told.lock().expect("not poisoned") = Some(c.time.seconds);
    };
    let allowed = Limits {
        work: Work::Report,
        max_seconds: None,
        on_costs: Some(&tell),
    };
    let costs = guard(&inputs, &model, u64::MAX, &allowed).expect("accepted with the flag");
    assert!(costs.time.seconds > DEFAULT_MAX_RUN_SECONDS);
    assert_eq!(
        *told.lock().expect("not poisoned"),
        Some(costs.time.seconds)
    );
}

#[test]
fn short_run_prints_no_run_time_note() {
    // The note is for runs estimated above 30 s; the demo at 1,000 futures
    // takes about a second and says nothing but its summary.
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path();
    demo_plan(dir, "demo", &[], 12);
    let o = furrow(
        dir,
        &[
            "report",
            "demo/plan.toml",
            "--scenarios",
            "1000",
            "--out",
            "out",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        !stderr(&o).contains("note:"),
        "a short run printed a note: {}",
        stderr(&o)
    );
}

#[test]
fn stress_sizes_count_the_matrices_the_demo_report_keeps() {
    // The six built-in presets on the demo, worked out by hand from the
    // preset files (models/stress/): `slower-gains` changes every cluster's
    // keyword loop (kept), `ranking-shock` half of them (kept), `bad-year`
    // both at once (new keys on the shocked half: kept); the others change
    // only multipliers. So at most two kept runs and the one in hand are
    // alive together. Site samplers: click-through (`ctr-erosion`),
    // conversion (`weaker-conversion`) and both (`bad-year`) differ from
    // the base and from each other.
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let plan = demo_plan(tmp.path(), "demo", &[], 12);
    let inputs = furrow::inputs::load::load(&plan, &furrow::plan::Overrides::default())
        .expect("the demo loads");
    let model = furrow::simulate::prepare(&inputs).expect("the model prepares");
    let names = furrow::analysis::preset_names_of(&inputs, &[]);
    let st = furrow::analysis::stress_sizes(&inputs, &model, &names, None).expect("sizes");
    assert_eq!(st.presets, 6);
    assert_eq!(st.alive, 3);
    assert_eq!(st.site_copies, 3);
    // Re-simulated: every keyword once (slower-gains) and the shocked
    // clusters' keywords twice (ranking-shock, bad-year).
    let preset = furrow::analysis::load_preset_of(&inputs.plan, "ranking-shock").expect("preset");
    let hit = furrow::stress::shocked_clusters(&preset, model.clusters.len(), inputs.plan.seed);
    let all: usize = model.clusters.iter().map(|c| c.keywords.len()).sum();
    let shocked: usize = hit.iter().map(|&c| model.clusters[c].keywords.len()).sum();
    let want = 1.0 + 2.0 * shocked as f64 / all as f64;
    assert!(
        (st.resimulated - want).abs() < 1e-9,
        "{} vs {want}",
        st.resimulated
    );
}
