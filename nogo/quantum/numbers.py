"""Numbers in experiment files: exact when written exactly, balls when certified.

A number may be written as a YAML number (``0.5``, ``1``) or as a short
expression (``"1/sqrt(2)"``, ``"pi/4"``, ``"exp(i*pi/3)"``, ``"3/5 + 4/5*i"``).
Every number becomes an exact sympy expression: a decimal is the decimal
written (0.1 is 1/10, not the nearest double), an expression is parsed over a
small whitelist of names.  Floats that come from an optimiser are taken as
the exact binary rationals they are.

For certification the exact expressions are evaluated in ball arithmetic
(Arb through python-flint: F. Johansson, IEEE Trans. Comput. 66, 1281
(2017)): every ball is guaranteed to contain the true value, so a ball
entirely above a bound is a proof, not a float comparison.
"""

from __future__ import annotations

import re
from fractions import Fraction

import flint
import sympy

from ..errors import InputError, Where

# Only these names may appear in a written number; nothing else reaches sympy.
_NAMES = {"sqrt": sympy.sqrt, "pi": sympy.pi, "i": sympy.I, "I": sympy.I, "exp": sympy.exp,
          "cos": sympy.cos, "sin": sympy.sin, "e": sympy.E}
_TOKEN = re.compile(r"\s*(?:(\d+(?:\.\d*)?(?:[eE][+-]?\d+)?|\.\d+)|([A-Za-z_]+)|(\*\*|[-+*/^()]))")


def parse_number(raw, where: Where | None = None) -> sympy.Expr:
    """An exact sympy number from a YAML value.

    >>> parse_number("1/sqrt(2)")
    sqrt(2)/2
    """
    if isinstance(raw, bool) or raw is None or isinstance(raw, (list, dict)):
        raise InputError(f"expected a number, got {raw!r}", where, "for example 0.5, '1/sqrt(2)' or 'pi/4'")
    if isinstance(raw, int):
        return sympy.Integer(raw)
    if isinstance(raw, float):
        return sympy.Rational(repr(raw))  # the decimal the user wrote
    text = str(raw).strip()
    pos, pieces = 0, []
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m or m.end() == pos:
            raise InputError(f"cannot read '{text}' as a number", where,
                             "use digits, + - * / ^ ( ), sqrt, exp, cos, sin, pi, i")
        num, name, op = m.groups()
        if name is not None:
            if name not in _NAMES:
                raise InputError(f"unknown name '{name}' in number '{text}'", where,
                                 "allowed: " + ", ".join(sorted(_NAMES)))
            pieces.append(f"_N['{name}']")
        elif num is not None:
            pieces.append(f"_R('{num}')")
        else:
            pieces.append("**" if op == "^" else op)
        pos = m.end()
    try:
        # The text is rebuilt from whitelisted tokens only: names map to sympy objects,
        # numbers to exact rationals; no other identifier can reach eval.
        value = eval("".join(pieces), {"__builtins__": {}}, {"_N": _NAMES, "_R": sympy.Rational})  # noqa: S307
    except Exception:  # noqa: BLE001 - any parse failure is the user's text
        raise InputError(f"cannot read '{text}' as a number", where) from None
    value = sympy.sympify(value)
    if not value.is_number:
        raise InputError(f"'{text}' is not a number", where)
    return value


def exact_from_float(x: float) -> sympy.Expr:
    """The exact binary rational a float holds (optimiser output)."""
    return sympy.Rational(Fraction(float(x)))


def to_acb(expr) -> flint.acb:
    """Evaluate an exact sympy number as a complex ball (rigorous enclosure)."""
    expr = sympy.sympify(expr)
    if expr.is_Integer:
        return flint.acb(flint.fmpz(int(expr)))
    if expr.is_Rational:
        return flint.acb(flint.fmpq(int(expr.p), int(expr.q)))
    if expr.is_Float:
        return flint.acb(flint.fmpq(*Fraction(float(expr)).as_integer_ratio()))
    if expr is sympy.pi:
        return flint.acb(flint.arb.pi())
    if expr is sympy.E:
        return flint.acb(1).exp()
    if expr is sympy.I:
        return flint.acb(0, 1)
    if isinstance(expr, sympy.Add):
        out = flint.acb(0)
        for a in expr.args:
            out += to_acb(a)
        return out
    if isinstance(expr, sympy.Mul):
        out = flint.acb(1)
        for a in expr.args:
            out *= to_acb(a)
        return out
    if isinstance(expr, sympy.Pow):
        base, ex = expr.args
        if ex.is_Integer:
            b = to_acb(base)
            n = int(ex)
            r = flint.acb(1)
            for _ in range(abs(n)):
                r *= b
            return r if n >= 0 else 1 / r
        if ex == sympy.Rational(1, 2):
            return to_acb(base).sqrt()
        if ex == sympy.Rational(-1, 2):
            return 1 / to_acb(base).sqrt()
        return to_acb(base) ** to_acb(ex)
    if isinstance(expr, sympy.exp):
        return to_acb(expr.args[0]).exp()
    if isinstance(expr, sympy.cos):
        return to_acb(expr.args[0]).cos()
    if isinstance(expr, sympy.sin):
        return to_acb(expr.args[0]).sin()
    if isinstance(expr, sympy.re):
        return flint.acb(to_acb(expr.args[0]).real)
    if isinstance(expr, sympy.im):
        return flint.acb(to_acb(expr.args[0]).imag)
    if isinstance(expr, sympy.conjugate):
        return to_acb(expr.args[0]).conjugate()
    if isinstance(expr, sympy.Abs):
        return flint.acb(abs(to_acb(expr.args[0])))
    raise ValueError(f"cannot evaluate {expr!r} in ball arithmetic")


def arb_from_fraction(x: Fraction) -> flint.arb:
    x = Fraction(x)
    return flint.arb(flint.fmpq(x.numerator, x.denominator))


def arb_text(x: flint.arb, digits: int = 12) -> str:
    """A ball as '[lo, hi]', the shown digits rounded outward (so the text still encloses it)."""
    import math
    from decimal import ROUND_CEILING, ROUND_FLOOR, Context

    lo = math.nextafter(float(x.lower()), -math.inf)
    hi = math.nextafter(float(x.upper()), math.inf)
    lo_t = Context(prec=digits, rounding=ROUND_FLOOR).create_decimal(lo)
    hi_t = Context(prec=digits, rounding=ROUND_CEILING).create_decimal(hi)
    return f"[{lo_t:g}, {hi_t:g}]"
