//! The demo: an invented garden-supply business, generated reproducibly.
//!
//! Quillfern Garden Co. is a made-up online shop for home gardeners in the
//! made-up region of Marrowdown Vale. Its monthly history, brand
//! search-interest index, keyword list, query export and plan are generated
//! from a seed, so the demo is reproducible and can be scaled up (for
//! example 100,000 keywords in 300 clusters) for benchmarks. All numbers are
//! invented; they are for the demo only.

use crate::error::Result;
use crate::fsio::write_text;
use crate::rng::{domain, stream, Stream};
use rand::RngExt;
use rand_distr::{Distribution, StandardNormal};
use std::fmt::Write as _;
use std::path::Path;

/// What to generate.
#[derive(Debug, Clone)]
pub struct DemoOptions {
    /// Number of keywords.
    pub keywords: usize,
    /// Number of clusters.
    pub clusters: usize,
    /// Months of history.
    pub months: usize,
    /// Seed.
    pub seed: u64,
}

impl Default for DemoOptions {
    fn default() -> Self {
        DemoOptions {
            keywords: 600,
            clusters: 10,
            months: 30,
            seed: 7,
        }
    }
}

/// Invented brand name used in branded queries.
pub const BRAND: &str = "quillfern";

const THEMES: &[(&str, &[&str])] = &[
    (
        "raised beds",
        &[
            "raised bed",
            "raised garden bed",
            "cedar raised bed",
            "raised bed kit",
            "metal raised bed",
        ],
    ),
    (
        "seed starting",
        &[
            "seed tray",
            "seed starting mix",
            "propagator",
            "grow light",
            "seedling pots",
        ],
    ),
    (
        "composting",
        &[
            "compost bin",
            "wormery",
            "hot composter",
            "compost tumbler",
            "leaf mould",
        ],
    ),
    (
        "greenhouses",
        &[
            "greenhouse kit",
            "polytunnel",
            "cold frame",
            "lean-to greenhouse",
            "mini greenhouse",
        ],
    ),
    (
        "fruit trees",
        &[
            "apple tree",
            "dwarf fruit tree",
            "pear tree",
            "plum tree",
            "espalier fruit tree",
        ],
    ),
    (
        "watering",
        &[
            "drip irrigation",
            "soaker hose",
            "water butt",
            "watering can",
            "irrigation timer",
        ],
    ),
    (
        "hand tools",
        &[
            "trowel",
            "pruning shears",
            "garden fork",
            "hori hori knife",
            "border spade",
        ],
    ),
    (
        "bulbs",
        &[
            "tulip bulbs",
            "daffodil bulbs",
            "allium bulbs",
            "snowdrop bulbs",
            "bulb planter",
        ],
    ),
    (
        "lawn care",
        &[
            "lawn seed",
            "lawn feed",
            "scarifier",
            "moss killer",
            "lawn edging",
        ],
    ),
    (
        "natural pest control",
        &[
            "slug control",
            "companion planting",
            "insect mesh",
            "nematodes",
            "bird netting",
        ],
    ),
    (
        "herb gardens",
        &[
            "herb planter",
            "herb seeds",
            "kitchen herb kit",
            "window box herbs",
            "perennial herbs",
        ],
    ),
    (
        "garden furniture",
        &[
            "garden bench",
            "potting bench",
            "bistro set",
            "garden kneeler",
            "tool shed",
        ],
    ),
];

const MODIFIERS: &[&str] = &[
    "",
    "best",
    "cheap",
    "how to use",
    "for small gardens",
    "diy",
    "buy",
    "reviews",
    "for beginners",
    "organic",
    "large",
    "sale",
    "ideas",
    "guide",
    "vs",
    "near me",
    "uk sizes",
    "wooden",
    "deep",
    "winter",
    "spring",
    "easy",
    "heavy duty",
    "recycled",
    "self watering",
    "square foot",
];

/// The files [`generate`] writes into its folder.
pub const FILES: &[&str] = &[
    "history.csv",
    "interest.csv",
    "keywords.csv",
    "queries.csv",
    "actuals.csv",
    "plan.toml",
];

