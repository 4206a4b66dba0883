//! `furrow report`: the whole job on a plan, written to a report folder.
//!
//! Check, baseline, simulate, allocate, target odds, stress, variance
//! drivers, tracking when the plan names actuals, and the frontier; written
//! as a plain-text summary for people, `summary.json` with every figure, CSV
//! tables, the workbook `furrow-plan.xlsx` for finance, and `index.html`, one
//! self-contained page with the charts (drawn by `html`, `figures`, `risk`
//! and `charts` from this same summary). The folder is written beside its
//! final place and renamed into it, so a failure or an interrupt leaves the
//! previous report intact.

mod assumptions;
mod charts;
mod figures;
pub mod folder;
pub mod histogram;
pub mod html;
mod risk;
mod sections;
mod svg;
pub mod workbook;

use crate::allocate::output::{AllocationOutput, FrontierOutput};
use crate::allocate::{self, SolveOptions};
use crate::analysis;
use crate::check;
use crate::error::{Error, Result};
use crate::fsio::{write_atomic, write_text};
use crate::inputs::load::Inputs;
use crate::output::{csv, json, num, Render, Rows};
use crate::pipeline::{self, SimOptions, Simulated};
use crate::simulate::summarise_futures;
use crate::stats::quantiles;
use crate::text::{int, money};
use serde::Serialize;
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// What a report run produced.
#[derive(Debug, Clone)]
pub struct ReportOutput {
    /// The folder written.
    pub dir: PathBuf,
    /// A short summary for the terminal.
    pub terminal: String,
}

/// Options of a report run.
pub struct ReportOptions<'a> {
    /// Output folder (default reports/<plan name>/).
    pub out: Option<&'a Path>,
    /// Memory limit in bytes, for the whole report's estimated peak.
    pub max_memory: u64,
    /// Progress callback for the simulation (futures done).
    pub progress: Option<&'a (dyn Fn(usize) + Sync)>,
    /// Longest estimated run accepted, in seconds (`None`: any).
    pub max_seconds: Option<f64>,
    /// Told the estimated memory and run time before the simulation starts.
    pub on_costs: Option<&'a (dyn Fn(&crate::simulate::budget::Costs) + Sync)>,
}

impl Default for ReportOptions<'_> {
    fn default() -> Self {
        Self {
            out: None,
            max_memory: crate::simulate::engine::default_memory_limit(),
            progress: None,
            max_seconds: None,
            on_costs: None,
        }
    }
}

/// One month of the forecast: baseline and baseline plus the funded plan.
#[derive(Debug, Clone, Serialize)]
pub struct ForecastRow {
    pub month: String,
    pub baseline_mean: f64,
    pub baseline_p10: f64,
    pub baseline_p50: f64,
    pub baseline_p90: f64,
    pub with_plan_p10: f64,
    pub with_plan_p50: f64,
    pub with_plan_p90: f64,
}

/// A SHA-256 of one input file.
#[derive(Debug, Clone, Serialize)]
pub struct InputHash {
    pub label: String,
    pub path: String,
    pub sha256: String,
}

/// Reproducibility facts.
#[derive(Debug, Clone, Serialize)]
pub struct Reproducibility {
    pub tool_version: String,
    pub seed: u64,
    pub scenarios: usize,
    pub inputs: Vec<InputHash>,
    pub run_seconds: f64,
    pub models: Vec<(String, String)>,
}

/// Everything the report holds.
#[derive(Debug, Serialize)]
pub struct Summary {
    pub plan: String,
    pub currency: String,
    pub decision: String,
    pub cautions: Vec<String>,
    pub check: check::Summary,
    pub baseline: crate::baseline::run::BaselineOutput,
    pub forecast: Vec<ForecastRow>,
    pub allocation: crate::allocate::Allocation,
    pub best_expected_return: crate::allocate::Allocation,
    pub clusters: crate::simulate::SimSummary,
    pub target: Option<crate::target::TargetReport>,
    pub stress: crate::stress::StressReport,
    pub drivers: crate::drivers::DriverReport,
    pub tracking: Option<crate::track::TrackReport>,
    pub frontier: Vec<crate::allocate::FrontierPoint>,
    pub reproducibility: Reproducibility,
    /// Monthly history of clicks: (month, clicks).
    pub history: Vec<(String, f64)>,
    /// Conversion, order value and margin used.
    pub economics: crate::clicks::Economics,
    /// How the click-through curve was chosen from the plan's query export.
    pub click_through: Option<crate::simulate::model::CtrChoice>,
    /// The chosen allocation's net return over the futures, binned.
    pub return_distribution: histogram::Histogram,
}

