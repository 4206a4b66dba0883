//! Checks of the stress presets (issue 7): the shipped files parse and are
//! checked strictly; each preset moves its own figure in the expected
//! direction with the same seed (common random numbers), also for random
//! strengths (proptest); the combined bad year is at least as bad as each
//! single preset; CVaR against the discrete closed form; the weighted mix.

mod target_support;
use furrow::output::{render, Format};
use furrow::simulate::{Futures, Model, SiteSource};
use furrow::stress::{self, Case, ReportHead, StressPreset};
use furrow::target::{self, Metric, Target};
use proptest::prelude::*;
use std::sync::OnceLock;
use target_support::*;

const N: usize = 300;
const SEED: u64 = 12;

const FILES: &[(&str, &str)] = &[
    (
        "ctr-erosion",
        include_str!("../models/stress/ctr-erosion.toml"),
    ),
    (
        "slower-gains",
        include_str!("../models/stress/slower-gains.toml"),
    ),
    (
        "ranking-shock",
        include_str!("../models/stress/ranking-shock.toml"),
    ),
    (
        "volume-drop",
        include_str!("../models/stress/volume-drop.toml"),
    ),
    (
        "weaker-conversion",
        include_str!("../models/stress/weaker-conversion.toml"),
    ),
    ("bad-year", include_str!("../models/stress/bad-year.toml")),
];

fn preset(name: &str) -> StressPreset {
    let (_, text) = FILES
        .iter()
        .find(|(n, _)| *n == name)
        .expect("a shipped preset");
    StressPreset::from_toml_str(text, &format!("models/stress/{name}.toml")).unwrap()
}

struct Base {
    _dir: tempfile::TempDir,
    model: Model,
    futures: Futures,
    baseline: Vec<f64>,
    target: Target,
}

fn base() -> &'static Base {
    static B: OnceLock<Base> = OnceLock::new();
    B.get_or_init(|| {
        let (dir, inputs, model) = project();
        let futures = run(&model, N, SEED);
        let baseline = baseline(&inputs, &model, N, 0.08, 0.04);
        let target = Target::from_inputs(&inputs, &model).unwrap().unwrap();
        Base {
            _dir: dir,
            model,
            futures,
            baseline,
            target,
        }
    })
}

fn stressed(p: &StressPreset) -> stress::StressedCase {
    let b = base();
    stress::run_preset(p, &b.model, Some(&b.baseline), &options(N, SEED)).unwrap()
}

/// The base run as a source for partial re-runs.
fn base_done() -> stress::Done<'static> {
    let b = base();
    let n = b.model.clusters.len();
    stress::Done {
        keys: stress::loop_keys(None, n, SEED)
            .into_iter()
            .map(Some)
            .collect(),
        tiers: b.model.clusters.iter().map(|c| c.n_tiers()).collect(),
        volume_scale: 1.0,
        futures: &b.futures,
    }
}

fn funded_clicks(f: &Futures) -> Vec<f64> {
    let x = all_tiers(f);
    target::totals::row_sums(&target::funded_monthly(f, &x).unwrap(), f.horizon)
}

fn expected_net(model: &Model, f: &Futures) -> f64 {
    let net = stress::portfolio_net(model, f, &all_tiers(f)).unwrap();
    net.iter().sum::<f64>() / net.len() as f64
}

#[test]
fn shipped_presets_parse_and_are_named_after_their_files() {
    assert_eq!(FILES.len(), stress::PRESET_NAMES.len());
    for (name, _) in FILES {
        let p = preset(name);
        assert_eq!(&p.name, name);
        assert!(!p.description.is_empty());
        assert!(stress::PRESET_NAMES.contains(name));
    }
}

#[test]
fn unknown_keys_and_out_of_range_values_are_refused() {
    let e =
        StressPreset::from_toml_str("description = \"x\"\n[model]\nctr_scael = 0.9\n", "a.toml")
            .unwrap_err();
    assert!(e.to_string().contains("ctr_scael"), "{e}");
    let e =
        StressPreset::from_toml_str("description = \"x\"\n[model]\nctr_scale = 0.0\n", "a.toml")
            .unwrap_err();
    assert!(e.to_string().contains("model.ctr_scale"), "{e}");
    let e = StressPreset::from_toml_str("description = \"x\"\n[baseline]\nscale = -1\n", "a.toml")
        .unwrap_err();
    assert!(e.to_string().contains("baseline.scale"), "{e}");
    assert!(StressPreset::from_toml_str("[model]\nctr_scale = 0.9\n", "a.toml").is_err());
}