/// Writes the demo (plan and inputs) into `dir`.
pub fn generate(dir: &Path, opts: &DemoOptions) -> Result<()> {
    let mut rng = stream(opts.seed, domain::DEMO, 0);
    let clusters = cluster_names(opts.clusters);
    write_text(
        &dir.join("history.csv"),
        &history_csv(&mut rng, opts.months),
    )?;
    write_text(
        &dir.join("interest.csv"),
        &interest_csv(&mut rng, opts.months),
    )?;
    write_text(
        &dir.join("keywords.csv"),
        &keywords_csv(&mut rng, &clusters, opts.keywords),
    )?;
    write_text(&dir.join("queries.csv"), &queries_csv(&mut rng))?;
    write_text(&dir.join("actuals.csv"), &actuals_csv(&mut rng))?;
    write_text(
        &dir.join("plan.toml"),
        &plan_toml(&mut rng, &clusters, opts),
    )?;
    Ok(())
}

fn cluster_names(n: usize) -> Vec<(String, Vec<String>)> {
    (0..n)
        .map(|i| {
            let (name, heads) = THEMES[i % THEMES.len()];
            let round = i / THEMES.len();
            let heads: Vec<String> = heads
                .iter()
                .map(|h| {
                    if round == 0 {
                        h.to_string()
                    } else {
                        format!("{h} {}", variant(round))
                    }
                })
                .collect();
            let name = if round == 0 {
                name.to_string()
            } else {
                format!("{name} {}", variant(round))
            };
            (name, heads)
        })
        .collect()
}

fn variant(round: usize) -> String {
    const TAGS: &[&str] = &[
        "xl", "mini", "pro", "eco", "classic", "compact", "deluxe", "junior",
    ];
    format!("{}{}", TAGS[round % TAGS.len()], round / TAGS.len() + 1)
}

/// Seasonal shape of a garden business: a spring peak, a winter low.
const SEASON: [f64; 12] = [
    0.72, 0.85, 1.18, 1.36, 1.34, 1.17, 1.02, 0.95, 0.92, 0.88, 0.80, 0.81,
];

const FIRST_YEAR: i32 = 2024;

fn month_label(i: usize, months: usize) -> (String, usize) {
    // History ends in December 2026; it starts `months` earlier.
    let first = 2026 * 12 + 11 - (months as i32 - 1);
    let o = first + i as i32;
    let _ = FIRST_YEAR;
    (
        format!("{:04}-{:02}", o / 12, o % 12 + 1),
        (o % 12) as usize,
    )
}

fn history_csv(rng: &mut Stream, months: usize) -> String {
    let mut s =
        String::from("month,clicks,impressions,branded_clicks,sessions,conversions,revenue\n");
    for i in 0..months {
        let (label, m) = month_label(i, months);
        let trend = 38_000.0 * (1.0 + 0.011 * i as f64);
        let clicks = (trend * SEASON[m] * (1.0 + normal(rng, 0.045))).round();
        let ctr = 0.031 + 0.002 * rng.random::<f64>();
        let impressions = (clicks / ctr).round();
        let branded = (clicks * (0.16 + 0.02 * rng.random::<f64>())).round();
        let sessions = (clicks * 1.12).round();
        let conversions = (sessions * (0.0215 + 0.003 * normal(rng, 0.045))).round();
        // Order value 100 per conversion: with 1.12 sessions per click and a
        // 2.15 % conversion rate, about the revenue per click the plan's
        // economics imply (order value 110 at 2.19 %), so `check` finds the
        // history and the plan consistent.
        let revenue = (conversions * (DEMO_ORDER_VALUE + 4.0 * normal(rng, 0.045) * 10.0)).round();
        let _ = writeln!(
            s,
            "{label},{clicks},{impressions},{branded},{sessions},{conversions},{revenue}"
        );
    }
    s
}

/// Revenue per conversion in the invented history and actuals.
const DEMO_ORDER_VALUE: f64 = 100.0;

fn normal(rng: &mut Stream, sd: f64) -> f64 {
    let z: f64 = StandardNormal.sample(rng);
    sd * z
}

fn lognormal(rng: &mut Stream, mu: f64, sigma: f64) -> f64 {
    (mu + normal(rng, sigma)).exp()
}

