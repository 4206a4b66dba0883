//! The default rank-gain model: how far, how surely and how fast a funded
//! keyword climbs. Every constant lives in an editable TOML file
//! (`models/rank-gain/default.toml`); all are rules of thumb (common
//! practice, no source) that a user can calibrate from past campaigns.
//!
//! The gain is an improvement `D` in log-position:
//! `p_new = max(1, p0 * exp(-D))`, with `p0 = 100` for a keyword not ranking.
//!
//! - Central gain: `D_c = max_log_gain * (1 - exp(-effort_rate * effort)) *
//!   (1 - difficulty/100)^difficulty_exponent`, where `effort` is the
//!   tier's cumulative effort (the sum of the effort levels of the tiers up to
//!   it). Each further unit of effort adds less (diminishing returns);
//!   harder keywords gain less.
//! - Draw: `D = D_c * execution * exp(noise_sigma * z)`, with `z` standard
//!   normal per keyword and `execution` the cluster's shared factor (median
//!   1). `D_c` is the *median* of `D` among keywords that gain; `estimate`
//!   uses it (`z = 0`, `execution = 1`), so it describes the typical keyword,
//!   not the mean (the mean is larger by `exp(noise_sigma²/2)`).
//! - No gain at all with probability
//!   `q = no_gain.base + no_gain.per_difficulty * difficulty/100`: a keyword
//!   gains iff its uniform draw `u >= q`. `estimate` weights the gain by
//!   `1 - q`.
//! - Time to full effect: `easy_months + (hard_months - easy_months) *
//!   difficulty/100`, times `exp(timing.noise_sigma * z_time)` in a draw. The
//!   gain ramps in from the cluster's start month: log-position moves by
//!   `ramp(t) * D`, with `ramp` linear or smoothstep (`3s² - 2s³`, `s = t /
//!   months_to_full`) as the file says.
//!
//! Common random numbers: a keyword's `z`, `u` and `z_time` ([`KeywordDraws`])
//! are drawn once per future and serve every tier; the tier only changes
//! `D_c`. So a higher tier never gains less than a lower one in the same
//! future, and tier differences carry little simulation noise. With every
//! spread at zero (noise sigmas, execution sigma, no-gain probability 0) a
//! draw equals the `estimate` value exactly.

use serde::{Deserialize, Serialize};

use super::factors::Factors;
use super::sampling::{standard_normal, uniform};
use super::{check_ranges, ClicksError, Range};
use crate::rng::Stream;

/// Position assumed for a keyword not in the top 100.
pub const NOT_RANKING_POSITION: f64 = 100.0;

/// The shipped default model file.
pub const DEFAULT_MODEL_TOML: &str = include_str!("../../models/rank-gain/default.toml");

/// Size of the gain: `[gain]` in the file.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GainParams {
    /// Median log-position gain at unlimited effort on a difficulty-0 keyword.
    pub max_log_gain: f64,
    /// How fast effort approaches that limit (per unit of effort).
    pub effort_rate: f64,
    /// How strongly difficulty shrinks the gain.
    pub difficulty_exponent: f64,
    /// Lognormal sigma of the per-keyword noise on the gain.
    pub noise_sigma: f64,
}

/// Chance of no gain at all: `[no_gain]` in the file.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NoGainParams {
    /// Probability at difficulty 0.
    pub base: f64,
    /// Added probability at difficulty 100 (linear in between).
    pub per_difficulty: f64,
}

/// How the gain ramps in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum RampShape {
    Linear,
    Smooth,
}

/// Timing: `[timing]` in the file.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TimingParams {
    /// Months to full effect at difficulty 0.
    pub easy_months: f64,
    /// Months to full effect at difficulty 100.
    pub hard_months: f64,
    /// Lognormal sigma of the per-keyword noise on the time to full effect.
    pub noise_sigma: f64,
    /// Shape of the ramp.
    pub ramp: RampShape,
}

/// The whole model file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RankGainModel {
    pub description: String,
    pub source: String,
    pub gain: GainParams,
    pub no_gain: NoGainParams,
    pub timing: TimingParams,
    pub factors: Factors,
}

/// A keyword's random draws for one future, shared by every tier.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct KeywordDraws {
    /// Standard normal: noise on the gain.
    pub z_gain: f64,
    /// Uniform: gains anything iff `u_no_gain >= q`.
    pub u_no_gain: f64,
    /// Standard normal: noise on the time to full effect.
    pub z_time: f64,
    /// Uniform for an explicit gain distribution's quantile.
    pub u_explicit: f64,
}

impl KeywordDraws {
    /// Draws the four values in a fixed order from `rng`.
    pub fn draw(rng: &mut Stream) -> KeywordDraws {
        let z_gain = standard_normal(rng);
        let u_no_gain = uniform(rng);
        let z_time = standard_normal(rng);
        let u_explicit = uniform(rng);
        KeywordDraws {
            z_gain,
            u_no_gain,
            z_time,
            u_explicit,
        }
    }
}

