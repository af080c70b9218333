"""Families of scenarios: one question over scenarios generated from a small template.

The template and its members (ordinary theories with generated local
agency; sequential and nested friends; the two readings of local agency)
are :mod:`nogo.family_template`.  This module sizes each member
(:func:`estimate`), answers the question for it (:func:`run_job`) and fans
the members out (:func:`run_family`).

Questions (each answer carries exact evidence):

* ``lf-equals-bell`` — does the local-friendliness set equal the Bell-local
  set?  First a cheap witness search: lifted CHSH inequalities (every pair of
  labs, every pair of settings, every sign pattern; for two outcomes) and the
  catalog entries that apply are decided under both bundles; an inequality
  the Bell-local bundle implies (Farkas certificate) and local friendliness
  does not (rational counterexample), both re-checked, shows "not equal".
  Without a witness, the oracle route (:mod:`nogo.family_oracle`): the
  Bell-local hull only, its vertices shown inside local friendliness, its
  affine hull and one facet per orbit (under the moves both sets share)
  decided on local friendliness with exact certificates.  ``--route facets``
  derives both sets exactly (:func:`nogo.facets.facets`) and compares them
  (:func:`nogo.facets.compare_results`).
* ``lf-equals-pd`` — does local friendliness equal the partially
  deterministic set (mixtures, over a setting-independent lam, of
  no-signalling behaviours whose inner records, hence read-out outcomes, lam
  fixes; arXiv:2510.25127)?  Both derived exactly and compared.
* ``facets`` — the number of facets (and classes) of one bundle.
* ``implies`` — does a bundle imply an inequality (catalog name or text)?

Size estimates (:func:`estimate`) decide what is in reach before anything
runs: coordinates, dimension of the no-signalling space, the number of
deterministic local strategies, and the measured hull cost
(:func:`nogo.polytope.hull_estimate`).  The time limit per member is passed
to the facet derivation (checked between hull rounds) and checked between
witness decisions.  Members fan out through :func:`nogo.fanout.fan_out`;
each is a pure function of a picklable :class:`Job`.
"""

from __future__ import annotations

import itertools
import math
import time
from dataclasses import asdict, dataclass, field
from typing import Any

from .errors import InputError, Where
from .family_template import PARTY_NAMES, Member, Template, template_from_yaml  # noqa: F401
from .fanout import fan_out

QUESTIONS = ("lf-equals-bell", "lf-equals-pd", "facets", "implies")
#: the largest Bell-local hull measured class by class here (``nogo facets``, symmetric route, one busy
#: core): three labs, two settings each, 64 vertices in dimension 26 — 53,856 facets in 46 classes in 66 s
#: (results/bell-3x2-Bell-local.txt); a plain hull of the same points takes about 8 minutes
CLASS_HULL_MEASURED = (64, 26)
LP_COLUMNS = 5000  # larger local-friendliness models: an exact decision takes minutes here (measured: 1728 columns, ~1 s)


# ---------------------------------------------------------------------------
# size estimates
# ---------------------------------------------------------------------------
def estimate(m: Member) -> dict[str, Any]:
    """What a member costs, before anything runs."""
    from .polytope import hull_estimate

    coords = math.prod(m.settings) * m.outcomes ** m.labs
    dim = math.prod(s * (m.outcomes - 1) + 1 for s in m.settings) - 1
    bell_vertices = m.outcomes ** sum(m.settings)
    hull = hull_estimate(bell_vertices, dim)
    lf_columns = math.prod(m.settings) * m.outcomes ** (m.labs + (m.sequence + m.nested) * sum(m.friends))
    in_reach = not hull.startswith("minutes") and bell_vertices <= 200_000
    lp_in_reach = lf_columns <= LP_COLUMNS
    # the oracle route needs the Bell-local hull only, class by class under its symmetries
    by_classes = in_reach or (bell_vertices <= CLASS_HULL_MEASURED[0] and dim <= CLASS_HULL_MEASURED[1])
    return {"coordinates": coords, "dimension": dim, "bell_vertices": bell_vertices, "hull": hull,
            "lf_columns_bound": lf_columns, "hull_in_reach": in_reach, "lp_in_reach": lp_in_reach,
            "bell_hull_by_classes_in_reach": by_classes}


