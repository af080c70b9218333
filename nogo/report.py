"""Turn results into words: terminal text, JSON-ready dicts, Markdown.

Reports speak in the user's names.  Every number is exact and printed as an
integer or a fraction ("5/2"); floats never appear in a verdict.  The
closing line of a text report reminds the reader that the answer is
mathematics about the declared model, not about the prose around it.
"""

from __future__ import annotations

import re
from fractions import Fraction
from typing import Any

from typing import TYPE_CHECKING

from .inequality import Coord
from .scenario import Scenario

if TYPE_CHECKING:
    from .check import CheckResult

DISCLAIMER = ("This answer is about the assumptions exactly as declared in the theory file; "
              "whether they capture what a paper means by them is for the reader to judge.")


def q(x: Fraction | int) -> str:
    """Exact rational as text: '2', '-5/2'."""
    x = Fraction(x)
    return str(x.numerator) if x.denominator == 1 else f"{x.numerator}/{x.denominator}"


_SETTINGS_HALF = re.compile(r"\|\s*([^)]*)\)")
_ASSIGN = re.compile(r"([^\s,=|()]+)=([^\s,|()]+)")


def plain_row(detail: str) -> str:
    """Settings after '|' written as 'A.setting=1' (the theory files' notation), outcomes as 'A=+1'."""
    def fix(m):
        return "| " + _ASSIGN.sub(lambda a: f"{a.group(1)}.setting={a.group(2)}", m.group(1)) + ")"
    return _SETTINGS_HALF.sub(fix, detail)


def _plain_literal(text: str) -> str:
    import ast

    try:
        v = ast.literal_eval(text)
    except (ValueError, SyntaxError):
        return text

    def show(x):
        if isinstance(x, (list, tuple, set, frozenset)):
            inner = [show(y) for y in x]
            return ("{" + ", ".join(inner) + "}") if any(isinstance(y, (list, tuple)) for y in x) or \
                isinstance(x, (set, frozenset)) else ", ".join(inner)
        return str(x)
    if isinstance(v, (list, tuple)) and all(isinstance(y, (list, tuple)) for y in v):
        return ", ".join("{" + ", ".join(map(str, y)) + "}" for y in v)
    return show(v) if isinstance(v, (list, tuple, set)) else text


_LITERAL = re.compile(r"\[(?:[^\[\]]|\[[^\[\]]*\])*\]")


def plain_note(note: str) -> str:
    """A note without Python's list syntax: "['A@1', 'A@2'] absent" -> "A@1, A@2 absent"."""
    return _LITERAL.sub(lambda m: _plain_literal(m.group(0)), note)


def behaviour_rows(scenario: Scenario, behaviour: dict[Coord, Fraction], keep_zero: bool = False) -> list[dict]:
    out = []
    for (s, a), v in behaviour.items():
        if v or keep_zero:
            out.append({"settings": dict(zip(scenario.party_names, s)),
                        "outcomes": dict(zip(scenario.party_names, a)), "p": q(v)})
    return out


def written_extreme(r: CheckResult) -> dict[str, Any]:
    """The decisive value as the user wrote the inequality: largest for <=, smallest for >=."""
    ineq = r.inequality
    key = "minimum" if ineq.sense == ">=" else "maximum"
    return {"sense": ineq.sense, "extreme": ineq.extreme, "value": q(ineq.written_value(r.maximum)),
            key: q(ineq.written_value(r.maximum)), "bound": q(ineq.written_bound)}


def inequality_dict(ineq) -> dict[str, Any]:
    """An inequality for JSON: its text, the sense and bound as written, its canonical form."""
    coeffs, bound = ineq.canonical()
    d = {"name": ineq.name, "text": ineq.display(), "source": ineq.source,
         "sense": ineq.sense, "bound": q(ineq.written_bound),
         "canonical": {"coordinates": [f"p({' '.join(a)}|{' '.join(s)})" for s, a in ineq.scenario.coordinates()],
                       "coefficients": list(coeffs), "sense": "<=", "bound": bound}}
    if ineq.origin:
        d["read_as"] = ineq.origin
    return d


def check_to_dict(r: CheckResult, theory_file: str | None = None) -> dict[str, Any]:
    ineq = r.inequality
    ext = written_extreme(r)
    d: dict[str, Any] = {
        "theory": theory_file,
        "bundle": r.bundle,
        "assumptions": list(r.assumptions),
        "inequality": inequality_dict(ineq),
        "verdict": r.verdict,
        **{k: v for k, v in ext.items() if k != "bound"},
        "method": r.method,
        "model": {"kind": r.model_kind, "rows": r.shape[0], "columns": r.shape[1]},
        "notes": r.notes,
    }
    if r.certificate is not None:
        c = r.certificate
        d["certificate"] = {
            "bound": q(ineq.written_value(c.bound)), "sense": ineq.sense,
            "by_assumption": c.by_assumption(),
            "positivity_terms": c.positivity,
            "rows": [{"assumption": w.source.assumption, "kind": w.source.kind, "clause": w.source.clause,
                      "events": list(w.source.events), "constraint": w.source.detail, "weight": q(w.weight)}
                     for w in c.rows],
        }
    if r.counterexample is not None:
        ce = r.counterexample
        d["counterexample"] = {
            "value": q(ineq.written_value(ce.value)),
            "behaviour": behaviour_rows(ineq.scenario, ce.behaviour),
            "joint": [{"entry": name, "weight": q(w)} for name, w in ce.joint],
        }
    return d