#[test]
fn ctr_erosion_lowers_every_futures_ctr_factor_the_baseline_and_the_odds() {
    let b = base();
    let p = preset("ctr-erosion");
    let s = stressed(&p);
    for (a, z) in b.futures.site.iter().zip(&s.futures.site) {
        assert!(z.ctr_factor < a.ctr_factor);
    }
    let sb = s.baseline.as_ref().unwrap();
    assert!(sb
        .iter()
        .zip(&b.baseline)
        .all(|(x, y)| (x - 0.85 * y).abs() < 1e-9 * y.abs().max(1.0)));
    assert!(expected_net(&s.model, &s.futures) < expected_net(&b.model, &b.futures));
    let odds = |f: &Futures, paths: &[f64]| {
        let t = target::horizon_totals(f, paths, &all_tiers(f), Metric::Clicks).unwrap();
        target::odds(&t, b.target.amount, None).chance
    };
    assert!(odds(&s.futures, sb) <= odds(&b.futures, &b.baseline));
}

#[test]
fn slower_gains_lower_funded_clicks_in_every_future() {
    let b = base();
    let s = stressed(&preset("slower-gains"));
    let (before, after) = (funded_clicks(&b.futures), funded_clicks(&s.futures));
    for (x, y) in before.iter().zip(&after) {
        assert!(*y <= x + 1e-3 * x.abs().max(1.0), "{y} > {x}");
    }
    let sum = |v: &[f64]| v.iter().sum::<f64>();
    assert!(sum(&after) < 0.99 * sum(&before));
    assert_eq!(s.baseline.as_ref().unwrap(), &b.baseline);
}

#[test]
fn ranking_shock_hits_only_the_chosen_clusters() {
    let b = base();
    let p = preset("ranking-shock");
    let hit = stress::shocked_clusters(&p, b.model.clusters.len(), SEED);
    assert_eq!(hit.len(), 2, "half of 4 clusters");
    assert_eq!(
        hit,
        stress::shocked_clusters(&p, b.model.clusters.len(), SEED)
    );
    let s = stressed(&p);
    for (j, &(c, _)) in b.futures.slots.iter().enumerate() {
        for f in 0..N {
            let (x, y) = (b.futures.total(f, j), s.futures.total(f, j));
            if hit.contains(&c) {
                assert!(y <= x + 1e-3 * x.abs().max(1.0));
            } else {
                assert_eq!(x, y, "a cluster not hit keeps its draws exactly");
            }
        }
    }
    assert!(expected_net(&s.model, &s.futures) < expected_net(&b.model, &b.futures));
    assert!(s.notes.iter().any(|n| n.contains("gains x 0.5")));
}

#[test]
fn volume_drop_scales_clicks_and_baseline_by_its_factor() {
    let b = base();
    let s = stressed(&preset("volume-drop"));
    for (x, y) in b.futures.clicks.iter().zip(&s.futures.clicks) {
        let (x, y) = (*x as f64, *y as f64);
        assert!(
            (y - 0.85 * x).abs() <= 1e-5 * x.abs() + 1e-3,
            "{y} vs 0.85 x {x}"
        );
    }
    let sb = s.baseline.as_ref().unwrap();
    assert!(sb
        .iter()
        .zip(&b.baseline)
        .all(|(x, y)| (x - 0.85 * y).abs() < 1e-9 * y.abs().max(1.0)));
}

#[test]
fn weaker_conversion_keeps_clicks_and_lowers_revenue_per_click() {
    let b = base();
    let s = stressed(&preset("weaker-conversion"));
    assert_eq!(b.futures.clicks, s.futures.clicks, "same seed, same clicks");
    for (a, z) in b.futures.site.iter().zip(&s.futures.site) {
        assert!(z.conversion_rate * z.order_value < a.conversion_rate * a.order_value);
    }
    assert!(expected_net(&s.model, &s.futures) < expected_net(&b.model, &b.futures));
}

