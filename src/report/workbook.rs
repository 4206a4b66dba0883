//! The report's workbook, `furrow-plan.xlsx`: the file a finance team opens.
//!
//! One sheet per table of the report (Summary, Allocation, Clusters,
//! Forecast, Frontier, Stress, Target and Tracking when present, Drivers),
//! drawn from the same typed structures as `summary.json`, so every figure
//! is stored as a number (not text) with a display format: money in the
//! plan's currency with thousands separators, shares as percentages, ratios
//! with two decimals. Table sheets have a bold header row that stays in view
//! (frozen panes) and a filter on every column.
//!
//! Every piece of user text (cluster names, labels, paths) is written as a
//! text cell and never as a formula, so a cluster named `=1+1` shows as the
//! literal `=1+1`. Number format codes follow ISO/IEC 29500-1 §18.8.31
//! (numFmts): literal text inside double quotes or after a backslash, up to
//! four sections separated by semicolons.

use super::{ForecastRow, Summary};
use crate::allocate::Allocation;
use crate::error::Error;
use crate::simulate::summary::{Outcome, TierResult};
use crate::simulate::SimSummary;
use crate::stats::Stats;
use crate::target::{Metric, TargetReport};
use crate::text::{int, money, pct, tail_share};
use rust_xlsxwriter::{ColNum, Format, FormatBorder, RowNum, Workbook, Worksheet, XlsxError};
use std::path::PathBuf;

/// The workbook's file name inside the report folder.
pub const FILE_NAME: &str = "furrow-plan.xlsx";

/// Longest text a cell holds, in UTF-16 code units (the format's limit,
/// documented with the writer's `write_string`).
const MAX_TEXT: usize = 32_767;

/// Longest sheet name, in UTF-16 code units (documented with the writer's
/// `set_name`).
const MAX_SHEET_NAME: usize = 31;

/// Longest currency text put into a number format: the whole format code
/// must stay under 255 characters (implementer notes to ISO/IEC 29500-1
/// §18.8.30), and a currency label is a few characters in practice.
const MAX_CURRENCY: usize = 40;

/// Display format of shares (fractions shown as percentages).
pub const SHARE_FORMAT: &str = "0.0%";

/// Display format of ratios (ROI, return on spend, rank correlation).
pub const RATIO_FORMAT: &str = "0.00";

/// Display format of counts (clicks, search volume).
pub const COUNT_FORMAT: &str = "#,##0";

/// Why the workbook could not be assembled.
#[derive(Debug, thiserror::Error)]
pub enum WorkbookError {
    /// A sheet could not be written (too many rows or columns, ...).
    #[error("sheet \"{sheet}\" of {FILE_NAME}: {source}; a sheet holds at most 1,048,576 rows and 16,384 columns, so plan fewer clusters or tiers in one report")]
    Sheet {
        sheet: String,
        #[source]
        source: XlsxError,
    },
    /// The finished workbook could not be packed.
    #[error("packing {FILE_NAME}: {source}; this should not happen, please report it with the plan that caused it")]
    Pack {
        #[source]
        source: XlsxError,
    },
}

impl From<WorkbookError> for Error {
    fn from(e: WorkbookError) -> Error {
        Error::Write {
            path: PathBuf::from(FILE_NAME),
            source: std::io::Error::other(e),
        }
    }
}

/// The number format of money in `currency`: whole units with thousands
/// separators and the currency as literal text, e.g. `#,##0 "EUR"`.
///
/// Quotes, backslashes and semicolons of the currency are written as
/// backslash-escaped single characters outside the quoted runs, so no
/// currency text can end the literal early or start a new section;
/// control characters become spaces. An empty currency gives `#,##0`.
pub fn money_format(currency: &str) -> String {
    let cleaned: String = currency
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .take(MAX_CURRENCY)
        .collect();
    let cleaned = cleaned.trim();
    if cleaned.is_empty() {
        return COUNT_FORMAT.to_string();
    }
    format!("{COUNT_FORMAT} {}", literal(cleaned))
}

/// `text` as literal text of a number format code.
fn literal(text: &str) -> String {
    let mut out = String::new();
    let mut quoted = false;
    for c in text.chars() {
        let special = matches!(c, '"' | '\\' | ';');
        if special == quoted {
            out.push('"');
            quoted = !quoted;
        }
        if special {
            out.push('\\');
        }
        out.push(c);
    }
    if quoted {
        out.push('"');
    }
    out
}

