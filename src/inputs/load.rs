//! Loads a plan and every input it names, in one pass that reports every
//! problem of every file together, then cross-checks them (clusters in the
//! plan against clusters in the keyword list, the forecast start against the
//! history, the search-interest index against the history's months).

use super::clusters::{self, ClusterSpec};
use super::keywords::{self, KeywordSet};
use super::monthly::{self, MonthlySeries};
use super::number::NumberFormat;
use super::queries::{self, QueryRow};
use super::table::ReadSettings;
use crate::error::{Error, Issues, Result};
use crate::inputs::number::echo;
use crate::month::Month;
use crate::plan::{self, Overrides, Plan};
use std::path::{Path, PathBuf};

/// Fewest months of history any forecast accepts.
pub const MIN_HISTORY: usize = 12;
/// Months of history the seasonal models need (two full seasons).
pub const SEASONAL_HISTORY: usize = 24;
/// Start used only when a history file has no months (already an error).
const FALLBACK_START: Month = Month::FALLBACK;

/// A plan with all its inputs loaded and checked.
#[derive(Debug, Clone)]
pub struct Inputs {
    /// The plan.
    pub plan: Plan,
    /// Monthly history.
    pub history: MonthlySeries,
    /// Search-interest index, if given.
    pub interest: Option<MonthlySeries>,
    /// Keyword list.
    pub keywords: KeywordSet,
    /// Query export, if given.
    pub queries: Option<Vec<QueryRow>>,
    /// Clusters with funding tiers.
    pub clusters: Vec<ClusterSpec>,
    /// Actuals observed since the start, if given.
    pub actuals: Option<MonthlySeries>,
    /// First forecast month.
    pub start: Month,
    /// Things the user should know that do not stop the run.
    pub warnings: Vec<String>,
    /// Every input file read (label, path), for reproducibility hashes.
    pub files: Vec<(String, PathBuf)>,
    /// The number format of each CSV file read: plan key, file, format.
    pub numbers: Vec<(String, String, NumberFormat)>,
}

/// Loads the plan at `path`, applies `overrides`, and loads its inputs.
pub fn load(path: &Path, overrides: &Overrides) -> Result<Inputs> {
    let mut plan = plan::load(path)?;
    plan.apply(overrides)?;
    load_inputs(plan)
}

fn required_path(
    plan: &Plan,
    key: &str,
    value: &Option<String>,
    issues: &mut Issues,
) -> Option<PathBuf> {
    match value {
        Some(v) => Some(plan.resolve(v)),
        None => {
            let msg = format!("[inputs] needs {key} = \"FILE\" (a path relative to the plan)");
            issues.add(&plan.path.display().to_string(), None, Some((key, 0)), msg);
            None
        }
    }
}

/// Keeps a file's input problems for the report of every file together
/// (other errors stop at once), and records the number format the file
/// was read with in `numbers` under `key`.
fn keep_read<T>(
    key: &str,
    path: &Path,
    r: Result<(T, NumberFormat)>,
    numbers: &mut Vec<(String, String, NumberFormat)>,
    issues: &mut Issues,
) -> Result<Option<T>> {
    match r {
        Ok((v, f)) => {
            numbers.push((key.to_string(), path.display().to_string(), f));
            Ok(Some(v))
        }
        Err(Error::Input(i)) => {
            issues.extend(i);
            Ok(None)
        }
        Err(e) => Err(e),
    }
}

