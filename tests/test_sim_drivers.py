"""Tests of the simulator drivers in compactgen.sim.

The simulator tests use one tiny first-order model, "relax":
tau*ds/dt = tanh(V/v0) - s with terminal current I = V/(r0*(1 + k*s)), written as an ngspice
B-source subcircuit and as a Verilog-A module, and compare the simulators with a solve_ivp
reference driven by exactly the same piecewise-linear stimulus.
"""
from __future__ import annotations

import subprocess
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from compactgen.errors import SimulationError, SimulatorMissing
from compactgen.sim import NgspiceWorker, RawPlot, admsxml_check, available, compile_va, compile_va_cached, ngspice_command, ngspice_library, read_raw, require_simulators, run_ngspice, run_ngspice_batch, run_ngspice_many, run_vacask, split_sweeps
from compactgen.sim.ngspice import SPICEINIT, _spice_number

V0, R0, K = 0.5, 1e3, 0.5
# Largest state error |s - s_ref| allowed with the tight settings used below; measured about
# 1e-4 for ngspice (reltol 1e-6, tmax 5 ps) and 5e-6 for VACASK (reltol 1e-6, tran_fbr 0.01).
NGSPICE_STATE_TOL = 5e-4
VACASK_STATE_TOL = 2e-5

# PULSE(0 1 1n 10p 10p 5n 20n) over a 20 ns transient, as (time, voltage) corners.
PULSE_CORNERS = [(0.0, 0.0), (1e-9, 0.0), (1.01e-9, 1.0), (6.01e-9, 1.0), (6.02e-9, 0.0),
                 (20e-9, 0.0)]
PULSE_NGSPICE = "PULSE(0 1 1n 10p 10p 5n 20n)"
PULSE_VACASK = ('type="pulse" val0=0 val1=1 delay=1e-09 rise=1e-11 fall=1e-11 width=5e-09 '
                'period=2e-08')
# A bipolar PWL drive over 10 ns.
PWL_CORNERS = [(0.0, 0.0), (0.5e-9, 0.0), (0.52e-9, 0.8), (3e-9, 0.8), (3.05e-9, -0.6),
               (7e-9, -0.6), (7.1e-9, 0.0), (10e-9, 0.0)]

RELAX_SUBCKT = f"""\
.subckt relax p n params: tau=1e-9 v0={V0} r0={R0} k={K}
Cs s 0 {{tau}}
Bs 0 s I=tanh(V(p,n)/{{v0}}) - V(s)
Bo p n I=V(p,n)/({{r0}}*(1+{{k}}*V(s)))
.ends relax
"""

RELAX_VA = f"""\
`include "disciplines.vams"
module relax(p, n);
  inout p, n;
  electrical p, n;
  electrical s;
  parameter real tau = 1e-9 from (0:inf);
  parameter real v0 = {V0} from (0:inf);
  parameter real r0 = {R0} from (0:inf);
  parameter real k = {K} from [0:1);
  analog begin
    I(s) <+ ddt(tau*V(s));
    I(s) <+ V(s) - tanh(V(p,n)/v0);
    I(p,n) <+ V(p,n) / (r0*(1.0 + k*V(s)));
  end
endmodule
"""

# A state with no operating point: ngspice never finishes (TOOLCHAIN.md section 3.9).
HANGING_DECK = """\
hard switch without an operating point
Cs s 0 1n
Bs 0 s I=V(s) < 0.5 ? 1 : -1
.tran 10p 0.6n
.end
"""

BAD_FUNCTION_DECK = """\
unknown function
V1 a 0 1
R1 a 0 1k
B1 a 0 I=foo(V(a))
.tran 1n 10n
.end
"""


def relax_reference(times: np.ndarray, corners: list[tuple[float, float]],
                    tau: float) -> np.ndarray:
    """State s of the relax model at ``times``, from rest, under the PWL drive ``corners``."""
    tc, vc = np.array(corners).T

    def rhs(t: float, s: np.ndarray) -> np.ndarray:
        return (np.tanh(np.interp(t, tc, vc) / V0) - s) / tau

    out = np.full(times.shape, np.nan)
    state = 0.0
    for start, stop in zip(tc[:-1], tc[1:]):
        sol = solve_ivp(rhs, (start, stop), [state], method="DOP853", rtol=1e-11, atol=1e-13,
                        dense_output=True)
        inside = (times >= start) & (times <= stop)
        out[inside] = sol.sol(times[inside])[0]
        state = sol.y[0, -1]
    return out