/// A valid, unused sheet name made from `raw`.
///
/// The rules (documented with the writer's `set_name`): 1 to 31 UTF-16
/// code units, none of `[ ] : * ? / \`, no apostrophe first or last, unique
/// regardless of case; "History" is reserved by spreadsheet programs.
/// Forbidden and control characters become `_`; a clash gets " (2)", " (3)"...
pub fn sheet_name(raw: &str, taken: &[String]) -> String {
    let cleaned: String = raw
        .chars()
        .map(|c| {
            if c.is_control() || "[]:*?/\\".contains(c) {
                '_'
            } else {
                c
            }
        })
        .collect();
    let base = trim_name(&cleaned);
    let base = if base.is_empty() { "Sheet" } else { base };
    let clash = |n: &str| {
        n.eq_ignore_ascii_case("history")
            || taken.iter().any(|t| t.to_lowercase() == n.to_lowercase())
    };
    let first = trim_name(clip_utf16(base, MAX_SHEET_NAME)).to_string();
    if !first.is_empty() && !clash(&first) {
        return first;
    }
    (2..)
        .map(|k| {
            let suffix = format!(" ({k})");
            let room = MAX_SHEET_NAME - suffix.len();
            format!("{}{suffix}", trim_name(clip_utf16(base, room)))
        })
        .find(|n| !clash(n))
        .unwrap_or_else(|| "Sheet".into())
}

/// `s` without surrounding spaces and apostrophes.
fn trim_name(s: &str) -> &str {
    s.trim().trim_matches('\'').trim()
}

/// The longest prefix of `s` of at most `max` UTF-16 code units.
fn clip_utf16(s: &str, max: usize) -> &str {
    let mut units = 0;
    for (i, c) in s.char_indices() {
        units += c.len_utf16();
        if units > max {
            return &s[..i];
        }
    }
    s
}

/// How a number is shown.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Money,
    Share,
    Ratio,
    Count,
    /// The spreadsheet's general format (inputs of very different scales).
    General,
}

/// One cell of a sheet.
#[derive(Debug, Clone)]
enum Cell {
    Text(String),
    Num(f64, Kind),
    Empty,
}

fn text(s: &str) -> Cell {
    Cell::Text(s.to_string())
}

fn num(v: f64, k: Kind) -> Cell {
    Cell::Num(v, k)
}

/// A missing number is an empty cell, as in the CSV files.
fn opt(v: Option<f64>, k: Kind) -> Cell {
    v.map_or(Cell::Empty, |v| Cell::Num(v, k))
}

/// A table sheet: header, rows, and notes written below the table.
struct Table {
    header: Vec<String>,
    rows: Vec<Vec<Cell>>,
    /// Columns kept in view with the header (the row labels).
    freeze_cols: u16,
    notes: Vec<String>,
}

impl Table {
    fn new(header: &[&str], freeze_cols: u16) -> Table {
        Table {
            header: header.iter().map(|h| h.to_string()).collect(),
            rows: Vec::new(),
            freeze_cols,
            notes: Vec::new(),
        }
    }
}

/// The formats of one workbook.
struct Styles {
    header: Format,
    title: Format,
    heading: Format,
    wrap: Format,
    money: Format,
    share: Format,
    ratio: Format,
    count: Format,
    general: Format,
    currency_len: usize,
}

impl Styles {
    fn new(currency: &str) -> Styles {
        Styles {
            header: Format::new()
                .set_bold()
                .set_border_bottom(FormatBorder::Thin),
            title: Format::new().set_bold().set_font_size(14),
            heading: Format::new().set_bold(),
            wrap: Format::new().set_text_wrap(),
            money: Format::new().set_num_format(money_format(currency)),
            share: Format::new().set_num_format(SHARE_FORMAT),
            ratio: Format::new().set_num_format(RATIO_FORMAT),
            count: Format::new().set_num_format(COUNT_FORMAT),
            general: Format::new(),
            currency_len: currency.chars().count().min(MAX_CURRENCY),
        }
    }

    fn of(&self, k: Kind) -> &Format {
        match k {
            Kind::Money => &self.money,
            Kind::Share => &self.share,
            Kind::Ratio => &self.ratio,
            Kind::Count => &self.count,
            Kind::General => &self.general,
        }
    }