#[test]
fn bad_year_is_at_least_as_bad_as_each_single_preset() {
    let worst = stressed(&preset("bad-year"));
    let e_worst = expected_net(&worst.model, &worst.futures);
    let b = base();
    assert!(e_worst < expected_net(&b.model, &b.futures));
    for name in [
        "ctr-erosion",
        "slower-gains",
        "ranking-shock",
        "volume-drop",
        "weaker-conversion",
    ] {
        let s = stressed(&preset(name));
        let e = expected_net(&s.model, &s.futures);
        assert!(
            e_worst <= e + 1e-6 * e.abs(),
            "bad year {e_worst} vs {name} {e}"
        );
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(8))]
    /// Any strength below 1 of any multiplicative stress lowers the
    /// expected net return of the all-tiers allocation.
    #[test]
    fn any_weaker_setting_lowers_expected_net_return(
        which in 0usize..5,
        k in 0.5f64..0.95,
    ) {
        let key = ["ctr_scale", "volume_scale", "conversion_scale", "order_value_scale", "gain_scale"][which];
        let extra = if key == "gain_scale" { "gain_share = 1.0\n" } else { "" };
        let text = format!("description = \"p\"\n[model]\n{key} = {k}\n{extra}");
        let p = StressPreset::from_toml_str(&text, "p.toml").unwrap();
        let b = base();
        let s = stressed(&p);
        prop_assert!(expected_net(&s.model, &s.futures) < expected_net(&b.model, &b.futures));
    }

    /// Slower gains for any factor above 1 never add clicks.
    #[test]
    fn any_slower_timing_never_adds_clicks(k in 1.1f64..3.0) {
        let p = StressPreset::from_toml_str(&format!("description = \"p\"\n[model]\ntime_scale = {k}\n"), "p.toml").unwrap();
        let b = base();
        let s = stressed(&p);
        let (x, y) = (funded_clicks(&b.futures), funded_clicks(&s.futures));
        prop_assert!(y.iter().zip(&x).all(|(y, x)| *y <= x + 1e-3 * x.abs().max(1.0)));
    }
}

#[test]
fn cvar_matches_the_discrete_definition() {
    // Losses 1..=10, equally likely. Level 0.8: the tail is the two worst,
    // CVaR = 9.5. Level 0.85: tail mass 1.5 futures,
    // CVaR = (10 + 0.5 · 9) / 1.5 (Acerbi & Tasche 2002, discrete ES;
    // Rockafellar & Uryasev 2000, VaR + E[(L − VaR)+]/(1 − level)).
    let losses: Vec<f64> = (1..=10).map(f64::from).collect();
    let (var, cvar) = stress::cvar_of_losses(&losses, 0.8);
    assert_eq!(var, 8.0);
    assert!((cvar - 9.5).abs() < 1e-12);
    let (_, cvar) = stress::cvar_of_losses(&losses, 0.85);
    assert!((cvar - 14.5 / 1.5).abs() < 1e-12);
    let (_, cvar) = stress::cvar_of_losses(&losses, 0.9);
    assert!((cvar - 10.0).abs() < 1e-12);
}