/// Loads every input of an already-read plan.
pub fn load_inputs(plan: Plan) -> Result<Inputs> {
    let mut issues = Issues::default();
    let cfg = plan.file.inputs.clone();
    let cols = &cfg.columns;
    let nums = &cfg.numbers;
    let mut numbers = Vec::new();
    let numbers_ref = &mut numbers;
    let set = |key: &str, map| ReadSettings::plan(key, map, nums.get(key));
    let mut files = vec![("plan".to_string(), plan.path.clone())];
    let hist_path = required_path(&plan, "history", &cfg.history, &mut issues);
    let kw_path = required_path(&plan, "keywords", &cfg.keywords, &mut issues);
    let history = match &hist_path {
        Some(p) => keep_read(
            "history",
            p,
            monthly::read_with(
                p,
                monthly::HISTORY_COLUMNS,
                &set("history", &cols.history),
                monthly::NON_NEGATIVE,
            ),
            numbers_ref,
            &mut issues,
        )?,
        None => None,
    };
    let keywords = match &kw_path {
        Some(p) => keep_read(
            "keywords",
            p,
            keywords::read_with(p, &set("keywords", &cols.keywords)),
            numbers_ref,
            &mut issues,
        )?,
        None => None,
    };
    let mut opt = Optional {
        plan: &plan,
        files: &mut files,
        numbers: numbers_ref,
        issues: &mut issues,
    };
    let interest = opt.read(&cfg.interest, "interest", |p| {
        monthly::read_with(
            p,
            monthly::INDEX_COLUMNS,
            &set("interest", &cols.interest),
            monthly::INDEX_RANGE,
        )
    })?;
    let queries = opt.read(&cfg.queries, "queries", |p| {
        queries::read_with(p, &set("queries", &cols.queries))
    })?;
    let actuals = opt.read(&cfg.actuals, "actuals", |p| {
        monthly::read_with(
            p,
            monthly::ACTUALS_COLUMNS,
            &set("actuals", &cols.actuals),
            monthly::NON_NEGATIVE,
        )
    })?;
    let csv_clusters = opt.read(&cfg.clusters, "clusters", |p| {
        clusters::read_with(p, &set("clusters", &cols.clusters))
    })?;
    for (label, p) in [("history", &hist_path), ("keywords", &kw_path)] {
        if let Some(p) = p {
            files.insert(1, (label.to_string(), p.clone()));
        }
    }
    let (Some(history), Some(keywords)) = (history, keywords) else {
        return Err(Error::Input(issues));
    };
    // A cluster file that could not be read is already reported; the plan
    // then is not "without clusters".
    let clusters_unread = cfg.clusters.is_some() && csv_clusters.is_none();
    let mut clusters = clusters::from_plan(&plan);
    merge_clusters(&mut clusters, csv_clusters.unwrap_or_default(), &mut issues);
    let mut inputs = Inputs {
        start: history
            .last()
            .map(|m| m.plus(1))
            .or(plan.start)
            .unwrap_or(FALLBACK_START),
        plan,
        history,
        interest,
        keywords,
        queries,
        clusters,
        actuals,
        warnings: Vec::new(),
        files,
        numbers,
    };
    inputs.cross_check(&mut issues, clusters_unread);
    let inputs = issues.into_result(inputs)?;
    inputs.check_minimums_fit()?;
    Ok(inputs)
}

/// What reading an optional input needs.
struct Optional<'a> {
    plan: &'a Plan,
    files: &'a mut Vec<(String, PathBuf)>,
    numbers: &'a mut Vec<(String, String, NumberFormat)>,
    issues: &'a mut Issues,
}

impl Optional<'_> {
    /// Reads the file the plan names under `[inputs] <label>`, if any.
    fn read<T>(
        &mut self,
        value: &Option<String>,
        label: &str,
        read: impl FnOnce(&Path) -> Result<(T, NumberFormat)>,
    ) -> Result<Option<T>> {
        let Some(v) = value else { return Ok(None) };
        let p = self.plan.resolve(v);
        self.files.push((label.to_string(), p.clone()));
        keep_read(label, &p, read(&p), self.numbers, self.issues)
    }
}

fn merge_clusters(clusters: &mut Vec<ClusterSpec>, more: Vec<ClusterSpec>, issues: &mut Issues) {
    let mut at: std::collections::HashMap<String, usize> = clusters
        .iter()
        .enumerate()
        .map(|(i, c)| (c.name.clone(), i))
        .collect();
    for c in more {
        if let Some(prev) = at.get(&c.name).map(|&i| &clusters[i]) {
            let msg = format!("the cluster '{}' is defined both in the plan ({}) and in the cluster file ({}); define it once", echo(&c.name), prev.origin, c.origin);
            let (file, line, (key, col)) = &prev.defined_at;
            issues.add(file, Some(*line), Some((key, *col)), msg);
        } else {
            at.insert(c.name.clone(), clusters.len());
            clusters.push(c);
        }
    }
}