/// The cautions every report states.
pub const CAUTIONS: &[&str] = &[
    "A forecast is an estimate under stated assumptions, not a promise: the figures come from the model files listed below and from the inputs as given.",
    "The rank-gain constants are rules of thumb (common practice, no source); calibrate them from your own past campaigns. The variance drivers show which assumptions move the result most.",
    "A budget decision should rest on your own judgment and your finance team's rules as well as on these numbers.",
];

fn hash_file(p: &Path) -> Result<String> {
    let bytes = std::fs::read(p).map_err(|source| Error::Read {
        path: p.to_path_buf(),
        source,
    })?;
    Ok(Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect())
}

/// The plan, its input files and its models folder: never inside a folder
/// the report replaces.
fn protected_paths(inputs: &Inputs) -> Vec<PathBuf> {
    let plan = &inputs.plan;
    let mut paths: Vec<PathBuf> = inputs.files.iter().map(|(_, p)| p.clone()).collect();
    paths.push(plan.path.clone());
    match &plan.file.models.dir {
        Some(d) => paths.push(plan.resolve(d)),
        None => paths.push(plan.dir.join("models")),
    }
    paths
}

/// Bins asked for in the net-return histogram (about; the width is rounded
/// to a nice number).
const HISTOGRAM_BINS: usize = 40;

/// The history's clicks by month (empty when it has no clicks column).
fn history(inputs: &Inputs) -> Vec<(String, f64)> {
    let clicks = inputs.history.get("clicks").unwrap_or(&[]);
    inputs
        .history
        .months
        .iter()
        .zip(clicks)
        .map(|(m, c)| (m.to_string(), *c))
        .collect()
}

fn forecast_rows(s: &Simulated, fractions: &[f64]) -> Result<Vec<ForecastRow>> {
    let h = s.futures.horizon;
    let totals = crate::target::monthly_totals(
        &s.futures,
        &s.baseline_paths,
        fractions,
        crate::target::Metric::Clicks,
    )?;
    let rows = s
        .baseline
        .output
        .forecast
        .iter()
        .enumerate()
        .map(|(m, b)| {
            let mut col: Vec<f64> = totals.chunks(h).map(|r| r[m]).collect();
            let [p10, p50, p90] = quantiles(&mut col, [0.1, 0.5, 0.9]);
            ForecastRow {
                month: b.month.to_string(),
                baseline_mean: b.mean,
                baseline_p10: b.p10,
                baseline_p50: b.p50,
                baseline_p90: b.p90,
                with_plan_p10: p10,
                with_plan_p50: p50,
                with_plan_p90: p90,
            }
        })
        .collect();
    Ok(rows)
}