# ---------------------------------------------------------------------------
# one member
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Job:
    member: Member
    question: str
    bundle: str = "local-friendliness"
    inequality: str = ""
    time_limit: float | None = 60.0
    reach: str = "estimate"  # "estimate": skip hulls the estimate puts out of reach; "all": try every member
    route: str = "oracle"  # lf-equals-bell: "oracle" (one hull, facets checked by LP) | "facets" (both hulls)


@dataclass
class MemberResult:
    member: Member
    question: str
    answer: str  # "equal" | "not equal" | "implied" | "not implied" | "<n> facets" | "out of reach" | ...
    estimate: dict[str, Any]
    facets: dict[str, int] = field(default_factory=dict)  # bundle -> facet count (complete derivations only)
    classes: dict[str, int] = field(default_factory=dict)
    relation: str = ""
    evidence: list[str] = field(default_factory=list)
    witness: dict[str, Any] | None = None
    seconds: float = 0.0
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["member"] = {"key": self.member.key, "describe": self.member.describe(), **asdict(self.member)}
        return d


def chsh_family(m: Member) -> list[str]:
    """Every lifted CHSH inequality of a two-outcome member (pairs of labs, pairs of settings, signs).

    Pairs of later settings come first: members put the read-out settings first, and a witness needs
    settings that are not read out, so the search usually ends early (the order changes no answer).
    """
    if m.outcomes != 2:
        return []
    out = []
    for i, j in itertools.combinations(range(m.labs), 2):
        P, Q = m.parties[i], m.parties[j]
        for x1, x2 in reversed(list(itertools.combinations(range(1, m.settings[i] + 1), 2))):
            for y1, y2 in reversed(list(itertools.combinations(range(1, m.settings[j] + 1), 2))):
                terms = [(x1, y1), (x1, y2), (x2, y1), (x2, y2)]
                for minus in range(4):
                    for sign in (1, -1):
                        parts = []
                        for k, (x, y) in enumerate(terms):
                            s = sign * (-1 if k == minus else 1)
                            parts.append(f"{'+' if s > 0 else '-'} <{P}{x} {Q}{y}>")
                        text = " ".join(parts).lstrip("+ ")
                        out.append(f"{text} <= 2")
    return out


def _catalog_witnesses(m: Member, th) -> list:
    from .catalog import load_catalog

    found = []
    for entry in load_catalog().values():
        try:
            found.append(entry.inequality(th.scenario))
        except InputError:
            continue
    return found


def _witness(job: Job, th, deadline: float | None) -> tuple[dict[str, Any] | None, list[str]]:
    """An inequality Bell-local implies and local friendliness does not, both re-checked exactly."""
    from .check import decide, recheck
    from .compile import compile_bundle
    from .inequality import parse_inequality

    lf = compile_bundle(th, "local-friendliness")
    bell = compile_bundle(th, "Bell-local")
    candidates = [parse_inequality(th.scenario, t, "lifted CHSH", "Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969)")
                  for t in chsh_family(job.member)]
    candidates += list(_catalog_witnesses(job.member, th))
    notes = []
    seen = set()
    refused = 0
    for ineq in candidates:
        if deadline is not None and time.perf_counter() > deadline:
            notes.append("witness search stopped at the time limit")
            break
        key = ineq.canonical()
        if key in seen:
            continue
        seen.add(key)
        try:
            r_lf = decide(lf, ineq)
        except InputError:  # the marginal guard: a signalling set gives the inequality no single value
            refused += 1
            continue
        if r_lf.implied:
            continue
        r_bell = decide(bell, ineq)
        if not r_bell.implied:
            continue
        bad = recheck(lf, r_lf) or recheck(bell, r_bell)
        if bad:
            notes.append(f"re-check failed for {ineq.text}: {bad}")
            continue
        return ({"inequality": ineq.text, "name": ineq.name, "bound": str(ineq.bound),
                 "local_friendliness_maximum": str(r_lf.maximum), "bell_local_maximum": str(r_bell.maximum),
                 "evidence": "Bell-local: Farkas certificate re-checked exactly; local friendliness: rational "
                             "counterexample point re-checked exactly"}, notes)
    notes.append(f"no witness among {len(seen)} lifted CHSH / catalog inequalities"
                 + (f" ({refused} refused: their marginals depend on other labs' settings under local friendliness)"
                    if refused else ""))
    return None, notes