/// `max(1, p0 * exp(-log_gain))`; a non-finite `p0` counts as not ranking
/// (100). A negative gain (a ranking shock) can push the position past 100.
pub fn position_after(p0: f64, log_gain: f64) -> f64 {
    let p0 = if p0.is_finite() {
        p0
    } else {
        NOT_RANKING_POSITION
    };
    (p0 * (-log_gain).exp()).max(1.0)
}

/// The same in log-position, for the hot loop: `max(0, ln_p0 - log_gain)`.
#[inline]
pub fn log_position_after(ln_p0: f64, log_gain: f64) -> f64 {
    (ln_p0 - log_gain).max(0.0)
}

/// Today's position, or 100 when not ranking (None or not finite); at least 1.
pub fn start_position(position: Option<f64>) -> f64 {
    match position {
        Some(p) if p.is_finite() => p.max(1.0),
        _ => NOT_RANKING_POSITION,
    }
}

/// Difficulty as a share in [0, 1]; NaN counts as the hardest (1).
fn difficulty_share(difficulty: f64) -> f64 {
    if difficulty.is_nan() {
        1.0
    } else {
        (difficulty / 100.0).clamp(0.0, 1.0)
    }
}

impl RankGainModel {
    /// The shipped default model.
    pub fn builtin() -> Result<RankGainModel, ClicksError> {
        RankGainModel::from_toml_str(DEFAULT_MODEL_TOML, "built-in rank-gain model")
    }

    /// Reads and validates a model file's text; errors name `origin`.
    pub fn from_toml_str(text: &str, origin: &str) -> Result<RankGainModel, ClicksError> {
        let model: RankGainModel = toml::from_str(text).map_err(|e| ClicksError::Parse {
            origin: origin.to_string(),
            message: e.to_string().trim_end().to_string(),
        })?;
        model.validate(origin)?;
        Ok(model)
    }

    /// Checks every constant's range.
    pub fn validate(&self, origin: &str) -> Result<(), ClicksError> {
        let (g, n, t) = (&self.gain, &self.no_gain, &self.timing);
        #[rustfmt::skip]
        let rows: [Range; 9] = [
            ("gain.max_log_gain", g.max_log_gain, 0.0, 10.0, "log-position gain; 4.6 takes 100 to 1"),
            ("gain.effort_rate", g.effort_rate, 1e-6, 100.0, "per unit of effort"),
            ("gain.difficulty_exponent", g.difficulty_exponent, 0.0, 10.0, "exponent"),
            ("gain.noise_sigma", g.noise_sigma, 0.0, 3.0, "lognormal sigma"),
            ("no_gain.base", n.base, 0.0, 1.0, "probability"),
            ("no_gain.per_difficulty", n.per_difficulty, 0.0, 1.0 - n.base,
                "probability; base + per_difficulty at most 1"),
            ("timing.easy_months", t.easy_months, 0.1, 120.0, "months"),
            ("timing.hard_months", t.hard_months, t.easy_months, 120.0,
                "months, at least easy_months"),
            ("timing.noise_sigma", t.noise_sigma, 0.0, 3.0, "lognormal sigma"),
        ];
        check_ranges(origin, &rows)?;
        self.factors.validate(origin)
    }

    /// Median log-position gain `D_c` of a keyword that gains, at the tier's
    /// cumulative effort (negative or NaN counts as 0) and difficulty (0 to
    /// 100, clamped; NaN counts as 100).
    pub fn expected_log_gain(&self, cumulative_effort: f64, difficulty: f64) -> f64 {
        let g = &self.gain;
        let effort = cumulative_effort.max(0.0);
        let effort_share = -(-g.effort_rate * effort).exp_m1();
        let ease = (1.0 - difficulty_share(difficulty)).powf(g.difficulty_exponent);
        g.max_log_gain * effort_share * ease
    }

    /// Probability that a keyword gains nothing at all.
    pub fn no_gain_probability(&self, difficulty: f64) -> f64 {
        let n = &self.no_gain;
        (n.base + n.per_difficulty * difficulty_share(difficulty)).clamp(0.0, 1.0)
    }

    /// Whether a keyword with uniform draw `u` gains anything.
    pub fn gains_anything(&self, difficulty: f64, u: f64) -> bool {
        u >= self.no_gain_probability(difficulty)
    }

    /// Months from the cluster's start to the full effect.
    pub fn months_to_full_effect(&self, difficulty: f64) -> f64 {
        let t = &self.timing;
        t.easy_months + (t.hard_months - t.easy_months) * difficulty_share(difficulty)
    }

