//! Building blocks of the report page: escaping of user text for HTML and
//! SVG, numbers that never print as NaN or infinity, and the few SVG
//! elements the charts draw, written as plain strings so the page needs no
//! library, no script and nothing fetched.
//!
//! Every string that reaches the markup goes through [`esc`] at the point it
//! is written: the helpers here escape their text and attribute arguments
//! themselves, so a cluster named `<script>` stays text. [`esc`] also drops
//! bidirectional controls (a name holding U+202E would reverse the text
//! after it) and shows other control characters as escapes (`\x1b`), and
//! [`cut_runs`] cuts runs of text too long to wrap, so that a 10,000
//! character name neither widens the page nor hides what follows it.

use std::fmt::Write;

/// Escapes `&`, `<`, `>`, `"` and `'` for HTML and SVG text and attribute
/// values (the five characters of the XML predefined entities); drops
/// bidirectional controls and shows other control characters but line
/// breaks and tabs as escapes (`\x1b`, as on the terminal).
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if crate::text::is_bidi_control(c) => {}
            '\n' | '\t' => out.push(ch),
            c if c.is_control() => out.push_str(&crate::text::escape_char(c)),
            c => out.push(c),
        }
    }
    out
}

/// The longest run of characters without a space that the page shows
/// whole; a longer one (a name that cannot wrap) is cut.
pub const RUN_MAX: usize = 60;

/// `s` with every run of more than [`RUN_MAX`] characters without white
/// space cut in the middle (its start, an ellipsis, its last characters, so
/// `very…long/2` keeps its tier). Plain text, not escaped.
pub fn cut_runs(s: &str) -> String {
    runs(s)
        .map(|(run, long)| if long { cut_run(run) } else { run.to_string() })
        .collect()
}

/// The pieces of `s`: white space and runs without it, each with whether
/// it is a run longer than [`RUN_MAX`].
pub fn runs(s: &str) -> impl Iterator<Item = (&str, bool)> {
    let mut rest = s;
    std::iter::from_fn(move || {
        let first = rest.chars().next()?;
        let space = first.is_whitespace();
        let end = rest
            .char_indices()
            .find(|(_, c)| c.is_whitespace() != space)
            .map_or(rest.len(), |(i, _)| i);
        let (piece, tail) = rest.split_at(end);
        rest = tail;
        Some((piece, !space && piece.chars().nth(RUN_MAX).is_some()))
    })
}

/// A run cut to [`RUN_MAX`] characters: start, ellipsis, last 16.
pub fn cut_run(run: &str) -> String {
    const TAIL: usize = 16;
    let n = run.chars().count();
    if n <= RUN_MAX {
        return run.to_string();
    }
    let head: String = run.chars().take(RUN_MAX - TAIL - 1).collect();
    let tail: String = run.chars().skip(n - TAIL).collect();
    format!("{head}…{tail}")
}

pub use crate::text::{money, number, pct, ratio};

/// A chance as a percentage: whole percents, with one decimal below 1 %
/// and above 99 % so that a small chance does not read as none, nor a
/// near-certainty as certain.
pub fn chance(v: f64) -> String {
    if (v > 0.0 && v < 0.0095) || (v > 0.9905 && v < 1.0) {
        pct(v, 1)
    } else {
        pct(v, 0)
    }
}

/// A value for a `data-*` attribute: the shortest text that reads back as
/// the same `f64`, or "n/a" when not finite.
pub fn data(v: f64) -> String {
    if v.is_finite() {
        format!("{v}")
    } else {
        "n/a".into()
    }
}

