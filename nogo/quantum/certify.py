"""Values of inequalities on quantum behaviours, with evidence, and their notation.

A verdict "violated" is never read off a float.  The value of ``c·p`` is
evaluated three ways when the inputs allow it:

* exactly (sympy), when every input is a short exact expression;
* as a *ball* (Arb interval arithmetic on the exact inputs), always available
  for exact inputs, optimiser outputs included (their floats are exact binary
  rationals): the ball is guaranteed to contain the true value, so
  ``lower(ball) > bound`` proves a violation and ``upper(ball) < bound``
  proves the opposite;
* in floating point, shown for reading only.

If the ball straddles the bound, the exact value decides (sympy proves
``value - bound == 0`` for an inequality attained exactly); otherwise the
verdict is "undecided" and says so.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from fractions import Fraction

import flint
import sympy

from ..inequality import Coord, Inequality
from ..scenario import Scenario
from .born import PREC, ball_behaviour, behaviour, exact_behaviour
from .experiment import Experiment
from .numbers import arb_from_fraction, arb_text


@dataclass
class Value:
    """The value of one inequality on one quantum behaviour, with the verdict's evidence."""

    inequality: Inequality
    float_value: float
    ball: flint.arb | None  # rigorous enclosure, or None (inputs not exact)
    exact: sympy.Expr | None  # exact value when computed
    verdict: str  # "violated" | "satisfied" | "attained" | "undecided" | "float only"
    evidence: str

    @property
    def violated(self) -> bool:
        return self.verdict == "violated"

    @property
    def excess(self) -> float:
        return self.float_value - float(self.inequality.bound)


def ball_dot(coeffs: dict[Coord, Fraction], balls: dict[Coord, flint.arb]) -> flint.arb:
    old = flint.ctx.prec
    flint.ctx.prec = PREC
    try:
        out = flint.arb(0)
        for k, c in coeffs.items():
            if c:
                out += arb_from_fraction(c) * balls[k]
        return out
    finally:
        flint.ctx.prec = old


def ball_minus(x: flint.arb, b: Fraction) -> flint.arb:
    old = flint.ctx.prec
    flint.ctx.prec = PREC
    try:
        return x - arb_from_fraction(b)
    finally:
        flint.ctx.prec = old


def judge(ineq: Inequality, float_value: float, ball: flint.arb | None, exact_b: dict | None) -> Value:
    """Verdict of ``ineq`` on a behaviour given by its float value, ball and exact form."""
    bound = Fraction(ineq.bound)
    exact = None
    if exact_b is not None:
        exact = sympy.radsimp(sympy.simplify(sum(sympy.Rational(c.numerator, c.denominator) * exact_b[k]
                                                 for k, c in ineq.coeffs.items() if c)))
    if ball is None:
        return Value(ineq, float_value, None, exact, "float only",
                     "inputs are not exact, so no verdict is certified")
    diff = ball_minus(ball, bound)
    shown = arb_text(ball)
    if diff > 0:
        return Value(ineq, float_value, ball, exact, "violated",
                     f"value in {shown} (interval arithmetic), above the bound {bound} by at least "
                     f"{float(diff.lower()):.6g}")
    if diff < 0:
        return Value(ineq, float_value, ball, exact, "satisfied",
                     f"value in {shown} (interval arithmetic), below the bound {bound}")
    if exact is not None and sympy.simplify(exact - sympy.Rational(bound.numerator, bound.denominator)) == 0:
        return Value(ineq, float_value, ball, exact, "attained", f"value = {exact} = bound exactly (sympy)")
    return Value(ineq, float_value, ball, exact, "undecided",
                 f"value in {shown} contains the bound {bound}; no exact decision")


