//! The prepared model: everything the Monte Carlo and `estimate` need,
//! computed once from the plan, the keyword list and the model files.
//!
//! Per cluster, the keywords that can move (with their volume, today's
//! log-position, difficulty and chance of no gain), each tier's central
//! log-position gain at its cumulative effort, the month the cluster starts;
//! per horizon month, the search-volume season index; the click-through
//! lookups; the economics and the spreads of the shared factors. The hot
//! loop then does only table look-ups and arithmetic.

use crate::clicks::rank_gain::start_position;
use crate::clicks::{
    ConversionRate, CtrCurve, CtrLookup, Economics, ExplicitGain, Factors, GainDistribution,
    GainScale, OrderValue, RankGainModel, Seasonality,
};
use crate::error::{Error, Result};
use crate::inputs::clusters::{ClusterSpec, GainOver, GainShape, TierSpec};
use crate::inputs::load::Inputs;
use crate::model_files;
use crate::month::Month;
use crate::plan::SeasonalityCfg;

/// One keyword as the simulation sees it.
#[derive(Debug, Clone, Copy)]
pub struct KeywordModel {
    /// Monthly search volume.
    pub volume: f64,
    /// Today's position (100 when not ranking).
    pub p0: f64,
    /// `ln p0`.
    pub ln_p0: f64,
    /// Difficulty 0 to 100.
    pub difficulty: f64,
    /// Uses the branded click-through curve.
    pub branded: bool,
    /// Chance of no gain at all under the model.
    pub no_gain: f64,
    /// Central months to full effect.
    pub months_to_full: f64,
}

/// How a tier's gain is set.
#[derive(Debug, Clone, Copy)]
pub enum TierGain {
    /// The rank-gain model at this cumulative effort.
    Model { cumulative_effort: f64 },
    /// An explicit distribution.
    Explicit(ExplicitGain),
}

/// One cluster as the simulation sees it.
#[derive(Debug, Clone)]
pub struct ClusterModel {
    /// Its name.
    pub name: String,
    /// Its tiers as planned.
    pub tiers: Vec<TierSpec>,
    /// How each tier's gain is set.
    pub gains: Vec<TierGain>,
    /// Months from the forecast start to the cluster's start (may be < 0).
    pub start_offset: i32,
    /// Its keywords.
    pub keywords: Vec<KeywordModel>,
    /// Central log-gain per keyword and tier (`k * tiers + t`), model tiers.
    pub central: Vec<f64>,
    /// Whether any tier has an explicit gain distribution.
    pub has_explicit: bool,
}

impl ClusterModel {
    /// Number of tiers.
    pub fn n_tiers(&self) -> usize {
        self.tiers.len()
    }
}

/// The whole prepared model.
#[derive(Debug, Clone)]
pub struct Model {
    /// Clusters in plan order.
    pub clusters: Vec<ClusterModel>,
    /// Forecast months.
    pub months: Vec<Month>,
    /// Search-volume season index per forecast month (mean 1 over a year).
    pub season: Vec<f64>,
    /// How the season indices were obtained.
    pub seasonality: Seasonality,
    /// Click-through curve for non-branded keywords and its lookup.
    pub ctr: CtrCurve,
    /// Lookup of `ctr`.
    pub ctr_lookup: CtrLookup,
    /// Click-through curve for branded keywords.
    pub ctr_branded: CtrCurve,
    /// Lookup of `ctr_branded`.
    pub ctr_branded_lookup: CtrLookup,
    /// The rank-gain model.
    pub rank: RankGainModel,
    /// Spreads of the shared factors.
    pub factors: Factors,
    /// Conversion, order value and margin.
    pub economics: Economics,
    /// Where each model came from.
    pub origins: Vec<(String, String)>,
    /// How the non-branded click-through curve was chosen when the plan
    /// gives a query export (fitted, or the named curve kept, and why).
    pub ctr_choice: Option<CtrChoice>,
}

