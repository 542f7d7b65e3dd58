"""Lowering: transformations of a ModelIR into equivalent forms a target prints well.

- ``Hoister`` / ``hoisted``: every parameter-only sub-expression of a bias-dependent expression
  becomes a derived quantity of its own (evaluated once per instance; what the Verilog-A module
  prints).
- ``lower_bsources``: the ngspice B-source form.  Temperature-dependent quantities move onto
  nodes of their own (scaled to O(1)), shared bias-dependent quantities onto auxiliary nodes,
  everything else is inlined, and each expression takes the smaller of its composed and its
  expanded, term-merged form, with its parameter-only parts hoisted.

Every function returns sympy expressions; the printers (targets/printing) turn them into text.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import sympy as sp

from compactgen.model.ir import ModelIR


class Hoister:
    """Replace parameter-only sub-expressions by new derived symbols.

    Both simulators then evaluate those coefficients once per instance instead of at every
    Newton iteration, and ngspice, whose B-source arithmetic loses accuracy on products of very
    small constants such as hbar*e*mu0, only sees numbers of ordinary magnitude.
    """

    def __init__(self, base: set[sp.Symbol], prefix: str = "kq"):
        self.base = set(base)
        self.prefix = prefix
        self.cache: dict[sp.Expr, sp.Symbol] = {}
        self.definitions: list[tuple[sp.Symbol, sp.Expr]] = []

    def _name(self, e: sp.Expr) -> sp.Symbol:
        if e not in self.cache:
            sym = sp.Symbol(f"{self.prefix}{len(self.cache) + 1}", real=True, **({"positive": True} if e.is_positive else {}))
            self.cache[e] = sym
            self.definitions.append((sym, e))
            self.base.add(sym)
        return self.cache[e]

    def _fixed(self, e) -> bool:
        return e.free_symbols <= self.base

    def __call__(self, e: sp.Expr) -> sp.Expr:
        e = sp.sympify(e)
        if e.is_Atom or isinstance(e, sp.core.relational.Relational):
            return e
        if self._fixed(e):
            return self._name(e)
        if isinstance(e, sp.Piecewise):  # keep (expression, condition) pairs whole
            return sp.Piecewise(*[(self(x), self(c)) for x, c in e.args])
        if isinstance(e, (sp.Add, sp.Mul)):
            fixed = [a for a in e.args if self._fixed(a)]
            rest = [self(a) for a in e.args if not self._fixed(a)]
            if len(fixed) >= 2 or (len(fixed) == 1 and not fixed[0].is_Atom):
                return e.func(self._name(e.func(*fixed)), *rest)
            return e.func(*fixed, *rest)
        args = [self(a) for a in e.args]
        if all(a is b for a, b in zip(args, e.args)):
            return e  # nothing hoisted inside: e.func(*e.args) == e, and rebuilding (e.g. a Max) is slow
        return e.func(*args)


def collect_terms(expr: sp.Expr, fixed: set[sp.Symbol]) -> sp.Expr:
    """Expand ``expr`` and merge terms with the same variable part, so each monomial of the
    states and probes appears once with one parameter-only coefficient."""
    groups: dict[sp.Expr, list[sp.Expr]] = {}
    for term in sp.Add.make_args(sp.expand(expr)):
        coef, var = [], []
        for f in sp.Mul.make_args(term):
            (coef if f.free_symbols <= fixed else var).append(f)
        groups.setdefault(sp.Mul(*var), []).append(sp.Mul(*coef))
    return sp.Add(*[sp.Add(*c) * v for v, c in groups.items()])


def hoisted(ir: ModelIR, prefix: str = "kq") -> ModelIR:
    """An equivalent IR in which every parameter-only sub-expression of a bias-dependent
    expression is a derived quantity of its own (see Hoister).  The IR's equations digest is
    unchanged in meaning but not in form: take ``ir.digest()`` before hoisting."""
    h = Hoister(ir.parameter_level(), prefix)
    loc = [(s, h(e)) for s, e in ir.locals]
    states = [dataclasses.replace(st, rhs=h(st.rhs)) for st in ir.states]
    branches = [dataclasses.replace(b, current=h(b.current)) for b in ir.branches]
    outputs = [dataclasses.replace(o, expr=h(o.expr)) for o in ir.outputs]
    residuals = {st.name: h(ir.residual(st)) for st in ir.states}
    return dataclasses.replace(ir, derived=list(ir.derived) + h.definitions, locals=loc, states=states,
                               branches=branches, outputs=outputs, residuals=residuals)


@dataclass
class BsourceForm:
    """The B-source lowering of an IR (``lower_bsources``): expressions in the order the ngspice
    library lists them, and the new symbols that stand for node voltages."""

    tnodes: list = field(default_factory=list)  # per scaled temperature node: value/scale
    aux: list = field(default_factory=list)  # per shared quantity: value/scale (1-ohm node)
    monitors: list = field(default_factory=list)  # per monitored output: value in its node unit
    states: list = field(default_factory=list)  # per state: (flow, hold, initial value)
    branches: list = field(default_factory=list)  # per branch: current
    derived: list = field(default_factory=list)  # parameter-level (symbol, expression), hoisted ones included
    node_symbols: dict = field(default_factory=dict)  # new symbol name -> node whose voltage it is


def lower_bsources(ir: ModelIR, scales: dict, t_ref_sym, monitor_scales: list[float]) -> BsourceForm:
    """The ngspice B-source form of ``ir``.  ``scales``: the temperature-dependent derived
    quantities that get a node of their own, each with its node scale; ``t_ref_sym``: the
    temperature the initial values are taken at (parse time); ``monitor_scales``: per monitored
    output, the SI value of 1 V on its node."""
    out = BsourceForm()
    hoist = Hoister(ir.parameter_level())
    tdep = ir.temperature_dependent()
    inline: dict[sp.Symbol, sp.Expr] = {}
    for sym, e in ir.derived:
        if sym in tdep:
            inline[sym] = e.xreplace(inline)

    def compact(e):
        """The smaller of the expression as composed and its expanded, term-merged form (the
        expanded form suits polynomial state equations, the composed one rational read-outs),
        with parameter-only parts hoisted."""
        e = sp.sympify(e)
        # factor_terms pulls common factors out of sums (also inside denominators), so a ratio of
        # two tiny parameter products becomes one coefficient of ordinary size
        # (nested radicals, e.g. an iterated equilibrium, are left composed: expanding them explodes)
        expandable = not any(isinstance(a, sp.Pow) and not a.exp.is_Integer and a.base.has(sp.Pow)
                             for a in sp.preorder_traversal(e))
        candidates = [sp.factor_terms(x) for x in ((e, collect_terms(e, hoist.base)) if expandable else (e,))]

        def size(x):
            return sp.count_ops(Hoister(hoist.base)(x))

        return hoist(min(candidates, key=size))

    ic_inline: dict[sp.Symbol, sp.Expr] = {}
    for sym, e in ir.derived:
        if sym in tdep:
            ic_inline[sym] = e.xreplace({ir.temperature: t_ref_sym}).xreplace(ic_inline)
    # every node is computed from the temperature alone (not from other nodes, which hold any
    # value during the first Newton iterations of an operating point)
    for sym, e in ir.derived:
        if sym in scales:
            scale = scales[sym]
            out.tnodes.append(compact(inline[sym] / scale))
            out.node_symbols[f"tqn_{sym}"] = f"tq_{sym}"
            inline[sym] = sp.Float(scale) * sp.Symbol(f"tqn_{sym}", real=True)
    extra_derived = []
    for sym, e in ir.locals:
        if sym in ir.shared:
            # computed once per instance on node <name>: R to ground of 1 ohm, fed by a current
            # local/scale, so the node voltage is O(1); users read it as scale*V(<name>)
            scale = sp.Symbol(f"ks_{sym}", positive=True)
            inv = sp.Symbol(f"kis_{sym}", positive=True)
            extra_derived += [(scale, ir.shared[sym]), (inv, 1 / scale)]
            hoist.base |= {scale, inv}
            out.aux.append(compact((inv * e).xreplace(inline)))
            node = sp.Symbol(f"aux_{sym}", real=True)
            out.node_symbols[node.name] = str(sym)
            inline[sym] = scale * node
        else:
            inline[sym] = e.xreplace(inline)

    def lowered(e):
        return compact(sp.sympify(e).xreplace(inline))

    # outputs (and the range output) on nodes of their own, V = value in the node's unit
    for o, scale in zip(ir.monitored_outputs(), monitor_scales):
        expr = sp.sympify(o.expr).xreplace(inline)
        out.monitors.append(compact(expr if scale == 1.0 else expr / sp.Float(scale)))
    for s in ir.states:
        out.states.append((lowered(-ir.time_scale * s.rhs), lowered(s.symbol - s.initial),
                           hoist(sp.sympify(s.initial).xreplace(ic_inline))))
    out.branches = [lowered(b.current) for b in ir.branches]
    out.derived = [(k, e) for k, e in list(ir.derived) + extra_derived + hoist.definitions if k not in tdep]
    return out
