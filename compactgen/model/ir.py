"""ModelIR: the language-neutral description of one device model.

A device kind builds a ModelIR from physics blocks.  The reference solver, the Verilog-A
and ngspice printers and the datasheet read nothing else.

Evaluation order inside a model: parameters -> ``derived`` (parameter-only expressions) ->
``locals`` (expressions of terminal voltages, states and temperature) -> state right-hand
sides, branch currents and outputs.

Internal electrical nodes (``nodes``) are circuit nodes inside the model that are not states,
e.g. the middle of a write line that is also the bottom of a tunnel junction.  Branches and
voltage probes may use them; both back ends declare them as ordinary nodes, and the reference
solver finds their voltages by Kirchhoff's current law at every evaluation.

State equations.  Each state x with right-hand side f (in 1/s) and initial value x0 lives on
an internal node.  Both back ends write the same residual, current leaving the node:

    ddt(tsc * x) + (t > 0 ? -tsc * f : x - x0) = 0

so the state is held at x0 in the operating point (and in DC sweeps) and integrated from
there in a transient; ``tsc`` is the model's time scale, which keeps the residual O(1).
"""
from __future__ import annotations

import hashlib
from dataclasses import dataclass, field

import sympy as sp

from compactgen.model.params import ParamSpec, ParamTable


#: simulation time inside a model ($abstime in Verilog-A, time in ngspice); 0 in the operating point
SIM_TIME = sp.Symbol("sim_time", nonnegative=True)
#: name of the calibrated-range output every model with limits has (Verilog-A variable, ngspice node)
RANGE_OUTPUT = "drive_ratio"
RANGE_OUTPUT_DESC = "largest ratio of drive to its calibrated limit (above 1: outside the calibrated range)"


@dataclass(frozen=True)
class Terminal:
    name: str
    desc: str


@dataclass(frozen=True)
class Node:
    """An internal electrical node (not a state): its voltage follows from KCL."""

    name: str
    desc: str


@dataclass(frozen=True)
class NoiseInput:
    """A stochastic input of the model: a unit-rms white-noise sample sequence (one Gaussian
    sample every noise step) that the model's equations read as ``symbol``.  The ngspice
    B-source library drives it from a transient-noise source on a node named ``name``; every
    deterministic evaluation (reference solver, operating points, the Verilog-A module) reads 0.
    A model has noise inputs only where its card asks for them ([options] thermal_field)."""

    name: str
    symbol: sp.Symbol
    desc: str


@dataclass(frozen=True)
class State:
    name: str  # internal node name, also the symbol name
    symbol: sp.Symbol
    rhs: sp.Expr  # d(state)/dt [1/s]
    initial: sp.Expr  # parameter-only
    desc: str
    unit: str = "1"


@dataclass(frozen=True)
class Branch:
    pos: str
    neg: str
    current: sp.Expr  # conventional current from pos to neg through the device [A]
    desc: str


@dataclass(frozen=True)
class Output:
    """A quantity the simulator reports per instance (operating-point output)."""

    name: str
    expr: sp.Expr
    unit: str
    desc: str


@dataclass(frozen=True)
class Figure:
    """A parameter-only key figure for the datasheet and release comparisons."""

    name: str
    expr: sp.Expr
    unit: str
    desc: str
    source: str = ""
    #: conditions the value holds at beyond the card values and tnom (datasheet), e.g. a fixed bias
    condition: str = ""


@dataclass(frozen=True)
class Constraint:
    """A parameter-only expression that must be positive, and how to say so when it is not.

    ``message`` states the allowed relation in card terms.  In it, ``{name}`` of a parameter
    prints "name = value card-unit"; ``{value}`` prints the expression's value, and ``{key}`` of
    ``shown`` the value of that expression (all in ``unit`` [SI], written in ``card_unit``).
    The card parameters the expression depends on that the message does not name are listed
    after it."""

    expr: sp.Expr
    message: str
    unit: str = "1"
    card_unit: str = ""
    shown: tuple[tuple[str, sp.Expr], ...] = ()

    @classmethod
    def of(cls, item) -> "Constraint":
        """A Constraint from itself or an (expr, message) pair."""
        return item if isinstance(item, cls) else cls(*item)


