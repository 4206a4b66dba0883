//! The bad-input catalogue (issue 9): every reader refuses every kind of bad
//! file the same way, through the real binary.
//!
//! Each case swaps one fixture from `tests/fixtures/bad/<reader>/` into a
//! valid project (`furrow init` plus `tests/fixtures/bad/base/`) and runs the
//! command a user would run for that file: `furrow check plan.toml` for the
//! plan and its inputs, `furrow allocate --returns --costs` for the scenario
//! files. It then asserts the exit code (1 for bad input; the limits use the
//! documented 2 for settings and 3 for infeasible), that stdout is empty, and
//! that one line of stderr names the file, the line and the column where
//! they apply, and the distinctive words of what was expected. A fixture
//! without a case (or a case without a fixture) fails the catalogue too.

mod common;
use common::*;
use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::Output;

/// One bad file and what furrow must say about it.
#[derive(Debug, Clone, Copy)]
struct Case {
    /// File name under `tests/fixtures/bad/<reader>/`.
    fixture: &'static str,
    /// Expected exit code.
    code: i32,
    /// The line named, where one applies.
    line: Option<u64>,
    /// The column as the reader reports it, e.g. "column 2 ('clicks')".
    column: Option<&'static str>,
    /// Distinctive words of the message (what was expected, what was found).
    expect: &'static [&'static str],
    /// Words that must not appear anywhere on stderr (follow-on noise).
    not: &'static [&'static str],
    /// The file the message names, when not the file swapped in.
    names: Option<&'static str>,
}

/// A case refused with exit code 1.
const fn c(
    fixture: &'static str,
    line: Option<u64>,
    column: Option<&'static str>,
    expect: &'static [&'static str],
) -> Case {
    Case {
        fixture,
        code: 1,
        line,
        column,
        expect,
        not: &[],
        names: None,
    }
}

impl Case {
    /// Also asserts that stderr mentions none of `not`.
    const fn without(self, not: &'static [&'static str]) -> Case {
        Case { not, ..self }
    }
    /// The message names `file` (another file, or a flag) instead.
    const fn naming(self, file: &'static str) -> Case {
        Case {
            names: Some(file),
            ..self
        }
    }
}

/// How a reader's fixture is swapped in and what runs.
struct Reader {
    /// Folder under tests/fixtures/bad.
    name: &'static str,
    /// The file it replaces in the project.
    target: &'static str,
    /// The command a user would run.
    args: &'static [&'static str],
    cases: &'static [Case],
}

const CHECK: &[&str] = &["check", "plan.toml"];
const ALLOCATE: &[&str] = &[
    "allocate",
    "--returns",
    "returns.csv",
    "--costs",
    "costs.csv",
    "--budget",
    "300",
];

/// A row refused for its month or its shape is not reported again as a gap.
const NO_GAP: &[&str] = &["is missing"];

