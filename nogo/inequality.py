"""Inequalities in the trade's notation, and their one canonical form.

Written forms understood (party names and setting labels are the scenario's):

* joint probabilities ``p(a b | x y)`` over all parties, in scenario order;
  with single-character labels ``p(00|11)`` also works;
* marginals ``p_A(a|x)``, ``p_AC(a c|x z)`` or ``p_{A,C}(a c|x z)``;
* correlators ``<A1 B2>``, ``<A_1 B_2 C_1>`` and ``<A1>`` (the product of the
  outcome values; two-outcome parties without numeric labels count their
  first outcome as +1 and their second as -1: common practice);
* any linear combination with integer, decimal or fractional coefficients,
  then ``<=`` or ``>=`` and a number.

Every inequality is reduced to full probability coordinates p(a|s) for every
settings tuple s, modulo normalisation (for each s a constant may be added to
all coefficients of that s), then scaled to coprime integers: this is the
canonical form, and two inequalities are equal exactly when their canonical
forms are.  A *marginal* is only a function of the full behaviour once the
other parties' settings are fixed; it is expanded at their first setting
(the Collins–Gisin convention) and the inequality records that it did, so a
check under a bundle that does not make that marginal setting-independent can
refuse instead of silently answering for a different inequality (DESIGN.md
§2).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from fractions import Fraction
from functools import reduce

from .errors import InputError, Where, suggest
from .scenario import Scenario

Coord = tuple[tuple[str, ...], tuple[str, ...]]  # (settings tuple, outcomes tuple)


@dataclass(frozen=True)
class Marginal:
    """A marginal that an inequality uses: the parties it keeps."""

    parties: tuple[str, ...]


@dataclass
class Inequality:
    """``sum coeffs[s, a] p(a|s) <= bound`` in full coordinates.

    ``coeffs``/``bound`` are always the ``<=`` form the solvers use.  What the
    user wrote is kept beside it: ``sense`` (``"<="`` or ``">="``) and
    ``shift`` (the constant written on the left side), so that the written
    left side is ``L(p) = sign * (coeffs . p) + shift`` with sign -1 for
    ``>=``, and the written bound is ``sign * bound + shift``.  Every number a
    report prints goes through :meth:`written_value` (issue 14, item 0).
    ``notation`` records the written form ("correlators", "collins-gisin",
    "probabilities") so that relabelled versions can be shown in it.
    """

    scenario: Scenario
    coeffs: dict[Coord, Fraction]
    bound: Fraction
    name: str = ""
    text: str = ""
    source: str = ""
    marginals: frozenset[Marginal] = field(default_factory=frozenset)
    sense: str = "<="
    shift: Fraction = Fraction(0)
    notation: str = ""
    origin: str = ""  # how a catalog entry was read in this scenario (printed once)

    # -- the form the user wrote -----------------------------------------------
    @property
    def sign(self) -> int:
        return -1 if self.sense == ">=" else 1

    @property
    def written_bound(self) -> Fraction:
        return self.sign * Fraction(self.bound) + Fraction(self.shift)

    def written_value(self, x):
        """The written left side's value, from the ``<=`` form's value ``x`` (Fraction, float or ball)."""
        if isinstance(x, Fraction) or isinstance(x, int):
            return self.sign * Fraction(x) + Fraction(self.shift)
        y = x if self.sign > 0 else -x
        if not self.shift:
            return y
        if isinstance(y, float):
            return y + float(self.shift)
        sh = Fraction(self.shift)
        return y + type(y)(sh.numerator) / sh.denominator

    @property
    def extreme(self) -> str:
        """'largest' for <=, 'smallest' for >=: the value the verdict compares with the bound."""
        return "smallest" if self.sense == ">=" else "largest"

    def holds_word(self, ok: bool) -> str:
        """The relation between the written extreme value and the written bound."""
        if self.sense == ">=":
            return ">=" if ok else "<"
        return "<=" if ok else ">"

    # -- canonical form ----------------------------------------------------
    def canonical(self) -> tuple[tuple[int, ...], int]:
        """Integer coefficients over ``scenario.coordinates()`` and bound, gcd 1."""
        return canonical_form(self.scenario, self.coeffs, self.bound)

    def vector(self) -> list[Fraction]:
        return [self.coeffs.get(c, Fraction(0)) for c in self.scenario.coordinates()]

    def same_as(self, other: "Inequality") -> bool:
        return self.canonical() == other.canonical()

    def value(self, behaviour: dict[Coord, Fraction]) -> Fraction:
        """Value of the ``<=`` form's left side (see :meth:`written_value` for the written one)."""
        return sum((c * behaviour.get(k, 0) for k, c in self.coeffs.items()), Fraction(0))

    def display(self) -> str:
        return self.text or format_inequality(self.scenario, self.coeffs, self.bound)