/// A coordinate with two decimals; non-finite values (which callers drop
/// before drawing) become 0 so the markup stays valid.
pub fn coord(v: f64) -> String {
    if v.is_finite() {
        let s = format!("{v:.2}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        "0".into()
    }
}

/// Attributes written after an element's own: name and (escaped) value.
pub type Attrs<'a> = &'a [(&'a str, String)];

fn attrs(extra: Attrs) -> String {
    extra.iter().fold(String::new(), |mut s, (k, v)| {
        let _ = write!(s, " {}=\"{}\"", esc(k), esc(v));
        s
    })
}

/// Horizontal anchoring of a text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    Start,
    Middle,
    End,
}

impl Anchor {
    fn name(self) -> &'static str {
        match self {
            Anchor::Start => "start",
            Anchor::Middle => "middle",
            Anchor::End => "end",
        }
    }
}

/// An SVG document being written; elements carry CSS classes that the
/// page's style sheet defines.
#[derive(Debug, Clone)]
pub struct Svg {
    pub width: f64,
    pub height: f64,
    body: String,
}

impl Svg {
    /// An empty drawing of `width × height` user units.
    pub fn new(width: f64, height: f64) -> Svg {
        Svg {
            width,
            height,
            body: String::new(),
        }
    }

    /// A straight line.
    pub fn line(&mut self, from: (f64, f64), to: (f64, f64), class: &str, extra: Attrs) {
        let _ = writeln!(
            self.body,
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" class=\"{}\"{}/>",
            coord(from.0),
            coord(from.1),
            coord(to.0),
            coord(to.1),
            esc(class),
            attrs(extra)
        );
    }

    /// An open polyline through `pts`.
    pub fn polyline(&mut self, pts: &[(f64, f64)], class: &str, extra: Attrs) {
        let _ = writeln!(
            self.body,
            "<polyline points=\"{}\" class=\"{}\"{}/>",
            points(pts),
            esc(class),
            attrs(extra)
        );
    }

    /// A closed polygon through `pts`.
    pub fn polygon(&mut self, pts: &[(f64, f64)], class: &str, extra: Attrs) {
        let _ = writeln!(
            self.body,
            "<polygon points=\"{}\" class=\"{}\"{}/>",
            points(pts),
            esc(class),
            attrs(extra)
        );
    }

    /// A rectangle from its top-left corner and size (negative sizes are
    /// turned around).
    pub fn rect(&mut self, x: f64, y: f64, w: f64, h: f64, class: &str, extra: Attrs) {
        let (x, w) = if w < 0.0 { (x + w, -w) } else { (x, w) };
        let (y, h) = if h < 0.0 { (y + h, -h) } else { (y, h) };
        let _ = writeln!(
            self.body,
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" class=\"{}\"{}/>",
            coord(x),
            coord(y),
            coord(w),
            coord(h),
            esc(class),
            attrs(extra)
        );
    }

    /// A marker of `shape` centred on `at`.
    pub fn marker(&mut self, at: (f64, f64), shape: Shape, class: &str, extra: Attrs) {
        let (x, y) = at;
        let r = shape.size();
        let pts: Vec<(f64, f64)> = match shape {
            Shape::Circle => {
                let _ = writeln!(
                    self.body,
                    "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" class=\"{}\"{}/>",
                    coord(x),
                    coord(y),
                    coord(r),
                    esc(class),
                    attrs(extra)
                );
                return;
            }
            Shape::Square => vec![
                (x - r, y - r),
                (x + r, y - r),
                (x + r, y + r),
                (x - r, y + r),
            ],
            Shape::Diamond | Shape::BigDiamond => {
                vec![(x, y - r), (x + r, y), (x, y + r), (x - r, y)]
            }
            Shape::Triangle => vec![(x, y - r), (x + r, y + r * 0.8), (x - r, y + r * 0.8)],
        };
        self.polygon(&pts, class, extra);
    }

    /// A text at `at`; `s` is escaped.
    pub fn text(&mut self, at: (f64, f64), anchor: Anchor, class: &str, s: &str) {
        let _ = writeln!(
            self.body,
            "<text x=\"{}\" y=\"{}\" text-anchor=\"{}\" class=\"{}\">{}</text>",
            coord(at.0),
            coord(at.1),
            anchor.name(),
            esc(class),
            esc(&cut_runs(s))
        );
    }

    /// A text turned a quarter anticlockwise about `at` (a y-axis title).
    pub fn vtext(&mut self, at: (f64, f64), class: &str, s: &str) {
        let _ = writeln!(
            self.body,
            "<text x=\"{x}\" y=\"{y}\" text-anchor=\"middle\" transform=\"rotate(-90 {x} {y})\" class=\"{}\">{}</text>",
            esc(class),
            esc(&cut_runs(s)),
            x = coord(at.0),
            y = coord(at.1),
        );
    }

    /// Opens a group with a class and attributes (close with [`Svg::close`]).
    pub fn open(&mut self, class: &str, extra: Attrs) {
        let _ = writeln!(self.body, "<g class=\"{}\"{}>", esc(class), attrs(extra));
    }

    /// Closes the last group opened.
    pub fn close(&mut self) {
        self.body.push_str("</g>\n");
    }

    /// The finished `<svg>` element: `title` is its accessible name and
    /// `desc` the text alternative of its data.
    pub fn finish(self, id: &str, title: &str, desc: &str) -> String {
        format!(
            "<svg id=\"{id}\" class=\"chart\" viewBox=\"0 0 {w} {h}\" role=\"img\" aria-label=\"{t}\" aria-describedby=\"{id}-desc\">\n<title id=\"{id}-title\">{t}</title>\n<desc id=\"{id}-desc\">{d}</desc>\n{body}</svg>\n",
            id = esc(id),
            w = coord(self.width),
            h = coord(self.height),
            t = esc(title),
            d = esc(&cut_runs(desc)),
            body = self.body
        )
    }
}

fn points(pts: &[(f64, f64)]) -> String {
    pts.iter()
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .map(|(x, y)| format!("{},{}", coord(*x), coord(*y)))
        .collect::<Vec<_>>()
        .join(" ")
}

/// Marker shapes: different shapes tell series apart without colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shape {
    Circle,
    Square,
    Diamond,
    BigDiamond,
    Triangle,
}