    /// Roughly how many characters a cell shows, for column widths.
    fn shown_len(&self, cell: &Cell) -> usize {
        let digits = |v: f64| {
            let d = format!("{:.0}", v.abs()).len();
            d + d.saturating_sub(1) / 3 + usize::from(v < 0.0)
        };
        match cell {
            Cell::Text(s) => s.chars().count(),
            Cell::Empty => 0,
            Cell::Num(v, _) if !v.is_finite() => 4,
            Cell::Num(v, Kind::Money) => digits(*v) + 1 + self.currency_len,
            Cell::Num(v, Kind::Count) => digits(*v),
            Cell::Num(v, Kind::Share) => digits(v * 100.0) + 3,
            Cell::Num(v, Kind::Ratio) => digits(*v) + 3,
            Cell::Num(_, Kind::General) => 11,
        }
    }
}

/// `s` cut to what one cell holds.
fn clip_text(s: &str) -> &str {
    clip_utf16(s, MAX_TEXT)
}

fn row_col(r: usize, c: usize) -> Result<(RowNum, ColNum), XlsxError> {
    match (RowNum::try_from(r), ColNum::try_from(c)) {
        (Ok(r), Ok(c)) => Ok((r, c)),
        _ => Err(XlsxError::RowColumnLimitError),
    }
}

/// Writes one cell: text always as text (never a formula), numbers as
/// numbers; a non-finite number (never expected) shows as an empty cell.
fn write_cell(
    ws: &mut Worksheet,
    st: &Styles,
    r: usize,
    c: usize,
    cell: &Cell,
) -> Result<(), XlsxError> {
    let (r, c) = row_col(r, c)?;
    match cell {
        Cell::Text(s) => ws.write_string(r, c, clip_text(s))?,
        Cell::Num(v, k) if v.is_finite() => ws.write_number_with_format(r, c, *v, st.of(*k))?,
        Cell::Num(..) | Cell::Empty => ws,
    };
    Ok(())
}

/// Writes a table from A1: bold header, rows, widths, frozen header and
/// filters, then the notes below it.
fn write_table(ws: &mut Worksheet, st: &Styles, t: &Table) -> Result<(), XlsxError> {
    for (c, h) in t.header.iter().enumerate() {
        let (r, c) = row_col(0, c)?;
        ws.write_string_with_format(r, c, clip_text(h), &st.header)?;
    }
    for (i, row) in t.rows.iter().enumerate() {
        for (c, cell) in row.iter().enumerate() {
            write_cell(ws, st, i + 1, c, cell)?;
        }
    }
    set_widths(ws, st, t)?;
    ws.set_freeze_panes(1, t.freeze_cols)?;
    if let Some(last) = t.header.len().checked_sub(1) {
        let (last_row, last_col) = row_col(t.rows.len(), last)?;
        ws.autofilter(0, 0, last_row, last_col)?;
    }
    for (i, n) in t.notes.iter().enumerate() {
        write_cell(ws, st, t.rows.len() + 2 + i, 0, &text(n))?;
    }
    Ok(())
}

/// Column widths from the header (plus room for the filter button) and
/// the widest cell, within 8 to 60 characters.
fn set_widths(ws: &mut Worksheet, st: &Styles, t: &Table) -> Result<(), XlsxError> {
    for (c, h) in t.header.iter().enumerate() {
        let widest = t
            .rows
            .iter()
            .filter_map(|r| r.get(c))
            .map(|cell| st.shown_len(cell))
            .max()
            .unwrap_or(0);
        let width = (h.chars().count() + 4).max(widest + 2).clamp(8, 60);
        ws.set_column_width(row_col(0, c)?.1, width as f64)?;
    }
    Ok(())
}

/// The sheet holding `Allocation` items: id, share funded, spend.
fn allocation_table(a: &Allocation) -> Table {
    let mut t = Table::new(&["cluster/tier", "funded", "spend"], 1);
    t.rows = a
        .allocation
        .iter()
        .map(|i| {
            vec![
                text(&i.id),
                num(i.fraction, Kind::Share),
                num(i.spend, Kind::Money),
            ]
        })
        .collect();
    t.notes = a.binding.iter().chain(&a.explanation).cloned().collect();
    t
}

fn stat_cells(s: &Stats, k: Kind) -> [Cell; 4] {
    [num(s.mean, k), num(s.p10, k), num(s.p50, k), num(s.p90, k)]
}

