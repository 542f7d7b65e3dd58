"""The thermal field in ngspice (B-source library, [options] thermal_field = "noise-sources").

  noise-step   Wong-Zakai: the equilibrium of the free layer with no current as the noise step
               shrinks, for both noise sources (thermal_field = 1 trrandom, piecewise constant;
               2 trnoise, linearly interpolated), against the Boltzmann value (the Stratonovich
               answer: Brown's Fokker-Planck equation has it as its stationary state) and the
               stochastic reference (Heun).  Printed: the effective temperature T_eff/T (maximum
               likelihood Delta of exp(Delta m_z^2) on the samples), points per noise step, CPU.
  wer          write-error rate versus time under steps of 1.5, 2 and 3 I_c0 from Boltzmann starts:
               ngspice instances (Wilson 95 % intervals) beside the reference ensemble, with the
               reference's long-pulse slope against Sun's -2 (i - 1)/tau0.
  cost         CPU of one instance with thermal_field = 0, 1, 2 (same library, same transient).

The card is the small low-barrier test card of tests/test_thermal_field.py (Delta ~ 12, alpha 0.5).
Run: python3 benchmarks/bench_thermal_field.py noise-step|wer|cost [instances]
"""
from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))


def _delta_mle(x: np.ndarray) -> float:
    """Delta of the density exp(Delta m^2) on [0, 1] whose <m^2> is the samples' (maximum likelihood)."""
    from scipy import integrate, optimize

    target = float(np.mean(x**2))

    def m2(d):
        w = lambda u: math.exp(d * (u * u - 1))  # noqa: E731
        return integrate.quad(lambda u: u * u * w(u), 0, 1)[0] / integrate.quad(w, 0, 1)[0]

    return optimize.brentq(lambda d: m2(d) - target, 0.5, 200.0)


def noise_step(n: int) -> None:
    from test_thermal_field import GAMMA0, T_CIRCUIT, delta_at, hk_eff_at, thermal_card

    from compactgen.statistics.ensemble import current_step, thermal_ensemble
    from compactgen.statistics.stochastic import StochasticModel, sample_initial_angles

    ir = thermal_card().ir()
    delta = delta_at(T_CIRCUIT)
    period = 2 * math.pi / (GAMMA0 * hk_eff_at(T_CIRCUIT))
    t_stop, every = 4e-9, 0.1e-9
    times = np.arange(every, t_stop + 1e-15, every)
    print(f"card: Delta = {delta:.3f}, precession period P = {period * 1e12:.1f} ps; {n} instances x "
          f"{t_stop * 1e9:g} ns, |m_z| every {every * 1e9:g} ns")
    print("Boltzmann (Stratonovich) answer: T_eff/T = 1; the standard error of one row is about "
          f"{1 / math.sqrt(n * len(times)):.3f} x sqrt(correlation)")
    sm = StochasticModel(ir, temperature=T_CIRCUIT, drive="current")
    for dt in (2e-12, 0.5e-12):
        res = sm.run(4000, t_stop, dt, current_step(0.0).value, seed=2, state0=1.0, hist_every=int(round(every / dt)),
                     hist_count=4000)
        x = np.abs(res.mz_hist[1:]).ravel()
        print(f"reference Heun dt = {dt * 1e12:.2f} ps: T_eff/T = {delta / _delta_mle(x):.4f}")
    print(f"{'source':9s} {'step':>7s} {'T_eff/T':>8s} {'sinc^2 at f_fmr':>15s} {'points/step':>11s} {'wall s':>7s}")
    tilt, phi = sample_initial_angles(delta, n, np.random.default_rng(3))
    for source in (1, 2):
        for div in (5, 10, 20, 40, 80):
            step = period / div
            t0 = time.perf_counter()
            run = thermal_ensemble(ir, tilt, phi, 0.0, 1.0, T_CIRCUIT, t_stop, seed=7, chunk=(n + 1) // 2,
                                   sample_times=times, noise=source, noise_step=step, workers=2)
            wall = time.perf_counter() - t0
            x = np.abs(run.samples).ravel()
            sinc = (math.sin(math.pi / div) / (math.pi / div)) ** (2 * source)
            pts = np.mean(run.info["points"]) / (t_stop / step)
            name = "trrandom" if source == 1 else "trnoise"
            print(f"{name:9s} P/{div:<5g} {delta / _delta_mle(x):8.4f} {sinc:15.4f} {pts:11.1f} {wall:7.1f}", flush=True)


