//! Command-line parsing (clap) and dispatch: the first stage reads what the
//! user typed; the library then resolves it against the plan (flags win over
//! the plan, the plan over defaults) into typed work.

use crate::progress;
use anyhow::{Context, Result};
use clap::{Parser, Subcommand, ValueEnum};
use furrow::plan::Overrides;
use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

/// Forecast organic search, simulate keyword-cluster investments and
/// allocate a budget under a tail-risk limit.
#[derive(Debug, Parser)]
#[command(name = "furrow", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum CtrAction {
    /// Fit the site's own click-through curve from a query export.
    Fit {
        /// Query export (query, clicks, impressions, position).
        #[arg(long)]
        queries: PathBuf,
        /// Queries matching this pattern (case-insensitive) are branded and left out.
        #[arg(long)]
        brand: Option<String>,
        /// Write the chosen curve here, in the models/ctr/ format.
        #[arg(long)]
        out: Option<PathBuf>,
        /// Bins with fewer impressions fall back to the default curve's shape.
        #[arg(long, default_value_t = 100.0)]
        min_impressions: f64,
        /// Map a column to the header your export uses: --map clicks="Clicks" (repeatable).
        #[arg(long = "map", value_name = "NAME=HEADER")]
        map: Vec<String>,
        /// How the export writes 1234.5 ("1,234.5" or "1.234,5"), when its numbers cannot tell.
        #[arg(long, value_name = "FORMAT")]
        numbers: Option<String>,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
}

/// What `frontier` sweeps.
#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum SweepOver {
    TailLoss,
    Budget,
}

/// LP methods of the allocation.
#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum LpMethod {
    Auto,
    Full,
    Cuts,
}

/// Flags of every command that simulates a plan.
#[derive(Debug, clap::Args)]
struct SimFlags {
    /// Number of simulated futures (overrides the plan).
    #[arg(long)]
    scenarios: Option<usize>,
    /// Seed of all random streams (overrides the plan).
    #[arg(long)]
    seed: Option<u64>,
    /// Months to forecast, 1 to 60 (overrides the plan).
    #[arg(long, value_name = "MONTHS")]
    horizon: Option<usize>,
    /// Worker threads (default: all cores). Results do not depend on it.
    #[arg(long)]
    threads: Option<usize>,
    /// Memory limit, in MiB (default: half of the machine's memory).
    #[arg(long, value_name = "MIB")]
    max_memory: Option<u64>,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
    /// Run even when the estimated run time is above 30 minutes.
    #[arg(long)]
    allow_long_run: bool,
}

/// The longest estimated run accepted without `--allow-long-run`.
fn max_seconds(allow_long_run: bool) -> Option<f64> {
    (!allow_long_run).then_some(furrow::simulate::budget::DEFAULT_MAX_RUN_SECONDS)
}

/// Prints a one-line note on stderr before a run estimated to take long
/// (unless `quiet`).
fn cost_note(quiet: bool) -> impl Fn(&furrow::simulate::budget::Costs) + Sync {
    move |c: &furrow::simulate::budget::Costs| {
        if quiet || c.time.seconds <= furrow::simulate::budget::NOTE_RUN_SECONDS {
            return;
        }
        eprintln!(
            "note: this run is estimated to take about {} on {} thread(s) and about {} MiB of memory",
            furrow::simulate::budget::duration_text(c.time.seconds),
            c.time.threads,
            c.memory.bytes.div_ceil(1024 * 1024)
        );
    }
}

fn simulate_plan(
    plan: &std::path::Path,
    o: Overrides,
    sim: &SimFlags,
    work: furrow::pipeline::Work,
) -> Result<furrow::pipeline::Simulated> {
    set_threads(sim.threads)?;
    let o = Overrides {
        seed: sim.seed,
        scenarios: sim.scenarios,
        horizon: sim.horizon,
        ..o
    };
    let inputs = furrow::inputs::load::load(plan, &o)?;
    let bar = progress::Bar::new(
        inputs.plan.scenarios as u64,
        "simulating futures",
        sim.quiet,
    );
    let cb = |d: usize| bar.set(d as u64);
    let opts = furrow::pipeline::SimOptions {
        max_memory: memory_limit(sim.max_memory),
        progress: Some(&cb),
    };
    let note = cost_note(sim.quiet);
    let limits = furrow::pipeline::Limits {
        work,
        max_seconds: max_seconds(sim.allow_long_run),
        on_costs: Some(&note),
    };
    let s = furrow::pipeline::simulate_with(inputs, &opts, &limits)?;
    bar.finish();
    Ok(s)
}