/// One row of the Clusters sheet.
fn outcome_row(labels: [&str; 3], tier: Option<usize>, basis: &str, o: &Outcome) -> Vec<Cell> {
    let [id, cluster, label] = labels;
    let mut row = vec![
        text(id),
        text(cluster),
        opt(tier.map(|t| t as f64), Kind::Count),
        text(label),
        text(basis),
        num(o.cost, Kind::Money),
    ];
    row.extend(stat_cells(&o.clicks, Kind::Count));
    for s in [&o.revenue, &o.gross_profit, &o.net_return] {
        row.extend(stat_cells(s, Kind::Money));
    }
    row.extend([
        opt(o.return_on_spend, Kind::Ratio),
        opt(o.roi, Kind::Ratio),
        num(o.chance_of_loss, Kind::Share),
    ]);
    row
}

const CLUSTER_HEADER: [&str; 25] = [
    "cluster/tier",
    "cluster",
    "tier",
    "label",
    "basis",
    "cost",
    "clicks mean",
    "clicks P10",
    "clicks P50",
    "clicks P90",
    "revenue mean",
    "revenue P10",
    "revenue P50",
    "revenue P90",
    "gross profit mean",
    "gross profit P10",
    "gross profit P50",
    "gross profit P90",
    "net return mean",
    "net return P10",
    "net return P50",
    "net return P90",
    "return on spend",
    "ROI",
    "chance of loss",
];

/// Per-tier distributions: what each tier adds, then each cluster funded
/// up to a tier, then the portfolio of every first tier.
fn clusters_table(s: &SimSummary) -> Table {
    let mut t = Table::new(&CLUSTER_HEADER, 1);
    let tier_row = |r: &TierResult, basis: &str, o: &Outcome| {
        outcome_row([&r.id, &r.cluster, &r.label], Some(r.tier), basis, o)
    };
    for r in &s.tiers {
        t.rows
            .push(tier_row(r, "adds over the tier below", &r.marginal));
    }
    for r in &s.tiers {
        t.rows
            .push(tier_row(r, "cluster up to this tier", &r.cumulative));
    }
    t.rows.push(outcome_row(
        ["all first tiers", "", "every cluster's first tier"],
        None,
        "portfolio",
        &s.first_tiers,
    ));
    t.notes = vec![
        format!("{} futures (seed {}), {} months from {}.", int(s.scenarios as f64), s.seed, s.horizon, s.first_month),
        "Net return = incremental gross profit - cost. Return on spend = incremental revenue / cost. ROI = (mean incremental gross profit - cost) / cost.".into(),
    ];
    t
}

const FORECAST_HEADER: [&str; 8] = [
    "month",
    "baseline mean",
    "baseline P10",
    "baseline P50",
    "baseline P90",
    "with plan P10",
    "with plan P50",
    "with plan P90",
];

/// Monthly clicks: the baseline and the baseline with the funded plan.
fn forecast_table(rows: &[ForecastRow]) -> Table {
    let mut t = Table::new(&FORECAST_HEADER, 1);
    t.rows = rows
        .iter()
        .map(|r| {
            let mut row = vec![text(&r.month)];
            row.extend(
                [
                    r.baseline_mean,
                    r.baseline_p10,
                    r.baseline_p50,
                    r.baseline_p90,
                    r.with_plan_p10,
                    r.with_plan_p50,
                    r.with_plan_p90,
                ]
                .map(|v| num(v, Kind::Count)),
            );
            row
        })
        .collect();
    t.notes = vec!["Organic clicks per month.".into()];
    t
}

