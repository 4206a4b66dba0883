//! A small Nelder–Mead simplex minimizer, with box bounds by transformation.
//!
//! Used to estimate smoothing parameters and initial states. The algorithm is
//! Nelder & Mead, "A simplex method for function minimization", The Computer
//! Journal 7(4), 1965, in the precise form of Lagarias, Reeds, Wright &
//! Wright, "Convergence properties of the Nelder–Mead simplex method in low
//! dimensions", SIAM J. Optim. 9(1), 1998 (reflection, expansion, outside and
//! inside contraction, shrink; ties ordered so a new vertex goes last). Above
//! two dimensions it uses the dimension-dependent coefficients of Gao & Han,
//! "Implementing the Nelder-Mead simplex algorithm with adaptive parameters",
//! Comput. Optim. Appl. 51, 2012, which keep expansion from collapsing the
//! simplex in higher dimensions.
//!
//! Bounds: a bounded coordinate x in [lo, hi] is searched as an unbounded u
//! with x = lo + (hi − lo) / (1 + e^(−u)); an unbounded coordinate is used as
//! is. Non-finite objective values count as +∞, so an invalid region is just
//! very bad, never a panic.

/// Stopping rules.
#[derive(Debug, Clone, Copy)]
pub struct NmOptions {
    /// Most objective evaluations.
    pub max_evals: usize,
    /// Stop when the spread of values is below this, relative to the best.
    pub f_tol: f64,
    /// ... and every vertex is within this of the best (max norm).
    pub x_tol: f64,
}

impl Default for NmOptions {
    fn default() -> Self {
        NmOptions {
            max_evals: 2_000,
            f_tol: 1e-10,
            x_tol: 1e-8,
        }
    }
}

/// Where the search ended.
#[derive(Debug, Clone)]
pub struct NmResult {
    pub x: Vec<f64>,
    pub f: f64,
    pub evals: usize,
    /// True when the tolerances, not the evaluation budget, stopped it.
    pub converged: bool,
}

#[derive(Debug, Clone, Copy)]
struct Coefficients {
    reflect: f64,
    expand: f64,
    contract: f64,
    shrink: f64,
}

fn coefficients(n: usize) -> Coefficients {
    if n <= 2 {
        // Standard values (Nelder & Mead 1965; Lagarias et al. 1998).
        return Coefficients {
            reflect: 1.0,
            expand: 2.0,
            contract: 0.5,
            shrink: 0.5,
        };
    }
    let nf = n as f64;
    // Gao & Han (2012): ρ = 1, χ = 1 + 2/n, γ = 0.75 − 1/(2n), σ = 1 − 1/n.
    Coefficients {
        reflect: 1.0,
        expand: 1.0 + 2.0 / nf,
        contract: 0.75 - 1.0 / (2.0 * nf),
        shrink: 1.0 - 1.0 / nf,
    }
}

struct Simplex<F: FnMut(&[f64]) -> f64> {
    f: F,
    /// (value, vertex), best first after `order`.
    verts: Vec<(f64, Vec<f64>)>,
    evals: usize,
}

impl<F: FnMut(&[f64]) -> f64> Simplex<F> {
    fn eval(&mut self, x: &[f64]) -> f64 {
        self.evals += 1;
        let v = (self.f)(x);
        if v.is_finite() {
            v
        } else {
            f64::INFINITY
        }
    }

    /// Sorts vertices best first (stable, so a new vertex goes after equal
    /// ones, as Lagarias et al. 1998 order ties).
    fn order(&mut self) {
        self.verts.sort_by(|a, b| a.0.total_cmp(&b.0));
    }

    fn centroid(&self, c: &mut [f64]) {
        let n = self.verts.len() - 1;
        c.fill(0.0);
        for (_, p) in &self.verts[..n] {
            for (ci, pi) in c.iter_mut().zip(p) {
                *ci += pi;
            }
        }
        c.iter_mut().for_each(|ci| *ci /= n as f64);
    }

    fn replace_worst(&mut self, x: &[f64], v: f64) {
        let last = self.verts.len() - 1;
        self.verts[last].1.copy_from_slice(x);
        self.verts[last].0 = v;
    }

    fn shrink(&mut self, sigma: f64) {
        let best = self.verts[0].1.clone();
        for i in 1..self.verts.len() {
            let mut p = std::mem::take(&mut self.verts[i].1);
            p.iter_mut()
                .zip(&best)
                .for_each(|(x, b)| *x = b + sigma * (*x - b));
            self.verts[i].0 = self.eval(&p);
            self.verts[i].1 = p;
        }
    }

