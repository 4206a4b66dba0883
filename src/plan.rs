//! The plan file (TOML): what to read, what to fund, and the limits.
//!
//! One file names the inputs (paths relative to the plan), the forecast start
//! and horizon, currency, economics, target, budget and risk limit, clusters
//! and their funding tiers, the model files, seed and scenario count. It is
//! parsed strictly: an unknown key is an error that names the key, its line
//! and column, and suggests the closest valid key. Values are range-checked
//! here, once, so the rest of the library can trust them. docs/plan.md
//! documents every key.

use crate::error::{Error, Issues, Result};
use crate::inputs::number::echo;
use crate::month::Month;
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use toml::Spanned;

/// A number or a percentage of the budget (`"15%"`).
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum Amount {
    /// An amount in the plan's currency.
    Number(f64),
    /// Text such as `"15%"` (of the budget).
    Text(String),
}

/// `[inputs]`: the input files, relative to the plan.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct InputsCfg {
    pub history: Option<String>,
    pub interest: Option<String>,
    pub keywords: Option<String>,
    pub queries: Option<String>,
    pub clusters: Option<String>,
    pub actuals: Option<String>,
    #[serde(default)]
    pub columns: ColumnsCfg,
    /// `[inputs.numbers]`: each file's number format, when its cells
    /// cannot tell.
    #[serde(default)]
    pub numbers: NumbersCfg,
}

/// `[inputs.numbers]`: how a file writes 1234.5 (`"1,234.5"`, `"1.234,5"`,
/// `"1 234,5"`, ...), for files whose cells do not settle the decimal mark.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NumbersCfg {
    pub history: Option<Spanned<String>>,
    pub interest: Option<Spanned<String>>,
    pub keywords: Option<Spanned<String>>,
    pub queries: Option<Spanned<String>>,
    pub clusters: Option<Spanned<String>>,
    pub actuals: Option<Spanned<String>>,
}

impl NumbersCfg {
    fn entries(&self) -> [(&'static str, &Option<Spanned<String>>); 6] {
        [
            ("history", &self.history),
            ("interest", &self.interest),
            ("keywords", &self.keywords),
            ("queries", &self.queries),
            ("clusters", &self.clusters),
            ("actuals", &self.actuals),
        ]
    }

    /// The declared decimal mark of the file under `[inputs] <key>`.
    pub fn get(&self, key: &str) -> Option<crate::inputs::number::Decimal> {
        self.entries()
            .iter()
            .find(|(k, _)| *k == key)
            .and_then(|(_, v)| v.as_ref())
            .and_then(|v| crate::inputs::number::Decimal::parse_declared(v.get_ref()))
    }
}

/// `[inputs.columns.*]`: header names of exports that differ from ours.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ColumnsCfg {
    #[serde(default)]
    pub history: BTreeMap<String, String>,
    #[serde(default)]
    pub interest: BTreeMap<String, String>,
    #[serde(default)]
    pub keywords: BTreeMap<String, String>,
    #[serde(default)]
    pub queries: BTreeMap<String, String>,
    #[serde(default)]
    pub clusters: BTreeMap<String, String>,
    #[serde(default)]
    pub actuals: BTreeMap<String, String>,
}

/// `[models]`: which model files to use.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelsCfg {
    /// Folder holding `ctr/`, `rank-gain/` and `stress/` (relative to the plan).
    pub dir: Option<String>,
    /// Click-through curve for non-branded keywords (a name in `ctr/` or a path).
    pub ctr: Option<String>,
    /// Click-through curve for branded keywords.
    pub branded_ctr: Option<String>,
    /// Rank-gain model (a name in `rank-gain/` or a path).
    pub rank_gain: Option<String>,
    /// Stress presets to run in the report (names in `stress/`).
    pub stress: Option<Vec<String>>,
    /// Case-insensitive pattern of the site's brand: queries of the query
    /// export that match it are left out when the curve is fitted.
    pub brand: Option<String>,
    /// Fit the click-through curve to `[inputs] queries` (default true when
    /// a query export is given); false keeps the `ctr` curve as named.
    pub fit_ctr: Option<bool>,
}

/// `[baseline]`: how the no-new-work forecast is made.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BaselineCfg {
    /// One of the methods of `furrow baseline --method`.
    pub method: Option<String>,
    /// Bootstrap residuals instead of Gaussian errors for the intervals.
    pub bootstrap: Option<bool>,
}

/// Seasonality of search volume: from the history, none, or 12 indices.
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum SeasonalityCfg {
    /// `"history"` or `"none"`.
    Named(String),
    /// Twelve monthly indices, January first (normalised to mean 1).
    Indices(Vec<f64>),
}

