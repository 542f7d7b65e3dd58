"""Shared pytest set-up: markers, and the rule for tests that need a simulator.

A test that needs a tool skips when the tool is missing, except when the environment sets
COMPACTGEN_REQUIRE_SIMULATORS=1 (as CI does): then the missing tool is a failure.
"""
from __future__ import annotations

import pytest

from compactgen.sim.tools import REQUIRE_ENV, available, require_simulators


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line("markers", "simulator: runs an external simulator or compiler")
    config.addinivalue_line("markers", "slow: takes more than a few seconds")


def needs(*tool_names: str) -> None:
    """Skip the calling test when a tool is missing, or fail it when simulators are required.

    Tool names are those of compactgen.sim.tools.available: "ngspice", "ngspice-cli", "ngspice-osdi",
    "vacask", "openvaf", "ld", "admsxml".
    """
    missing = [name for name in tool_names if not available(name)]
    if not missing:
        return
    message = f"missing tool(s): {', '.join(missing)}"
    if require_simulators():
        pytest.fail(f"{message}, and {REQUIRE_ENV}=1 requires every simulator", pytrace=False)
    pytest.skip(message)


@pytest.fixture
def ngspice() -> None:
    """The ngspice shared library (driven through PySpice)."""
    needs("ngspice")


@pytest.fixture
def ngspice_osdi() -> None:
    """An ngspice that loads compiled Verilog-A models (OSDI)."""
    needs("ngspice-osdi")


@pytest.fixture
def ngspice_cli() -> None:
    """The ngspice executable (batch mode)."""
    needs("ngspice-cli")


@pytest.fixture
def openvaf() -> None:
    """openvaf-r and the linker it calls."""
    needs("openvaf", "ld")


@pytest.fixture
def vacask() -> None:
    """VACASK, plus openvaf-r and ld to compile the models it loads."""
    needs("vacask", "openvaf", "ld")


@pytest.fixture
def admsxml() -> None:
    """The admsXml Verilog-A parser."""
    needs("admsxml")
