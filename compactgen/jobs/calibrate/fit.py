"""The fitting core: joint maximum likelihood over datasets that share parameters.

Generic: it knows ParamSpecs (names, SI units, ranges), a dictionary of parameter values,
the names left free, and ``Block``s, each of which predicts one dataset from the parameter
dictionary and says how its observations scatter:

- ``gaussian``: residual (y - f)/sigma, or (ln y - ln f)/sigma_rel for relative errors
  (``log=True``).  When ``estimate_scale`` is set (the usual case for measured curves whose
  noise is not stated) sigma is multiplied by a factor estimated from the block's own
  residuals, iterating fit and estimate until the factors settle.
  With ``sigma_model`` the noise is predicted by the model (e.g. the thermal spread of a
  switching field) and refreshed at the current parameters between passes (iteratively
  reweighted least squares).
- ``binomial``: switched counts k out of N attempts with predicted probability p; the
  residual is the signed deviance residual
  sign(k - Np) sqrt(2 [k ln(k/(Np)) + (N-k) ln((N-k)/(N(1-p)))]),
  so the sum of squares is the binomial deviance and least squares is maximum likelihood
  (P. McCullagh and J. A. Nelder, Generalized Linear Models, 2nd ed., Chapman & Hall (1989),
  section 2.4, from memory).  No least squares on probabilities.

scipy.optimize.least_squares (trust-region reflective) works on internal coordinates:
log10 of parameters flagged ``log`` (quantities spanning decades), value/|start| for the
rest, with bounds taken from the ParamSpec ranges.  Standard errors come from the Fisher
information J^T J of the noise-scaled predictions at the optimum (central differences);
for a single Gaussian block with estimated scale this is the textbook s^2 (J^T J)^-1 with
s^2 = RSS/(n - p) that the NIST StRD certified values use.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping, Sequence

import numpy as np
from scipy import optimize, stats

from compactgen.errors import InputError
from compactgen.model.params import ParamSpec

P_CLIP = 1e-15  # probabilities are kept inside [P_CLIP, 1 - P_CLIP]
BIG = 1e3  # residual returned for a point the model cannot evaluate


@dataclass
class Block:
    """One dataset (or one part of it) in the likelihood."""

    name: str
    kind: str  # "gaussian" or "binomial"
    predict: Callable[[dict[str, float]], np.ndarray]
    observed: np.ndarray  # gaussian: y; binomial: switched counts
    attempts: np.ndarray | None = None  # binomial only
    sigma: np.ndarray | float = 1.0  # gaussian: noise (absolute, or relative when log=True)
    log: bool = False
    estimate_scale: bool = True
    #: gaussian: noise predicted by the model (iteratively reweighted: refreshed between passes)
    sigma_model: Callable[[dict[str, float]], np.ndarray] | None = None
    uses: tuple[str, ...] = ()  # parameter names the block depends on (for reports)
    info: dict[str, Any] = field(default_factory=dict)  # plotting and reporting hints

    def __post_init__(self):
        if self.kind not in ("gaussian", "binomial"):
            raise ValueError(f"block {self.name}: kind must be gaussian or binomial")
        self.observed = np.asarray(self.observed, float)
        if self.kind == "binomial":
            if self.attempts is None:
                raise ValueError(f"block {self.name}: binomial needs attempts")
            self.attempts = np.asarray(self.attempts, float)
        else:
            self.sigma = np.broadcast_to(np.asarray(self.sigma, float), self.observed.shape).copy()
            if self.log and np.any(self.observed <= 0):
                raise InputError(f"{self.name}: relative (log) residuals need positive data")

    def __len__(self):
        return len(self.observed)


def deviance_residuals(k, n, p):
    """Signed binomial deviance residuals (0 log 0 = 0)."""
    p = np.clip(p, P_CLIP, 1 - P_CLIP)
    mu = n * p
    with np.errstate(divide="ignore", invalid="ignore"):
        t1 = np.where(k > 0, k * np.log(k / mu), 0.0)
        t2 = np.where(n - k > 0, (n - k) * np.log((n - k) / (n - mu)), 0.0)
    d = np.maximum(2.0 * (t1 + t2), 0.0)
    return np.sign(k - mu) * np.sqrt(d)


@dataclass
class Coordinates:
    """Map between parameter values and the optimiser's internal coordinates."""

    names: list[str]
    log: list[bool]
    scale: np.ndarray
    lower: np.ndarray  # internal bounds
    upper: np.ndarray

    @classmethod
    def build(cls, specs: Mapping[str, ParamSpec], values: Mapping[str, float], free: Sequence[str],
              log_params: Sequence[str]) -> "Coordinates":
        names, logs, scales, lo, hi = [], [], [], [], []
        for n in free:
            s = specs[n]
            v = float(values[n])
            lg = n in log_params
            if lg:
                if not (s.lo > 0 or (s.lo == 0 and v > 0)):
                    raise InputError(f"parameter {n}: log scaling needs a positive range (range {s.range_text()})")
                a = math.log10(s.lo) if s.lo > 0 else math.log10(v) - 12
                b = math.log10(s.hi) if math.isfinite(s.hi) else math.inf
                scale = 1.0
            else:
                scale = abs(v) if v != 0 else (s.hi - s.lo if math.isfinite(s.hi - s.lo) else 1.0)
                a, b = s.lo / scale, s.hi / scale
            # open bounds: stay a hair inside
            a = a + 1e-9 * max(1.0, abs(a)) if s.lo_open and math.isfinite(a) else a
            b = b - 1e-9 * max(1.0, abs(b)) if s.hi_open and math.isfinite(b) else b
            names.append(n)
            logs.append(lg)
            scales.append(scale)
            lo.append(a)
            hi.append(b)
        return cls(names, logs, np.asarray(scales), np.asarray(lo, float), np.asarray(hi, float))

    def to_internal(self, values: Mapping[str, float]) -> np.ndarray:
        u = np.array([math.log10(values[n]) if lg else values[n] / s
                      for n, lg, s in zip(self.names, self.log, self.scale)])
        span = self.upper - self.lower
        eps = np.where(np.isfinite(span), 1e-10 * span, 1e-10)
        return np.clip(u, self.lower + eps, self.upper - eps)

    def to_values(self, u: np.ndarray, base: Mapping[str, float]) -> dict[str, float]:
        out = dict(base)
        for n, lg, s, x in zip(self.names, self.log, self.scale, u):
            out[n] = float(10.0**x if lg else x * s)
        return out

    def derivative(self, u: np.ndarray) -> np.ndarray:
        """d value / d internal coordinate, per free parameter."""
        return np.array([math.log(10) * 10.0**x if lg else s for lg, s, x in zip(self.log, self.scale, u)])


