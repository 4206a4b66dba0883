//! Value-at-risk and conditional value-at-risk of a sample of losses.
//!
//! Definitions of Rockafellar & Uryasev, "Optimization of conditional
//! value-at-risk", Journal of Risk 2(3), 2000, for a discrete distribution:
//! VaR at level `q` is the smallest loss `l` with `P(L <= l) >= q`, and
//! `CVaR = VaR + E[(L - VaR)+] / (1 - q)`, the minimum of their function
//! `F_q(eta)`. This is the value the LP's CVaR row reaches at its optimum, so
//! the two can be compared directly. Sorting uses `total_cmp`.

/// `(VaR, CVaR)` of `losses` at `level` (0.90 = the worst 10 % form the tail),
/// with optional probability weights (normalised by their sum; weights of the
/// wrong length are ignored).
/// An empty sample gives `(0, 0)`; a level of 1 or more (or NaN) gives the
/// largest loss twice, a level of 0 or less the smallest loss and the mean.
pub fn cvar_of_losses(losses: &[f64], weights: Option<&[f64]>, level: f64) -> (f64, f64) {
    if losses.is_empty() {
        return (0.0, 0.0);
    }
    let weights = weights.filter(|w| w.len() == losses.len());
    if weights.is_none() && !(level.is_nan() || level >= 1.0) {
        // Equal weights: the VaR is one order statistic, found by selection
        // (the value a sort would put there) without sorting.
        let level = level.max(0.0);
        let k = crate::stats::order_index(losses.len(), level);
        let var = *losses.to_vec().select_nth_unstable_by(k, f64::total_cmp).1;
        let e: f64 = losses.iter().map(|&l| (l - var).max(0.0)).sum();
        return (var, var + e / losses.len() as f64 / (1.0 - level));
    }
    let mut order: Vec<usize> = (0..losses.len()).collect();
    order.sort_by(|&a, &b| losses[a].total_cmp(&losses[b]));
    let Some(w) = weights.filter(|_| !(level.is_nan() || level >= 1.0)) else {
        let worst = losses[order[order.len() - 1]];
        return (worst, worst);
    };
    let level = level.max(0.0);
    let var = losses[order[weighted_index(&order, w, level)]];
    let excess: f64 = losses
        .iter()
        .zip(w)
        .map(|(&l, &p)| p * (l - var).max(0.0))
        .sum();
    (var, var + excess / ((1.0 - level) * w.iter().sum::<f64>()))
}

fn weighted_index(order: &[usize], w: &[f64], level: f64) -> usize {
    let total: f64 = w.iter().sum();
    let target = level * total - 1e-12 * total;
    let mut cum = 0.0;
    for (k, &i) in order.iter().enumerate() {
        cum += w[i];
        if cum >= target {
            return k;
        }
    }
    order.len() - 1
}

/// Probability of a strictly positive loss.
pub fn chance_of_loss(losses: &[f64], weights: Option<&[f64]>) -> f64 {
    match weights {
        None if losses.is_empty() => 0.0,
        None => losses.iter().filter(|&&l| l > 0.0).count() as f64 / losses.len() as f64,
        Some(w) => losses
            .iter()
            .zip(w)
            .filter(|(&l, _)| l > 0.0)
            .map(|(_, p)| p)
            .sum(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ten_equal_losses_tail_of_two() {
        let losses: Vec<f64> = (1..=10).map(f64::from).collect();
        // level 0.8: worst 20 % = {9, 10}, CVaR 9.5, VaR = 8 (P(L<=8) = 0.8).
        let (var, cvar) = cvar_of_losses(&losses, None, 0.8);
        assert_eq!(var, 8.0);
        assert!((cvar - 9.5).abs() < 1e-12);
        // level 0.85: tail of 1.5 futures = 10 and half of 9: (10 + 0.5*9)/1.5.
        let (var, cvar) = cvar_of_losses(&losses, None, 0.85);
        assert_eq!(var, 9.0);
        assert!((cvar - 14.5 / 1.5).abs() < 1e-12);
    }

    #[test]
    fn weights_shift_the_tail_and_equal_weights_agree() {
        let losses = [5.0, -1.0, 2.0, 0.0];
        let eq = cvar_of_losses(&losses, Some(&[0.25; 4]), 0.5);
        let plain = cvar_of_losses(&losses, None, 0.5);
        assert!((eq.1 - plain.1).abs() < 1e-12 && eq.0 == plain.0);
        // The loss 5 has probability 0.4 > the tail mass 0.3: CVaR = 5.
        let (_, cvar) = cvar_of_losses(&losses, Some(&[0.4, 0.2, 0.2, 0.2]), 0.7);
        assert!((cvar - 5.0).abs() < 1e-12);
        assert!((chance_of_loss(&losses, None) - 0.5).abs() < 1e-12);
    }
}