/// `[economics]`: from clicks to money.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EconomicsCfg {
    pub conversion_rate: Option<Spanned<f64>>,
    pub conversions: Option<Spanned<f64>>,
    pub sessions: Option<Spanned<f64>>,
    pub order_value: Option<Spanned<f64>>,
    pub order_value_spread: Option<Spanned<f64>>,
    pub gross_margin: Option<Spanned<f64>>,
    pub value_per_click: Option<Spanned<f64>>,
    pub seasonality: Option<SeasonalityCfg>,
    /// Derive the conversion rate and order value (or the value per click)
    /// from the last 12 months of the history instead of the keys above.
    pub from_history: Option<bool>,
}

/// `[target]`: what the business wants over the horizon.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TargetCfg {
    /// `"clicks"` or `"revenue"`.
    pub metric: Spanned<String>,
    /// An absolute total over the horizon.
    pub amount: Option<Spanned<f64>>,
    /// Growth over the last 12 months of history (0.15 = 15 %).
    pub growth: Option<Spanned<f64>>,
}

/// `[budget]`: the money and the risk limit.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BudgetCfg {
    pub total: Spanned<f64>,
    pub tail_level: Option<Spanned<f64>>,
    pub max_tail_loss: Option<Spanned<Amount>>,
}

/// An explicit rank-gain distribution for one tier.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GainCfg {
    /// `"triangular"` or `"pert"`.
    pub distribution: Spanned<String>,
    /// `"positions-gained"` (default) or `"final-position"`.
    pub over: Option<Spanned<String>>,
    pub min: f64,
    pub mode: f64,
    pub max: f64,
    /// PERT shape (default 4).
    pub lambda: Option<f64>,
}

/// One funding tier of a cluster.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TierCfg {
    /// A short label ("refresh", "new hub", ...).
    pub label: Option<String>,
    /// What this tier adds to the cost, in the plan's currency.
    pub cost: Spanned<f64>,
    /// Effort this tier adds (1 = a standard unit of work).
    pub effort: Spanned<f64>,
    /// Replace the rank-gain model by an explicit distribution.
    pub gain: Option<GainCfg>,
    /// Smallest funded fraction (1 = must fund).
    pub min_fraction: Option<Spanned<f64>>,
    /// Largest funded fraction.
    pub max_fraction: Option<Spanned<f64>>,
}

/// `[[cluster]]`: a keyword cluster and its funding tiers.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ClusterCfg {
    /// As in the keyword list's `cluster` column.
    pub name: Spanned<String>,
    /// Month work starts (default: the forecast start).
    pub start: Option<Spanned<String>>,
    /// Funding tiers, cheapest first; each builds on the one before.
    pub tiers: Vec<TierCfg>,
}

/// The plan file as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlanFile {
    pub name: Option<Spanned<String>>,
    pub currency: Option<String>,
    pub start: Option<Spanned<String>>,
    pub horizon: Option<Spanned<i64>>,
    pub seed: Option<u64>,
    pub scenarios: Option<Spanned<i64>>,
    #[serde(default)]
    pub inputs: InputsCfg,
    #[serde(default)]
    pub models: ModelsCfg,
    #[serde(default)]
    pub baseline: BaselineCfg,
    #[serde(default)]
    pub economics: EconomicsCfg,
    pub target: Option<TargetCfg>,
    pub budget: BudgetCfg,
    #[serde(default)]
    pub cluster: Vec<ClusterCfg>,
}

/// Defaults.
pub const DEFAULT_HORIZON: usize = 12;
/// Default number of simulated futures.
pub const DEFAULT_SCENARIOS: usize = 10_000;
/// Default tail level (the worst 10 %).
pub const DEFAULT_TAIL_LEVEL: f64 = 0.90;
/// Default seed.
pub const DEFAULT_SEED: u64 = 20_261_201;

/// A loaded, checked plan.
#[derive(Debug, Clone)]
pub struct Plan {
    /// The plan file's path.
    pub path: PathBuf,
    /// Its folder (inputs are relative to it).
    pub dir: PathBuf,
    /// The plan's name (defaults to the file stem).
    pub name: String,
    /// The raw text (for line and column of later problems).
    pub text: String,
    /// Where each line of `text` starts (line and column in O(log n)).
    pub lines: LineIndex,
    /// The parsed file.
    pub file: PlanFile,
    /// Forecast start (None: the month after the last history month).
    pub start: Option<Month>,
    /// Months forecast.
    pub horizon: usize,
    /// Seed of all random streams.
    pub seed: u64,
    /// Number of simulated futures.
    pub scenarios: usize,
    /// Currency label.
    pub currency: String,
    /// Tail level for CVaR.
    pub tail_level: f64,
    /// Total budget.
    pub budget: f64,
    /// Largest tolerated average loss in the tail (None = no limit).
    pub max_tail_loss: Option<f64>,
}

/// Command-line values that override the plan.
#[derive(Debug, Clone, Default)]
pub struct Overrides {
    pub seed: Option<u64>,
    pub scenarios: Option<usize>,
    pub budget: Option<f64>,
    pub tail_level: Option<f64>,
    pub max_tail_loss: Option<String>,
    pub horizon: Option<usize>,
}

