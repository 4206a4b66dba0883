//! Automatic selection (`Method::Auto`).
//!
//! - 24+ months (two full seasons of m = 12): the exponential smoothing
//!   models Holt, damped Holt, Holt-Winters additive and multiplicative, and
//!   their damped forms (multiplicative only when every month is above 0).
//!   The choice is the lowest AICc (see `ets_fit` for the formula and
//!   source). A rolling-origin backtest (`backtest`) is run for every
//!   candidate and shown beside it; when it ranks another candidate first by
//!   MASE, a note says so (the AICc choice stands).
//! - 12 to 23 months: linear trend, Holt and damped Holt, chosen by the
//!   backtest's MASE (then sMAPE, then AICc), because the AICc of so few
//!   months is a weak guide; a note says that seasonality was not modelled.
//!
//! With `phi` fixed by the caller, each family is tried once with that φ
//! instead of once undamped and once with φ estimated. Fixed alpha, beta
//! and gamma apply to every candidate that has them. Seasonal naïve and
//! index growth are not candidates: they are there when asked for by name.

use super::backtest::{backtest, origins, Score};
use super::error::BaselineError;
use super::ets::first_non_positive;
use super::model::{fit_model, ModelKind, ModelSpec};
use super::options::{BaselineOptions, Method};
use super::Candidate;

/// Most origins per candidate (keeps Auto fast; common practice, no source).
pub const MAX_ORIGINS: usize = 4;
/// Fewest training months of a non-seasonal backtest origin (common
/// practice, no source).
pub const MIN_TRAIN_SHORT: usize = 6;

/// Outcome of automatic selection.
#[derive(Debug, Clone)]
pub struct Selected {
    pub spec: ModelSpec,
    pub kind: ModelKind,
    pub aicc: Option<f64>,
    pub rows: Vec<Candidate>,
    pub notes: Vec<String>,
}

/// One candidate's fit and scores.
#[derive(Debug, Clone)]
struct Trial {
    spec: ModelSpec,
    fit: Result<ModelKind, BaselineError>,
    aicc: Option<(f64, usize)>,
    score: Score,
    note: String,
}

fn damping_variants(method: Method, opts: &BaselineOptions) -> Vec<ModelSpec> {
    match opts.phi {
        Some(p) => vec![ModelSpec {
            method,
            damped: p < 1.0,
        }],
        None => vec![
            ModelSpec {
                method,
                damped: false,
            },
            ModelSpec {
                method,
                damped: true,
            },
        ],
    }
}

fn seasonal_specs(opts: &BaselineOptions) -> Vec<ModelSpec> {
    [
        Method::Holt,
        Method::HoltWintersAdditive,
        Method::HoltWintersMultiplicative,
    ]
    .into_iter()
    .flat_map(|m| damping_variants(m, opts))
    .collect()
}

fn short_specs(opts: &BaselineOptions) -> Vec<ModelSpec> {
    let mut v = vec![ModelSpec {
        method: Method::Linear,
        damped: false,
    }];
    v.extend(damping_variants(Method::Holt, opts));
    v
}

/// Runs automatic selection on a validated history.
pub fn auto(y: &[f64], opts: &BaselineOptions) -> Result<Selected, BaselineError> {
    let seasonal = y.len() >= 2 * opts.period;
    let (specs, first, lag) = if seasonal {
        (seasonal_specs(opts), 2 * opts.period, opts.period)
    } else {
        (
            short_specs(opts),
            MIN_TRAIN_SHORT.max(y.len().saturating_sub(opts.period)),
            1,
        )
    };
    let origins = origins(y.len(), first, MAX_ORIGINS);
    let trials: Vec<Trial> = specs
        .into_iter()
        .map(|s| run_trial(y, s, opts, &origins, lag))
        .collect();
    let chosen = if seasonal {
        by_aicc(&trials).or_else(|| by_backtest(&trials))
    } else {
        by_backtest(&trials).or_else(|| by_aicc(&trials))
    };
    let Some(c) = chosen else {
        let reasons: Vec<String> = trials
            .iter()
            .map(|t| format!("{}: {}", t.spec.label(), t.note))
            .collect();
        return Err(BaselineError::NoCandidate {
            reasons: reasons.join("; "),
        });
    };
    let mut notes = regime_notes(y.len(), opts, seasonal, origins.is_empty());
    if seasonal {
        notes.extend(disagreement_note(&trials, c));
    }
    assemble(trials, c, notes)
}

