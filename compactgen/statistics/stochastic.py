"""Stochastic macrospin ensembles: Brown's thermal field, Stratonovich Heun, numpy-vectorised.

The right-hand side is the ModelIR's own LLG (the same sympy expressions the printers print),
lambdified once with the effective-field locals opened up so that a thermal field can be added
to H_eff; its strength D = 2 alpha k_B T / (gamma0 mu0 Ms V) is the IR's derived quantity
``hth_strength`` (physics/thermal.thermal_field_strength) at the device temperature.  Each step
draws one Gaussian field per spin and component with variance D/dt, uses the *same* sample in
the predictor and the corrector (Stratonovich) and renormalises |m| = 1 (PHYSICS 8).

Thermal initial states are drawn from the Boltzmann cone-angle density of the IR's barrier
(physics/thermal.boltzmann_cone_weight) by inverting its cumulative distribution on a grid.

Everything is reproducible from a seed (numpy ``default_rng``).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
import sympy as sp

from compactgen.devices.common import FIELD_LOCALS, NOISE_STRENGTH
from compactgen.model.ir import ModelIR
from compactgen.model.lowering import Hoister
from compactgen.physics import thermal
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import DEFAULT_TEMPERATURE

Rhs = Callable[[np.ndarray, np.ndarray, float], np.ndarray]


@dataclass
class EnsembleResult:
    """What an ensemble run keeps: crossing times, final states, a subsampled m_z history and
    time averages of m_z and m_z^2 after ``t_average``."""

    n: int
    dt: float
    steps: int
    t_cross: np.ndarray  # first time m_z crossed 0 away from its initial sign [s]; NaN: never
    m_final: np.ndarray  # (3, n)
    t_hist: np.ndarray
    mz_hist: np.ndarray  # (len(t_hist), n_hist)
    mean_mz: float = float("nan")
    mean_mz2: float = float("nan")
    info: dict = field(default_factory=dict)

    def switched_by(self, t: float | np.ndarray) -> np.ndarray:
        """Fraction of trajectories whose m_z crossed the equator by time ``t`` (after t = 0)."""
        tc = np.where(np.isnan(self.t_cross), np.inf, self.t_cross)
        t = np.atleast_1d(np.asarray(t, float))
        return (tc[None, :] <= t[:, None]).mean(axis=1)


def heun_ensemble(rhs: Rhs, m0: np.ndarray, dt: float, steps: int, sigma: float, rng: np.random.Generator,
                  *, t_average: float | None = None, hist_every: int = 0, hist_count: int = 0,
                  progress: Callable[[str], None] | None = None) -> EnsembleResult:
    """Integrate dm/dt = rhs(m, h_th, t) for an ensemble m (3, n) with Brown's field.

    ``sigma`` is the standard deviation of each thermal-field component per step [A/m]
    (sqrt(D/dt)); 0 gives the deterministic Heun method.  The same field sample enters the
    predictor and the corrector (Stratonovich); |m| is renormalised after every step.
    """
    m = np.array(m0, dtype=float, copy=True)
    n = m.shape[1]
    sgn0 = np.sign(m[2])
    sgn0[sgn0 == 0] = 1.0
    t_cross = np.full(n, np.nan)
    hist_t, hist_mz = [], []
    acc1 = acc2 = 0.0
    n_acc = 0
    h = np.zeros_like(m)
    report = max(1, steps // 10)
    for k in range(steps):
        t = k * dt
        if sigma > 0:
            h = rng.standard_normal(m.shape) * sigma
        k1 = rhs(m, h, t)
        mp = m + dt * k1
        k2 = rhs(mp, h, t + dt)
        mn = m + 0.5 * dt * (k1 + k2)
        mn /= np.sqrt(np.einsum("ij,ij->j", mn, mn))
        crossed = np.isnan(t_cross) & (sgn0 * mn[2] <= 0.0)
        if crossed.any():
            a, b = m[2, crossed], mn[2, crossed]
            frac = np.where(a != b, a / (a - b), 1.0)
            t_cross[crossed] = t + dt * np.clip(frac, 0.0, 1.0)
        m = mn
        if t_average is not None and t + dt >= t_average:
            acc1 += float(m[2].mean())
            acc2 += float((m[2] ** 2).mean())
            n_acc += 1
        if hist_every and k % hist_every == 0:
            hist_t.append(t + dt)
            hist_mz.append(m[2, :hist_count].copy())
        if progress and (k + 1) % report == 0:
            progress(f"ensemble: {k + 1}/{steps} steps ({n} spins)")
    return EnsembleResult(
        n=n, dt=dt, steps=steps, t_cross=t_cross, m_final=m,
        t_hist=np.array(hist_t), mz_hist=np.array(hist_mz) if hist_mz else np.zeros((0, 0)),
        mean_mz=acc1 / n_acc if n_acc else float("nan"), mean_mz2=acc2 / n_acc if n_acc else float("nan"))


class StochasticModel:
    """A ModelIR's macrospin with Brown's thermal field, for ensembles of N spins.

    ``drive`` is "voltage" (terminal waveforms, as the reference solver) or "current": then the
    device's single branch current is imposed (a current source), which is what the analytic
    switching forms assume.
    """

    def __init__(self, ir: ModelIR, overrides: dict[str, float] | None = None,
                 temperature: float = DEFAULT_TEMPERATURE, drive: str = "voltage"):
        if drive not in ("voltage", "current"):
            raise ValueError(f"drive must be 'voltage' or 'current', not {drive!r}")
        self.ir = ir
        self.drive_kind = drive
        overrides = dict(overrides or {})
        if "thermal_rest" in ir.params:  # the thermal field itself replaces the deterministic rest hold
            overrides.setdefault("thermal_rest", 0.0)
        self.ref = ReferenceModel(ir, overrides, temperature)
        num = self.ref.num
        names = {str(s) for s, _ in ir.locals}
        if not set(FIELD_LOCALS) <= names or NOISE_STRENGTH not in {str(s) for s, _ in ir.derived}:
            raise ValueError(f"{ir.kind}: no macrospin effective field ({', '.join(FIELD_LOCALS)}) and thermal "
                             f"strength ({NOISE_STRENGTH}) in the model; it has no stochastic mode")
        self.h_th = [sp.Symbol(f"hth_{c}", real=True) for c in "xyz"]
        self.i_drive = sp.Symbol("i_drive", real=True)
        current_local = None
        if drive == "current":
            if len(ir.branches) != 1 or not isinstance(ir.branches[0].current, sp.Symbol):
                raise ValueError(f"{ir.kind}: current drive needs one branch whose current is a named local")
            current_local = ir.branches[0].current
        local_map: dict[sp.Symbol, sp.Expr] = {}
        for sym, expr in ir.locals:
            if sym == current_local:
                local_map[sym] = self.i_drive
                continue
            e = expr.xreplace(local_map).xreplace(num)
            if str(sym) in FIELD_LOCALS:
                e = e + self.h_th[FIELD_LOCALS.index(str(sym))]
            local_map[sym] = e
        inputs = [self.i_drive] if drive == "current" else list(ir.voltages)
        args = inputs + ir.state_symbols() + self.h_th
        rhs = [s.rhs.xreplace(local_map).xreplace(num) for s in ir.states]
        self._f = sp.lambdify(args, rhs, modules="numpy", cse=True)
        # the compiled kernel takes the parameter-level numbers as an array, so one compilation
        # serves every temperature and parameter set of this model structure
        sym_map: dict[sp.Symbol, sp.Expr] = {}
        for sym, expr in ir.locals:
            if sym == current_local:
                sym_map[sym] = self.i_drive
                continue
            e = expr.xreplace(sym_map)
            if str(sym) in FIELD_LOCALS:
                e = e + self.h_th[FIELD_LOCALS.index(str(sym))]
            sym_map[sym] = e
        rhs_sym = [s.rhs.xreplace(sym_map) for s in ir.states]
        psyms = sorted(set().union(*[e.free_symbols for e in rhs_sym]) - set(args), key=str)
        # parameter-only sub-expressions (e.g. the torque coefficient hbar eta/(2 e mu0 Ms t A)) are
        # computed once here instead of twice per step and spin in the kernel
        hoist = Hoister(set(psyms), prefix="kh")
        rhs_hoisted = [hoist(e) for e in rhs_sym]
        values = {p: num[p] for p in psyms}
        for sym, expr in hoist.definitions:
            values[sym] = float(sp.sympify(expr).xreplace(values))
        ksyms = list(psyms) + [sym for sym, _ in hoist.definitions]
        self._kernel_key = (ir.digest(), drive, tuple(map(str, psyms)), tuple(sp.srepr(e) for e in rhs_hoisted))
        self._kernel_src = (args, ksyms, rhs_hoisted)
        self._pvec = np.array([values[p] for p in ksyms], dtype=float)
        self._legacy_src = (args, psyms, rhs_sym)
        self._legacy_pvec = np.array([num[p] for p in psyms], dtype=float)
        self.n_inputs = len(inputs)
        self.strength = float(num[sp.Symbol(NOISE_STRENGTH, real=True, positive=True)])
        self.delta = float(num[sp.Symbol("delta_t", real=True)])
        self.temperature = float(temperature)
        if len(ir.states) != 3:
            raise ValueError(f"{ir.kind}: the stochastic mode expects the three macrospin states")

    def sigma(self, dt: float) -> float:
        """Standard deviation of each thermal-field component over a step dt [A/m]."""
        return math.sqrt(self.strength / dt)

    def rhs_function(self, drive: Callable[[float], object]) -> Rhs:
        """dm/dt(m, h_th, t) with the drive evaluated at t: for "current" a function of t giving
        the current [A]; for "voltage" a dict terminal -> waveform (objects with value(t))."""
        if self.drive_kind == "current":
            def f(m, h, t):
                out = self._f(drive(t), m[0], m[1], m[2], h[0], h[1], h[2])
                return np.array([np.broadcast_to(o, m[0].shape) for o in out])
        else:
            terms = self.ref.terminals

            def f(m, h, t):
                node_v = {n: (drive[n].value(t) if n in drive else 0.0) for n in terms}
                out = self._f(*self.ref.probe_values(node_v), m[0], m[1], m[2], h[0], h[1], h[2])
                return np.array([np.broadcast_to(o, m[0].shape) for o in out])
        return f

    def run(self, n: int, t_end: float, dt: float, drive, seed: int, state0: float = -1.0,
            thermal_field: bool = True, initial="boltzmann", m0: np.ndarray | None = None,
            engine: str = "auto", **kw) -> EnsembleResult:
        """An ensemble of ``n`` spins from thermal initial states around ``state0`` (+1 P, -1 AP)
        (or from ``m0``, shape (3, n)).  ``engine``: "compiled" (numba), "numpy", or "auto"
        (compiled when numba is installed); "compiled-legacy" is the kernel before the speed-up
        (numba's Mersenne-Twister normals, nothing hoisted), kept for benchmarks/bench_ensemble.py."""
        rng = np.random.default_rng(seed)
        if m0 is None:
            if isinstance(initial, str) and initial == "boltzmann":
                tilt, phi = sample_initial_angles(self.delta, n, rng)
            else:
                tilt = np.full(n, float(initial))
                phi = np.zeros(n)
            m0 = initial_vectors(tilt, phi, state0)
        steps = int(round(t_end / dt))
        sigma = self.sigma(dt) if thermal_field else 0.0
        if engine == "auto":
            engine = "compiled" if _numba() is not None else "numpy"
        if engine in ("compiled", "compiled-legacy"):
            res = self._run_compiled(m0, steps, dt, sigma, drive, rng, legacy=engine == "compiled-legacy", **kw)
        elif engine == "numpy":
            res = heun_ensemble(self.rhs_function(drive), m0, dt, steps, sigma, rng, **kw)
        else:
            raise ValueError(f"engine must be 'auto', 'compiled', 'compiled-legacy' or 'numpy', not {engine!r}")
        res.info.update(temperature=self.temperature, delta=self.delta, seed=seed, thermal_field=thermal_field,
                        engine=engine)
        return res

    # ---- compiled kernel --------------------------------------------------------------------
    def _input_table(self, drive, steps: int, dt: float) -> np.ndarray:
        t = np.arange(steps + 1) * dt
        if self.drive_kind == "current":
            return np.array([[float(drive(x)) for x in t]])
        terms = self.ref.terminals
        rows = [self.ref.probe_values({n: (drive[n].value(x) if n in drive else 0.0) for n in terms}) for x in t]
        return np.array(rows, dtype=float).T.copy()

    def _run_compiled(self, m0, steps, dt, sigma, drive, rng, t_average=None, hist_every=0, hist_count=0,
                      progress=None, legacy: bool = False) -> EnsembleResult:
        if legacy:
            kernel = _compiled_kernel(("legacy",) + self._kernel_key[:3], *self._legacy_src, self.n_inputs, legacy=True)
            pvec = self._legacy_pvec
        else:
            kernel = _compiled_kernel(self._kernel_key, *self._kernel_src, self.n_inputs)
            pvec = self._pvec
        n = m0.shape[1]
        seeds = rng.integers(0, 2**31 - 1, size=n)
        inputs = self._input_table(drive, steps, dt)
        k_avg = steps if t_average is None else int(math.ceil(t_average / dt - 1e-9)) - 1
        hist_every = int(hist_every) if hist_every else steps + 1
        n_hist = (steps + hist_every - 1) // hist_every if hist_count else 0
        hist = np.zeros((n_hist, int(hist_count)))
        m = np.array(m0, dtype=float, copy=True)
        t_cross = np.full(n, np.nan)
        s1 = np.zeros(n)
        s2 = np.zeros(n)
        if progress:
            progress(f"ensemble: {n} spins x {steps} steps (compiled kernel)")
        kernel(m, inputs, pvec, dt, sigma, seeds, max(k_avg, 0), hist_every, hist, t_cross, s1, s2)
        n_avg = steps - max(k_avg, 0)
        return EnsembleResult(
            n=n, dt=dt, steps=steps, t_cross=t_cross, m_final=m,
            t_hist=(np.arange(n_hist) * hist_every + 1) * dt, mz_hist=hist,
            mean_mz=float(s1.mean() / n_avg) if t_average is not None and n_avg > 0 else float("nan"),
            mean_mz2=float(s2.mean() / n_avg) if t_average is not None and n_avg > 0 else float("nan"))


def _numba():
    try:
        import numba
    except ImportError:  # the numpy engine still works
        return None
    return numba


_KERNELS: dict = {}
#: LLVM fast-math flags of the kernel: reassociation, contraction (FMA), reciprocals, fast
#: functions; not 'nnan'/'ninf' (NaN marks a spin that has not crossed yet)
_FAST = {"reassoc", "contract", "arcp", "nsz", "afn"}


def _compiled_kernel(key, args, psyms, rhs_sym, n_inputs, legacy: bool = False):
    """A numba kernel integrating each spin on its own (its own seeded normal stream, so results do
    not depend on the thread count): Heun predictor-corrector with one field sample per step,
    renormalisation, first equator crossing, time averages and a history of the first spins.

    Normals: xoshiro256+ uniforms (D. Blackman and S. Vigna, ACM Trans. Math. Softw. 47, 36 (2021),
    from memory) seeded per spin through splitmix64 (common practice, no source), turned into
    normal pairs by Marsaglia's polar method (G. Marsaglia and T. A. Bray, SIAM Rev. 6, 260 (1964));
    three per step with the spare kept.  ``legacy``: numba's np.random (Mersenne Twister), the
    kernel before the speed-up (benchmarks/bench_ensemble.py measures both)."""
    if key in _KERNELS:
        return _KERNELS[key]
    numba = _numba()
    if numba is None:
        raise RuntimeError("the compiled ensemble kernel needs the package numba (pip install numba)")
    scalar = sp.lambdify(list(args) + list(psyms), tuple(rhs_sym), modules="math", cse=True)
    f = numba.njit(scalar, error_model="numpy", fastmath=_FAST if not legacy else False)
    n_p = len(psyms)
    ins = ", ".join(f"u[{i}, k]" for i in range(n_inputs))
    ins1 = ", ".join(f"u[{i}, k + 1]" for i in range(n_inputs))
    ps = ", ".join(f"p[{i}]" for i in range(n_p))
    if legacy:
        seed_code = "np.random.seed(seeds[j])"
        draw_code = """hx = np.random.standard_normal() * sigma
                hy = np.random.standard_normal() * sigma
                hz = np.random.standard_normal() * sigma"""
    else:
        seed_code = "_seed(st, seeds[j]); spare = 0.0; has_spare = False"
        draw_code = """if has_spare:
                    hx = spare * sigma
                    g1, g2 = _polar(st)
                    hy = g1 * sigma; hz = g2 * sigma
                    has_spare = False
                else:
                    g1, g2 = _polar(st)
                    hx = g1 * sigma; hy = g2 * sigma
                    g1, g2 = _polar(st)
                    hz = g1 * sigma; spare = g2; has_spare = True"""
    src = f"""
def kernel(m, u, p, dt, sigma, seeds, k_avg, hist_every, hist, t_cross, s1, s2):
    n = m.shape[1]
    steps = u.shape[1] - 1
    n_hist = hist.shape[1]
    for j in numba.prange(n):
        st = np.empty(4, np.uint64)
        {seed_code}
        x = m[0, j]; y = m[1, j]; z = m[2, j]
        sg = 1.0 if z >= 0.0 else -1.0
        tc = np.nan
        a1 = 0.0; a2 = 0.0
        for k in range(steps):
            hx = 0.0; hy = 0.0; hz = 0.0
            if sigma > 0.0:
                {draw_code}
            f1 = f({ins}, x, y, z, hx, hy, hz, {ps})
            px = x + dt * f1[0]; py = y + dt * f1[1]; pz = z + dt * f1[2]
            f2 = f({ins1}, px, py, pz, hx, hy, hz, {ps})
            nx = x + 0.5 * dt * (f1[0] + f2[0])
            ny = y + 0.5 * dt * (f1[1] + f2[1])
            nz = z + 0.5 * dt * (f1[2] + f2[2])
            r = 1.0 / np.sqrt(nx * nx + ny * ny + nz * nz)
            nx *= r; ny *= r; nz *= r
            if np.isnan(tc) and sg * nz <= 0.0:
                fr = z / (z - nz) if z != nz else 1.0
                fr = min(max(fr, 0.0), 1.0)
                tc = (k + fr) * dt
            x = nx; y = ny; z = nz
            if k >= k_avg:
                a1 += z; a2 += z * z
            if j < n_hist and k % hist_every == 0:
                hist[k // hist_every, j] = z
        m[0, j] = x; m[1, j] = y; m[2, j] = z
        t_cross[j] = tc
        s1[j] = a1; s2[j] = a2
"""
    rng = _rng_functions(numba)
    ns = {"np": np, "numba": numba, "f": f, **rng}
    exec(compile(src, "<compactgen ensemble kernel>", "exec"), ns)
    kernel = numba.njit(parallel=True, error_model="numpy", fastmath=_FAST if not legacy else False)(ns["kernel"])
    _KERNELS[key] = kernel
    return kernel


_RNG: dict = {}


def _rng_functions(numba) -> dict:
    """numba functions of the kernel's normal generator: _seed(state, seed), _polar(state) -> two
    independent standard normals (see _compiled_kernel)."""
    if _RNG:
        return _RNG
    u64 = np.uint64

    @numba.njit(inline="always")
    def _rotl(x, k):
        return (x << u64(k)) | (x >> u64(64 - k))

    @numba.njit(inline="always")
    def _next(st):
        result = st[0] + st[3]
        t = st[1] << u64(17)
        st[2] ^= st[0]
        st[3] ^= st[1]
        st[1] ^= st[2]
        st[0] ^= st[3]
        st[2] ^= t
        st[3] = _rotl(st[3], 45)
        return result

    @numba.njit(inline="always")
    def _uniform(st):  # in [-1, 1): the top 53 bits
        return (_next(st) >> u64(11)) * (2.0 / 9007199254740992.0) - 1.0

    @numba.njit
    def _seed(st, seed):
        z = u64(seed)
        for i in range(4):  # splitmix64
            z = z + u64(0x9E3779B97F4A7C15)
            w = z
            w = (w ^ (w >> u64(30))) * u64(0xBF58476D1CE4E5B9)
            w = (w ^ (w >> u64(27))) * u64(0x94D049BB133111EB)
            st[i] = w ^ (w >> u64(31))

    @numba.njit(inline="always")
    def _polar(st):
        while True:
            a = _uniform(st)
            b = _uniform(st)
            s = a * a + b * b
            if 0.0 < s < 1.0:
                fac = np.sqrt(-2.0 * np.log(s) / s)
                return a * fac, b * fac

    _RNG.update(_seed=_seed, _polar=_polar, _next=_next, _uniform=_uniform)
    return _RNG


def initial_vectors(tilt: np.ndarray, phi: np.ndarray, state0: float) -> np.ndarray:
    """Unit vectors (3, n) at cone angle ``tilt`` about +z (state0 > 0) or -z, azimuth ``phi`` --
    the same expression the models use for their initial state (devices/common.macrospin_states)."""
    s = 1.0 if state0 >= 0 else -1.0
    return np.array([np.sin(tilt) * np.cos(phi), np.sin(tilt) * np.sin(phi), s * np.cos(tilt)])


def sample_initial_angles(delta: float, n: int, rng: np.random.Generator, grid: int = 20001):
    """Cone angles from the Boltzmann density sin(theta) exp(-Delta sin^2 theta) on [0, pi/2]
    (physics/thermal.boltzmann_cone_weight; inverse cumulative distribution on a grid) and
    uniform azimuths.  Returns (theta, phi) arrays."""
    if not delta > 0:
        raise ValueError(f"thermal stability factor must be positive to draw initial angles, got {delta:g}")
    th = sp.Symbol("theta")
    dl = sp.Symbol("delta")
    weight = sp.lambdify((th, dl), thermal.boltzmann_cone_weight(th, dl), "numpy")
    # the density lives within a few 1/sqrt(Delta) of the pole: put the grid there
    top = min(math.pi / 2, 12.0 / math.sqrt(delta))
    x = np.linspace(0.0, top, grid)
    w = weight(x, delta)
    cdf = np.concatenate([[0.0], np.cumsum(0.5 * (w[1:] + w[:-1]) * np.diff(x))])
    cdf /= cdf[-1]
    theta = np.interp(rng.random(n), cdf, x)
    phi = rng.uniform(-math.pi, math.pi, n)
    return np.maximum(theta, 1e-9), phi


# ---- binomial statistics ----------------------------------------------------------------------
def wilson_interval(k: int | np.ndarray, n: int, z: float = 1.959963984540054):
    """Wilson score interval of a binomial proportion k/n (default 95 %).

    Source: E. B. Wilson, J. Am. Stat. Assoc. 22, 209 (1927)."""
    k = np.asarray(k, float)
    p = k / n
    den = 1 + z * z / n
    centre = (p + z * z / (2 * n)) / den
    half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / den
    # exact ends where nothing or everything was seen (the formula leaves a round-off there)
    return np.where(k == 0, 0.0, centre - half), np.where(k == n, 1.0, centre + half)
