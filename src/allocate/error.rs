//! Errors of the allocation module.
//!
//! Each message names the field or option at fault and says what to change.
//! `Infeasible` and `MinimumsOverBudget` are the ones the command line maps
//! to exit code 3 (no allocation exists); every other variant is a failure
//! (exit code 1).

use thiserror::Error;

/// Everything that can go wrong while allocating a budget.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum AllocError {
    /// The problem data are unusable as given.
    #[error("invalid allocation problem: {field}: {message}")]
    Invalid {
        /// The field, id or option at fault (for example `costs[cluster/tier]`).
        field: String,
        /// What is wrong and how to fix it.
        message: String,
    },

    /// No allocation meets the tail-loss limit.
    #[error(
        "no allocation keeps the tail loss at or under the limit {}: the smallest tail \
         loss achievable with this budget is {}; raise --max-tail-loss to at \
         least that, or lower the must-fund minimums",
        crate::text::figure(*limit),
        crate::text::figure(*min_tail_loss)
    )]
    Infeasible {
        /// The smallest CVaR of loss any allocation within the budget reaches.
        min_tail_loss: f64,
        /// The limit that was asked for.
        limit: f64,
    },

    /// The must-fund minimums cost more than the budget: no allocation
    /// exists whatever the tail-loss limit.
    #[error(
        "budget: the must-fund minimums cost {} but the budget is {}; raise \
         --budget to at least {} or lower the minimums (min_fraction)",
        crate::text::number(*cost, 2),
        crate::text::number(*budget, 2),
        crate::text::number(*cost, 2)
    )]
    MinimumsOverBudget {
        /// Cost of the minimums (with the tiers they require).
        cost: f64,
        /// The budget.
        budget: f64,
    },

    /// Whole tiers were asked for on an instance too large for branch and bound.
    #[error(
        "--whole-tiers: {variables} tiers exceed the limit of {max_binary_vars} whole-tier \
         (binary) variables; the continuous allocation has an expected net return of \
         {}; drop --whole-tiers or raise max_binary_vars",
        crate::text::figure(*continuous_expected_return)
    )]
    WholeTiersTooLarge {
        /// Number of investment ids.
        variables: usize,
        /// The configured limit.
        max_binary_vars: usize,
        /// Expected net return of the continuous (fractional) optimum.
        continuous_expected_return: f64,
    },

    /// The LP backend failed (numerical trouble, unexpected unboundedness).
    #[error("the LP solver ({backend}) failed: {message}; try the other --method or backend")]
    Solver {
        /// Backend name.
        backend: String,
        /// The backend's message.
        message: String,
    },

    /// The solver stopped without proving optimality (time limit, gap).
    #[error(
        "the LP solver ({backend}) stopped before proving optimality ({status}); \
         raise the time limit or use --method cuts"
    )]
    NotOptimal {
        /// Backend name.
        backend: String,
        /// The reason it stopped.
        status: String,
    },

    /// The cutting-plane method stopped without converging. `--method auto`
    /// never returns this: it answers with the full LP instead.
    #[error(
        "--method cuts: the cutting-plane method stopped without converging after {rounds} \
         cuts: {reason}; its model of the tail still misses an excess loss of \
         {violation:.3e}; use --method full, or --method auto, which falls back to the full LP"
    )]
    CutsDidNotConverge {
        /// Cuts added before stopping.
        rounds: usize,
        /// Remaining violation of the tail-loss representation.
        violation: f64,
        /// Why it stopped, in plain words.
        reason: String,
    },

    /// The solve failed numerically and the data span more orders of
    /// magnitude than the backend can resolve: the message names them.
    #[error("the allocation cannot be solved reliably: {why} (the LP solver reported: {detail})")]
    Scale {
        /// Which inputs span too many orders of magnitude, and what to do.
        why: String,
        /// The failure it explains.
        detail: String,
    },

    /// The backend was not compiled in.
    #[error("the {backend} LP backend is not built in: rebuild with `--features {backend}`")]
    BackendUnavailable {
        /// Backend name.
        backend: String,
    },

    /// The answer failed the independent re-check against the scenarios.
    #[error("the allocation failed verification: {what}; please report this as a bug")]
    Verification {
        /// Which check failed, with the numbers.
        what: String,
    },
}

impl AllocError {
    /// Shorthand for an `Invalid` error.
    pub fn invalid(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self::Invalid {
            field: field.into(),
            message: message.into(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn error_messages_print_amounts_like_the_tables_not_raw_floats() {
        let e = AllocError::Infeasible {
            min_tail_loss: 1234.5678,
            limit: 500.0,
        }
        .to_string();
        assert!(e.contains("limit 500:"), "{e}");
        assert!(e.contains("is 1,235;"), "{e}");
        assert!(!e.contains("500.000000"), "{e}");
        let m = AllocError::MinimumsOverBudget {
            cost: 15000.0,
            budget: 12000.0,
        }
        .to_string();
        assert!(
            m.contains("cost 15,000.00 but the budget is 12,000.00"),
            "{m}"
        );
    }
}
