"""Pseudo-arclength continuation of a curve H(u) = 0 inside a box (the generic engine).

H: R^(n+1) -> R^n, so the solutions form curves; n = 1 for equilibrium branches in
(state, parameter), n = 2 for fold curves in (state, p1, p2). Coordinates are stored along
axis 0 and H and its Jacobian broadcast over trailing axes. Internally each coordinate is
divided by its box width, s = (u - low) / (high - low), so the box is the unit cube and a step
of length h moves about h box-widths whatever the units: a state in thousands of tonnes and a
rate in 1/yr step evenly. Step lengths and tolerances in :class:`StepControl` are in these
scaled units. :mod:`sitegen.analysis.continuation` re-exports the public names.

One step: the tangent is the null vector of the Jacobian (QR of its transpose), oriented by the
sign of its dot product with the previous tangent; the predictor moves h along it and the
corrector is Newton on the bordered system [H(s); t.(s - s_pred)] = 0.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

SystemMap = Callable[[np.ndarray], np.ndarray]
BOX_SLACK = 1e-9  # scaled: points this far outside the box still count as inside (roundoff)
CORNER_RADIUS = 1e-5  # scaled radius of the circle searched to get round a kink (n = 1)
CORNER_SAMPLES = 256
MAX_CORNERS = 20


@dataclass(frozen=True)
class StepControl:
    """Step-length control, in box widths (see the module docstring)."""

    initial: float = 0.01
    smallest: float = 1e-8
    largest: float = 0.04
    max_steps: int = 3000  # attempted steps per direction; bounds the work on any curve
    iterations: int = 8  # Newton iterations of the corrector
    tolerance: float = 1e-12  # last Newton correction that counts as converged
    correction_ratio: float = 0.5  # a correction larger than this times the step is rejected
    cosine: float = 0.95  # consecutive tangents must agree this well unless the step is smallest
    grow: float = 1.5
    shrink: float = 0.5


@dataclass(frozen=True)
class Trace:
    """A traced curve: points in original units, unit tangents in scaled units (both (m, n+1)).

    ``ends`` says why each end stopped: "box" (left the box, last point clipped onto its
    boundary), "closed" (came back to the start; the first point is repeated last), "steps"
    (the step budget ran out) or "stalled" (the corrector failed at the smallest step).
    """

    points: np.ndarray
    tangents: np.ndarray
    closed: bool
    ends: tuple[str, str]


class _Scaled:
    """H and its Jacobian in box-scaled coordinates, with non-finite values guarded."""

    def __init__(
        self, residual: SystemMap, jacobian: SystemMap, low: np.ndarray, high: np.ndarray
    ) -> None:
        self.low, self.width = low, high - low
        self._residual, self._jacobian = residual, jacobian

    def unscale(self, s: np.ndarray) -> np.ndarray:
        tail = (None,) * (np.ndim(s) - 1)  # coordinates run along axis 0
        return self.low[(..., *tail)] + self.width[(..., *tail)] * s

    def residual(self, s: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            return np.asarray(self._residual(self.unscale(s)), dtype=float)

    def jacobian(self, s: np.ndarray) -> np.ndarray:
        # Column j is scaled by width j: dH/ds_j = dH/du_j * width_j.
        with np.errstate(all="ignore"):
            return np.asarray(self._jacobian(self.unscale(s)), dtype=float) * self.width


def extended_newton(
    system: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]],
    start: np.ndarray,
    width: np.ndarray,
    max_steps: int = 40,
) -> np.ndarray | None:
    """Newton's method for a square system G(u) = 0, stepping in coordinates scaled by width.

    ``system(u)`` returns (G(u), dG/du). Stops when the scaled step is below 1e-15, or
    below 1e-12 and no longer halving (rounding level); None if a step cannot be taken or
    the iteration does not settle within ``max_steps``.
    """
    u, last = start.copy(), np.inf
    for _ in range(max_steps):
        values, jacobian = system(u)
        scaled = jacobian * width
        if not (np.all(np.isfinite(scaled)) and np.all(np.isfinite(values))):
            return None
        try:
            delta = np.linalg.solve(scaled, -values)
        except np.linalg.LinAlgError:
            return None
        u = u + delta * width
        size = float(np.max(np.abs(delta)))
        if size <= 1e-15 or (size < 1e-12 and size >= 0.5 * last):
            return u
        last = size
    return None


def null_tangent(jacobian: np.ndarray) -> np.ndarray | None:
    """Unit null vector of an n x (n+1) Jacobian (QR of its transpose), None if not finite."""
    if not np.all(np.isfinite(jacobian)):
        return None
    if jacobian.shape[0] == 1:  # 1 x 2: the null vector is the gradient turned by 90 degrees
        t = np.array([-jacobian[0, 1], jacobian[0, 0]])
    else:
        t = np.linalg.qr(jacobian.T, mode="complete")[0][:, -1]
    norm = float(np.linalg.norm(t))
    return t / norm if norm > 0 else None


def _solve(a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """a^-1 b, or None if a is singular; 2 x 2 by Cramer's rule (the common case, and cheap)."""
    if a.shape == (2, 2):
        det = a[0, 0] * a[1, 1] - a[0, 1] * a[1, 0]
        if det == 0 or not np.isfinite(det):
            return None
        return np.array([b[0] * a[1, 1] - a[0, 1] * b[1], a[0, 0] * b[1] - b[0] * a[1, 0]]) / det
    try:
        return np.linalg.solve(a, b)
    except np.linalg.LinAlgError:
        return None