def run_job(job: Job) -> MemberResult:
    """Answer one member (a pure function of the job; errors become the answer, not an exception)."""
    t0 = time.perf_counter()
    m = job.member
    est = estimate(m)
    res = MemberResult(m, job.question, "", est)
    deadline = None if job.time_limit is None else t0 + job.time_limit
    try:
        th = m.theory()
        if job.question == "lf-equals-bell":
            _lf_vs_bell(job, th, res, deadline)
        elif job.question == "lf-equals-pd":
            _compare_sets(job, th, res, deadline, "partly-determined")
        elif job.question == "facets":
            _facet_count(job, th, res, deadline)
        elif job.question == "implies":
            _implies(job, th, res)
        else:
            raise InputError(f"unknown question '{job.question}'", Where("command line", key="question"))
    except InputError as exc:
        res.answer = "refused"
        res.notes.append(exc.message)
    res.seconds = round(time.perf_counter() - t0, 2)
    return res


def _remaining(deadline: float | None) -> float | None:
    return None if deadline is None else max(1.0, deadline - time.perf_counter())


def _lf_vs_bell(job: Job, th, res: MemberResult, deadline) -> None:
    from .facets import compare_results, facets

    if res.estimate["lp_in_reach"] or job.reach == "all":
        wit, notes = _witness(job, th, deadline)
    else:
        wit, notes = None, [f"witness search not attempted: local-friendliness model up to "
                            f"{res.estimate['lf_columns_bound']} columns (reach 'all' tries it)"]
    res.notes += notes
    if wit is not None:
        res.answer, res.witness, res.relation = "not equal", wit, "Bell-local inside local friendliness, strictly"
        res.evidence.append(f"witness {wit['inequality']}: Bell-local maximum {wit['bell_local_maximum']}, "
                            f"local friendliness maximum {wit['local_friendliness_maximum']} (both exact)")
    oracle = job.route == "oracle" and wit is None and res.estimate["bell_hull_by_classes_in_reach"]
    if not res.estimate["hull_in_reach"] and job.reach != "all" and not oracle:
        if wit is None:
            res.answer = "out of reach"
            res.notes.append(f"exact hull estimated at {res.estimate['hull']}: not attempted (reach 'all' tries it)")
        return
    if job.route == "oracle" and wit is None:  # equality expected: one hull, the rest by the oracle
        from .family_oracle import equal_by_oracle  # noqa: PLC0415 - family_oracle imports nothing of family

        equal_by_oracle(th, res, deadline)
        return
    r1 = facets(th, "local-friendliness", cache=False, time_limit=_remaining(deadline))
    r2 = facets(th, "Bell-local", cache=False, time_limit=_remaining(deadline))
    if r1.status != "complete" or r2.status != "complete":
        if wit is None:
            res.answer = "out of time"
        res.notes.append("facet derivation hit the time limit")
        return
    c = compare_results(r1, r2)
    res.facets = {"local-friendliness": len(r1.facets), "Bell-local": len(r2.facets)}
    res.classes = {"local-friendliness": len(r1.classes), "Bell-local": len(r2.classes)}
    res.relation = {"equal": "equal", "first inside second": "local friendliness inside Bell-local, strictly",
                    "second inside first": "Bell-local inside local friendliness, strictly",
                    "neither": "neither contains the other"}[c.relation]
    res.evidence.append("both sets derived exactly (certified vertices, Farkas-certified facets); containment "
                        "checked in exact integer arithmetic")
    answer = "equal" if c.relation == "equal" else "not equal"
    if wit is not None and answer == "equal":
        res.answer = "disagreement"
        res.notes.append("a witness and the facet comparison disagree: investigate")
        return
    res.answer = answer