#[rustfmt::skip]
const HISTORY: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "expected a header line with the columns month, clicks"]),
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per month"]),
    c("missing_column.csv", Some(1), None, &["missing the required column 'clicks'", "month, visits"]),
    c("text_in_number.csv", Some(3), Some("column 2 ('clicks')"), &["expected a number", "'lots'"]),
    c("nan.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'Infinity'"]),
    c("overflow.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'1e999'"]),
    c("negative.csv", Some(4), Some("column 2 ('clicks')"), &["expected a number at least 0", "found -5"]),
    c("duplicate_month.csv", Some(4), Some("column 1 ('month')"), &["2025-02 appears twice", "also on line 3", "expected each month once"]),
    c("missing_month.csv", Some(4), Some("column 1 ('month')"), &["must be consecutive", "2025-03 is missing"]),
    c("bad_month.csv", Some(3), Some("column 1 ('month')"), &["expected a month as YYYY-MM", "'2025-13'"]).without(NO_GAP),
    c("too_many_fields.csv", Some(3), None, &["expected 2 fields as in the header, found 3"]).without(NO_GAP),
    c("too_few_fields.csv", Some(4), None, &["expected 2 fields as in the header, found 1"]).without(NO_GAP),
    c("non_utf8.csv", Some(3), Some("column 2 ('clicks')"), &["not valid UTF-8", "0xE9", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
    c("utf16.csv", Some(1), None, &["UTF-16", "expected UTF-8 text"]),
];

#[rustfmt::skip]
const INTEREST: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "expected a header line with the columns month, index"]),
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per month"]),
    c("missing_column.csv", Some(1), None, &["missing the required column 'index'", "month, popularity"]),
    c("text_in_number.csv", Some(3), Some("column 2 ('index')"), &["expected a number", "'lots'"]),
    c("nan.csv", Some(3), Some("column 2 ('index')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(3), Some("column 2 ('index')"), &["expected a finite number", "'Infinity'"]),
    c("overflow.csv", Some(3), Some("column 2 ('index')"), &["expected a finite number", "'1e999'"]),
    c("negative.csv", Some(4), Some("column 2 ('index')"), &["expected a number between 0 and 100", "found -5"]),
    c("above_100.csv", Some(3), Some("column 2 ('index')"), &["expected a number between 0 and 100", "found 101"]),
    c("duplicate_month.csv", Some(4), Some("column 1 ('month')"), &["2025-02 appears twice", "expected each month once"]),
    c("missing_month.csv", Some(4), Some("column 1 ('month')"), &["must be consecutive", "2025-03 is missing"]),
    c("bad_month.csv", Some(3), Some("column 1 ('month')"), &["expected a month as YYYY-MM", "'2025-13'"]).without(NO_GAP),
    c("too_many_fields.csv", Some(3), None, &["expected 2 fields as in the header, found 3"]).without(NO_GAP),
    c("too_few_fields.csv", Some(4), None, &["expected 2 fields as in the header, found 1"]).without(NO_GAP),
    c("non_utf8.csv", Some(3), Some("column 2 ('index')"), &["not valid UTF-8", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
    c("utf16.csv", Some(1), None, &["UTF-16", "expected UTF-8 text"]),
];

#[rustfmt::skip]
const KEYWORDS: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "keyword, cluster, volume, difficulty"]),
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per keyword"]),
    c("missing_column.csv", Some(1), None, &["missing the required column 'difficulty'"]),
    c("text_in_number.csv", Some(3), Some("column 3 ('volume')"), &["expected a number", "'many'"]),
    c("nan.csv", Some(3), Some("column 3 ('volume')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(3), Some("column 5 ('difficulty')"), &["expected a finite number", "'inf'"]),
    c("negative_volume.csv", Some(4), Some("column 3 ('volume')"), &["expected a number at least 0", "found -5"]),
    c("position_zero.csv", Some(2), Some("column 4 ('position')"), &["expected a number between 1 and 100", "found 0"]),
    c("position_above_100.csv", Some(5), Some("column 4 ('position')"), &["expected a number between 1 and 100", "found 101"]),
    c("difficulty_above_100.csv", Some(3), Some("column 5 ('difficulty')"), &["expected a number between 0 and 100", "found 101"]),
    c("difficulty_negative.csv", Some(3), Some("column 5 ('difficulty')"), &["expected a number between 0 and 100", "found -1"]),
    c("branded_not_boolean.csv", Some(6), Some("column 6 ('branded')"), &["expected true or false", "'maybe'"]),
    c("empty_keyword.csv", Some(4), Some("column 1 ('keyword')"), &["expected a keyword, found an empty cell"]),
    c("duplicate_keyword.csv", Some(7), Some("column 1 ('keyword')"), &["listed twice", "also on line 2", "expected each keyword once"]),
    c("keyword_in_two_clusters.csv", Some(7), Some("column 1 ('keyword')"), &["'cedar raised bed kit' is in two clusters", "'raised beds' (line 2)", "a keyword belongs to one cluster"]),
    // The duplicate of a refused row: this used to panic (index out of bounds).
    c("duplicate_of_refused_row.csv", Some(6), Some("column 3 ('volume')"), &["expected a number", "'lots'"]).without(&["listed twice"]),
    c("too_many_fields.csv", Some(3), None, &["expected 6 fields as in the header, found 7"]),
    c("too_few_fields.csv", Some(3), None, &["expected 6 fields as in the header, found 3"]),
    c("non_utf8.csv", Some(3), Some("column 1 ('keyword')"), &["not valid UTF-8", "0xE9", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
];

#[rustfmt::skip]
const QUERIES: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "query, clicks, impressions, position"]),
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per query"]),
    c("missing_column.csv", Some(1), None, &["missing the required column 'impressions'"]),
    c("text_in_number.csv", Some(3), Some("column 3 ('impressions')"), &["expected a number", "'n/a'"]),
    c("nan.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'nan'"]),
    c("infinity.csv", Some(4), Some("column 3 ('impressions')"), &["expected a finite number", "'inf'"]),
    c("negative.csv", Some(5), Some("column 2 ('clicks')"), &["expected a number at least 0", "found -4"]),
    // Average positions start at 1; above 100 is allowed (docs/plan.md).
    c("position_zero.csv", Some(4), Some("column 4 ('position')"), &["expected a number at least 1", "found 0"]),
    c("clicks_above_impressions.csv", Some(3), Some("column 2 ('clicks')"), &["clicks (900) exceed impressions (860)", "expected clicks no larger than impressions"]),
    c("too_many_fields.csv", Some(3), None, &["expected 4 fields as in the header, found 5"]),
    c("too_few_fields.csv", Some(4), None, &["expected 4 fields as in the header, found 2"]),
    c("non_utf8.csv", Some(4), Some("column 2 ('clicks')"), &["not valid UTF-8", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
];

/// A cluster file that cannot be read does not also make the plan "without clusters".
const NO_CLUSTER_NOISE: &[&str] = &["defines no clusters"];

#[rustfmt::skip]
const CLUSTERS: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "cluster, tier, cost, effort"]).without(NO_CLUSTER_NOISE),
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per tier"]).without(NO_CLUSTER_NOISE),
    c("missing_column.csv", Some(1), None, &["missing the required column 'effort'"]).without(NO_CLUSTER_NOISE),
    c("text_in_number.csv", Some(4), Some("column 3 ('cost')"), &["expected a number", "'TBD'"]).without(NO_CLUSTER_NOISE),
    c("nan.csv", Some(4), Some("column 3 ('cost')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(5), Some("column 4 ('effort')"), &["expected a finite number", "'inf'"]),
    // Used to print the upper bound as a 309-digit number.
    c("negative_cost.csv", Some(3), Some("column 3 ('cost')"), &["expected a number at least 0", "found -1300"]).without(&["1797693"]),
    c("effort_zero.csv", Some(3), Some("column 4 ('effort')"), &["expected a positive effort", "found 0"]),
    c("tier_zero.csv", Some(4), Some("column 2 ('tier')"), &["expected a number between 1 and 50", "found 0"]),
    c("tier_not_whole.csv", Some(3), Some("column 2 ('tier')"), &["expected a whole tier number", "found 1.5"]),
    c("duplicate_tier.csv", Some(3), Some("column 2 ('tier')"), &["cluster 'raised beds'", "expected tier 2 here", "once each", "found tier 1"]),
    c("missing_tier.csv", Some(3), Some("column 2 ('tier')"), &["expected tier 2 here", "found tier 3"]),
    c("fraction_out_of_range.csv", Some(2), Some("column 6 ('max_fraction')"), &["expected a number between 0 and 1", "found 1.5"]),
    // Used to pass unnoticed.
    c("min_above_max.csv", Some(2), Some("column 5 ('min_fraction')"), &["min_fraction (0.8) exceeds max_fraction (0.5)", "expected min_fraction <= max_fraction"]),
    c("gain_unknown_distribution.csv", Some(2), Some("column 5 ('gain_distribution')"), &["expected triangular or pert", "'normal'"]),
    c("gain_out_of_order.csv", Some(2), None, &["needs min <= mode <= max", "found 0, 9, 8"]),
    c("unknown_cluster.csv", Some(7), Some("column 1 ('cluster')"), &["'orchids' has no keywords in", "expected one of the clusters there"]),
    c("too_many_fields.csv", Some(4), None, &["expected 5 fields as in the header, found 6"]),
    c("too_few_fields.csv", Some(5), None, &["expected 5 fields as in the header, found 3"]),
    c("non_utf8.csv", Some(4), Some("column 1 ('cluster')"), &["not valid UTF-8", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]).without(NO_CLUSTER_NOISE),
];

#[rustfmt::skip]
const ACTUALS: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "expected a header line with the columns month, clicks"]),
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per month"]),
    c("missing_column.csv", Some(1), None, &["missing the required column 'clicks'", "month, revenue"]),
    c("text_in_number.csv", Some(3), Some("column 2 ('clicks')"), &["expected a number", "'lots'"]),
    c("nan.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'Infinity'"]),
    c("overflow.csv", Some(3), Some("column 2 ('clicks')"), &["expected a finite number", "'1e999'"]),
    c("negative.csv", Some(4), Some("column 2 ('clicks')"), &["expected a number at least 0", "found -5"]),
    c("duplicate_month.csv", Some(4), Some("column 1 ('month')"), &["2027-02 appears twice", "expected each month once"]),
    c("missing_month.csv", Some(4), Some("column 1 ('month')"), &["must be consecutive", "2027-03 is missing"]),
    c("bad_month.csv", Some(3), Some("column 1 ('month')"), &["expected a month as YYYY-MM", "'2027-13'"]).without(NO_GAP),
    // A rule about the file's span of months: no single line applies.
    c("outside_horizon.csv", None, Some("column 1 ('month')"), &["must run from the forecast start 2027-01", "found 2026-11 to 2027-01"]),
    c("too_many_fields.csv", Some(3), None, &["expected 2 fields as in the header, found 3"]).without(NO_GAP),
    c("too_few_fields.csv", Some(4), None, &["expected 2 fields as in the header, found 1"]).without(NO_GAP),
    c("non_utf8.csv", Some(3), Some("column 2 ('clicks')"), &["not valid UTF-8", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
    c("utf16.csv", Some(1), None, &["UTF-16", "expected UTF-8 text"]),
];

#[rustfmt::skip]
const PLAN: &[Case] = &[
    c("empty.toml", Some(1), Some("column 1"), &["the plan is empty", "[budget] total"]),
    c("binary.toml", Some(1), Some("column 1"), &["looks binary", "expected a TOML text file"]),
    c("non_utf8.toml", Some(2), Some("column 12"), &["not valid UTF-8", "expected a TOML file saved as UTF-8"]),
    c("syntax_error.toml", Some(2), Some("column 18"), &["invalid basic string", "expected"]),
    c("unknown_key.toml", Some(21), Some("column 1"), &["unknown key 'tail_levl'", "did you mean 'tail_level'?", "Valid keys here"]),
    c("unknown_key_top_level.toml", Some(4), Some("column 1"), &["unknown key 'horizn'", "did you mean 'horizon'?"]),
    // `requires` belongs to the costs file; tiers of a plan chain by order.
    c("unknown_key_no_suggestion.toml", Some(18), Some("column 1"), &["unknown key 'requires'. Valid keys here:", "value_per_click"]).without(&["did you mean"]),
    c("duplicate_key.toml", Some(21), Some("column 1"), &["duplicate key", "expected each key once"]),
    c("missing_budget.toml", Some(1), Some("column 1"), &["missing the required key 'budget'"]),
    c("missing_required_input.toml", None, Some("key 'history'"), &["[inputs] needs history = \"FILE\""]),
    c("missing_input_file.toml", None, None, &["cannot read", "No such file"]).naming("no-such-history.csv"),
    c("text_in_number.toml", Some(20), Some("column 9"), &["expected a number", "\"lots\""]),
    c("nan.toml", Some(20), Some("column 9 ('total')"), &["total must be a non-negative amount", "found NaN"]).without(&["max_tail_loss"]),
    c("negative.toml", Some(20), Some("column 9 ('total')"), &["total must be a non-negative amount", "found -5"]).without(&["max_tail_loss"]),
    c("infinity.toml", Some(17), Some("column 19 ('value_per_click')"), &["must be a positive amount", "found inf"]),
    c("value_per_click_zero.toml", Some(19), Some("column 19 ('value_per_click')"), &["must be a positive amount", "found 0"]),
    c("horizon_out_of_range.toml", Some(4), Some("column 11 ('horizon')"), &["horizon must be 1 to 60 months", "found 0"]),
    c("scenarios_out_of_range.toml", Some(6), Some("column 13 ('scenarios')"), &["scenarios must be 100 to 10,000,000", "found 10"]),
    c("tail_level_out_of_range.toml", Some(21), Some("column 14 ('tail_level')"), &["tail_level must be between 0 and 1", "found 1.5"]),
    c("max_tail_loss_text.toml", Some(22), Some("column 17 ('max_tail_loss')"), &["an amount or a percentage of the budget", "\"a tenth\""]),
    c("bad_month.toml", Some(3), Some("column 9 ('start')"), &["start must be a month as YYYY-MM", "'2027-13'"]),
    // Used to pass when value_per_click was set.
    c("seasonality_wrong_count.toml", None, Some("key 'seasonality'"), &["12 positive numbers", "found 2 values"]),
    c("negative_cost.toml", Some(27), Some("column 34 ('cost')"), &["cost must be a non-negative amount", "found -1300"]),
    c("cost_nan.toml", Some(27), Some("column 34 ('cost')"), &["cost must be a non-negative amount", "found NaN"]),
    c("effort_zero.toml", Some(27), Some("column 49 ('effort')"), &["effort must be a positive number", "found 0"]),
    c("fraction_out_of_range.toml", Some(26), Some("column 72 ('max_fraction')"), &["max_fraction must be between 0 and 1", "found 1.5"]),
    c("min_above_max.toml", Some(26), Some("column 72 ('min_fraction')"), &["min_fraction (0.8) exceeds max_fraction (0.5)", "expected min_fraction <= max_fraction"]),
    c("min_above_lower_tier_max.toml", Some(24), Some("column 8 ('name')"), &["tier 1 is capped at max_fraction 0.5", "expected max_fraction of at least 1"]),
    c("gain_unknown_distribution.toml", Some(27), Some("column 78 ('distribution')"), &["\"triangular\" or \"pert\"", "\"normal\""]),
    c("no_tiers.toml", Some(24), Some("column 8 ('tiers')"), &["has no tiers", "expected at least one"]),
    c("duplicate_cluster.toml", Some(28), Some("column 8 ('name')"), &["'raised beds' is defined twice", "expected each cluster once"]),
    c("cluster_in_plan_and_file.toml", Some(25), Some("column 8 ('name')"), &["defined both in the plan", "clusters.csv, line 2", "define it once"]),
    c("cluster_without_keywords.toml", Some(24), Some("column 8 ('name')"), &["'orchids' has no keywords in", "expected one of the clusters there"]),
];

#[rustfmt::skip]
const RETURNS: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "expected a header line of investment ids"]),
    c("header_only.csv", Some(2), None, &["no futures", "expected one row of net returns per simulated future"]),
    c("text_in_number.csv", Some(3), Some("column 2 ('a/2')"), &["expected a number", "'high'"]),
    c("nan.csv", Some(4), Some("column 1 ('a/1')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(4), Some("column 3 ('b/1')"), &["expected a finite number", "'-inf'"]),
    c("too_large.csv", Some(2), Some("column 3 ('b/1')"), &["too large", "expected a net return below 3.4e38"]),
    c("duplicate_id.csv", Some(1), Some("column 3 ('a/1')"), &["'a/1' appears twice", "expected each column once"]),
    c("empty_id.csv", Some(1), Some("column 2 ('')"), &["an empty investment id", "expected a name such as cluster/tier"]),
    c("id_missing_from_costs.csv", Some(1), Some("column 4 ('c/1')"), &["'c/1' has no row in the costs file costs.csv", "expected every id of the returns header there"]),
    c("too_many_fields.csv", Some(3), None, &["expected 3 fields as in the header, found 4"]),
    c("too_few_fields.csv", Some(4), None, &["expected 3 fields as in the header, found 2"]),
    // Used to show the replacement character instead of saying "not UTF-8".
    c("non_utf8.csv", Some(3), Some("column 1 ('a/1')"), &["not valid UTF-8", "0xE9", "expected UTF-8 text"]),
    c("non_utf8_header.csv", Some(1), Some("column 3 ('b/\u{FFFD}')"), &["not valid UTF-8", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
];

#[rustfmt::skip]
const COSTS: &[Case] = &[
    c("empty.csv", Some(1), None, &["the file is empty", "expected a header line with the columns id, cost"]),
    // Used to blame every id of the returns file instead.
    c("header_only.csv", Some(2), None, &["no rows after the header", "expected one row per investment id"]).without(&["returns.csv"]),
    c("missing_column.csv", Some(1), None, &["missing the required column 'cost'", "id, price"]),
    c("text_in_number.csv", Some(4), Some("column 2 ('cost')"), &["expected a number", "'two hundred'"]),
    c("nan.csv", Some(2), Some("column 2 ('cost')"), &["expected a finite number", "'NaN'"]),
    c("infinity.csv", Some(2), Some("column 2 ('cost')"), &["expected a finite number", "'inf'"]),
    c("negative_cost.csv", Some(4), Some("column 2 ('cost')"), &["expected a number at least 0", "found -200"]).without(&["1797693"]),
    c("fraction_out_of_range.csv", Some(3), Some("column 3 ('max_fraction')"), &["expected a number between 0 and 1", "found 1.5"]),
    c("min_above_max.csv", Some(4), Some("column 5 ('min_fraction')"), &["min_fraction (0.8) exceeds max_fraction (0.5)", "expected min_fraction <= max_fraction"]),
    c("requires_unknown_id.csv", Some(3), Some("column 4 ('requires')"), &["'a/2' requires 'a/0', which is not an id in this file", "expected an id listed in the id column"]),
    c("requires_cycle.csv", Some(2), Some("column 4 ('requires')"), &["'a/1' requires itself through a cycle", "expected a chain that ends at a first tier"]),
    c("requires_itself.csv", Some(4), Some("column 4 ('requires')"), &["'b/1' requires itself", "expected a chain that ends at a first tier"]),
    // a/2 requires a/1, whose row is refused: one problem, not two.
    c("requires_refused_row.csv", Some(2), Some("column 2 ('cost')"), &["expected a number", "'TBD'"]).without(&["not an id in this file"]),
    // Used to report the requires column as column 4 wherever it was.
    c("requires_column_moved.csv", Some(3), Some("column 2 ('requires')"), &["'a/2' requires 'a/9'", "not an id in this file"]),
    c("duplicate_id.csv", Some(5), Some("column 1 ('id')"), &["'a/2' is listed twice", "also on line 3", "expected each id once"]),
    c("id_not_in_returns.csv", Some(5), Some("column 1 ('id')"), &["'c/1' is not in the returns header of returns.csv", "expected the same ids in both files"]),
    c("empty_id.csv", Some(4), Some("column 1 ('id')"), &["expected an investment id, found an empty cell"]),
    c("too_many_fields.csv", Some(3), None, &["expected 5 fields as in the header, found 6"]),
    c("too_few_fields.csv", Some(4), None, &["expected 5 fields as in the header, found 2"]),
    c("non_utf8.csv", Some(3), Some("column 2 ('cost')"), &["not valid UTF-8", "expected UTF-8 text"]),
    c("binary.csv", Some(3), None, &["looks binary", "expected CSV text"]),
];

#[rustfmt::skip]
const READERS: &[Reader] = &[
    Reader { name: "history", target: "history.csv", args: CHECK, cases: HISTORY },
    Reader { name: "interest", target: "interest.csv", args: CHECK, cases: INTEREST },
    Reader { name: "keywords", target: "keywords.csv", args: CHECK, cases: KEYWORDS },
    Reader { name: "queries", target: "queries.csv", args: CHECK, cases: QUERIES },
    Reader { name: "clusters", target: "clusters.csv", args: CHECK, cases: CLUSTERS },
    Reader { name: "actuals", target: "actuals.csv", args: CHECK, cases: ACTUALS },
    Reader { name: "plan", target: "plan.toml", args: CHECK, cases: PLAN },
    Reader { name: "returns", target: "returns.csv", args: ALLOCATE, cases: RETURNS },
    Reader { name: "costs", target: "costs.csv", args: ALLOCATE, cases: COSTS },
];

/// Limits (issue 9, item 4): plans and flags no run can meet. A case with a
/// fixture copies it from tests/fixtures/bad/limits beside the base
/// project's files; the others only change flags. Each names the file or
/// flag at fault, says what would work, and exits with the documented code.
struct Limit {
    args: &'static [&'static str],
    case: Case,
}

/// A limit case with exit code `code`.
const fn limit(
    code: i32,
    fixture: &'static str,
    names: &'static str,
    expect: &'static [&'static str],
) -> Case {
    Case {
        code,
        names: Some(names),
        ..c(fixture, None, None, expect)
    }
}

#[rustfmt::skip]
const LIMITS: &[Limit] = &[
    Limit {
        args: &["check", "budget_zero.toml"],
        case: c("budget_zero.toml", Some(20), Some("column 9 ('total')"), &["total is 0, so no tier can be funded", "expected a positive amount"]),
    },
    Limit {
        args: &["allocate", "plan.toml", "--budget", "0", "--scenarios", "200", "--quiet"],
        case: limit(2, "", "--budget", &["must be a positive amount", "a budget of 0 funds nothing", "found 0"]),
    },
    Limit {
        args: &["check", "must_fund_over_budget.toml"],
        case: limit(3, "must_fund_over_budget.toml", "must_fund_over_budget.toml", &["must-fund tiers", "raised beds/1, raised beds/2", "cost EUR 3,100 but the budget is EUR 2,000", "at least EUR 3,100"]),
    },
    Limit {
        args: &["allocate", "must_fund.toml", "--budget", "1000", "--scenarios", "200", "--quiet"],
        case: limit(3, "must_fund.toml", "must_fund.toml", &["must-fund tiers", "the budget is EUR 1,000", "at least EUR 1,800"]),
    },
    Limit {
        args: &["allocate", "--returns", "returns.csv", "--costs", "must_fund_costs.csv", "--budget", "100", "--max-tail-loss", "0"],
        case: limit(3, "must_fund_costs.csv", "--max-tail-loss", &["no allocation keeps the tail loss", "the smallest tail loss achievable", "raise --max-tail-loss to at least"]),
    },
    Limit {
        args: &["allocate", "--returns", "returns.csv", "--costs", "must_fund_costs.csv", "--budget", "50"],
        case: limit(3, "must_fund_costs.csv", "--budget", &["must-fund minimums cost 100.00 but the budget is 50.00", "raise --budget to at least 100.00"]),
    },
    Limit {
        args: &["allocate", "--returns", "returns.csv", "--costs", "costs.csv", "--budget", "0"],
        case: limit(2, "", "--budget", &["must be a positive amount", "a budget of 0 funds nothing"]),
    },
    Limit {
        args: &["simulate", "plan.toml", "--scenarios", "1000000", "--max-memory", "1", "--quiet"],
        case: limit(1, "", "--max-memory", &["above the limit of 1 MiB", "even the smallest run (100 futures)", "raise --max-memory to at least"]).without(&["--scenarios 0"]),
    },
    Limit {
        args: &["allocate", "plan.toml", "--scenarios", "1000000", "--max-memory", "100", "--quiet"],
        case: limit(1, "", "--max-memory", &["above the limit of 100 MiB", "the largest count that fits is", "use --scenarios"]).without(&["--scenarios 0"]),
    },
];

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/bad")
}