@dataclass
class BlockStats:
    name: str
    kind: str
    n: int
    statistic: float  # chi-square (gaussian, with the final scale) or deviance (binomial)
    dof: float
    p_value: float
    scale: float  # gaussian: estimated noise factor (1 = as assumed); binomial: 1
    rms: float  # gaussian: rms residual in data units (or relative); binomial: rms deviance residual


@dataclass
class FitOutcome:
    """What the core returns; ``calibrate.result`` adds the card mapping and the report."""

    coords: Coordinates
    u: np.ndarray
    values: dict[str, float]
    initial: dict[str, float]
    free: list[str]
    stderr: dict[str, float]
    cov_u: np.ndarray  # covariance in internal coordinates
    cov: np.ndarray  # covariance of the free values (SI)
    corr: np.ndarray
    blocks: list[Block]
    scales: list[float]
    stats: list[BlockStats]
    warnings: list[str]
    nfev: int
    success: bool
    message: str
    passes: int
    seconds: float
    cost: float
    singular: list[str] = field(default_factory=list)

    def propagate(self, func: Callable[[dict[str, float]], np.ndarray], rel_step: float = 1e-6):
        """func(values) and its standard error from the covariance (delta method)."""
        f0 = np.asarray(func(self.values), float)
        if not self.free:
            return f0, np.zeros_like(f0)
        jac = _jacobian(lambda u: np.asarray(func(self.coords.to_values(u, self.values)), float), self.u,
                        self.coords, f0, rel_step)
        var = np.einsum("...i,ij,...j->...", jac, self.cov_u, jac)
        return f0, np.sqrt(np.maximum(var, 0.0))


def _jacobian(f, u, coords: Coordinates, f0=None, rel_step=1e-6):
    """Central differences (one-sided next to a bound) of f in internal coordinates; returns (..., p)."""
    cols = []
    for i in range(len(u)):
        h = rel_step * max(1.0, abs(u[i])) if not coords.log[i] else 1e-5
        up, dn = u.copy(), u.copy()
        if u[i] + h <= coords.upper[i] and u[i] - h >= coords.lower[i]:
            up[i] += h
            dn[i] -= h
            cols.append((f(up) - f(dn)) / (2 * h))
        elif u[i] + h <= coords.upper[i]:
            up[i] += h
            cols.append((f(up) - (f(u) if f0 is None else f0)) / h)
        else:
            dn[i] -= h
            cols.append(((f(u) if f0 is None else f0) - f(dn)) / h)
    return np.stack(cols, axis=-1)