def max_current_error(current: np.ndarray, times: np.ndarray,
                      corners: list[tuple[float, float]], tau: float) -> float:
    """Largest |I - I_ref| relative to max |I_ref|, where I_ref = V/(r0*(1 + k*s_ref))."""
    tc, vc = np.array(corners).T
    ref = np.interp(times, tc, vc) / (R0 * (1 + K * relax_reference(times, corners, tau)))
    return float(np.max(np.abs(current - ref)) / np.max(np.abs(ref)))


def pwl(corners: list[tuple[float, float]]) -> str:
    """An ngspice PWL source value for ``corners``."""
    return "PWL(" + " ".join(f"{t:.6e} {v:.6e}" for t, v in corners) + ")"


def relax_deck(source: str, tstop: str, tau: float = 1e-9) -> str:
    """A deck driving one relax instance from ``source`` with tight tolerances."""
    return (f"relax tau={tau:g}\n{RELAX_SUBCKT}V1 a 0 {source}\nVm1 a a1 0\n"
            f"X1 a1 0 relax tau={tau:.6e}\n.options reltol=1e-6\n.tran 10p {tstop} 0 5p\n.end\n")


def max_state_error(result: dict[str, np.ndarray], state_key: str, time_key: str,
                    corners: list[tuple[float, float]], tau: float) -> float:
    """Largest |s - s_ref| over the simulator's time points."""
    times = result[time_key]
    return float(np.max(np.abs(result[state_key] - relax_reference(times, corners, tau))))


# ------------------------------------------------------------------------------------------
# Raw files (no simulator needed)


def write_raw(path: Path, plots: list[tuple[str, list[str], dict[str, np.ndarray]]],
              binary: bool) -> None:
    """Write plots in the SPICE3 raw layout, with ngspice's space-padded 'No. Points'."""
    chunks = []
    for plotname, names, data in plots:
        is_complex = any(np.iscomplexobj(data[name]) for name in names)
        npoints = len(data[names[0]])
        header = (f"Title: synthetic\nDate: today\nPlotname: {plotname}\n"
                  f"Flags: {'complex' if is_complex else 'real'}\n"
                  f"No. Variables: {len(names)}\nNo. Points: {npoints:<8d}\nVariables:\n"
                  + "".join(f"\t{i}\t{name}\tvoltage\n" for i, name in enumerate(names)))
        table = np.column_stack([data[name] for name in names])
        if binary:
            if is_complex:
                table = np.stack([table.real, table.imag], axis=-1).reshape(npoints, -1)
            chunks.append((header + "Binary:\n").encode() + table.astype("<f8").tobytes())
        else:
            cell = ((lambda z: f"{z.real:.15e},{z.imag:.15e}") if is_complex
                    else (lambda x: f"{x:.15e}"))
            body = "".join(f" {i}\t" + "\n\t".join(cell(z) for z in row) + "\n\n"
                           for i, row in enumerate(table))
            chunks.append((header + "Values:\n" + body).encode())
    path.write_bytes(b"".join(chunks))


@pytest.mark.parametrize("binary", [True, False], ids=["binary", "ascii"])
def test_read_raw_round_trip_of_real_and_complex_plots(tmp_path: Path, binary: bool) -> None:
    rng = np.random.default_rng(7)
    tran = {"time": np.linspace(0, 1e-9, 5), "v(a)": rng.normal(size=5),
            "i(v1)": rng.normal(size=5) * 1e-3}
    ac = {"frequency": np.array([1e3, 1e4, 1e5]) + 0j,
          "v(b)": rng.normal(size=3) + 1j * rng.normal(size=3)}
    path = tmp_path / "synthetic.raw"
    write_raw(path, [("Transient Analysis", list(tran), tran), ("AC Analysis", list(ac), ac)],
              binary)

    plots = read_raw(path)

    assert [p.plotname for p in plots] == ["Transient Analysis", "AC Analysis"]
    assert plots[0].names == list(tran) and plots[1].names == list(ac)
    for plot, expected in zip(plots, [tran, ac]):
        for name, values in expected.items():
            np.testing.assert_allclose(plot.data[name], values, rtol=1e-14, atol=0)
    assert np.iscomplexobj(plots[1].data["v(b)"]) and not np.iscomplexobj(plots[0].data["v(a)"])


