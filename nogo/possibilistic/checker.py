"""An independent checker for possibilistic proofs and models.

It reads only the declarations (theory, bundle), the support pattern and the
printed proof or model; it does not use the SAT encoding, the solver, the
propagation or the compiler's helpers, so a bug there cannot hide here.
Which events are present, which joint assignments obey the read-out rules
and what each independence assumption allows are re-derived from the
declarations in this file (read-out chains by
:func:`nogo.readout_walk.walk_read_outs`, shared with the other independent
checkers, never with the compiler).

A proof is accepted only if every step is a correct local inference from
the fact or assumption it names and from statements of *earlier* steps it
cites, and the last step is a contradiction (see
:mod:`nogo.possibilistic.proof` for the three step kinds).
"""

from __future__ import annotations

import itertools
from typing import Any

from ..readout_walk import walk_read_outs
from ..theory import Absolute, Counterfactual, Factorise, Hidden, Independent, Predetermined, Theory
from .support import SupportPattern


def _support_only(c):
    """(events, of) of a clause that constrains supports as an independence of settings, else None
    (``independent`` without ``given``, or a clause kind marked ``support_only``)."""
    if isinstance(c, Independent):
        return None if c.given else (c.events, c.of)
    if getattr(c, "support_only", False) and hasattr(c, "events") and hasattr(c, "of"):
        return tuple(c.events), tuple(c.of)
    return None


class _World:
    """Present events and their joint assignments, straight from the declarations."""

    def __init__(self, theory: Theory, spec):
        sc = theory.scenario
        self.sc = sc
        self.label, self.assumptions = theory.resolve(spec)
        absolute, cf = set(), set()
        for a in self.assumptions:
            for c in a.clauses:
                if isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given) or \
                        not isinstance(c, (Absolute, Counterfactual, Independent)) and _support_only(c) is None:
                    raise ValueError(f"'{a.name}' has no possibilistic reading in this checker")
                if isinstance(c, Absolute):
                    absolute.update(c.events)
                elif isinstance(c, Counterfactual):
                    cf.update(c.parties)
        # (name, outcomes, rule) with rule = None | ("inner", [(shown event, [(setting index, setting)], own -> shown)])
        ev: list[tuple[str, tuple[str, ...], Any]] = [
            (p.name if p.choice_of is None else f"{p.name}.choice", p.outcomes, None) for p in sc.parties]
        for o in sc.inner:
            if o.name in absolute:
                ev.append((o.name, o.outcomes, ("inner", walk_read_outs(sc, o, absolute))))
        for p in sc.parties:
            if p.name in cf:
                for x in p.settings:
                    ev.append((f"{p.name}@{x}", p.outcomes, ("latent", p.name, x)))
        self.events = ev
        self.names = tuple(e[0] for e in ev)
        self.parties = sc.party_names
        self._cache: dict = {}

    def _ok(self, s, e) -> bool:
        pos = {n: i for i, n in enumerate(self.names)}
        for (name, outs, rule), val in zip(self.events, e):
            if rule is None:
                continue
            if rule[0] == "inner":
                for lab, when, shown in rule[1]:
                    if all(s[i] == x for i, x in when) and e[pos[lab]] != shown[val]:
                        return False
            else:
                _, party, x = rule
                if s[self.parties.index(party)] == x and e[pos[party]] != val:
                    return False
        return True

    def is_assignment(self, s, e) -> bool:
        return all(v in outs for (_, outs, _), v in zip(self.events, e)) and self._ok(s, e)

    # -- case checks without enumerating every joint assignment ------------------
    def _canon(self, s, cube):
        """A cube at settings s over free variables: read-out rules tie an inner
        record or a counterfactual outcome to its lab's outcome at s.  Returns a
        dict {variable: value} or None when the cube cannot occur at s."""
        out: dict[str, str] = {}
        for k, v in cube:
            if k not in self.names:
                return None
            name, outs, rule = self.events[self.names.index(k)]
            if v not in outs:
                return None
            key, val = k, v
            while rule is not None:  # up the chain of read-outs active at s, to a free variable
                if rule[0] == "inner":
                    on = [(lab, shown) for lab, when, shown in rule[1] if all(s[i] == x for i, x in when)]
                    if not on:  # (several read-outs: at most one is active at s, their settings differ)
                        break
                    key, val = on[0][0], on[0][1][val]
                else:
                    _, party, x = rule
                    if s[self.parties.index(party)] != x:
                        break
                    key = party
                rule = self.events[self.names.index(key)][2]
            if out.get(key, val) != val:
                return None
            out[key] = val
        return out

    def uncovered(self, s, cube, cubes) -> str | None:
        """None when every joint assignment at s that matches *cube* matches one of
        *cubes*; otherwise a partial assignment (as text) of runs left over.

        An exact case split: branch on a variable some compatible cube fixes,
        until a cube is implied or none is compatible (Quine's consensus-free
        tautology check; no solver)."""
        target = self._canon(s, cube)
        if target is None:
            return None
        cands = [c for c in (self._canon(s, x) for x in cubes) if c is not None]
        domain = {n: o for n, o, _ in self.events}

        def walk(t, cs):
            live = [c for c in cs if all(t.get(k, v) == v for k, v in c.items())]
            if any(all(t.get(k) == v for k, v in c.items()) for c in live):
                return None
            if not live:
                return ", ".join(f"{k}={v}" for k, v in t.items()) or "any values"
            counts: dict[str, int] = {}
            for c in live:
                for k in c:
                    if k not in t:
                        counts[k] = counts.get(k, 0) + 1
            var = max(sorted(counts), key=lambda k: counts[k])
            for val in domain[var]:
                gap = walk({**t, var: val}, live)
                if gap is not None:
                    return gap
            return None

        return walk(target, cands)

    def joint(self, s) -> list[tuple[str, ...]]:
        if s not in self._cache:
            self._cache[s] = [e for e in itertools.product(*(o for _, o, _ in self.events)) if self._ok(s, e)]
        return self._cache[s]

    def matches(self, e, cube) -> bool:
        for k, v in cube:
            if k not in self.names or e[self.names.index(k)] != v:
                return False
        return True

    def valid_settings(self, s) -> bool:
        return len(s) == len(self.parties) and all(x in p.settings for x, p in zip(s, self.sc.parties))