/// Reads and checks a plan file.
pub fn load(path: &Path) -> Result<Plan> {
    let bytes = std::fs::read(path).map_err(|source| Error::Read {
        path: path.to_path_buf(),
        source,
    })?;
    let file_name = path.display().to_string();
    if let Some(pos) = bytes.iter().position(|&b| b == 0) {
        let line = 1 + bytes[..pos].iter().filter(|&&b| b == b'\n').count();
        return Err(Error::Plan {
            file: file_name,
            line,
            column: 1,
            message: "the plan looks binary (it contains NUL bytes); expected a TOML text file"
                .into(),
        });
    }
    let text = String::from_utf8(bytes).map_err(|e| {
        let pos = e.utf8_error().valid_up_to();
        let (line, column) = line_col(&String::from_utf8_lossy(&e.into_bytes()[..pos]), pos);
        Error::Plan {
            file: file_name.clone(),
            line,
            column,
            message: "the plan is not valid UTF-8 text; expected a TOML file saved as UTF-8".into(),
        }
    })?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text).to_string();
    check_text(&file_name, &text)?;
    let file: PlanFile = toml::from_str(&text).map_err(|e| toml_error(&file_name, &text, &e))?;
    build(path, text, file)
}

/// Refuses an empty plan with a message that says what a plan holds, before
/// the TOML parser reports a missing key.
fn check_text(file: &str, text: &str) -> Result<()> {
    if text.trim().is_empty() {
        return Err(Error::Plan {
            file: file.to_string(),
            line: 1,
            column: 1,
            message: "the plan is empty; expected a TOML file with at least [inputs] (history, keywords) and [budget] total (furrow init DIR writes a commented template)".into(),
        });
    }
    Ok(())
}

fn build(path: &Path, text: String, file: PlanFile) -> Result<Plan> {
    let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
    let dir = if dir.as_os_str().is_empty() {
        PathBuf::from(".")
    } else {
        dir
    };
    let name = file
        .name
        .as_ref()
        .map(|n| n.get_ref().clone())
        .unwrap_or_else(|| {
            path.file_stem()
                .map(|s| s.to_string_lossy().to_string())
                .unwrap_or_else(|| "plan".into())
        });
    let mut plan = Plan {
        path: path.to_path_buf(),
        dir,
        name,
        currency: file.currency.clone().unwrap_or_else(|| "EUR".into()),
        start: None,
        horizon: DEFAULT_HORIZON,
        seed: file.seed.unwrap_or(DEFAULT_SEED),
        scenarios: DEFAULT_SCENARIOS,
        tail_level: DEFAULT_TAIL_LEVEL,
        budget: *file.budget.total.get_ref(),
        max_tail_loss: None,
        lines: LineIndex::new(&text),
        text,
        file,
    };
    let mut issues = Issues::default();
    plan.check(&mut issues);
    issues.into_result(plan)
}

/// Longest plan name in bytes: the report folder's temporary name adds
/// about twenty bytes, and file systems allow 255.
pub const MAX_NAME_BYTES: usize = 200;

/// Checks that a plan name can be the report folder's name: one path
/// component, not empty, `.` or `..`, with no separator or control
/// character, at most [`MAX_NAME_BYTES`] bytes.
pub fn check_folder_name(name: &str) -> std::result::Result<(), String> {
    let shown: String = name.chars().flat_map(char::escape_debug).take(60).collect();
    let why = if name.trim().is_empty() {
        "the name is empty".to_string()
    } else if name == "." || name == ".." {
        format!("the name '{name}' is not a folder name")
    } else if name.contains(['/', '\\']) {
        format!("the name '{shown}' holds a path separator")
    } else if name.chars().any(char::is_control) {
        format!("the name '{shown}' holds a control character")
    } else if name.trim() != name {
        format!("the name '{shown}' starts or ends with a space")
    } else if name.len() > MAX_NAME_BYTES {
        format!("the name is {} bytes long", name.len())
    } else {
        return Ok(());
    };
    Err(format!("{why}; the plan's name becomes the report folder reports/<name>/, so it must be one folder name: not empty, '.' or '..', without '/', '\\' or control characters, at most {MAX_NAME_BYTES} bytes (for example name = \"my-site-2027\")"))
}

/// The byte offset where each line of a text starts, so that many
/// problems in a long plan each find their line by a binary search instead
/// of counting from the top (loading stays linear in the plan's size).
#[derive(Debug, Clone, Default)]
pub struct LineIndex {
    starts: Vec<usize>,
}

impl LineIndex {
    /// Indexes `text`.
    pub fn new(text: &str) -> LineIndex {
        let starts = std::iter::once(0)
            .chain(text.match_indices('\n').map(|(i, _)| i + 1))
            .collect();
        LineIndex { starts }
    }

