"""Minimising the sum of squared log residuals: multistart least squares and a batched refit.

The best fit uses :func:`scipy.optimize.least_squares` (trust-region reflective,
bounds = the parameters' ranges on the search scale) from several starting
points: the scenario's own values and the best few of ``SCREEN_POINTS`` points
drawn uniformly (seeded) inside the bounds, each scored by one vectorised run.

Approximate standard errors: cov(u) = s^2 (J^T J)^-1 with J the Jacobian of
the concentrated residuals at the optimum and s^2 = RSS / (n - p - k) (n log
observations, p free parameters, k indices, each with its q); for separable
least squares the concentrated Jacobian gives the covariance of the nonlinear
parameters (Golub and Pereyra 1973).

The bootstrap refits every replicate at once by a Levenberg-Marquardt iteration
vectorised over replicates (forward-difference Jacobians from one run of all
replicates and their perturbed copies; steps kept inside the bounds by
clipping, a parameter the descent pushes through a bound held there), started
from the best fit, which is close to each replicate's optimum.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from sitegen.fitting.problem import Problem

Z95 = 1.959963984540054  # standard normal 97.5% point
SCREEN_POINTS = 64
LOCAL_STARTS = 4
AGREE = 1e-6  # relative difference in cost under which two optima are the same
JAC_STEP = 1e-7  # relative forward-difference step on the search scale (about sqrt(eps))
LM_ITERATIONS = 200  # Gauss-Newton converges slowly (linearly) in a long r-K valley
LM_STEP = 1e-6  # forward-difference step on the search scale
LM_TOLERANCE = 1e-10  # relative cost change that ends the batched iteration


@dataclass(frozen=True)
class BestFit:
    """The optimum on the search scale, its cost (half the RSS), Jacobian and covariance."""

    u: np.ndarray
    cost: float
    jacobian: np.ndarray
    covariance: np.ndarray
    converged: bool
    message: str
    starts: int
    agreeing: int


def jacobian_at(problem: Problem, u: np.ndarray) -> np.ndarray:
    """Jacobian (observations, p) of the concentrated residuals at ``u``, forward differences.

    All p perturbed copies go through one vectorised run.
    """
    step = JAC_STEP * np.maximum(np.abs(u), 1.0)
    step = np.where(u + step > problem.upper, -step, step)
    trials = np.vstack([u[None], u[None] + np.diag(step)])
    residuals = problem.residuals(trials)[0]
    return ((residuals[1:] - residuals[0]) / step[:, None]).T


def covariance_at(problem: Problem, u: np.ndarray) -> np.ndarray:
    """cov(u) = s^2 (J^T J)^-1 at ``u`` (see the module docstring); NaN without a residual df."""
    jac = jacobian_at(problem, u)
    residuals = problem.residuals(u[None])[0][0]
    dof = problem.observations - len(problem.free) - problem.log_index.shape[0]
    variance = float(residuals @ residuals) / dof if dof > 0 else np.nan
    return variance * np.linalg.pinv(jac.T @ jac)


def jacobian_intervals(
    problem: Problem, u: np.ndarray, covariance: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """95% intervals (low, high) in natural units: u +- 1.96 se on the search scale."""
    width = Z95 * np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    return problem.natural(u - width)[0], problem.natural(u + width)[0]


def _screen(problem: Problem, rng: np.random.Generator) -> np.ndarray:
    """Starting points: the scenario's values, then the best screened random points."""
    values = np.array(
        [
            float(problem.model.values[n]) if n in problem.model.values else np.nan
            for n in problem.free
        ]
    )
    own = problem.scaled(values)[0]
    own = np.where(np.isfinite(own), own, 0.5 * (problem.lower + problem.upper))
    own = np.clip(own, problem.lower, problem.upper)
    draws = rng.uniform(problem.lower, problem.upper, size=(SCREEN_POINTS, len(problem.free)))
    residuals, _, _ = problem.residuals(draws)
    cost = np.nansum(residuals**2, axis=1)
    order = np.argsort(np.where(np.isfinite(cost), cost, np.inf))
    return np.vstack([own[None], draws[order[:LOCAL_STARTS]]])