def evaluate(exp: Experiment, inequalities: list[Inequality], want_exact: bool | None = None) -> list[Value]:
    """Values and verdicts of each inequality on the experiment's behaviour."""
    fb = behaviour(exp)
    balls = ball_behaviour(exp) if exp.is_exact else None
    exact_b = None
    if want_exact or (want_exact is None and exp.is_exact and _cheap(exp)):
        try:
            exact_b = exact_behaviour(exp)
        except ValueError:
            exact_b = None
    out = []
    for ineq in inequalities:
        fv = sum(float(c) * fb[k] for k, c in ineq.coeffs.items())
        ball = ball_dot(ineq.coeffs, balls) if balls is not None else None
        out.append(judge(ineq, fv, ball, exact_b))
    return out


def _cheap(exp: Experiment) -> bool:
    """Exact sympy values only for experiments written with short exact numbers."""
    from sympy import Rational

    def simple(e):
        return all(not (a.is_Rational and isinstance(a, Rational) and a.q > 10 ** 6) for a in sympy.preorder_traversal(e))
    if exp.state.dim > 8:
        return False
    mats = [exp.state.exact] + [P for row in exp.lab_rows()[0] for m in row for P in m.exact]
    return all(simple(x) for M in mats for x in M)


# -- notation -------------------------------------------------------------------
def collins_gisin_terms(scenario: Scenario, coeffs: dict[Coord, Fraction]):
    """Rewrite ``sum c(s,a) p(a|s)`` in Collins–Gisin terms.

    Valid on no-signalling behaviours only: each party's last outcome is
    replaced by one minus the others, and every product of indicators becomes
    the marginal of the parties it keeps (D. Collins and N. Gisin, J. Phys. A
    37, 1775 (2004)).  Returns ``(terms, constant)`` with terms keyed by
    (parties, settings, outcomes), outcomes never a party's last.
    """
    terms: dict[tuple, Fraction] = {}
    const = Fraction(0)
    parties = scenario.parties
    for (s, a), c in coeffs.items():
        if not c:
            continue
        options = []
        for p, x, o in zip(parties, s, a):
            last = p.outcomes[-1]
            if o != last:
                options.append([(Fraction(1), (p.name, x, o))])
            else:
                options.append([(Fraction(1), None)] + [(Fraction(-1), (p.name, x, k)) for k in p.outcomes[:-1]])
        for choice in itertools.product(*options):
            w = c
            keep = []
            for sign, item in choice:
                w *= sign
                if item is not None:
                    keep.append(item)
            if not keep:
                const += w
                continue
            key = (tuple(i[0] for i in keep), tuple(i[1] for i in keep), tuple(i[2] for i in keep))
            terms[key] = terms.get(key, Fraction(0)) + w
    return {k: v for k, v in terms.items() if v}, const


def collins_gisin_text(scenario: Scenario, coeffs: dict[Coord, Fraction], bound: Fraction) -> str:
    """The inequality in Collins–Gisin notation (readable back by parse_inequality)."""
    import math

    terms, const = collins_gisin_terms(scenario, coeffs)
    bound = Fraction(bound) - const
    vals = list(terms.values()) + [bound]
    den = math.lcm(*(v.denominator for v in vals)) if vals else 1
    g = math.gcd(*(int(v * den) for v in vals)) or 1
    scale = Fraction(den, g)
    n = len(scenario.parties)

    def order(k):
        ps, xs, os = k
        return (len(ps), [scenario.party_index(p) for p in ps], xs, os)
    parts = []
    for k in sorted(terms, key=order):
        ps, xs, os = k
        v = terms[k] * scale
        sub = "" if len(ps) == n else "_" + "".join(ps) if all(len(p) == 1 for p in ps) else "_{" + ",".join(ps) + "}"
        mag = "" if abs(v) == 1 else f"{abs(v)} "
        parts.append(("- " if v < 0 else "+ ") + f"{mag}p{sub}({' '.join(os)}|{' '.join(xs)})")
    text = " ".join(parts)
    text = text[2:] if text.startswith("+ ") else ("-" + text[2:] if text.startswith("- ") else text)
    return f"{text or '0'} <= {bound * scale}"