def test_read_raw_rejects_truncated_and_empty_files(tmp_path: Path) -> None:
    data = {"time": np.arange(4.0), "v(a)": np.arange(4.0) * 2}
    path = tmp_path / "cut.raw"
    write_raw(path, [("Transient Analysis", list(data), data)], binary=True)
    path.write_bytes(path.read_bytes()[:-8])
    with pytest.raises(SimulationError, match=r"cut\.raw.*truncated.*4 points.*holds 3"):
        read_raw(path)
    empty = tmp_path / "empty.raw"
    empty.write_bytes(b"")
    with pytest.raises(SimulationError, match=r"empty\.raw.*empty"):
        read_raw(empty)
    with pytest.raises(SimulationError, match=r"missing\.raw"):
        read_raw(tmp_path / "missing.raw")


def test_split_sweeps_cuts_where_the_sweep_value_changes() -> None:
    tau = np.array([1.0, 1.0, 1.0, 2.0, 2.0, 3.0])
    time = np.array([0.0, 1.0, 2.0, 0.0, 1.0, 0.0])
    plot = RawPlot(title="t", plotname="Transient Analysis", names=["tau", "time"],
                   data={"tau": tau, "time": time})

    parts = split_sweeps(plot, "tau")

    assert [part["tau"][0] for part in parts] == [1.0, 2.0, 3.0]
    assert [part["time"].tolist() for part in parts] == [[0.0, 1.0, 2.0], [0.0, 1.0], [0.0]]
    with pytest.raises(SimulationError, match="no column 'temp'"):
        split_sweeps(plot, "temp")


# ------------------------------------------------------------------------------------------
# Tools and argument checks (no simulator needed)


def test_spice_numbers_with_scale_suffixes() -> None:
    assert _spice_number("20n") == pytest.approx(20e-9)
    assert _spice_number("1meg") == pytest.approx(1e6)
    assert _spice_number("2.5ms") == pytest.approx(2.5e-3)
    assert _spice_number("1e-9") == pytest.approx(1e-9)
    assert _spice_number("{tstop}") is None


def test_tool_lookup_errors(monkeypatch: pytest.MonkeyPatch) -> None:
    with pytest.raises(ValueError, match="unknown tool 'spectre'"):
        available("spectre")
    monkeypatch.setenv("NGSPICE_LIBRARY_PATH", "/nonexistent/libngspice.so")
    with pytest.raises(SimulatorMissing, match="NGSPICE_LIBRARY_PATH.*libngspice0"):
        ngspice_library()
    assert not available("ngspice")
    monkeypatch.setenv("COMPACTGEN_REQUIRE_SIMULATORS", "1")
    assert require_simulators()
    monkeypatch.setenv("COMPACTGEN_REQUIRE_SIMULATORS", "0")
    assert not require_simulators()


def test_decks_with_a_control_block_are_rejected() -> None:
    deck = "with control\nR1 a 0 1k\n.control\nop\n.endc\n.end\n"
    with pytest.raises(SimulationError, match=r"'with control'.*\.control block"):
        run_ngspice_batch(deck)
    with pytest.raises(SimulationError, match=r"\.control block"):
        run_ngspice_many(["ok\nR1 a 0 1k\n.op\n", deck])


def test_vacask_netlist_without_abort_always_is_rejected() -> None:
    with pytest.raises(SimulationError, match="abort always"):
        run_vacask("no abort\nground 0\ncontrol\n  analysis op1 op\nendc\n", [])


# ------------------------------------------------------------------------------------------
# ngspice