@dataclass
class ModelIR:
    name: str
    kind: str
    title: str
    terminals: list[Terminal]
    params: ParamTable
    constants: dict[sp.Symbol, float]
    derived: list[tuple[sp.Symbol, sp.Expr]]
    voltages: dict[sp.Symbol, tuple[str, str]]
    temperature: sp.Symbol
    locals: list[tuple[sp.Symbol, sp.Expr]]
    states: list[State]
    time_scale: sp.Symbol
    branches: list[Branch]
    outputs: list[Output] = field(default_factory=list)
    figures: list[Figure] = field(default_factory=list)
    conventions: list[str] = field(default_factory=list)
    #: parameter-only expressions that must be positive (Constraint, or (expr, message) pairs)
    constraints: list[Constraint | tuple[sp.Expr, str]] = field(default_factory=list)
    #: limit parameter name -> local symbol whose magnitude it bounds (calibrated range)
    limits: dict[str, sp.Symbol] = field(default_factory=dict)
    #: locals several equations share -> parameter-only scale; ngspice computes each once on an
    #: auxiliary node carrying local/scale (see render.ngspice)
    shared: dict[sp.Symbol, sp.Expr] = field(default_factory=dict)
    #: filled by hoisted(): the residual of each state with coefficients hoisted
    residuals: dict[str, sp.Expr] = field(default_factory=dict)
    #: internal electrical nodes (not states); branches and voltage probes may use them
    nodes: list[Node] = field(default_factory=list)
    #: correlation of the global Monte Carlo draws (card [variation]): names of the varied
    #: parameters and their correlation matrix; empty: independent draws.  Only the library's
    #: Monte Carlo sections read it (the equations and their digests do not hold it)
    global_correlation: tuple[tuple[str, ...], tuple[tuple[float, ...], ...]] = ()
    #: stochastic inputs (NoiseInput): read as 0 except in the ngspice library, which drives them
    noise: list[NoiseInput] = field(default_factory=list)

    # ---- queries -------------------------------------------------------------------------
    def param_symbols(self) -> dict[str, sp.Symbol]:
        return self.params.symbols()

    def state_symbols(self) -> list[sp.Symbol]:
        return [s.symbol for s in self.states]

    def derived_map(self) -> dict[sp.Symbol, sp.Expr]:
        return dict(self.derived)

    def temperature_dependent(self) -> set[sp.Symbol]:
        """Derived symbols that depend, directly or through other derived ones, on temperature."""
        dep: set[sp.Symbol] = set()
        for sym, expr in self.derived:
            if self.temperature in expr.free_symbols or expr.free_symbols & dep:
                dep.add(sym)
        return dep

    def range_output(self) -> Output | None:
        """The calibrated-range output: max over the limits of |drive| / limit.  Non-negative by
        construction (a maximum of magnitudes); None for a model without limits."""
        if not self.limits:
            return None
        terms = [sp.Abs(sym) / self.params[name].symbol for name, sym in self.limits.items()]
        return Output(RANGE_OUTPUT, sp.Max(*terms) if len(terms) > 1 else terms[0], "1", RANGE_OUTPUT_DESC)

    def monitored_outputs(self) -> list[Output]:
        """Every quantity a simulator reports per instance: ``outputs`` and the range output."""
        r = self.range_output()
        return list(self.outputs) + ([r] if r is not None else [])

    def residual(self, state: State) -> sp.Expr:
        """Current leaving the state node besides ddt(tsc*x): the one form both back ends print."""
        if state.name in self.residuals:
            return self.residuals[state.name]
        return sp.Piecewise((-self.time_scale * state.rhs, SIM_TIME > 0), (state.symbol - state.initial, True))

    def parameter_level(self) -> set[sp.Symbol]:
        """Symbols fixed for an instance: parameters, constants, temperature-free derived."""
        tdep = self.temperature_dependent()
        return (set(self.param_symbols().values()) | set(self.constants)
                | {s for s, _ in self.derived if s not in tdep})

    def validate(self) -> None:
        """Structural checks: every symbol is defined before use; no hidden inputs."""
        known = set(self.param_symbols().values()) | set(self.constants) | {self.temperature}
        for sym, expr in self.derived:
            _need(expr, known, f"derived {sym}")
            known.add(sym)
        if self.time_scale not in known:
            raise ValueError("time scale must be a derived symbol")
        if self.time_scale in self.temperature_dependent():
            raise ValueError("the time scale may not depend on temperature (ngspice needs it at parse time)")
        known_rt = known | set(self.voltages) | set(self.state_symbols()) | {n.symbol for n in self.noise}
        for sym, expr in self.locals:
            _need(expr, known_rt, f"local {sym}")
            known_rt.add(sym)
        for s in self.states:
            _need(s.rhs, known_rt, f"state {s.name}")
            _need(s.initial, known, f"initial value of {s.name}")
        for b in self.branches:
            _need(b.current, known_rt, f"branch {b.pos},{b.neg}")
        for o in self.outputs:
            _need(o.expr, known_rt, f"output {o.name}")
        term = {t.name for t in self.terminals}
        inner = [n.name for n in self.nodes]
        names = [*term, *inner, *(s.name for s in self.states)]
        names += [o.name for o in self.monitored_outputs()]  # ngspice carries each output on a node
        names += [n.name for n in self.noise]  # and each noise input
        clash = {n for n in names if names.count(n) > 1} | ({"clk", "0"} & set(names))
        if clash:
            raise ValueError(f"node names used twice or reserved: {sorted(clash)}")
        known_nodes = term | set(inner)
        for pos, neg in self.voltages.values():
            if pos not in known_nodes or (neg not in known_nodes and neg != "0"):
                raise ValueError(f"voltage probe ({pos},{neg}) uses an unknown terminal or node")
        for b in self.branches:
            if b.pos not in known_nodes or (b.neg not in known_nodes and b.neg != "0"):
                raise ValueError(f"branch ({b.pos},{b.neg}) uses an unknown terminal or node")
        for n in inner:
            if not any(n in (b.pos, b.neg) for b in self.branches):
                raise ValueError(f"internal node {n} has no branch (its voltage would be undefined)")

    def digest(self) -> str:
        """A stable hash of the model equations (goes into generated headers and manifests)."""
        h = hashlib.sha256()
        for part in self._canonical_parts():
            h.update(part.encode())
            h.update(b"\0")
        return h.hexdigest()[:16]

    def structure_digest(self) -> str:
        """A hash of what the renderers print from: kind, ports, nodes, every symbol (with its
        assumptions), constant and expression, states, branches, outputs, limits and shared
        quantities; not the parameter values (defaults), names of the model, descriptive texts,
        figures or constraints.  Two cards of one kind that differ only in values the equations
        do not hold as numbers share it (part of the render cache's key, render.ngspice_context)."""
        h = hashlib.sha256()
        for part in self._structure_parts():
            h.update(part.encode())
            h.update(b"\0")
        return h.hexdigest()

    def _structure_parts(self):
        yield self.kind
        yield ",".join(t.name for t in self.terminals)
        yield "nodes:" + ",".join(n.name for n in self.nodes)
        if self.noise:
            yield "noise:" + ",".join(f"{n.name}={sp.srepr(n.symbol)}" for n in self.noise)
        for s in self.params:
            yield f"param {s.name}|{s.kind}|{sp.srepr(s.symbol)}"
        for sym, v in self.constants.items():
            yield f"const {sp.srepr(sym)}={float(v).hex()}"
        yield f"temperature {sp.srepr(self.temperature)}; time scale {sp.srepr(self.time_scale)}"
        for sym, (p, n) in self.voltages.items():
            yield f"probe {sp.srepr(sym)}=V({p},{n})"
        for sym, e in self.derived:
            yield f"derived {sp.srepr(sym)}={sp.srepr(e)}"
        for sym, e in self.locals:
            yield f"local {sp.srepr(sym)}={sp.srepr(e)}"
        for s in self.states:
            yield f"state {s.name}|{s.unit}|{sp.srepr(s.symbol)}:{sp.srepr(s.rhs)}:{sp.srepr(s.initial)}"
        for b in self.branches:
            yield f"branch {b.pos},{b.neg}:{sp.srepr(b.current)}"
        for o in self.outputs:
            yield f"output {o.name}|{o.unit}:{sp.srepr(o.expr)}"
        for name, sym in self.limits.items():
            yield f"limit {name}:{sp.srepr(sym)}"
        for sym, e in self.shared.items():
            yield f"shared {sp.srepr(sym)}={sp.srepr(e)}"
        for name, e in self.residuals.items():
            yield f"residual {name}={sp.srepr(e)}"

    def _canonical_parts(self):
        yield self.kind
        yield ",".join(t.name for t in self.terminals)
        if self.nodes:
            yield "nodes:" + ",".join(n.name for n in self.nodes)
        if self.noise:
            yield "noise:" + ",".join(n.name for n in self.noise)
        for s in self.params:
            yield f"{s.name}|{s.unit}|{s.default!r}|{s.lo!r}|{s.hi!r}|{s.kind}"
        for sym, e in self.derived + self.locals:
            yield f"{sym}={sp.srepr(e)}"
        for s in self.states:
            yield f"{s.name}:{sp.srepr(s.rhs)}:{sp.srepr(s.initial)}"
        for b in self.branches:
            yield f"{b.pos},{b.neg}:{sp.srepr(b.current)}"


def _need(expr, known, what):
    missing = set(expr.free_symbols) - set(known)
    if missing:
        raise ValueError(f"{what} uses undefined symbols {sorted(map(str, missing))}")


def param(spec: ParamSpec) -> sp.Symbol:
    return spec.symbol
