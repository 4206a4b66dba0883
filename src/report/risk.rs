//! The report's risk charts, drawn from the data in `summary.json`: the
//! efficient frontier (expected net return against tail loss) with the
//! chosen and the best expected-return plans marked, the distribution of
//! the chosen plan's net return with its VaR and CVaR, and the
//! variance-driver tornados.
//!
//! VaR and CVaR are those of the allocation (Rockafellar & Uryasev,
//! "Optimization of conditional value-at-risk", Journal of Risk 2(3),
//! 2000), losses being minus the net return, so the markers sit at minus
//! those values on the net-return axis.

use super::charts::{at_least, nice_ticks, Layout, Legend, Plot, Swatch, Ticks};
use super::svg::{data, money, number, shorten, Anchor, Shape};
use super::Summary;
use crate::allocate::{Allocation, FrontierPoint};
use crate::drivers::{Driver, DriverTable};

pub use crate::text::tail_share;

/// A solved frontier point as the chart draws it.
struct Mark {
    limit: f64,
    tail_loss: f64,
    expected: f64,
    spend: f64,
}

/// The solved points in order of tail loss; a missing point (one the
/// solver could not answer) is skipped, the tables say why.
fn frontier_points(sm: &Summary) -> Vec<Mark> {
    let mark = |p: &FrontierPoint| {
        Some(Mark {
            limit: p.max_tail_loss,
            tail_loss: p.tail_loss.filter(|v| v.is_finite())?,
            expected: p.expected_net_return.filter(|v| v.is_finite())?,
            spend: p.budget_used.unwrap_or(0.0),
        })
    };
    let mut pts: Vec<Mark> = sm.frontier.iter().filter_map(mark).collect();
    pts.sort_by(|a, b| a.tail_loss.total_cmp(&b.tail_loss));
    pts
}

fn span_of(it: impl Iterator<Item = f64>) -> (f64, f64) {
    it.filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        })
}

/// Data ranges of the frontier chart. The tail-loss limit widens the x
/// range only when it lies near the points; a limit far beyond them (one
/// that does not bind) would squeeze the frontier into a corner, so it is
/// stated in words instead (`false`). Differences below a thousandth of the
/// budget (or one unit) are solver noise, not a frontier, and get no axis.
fn frontier_ranges(sm: &Summary, pts: &[Mark]) -> ((f64, f64), (f64, f64), bool) {
    let (a, b) = (&sm.allocation, &sm.best_expected_return);
    let tails = pts.iter().map(|p| p.tail_loss);
    let (x0, x1) = span_of(tails.chain([a.tail_loss, b.tail_loss]));
    let ys = pts.iter().map(|p| p.expected);
    let y = span_of(ys.chain([a.expected_net_return, b.expected_net_return]));
    let room = ((x1 - x0) * 0.5)
        .max(x1.abs().max(x0.abs()) * 0.05)
        .max(1.0);
    let min_span = (a.budget.abs() * 1e-3).max(1.0);
    let (x, shown) = match a.max_tail_loss {
        Some(l) if l.is_finite() && l >= x0 - room && l <= x1 + room => {
            ((x0.min(l), x1.max(l)), true)
        }
        _ => ((x0, x1), false),
    };
    (at_least(x, min_span), at_least(y, min_span), shown)
}

fn frontier_legend(limit_shown: bool) -> Vec<Legend> {
    let mut legend = vec![
        Legend::new(
            Swatch::LineMarker("s-frontier", Shape::Circle, "m-frontier"),
            "efficient frontier",
        ),
        Legend::new(Swatch::Marker(Shape::BigDiamond, "m-chosen"), "chosen plan"),
        Legend::new(
            Swatch::Marker(Shape::Square, "m-best"),
            "best expected return (no limit)",
        ),
    ];
    if limit_shown {
        legend.push(Legend::new(Swatch::Line("s-limit"), "tail-loss limit"));
    }
    legend
}