    fn converged(&self, o: &NmOptions) -> bool {
        let best = self.verts[0].0;
        let worst = self.verts[self.verts.len() - 1].0;
        let f_ok = worst - best <= o.f_tol * best.abs().max(1e-300) || worst == best;
        let x0 = &self.verts[0].1;
        let x_ok = self.verts[1..].iter().all(|(_, p)| {
            p.iter()
                .zip(x0)
                .all(|(a, b)| (a - b).abs() <= o.x_tol * (1.0 + b.abs()))
        });
        f_ok && x_ok
    }
}

/// Scratch vectors of one iteration.
#[derive(Debug, Clone)]
struct Work {
    c: Vec<f64>,
    r: Vec<f64>,
    t: Vec<f64>,
}

/// out = c + t·(c − d).
fn along(c: &[f64], d: &[f64], t: f64, out: &mut [f64]) {
    for ((o, ci), di) in out.iter_mut().zip(c).zip(d) {
        *o = ci + t * (ci - di);
    }
}

/// One Nelder–Mead iteration (as stated by Lagarias et al. 1998). The simplex is
/// sorted on entry.
fn iterate<F: FnMut(&[f64]) -> f64>(s: &mut Simplex<F>, k: &Coefficients, w: &mut Work) {
    let n = s.verts.len() - 1;
    s.centroid(&mut w.c);
    let (f1, fn_, fw) = (s.verts[0].0, s.verts[n - 1].0, s.verts[n].0);
    along(&w.c, &s.verts[n].1, k.reflect, &mut w.r);
    let fr = s.eval(&w.r);
    if fr < f1 {
        along(&w.c, &s.verts[n].1, k.reflect * k.expand, &mut w.t);
        let fe = s.eval(&w.t);
        if fe < fr {
            s.replace_worst(&w.t, fe);
        } else {
            s.replace_worst(&w.r, fr);
        }
    } else if fr < fn_ {
        s.replace_worst(&w.r, fr);
    } else if fr < fw {
        along(&w.c, &s.verts[n].1, k.reflect * k.contract, &mut w.t);
        let fc = s.eval(&w.t);
        if fc <= fr {
            s.replace_worst(&w.t, fc);
        } else {
            s.shrink(k.shrink);
        }
    } else {
        along(&w.c, &s.verts[n].1, -k.contract, &mut w.t);
        let fcc = s.eval(&w.t);
        if fcc < fw {
            s.replace_worst(&w.t, fcc);
        } else {
            s.shrink(k.shrink);
        }
    }
    s.order();
}

/// Minimizes `f` from `x0`, with an initial simplex of `x0` plus one vertex
/// per coordinate moved by `step[i]` (a zero step is replaced by 0.05).
pub fn minimize<F: FnMut(&[f64]) -> f64>(
    f: F,
    x0: &[f64],
    step: &[f64],
    opts: &NmOptions,
) -> NmResult {
    let n = x0.len();
    let mut s = Simplex {
        f,
        verts: Vec::with_capacity(n + 1),
        evals: 0,
    };
    let v0 = s.eval(x0);
    s.verts.push((v0, x0.to_vec()));
    if n == 0 {
        return NmResult {
            x: Vec::new(),
            f: v0,
            evals: s.evals,
            converged: true,
        };
    }
    for i in 0..n {
        let mut p = x0.to_vec();
        let d = step
            .get(i)
            .copied()
            .filter(|d| *d != 0.0 && d.is_finite())
            .unwrap_or(0.05);
        p[i] += d;
        let v = s.eval(&p);
        s.verts.push((v, p));
    }
    s.order();
    let k = coefficients(n);
    let mut w = Work {
        c: vec![0.0; n],
        r: vec![0.0; n],
        t: vec![0.0; n],
    };
    let mut converged = false;
    while s.evals < opts.max_evals {
        if s.converged(opts) {
            converged = true;
            break;
        }
        iterate(&mut s, &k, &mut w);
    }
    let (f, x) = s.verts.swap_remove(0);
    NmResult {
        x,
        f,
        evals: s.evals,
        converged,
    }
}

/// Maps an unbounded search coordinate to [lo, hi] (identity if unbounded).
pub fn to_bounded(u: f64, lo: f64, hi: f64) -> f64 {
    if lo.is_finite() && hi.is_finite() {
        lo + (hi - lo) / (1.0 + (-u).exp())
    } else {
        u
    }
}