fn interest_csv(rng: &mut Stream, months: usize) -> String {
    let mut s = String::from("month,index\n");
    for i in 0..months {
        let (label, m) = month_label(i, months);
        let v =
            (46.0 + 0.9 * i as f64) * (0.75 + 0.25 * SEASON[m]) + 3.0 * (rng.random::<f64>() - 0.5);
        let _ = writeln!(s, "{label},{}", v.clamp(0.0, 100.0).round());
    }
    s
}

fn keywords_csv(rng: &mut Stream, clusters: &[(String, Vec<String>)], n: usize) -> String {
    let mut s = String::from("keyword,cluster,volume,position,difficulty,branded\n");
    let mut seen = std::collections::HashSet::new();
    for i in 0..n {
        let c = i % clusters.len();
        let (name, heads) = &clusters[c];
        let text = unique_keyword(rng, heads, i, &mut seen);
        let branded = rng.random::<f64>() < 0.02;
        let text = if branded {
            format!("{BRAND} {text}")
        } else {
            text
        };
        let volume = (lognormal(rng, 7.1, 1.3) * if branded { 0.3 } else { 1.0 })
            .round()
            .max(10.0);
        let difficulty = (12.0 + 9.0 * volume.ln() + 18.0 * (rng.random::<f64>() - 0.5))
            .clamp(1.0, 99.0)
            .round();
        let position = draw_position(rng, branded);
        let _ = writeln!(
            s,
            "{},{},{volume},{position},{difficulty},{branded}",
            csv_quote(&text),
            csv_quote(name)
        );
    }
    s
}

fn unique_keyword(
    rng: &mut Stream,
    heads: &[String],
    i: usize,
    seen: &mut std::collections::HashSet<String>,
) -> String {
    for _ in 0..8 {
        let h = &heads[rng.random_range(0..heads.len())];
        let m = MODIFIERS[rng.random_range(0..MODIFIERS.len())];
        let t = match (m.is_empty(), rng.random::<bool>()) {
            (true, _) => h.clone(),
            (false, true) => format!("{m} {h}"),
            (false, false) => format!("{h} {m}"),
        };
        if seen.insert(t.clone()) {
            return t;
        }
    }
    let t = format!("{} {}", heads[i % heads.len()], i);
    seen.insert(t.clone());
    t
}

fn draw_position(rng: &mut Stream, branded: bool) -> String {
    if branded {
        return format!("{:.1}", 1.0 + 2.0 * rng.random::<f64>());
    }
    if rng.random::<f64>() < 0.22 {
        return String::new();
    }
    let p = (2.0 + 35.0 * rng.random::<f64>().powf(1.4)).min(100.0);
    format!("{p:.1}")
}