def best_fit(problem: Problem, seed: int) -> BestFit:
    """The best of the local fits from the screened starting points."""
    rng = np.random.default_rng(seed)
    starts = _screen(problem, rng)
    span = problem.upper - problem.lower
    inside_low = problem.lower + 1e-9 * span
    inside_high = problem.upper - 1e-9 * span

    def residual(u: np.ndarray) -> np.ndarray:
        return problem.residuals(u[None])[0][0]

    def jacobian(u: np.ndarray) -> np.ndarray:
        return jacobian_at(problem, u)

    results = []
    for start in starts:
        x0 = np.clip(start, inside_low, inside_high)
        results.append(
            least_squares(
                residual,
                x0,
                bounds=(problem.lower, problem.upper),
                jac=jacobian,
                method="trf",
                x_scale=np.where(span > 0, span, 1.0),
                xtol=1e-10,
                ftol=1e-10,
                gtol=1e-10,
            )
        )
    best = min(results, key=lambda r: r.cost)
    agreeing = sum(1 for r in results if abs(r.cost - best.cost) <= AGREE * max(best.cost, 1e-300))
    u = np.asarray(best.x, dtype=float)
    return BestFit(
        u,
        float(best.cost),
        jacobian_at(problem, u),
        covariance_at(problem, u),
        bool(best.status > 0),
        str(best.message),
        len(results),
        agreeing,
    )


def refit_batch(
    problem: Problem, start: np.ndarray, log_index: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Refit ``log_index`` (B, k, years) replicates from ``start`` (p,), all at once.

    Returns the optima on the search scale (B, p) and whether each converged.
    """
    count = log_index.shape[0]
    p = len(problem.free)
    u = np.tile(start, (count, 1))
    damping = np.full(count, 1e-3)
    done = np.zeros(count, dtype=bool)
    eye = np.eye(p)

    def cost_of(trial: np.ndarray, logs: np.ndarray) -> np.ndarray:
        residuals = problem.residuals(trial, logs)[0]
        return np.where(np.isfinite(residuals).all(axis=1), (residuals**2).sum(axis=1), np.inf)

    cost = cost_of(u, log_index)
    for _ in range(LM_ITERATIONS):
        active = np.nonzero(~done)[0]
        if active.size == 0:
            break
        ua, logs = u[active], log_index[active]
        n = active.size
        # One run for every replicate and each of its p perturbed copies.
        shifted = np.concatenate([ua] + [ua + LM_STEP * eye[j] for j in range(p)])
        residuals = problem.residuals(shifted, np.concatenate([logs] * (p + 1)))[0]
        base = residuals[:n]
        jac = np.stack(
            [(residuals[(j + 1) * n : (j + 2) * n] - base) / LM_STEP for j in range(p)], axis=2
        )
        gradient = np.einsum("bop,bo->bp", jac, base)
        # Projected steps: a parameter at a bound that the descent would push outward
        # is held there (its column dropped), so the others can still converge.
        edge = 1e-12 * (problem.upper - problem.lower)
        held = ((ua <= problem.lower + edge) & (gradient > 0)) | (
            (ua >= problem.upper - edge) & (gradient < 0)
        )
        jac = np.where(held[:, None, :], 0.0, jac)
        gradient = np.where(held, 0.0, gradient)
        jtj = np.einsum("bop,boq->bpq", jac, jac) + held[:, :, None] * eye[None]
        scale = np.einsum("bpp->bp", jtj)
        system = jtj + damping[active, None, None] * (scale[:, :, None] * eye[None] + 1e-12 * eye)
        try:
            step = np.linalg.solve(system, -gradient[..., None])[..., 0]
        except np.linalg.LinAlgError:
            step = -gradient * 1e-3
        trial = np.clip(ua + step, problem.lower, problem.upper)
        trial_cost = cost_of(trial, logs)
        better = trial_cost < cost[active]
        change = (cost[active] - trial_cost) / np.maximum(cost[active], 1e-300)
        u[active] = np.where(better[:, None], trial, ua)
        cost[active] = np.where(better, trial_cost, cost[active])
        damping[active] = np.where(better, damping[active] * 0.3, damping[active] * 10.0)
        finished = (better & (change < LM_TOLERANCE)) | (damping[active] > 1e12)
        done[active] = finished
    return u, done & np.isfinite(cost)