class _Objective:
    def __init__(self, blocks: list[Block], coords: Coordinates, base: dict[str, float], progress):
        self.blocks = blocks
        self.coords = coords
        self.base = base
        self.scales = [1.0] * len(blocks)
        self.nfev = 0
        self.progress = progress
        self.best = math.inf
        self.pass_no = 1

    def predictions(self, values):
        out = []
        for b in self.blocks:
            try:
                with np.errstate(all="ignore"):
                    f = np.asarray(b.predict(values), float)
            except (ValueError, ZeroDivisionError, FloatingPointError, ArithmeticError):
                f = np.full(len(b), np.nan)
            out.append(f)
        return out

    def residuals_from(self, preds):
        res = []
        for b, f, s in zip(self.blocks, preds, self.scales):
            if b.kind == "binomial":
                r = deviance_residuals(b.observed, b.attempts, f)
            elif b.log:
                with np.errstate(all="ignore"):
                    r = (np.log(b.observed) - np.log(f)) / (b.sigma * s)
            else:
                r = (b.observed - f) / (b.sigma * s)
            res.append(np.clip(np.where(np.isfinite(r), r, BIG), -1e100, 1e100))  # no overflow in r @ r
        return res

    def __call__(self, u):
        self.nfev += 1
        values = self.coords.to_values(u, self.base)
        r = np.concatenate(self.residuals_from(self.predictions(values)))
        cost = 0.5 * float(r @ r)
        self.best = min(self.best, cost)
        if self.progress:
            self.progress({"nfev": self.nfev, "cost": cost, "best": self.best, "pass": self.pass_no})
        return r


