"""What wafer-stats does per device kind: the data it reads, the parameters a device's fit gives,
how a device's size enters the area law, and whether a Monte Carlo proof exists.

- stt-mtj: R-V and R-H loops per device give ra, tmr0, v_half, ki (and the loop offset); the size is
  the drawn diameter, the electrical one is drawn minus an offset estimated from R_P across sizes;
  the Monte Carlo proof compares R_P, R_AP and TMR per size in ngspice.
- dw-mtj: wall-velocity files per device (velocity versus current density and versus perpendicular
  field) give dmi, theta_sh and alpha (calibrate.dw_fit); the size is the MTJ area on the track
  (track_width x mtj_length, the area devices/dw_mtj.py scales mismatch with), given as ``area`` in
  the device table; no diameter offset.  Of the three, the kind varies only theta_sh (its VARIED
  list: ra, tmr0, theta_sh, h_dep, rho_hm); dmi and alpha get population statistics in the report,
  the CSV and [variation.population] but no sigma parameters, so nothing simulates them.  No Monte
  Carlo proof (see MC_NOTE_DW).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

MC_NOTE_DW = ("no Monte Carlo proof for dw-mtj: the measured quantity is the steady wall velocity of the flow "
              "regime, and the library's only output that the population's varied parameter theta_sh moves is the "
              "wall position in a transient with the card's pinning (h_dep, itself varied with the start card's "
              "sigma); comparing simulated and measured velocity distributions would need a transient velocity "
              "bench per instance, which wafer-stats does not have yet. The sigmas of theta_sh go into the card; "
              "dmi and alpha are not varied by the kind and are reported only.")


@dataclass(frozen=True)
class WaferKind:
    kind: str
    accepts: tuple[str, ...]  # measurement types read from the folder
    data_words: str  # what the data are, for messages
    fitted: dict  # parameters in device_fits.csv: name -> (unit, scale from SI)
    figures: dict  # fit figures kept per device: name -> (unit, scale from SI)
    offset: bool  # electrical diameter offset from R_P across sizes
    reported: tuple[str, ...]  # fitted, analysed like the varied ones, but not varied by the kind
    mc_note: str = ""  # why there is no Monte Carlo proof ("" when there is one)
    show: dict = field(default_factory=dict)  # report units: name -> (unit, scale)

    def size_text(self, drawn_diameter: float) -> str:
        """A drawn size as the device table gives it."""
        if self.offset:
            return f"{drawn_diameter * 1e9:.4g} nm"
        return f"{math.pi / 4 * (drawn_diameter * 1e9) ** 2:.5g} nm^2"

    def size_header(self) -> str:
        return "drawn diameter [nm]" if self.offset else "MTJ area on the track [nm^2]"

    def card_area(self, values: dict) -> float:
        """The card's own device area [m^2] (the reference size is the measured size nearest it)."""
        if self.kind == "dw-mtj":
            return values["mtj_length"] * values["track_width"]
        return math.pi / 4 * values["diameter"] ** 2

    def missing_data(self, datasets) -> str:
        """Why a device's data cannot determine the fitted parameters ("" when they can)."""
        kinds = {ds.kind for ds in datasets}
        if kinds != set(self.accepts):
            return f"only {', '.join(sorted(kinds))} data (needs {', '.join(self.accepts)})"
        if self.kind == "dw-mtj":
            import numpy as np

            if not any("field" in ds.columns and np.any(ds.columns["field"] != 0) for ds in datasets):
                return ("no field-driven wall velocities: without them theta_sh and alpha are not separated "
                        "(needs a velocity-versus-field file)")
        return ""


KINDS = {
    "stt-mtj": WaferKind(
        "stt-mtj", ("resistance-bias", "resistance-field"), "R-V and R-H",
        {"ra": ("ohm*um^2", 1e12), "tmr0": ("1", 1.0), "v_half": ("V", 1.0), "ki": ("mJ/m^2", 1e3),
         "offset_field": ("A/m", 1.0)},
        {"r_p": ("ohm", 1.0), "r_ap": ("ohm", 1.0), "mu0_hk_eff": ("mT", 1e3), "delta": ("1", 1.0)},
        offset=True, reported=("v_half",),
        show={"ra": ("ohm um^2", 1e12), "tmr0": ("", 1.0), "ki": ("mJ/m^2", 1e3), "v_half": ("V", 1.0)}),
    "dw-mtj": WaferKind(
        "dw-mtj", ("wall-velocity",), "wall-velocity",
        {"dmi": ("mJ/m^2", 1e3), "theta_sh": ("1", 1.0), "alpha": ("1", 1.0)},
        {"wall_width": ("nm", 1e9), "v_dmi": ("m/s", 1.0), "j_half": ("MA/cm^2", 1e-10)},
        offset=False, reported=("dmi", "alpha"), mc_note=MC_NOTE_DW,
        show={"dmi": ("mJ/m^2", 1e3), "theta_sh": ("", 1.0), "alpha": ("", 1.0)}),
}


def wafer_kind(card, where: str = "") -> WaferKind:
    """The wafer behaviour of ``card``'s kind; an InputError naming the card for any other kind."""
    from compactgen.errors import InputError

    spec = KINDS.get(card.kind)
    if spec is None:
        raise InputError(f"{where or card.name}: wafer statistics are wired for "
                         f"{' and '.join(sorted(KINDS))} cards (stt-mtj: R-V and R-H loops per device; dw-mtj: "
                         f"wall velocities per device); this card is {card.kind}")
    return spec