def value_sentence(r: CheckResult) -> str:
    """'the smallest value of the left side over the bundle's set is -2 (exact), >= the bound -2'."""
    ineq = r.inequality
    return (f"the {ineq.extreme} value of the left side over the bundle's set is "
            f"{q(ineq.written_value(r.maximum))} (exact), {ineq.holds_word(r.implied)} the bound "
            f"{q(ineq.written_bound)}")


def _behaviour_table(scenario: Scenario, behaviour: dict[Coord, Fraction]) -> list[str]:
    outs = scenario.outcome_tuples()
    head = "settings".ljust(12) + "".join(("p(" + " ".join(a) + ")").rjust(14) for a in outs)
    lines = [head]
    for s in scenario.setting_tuples():
        lines.append((" ".join(s)).ljust(12) + "".join(q(behaviour.get((s, a), 0)).rjust(14) for a in outs))
    return lines


def check_to_text(r: CheckResult, theory_file: str | None = None, full: bool = False) -> str:
    ineq = r.inequality
    L = []
    if theory_file:
        L.append(f"theory      {theory_file}")
    members = " + ".join(r.assumptions)
    L.append(f"bundle      {r.bundle}" + (f" = {members}" if members != r.bundle else ""))
    name = f"{ineq.name}: " if ineq.name else ""
    L.append(f"inequality  {name}{ineq.display()}")
    if ineq.source:
        L.append(f"            source: {ineq.source}")
    if ineq.origin:
        L.append(f"            {ineq.origin}")
    L.append("")
    L.append(f"verdict     {r.verdict.upper()}: {value_sentence(r)}")
    for n in r.notes:
        L.append(f"note        {plain_note(n)}")
    if r.certificate is not None:
        c = r.certificate
        L.append("")
        L.append("certificate (Farkas multipliers, exact; re-checked without the LP solver):")
        if ineq.sense == ">=":
            L.append("  minus the left side = sum of weighted constraints - sum of non-negative terms of the joint,")
            L.append(f"  so the left side is never below {q(ineq.written_value(c.bound))}.")
        else:
            L.append("  left side = sum of weighted constraints - sum of non-negative terms of the joint,")
            L.append(f"  so it never exceeds {q(ineq.written_value(c.bound))}.")
        for a, n in c.by_assumption().items():
            L.append(f"  {a:<28} {n} constraint(s)")
        L.append(f"  {'positivity of the joint':<28} {c.positivity} term(s)")
        rows = c.rows if full else c.rows[:8]
        for w in rows:
            L.append(f"    {q(w.weight):>8} x [{w.source.assumption}] {plain_row(w.source.detail)}")
        if len(c.rows) > len(rows):
            L.append(f"    ... {len(c.rows) - len(rows)} more (use --full or --json)")
    if r.counterexample is not None:
        ce = r.counterexample
        L.append("")
        L.append(f"counterexample (exact): a behaviour the bundle allows; the left side is "
                 f"{q(ineq.written_value(ce.value))} there")
        L += ["  " + x for x in _behaviour_table(ineq.scenario, ce.behaviour)]
        L.append(f"  its hidden joint distribution has {len(ce.joint)} non-zero entries:")
        entries = ce.joint if full else ce.joint[:8]
        for name_, w in entries:
            L.append(f"    {q(w):>8}  {name_}")
        if len(ce.joint) > len(entries):
            L.append(f"    ... {len(ce.joint) - len(entries)} more (use --full or --json)")
    L.append("")
    L.append(f"method      {r.method}; model {r.model_kind}, {r.shape[0]} rows x {r.shape[1]} columns")
    L.append(DISCLAIMER)
    return "\n".join(L)


# -- quantum values, in the form the inequality is written in ------------------------
def quantum_value(v) -> dict[str, Any]:
    """One :class:`nogo.quantum.certify.Value` as the user wrote the inequality.

    The verdict is computed on the ``<=`` form; the value, its interval, the
    exact value and the bound printed here are those of the written left side
    (for ``>=`` a violation is a value *below* the bound).
    """
    from .quantum.numbers import arb_text

    ineq = v.inequality
    val = ineq.written_value(float(v.float_value))
    ball = ineq.written_value(v.ball) if v.ball is not None else None
    exact = None
    if v.exact is not None:
        import sympy

        sh = Fraction(ineq.shift)
        exact = sympy.nsimplify(ineq.sign * v.exact + sympy.Rational(sh.numerator, sh.denominator))
    bound = ineq.written_bound
    side = "below" if ineq.sense == ">=" else "above"
    other = "above" if ineq.sense == ">=" else "below"
    shown = arb_text(ball) if ball is not None else None
    gap = abs(val - float(bound))
    if v.verdict == "violated":
        lo = float((v.ball - type(v.ball)(Fraction(ineq.bound).numerator) / Fraction(ineq.bound).denominator).lower())
        words = (f"value in {shown} (interval arithmetic), {side} the bound {q(bound)} by at least {lo:.6g}: "
                 f"the inequality ({ineq.sense}) fails")
    elif v.verdict == "satisfied":
        words = f"value in {shown} (interval arithmetic), {other} the bound {q(bound)}: the inequality holds"
    elif v.verdict == "attained":
        words = f"value = {exact} = the bound exactly (sympy)"
    elif v.verdict == "undecided":
        words = f"value in {shown} contains the bound {q(bound)}; no exact decision"
    else:
        words = v.evidence
    return {"name": ineq.name, "text": ineq.display(), "sense": ineq.sense, "bound": q(bound),
            "value": val, "interval": shown, "exact": str(exact) if exact is not None else None,
            "verdict": v.verdict, "violation": gap if v.verdict == "violated" else 0.0, "evidence": words}