/// Inverse of `to_bounded`; values on or past a bound are pulled inside.
pub fn to_unbounded(x: f64, lo: f64, hi: f64) -> f64 {
    if !(lo.is_finite() && hi.is_finite()) {
        return x;
    }
    if hi <= lo {
        return 0.0;
    }
    let p = ((x - lo) / (hi - lo)).clamp(1e-6, 1.0 - 1e-6);
    (p / (1.0 - p)).ln()
}

/// Minimizes `f(x)` over the box `lo[i] <= x[i] <= hi[i]` (infinite bounds
/// leave a coordinate free). `step` is in the search space: logit units for
/// bounded coordinates, the coordinate's own units otherwise.
pub fn minimize_bounded<F: FnMut(&[f64]) -> f64>(
    mut f: F,
    x0: &[f64],
    step: &[f64],
    lo: &[f64],
    hi: &[f64],
    opts: &NmOptions,
) -> NmResult {
    let map = |u: &[f64], x: &mut [f64]| {
        for (i, (xi, ui)) in x.iter_mut().zip(u).enumerate() {
            *xi = to_bounded(*ui, lo[i], hi[i]);
        }
    };
    let u0: Vec<f64> = x0
        .iter()
        .enumerate()
        .map(|(i, &x)| to_unbounded(x, lo[i], hi[i]))
        .collect();
    let mut buf = vec![0.0; x0.len()];
    let r = minimize(
        |u: &[f64]| {
            map(u, &mut buf);
            f(&buf)
        },
        &u0,
        step,
        opts,
    );
    let mut x = vec![0.0; r.x.len()];
    map(&r.x, &mut x);
    NmResult { x, ..r }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rosenbrock's function (Rosenbrock, "An automatic method for finding
    /// the greatest or least value of a function", Computer J. 3, 1960),
    /// minimum 0 at (1, 1); start (−1.2, 1) is the classic one (from memory).
    #[test]
    fn finds_the_rosenbrock_minimum() {
        let f = |x: &[f64]| 100.0 * (x[1] - x[0] * x[0]).powi(2) + (1.0 - x[0]).powi(2);
        let o = NmOptions {
            max_evals: 5_000,
            f_tol: 1e-14,
            x_tol: 1e-10,
        };
        let r = minimize(f, &[-1.2, 1.0], &[0.1, 0.1], &o);
        assert!(r.converged);
        assert!(
            (r.x[0] - 1.0).abs() < 1e-5 && (r.x[1] - 1.0).abs() < 1e-5,
            "{:?}",
            r.x
        );
    }

    #[test]
    fn adaptive_coefficients_solve_a_ten_dimensional_quadratic() {
        let f = |x: &[f64]| {
            x.iter()
                .enumerate()
                .map(|(i, v)| (i as f64 + 1.0) * (v - 1.0).powi(2))
                .sum()
        };
        let o = NmOptions {
            max_evals: 40_000,
            f_tol: 1e-16,
            x_tol: 1e-10,
        };
        let r = minimize(f, &[0.0; 10], &[0.5; 10], &o);
        assert!(r.x.iter().all(|v| (v - 1.0).abs() < 1e-4), "{:?}", r.x);
    }

    #[test]
    fn bounded_search_stops_at_the_bound_and_stays_inside() {
        // Unconstrained minimum at 2; the box [0, 1] puts it at the bound 1.
        let r = minimize_bounded(
            |x: &[f64]| (x[0] - 2.0).powi(2) + (x[1] - 0.25).powi(2),
            &[0.5, 0.5],
            &[1.0, 1.0],
            &[0.0, 0.0],
            &[1.0, 1.0],
            &NmOptions::default(),
        );
        assert!(r.x[0] <= 1.0 && r.x[0] > 0.999, "{:?}", r.x);
        assert!((r.x[1] - 0.25).abs() < 1e-6);
    }

    #[test]
    fn non_finite_values_are_avoided_not_fatal() {
        // NaN left of 0.5: the search must end in the finite region at 0.7.
        let f = |x: &[f64]| {
            if x[0] < 0.5 {
                f64::NAN
            } else {
                (x[0] - 0.7).powi(2)
            }
        };
        let r = minimize(f, &[0.6], &[0.3], &NmOptions::default());
        assert!((r.x[0] - 0.7).abs() < 1e-6 && r.f.is_finite());
    }

    #[test]
    fn transform_round_trips() {
        for x in [0.0001, 0.3, 0.9] {
            let u = to_unbounded(x, 0.0, 1.0);
            assert!((to_bounded(u, 0.0, 1.0) - x).abs() < 1e-12);
        }
        assert_eq!(to_bounded(3.5, f64::NEG_INFINITY, f64::INFINITY), 3.5);
    }
}