fn decision(
    s: &Simulated,
    a: &crate::allocate::Allocation,
    t: Option<&crate::target::TargetReport>,
) -> String {
    let cur = &s.inputs.plan.currency;
    let funded: Vec<String> = a
        .allocation
        .iter()
        .filter(|i| i.fraction > 1e-6)
        .map(|i| {
            if i.fraction > 0.999 {
                i.id.clone()
            } else {
                format!("{} ({:.0} %)", i.id, i.fraction * 100.0)
            }
        })
        .collect();
    let what = if funded.is_empty() {
        "fund nothing".to_string()
    } else {
        format!("fund {}", funded.join(", "))
    };
    let share = crate::text::tail_share(a.tail_level);
    let tail = if a.tail_loss >= 0.0 {
        format!(
            "in the worst {share} of futures the average loss is {}",
            money(a.tail_loss, cur)
        )
    } else {
        format!(
            "even the worst {share} of futures gain {} on average",
            money(-a.tail_loss, cur)
        )
    };
    let limit = a
        .max_tail_loss
        .map(|l| format!(" (limit {})", money(l, cur)))
        .unwrap_or_default();
    let mut text = format!(
        "With a budget of {}, {what}, spending {}. Expected net return over the horizon: {} (ROI {}); {tail}{limit}; chance of a loss {}.",
        money(a.budget, cur),
        money(a.budget_used, cur),
        money(a.expected_net_return, cur),
        a.expected_roi.map(|r| format!("{r:.2}")).unwrap_or_else(|| "n/a".into()),
        crate::text::chance(a.chance_of_loss, 0),
    );
    if let Some(t) = t {
        let unit = if t.metric == crate::target::Metric::Revenue {
            cur.to_string()
        } else {
            "clicks".into()
        };
        text += &format!(
            " Chance of reaching the target of {} {unit}: {} with this plan, {} doing nothing, {} with the best expected-return plan.",
            int(t.target),
            crate::text::chance(t.chosen.odds.chance, 0),
            crate::text::chance(t.do_nothing.odds.chance, 0),
            crate::text::chance(t.best.odds.chance, 0)
        );
    }
    text
}

/// The answers computed beside the stress runs.
struct Answers {
    best: crate::allocate::Allocation,
    target: Option<crate::target::TargetReport>,
    drivers: crate::drivers::DriverReport,
    tracking: Option<crate::track::TrackReport>,
    frontier: Vec<crate::allocate::FrontierPoint>,
    net: Vec<f64>,
    forecast: Vec<ForecastRow>,
    clusters: crate::simulate::SimSummary,
    inputs: Vec<InputHash>,
}

/// Runs the whole job and writes the report folder.
pub fn run(inputs: Inputs, opts: &ReportOptions) -> Result<ReportOutput> {
    let started = Instant::now();
    let dir = opts
        .out
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("reports").join(&inputs.plan.name));
    let protected = protected_paths(&inputs);
    // Refused before any work: a folder furrow may not replace.
    folder::check_destination(&dir, &protected)?;
    let check = check::summarise(&inputs);
    let s = pipeline::simulate_with(
        inputs,
        &SimOptions {
            max_memory: opts.max_memory,
            progress: opts.progress,
        },
        &pipeline::Limits {
            work: pipeline::Work::Report,
            max_seconds: opts.max_seconds,
            on_costs: opts.on_costs,
        },
    )?;
    let solve = SolveOptions::default();
    let problem = s.problem();
    let chosen = allocate::solve(&problem, &solve)?;
    let fractions = s.fractions(&chosen);
    let names = analysis::preset_names(&s, &[]);
    // The stress runs keep both cores busy only while they simulate; the
    // other answers (each reading the same futures) fill the gaps.
    let (stress, rest) = rayon::join(
        || analysis::stress_report(&s, &chosen, &names, opts.max_memory),
        || -> Result<_> {
            let best = analysis::best_allocation(&problem, &solve)?;
            let target = analysis::target_report(&s, &chosen, &best)?;
            let drivers = analysis::drivers_report(&s, &chosen)?;
            let tracking = match &s.inputs.actuals {
                Some(a) => Some(analysis::track_report(&s, &chosen, a)?),
                None => None,
            };
            // A frontier point that fails comes back missing; if the ends of
            // the frontier fail, the report says so instead of stopping.
            let frontier = allocate::frontier(&problem, 11, &solve).unwrap_or_else(|e| {
                vec![allocate::FrontierPoint::missing(
                    chosen.tail_loss,
                    format!("the frontier could not be traced: {e}"),
                )]
            });
            let net = crate::stress::portfolio_net(&s.model, &s.futures, &fractions)?;
            let forecast = forecast_rows(&s, &fractions)?;
            let clusters = summarise_futures(
                &s.model,
                &s.futures,
                s.inputs.plan.seed,
                &s.inputs.plan.currency,
            );
            let inputs = s
                .inputs
                .files
                .iter()
                .map(|(label, p)| {
                    Ok(InputHash {
                        label: label.clone(),
                        path: p.display().to_string(),
                        sha256: hash_file(p)?,
                    })
                })
                .collect::<Result<Vec<_>>>()?;
            Ok(Answers {
                best,
                target,
                drivers,
                tracking,
                frontier,
                net,
                forecast,
                clusters,
                inputs,
            })
        },
    );
    let stress = stress?;
    let a = rest?;
    let summary = Summary {
        plan: s.inputs.plan.name.clone(),
        currency: s.inputs.plan.currency.clone(),
        decision: decision(&s, &chosen, a.target.as_ref()),
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
        check,
        baseline: s.baseline.output.clone(),
        forecast: a.forecast,
        clusters: a.clusters,
        allocation: chosen,
        best_expected_return: a.best,
        target: a.target,
        stress,
        drivers: a.drivers,
        tracking: a.tracking,
        frontier: a.frontier,
        reproducibility: Reproducibility {
            tool_version: env!("CARGO_PKG_VERSION").to_string(),
            seed: s.inputs.plan.seed,
            scenarios: s.inputs.plan.scenarios,
            inputs: a.inputs,
            run_seconds: started.elapsed().as_secs_f64(),
            models: s.model.origins.clone(),
        },
        history: history(&s.inputs),
        economics: s.model.economics,
        click_through: s.model.ctr_choice.clone(),
        return_distribution: histogram::histogram(&a.net, HISTOGRAM_BINS),
    };
    write_folder(&dir, &summary, &protected)?;
    let terminal = format!(
        "{}\n\nReport written to {}/ (index.html, summary.txt, summary.json, CSV tables and furrow-plan.xlsx).\n",
        summary.decision,
        dir.display()
    );
    Ok(ReportOutput { dir, terminal })
}