    /// Line and 1-based column (in characters) of byte `pos` in `text`,
    /// the text this index was made from.
    pub fn line_col(&self, text: &str, pos: usize) -> (usize, usize) {
        let pos = pos.min(text.len());
        let line = self.starts.partition_point(|&s| s <= pos).max(1);
        let start = self.starts.get(line - 1).copied().unwrap_or(0).min(pos);
        let col = text
            .get(start..pos)
            .map(|l| l.chars().count())
            .unwrap_or(pos - start)
            + 1;
        (line, col)
    }
}

impl Plan {
    /// Line and 1-based column of byte `pos` of the plan's text.
    pub fn line_col(&self, pos: usize) -> (usize, usize) {
        self.lines.line_col(&self.text, pos)
    }
}

/// Line and 1-based column of byte `pos` in `text`.
pub fn line_col(text: &str, pos: usize) -> (usize, usize) {
    let pos = pos.min(text.len());
    let before = text.get(..pos).unwrap_or(text);
    let line = before.matches('\n').count() + 1;
    let col = before
        .rsplit('\n')
        .next()
        .map(|l| l.chars().count())
        .unwrap_or(0)
        + 1;
    (line, col)
}

fn toml_error(file: &str, text: &str, e: &toml::de::Error) -> Error {
    let raw = e.message().trim().to_string();
    if e.span().is_none() && raw.contains("recursion limit") {
        // The parser gives no place for this one: point at the deepest line.
        let (line, depth) = deepest_line(text);
        return Error::Plan {
            file: file.to_string(),
            line,
            column: 1,
            message: format!("a key or value nested {depth} levels deep, more than the parser allows; a plan nests only a few levels, such as [inputs.columns.keywords]"),
        };
    }
    let (line, column) = e.span().map(|s| line_col(text, s.start)).unwrap_or((1, 1));
    Error::Plan {
        file: file.to_string(),
        line,
        column,
        message: plain_words(&suggest(&raw)),
    }
}

/// The 1-based line whose key or value nests deepest (dots in a dotted
/// key, or open brackets and braces), and that depth.
fn deepest_line(text: &str) -> (usize, usize) {
    let mut best = (1, 0);
    let mut open: usize = 0;
    for (i, line) in text.lines().enumerate() {
        let code = line.split('#').next().unwrap_or("");
        let key = code.split('=').next().unwrap_or("");
        let mut depth = key.matches('.').count() + 1;
        for ch in code.chars() {
            match ch {
                '[' | '{' => {
                    open += 1;
                    depth = depth.max(open);
                }
                ']' | '}' => open = open.saturating_sub(1),
                _ => {}
            }
        }
        if depth > best.1 {
            best = (i + 1, depth);
        }
    }
    best
}

/// Rewrites the parser's type names and "missing field" into the words
/// docs/plan.md uses.
fn plain_words(msg: &str) -> String {
    if let Some(key) = msg
        .strip_prefix("missing field `")
        .and_then(|r| r.strip_suffix('`'))
    {
        return format!("missing the required key '{key}'; docs/plan.md lists every key (furrow init DIR writes a template)");
    }
    let msg = msg
        .replace("expected f64", "expected a number")
        .replace("expected i64", "expected a whole number")
        .replace("expected u64", "expected a whole number of 0 or more")
        .replace("expected a boolean", "expected true or false");
    if msg.contains("untagged enum SeasonalityCfg") {
        return "expected \"history\", \"none\" or a list of 12 monthly numbers, January first"
            .to_string();
    }
    if msg.contains("untagged enum Amount") {
        return "expected an amount (a number) or a share of the budget as text, such as \"10%\""
            .to_string();
    }
    if msg == "duplicate key" {
        return "duplicate key; expected each key once".to_string();
    }
    msg
}

/// Turns serde's "unknown field `x`, expected one of `a`, `b`" into a
/// message that suggests the closest valid key.
fn suggest(raw: &str) -> String {
    let Some(rest) = raw.strip_prefix("unknown field `") else {
        return raw.to_string();
    };
    let Some((key, expected)) = rest.split_once('`') else {
        return raw.to_string();
    };
    let valid: Vec<&str> = expected.split('`').skip(1).step_by(2).collect();
    let best = valid
        .iter()
        .map(|v| (strsim::damerau_levenshtein(key, v), *v))
        .min_by_key(|(d, _)| *d);
    let hint = match best {
        Some((d, v)) if d <= 3.max(key.len() / 3) => format!("; did you mean '{v}'?"),
        _ => ".".to_string(),
    };
    format!(
        "unknown key '{key}'{hint} Valid keys here: {}",
        valid.join(", ")
    )
}

impl Plan {
    fn issue(&self, issues: &mut Issues, span: std::ops::Range<usize>, key: &str, msg: String) {
        let (line, col) = self.line_col(span.start);
        issues.add(
            &self.path.display().to_string(),
            Some(line as u64),
            Some((key, col)),
            msg,
        );
    }

    /// A problem at a key of the plan (for checks made after loading).
    pub fn error_at(&self, span: std::ops::Range<usize>, key: &str, msg: String) -> Error {
        let mut issues = Issues::default();
        self.issue(&mut issues, span, key, msg);
        Error::Input(issues)
    }