fn read(path: &Path) -> Vec<u8> {
    std::fs::read(path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()))
}

/// A project from `furrow init` with the base plan, cluster, returns and
/// costs files copied in.
fn base_project() -> (tempfile::TempDir, PathBuf) {
    let (tmp, dir) = project();
    for f in ["plan.toml", "clusters.csv", "returns.csv", "costs.csv"] {
        write(&dir, f, &read(&fixtures().join("base").join(f)));
    }
    (tmp, dir)
}

/// Checks one run against its case; the error says what was wrong.
fn verdict(case: &Case, file: &str, o: &Output) -> Result<(), String> {
    let err = stderr(o);
    if o.status.code() != Some(case.code) {
        return Err(format!(
            "exit code {:?}, expected {}; stderr: {err}",
            o.status.code(),
            case.code
        ));
    }
    if !o.stdout.is_empty() {
        return Err(format!("stdout is not empty: {}", stdout(o)));
    }
    if err.contains("panicked") {
        return Err(format!("panicked: {err}"));
    }
    let file = case.names.unwrap_or(file);
    let line = case.line.map(|n| format!("line {n}"));
    let located = err.lines().find(|l| {
        l.contains(file)
            && line
                .as_ref()
                .is_none_or(|n| l.contains(&format!("{n},")) || l.contains(&format!("{n}:")))
            && case.column.is_none_or(|c| l.contains(c))
            && case.expect.iter().all(|w| l.contains(w))
    });
    if located.is_none() {
        return Err(format!(
            "no line of stderr names {file}{}{} with {:?}; stderr: {err}",
            line.map(|l| format!(", {l}")).unwrap_or_default(),
            case.column.map(|c| format!(", {c}")).unwrap_or_default(),
            case.expect
        ));
    }
    if let Some(w) = case.not.iter().find(|w| err.contains(*w)) {
        return Err(format!("stderr should not mention {w:?}: {err}"));
    }
    Ok(())
}