@pytest.mark.simulator
def test_ngspice_shared_and_batch_match_the_reference(ngspice: None, ngspice_cli: None) -> None:
    deck = relax_deck(PULSE_NGSPICE, "20n")

    shared = run_ngspice(deck)
    batch = run_ngspice_batch(deck)

    assert set(shared) == set(batch) >= {"time", "a", "a1", "x1.s", "vm1#branch"}
    for name in shared:
        np.testing.assert_allclose(batch[name], shared[name], rtol=1e-12, atol=1e-300)
    assert shared["time"][-1] == pytest.approx(20e-9, rel=1e-12)
    assert max_state_error(shared, "x1.s", "time", PULSE_CORNERS, 1e-9) < NGSPICE_STATE_TOL
    assert max_current_error(shared["vm1#branch"], shared["time"], PULSE_CORNERS, 1e-9) < 5e-5


@pytest.mark.simulator
def test_ngspice_dc_sweep_returns_the_sweep_vector(ngspice: None) -> None:
    deck = "divider\nV1 a 0 0\nR1 a b 1k\nR2 b 0 3k\n.dc V1 0 2 0.5\n.end\n"

    result = run_ngspice(deck)

    np.testing.assert_allclose(result["v-sweep"], [0, 0.5, 1, 1.5, 2], atol=1e-15)
    np.testing.assert_allclose(result["b"], 0.75 * result["v-sweep"], rtol=1e-9, atol=1e-15)
    np.testing.assert_allclose(result["v1#branch"], -result["v-sweep"] / 4e3, rtol=1e-9,
                               atol=1e-18)


@pytest.mark.simulator
def test_ngspice_failure_raises_and_the_worker_runs_the_next_deck(ngspice: None) -> None:
    with NgspiceWorker() as worker:
        pid = worker.pid
        with pytest.raises(SimulationError, match=r"(?s)'unknown function'.*function 'foo'"):
            worker.run(BAD_FUNCTION_DECK)
        result = worker.run(relax_deck(pwl(PWL_CORNERS), "10n"))
        assert worker.pid == pid and worker.alive
    assert max_state_error(result, "x1.s", "time", PWL_CORNERS, 1e-9) < NGSPICE_STATE_TOL


@pytest.mark.simulator
def test_ngspice_without_operating_point_reports_the_failure(ngspice: None, ngspice_cli: None,
                                                             tmp_path: Path) -> None:
    deck = "two sources in parallel\nV1 a 0 1\nV2 a 0 2\n.tran 1n 10n\n.end\n"
    with pytest.raises(SimulationError, match="(?i)timestep too small"):
        run_ngspice(deck)
    with pytest.raises(SimulationError, match="(?i)timestep too small"):
        run_ngspice_batch(deck)
    # The raw file ngspice leaves behind holds a header and no data.
    (tmp_path / "deck.cir").write_text(deck)
    (tmp_path / ".spiceinit").write_text(SPICEINIT)  # one OpenMP thread, as every run of the project
    subprocess.run([ngspice_command(), "-b", "-r", "left.raw", "deck.cir"], cwd=tmp_path,
                   capture_output=True, timeout=60)
    with pytest.raises(SimulationError, match=r"left\.raw.*no data"):
        read_raw(tmp_path / "left.raw")


@pytest.mark.simulator
@pytest.mark.slow
def test_hanging_ngspice_is_killed_at_the_timeout(ngspice: None, ngspice_cli: None) -> None:
    with NgspiceWorker() as worker:
        with pytest.raises(SimulationError, match="timeout of 5 s.*killed"):
            worker.run(HANGING_DECK, timeout=5)
        assert not worker.alive
    with pytest.raises(SimulationError, match="did not finish within 3 s"):
        run_ngspice_batch(HANGING_DECK, timeout=3)


@pytest.mark.simulator
def test_run_ngspice_many_keeps_the_order_of_the_decks(ngspice: None) -> None:
    taus = [0.3e-9, 2e-9, 0.7e-9, 4e-9, 1e-9]
    decks = [relax_deck(pwl(PWL_CORNERS), "10n", tau) for tau in taus]

    results = run_ngspice_many(decks, workers=2)

    assert len(results) == len(taus)
    for tau, result in zip(taus, results):
        assert max_state_error(result, "x1.s", "time", PWL_CORNERS, tau) < NGSPICE_STATE_TOL
    # The taus are far enough apart that a swapped result would fail the check above.
    assert max_state_error(results[0], "x1.s", "time", PWL_CORNERS, taus[1]) > 0.05
    with pytest.raises(SimulationError, match="deck 2 of 3"):
        run_ngspice_many([decks[0], BAD_FUNCTION_DECK, decks[1]], workers=1)


