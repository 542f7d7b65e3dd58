"""Device cards: TOML files with every physical value written with its unit.

    [device]            kind, name, description
    [options]           non-numeric options of the device kind (e.g. demag = "cylinder")
    [parameters]        name = "value unit"   (units parsed with pint into SI)
    [uncertainty]       name = "value unit"   standard errors (written by `compactgen fit`)
    [provenance]        free-form table (written by `compactgen fit`)
    [variation]         where the process sigmas came from (written by `compactgen wafer-stats`):
                        origin, the correlation of the global draws, intervals (model/variation.py)

Every error names the file, the key, the value with its unit and what was expected.  A table or
key renamed in this release is still read under its old name, with a RenamedInCard warning
naming the new one (RENAMED_TABLES, RENAMED_KEYS, RENAMED_PREFIXES).
"""
from __future__ import annotations

import codecs
import difflib
import hashlib
import re
import tomllib
import warnings
from dataclasses import dataclass, field
from pathlib import Path

from compactgen.devices import get_kind, kinds
from compactgen.devices.common import shared_defaults
from compactgen.errors import CardError, InputError, RangeError, RenamedInCard, UnitError
from compactgen.model.ir import ModelIR
from compactgen.model.params import RESERVED, reserved_reason
from compactgen.model.units import to_si

_NAME = re.compile(r"^[a-z][a-z0-9_]{0,40}$")
TOP_TABLES = ("device", "options", "parameters", "uncertainty", "provenance", "variation")

#: renamed in this release, old name accepted (with a RenamedInCard warning) in this release only:
#: top-level tables, old -> (new, what it holds)
RENAMED_TABLES = {"model": ("options", "non-numeric options of the device kind")}
#: [parameters] and [uncertainty] keys, old -> (new, what it is)
RENAMED_KEYS = {"kb": ("kv", "bulk anisotropy")}
#: name prefixes of the process-variation parameters, old -> (new, what they are)
RENAMED_PREFIXES = {"sg_": ("sigma_global_", "global sigma"), "sl_": ("sigma_mismatch_", "mismatch sigma"),
                    "zg_": ("draw_global_", "global Monte Carlo draw"), "zl_": ("draw_mismatch_", "mismatch draw")}


def renamed_to(old: str) -> str | None:
    """The name a parameter renamed in this release has now (RENAMED_KEYS, RENAMED_PREFIXES), or None."""
    if old in RENAMED_KEYS:
        return RENAMED_KEYS[old][0]
    for prefix, (new, _) in RENAMED_PREFIXES.items():
        if old.startswith(prefix):
            return new + old[len(prefix):]
    return None


@dataclass
class Card:
    kind: str
    name: str
    description: str
    options: dict[str, str]
    values: dict[str, float]  # SI, every parameter of the kind (defaults and derived filled in)
    given: frozenset[str]
    path: Path | None = None
    text: str = ""
    uncertainty: dict[str, float] = field(default_factory=dict)
    provenance: dict = field(default_factory=dict)
    variation: dict = field(default_factory=dict)  # [variation] (checked by model/variation.check_table)

    @property
    def device(self):
        return get_kind(self.kind)

    def ir(self) -> ModelIR:
        memo = self.__dict__.pop("_ir_once", None)
        if memo is not None and memo[0] == self._ir_inputs():
            return memo[1]
        ir = self.device.build_ir(self.name, self.values, self.options)
        if self.variation.get("correlated"):
            from compactgen.model.variation import global_correlation

            ir.global_correlation = global_correlation(self.variation)
        return ir

    def _ir_inputs(self) -> tuple:
        return (self.kind, self.name, tuple(self.options.items()), tuple(self.values.items()))

    def _keep_ir_once(self, ir: ModelIR) -> None:
        """The IR parse_card built to check the card: the next ir() returns it instead of building
        it again, once, and only while the card still holds the values it was built from (a caller
        may change the IR it is given)."""
        self.__dict__["_ir_once"] = (self._ir_inputs(), ir)

    def __getstate__(self):
        state = dict(self.__dict__)
        state.pop("_ir_once", None)  # not worth pickling sympy trees to other processes
        return state

    def sha256(self) -> str:
        return hashlib.sha256(self.text.encode()).hexdigest()

    def with_values(self, values: dict[str, float], name: str | None = None) -> "Card":
        new = dict(self.values)
        new.update(values)
        return Card(self.kind, name or self.name, self.description, dict(self.options), new,
                    self.given | frozenset(values), None, "", dict(self.uncertainty), dict(self.provenance),
                    dict(self.variation))


