"""ParamSpec: the single source of a parameter's name, unit, default, range, meaning and source.

One table of ParamSpecs per device kind feeds card validation, the starter card, the
Verilog-A declarations (``units``/``desc`` attributes and ``from`` ranges), the ngspice
``.subckt`` parameter line and the datasheet.  Names are identical in the card, in sympy,
in Verilog-A and in ngspice, so they are lower-case snake case and checked against the
reserved words of every target.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import sympy as sp

from compactgen.errors import RangeError

def _words(text: str) -> frozenset[str]:
    return frozenset(text.split())


#: Names a model or a parameter may not take because a target language, a simulator or
#: compactgen's own generated text owns them.  Model and parameter names are identical in the
#: card, Verilog-A, ngspice and VACASK, so one list serves every target.  Group -> words; the
#: group's key is the reason given when a name is refused.  All lower case: the names are.
RESERVED_GROUPS: dict[str, frozenset[str]] = {
    # IEEE/Accellera Verilog-AMS LRM 2.4 keyword list, Verilog-2005 keywords included (from memory)
    "a Verilog-A/Verilog-AMS keyword": _words("""
        above abs absdelay absdelta abstol access acos acosh ac_stim aliasparam always analog analysis and
        asin asinh assert assign atan atan2 atanh automatic begin branch buf bufif0 bufif1 case casex casez
        ceil cell cmos config connect connectmodule connectrules continuous cos cosh cross ddt ddt_nature ddx
        deassign default defparam design disable discipline discrete domain driver_update edge else end
        endcase endconfig endconnectrules enddiscipline endfunction endgenerate endmodule endnature
        endparamset endprimitive endspecify endtable endtask event exclude exp final_step flicker_noise floor
        flow for force forever fork from function generate genvar ground highz0 highz1 hypot idt idtmod
        idt_nature if ifnone incdir include inf initial initial_step inout input instance integer join
        laplace_nd laplace_np laplace_zd laplace_zp large last_crossing liblist library limexp ln
        localparam log macromodule max medium merged min module nand nature negedge net_resolution nmos
        noise_table noise_table_log nor noshowcancelled not notif0 notif1 or output parameter paramset pmos
        posedge potential pow primitive pull0 pull1 pulldown pullup pulsestyle_ondetect pulsestyle_onevent
        rcmos real realtime reg release repeat resolveto rnmos rpmos rtran rtranif0 rtranif1 scalared
        showcancelled signed sin sinh slew small specify specparam split sqrt string strong0 strong1 supply0
        supply1 table tan tanh task time timer tran tranif0 tranif1 transition tri tri0 tri1 triand trior
        trireg units unsigned use uwire vectored wait wand weak0 weak1 while white_noise wire wor wreal xnor
        xor zi_nd zi_np zi_zd zi_zp
        """),
    # natures and disciplines declared by the standard header disciplines.vams, which every
    # generated module includes (Verilog-AMS LRM 2.4 annex, from memory)
    "a nature or discipline of disciplines.vams": _words("""
        logic ddiscrete electrical voltage current magnetic magnetomotive_force flux thermal temperature
        power kinematic kinematic_v position velocity acceleration impulse rotational rotational_omega angle
        angular_velocity angular_acceleration angular_force
        """),
    # ngspice manual: dot-commands of a netlist and the X-line keyword "params:" (from memory)
    "an ngspice/SPICE netlist keyword or dot-command": _words("""
        ac alias alter altermod appendmodel control csparam data dc disto else elseif end endc enddata endif
        endl ends four func global ic if include lib meas measure model net noise nodeset op option options
        param params plot print probe pss pz save sens sp subckt temp tf title tran width
        """),
    # ngspice manual: model types of .model lines (from memory)
    "an ngspice model type": _words("""
        r c l d sw csw npn pnp njf pjf nmos pmos nmf pmf urc ltra txl cpl vdmos
        """),
    # ngspice manual: functions and built-in values of B-source and .param expressions (from memory)
    "an ngspice expression function or built-in value": _words("""
        abs acos acosh asin asinh atan atanh cos cosh exp ln log log10 sin sinh sqrt tan tanh u u2 uramp
        ceil floor nint int sgn min max pow pwr pwl ternary_fcn agauss gauss aunif unif limit i v time
        temper hertz pi e boltzmann planck echarge kelvin
        """),
    # VACASK manual: netlist keywords, analyses and built-in devices (from memory)
    "a VACASK netlist keyword, analysis or built-in device": _words("""
        load include section endsection model subckt ends parameters ground global control endc options
        analysis sweep save print abort var postprocess embed elaborate op dc ac tran noise hb dcinc dcxf
        acxf vsource isource resistor capacitor inductor vcvs vccs ccvs cccs mutual
        """),
    # Verilog compiler directives and system functions without their ` or $ (from memory)
    "a Verilog-A compiler directive or system function name": _words("define undef ifdef ifndef elsif abstime"),
    # instance parameters simulators add to every instance (SPICE multiplicity and scaling)
    "an instance parameter simulators add (m, mult, area, scale)": _words("m mult area scale"),
    # compactgen's generated text: VACASK deck model names (templates/vacask/*.sim.j2, ensemble.py,
    # corners.py), .lib section names (render.py), and names the model text uses for itself
    # (templates/verilog_a/model.va.j2, templates/ngspice/model.lib.j2)
    "a name compactgen's generated decks or libraries use": _words("""
        dut_m vsrc isrc m_tt m_ss m_ff tt ss ff mc mc_global mc_local xdut clk temp_c tnom_c dtemp_c vt
        """),
}
#: every reserved word (model and parameter names)
RESERVED = frozenset().union(*RESERVED_GROUPS.values())


def reserved_reason(name: str) -> str:
    """Why ``name`` is reserved ("" if it is not): the first group that owns it."""
    return next((why for why, words in RESERVED_GROUPS.items() if name in words), "")


_NAME = re.compile(r"^[a-z][a-z0-9_]{0,30}$")


@dataclass(frozen=True)
class ParamSpec:
    """One model or instance parameter (SI units throughout)."""

    name: str
    unit: str  # SI unit, pint syntax; "1" for dimensionless
    default: float
    lo: float
    hi: float
    desc: str
    source: str = "illustrative default, no source"
    kind: str = "model"  # "model" or "instance"
    lo_open: bool = False
    hi_open: bool = False
    card_unit: str | None = None  # unit the starter card writes the default in
    group: str = "general"
    required: bool = False  # a card must give it (no sensible default exists)
    computed: str = ""  # non-empty: the default is computed at build time (says from what)

    def __post_init__(self):
        if not _NAME.match(self.name) or self.name in RESERVED:
            raise ValueError(f"parameter name {self.name!r} is not allowed (reserved or not snake case)")
        if self.kind not in ("model", "instance"):
            raise ValueError(f"parameter {self.name}: kind must be 'model' or 'instance'")
        self.check(self.default, where=f"default of {self.name}")

    @property
    def symbol(self) -> sp.Symbol:
        return symbol_for(self)

    def check(self, value: float, where: str = "") -> float:
        """Return ``value`` if it is inside the allowed range, else raise RangeError."""
        if not math.isfinite(value):
            raise RangeError(f"{where or self.name}: value {value!r} [{self.unit}] is not finite")
        lo_bad = value < self.lo or (self.lo_open and value == self.lo)
        hi_bad = value > self.hi or (self.hi_open and value == self.hi)
        if lo_bad or hi_bad:
            raise RangeError(
                f"{where or self.name}: value {value:.6g} [{self.unit}] is outside the allowed range "
                f"{self.range_text()} ({self.desc})"
            )
        return value

    def range_text(self, unit: str | None = None) -> str:
        """The allowed range, in ``unit`` (default: the SI unit)."""
        from compactgen.model.units import from_si

        unit = unit or self.unit
        conv = (lambda x: x) if unit == self.unit else (lambda x: x if math.isinf(x) else from_si(x, self.unit, unit))
        lb = "(" if self.lo_open else "["
        rb = ")" if self.hi_open else "]"
        u = "" if unit in ("1", "") else f" {unit}"
        return f"{lb}{_fmt(conv(self.lo))}, {_fmt(conv(self.hi))}{rb}{u}"

    def card_text(self, value: float | None = None) -> str:
        """The value as written in a card, in the card unit."""
        from compactgen.model.units import from_si

        v = self.default if value is None else value
        unit = self.card_unit or self.unit
        num = float(f"{from_si(v, self.unit, unit):.12g}")
        if unit in ("1", ""):
            return repr(num)
        return f"{num!r} {unit}"


def _fmt(x: float) -> str:
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:.6g}"


def symbol_for(spec: ParamSpec) -> sp.Symbol:
    assumptions = {"real": True}
    if spec.lo > 0 or (spec.lo == 0 and spec.lo_open):
        assumptions["positive"] = True
    elif spec.lo >= 0:
        assumptions["nonnegative"] = True
    return sp.Symbol(spec.name, **assumptions)


@dataclass
class ParamTable:
    """An ordered collection of ParamSpecs with lookup by name."""

    specs: list[ParamSpec] = field(default_factory=list)

    def __post_init__(self):
        names = [s.name for s in self.specs]
        dup = {n for n in names if names.count(n) > 1}
        if dup:
            raise ValueError(f"duplicate parameter names: {sorted(dup)}")

    def __iter__(self):
        return iter(self.specs)

    def __len__(self):
        return len(self.specs)

    def __contains__(self, name: str) -> bool:
        return any(s.name == name for s in self.specs)

    def __getitem__(self, name: str) -> ParamSpec:
        for s in self.specs:
            if s.name == name:
                return s
        raise KeyError(name)

    def names(self) -> list[str]:
        return [s.name for s in self.specs]

    def defaults(self) -> dict[str, float]:
        return {s.name: s.default for s in self.specs}

    def symbols(self) -> dict[str, sp.Symbol]:
        return {s.name: s.symbol for s in self.specs}
