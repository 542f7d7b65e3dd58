"""ngspice B-source / .param expression printer.

ngspice's ``pow``, ``**`` and ``^`` act on |base| (a negative base loses its sign), so the base
class only prints a real power of a provably positive base; exp() saturates at 1e99 above an
argument of about 228, which the physics blocks avoid.
"""
from __future__ import annotations

from .base import StrictPrinter


class NgspicePrinter(StrictPrinter):
    language = "ngspice"
    target = "ngspice"

    def _print_Piecewise(self, expr):
        # ngspice's manual asks for a space before '?'; the base form has one
        return super()._print_Piecewise(expr)
