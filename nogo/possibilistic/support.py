"""Support patterns: which observed events (outcomes | settings) are possible.

A *support pattern* says, for some observed events p(a | s) of a scenario,
whether the event is possible (p > 0) or impossible (p = 0); events it does
not mention are left open.  It is the only experimental input of a
possibilistic (probability-free) argument: Hardy, PRL 71, 1665 (1993);
Greenberger, Horne, Shimony, Zeilinger, Am. J. Phys. 58, 1131 (1990);
Mermin, PRL 65, 1838 (1990).

Two ways to make one:

* a YAML file of our own layout (:func:`load_pattern`)::

      title: words
      parties: [A, B, C]          # optional; must match the theory's order
      unlisted: open              # open | possible | impossible (default open)
      runs:
        - settings: [1, 1, 1]
          possible: [[+1, +1, +1], [+1, -1, -1]]   # or: all | rest | {product: +1}
          impossible: rest                        # rest = every outcome not listed as possible

  ``{product: v}`` selects the outcomes whose numeric values multiply to v
  (for +1/-1 outcomes: parity rules, the language of GHZ arguments).

* from a behaviour (:func:`support_from_behaviour`): any mapping
  ``(settings, outcomes) -> number``.  Zero is decided exactly for
  ``int``/``Fraction``/sympy numbers (sympy's ``equals(0)`` after
  ``nsimplify`` is *not* used: a symbolic entry must simplify to 0); floats
  need an explicit tolerance, which the pattern then records and every
  report prints.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any, Mapping

from ..errors import InputError, Where
from ..inequality import Coord
from ..scenario import Scenario, outcome_label
from ..yamlread import YList, YMap, read_yaml_file, read_yaml_text


@dataclass(frozen=True)
class SupportPattern:
    """Possible and impossible observed events of one scenario.

    ``possible`` and ``impossible`` hold coordinates ``(settings, outcomes)``
    with labels exactly as in the scenario.  ``zero_test`` says how
    impossibility was decided ("declared", "exact", or "|p| <= 1e-12").
    """

    parties: tuple[str, ...]
    possible: frozenset[Coord]
    impossible: frozenset[Coord]
    title: str = ""
    source: str = ""
    zero_test: str = "declared"
    file: str | None = None
    where: dict[Coord, Where] = field(default_factory=dict, compare=False, repr=False)

    def status(self, coord: Coord) -> str:
        if coord in self.possible:
            return "possible"
        if coord in self.impossible:
            return "impossible"
        return "open"

    def to_dict(self) -> dict[str, Any]:
        """Plain data in the file layout (every event listed)."""
        runs: dict[tuple[str, ...], dict[str, list]] = {}
        for (s, a) in sorted(self.possible):
            runs.setdefault(s, {"possible": [], "impossible": []})["possible"].append(list(a))
        for (s, a) in sorted(self.impossible):
            runs.setdefault(s, {"possible": [], "impossible": []})["impossible"].append(list(a))
        return {"title": self.title, "parties": list(self.parties), "zero_test": self.zero_test,
                "runs": [{"settings": list(s), **v} for s, v in sorted(runs.items())]}


def _is_zero(value, tolerance: float | None) -> bool:
    if isinstance(value, (int, Fraction)):
        return value == 0
    try:
        import sympy  # noqa: PLC0415 - only when symbolic entries appear
        if isinstance(value, sympy.Basic):
            if value.is_number and value.is_zero is not None:
                return bool(value.is_zero)
            simplified = sympy.simplify(value)
            if simplified.is_zero is None:
                raise InputError(f"cannot decide exactly whether {value} is zero",
                                 hint="give a tolerance, or simplify the entry")
            return bool(simplified.is_zero)
    except ImportError:  # pragma: no cover - sympy is a dependency
        pass
    if tolerance is None:
        raise InputError(f"the behaviour has a floating-point entry ({value!r}); zero cannot be decided exactly",
                         hint="give a tolerance (e.g. 1e-9), which the report will state, or exact entries")
    return abs(complex(value)) <= tolerance


def support_from_behaviour(scenario: Scenario, behaviour: Mapping[Coord, Any],
                           tolerance: float | None = None, title: str = "",
                           source: str = "") -> SupportPattern:
    """The support pattern of a behaviour: impossible exactly where p = 0.

    Parameters
    ----------
    scenario: the scenario whose coordinates the behaviour uses.
    behaviour: ``{(settings, outcomes): p}``; entries may be ``int``,
        ``Fraction``, sympy expressions (decided exactly) or floats (only
        with ``tolerance``).  Every coordinate of the scenario must appear.
    tolerance: ``|p| <= tolerance`` counts as zero; ``None`` = exact only.

    Returns a :class:`SupportPattern` that lists every event, with
    ``zero_test`` saying how zero was decided.

    Example
    -------
    >>> from fractions import Fraction
    >>> pr = {c: (Fraction(1, 2) if (c[1][0] == c[1][1]) != (c[0] == ("2", "2")) else 0)
    ...       for c in scenario.coordinates()}          # the PR box  # doctest: +SKIP
    >>> support_from_behaviour(scenario, pr).zero_test   # doctest: +SKIP
    'exact'
    """
    possible, impossible = set(), set()
    missing = [c for c in scenario.coordinates() if c not in behaviour]
    if missing:
        raise InputError(f"the behaviour has no entry for {len(missing)} event(s), e.g. {missing[0]}",
                         hint="a behaviour must give p(outcomes | settings) for every coordinate")
    used_float = False
    for c in scenario.coordinates():
        v = behaviour[c]
        if isinstance(v, float) or isinstance(v, complex):
            used_float = True
        (impossible if _is_zero(v, tolerance) else possible).add(c)
    zero_test = f"|p| <= {tolerance:g}" if (used_float and tolerance is not None) else "exact"
    return SupportPattern(scenario.party_names, frozenset(possible), frozenset(impossible), title, source, zero_test)


# -- the YAML layout ------------------------------------------------------
_TOP_KEYS = {"title", "says", "source", "parties", "unlisted", "runs"}
_RUN_KEYS = {"settings", "possible", "impossible", "says"}


def _outcome_set(raw, scenario: Scenario, where: Where, listed_other: set | None) -> set[tuple[str, ...]] | str:
    """A run's outcome list: explicit tuples, 'all', 'rest' or {product: v}."""
    all_out = scenario.outcome_tuples()
    if isinstance(raw, str):
        if raw == "all":
            return set(all_out)
        if raw == "rest":
            return "rest"
        raise InputError(f"'{raw}' is not an outcome list", where, "write a list of outcome tuples, 'all', 'rest' or {product: +1}")
    if isinstance(raw, dict):
        if set(raw) != {"product"}:
            raise InputError("a rule for outcomes has the single key 'product'", where, "for example {product: -1}")
        vals = [p.values for p in scenario.parties]
        if any(v is None for v in vals):
            raise InputError("'product' needs numeric outcome labels for every party", where)
        target = Fraction(str(raw["product"]))
        out = set()
        for a in all_out:
            prod = Fraction(1)
            for p, lab in zip(scenario.parties, a):
                prod *= p.values[p.outcomes.index(lab)]
            if prod == target:
                out.add(a)
        return out
    if not isinstance(raw, list):
        raise InputError("expected a list of outcome tuples", where)
    out = set()
    n = len(scenario.parties)
    for i, item in enumerate(raw):
        w = raw.where(i, where.key) if isinstance(raw, YList) else where
        if isinstance(item, str):
            item = item.replace(",", " ").split()
        if not isinstance(item, list) or len(item) != n:
            raise InputError(f"an outcome tuple needs {n} labels, one per party {list(scenario.party_names)}", w)
        labels = []
        for p, v in zip(scenario.parties, item):
            lab = outcome_label(v) if not isinstance(v, str) else v
            if lab not in p.outcomes:
                raise InputError(f"'{lab}' is not an outcome of {p.name}", w, f"{p.name} has {list(p.outcomes)}")
            labels.append(lab)
        out.add(tuple(labels))
    return out