def wer(n: int) -> None:
    from test_thermal_field import GAMMA0, T_CIRCUIT, CARD, delta_at, hk_eff_at, thermal_card

    from compactgen.model.evaluate import figures
    from compactgen.statistics.ensemble import current_step, thermal_ensemble
    from compactgen.statistics.stochastic import StochasticModel, sample_initial_angles, wilson_interval

    ir = thermal_card().ir()
    i_c0 = figures(ir)["i_c0"]
    delta = delta_at(T_CIRCUIT)
    hk, alpha = hk_eff_at(T_CIRCUIT), CARD["alpha"]
    tau0 = (1 + alpha**2) / (alpha * GAMMA0 * hk)
    period = 2 * math.pi / (GAMMA0 * hk)
    sm = StochasticModel(ir, temperature=T_CIRCUIT, drive="current")
    for ratio, count in ((2.0, n), (1.5, n // 3), (3.0, n // 3)):
        t_stop = 6.0 * tau0 / (ratio - 1)
        ts = np.linspace(0.1, 1.0, 10) * t_stop
        ref = sm.run(100_000, t_stop, 0.25e-12, current_step(ratio * i_c0).value, seed=5, state0=-1.0)
        wref = 1 - ref.switched_by(ts)
        sel = (wref < 0.1) & (wref > 1e-4)
        slope = np.polyfit(ts[sel], np.log(wref[sel]), 1)[0]
        tilt, phi = sample_initial_angles(delta, count, np.random.default_rng(int(ratio * 10)))
        t0 = time.perf_counter()
        run = thermal_ensemble(ir, tilt, phi, ratio * i_c0, -1.0, T_CIRCUIT, t_stop, seed=int(ratio * 100),
                               chunk=50, noise_step=period / 20, workers=2)
        wall = time.perf_counter() - t0
        tc = np.where(np.isnan(run.t_cross), np.inf, run.t_cross)
        k = (tc[None, :] > ts[:, None]).sum(axis=1)
        lo, hi = wilson_interval(k, count)
        print(f"\n{ratio:g} x I_c0: ngspice {count} instances ({wall:.0f} s wall), reference 100000 spins; "
              f"reference long-pulse slope {slope:.4g} 1/s, Sun -2(i-1)/tau0 = {-2 * (ratio - 1) / tau0:.4g} 1/s "
              f"(ratio {slope / (-2 * (ratio - 1) / tau0):.3f})")
        print(f"{'t [ns]':>8s} {'reference':>10s} {'ngspice':>9s} {'95 % interval':>22s} inside")
        for t, w, kk, a, b in zip(ts, wref, k, lo, hi):
            print(f"{t * 1e9:8.3f} {w:10.2e} {kk / count:9.2e} [{a:9.2e}, {b:9.2e}] {'yes' if a <= w <= b else 'NO'}")


def cost(n: int) -> None:
    from test_thermal_field import GAMMA0, T_CIRCUIT, delta_at, hk_eff_at, thermal_card

    from compactgen.sim import run_ngspice_batch
    from compactgen.statistics.ensemble import ngspice_ensemble_deck
    from compactgen.statistics.stochastic import sample_initial_angles
    from compactgen.targets import render
    import tempfile

    ir = thermal_card().ir()
    delta = delta_at(T_CIRCUIT)
    period = 2 * math.pi / (GAMMA0 * hk_eff_at(T_CIRCUIT))
    tilt, phi = sample_initial_angles(delta, n, np.random.default_rng(1))
    lib_text = render.ngspice(ir)
    print(f"{n} instances, 2 ns at no current, one netlist, designer-deck tolerances (reltol 1e-4, trtol 1)")
    base = None
    with tempfile.TemporaryDirectory() as tmp:
        lib = Path(tmp) / "lib.lib"
        lib.write_text(lib_text)
        for tf in (0, 1, 2):
            inst = [dict(i=j + 1, params=[("state0", "1.0"), ("thermal_rest", "0.0"), ("tilt0", repr(float(tilt[j]))),
                                          ("phi0", repr(float(phi[j]))), ("thermal_field", f"{tf}.0")]) for j in range(n)]
            deck = ngspice_ensemble_deck(ir, str(lib), inst, 0.0, 2e-9, T_CIRCUIT, period / 40, seed=3)
            t0 = time.perf_counter()
            data = run_ngspice_batch(deck, timeout=3600)
            wall = time.perf_counter() - t0
            base = base or wall
            print(f"thermal_field={tf}: {len(data['time'])} points, {wall:.2f} s ({wall / base:.1f} x thermal_field=0; "
                  f"step cap P/40 = {period / 40 * 1e12:.2f} ps in all three)")


if __name__ == "__main__":
    what = sys.argv[1] if len(sys.argv) > 1 else "noise-step"
    count = int(sys.argv[2]) if len(sys.argv) > 2 else {"noise-step": 16, "wer": 3000, "cost": 4}[what]
    {"noise-step": noise_step, "wer": wer, "cost": cost}[what](count)