fn forecast_table(rows: &[ForecastRow]) -> Rows {
    Rows {
        header: [
            "month",
            "baseline_mean",
            "baseline_p10",
            "baseline_p50",
            "baseline_p90",
            "with_plan_p10",
            "with_plan_p50",
            "with_plan_p90",
        ]
        .map(String::from)
        .to_vec(),
        rows: rows
            .iter()
            .map(|r| {
                vec![
                    r.month.clone(),
                    num(r.baseline_mean),
                    num(r.baseline_p10),
                    num(r.baseline_p50),
                    num(r.baseline_p90),
                    num(r.with_plan_p10),
                    num(r.with_plan_p50),
                    num(r.with_plan_p90),
                ]
            })
            .collect(),
    }
}

fn text_summary(sm: &Summary) -> String {
    let cur = &sm.currency;
    let alloc = AllocationOutput {
        allocation: sm.allocation.clone(),
        currency: cur.clone(),
    };
    let mut t = format!("furrow report: {}\n\n{}\n\n", sm.plan, sm.decision);
    t += "== Cautions\n";
    for c in &sm.cautions {
        t += &format!("- {c}\n");
    }
    t += &format!("\n== Inputs\n{}\n", check::render(&sm.check));
    t += &format!("== Baseline (no new work)\n{}\n", sm.baseline.table());
    t += "== Forecast with the plan (clicks per month)\n";
    let rows: Vec<Vec<String>> = sm
        .forecast
        .iter()
        .map(|r| {
            vec![
                r.month.clone(),
                int(r.baseline_p50),
                int(r.with_plan_p10),
                int(r.with_plan_p50),
                int(r.with_plan_p90),
            ]
        })
        .collect();
    use crate::text::Align::*;
    t += &crate::text::table(
        &[
            "month",
            "baseline P50",
            "with plan P10",
            "with plan P50",
            "with plan P90",
        ],
        &[Left, Right, Right, Right, Right],
        &rows,
    );
    t += &format!("\n== Allocation\n{}\n", alloc.table());
    t += &format!("== Per cluster and tier\n{}\n", sm.clusters.table());
    if let Some(tr) = &sm.target {
        t += &format!("== Target\n{}\n", tr.table());
    }
    t += &format!("== Stress tests\n{}\n", sm.stress.table());
    t += &format!("== What drives the variance\n{}\n", sm.drivers.table());
    if let Some(tr) = &sm.tracking {
        t += &format!("== Tracking\n{}\n", tr.table());
    }
    let fr = FrontierOutput {
        currency: cur.clone(),
        tail_level: sm.allocation.tail_level,
        points: sm.frontier.clone(),
    };
    t += &format!("== Efficient frontier\n{}\n", fr.table());
    t += &format!(
        "== Reproducibility\nfurrow {}, seed {}, {} futures, run time {:.2} s\n",
        sm.reproducibility.tool_version,
        sm.reproducibility.seed,
        int(sm.reproducibility.scenarios as f64),
        sm.reproducibility.run_seconds
    );
    for h in &sm.reproducibility.inputs {
        t += &format!("  {} {} ({})\n", h.sha256, h.path, h.label);
    }
    for (what, origin) in &sm.reproducibility.models {
        t += &format!("  {what}: {origin}\n");
    }
    t += "\nindex.html shows these figures with charts; summary.json, the CSV files and furrow-plan.xlsx hold every figure.\n";
    t
}

