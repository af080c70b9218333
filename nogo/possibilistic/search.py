"""Search a family of quantum experiments for possibilistic contradictions.

Given an experiment (state, scenario) and a list of candidate measurements
(named bases such as X, Y, Z, or equatorial directions on a grid of
angles), every assignment of candidates to the parties' settings is a
*point*.  At each point the support pattern of the Born-rule behaviour is
taken from :mod:`nogo.quantum` (exactly when the inputs are exact) and
decided against the bundle; contradictions are ranked by the size of a
minimal core, and the best few are minimised to a smallest proof.

For a read-out setting the candidate is the inner observer's measurement
(the party reports the record there).  Each point is a pure function of
picklable inputs, mapped through :func:`nogo.fanout.fan_out`.

The GHZ family is the classic target: Greenberger, Horne, Shimony,
Zeilinger, Am. J. Phys. 58, 1131 (1990); Mermin, PRL 65, 1838 (1990).
"""

from __future__ import annotations

import itertools
import time
from dataclasses import dataclass, field
from typing import Any

import sympy

from ..errors import InputError
from ..fanout import fan_out
from ..theory import Theory


def equatorial(k: int) -> dict[str, Any]:
    """k equally spaced qubit directions in the X–Y plane of the Bloch sphere (exact angles)."""
    from ..quantum.measurements import bloch  # noqa: PLC0415

    out = {}
    for j in range(k):
        phi = sympy.Rational(2 * j, k) * sympy.pi
        out[f"eq{j}/{k}"] = bloch(sympy.pi / 2, phi, f"equator at {sympy.sstr(phi)}")
    return out


def named_bases(names: list[str]) -> dict[str, Any]:
    """Pauli measurements by name (X, Y, Z)."""
    from ..errors import Where  # noqa: PLC0415
    from ..quantum.measurements import measurement_from_yaml  # noqa: PLC0415

    return {n: measurement_from_yaml(n, 2, Where(key="--bases"), f"basis {n}") for n in names}


@dataclass
class PointResult:
    choice: tuple[tuple[str, ...], ...]  # per party, the candidate name per setting
    contradiction: bool
    core_size: int = 0
    zero_test: str = ""


@dataclass
class SearchResult:
    points: int
    tried: int
    contradictions: list[PointResult]
    best: list[tuple[PointResult, Any]] = field(default_factory=list)  # (point, PossibilisticResult)
    complete: bool = True  # False when the time limit or point cap stopped the sweep
    seconds: float = 0.0


def _variant(experiment, choice, candidates):
    from ..quantum.experiment import Experiment  # noqa: PLC0415

    sc = experiment.scenario
    meas, inner = {}, {}
    for p, names in zip(sc.parties, choice):
        for x, n in zip(p.settings, names):
            o = experiment.read_out(p.name, x)
            if o is not None:
                inner[o.name] = candidates[n]
            else:
                meas[(p.name, x)] = candidates[n]
    return Experiment(sc, experiment.state, meas, inner, experiment.title, experiment.theory_file, experiment.file,
                      inner_at=experiment.inner_at)


def evaluate_point(item) -> PointResult:
    """One sweep point: support of the variant experiment, then a minimal core (pure function)."""
    from . import decide_pattern  # noqa: PLC0415
    from .support import support_from_experiment  # noqa: PLC0415

    theory, spec, experiment, candidates, choice, tolerance = item
    exp = _variant(experiment, choice, candidates)
    pattern = support_from_experiment(exp, tolerance)
    r = decide_pattern(theory, spec, pattern, minimise="minimal")
    return PointResult(choice, r.contradiction, r.facts_size, pattern.zero_test)


def search(theory: Theory, spec, experiment, candidates: dict[str, Any], same_for_all: bool = False,
           time_limit: float | None = 60.0, max_points: int = 20000, keep: int = 3,
           proof_time_limit: float | None = 20.0, tolerance: float | None = None,
           workers: int | None = None, progress=None) -> SearchResult:
    """Sweep candidate measurements for settings whose support contradicts *spec*.

    Parameters
    ----------
    theory, spec: declarations and bundle; experiment: a loaded
    :class:`nogo.quantum.Experiment` (its state is kept, its measurements
    are replaced); candidates: name -> measurement; same_for_all: give every
    party the same measurements (a symmetric sweep, far fewer points);
    time_limit, max_points: stop the sweep early (the result says so);
    keep: how many of the best contradictions get a smallest proof;
    tolerance: zero test for inexact inputs.

    Returns a :class:`SearchResult`: every contradictory point with its
    minimal core size, and the *keep* best with full results (proofs).

    Example
    -------
    >>> search(theory, "Bell-local", ghz_experiment, named_bases(["X", "Y"]))  # doctest: +SKIP
    """
    from . import decide_pattern  # noqa: PLC0415
    from .support import support_from_experiment  # noqa: PLC0415

    sc = theory.scenario
    if tuple(experiment.scenario.party_names) != sc.party_names:
        raise InputError("the experiment's scenario is not the theory's", hint="use an experiment of this theory")
    names = list(candidates)
    per_party = []
    for p in sc.parties:
        if len(names) < len(p.settings):
            raise InputError(f"{p.name} has {len(p.settings)} settings but only {len(names)} candidate measurements",
                             hint="give more candidates")
        per_party.append(list(itertools.permutations(names, len(p.settings))))
    if same_for_all:
        if len({len(p.settings) for p in sc.parties}) != 1:
            raise InputError("'same for all' needs every party to have the same number of settings")
        space = [tuple([c] * len(sc.parties)) for c in per_party[0]]
    else:
        space = itertools.product(*per_party)
    t0 = time.monotonic()
    results: list[PointResult] = []
    tried = 0
    complete = True
    batch: list = []

    def flush():
        nonlocal batch
        results.extend(fan_out(evaluate_point, batch, workers))
        batch = []

    total = 1
    for pp in ([per_party[0]] if same_for_all else per_party):
        total *= len(pp)
    for choice in space:
        if tried >= max_points or (time_limit is not None and time.monotonic() - t0 > time_limit):
            complete = False
            break
        batch.append((theory, spec, experiment, candidates, choice, tolerance))
        tried += 1
        if len(batch) >= max(1, (workers or 1) * 4):
            flush()
            if progress:
                progress(tried, total)
    flush()
    hits = sorted((r for r in results if r.contradiction), key=lambda r: (r.core_size, r.choice))
    best = []
    for r in hits[:keep]:
        exp = _variant(experiment, r.choice, candidates)
        pattern = support_from_experiment(exp, tolerance)
        best.append((r, decide_pattern(theory, spec, pattern, minimise="smallest", time_limit=proof_time_limit)))
    best.sort(key=lambda b: len(b[1].core))
    return SearchResult(total, tried, hits, best, complete, time.monotonic() - t0)


def describe_choice(theory: Theory, choice) -> str:
    parts = []
    for p, names in zip(theory.scenario.parties, choice):
        parts.append(f"{p.name}: " + ", ".join(f"{x}={n}" for x, n in zip(p.settings, names)))
    return "; ".join(parts)