/// The outcome of fitting the plan's query export: which curve is used and
/// the errors that decided it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CtrChoice {
    /// The query export.
    pub queries: String,
    /// True when the fitted curve is used, false when the named one is kept.
    pub fitted: bool,
    /// The curve used, in words.
    pub curve: String,
    /// `isotonic` or `power-law` (none when the fit failed).
    pub fit: Option<String>,
    /// The fit's leave-one-bin-out RMSE of CTR.
    pub fit_cv_rmse: Option<f64>,
    /// The named curve's RMSE of CTR over the same held-out bins.
    pub named_curve_rmse: Option<f64>,
    /// CTR at position 1 of the curve used.
    pub ctr_at_1: f64,
    /// Why this curve.
    pub reason: String,
}

impl Model {
    /// Number of (cluster, tier) slots.
    pub fn slots(&self) -> usize {
        self.clusters.iter().map(ClusterModel::n_tiers).sum()
    }

    /// Horizon in months.
    pub fn horizon(&self) -> usize {
        self.months.len()
    }

    /// `(cluster, tier)` of every slot, in order.
    pub fn slot_index(&self) -> Vec<(usize, usize)> {
        self.clusters
            .iter()
            .enumerate()
            .flat_map(|(c, cl)| (0..cl.n_tiers()).map(move |t| (c, t)))
            .collect()
    }

    /// The id `cluster/tier` (tier numbered from 1) of a slot.
    pub fn slot_id(&self, c: usize, t: usize) -> String {
        format!("{}/{}", self.clusters[c].name, t + 1)
    }
}

/// A model file's problem names that file; any other problem of the click
/// models (data too short for a seasonal shape, ...) is not about a model
/// file and says so in its own words.
fn model_err(e: crate::clicks::ClicksError) -> Error {
    use crate::clicks::ClicksError as C;
    match &e {
        C::Parse { origin, .. } | C::Invalid { origin, .. } => Error::Model {
            origin: origin.clone(),
            message: e.to_string(),
        },
        _ => Error::Unsupported(e.to_string()),
    }
}

/// A problem of a value the plan (or a cluster file) gave, named at `key`
/// of `file`.
fn plan_err<'a>(
    file: &'a str,
    key: &'static str,
) -> impl Fn(crate::clicks::ClicksError) -> Error + 'a {
    move |e| {
        use crate::clicks::ClicksError as C;
        let text = e.to_string();
        let text = match &e {
            C::Invalid { origin, .. } | C::Parse { origin, .. } => text
                .strip_prefix(origin.as_str())
                .and_then(|t| t.strip_prefix(": "))
                .map(str::to_string)
                .unwrap_or(text),
            _ => text,
        };
        Error::input(file, None, Some((key, 0)), &text)
    }
}

/// The model files a plan names, parsed, with where each came from.
type LoadedModels = (
    CtrCurve,
    CtrCurve,
    RankGainModel,
    Vec<(String, String)>,
    Option<CtrChoice>,
);

