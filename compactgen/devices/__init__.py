"""Device kinds: physics blocks composed into a ModelIR, plus the benches that verify it."""
from __future__ import annotations

from .base import DeviceKind, get_kind, kinds  # noqa: F401
