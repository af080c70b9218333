"""The notebook API: ``nogo.load(path)`` and results that display themselves.

Each method of :class:`TheoryHandle` mirrors one command and returns a view:
``str(view)`` is the command's text, ``view.to_dict()`` its JSON, and the
view renders itself in a terminal (``__rich__``) and in notebooks
(``_repr_html_``, ``_repr_latex_``).  The underlying result objects
(``view.result``) are those of the library modules, with their exact
evidence.  Numbers are those of the inequality as written (for ``>=`` the
smallest value of the left side).

>>> import nogo
>>> th = nogo.load("theories/bell-2x2.yaml")
>>> r = th.check("Bell-local", "CHSH")
>>> r.verdict, r.value, r.bound
('implied', Fraction(2, 1), Fraction(2, 1))
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any


def latex_of(text: str) -> str:
    """An inequality in the trade's notation as LaTeX: correlators with angle brackets, <= as \\le."""
    import re

    t = text.replace("<=", r" \le ").replace(">=", r" \ge ")
    t = re.sub(r"<([^<>]*)>", lambda m: r"\langle " + " ".join(
        re.sub(r"^([A-Za-z]+)_?(\w+)$", r"\1_{\2}", it) for it in m.group(1).split()) + r" \rangle", t)
    t = re.sub(r"p_\{?([A-Za-z,]+)\}?\(", r"p_{\1}(", t)
    return t.replace("|", r"\,|\,")


class _View:
    """Shared display: text in a terminal, <pre> in HTML, a short LaTeX summary."""

    def text(self) -> str:  # pragma: no cover - overridden
        raise NotImplementedError

    def __str__(self) -> str:
        return self.text()

    def __repr__(self) -> str:
        return self.text()

    def __rich__(self):
        from rich.text import Text

        return Text(self.text())

    def _repr_html_(self) -> str:
        return f"<pre style='white-space: pre-wrap'>{html.escape(self.text())}</pre>"

    def _repr_latex_(self) -> str:
        return "$" + self.latex() + "$"

    def latex(self) -> str:
        return r"\text{" + self.text().splitlines()[0].replace("_", r"\_") + "}"


@dataclass(repr=False)
class CheckView(_View):
    result: Any  # nogo.check.CheckResult
    theory_file: str

    @property
    def verdict(self) -> str:
        return self.result.verdict

    @property
    def implied(self) -> bool:
        return self.result.implied

    @property
    def value(self) -> Fraction:
        """The decisive value of the left side as written (largest for <=, smallest for >=), exact."""
        return self.result.inequality.written_value(self.result.maximum)

    @property
    def bound(self) -> Fraction:
        return self.result.inequality.written_bound

    def text(self) -> str:
        from .report import check_to_text

        return check_to_text(self.result, self.theory_file)

    def to_dict(self) -> dict:
        from .report import check_to_dict

        return check_to_dict(self.result, self.theory_file)

    def latex(self) -> str:
        from .report import q

        ineq = self.result.inequality
        op = r"\min" if ineq.sense == ">=" else r"\max"
        rel = {"<=": r"\le", ">": ">", ">=": r"\ge", "<": "<"}[ineq.holds_word(self.implied)]
        return (latex_of(ineq.display()) + r"\quad\text{" + self.verdict + "}: " + op +
                r"_{\text{" + self.result.bundle.replace("_", r"\_") + "}} = " + q(self.value) + " " + rel + " "
                + q(self.bound))

    def _repr_html_(self) -> str:
        colour = "#2e7d32" if self.implied else "#c62828"
        head = (f"<p><b style='color:{colour}'>{html.escape(self.verdict.upper())}</b> "
                f"&mdash; {html.escape(self.result.bundle)}: {html.escape(self.result.inequality.display())}</p>")
        return head + super()._repr_html_()


@dataclass(repr=False)
class MinimalView(_View):
    result: Any  # nogo.minimal.SearchResult
    theory_file: str

    @property
    def minimal(self) -> list[list[str]]:
        return [[p for p in self.result.pool if p in a.subset] for a in self.result.minimal]

    @property
    def maximal(self) -> list[list[str]]:
        return [[p for p in self.result.pool if p in a.subset] for a in self.result.maximal]

    def text(self) -> str:
        r = self.result
        L = [f"inequality  {r.inequality.display()}", f"pool        {', '.join(r.pool)}",
             "minimal implicating sets:"]
        L += ["  {" + ", ".join(s) + "}" for s in self.minimal] or ["  none"]
        L.append("maximal non-implying sets:")
        L += ["  {" + ", ".join(s) + "}" for s in self.maximal] or ["  none"]
        L.append(f"oracle calls {r.oracle_calls} (brute force {r.brute_force})"
                 + ("" if r.complete else "; PARTIAL (time limit)"))
        return "\n".join(L)

    def to_dict(self) -> dict:
        from .commands.minimal import search_to_dict

        return search_to_dict([self.result], self.theory_file)


