"""ngspice B-source / .param expression printer.

ngspice's ``pow``, ``**`` and ``^`` act on |base| (a negative base loses its sign), so the base
class only prints a real power of a provably positive base; exp() saturates at 1e99 above an
argument of about 228, which the physics blocks avoid.
"""
from __future__ import annotations

import sympy as sp

from compactgen.targets.printing.base import StrictPrinter, format_number

#: resolution of a sampled value (2^-40 of the node's unit; a power of two, so the division is exact)
SAMPLE_STEPS = 2.0 ** 40


class Sampled(sp.Function):
    """``Sampled(x)`` is x taken at the simulator's last Newton iterate with no derivative: a
    monitor that reads the circuit without taking part in its Jacobian.  ngspice differentiates
    B-source expressions symbolically and gives nint() a derivative of 0, so the printer writes
    nint(x 2^40)/2^40 (x to 2^-40 ~ 9e-13 of its unit).  A monitor printed with derivatives
    reports its value linearised about the previous iterate, which for a quantity at zero (a
    bias magnitude at rest) can come out as a round-off below zero (-1e-21 was seen)."""

    nargs = 1


class NgspicePrinter(StrictPrinter):
    language = "ngspice"
    target = "ngspice"

    def _print_Piecewise(self, expr):
        # ngspice's manual asks for a space before '?'; the base form has one
        return super()._print_Piecewise(expr)

    def _print_Sampled(self, expr):
        k = format_number(SAMPLE_STEPS)
        return f"nint({k}*({self._print(expr.args[0])}))/{k}"
