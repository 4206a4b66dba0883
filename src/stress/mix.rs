//! A weighted mix of base and stressed futures, for optimizing the
//! allocation against a preset (`--optimize-under NAME`).
//!
//! The two scenario-major net-return matrices (`S_b × n` and `S_s × n`) are
//! stacked, base first; each base future gets probability `(1 − w) / S_b`
//! and each stressed future `w / S_s`, so the weights sum to 1 and the
//! allocation's expected return is `(1 − w) E_base + w E_stressed`. The CVaR
//! row then uses these probabilities (Rockafellar & Uryasev 2000 allow any
//! discrete distribution).

use super::StressError;

/// Stacked net returns with per-scenario probabilities.
#[derive(Debug, Clone, PartialEq)]
pub struct MixedReturns {
    /// `(S_b + S_s) × slots`, scenario-major, base futures first.
    pub returns: Vec<f32>,
    /// Probability of each scenario (sum 1).
    pub weights: Vec<f64>,
    pub scenarios: usize,
    pub slots: usize,
}

fn rows(m: &[f32], slots: usize, what: &str) -> Result<usize, StressError> {
    if slots == 0 || m.is_empty() || !m.len().is_multiple_of(slots) {
        return Err(StressError::Argument {
            what: what.into(),
            message: format!(
                "has {} values, not a whole number of rows of {slots} slots; pass the net-return matrix of the same plan",
                m.len()
            ),
        });
    }
    Ok(m.len() / slots)
}

/// Mixes base and stressed net returns with weight `stress_weight` (0 to 1)
/// on the stressed futures.
pub fn mix_returns(
    base: &[f32],
    stressed: &[f32],
    slots: usize,
    stress_weight: f64,
) -> Result<MixedReturns, StressError> {
    if !(stress_weight.is_finite() && (0.0..=1.0).contains(&stress_weight)) {
        return Err(StressError::Argument {
            what: "stress weight".into(),
            message: format!("is {stress_weight}; give a share from 0 to 1 of probability on the stressed futures"),
        });
    }
    let sb = rows(base, slots, "base net returns")?;
    let ss = rows(stressed, slots, "stressed net returns")?;
    let mut returns = Vec::with_capacity(base.len() + stressed.len());
    returns.extend_from_slice(base);
    returns.extend_from_slice(stressed);
    let mut weights = vec![(1.0 - stress_weight) / sb as f64; sb];
    weights.extend(std::iter::repeat_n(stress_weight / ss as f64, ss));
    Ok(MixedReturns {
        returns,
        weights,
        scenarios: sb + ss,
        slots,
    })
}
