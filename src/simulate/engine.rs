//! The parallel Monte Carlo: S futures, each with its own seeded streams.
//!
//! Future `s` draws its site-wide factors from stream (seed, SITE, s) and,
//! for cluster `c`, the execution factor and then every keyword's draws from
//! stream (seed, CLUSTER, s, c). Streams depend only on (seed, s, c), never
//! on the thread that runs them, so any thread count gives the same bits.
//! rayon runs futures in parallel; each worker keeps its scratch buffers,
//! so the keyword loop allocates nothing. The result matrix holds each
//! future's incremental clicks per (cluster, tier, month) as f32 (tier
//! gains cumulative: tier t includes the tiers below it).

use super::kernel::{add_keyword, FutureContext, KernelScratch};
use super::model::Model;
use crate::clicks::sampling::standard_normal;
use crate::clicks::{KeywordDraws, SiteDraw, SiteSampler};
use crate::error::{Error, Result};
use crate::rng::{domain, stream, substream};
use rayon::prelude::*;

/// The simulated futures.
#[derive(Debug, Clone)]
pub struct Futures {
    /// Number of futures.
    pub scenarios: usize,
    /// Months per future.
    pub horizon: usize,
    /// `(cluster, tier)` of each slot.
    pub slots: Vec<(usize, usize)>,
    /// `clicks[(s * slots + j) * horizon + m]`: cumulative-tier incremental
    /// clicks of slot `j` in month `m` of future `s`.
    pub clicks: Vec<f32>,
    /// Site-wide factors of each future.
    pub site: Vec<SiteDraw>,
    /// Execution factor of each cluster in each future (`s * clusters + c`).
    pub execution: Vec<f32>,
    /// Number of clusters.
    pub clusters: usize,
}

impl Futures {
    /// Monthly clicks of slot `j` in future `s`.
    pub fn monthly(&self, s: usize, j: usize) -> &[f32] {
        let n = self.slots.len();
        let at = (s * n + j) * self.horizon;
        &self.clicks[at..at + self.horizon]
    }

    /// Total clicks of slot `j` over the horizon in future `s`.
    pub fn total(&self, s: usize, j: usize) -> f64 {
        self.monthly(s, j).iter().map(|&v| v as f64).sum()
    }
}

/// Options of a run.
pub struct RunOptions<'a> {
    /// Number of futures.
    pub scenarios: usize,
    /// Seed.
    pub seed: u64,
    /// Memory limit in bytes for the result matrices.
    pub max_memory: u64,
    /// Called with the number of futures finished so far (from any thread).
    pub progress: Option<&'a (dyn Fn(usize) + Sync)>,
}

/// Bytes a `simulate` run of `scenarios` futures will hold at its peak
/// (see [`super::budget`] for the other commands).
pub fn memory_estimate(model: &Model, scenarios: usize) -> u64 {
    let job = super::budget::Job::Simulate { dump: false };
    super::budget::memory(&job, &super::budget::Sizes::of(model, scenarios)).bytes
}

/// Refuses a run that would exceed `max_memory`, naming the largest count that fits.
pub fn check_memory(model: &Model, scenarios: usize, max_memory: u64) -> Result<()> {
    let job = super::budget::Job::Simulate { dump: false };
    super::budget::check_memory(
        &job,
        &super::budget::Sizes::of(model, scenarios),
        max_memory,
    )
}

/// Half of the machine's memory (the default limit), read from /proc/meminfo;
/// 4 GiB when it cannot be read.
pub fn default_memory_limit() -> u64 {
    let total = std::fs::read_to_string("/proc/meminfo").ok().and_then(|t| {
        t.lines()
            .find(|l| l.starts_with("MemTotal:"))
            .and_then(|l| l.split_whitespace().nth(1))
            .and_then(|kb| kb.parse::<u64>().ok())
    });
    total.map(|kb| kb * 1024 / 2).unwrap_or(4 << 30)
}

struct Scratch {
    kernel: KernelScratch,
    acc: Vec<f64>,
}