/// The efficient frontier: one row per tail-loss limit, one share column
/// per cluster tier.
fn frontier_table(sm: &Summary) -> Table {
    let ids: Vec<&str> = sm
        .frontier
        .iter()
        .find(|p| !p.allocation.is_empty())
        .map(|p| p.allocation.iter().map(|i| i.id.as_str()).collect())
        .unwrap_or_default();
    let funded: Vec<String> = ids.iter().map(|i| format!("funded: {i}")).collect();
    let mut header = vec![
        "tail-loss limit",
        "expected net return",
        "tail loss",
        "value at risk",
        "spend",
    ];
    header.extend(funded.iter().map(String::as_str));
    let mut t = Table::new(&header, 1);
    for p in &sm.frontier {
        // A missing point (not solved) has empty cells; the notes say why.
        let mut row: Vec<Cell> = [
            Some(p.max_tail_loss),
            p.expected_net_return,
            p.tail_loss,
            p.value_at_risk,
            p.budget_used,
        ]
        .map(|v| opt(v, Kind::Money))
        .to_vec();
        row.extend(ids.iter().map(|id| {
            let f = p.allocation.iter().find(|i| i.id == *id);
            opt(f.map(|i| i.fraction), Kind::Share)
        }));
        t.rows.push(row);
    }
    t.notes = vec![format!(
        "Best expected net return for each limit on the tail loss (CVaR: average loss in the worst {} of futures).",
        tail_share(sm.allocation.tail_level)
    )];
    t.notes.extend(sm.frontier.iter().filter_map(|p| {
        let why = p.missing.as_ref()?;
        Some(format!(
            "The point at the limit {} is missing (not solved): {why}",
            money(p.max_tail_loss, &sm.currency)
        ))
    }));
    t
}

/// Stress tests of the chosen allocation, the base case first.
fn stress_table(sm: &Summary) -> Table {
    let s = &sm.stress;
    let tail = format!("tail loss (worst {})", tail_share(s.tail_level));
    let mut t = Table::new(
        &[
            "case",
            "description",
            "expected net return",
            "change in net return",
            &tail,
            "change in tail loss",
            "value at risk",
            "ROI",
            "incremental clicks",
            "chance of target",
            "change in chance",
            "notes",
        ],
        1,
    );
    t.rows = std::iter::once(&s.base)
        .chain(&s.presets)
        .map(|r| {
            vec![
                text(&r.name),
                text(&r.description),
                num(r.expected_net_return, Kind::Money),
                num(r.change_in_net_return, Kind::Money),
                num(r.tail_loss, Kind::Money),
                num(r.change_in_tail_loss, Kind::Money),
                num(r.value_at_risk, Kind::Money),
                opt(r.roi, Kind::Ratio),
                num(r.incremental_clicks, Kind::Count),
                opt(r.chance_of_target, Kind::Share),
                opt(r.change_in_chance, Kind::Share),
                text(&r.notes.join("; ")),
            ]
        })
        .collect();
    t.notes = vec![format!(
        "Spend {}; {} futures per case, same seed. Tail loss = average loss in the worst futures (CVaR).",
        money(s.spend, &sm.currency),
        int(s.scenarios as f64)
    )];
    t
}

/// Money for revenue, a count for clicks.
fn metric_kind(m: Metric) -> Kind {
    match m {
        Metric::Revenue => Kind::Money,
        Metric::Clicks => Kind::Count,
    }
}

const TARGET_HEADER: [&str; 17] = [
    "plan",
    "target",
    "spend",
    "chance of reaching the target",
    "total mean",
    "total P10",
    "total P50",
    "total P90",
    "shortfall mean",
    "shortfall P50",
    "shortfall in the P10 future",
    "funded monthly volume",
    "uplift per unit of volume",
    "more monthly volume for 50 %",
    "more monthly volume for 80 %",
    "average clusters for 50 %",
    "average clusters for 80 %",
];

/// The odds of reaching the target: doing nothing, the chosen plan, the
/// best expected-return plan.
fn target_table(r: &TargetReport) -> Table {
    let k = metric_kind(r.metric);
    let mut t = Table::new(&TARGET_HEADER, 1);
    for c in [&r.do_nothing, &r.chosen, &r.best] {
        let o = &c.odds;
        let mut row = vec![
            text(&c.plan),
            num(r.target, k),
            num(c.spend, Kind::Money),
            num(o.chance, Kind::Share),
        ];
        row.extend(stat_cells(&o.total, k));
        row.extend([o.shortfall_mean, o.shortfall_p50, o.shortfall_p10].map(|v| num(v, k)));
        row.extend([
            num(c.funded_volume, Kind::Count),
            opt(o.uplift_per_volume, Kind::General),
            opt(o.volume_for_50, Kind::Count),
            opt(o.volume_for_80, Kind::Count),
            opt(c.clusters_for_50, Kind::Ratio),
            opt(c.clusters_for_80, Kind::Ratio),
        ]);
        t.rows.push(row);
    }
    t.notes = target_notes(r);
    t
}