class _Refuted(Exception):
    """The first problem found in a proof (the check stops there)."""


def check_proof(theory: Theory, spec, pattern: SupportPattern, proof) -> list[str]:
    """Problems found in *proof* (empty list: every step checks out).

    Parameters
    ----------
    theory, spec: the declarations and the bundle the proof claims to use;
    pattern: the support pattern; proof: a :class:`~nogo.possibilistic.proof.Proof`
    or its ``to_dict()`` form.

    Stages: read the proof; check that it speaks of the present events; then
    each step in turn (its place and citations, then its kind's own rule:
    :func:`_observed`, :func:`_transfer`, :func:`_contradiction`), stopping
    at the first problem.
    """
    from .proof import Proof  # data class only

    if isinstance(proof, dict):
        try:
            proof = Proof.from_dict(proof)
        except (KeyError, TypeError, ValueError) as exc:
            return [f"the proof is not well formed: {exc}"]
    w = _World(theory, spec)
    if tuple(proof.events) != w.names:
        return [f"the proof speaks of events {list(proof.events)}, but under '{w.label}' the present events are "
                f"{list(w.names)}"]
    if not proof.steps:
        return ["the proof has no steps"]
    established: dict[int, list[tuple[tuple[str, ...], tuple]]] = {}

    def cited(s, uses):
        return [cube for u in uses for st, cube in established.get(u, []) if st == s]

    try:
        for i, step in enumerate(proof.steps):
            s = _placed(w, step, i)
            tag = f"step {step.number}"
            if step.kind == "observed":
                established[step.number] = _observed(w, pattern, step, s, tag)
            elif step.kind == "transfer":
                established[step.number] = _transfer(w, step, s, tag, cited)
            elif step.kind == "contradiction":
                if i != len(proof.steps) - 1:
                    raise _Refuted(f"{tag}: a contradiction must be the last step")
                _contradiction(w, pattern, step, s, tag, cited)
                return []
            else:
                raise _Refuted(f"{tag}: unknown step kind '{step.kind}'")
    except _Refuted as exc:
        return [str(exc)]
    return ["the proof does not end in a contradiction"]


def _placed(w: _World, step, i: int) -> tuple[str, ...]:
    """Step *i* is numbered i + 1, cites earlier steps only, and sits at a settings tuple: that tuple."""
    n = step.number
    tag = f"step {n}"
    if n != i + 1:
        raise _Refuted(f"{tag}: steps must be numbered 1, 2, 3, … (found {n} at position {i + 1})")
    bad_uses = [u for u in step.uses if not (isinstance(u, int) and 1 <= u < n)]
    if bad_uses:
        raise _Refuted(f"{tag}: cites {bad_uses}, which are not earlier steps")
    s = tuple(step.settings)
    if not w.valid_settings(s):
        raise _Refuted(f"{tag}: {s} is not a settings tuple of the scenario")
    return s


def _observed(w: _World, pattern: SupportPattern, step, s, tag: str) -> list:
    """Each statement gives every party's outcome at *s*, and the pattern says it has probability 0."""
    out = []
    for stt in step.statements:
        names = tuple(k for k, _ in stt.cube)
        a = tuple(v for _, v in stt.cube)
        if tuple(stt.settings) != s or names != w.parties:
            raise _Refuted(f"{tag}: an observed statement must give every party's outcome at {s}")
        if (s, a) not in pattern.impossible:
            raise _Refuted(f"{tag}: the pattern does not say p({', '.join(a)} | {', '.join(s)}) = 0")
        out.append((s, tuple(stt.cube)))
    return out