    fn range(
        &self,
        issues: &mut Issues,
        v: &Spanned<f64>,
        key: &str,
        lo: f64,
        hi: f64,
        what: &str,
    ) -> f64 {
        let x = *v.get_ref();
        if !x.is_finite() || x < lo || x > hi {
            self.issue(
                issues,
                v.span(),
                key,
                format!("{key} must be {what}, found {x}"),
            );
        }
        x
    }

    fn check(&mut self, issues: &mut Issues) {
        if let Err(why) = check_folder_name(&self.name) {
            match &self.file.name {
                Some(n) => self.issue(issues, n.span(), "name", why),
                None => issues.add(
                    &self.path.display().to_string(),
                    None,
                    Some(("name", 0)),
                    format!("{why} (the name comes from the plan file's name; set name = \"...\" in the plan)"),
                ),
            }
        }
        if let Some(s) = &self.file.start {
            match Month::parse(s.get_ref()) {
                Some(m) => self.start = Some(m),
                None => self.issue(
                    issues,
                    s.span(),
                    "start",
                    format!("start must be a month as YYYY-MM, found '{}'", s.get_ref()),
                ),
            }
        }
        if let Some(h) = &self.file.horizon {
            let v = *h.get_ref();
            if !(1..=60).contains(&v) {
                self.issue(
                    issues,
                    h.span(),
                    "horizon",
                    format!("horizon must be 1 to 60 months, found {v}"),
                );
            }
            self.horizon = v.clamp(1, 60) as usize;
        }
        if let Some(s) = &self.file.scenarios {
            let v = *s.get_ref();
            if !(100..=10_000_000).contains(&v) {
                self.issue(
                    issues,
                    s.span(),
                    "scenarios",
                    format!("scenarios must be 100 to 10,000,000, found {v}"),
                );
            }
            self.scenarios = v.clamp(100, 10_000_000) as usize;
        }
        self.check_numbers(issues);
        self.check_budget(issues);
        self.check_economics(issues);
        self.check_target(issues);
        self.check_clusters(issues);
    }

    /// Each `[inputs.numbers]` value must show how the file writes 1234.5.
    fn check_numbers(&self, issues: &mut Issues) {
        for (key, v) in self.file.inputs.numbers.entries() {
            let Some(v) = v else { continue };
            if crate::inputs::number::Decimal::parse_declared(v.get_ref()).is_none() {
                let msg = format!(
                    "[inputs.numbers] {key} must show how the file writes one thousand two hundred thirty-four and a half: \"1,234.5\" or \"1234.5\" (decimal point), \"1.234,5\", \"1 234,5\" or \"1234,5\" (decimal comma); found '{}'",
                    echo(v.get_ref())
                );
                self.issue(issues, v.span(), key, msg);
            }
        }
    }

    fn check_budget(&mut self, issues: &mut Issues) {
        let b = self.file.budget.clone();
        self.budget = self.range(
            issues,
            &b.total,
            "total",
            0.0,
            f64::MAX,
            "a non-negative amount",
        );
        let budget_ok = self.budget.is_finite() && self.budget >= 0.0;
        if self.budget == 0.0 {
            self.issue(
                issues,
                b.total.span(),
                "total",
                "total is 0, so no tier can be funded; expected a positive amount (at least the cost of the first tier you want to fund)".into(),
            );
        }
        if let Some(t) = &b.tail_level {
            self.tail_level = *t.get_ref();
            if !(self.tail_level > 0.0 && self.tail_level < 1.0) {
                self.issue(
                    issues,
                    t.span(),
                    "tail_level",
                    format!(
                        "tail_level must be between 0 and 1 (0.90 means the worst 10 %), found {}",
                        self.tail_level
                    ),
                );
            }
        }
        if let Some(m) = &b.max_tail_loss {
            match resolve_amount(m.get_ref(), self.budget) {
                Ok(v) => self.max_tail_loss = Some(v),
                // A share of a budget that is itself refused is not a second problem.
                Err(_) if !budget_ok && is_share(m.get_ref()) => {}
                Err(msg) => self.issue(issues, m.span(), "max_tail_loss", msg),
            }
        }
    }

    fn check_economics(&self, issues: &mut Issues) {
        let e = &self.file.economics;
        let unit = |v: &Option<Spanned<f64>>, key: &str, issues: &mut Issues| {
            if let Some(v) = v {
                self.range(issues, v, key, 0.0, 1.0, "between 0 and 1");
            }
        };
        unit(&e.conversion_rate, "conversion_rate", issues);
        unit(&e.gross_margin, "gross_margin", issues);
        for (v, key) in [
            (&e.conversions, "conversions"),
            (&e.sessions, "sessions"),
            (&e.order_value_spread, "order_value_spread"),
        ] {
            if let Some(v) = v {
                self.range(issues, v, key, 0.0, f64::MAX, "a non-negative number");
            }
        }
        for (v, key) in [
            (&e.order_value, "order_value"),
            (&e.value_per_click, "value_per_click"),
        ] {
            if let Some(v) = v {
                self.range(
                    issues,
                    v,
                    key,
                    f64::MIN_POSITIVE,
                    f64::MAX,
                    "a positive amount",
                );
            }
        }
        if let (Some(c), Some(s)) = (&e.conversions, &e.sessions) {
            if c.get_ref() > s.get_ref() {
                self.issue(issues, c.span(), "conversions", format!("conversions ({}) exceed sessions ({}); expected conversions no larger than sessions", c.get_ref(), s.get_ref()));
            }
        }
        self.check_economics_complete(issues);
    }