/// Expected net return against tail loss, one marker per frontier point.
pub fn frontier(sm: &Summary) -> String {
    let pts = frontier_points(sm);
    let cur = &sm.currency;
    let share = tail_share(sm.allocation.tail_level);
    let ((x0, x1), (y0, y1), limit_shown) = frontier_ranges(sm, &pts);
    let (xt, yt) = (nice_ticks(x0, x1, 6), nice_ticks(y0, y1, 6));
    let legend = frontier_legend(limit_shown);
    let mut p = Plot::new(Layout::default(), &legend, (xt.lo, xt.hi), (yt.lo, yt.hi));
    let x_title = format!("tail loss: average loss in the worst {share} of futures ({cur})");
    p.x_axis(&xt, &x_title);
    p.y_axis(&yt, &format!("expected net return ({cur})"));
    limit_line(&mut p, sm.allocation.max_tail_loss, limit_shown, cur);
    frontier_marks(&mut p, &pts);
    plan_markers(&mut p, sm);
    let title = "Efficient frontier: expected net return against tail loss";
    p.finish("chart-frontier", title, &frontier_desc(sm, &pts))
}

/// The frontier's line and one marker per point, with its data.
fn frontier_marks(p: &mut Plot, pts: &[Mark]) {
    let line: Vec<(f64, f64)> = pts.iter().map(|q| (q.tail_loss, q.expected)).collect();
    p.line(&line, "s-frontier", &[("data-series", "frontier".into())]);
    p.svg.open("frontier-points", &[]);
    for q in pts {
        let attrs = [
            ("data-tail-loss", data(q.tail_loss)),
            ("data-expected", data(q.expected)),
            ("data-limit", data(q.limit)),
            ("data-spend", data(q.spend)),
        ];
        let (x, y) = (q.tail_loss, q.expected);
        p.marker(x, y, Shape::Circle, "m-frontier", &attrs);
    }
    p.svg.close();
}

fn limit_line(p: &mut Plot, limit: Option<f64>, shown: bool, cur: &str) {
    let Some(l) = limit else { return };
    if shown {
        let label = format!("limit {}", money(l, cur));
        p.vline(l, "s-limit", (&label, 0), None, &[("data-value", data(l))]);
        return;
    }
    let label = format!(
        "limit {}: off the chart to the right, not binding",
        money(l, cur)
    );
    let at = (p.area.right - 4.0, p.area.top + 12.0);
    p.svg.text(at, Anchor::End, "ref-label", &label);
}

fn plan_markers(p: &mut Plot, sm: &Summary) {
    let (a, b) = (&sm.allocation, &sm.best_expected_return);
    let near = |u: f64, v: f64| (u - v).abs() <= 1e-6 * (1.0 + u.abs());
    let same = near(a.tail_loss, b.tail_loss) && near(a.expected_net_return, b.expected_net_return);
    let at = |x: &Allocation| (x.tail_loss, x.expected_net_return);
    let attrs = |x: &Allocation| {
        [
            ("data-tail-loss", data(x.tail_loss)),
            ("data-expected", data(x.expected_net_return)),
        ]
    };
    p.marker(
        b.tail_loss,
        b.expected_net_return,
        Shape::Square,
        "m-best",
        &attrs(b),
    );
    let (x, y) = at(a);
    p.marker(x, y, Shape::BigDiamond, "m-chosen", &attrs(a));
    if same {
        point_label(p, at(a), "chosen plan = best expected return", false);
    } else {
        point_label(p, at(a), "chosen plan", true);
        point_label(p, at(b), "best expected return", false);
    }
}

