"""Population statistics of a wafer's device fits, in the terms of the tool's one sigma definition.

model/variation.py varies a parameter as p_eff = p exp(sigma_global z_g + sigma_mismatch
sqrt(area_ref/area) z_m), so everything here works on y = ln p of each device:

    y_i = mu_size(i) + g_die(i) + e_i,   g ~ N(0, sigma_global^2),
    e_i ~ N(0, sigma_mismatch^2 area_ref/area_i + f_i)

(variance = global + mismatch x area_ref/area: the area law of M. J. M. Pelgrom,
A. C. J. Duinmaijer and A. P. G. Welbers, IEEE J. Solid-State Circuits 24, 1433 (1989)).
f_i = (standard error / value)^2 of device i's own fit: measurement noise is known per device and
not counted as mismatch.  The two sigmas come from restricted maximum likelihood (REML; H. D.
Patterson and R. Thompson, Biometrika 58, 545 (1971)) with one mean per size as fixed effects;
devices of several sizes on the same die separate the die's shared (global) part from the
per-device part.  The global sigma includes any systematic die-to-die pattern (the radial trend is
reported, not removed: a designer does not know where on the wafer a die came from).

- Outliers: a device more than OUTLIER_Z robust standard deviations from the median of its size
  in any analysed parameter (robust sd = 1.4826 x median absolute deviation; the modified z-score
  of B. Iglewicz and D. C. Hoaglin, How to Detect and Handle Outliers, ASQC Quality Press (1993),
  with a cut of 5 instead of their 3.5, so that a few hundred good devices lose none by chance).
- Global correlation between parameters: the cross-covariance of the dies' mean residuals divided
  by the two global sigmas (the mismatch draws of the model are independent between parameters,
  and so are their contributions to the die means).
- Electrical diameter offset: 1/sqrt(R_P) = sqrt(pi/(4 RA)) (d_drawn - offset) is a straight line
  in the drawn diameter across sizes; offset = -intercept/slope (common practice, no source).
- Confidence intervals: percentile bootstrap over dies (dies resampled with replacement, the whole
  analysis repeated; seeded), because devices of one die share its global draw.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import optimize

OUTLIER_Z = 5.0
CI_LEVEL = 0.95


@dataclass
class ParamStats:
    name: str
    mean: float  # geometric mean over the sizes' means (SI): the card value
    sigma_global: float
    sigma_mismatch: float  # at area_ref
    ci_global: tuple[float, float] = (math.nan, math.nan)
    ci_mismatch: tuple[float, float] = (math.nan, math.nan)
    ci_mean: tuple[float, float] = (math.nan, math.nan)
    size_means: dict[float, float] = field(default_factory=dict)  # drawn diameter -> geometric mean
    size_sigma: dict[float, float] = field(default_factory=dict)  # drawn diameter -> total sd of ln p
    fit_share: float = 0.0  # mean fit variance / total variance
    trend: float = 0.0  # change of ln p from the centre to the outermost die (radial, r^2 law)
    trend_se: float = math.nan
    n_devices: int = 0


@dataclass
class Population:
    params: dict[str, ParamStats]
    names: list[str]  # the analysed parameters (correlation order)
    correlation: np.ndarray
    correlation_ci: np.ndarray  # (2, k, k)
    area_ref: float
    offset: float  # drawn minus electrical diameter [m]
    offset_ci: tuple[float, float]
    used: list[str]  # device ids in the statistics
    outliers: dict[str, str]  # device id -> reason
    n_dies: int
    sizes: list[float]  # drawn diameters [m]
    bootstrap: int
    seed: int


# ------------------------------------------------------------------------------------------
def robust_outliers(y: np.ndarray, groups: np.ndarray, cut: float = OUTLIER_Z) -> tuple[np.ndarray, np.ndarray]:
    """Modified z-score of each value within its group, and the flag |z| > cut."""
    z = np.zeros_like(y)
    for g in np.unique(groups):
        m = groups == g
        med = np.median(y[m])
        mad = np.median(np.abs(y[m] - med))
        scale = 1.4826 * mad if mad > 0 else np.inf
        z[m] = (y[m] - med) / scale
    return z, np.abs(z) > cut


def diameter_offset(drawn: np.ndarray, r_p: np.ndarray) -> float:
    """Drawn minus electrical diameter from R_P across sizes: 1/sqrt(R_P) is linear in the
    electrical diameter (area = pi d^2/4); the line through the sizes' medians, weighted by their
    device counts, crosses zero at the offset.  NaN with fewer than two sizes."""
    sizes = np.unique(drawn)
    if len(sizes) < 2:
        return math.nan
    s = np.array([np.median(r_p[drawn == d] ** -0.5) for d in sizes])
    w = np.array([np.sum(drawn == d) for d in sizes], float)
    a, b = np.polyfit(sizes, s, 1, w=np.sqrt(w))
    return float(-b / a)


def _reml(y, size_idx, die_idx, x, f, n_sizes, n_dies, start=None):
    """REML variance components (sigma_global, sigma_mismatch) and the per-size means."""
    X = np.eye(n_sizes)[size_idx]
    k = n_sizes

    def parts(theta):
        sg2, sm2 = math.exp(2 * theta[0]), math.exp(2 * theta[1])
        D = sm2 * x + f
        w = 1.0 / D
        W = np.bincount(die_idx, w, n_dies)
        c = sg2 / (1.0 + sg2 * W)
        S = np.stack([np.bincount(die_idx, w * X[:, j], n_dies) for j in range(k)], axis=1)
        A = (X * w[:, None]).T @ X - S.T @ (c[:, None] * S)
        sy = np.bincount(die_idx, w * y, n_dies)
        b = X.T @ (w * y) - S.T @ (c * sy)
        beta = np.linalg.solve(A, b)
        r = y - X @ beta
        sr = np.bincount(die_idx, w * r, n_dies)
        quad = float(np.sum(w * r * r) - np.sum(c * sr * sr))
        logdet = float(np.sum(np.log(D)) + np.sum(np.log1p(sg2 * W[W > 0])))
        sign, ld_a = np.linalg.slogdet(A)
        return logdet + quad + ld_a, beta

    if start is None:
        tot = max(float(np.var(y - (X @ np.array([y[size_idx == j].mean() for j in range(k)])))), 1e-12)
        start = (0.5 * math.log(tot / 2), 0.5 * math.log(tot / 2 / max(np.mean(x), 1e-9)))
    res = optimize.minimize(lambda t: parts(t)[0], np.asarray(start, float), method="Nelder-Mead",
                            options=dict(xatol=1e-4, fatol=1e-6, maxiter=800))
    theta = res.x
    # a component at the boundary: the optimiser walks towards -inf; below 1e-6 it is zero
    sg, sm = math.exp(theta[0]), math.exp(theta[1])
    _, beta = parts(theta)
    return (sg if sg > 1e-6 else 0.0), (sm if sm > 1e-6 else 0.0), beta, theta


def _die_means(r, die_idx, n_dies, w):
    W = np.bincount(die_idx, w, n_dies)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.bincount(die_idx, w * r, n_dies) / W, W > 0


def _analyse(Y, F, size_idx, die_idx, x, n_sizes, n_dies, starts=None):
    """Every parameter's REML fit and the global correlation, for one (re)sample."""
    k = Y.shape[1]
    sg, sm, betas, thetas, means = np.zeros(k), np.zeros(k), [], [], []
    for j in range(k):
        s = None if starts is None else starts[j]
        sg[j], sm[j], beta, th = _reml(Y[:, j], size_idx, die_idx, x, F[:, j], n_sizes, n_dies, s)
        betas.append(beta)
        thetas.append(th)
        r = Y[:, j] - beta[size_idx]
        w = 1.0 / (sm[j] ** 2 * x + F[:, j] + 1e-30)
        means.append(_die_means(r, die_idx, n_dies, w))
    corr = np.eye(k)
    for a in range(k):
        for b in range(a + 1, k):
            ma, oka = means[a]
            mb, okb = means[b]
            ok = oka & okb
            cov = float(np.mean(ma[ok] * mb[ok])) if ok.any() else 0.0
            den = sg[a] * sg[b]
            corr[a, b] = corr[b, a] = float(np.clip(cov / den, -1.0, 1.0)) if den > 0 else 0.0
    return sg, sm, np.array(betas), corr, thetas