/// Writes the report into a temporary folder beside `dir` and puts it in
/// place (see [`folder`]); on failure the temporary folder is removed and
/// whatever was at `dir` is left as it was.
fn write_folder(dir: &Path, sm: &Summary, protected: &[PathBuf]) -> Result<()> {
    folder::remove_stale(dir);
    let tmp = folder::temp_dir(dir);
    let result = std::fs::create_dir(&tmp)
        .map_err(|source| Error::Write {
            path: dir.to_path_buf(),
            source,
        })
        .and_then(|_| write_text(&tmp.join(folder::MARKER), &folder::marker_text(&sm.plan)))
        .and_then(|_| write_files(&tmp, sm))
        .map_err(|e| folder::name_the_folder(e, &tmp, dir))
        .and_then(|_| folder::swap_in(&tmp, dir, protected));
    if result.is_err() && tmp.exists() {
        let _ = folder::remove_report(&tmp);
        let _ = std::fs::remove_dir(&tmp);
    }
    result
}

fn write_files(tmp: &Path, sm: &Summary) -> Result<()> {
    // The workbook (the slowest file to build) is built and written beside
    // the others.
    let (workbook, rest) = rayon::join(
        || -> Result<()> { write_atomic(&tmp.join(workbook::FILE_NAME), &workbook::workbook(sm)?) },
        || write_text_files(tmp, sm),
    );
    rest.and(workbook)
}

fn write_text_files(tmp: &Path, sm: &Summary) -> Result<()> {
    let cur = sm.currency.clone();
    let alloc = AllocationOutput {
        allocation: sm.allocation.clone(),
        currency: cur.clone(),
    };
    let fr = FrontierOutput {
        currency: cur,
        tail_level: sm.allocation.tail_level,
        points: sm.frontier.clone(),
    };
    // Names reach the text file as they are shown on a terminal (control
    // characters escaped), since it is read with one.
    write_text(
        &tmp.join("summary.txt"),
        &crate::text::visible_lines(&text_summary(sm)),
    )?;
    write_text(&tmp.join("index.html"), &html::page(sm))?;
    write_text(&tmp.join("summary.json"), &json::to_string(sm)?)?;
    write_text(&tmp.join("allocation.csv"), &csv::to_string(&alloc.rows())?)?;
    write_text(
        &tmp.join("clusters.csv"),
        &csv::to_string(&sm.clusters.rows())?,
    )?;
    write_text(&tmp.join("frontier.csv"), &csv::to_string(&fr.rows())?)?;
    write_text(&tmp.join("stress.csv"), &csv::to_string(&sm.stress.rows())?)?;
    write_text(
        &tmp.join("forecast.csv"),
        &csv::to_string(&forecast_table(&sm.forecast))?,
    )?;
    write_text(
        &tmp.join("drivers.csv"),
        &csv::to_string(&sm.drivers.rows())?,
    )?;
    if let Some(t) = &sm.target {
        write_text(&tmp.join("target.csv"), &csv::to_string(&t.rows())?)?;
    }
    if let Some(t) = &sm.tracking {
        write_text(&tmp.join("tracking.csv"), &csv::to_string(&t.rows())?)?;
    }
    Ok(())
}