/// A label beside a point of the frontier. A frontier rises to the right
/// and bends down, so the space above-left and below-right of it is
/// empty: labels go below-right (`below`) or above-left, and switch sides
/// when the text would leave the plotting area.
fn point_label(p: &mut Plot, at: (f64, f64), text: &str, below: bool) {
    if !(at.0.is_finite() && at.1.is_finite()) {
        return;
    }
    let (px, py) = p.at(at.0, at.1);
    let w = super::svg::text_width(text, 12.0);
    let right = if below {
        px + 12.0 + w <= p.area.right
    } else {
        px - 12.0 - w < p.area.left
    };
    let (tx, anchor) = if right {
        (px + 12.0, Anchor::Start)
    } else {
        (px - 12.0, Anchor::End)
    };
    let dy = if below { 18.0 } else { -10.0 };
    let ty = (py + dy).clamp(p.area.top + 12.0, p.area.bottom - 4.0);
    p.svg.text((tx, ty), anchor, "point-label halo", text);
    p.svg.text((tx, ty), anchor, "point-label", text);
}

fn frontier_desc(sm: &Summary, pts: &[Mark]) -> String {
    let cur = &sm.currency;
    let list: Vec<String> = pts
        .iter()
        .map(|q| {
            format!(
                "tail loss {} gives {}",
                number(q.tail_loss, 0),
                number(q.expected, 0)
            )
        })
        .collect();
    format!(
        "{} frontier points ({cur}): {}. Chosen plan: tail loss {}, expected net return {}.",
        pts.len(),
        list.join("; "),
        money(sm.allocation.tail_loss, cur),
        money(sm.allocation.expected_net_return, cur)
    )
}

const DISTRIBUTION_TITLE: &str = "Distribution of the chosen plan's net return";

/// The histogram of the chosen plan's net return with VaR, CVaR and the mean.
pub fn distribution(sm: &Summary) -> String {
    let h = &sm.return_distribution;
    let a = &sm.allocation;
    let cur = &sm.currency;
    let (lo, hi) = match (h.edges.first(), h.edges.last()) {
        (Some(&lo), Some(&hi)) if h.counts.len() >= 2 => (lo, hi),
        (Some(&lo), Some(&hi)) => {
            let why = format!(
                "the net return is {} in every future (the plan funds nothing, or nothing that varies)",
                money((lo + hi) / 2.0, cur)
            );
            return super::figures::empty("chart-distribution", DISTRIBUTION_TITLE, &why);
        }
        _ => return super::figures::empty("chart-distribution", DISTRIBUTION_TITLE, "no futures"),
    };
    let top = h.counts.iter().copied().max().unwrap_or(0) as f64;
    let xt = return_axis(
        (lo, hi),
        (-a.tail_loss).min(-a.value_at_risk),
        a.budget_used,
    );
    // Headroom above the highest bar for the labels of the marker lines.
    let yt = nice_ticks(0.0, top * 1.3, 5);
    let legend = distribution_legend(&tail_share(a.tail_level));
    let mut p = Plot::new(Layout::default(), &legend, (xt.lo, xt.hi), (yt.lo, yt.hi));
    p.x_axis(&xt, &format!("net return over the horizon ({cur})"));
    p.y_axis(&yt, "futures (count)");
    histogram_bars(&mut p, sm, xt.lo);
    risk_lines(&mut p, a, cur);
    p.finish(
        "chart-distribution",
        DISTRIBUTION_TITLE,
        &distribution_desc(sm),
    )
}

fn distribution_legend(share: &str) -> [Legend; 5] {
    [
        Legend::new(Swatch::Fill("hist-loss"), "futures with a loss"),
        Legend::new(Swatch::Fill("hist-gain"), "futures with a gain"),
        Legend::new(Swatch::Line("s-mean"), "expected (mean)"),
        Legend::new(Swatch::Line("s-var"), format!("VaR ({share} tail)")),
        Legend::new(
            Swatch::Line("s-cvar"),
            format!("CVaR: average of the worst {share}"),
        ),
    ]
}

