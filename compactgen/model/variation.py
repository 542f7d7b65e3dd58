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


#: where a card's process sigmas came from ([variation] origin)
ORIGINS = {
    "wafer": "a measured wafer population (compactgen wafer-stats): global spread from die to die, mismatch "
             "from devices of several areas on the same dies",
    "fit": "one device's fit: sigma_global_p = standard error / value (a fit's uncertainty, not a process spread)",
    "default": "illustrative defaults (no source)",
}
VARIATION_KEYS = ("origin", "summary", "correlated", "correlation", "intervals", "population")


def check_table(table, values: dict[str, float], where: str) -> dict:
    """The card's [variation] table, checked: ``origin`` one of ORIGINS, ``correlated`` varied
    parameters, ``correlation`` their global correlation (symmetric, unit diagonal, positive
    definite), ``intervals`` {parameter: [low, high]}, ``summary``/``population`` free text and table."""
    from compactgen.errors import CardError

    if not isinstance(table, dict):
        raise CardError(f"{where}: [variation] must be a table")
    for key in table:
        if key not in VARIATION_KEYS:
            raise CardError(f"{where}: unknown key [variation] {key!r}; allowed: {', '.join(VARIATION_KEYS)}")
    out = dict(table)
    if "origin" in out and out["origin"] not in ORIGINS:
        raise CardError(f"{where}: [variation] origin = {out['origin']!r}; expected one of {', '.join(ORIGINS)}")
    names = out.get("correlated", [])
    if not isinstance(names, list) or not all(isinstance(n, str) for n in names):
        raise CardError(f"{where}: [variation] correlated must be a list of parameter names")
    for n in names:
        if f"sigma_global_{n}" not in values:
            varied = sorted(k[len("sigma_global_"):] for k in values if k.startswith("sigma_global_"))
            raise CardError(f"{where}: [variation] correlated: {n!r} is not a varied parameter (varied: "
                            f"{', '.join(varied)})")
    if len(set(names)) != len(names):
        raise CardError(f"{where}: [variation] correlated names a parameter twice")
    if names or "correlation" in out:
        m = out.get("correlation")
        k = len(names)
        if (not isinstance(m, list) or len(m) != k
                or not all(isinstance(r, list) and len(r) == k for r in m)):
            raise CardError(f"{where}: [variation] correlation must be a {k} x {k} matrix (one row per name in "
                            f"correlated: {', '.join(names) or 'none given'})")
        for i, row in enumerate(m):
            for j, c in enumerate(row):
                if not isinstance(c, (int, float)) or isinstance(c, bool) or not -1.0 <= c <= 1.0:
                    raise CardError(f"{where}: [variation] correlation row {i + 1} ({names[i]}), column {j + 1} "
                                    f"({names[j]}): {c!r} is not a number in [-1, 1]")
                if i == j and abs(c - 1.0) > 1e-9:
                    raise CardError(f"{where}: [variation] correlation row {i + 1} ({names[i]}): the diagonal must "
                                    f"be 1 (got {c!r})")
                if abs(c - m[j][i]) > 1e-9:
                    raise CardError(f"{where}: [variation] correlation is not symmetric: row {i + 1}, column "
                                    f"{j + 1} is {c!r} but row {j + 1}, column {i + 1} is {m[j][i]!r}")
        if k and cholesky(m) is None:
            raise CardError(f"{where}: [variation] correlation is not positive definite (no set of draws can "
                            "have these correlations); check the signs and sizes of the entries")
    iv = out.get("intervals", {})
    if not isinstance(iv, dict):
        raise CardError(f"{where}: [variation] intervals must be a table of name = [low, high]")
    for key, pair in iv.items():
        if (not isinstance(pair, list) or len(pair) != 2
                or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in pair) or pair[0] > pair[1]):
            raise CardError(f"{where}: [variation.intervals] {key} = {pair!r}; expected [low, high] with low <= high")
    return out


def cholesky(matrix) -> list[list[float]] | None:
    """Lower Cholesky factor of a correlation matrix (plain Python), or None if it is not
    positive definite."""
    k = len(matrix)
    low = [[0.0] * k for _ in range(k)]
    for i in range(k):
        for j in range(i + 1):
            s = float(matrix[i][j]) - sum(low[i][m] * low[j][m] for m in range(j))
            if i == j:
                if s <= 1e-12:
                    return None
                low[i][i] = s ** 0.5
            else:
                low[i][j] = s / low[j][j]
    return low


def global_correlation(variation: dict) -> tuple:
    """(names, matrix) of a checked [variation] table's correlated global draws."""
    names = tuple(variation.get("correlated", ()))
    return (names, tuple(tuple(float(c) for c in row) for row in variation.get("correlation", ()))) if names else ()


def sigma_origin(card) -> tuple[str, str]:
    """(origin key, one line) saying where the card's sigmas came from: its [variation] origin,
    else 'fit' when [uncertainty] set some sigma_global, else 'default'."""
    key = card.variation.get("origin")
    if key is None:
        given = {n for n in card.given if n.startswith(("sigma_global_", "sigma_mismatch_"))}
        key = "fit" if card.uncertainty and not given else ("card" if given else "default")
    text = ORIGINS.get(key, "the card's own sigma values (no [variation] origin given)")
    return key, text


def varied_names(values: dict[str, float]) -> list[str]:
    """The varied parameters of a card's values (those with a sigma_global_*), in table order."""
    return [k[len("sigma_global_"):] for k in values if k.startswith("sigma_global_")]
