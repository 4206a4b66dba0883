//! What a command will cost before it starts: its peak memory and its run
//! time, estimated from the model's sizes, so that a run that would not fit
//! is refused with a count that does, and a run that would take hours says
//! so (and is refused above a limit unless the user accepts it).
//!
//! Memory: every command's peak is the sum of what it holds at once, each
//! part counted from the sizes that make it (futures S, slots n, horizon h,
//! clusters, keywords, and for the stress runs how many futures matrices
//! are alive together). The parts and their byte counts follow the code
//! that allocates them:
//!
//! - a futures matrix (`engine::Futures`): `S x n x h` f32 clicks, one
//!   `SiteDraw` and one f32 execution factor per cluster per future;
//! - baseline paths (`pipeline::Simulated`): `S x h` f64, and a stressed
//!   copy beside every stressed matrix (`stress::apply`);
//! - net returns of the allocation problem: `S x n` f32, and its copy for
//!   the best expected-return allocation (`analysis::best_allocation`);
//! - the stress runs (`analysis::stress_report`): the base matrix, every
//!   kept run a later preset may copy clusters from, and the run in hand
//!   with its clone of the model; the count comes from the presets' loop
//!   keys ([`StressSizes`]);
//! - the answers computed beside them in `report` (variance drivers, target
//!   totals, summaries, frontier): S-long f64 columns;
//! - the model and the keyword list (per keyword), and a fixed part for the
//!   program, its threads and the allocator.
//!
//! The per-part constants were checked against peak resident memory of
//! `furrow report` on the demo from 20,000 to 600,000 futures and on
//! generated plans with 200 clusters and 60 months (`benches/memory_peaks.sh`,
//! table in docs/reliability.md).
//!
//! Run time: the keyword loop dominates every long run. Its work is counted
//! in keyword-months (keywords x months x futures, once for the base run
//! and once more for each keyword a stress preset re-simulates) and shared
//! by the threads; the rest (writing and reading every futures matrix:
//! page faults, net returns, summaries, LP rounds, much of it on one
//! thread) in matrix cells (futures x slots x months, once per matrix the
//! job makes). Both rates were measured on the project's 2-core machine
//! (docs/performance.md) and set below the measurements, so the estimate
//! errs long.

use super::model::Model;
use crate::error::{Error, Result};

/// Keyword-months the keyword loop does per second on one core. Measured
/// on the 2-core machine of the project (docs/performance.md, "Run-time
/// estimate"): about 1.0e8 with one thread on the demo and on a generated
/// 300,000-keyword list; set at 6e7 so the estimate errs long under load.
pub const KEYWORD_MONTHS_PER_SECOND: f64 = 6.0e7;

/// Matrix cells per second of the work outside the keyword loop, counted
/// once per futures matrix a job makes, not shared by the threads.
/// Measured from `report` (wall time less the keyword loop's share) at
/// about 2e8 on the demo at 100,000 futures and on plans of 120 and 300
/// slots over 60 and 36 months (docs/performance.md); set at 1.2e8.
pub const MATRIX_CELLS_PER_SECOND: f64 = 1.2e8;

/// Longest run accepted without `--allow-long-run`: 30 minutes.
pub const DEFAULT_MAX_RUN_SECONDS: f64 = 30.0 * 60.0;

/// Runs estimated longer than this get a note on stderr before they start.
pub const NOTE_RUN_SECONDS: f64 = 30.0;

/// Bytes of one `SiteDraw` (seven f64 and a bool).
const SITE_DRAW_BYTES: u64 = 56;
/// Bytes of one prepared keyword (`KeywordModel`, seven f64-sized fields).
const KEYWORD_MODEL_BYTES: u64 = 56;
/// Bytes of one keyword as read (`inputs::keywords::Keyword`, 48 without
/// its text) with its share of the reader's buffers and of the allocator's
/// slack after them: reading a generated list of 5,000,000 keywords peaks
/// at 1.24 GB (about 250 bytes a keyword with its text); measured peaks of
/// reports of 300,000 and 5,000,000 keywords fit 160.
const KEYWORD_ROW_BYTES: u64 = 160;
/// The program, its libraries, thread stacks and allocator arenas: the
/// resident memory of a report of the demo at 1,000 futures less what the
/// parts above count for it.
const FIXED_BYTES: u64 = 10 << 20;