/// Runs the Monte Carlo.
pub fn run(model: &Model, opts: &RunOptions) -> Result<Futures> {
    check_memory(model, opts.scenarios, opts.max_memory)?;
    let site = draw_sites(model, opts, &[])?;
    Ok(drive(model, opts, site, |sc, s, site, out, exec_out| {
        one_future(model, opts.seed, s, site, sc, out, exec_out)
    }))
}

/// Runs `one` on every future in parallel, each with its worker's scratch,
/// its site draw and its rows of the result matrices, reporting progress;
/// collects the futures.
fn drive(
    model: &Model,
    opts: &RunOptions,
    site: Vec<SiteDraw>,
    one: impl Fn(&mut Scratch, usize, &SiteDraw, &mut [f32], &mut [f32]) + Sync,
) -> Futures {
    let slots = model.slot_index();
    let (h, n, nc) = (model.horizon(), slots.len(), model.clusters.len());
    let max_tiers = model
        .clusters
        .iter()
        .map(|c| c.n_tiers())
        .max()
        .unwrap_or(0);
    let mut clicks = vec![0f32; opts.scenarios * n * h];
    let mut execution = vec![0f32; opts.scenarios * nc];
    let done = std::sync::atomic::AtomicUsize::new(0);
    clicks
        .par_chunks_mut((n * h).max(1))
        .zip(execution.par_chunks_mut(nc.max(1)))
        .enumerate()
        .for_each_init(
            || Scratch {
                kernel: KernelScratch::new(h),
                acc: vec![0.0; max_tiers * h],
            },
            |scratch, (s, (out, exec_out))| {
                one(scratch, s, &site[s], out, exec_out);
                if let Some(p) = opts.progress {
                    let d = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
                    if d.is_multiple_of(256) || d == opts.scenarios {
                        p(d);
                    }
                }
            },
        );
    Futures {
        scenarios: opts.scenarios,
        horizon: h,
        slots,
        clicks,
        site,
        execution,
        clusters: nc,
    }
}

/// The site sampler of `model`.
fn site_sampler(model: &Model) -> Result<SiteSampler> {
    model
        .factors
        .site_sampler(&model.economics)
        .map_err(|e| Error::Model {
            origin: "factors".into(),
            message: e.to_string(),
        })
}

/// The site draws of an earlier run (same seed and futures) and the
/// sampler that drew them, for [`rerun`] to copy the factors it shares.
#[derive(Clone, Copy)]
pub struct SiteSource<'a> {
    pub sampler: SiteSampler,
    pub draws: &'a [SiteDraw],
}

impl<'a> SiteSource<'a> {
    /// The site draws of `futures`, a run of `model`.
    pub fn of(model: &Model, futures: &'a Futures) -> Result<SiteSource<'a>> {
        Ok(SiteSource {
            sampler: site_sampler(model)?,
            draws: &futures.site,
        })
    }
}

/// Every future's site-wide draws of `model`, from stream (seed, SITE, s),
/// copying each factor whose distribution one of `earlier` (runs with the
/// same seed and futures) shares ([`SiteSampler::draw_reusing`]), all of
/// them when one sampler is the same: the same bits as drawing them all.
fn draw_sites(model: &Model, opts: &RunOptions, earlier: &[SiteSource]) -> Result<Vec<SiteDraw>> {
    let sampler = site_sampler(model)?;
    if let Some(same) = earlier.iter().find(|e| e.sampler == sampler) {
        return Ok(same.draws.to_vec());
    }
    let samplers: Vec<SiteSampler> = earlier.iter().map(|e| e.sampler).collect();
    let reuse = sampler.reuse_from(&samplers);
    Ok((0..opts.scenarios)
        .into_par_iter()
        .map(|s| {
            let rng = &mut stream(opts.seed, domain::SITE, s as u64);
            sampler.draw_reusing(rng, &reuse, |i| &earlier[i].draws[s])
        })
        .collect())
}

/// Whether two site draws place the same ranking shock (the only site-wide
/// draw the keyword loop sees).
fn same_shock(a: &SiteDraw, b: &SiteDraw) -> bool {
    a.shock == b.shock
        && a.shock_log_loss.to_bits() == b.shock_log_loss.to_bits()
        && a.shock_month_share.to_bits() == b.shock_month_share.to_bits()
}

/// Where [`rerun`] takes a cluster's keyword sums from: an earlier run
/// of a variant of the same model (same seed, futures, clusters and tiers)
/// whose keyword loop is identical for this cluster up to the search
/// volumes, which were `volume_ratio` times smaller (the loop is linear in
/// volume).
#[derive(Clone, Copy)]
pub struct Source<'a> {
    pub futures: &'a Futures,
    pub volume_ratio: f64,
}