impl Shape {
    fn size(self) -> f64 {
        match self {
            Shape::Circle => 3.5,
            Shape::Square => 3.5,
            Shape::Diamond => 4.5,
            Shape::BigDiamond => 8.0,
            Shape::Triangle => 4.5,
        }
    }
}

/// Rough width of `s` in user units at `font_size` (proportional sans-serif
/// glyphs average about 0.58 em; common practice, no source).
pub fn text_width(s: &str, font_size: f64) -> f64 {
    s.chars().count() as f64 * font_size * 0.58
}

/// `s` cut to at most `max` characters, with an ellipsis when cut.
pub fn shorten(s: &str, max: usize) -> String {
    if s.chars().count() <= max {
        return s.to_string();
    }
    let mut out: String = s.chars().take(max.saturating_sub(1)).collect();
    out.push('…');
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_the_five_markup_characters() {
        assert_eq!(
            esc(r#"<a href="x">Tom & 'Jerry'</a>"#),
            "&lt;a href=&quot;x&quot;&gt;Tom &amp; &#39;Jerry&#39;&lt;/a&gt;"
        );
        assert_eq!(esc("plain text"), "plain text");
    }

    #[test]
    fn numbers_have_separators_and_never_nan() {
        assert_eq!(number(1234567.891, 2), "1,234,567.89");
        assert_eq!(number(-1000.0, 0), "-1,000");
        assert_eq!(number(999.6, 0), "1,000");
        assert_eq!(number(-0.004, 2), "0.00");
        assert_eq!(number(123.0, 0), "123");
        assert_eq!(number(f64::NAN, 2), "n/a");
        assert_eq!(number(f64::INFINITY, 0), "n/a");
        assert_eq!(money(-2500.4, "EUR"), "EUR -2,500");
        assert_eq!(money(f64::NEG_INFINITY, "EUR"), "n/a");
        assert_eq!(pct(0.1234, 1), "12.3 %");
        assert_eq!(chance(0.001), "0.1 %");
        assert_eq!(chance(0.0), "0 %");
        assert_eq!(chance(0.26), "26 %");
        assert_eq!(chance(0.998), "99.8 %");
        assert_eq!(chance(1.0), "100 %");
        assert_eq!(ratio(Some(f64::NAN)), "n/a");
        assert_eq!(ratio(None), "n/a");
    }

    #[test]
    fn data_values_read_back_exactly() {
        for v in [0.1 + 0.2, -12345.678901234, 1e-9, 3.0] {
            let back: f64 = data(v).parse().unwrap_or(f64::NAN);
            assert_eq!(back.to_bits(), v.to_bits());
        }
        assert_eq!(data(f64::NAN), "n/a");
    }

    #[test]
    fn text_in_svg_is_escaped() {
        let mut s = Svg::new(10.0, 10.0);
        s.text((1.0, 2.0), Anchor::Start, "a", "<b>&");
        s.rect(0.0, 0.0, 1.0, 1.0, "r", &[("data-id", "x\"y".into())]);
        let out = s.finish("c1", "t<", "d>");
        assert!(out.contains("&lt;b&gt;&amp;"));
        assert!(out.contains("data-id=\"x&quot;y\""));
        assert!(!out.contains("<b>"));
        assert!(out.contains("<title id=\"c1-title\">t&lt;</title>"));
    }

    #[test]
    fn bidi_controls_are_dropped_and_control_characters_shown() {
        assert_eq!(esc("abc\u{202e}def\u{2066}g\u{200f}"), "abcdefg");
        assert_eq!(esc("a\u{1b}[1mb\u{7}"), "a\\x1b[1mb\\x07");
        assert_eq!(esc("two\nlines\tand tab"), "two\nlines\tand tab");
    }

    #[test]
    fn long_runs_are_cut_in_the_middle_and_short_ones_kept() {
        let long = format!("{}/2", "x".repeat(10_000));
        let cut = cut_runs(&format!("fund {long} now"));
        let words: Vec<&str> = cut.split(' ').collect();
        assert_eq!(words.len(), 3, "{cut}");
        assert_eq!(words[1].chars().count(), RUN_MAX);
        assert!(words[1].ends_with("x/2") && words[1].contains('…'), "{cut}");
        let spaced = "word ".repeat(3000);
        assert_eq!(cut_runs(&spaced), spaced);
        assert_eq!(cut_runs("  a  b "), "  a  b ");
    }

    #[test]
    fn coordinates_are_short_and_finite() {
        assert_eq!(coord(12.0), "12");
        assert_eq!(coord(12.345), "12.35");
        assert_eq!(coord(f64::NAN), "0");
        assert_eq!(shorten("abcdef", 4), "abc…");
        assert_eq!(shorten("abc", 4), "abc");
    }
}