@pytest.mark.simulator
def test_raw_reader_gives_the_same_numbers_for_binary_and_ascii(ngspice_cli: None,
                                                                tmp_path: Path) -> None:
    plots = {}
    for filetype in ("binary", "ascii"):
        deck = (f"raw formats\n{RELAX_SUBCKT}V1 a 0 DC 0.3 AC 1 {PULSE_NGSPICE}\nVm1 a a1 0\n"
                f"X1 a1 0 relax\nC1 a1 0 1p\n.options reltol=1e-6\n.control\n"
                f"set filetype={filetype}\nset appendwrite\n"
                f"op\nwrite {filetype}.raw\nac dec 5 1e6 1e10\nwrite {filetype}.raw\n"
                f"tran 10p 20n 0 5p\nwrite {filetype}.raw\nquit\n.endc\n.end\n")
        (tmp_path / f"{filetype}.cir").write_text(deck)
        (tmp_path / ".spiceinit").write_text(SPICEINIT)
        subprocess.run([ngspice_command(), "-b", f"{filetype}.cir"], cwd=tmp_path,
                       capture_output=True, timeout=120, check=True)
        plots[filetype] = read_raw(tmp_path / f"{filetype}.raw")

    binary, ascii_ = plots["binary"], plots["ascii"]
    assert [p.plotname for p in binary] == ["Operating Point", "AC Analysis", "Transient Analysis"]
    assert [p.names for p in binary] == [p.names for p in ascii_]
    assert np.iscomplexobj(binary[1].data["v(x1.s)"])
    for plot_b, plot_a in zip(binary, ascii_):
        for name in plot_b.names:
            np.testing.assert_allclose(plot_a.data[name], plot_b.data[name], rtol=1e-12,
                                       atol=1e-300)
    tran = binary[2]
    assert max_state_error(tran.data, "v(x1.s)", "time", PULSE_CORNERS, 1e-9) < NGSPICE_STATE_TOL


# ------------------------------------------------------------------------------------------
# openvaf-r, VACASK, admsXml


def vacask_netlist(source: str, taus: list[float]) -> str:
    """A VACASK netlist: one relax transient, then the same transient swept over ``taus``."""
    values = ", ".join(f"{tau:.6e}" for tau in taus)
    return f"""relax in VACASK
load "relax.osdi"
model rl relax tau=1e-09 v0={V0} r0={R0} k={K}
model vs vsource
ground 0
v1 (a 0) vs {source}
vm1 (a a1) vs dc=0
x1 (a1 0) rl
control
  abort always
  options tran_method="trap" reltol=1e-6 tran_fbr=0.01
  analysis tr1 tran step=1e-11 stop=2e-08 maxstep=5e-12
  sweep tau model="rl" parameter="tau" values=[{values}]
    analysis trtau tran step=1e-11 stop=2e-08 maxstep=5e-12
endc
"""


@pytest.mark.simulator
def test_vacask_matches_the_reference(vacask: None, tmp_path: Path) -> None:
    osdi = compile_va_cached(RELAX_VA, "relax", cache_dir=tmp_path / "cache")
    taus = [0.5e-9, 2e-9]

    plots = run_vacask(vacask_netlist(PULSE_VACASK, taus), {"relax.osdi": osdi})

    assert set(plots) == {"tr1", "trtau"}
    tr1 = plots["tr1"].data
    assert tr1["time"][-1] == pytest.approx(20e-9, rel=1e-12)
    assert max_state_error(tr1, "x1:s", "time", PULSE_CORNERS, 1e-9) < VACASK_STATE_TOL
    assert max_current_error(tr1["vm1:flow(br)"], tr1["time"], PULSE_CORNERS, 1e-9) < 5e-5
    sweeps = split_sweeps(plots["trtau"], "tau")
    assert [part["tau"][0] for part in sweeps] == pytest.approx(taus)
    for tau, part in zip(taus, sweeps):
        assert max_state_error(part, "x1:s", "time", PULSE_CORNERS, tau) < VACASK_STATE_TOL


