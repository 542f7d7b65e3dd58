"""Building pieces of three-terminal cells: a heavy-metal write line with a tunnel junction
standing on it.

Ports ``w1 w2 t``: the two write-line ends (+x runs from w1 to w2) and the junction's top
electrode.  The junction's bottom is the write line itself at the tap position: the internal
electrical node ``mid`` splits the line into two resistors, so read and write currents share
that node as in a real cell.  Composes physics blocks only.
"""
from __future__ import annotations

import sympy as sp

from compactgen.model.ir import Branch, Node, Terminal
from compactgen.model.params import ParamSpec
from compactgen.physics import heavy_metal
from compactgen.devices.common import NM, Parts

UOHM_CM = 1e-8


def heavy_metal_specs() -> list[ParamSpec]:
    g = "heavy-metal line"
    return [
        ParamSpec("rho_hm", "ohm*m", 200 * UOHM_CM, 1 * UOHM_CM, 1e4 * UOHM_CM,
                  "resistivity of the heavy-metal line (include the ferromagnet's shunt if it matters)",
                  source="beta-W ~200-260, beta-Ta ~190, Pt ~20-40 uohm cm: values from memory, no source",
                  card_unit="uohm*cm", required=True, group=g),
        ParamSpec("t_hm", "m", 5 * NM, 0.5 * NM, 100 * NM, "heavy-metal line thickness", card_unit="nm",
                  required=True, group=g),
        ParamSpec("theta_sh", "1", 0.3, -2.0, 2.0,
                  "signed effective spin Hall angle, > 0 for Pt below the ferromagnet: spin polarisation "
                  "sigma = x_hat cross z_hat = -y for current along +x; the sign flips for beta-Ta or beta-W, or "
                  "with the metal on top",
                  source="Pt ~+0.06-0.1: L. Liu et al., PRL 106, 036601 (2011); beta-Ta ~-0.12..-0.15: L. Liu et al., "
                         "Science 336, 555 (2012); beta-W ~-0.3: C.-F. Pai et al., APL 101, 122404 (2012) "
                         "(the values, signs and journal references are from memory)",
                  required=True, group=g),
        ParamSpec("xi_sot", "1", 0.0, -5.0, 5.0,
                  "field-like to damping-like ratio of the spin-orbit torque (the field-like field xi_sot H_SH points along sigma)",
                  source="stack dependent; ~0 up to >1 in Ta/CoFeB: from memory, no source", group=g),
    ]


def three_terminal(parts: Parts, r_w1: sp.Expr, r_w2: sp.Expr) -> dict:
    """The write line split at the junction into two resistors ``r_w1`` (w1 to mid) and ``r_w2``
    (mid to w2).  Returns terminals, the internal node, voltage probes, the two line branches,
    the line currents i_w1 (w1 -> mid) and i_w2 (mid -> w2), and the junction bias symbol v_tm."""
    r_w1 = parts.d("r_w1", r_w1, positive=True)
    r_w2 = parts.d("r_w2", r_w2, positive=True)
    v_w1 = sp.Symbol("v_w1m", real=True)
    v_w2 = sp.Symbol("v_mw2", real=True)
    v_tm = sp.Symbol("v_tm", real=True)
    i_w1 = parts.loc("i_w1", v_w1 / r_w1)
    i_w2 = parts.loc("i_w2", v_w2 / r_w2)
    return dict(
        terminals=[Terminal("w1", "write-line end at x = 0 (current into w1 flows along +x)"),
                   Terminal("w2", "write-line end at the far side (+x)"),
                   Terminal("t", "top electrode of the tunnel junction (reference-layer side)")],
        nodes=[Node("mid", "write line under the junction = junction bottom (free-layer side)")],
        voltages={v_w1: ("w1", "mid"), v_w2: ("mid", "w2"), v_tm: ("t", "mid")},
        branches=[Branch("w1", "mid", i_w1, "write line, w1 to the junction"),
                  Branch("mid", "w2", i_w2, "write line, junction to w2")],
        i_w1=i_w1, i_w2=i_w2, v_tm=v_tm,
    )


def line_current_density(parts: Parts, name: str, current, width):
    """Local: charge current density in the heavy metal for ``current`` along +x."""
    return parts.loc(name, heavy_metal.current_density(current, width, parts.P["t_hm"]))


#: the "resistance" plot of a junction read with w1 = w2 = 0: the read port's V(t)/I(t) holds the
#: junction and, from mid to ground, the two line parts w1-mid and mid-w2 in parallel
READ_PORT_LABEL = "read-port R = V(t)/I(t) [ohm]\n(junction + line parts w1-mid || mid-w2)"
#: the "resistance" plot of the line bench (w2 = t = 0): w1-mid, then mid-w2 || the junction
LINE_PORT_LABEL = "V(w1)/I(w1) [ohm]\n(w1-mid + (mid-w2 || junction))"

WHY_DC = ("DC operating point with an internal node: only the Newton tolerance (reltol 1e-6) and 17-digit "
          "parameter printing separate the simulators from the reference; 0.1 % bounds both with margin")
WHY_RLINE = WHY_DC + "; every run must give the line resistance rho L/(w t) to 1e-6"


def line_resistance_bench(r_line: float, v_lim: float = 0.5):
    """DC bench: w1 swept -v_lim..v_lim (default 0.5 V; a kind may lower it to its calibrated
    range) with w2 and t at 0 V; the line resistance from the port currents and the junction node's
    voltage must be rho L/(w t)."""
    from compactgen.harness.benches import Bench, Metric, line_resistance_at

    return Bench(
        "line_r", f"write-line resistance: w1 swept {-v_lim:.3g}..{v_lim:.3g} V, w2 = t = 0", "dc", {},
        [Metric(f"R(w1-w2) at {v:+.{_digits(v_lim)}f} V", "ohm", line_resistance_at("w1", "w2", "mid", v), 1e-3, 0.0,
                WHY_RLINE, expect=(r_line, 1e-6 * r_line)) for v in (-v_lim, 0.2 * v_lim, v_lim)],
        sweep=("w1", -v_lim, v_lim, v_lim / 10), plot=("resistance",), labels={"resistance": LINE_PORT_LABEL})


def _digits(v: float) -> int:
    """Decimals that show a sweep point of a sweep up to ``v`` (2 for 0.5 V, as before)."""
    import math

    return max(2, 1 - math.floor(math.log10(0.2 * v)))


CONVENTIONS = [
    "Ports in order: w1, w2 (write-line ends; +x runs from w1 to w2), t (junction top electrode, "
    "reference-layer side). The junction bottom is the write line itself (internal node mid), so read "
    "and write currents share it.",
    "Spin polarisation of the spin Hall current injected into the ferromagnet (heavy metal below) is "
    "sigma = sign(theta_sh) (x_hat cross z_hat) = -sign(theta_sh) y for current along +x (from w1 to w2); "
    "theta_sh > 0 for Pt, < 0 for beta-Ta and beta-W.",
    "Reference layer along +z: m_z = +1 under the junction is the parallel (low-resistance) state.",
]


def line_drive(model, current: float) -> dict[str, float]:
    """Port voltages that send ``current`` along +x through the whole line with no current
    through the junction: w1 = I r_w1, w2 = -I r_w2, t = 0 puts the junction bottom at 0 V."""
    r = {str(k): v for k, v in model.num.items() if str(k) in ("r_w1", "r_w2")}
    return {"w1": current * r["r_w1"], "w2": -current * r["r_w2"], "t": 0.0}