/// The sizes a job's cost depends on.
#[derive(Debug, Clone, PartialEq)]
pub struct Sizes {
    /// Futures.
    pub scenarios: usize,
    /// (cluster, tier) slots.
    pub slots: usize,
    /// Months.
    pub horizon: usize,
    /// Clusters.
    pub clusters: usize,
    /// Keywords the simulation runs (those that can move).
    pub keywords: usize,
    /// Keyword-tier pairs (the central gains).
    pub keyword_tiers: usize,
    /// Keywords as read, and the bytes of their texts.
    pub input_keywords: usize,
    /// Bytes of the keyword texts as read.
    pub input_text_bytes: u64,
    /// Worker threads.
    pub threads: usize,
}

impl Sizes {
    /// The sizes of `model` at `scenarios` futures (no keyword list held
    /// beside it, one thread per core).
    pub fn of(model: &Model, scenarios: usize) -> Sizes {
        Sizes {
            scenarios,
            slots: model.slots(),
            horizon: model.horizon(),
            clusters: model.clusters.len(),
            keywords: model.clusters.iter().map(|c| c.keywords.len()).sum(),
            keyword_tiers: model.clusters.iter().map(|c| c.central.len()).sum(),
            input_keywords: 0,
            input_text_bytes: 0,
            threads: rayon::current_num_threads().max(1),
        }
    }

    /// The same sizes at another number of futures.
    pub fn with_scenarios(&self, scenarios: usize) -> Sizes {
        Sizes {
            scenarios,
            ..self.clone()
        }
    }
}

/// What the stress runs of a job hold and re-simulate, from its presets.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StressSizes {
    /// Presets run.
    pub presets: usize,
    /// Most stressed futures matrices alive at once (kept runs a later
    /// preset copies clusters from, plus the one being evaluated).
    pub alive: usize,
    /// Distinct site samplers whose draws are kept for later presets.
    pub site_copies: usize,
    /// Keywords re-simulated over all presets (a keyword counts once per
    /// preset that runs its loop again), as a multiple of the base run's.
    pub resimulated: f64,
}

/// The jobs whose cost is estimated: what each command does after the
/// simulation.
#[derive(Debug, Clone, PartialEq)]
pub enum Job {
    /// `simulate`: the futures and their summary; `dump` writes the
    /// net-return matrix as text too.
    Simulate { dump: bool },
    /// `allocate` on a plan: the futures and the allocation problem.
    Allocate,
    /// `frontier`: the allocation problem solved at several points.
    Frontier { points: usize },
    /// `track`: the allocation and the monthly totals.
    Track,
    /// `stress`: the allocation and the presets; `optimize_under` holds one
    /// more stressed matrix and the mixed problem.
    Stress {
        stress: StressSizes,
        optimize_under: bool,
    },
    /// `report`: all of the above at once.
    Report { stress: StressSizes },
}