    fn check_economics_complete(&self, issues: &mut Issues) {
        let e = &self.file.economics;
        let file = self.path.display().to_string();
        let has_rate =
            e.conversion_rate.is_some() || (e.conversions.is_some() && e.sessions.is_some());
        let from_history = e.from_history == Some(true);
        if !from_history && e.value_per_click.is_none() && (!has_rate || e.order_value.is_none()) {
            issues.add(&file, None, Some(("economics", 0)), "[economics] needs a conversion rate (conversion_rate, or conversions and sessions) and an order_value, or a value_per_click, or from_history = true");
        }
        if let Some(SeasonalityCfg::Indices(v)) = &e.seasonality {
            if v.len() != 12 || v.iter().any(|x| !x.is_finite() || *x <= 0.0) {
                issues.add(&file, None, Some(("seasonality", 0)), format!("seasonality must be \"history\", \"none\" or 12 positive numbers (January first), found {} values", v.len()));
            }
        }
        if let Some(SeasonalityCfg::Named(n)) = &e.seasonality {
            if n != "history" && n != "none" {
                issues.add(
                    &file,
                    None,
                    Some(("seasonality", 0)),
                    format!(
                        "seasonality must be \"history\", \"none\" or 12 numbers, found \"{n}\""
                    ),
                );
            }
        }
    }

    fn check_target(&self, issues: &mut Issues) {
        let Some(t) = &self.file.target else { return };
        let m = t.metric.get_ref();
        if m != "clicks" && m != "revenue" {
            self.issue(
                issues,
                t.metric.span(),
                "metric",
                format!("metric must be \"clicks\" or \"revenue\", found \"{m}\""),
            );
        }
        match (&t.amount, &t.growth) {
            (Some(a), None) => {
                self.range(issues, a, "amount", 0.0, f64::MAX, "a non-negative total");
            }
            (None, Some(g)) => {
                self.range(issues, g, "growth", -1.0, 100.0, "a growth rate above -1 (0.15 = 15 %)");
            }
            (Some(a), Some(_)) => self.issue(issues, a.span(), "amount", "give either amount or growth in [target], not both".into()),
            (None, None) => self.issue(issues, t.metric.span(), "target", "[target] needs amount (a total over the horizon) or growth (over the last 12 months)".into()),
        }
    }

    fn check_clusters(&self, issues: &mut Issues) {
        let mut seen: BTreeMap<&str, ()> = BTreeMap::new();
        for c in &self.file.cluster {
            let name = c.name.get_ref();
            if seen.insert(name, ()).is_some() {
                self.issue(
                    issues,
                    c.name.span(),
                    "name",
                    format!(
                        "the cluster '{}' is defined twice; expected each cluster once",
                        echo(name)
                    ),
                );
            }
            if c.tiers.is_empty() {
                self.issue(issues, c.name.span(), "tiers", format!("the cluster '{}' has no tiers; expected at least one {{ cost = ..., effort = ... }}", echo(name)));
            }
            if let Some(s) = &c.start {
                if Month::parse(s.get_ref()).is_none() {
                    self.issue(
                        issues,
                        s.span(),
                        "start",
                        format!("start must be a month as YYYY-MM, found '{}'", s.get_ref()),
                    );
                }
            }
            for t in &c.tiers {
                self.check_tier(issues, t);
            }
        }
    }

    fn check_tier(&self, issues: &mut Issues, t: &TierCfg) {
        self.range(
            issues,
            &t.cost,
            "cost",
            0.0,
            f64::MAX,
            "a non-negative amount",
        );
        self.range(
            issues,
            &t.effort,
            "effort",
            f64::MIN_POSITIVE,
            1e6,
            "a positive number",
        );
        let lo = t
            .min_fraction
            .as_ref()
            .map(|v| self.range(issues, v, "min_fraction", 0.0, 1.0, "between 0 and 1"));
        let hi = t
            .max_fraction
            .as_ref()
            .map(|v| self.range(issues, v, "max_fraction", 0.0, 1.0, "between 0 and 1"));
        if let (Some(lo), Some(hi), Some(v)) = (lo, hi, &t.min_fraction) {
            if lo > hi {
                self.issue(
                    issues,
                    v.span(),
                    "min_fraction",
                    format!("min_fraction ({lo}) exceeds max_fraction ({hi}); expected min_fraction <= max_fraction"),
                );
            }
        }
        if let Some(g) = &t.gain {
            self.check_gain(issues, g);
        }
    }