/// The mean, VaR and CVaR as labelled vertical lines on the net-return
/// axis (the risk figures are losses, so they sit at minus their value).
fn risk_lines(p: &mut Plot, a: &Allocation, cur: &str) {
    // Short labels (the legend says what each line is), so that each can
    // find room beside its line without crossing the others.
    let (mean, var, cvar) = (a.expected_net_return, -a.value_at_risk, -a.tail_loss);
    let marks = [
        (
            mean,
            "s-mean",
            format!("mean {}", money(mean, cur)),
            Anchor::Start,
        ),
        (
            var,
            "s-var",
            format!("VaR {}", money(var, cur)),
            Anchor::Start,
        ),
        (
            cvar,
            "s-cvar",
            format!("CVaR {}", money(cvar, cur)),
            Anchor::End,
        ),
    ];
    let pxs: Vec<f64> = marks.iter().map(|m| p.x.at(m.0)).collect();
    let widths: Vec<f64> = marks
        .iter()
        .map(|m| super::svg::text_width(&m.2, 11.5))
        .collect();
    let prefer: Vec<Anchor> = marks.iter().map(|m| m.3).collect();
    let sides = label_sides(&pxs, &widths, &prefer, (p.area.left, p.area.right));
    for (row, ((x, class, label, _), side)) in marks.iter().zip(sides).enumerate() {
        let attrs = [("data-value", data(*x))];
        p.vline(*x, class, (label, row), Some(side), &attrs);
    }
}

/// The side of its line each marker label goes on: one that fits in the
/// plotting area (`bounds`) and that crosses as few of the other marker
/// lines as possible, the preferred side on a tie, so a label is not
/// struck through by a neighbouring line. `End` is left of the line.
fn label_sides(pxs: &[f64], widths: &[f64], prefer: &[Anchor], bounds: (f64, f64)) -> Vec<Anchor> {
    let crossings = |i: usize, span: (f64, f64)| {
        pxs.iter()
            .enumerate()
            .filter(|&(j, &x)| j != i && x >= span.0 && x <= span.1)
            .count()
    };
    (0..pxs.len())
        .map(|i| {
            let (px, w) = (pxs[i], widths[i]);
            let right = (px + 4.0, px + 4.0 + w);
            let left = (px - 4.0 - w, px - 4.0);
            let score = |span: (f64, f64)| {
                let outside = span.0 < bounds.0 || span.1 > bounds.1;
                (outside, crossings(i, span))
            };
            let (r, l) = (score(right), score(left));
            match prefer[i] {
                Anchor::End if l <= r => Anchor::End,
                Anchor::End => Anchor::Start,
                _ if r <= l => Anchor::Start,
                _ => Anchor::End,
            }
        })
        .collect()
}

/// The net-return axis of the distribution chart: nice ticks over the
/// binned data and the risk lines, but never below the largest possible
/// loss, the whole spend (a net return cannot fall below minus the spend,
/// and rounding the axis out to a nice tick could run far below it). The
/// axis then starts at minus the spend, with the ticks inside it.
fn return_axis(data: (f64, f64), risk: f64, spend: f64) -> Ticks {
    let mut xt = nice_ticks(data.0.min(risk), data.1.max(0.0), 7);
    let floor = -spend;
    if spend.is_finite() && spend > 0.0 && xt.lo < floor && data.0.min(risk) >= floor - 1e-9 * spend
    {
        xt.lo = floor;
        xt.values.retain(|&v| v >= floor - 1e-9 * spend);
    }
    xt
}

fn histogram_bars(p: &mut Plot, sm: &Summary, x_lo: f64) {
    let h = &sm.return_distribution;
    p.svg.open("histogram", &[]);
    for (w, &count) in h.edges.windows(2).zip(&h.counts) {
        let class = if w[1] <= 0.0 {
            "hist-loss"
        } else {
            "hist-gain"
        };
        let attrs = [
            ("data-lo", data(w[0])),
            ("data-hi", data(w[1])),
            ("data-count", count.to_string()),
        ];
        // The first bin may start below the axis (bins start at a whole
        // multiple of their width); it is drawn from the axis start.
        p.bar((w[0].max(x_lo), w[1]), (0.0, count as f64), class, &attrs);
    }
    p.svg.close();
}