/// Fits the site's click-through curve to the plan's query export, as
/// `furrow ctr fit` does, with the named curve as the fallback: positions
/// whose bin has fewer than 100 impressions follow the named curve's shape
/// (scaled to meet the fit), and the named curve is kept whole when its
/// error over the held-out bins is not larger than the fit's
/// cross-validated error, or when the fit cannot be made.
fn fit_queries(
    inputs: &Inputs,
    named: &CtrCurve,
    named_origin: &str,
) -> Result<Option<(CtrCurve, CtrChoice)>> {
    use crate::clicks::ctr_fit;
    let m = &inputs.plan.file.models;
    let Some(rows) = &inputs.queries else {
        return Ok(None);
    };
    if m.fit_ctr == Some(false) {
        return Ok(None);
    }
    let plan_file = inputs.plan.path.display().to_string();
    let brand = m
        .brand
        .as_deref()
        .map(ctr_fit::brand_regex)
        .transpose()
        .map_err(|e| {
            let text = e.to_string();
            let text = text.strip_prefix("--brand: ").unwrap_or(&text).to_string();
            Error::input(&plan_file, None, Some(("models.brand", 0)), &text)
        })?;
    let queries = inputs
        .files
        .iter()
        .find(|(label, _)| label == "queries")
        .map(|(_, p)| p.display().to_string())
        .or_else(|| inputs.plan.file.inputs.queries.clone())
        .unwrap_or_else(|| "the query export".to_string());
    let kept = |reason: String, fit: Option<&ctr_fit::CtrFit>| CtrChoice {
        queries: queries.clone(),
        fitted: false,
        curve: named_origin.to_string(),
        fit: fit.map(|f| kind_name(f.chosen).to_string()),
        fit_cv_rmse: fit.and_then(ctr_fit::CtrFit::chosen_cv_rmse),
        named_curve_rmse: fit.and_then(|f| f.fallback_rmse),
        ctr_at_1: named.ctr(1.0),
        reason,
    };
    let fit = match ctr_fit::fit(rows, brand.as_ref(), named, &Default::default()) {
        Ok(f) => f,
        Err(e) => {
            let reason = format!("named curve kept: the query export could not be fitted ({e})");
            return Ok(Some((named.clone(), kept(reason, None))));
        }
    };
    let pct = |x: Option<f64>| x.map_or("-".to_string(), |v| format!("{:.2} %", v * 100.0));
    if !fit.beats_fallback() {
        let reason = match (fit.chosen_cv_rmse(), fit.fallback_rmse) {
            (Some(_), Some(_)) => format!(
                "named curve kept: cross-validation says the fit is not better (fit {} against {} for the named curve on the held-out positions)",
                pct(fit.chosen_cv_rmse()),
                pct(fit.fallback_rmse)
            ),
            _ => "named curve kept: fewer than 3 positions with 100 impressions or more, too few to show a fit is better".to_string(),
        };
        return Ok(Some((named.clone(), kept(reason, Some(&fit)))));
    }
    let kind = kind_name(fit.chosen);
    let thin = fit.bins.iter().filter(|b| b.fallback).count();
    let choice = CtrChoice {
        queries: queries.clone(),
        fitted: true,
        curve: format!(
            "fitted to {queries} ({kind}; {} queries, {} branded left out; positions with under 100 impressions follow {named_origin})",
            fit.queries_used, fit.branded_excluded
        ),
        fit: Some(kind.to_string()),
        fit_cv_rmse: fit.chosen_cv_rmse(),
        named_curve_rmse: fit.fallback_rmse,
        ctr_at_1: fit.curve.ctr(1.0),
        reason: format!(
            "fitted curve used: cross-validated RMSE {} against {} for the named curve on the held-out positions; {thin} thin position bins follow the named curve's shape",
            pct(fit.chosen_cv_rmse()),
            pct(fit.fallback_rmse)
        ),
    };
    Ok(Some((fit.curve, choice)))
}

fn kind_name(k: crate::clicks::ctr_fit::FitKind) -> &'static str {
    match k {
        crate::clicks::ctr_fit::FitKind::Isotonic => "isotonic",
        crate::clicks::ctr_fit::FitKind::PowerLaw => "power-law",
    }
}

/// Loads the model files the plan names.
fn load_models(inputs: &Inputs) -> Result<LoadedModels> {
    let m = &inputs.plan.file.models;
    let ctr_t = model_files::find(&inputs.plan, "ctr", m.ctr.as_deref().unwrap_or("default"))?;
    let br_t = model_files::find(
        &inputs.plan,
        "ctr",
        m.branded_ctr.as_deref().unwrap_or("branded"),
    )?;
    let rg_t = model_files::find(
        &inputs.plan,
        "rank-gain",
        m.rank_gain.as_deref().unwrap_or("default"),
    )?;
    let ctr = CtrCurve::from_toml_str(&ctr_t.text, &ctr_t.origin).map_err(model_err)?;
    let branded = CtrCurve::from_toml_str(&br_t.text, &br_t.origin).map_err(model_err)?;
    let rank = RankGainModel::from_toml_str(&rg_t.text, &rg_t.origin).map_err(model_err)?;
    let (ctr, choice) = match fit_queries(inputs, &ctr, &ctr_t.origin)? {
        Some((curve, choice)) => (curve, Some(choice)),
        None => (ctr, None),
    };
    let ctr_origin = match &choice {
        Some(c) if c.fitted => c.curve.clone(),
        _ => ctr_t.origin,
    };
    let origins = vec![
        ("click-through curve".into(), ctr_origin),
        ("branded click-through curve".into(), br_t.origin),
        ("rank-gain model".into(), rg_t.origin),
    ];
    Ok((ctr, branded, rank, origins, choice))
}

