"""Strict sympy printers for the generated code: an unsupported node is an error."""
from .verilog_a import VerilogAPrinter  # noqa: F401
from .ngspice import NgspicePrinter  # noqa: F401