/// What [`rerun`] does with one cluster.
#[derive(Clone, Copy)]
pub enum ClusterRun<'a> {
    /// Simulate its keywords again: the first `tiers` tiers (the rows of
    /// the tiers above are zeros; tier t does not depend on them).
    Simulate { tiers: usize },
    /// Copy and rescale its keyword sums from an earlier run.
    Copy(Source<'a>),
    /// Leave it out: its clicks are zeros (for a caller that reads only
    /// other clusters, such as the stress test of an allocation that does
    /// not fund this one).
    Skip,
}

/// The Monte Carlo of `model`, re-running the keyword loop only where it
/// can differ from earlier runs.
///
/// Every cluster draws from its own stream (seed, CLUSTER, s, c), so a
/// cluster whose keyword loop a variant leaves alone gives the same keyword
/// sums in every future; only the site-wide multipliers (click-through and
/// volume factors, drawn here from `model`'s own sampler) and the volume
/// ratio change them. Cluster `c` is copied and rescaled from its source
/// ([`ClusterRun::Copy`]), simulated in full ([`ClusterRun::Simulate`]) or
/// left at zero ([`ClusterRun::Skip`]); a copied cluster is simulated all
/// the same in every future of a future whose ranking shock differs from the
/// source's or whose source multiplier is not positive (nothing to rescale
/// from). The result equals [`run`] on `model` up to the rounding of the
/// stored f32 values (one or two units in the last place). The site
/// factors whose distribution one of `earlier` runs shares are copied from
/// its draws instead of drawn again (same bits).
pub fn rerun(
    model: &Model,
    opts: &RunOptions,
    plan: &[ClusterRun],
    earlier: &[SiteSource],
) -> Result<Futures> {
    check_memory(model, opts.scenarios, opts.max_memory)?;
    let slots = model.slot_index();
    let (h, n, nc) = (model.horizon(), slots.len(), model.clusters.len());
    let fits = plan.len() == nc
        && earlier.iter().all(|e| e.draws.len() == opts.scenarios)
        && plan.iter().all(|r| match r {
            ClusterRun::Copy(src) => {
                let f = src.futures;
                f.scenarios == opts.scenarios
                    && f.horizon == h
                    && f.slots == slots
                    && f.clusters == nc
            }
            _ => true,
        });
    if !fits {
        return Err(Error::Setting(format!(
            "internal: a partial re-run needs earlier runs of {} futures, {} slots and {} months, one source per cluster",
            opts.scenarios, n, h
        )));
    }
    let site = draw_sites(model, opts, earlier)?;
    Ok(drive(model, opts, site, |sc, s, site, out, exec_out| {
        rerun_future(model, opts.seed, plan, s, site, sc, out, exec_out)
    }))
}

/// One future of [`rerun`].
#[allow(clippy::too_many_arguments)]
fn rerun_future(
    model: &Model,
    seed: u64,
    plan: &[ClusterRun],
    s: usize,
    new: &SiteDraw,
    scratch: &mut Scratch,
    out: &mut [f32],
    exec_out: &mut [f32],
) {
    let h = model.horizon();
    let (chunk, nc) = (out.len(), model.clusters.len());
    let new_scale = new.ctr_factor * new.volume_factor;
    let ctx = FutureContext::new(new, h);
    let mut slot = 0;
    for (c, cl) in model.clusters.iter().enumerate() {
        let nt = cl.n_tiers();
        let (at, to) = (slot * h, (slot + nt) * h);
        slot += nt;
        let want = match plan[c] {
            ClusterRun::Skip => 0,
            ClusterRun::Simulate { tiers } => tiers.min(nt),
            ClusterRun::Copy(src) => {
                let old = &src.futures.site[s];
                let old_scale = old.ctr_factor * old.volume_factor;
                let ratio = new_scale / old_scale * src.volume_ratio;
                if old_scale > 0.0 && ratio.is_finite() && same_shock(old, new) {
                    let from = &src.futures.clicks[s * chunk + at..s * chunk + to];
                    for (o, &b) in out[at..to].iter_mut().zip(from) {
                        *o = (b as f64 * ratio) as f32;
                    }
                    if let Some(e) = exec_out.get_mut(c) {
                        *e = src.futures.execution[s * nc + c];
                    }
                    continue;
                }
                nt
            }
        };
        // A left-out cluster is zeros with its execution factor drawn
        // (the kernel's loop over no tiers).
        let acc = &mut scratch.acc[..want * h];
        let exec = cluster_sums(model, seed, s, c, &ctx, &mut scratch.kernel, acc);
        out[at..to].fill(0.0);
        for (o, a) in out[at..to].iter_mut().zip(acc.iter()) {
            *o = (a * new_scale) as f32;
        }
        if let Some(e) = exec_out.get_mut(c) {
            *e = exec as f32;
        }
    }
}

