//! Chart geometry for the report page: "nice" axis ticks, linear scales,
//! and a plot frame with axes, grid, legend and the marks the charts use
//! (lines, bands, bars, markers and labelled reference lines).
//!
//! Ticks follow the loose labelling of Heckbert, "Nice numbers for graph
//! labels", in Graphics Gems (A. Glassner, ed.), Academic Press, 1990,
//! pp. 61-63: the range is rounded up to a nice number (1, 2, 5 or 10 times
//! a power of ten), divided by the tick count less one, the step rounded to
//! the nearest nice number, and the axis widened to whole steps.
//!
//! Series are told apart by lightness, dash pattern and marker shape as well
//! as hue, and carry `data-*` attributes with the plotted values, so tests
//! check numbers rather than pixels.

use super::svg::{number, Anchor, Attrs, Shape, Svg};

/// Heckbert's nice number near `x > 0`: with `round`, the nearest of 1, 2,
/// 5 or 10 times a power of ten; without, the smallest one not below `x`.
/// Returns 0 for 0, negative or non-finite `x`.
pub fn nice_number(x: f64, round: bool) -> f64 {
    if !(x.is_finite() && x > 0.0) {
        return 0.0;
    }
    let exp = x.log10().floor();
    let f = x / 10f64.powf(exp);
    let nf = match (round, f) {
        (true, f) if f < 1.5 => 1.0,
        (true, f) if f < 3.0 => 2.0,
        (true, f) if f < 7.0 => 5.0,
        (false, f) if f <= 1.0 => 1.0,
        (false, f) if f <= 2.0 => 2.0,
        (false, f) if f <= 5.0 => 5.0,
        _ => 10.0,
    };
    nf * 10f64.powf(exp)
}

/// The ticks of one axis.
#[derive(Debug, Clone, PartialEq)]
pub struct Ticks {
    /// Axis start: a whole number of steps, at or below the data.
    pub lo: f64,
    /// Axis end: a whole number of steps, at or above the data.
    pub hi: f64,
    pub step: f64,
    pub values: Vec<f64>,
    /// Decimals that show the step exactly (Heckbert's `nfrac`).
    pub decimals: usize,
}

impl Ticks {
    /// The label of tick value `v`: its decimals and thousands separators.
    pub fn label(&self, v: f64) -> String {
        number(v, self.decimals)
    }
}

/// A data range made usable: finite, ordered, and not empty.
fn usable_range(min: f64, max: f64) -> (f64, f64) {
    let (a, b) = match (min.is_finite(), max.is_finite()) {
        (true, true) => (min.min(max), min.max(max)),
        (true, false) => (min, min),
        (false, true) => (max, max),
        (false, false) => (0.0, 1.0),
    };
    if b - a > a.abs().max(b.abs()) * 1e-12 {
        return (a, b);
    }
    if a == 0.0 {
        (0.0, 1.0)
    } else {
        (a - a.abs() * 0.1, b + b.abs() * 0.1)
    }
}

/// `range` widened about its middle to at least `min_span`, so that noise
/// around a constant (1e-9 from a solver) does not get an axis of its own.
pub fn at_least(range: (f64, f64), min_span: f64) -> (f64, f64) {
    let (a, b) = range;
    if !(a.is_finite() && b.is_finite()) || b - a >= min_span {
        return range;
    }
    let mid = (a + b) / 2.0;
    (mid - min_span / 2.0, mid + min_span / 2.0)
}

/// About `n` nice ticks covering `[min, max]` (Heckbert's loose labels).
pub fn nice_ticks(min: f64, max: f64, n: usize) -> Ticks {
    let (a, b) = usable_range(min, max);
    let range = nice_number(b - a, false);
    let step = nice_number(range / (n.max(2) - 1) as f64, true);
    let first = (a / step).floor();
    let last = (b / step).ceil();
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    let scale = 10f64.powi(decimals.min(15) as i32);
    let clean = |k: f64| (k * step * scale).round() / scale;
    let count = (last - first).round().max(0.0) as usize;
    let values = (0..=count).map(|i| clean(first + i as f64)).collect();
    Ticks {
        lo: clean(first),
        hi: clean(last),
        step,
        values,
        decimals,
    }
}