def fit(specs: Mapping[str, ParamSpec], values: Mapping[str, float], free: Sequence[str], blocks: Sequence[Block],
        log_params: Sequence[str] = (), progress: Callable[[dict], None] | None = None, max_nfev: int = 2000,
        max_passes: int = 8, corr_warn: float = 0.95) -> FitOutcome:
    """Joint fit of ``blocks``; ``free`` parameters vary within their ParamSpec ranges."""
    t0 = time.perf_counter()
    free = list(free)
    blocks = list(blocks)
    for n in free:
        if n not in specs:
            raise InputError(f"free parameter {n!r} has no ParamSpec")
        specs[n].check(float(values[n]), where=f"start value of {n}")
    if not blocks:
        raise InputError("nothing to fit: no datasets")
    base = {k: float(v) for k, v in values.items()}
    coords = Coordinates.build(specs, base, free, log_params)
    obj = _Objective(blocks, coords, base, progress)
    u = coords.to_internal(base)
    n_tot = sum(len(b) for b in blocks)
    p = len(free)
    if n_tot <= p:
        raise InputError(f"{n_tot} data points cannot determine {p} free parameters")
    estimate = [b.kind == "gaussian" and b.estimate_scale for b in blocks]
    reweight = [b.kind == "gaussian" and b.sigma_model is not None for b in blocks]
    success, message, passes = True, "no free parameters", 0
    for passes in range(1, max_passes + 1):
        obj.pass_no = passes
        moved = 0.0
        for b, rw in zip(blocks, reweight):
            if rw:
                new_sigma = np.broadcast_to(np.asarray(b.sigma_model(coords.to_values(u, base)), float), b.sigma.shape)
                moved = max(moved, float(np.max(np.abs(new_sigma / b.sigma - 1.0))))
                b.sigma = new_sigma.copy()
        if passes > 1 and moved < 1e-4 and not any(estimate):
            break
        if p:
            sol = optimize.least_squares(obj, u, bounds=(coords.lower, coords.upper), method="trf", x_scale="jac",
                                         max_nfev=max_nfev, xtol=1e-12, ftol=1e-12, gtol=1e-12)
            u, success, message = sol.x, bool(sol.success), str(sol.message)
        if not any(estimate):
            if not any(reweight):
                break
            continue
        vals = coords.to_values(u, base)
        raw = _Objective(blocks, coords, base, None)
        res = raw.residuals_from(raw.predictions(vals))
        changed = 0.0
        for i, (b, r) in enumerate(zip(blocks, res)):
            if estimate[i]:
                new = math.sqrt(float(r @ r) / (len(b) * (n_tot - p) / n_tot)) or 1.0
                changed = max(changed, abs(new / obj.scales[i] - 1.0))
                obj.scales[i] = new
        if (changed < 1e-4 and (not any(reweight) or passes > 1 and moved < 1e-4)) or not p:
            break
    values_fit = coords.to_values(u, base)
    preds = obj.predictions(values_fit)
    res = obj.residuals_from(preds)
    # Fisher information from noise-scaled prediction derivatives
    warnings: list[str] = []
    singular: list[str] = []
    if p:
        def scaled(uu):
            vals = coords.to_values(uu, base)
            out = []
            for b, f, s in zip(blocks, obj.predictions(vals), obj.scales):
                if b.kind == "binomial":
                    out.append(f)
                elif b.log:
                    out.append(np.log(f) / (b.sigma * s))
                else:
                    out.append(f / (b.sigma * s))
            return np.concatenate(out)

        obj.nfev += 2 * p
        jac = _jacobian(scaled, u, coords)
        # binomial rows: dp * sqrt(N / (p (1 - p)))
        k0 = 0
        for b, f in zip(blocks, preds):
            n = len(b)
            if b.kind == "binomial":
                pp = np.clip(f, 1e-12, 1 - 1e-12)
                jac[k0:k0 + n] *= np.sqrt(b.attempts / (pp * (1 - pp)))[:, None]
            k0 += n
        jac = np.where(np.isfinite(jac), jac, 0.0)
        uu, sv, vt = np.linalg.svd(jac, full_matrices=False)
        tol = sv.max() * 1e-8 if sv.size else 0  # condition number above 1e8: a direction the data do not fix
        inv = np.where(sv > tol, 1.0 / np.where(sv > tol, sv, 1.0) ** 2, 0.0)
        cov_u = (vt.T * inv) @ vt
        for k in np.nonzero(sv <= tol)[0]:
            weights = np.abs(vt[k])
            names = [free[i] for i in np.argsort(weights)[::-1][:3] if weights[i] > 0.1]
            singular.append(" + ".join(names))
            warnings.append(f"not identifiable from these data: the combination of {', '.join(names)} is not "
                            "constrained (fix one of them or add data)")
            worst = int(np.argmax(weights))
            cov_u[:, worst] = np.nan
            cov_u[worst, :] = np.nan
        d = coords.derivative(u)
        cov = cov_u * np.outer(d, d)
        with np.errstate(invalid="ignore"):
            sd = np.sqrt(np.diag(cov))
            corr = cov / np.outer(sd, sd)
    else:
        cov_u = cov = corr = np.zeros((0, 0))
        sd = np.zeros(0)
    stderr = {n: float(s) for n, s in zip(free, sd)}
    # warnings: bounds, correlations, poorly determined
    for i, n in enumerate(free):
        span = coords.upper[i] - coords.lower[i]
        near = 1e-6 * (span if math.isfinite(span) else max(1.0, abs(u[i])))
        if u[i] - coords.lower[i] <= near or coords.upper[i] - u[i] <= near:
            side = "lower" if u[i] - coords.lower[i] <= near else "upper"
            warnings.append(f"{n} ended at its {side} bound ({specs[n].range_text(specs[n].card_unit)}): the data "
                            "push it outside the allowed range; its standard error is not meaningful")
        rel = stderr[n] / abs(values_fit[n]) if values_fit[n] else math.inf
        if math.isfinite(rel) and rel > 0.5:
            warnings.append(f"{n} is poorly determined: standard error {100 * rel:.0f} % of its value")
    for i in range(p):
        for j in range(i + 1, p):
            if np.isfinite(corr[i, j]) and abs(corr[i, j]) > corr_warn:
                warnings.append(f"{free[i]} and {free[j]} are strongly correlated (r = {corr[i, j]:+.3f}): the "
                                "data constrain mainly a combination of them")
    if not success:
        warnings.append(f"the optimiser did not converge: {message}")
    stats_ = []
    for b, r, s, f in zip(blocks, res, obj.scales, preds):
        share = len(b) * p / n_tot
        dof = max(len(b) - share, 1e-9)
        stat = float(r @ r)
        if b.kind == "binomial":
            rms = math.sqrt(stat / len(b))
        elif b.log:
            rms = float(np.sqrt(np.mean((np.log(b.observed) - np.log(f)) ** 2)))
        else:
            rms = float(np.sqrt(np.mean((b.observed - f) ** 2)))
        pv = float(stats.chi2.sf(stat, dof))
        stats_.append(BlockStats(b.name, b.kind, len(b), stat, dof, pv, s, rms))
        if b.kind == "binomial" and pv < 1e-3:
            warnings.append(f"{b.name}: deviance {stat:.1f} for {dof:.1f} degrees of freedom (p = {pv:.1e}): the "
                            "model does not describe these counts within binomial scatter")
    cost = 0.5 * float(sum(float(r @ r) for r in res))
    return FitOutcome(coords, u, values_fit, dict(base), free, stderr, cov_u, cov, corr, blocks, list(obj.scales),
                      stats_, warnings, obj.nfev, success, message, passes, time.perf_counter() - t0, cost, singular)
