"""Verilog-A expression printer (openvaf-r / ADMS dialect)."""
from __future__ import annotations

from compactgen.targets.printing.base import StrictPrinter


class VerilogAPrinter(StrictPrinter):
    language = "Verilog-A"
    target = "Verilog-A"