def load_card(path: str | Path) -> Card:
    path = Path(path)
    if not path.is_file():
        raise CardError(f"{path}: no such card file")
    return parse_card(read_card_text(path), str(path), path)


_BOMS = ((codecs.BOM_UTF32_LE, None, "UTF-32"), (codecs.BOM_UTF32_BE, None, "UTF-32"),
         (codecs.BOM_UTF8, "utf-8-sig", "UTF-8"), (codecs.BOM_UTF16_LE, "utf-16", "UTF-16"),
         (codecs.BOM_UTF16_BE, "utf-16", "UTF-16"))  # UTF-32 first: its LE mark starts like UTF-16's


def read_card_text(path: Path) -> str:
    """A card file's text: UTF-8 (with or without a byte-order mark) or UTF-16 with a byte-order
    mark; anything else is a CardError naming the file and the encoding problem."""
    data = path.read_bytes()
    for bom, codec, label in _BOMS:
        if data.startswith(bom):
            if codec is None:
                raise CardError(f"{path}: {label} text (byte-order mark found); save the card as UTF-8")
            try:
                return data.decode(codec)
            except UnicodeDecodeError as exc:
                raise CardError(f"{path}: starts with a {label} byte-order mark but byte {exc.start} cannot be "
                                f"decoded as {label}; save the card as UTF-8") from None
    if b"\x00" in data:
        raise CardError(f"{path}: contains NUL bytes, as UTF-16 or UTF-32 text without a byte-order mark does; "
                        "save the card as UTF-8")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise CardError(f"{path}: line {line}, column {column}: byte 0x{data[exc.start]:02x} is not UTF-8 (a card "
                        "must be UTF-8, or UTF-16 with a byte-order mark; e.g. Latin-1 text needs converting)") from None


