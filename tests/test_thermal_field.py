"""Brown's thermal field inside the circuit simulation (card option thermal_field = "noise-sources").

Checks against published physics, computed here independently of the project's code:
- Boltzmann distribution of the free layer (L. Boltzmann; for the macrospin W. F. Brown,
  Phys. Rev. 130, 1677 (1963)): with no current m_z over time and instances has the density
  exp(Delta m_z^2) on the sphere (uniform in m_z times the Boltzmann weight of E = K_eff V (1 - m_z^2));
  Delta at the device temperature from the Bloch law Ms(T) ~ 1 - (T/T_c)^1.5 (F. Bloch, Z. Phys. 61,
  206 (1930), from memory) and the Callen-Callen law K ~ Ms^3 (H. B. Callen and E. Callen,
  J. Phys. Chem. Solids 27, 1271 (1966), from memory).
- Thermally activated switching below I_c0: exponential waiting times with the mean first-passage
  time of Brown's Fokker-Planck equation for an axially symmetric macrospin (Brown 1963), solved
  by quadrature of the standard first-passage formula (C. W. Gardiner, Handbook of Stochastic
  Methods, Springer (1985), section 5.2.7, from memory); the spin torque of a current i I_c0 along
  the axis enters as the effective energy Delta[(1 - x^2) - 2 i (1 - x)] (derived: its x-derivative
  is the deterministic drift; barrier Delta (1 - i)^2, the n = 2 law of T. Taniguchi and H. Imamura,
  arXiv:1010.5845).  The quadrature is checked against PHYSICS.md 4.3 (MFPT/tau_N = 1.1246 at
  Delta = 10, an independent script).
- The simulator runs use a noise step of P/20 (P: small-angle precession period) for speed; measured
  (benchmarks/bench_thermal_field.py noise-step): effective temperature 0.984 +- 0.023 of the
  circuit's there, against 1.013 at the library default P/40.
- Statistical tests: scipy.stats (chi-square, Kolmogorov-Smirnov), exact chi-square confidence
  interval of an exponential mean (common practice, no source).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from compactgen.model.card import card_text, load_card, parse_card
from compactgen.model.constants import GAMMA_E, K_B, MU0
from compactgen.statistics.ensemble import chunk_seeds, thermal_ensemble
from compactgen.statistics.stochastic import sample_initial_angles
from compactgen.targets import render

from helpers import EXAMPLES

GAMMA0 = MU0 * GAMMA_E
T_CIRCUIT = 300.15  # ngspice's default temperature, also the card's tnom

# a small, low-barrier test card (illustrative values): 20 nm thin-film disk, Delta ~ 12 at 27 degC;
# alpha = 0.5 makes the thermal time scales short and the (1 + alpha^2) = 1.25 error in the noise
# strength (PHYSICS 8) large
CARD = dict(diameter=20e-9, t_free=1.3e-9, ms=1.0e6, ki=0.975e-3, kv=0.0, alpha=0.5, t_curie=1000.0,
            aniso_exp=3.0, tnom=T_CIRCUIT)


def thermal_card(**values):
    base = load_card(EXAMPLES / "pmtj35_demo.toml")
    vals = dict(base.values, **CARD, **values)
    vals.pop("demag_nz")  # from [options] demag = "thin-film": N_z = 1
    vals.pop("pol_decay")
    text = card_text("stt-mtj", "small_thermal", vals, options={"demag": "thin-film", "thermal_field": "noise-sources"},
                     given=frozenset(vals))
    return parse_card(text, "<small_thermal>")


def delta_at(temperature: float, v=CARD) -> float:
    """Delta(T) of the thin-film disk from the card values, Bloch and Callen-Callen (see top)."""
    bloch = lambda t: 1 - (t / v["t_curie"]) ** 1.5  # noqa: E731
    ratio = bloch(temperature) / bloch(v["tnom"])
    ms = v["ms"] * ratio
    ku = (v["ki"] / v["t_free"] + v["kv"]) * ratio ** v["aniso_exp"]
    keff = ku - MU0 * ms**2 / 2
    vol = math.pi * (v["diameter"] / 2) ** 2 * v["t_free"]
    return keff * vol / (K_B * temperature)


def hk_eff_at(temperature: float, v=CARD) -> float:
    bloch = lambda t: 1 - (t / v["t_curie"]) ** 1.5  # noqa: E731
    ratio = bloch(temperature) / bloch(v["tnom"])
    ms = v["ms"] * ratio
    ku = (v["ki"] / v["t_free"] + v["kv"]) * ratio ** v["aniso_exp"]
    return 2 * ku / (MU0 * ms) - ms


def mean_first_passage(delta: float, i: float, tau_d: float, x_abs: float, init_delta: float | None) -> float:
    """Mean first-passage time from the well at x = cos(theta) = 1 to x_abs of Brown's axially
    symmetric Fokker-Planck equation, 2 tau_D dW/dt = d/dx[(1 - x^2)(dW/dx + W dU/dx)], with
    U = Delta[(1 - x^2) - 2 i (1 - x)], reflecting at x = 1, averaged over initial states with
    density exp(init_delta x^2) on [0, 1] (None: from x0 = 1): T(x0) = 2 tau_D int_{x_abs}^{x0} dy e^{U(y)}/(1 - y^2)
    int_y^1 e^{-U(z)} dz."""
    u = lambda x: delta * (1 - x * x) - 2 * delta * i * (1 - x)  # noqa: E731
    inner = lambda y: integrate.quad(lambda z: math.exp(u(y) - u(z)), y, 1)[0] / (1 - y * y)  # noqa: E731
    if init_delta is None:
        return 2 * tau_d * integrate.quad(inner, x_abs, 1, limit=200)[0]
    w = lambda x: math.exp(init_delta * (x * x - 1))  # noqa: E731
    norm = integrate.quad(w, 0, 1)[0]
    surv = lambda y: integrate.quad(w, max(y, 0.0), 1)[0] / norm  # noqa: E731
    return 2 * tau_d * integrate.quad(lambda y: inner(y) * surv(y), x_abs, 1, limit=200)[0]


def test_first_passage_quadrature_check_4_3():
    # PHYSICS 4.3: MFPT(top)/tau_N = 1.1246, 1.0551, 1.0262 at Delta = 10, 20, 40, tau_N = tau_D
    # (sqrt(pi)/2) Delta^(-3/2) e^Delta (Brown's high-barrier form); from the bottom of the well
    for delta, want in ((10, 1.1246), (20, 1.0551), (40, 1.0262)):
        tau_n = math.sqrt(math.pi) / 2 * delta**-1.5 * math.exp(delta)
        got = mean_first_passage(delta, 0.0, 1.0, 0.0, init_delta=None) / tau_n
        assert got == pytest.approx(want, abs=2e-4), (delta, got)


def test_option_off_keeps_the_model_and_on_adds_three_noise_sources():
    card = thermal_card()
    ir = card.ir()
    assert [n.name for n in ir.noise] == ["nth_x", "nth_y", "nth_z"]
    assert ir.params["thermal_field"].kind == "instance" and ir.params["thermal_field"].default == 0.0
    lib = render.ngspice(ir)
    body = lib.split("\n.lib tt\n")[1].split(".endl tt")[0]
    assert body.count(" trrandom(2 ") == 3 and body.count(" trnoise(") == 3
    # off: the same card without the option has no noise anywhere (default outputs unchanged)
    plain = parse_card(card.text.replace('thermal_field = "noise-sources"', 'thermal_field = "off"'), "<plain>").ir()
    assert not plain.noise and "thermal_field" not in plain.params
    assert "trrandom" not in render.ngspice(plain) and "nth_" not in render.verilog_a(plain)
    # the Verilog-A module (and so the compiled model) reads the noise inputs as 0
    assert "nth_" not in render.verilog_a(ir)
    with pytest.raises(ValueError, match="noise-sources"):
        thermal_ensemble(plain, np.zeros(1), np.zeros(1), 0.0, 1.0, T_CIRCUIT, 1e-9, seed=1)


def test_thermal_field_amplitude_follows_brown_and_the_device_temperature():
    """The field's standard deviation in the model is sqrt(2 alpha k_B T/(gamma0 mu0 Ms(T) V dt))
    at the device temperature T = circuit + dtemp (Brown 1963; Ms(T) from Bloch's law)."""
    from compactgen.model.evaluate import reference_numbers

    ir = thermal_card().ir()
    for dtemp, step in ((0.0, 2e-12), (60.0, 1e-12)):
        num = reference_numbers(ir, {"dtemp": dtemp, "noise_step": step, "thermal_field": 1.0}, T_CIRCUIT)
        temp = T_CIRCUIT + dtemp
        ms = CARD["ms"] * (1 - (temp / 1000) ** 1.5) / (1 - (T_CIRCUIT / 1000) ** 1.5)
        vol = math.pi * 1e-16 * 1.3e-9
        want = math.sqrt(2 * CARD["alpha"] * K_B * temp / (GAMMA0 * MU0 * ms * vol * step))
        got = next(v for k, v in num.items() if str(k) == "hth_rms")
        assert got == pytest.approx(want, rel=1e-9)
    off = reference_numbers(ir, {"thermal_field": 0.0}, T_CIRCUIT)
    assert next(v for k, v in off.items() if str(k) == "hth_rms") == 0.0


def test_chunk_seeds_are_repeatable_positive_and_distinct():
    a, b = chunk_seeds(7, 5), chunk_seeds(7, 5)
    assert a == b and len(set(a)) == 5 and all(0 < s < 2**31 for s in a)
    assert chunk_seeds(8, 5) != a


def _boltzmann_cdf(delta):
    w = lambda u: math.exp(delta * (u * u - 1))  # noqa: E731
    norm = integrate.quad(w, 0, 1)[0]
    return lambda m: integrate.quad(w, 0, m)[0] / norm


@pytest.mark.simulator
@pytest.mark.slow
def test_ngspice_free_layer_follows_boltzmann_at_the_device_temperature(ngspice_cli):
    """16 instances, no current, 50 K above the circuit (dtemp), 3 ns from Boltzmann initial angles:
    |m_z| sampled every 0.2 ns (several correlation times apart) follows exp(Delta(T) m_z^2) on
    [0, 1] (chi-square over 8 equiprobable bins); the same samples reject Delta(T)/1.25, the
    temperature a noise strength with gamma/(1+alpha^2) would give (PHYSICS 8)."""
    card = thermal_card()
    ir = card.ir()
    dtemp = 50.0
    delta = delta_at(T_CIRCUIT + dtemp)
    period = 2 * math.pi / (GAMMA0 * hk_eff_at(T_CIRCUIT))  # small-angle precession at tnom
    n = 16
    tilt, phi = sample_initial_angles(delta, n, np.random.default_rng(5))
    times = np.arange(0.2e-9, 3.0e-9 + 1e-15, 0.2e-9)
    run = thermal_ensemble(ir, tilt, phi, 0.0, 1.0, T_CIRCUIT, 3.0e-9, seed=11, chunk=8, sample_times=times,
                           noise_step=period / 20, extra={"dtemp": dtemp}, workers=2)
    x = np.abs(run.samples).ravel()
    cdf = _boltzmann_cdf(delta)
    edges = [0.0] + [optimize.brentq(lambda m: cdf(m) - k / 8, 0, 1) for k in range(1, 8)] + [1.0]
    observed = np.histogram(x, bins=edges)[0]
    chi2 = stats.chisquare(observed)
    wrong = stats.chisquare(np.histogram(x, bins=[0.0] + [optimize.brentq(
        lambda m: _boltzmann_cdf(delta / 1.25)(m) - k / 8, 0, 1) for k in range(1, 8)] + [1.0])[0])
    print(f"Boltzmann at Delta(T) = {delta:.3f}: chi-square {chi2.statistic:.2f}, p = {chi2.pvalue:.3g} "
          f"({x.size} samples); against Delta(T)/1.25: p = {wrong.pvalue:.3g}")
    assert chi2.pvalue > 0.01, (observed, chi2, delta)
    # power: 1 - <|m_z|> is ~1/(2 Delta); the wrong temperature lies many standard errors away
    mean_of = lambda d: 1 - integrate.quad(lambda u: u * math.exp(d * (u * u - 1)), 0, 1)[0] / integrate.quad(  # noqa: E731
        lambda u: math.exp(d * (u * u - 1)), 0, 1)[0]
    got, err = 1 - x.mean(), x.std(ddof=1) / math.sqrt(x.size)
    assert abs(got - mean_of(delta)) < 3 * err, (got, mean_of(delta), err)
    assert abs(got - mean_of(delta / 1.25)) > 4 * err, (got, mean_of(delta / 1.25), err)


@pytest.mark.simulator
@pytest.mark.slow
def test_ngspice_activated_switching_is_exponential_with_browns_mean(ngspice_cli):
    """20 instances from the antiparallel state under 0.5 I_c0 (effective barrier Delta (1 - i)^2 =
    3.0): equator-crossing times are exponential (Kolmogorov-Smirnov against the censored
    exponential) and their mean (maximum likelihood with censoring) has Brown's first-passage time
    inside its exact 99 % interval; the high-barrier (Neel-Brown) form, 27 % below the exact time at this
    low effective barrier, is printed beside it."""
    card = thermal_card()
    ir = card.ir()
    delta = delta_at(T_CIRCUIT)
    hk = hk_eff_at(T_CIRCUIT)
    alpha = CARD["alpha"]
    i = 0.5
    vol = math.pi * 1e-16 * 1.3e-9
    i_c0 = 4 * 1.602176634e-19 * alpha / (1.054571817e-34 * 0.6) * delta * K_B * T_CIRCUIT  # PHYSICS 4.1, eta 0.6
    assert card.values["eta"] == 0.6 and vol > 0
    tau_d = delta * (1 + alpha**2) / (alpha * GAMMA0 * hk)
    want = mean_first_passage(delta, i, tau_d, 0.0, init_delta=delta)
    # the high-barrier (Neel-Brown) limit of the same formula: Laplace's method at the well (x = 1) and
    # the barrier (x = i); for i = 0 it is twice Brown's tau_N (derived here, checked at i = 0 above)
    neel_brown = tau_d * math.sqrt(math.pi) * delta**-1.5 * math.exp(delta * (1 - i) ** 2) / ((1 - i) ** 2 * (1 + i))
    period = 2 * math.pi / (GAMMA0 * hk)
    n, t_stop = 20, 3.2 * want
    tilt, phi = sample_initial_angles(delta, n, np.random.default_rng(9))
    run = thermal_ensemble(ir, tilt, phi, i * i_c0, -1.0, T_CIRCUIT, t_stop, seed=21, chunk=10,
                           noise_step=period / 20, workers=2)
    t = run.t_cross
    done = ~np.isnan(t)
    k = int(done.sum())
    assert k >= n // 2, t
    total = float(np.sum(t[done]) + (n - k) * t_stop)
    tau_hat = total / k
    lo, hi = 2 * total / stats.chi2.ppf([0.995, 0.005], 2 * k)
    print(f"mean first passage: measured {tau_hat:.3g} s (99 % {lo:.3g}..{hi:.3g}, {k}/{n} events), "
          f"Brown (exact quadrature) {want:.3g} s, high-barrier form {neel_brown:.3g} s")
    assert lo <= want <= hi, (tau_hat, lo, hi, want)
    # shape: the switched times against the exponential truncated at t_stop
    f_stop = 1 - math.exp(-t_stop / tau_hat)
    ks = stats.kstest(t[done], lambda s: (1 - np.exp(-np.asarray(s) / tau_hat)) / f_stop)
    assert ks.pvalue > 0.01, ks


def test_reference_wer_tail_has_suns_long_pulse_slope():
    """The stochastic reference (Heun, Brown's field during the pulse, Boltzmann starts) at 2 I_c0:
    ln WER(t) falls with the slope -2 (i - 1)/tau0, tau0 = (1 + alpha^2)/(alpha gamma0 H_k,eff), of
    precessional switching (J. Z. Sun, Phys. Rev. B 62, 570 (2000), form from memory; PHYSICS 4.2),
    within 15 % (the thermal field during the pulse and the fit range move it a little)."""
    from compactgen.model.evaluate import figures
    from compactgen.statistics.ensemble import current_step
    from compactgen.statistics.stochastic import StochasticModel

    ir = thermal_card().ir()
    i_c0 = figures(ir)["i_c0"]
    hk, alpha = hk_eff_at(T_CIRCUIT), CARD["alpha"]
    tau0 = (1 + alpha**2) / (alpha * GAMMA0 * hk)
    sm = StochasticModel(ir, temperature=T_CIRCUIT, drive="current")
    res = sm.run(20000, 0.5e-9, 0.25e-12, current_step(2.0 * i_c0).value, seed=3, state0=-1.0)
    ts = np.linspace(0.02e-9, 0.5e-9, 49)
    wer = 1 - res.switched_by(ts)
    sel = (wer < 0.1) & (wer > 1e-3)
    assert sel.sum() >= 4, wer
    slope = np.polyfit(ts[sel], np.log(wer[sel]), 1)[0]
    assert slope == pytest.approx(-2 * (2.0 - 1) / tau0, rel=0.15), (slope, -2 / tau0)


@pytest.mark.simulator
@pytest.mark.slow
def test_ngspice_write_error_rate_matches_the_stochastic_reference(ngspice_cli):
    """60 instances in ngspice with the thermal field on, from Boltzmann starts, under a step to
    2 I_c0: the fraction not yet across the equator at 0.06-0.15 ns (WER ~0.9 down to ~0.06)
    contains the reference ensemble's WER (20000 spins, same drive) in its 99 % Wilson interval
    (E. B. Wilson, J. Am. Stat. Assoc. 22, 209 (1927))."""
    from compactgen.model.evaluate import figures
    from compactgen.statistics.ensemble import current_step
    from compactgen.statistics.stochastic import StochasticModel, wilson_interval

    ir = thermal_card().ir()
    i_c0 = figures(ir)["i_c0"]
    delta = delta_at(T_CIRCUIT)
    period = 2 * math.pi / (GAMMA0 * hk_eff_at(T_CIRCUIT))
    ts = np.array([0.06, 0.08, 0.10, 0.15]) * 1e-9
    sm = StochasticModel(ir, temperature=T_CIRCUIT, drive="current")
    ref = 1 - sm.run(20000, 0.3e-9, 0.25e-12, current_step(2.0 * i_c0).value, seed=4, state0=-1.0).switched_by(ts)
    n = 60
    tilt, phi = sample_initial_angles(delta, n, np.random.default_rng(13))
    run = thermal_ensemble(ir, tilt, phi, 2.0 * i_c0, -1.0, T_CIRCUIT, 0.3e-9, seed=17, chunk=30,
                           noise_step=period / 20, workers=2)
    tc = np.where(np.isnan(run.t_cross), np.inf, run.t_cross)
    k = (tc[None, :] > ts[:, None]).sum(axis=1)
    lo, hi = wilson_interval(k, n, z=2.576)
    print("WER at", ts, "ngspice", k / n, "reference", ref)
    assert np.all((ref >= lo) & (ref <= hi)), (k / n, lo, hi, ref)


@pytest.mark.simulator
@pytest.mark.slow
def test_wer_study_command_writes_table_and_plot(ngspice_cli, tmp_path):
    """A tiny `compactgen wer-study` (2 widths x 6 cells of the 1T1MTJ cell, thermal field on): the
    table, CSV and PNG are written, every width has its cells counted, the long pulse writes at
    least as well as the short one, and the same seed repeats the study exactly (trrandom)."""
    from compactgen.cli import main

    card_path = tmp_path / "small.toml"
    # a low RA, so that the cell reaches 2 I_c0 (250 uA at alpha 0.5) within 3 V on the bit line
    card_path.write_text(thermal_card(ra=0.3e-12).text.replace('thermal_field = "noise-sources"', 'thermal_field = "off"'))
    outs = []
    for out in ("a", "b"):
        status = main(["wer-study", str(card_path), "-o", str(tmp_path / out), "--widths", "0.08,0.3", "--runs", "6",
                       "--chunk", "6", "--workers", "2", "--seed", "3", "--nmos-width", "2"])
        assert status == 0
        outs.append((tmp_path / out / "wer_study.csv").read_text())
    rows = [line.split(",") for line in outs[0].splitlines()[1:]]
    assert len(rows) == 2 and all(r[1] == "6" for r in rows)
    assert int(rows[1][2]) <= int(rows[0][2]), rows
    assert outs[0] == outs[1]
    assert (tmp_path / "a" / "wer_study.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    md = (tmp_path / "a" / "wer_study.md").read_text()
    assert "| 0.080 | 6 |" in md and "reference" in md
    with pytest.raises(Exception, match="stt-mtj"):
        from compactgen.jobs.wer_study import thermal_card as study_card
        study_card(load_card(EXAMPLES / "sot50_demo.toml"))