    fn check_gain(&self, issues: &mut Issues, g: &GainCfg) {
        let d = g.distribution.get_ref();
        if d != "triangular" && d != "pert" {
            self.issue(
                issues,
                g.distribution.span(),
                "distribution",
                format!("distribution must be \"triangular\" or \"pert\", found \"{d}\""),
            );
        }
        if let Some(o) = &g.over {
            if o.get_ref() != "positions-gained" && o.get_ref() != "final-position" {
                self.issue(
                    issues,
                    o.span(),
                    "over",
                    format!(
                        "over must be \"positions-gained\" or \"final-position\", found \"{}\"",
                        o.get_ref()
                    ),
                );
            }
        }
        let ok = [g.min, g.mode, g.max].iter().all(|x| x.is_finite())
            && g.min <= g.mode
            && g.mode <= g.max
            && g.min < g.max;
        if !ok {
            self.issue(issues, g.distribution.span(), "gain", format!("the gain distribution needs finite min <= mode <= max with min < max, found {}, {}, {}", g.min, g.mode, g.max));
        }
        if let Some(l) = g.lambda {
            if !(l.is_finite() && l > 0.0) {
                self.issue(
                    issues,
                    g.distribution.span(),
                    "lambda",
                    format!("lambda must be a positive number, found {l}"),
                );
            }
        }
    }

    /// Applies command-line overrides (flags win over the plan).
    pub fn apply(&mut self, o: &Overrides) -> Result<()> {
        if let Some(s) = o.seed {
            self.seed = s;
        }
        if let Some(n) = o.scenarios {
            if !(100..=10_000_000).contains(&n) {
                return Err(Error::Setting(format!(
                    "--scenarios must be 100 to 10,000,000, found {n}"
                )));
            }
            self.scenarios = n;
        }
        if let Some(h) = o.horizon {
            if !(1..=60).contains(&h) {
                return Err(Error::Setting(format!(
                    "--horizon must be 1 to 60 months, found {h}"
                )));
            }
            self.horizon = h;
        }
        if let Some(b) = o.budget {
            if !(b.is_finite() && b > 0.0) {
                return Err(Error::Setting(format!(
                    "--budget must be a positive amount (a budget of 0 funds nothing), found {b}"
                )));
            }
            self.budget = b;
            // A limit given as a share of the budget follows the new budget.
            let share = self
                .file
                .budget
                .max_tail_loss
                .as_ref()
                .filter(|m| is_share(m.get_ref()));
            if let (Some(m), None) = (share, &o.max_tail_loss) {
                self.max_tail_loss = Some(resolve_amount(m.get_ref(), b).map_err(Error::Setting)?);
            }
        }
        if let Some(q) = o.tail_level {
            self.tail_level = check_tail_level(q)?;
        }
        if let Some(m) = &o.max_tail_loss {
            self.max_tail_loss = Some(parse_tail_loss(m, self.budget)?);
        }
        Ok(())
    }

    /// A path from the plan, made relative to the plan's folder.
    pub fn resolve(&self, p: &str) -> PathBuf {
        let path = Path::new(p);
        if path.is_absolute() {
            path.to_path_buf()
        } else {
            self.dir.join(path)
        }
    }
}

/// Checks a tail level from a flag.
pub fn check_tail_level(q: f64) -> Result<f64> {
    if q > 0.0 && q < 1.0 {
        Ok(q)
    } else {
        Err(Error::Setting(format!(
            "--tail-level must be between 0 and 1 (0.90 means the worst 10 %), found {q}"
        )))
    }
}

/// Parses `--max-tail-loss`: an amount, or a percentage of the budget.
pub fn parse_tail_loss(text: &str, budget: f64) -> Result<f64> {
    let amount = match text.trim().parse::<f64>() {
        Ok(v) => Amount::Number(v),
        Err(_) => Amount::Text(text.to_string()),
    };
    resolve_amount(&amount, budget).map_err(|m| Error::Setting(format!("--max-tail-loss: {m}")))
}

/// Whether an amount is a share of the budget (`"15%"`).
fn is_share(a: &Amount) -> bool {
    matches!(a, Amount::Text(t) if t.trim().ends_with('%'))
}

fn resolve_amount(a: &Amount, budget: f64) -> std::result::Result<f64, String> {
    let v = match a {
        Amount::Number(v) => *v,
        Amount::Text(t) => {
            let pct = t
                .trim()
                .strip_suffix('%')
                .and_then(|p| p.trim().parse::<f64>().ok());
            match pct {
                Some(p) => p / 100.0 * budget,
                None => return Err(format!("max_tail_loss must be an amount or a percentage of the budget such as \"15%\", found \"{t}\"")),
            }
        }
    };
    if v.is_finite() && v >= 0.0 {
        Ok(v)
    } else {
        Err(format!(
            "max_tail_loss must be a non-negative amount, found {v}"
        ))
    }
}