def nearest_correlation(c: np.ndarray, floor: float = 1e-6) -> np.ndarray:
    """The correlation matrix with negative eigenvalues raised to ``floor`` and the diagonal
    rescaled to 1 (so that its Cholesky factor exists)."""
    vals, vecs = np.linalg.eigh(0.5 * (c + c.T))
    m = vecs @ np.diag(np.maximum(vals, floor)) @ vecs.T
    d = np.sqrt(np.diag(m))
    return m / np.outer(d, d)


def analyse(devices: list[dict], names: list[str], area_ref: float, bootstrap: int = 300, seed: int = 1,
            offset: float | None = None, progress=None) -> Population:
    """Population statistics of fitted devices.  Each device dict: id, die (int), drawn [m],
    area (electrical, m^2), values {name: SI}, stderr {name: SI}, rho2 (r^2/R^2 of its die,
    optional), r_p (for the offset, optional)."""
    if not devices:
        raise ValueError("no fitted devices to analyse")
    y_all = np.log(np.array([[d["values"][n] for n in names] for d in devices], float))
    drawn_all = np.array([d["drawn"] for d in devices])
    sizes = sorted(set(drawn_all.tolist()))
    size_all = np.array([sizes.index(v) for v in drawn_all])
    flagged = np.zeros(len(devices), bool)
    outliers: dict[str, str] = {}
    for j, n in enumerate(names):
        z, bad = robust_outliers(y_all[:, j], size_all)
        for i in np.nonzero(bad)[0]:
            flagged[i] = True
            outliers.setdefault(devices[i]["id"], "")
            outliers[devices[i]["id"]] += (f"{'; ' if outliers[devices[i]['id']] else ''}{n} = "
                                           f"{math.exp(y_all[i, j]):.4g} is {z[i]:+.1f} robust sd from the median of "
                                           f"its size (cut {OUTLIER_Z:g})")
    keep = ~flagged
    dev = [d for d, k in zip(devices, keep) if k]
    Y = y_all[keep]
    F = np.array([[(d["stderr"].get(n, 0.0) / d["values"][n]) ** 2 if math.isfinite(d["stderr"].get(n, 0.0))
                   else 0.0 for n in names] for d in dev], float)
    size_idx = size_all[keep]
    dies = sorted({d["die"] for d in dev})
    die_idx = np.array([dies.index(d["die"]) for d in dev])
    n_dies = len(dies)
    x = area_ref / np.array([d["area"] for d in dev])
    sg, sm, betas, corr, thetas = _analyse(Y, F, size_idx, die_idx, x, len(sizes), n_dies)
    counts = np.bincount(size_idx, minlength=len(sizes)).astype(float)
    mean_log = betas @ counts / counts.sum()

    r_p = np.array([d.get("r_p", math.nan) for d in dev])
    drawn = np.array([d["drawn"] for d in dev])
    off = offset if offset is not None else diameter_offset(drawn, r_p)

    # bootstrap over dies
    rng = np.random.default_rng(seed)
    by_die = [np.nonzero(die_idx == k)[0] for k in range(n_dies)]
    boot_sg, boot_sm, boot_mean, boot_corr, boot_off = [], [], [], [], []
    for b in range(bootstrap):
        pick = rng.integers(0, n_dies, n_dies)
        idx = np.concatenate([by_die[k] for k in pick])
        new_die = np.concatenate([np.full(len(by_die[k]), j) for j, k in enumerate(pick)])
        si = size_idx[idx]
        if len(np.unique(si)) < len(sizes):
            continue
        s_g, s_m, bet, c, _ = _analyse(Y[idx], F[idx], si, new_die, x[idx], len(sizes), n_dies, thetas)
        cnt = np.bincount(si, minlength=len(sizes)).astype(float)
        boot_sg.append(s_g)
        boot_sm.append(s_m)
        boot_mean.append(bet @ cnt / cnt.sum())
        boot_corr.append(c)
        if np.all(np.isfinite(r_p)):
            boot_off.append(diameter_offset(drawn[idx], r_p[idx]))
        if progress and (b + 1) % max(1, bootstrap // 10) == 0:
            progress(f"bootstrap over dies: {b + 1}/{bootstrap}")
    lo_q, hi_q = 100 * (1 - CI_LEVEL) / 2, 100 * (1 + CI_LEVEL) / 2

    def ci(samples, j=None):
        a = np.asarray(samples)
        if a.size == 0:
            return (math.nan, math.nan)
        a = a if j is None else a[:, j]
        return (float(np.percentile(a, lo_q)), float(np.percentile(a, hi_q)))

    # radial trend of the die means (reported)
    rho2 = np.array([d.get("rho2", math.nan) for d in dev])
    out = {}
    for j, n in enumerate(names):
        r = Y[:, j] - betas[j][size_idx]
        tot = np.var(r, ddof=len(sizes))
        trend, trend_se = math.nan, math.nan
        if np.all(np.isfinite(rho2)):
            dm = np.array([r[die_idx == k].mean() for k in range(n_dies)])
            dr = np.array([rho2[die_idx == k][0] for k in range(n_dies)])
            if np.ptp(dr) > 0 and n_dies > 2:
                coef, cov = np.polyfit(dr, dm, 1, cov=True)
                trend, trend_se = float(coef[0] * dr.max()), float(math.sqrt(cov[0, 0]) * dr.max())
        out[n] = ParamStats(
            n, float(math.exp(mean_log[j])), float(sg[j]), float(sm[j]), ci(boot_sg, j), ci(boot_sm, j),
            tuple(math.exp(v) for v in ci(boot_mean, j)),
            {sizes[s]: float(math.exp(betas[j][s])) for s in range(len(sizes))},
            {sizes[s]: float(np.std(Y[size_idx == s, j], ddof=1)) if np.sum(size_idx == s) > 1 else math.nan
             for s in range(len(sizes))},
            float(np.mean(F[:, j]) / tot) if tot > 0 else 0.0, trend, trend_se, len(dev))
    bc = np.asarray(boot_corr) if boot_corr else np.full((1, len(names), len(names)), math.nan)
    corr_ci = np.stack([np.percentile(bc, lo_q, axis=0), np.percentile(bc, hi_q, axis=0)])
    return Population(out, list(names), corr, corr_ci, area_ref, float(off), ci(boot_off), [d["id"] for d in dev],
                      outliers, n_dies, sizes, len(boot_sg), seed)


def size_spread(values: np.ndarray, die: np.ndarray, bootstrap: int = 300, seed: int = 1) -> tuple[float, tuple]:
    """Standard deviation of ln(values) and its percentile-bootstrap interval over dies."""
    y = np.log(values)
    sd = float(np.std(y, ddof=1))
    rng = np.random.default_rng(seed)
    dies = np.unique(die)
    groups = [np.nonzero(die == d)[0] for d in dies]
    boots = []
    for _ in range(bootstrap):
        idx = np.concatenate([groups[k] for k in rng.integers(0, len(dies), len(dies))])
        if len(idx) > 1:
            boots.append(np.std(y[idx], ddof=1))
    lo, hi = np.percentile(boots, [100 * (1 - CI_LEVEL) / 2, 100 * (1 + CI_LEVEL) / 2])
    return sd, (float(lo), float(hi))
