//! Minimisation of the [`Objective`] with argmin's L-BFGS (More–Thuente line search) in
//! scaled coordinates `u = (θ − θ0)/scale`, gradients by central differences.

use std::cell::RefCell;

use argmin::core::{CostFunction, Error, Executor, Gradient, State};
use argmin::solver::linesearch::MoreThuenteLineSearch;
use argmin::solver::quasinewton::LBFGS;

use super::objective::Objective;

/// Step of the forward differences of planet curves, in scaled units.
const GRAD_STEP: f64 = 1e-6;

/// θ = origin + u × scale.
fn unscale(u: &[f64], origin: &[f64], scale: &[f64]) -> Vec<f64> {
    u.iter()
        .zip(origin)
        .zip(scale)
        .map(|((u, o), s)| o + u * s)
        .collect()
}

/// Most objective evaluations in one round: a line search that cannot make progress
/// (e.g. among overflowing likelihoods) is stopped here rather than running on.
const MAX_EVALUATIONS: usize = 200_000;

struct Scaled<'a> {
    objective: &'a Objective<'a>,
    origin: Vec<f64>,
    scale: Vec<f64>,
    best: &'a RefCell<(f64, Vec<f64>)>,
    evaluations: std::cell::Cell<usize>,
}

impl Scaled<'_> {
    /// Counts an evaluation; an error once the round has used [`MAX_EVALUATIONS`].
    fn count(&self, n: usize) -> Result<(), Error> {
        let used = self.evaluations.get() + n;
        self.evaluations.set(used);
        if used > MAX_EVALUATIONS {
            return Err(Error::msg("evaluation limit of the round reached"));
        }
        Ok(())
    }

    fn eval(&self, u: &[f64]) -> f64 {
        let theta = unscale(u, &self.origin, &self.scale);
        let v = self.objective.value(&theta);
        let mut best = self.best.borrow_mut();
        if v < best.0 {
            *best = (v, theta);
        }
        v
    }
}

impl CostFunction for Scaled<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, u: &Self::Param) -> Result<f64, Error> {
        self.count(1)?;
        Ok(self.eval(u))
    }
}

impl Gradient for Scaled<'_> {
    type Param = Vec<f64>;
    type Gradient = Vec<f64>;
    fn gradient(&self, u: &Self::Param) -> Result<Vec<f64>, Error> {
        self.count(2 * u.len())?;
        let theta = unscale(u, &self.origin, &self.scale);
        let steps: Vec<f64> = self.scale.iter().map(|s| GRAD_STEP * s).collect();
        let g = self.objective.gradient(&theta, &steps);
        Ok(g.iter().zip(&self.scale).map(|(g, s)| g * s).collect())
    }
}

/// Minimises `objective` from `start` (θ), with `scale` the natural size of each entry.
/// Returns the best θ seen and its objective value. A line-search failure ends a round
/// early but never loses the best point found; rounds repeat (at most `rounds`) from the
/// best point until the value improves by less than 1e-7. A start without a finite value
/// is returned as it is (there is nothing to descend from), and a round ends after
/// [`MAX_EVALUATIONS`] evaluations.
pub fn minimise(
    objective: &Objective,
    start: &[f64],
    scale: &[f64],
    rounds: usize,
) -> (Vec<f64>, f64) {
    let mut theta = start.to_vec();
    let mut value = objective.value(&theta);
    if !value.is_finite() {
        return (theta, value);
    }
    for _ in 0..rounds {
        let best = RefCell::new((value, theta.clone()));
        let problem = Scaled {
            objective,
            origin: theta.clone(),
            scale: scale.to_vec(),
            best: &best,
            evaluations: std::cell::Cell::new(0),
        };
        let solver = LBFGS::new(MoreThuenteLineSearch::new(), 10)
            .with_tolerance_grad(1e-5)
            .and_then(|s| s.with_tolerance_cost(1e-12));
        let Ok(solver) = solver else { break };
        let outcome = Executor::new(problem, solver)
            .configure(|state| state.param(vec![0.0; start.len()]).max_iters(400))
            .run();
        if let Ok(result) = &outcome
            && let Some(u) = result.state().get_best_param()
        {
            let theta_u = unscale(u, &theta, scale);
            let v = objective.value(&theta_u);
            let mut b = best.borrow_mut();
            if v < b.0 {
                *b = (v, theta_u);
            }
        }
        let (best_value, best_theta) = best.into_inner();
        let improvement = value - best_value;
        theta = best_theta;
        value = best_value;
        if !(improvement > 1e-7) {
            break;
        }
    }
    (theta, value)
}
