"""Physics blocks: every equation of compactgen exists once, here, as sympy.

Each function returns a sympy expression (or Matrix) of its arguments, which may be sympy
symbols or numbers, and names its published source in the docstring.  Device kinds in
``compactgen.devices`` compose these blocks into a ModelIR; the reference solver, both
printers and the datasheet are generated from that IR.
"""
from compactgen.physics.constants import CONST, const_values  # noqa: F401