fn distribution_desc(sm: &Summary) -> String {
    let a = &sm.allocation;
    let cur = &sm.currency;
    let n: usize = sm.return_distribution.counts.iter().sum();
    format!(
        "Histogram of the net return in {} futures, from {} to {}. Expected {}; chance of a loss {}; VaR {} and CVaR {} as losses in the worst {}.",
        number(n as f64, 0),
        money(sm.return_distribution.edges.first().copied().unwrap_or(f64::NAN), cur),
        money(sm.return_distribution.edges.last().copied().unwrap_or(f64::NAN), cur),
        money(a.expected_net_return, cur),
        super::svg::chance(a.chance_of_loss),
        money(a.value_at_risk, cur),
        money(a.tail_loss, cur),
        tail_share(a.tail_level)
    )
}

/// Most inputs a tornado shows.
const TORNADO_ROWS: usize = 10;

/// The inputs a tornado shows: those that vary, largest share first.
fn tornado_rows(t: &DriverTable) -> Vec<&Driver> {
    t.drivers
        .iter()
        .filter(|d| !d.constant && d.outcome_low.is_finite() && d.outcome_high.is_finite())
        .take(TORNADO_ROWS)
        .collect()
}

fn tornado_legend() -> [Legend; 3] {
    [
        Legend::new(Swatch::Fill("low"), "input in its bottom decile"),
        Legend::new(Swatch::Fill("high"), "input in its top decile"),
        Legend::new(Swatch::Line("s-mean"), "mean outcome"),
    ]
}

/// The tornado of driver table `k`: the mean outcome with each input in
/// its bottom and its top decile.
pub fn tornado(sm: &Summary, k: usize) -> String {
    let id = format!("chart-drivers-{}", k + 1);
    let Some(t) = sm.drivers.tables.get(k) else {
        return super::figures::empty(&id, "Variance drivers", "no driver table");
    };
    let rows = tornado_rows(t);
    let title = format!("What drives the {}", t.outcome);
    if rows.is_empty() {
        let why = t.note.clone().unwrap_or_else(|| "no input varies".into());
        return super::figures::empty(&id, &title, &why);
    }
    let unit = if t.outcome.contains("clicks") {
        "clicks"
    } else {
        &sm.currency
    };
    let mut p = tornado_frame(t, &rows, unit);
    for (i, d) in rows.iter().enumerate() {
        tornado_row(&mut p, t.mean, i as f64, d);
    }
    let mean = format!("mean {}", number(t.mean, 0));
    let attrs = [("data-value", data(t.mean))];
    p.vline(t.mean, "s-mean", (&mean, 0), Some(Anchor::Start), &attrs);
    p.finish(&id, &title, &tornado_desc(t, &rows))
}

/// The tornado's frame: one row per input (and an empty one on top for
/// the mean's label), the outcome along x.
fn tornado_frame(t: &DriverTable, rows: &[&Driver], unit: &str) -> Plot {
    let vals = rows.iter().flat_map(|d| [d.outcome_low, d.outcome_high]);
    let (lo, hi) = span_of(vals.chain([t.mean]));
    let xt = nice_ticks(lo, hi, 6);
    let n = rows.len() as f64;
    let layout = Layout {
        height: 130.0 + 28.0 * n,
        left: 230.0,
        right: 40.0,
        ..Layout::default()
    };
    let mut p = Plot::new(layout, &tornado_legend(), (xt.lo, xt.hi), (n - 0.5, -1.3));
    p.x_axis(
        &xt,
        &format!("mean {} over the futures ({unit})", t.outcome),
    );
    let names: Vec<String> = rows.iter().map(|d| shorten(&d.input, 34)).collect();
    p.y_categories(&names);
    p
}