def parse_card(text: str, where: str = "<card>", path: Path | None = None) -> Card:
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CardError(f"{where}: not valid TOML: {exc}") from None
    doc = _renamed_tables(doc, where)
    _no_unknown(doc, TOP_TABLES, where, "top-level table")
    dev = doc.get("device")
    if not isinstance(dev, dict):
        raise CardError(f"{where}: missing table [device] with keys kind and name")
    _no_unknown(dev, ("kind", "name", "description"), where, "key in [device]")
    for key in ("kind", "name"):
        if key not in dev:
            raise CardError(f"{where}: [device] {key} is missing")
    kind = get_kind(str(dev["kind"]), where=f"{where}: [device] kind")
    name = dev["name"]
    if not isinstance(name, str) or not _NAME.match(name):
        raise CardError(f"{where}: [device] name = {name!r} must be lower-case letters, digits and _ , "
                        "starting with a letter (it becomes the Verilog-A module and .subckt name)")
    if name in RESERVED:
        raise CardError(f"{where}: [device] name = {name!r} is reserved: {reserved_reason(name)}; choose another "
                        "model name (it becomes the Verilog-A module, .subckt and VACASK model name)")
    options = {o.name: o.default for o in kind.options}
    given_opts = doc.get("options", {})
    _no_unknown(given_opts, tuple(options), where, "key in [options]")
    for o in kind.options:
        if o.name in given_opts:
            v = given_opts[o.name]
            if v not in o.choices:
                raise CardError(f"{where}: [options] {o.name} = {v!r}; expected one of {list(o.choices)}")
            options[o.name] = v
    table = kind.table()
    params = doc.get("parameters", {})
    if not isinstance(params, dict):
        raise CardError(f"{where}: [parameters] must be a table")
    params = _renamed_keys(params, table.names(), where, "parameters")
    _no_unknown(params, tuple(table.names()), where, "parameter in [parameters]")
    values: dict[str, float] = {}
    for spec in table:
        key = f"{where}: [parameters] {spec.name}"
        if spec.name not in params:
            if spec.required:
                raise CardError(f"{key} is missing; expected a value in {spec.range_text(spec.card_unit)} ({spec.desc})")
            values[spec.name] = spec.default
            continue
        try:
            v = to_si(params[spec.name], spec.unit, where=key, hint_unit=spec.card_unit)
        except UnitError as exc:
            raise UnitError(f"{exc} (allowed range {spec.range_text(spec.card_unit)})") from None
        try:
            spec.check(v)
        except RangeError:
            raise RangeError(f"{key} = {params[spec.name]!r} is outside the allowed range "
                             f"{spec.range_text(spec.card_unit)} ({spec.desc})") from None
        values[spec.name] = v
    given = frozenset(params)
    values = shared_defaults(table, kind.derive_defaults(values, options, given), given)
    uncertainty = {}
    for k, v in _renamed_keys(doc.get("uncertainty", {}), table.names(), where, "uncertainty").items():
        if k not in table:
            raise CardError(f"{where}: [uncertainty] {k}: not a parameter of {kind.key}")
        uncertainty[k] = to_si(v, table[k].unit, where=f"{where}: [uncertainty] {k}", hint_unit=table[k].card_unit)
    from compactgen.model.variation import sigmas_from_uncertainty

    values = sigmas_from_uncertainty(values, uncertainty, given)
    from compactgen.model.variation import check_table

    variation = check_table(doc.get("variation", {}), values, where)
    card = Card(kind.key, name, str(dev.get("description", "")), options, values, given, path, text,
                uncertainty, dict(doc.get("provenance", {})), variation)
    try:
        from compactgen.model.evaluate import numeric_parameters

        ir = card.ir()
        numeric_parameters(ir)
    except RangeError as exc:
        raise RangeError(f"{where}: {exc}") from None
    card._keep_ir_once(ir)
    return card


def _renamed_tables(doc: dict, where: str) -> dict:
    """``doc`` with each renamed top-level table under its new name (a warning for each)."""
    out = dict(doc)
    for old, (new, what) in RENAMED_TABLES.items():
        if old not in out:
            continue
        if new in out:
            raise CardError(f"{where}: both [{old}] and [{new}] given; [{old}] is the old name of [{new}] "
                            f"({what}): keep [{new}] only")
        warnings.warn(f"card {where}: table [{old}] is renamed [{new}] ({what}); [{old}] is accepted in this "
                      "release only", RenamedInCard, stacklevel=3)
        out[new] = out.pop(old)
    return out


def _renamed_key(key: str, names) -> tuple[str, str] | None:
    """(new name, what it is) when ``key`` is the old name of one of ``names``, else None."""
    if key in RENAMED_KEYS and RENAMED_KEYS[key][0] in names:
        return RENAMED_KEYS[key]
    for old, (new, what) in RENAMED_PREFIXES.items():
        if key.startswith(old) and new + key[len(old):] in names:
            return new + key[len(old):], what
    return None


def _renamed_keys(table, names, where: str, section: str):
    """``table`` with each renamed key under its new name (a warning for each); anything but a
    table is returned as it is, for the caller's own error."""
    if not isinstance(table, dict):
        return table
    names = set(names)
    out = {}
    for key, value in table.items():
        hit = None if key in names else _renamed_key(key, names)
        if hit is None:
            out[key] = value
            continue
        new, what = hit
        if new in table:
            raise CardError(f"{where}: [{section}] both {key} and {new} given; {key} is the old name of {new} "
                            f"({what}): keep {new} only")
        warnings.warn(f"card {where}: key [{section}] {key} is renamed {new} ({what}); {key} is accepted in this "
                      "release only", RenamedInCard, stacklevel=3)
        out[new] = value
    return out