impl Inputs {
    fn cross_check(&mut self, issues: &mut Issues, clusters_unread: bool) {
        self.check_history(issues);
        self.check_clusters(issues, clusters_unread);
        self.check_interest();
        self.check_actuals(issues);
    }

    fn check_history(&mut self, issues: &mut Issues) {
        let n = self.history.len();
        let file = self.history.file.clone();
        if n < MIN_HISTORY {
            issues.add(&file, None, None, format!("only {n} months of history; at least {MIN_HISTORY} are needed to forecast (24 or more for seasonal models)"));
            return;
        }
        if n < SEASONAL_HISTORY {
            self.warnings.push(format!("only {n} months of history: seasonal models need {SEASONAL_HISTORY} (two full seasons) and are unavailable"));
        }
        self.check_outliers();
        let after = self.history.last().map(|m| m.plus(1));
        self.start = match (self.plan.start, after) {
            (Some(s), Some(a)) => {
                if s < a {
                    self.warnings.push(format!("the forecast starts at {s}, before the history ends ({}); the overlapping months are forecast anyway", a.plus(-1)));
                } else if s > a {
                    self.warnings.push(format!("the forecast starts at {s}, {} months after the history ends; the gap is forecast first", s.since(a)));
                }
                s
            }
            (Some(s), None) => s,
            (None, Some(a)) => a,
            (None, None) => self.start,
        };
    }

    /// Warns of months far from their neighbours and season, in every
    /// numeric column of the history (see [`super::outliers`]).
    fn check_outliers(&mut self) {
        let Some(first) = self.history.first() else {
            return;
        };
        for (column, values) in &self.history.columns {
            for o in super::outliers::find(values, first) {
                let month = first.plus(o.index as i32);
                self.warnings.push(format!(
                    "{}, column '{column}', month {month}: {} is far from the months around it (about {} expected from its neighbours and its season; {:.0} robust deviations, the limit is {:.0}); check the export, as a forecast follows such a month",
                    self.history.file,
                    crate::text::int(o.value),
                    crate::text::int(o.expected),
                    o.deviations.min(1e6),
                    super::outliers::LIMIT,
                ));
            }
        }
    }

    fn check_clusters(&mut self, issues: &mut Issues, clusters_unread: bool) {
        let plan_file = self.plan.path.display().to_string();
        if self.clusters.is_empty() && !clusters_unread {
            issues.add(&plan_file, None, None, "the plan defines no clusters to fund; add [[cluster]] tables with tiers (or [inputs] clusters = \"FILE\")");
        }
        let in_keywords: std::collections::HashSet<&String> =
            self.keywords.clusters.iter().collect();
        let funded: std::collections::HashSet<&String> =
            self.clusters.iter().map(|c| &c.name).collect();
        for c in &self.clusters {
            let (file, line, (key, col)) = &c.defined_at;
            if !in_keywords.contains(&c.name) {
                let known = self
                    .keywords
                    .clusters
                    .iter()
                    .take(12)
                    .cloned()
                    .collect::<Vec<_>>()
                    .join(", ");
                issues.add(
                    file,
                    Some(*line),
                    Some((key, *col)),
                    format!(
                        "the cluster '{}' has no keywords in {}; expected one of the clusters there: {known}",
                        echo(&c.name), self.keywords.file
                    ),
                );
            }
        }
        let unfunded: Vec<&String> = self
            .keywords
            .clusters
            .iter()
            .filter(|k| !funded.contains(k))
            .collect();
        if !unfunded.is_empty() {
            let n: usize = self
                .keywords
                .keywords
                .iter()
                .filter(|k| {
                    self.keywords
                        .clusters
                        .get(k.cluster as usize)
                        .is_some_and(|name| !funded.contains(name))
                })
                .count();
            self.warnings.push(format!("{n} keywords in {} clusters without funding tiers are not simulated (they stay in the baseline): {}", unfunded.len(), unfunded.iter().take(5).map(|s| s.as_str()).collect::<Vec<_>>().join(", ")));
        }
        for c in &self.clusters {
            if c.start
                .is_some_and(|s| s.since(self.start) >= self.plan.horizon as i32)
            {
                self.warnings.push(format!("the cluster '{}' starts after the horizon ends; it cannot add anything in this forecast", echo(&c.name)));
            }
        }
    }