fn solve_options(method: LpMethod, whole_tiers: bool) -> furrow::allocate::SolveOptions {
    use furrow::allocate::{SolveMethod, SolveOptions};
    SolveOptions {
        method: match method {
            LpMethod::Auto => SolveMethod::Auto,
            LpMethod::Full => SolveMethod::Full,
            LpMethod::Cuts => SolveMethod::Cuts,
        },
        whole_tiers,
        ..SolveOptions::default()
    }
}

/// How `allocate --returns/--costs` reads its files: `--map` for the costs
/// file's headers, `--numbers` for a number format the cells cannot tell.
struct FileReading<'a> {
    map: &'a [String],
    numbers: Option<&'a str>,
}

fn allocate_files(
    returns: &std::path::Path,
    costs: &std::path::Path,
    reading: &FileReading,
    budget: f64,
    tail_level: Option<f64>,
    max_tail_loss: Option<&str>,
) -> Result<furrow::allocate::Problem> {
    use furrow::inputs::scenarios;
    use furrow::inputs::table::{parse_map_flags, parse_numbers_flag, ReadSettings};
    let map = parse_map_flags(reading.map, &[scenarios::COST_COLUMNS])?;
    let settings = ReadSettings::flags(&map, parse_numbers_flag(reading.numbers)?);
    let r = scenarios::read_returns_with(returns, &settings)?;
    let c = scenarios::read_costs_with(costs, &settings)?;
    let c = scenarios::match_ids(&r, &c, &costs.display().to_string())?;
    if !(budget.is_finite() && budget > 0.0) {
        return Err(furrow::Error::Setting(format!(
            "--budget must be a positive amount (a budget of 0 funds nothing), found {budget}"
        ))
        .into());
    }
    let n = r.scenarios();
    let mut p = furrow::allocate::Problem::new(
        r.ids.clone(),
        c.iter().map(|x| x.cost).collect(),
        n,
        r.values,
        budget,
    );
    p.min_fraction = c.iter().map(|x| x.min_fraction).collect();
    p.max_fraction = c.iter().map(|x| x.max_fraction).collect();
    p.requires = c
        .iter()
        .map(|x| {
            x.requires
                .as_ref()
                .and_then(|q| r.ids.iter().position(|i| i == q))
        })
        .collect();
    if let Some(q) = tail_level {
        p.tail_level = furrow::plan::check_tail_level(q)?;
    }
    if let Some(m) = max_tail_loss {
        p.max_tail_loss = Some(furrow::plan::parse_tail_loss(m, budget)?);
    }
    Ok(p)
}

/// Initial states of the exponential smoothing methods.
#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum InitArg {
    Simple,
    Estimated,
}