/// How many month labels to skip so that labels `label_width` wide do not
/// overlap when months are `spacing` apart: 1, 2, 3, 4, 6 or a multiple of
/// 12, so labels fall on the same months each year.
pub fn label_every(spacing: f64, label_width: f64) -> usize {
    let need = label_width + 8.0;
    if !(spacing.is_finite() && spacing > 0.0) {
        return 12;
    }
    [1, 2, 3, 4, 6]
        .into_iter()
        .find(|&k| k as f64 * spacing >= need)
        .unwrap_or_else(|| 12 * ((need / (12.0 * spacing)).ceil() as usize).max(1))
}

/// A linear map from data to drawing units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scale {
    pub domain: (f64, f64),
    pub range: (f64, f64),
}

impl Scale {
    /// The drawing position of `v` (the middle of the range when the domain
    /// is empty).
    pub fn at(&self, v: f64) -> f64 {
        let (d0, d1) = self.domain;
        let (r0, r1) = self.range;
        if (d1 - d0).abs() < f64::MIN_POSITIVE {
            return (r0 + r1) / 2.0;
        }
        r0 + (v - d0) / (d1 - d0) * (r1 - r0)
    }
}

/// Size and margins of a chart, in user units (the top margin follows from
/// the legend).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Layout {
    pub width: f64,
    pub height: f64,
    pub left: f64,
    pub right: f64,
    pub bottom: f64,
}

impl Default for Layout {
    fn default() -> Layout {
        Layout {
            width: 860.0,
            height: 380.0,
            left: 84.0,
            right: 28.0,
            bottom: 56.0,
        }
    }
}

