"""Shared behaviour of the target printers.

Rules (from the project's style guide): numbers at repr precision in exponent-safe form,
integer powers expanded into products, non-integer powers only of provably positive bases,
``ln`` for the natural logarithm (``log`` is log10 in Verilog-A), Piecewise as a ternary,
and any sympy node the target cannot express raises UnsupportedExpressionError.
"""
from __future__ import annotations

import sympy as sp
from sympy.printing.codeprinter import CodePrinter
from sympy.printing.precedence import precedence

from compactgen.errors import UnsupportedExpressionError

_FUNCS = {
    "exp": "exp", "log": "ln", "sqrt": "sqrt", "sin": "sin", "cos": "cos", "tan": "tan",
    "asin": "asin", "acos": "acos", "atan": "atan", "sinh": "sinh", "cosh": "cosh", "tanh": "tanh",
    "Abs": "abs",
}


def format_number(x: float) -> str:
    """repr precision; always a real literal (``1.0``, ``2.5e-09``)."""
    s = repr(float(x))
    if s in ("inf", "-inf", "nan"):
        raise UnsupportedExpressionError(f"non-finite number {s} in generated code")
    if "e" not in s and "." not in s:
        s += ".0"
    return s


class StrictPrinter(CodePrinter):
    language = "generic"
    target = "generic"
    printmethod = "_compactgen_code"
    _default_settings = dict(CodePrinter._default_settings, strict=True, human=True)
    _kf = _FUNCS

    def __init__(self, symbol_map: dict[str, str] | None = None):
        super().__init__()
        self.symbol_map = dict(symbol_map or {})
        self.known_functions = dict(self._kf)

    def code(self, expr) -> str:
        return self._print(sp.sympify(expr))

    # names and numbers ---------------------------------------------------------------------
    def _print_Symbol(self, expr):
        return self.symbol_map.get(expr.name, expr.name)

    def _print_Float(self, expr):
        return format_number(expr)

    def _print_Integer(self, expr):
        return format_number(int(expr))

    def _print_Zero(self, expr):
        return "0.0"

    def _print_One(self, expr):
        return "1.0"

    def _print_NegativeOne(self, expr):
        return "-1.0"

    def _print_Half(self, expr):
        return "0.5"

    def _print_Rational(self, expr):
        return format_number(expr.p / expr.q)

    def _print_Pi(self, expr):
        return format_number(float(sp.pi))

    def _print_Exp1(self, expr):
        return format_number(float(sp.E))

    # operators ------------------------------------------------------------------------------
    def _print_Pow(self, expr):
        base, e = expr.as_base_exp()
        prec = precedence(expr)
        if e.is_Integer:
            n = int(e)
            if n == 0:
                return "1.0"
            b = self.parenthesize(base, prec)
            prod = "*".join([b] * abs(n))
            if abs(n) > 1:
                prod = f"({prod})"
            return prod if n > 0 else f"1.0/{prod}"
        if e == sp.Rational(1, 2):
            return f"sqrt({self._print(base)})"
        if e == -sp.Rational(1, 2):
            return f"1.0/sqrt({self._print(base)})"
        if base.is_positive:
            return self._print_real_power(base, e)
        raise UnsupportedExpressionError(
            f"{self.target}: power {expr} with a base not provably positive and a non-integer exponent "
            "(the target's pow() would drop the sign)"
        )

    def _print_real_power(self, base, e):
        return f"pow({self._print(base)}, {self._print(e)})"

    def _print_Piecewise(self, expr):
        if expr.args[-1].cond != sp.true:
            raise UnsupportedExpressionError(f"{self.target}: Piecewise needs a final True branch: {expr}")
        out = self._print(expr.args[-1].expr)
        for e, c in reversed(expr.args[:-1]):
            out = f"(({self._print(c)}) ? ({self._print(e)}) : ({out}))"
        return out

    def _print_Relational(self, expr):
        op = {"==": "==", "!=": "!=", "<": "<", "<=": "<=", ">": ">", ">=": ">="}[expr.rel_op]
        return f"({self._print(expr.lhs)} {op} {self._print(expr.rhs)})"

    def _print_And(self, expr):
        return "(" + " && ".join(self._print(a) for a in expr.args) + ")"

    def _print_Or(self, expr):
        return "(" + " || ".join(self._print(a) for a in expr.args) + ")"

    def _print_Max(self, expr):
        return self._binary("max", expr.args)

    def _print_Min(self, expr):
        return self._binary("min", expr.args)

    def _binary(self, name, args):
        out = self._print(args[0])
        for a in args[1:]:
            out = f"{name}({out}, {self._print(a)})"
        return out

    def _print_Function(self, expr):
        name = type(expr).__name__
        if name in self.known_functions:
            return f"{self.known_functions[name]}({', '.join(self._print(a) for a in expr.args)})"
        return self._print_not_supported(expr)

    def _print_not_supported(self, expr):
        raise UnsupportedExpressionError(
            f"{self.target}: cannot print sympy node {type(expr).__name__} ({expr}); "
            "add it to the printer or rewrite the physics block"
        )

    # CodePrinter abstract hooks (expressions only are printed)
    def _get_statement(self, codestring):
        return codestring

    def _get_comment(self, text):
        return f"// {text}"

    def _declare_number_const(self, name, value):
        return f"{name} = {value}"

    def _format_code(self, lines):
        return lines

    def _traverse_matrix_indices(self, mat):
        rows, cols = mat.shape
        return ((i, j) for i in range(rows) for j in range(cols))