/// Output formats of the data commands.
#[derive(Debug, Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum Format {
    Table,
    Json,
    Csv,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Run the whole job on a plan and write a report folder.
    Report {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Output folder (default: reports/<plan name>/).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Seed of all random streams (overrides the plan).
        #[arg(long)]
        seed: Option<u64>,
        /// Number of simulated futures (overrides the plan).
        #[arg(long)]
        scenarios: Option<usize>,
        /// Months to forecast, 1 to 60 (overrides the plan).
        #[arg(long, value_name = "MONTHS")]
        horizon: Option<usize>,
        /// Worker threads (default: all cores). Results do not depend on it.
        #[arg(long)]
        threads: Option<usize>,
        /// Memory limit for the whole report, in MiB (default: half of the machine's memory).
        #[arg(long, value_name = "MIB")]
        max_memory: Option<u64>,
        /// No progress output on stderr.
        #[arg(long)]
        quiet: bool,
        /// Run even when the estimated run time is above 30 minutes.
        #[arg(long)]
        allow_long_run: bool,
    },
    /// Load a plan and all its inputs, and summarise them.
    Check {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Months to forecast, 1 to 60 (overrides the plan).
        #[arg(long, value_name = "MONTHS")]
        horizon: Option<usize>,
    },
    /// Write a commented plan template and example inputs into DIR.
    Init {
        /// Folder to create (must not already hold a plan.toml).
        dir: PathBuf,
    },
    /// Forecast a monthly series with no new work (the baseline).
    Baseline {
        /// Monthly history (month, clicks, ...).
        #[arg(long)]
        history: PathBuf,
        /// Column to forecast (clicks, revenue, sessions or any numeric column).
        #[arg(long, default_value = "clicks")]
        column: String,
        /// auto, linear, seasonal-naive, holt, holt-winters-additive, holt-winters-multiplicative, index-growth.
        #[arg(long, default_value = "auto")]
        method: String,
        /// Months to forecast.
        #[arg(long, default_value_t = 12)]
        horizon: usize,
        /// Level smoothing (fixed; estimated when absent).
        #[arg(long)]
        alpha: Option<f64>,
        /// Trend smoothing (fixed; estimated when absent).
        #[arg(long)]
        beta: Option<f64>,
        /// Seasonal smoothing (fixed; estimated when absent).
        #[arg(long)]
        gamma: Option<f64>,
        /// Trend damping (below 1 damps the trend).
        #[arg(long)]
        phi: Option<f64>,
        /// Initial states: simple (from the first seasons) or estimated.
        #[arg(long, value_enum, default_value_t = InitArg::Simple)]
        init: InitArg,
        /// Search-interest index (month, index) for --method index-growth.
        #[arg(long)]
        index: Option<PathBuf>,
        /// Map a column to the header your export uses: --map clicks="Clicks per month" (repeatable; history and index).
        #[arg(long = "map", value_name = "NAME=HEADER")]
        map: Vec<String>,
        /// How the files write 1234.5 ("1,234.5" or "1.234,5"), when their numbers cannot tell.
        #[arg(long, value_name = "FORMAT")]
        numbers: Option<String>,
        /// Bootstrap residuals instead of Gaussian errors for the intervals.
        #[arg(long)]
        bootstrap: bool,
        /// Simulated paths behind P10/P50/P90.
        #[arg(long, default_value_t = 10_000)]
        paths: usize,
        /// Seed of the interval simulation.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Click-through-rate curves.
    Ctr {
        #[command(subcommand)]
        action: CtrAction,
    },
    /// Median case per cluster and tier (every factor at its median), beside the mean over a
    /// small seeded simulation.
    Estimate {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Simulated futures behind the mean-over-futures column (default 1000; 0 leaves it out).
        #[arg(long)]
        scenarios: Option<usize>,
        /// Seed of the simulation (default: the plan's).
        #[arg(long)]
        seed: Option<u64>,
        /// Months to forecast (overrides the plan).
        #[arg(long)]
        horizon: Option<usize>,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Monte Carlo of every cluster and tier: distributions of clicks, revenue and net return.
    Simulate {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Number of simulated futures (overrides the plan).
        #[arg(long)]
        scenarios: Option<usize>,
        /// Seed of all random streams (overrides the plan).
        #[arg(long)]
        seed: Option<u64>,
        /// Months to forecast, 1 to 60 (overrides the plan).
        #[arg(long, value_name = "MONTHS")]
        horizon: Option<usize>,
        /// Worker threads (default: all cores). Results do not depend on it.
        #[arg(long)]
        threads: Option<usize>,
        /// Write the net-return matrix (allocate --returns format) here, and its costs beside it.
        #[arg(long, value_name = "FILE")]
        dump_scenarios: Option<PathBuf>,
        /// Memory limit for the run, in MiB (default: half of the machine's memory).
        #[arg(long, value_name = "MIB")]
        max_memory: Option<u64>,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
        /// Run even when the estimated run time is above 30 minutes.
        #[arg(long)]
        allow_long_run: bool,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Split the budget across tiers to maximise expected net return under a tail-loss limit.
    Allocate {
        /// The plan file (TOML); or give --returns, --costs and --budget instead.
        plan: Option<PathBuf>,
        /// Futures: a header of ids, then one row of net returns per future.
        #[arg(long, requires = "costs", conflicts_with = "plan")]
        returns: Option<PathBuf>,
        /// Costs: id, cost [, max_fraction, requires, min_fraction].
        #[arg(long, requires = "returns")]
        costs: Option<PathBuf>,
        /// Map a column of the costs file to the header it uses: --map cost="Budget" (repeatable).
        #[arg(long = "map", value_name = "NAME=HEADER", requires = "costs")]
        map: Vec<String>,
        /// How the files write 1234.5 ("1,234.5" or "1.234,5"), when their numbers cannot tell.
        #[arg(long, value_name = "FORMAT", requires = "costs")]
        numbers: Option<String>,
        /// Total budget (overrides the plan; required with --returns).
        #[arg(long)]
        budget: Option<f64>,
        /// Share of outcomes the tail excludes: 0.90 means the worst 10 %.
        #[arg(long)]
        tail_level: Option<f64>,
        /// Largest tolerated average loss in the tail: an amount, or a share of the budget such as 15%.
        #[arg(long)]
        max_tail_loss: Option<String>,
        /// Fund each tier fully or not at all.
        #[arg(long)]
        whole_tiers: bool,
        /// LP method: auto, full (one LP) or cuts (Kunzi-Bay & Mayer cutting planes).
        #[arg(long, value_enum, default_value_t = LpMethod::Auto)]
        method: LpMethod,
        #[command(flatten)]
        sim: SimFlags,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Sweep the tail-loss limit and tabulate the best expected return at each.
    Frontier {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Number of points.
        #[arg(long, default_value_t = 11)]
        points: usize,
        /// What to sweep: the tail-loss limit (default) or the budget.
        #[arg(long, value_enum, default_value_t = SweepOver::TailLoss)]
        over: SweepOver,
        #[command(flatten)]
        sim: SimFlags,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Re-simulate the chosen allocation under pessimistic presets.
    Stress {
        /// The plan file (TOML).
        plan: PathBuf,
        /// A preset to run (a name in models/stress/ or a path); repeat for several. Default: the plan's list, or all.
        #[arg(long = "preset", value_name = "NAME")]
        presets: Vec<String>,
        /// Allocate against a mix of the base futures and this preset's futures.
        #[arg(long, value_name = "NAME")]
        optimize_under: Option<String>,
        /// Probability on the stressed futures in that mix.
        #[arg(long, default_value_t = 0.5)]
        stress_weight: f64,
        #[command(flatten)]
        sim: SimFlags,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Compare actuals with the forecast and re-forecast the rest of the horizon.
    Track {
        /// The plan file (TOML).
        plan: PathBuf,
        /// Months observed since the start: month, clicks [, revenue].
        #[arg(long)]
        actuals: PathBuf,
        #[command(flatten)]
        sim: SimFlags,
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Print a completion script for SHELL (bash, zsh or fish) to stdout.
    #[command(hide = true)]
    Completions {
        #[arg(value_enum)]
        shell: crate::shell::Shell,
    },
    /// Print the manual page (roff, for man) to stdout.
    #[command(hide = true)]
    Manual,
    /// Write the invented demo business (plan and inputs) into DIR.
    #[command(hide = true)]
    DemoData {
        dir: PathBuf,
        #[arg(long, default_value_t = 600)]
        keywords: usize,
        #[arg(long, default_value_t = 10)]
        clusters: usize,
        #[arg(long, default_value_t = 30)]
        months: usize,
        #[arg(long, default_value_t = 7)]
        seed: u64,
    },
}

impl From<Format> for furrow::output::Format {
    fn from(f: Format) -> Self {
        match f {
            Format::Table => furrow::output::Format::Table,
            Format::Json => furrow::output::Format::Json,
            Format::Csv => furrow::output::Format::Csv,
        }
    }
}

fn memory_limit(mib: Option<u64>) -> u64 {
    mib.map(|m| m.saturating_mul(1024 * 1024))
        .unwrap_or_else(furrow::simulate::engine::default_memory_limit)
}

fn set_threads(threads: Option<usize>) -> Result<()> {
    if let Some(n) = threads {
        if n == 0 {
            return Err(furrow::Error::Setting("--threads must be at least 1".into()).into());
        }
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build_global()
            .context("cannot start the worker threads")?;
    }
    Ok(())
}

fn out(text: &str) -> Result<()> {
    let mut stdout = std::io::stdout().lock();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|_| stdout.flush())
    {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        r => r.context("cannot write to standard output"),
    }
}

/// Runs the parsed command.
pub fn run(cli: Cli) -> Result<ExitCode> {
    match cli.command {
        Command::Check { plan, horizon } => {
            let o = Overrides {
                horizon,
                ..Overrides::default()
            };
            let inputs = furrow::inputs::load::load(&plan, &o)?;
            // The model files and the economics are read too, so a broken
            // model file is found here and not halfway through a report.
            furrow::check::models(&inputs)?;
            let summary = furrow::check::summarise(&inputs);
            let text = furrow::check::render(&summary) + &furrow::check::render_numbers(&summary);
            out(&furrow::text::visible_lines(&text))?;
        }
        Command::Init { dir } => {
            furrow::init::init(&dir)?;
            out(&format!(
                "Wrote a plan template and example inputs to {}.\nNext: furrow check {}\n",
                dir.display(),
                dir.join("plan.toml").display()
            ))?;
        }
        Command::Completions { shell } => {
            std::io::stdout()
                .write_all(&crate::shell::completions(shell))
                .context("cannot write to stdout")?;
        }
        Command::Manual => {
            std::io::stdout()
                .write_all(&crate::shell::manual()?)
                .context("cannot write to stdout")?;
        }
        Command::DemoData {
            dir,
            keywords,
            clusters,
            months,
            seed,
        } => {
            let opts = furrow::demo::DemoOptions {
                keywords,
                clusters,
                months,
                seed,
            };
            furrow::demo::validate(&opts)?;
            furrow::demo::generate(&dir, &opts)?;
            out(&format!("Wrote the demo to {}\n", dir.display()))?;
        }
        Command::Baseline {
            history,
            column,
            method,
            horizon,
            alpha,
            beta,
            gamma,
            phi,
            init,
            index,
            map,
            numbers,
            bootstrap,
            paths,
            seed,
            format,
        } => {
            use furrow::baseline::{BaselineOptions, Init, Method};
            use furrow::inputs::monthly;
            let opts = BaselineOptions {
                method: Method::parse(&method)?,
                horizon,
                alpha,
                beta,
                gamma,
                phi,
                init: if init == InitArg::Simple {
                    Init::Simple
                } else {
                    Init::Estimated
                },
                bootstrap,
                paths,
                seed,
                ..BaselineOptions::default()
            };
            use furrow::inputs::table::{parse_map_flags, parse_numbers_flag, ReadSettings};
            let specs: &[&[_]] = &[monthly::HISTORY_COLUMNS, monthly::INDEX_COLUMNS];
            let map = parse_map_flags(&map, specs)?;
            let settings = ReadSettings::flags(&map, parse_numbers_flag(numbers.as_deref())?);
            let (hist, _) = monthly::read_with(
                &history,
                monthly::HISTORY_COLUMNS,
                &settings,
                monthly::NON_NEGATIVE,
            )?;
            let idx = match &index {
                Some(p) => Some(
                    monthly::read_with(p, monthly::INDEX_COLUMNS, &settings, monthly::INDEX_RANGE)?
                        .0,
                ),
                None => None,
            };
            let start = hist
                .last()
                .map(|m| m.plus(1))
                .unwrap_or(furrow::month::Month::FALLBACK);
            let b = furrow::baseline::run::run(&hist, idx.as_ref(), &column, start, &opts)?;
            out(&furrow::output::render(&b.output, format.into())?)?;
        }
        Command::Ctr {
            action:
                CtrAction::Fit {
                    queries,
                    brand,
                    out: path,
                    min_impressions,
                    map,
                    numbers,
                    format,
                },
        } => {
            use furrow::clicks::{ctr_fit, CtrCurve};
            if let Some(p) = &path {
                furrow::fsio::refuse_inputs(p, std::slice::from_ref(&queries), "--out")?;
            }
            use furrow::inputs::table::{parse_map_flags, parse_numbers_flag, ReadSettings};
            let map = parse_map_flags(&map, &[furrow::inputs::queries::QUERY_COLUMNS])?;
            let settings = ReadSettings::flags(&map, parse_numbers_flag(numbers.as_deref())?);
            let (rows, _) = furrow::inputs::queries::read_with(&queries, &settings)?;
            let brand = brand
                .map(|b| ctr_fit::brand_regex(&b))
                .transpose()
                .map_err(|e| furrow::Error::Setting(format!("--brand: {e}")))?;
            let fallback = CtrCurve::builtin_default().map_err(|e| furrow::Error::Model {
                origin: "built-in models/ctr/default.toml".into(),
                message: e.to_string(),
            })?;
            if !(min_impressions.is_finite() && min_impressions >= 0.0) {
                return Err(furrow::Error::Setting(format!(
                    "--min-impressions must be a non-negative number, found {min_impressions}"
                ))
                .into());
            }
            let opts = ctr_fit::FitOptions {
                min_impressions,
                ..ctr_fit::FitOptions::default()
            };
            let fit = ctr_fit::fit(&rows, brand.as_ref(), &fallback, &opts)
                .map_err(|e| furrow::Error::Unsupported(format!("{}: {e}", queries.display())))?;
            if let Some(p) = &path {
                furrow::fsio::write_text(p, &fit.curve.to_toml_string())?;
            }
            out(&furrow::output::render(&fit, format.into())?)?;
            if let (Some(p), Format::Table) = (&path, format) {
                out(&format!("Curve written to {}\n", p.display()))?;
            }
        }
        Command::Estimate {
            plan,
            scenarios,
            seed,
            horizon,
            format,
        } => {
            let futures = scenarios.unwrap_or(furrow::estimate::DEFAULT_FUTURES);
            // The count is checked like `simulate --scenarios` (0 is allowed
            // and leaves the simulation out).
            let o = Overrides {
                seed,
                scenarios: (futures > 0).then_some(futures),
                horizon,
                ..Overrides::default()
            };
            let inputs = furrow::inputs::load::load(&plan, &o)?;
            let model = furrow::simulate::prepare(&inputs)?;
            let mut est = furrow::estimate::estimate(&model, &inputs.plan.currency);
            if futures > 0 {
                let opts = furrow::simulate::RunOptions {
                    scenarios: inputs.plan.scenarios,
                    seed: inputs.plan.seed,
                    max_memory: memory_limit(None),
                    progress: None,
                };
                let f = furrow::simulate::run(&model, &opts)?;
                let sim = furrow::simulate::summarise_futures(
                    &model,
                    &f,
                    inputs.plan.seed,
                    &inputs.plan.currency,
                );
                furrow::estimate::attach_futures(&mut est, &sim);
            }
            out(&furrow::output::render(&est, format.into())?)?;
        }
        Command::Simulate {
            plan,
            scenarios,
            seed,
            horizon,
            threads,
            dump_scenarios,
            max_memory,
            quiet,
            allow_long_run,
            format,
        } => {
            set_threads(threads)?;
            let o = Overrides {
                seed,
                scenarios,
                horizon,
                ..Overrides::default()
            };
            let inputs = furrow::inputs::load::load(&plan, &o)?;
            if let Some(path) = &dump_scenarios {
                let read: Vec<PathBuf> = inputs.files.iter().map(|(_, p)| p.clone()).collect();
                furrow::fsio::refuse_inputs(path, &read, "--dump-scenarios")?;
                let costs = furrow::simulate::costs_path(path);
                furrow::fsio::refuse_inputs(&costs, &read, "--dump-scenarios")?;
            }
            let model = furrow::simulate::prepare(&inputs)?;
            let note = cost_note(quiet);
            let limits = furrow::pipeline::Limits {
                work: furrow::pipeline::Work::Simulate {
                    dump: dump_scenarios.is_some(),
                },
                max_seconds: max_seconds(allow_long_run),
                on_costs: Some(&note),
            };
            furrow::pipeline::guard(&inputs, &model, memory_limit(max_memory), &limits)?;
            let bar = progress::Bar::new(inputs.plan.scenarios as u64, "simulating futures", quiet);
            let cb = |d: usize| bar.set(d as u64);
            let opts = furrow::simulate::RunOptions {
                scenarios: inputs.plan.scenarios,
                seed: inputs.plan.seed,
                max_memory: memory_limit(max_memory),
                progress: Some(&cb),
            };
            let futures = furrow::simulate::run(&model, &opts)?;
            bar.finish();
            if let Some(path) = dump_scenarios {
                furrow::simulate::dump_scenarios(&model, &futures, &path)?;
            }
            let summary = furrow::simulate::summarise_futures(
                &model,
                &futures,
                inputs.plan.seed,
                &inputs.plan.currency,
            );
            out(&furrow::output::render(&summary, format.into())?)?;
        }
        Command::Allocate {
            plan,
            returns,
            costs,
            map,
            numbers,
            budget,
            tail_level,
            max_tail_loss,
            whole_tiers,
            method,
            sim,
            format,
        } => {
            let opts = solve_options(method, whole_tiers);
            let (problem, currency) = match (plan, returns, costs) {
                (_, Some(r), Some(c)) => {
                    let b = budget.ok_or_else(|| {
                        furrow::Error::Setting(
                            "--budget is required with --returns and --costs".into(),
                        )
                    })?;
                    (
                        allocate_files(
                            &r,
                            &c,
                            &FileReading {
                                map: &map,
                                numbers: numbers.as_deref(),
                            },
                            b,
                            tail_level,
                            max_tail_loss.as_deref(),
                        )?,
                        String::new(),
                    )
                }
                (Some(plan), _, _) => {
                    let o = Overrides {
                        budget,
                        tail_level,
                        max_tail_loss,
                        ..Overrides::default()
                    };
                    let s = simulate_plan(&plan, o, &sim, furrow::pipeline::Work::Allocate)?;
                    (s.problem(), s.inputs.plan.currency.clone())
                }
                _ => {
                    return Err(furrow::Error::Setting(
                        "give a PLAN, or --returns FILE --costs FILE --budget B".into(),
                    )
                    .into())
                }
            };
            let allocation =
                furrow::allocate::solve(&problem, &opts).map_err(furrow::Error::from)?;
            let o = furrow::allocate::output::AllocationOutput {
                allocation,
                currency,
            };
            out(&furrow::output::render(&o, format.into())?)?;
        }
        Command::Frontier {
            plan,
            points,
            over,
            sim,
            format,
        } => {
            if !(2..=200).contains(&points) {
                return Err(furrow::Error::Setting(format!(
                    "--points must be 2 to 200, found {points}"
                ))
                .into());
            }
            let s = simulate_plan(
                &plan,
                Overrides::default(),
                &sim,
                furrow::pipeline::Work::Frontier { points },
            )?;
            let problem = s.problem();
            let opts = furrow::allocate::SolveOptions::default();
            let currency = s.inputs.plan.currency.clone();
            let text = match over {
                SweepOver::TailLoss => {
                    let pts = furrow::allocate::frontier(&problem, points, &opts)
                        .map_err(furrow::Error::from)?;
                    let o = furrow::allocate::output::FrontierOutput {
                        currency,
                        tail_level: problem.tail_level,
                        points: pts,
                    };
                    furrow::output::render(&o, format.into())?
                }
                SweepOver::Budget => {
                    let pts = furrow::allocate::budget_sweep::budget_sweep(&problem, points, &opts)
                        .map_err(furrow::Error::from)?;
                    let o = furrow::allocate::budget_sweep::BudgetSweepOutput {
                        currency,
                        tail_level: problem.tail_level,
                        max_tail_loss: problem.max_tail_loss,
                        points: pts,
                    };
                    furrow::output::render(&o, format.into())?
                }
            };
            out(&text)?;
        }
        Command::Stress {
            plan,
            presets,
            optimize_under,
            stress_weight,
            sim,
            format,
        } => {
            if !(stress_weight.is_finite() && (0.0..=1.0).contains(&stress_weight)) {
                return Err(furrow::Error::Setting(format!(
                    "--stress-weight must be a share from 0 to 1 (probability on the stressed futures), found {stress_weight}"
                ))
                .into());
            }
            let work = furrow::pipeline::Work::Stress {
                presets: presets.clone(),
                optimize_under: optimize_under.clone(),
            };
            let s = simulate_plan(&plan, Overrides::default(), &sim, work)?;
            let opts = furrow::allocate::SolveOptions::default();
            let limit = memory_limit(sim.max_memory);
            let base = s.allocate(&opts)?;
            let (chosen, split) = match &optimize_under {
                Some(name) => {
                    let c =
                        furrow::analysis::allocate_under(&s, name, stress_weight, &opts, limit)?;
                    let split = furrow::stress::optimized_split(name, stress_weight, &base, &c);
                    (c, Some(split))
                }
                None => (base, None),
            };
            let names = furrow::analysis::preset_names(&s, &presets);
            let mut report = furrow::analysis::stress_report(&s, &chosen, &names, limit)?;
            report.optimized_under = split;
            out(&furrow::output::render(&report, format.into())?)?;
        }
        Command::Track {
            plan,
            actuals,
            sim,
            format,
        } => {
            let s = simulate_plan(
                &plan,
                Overrides::default(),
                &sim,
                furrow::pipeline::Work::Track,
            )?;
            // The plan's [inputs.columns.actuals] and [inputs.numbers]
            // actuals apply to the file given here too.
            let cfg = &s.inputs.plan.file.inputs;
            let settings = furrow::inputs::table::ReadSettings::plan(
                "actuals",
                &cfg.columns.actuals,
                cfg.numbers.get("actuals"),
            );
            let (a, _) = furrow::inputs::monthly::read_with(
                &actuals,
                furrow::inputs::monthly::ACTUALS_COLUMNS,
                &settings,
                furrow::inputs::monthly::NON_NEGATIVE,
            )?;
            let mut issues = furrow::error::Issues::default();
            furrow::inputs::load::check_actuals_span(
                &a,
                s.inputs.start,
                s.inputs.plan.horizon,
                &mut issues,
            );
            if !issues.is_empty() {
                return Err(furrow::Error::Input(issues).into());
            }
            let chosen = s.allocate(&furrow::allocate::SolveOptions::default())?;
            let report = furrow::analysis::track_report(&s, &chosen, &a)?;
            out(&furrow::output::render(&report, format.into())?)?;
        }
        Command::Report {
            plan,
            out: dir,
            seed,
            scenarios,
            horizon,
            threads,
            max_memory,
            quiet,
            allow_long_run,
        } => {
            set_threads(threads)?;
            let o = Overrides {
                seed,
                scenarios,
                horizon,
                ..Overrides::default()
            };
            let inputs = furrow::inputs::load::load(&plan, &o)?;
            let bar = progress::Bar::new(inputs.plan.scenarios as u64, "simulating futures", quiet);
            let cb = |d: usize| bar.set(d as u64);
            let note = cost_note(quiet);
            let opts = furrow::report::ReportOptions {
                out: dir.as_deref(),
                max_memory: memory_limit(max_memory),
                progress: Some(&cb),
                max_seconds: max_seconds(allow_long_run),
                on_costs: Some(&note),
            };
            let report = furrow::report::run(inputs, &opts)?;
            bar.finish();
            out(&furrow::text::visible_lines(&report.terminal))?;
        }
    }
    Ok(ExitCode::SUCCESS)
}
