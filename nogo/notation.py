"""Show an inequality in a chosen notation: correlators, Collins–Gisin or full probabilities.

An inequality is stored in full coordinates ``sum c(s, a) p(a|s)``.  To show
a relabelled version of a catalog entry in the entry's own notation, the
functional is expanded in a product basis, party by party:

* **correlators** (two outcomes per party with values ±1, or +1 for the
  first outcome and -1 for the second: common practice):
  ``[a_i = o] = (1 + v_i(o) A_i) / 2``, so ``p(a|s)`` is a sum over subsets T
  of parties of ``prod_{i in T} v_i(a_i) / 2^n`` times the correlator
  ``<prod_{i in T} A_i>`` at the settings ``s``;
* **Collins–Gisin**: ``[a_i = last] = 1 - sum_{o != last} [a_i = o]``, every
  product of indicators being the marginal of the parties it keeps
  (D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004));
* **probabilities**: full coordinates, with for each settings tuple the most
  common coefficient moved into the bound (normalisation), so a positivity
  version prints as one term.

A term that keeps only some parties is a marginal; it is read at the other
parties' first setting by the parser, and terms at other settings of the
other parties are added to it (the no-signalling reading).  That reading is
exact on every behaviour whose marginals do not depend on the other parties'
settings; :func:`render` says whether it was needed, and the result is
parsed back so that every printed number refers to the text shown.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from fractions import Fraction

from .inequality import Coord, Inequality, parse_inequality
from .scenario import Scenario


@dataclass(frozen=True)
class Rendered:
    text: str
    inequality: Inequality  # the text parsed back (numbers refer to it)
    exact: bool  # True: same full-coordinate inequality (modulo normalisation); False: no-signalling reading


def _values(scenario: Scenario) -> list[tuple[Fraction, Fraction]] | None:
    out = []
    for p in scenario.parties:
        if len(p.outcomes) != 2:
            return None
        if p.values is not None and set(map(abs, p.values)) == {1} and len(set(p.values)) == 2:
            out.append(tuple(p.values))
        else:
            out.append((Fraction(1), Fraction(-1)))
    return out


def _num(x: Fraction) -> str:
    return str(x.numerator) if x.denominator == 1 else f"{x.numerator}/{x.denominator}"


def party_setting(scenario: Scenario, name: str, x: str) -> str:
    """'A1', 'Alice_x' or 'B2_1': a party-and-setting item the parser reads back unambiguously."""
    plain = name + x
    longer = [n for n in scenario.party_names if len(n) > len(name) and plain.startswith(n)]
    if name[-1:].isdigit() or not x.isdigit() or longer:
        return f"{name}_{x}"
    return plain


def _subscript(scenario: Scenario, parties: tuple[str, ...]) -> str:
    if len(parties) == len(scenario.parties):
        return ""
    if all(len(p) == 1 for p in parties):
        return "_" + "".join(parties)
    return "_{" + ",".join(parties) + "}"


def _join(parts: list[tuple[Fraction, str]], sense: str, bound: Fraction) -> str:
    out = []
    for c, atom in parts:
        if not c:
            continue
        mag = "" if abs(c) == 1 else _num(abs(c)) + " "
        out.append(("- " if c < 0 else "+ ") + mag + atom)
    text = " ".join(out)
    if text.startswith("+ "):
        text = text[2:]
    elif text.startswith("- "):
        text = "-" + text[2:]
    return f"{text or '0'} {sense} {_num(bound)}"


def _product_terms(scenario: Scenario, f: dict[Coord, Fraction], basis) -> tuple[dict, Fraction, bool]:
    """Expand ``f`` in a per-party basis; ``basis(i, outcome)`` -> [(weight, label or None)]."""
    terms: dict[tuple, Fraction] = {}
    detail: dict[tuple, Fraction] = {}  # (term, other parties' settings) -> weight
    const = Fraction(0)
    n = len(scenario.parties)
    for (s, a), c in f.items():
        if not c:
            continue
        options = [basis(i, a[i]) for i in range(n)]
        for choice in itertools.product(*options):
            w = c
            keep = []
            for i, (weight, label) in enumerate(choice):
                w *= weight
                if label is not None:
                    keep.append((i, label))
            if not w:
                continue
            if not keep:
                const += w
                continue
            idx = tuple(i for i, _ in keep)
            key = (idx, tuple(s[i] for i in idx), tuple(lbl for _, lbl in keep))
            terms[key] = terms.get(key, Fraction(0)) + w
            others = tuple(s[i] for i in range(n) if i not in idx)
            detail[(key, others)] = detail.get((key, others), Fraction(0)) + w
    terms = {k: v for k, v in terms.items() if v}
    # exact when every marginal term sits only at the other parties' first settings
    exact = all(not w or others == tuple(scenario.parties[i].settings[0] for i in range(n) if i not in key[0])
                for (key, others), w in detail.items())
    return terms, const, exact


def _order(scenario: Scenario):
    def key(k):
        idx, xs, os = k
        return (len(idx), idx, [scenario.parties[i].settings.index(x) for i, x in zip(idx, xs)],
                [scenario.parties[i].outcomes.index(o) if o in scenario.parties[i].outcomes else 0
                 for i, o in zip(idx, os)])
    return key


def render(ineq: Inequality, notation: str | None = None) -> Rendered:
    """The inequality in ``notation`` (default: the one it was written in), with its own sense."""
    text, exact = render_text(ineq, notation)
    back = parse_inequality(ineq.scenario, text, ineq.name, ineq.source)
    back.origin = ineq.origin
    if exact and back.canonical() != ineq.canonical():  # a renderer bug must not change the question
        raise AssertionError(f"rendering changed the inequality: {text}")
    return Rendered(text, back, exact)


def render_text(ineq: Inequality, notation: str | None = None) -> tuple[str, bool]:
    """The text of :func:`render` without parsing it back, and whether it is exact."""
    sc = ineq.scenario
    notation = notation or ineq.notation or "probabilities"
    sign = ineq.sign
    f = {k: sign * v for k, v in ineq.coeffs.items() if v}
    # written: sign*(coeffs.p) + shift (sense) written_bound  <=>  f.p (sense) written_bound - shift
    rhs = ineq.written_bound - Fraction(ineq.shift)
    vals = _values(sc) if notation == "correlators" else None
    if notation == "correlators" and vals is None:
        notation = "collins-gisin"
    parts: list[tuple[Fraction, str]] = []
    exact = True
    if notation == "correlators":
        half = Fraction(1, 2)

        def basis(i, o):
            v = vals[i][sc.parties[i].outcomes.index(o)]
            return [(half, None), (half * v, "A")]
        terms, const, exact = _product_terms(sc, f, basis)
        rhs -= const
        for k in sorted(terms, key=_order(sc)):
            idx, xs, _ = k
            items = " ".join(party_setting(sc, sc.parties[i].name, x) for i, x in zip(idx, xs))
            parts.append((terms[k], f"<{items}>"))
    elif notation == "collins-gisin":
        def basis(i, o):
            p = sc.parties[i]
            if o != p.outcomes[-1]:
                return [(Fraction(1), o)]
            return [(Fraction(1), None)] + [(Fraction(-1), k) for k in p.outcomes[:-1]]
        terms, const, exact = _product_terms(sc, f, basis)
        rhs -= const
        for k in sorted(terms, key=_order(sc)):
            idx, xs, os = k
            names = tuple(sc.parties[i].name for i in idx)
            parts.append((terms[k], f"p{_subscript(sc, names)}({' '.join(os)}|{' '.join(xs)})"))
    else:
        outs = sc.outcome_tuples()
        for s in sc.setting_tuples():
            row = [f.get((s, a), Fraction(0)) for a in outs]
            counts: dict[Fraction, int] = {}
            for v in row:
                counts[v] = counts.get(v, 0) + 1
            mode = max(counts, key=lambda v: (counts[v], v == 0))
            rhs -= mode
            for a, v in zip(outs, row):
                if v - mode:
                    parts.append((v - mode, f"p({' '.join(a)}|{' '.join(s)})"))
    return _join(parts, ineq.sense, rhs), exact
