"""Simulator drivers: ngspice (shared library, batch), VACASK, openvaf-r, admsXml, raw files."""
from compactgen.sim.ngspice import NgspiceWorker, run_ngspice, run_ngspice_batch, run_ngspice_many
from compactgen.sim.rawfile import RawPlot, read_raw, split_sweeps
from compactgen.sim.tools import REQUIRE_ENV, admsxml_command, available, ngspice_command, ngspice_library, ngspice_shared, openvaf_command, require_simulators, vacask_command
from compactgen.sim.vacask import admsxml_check, compile_va, compile_va_cached, run_vacask

__all__ = [
    "REQUIRE_ENV", "NgspiceWorker", "RawPlot", "admsxml_check", "admsxml_command", "available",
    "compile_va", "compile_va_cached", "ngspice_command", "ngspice_library", "ngspice_shared",
    "openvaf_command", "read_raw", "require_simulators", "run_ngspice", "run_ngspice_batch",
    "run_ngspice_many", "run_vacask", "split_sweeps", "vacask_command",
]