def _no_unknown(table: dict, allowed: tuple[str, ...], where: str, what: str) -> None:
    for key in table:
        if key not in allowed:
            near = difflib.get_close_matches(key, allowed, n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else f"; allowed: {', '.join(allowed)}"
            raise CardError(f"{where}: unknown {what} {key!r}{hint}")


def card_text(kind_key: str, name: str, values: dict[str, float] | None = None, description: str = "",
              options: dict[str, str] | None = None, uncertainty: dict[str, float] | None = None,
              provenance: dict | None = None, header: str = "", given: frozenset[str] = frozenset(),
              variation: dict | None = None) -> str:
    """A complete, commented card: every parameter with unit, allowed range and meaning."""
    kind = get_kind(kind_key)
    values = values or {}
    opts = {o.name: o.default for o in kind.options}
    opts.update(options or {})
    lines = [f"# compactgen device card: {kind.title}."]
    if header:
        lines += [f"# {h}" for h in header.splitlines()]
    lines += ["# Every physical value is a string with its unit; comments give the allowed range and meaning.", "",
              "[device]", f'kind = "{kind.key}"', f'name = "{name}"',
              f'description = "{description or kind.summary}"', ""]
    if kind.options:
        lines.append("[options]")
        for o in kind.options:
            lines.append(f"# {o.desc}; one of {', '.join(o.choices)}")
            lines.append(f'{o.name} = "{opts[o.name]}"')
        lines.append("")
    lines.append("[parameters]")
    group = None
    for spec in kind.table():
        if spec.group != group:
            group = spec.group
            lines.append(f"# --- {group} ---")
        v = values.get(spec.name, spec.default)
        text = spec.card_text(v)
        val = f'"{text}"' if (spec.card_unit or spec.unit) not in ("1", "") else text
        req = "required; " if spec.required else ""
        rng = spec.range_text(spec.card_unit)
        if spec.computed and spec.name not in given:
            lines.append(f"# {spec.name} = {val}  # {spec.desc}; computed {spec.computed}; range {rng}")
        else:
            lines.append(f"{spec.name} = {val}  # {req}{spec.desc}; range {rng}")
        if spec.source and not spec.source.startswith("illustrative"):
            lines.append(f"#   source: {spec.source}")
    if uncertainty:
        lines += ["", "[uncertainty]  # one standard error of each fitted parameter"]
        for k, u in uncertainty.items():
            spec = kind.table()[k]
            text = spec.card_text(u)
            lines.append(f'{k} = "{text}"' if (spec.card_unit or spec.unit) not in ("1", "") else f"{k} = {text}")
    if provenance:
        lines += [""]
        lines += _toml_table({"provenance": provenance})  # nested tables stay under [provenance.*]
    if variation:
        lines += ["", "# where the process sigmas of [parameters] came from; the Monte Carlo sections draw the global",
                  "# draws of `correlated` with `correlation` (model/variation.py)"]
        lines += _toml_table({"variation": variation})
    return "\n".join(lines) + "\n"


def _toml_table(d: dict) -> list[str]:
    import tomli_w

    return tomli_w.dumps(d).splitlines()


def starter_card(kind_key: str, name: str | None = None) -> str:
    kind = get_kind(kind_key)
    return card_text(kind.key, name or kind.key.replace("-", "_"), header=(
        "Starter values are illustrative, not a measured stack: replace them with your own or fit them\n"
        "with `compactgen fit`."))


def all_kinds() -> list[str]:
    return sorted(kinds())


__all__ = ["Card", "load_card", "parse_card", "card_text", "starter_card", "InputError"]