/// Runs every case of `reader`, restoring the good file after each, and
/// reports all failures together.
fn run_reader(name: &str) {
    let reader = READERS
        .iter()
        .find(|r| r.name == name)
        .expect("a known reader");
    let (_tmp, dir) = base_project();
    let good = read(&dir.join(reader.target));
    let mut failures = Vec::new();
    for case in reader.cases {
        let bad = read(&fixtures().join(reader.name).join(case.fixture));
        write(&dir, reader.target, &bad);
        let o = furrow(&dir, reader.args);
        write(&dir, reader.target, &good);
        if let Err(e) = verdict(case, reader.target, &o) {
            failures.push(format!("{name}/{}: {e}", case.fixture));
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n\n{}",
        failures.len(),
        reader.cases.len(),
        failures.join("\n\n")
    );
}

#[test]
fn the_base_project_is_clean() {
    let (_tmp, dir) = base_project();
    let o = furrow(&dir, CHECK);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let s = stdout(&o);
    assert!(s.contains("Actuals: 3 months observed"), "{s}");
    assert!(s.contains("raised beds"), "{s}");
    let o = furrow(&dir, ALLOCATE);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(stdout(&o).contains("Budget used"), "{}", stdout(&o));
}

#[test]
fn history() {
    run_reader("history");
}

#[test]
fn interest() {
    run_reader("interest");
}

#[test]
fn keywords() {
    run_reader("keywords");
}

#[test]
fn queries() {
    run_reader("queries");
}

#[test]
fn clusters() {
    run_reader("clusters");
}

#[test]
fn actuals() {
    run_reader("actuals");
}

#[test]
fn plan() {
    run_reader("plan");
}

#[test]
fn returns() {
    run_reader("returns");
}

#[test]
fn costs() {
    run_reader("costs");
}

#[test]
fn limits() {
    let (_tmp, dir) = base_project();
    let mut failures = Vec::new();
    for l in LIMITS {
        let f = l.case.fixture;
        if !f.is_empty() {
            write(&dir, f, &read(&fixtures().join("limits").join(f)));
        }
        let o = furrow(&dir, l.args);
        if let Err(e) = verdict(&l.case, f, &o) {
            failures.push(format!("furrow {}: {e}", l.args.join(" ")));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}

/// Every fixture file has a case and every case its fixture, so the folder
/// and the tables cannot drift apart.
#[test]
fn every_fixture_has_a_case() {
    let mut listed: BTreeSet<String> = READERS
        .iter()
        .flat_map(|r| {
            r.cases
                .iter()
                .map(move |c| format!("{}/{}", r.name, c.fixture))
        })
        .collect();
    listed.extend(
        LIMITS
            .iter()
            .filter(|l| !l.case.fixture.is_empty())
            .map(|l| format!("limits/{}", l.case.fixture)),
    );
    let mut on_disk = BTreeSet::new();
    for dir in std::fs::read_dir(fixtures()).expect("the fixtures folder") {
        let dir = dir.expect("a folder entry").path();
        if !dir.is_dir() {
            continue; // the README
        }
        let reader = dir
            .file_name()
            .unwrap_or_default()
            .to_string_lossy()
            .to_string();
        if reader == "base" {
            continue;
        }
        for f in std::fs::read_dir(&dir).expect("a reader folder") {
            let name = f.expect("a file entry").file_name();
            on_disk.insert(format!("{reader}/{}", name.to_string_lossy()));
        }
    }
    let missing: Vec<_> = listed.difference(&on_disk).collect();
    let orphans: Vec<_> = on_disk.difference(&listed).collect();
    assert!(missing.is_empty(), "cases without a fixture: {missing:?}");
    assert!(orphans.is_empty(), "fixtures without a case: {orphans:?}");
    assert!(
        listed.len() >= 150,
        "the catalogue shrank to {}",
        listed.len()
    );
}

/// Whole tiers that all cost more than the budget: a valid run that funds
/// nothing (exit 0), and its explanation says why, with the cheapest cost
/// and what would work, rather than blaming the tail-loss limit.
#[test]
fn whole_tiers_over_the_budget_are_explained() {
    let (_tmp, dir) = base_project();
    let o = furrow(
        &dir,
        &[
            "allocate",
            "--returns",
            "returns.csv",
            "--costs",
            "costs.csv",
            "--budget",
            "60",
            "--whole-tiers",
        ],
    );
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let out = stdout(&o);
    for w in [
        "every tier with a positive expected net return costs more than the budget of 60",
        "the cheapest, with the tiers it requires, costs 100",
        "drop --whole-tiers",
    ] {
        assert!(out.contains(w), "missing {w:?} in: {out}");
    }
    assert!(!out.contains("tail-loss limit of"), "{out}");
}