#[cfg(test)]
mod tests {
    fn plan_with(extra: &str) -> Result<Plan> {
        let dir = tempfile::tempdir().expect("tmp");
        let p = dir.path().join("plan.toml");
        std::fs::write(&p, format!("{extra}\n[budget]\ntotal = 100\n")).expect("write");
        load(&p)
    }

    /// True when the plan with this name has no problem at its name.
    fn name_ok(name: &str) -> bool {
        match plan_with(&format!("name = \"{name}\"")) {
            Ok(_) => true,
            Err(e) => !e.to_string().contains("('name')"),
        }
    }

    #[test]
    fn plan_name_that_is_a_path_is_refused_at_its_line() {
        for bad in [
            "/abs/path",
            "../../x",
            "",
            ".",
            "..",
            "a\\b",
            "tab\there",
            " x",
        ] {
            let toml_name = bad.replace('\\', "\\\\").replace('\t', "\\t");
            let e = plan_with(&format!("\n\nname = \"{toml_name}\"")).expect_err(bad);
            let text = e.to_string();
            assert!(
                text.contains("line 3, column 8 ('name')"),
                "{bad:?}: {text}"
            );
            assert!(text.contains("one folder name"), "{bad:?}: {text}");
        }
        assert!(name_ok("garden-2027 (draft)"));
    }

    #[test]
    fn plan_name_of_more_than_two_hundred_bytes_is_refused() {
        let long = "x".repeat(MAX_NAME_BYTES + 1);
        let e = plan_with(&format!("name = \"{long}\"")).expect_err("too long");
        assert!(e.to_string().contains("bytes long"), "{e}");
        assert!(name_ok(&"x".repeat(MAX_NAME_BYTES)));
    }

    #[test]
    fn a_deeply_nested_key_is_placed_at_its_line() {
        let deep = vec!["a"; 300].join(".");
        let e =
            plan_with(&format!("seed = 1\ncurrency = \"EUR\"\n{deep} = 1")).expect_err("too deep");
        let text = e.to_string();
        assert!(text.contains("line 3, column 1"), "{text}");
        assert!(text.contains("300 levels deep"), "{text}");
    }

    #[test]
    fn seasonality_of_the_wrong_shape_is_refused_in_plain_words() {
        let e = plan_with("[economics]\nseasonality = { a = 1 }").expect_err("bad shape");
        let text = e.to_string();
        assert!(
            text.contains("\"history\", \"none\" or a list of 12"),
            "{text}"
        );
        assert!(!text.contains("untagged"), "{text}");
    }

    use super::*;

    #[test]
    fn suggests_the_closest_key() {
        let msg = suggest(
            "unknown field `budgett`, expected one of `total`, `tail_level`, `max_tail_loss`",
        );
        assert!(msg.contains("unknown key 'budgett'"), "{msg}");
        let msg = suggest(
            "unknown field `tail_levl`, expected one of `total`, `tail_level`, `max_tail_loss`",
        );
        assert!(msg.contains("did you mean 'tail_level'"), "{msg}");
    }

    #[test]
    fn no_close_key_still_reads_as_a_sentence() {
        let msg = suggest("unknown field `requires`, expected one of `label`, `cost`");
        assert!(
            msg.starts_with("unknown key 'requires'. Valid keys here: label, cost"),
            "{msg}"
        );
    }

    #[test]
    fn parser_words_become_the_words_of_the_docs() {
        assert_eq!(
            plain_words("invalid type: string \"x\", expected f64"),
            "invalid type: string \"x\", expected a number"
        );
        let msg = plain_words("missing field `budget`");
        assert!(
            msg.starts_with("missing the required key 'budget'"),
            "{msg}"
        );
    }

    #[test]
    fn line_and_column_of_a_byte() {
        assert_eq!(line_col("ab\ncd\nef", 4), (2, 2));
        assert_eq!(line_col("ab", 0), (1, 1));
    }

    #[test]
    fn the_line_index_agrees_with_counting_from_the_top() {
        let text = "a = 1\n\nname = \"é\u{e9}x\"\n[[cluster]]\nz";
        let index = LineIndex::new(text);
        for pos in 0..=text.len() + 2 {
            if text.is_char_boundary(pos.min(text.len())) {
                assert_eq!(
                    index.line_col(text, pos),
                    line_col(text, pos),
                    "at byte {pos}"
                );
            }
        }
    }

    #[test]
    fn tail_loss_as_amount_or_share_of_budget() {
        assert_eq!(parse_tail_loss("5000", 1e5).unwrap(), 5000.0);
        assert!((parse_tail_loss("15%", 1e5).unwrap() - 15000.0).abs() < 1e-9);
        assert!(parse_tail_loss("lots", 1e5).is_err());
        assert!(parse_tail_loss("-3", 1e5).is_err());
    }
}
