"""Process corners and Monte Carlo as multipliers on calibrated parameters.

One sigma definition for the whole tool:

    p_eff = p * exp( sigma_global_p * (dir_p * corner + draw_global_p)
                     + sigma_mismatch_p * sqrt(area_ref / area) * draw_mismatch_p )

- ``sigma_global_p`` is the relative one-standard-deviation spread of parameter p from lot to lot
  and wafer to wafer (global variation); from a fit it is the standard error over the value
  (card [uncertainty]), otherwise the card's or the default value below.
- ``corner`` is the process corner as a number of global sigmas: 0 typical (tt), +3 slow (ss),
  -3 fast (ff).  ``dir_p`` says which way "slow" moves p: larger RA, alpha and K_i (more
  current needed, less current at a given voltage), smaller TMR and eta.
- ``draw_global_p`` (model level, one value per circuit) and ``draw_mismatch_p`` (per instance)
  are standard-normal draws for global Monte Carlo and local mismatch; ``sigma_mismatch_p`` is the
  relative mismatch sigma of a device of area ``area_ref``, scaled with 1/sqrt(area) (Pelgrom area
  law: M. J. M. Pelgrom, A. C. J. Duinmaijer and A. P. G. Welbers, IEEE J. Solid-State Circuits 24, 1433 (1989)).
- The multiplier is log-normal, so a parameter never changes sign.

The default spreads are illustrative (no source): replace them with your foundry's data.
"""
from __future__ import annotations

import sympy as sp

from compactgen.model.params import ParamSpec

#: corner name -> corner z (global sigmas); Monte Carlo is run on the typical mean only
CORNERS = {"tt": 0.0, "ss": 3.0, "ff": -3.0}


def variation_specs(varied) -> list[ParamSpec]:
    """Parameters of the variation: ``varied`` is a list of (name, direction, global sigma,
    mismatch sigma at area_ref)."""
    g = "process variation"
    out = [
        ParamSpec("corner", "1", 0.0, -6.0, 6.0, "process corner in global sigmas: 0 tt, +3 ss (slow), -3 ff (fast)",
                  group=g),
        ParamSpec("area_ref", "m^2", 1e-15, 1e-18, 1e-9,
                  "device area at which the mismatch sigmas sigma_mismatch_* hold", card_unit="um^2", group=g),
    ]
    for name, direction, sigma_global, sigma_mismatch in varied:
        way = "larger" if direction > 0 else "smaller"
        out += [
            ParamSpec(f"sigma_global_{name}", "1", sigma_global, 0.0, 1.0,
                      f"relative global (lot/wafer) sigma of {name}; the ss corner makes {name} {way}",
                      source="illustrative default, no source; from the fit's standard error when the card has one",
                      group=g),
            ParamSpec(f"sigma_mismatch_{name}", "1", sigma_mismatch, 0.0, 1.0,
                      f"relative mismatch sigma of {name} at area_ref",
                      source="illustrative default, no source", group=g),
            ParamSpec(f"draw_global_{name}", "1", 0.0, -10.0, 10.0,
                      f"global Monte Carlo draw of {name} (standard normal)", group=g),
            ParamSpec(f"draw_mismatch_{name}", "1", 0.0, -10.0, 10.0,
                      f"local mismatch draw of {name} (standard normal)", kind="instance", group=g),
        ]
    return out


def apply_variation(parts, varied, area) -> dict[str, sp.Symbol]:
    """Replace each varied parameter in ``parts.P`` by its varied value (a derived quantity);
    ``area`` is the nominal device area for the mismatch scaling.  Returns name -> multiplier."""
    P = parts.P
    mult = {}
    for name, direction, _, _ in varied:
        exponent = (P[f"sigma_global_{name}"] * (direction * P["corner"] + P[f"draw_global_{name}"])
                    + P[f"sigma_mismatch_{name}"] * sp.sqrt(P["area_ref"] / area) * P[f"draw_mismatch_{name}"])
        mult[name] = parts.d(f"vm_{name}", sp.exp(exponent), positive=True)
        P[name] = parts.d(f"{name}_v", P[name] * mult[name], positive=P[name].is_positive is True)
    return mult


def sigmas_from_uncertainty(values: dict[str, float], uncertainty: dict[str, float], given) -> dict[str, float]:
    """sigma_global_p = standard error / |value| for every varied p the card's [uncertainty] names,
    unless the card sets sigma_global_p itself."""
    out = dict(values)
    for name, err in uncertainty.items():
        key = f"sigma_global_{name}"
        if key in out and key not in given and values.get(name):
            out[key] = min(abs(err / values[name]), 1.0)
    return out


#: name prefixes of the statistical draws: global (draw_global_, one value per circuit) and local
#: (draw_mismatch_, per instance)
DRAW_PREFIXES = ("draw_global_", "draw_mismatch_")


def is_draw(name: str) -> bool:
    """True for a statistical-draw parameter (a standard-normal value a Monte Carlo run draws)."""
    return name.startswith(DRAW_PREFIXES)
