//! Output of `furrow ctr fit`: both fits with their errors, the queries and
//! impressions per position bin, which bins fell back to the default curve,
//! and the chosen curve (written in the models/ctr/ format with `--out`).

use super::ctr_fit::{CtrFit, FitKind};
use crate::output::{num, opt, Render, Rows};
use crate::text::{int, pct, table, Align::*};

fn p(v: Option<f64>) -> String {
    v.map(|x| pct(x, 2)).unwrap_or_else(|| "-".into())
}

impl Render for CtrFit {
    fn table(&self) -> String {
        let mut out = format!(
            "Click-through curve fitted from {} queries ({} impressions); {} branded queries excluded, {} with no impressions, {} past the last bin.\n\n",
            int(self.queries_used as f64),
            int(self.impressions_used),
            self.branded_excluded,
            self.zero_impression_rows,
            self.beyond_last_bin
        );
        let rows: Vec<Vec<String>> = self
            .bins
            .iter()
            .map(|b| {
                vec![
                    b.label.clone(),
                    b.queries.to_string(),
                    int(b.impressions),
                    p(b.observed_ctr),
                    p(b.isotonic_ctr),
                    p(b.power_law_ctr),
                    if b.fallback {
                        format!(
                            "fewer than {} impressions: default curve's shape",
                            int(self.min_impressions)
                        )
                    } else {
                        String::new()
                    },
                ]
            })
            .collect();
        out += &table(
            &[
                "position",
                "queries",
                "impressions",
                "observed CTR",
                "isotonic",
                "power law",
                "note",
            ],
            &[Left, Right, Right, Right, Right, Right, Left],
            &rows,
        );
        out += &format!(
            "\nIsotonic (pool-adjacent-violators): weighted RMSE {}, cross-validated {}\n",
            pct(self.isotonic.rmse, 3),
            p(self.isotonic.cv_rmse)
        );
        match &self.power_law {
            Some(pl) => {
                out +=
                    &format!(
                    "Power law CTR(p) = {:.4} * p^-{:.3}{}: weighted RMSE {}, cross-validated {}\n",
                    pl.a,
                    pl.b,
                    if pl.constrained { " (slope held at 0)" } else { "" },
                    pct(pl.rmse, 3),
                    p(pl.cv_rmse)
                )
            }
            None => out += "Power law: not fitted (too few bins)\n",
        }
        let chosen = match self.chosen {
            FitKind::Isotonic => "isotonic",
            FitKind::PowerLaw => "power law",
        };
        out += &format!("Chosen: {chosen} ({})\n", self.choice_reason);
        out
    }

    fn rows(&self) -> Rows {
        Rows {
            header: [
                "bin",
                "first",
                "last",
                "queries",
                "impressions",
                "clicks",
                "mean_position",
                "observed_ctr",
                "isotonic_ctr",
                "power_law_ctr",
                "fallback",
            ]
            .map(String::from)
            .to_vec(),
            rows: self
                .bins
                .iter()
                .map(|b| {
                    vec![
                        b.label.clone(),
                        b.first.to_string(),
                        b.last.to_string(),
                        b.queries.to_string(),
                        num(b.impressions),
                        num(b.clicks),
                        opt(b.mean_position),
                        opt(b.observed_ctr),
                        opt(b.isotonic_ctr),
                        opt(b.power_law_ctr),
                        b.fallback.to_string(),
                    ]
                })
                .collect(),
        }
    }
}