/// The plan's economics as a typed model.
pub fn economics(inputs: &Inputs) -> Result<Economics> {
    let e = &inputs.plan.file.economics;
    let plan_file = inputs.plan.path.display().to_string();
    let v = |x: &Option<toml::Spanned<f64>>| x.as_ref().map(|s| *s.get_ref());
    let margin = v(&e.gross_margin).unwrap_or(1.0);
    if e.from_history == Some(true) {
        return economics_from_history(inputs, margin, v(&e.order_value_spread));
    }
    let built = if let Some(vpc) = v(&e.value_per_click) {
        Economics::value_per_click(vpc, margin)
    } else {
        let rate = match (v(&e.conversion_rate), v(&e.conversions), v(&e.sessions)) {
            (Some(r), _, _) => ConversionRate::fixed(r),
            (None, Some(c), Some(s)) => ConversionRate::from_counts(c, s),
            _ => {
                return Err(Error::Setting(
                    "[economics] needs conversion_rate, or conversions and sessions".into(),
                ))
            }
        }
        .map_err(plan_err(&plan_file, "economics"))?;
        let aov = v(&e.order_value)
            .ok_or_else(|| Error::Setting("[economics] needs order_value".into()))?;
        OrderValue::new(aov, v(&e.order_value_spread))
            .and_then(|ov| Economics::new(rate, ov, margin))
    };
    built.map_err(plan_err(&plan_file, "economics"))
}

/// `[economics] from_history = true`: the conversion rate and order value
/// (or the value per click) from the history's last 12 months; see
/// [`Economics::from_history`]. The keys it replaces must not be given too.
fn economics_from_history(inputs: &Inputs, margin: f64, spread: Option<f64>) -> Result<Economics> {
    let e = &inputs.plan.file.economics;
    let plan_file = inputs.plan.path.display().to_string();
    let given: Vec<&str> = [
        ("conversion_rate", e.conversion_rate.is_some()),
        ("conversions", e.conversions.is_some()),
        ("sessions", e.sessions.is_some()),
        ("order_value", e.order_value.is_some()),
        ("value_per_click", e.value_per_click.is_some()),
    ]
    .iter()
    .filter(|k| k.1)
    .map(|k| k.0)
    .collect();
    if !given.is_empty() {
        return Err(Error::input(
            &plan_file,
            None,
            Some(("economics.from_history", 0)),
            &format!(
                "from_history = true derives the economics from the history; remove {} from [economics] or set from_history = false",
                given.join(", ")
            ),
        ));
    }
    let t = crate::check::history_totals(inputs);
    let history = inputs
        .files
        .iter()
        .find(|(label, _)| label == "history")
        .map(|(_, p)| p.display().to_string())
        .unwrap_or_else(|| "the history".to_string());
    if t.months < 12 {
        return Err(Error::input(
            &plan_file,
            None,
            Some(("economics.from_history", 0)),
            &format!(
                "from_history = true needs 12 months of history, {history} has {}",
                t.months
            ),
        ));
    }
    let Some(revenue) = t.revenue else {
        return Err(Error::input(
            &plan_file,
            None,
            Some(("economics.from_history", 0)),
            &format!(
                "from_history = true needs a revenue column with a value in each of the last 12 months of {history}"
            ),
        ));
    };
    Economics::from_history(t.clicks, t.sessions, t.conversions, revenue, spread, margin)
        .map_err(plan_err(&plan_file, "economics.from_history"))
}

fn seasonality(inputs: &Inputs) -> Result<Seasonality> {
    let cfg = inputs.plan.file.economics.seasonality.clone();
    let res = match cfg {
        None => return Ok(Seasonality::flat()),
        Some(SeasonalityCfg::Named(n)) if n == "none" => return Ok(Seasonality::flat()),
        Some(SeasonalityCfg::Indices(v)) => Seasonality::from_indices(&v),
        Some(SeasonalityCfg::Named(_)) => {
            let clicks = inputs.history.get("clicks").unwrap_or(&[]);
            let first = inputs.history.first().map(|m| m.month()).unwrap_or(1);
            Seasonality::from_history(clicks, first)
        }
    };
    let plan_file = inputs.plan.path.display().to_string();
    res.map_err(plan_err(&plan_file, "seasonality"))
}

