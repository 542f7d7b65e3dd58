"""Device kinds: physics blocks composed into a ModelIR, plus the benches that verify it."""
from __future__ import annotations

from compactgen.devices.base import DeviceKind, get_kind, kinds  # noqa: F401

# each kind registers itself (devices.base.register) when imported
from compactgen.devices import dw_mtj, sot_mtj, stt_mtj  # noqa: F401,E402