def _transfer(w: _World, step, s, tag: str, cited) -> list:
    """An independence clause moves the statements from the step's first settings to *s*; a finite case check."""
    a = {x.name: x for x in w.assumptions}.get(step.assumption)
    if a is None:
        raise _Refuted(f"{tag}: '{step.assumption}' is not an assumption of '{w.label}'")
    if not (0 <= step.clause < len(a.clauses)) or _support_only(a.clauses[step.clause]) is None:
        raise _Refuted(f"{tag}: clause {step.clause} of '{a.name}' is not an independence clause "
                       "without hidden variables")
    c_events, c_of = _support_only(a.clauses[step.clause])
    kept = {x for x in c_events if x in w.names}
    f = tuple(step.from_settings)
    if not w.valid_settings(f) or f == s:
        raise _Refuted(f"{tag}: {f} and {s} are not two different settings tuples")
    moved = {w.parties.index(p) for p in c_of}
    if any(f[j] != s[j] for j in range(len(s)) if j not in moved):
        raise _Refuted(f"{tag}: settings {f} and {s} differ in a party whose setting '{a.name}' does not name")
    out = []
    for stt in step.statements:
        if tuple(stt.settings) != s:
            raise _Refuted(f"{tag}: a statement is placed at {tuple(stt.settings)}, not at {s}")
        extra = [k for k, _ in stt.cube if k not in kept]
        if extra:
            raise _Refuted(f"{tag}: '{a.name}' says nothing of {extra}")
        gap = w.uncovered(f, tuple(stt.cube), cited(f, step.uses))
        if gap is not None:
            raise _Refuted(f"{tag}: at {f} the runs with ({gap}) are not excluded by steps {step.uses}")
        out.append((s, tuple(stt.cube)))
    return out


def _contradiction(w: _World, pattern: SupportPattern, step, s, tag: str, cited) -> None:
    """Every run at *s* showing the declared possible outcomes (or any run at all) is excluded by the cited steps."""
    a = tuple(step.outcomes)
    if a:
        if (s, a) not in pattern.possible:
            raise _Refuted(f"{tag}: the pattern does not say p({', '.join(a)} | {', '.join(s)}) > 0")
        cube = tuple(zip(w.parties, a))
    else:
        cube = ()
    gap = w.uncovered(s, cube, cited(s, step.uses))
    if gap is not None:
        raise _Refuted(f"{tag}: the runs with ({gap}) at {s} are not excluded by steps {step.uses}")


def check_model(theory: Theory, spec, pattern: SupportPattern, support: dict) -> list[str]:
    """Problems found in a possibilistic model (empty list: it satisfies everything).

    *support* maps each settings tuple to the list of joint assignments
    (tuples over the present events, in the order of the declarations) that
    are possible there.
    """
    w = _World(theory, spec)
    problems = []
    sets = {}
    for s in w.sc.setting_tuples():
        es = [tuple(e) for e in support.get(s, [])]
        if not es:
            problems.append(f"nothing happens at settings {s}")
        for e in es:
            if len(e) != len(w.names) or not w.is_assignment(s, e):
                problems.append(f"{e} at {s} breaks a read-out rule or is not an assignment of {list(w.names)}")
        sets[s] = set(es)
    if problems:
        return problems
    n = len(w.parties)
    for s in w.sc.setting_tuples():
        shown = {e[:n] for e in sets[s]}
        for a in w.sc.outcome_tuples():
            if (s, a) in pattern.possible and a not in shown:
                problems.append(f"the pattern says p({', '.join(a)} | {', '.join(s)}) > 0; the model never shows it")
            if (s, a) in pattern.impossible and a in shown:
                problems.append(f"the pattern says p({', '.join(a)} | {', '.join(s)}) = 0; the model shows it")
    for a in w.assumptions:
        for c in a.clauses:
            if _support_only(c) is None:
                continue
            c_events, c_of = _support_only(c)
            idx = [w.names.index(x) for x in c_events if x in w.names]
            if not idx:
                continue
            moved = {w.parties.index(p) for p in c_of}
            settings = w.sc.setting_tuples()
            for s, t in itertools.combinations(settings, 2):
                if any(s[j] != t[j] for j in range(n) if j not in moved):
                    continue
                ms = {tuple(e[i] for i in idx) for e in sets[s]}
                mt = {tuple(e[i] for i in idx) for e in sets[t]}
                if ms != mt:
                    diff = sorted(ms ^ mt)[0]
                    problems.append(f"'{a.name}': the support of {[w.names[i] for i in idx]} differs between "
                                    f"{s} and {t} (e.g. {diff})")
    return problems