fn run_trial(
    y: &[f64],
    spec: ModelSpec,
    opts: &BaselineOptions,
    origins: &[usize],
    lag: usize,
) -> Trial {
    if spec.method == Method::HoltWintersMultiplicative {
        if let Some((i, v)) = first_non_positive(y) {
            let note = format!("not tried: multiplicative seasonality needs every month above 0 (month index {i} is {v})");
            let fit = Err(BaselineError::NotPositive {
                method: "holt-winters-multiplicative",
                index: i,
                value: v,
            });
            return Trial {
                spec,
                fit,
                aicc: None,
                score: Score::default(),
                note,
            };
        }
    }
    let fit = fit_model(y, None, spec, opts);
    let aicc = fit.as_ref().ok().and_then(|k| k.aicc(y));
    let mut note = match (&fit, aicc) {
        (Err(e), _) => format!("not fitted: {e}"),
        (Ok(ModelKind::Ets(m)), None) => format!(
            "no AICc: {} parameters need more than {} months",
            m.k,
            m.k + 1
        ),
        _ => String::new(),
    };
    let score = if fit.is_ok() {
        backtest(y, None, spec, opts, origins, lag)
    } else {
        Score::default()
    };
    if let Some(f) = &score.failure {
        note = join(&note, &format!("backtest failed at {f}"));
    }
    Trial {
        spec,
        fit,
        aicc,
        score,
        note,
    }
}

fn join(a: &str, b: &str) -> String {
    if a.is_empty() {
        b.to_string()
    } else {
        format!("{a}; {b}")
    }
}

/// Lowest AICc; ties (equal to 1e-9) go to fewer parameters, then to the
/// earlier candidate.
fn by_aicc(trials: &[Trial]) -> Option<usize> {
    let key = |i: usize| trials[i].aicc.filter(|_| trials[i].fit.is_ok());
    (0..trials.len())
        .filter(|&i| key(i).is_some())
        .min_by(|&a, &b| {
            let (fa, ka) = key(a).unwrap_or((f64::INFINITY, usize::MAX));
            let (fb, kb) = key(b).unwrap_or((f64::INFINITY, usize::MAX));
            if (fa - fb).abs() <= 1e-9 * fa.abs().max(1.0) {
                ka.cmp(&kb).then(a.cmp(&b))
            } else {
                fa.total_cmp(&fb)
            }
        })
}

/// Lowest backtest MASE, then sMAPE, then the earlier candidate.
fn by_backtest(trials: &[Trial]) -> Option<usize> {
    let usable = |i: &usize| trials[*i].fit.is_ok() && trials[*i].score.failure.is_none();
    let has_mase = trials
        .iter()
        .enumerate()
        .any(|(i, t)| usable(&i) && t.score.mase.is_some());
    let value = |i: usize| {
        if has_mase {
            trials[i].score.mase
        } else {
            trials[i].score.smape
        }
    };
    (0..trials.len())
        .filter(usable)
        .filter(|&i| value(i).is_some())
        .min_by(|&a, &b| {
            value(a)
                .unwrap_or(f64::INFINITY)
                .total_cmp(&value(b).unwrap_or(f64::INFINITY))
                .then(a.cmp(&b))
        })
}

