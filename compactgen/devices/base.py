"""The device-kind interface and registry."""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from compactgen.errors import CardError
from compactgen.model.ir import ModelIR
from compactgen.model.params import ParamSpec, ParamTable


@dataclass(frozen=True)
class Option:
    """A non-numeric card setting of a device kind (``[options]`` table)."""

    name: str
    choices: tuple[str, ...]
    default: str
    desc: str


class DeviceKind:
    """Subclass per device kind; register with ``@register``."""

    key: str = ""
    title: str = ""
    summary: str = ""
    options: tuple[Option, ...] = ()

    def param_specs(self) -> list[ParamSpec]:
        raise NotImplementedError

    def table(self) -> ParamTable:
        return ParamTable(self.param_specs())

    def derive_defaults(self, values: dict[str, float], options: dict[str, str],
                        given: frozenset[str] = frozenset()) -> dict[str, float]:
        """Fill parameters computed from others at build time (e.g. demagnetising factors)."""
        return values

    def build_ir(self, name: str, values: dict[str, float], options: dict[str, str]) -> ModelIR:
        raise NotImplementedError

    def benches(self, ir: ModelIR, values: dict[str, float]):
        raise NotImplementedError

    # helpers ---------------------------------------------------------------------------
    def table_with(self, values: dict[str, float]) -> ParamTable:
        """The ParamTable whose defaults are the card's values."""
        return ParamTable([dataclasses.replace(s, default=values.get(s.name, s.default)) for s in self.param_specs()])


_REGISTRY: dict[str, DeviceKind] = {}


def register(cls):
    _REGISTRY[cls.key] = cls()
    return cls


def kinds() -> dict[str, DeviceKind]:
    """Every registered kind (the kinds register themselves when compactgen.devices is imported,
    which happens before this module runs)."""
    return dict(_REGISTRY)


def get_kind(key: str, where: str = "") -> DeviceKind:
    all_kinds = kinds()
    if key not in all_kinds:
        pre = f"{where}: " if where else ""
        raise CardError(f"{pre}unknown device kind {key!r}; expected one of {sorted(all_kinds)}")
    return all_kinds[key]