@dataclass(repr=False)
class FacetsView(_View):
    result: Any  # nogo.facets.FacetResult

    @property
    def count(self) -> int:
        return len(self.result.facets)

    def text(self) -> str:
        r = self.result
        L = [f"bundle      {r.bundle}: {len(r.facets)} facets in {len(r.classes)} classes"]
        for c in r.classes:
            rep = r.facets[c.representative]
            L.append(f"  {c.name:<10} {c.size:>6}  {rep.text()}" + (f"   ({c.known_as})" if c.known_as else ""))
        return "\n".join(L)

    def to_dict(self) -> dict:
        from .facetexport import export

        import json

        return json.loads(export(self.result, "json"))


@dataclass(repr=False)
class CompareView(_View):
    result: Any  # nogo.facets.Comparison

    @property
    def relation(self) -> str:
        return self.result.relation

    def text(self) -> str:
        c = self.result
        return (f"{c.first.bundle} vs {c.second.bundle}: {c.relation}\n"
                f"  vertices of {c.first.bundle} outside {c.second.bundle}: {len(c.first_outside)}\n"
                f"  vertices of {c.second.bundle} outside {c.first.bundle}: {len(c.second_outside)}")


@dataclass(repr=False)
class QuantumView(_View):
    experiment: Any
    values: list  # nogo.quantum.certify.Value
    robustness: list = field(default_factory=list)

    def rows(self) -> list[dict]:
        from .report import quantum_value

        return [quantum_value(v) for v in self.values]

    def text(self) -> str:
        L = [f"experiment  {self.experiment.title or self.experiment.file}"]
        for d in self.rows():
            L.append(f"  {d['name'] or d['text']:<22} value {d['value']:.6f}, bound {d['sense']} {d['bound']}: "
                     f"{d['verdict']}")
            L.append(f"  {'':<22} {d['evidence']}")
        for r in self.robustness:
            v = f"critical visibility {r.visibility:.6f}" if r.visibility is not None else r.status
            L.append(f"  {r.bundle:<22} {'inside' if r.inside else 'outside' if r.inside is False else '?'}; {v}")
        return "\n".join(L)

    def to_dict(self) -> dict:
        return {"experiment": self.experiment.file, "inequalities": self.rows(),
                "bundles": [{"bundle": r.bundle, "inside": r.inside, "critical_visibility": r.visibility}
                            for r in self.robustness]}


class TheoryHandle(_View):
    """A loaded theory file with methods mirroring the commands."""

    def __init__(self, path: str | Path):
        from .theory import load_theory

        self.path = str(path)
        self.theory = load_theory(path)
        self.scenario = self.theory.scenario

    @property
    def bundles(self) -> list[str]:
        return list(self.theory.bundles)

    def text(self) -> str:
        return (f"{self.theory.title or self.path}\n{self.scenario.describe()}\n"
                f"bundles: {', '.join(self.bundles)}")

    def inequality(self, spec, match: str | None = None):
        """A catalog name, an expression or a file, read in this theory's scenario."""
        from .catalog import resolve_inequality
        from .inequality import Inequality

        return spec if isinstance(spec, Inequality) else resolve_inequality(self.scenario, spec, match=match)

    def check(self, bundle: str, inequality, match: str | None = None) -> CheckView:
        """``nogo check``: exact verdict with a Farkas certificate or a counterexample (re-checked)."""
        from .check import decide, recheck
        from .compile import compile_bundle

        ineq = self.inequality(inequality, match)
        model = compile_bundle(self.theory, bundle)
        r = decide(model, ineq)
        bad = recheck(model, r)
        if bad:
            raise RuntimeError(f"the evidence failed its exact re-check: {bad}")
        return CheckView(r, self.path)

    def minimal(self, inequality, pool=None, fixed=(), time_limit: float | None = None,
                match: str | None = None) -> MinimalView:
        """``nogo minimal``: every minimal implicating and maximal non-implying set of the pool."""
        from .minimal import find_minimal_sets

        r = find_minimal_sets(self.theory, self.inequality(inequality, match), pool, fixed=fixed,
                              time_limit=time_limit)
        return MinimalView(r, self.path)

    def facets(self, bundle: str, **options) -> FacetsView:
        """``nogo facets``: every facet of the bundle's set, in symmetry classes (options as the library's)."""
        from .facets import facets

        return FacetsView(facets(self.theory, bundle, **options))

    def compare(self, first: str, second: str, **options) -> CompareView:
        """``nogo compare``: equal, contained, or neither, with witnesses."""
        from .facets import compare

        return CompareView(compare(self.theory, first, second, **options))

    def quantum(self, experiment: str, inequalities=(), bundles=(), match: str | None = None) -> QuantumView:
        """``nogo quantum``: values of inequalities on an experiment's behaviour, certified, and the
        critical visibility against each bundle."""
        from .compile import compile_bundle
        from .quantum import load_experiment
        from .quantum.certify import evaluate
        from .quantum.visibility import robustness

        exp = load_experiment(experiment, self.theory)
        ineqs = [self.inequality(s, match) for s in inequalities]
        values = evaluate(exp, ineqs) if ineqs else []
        robust = [robustness(compile_bundle(self.theory, b), exp) for b in bundles]
        return QuantumView(exp, values, robust)


def load(path: str | Path) -> TheoryHandle:
    """Read a theory file (see :class:`TheoryHandle`)."""
    return TheoryHandle(path)