def pattern_from_yaml(data, scenario: Scenario, file: str | None = None) -> SupportPattern:
    """Validate a pattern mapping against the scenario it will be used with."""
    if not isinstance(data, dict):
        raise InputError("a support pattern is a mapping with 'runs'", Where(file, 1))
    for k in data:
        if k not in _TOP_KEYS:
            raise InputError(f"unknown key '{k}'", data.where(k, k) if isinstance(data, YMap) else Where(file),
                             "keys: " + ", ".join(sorted(_TOP_KEYS)))
    if "parties" in data:
        listed = [str(p) for p in data["parties"]] if isinstance(data["parties"], list) else None
        if listed != list(scenario.party_names):
            raise InputError(f"the pattern's parties {listed} differ from the theory's {list(scenario.party_names)}",
                             data.where("parties", "parties"), "list them in the theory's order")
    unlisted = str(data.get("unlisted", "open"))
    if unlisted not in ("open", "possible", "impossible"):
        raise InputError(f"'unlisted: {unlisted}' is not understood", data.where("unlisted", "unlisted"),
                         "one of: open, possible, impossible")
    runs = data.get("runs")
    if not isinstance(runs, list) or not runs:
        raise InputError("'runs' must be a non-empty list of {settings, possible, impossible}",
                         data.where("runs", "runs") if isinstance(data, YMap) else Where(file))
    possible: set[Coord] = set()
    impossible: set[Coord] = set()
    wheres: dict[Coord, Where] = {}
    n = len(scenario.parties)
    for i, run in enumerate(runs):
        w = runs.where(i, f"runs[{i}]") if isinstance(runs, YList) else Where(file, key=f"runs[{i}]")
        if not isinstance(run, dict) or "settings" not in run:
            raise InputError("each run needs 'settings'", w)
        for k in run:
            if k not in _RUN_KEYS:
                raise InputError(f"unknown key '{k}'", run.where(k, f"runs[{i}].{k}"), "keys: " + ", ".join(sorted(_RUN_KEYS)))
        raw_s = run["settings"]
        if isinstance(raw_s, str):
            raw_s = raw_s.replace(",", " ").split()
        if not isinstance(raw_s, list) or len(raw_s) != n:
            raise InputError(f"'settings' needs {n} labels, one per party {list(scenario.party_names)}", w)
        s = tuple(str(x) for x in raw_s)
        for p, x in zip(scenario.parties, s):
            if x not in p.settings:
                raise InputError(f"'{x}' is not a setting of {p.name}", w, f"{p.name} has {list(p.settings)}")
        pos = _outcome_set(run.get("possible", []), scenario, run.where("possible", f"runs[{i}].possible"), None)
        imp = _outcome_set(run.get("impossible", []), scenario, run.where("impossible", f"runs[{i}].impossible"), None)
        if pos == "rest" and imp == "rest":
            raise InputError("'rest' can stand for possible or for impossible, not both", w)
        everything = set(scenario.outcome_tuples())
        if pos == "rest":
            pos = everything - imp
        if imp == "rest":
            imp = everything - pos
        clash = pos & imp
        if clash:
            raise InputError(f"outcome(s) {sorted(clash)[:3]} at settings {s} are listed both possible and impossible", w)
        for a in pos:
            c = (s, a)
            if c in impossible:
                raise InputError(f"event {a} | {s} is impossible in an earlier run and possible here", w)
            possible.add(c)
            wheres[c] = w
        for a in imp:
            c = (s, a)
            if c in possible:
                raise InputError(f"event {a} | {s} is possible in an earlier run and impossible here", w)
            impossible.add(c)
            wheres[c] = w
    if unlisted != "open":
        rest = [c for c in scenario.coordinates() if c not in possible and c not in impossible]
        (possible if unlisted == "possible" else impossible).update(rest)
    return SupportPattern(scenario.party_names, frozenset(possible), frozenset(impossible),
                          str(data.get("title", "")), str(data.get("source", "")), "declared", file, wheres)