def canonical_form(scenario: Scenario, coeffs: dict[Coord, Fraction], bound: Fraction) -> tuple[tuple[int, ...], int]:
    coords = scenario.coordinates()
    bound = Fraction(bound)
    shifted: dict[Coord, Fraction] = {}
    for s in scenario.setting_tuples():
        vals = [coeffs.get((s, a), Fraction(0)) for a in scenario.outcome_tuples()]
        low = min(vals)
        for a, v in zip(scenario.outcome_tuples(), vals):
            shifted[(s, a)] = v - low
        bound -= low
    vec = [shifted[c] for c in coords] + [bound]
    den = reduce(lambda x, y: x * y // math.gcd(x, y), (v.denominator for v in vec), 1)
    ints = [int(v * den) for v in vec]
    g = reduce(math.gcd, (abs(i) for i in ints), 0) or 1
    ints = [i // g for i in ints]
    return tuple(ints[:-1]), ints[-1]


def format_inequality(scenario: Scenario, coeffs: dict[Coord, Fraction], bound: Fraction) -> str:
    """Full-coordinate rendering ``c p(a b|x y) + ... <= bound``."""
    parts = []
    for (s, a), c in sorted(coeffs.items(), key=lambda kv: (kv[0][0], kv[0][1])):
        if c == 0:
            continue
        sign = "-" if c < 0 else "+"
        mag = abs(c)
        num = "" if mag == 1 else f"{mag} "
        parts.append(f"{sign} {num}p({' '.join(a)}|{' '.join(s)})")
    text = " ".join(parts).lstrip("+ ").strip() or "0"
    if text.startswith("- "):
        text = "-" + text[2:]
    return f"{text} <= {bound}"


# -- parsing ---------------------------------------------------------------
_NUM = re.compile(r"\d+(?:\.\d+)?(?:/\d+)?")


def _num(text: str) -> Fraction:
    return Fraction(text)


class _Parser:
    def __init__(self, scenario: Scenario, text: str, where: Where | None):
        self.sc = scenario
        self.text = text
        self.pos = 0
        self.where = where or Where()
        self.marginals: set[Marginal] = set()
        self.kinds: set[str] = set()

    def fail(self, msg: str, hint: str | None = None):
        pointer = f" in '{self.text}' at position {self.pos + 1}"
        raise InputError(msg + pointer, self.where, hint)

    def ws(self):
        while self.pos < len(self.text) and self.text[self.pos].isspace():
            self.pos += 1

    def peek(self, s: str) -> bool:
        self.ws()
        return self.text.startswith(s, self.pos)

    def number(self) -> Fraction | None:
        self.ws()
        m = _NUM.match(self.text, self.pos)
        if not m:
            return None
        if re.search(r"/0+$", m.group()):  # 1/0: a slip of the user, not a crash
            self.pos = m.start()
            self.fail(f"'{m.group()}' divides by zero")
        self.pos = m.end()
        return _num(m.group())

    # expression := ['+'|'-'] term (('+'|'-') term)*
    def expression(self) -> tuple[dict[Coord, Fraction], Fraction]:
        coeffs: dict[Coord, Fraction] = {}
        const = Fraction(0)
        first = True
        while True:
            self.ws()
            sign = Fraction(1)
            if self.peek("+") or self.peek("-"):
                sign = Fraction(-1) if self.text[self.pos] == "-" else Fraction(1)
                self.pos += 1
            elif not first:
                break
            first = False
            coef = self.number()
            if coef is not None:
                self.ws()
                if self.peek("*"):
                    self.pos += 1
                if not (self.peek("<") and not self.peek("<=")) and not self.peek("p") and not self.peek("P"):
                    const += sign * coef
                    continue
            else:
                coef = Fraction(1)
            for k, v in self.atom().items():
                coeffs[k] = coeffs.get(k, Fraction(0)) + sign * coef * v
        return coeffs, const

    def atom(self) -> dict[Coord, Fraction]:
        self.ws()
        if self.peek("<") and not self.peek("<="):
            self.kinds.add("correlators")
            return self.correlator()
        if self.peek("p") or self.peek("P"):
            return self.probability()
        self.fail("expected a probability p(..|..), a correlator <..> or a number")

    def party_item(self, item: str) -> tuple[str, str]:
        """'A1', 'A_1', 'Oak2' -> (party, setting)."""
        for name in sorted(self.sc.party_names, key=len, reverse=True):
            if item.startswith(name):
                setting = item[len(name):].lstrip("_")
                party = self.sc.party(name)
                if setting not in party.settings:
                    self.fail(f"party '{name}' has no setting '{setting}'", suggest(setting, party.settings))
                return name, setting
        self.fail(f"'{item}' names no party", suggest(item, self.sc.party_names))

    def correlator(self) -> dict[Coord, Fraction]:
        self.pos += 1  # '<'
        end = self.text.find(">", self.pos)
        if end < 0:
            self.fail("a correlator '<...' is not closed with '>'")
        items = self.text[self.pos:end].replace(",", " ").split()
        self.pos = end + 1
        if not items:
            self.fail("an empty correlator '<>'")
        picked = [self.party_item(it) for it in items]
        parties = [p for p, _ in picked]
        if len(set(parties)) != len(parties):
            self.fail("a correlator names a party twice")
        values = []
        for p in parties:
            party = self.sc.party(p)
            if party.values is not None and len(party.outcomes) == 2 and set(map(abs, party.values)) == {1}:
                values.append(party.values)
            elif len(party.outcomes) == 2:
                values.append((Fraction(1), Fraction(-1)))
            else:
                self.fail(f"a correlator needs two outcomes per party; '{p}' has {len(party.outcomes)}")
        settings = [x for _, x in picked]
        weights = {}
        import itertools

        for idx in itertools.product(*(range(len(self.sc.party(p).outcomes)) for p in parties)):
            w = Fraction(1)
            for p_i, i in enumerate(idx):
                w *= values[p_i][i]
            outs = tuple(self.sc.party(p).outcomes[i] for p, i in zip(parties, idx))
            weights[outs] = w
        return self.expand(tuple(parties), tuple(settings), weights)

    def probability(self) -> dict[Coord, Fraction]:
        self.pos += 1  # 'p'
        m = re.compile(r"_?\{([^}]*)\}|_?([A-Za-z0-9_]*)").match(self.text, self.pos)
        sub = ""
        if m:
            sub = m.group(1) if m.group(1) is not None else (m.group(2) or "")
            self.pos = m.end()
        if sub:
            if "," in sub:
                parties = [s.strip() for s in sub.split(",")]
            else:
                parties = self.split_parties(sub)
            for p in parties:
                if p not in self.sc.party_names:
                    self.fail(f"'{p}' names no party", suggest(p, self.sc.party_names))
        else:
            parties = list(self.sc.party_names)
        if not self.peek("("):
            self.fail("expected '(' after p")
        self.pos += 1
        end = self.text.find(")", self.pos)
        if end < 0:
            self.fail("'p(' is not closed with ')'")
        body = self.text[self.pos:end]
        self.pos = end + 1
        if "|" not in body:
            self.fail("a probability is written p(outcomes | settings)")
        outs_txt, sets_txt = body.split("|", 1)
        outs = self.split_labels(outs_txt, len(parties), "outcomes")
        sets = self.split_labels(sets_txt, len(parties), "settings")
        norm_outs = []
        for p, o, x in zip(parties, outs, sets):
            party = self.sc.party(p)
            if x not in party.settings:
                self.fail(f"party '{p}' has no setting '{x}'", suggest(x, party.settings))
            o2 = _match_outcome(o, party.outcomes)
            if o2 is None:
                self.fail(f"party '{p}' has no outcome '{o}'", suggest(o, party.outcomes))
            norm_outs.append(o2)
        if len(set(parties)) != len(parties):
            self.fail("a probability names a party twice")
        return self.expand(tuple(parties), tuple(sets), {tuple(norm_outs): Fraction(1)})

    def split_parties(self, sub: str) -> list[str]:
        names = sorted(self.sc.party_names, key=len, reverse=True)
        out, i = [], 0
        while i < len(sub):
            for n in names:
                if sub.startswith(n, i):
                    out.append(n)
                    i += len(n)
                    break
            else:
                self.fail(f"cannot read parties from '{sub}'", "write p_{A,B}(...) with commas")
        return out

    def split_labels(self, txt: str, n: int, what: str) -> list[str]:
        items = txt.replace(",", " ").split()
        if len(items) == 1 and n > 1 and len(items[0]) == n:
            items = list(items[0])
        if len(items) != n:
            self.fail(f"expected {n} {what}, found {len(items)}")
        return items

    def expand(self, parties, settings, weights: dict[tuple[str, ...], Fraction]) -> dict[Coord, Fraction]:
        """A function of some parties' outcomes → full coordinates."""
        import itertools

        sc = self.sc
        order = sorted(range(len(parties)), key=lambda i: sc.party_index(parties[i]))
        parties = tuple(parties[i] for i in order)
        settings = tuple(settings[i] for i in order)
        weights = {tuple(k[i] for i in order): v for k, v in weights.items()}
        others = [p for p in sc.party_names if p not in parties]
        if others:
            self.marginals.add(Marginal(parties))
        s_full = tuple(settings[parties.index(p.name)] if p.name in parties else p.settings[0] for p in sc.parties)
        out: dict[Coord, Fraction] = {}
        for a in itertools.product(*(p.outcomes for p in sc.parties)):
            key = tuple(a[sc.party_index(p)] for p in parties)
            w = weights.get(key)
            if w:
                out[(s_full, a)] = out.get((s_full, a), Fraction(0)) + w
        return out


def _match_outcome(label: str, outcomes: tuple[str, ...]) -> str | None:
    if label in outcomes:
        return label
    try:
        v = Fraction(label)
    except (ValueError, ZeroDivisionError):
        return None
    for o in outcomes:
        try:
            if Fraction(o) == v:
                return o
        except (ValueError, ZeroDivisionError):
            continue
    return None


def parse_inequality(scenario: Scenario, text: str, name: str = "", source: str = "",
                     where: Where | None = None) -> Inequality:
    """Parse ``LHS <= bound`` or ``LHS >= bound`` into an :class:`Inequality`."""
    if not isinstance(text, str):
        raise InputError("an inequality is a text such as '<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2'", where)
    norm = text.replace("≤", "<=").replace("≥", ">=").replace("−", "-").replace("⟨", "<").replace("⟩", ">")
    m = list(re.finditer(r"<=|>=", norm))
    if len(m) != 1:
        raise InputError(f"an inequality needs exactly one '<=' or '>=': '{text}'", where)
    op = m[0]
    lhs_text, rhs_text = norm[:op.start()], norm[op.end():]
    p = _Parser(scenario, lhs_text, where)
    coeffs, const = p.expression()
    p.ws()
    if p.pos != len(lhs_text):
        p.fail("unexpected text")
    rp = _Parser(scenario, rhs_text.strip(), where)
    neg = rhs_text.strip().startswith("-")
    if neg:
        rp.pos = 1
    bound = rp.number()
    rp.ws()
    if bound is None or rp.pos != len(rp.text):
        raise InputError(f"the bound must be a number, got '{rhs_text.strip()}'", where,
                         "for example 2, 0, -1/2 or 0.25")
    if neg:
        bound = -bound
    bound -= const
    if op.group() == ">=":
        coeffs = {k: -v for k, v in coeffs.items()}
        bound = -bound
    coeffs = {k: v for k, v in coeffs.items() if v != 0}
    if "correlators" in p.kinds:
        notation = "correlators"
    elif p.marginals:
        notation = "collins-gisin"
    else:
        notation = "probabilities"
    return Inequality(scenario, coeffs, bound, name, text, source, frozenset(p.marginals),
                      op.group(), const, notation)