/// An estimate of a job's peak memory, part by part.
#[derive(Debug, Clone, PartialEq)]
pub struct MemoryEstimate {
    /// Total bytes.
    pub bytes: u64,
    /// (what, bytes) of every part.
    pub parts: Vec<(&'static str, u64)>,
}

/// An estimate of a job's run time.
#[derive(Debug, Clone, PartialEq)]
pub struct RunTime {
    /// Keyword-months the keyword loop runs (base and stress runs).
    pub keyword_months: f64,
    /// Matrix cells written and read outside the keyword loop.
    pub matrix_cells: f64,
    /// Estimated seconds on `threads` threads.
    pub seconds: f64,
    /// Threads assumed.
    pub threads: usize,
}

/// A job's estimated costs, told before the simulation starts.
#[derive(Debug, Clone, PartialEq)]
pub struct Costs {
    pub memory: MemoryEstimate,
    pub time: RunTime,
}

impl Costs {
    /// Both estimates of `job` at `sizes`.
    pub fn of(job: &Job, sizes: &Sizes) -> Costs {
        Costs {
            memory: memory(job, sizes),
            time: run_time(job, sizes),
        }
    }
}

/// Bytes of one futures matrix of `z`.
fn futures_bytes(z: &Sizes) -> u64 {
    let per = (z.slots * z.horizon * 4) as u64 + SITE_DRAW_BYTES + z.clusters as u64 * 4;
    per * z.scenarios as u64
}

/// Bytes of the prepared model (one copy).
fn model_bytes(z: &Sizes) -> u64 {
    z.keywords as u64 * KEYWORD_MODEL_BYTES + z.keyword_tiers as u64 * 8
}

/// Bytes of `count` S-long f64 columns.
fn columns(z: &Sizes, count: usize) -> u64 {
    (z.scenarios * count * 8) as u64
}

/// The estimated peak memory of `job` at `sizes`.
pub fn memory(job: &Job, z: &Sizes) -> MemoryEstimate {
    let s = z.scenarios as u64;
    let futures = futures_bytes(z);
    let baseline = s * z.horizon as u64 * 8;
    let returns = s * z.slots as u64 * 4;
    // The cutting-plane solver: a few S-long columns (scenario returns,
    // their order, the worst-case set) per solve.
    let solver = columns(z, 4);
    let mut parts: Vec<(&'static str, u64)> = vec![
        ("program, threads and allocator", FIXED_BYTES),
        (
            "keyword list as read",
            z.input_keywords as u64 * KEYWORD_ROW_BYTES + z.input_text_bytes,
        ),
        ("prepared model", model_bytes(z)),
        ("futures", futures),
    ];
    // The summaries of every slot, computed on each thread at once: five
    // S-long columns each (clicks, revenue, gross profit, net, sorted).
    let summaries = columns(z, 5 * z.threads.max(1));
    match job {
        Job::Simulate { dump } => {
            parts.push(("summaries", summaries));
            if *dump {
                // The matrix as f32 and as text (about 12 characters a value).
                parts.push(("net returns and their text", returns + returns * 3));
            }
        }
        Job::Allocate | Job::Frontier { .. } | Job::Track => {
            parts.push(("baseline paths", baseline));
            parts.push(("net returns", returns));
            parts.push(("allocation solver", solver));
            if *job == Job::Track {
                parts.push(("monthly totals", baseline * 2));
            }
        }
        Job::Stress {
            stress,
            optimize_under,
        } => {
            parts.push(("baseline paths", baseline));
            parts.push(("net returns", returns));
            parts.push(("allocation solver", solver));
            if *optimize_under {
                // One more stressed matrix, its net returns and the mix of
                // both (2S rows and their weights).
                parts.push((
                    "futures of the preset optimized under",
                    futures + model_bytes(z),
                ));
                parts.push(("mixed net returns", returns * 3 + columns(z, 2)));
            }
            parts.extend(stress_parts(stress, z, futures, baseline));
        }
        Job::Report { stress } => {
            parts.push(("baseline paths", baseline));
            parts.push(("net returns and their copy", returns * 2));
            parts.extend(stress_parts(stress, z, futures, baseline));
            // Beside the stress runs: the variance drivers (one column per
            // site factor, funded cluster and the baseline error, each with
            // its ranks), or the summaries, or the monthly totals of the
            // target and the forecast, whichever is largest, and the
            // solver of the best allocation and the frontier.
            let drivers = columns(z, 2 * (6 + z.clusters));
            let totals = baseline * 3;
            parts.push((
                "drivers, summaries and totals",
                drivers.max(summaries).max(totals),
            ));
            parts.push(("allocation solver", solver));
            parts.push(("net return histogram", columns(z, 2)));
        }
    }
    MemoryEstimate {
        bytes: parts.iter().map(|p| p.1).sum(),
        parts,
    }
}

/// The stress runs' share of a job's memory.
fn stress_parts(
    st: &StressSizes,
    z: &Sizes,
    futures: u64,
    baseline: u64,
) -> Vec<(&'static str, u64)> {
    let alive = st.alive as u64;
    vec![
        // A kept run keeps its futures only; the stressed model is
        // alive for the preset in hand.
        (
            "stressed futures, kept and in hand",
            alive * (futures + baseline) + model_bytes(z),
        ),
        (
            "site draws kept for later presets",
            st.site_copies as u64 * z.scenarios as u64 * SITE_DRAW_BYTES,
        ),
        ("stress evaluation", columns(z, 4)),
    ]
}

/// The estimated run time of `job` at `sizes`.
pub fn run_time(job: &Job, z: &Sizes) -> RunTime {
    let base = z.keywords as f64 * z.horizon as f64 * z.scenarios as f64;
    let cells = z.slots as f64 * z.horizon as f64 * z.scenarios as f64;
    // Keyword loops re-run by the stress presets, and futures matrices made
    // (the base one and one per preset).
    let (resim, matrices) = match job {
        Job::Simulate { .. } | Job::Allocate | Job::Track | Job::Frontier { .. } => (0.0, 1.0),
        Job::Stress {
            stress,
            optimize_under,
        } => {
            let extra = if *optimize_under { 1.0 } else { 0.0 };
            (
                stress.resimulated + extra,
                1.0 + stress.presets as f64 + extra,
            )
        }
        Job::Report { stress } => (stress.resimulated, 1.0 + stress.presets as f64),
    };
    let keyword_months = base * (1.0 + resim);
    let matrix_cells = cells * matrices;
    let threads = z.threads.max(1);
    let seconds = keyword_months / (KEYWORD_MONTHS_PER_SECOND * threads as f64)
        + matrix_cells / MATRIX_CELLS_PER_SECOND;
    RunTime {
        keyword_months,
        matrix_cells,
        seconds,
        threads,
    }
}

fn mib(bytes: u64) -> u64 {
    bytes.div_ceil(1024 * 1024)
}

/// The smallest run the refusal suggests.
const SMALLEST_RUN: usize = 100;

/// The largest number of futures below `z.scenarios` whose estimate fits
/// `limit` (the estimate grows with the futures, so a binary search).
pub fn largest_fitting(job: &Job, z: &Sizes, limit: u64) -> usize {
    let (mut lo, mut hi) = (0usize, z.scenarios);
    // Invariant: lo fits (or is 0), hi does not.
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if memory(job, &z.with_scenarios(mid)).bytes <= limit {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

/// Refuses `job` at `sizes` when its estimate is above `max_memory`,
/// naming the largest count of futures that fits.
pub fn check_memory(job: &Job, z: &Sizes, max_memory: u64) -> Result<()> {
    let need = memory(job, z).bytes;
    if need <= max_memory {
        return Ok(());
    }
    let scenarios = z.scenarios;
    let fits = largest_fitting(job, z, max_memory);
    if fits < SMALLEST_RUN {
        let small = memory(job, &z.with_scenarios(SMALLEST_RUN)).bytes;
        return Err(Error::Memory(format!(
            "{scenarios} futures would need about {} MiB, above the limit of {} MiB (--max-memory), and even the smallest run ({SMALLEST_RUN} futures) needs about {} MiB; raise --max-memory to at least {}",
            mib(need),
            max_memory / (1024 * 1024),
            mib(small),
            mib(small),
        )));
    }
    Err(Error::Memory(format!(
        "{scenarios} futures would need about {} MiB, above the limit of {} MiB (--max-memory); the largest count that fits is {fits} (use --scenarios {fits}, or raise --max-memory)",
        mib(need),
        max_memory / (1024 * 1024)
    )))
}

/// "1 h 20 min", "12 min", "45 s".
pub fn duration_text(seconds: f64) -> String {
    let s = seconds.max(0.0).round() as u64;
    if s >= 3600 {
        format!("{} h {} min", s / 3600, (s % 3600) / 60)
    } else if s >= 60 {
        format!("{} min", s.div_ceil(60))
    } else {
        format!("{s} s")
    }
}

/// Refuses a run estimated longer than `max_seconds` (when given), naming
/// the estimate and the flag that accepts it.
pub fn check_run_time(t: &RunTime, max_seconds: Option<f64>) -> Result<()> {
    match max_seconds {
        Some(limit) if t.seconds > limit => Err(Error::RunTime(format!(
            "this run would take about {} on {} thread{} ({:.2e} keyword-months of simulation), above the limit of {}; pass --allow-long-run to run it anyway, or lower --scenarios or the keyword list",
            duration_text(t.seconds),
            t.threads,
            if t.threads == 1 { "" } else { "s" },
            t.keyword_months,
            duration_text(limit),
        ))),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo(scenarios: usize) -> Sizes {
        Sizes {
            scenarios,
            slots: 30,
            horizon: 12,
            clusters: 10,
            keywords: 600,
            keyword_tiers: 1800,
            input_keywords: 600,
            input_text_bytes: 12_000,
            threads: 2,
        }
    }

    fn report() -> Job {
        Job::Report {
            stress: StressSizes {
                presets: 6,
                alive: 3,
                site_copies: 3,
                resimulated: 2.0,
            },
        }
    }

    #[test]
    fn report_counts_every_stressed_matrix_alive() {
        // The base matrix and three stressed ones: at least four times the
        // clicks matrix (S x n x h f32).
        let z = demo(100_000);
        let clicks = (100_000 * 30 * 12 * 4) as u64;
        let e = memory(&report(), &z);
        assert!(e.bytes >= 4 * clicks, "{e:?}");
        // And less than twice that (nothing counted twice).
        assert!(e.bytes < 8 * clicks, "{e:?}");
    }

    #[test]
    fn estimates_grow_with_the_futures() {
        for job in [
            Job::Simulate { dump: true },
            Job::Allocate,
            Job::Track,
            report(),
        ] {
            let a = memory(&job, &demo(1_000)).bytes;
            let b = memory(&job, &demo(2_000)).bytes;
            assert!(b > a, "{job:?}");
        }
    }

    #[test]
    fn refusal_suggests_a_count_that_fits() {
        let job = report();
        let limit = 300 << 20;
        let z = demo(600_000);
        let e = check_memory(&job, &z, limit).expect_err("refused");
        let text = e.to_string();
        let fits: usize = text
            .split("--scenarios ")
            .nth(1)
            .and_then(|t| t.split(|c: char| !c.is_ascii_digit()).next())
            .and_then(|t| t.parse().ok())
            .expect("a suggested count");
        assert!(check_memory(&job, &z.with_scenarios(fits), limit).is_ok());
        assert!(check_memory(&job, &z.with_scenarios(fits + 1), limit).is_err());
    }

    #[test]
    fn run_time_counts_the_stress_re_runs() {
        let z = demo(10_000);
        let plain = run_time(&Job::Allocate, &z);
        let full = run_time(&report(), &z);
        // 600 keywords x 12 months x 10,000 futures, three times over.
        assert!((plain.keyword_months - 7.2e7).abs() < 1.0);
        assert!((full.keyword_months - 3.0 * 7.2e7).abs() < 1.0);
        assert!(full.seconds > plain.seconds);
    }

    #[test]
    fn long_run_is_refused_naming_the_flag_and_allowed_without_a_limit() {
        let t = RunTime {
            keyword_months: 1e12,
            matrix_cells: 0.0,
            seconds: 7200.0,
            threads: 2,
        };
        let e = check_run_time(&t, Some(DEFAULT_MAX_RUN_SECONDS)).expect_err("refused");
        let text = e.to_string();
        assert!(text.contains("--allow-long-run"), "{text}");
        assert!(text.contains("2 h 0 min"), "{text}");
        assert!(check_run_time(&t, None).is_ok());
    }
}