fn tornado_row(p: &mut Plot, mean: f64, y: f64, d: &Driver) {
    let attrs = [
        ("data-input", d.input.clone()),
        ("data-low", data(d.outcome_low)),
        ("data-high", data(d.outcome_high)),
        ("data-share", data(d.share)),
    ];
    p.svg.open("tornado-row", &attrs);
    p.bar((mean, d.outcome_low), (y - 0.3, y + 0.3), "low", &[]);
    p.bar((mean, d.outcome_high), (y - 0.3, y + 0.3), "high", &[]);
    p.svg.close();
}

fn tornado_desc(t: &DriverTable, rows: &[&Driver]) -> String {
    let list: Vec<String> = rows
        .iter()
        .map(|d| {
            format!(
                "{}: {} to {}",
                d.input,
                number(d.outcome_low, 0),
                number(d.outcome_high, 0)
            )
        })
        .collect();
    format!(
        "Mean {} {}; with each input in its bottom and top decile: {}.",
        t.outcome,
        number(t.mean, 0),
        list.join("; ")
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn marker_labels_avoid_crossing_the_other_marker_lines() {
        // CVaR at 100, VaR at 130, mean at 400 px on an 80..900 area; each
        // label 250 px wide. The CVaR label prefers the left but does not
        // fit there, and on the right it would cross the VaR line; the VaR
        // label on the right would cross the mean's line.
        let pxs = [400.0, 130.0, 100.0];
        let widths = [150.0, 250.0, 250.0];
        let prefer = [Anchor::Start, Anchor::Start, Anchor::End];
        let sides = label_sides(&pxs, &widths, &prefer, (80.0, 900.0));
        let span = |i: usize| match sides[i] {
            Anchor::End => (pxs[i] - 4.0 - widths[i], pxs[i] - 4.0),
            _ => (pxs[i] + 4.0, pxs[i] + 4.0 + widths[i]),
        };
        for i in 0..3 {
            let (a, b) = span(i);
            assert!(
                a >= 80.0 && b <= 900.0,
                "label {i} leaves the area: {a}..{b}"
            );
        }
        // The mean's label has room on its right and crosses nothing.
        assert!(matches!(sides[0], Anchor::Start));
        // Neither the VaR nor the CVaR label can avoid every line here (no
        // room on the left); each crosses at most one other line.
        for i in 1..3 {
            let (a, b) = span(i);
            let crossed = pxs
                .iter()
                .enumerate()
                .filter(|&(j, &x)| j != i && x >= a && x <= b)
                .count();
            assert!(crossed <= 1, "label {i} crosses {crossed} lines");
        }
        // With room on the left, a label goes where it crosses nothing.
        let sides = label_sides(
            &[600.0, 700.0],
            &[120.0, 120.0],
            &[Anchor::Start, Anchor::Start],
            (0.0, 900.0),
        );
        assert!(
            matches!(sides[0], Anchor::End),
            "the first label would cross the second line on the right"
        );
        assert!(matches!(sides[1], Anchor::Start));
    }

    #[test]
    fn the_return_axis_does_not_run_below_the_largest_possible_loss() {
        // Spend 12,235: no future loses more. Data from -12,100 would round
        // out to a tick at -14,000 or below.
        let spend = 12_235.0;
        let xt = return_axis((-12_100.0, 30_500.0), -9_700.0, spend);
        assert!(xt.lo >= -spend - 1e-6, "axis starts at {}", xt.lo);
        assert!(xt.lo <= -12_100.0, "the data still fit: {}", xt.lo);
        assert!(xt.values.iter().all(|&v| v >= xt.lo && v <= xt.hi));
        assert!(xt.hi >= 30_500.0);
        // Without a spend (nothing funded) the nice axis is kept.
        let free = return_axis((-12_100.0, 30_500.0), -9_700.0, 0.0);
        assert!(free.lo <= -12_100.0);
    }
}