fn target_notes(r: &TargetReport) -> Vec<String> {
    let mut notes = vec![format!(
        "Target: total {} over {} months ({}); {} futures. Shortfall = max(0, target - total); empty cells: not reachable by more volume at the plan's average uplift.",
        r.metric.name(),
        r.horizon,
        r.basis,
        int(r.scenarios as f64)
    )];
    notes.extend(r.assumptions.iter().map(|a| format!("Assumption: {a}")));
    notes
}

const DRIVERS_HEADER: [&str; 12] = [
    "outcome",
    "input",
    "group",
    "rank correlation",
    "rank R2",
    "share",
    "constant",
    "input P10",
    "input P90",
    "outcome low",
    "outcome high",
    "swing",
];

/// The variance drivers of every outcome, one row per input.
fn drivers_table(sm: &Summary) -> Table {
    let d = &sm.drivers;
    let mut t = Table::new(&DRIVERS_HEADER, 2);
    for table in &d.tables {
        let k = if table.outcome.contains("clicks") {
            Kind::Count
        } else {
            Kind::Money
        };
        t.rows.extend(table.drivers.iter().map(|x| {
            vec![
                text(&table.outcome),
                text(&x.input),
                text(&x.group),
                num(x.spearman, Kind::Ratio),
                num(x.rank_r2, Kind::Share),
                num(x.share, Kind::Share),
                text(if x.constant { "yes" } else { "no" }),
                num(x.input_p10, Kind::General),
                num(x.input_p90, Kind::General),
                num(x.outcome_low, k),
                num(x.outcome_high, k),
                num(x.swing, k),
            ]
        }));
        t.notes
            .extend(table.note.iter().map(|n| format!("{}: {n}", table.outcome)));
    }
    t.notes.push(format!("Method: {}. Outcome low/high: mean outcome in the futures where the input is in its bottom/top 10 %.", d.method));
    t
}

const TRACKING_HEADER: [&str; 11] = [
    "month",
    "kind",
    "actual",
    "forecast P10",
    "forecast P50",
    "forecast P90",
    "re-forecast P10",
    "re-forecast P50",
    "re-forecast P90",
    "percentile",
    "flag",
];

/// Actuals against the forecast, then the re-forecast of later months.
fn tracking_table(r: &crate::track::TrackReport) -> Table {
    let k = metric_kind(r.metric);
    let mut t = Table::new(&TRACKING_HEADER, 1);
    for o in &r.observed {
        let mut row = vec![text(&o.month), text("observed"), num(o.actual, k)];
        row.extend([o.p10, o.p50, o.p90].map(|v| num(v, k)));
        row.extend([Cell::Empty, Cell::Empty, Cell::Empty]);
        row.extend([num(o.percentile, Kind::Share), text(&o.flag)]);
        t.rows.push(row);
    }
    for m in &r.reforecast {
        let mut row = vec![text(&m.month), text("re-forecast"), Cell::Empty];
        row.extend([m.prior_p10, m.prior_p50, m.prior_p90, m.p10, m.p50, m.p90].map(|v| num(v, k)));
        t.rows.push(row);
    }
    t.notes = tracking_notes(r);
    t
}

fn tracking_notes(r: &crate::track::TrackReport) -> Vec<String> {
    let mut notes = vec![format!(
        "How the re-forecast was made: {}. Baseline {}: {}.",
        r.method, r.baseline_method, r.baseline_update
    )];
    if let Some(u) = &r.target {
        notes.push(format!(
            "Chance of reaching the target of {}: {} before, {} now ({} so far).",
            int(u.amount),
            pct(u.prior_chance, 0),
            pct(u.updated_chance, 0),
            int(u.observed_so_far)
        ));
    }
    notes
}