/// Cluster `c`'s keyword sums in future `s` (before the site-wide
/// multipliers) into `acc` (`tiers x horizon`, as many tiers as it has
/// rows for; none skips the keywords); returns the execution factor.
fn cluster_sums(
    model: &Model,
    seed: u64,
    s: usize,
    c: usize,
    ctx: &FutureContext,
    kernel: &mut KernelScratch,
    acc: &mut [f64],
) -> f64 {
    let cl = &model.clusters[c];
    let mut rng = substream(seed, domain::CLUSTER, s as u64, c as u64);
    let exec = model.factors.execution_factor(standard_normal(&mut rng));
    acc.fill(0.0);
    if acc.is_empty() {
        return exec;
    }
    for k in 0..cl.keywords.len() {
        let draws = KeywordDraws::draw(&mut rng);
        add_keyword(model, cl, k, &draws, exec, ctx, kernel, acc);
    }
    exec
}

fn one_future(
    model: &Model,
    seed: u64,
    s: usize,
    site: &SiteDraw,
    sc: &mut Scratch,
    out: &mut [f32],
    exec_out: &mut [f32],
) {
    one_future_generic(model, seed, s, site, sc, out, exec_out, |a| a as f32);
}

#[allow(clippy::too_many_arguments)]
fn one_future_generic<T: Copy>(
    model: &Model,
    seed: u64,
    s: usize,
    site: &SiteDraw,
    sc: &mut Scratch,
    out: &mut [T],
    exec_out: &mut [f32],
    store: impl Fn(f64) -> T,
) {
    let h = model.horizon();
    let ctx = FutureContext::new(site, h);
    let scale = site.ctr_factor * site.volume_factor;
    let mut slot = 0;
    for (c, cl) in model.clusters.iter().enumerate() {
        let nt = cl.n_tiers();
        let acc = &mut sc.acc[..nt * h];
        let exec = cluster_sums(model, seed, s, c, &ctx, &mut sc.kernel, acc);
        if let Some(e) = exec_out.get_mut(c) {
            *e = exec as f32;
        }
        for (o, a) in out[slot * h..(slot + nt) * h].iter_mut().zip(acc.iter()) {
            *o = store(a * scale);
        }
        slot += nt;
    }
}

/// One future's cumulative-tier monthly clicks in f64 (slot-major, then
/// month), exactly as the engine computes them before storing f32. For
/// checks of the f32 storage and for re-simulating single futures.
pub fn future_f64(model: &Model, seed: u64, s: usize, site: &SiteDraw) -> Vec<f64> {
    let h = model.horizon();
    let max_tiers = model
        .clusters
        .iter()
        .map(|c| c.n_tiers())
        .max()
        .unwrap_or(0);
    let mut scratch = Scratch {
        kernel: KernelScratch::new(h),
        acc: vec![0.0; max_tiers * h],
    };
    let mut out = vec![0f64; model.slots() * h];
    let mut exec = vec![0f32; model.clusters.len()];
    one_future_generic(
        model,
        seed,
        s,
        site,
        &mut scratch,
        &mut out,
        &mut exec,
        |a| a,
    );
    out
}