def load_pattern(path: str | Path, scenario: Scenario) -> SupportPattern:
    """Read a support pattern file and check it against *scenario*."""
    p = Path(path)
    if not p.exists():
        raise InputError(f"no such pattern file: {path}")
    return pattern_from_yaml(read_yaml_file(p), scenario, str(path))


def load_pattern_text(text: str, scenario: Scenario, name: str = "<text>") -> SupportPattern:
    return pattern_from_yaml(read_yaml_text(text, name), scenario, name)


def all_outcomes(scenario: Scenario) -> list[tuple[str, ...]]:
    return list(itertools.product(*(p.outcomes for p in scenario.parties)))


def support_from_experiment(experiment, tolerance: float | None = None) -> SupportPattern:
    """The support pattern of a quantum experiment (:mod:`nogo.quantum`).

    Exact inputs give an exact behaviour (sympy) and zero is decided exactly;
    otherwise the floating-point Born rule is used and *tolerance* is
    required (the pattern records it).  The Born rule itself lives in
    :mod:`nogo.quantum`; nothing here recomputes it.
    """
    from ..quantum import behaviour, exact_behaviour  # noqa: PLC0415 - optional stage

    title = experiment.title or (experiment.file or "quantum experiment")
    if experiment.is_exact:
        return support_from_behaviour(experiment.scenario, exact_behaviour(experiment), None, title,
                                      experiment.file or "")
    if tolerance is None:
        raise InputError("the experiment has numeric (inexact) inputs, so zero cannot be decided exactly",
                         Where(experiment.file), "give a tolerance (the report states it), or exact angles and states")
    return support_from_behaviour(experiment.scenario, behaviour(experiment), tolerance, title, experiment.file or "")