#[test]
fn the_mix_weights_base_and_stressed_futures() {
    let base_m: Vec<f32> = vec![1.0, 2.0, 3.0, 4.0]; // 2 futures x 2 slots
    let str_m: Vec<f32> = vec![-1.0, 0.0, 0.0, 0.0, 5.0, 5.0]; // 3 futures
    let m = stress::mix_returns(&base_m, &str_m, 2, 0.25).unwrap();
    assert_eq!(m.scenarios, 5);
    assert_eq!(m.returns.len(), 10);
    assert!((m.weights.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    assert!((m.weights[0] - 0.375).abs() < 1e-12 && (m.weights[4] - 0.25 / 3.0).abs() < 1e-12);
    // Weighted mean of slot 0 = 0.75 · mean(1, 3) + 0.25 · mean(−1, 0, 5).
    let mean0: f64 = (0..5).map(|s| m.weights[s] * m.returns[s * 2] as f64).sum();
    assert!((mean0 - (0.75 * 2.0 + 0.25 * 4.0 / 3.0)).abs() < 1e-9);
    assert!(stress::mix_returns(&base_m, &str_m, 2, 1.5).is_err());
    assert!(stress::mix_returns(&base_m, &str_m[..5], 2, 0.5).is_err());
}

#[test]
fn the_stress_table_compares_each_preset_with_the_base_case() {
    let b = base();
    let x = first_tiers(&b.futures);
    let none: Vec<String> = Vec::new();
    let case = Case {
        name: "base",
        description: "the plan as simulated",
        model: &b.model,
        futures: &b.futures,
        baseline: Some(&b.baseline),
        notes: &none,
    };
    let row = stress::evaluate(&case, &x, 0.9, Some(&b.target)).unwrap();
    let p = preset("bad-year");
    let s = stressed(&p);
    let scase = Case {
        name: &p.name,
        description: &p.description,
        model: &s.model,
        futures: &s.futures,
        baseline: s.baseline.as_deref(),
        notes: &s.notes,
    };
    let srow = stress::evaluate(&scase, &x, 0.9, Some(&b.target)).unwrap();
    let spend = target::report::spend(&b.model, &b.futures, &x);
    let head = ReportHead {
        currency: "EUR",
        tail_level: 0.9,
        scenarios: N,
        spend,
        target: Some(&b.target),
    };
    let r = stress::report(&head, row, vec![srow]);
    let p0 = &r.presets[0];
    assert!(p0.change_in_net_return < 0.0);
    assert!(p0.tail_loss >= r.base.tail_loss);
    assert!(p0.change_in_chance.unwrap() <= 0.0);
    assert!(
        (p0.change_in_net_return - (p0.expected_net_return - r.base.expected_net_return)).abs()
            < 1e-9
    );
    // ROI = mean net / spend by definition.
    assert!((r.base.roi.unwrap() - r.base.expected_net_return / spend).abs() < 1e-9);
    let json: serde_json::Value = serde_json::from_str(&render(&r, Format::Json).unwrap()).unwrap();
    assert!(json["presets"][0]["tail_loss"].is_number());
    assert_eq!(render(&r, Format::Csv).unwrap().lines().count(), 3);
    assert!(render(&r, Format::Table).unwrap().contains("bad-year"));
    assert!(stress::evaluate(&case, &x, 1.0, None).is_err());
}

/// The partial re-run (only the clusters a preset's keyword loop differs
/// in, the rest rescaled) gives the full re-run's futures for every
/// shipped preset and for presets that change the site-wide shock: same
/// site draws, same execution factors, and clicks within the f32 rounding
/// of both paths. The full re-run is the reference (it is `simulate::run`
/// on the stressed model, nothing shared with the shortcut).
#[test]
fn partial_rerun_matches_the_full_rerun() {
    let b = base();
    let mut presets: Vec<StressPreset> = FILES.iter().map(|(n, _)| preset(n)).collect();
    presets.push(
        StressPreset::from_toml_str(
            "description = \"more shocks\"\n[model]\nshock_probability = 0.6\nshock_log_loss = 0.9\nvolume_scale = 0.7\n",
            "test",
        )
        .unwrap(),
    );
    // Each preset may also copy site factors from the presets before it
    // (the bad year's conversion rate from the weaker conversion's draws).
    let mut drawn: Vec<(furrow::clicks::SiteSampler, Vec<furrow::clicks::SiteDraw>)> = Vec::new();
    for p in &presets {
        let full = stressed(p);
        let sources: Vec<SiteSource> = drawn
            .iter()
            .map(|(sampler, draws)| SiteSource {
                sampler: *sampler,
                draws,
            })
            .collect();
        let part = stress::run_preset_from(
            p,
            &b.model,
            &[base_done()],
            Some(&b.baseline),
            &options(N, SEED),
            None,
            &sources,
        )
        .unwrap();
        let source = SiteSource::of(&part.model, &part.futures).unwrap();
        drawn.push((source.sampler, part.futures.site.clone()));
        let f = &full.futures;
        let q = &part.futures;
        assert_eq!(f.site, q.site, "{}", p.name);
        assert_eq!(f.execution, q.execution, "{}", p.name);
        assert_eq!(f.clicks.len(), q.clicks.len());
        let mut worst = 0f64;
        for (a, c) in f.clicks.iter().zip(&q.clicks) {
            let (a, c) = (*a as f64, *c as f64);
            let err = (a - c).abs() / a.abs().max(1e-3);
            worst = worst.max(err);
        }
        // Two f32 roundings on the rescaled path against one on the full
        // path: a few parts in 10^7.
        assert!(worst < 1e-6, "{}: worst relative gap {worst}", p.name);
        assert_eq!(full.baseline, part.baseline);
        assert_eq!(full.notes, part.notes);
    }
}

/// A preset can take clusters from an earlier preset's run, not only from
/// the base: the bad year's unshocked clusters share the slower gains'
/// keyword loop (same time scale), at 0.85 of its volumes. Checked against
/// the bad year's full re-run.
#[test]
fn partial_rerun_can_reuse_an_earlier_preset() {
    let b = base();
    let n = b.model.clusters.len();
    let slower = preset("slower-gains");
    let slow_case = stressed(&slower);
    let bad = preset("bad-year");
    let done = [
        base_done(),
        stress::Done {
            keys: stress::loop_keys(Some(&slower), n, SEED)
                .into_iter()
                .map(Some)
                .collect(),
            tiers: b.model.clusters.iter().map(|c| c.n_tiers()).collect(),
            volume_scale: slower.model.volume_scale,
            futures: &slow_case.futures,
        },
    ];
    let bad_keys = stress::loop_keys(Some(&bad), n, SEED);
    let shared = (0..n)
        .filter(|&c| Some(bad_keys[c]) == done[1].keys[c])
        .count();
    assert!(shared > 0 && shared < n, "{shared} of {n} clusters shared");
    let part =
        stress::run_preset_from(&bad, &b.model, &done, None, &options(N, SEED), None, &[]).unwrap();
    let full = stressed(&bad).futures;
    assert_eq!(full.site, part.futures.site);
    assert_eq!(full.execution, part.futures.execution);
    let worst = full
        .clicks
        .iter()
        .zip(&part.futures.clicks)
        .map(|(a, c)| (*a as f64 - *c as f64).abs() / (*a as f64).abs().max(1e-3))
        .fold(0f64, f64::max);
    assert!(worst < 1e-6, "worst relative gap {worst}");
}

/// A stressed run can stop at the tiers an allocation funds: with
/// `needed[c]` tiers wanted (0 leaves the cluster out), the wanted tiers
/// equal the full re-run, a cluster left out is zeros, a re-simulated
/// cluster has zeros above its wanted tiers, and the net return of an
/// allocation funding only wanted tiers is the full re-run's (to rounding).
#[test]
fn a_stressed_run_can_stop_at_the_funded_tiers() {
    let b = base();
    let n = b.model.clusters.len();
    let needed: Vec<usize> = (0..n).map(|c| c % 3).collect();
    let done = [base_done()];
    // slower-gains and bad-year re-simulate; volume-drop copies.
    for name in ["slower-gains", "bad-year", "volume-drop"] {
        let p = preset(name);
        let full = stressed(&p);
        let part = stress::run_preset_from(
            &p,
            &b.model,
            &done,
            Some(&b.baseline),
            &options(N, SEED),
            Some(&needed),
            &[],
        )
        .unwrap();
        let held: Vec<usize> = (0..n)
            .map(|c| needed[c].min(b.model.clusters[c].n_tiers()))
            .collect();
        assert_eq!(part.simulated, held, "{name}");
        let f = &part.futures;
        let mut x = vec![0.0; f.slots.len()];
        for (j, &(c, t)) in f.slots.iter().enumerate() {
            for s in 0..f.scenarios {
                for (g, w) in f.monthly(s, j).iter().zip(full.futures.monthly(s, j)) {
                    let (g, w) = (*g as f64, *w as f64);
                    let same = (g - w).abs() <= 1e-6 * w.abs().max(1e-3);
                    if t < needed[c] {
                        assert!(same, "{name}: cluster {c} tier {t} future {s}: {g} {w}");
                    } else if needed[c] == 0 || name != "volume-drop" {
                        assert_eq!(g, 0.0, "{name}: cluster {c} tier {t} not wanted");
                    } else {
                        // A copied cluster brings its tiers above as they are.
                        assert!(same, "{name}: copied cluster {c} tier {t}");
                    }
                }
            }
            if t < needed[c] {
                x[j] = 0.7;
            }
        }
        let net = |case: &stress::StressedCase| {
            stress::portfolio_net(&case.model, &case.futures, &x).unwrap()
        };
        // Net = revenue - spend: compare on the scale of the revenue, as
        // the f32 clicks carry a relative rounding of about 1e-7.
        let spend: f64 = f
            .slots
            .iter()
            .zip(&x)
            .map(|(&(c, t), v)| v * b.model.clusters[c].tiers[t].cost)
            .sum();
        for (a, c) in net(&full).iter().zip(net(&part)) {
            let scale = 1.0 + a.abs() + spend;
            assert!((a - c).abs() <= 1e-6 * scale, "{name}: {a} {c}");
        }
    }
}