fn tier_gains(spec: &ClusterSpec) -> Result<Vec<TierGain>> {
    let mut effort = 0.0;
    spec.tiers
        .iter()
        .map(|t| {
            effort += t.effort;
            match t.gain {
                None => Ok(TierGain::Model {
                    cumulative_effort: effort,
                }),
                Some(g) => explicit(g.shape, g.over, &spec.origin).map(TierGain::Explicit),
            }
        })
        .collect()
}

fn explicit(shape: GainShape, over: GainOver, origin: &str) -> Result<ExplicitGain> {
    let distribution = match shape {
        GainShape::Triangular { min, mode, max } => GainDistribution::triangular(min, mode, max),
        GainShape::Pert {
            min,
            mode,
            max,
            lambda,
        } => GainDistribution::pert(min, mode, max, Some(lambda)),
    }
    .map_err(plan_err(origin, "gain"))?;
    let over = match over {
        GainOver::PositionsGained => GainScale::PositionsGained,
        GainOver::FinalPosition => GainScale::FinalPosition,
    };
    let g = ExplicitGain { over, distribution };
    g.validate(origin).map_err(plan_err(origin, "gain"))?;
    Ok(g)
}

fn cluster_model(
    inputs: &Inputs,
    members: &[&crate::inputs::keywords::Keyword],
    spec: &ClusterSpec,
    rank: &RankGainModel,
) -> Result<ClusterModel> {
    let gains = tier_gains(spec)?;
    let keywords: Vec<KeywordModel> = members
        .iter()
        .map(|k| {
            let p0 = start_position(k.position);
            KeywordModel {
                volume: k.volume,
                p0,
                ln_p0: p0.ln(),
                difficulty: k.difficulty,
                branded: k.branded,
                no_gain: rank.no_gain_probability(k.difficulty),
                months_to_full: rank.months_to_full_effect(k.difficulty),
            }
        })
        .collect();
    let mut central = Vec::with_capacity(keywords.len() * gains.len());
    for k in &keywords {
        for g in &gains {
            central.push(match g {
                TierGain::Model { cumulative_effort } => {
                    rank.expected_log_gain(*cumulative_effort, k.difficulty)
                }
                TierGain::Explicit(_) => 0.0,
            });
        }
    }
    Ok(ClusterModel {
        has_explicit: gains.iter().any(|g| matches!(g, TierGain::Explicit(_))),
        name: spec.name.clone(),
        tiers: spec.tiers.clone(),
        gains,
        start_offset: spec.start.map(|s| s.since(inputs.start)).unwrap_or(0),
        keywords,
        central,
    })
}

/// Prepares the model for a loaded plan.
pub fn prepare(inputs: &Inputs) -> Result<Model> {
    let (ctr, ctr_branded, rank, origins, ctr_choice) = load_models(inputs)?;
    let economics = economics(inputs)?;
    let seasonality = seasonality(inputs)?;
    let months: Vec<Month> = (0..inputs.plan.horizon as i32)
        .map(|m| inputs.start.plus(m))
        .collect();
    let season = months
        .iter()
        .map(|m| seasonality.index(m.month()))
        .collect();
    let grouped = inputs.keywords.grouped();
    let clusters = inputs
        .clusters
        .iter()
        .map(|c| {
            let members = grouped.get(c.name.as_str()).map_or(&[][..], Vec::as_slice);
            cluster_model(inputs, members, c, &rank)
        })
        .collect::<Result<Vec<_>>>()?;
    Ok(Model {
        clusters,
        months,
        season,
        seasonality,
        ctr_lookup: CtrLookup::new(&ctr),
        ctr_branded_lookup: CtrLookup::new(&ctr_branded),
        ctr,
        ctr_branded,
        factors: rank.factors,
        rank,
        economics,
        origins,
        ctr_choice,
    })
}