    /// The same with the keyword's timing draw `z_time`.
    pub fn months_to_full_effect_draw(&self, difficulty: f64, z_time: f64) -> f64 {
        self.months_to_full_effect(difficulty) * (self.timing.noise_sigma * z_time).exp()
    }

    /// Share of the full gain reached `months_since_start` months after the
    /// start: 0 before the start (and for NaN), 1 from `months_to_full` on,
    /// linear or smoothstep in between; non-decreasing.
    pub fn ramp(&self, months_since_start: f64, months_to_full: f64) -> f64 {
        let started = months_since_start >= 0.0;
        let instant = months_to_full.is_nan() || months_to_full <= 0.0;
        if !started {
            return 0.0;
        }
        if instant {
            return 1.0;
        }
        let s = (months_since_start / months_to_full).min(1.0);
        match self.timing.ramp {
            RampShape::Linear => s,
            RampShape::Smooth => s * s * (3.0 - 2.0 * s),
        }
    }

    /// [`RankGainModel::ramp`] over consecutive months:
    /// `out[i] = ramp(since + months[i], months_to_full)`, with the same bits.
    /// Written without branches in the loop so the compiler vectorises it;
    /// with AVX2, four months share one division.
    pub fn ramp_months(&self, out: &mut [f64], months: &[f64], since: f64, months_to_full: f64) {
        #[cfg(target_arch = "x86_64")]
        if crate::clicks::ctr::has_avx2() {
            // SAFETY: the processor reported AVX2.
            unsafe { self.ramp_months_avx2(out, months, since, months_to_full) };
            return;
        }
        self.ramp_months_body(out, months, since, months_to_full);
    }

    /// [`RankGainModel::ramp_months`] compiled for AVX2.
    ///
    /// # Safety
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn ramp_months_avx2(&self, out: &mut [f64], months: &[f64], since: f64, full: f64) {
        self.ramp_months_body(out, months, since, full);
    }

    #[inline(always)]
    fn ramp_months_body(&self, out: &mut [f64], months: &[f64], since: f64, full: f64) {
        // The same operations as `ramp`, in the same order: `started` is
        // `t >= 0` (false for NaN), and `s.min(1.0)` is written as a select
        // that also gives 1 for NaN.
        let cells = out.iter_mut().zip(months);
        if full.is_nan() || full <= 0.0 {
            for (r, &m) in cells {
                let t = since + m;
                *r = if t >= 0.0 { 1.0 } else { 0.0 };
            }
            return;
        }
        match self.timing.ramp {
            RampShape::Linear => {
                for (r, &m) in cells {
                    let t = since + m;
                    let s = t / full;
                    let s = if s < 1.0 { s } else { 1.0 };
                    *r = if t >= 0.0 { s } else { 0.0 };
                }
            }
            RampShape::Smooth => {
                for (r, &m) in cells {
                    let t = since + m;
                    let s = t / full;
                    let s = if s < 1.0 { s } else { 1.0 };
                    let v = s * s * (3.0 - 2.0 * s);
                    *r = if t >= 0.0 { v } else { 0.0 };
                }
            }
        }
    }

    /// One keyword's gain `D` given its draws:
    /// `D_c * execution * exp(noise_sigma * z_noise)`. With `z_noise = 0` and `execution = 1` it is exactly
    /// [`RankGainModel::expected_log_gain`]. A negative or NaN execution
    /// factor counts as 0.
    pub fn log_gain_draw(
        &self,
        cumulative_effort: f64,
        difficulty: f64,
        z_noise: f64,
        execution: f64,
    ) -> f64 {
        let central = self.expected_log_gain(cumulative_effort, difficulty);
        central * execution.max(0.0) * (self.gain.noise_sigma * z_noise).exp()
    }

    /// A tier's gain for a keyword: 0 if its no-gain draw says so, else
    /// [`RankGainModel::log_gain_draw`]. The same `draws` for every tier.
    pub fn tier_log_gain(
        &self,
        cumulative_effort: f64,
        difficulty: f64,
        draws: &KeywordDraws,
        execution: f64,
    ) -> f64 {
        if self.gains_anything(difficulty, draws.u_no_gain) {
            self.log_gain_draw(cumulative_effort, difficulty, draws.z_gain, execution)
        } else {
            0.0
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shipped_model_loads() {
        let m = RankGainModel::builtin().unwrap();
        assert!(m.expected_log_gain(1.0, 30.0) > 0.0);
    }

    #[test]
    fn ramp_edges() {
        let m = RankGainModel::builtin().unwrap();
        assert_eq!(m.ramp(-1.0, 6.0), 0.0);
        assert_eq!(m.ramp(0.0, 6.0), 0.0);
        assert_eq!(m.ramp(6.0, 6.0), 1.0);
        assert_eq!(m.ramp(f64::NAN, 6.0), 0.0);
        assert_eq!(m.ramp(1.0, 0.0), 1.0);
    }
}