@pytest.mark.simulator
def test_vacask_setup_failure_raises(vacask: None, tmp_path: Path) -> None:
    osdi = compile_va_cached(RELAX_VA, "relax", cache_dir=tmp_path)
    netlist = vacask_netlist(PULSE_VACASK, [1e-9]).replace("tau=1e-09", "tau=-1e-09")
    with pytest.raises(SimulationError, match="out of bounds"):
        run_vacask(netlist, {"relax.osdi": osdi})
    with pytest.raises(SimulationError, match=r"(?s)given as \['other\.osdi'\].*relax\.osdi"):
        run_vacask(vacask_netlist(PULSE_VACASK, [1e-9]), {"other.osdi": osdi})


@pytest.mark.simulator
def test_compile_error_names_the_line(openvaf: None, tmp_path: Path) -> None:
    lines = RELAX_VA.splitlines()
    bad_line = next(i for i, line in enumerate(lines) if "I(p,n)" in line)
    lines[bad_line] = "    I(p,n) <+ V(p,n) / undeclared_resistance;"
    source = tmp_path / "broken.va"
    source.write_text("\n".join(lines) + "\n")
    stale = tmp_path / "out" / "broken.osdi"
    stale.parent.mkdir()
    stale.write_bytes(b"old build")

    with pytest.raises(SimulationError, match=rf"broken\.va:{bad_line + 1}:") as info:
        compile_va(source, stale)

    assert "undeclared_resistance" in str(info.value) and "\x1b[" not in str(info.value)
    assert list(stale.parent.iterdir()) == []  # old .osdi deleted, no object files left


@pytest.mark.simulator
def test_compile_without_linker_is_detected(openvaf: None, tmp_path: Path,
                                            monkeypatch: pytest.MonkeyPatch) -> None:
    source = tmp_path / "relax.va"
    source.write_text(RELAX_VA)
    empty_bin = tmp_path / "bin"
    empty_bin.mkdir()
    monkeypatch.setenv("PATH", str(empty_bin))

    with pytest.raises(SimulationError, match=r"(?s)wrote no relax\.osdi.*'ld'.*binutils"):
        compile_va(source)

    assert sorted(path.name for path in tmp_path.iterdir()) == ["bin", "relax.va"]


@pytest.mark.simulator
def test_compile_cache_is_keyed_by_the_text(openvaf: None, tmp_path: Path) -> None:
    first = compile_va_cached(RELAX_VA, "relax", cache_dir=tmp_path)
    built_at = first.stat().st_mtime_ns
    again = compile_va_cached(RELAX_VA, "relax", cache_dir=tmp_path)
    other = compile_va_cached(RELAX_VA.replace("1e-9 from", "2e-9 from"), "relax",
                              cache_dir=tmp_path)

    assert again == first and again.stat().st_mtime_ns == built_at
    assert other != first
    assert sorted(tmp_path.iterdir()) == sorted([first, other])
    assert first.read_bytes()[:4] == b"\x7fELF"
    with pytest.raises(ValueError, match="identifier"):
        compile_va_cached(RELAX_VA, "../relax", cache_dir=tmp_path)


@pytest.mark.simulator
def test_admsxml_accepts_the_model_and_rejects_a_syntax_error(admsxml: None,
                                                              tmp_path: Path) -> None:
    good = tmp_path / "relax.va"
    good.write_text(RELAX_VA)
    admsxml_check(good)
    assert sorted(path.name for path in tmp_path.iterdir()) == ["relax.va"]  # ran elsewhere

    lines = RELAX_VA.splitlines()
    bad_line = next(i for i, line in enumerate(lines) if "tanh" in line)
    lines[bad_line] = lines[bad_line].rstrip(";")
    bad = tmp_path / "broken.va"
    bad.write_text("\n".join(lines) + "\n")
    with pytest.raises(SimulationError, match=rf"(?s)broken\.va.*line {bad_line + 2}"):
        admsxml_check(bad)