/// A line of the Summary sheet.
enum Line {
    Title(String),
    Heading(&'static str),
    /// A paragraph across the sheet's three columns, wrapped.
    Para(String),
    /// Cells from column A.
    Cells(Vec<Cell>),
    /// Cells from column A in the table-header style.
    Header(Vec<Cell>),
    Blank,
}

fn figure(label: &str, cell: Cell) -> Line {
    Line::Cells(vec![text(label), cell])
}

/// Headline figures of the chosen allocation as label/value lines.
fn headline_lines(sm: &Summary) -> Vec<Line> {
    let a = &sm.allocation;
    let worst = tail_share(a.tail_level);
    let m = |v: f64| num(v, Kind::Money);
    vec![
        figure("Budget", m(a.budget)),
        figure("Budget used", m(a.budget_used)),
        figure(
            "Expected net return over the horizon",
            m(a.expected_net_return),
        ),
        figure("Expected ROI", opt(a.expected_roi, Kind::Ratio)),
        figure("Chance of a loss", num(a.chance_of_loss, Kind::Share)),
        figure(
            &format!("Tail loss (CVaR, worst {worst} of futures; negative: a gain)"),
            m(a.tail_loss),
        ),
        figure(
            "Tail-loss limit",
            a.max_tail_loss.map_or_else(|| text("none"), m),
        ),
        figure("Value at risk at the same level", m(a.value_at_risk)),
        figure(
            "Expected net return of one more unit of budget",
            num(a.budget_dual, Kind::Ratio),
        ),
        figure(
            "Expected net return of one more unit of tolerated tail loss",
            num(a.risk_dual, Kind::Ratio),
        ),
        figure(
            "Best expected-return plan: expected net return",
            m(sm.best_expected_return.expected_net_return),
        ),
        figure(
            "Best expected-return plan: tail loss",
            m(sm.best_expected_return.tail_loss),
        ),
        figure(
            "Best expected-return plan: budget used",
            m(sm.best_expected_return.budget_used),
        ),
        figure(
            "Solved",
            text(&format!("{} ({}, {})", a.status, a.method_used, a.backend)),
        ),
    ]
}

fn target_lines(t: &TargetReport) -> Vec<Line> {
    let amount = match t.metric {
        Metric::Revenue => num(t.target, Kind::Money),
        Metric::Clicks => num(t.target, Kind::Count),
    };
    vec![
        figure(
            &format!("Target: total {} over the horizon", t.metric.name()),
            amount,
        ),
        figure(
            "Chance of reaching it with this plan",
            num(t.chosen.odds.chance, Kind::Share),
        ),
        figure(
            "Chance of reaching it doing nothing",
            num(t.do_nothing.odds.chance, Kind::Share),
        ),
        figure(
            "Chance of reaching it with the best expected-return plan",
            num(t.best.odds.chance, Kind::Share),
        ),
    ]
}

/// Tool version, seed, futures, run time, input hashes and model files.
fn reproducibility_lines(sm: &Summary) -> Vec<Line> {
    let r = &sm.reproducibility;
    let mut lines = vec![
        Line::Heading("Reproducibility"),
        figure("furrow version", text(&r.tool_version)),
        // The seed as text: a 64-bit seed does not fit a spreadsheet number exactly.
        figure("Seed", text(&r.seed.to_string())),
        figure("Simulated futures", num(r.scenarios as f64, Kind::Count)),
        figure("Run time (seconds)", num(r.run_seconds, Kind::Ratio)),
        Line::Blank,
        Line::Header(vec![text("input"), text("path"), text("SHA-256")]),
    ];
    lines.extend(
        r.inputs
            .iter()
            .map(|h| Line::Cells(vec![text(&h.label), text(&h.path), text(&h.sha256)])),
    );
    lines.push(Line::Blank);
    lines.push(Line::Header(vec![text("model"), text("origin")]));
    lines.extend(
        r.models
            .iter()
            .map(|(w, o)| Line::Cells(vec![text(w), text(o)])),
    );
    lines
}

/// Every line of the Summary sheet.
fn summary_lines(sm: &Summary) -> Vec<Line> {
    let mut lines = vec![
        Line::Title(format!("furrow plan: {}", sm.plan)),
        figure("Currency", text(&sm.currency)),
        Line::Blank,
        Line::Heading("Decision"),
        Line::Para(sm.decision.clone()),
        Line::Blank,
        Line::Heading("Headline figures"),
    ];
    lines.extend(headline_lines(sm));
    if let Some(t) = &sm.target {
        lines.extend(target_lines(t));
    }
    let a = &sm.allocation;
    if !(a.binding.is_empty() && a.explanation.is_empty()) {
        lines.extend([Line::Blank, Line::Heading("Why this allocation")]);
        lines.extend(
            a.binding
                .iter()
                .chain(&a.explanation)
                .map(|s| Line::Para(s.clone())),
        );
    }
    lines.extend([Line::Blank, Line::Heading("Cautions")]);
    lines.extend(sm.cautions.iter().map(|c| Line::Para(c.clone())));
    lines.push(Line::Blank);
    lines.extend(reproducibility_lines(sm));
    lines
}

/// Widths of the Summary sheet's columns A to C, in characters.
const SUMMARY_WIDTHS: [f64; 3] = [60.0, 26.0, 68.0];

fn write_line(ws: &mut Worksheet, st: &Styles, r: usize, line: &Line) -> Result<(), XlsxError> {
    let row = row_col(r, 0)?.0;
    match line {
        Line::Title(s) => {
            ws.write_string_with_format(row, 0, clip_text(s), &st.title)?;
        }
        Line::Heading(s) => {
            ws.write_string_with_format(row, 0, *s, &st.heading)?;
        }
        Line::Para(s) => write_para(ws, st, row, s)?,
        Line::Cells(cells) => {
            for (c, cell) in cells.iter().enumerate() {
                write_cell(ws, st, r, c, cell)?;
            }
        }
        Line::Header(cells) => {
            for (c, cell) in cells.iter().enumerate() {
                if let Cell::Text(s) = cell {
                    ws.write_string_with_format(row, row_col(r, c)?.1, clip_text(s), &st.header)?;
                }
            }
        }
        Line::Blank => {}
    }
    Ok(())
}

/// A wrapped paragraph merged across columns A to C, its row tall enough
/// for the text (about one line per sheet width of characters).
fn write_para(ws: &mut Worksheet, st: &Styles, row: RowNum, s: &str) -> Result<(), XlsxError> {
    let s = clip_text(s);
    ws.merge_range(row, 0, row, 2, s, &st.wrap)?;
    let per_line: f64 = SUMMARY_WIDTHS.iter().sum::<f64>() * 0.95;
    let lines = (s.chars().count() as f64 / per_line)
        .ceil()
        .clamp(1.0, 400.0);
    ws.set_row_height(row, 15.0 * lines)?;
    Ok(())
}

fn write_summary(ws: &mut Worksheet, st: &Styles, sm: &Summary) -> Result<(), XlsxError> {
    for (c, w) in SUMMARY_WIDTHS.iter().enumerate() {
        ws.set_column_width(row_col(0, c)?.1, *w)?;
    }
    for (r, line) in summary_lines(sm).iter().enumerate() {
        write_line(ws, st, r, line)?;
    }
    Ok(())
}

/// The table sheets in order, each with its name.
fn tables(sm: &Summary) -> Vec<(&'static str, Table)> {
    let mut v = vec![
        ("Allocation", allocation_table(&sm.allocation)),
        ("Clusters", clusters_table(&sm.clusters)),
        ("Forecast", forecast_table(&sm.forecast)),
        ("Frontier", frontier_table(sm)),
        ("Stress", stress_table(sm)),
    ];
    if let Some(t) = &sm.target {
        v.push(("Target", target_table(t)));
    }
    v.push(("Drivers", drivers_table(sm)));
    if let Some(t) = &sm.tracking {
        v.push(("Tracking", tracking_table(t)));
    }
    v
}

/// Adds a sheet named after `raw` and fills it with `fill`.
fn add_sheet(
    wb: &mut Workbook,
    taken: &mut Vec<String>,
    raw: &str,
    fill: impl FnOnce(&mut Worksheet) -> Result<(), XlsxError>,
) -> Result<(), WorkbookError> {
    let name = sheet_name(raw, taken);
    let ws = wb.add_worksheet();
    let filled = ws
        .set_name(name.as_str())
        .map(|_| ())
        .and_then(|_| fill(ws));
    filled.map_err(|source| WorkbookError::Sheet {
        sheet: name.clone(),
        source,
    })?;
    taken.push(name);
    Ok(())
}

/// The workbook of the report as the bytes of an `.xlsx` file.
pub fn workbook(summary: &Summary) -> Result<Vec<u8>, Error> {
    Ok(build(summary)?)
}

fn build(sm: &Summary) -> Result<Vec<u8>, WorkbookError> {
    let st = Styles::new(&sm.currency);
    let mut wb = Workbook::new();
    let mut taken = Vec::new();
    add_sheet(&mut wb, &mut taken, "Summary", |ws| {
        write_summary(ws, &st, sm)
    })?;
    for (name, table) in tables(sm) {
        add_sheet(&mut wb, &mut taken, name, |ws| write_table(ws, &st, &table))?;
    }
    wb.save_to_buffer()
        .map_err(|source| WorkbookError::Pack { source })
}
