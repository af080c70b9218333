"""Families of scenarios: one question over scenarios generated from a small template.

A *template* gives ranges: numbers of labs, settings per lab (one number for
every lab, or one per lab such as ``3/2``), numbers of outcomes, and which
labs hold an inner observer (read out at the lab's setting 1).  Every
combination is a :class:`Member`; each member is written as an ordinary
theory (YAML text, :func:`Member.theory_text`) with absoluteness, local
agency *generated from the light-cone structure* (:mod:`nogo.lightcone`,
labs pairwise space-like, inner observers before their lab's choice) and
the Bell-local set as mixtures of deterministic local strategies (J. S.
Bell, Physics 1, 195 (1964); equal to joint counterfactual outcomes with
setting independence by A. Fine, PRL 48, 291 (1982); the mixture model has
one column per strategy, far smaller than the counterfactual joint).

Sequential friends (``sequence: k``): in every friend lab the friend
measures k times in sequence; at setting j <= k the super-observer reads out
the j-th record, at a larger setting it undoes every measurement and measures
itself; the j-th record exists only in runs whose setting is >= j, and each
stage's decision (read out now, or undo and instruct the next measurement) is
free.  Local agency then says: the joint of the records made so far and of
every event in the other labs does not depend on the decisions still to
come.  This is *exactly* the scenario with k inner observers per lab, all
present in every run and measuring before the lab's choice (records
``A_f1..A_fk`` read out at settings 1..k, local agency generated for the
default light cone): a model of the latter gives one of the former by
forgetting the records that do not exist; conversely a sequential model is
extended, lab by lab, by drawing the missing records at setting j from their
conditional at a setting > k given the earlier records and every event
outside the lab (the stage-j independence makes the marginals agree, and
the extension keeps every other lab's constraints, since its joint at
setting j is the image of the joint at the largest setting).  That argument
is ours (written out in DEVELOPERS.md); the sequential scenario itself is
that of arXiv:2305.09102.

Questions (each answer carries exact evidence):

* ``lf-equals-bell`` — does the local-friendliness set equal the Bell-local
  set?  First a cheap witness search: lifted CHSH inequalities (every pair of
  labs, every pair of settings, every sign pattern; for two outcomes) and the
  catalog entries that apply are decided under both bundles; an inequality
  the Bell-local bundle implies (Farkas certificate) and local friendliness
  does not (rational counterexample), both re-checked, shows "not equal".
  Then, where the size estimate puts it in reach, both sets are derived
  exactly (:func:`nogo.facets.facets`) and compared
  (:func:`nogo.facets.compare_results`): equal / strictly larger, with facet
  counts.
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
from .fanout import fan_out

QUESTIONS = ("lf-equals-bell", "lf-equals-pd", "facets", "implies")
PARTY_NAMES = "ABCDEFGH"
#: the largest Bell-local hull measured class by class here (``nogo facets``, symmetric route, one busy
#: core): three labs, two settings each, 64 vertices in dimension 26 — 53,856 facets in 46 classes in 66 s
#: (results/bell-3x2-Bell-local.txt); a plain hull of the same points takes about 8 minutes
CLASS_HULL_MEASURED = (64, 26)
LP_COLUMNS = 5000  # larger local-friendliness models: an exact decision takes minutes here (measured: 1728 columns, ~1 s)


@dataclass(frozen=True)
class Member:
    """One scenario of a family: settings per lab, outcomes, which labs hold an inner observer."""

    settings: tuple[int, ...]
    outcomes: int
    friends: tuple[bool, ...]
    sequence: int = 1  # friend measurements per friend lab (sequential friend, read out at settings 1..sequence)

    @property
    def labs(self) -> int:
        return len(self.settings)

    @property
    def parties(self) -> tuple[str, ...]:
        return tuple(PARTY_NAMES[i] for i in range(self.labs))

    @property
    def key(self) -> str:
        fr = "".join(p for p, f in zip(self.parties, self.friends) if f) or "none"
        seq = f"-seq{self.sequence}" if self.sequence > 1 else ""
        return f"{self.labs}labs-s{'x'.join(map(str, self.settings))}-o{self.outcomes}-friends-{fr}{seq}"

    def describe(self) -> str:
        fr = ", ".join(p for p, f in zip(self.parties, self.friends) if f) or "none"
        seq = (f", each friend measuring {self.sequence} times in sequence (read out at settings 1..{self.sequence})"
               if self.sequence > 1 else "")
        return (f"{self.labs} labs, settings {'/'.join(map(str, self.settings))}, {self.outcomes} outcomes, "
                f"inner observers in {fr}{seq}")

    def records(self, party: str) -> list[tuple[str, int]]:
        """The inner records of a lab with the setting each is read out at."""
        if not self.friends[self.parties.index(party)]:
            return []
        if self.sequence == 1:
            return [(f"{party}_in", 1)]
        return [(f"{party}_f{j}", j) for j in range(1, self.sequence + 1)]

    def outcome_labels(self) -> list[str]:
        return ["+1", "-1"] if self.outcomes == 2 else [str(k) for k in range(self.outcomes)]

    def theory_text(self) -> str:
        outs = ", ".join(self.outcome_labels())
        lines = [f"title: {self.describe()}", "scenario:", "  parties:"]
        for p, m in zip(self.parties, self.settings):
            lines.append(f"    {p}: {{settings: [{', '.join(str(x + 1) for x in range(m))}], outcomes: [{outs}]}}")
        friends = [p for p, f in zip(self.parties, self.friends) if f]
        records = [(p, r, x) for p in self.parties for r, x in self.records(p)]
        if friends:
            lines.append("  inner_observers:")
            lines += [f"    {r}: {{lab: {p}, outcomes: [{outs}], read_out_at: {x}}}" for p, r, x in records]
        lines += ["light_cone:", "  says: labs pairwise space-like; inner observers measure before their lab's choice",
                  "  name: agency", "assumptions:"]
        if friends:
            lines += ["  absoluteness:", "    says: the inner records have single values in every run",
                      "    source: K.-W. Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607",
                      f"    absolute: [{', '.join(r for _, r, _ in records)}]"]
        sets = ", ".join(f"{p}.setting" for p in self.parties)
        lines += ["  hidden:", "    says: a hidden variable lam of unspecified finite size", "    hidden: lam",
                  "  lam-free:", "    says: lam does not depend on the settings",
                  "    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)",
                  f"    independent: {{events: [lam], of: [{sets}]}}",
                  "  predetermined-local:", "    says: each outcome is a function of lam and its own lab's setting",
                  "    source: J. S. Bell, Physics 1, 195 (1964)", "    predetermined:"]
        lines += [f"      - {{events: [{p}], given: [lam], depends_on: [{p}.setting]}}" for p in self.parties]
        recs = [r for _, r, _ in records]
        if recs:
            lines += ["  records-fixed:", "    says: given lam, each inner record is fixed by lam and its own lab's setting",
                      "    source: partially deterministic behaviours, arXiv:2510.25127", "    predetermined:"]
            lines += [f"      - {{events: [{r}], given: [lam], depends_on: [{p}.setting]}}" for p, r, _ in records]
            lines += ["  records-free:", "    says: given lam, the inner records depend on no setting",
                      f"    independent: {{events: [{', '.join(recs)}], of: [{sets}], given: [lam]}}"]
        lines += ["  no-signal-given-lam:", "    says: given lam, no lab's setting changes the other labs' outcomes",
                  "    source: S. Popescu and D. Rohrlich, Found. Phys. 24, 379 (1994)", "    independent:"]
        lines += [f"      - {{events: [{', '.join(q for q in self.parties if q != p)}], of: [{p}.setting], given: [lam]}}"
                  for p in self.parties]
        allcf = ", ".join(f'"{p}@*"' for p in self.parties)
        lines += ["  counterfactual:", "    says: an outcome exists for every setting of every lab, jointly",
                  "    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)", f"    counterfactual: [{', '.join(self.parties)}]",
                  "  setting-independence:", "    says: the counterfactual outcomes do not depend on the settings chosen",
                  "    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)",
                  f"    independent: {{events: [{allcf}], of: [{sets}]}}"]
        pd = (["absoluteness"] if friends else []) + ["hidden", "lam-free"] + \
            (["records-fixed", "records-free"] if recs else []) + ["no-signal-given-lam"]
        lines += ["bundles:", f"  partly-determined: [{', '.join(pd)}]",
                  f"  local-friendliness: [{', '.join((['absoluteness'] if friends else []) + [f'agency-{p}' for p in self.parties])}]",
                  "  Bell-local: [hidden, lam-free, predetermined-local]",
                  "  Bell-local-joint: [counterfactual, setting-independence]"]
        return "\n".join(lines) + "\n"

    def theory(self):
        from .theory import load_theory_text

        return load_theory_text(self.theory_text(), f"<family member {self.key}>")


# ---------------------------------------------------------------------------
# templates
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Template:
    labs: tuple[int, ...] = (2,)
    settings: tuple[str, ...] = ("2", "3")  # "3" = every lab; "3/2" = per lab (only for that many labs)
    outcomes: tuple[int, ...] = (2,)
    friends: tuple[str, ...] = ("all",)  # all | none | first | all-but-first | each (every subset, up to order)
    sequence: tuple[int, ...] = (1,)  # friend measurements per friend lab (sequential friends)

    def members(self) -> list[Member]:
        out: list[Member] = []
        for n in self.labs:
            if not 2 <= n <= len(PARTY_NAMES):
                raise InputError(f"{n} labs: a family member has 2 to {len(PARTY_NAMES)} labs",
                                 Where("command line", key="labs"))
            for spec in self.settings:
                parts = [int(x) for x in spec.split("/")]
                if len(parts) == 1:
                    ms = tuple(parts * n)
                elif len(parts) == n:
                    ms = tuple(parts)
                else:
                    continue  # a per-lab spec for another number of labs
                if min(ms) < 1:
                    raise InputError(f"settings '{spec}': every lab needs at least one setting",
                                     Where("command line", key="settings"))
                for o in self.outcomes:
                    if o < 2:
                        raise InputError("a party needs at least two outcomes", Where("command line", key="outcomes"))
                    for fr in self._friend_patterns(n, ms):
                        for k in self.sequence:
                            if k > 1 and (not any(fr) or k > min(m for m, f in zip(ms, fr) if f)):
                                continue  # a sequence needs a friend and as many settings to read it out
                            m = Member(ms, o, fr, k)
                            if m not in out:
                                out.append(m)
        return out

    def _friend_patterns(self, n: int, ms: tuple[int, ...]) -> list[tuple[bool, ...]]:
        pats: list[tuple[bool, ...]] = []
        for f in self.friends:
            if f == "all":
                pats.append((True,) * n)
            elif f == "none":
                pats.append((False,) * n)
            elif f == "first":
                pats.append((True,) + (False,) * (n - 1))
            elif f == "all-but-first":
                pats.append((False,) + (True,) * (n - 1))
            elif f == "each":
                seen = set()
                for bits in itertools.product((True, False), repeat=n):
                    sig = tuple(sorted(zip(ms, bits)))  # labs with equal settings play the same role
                    if sig not in seen:
                        seen.add(sig)
                        pats.append(bits)
            else:
                raise InputError(f"unknown friends pattern '{f}'", Where("command line", key="friends"),
                                 "one of: all, none, first, all-but-first, each")
        return pats


def template_from_yaml(path: str) -> Template:
    """A template file: ``labs``, ``settings``, ``outcomes``, ``friends`` (lists; our own layout)."""
    from .scenario import check_keys
    from .yamlread import read_yaml_file

    data = read_yaml_file(path)
    if not isinstance(data, dict):
        raise InputError("a family template is a mapping with labs, settings, outcomes, friends", Where(path, 1))
    check_keys(data, {"labs", "settings", "outcomes", "friends", "sequence", "says", "question", "bundle",
                      "inequality"}, "")

    def lst(key, conv, default):
        raw = data.get(key, default)
        raw = raw if isinstance(raw, list) else [raw]
        try:
            return tuple(conv(x) for x in raw)
        except (TypeError, ValueError):
            raise InputError(f"'{key}' must list {'numbers' if conv is int else 'labels'}",
                             data.where(key, key)) from None
    return Template(lst("labs", int, [2]), lst("settings", str, ["2"]), lst("outcomes", int, [2]),
                    lst("friends", str, ["all"]), lst("sequence", int, [1]))


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
    lf_columns = math.prod(m.settings) * m.outcomes ** (m.labs + m.sequence * sum(m.friends))
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
    for ineq in candidates:
        if deadline is not None and time.perf_counter() > deadline:
            notes.append("witness search stopped at the time limit")
            break
        key = ineq.canonical()
        if key in seen:
            continue
        seen.add(key)
        r_lf = decide(lf, ineq)
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
    notes.append(f"no witness among {len(seen)} lifted CHSH / catalog inequalities")
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