    /// The smallest fraction each tier must be funded at: its own
    /// min_fraction, raised to that of any tier above it (which builds on it).
    fn effective_minimums(c: &ClusterSpec) -> Vec<f64> {
        let mut eff: Vec<f64> = c.tiers.iter().map(|t| t.min_fraction).collect();
        for i in (0..eff.len().saturating_sub(1)).rev() {
            eff[i] = eff[i].max(eff[i + 1]);
        }
        eff
    }

    /// Refuses, before any simulation, must-fund tiers (min_fraction) that
    /// their lower tiers' max_fraction or the budget cannot satisfy: no
    /// allocation exists then (exit code 3 for the budget).
    fn check_minimums_fit(&self) -> Result<()> {
        let plan_file = self.plan.path.display().to_string();
        let mut issues = Issues::default();
        let mut cost = 0.0;
        let mut must: Vec<String> = Vec::new();
        for c in &self.clusters {
            let eff = Self::effective_minimums(c);
            for (i, (t, m)) in c.tiers.iter().zip(&eff).enumerate() {
                if *m > t.max_fraction + 1e-12 {
                    let (file, line, (key, col)) = &c.defined_at;
                    issues.add(file, Some(*line), Some((key, *col)), format!("the cluster '{}': tier {} is capped at max_fraction {} but a tier above it, which builds on it, must be funded at least {m}; expected max_fraction of at least {m}", echo(&c.name), i + 1, t.max_fraction));
                }
                if *m > 0.0 {
                    cost += m * t.cost;
                    must.push(format!("{}/{}", c.name, i + 1));
                }
            }
        }
        issues.into_result(())?;
        let budget = self.plan.budget;
        if cost > budget * (1.0 + 1e-12) {
            let cur = &self.plan.currency;
            return Err(Error::Infeasible(format!(
                "{plan_file}: the must-fund tiers (min_fraction > 0: {}) cost {} but the budget is {}, so no allocation can fund them; raise the budget ([budget] total or --budget) to at least {}, or lower their min_fraction",
                must.join(", "),
                crate::text::money(cost, cur),
                crate::text::money(budget, cur),
                crate::text::money(cost.ceil(), cur),
            )));
        }
        Ok(())
    }

    fn check_interest(&mut self) {
        let Some(idx) = &self.interest else { return };
        let covers = self.history.months.iter().all(|m| idx.months.contains(m));
        if !covers {
            self.warnings.push(format!("the search-interest index ({}) does not cover every history month; the index-growth method is unavailable", idx.file));
        }
    }

    fn check_actuals(&mut self, issues: &mut Issues) {
        let Some(a) = &self.actuals else { return };
        check_actuals_span(a, self.start, self.plan.horizon, issues);
    }

    /// Months of history.
    pub fn history_months(&self) -> usize {
        self.history.len()
    }
}

/// Actuals must run from the forecast start and end within the horizon
/// (the months observed so far); adds an issue naming the file otherwise.
pub fn check_actuals_span(a: &MonthlySeries, start: Month, horizon: usize, issues: &mut Issues) {
    let end = start.plus(horizon as i32 - 1);
    if let (Some(f), Some(l)) = (a.first(), a.last()) {
        if f != start || l > end {
            issues.add(&a.file, None, Some(("month", 1)), format!("actuals must run from the forecast start {start} and end by {end}; found {f} to {l}"));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::inputs::clusters::TierSpec;

    fn tier(min_fraction: f64) -> TierSpec {
        TierSpec {
            label: String::new(),
            cost: 1.0,
            effort: 1.0,
            gain: None,
            min_fraction,
            max_fraction: 1.0,
        }
    }

    #[test]
    fn a_must_fund_tier_raises_the_tiers_it_builds_on() {
        let c = ClusterSpec {
            name: "c".into(),
            start: None,
            tiers: vec![tier(0.0), tier(0.0), tier(1.0), tier(0.5)],
            origin: String::new(),
            defined_at: Default::default(),
        };
        assert_eq!(Inputs::effective_minimums(&c), vec![1.0, 1.0, 1.0, 0.5]);
    }
}