def _compare_sets(job: Job, th, res: MemberResult, deadline, other: str) -> None:
    """Local friendliness against another bundle of the member, both derived exactly."""
    from .facets import compare_results, facets

    if not res.estimate["hull_in_reach"] and job.reach != "all":
        res.answer = "out of reach"
        res.notes.append(f"exact hull estimated at {res.estimate['hull']}: not attempted (reach 'all' tries it)")
        return
    r1 = facets(th, "local-friendliness", cache=False, time_limit=_remaining(deadline))
    r2 = facets(th, other, cache=False, time_limit=_remaining(deadline))
    if r1.status != "complete" or r2.status != "complete":
        res.answer = "out of time"
        return
    c = compare_results(r1, r2)
    res.facets = {"local-friendliness": len(r1.facets), other: len(r2.facets)}
    res.classes = {"local-friendliness": len(r1.classes), other: len(r2.classes)}
    res.relation = c.relation
    res.answer = "equal" if c.relation == "equal" else "not equal"
    res.evidence.append("both sets derived exactly (certified vertices, Farkas-certified facets); containment "
                        "checked in exact integer arithmetic")


def _facet_count(job: Job, th, res: MemberResult, deadline) -> None:
    from .facets import facets

    if not res.estimate["hull_in_reach"] and job.reach != "all":
        res.answer = "out of reach"
        res.notes.append(f"exact hull estimated at {res.estimate['hull']}")
        return
    r = facets(th, job.bundle, cache=False, time_limit=_remaining(deadline))
    if r.status != "complete":
        res.answer = "out of time"
        return
    res.facets = {job.bundle: len(r.facets)}
    res.classes = {job.bundle: len(r.classes)}
    res.answer = f"{len(r.facets)} facets"
    res.evidence.append("certified vertices, Farkas-certified facets, facet rank checked exactly")


def _implies(job: Job, th, res: MemberResult) -> None:
    from .catalog import resolve_inequality
    from .check import decide, recheck
    from .compile import compile_bundle

    if not job.inequality:
        raise InputError("the question 'implies' needs an inequality", Where("command line", key="inequality"))
    ineq = resolve_inequality(th.scenario, job.inequality)
    model = compile_bundle(th, job.bundle)
    r = decide(model, ineq)
    bad = recheck(model, r)
    if bad:
        res.answer = "unverified"
        res.notes.append(f"re-check failed: {bad}")
        return
    res.answer = r.verdict
    res.evidence.append(f"maximum {r.maximum} against bound {ineq.bound}: "
                        + ("Farkas certificate" if r.implied else "rational counterexample") + " re-checked exactly")


# ---------------------------------------------------------------------------
# the family
# ---------------------------------------------------------------------------
@dataclass
class FamilyResult:
    question: str
    template: Template
    results: list[MemberResult]
    seconds: float

    def to_dict(self) -> dict[str, Any]:
        return {"question": self.question, "template": asdict(self.template), "seconds": round(self.seconds, 2),
                "members": [r.to_dict() for r in self.results]}


def run_family(template: Template, question: str, *, bundle: str = "local-friendliness", inequality: str = "",
               time_limit: float | None = 60.0, workers: int | None = None, reach: str = "estimate",
               route: str = "oracle") -> FamilyResult:
    """Run *question* over every member of *template* (fanned out through :func:`nogo.fanout.fan_out`)."""
    if question not in QUESTIONS:
        raise InputError(f"unknown question '{question}'", Where("command line", key="question"),
                         "one of: " + ", ".join(QUESTIONS))
    t0 = time.perf_counter()
    jobs = [Job(m, question, bundle, inequality, time_limit, reach, route) for m in template.members()]
    if not jobs:
        raise InputError("the template generates no scenario", Where("command line"),
                         "a per-lab settings spec like 3/2 needs as many labs as numbers")
    results = fan_out(run_job, jobs, workers=workers)
    return FamilyResult(question, template, results, time.perf_counter() - t0)
