"""Strict sympy printers for the generated code: an unsupported node is an error."""
from compactgen.targets.printing.verilog_a import VerilogAPrinter  # noqa: F401
from compactgen.targets.printing.ngspice import NgspicePrinter  # noqa: F401