def _newton(
    system: _Scaled,
    s: np.ndarray,
    border: np.ndarray,
    target: float,
    iterations: int,
    tolerance: float,
) -> tuple[np.ndarray, int] | None:
    """Newton on [H(s); border . s - target] = 0; (solution, iterations) or None."""
    last = np.inf
    a = np.empty((s.size, s.size))
    b = np.empty(s.size)
    for k in range(1, iterations + 1):
        a[:-1], a[-1] = system.jacobian(s), border
        b[:-1], b[-1] = system.residual(s), border @ s - target
        if not (np.isfinite(a).all() and np.isfinite(b).all()):
            return None
        delta = _solve(a, -b)
        if delta is None:
            return None
        s = s + delta
        size = float(np.max(np.abs(delta)))
        # Converged: the last correction is small, or quadratic convergence (error after it
        # about size^3 / last^2) puts the next one below the tolerance; or Newton is stuck at
        # the roundoff floor (ill-conditioned next to a branch point).
        if (
            size <= tolerance
            or (k >= 2 and size**3 <= tolerance * last**2)
            or (k >= 3 and size <= 1e-9 and size >= 0.5 * last)
        ):
            return (s, k) if np.all(np.isfinite(s)) else None
        if k >= 2 and size > last:
            return None
        last = size
    return None


def _clip(system: _Scaled, inside: np.ndarray, outside: np.ndarray) -> np.ndarray:
    """The point where the chord inside -> outside meets the box, polished onto the curve."""
    d = outside - inside
    with np.errstate(divide="ignore", invalid="ignore"):
        to_low = np.where(outside < -BOX_SLACK, -inside / d, np.inf)
        to_high = np.where(outside > 1 + BOX_SLACK, (1 - inside) / d, np.inf)
    fractions = np.minimum(to_low, to_high)
    axis = int(np.argmin(fractions))
    bound = 0.0 if np.isfinite(to_low[axis]) and to_low[axis] <= to_high[axis] else 1.0
    clipped = inside + float(np.clip(fractions[axis], 0.0, 1.0)) * d
    clipped[axis] = bound
    # Polish with the boundary coordinate held fixed, so the end point lies on the curve too.
    border = np.zeros_like(inside)
    border[axis] = 1.0
    polished = _newton(system, clipped, border, bound, 12, 1e-13)
    if polished is not None:
        s = polished[0]
        if (
            np.linalg.norm(s - clipped) <= np.linalg.norm(d)
            and np.all(s >= -BOX_SLACK)
            and np.all(s <= 1 + BOX_SLACK)
        ):
            return s
    return clipped


def _round_corner(
    system: _Scaled, s: np.ndarray, t: np.ndarray
) -> tuple[np.ndarray, np.ndarray] | None:
    """Past a kink of a plane curve (non-smooth rate): the curve's other crossing of a circle.

    Of the crossings of a small circle around s, the one most nearly ahead is taken (the one
    behind is where we came from); its tangent is oriented away from s.
    """
    angles = np.linspace(0.0, 2 * np.pi, CORNER_SAMPLES + 1)
    ring = s[:, None] + CORNER_RADIUS * np.vstack([np.cos(angles), np.sin(angles)])
    values = system.residual(ring)[0]
    change = np.flatnonzero(
        np.isfinite(values[:-1]) & np.isfinite(values[1:]) & (values[:-1] * values[1:] < 0)
    )
    if change.size < 2:
        return None

    def on_ring(theta: float) -> float:
        point = s + CORNER_RADIUS * np.array([np.cos(theta), np.sin(theta)])
        return float(system.residual(point)[0])

    best: tuple[float, np.ndarray] | None = None
    for i in change:
        theta = brentq(on_ring, angles[i], angles[i + 1], xtol=1e-15)
        direction = np.array([np.cos(theta), np.sin(theta)])
        if best is None or direction @ t > best[0] @ t:
            best = (direction, s + CORNER_RADIUS * direction)
    assert best is not None
    tangent = null_tangent(system.jacobian(best[1]))
    if tangent is None:
        return None
    return best[1], tangent if tangent @ best[0] >= 0 else -tangent