fn csv_quote(s: &str) -> String {
    if s.contains([',', '"', '\n', ';']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A click-through curve used only to invent the demo's query export
/// (invented numbers; the shipped default curve lives in models/ctr/).
fn demo_ctr(p: f64) -> f64 {
    0.30 * p.powf(-1.05)
}

fn queries_csv(rng: &mut Stream) -> String {
    let mut s = String::from("query,clicks,impressions,position\n");
    for i in 0..420 {
        let theme = THEMES[i % THEMES.len()];
        let head = theme.1[(i / THEMES.len()) % theme.1.len()];
        let m = MODIFIERS[(i * 7 + 3) % MODIFIERS.len()];
        let branded = i % 23 == 0;
        let q = match (branded, m.is_empty()) {
            (true, _) => format!("{BRAND} {head}"),
            (false, true) => format!("{head} {i}"),
            (false, false) => format!("{m} {head} {}", i / 50),
        };
        let position: f64 = if branded {
            1.0 + rng.random::<f64>()
        } else {
            1.0 + 29.0 * rng.random::<f64>().powf(1.3)
        };
        let impressions = lognormal(rng, 6.5, 1.2).round().max(5.0);
        let rate = if branded { 0.55 } else { demo_ctr(position) };
        let jitter = 0.85 + 0.3 * rng.random::<f64>();
        let clicks = binomial(rng, impressions as u64, rate * jitter);
        let _ = writeln!(s, "{},{clicks},{impressions},{position:.1}", csv_quote(&q));
    }
    s
}

fn binomial(rng: &mut Stream, n: u64, p: f64) -> u64 {
    let p = p.clamp(0.0, 1.0);
    if n > 2000 {
        let mean = n as f64 * p;
        let sd = (mean * (1.0 - p)).sqrt();
        let z: f64 = StandardNormal.sample(rng);
        return (mean + sd * z).round().clamp(0.0, n as f64) as u64;
    }
    (0..n).filter(|_| rng.random::<f64>() < p).count() as u64
}

fn actuals_csv(rng: &mut Stream) -> String {
    let mut s = String::from("month,clicks,revenue\n");
    for (i, m) in [0usize, 1, 2].iter().enumerate() {
        let clicks = (38_000.0
            * (1.0 + 0.011 * (30 + i) as f64)
            * SEASON[*m]
            * (0.97 + 0.06 * rng.random::<f64>()))
        .round();
        let revenue = (clicks * 1.12 * 0.0215 * DEMO_ORDER_VALUE).round();
        let _ = writeln!(s, "2027-{:02},{clicks},{revenue}", m + 1);
    }
    s
}

fn plan_toml(rng: &mut Stream, clusters: &[(String, Vec<String>)], opts: &DemoOptions) -> String {
    let mut s = String::new();
    let _ = write!(
        s,
        "{}",
        PLAN_HEAD.replace("{months}", &opts.months.to_string())
    );
    let total: f64 = clusters.len() as f64 * 2_400.0;
    let _ = write!(
        s,
        "\n[budget]\ntotal = {:.0}\ntail_level = 0.90\nmax_tail_loss = \"10%\"\n",
        (total / 1000.0).round() * 1000.0
    );
    for (name, _) in clusters {
        let base = 2_400.0 + 2_900.0 * rng.random::<f64>();
        let _ = write!(
            s,
            "\n[[cluster]]\nname = \"{name}\"\nstart = \"2027-{:02}\"\ntiers = [\n  {{ label = \"refresh pages\", cost = {:.0}, effort = 1.0 }},\n  {{ label = \"new guides\", cost = {:.0}, effort = 1.0 }},\n  {{ label = \"outreach\", cost = {:.0}, effort = 1.5 }},\n]\n",
            1 + rng.random_range(0..4),
            (base / 100.0).round() * 100.0,
            (base * 0.7 / 100.0).round() * 100.0,
            (base * 1.0 / 100.0).round() * 100.0,
        );
    }
    s
}

const PLAN_HEAD: &str = r#"# Demo plan for Quillfern Garden Co., an invented online garden-supply shop
# in the invented region of Marrowdown Vale. Every number here is made up.
# Generated by `furrow demo-data` ({months} months of history); see docs/plan.md
# for every key.

name = "quillfern-2027"
currency = "EUR"
start = "2027-01"
horizon = 12
seed = 2027
scenarios = 10000

[inputs]
history = "history.csv"
interest = "interest.csv"
keywords = "keywords.csv"
queries = "queries.csv"

[models]
dir = "../models"
ctr = "default"
branded_ctr = "branded"
rank_gain = "default"
# Queries matching this pattern are left out when the click-through curve is
# fitted to the query export.
brand = "quillfern"

[baseline]
method = "auto"

[economics]
conversions = 2150
sessions = 98400
order_value = 110.0
order_value_spread = 8.0
gross_margin = 0.45
seasonality = "history"

[target]
metric = "clicks"
growth = 0.12
"#;

/// Checks demo options.
pub fn validate(opts: &DemoOptions) -> Result<()> {
    let bad = |m: String| Err(crate::Error::Setting(m));
    if !(1..=2_000).contains(&opts.clusters) {
        return bad(format!(
            "--clusters must be 1 to 2,000, found {}",
            opts.clusters
        ));
    }
    if opts.keywords < opts.clusters || opts.keywords > 5_000_000 {
        return bad(format!(
            "--keywords must be at least the number of clusters and at most 5,000,000, found {}",
            opts.keywords
        ));
    }
    if !(12..=120).contains(&opts.months) {
        return bad(format!("--months must be 12 to 120, found {}", opts.months));
    }
    Ok(())
}
