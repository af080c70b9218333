"""The small independent checker of an evidence bundle (``nogo recheck DIR``).

Trusts no solver: it imports no LP, SAT, SMT or SDP library (a test runs it in
a fresh interpreter and asserts that none is loaded) and uses exact rational
arithmetic (``fractions``; python-flint's exact rational matrices for ranks).
Steps:

1. the manifest: every listed file exists and has its SHA-256, no file is
   unlisted, the bundle hash is the hash of the sorted "name hash" lines;
2. per claim, every model is rebuilt from the copied theory file by the
   checker's own compiler (:mod:`nogo.referee.rows`); an evidence row is
   accepted only if it lies in the span of the rebuilt rows (with its
   right-hand side), an evidence column only if the read-out rules allow it;
3. each check is redone: Farkas multipliers (Aᵀy >= c on every rebuilt
   column, b·y <= the bound), points (non-negative, every rebuilt row holds
   exactly, value above the bound), preimages of behaviours, faces and facet
   lists by exact affine rank, quantum values by rational interval sums (or
   exactly in Q(√n)), visibility brackets;
4. the claim's own inequality is re-read from the claims file's words and
   must be the one the evidence proves; the verdict must follow from the
   checks.

Steps the deciding run could not export (a hull's completeness, an NPA
dual) are listed as "trusted", never as checked.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

from .rows import NotRebuilt, OwnModel, pattern_facts, rebuild


class Broken(Exception):
    """A check failed; the message names what broke."""


@dataclass
class ClaimReport:
    claim_id: str
    verdict: str
    checked: list[str] = field(default_factory=list)
    trusted: list[str] = field(default_factory=list)
    uncovered: list[str] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)


@dataclass
class BundleReport:
    folder: str
    claims: list[ClaimReport]
    failures: list[str]  # bundle-level (manifest, hashes)

    @property
    def ok(self) -> bool:
        return not self.failures and not any(c.failures for c in self.claims)


F = Fraction


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


# -- manifest --------------------------------------------------------------------
def _manifest(folder: Path) -> tuple[dict, list[str]]:
    bad: list[str] = []
    mpath = folder / "manifest.json"
    if not mpath.is_file():
        return {}, [f"no manifest.json in {folder}"]
    try:
        man = json.loads(mpath.read_text(encoding="utf-8"))
    except ValueError as exc:
        return {}, [f"manifest.json is not JSON: {exc}"]
    files = man.get("files", {})
    for name, h in sorted(files.items()):
        p = folder / name
        if not p.is_file():
            bad.append(f"file {name} is missing")
        elif _sha(p) != h:
            bad.append(f"file {name} was altered (its SHA-256 is not the one in the manifest)")
    present = {str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file()} - {"manifest.json"}
    for extra in sorted(present - set(files)):
        bad.append(f"file {extra} is not listed in the manifest")
    text = "".join(f"{n} {h}\n" for n, h in sorted(files.items()))
    if hashlib.sha256(text.encode()).hexdigest() != man.get("bundle_sha256"):
        bad.append("the bundle hash does not match the list of file hashes")
    for c in man.get("claims", []):
        if c.get("file") not in files:
            bad.append(f"claim {c.get('id')}: its evidence file {c.get('file')} is not listed")
    return man, bad


# -- models -----------------------------------------------------------------------
@dataclass
class Model:
    own: OwnModel
    ev_to_own: list[int]  # evidence column -> own column
    rows: list[dict[int, Fraction]]  # evidence rows over own columns
    rhs: list[Fraction]


def _key(row: dict[int, Fraction], b: Fraction) -> tuple:
    return tuple(sorted(row.items())) + (("rhs", b),)


def _in_span(own: OwnModel, extra: list[tuple[dict[int, Fraction], Fraction]]) -> bool:
    import flint

    n = len(own.columns)

    def mat(rows):
        M = flint.fmpq_mat(len(rows), n + 1)
        for i, (r, b) in enumerate(rows):
            for j, v in r.items():
                M[i, j] = flint.fmpq(v.numerator, v.denominator)
            M[i, n] = flint.fmpq(b.numerator, b.denominator)
        return M

    base = list(zip(own.rows, own.rhs))
    return mat(base).rank() == mat(base + extra).rank()


def load_model(folder: Path, rec: dict, theories: dict, facts_file: str | None) -> Model:
    from ..theory import load_theory

    tpath = folder / rec["theory"]
    if str(tpath) not in theories:
        theories[str(tpath)] = load_theory(tpath)
    th = theories[str(tpath)]
    if rec.get("kind") == "mixture":
        facts = []
        if rec.get("facts_from") == "pattern":
            if not facts_file:
                raise Broken("the model uses facts of a pattern, but the evidence names no pattern file")
            facts = pattern_facts(str(folder / facts_file), th.scenario)
        return _load_mixture(th, rec, facts)
    if rec.get("kind") != "linear":
        raise NotRebuilt(f"model kind {rec.get('kind')!r} is not rebuilt by this checker")
    facts = []
    if rec.get("facts_from") == "pattern":
        if not facts_file:
            raise Broken("the model uses facts of a pattern, but the evidence names no pattern file")
        facts = pattern_facts(str(folder / facts_file), th.scenario)
    own = rebuild(th, list(rec["assumptions"]), facts)
    ev_events = list(rec["events"])
    if sorted(ev_events) != sorted(own.events):
        raise Broken(f"the model's events {ev_events} are not those the declarations make present {own.events}")
    perm = [ev_events.index(e) for e in own.events]
    ev_to_own = []
    for s, vals in rec["columns"]:
        key = (tuple(s), tuple(vals[i] for i in perm))
        if key not in own.index:
            raise Broken(f"column q({', '.join(vals)} | {', '.join(s)}) is not allowed by the read-out rules")
        ev_to_own.append(own.index[key])
    rows, rhs = [], []
    for r in rec["rows"]:
        rows.append({ev_to_own[j]: F(v) for j, v in r["coeffs"]})
        rhs.append(F(r["rhs"]))
    own_keys = {_key(r, b) for r, b in zip(own.rows, own.rhs)}
    own_keys |= {_key({j: -v for j, v in r.items()}, -b) for r, b in zip(own.rows, own.rhs)}
    leftover = [(r, b) for r, b in zip(rows, rhs) if _key(r, b) not in own_keys]
    if leftover and not _in_span(own, leftover):
        for i, (r, b) in enumerate(zip(rows, rhs)):
            if _key(r, b) not in own_keys and not _in_span(own, [(r, b)]):
                src = rec["rows"][i]["source"]
                raise Broken(f"row {i} ({src['assumption']}: {src['row']}) does not follow from the declarations")
    return Model(own, ev_to_own, rows, rhs)


def _load_mixture(th, rec: dict, facts: list) -> Model:
    from .rows import rebuild_mixture

    own = rebuild_mixture(th, list(rec["assumptions"]))
    cindex = {c: i for i, c in enumerate(own.coords)}
    for s, a in facts:  # "p(a|s) = 0": the weights of the responses that produce it vanish
        i = cindex.get((tuple(s), tuple(a)))
        if i is None:
            raise NotRebuilt(f"the fact at settings {s}, outcomes {a} is not a coordinate of the scenario")
        own.rows.append({j: obs[i] for j, obs in enumerate(own.observe) if i in obs})
        own.rhs.append(F(0))
    ev_to_own = []
    for j, obs in enumerate(rec["observe"]):
        if any(F(w) != 1 for _, w in obs):
            raise Broken(f"response {j} ({rec['columns'][j]}) is not deterministic")
        key = tuple(sorted(i for i, _ in obs))
        if key not in own.index:
            raise Broken(f"response {j} ({rec['columns'][j]}) is not a response the declarations allow")
        ev_to_own.append(own.index[key])
    rows, rhs = [], []
    for r in rec["rows"]:
        row: dict[int, Fraction] = {}
        for j, v in r["coeffs"]:
            row[ev_to_own[j]] = row.get(ev_to_own[j], F(0)) + F(v)
        rows.append(row)
        rhs.append(F(r["rhs"]))
    for i, (r, b) in enumerate(zip(rows, rhs)):
        if not _in_span(own, [(r, b)]):
            src = rec["rows"][i]["source"]
            raise Broken(f"row {i} ({src['assumption']}: {src['row']}) does not follow from the declarations "
                         "(a response the declarations allow is missing, or the row was changed)")
    return Model(own, ev_to_own, rows, rhs)


# -- arithmetic ---------------------------------------------------------------------
def _cost(model: Model, ineq: dict) -> tuple[list[Fraction], Fraction]:
    own = model.own
    coeff = {}
    # coordinate index from (settings, outcomes): rebuild the order the checker's compiler uses
    for s, a, v in ineq["coeffs"]:
        coeff[(tuple(s), tuple(a))] = F(v)
    by_index = [coeff.get(c, F(0)) for c in own.coords]
    return [sum((w * by_index[i] for i, w in obs.items()), F(0)) for obs in own.observe], F(ineq["bound"])


def _coords(own: OwnModel) -> list[tuple]:
    """Coordinates (settings, outcomes) in index order."""
    return own.coords


def farkas(model: Model, ineq: dict, mult: list) -> Fraction:
    """Check Aᵀy >= c on every rebuilt column; return b·y (the proven bound)."""
    c, _ = _cost(model, ineq)
    agg = [F(0)] * len(c)
    bound = F(0)
    for i, y in mult:
        y = F(y)
        if i < 0 or i >= len(model.rows):
            raise Broken(f"multiplier for row {i}, which does not exist")
        for j, v in model.rows[i].items():
            agg[j] += y * v
        bound += y * model.rhs[i]
    for j, (a, cj) in enumerate(zip(agg, c)):
        if a < cj:
            if model.own.kind == "linear":
                s, e = model.own.columns[j]
                what = f"column q({', '.join(e)} | {', '.join(s)})"
            else:
                what = f"response {j} of the rebuilt mixture"
            raise Broken(f"the multipliers do not cover {what}: {a} < {cj}")
    return bound


def point_ok(model: Model, point: list) -> list[Fraction]:
    x = [F(0)] * len(model.own.columns)
    for j, v in point:
        v = F(v)
        if v < 0:
            raise Broken(f"the point has a negative entry at column {j}")
        x[model.ev_to_own[j]] = v
    for r, b in zip(model.own.rows, model.own.rhs):
        if sum((v * x[j] for j, v in r.items()), F(0)) != b:
            raise Broken("the point breaks a rebuilt row")
    return x


def behaviour_of(model: Model, x: list[Fraction]) -> list[Fraction]:
    out = [F(0)] * model.own.n_coords
    for j, v in enumerate(x):
        if v:
            for i, w in model.own.observe[j].items():
                out[i] += w * v
    return out


def affine_rank(points: list[list[Fraction]]) -> int:
    import flint

    if len(points) < 2:
        return 0
    p0 = points[0]
    M = flint.fmpq_mat([[flint.fmpq((F(a) - F(b)).numerator, (F(a) - F(b)).denominator) for a, b in zip(p, p0)]
                        for p in points[1:]])
    return M.rank()


def rank(vectors: list[list[Fraction]]) -> int:
    import flint

    if not vectors:
        return 0
    M = flint.fmpq_mat([[flint.fmpq(F(v).numerator, F(v).denominator) for v in r] for r in vectors])
    return M.rank()


def _qsign(a: Fraction, b: Fraction, n: int) -> int:
    """Sign of a + b·√n, exactly."""
    if n == 1:
        a, b = a + b, F(0)
    if b == 0:
        return (a > 0) - (a < 0)
    if a >= 0 and b >= 0:
        return 1
    if a <= 0 and b <= 0:
        return -1
    big = a * a > b * b * n
    return ((a > 0) - (a < 0)) if big else ((b > 0) - (b < 0))


def _coord_vector(ineq: dict, coords: list[tuple]) -> list[Fraction]:
    coeff = {(tuple(s), tuple(a)): F(v) for s, a, v in ineq["coeffs"]}
    return [coeff.get(c, F(0)) for c in coords]


def _value_interval(c: list[Fraction], intervals: list) -> tuple[Fraction, Fraction]:
    lo = hi = F(0)
    for cj, (a, b) in zip(c, intervals):
        a, b = F(a), F(b)
        if a > b:
            raise Broken("an interval has its ends the wrong way round")
        lo += cj * (a if cj > 0 else b)
        hi += cj * (b if cj > 0 else a)
    return lo, hi


def _quantum_value(c: list[Fraction], beh: dict) -> dict:
    """Value interval, and the exact value (A, B, n) when the exact form is given (checked inside the intervals)."""
    lo, hi = _value_interval(c, beh["intervals"])
    out: dict[str, Any] = {"lo": lo, "hi": hi}
    if "exact" in beh:
        n = int(beh["sqrt"])
        A = B = F(0)
        for cj, (r0, r1), (ilo, ihi) in zip(c, beh["exact"], beh["intervals"]):
            r0, r1 = F(r0), F(r1)
            if _qsign(r0 - F(ilo), r1, n) < 0 or _qsign(r0 - F(ihi), r1, n) > 0:
                raise Broken("an exact probability lies outside its interval enclosure")
            A += cj * r0
            B += cj * r1
        out["exact"] = (A, B, n)
    return out


def _above(val: dict, bound: Fraction) -> bool:
    if "exact" in val:
        A, B, n = val["exact"]
        return _qsign(A - bound, B, n) > 0
    return val["lo"] > bound


def _within(val: dict, lo: Fraction, hi: Fraction) -> bool:
    if "exact" in val:
        A, B, n = val["exact"]
        return _qsign(A - lo, B, n) >= 0 and _qsign(A - hi, B, n) <= 0
    return val["lo"] >= lo and val["hi"] <= hi


def _claimed_interval(cl: dict) -> tuple[Fraction, Fraction, Fraction]:
    lo, hi, tol = F(cl["interval"][0]), F(cl["interval"][1]), F(cl["tolerance"])
    try:
        x = F(str(cl["text"]))
        if not lo <= x <= hi:
            raise Broken(f"the claimed number {cl['text']} lies outside its recorded enclosure")
    except (ValueError, ZeroDivisionError):
        pass  # a radical: its enclosure was computed by the deciding run
    return lo, hi, tol