fn regime_notes(
    t: usize,
    opts: &BaselineOptions,
    seasonal: bool,
    no_backtest: bool,
) -> Vec<String> {
    let mut notes = Vec::new();
    if !seasonal {
        notes.push(format!(
            "only {t} months: seasonal models need {} (two full seasons); seasonality not modelled",
            2 * opts.period
        ));
    }
    if no_backtest {
        notes.push(format!("only {t} months: too few for a rolling-origin backtest after the {} training months a seasonal model needs", 2 * opts.period));
    }
    notes
}

/// The backtest's favourite is worth a note only when its MASE is lower
/// than the chosen method's by more than this share (10 %, common practice,
/// no source: smaller gaps are within the noise of a few rolling origins)
/// and its 80 % intervals cover no worse (coverage no farther from 80 %).
pub const NOTE_MASE_GAIN: f64 = 0.10;

/// True when a backtest favourite with `best` (MASE, coverage of the 80 %
/// interval) differs enough from the chosen method's `chosen` to be noted.
pub fn backtest_difference_matters(best: (f64, Option<f64>), chosen: (f64, Option<f64>)) -> bool {
    let better = best.0 < (1.0 - NOTE_MASE_GAIN) * chosen.0;
    let off = |c: Option<f64>| c.map(|c| (c - 0.8).abs());
    let covers = match (off(best.1), off(chosen.1)) {
        (Some(b), Some(c)) => b <= c + 1e-9,
        (None, Some(_)) => false,
        _ => true,
    };
    better && covers
}

fn disagreement_note(trials: &[Trial], chosen: usize) -> Option<String> {
    let best = by_backtest(trials)?;
    if best == chosen {
        return None;
    }
    let (bs, cs) = (&trials[best].score, &trials[chosen].score);
    let (b, c) = (bs.mase?, cs.mase?);
    if !backtest_difference_matters((b, bs.coverage80), (c, cs.coverage80)) {
        return None;
    }
    Some(format!(
        "the backtest favours {} (MASE {b:.3} against {c:.3} for {}, more than {} lower, with coverage no worse); the AICc choice is kept",
        trials[best].spec.label(),
        trials[chosen].spec.label(),
        crate::text::pct(NOTE_MASE_GAIN, 0)
    ))
}

fn assemble(
    trials: Vec<Trial>,
    chosen: usize,
    notes: Vec<String>,
) -> Result<Selected, BaselineError> {
    let mut rows = Vec::with_capacity(trials.len());
    let mut pick = None;
    for (i, t) in trials.into_iter().enumerate() {
        rows.push(Candidate {
            method: t.spec.method,
            damped: t.spec.damped,
            label: t.spec.label(),
            aicc: t.aicc.map(|a| a.0),
            mase: t.score.mase,
            smape: t.score.smape,
            coverage80: t.score.coverage80,
            chosen: i == chosen,
            note: t.note,
        });
        if i == chosen {
            pick = t.fit.ok().map(|k| (t.spec, k, t.aicc.map(|a| a.0)));
        }
    }
    let (spec, kind, aicc) = pick.ok_or_else(|| BaselineError::NoCandidate {
        reasons: "the chosen candidate has no fit".into(),
    })?;
    Ok(Selected {
        spec,
        kind,
        aicc,
        rows,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_backtest_note_appears_only_when_the_difference_matters() {
        // The demo's case: 0.448 against 0.478 is 6 % lower: no note.
        assert!(!backtest_difference_matters(
            (0.448, Some(0.80)),
            (0.478, Some(0.80))
        ));
        // 30 % lower with coverage as good: a note.
        assert!(backtest_difference_matters(
            (0.30, Some(0.78)),
            (0.478, Some(0.75))
        ));
        // 30 % lower but intervals that cover worse: no note.
        assert!(!backtest_difference_matters(
            (0.30, Some(0.55)),
            (0.478, Some(0.79))
        ));
        // Coverage unknown for both: the MASE decides.
        assert!(backtest_difference_matters((0.30, None), (0.478, None)));
    }
}