def _march(
    system: _Scaled, s0: np.ndarray, t0: np.ndarray, control: StepControl
) -> tuple[list[np.ndarray], list[np.ndarray], str]:
    """Predictor-corrector steps from s0 along t0 until the box, closure or the budget."""
    points, tangents = [s0], [t0]
    s, t, h, length, corners = s0, t0, control.initial, 0.0, 0
    for _ in range(control.max_steps):
        predicted = s + h * t
        result = _newton(
            system, predicted, t, float(t @ predicted), control.iterations, control.tolerance
        )
        accepted = False
        if result is not None:
            new, iterations = result
            tangent = null_tangent(system.jacobian(new))
            if tangent is not None:
                tangent = tangent if tangent @ t >= 0 else -tangent
                ahead = float((new - s) @ t) > 0
                smooth = (
                    np.linalg.norm(new - predicted) <= control.correction_ratio * h
                    and tangent @ t >= control.cosine
                )
                # At the smallest step a kink is taken as it comes (non-smooth rates).
                accepted = ahead and (smooth or h <= control.smallest)
        if not accepted:
            if h > control.smallest:
                h = max(h * control.shrink, control.smallest)
                continue
            turned = _round_corner(system, s, t) if s.size == 2 and corners < MAX_CORNERS else None
            if turned is None:
                return points, tangents, "stalled"
            corners += 1
            new, tangent, iterations = turned[0], turned[1], control.iterations
        if np.any(new < -BOX_SLACK) or np.any(new > 1 + BOX_SLACK):
            end = _clip(system, s, new)
            if np.linalg.norm(end - s) > 1e-12:
                points.append(end)
                tangents.append(tangent)
            return points, tangents, "box"
        chord = new - s
        length += float(np.linalg.norm(chord))
        back = float(np.clip((s0 - s) @ chord / (chord @ chord), 0.0, 1.0))
        if (
            length > 3.0 * np.linalg.norm(chord)
            and tangent @ t0 > 0
            and np.linalg.norm(s + back * chord - s0) <= 0.25 * np.linalg.norm(chord)
        ):
            points.append(s0)
            tangents.append(t0)
            return points, tangents, "closed"
        points.append(new)
        tangents.append(tangent)
        s, t = new, tangent
        if iterations <= 2:
            h = min(h * control.grow, control.largest)
        elif iterations >= 5:
            h = max(h * control.shrink, control.smallest)
    return points, tangents, "steps"


def trace_curve(
    residual: SystemMap,
    jacobian: SystemMap,
    start: Sequence[float],
    low: Sequence[float],
    high: Sequence[float],
    control: StepControl | None = None,
) -> Trace | None:
    """Trace the curve H = 0 through ``start`` both ways inside the box [low, high].

    ``residual(u)`` returns H (n values) and ``jacobian(u)`` the n x (n+1) matrix dH/du. The
    start is first corrected onto the curve (minimum-norm Newton). Returns None when it cannot
    be, or when the Jacobian there has no clean one-dimensional null space (a branch point).
    """
    control = control or StepControl()
    low_a, high_a = np.asarray(low, dtype=float), np.asarray(high, dtype=float)
    if np.any(high_a <= low_a):
        raise ValueError("every box width must be positive")
    system = _Scaled(residual, jacobian, low_a, high_a)
    s = (np.asarray(start, dtype=float) - low_a) / system.width
    for _ in range(20):
        j, r = system.jacobian(s), system.residual(s)
        if not (np.all(np.isfinite(j)) and np.all(np.isfinite(r))):
            return None
        delta = np.linalg.lstsq(j, -r, rcond=None)[0]
        s = s + delta
        if np.max(np.abs(delta)) <= 1e-14:
            break
    j = system.jacobian(s)
    if not np.all(np.isfinite(j)):
        return None
    # The Jacobian's size a little way off the start sets the scale: at a branch point it
    # vanishes there but not nearby, whatever the units of H.
    probes = s[:, None] + 1e-3 * np.hstack([np.eye(s.size), -np.eye(s.size)])
    nearby = np.stack([system.jacobian(probe) for probe in probes.T])
    scale = float(np.max(np.abs(nearby[np.isfinite(nearby)]), initial=0.0))
    if scale == 0.0 or np.linalg.svd(j, compute_uv=False).min() <= 1e-8 * scale:
        return None
    if np.max(np.abs(system.residual(s))) > 1e-8 * scale:
        return None
    t0 = null_tangent(j)
    assert t0 is not None
    t0 = t0 if t0[-1] >= 0 else -t0
    ahead, ahead_t, ahead_end = _march(system, s, t0, control)
    if ahead_end == "closed":
        back, back_t, back_end = [s], [-t0], "closed"
    else:
        back, back_t, back_end = _march(system, s, -t0, control)
    points = np.array(back[::-1] + ahead[1:])
    tangents = np.array([-v for v in back_t[::-1]] + ahead_t[1:])
    return Trace(system.unscale(points.T).T, tangents, ahead_end == "closed", (back_end, ahead_end))