/// What a legend entry shows beside its text.
#[derive(Debug, Clone, PartialEq)]
pub enum Swatch {
    /// A line in the class's stroke and dash pattern.
    Line(&'static str),
    /// A line with a marker on it.
    LineMarker(&'static str, Shape, &'static str),
    /// A filled box (bands, bars).
    Fill(&'static str),
    /// A lone marker.
    Marker(Shape, &'static str),
}

/// One legend entry.
#[derive(Debug, Clone, PartialEq)]
pub struct Legend {
    pub swatch: Swatch,
    pub label: String,
}

impl Legend {
    pub fn new(swatch: Swatch, label: impl Into<String>) -> Legend {
        Legend {
            swatch,
            label: label.into(),
        }
    }
}

const FONT: f64 = 12.0;
const LEGEND_ROW: f64 = 18.0;
const SWATCH: f64 = 26.0;

/// The plotting area's edges.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Area {
    pub left: f64,
    pub top: f64,
    pub right: f64,
    pub bottom: f64,
}

/// A chart being drawn: the drawing, the plotting area and both scales.
#[derive(Debug, Clone)]
pub struct Plot {
    pub svg: Svg,
    pub area: Area,
    pub x: Scale,
    pub y: Scale,
}

/// Legend entries laid out in rows that fit `width`: (row, x offset).
fn legend_places(items: &[Legend], width: f64) -> Vec<(usize, f64)> {
    let mut row = 0;
    let mut x = 0.0;
    items
        .iter()
        .map(|it| {
            let w = SWATCH + 6.0 + super::svg::text_width(&it.label, FONT) + 18.0;
            if x > 0.0 && x + w > width {
                row += 1;
                x = 0.0;
            }
            let place = (row, x);
            x += w;
            place
        })
        .collect()
}

impl Plot {
    /// A chart of `layout` with `legend` on top, mapping the data domains
    /// `x` and `y` (y grows upwards) onto the plotting area.
    pub fn new(layout: Layout, legend: &[Legend], x: (f64, f64), y: (f64, f64)) -> Plot {
        let usable = layout.width - layout.left - layout.right;
        let places = legend_places(legend, usable);
        let rows = places.last().map(|p| p.0 + 1).unwrap_or(0);
        let top = 16.0 + rows as f64 * LEGEND_ROW;
        let area = Area {
            left: layout.left,
            top,
            right: layout.width - layout.right,
            bottom: layout.height - layout.bottom,
        };
        let mut plot = Plot {
            svg: Svg::new(layout.width, layout.height),
            area,
            x: Scale {
                domain: x,
                range: (area.left, area.right),
            },
            y: Scale {
                domain: y,
                range: (area.bottom, area.top),
            },
        };
        plot.draw_legend(legend, &places);
        plot
    }

    /// Drawing position of a data point.
    pub fn at(&self, x: f64, y: f64) -> (f64, f64) {
        (self.x.at(x), self.y.at(y))
    }

    fn draw_legend(&mut self, items: &[Legend], places: &[(usize, f64)]) {
        self.svg.open("legend", &[]);
        for (it, &(row, dx)) in items.iter().zip(places) {
            let x = self.area.left + dx;
            let y = 12.0 + row as f64 * LEGEND_ROW;
            self.swatch(&it.swatch, x, y);
            self.svg.text(
                (x + SWATCH + 6.0, y + 4.0),
                Anchor::Start,
                "legend-text",
                &it.label,
            );
        }
        self.svg.close();
    }

    fn swatch(&mut self, s: &Swatch, x: f64, y: f64) {
        let mid = (x + SWATCH / 2.0, y);
        match s {
            Swatch::Line(c) => self.svg.line((x, y), (x + SWATCH, y), c, &[]),
            Swatch::LineMarker(c, shape, mc) => {
                self.svg.line((x, y), (x + SWATCH, y), c, &[]);
                self.svg.marker(mid, *shape, mc, &[]);
            }
            Swatch::Fill(c) => self.svg.rect(x, y - 6.0, SWATCH, 12.0, c, &[]),
            Swatch::Marker(shape, c) => self.svg.marker(mid, *shape, c, &[]),
        }
    }

    /// The y axis: grid lines, tick labels and a title (with the unit).
    pub fn y_axis(&mut self, ticks: &Ticks, title: &str) {
        let a = self.area;
        for &v in &ticks.values {
            let y = self.y.at(v);
            let class = if v.abs() < ticks.step * 1e-9 {
                "zero"
            } else {
                "grid"
            };
            self.svg.line((a.left, y), (a.right, y), class, &[]);
            self.svg.text(
                (a.left - 6.0, y + 4.0),
                Anchor::End,
                "tick",
                &ticks.label(v),
            );
        }
        let mid = (a.top + a.bottom) / 2.0;
        self.svg.vtext((16.0, mid), "axis-title", title);
    }

    /// A numeric x axis: ticks, labels and a title.
    pub fn x_axis(&mut self, ticks: &Ticks, title: &str) {
        let a = self.area;
        for &v in &ticks.values {
            let x = self.x.at(v);
            let class = if v.abs() < ticks.step * 1e-9 {
                "zero"
            } else {
                "grid"
            };
            self.svg.line((x, a.top), (x, a.bottom), class, &[]);
            self.svg.text(
                (x, a.bottom + 16.0),
                Anchor::Middle,
                "tick",
                &ticks.label(v),
            );
        }
        self.x_title(title);
    }

    /// Category labels along x at positions 0, 1, ...; every `every`-th
    /// label is shown.
    pub fn x_categories(&mut self, labels: &[String], every: usize, title: &str) {
        let a = self.area;
        self.svg
            .line((a.left, a.bottom), (a.right, a.bottom), "axis", &[]);
        for (i, l) in labels.iter().enumerate().step_by(every.max(1)) {
            let x = self.x.at(i as f64);
            self.svg
                .line((x, a.bottom), (x, a.bottom + 4.0), "axis", &[]);
            self.svg
                .text((x, a.bottom + 16.0), Anchor::Middle, "tick", l);
        }
        self.x_title(title);
    }

    /// Category labels along y at positions 0, 1, ... (right-aligned left
    /// of the plotting area).
    pub fn y_categories(&mut self, labels: &[String]) {
        let a = self.area;
        for (i, l) in labels.iter().enumerate() {
            let y = self.y.at(i as f64);
            self.svg
                .text((a.left - 8.0, y + 4.0), Anchor::End, "tick", l);
        }
    }

    fn x_title(&mut self, title: &str) {
        let a = self.area;
        let at = ((a.left + a.right) / 2.0, self.svg.height - 12.0);
        self.svg.text(at, Anchor::Middle, "axis-title", title);
    }

    /// A band between `lo` and `hi` at positions `xs` (non-finite points
    /// are left out).
    pub fn band(&mut self, xs: &[f64], lo: &[f64], hi: &[f64], class: &str) {
        let ok: Vec<usize> = (0..xs.len().min(lo.len()).min(hi.len()))
            .filter(|&i| xs[i].is_finite() && lo[i].is_finite() && hi[i].is_finite())
            .collect();
        let mut pts: Vec<(f64, f64)> = ok.iter().map(|&i| self.at(xs[i], hi[i])).collect();
        pts.extend(ok.iter().rev().map(|&i| self.at(xs[i], lo[i])));
        if pts.len() >= 4 {
            self.svg.polygon(&pts, class, &[]);
        }
    }

    /// A line through data points (non-finite points are left out).
    pub fn line(&mut self, pts: &[(f64, f64)], class: &str, extra: Attrs) {
        let p: Vec<(f64, f64)> = pts
            .iter()
            .filter(|(x, y)| x.is_finite() && y.is_finite())
            .map(|&(x, y)| self.at(x, y))
            .collect();
        if p.len() >= 2 {
            self.svg.polyline(&p, class, extra);
        }
    }

    /// A marker at a data point, with its data attributes; nothing when the
    /// point is not finite.
    pub fn marker(&mut self, x: f64, y: f64, shape: Shape, class: &str, extra: Attrs) {
        if x.is_finite() && y.is_finite() {
            let at = self.at(x, y);
            self.svg.marker(at, shape, class, extra);
        }
    }

    /// A box between data corners `(x0, y0)` and `(x1, y1)`.
    pub fn bar(&mut self, x: (f64, f64), y: (f64, f64), class: &str, extra: Attrs) {
        let (a, b) = (self.at(x.0, y.0), self.at(x.1, y.1));
        if [a.0, a.1, b.0, b.1].iter().all(|v| v.is_finite()) {
            self.svg.rect(a.0, a.1, b.0 - a.0, b.1 - a.1, class, extra);
        }
    }

    /// A label ending just above data point `(x, y)` (a direct label for
    /// a reference series); nothing when the point is not finite.
    pub fn label_at(&mut self, x: f64, y: f64, label: &str) {
        let (px, py) = self.at(x, y);
        if !(px.is_finite() && py.is_finite()) {
            return;
        }
        let at = (px, py - 8.0);
        self.svg.text(at, Anchor::End, "ref-label halo", label);
        self.svg.text(at, Anchor::End, "ref-label", label);
    }

    /// A vertical reference line at `x`, labelled near the top; `row`
    /// moves the label down one line per step so labels do not collide.
    /// The label goes on the `side` asked for (`End`: left of the line,
    /// `Start`: right) when it fits there, else on the side with more room.
    pub fn vline(
        &mut self,
        x: f64,
        class: &str,
        label: (&str, usize),
        side: Option<Anchor>,
        extra: Attrs,
    ) {
        if !x.is_finite() {
            return;
        }
        let a = self.area;
        let px = self.x.at(x);
        self.svg.line((px, a.top), (px, a.bottom), class, extra);
        let (text, row) = label;
        let w = super::svg::text_width(text, 11.5);
        let fits_left = px - 4.0 - w >= a.left;
        let fits_right = px + 4.0 + w <= a.right;
        let left = match side {
            Some(Anchor::End) if fits_left => true,
            Some(Anchor::Start) if fits_right => false,
            _ => px - a.left > a.right - px,
        };
        let (tx, anchor) = if left {
            (px - 4.0, Anchor::End)
        } else {
            (px + 4.0, Anchor::Start)
        };
        let y = a.top + 12.0 + row as f64 * 14.0;
        self.svg.text((tx, y), anchor, "ref-label halo", text);
        self.svg.text((tx, y), anchor, "ref-label", text);
    }

    /// The finished `<svg>` element (see [`Svg::finish`]).
    pub fn finish(self, id: &str, title: &str, desc: &str) -> String {
        self.svg.finish(id, title, desc)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Expected values below are worked by hand from the steps of Heckbert's
    // loose labelling (Graphics Gems 1990, "Nice numbers for graph labels").

    #[test]
    fn nice_numbers_round_and_ceil() {
        // 1234: exponent 3, fraction 1.234: ceiling 2, rounded 1.
        assert_eq!(nice_number(1234.0, false), 2000.0);
        assert_eq!(nice_number(1234.0, true), 1000.0);
        // fraction 3.33: rounded to 5 (3 <= f < 7).
        assert_eq!(nice_number(333.3, true), 500.0);
        assert_eq!(nice_number(0.0042, true), 0.005);
        assert_eq!(nice_number(7.0, true), 10.0);
        assert_eq!(nice_number(0.0, true), 0.0);
        assert_eq!(nice_number(f64::NAN, false), 0.0);
    }

    #[test]
    fn ticks_of_0_to_1234() {
        // range nice(1234, ceil) = 2000; step nice(2000 / 4 = 500) = 500.
        let t = nice_ticks(0.0, 1234.0, 5);
        assert_eq!(t.values, vec![0.0, 500.0, 1000.0, 1500.0]);
        assert_eq!(t.decimals, 0);
        // With 11 ticks: step nice(2000 / 10 = 200, round) = 200.
        let t = nice_ticks(0.0, 1234.0, 11);
        let want: Vec<f64> = (0..=7).map(|i| i as f64 * 200.0).collect();
        assert_eq!(t.values, want);
        assert_eq!(t.label(1200.0), "1,200");
    }

    #[test]
    fn ticks_of_a_small_negative_range() {
        // range 0.57 -> ceil 1; step nice(1 / 4 = 0.25, round) = 0.2;
        // floor(-0.32 / 0.2) = -2, ceil(0.25 / 0.2) = 2; one decimal.
        let t = nice_ticks(-0.32, 0.25, 5);
        assert_eq!(t.values, vec![-0.4, -0.2, 0.0, 0.2, 0.4]);
        assert_eq!(t.decimals, 1);
        assert_eq!(t.label(-0.4), "-0.4");
    }

    #[test]
    fn ticks_cover_the_data_whatever_it_is() {
        for (a, b) in [
            (5.0, 5.0),
            (0.0, 0.0),
            (f64::NAN, 3.0),
            (9.0, -2.0),
            (-1e7, 1e-3),
        ] {
            let t = nice_ticks(a, b, 6);
            assert!(t.values.len() >= 2, "{a} {b}: {t:?}");
            assert!(t.values.iter().all(|v| v.is_finite()));
            for v in [a, b].into_iter().filter(|v| v.is_finite()) {
                assert!(t.lo <= v && v <= t.hi, "{v} outside {t:?}");
            }
        }
    }

    #[test]
    fn tiny_ranges_are_widened() {
        let (a, b) = at_least((-1e-9, 6e-9), 1.0);
        assert!((b - a - 1.0).abs() < 1e-12 && ((a + b) / 2.0 - 2.5e-9).abs() < 1e-12);
        assert_eq!(at_least((0.0, 88.0), 12.0), (0.0, 88.0));
        let t = nice_ticks(-0.5, 0.5, 6);
        assert_eq!(t.values, vec![-0.6, -0.4, -0.2, 0.0, 0.2, 0.4, 0.6]);
    }

    #[test]
    fn month_labels_do_not_overlap() {
        // 36 months on 700 units: 19.4 apart; labels 45 wide need 53.
        assert_eq!(label_every(700.0 / 36.0, 45.0), 3);
        assert_eq!(label_every(100.0, 45.0), 1);
        assert_eq!(label_every(2.0, 45.0), 36);
        assert_eq!(label_every(0.0, 45.0), 12);
    }

    #[test]
    fn scales_map_linearly() {
        let s = Scale {
            domain: (0.0, 10.0),
            range: (100.0, 0.0),
        };
        assert!((s.at(2.5) - 75.0).abs() < 1e-12);
        let flat = Scale {
            domain: (3.0, 3.0),
            range: (0.0, 10.0),
        };
        assert_eq!(flat.at(3.0), 5.0);
    }

    #[test]
    fn markers_carry_their_data() {
        let mut p = Plot::new(Layout::default(), &[], (0.0, 1.0), (0.0, 1.0));
        p.marker(0.5, 0.25, Shape::Circle, "m", &[("data-y", "0.25".into())]);
        p.marker(f64::NAN, 0.25, Shape::Circle, "m", &[]);
        let out = p.finish("t", "t", "d");
        assert_eq!(out.matches("<circle").count(), 1);
        assert!(out.contains("data-y=\"0.25\""));
    }
}
