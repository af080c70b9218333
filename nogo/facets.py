"""Facets of a bundle's set: symmetry classes, names, comparisons, exports, cache.

``facets(theory, bundle)`` derives the exact polytope of the behaviours the
bundle allows (:func:`nogo.polytope.derive_polytope`), then

* finds which relabellings of the scenario (outcomes per party and setting,
  settings that play the same role, parties that play the same role;
  :func:`nogo.symmetry.bundle_generators`) are symmetries of this set: a
  move is kept only when it maps the vertex set onto itself, an exact check;
* splits the facets into classes under the group these moves generate, with
  a canonical representative per class (fewest terms, then smallest bound);
* names the classes: catalog entries (positivity, CHSH, I3322, ...) are
  recognised when one of their versions is a facet; the others get stable
  numbered names ``F<n>`` from the order of their representatives;
* caches the result on disk, keyed by a hash of the compiled model (which
  is a function of the declarations), the coordinates and the group.

``compare(theory, b1, b2)`` sets two bundles of one scenario side by side:
equal, one inside the other, or neither, with exact witnesses, and the facets
that are new to the larger set.

Facet classification by symmetry follows the practice of e.g. D. Collins and
N. Gisin, J. Phys. A 37, 1775 (2004) and C. Śliwa, Phys. Lett. A 317, 165
(2003) (classes under relabelling of parties, settings and outcomes).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import os
import time
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

import numpy as np

from .compile import compile_bundle
from .inequality import Inequality
from .polytope import (Frame, HullFacet, Point, Polytope, Progress, _coords_matrix, _lcm, choose_frame,
                       derive_polytope, derive_symmetric, fingerprint, int_matmul, primitive)
from .polytope.group import move_matrix
from .report import q
from .symmetry import Generator, bundle_generators, permutation
from .theory import Theory

CACHE_VERSION = "nogo-facets-1"


# ---------------------------------------------------------------------------
# results
# ---------------------------------------------------------------------------
@dataclass
class Facet:
    """One facet: the inequality (full coordinates, written in the frame's notation) and its class."""

    index: int
    _inequality: Inequality | None  # built on first use (a list of 53,856 facets need not write them all)
    a: tuple[int, ...]  # coefficients over the frame's coordinates
    b: int
    class_name: str
    vertices: tuple[int, ...]  # indices into FacetResult.vertices that lie on it
    verified: bool | None  # True: a Farkas bound was checked exactly
    _polytope: Polytope | None = field(default=None, repr=False, compare=False)
    _hull: HullFacet | None = field(default=None, repr=False, compare=False)

    @property
    def inequality(self) -> Inequality:
        if self._inequality is None:
            self._inequality = self._polytope.inequality(self._hull, self.class_name)
        return self._inequality

    @property
    def text(self) -> str:
        return self.inequality.text


@dataclass
class FacetClass:
    name: str
    size: int
    representative: int  # facet index
    members: list[int]
    known_as: str = ""  # catalog entry and source, when recognised


@dataclass
class FacetResult:
    theory_file: str
    bundle: str
    assumptions: tuple[str, ...]
    polytope: Polytope
    facets: list[Facet]
    classes: list[FacetClass]
    symmetries: list[str]
    dropped_symmetries: list[str]
    from_cache: bool = False
    cache_file: str = ""
    seconds: float = 0.0
    group_order: int | None = None  # order of the symmetry group acting on the set (symmetric route)
    reverified: bool = False  # read from the store and re-verified there with exact checks
    warnings: list[str] = field(default_factory=list)

    @property
    def scenario(self):
        return self.polytope.scenario

    @property
    def vertices(self) -> list[Point]:
        return self.polytope.vertices

    @property
    def frame(self) -> Frame:
        return self.polytope.frame

    @property
    def dim(self) -> int:
        return self.polytope.dim

    @property
    def status(self) -> str:
        return self.polytope.status

    def by_class(self) -> dict[str, list[Facet]]:
        return {c.name: [self.facets[i] for i in c.members] for c in self.classes}

    def key(self, c, b) -> tuple[tuple[int, ...], int]:
        """Frame key of any full-coordinate inequality c·p <= b (valid on this set's affine hull)."""
        return self.frame.reduce(c, b)

    def facet_of(self, ineq: Inequality) -> Facet | None:
        """The facet equal to *ineq* on this set's affine hull, if any."""
        return self._index().get(self.key(ineq.vector(), ineq.bound))

    def _index(self) -> dict:
        idx = getattr(self, "_idx", None)
        if idx is None:
            idx = {(f.a, f.b): f for f in self.facets}
            self._idx = idx
        return idx

    def vertex_text(self, i: int) -> str:
        """A vertex in the frame's coordinates."""
        ys = self.frame.coords_of(self.vertices[i])
        return ", ".join(f"{f.text}={q(y)}" for f, y in zip(self.frame.functionals, ys) if y)

    def summary(self) -> str:
        lines = [f"bundle {self.bundle}: {len(self.facets)} facets in {len(self.classes)} classes, "
                 f"{len(self.vertices)} vertices, dimension {self.dim} ({self.frame.kind} coordinates)"
                 + (" [PARTIAL]" if self.status != "complete" else "")]
        for c in self.classes:
            rep = self.facets[c.representative]
            known = f"  ({c.known_as})" if c.known_as else ""
            lines.append(f"  {c.name:>10}  {c.size:>6}  {rep.text}{known}")
        return "\n".join(lines)


# ---------------------------------------------------------------------------
# symmetry classes
# ---------------------------------------------------------------------------
def _apply_matrix(F: np.ndarray, M: np.ndarray) -> np.ndarray:
    fmax = int(np.max(np.abs(F))) if F.size else 0
    mmax = max(abs(int(v)) for v in M.flat)
    if fmax * mmax * M.shape[0] < 2**62:
        out = F.astype(np.int64) @ M.astype(np.int64)
        g = np.gcd.reduce(np.abs(out), axis=1)
        g[g == 0] = 1
        return out // g[:, None]
    out = F.astype(object).dot(M)
    return np.array([primitive(r) for r in out], dtype=object)


def classify(P: Polytope, gens: list[Generator]) -> tuple[list[list[int]], list[str], list[str]]:
    """Orbits of the facets under the moves that are symmetries of P.

    A move is a symmetry when it permutes the vertex set (then it maps P onto
    itself); that is checked exactly, and moves that fail are dropped and
    named.  Returns (orbits as lists of facet indices, kept, dropped).
    """
    sc = P.scenario
    vset = set(P.vertices)
    kept, dropped, mats = [], [], []
    for g in gens:
        perm = permutation(sc, g.move)
        ok = P.status == "complete"
        if ok:
            for v in P.vertices:
                w = [Fraction(0)] * len(v)
                for i, j in enumerate(perm):
                    w[j] = v[i]
                if tuple(w) not in vset:
                    ok = False
                    break
        if ok:
            kept.append(g.label)
            mats.append(move_matrix(P.frame, perm))
        else:
            dropped.append(g.label)
    n = len(P.facets)
    k = P.dim
    F = np.array([list(f.a) + [f.b] for f in P.facets], dtype=object).reshape(n, k + 1)
    Fi = F.astype(np.int64) if n and int(np.max(np.abs(F))) < 2**40 else F
    keys = {tuple(int(v) for v in row): i for i, row in enumerate(Fi)}
    parent = list(range(n))

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for M in mats:
        img = _apply_matrix(Fi, M)
        for i, row in enumerate(img):
            j = keys.get(tuple(int(v) for v in row))
            if j is None:
                if P.status == "complete":
                    raise RuntimeError("a symmetry of the vertex set maps a facet to a non-facet (a bug)")
                continue
            ri, rj = find(i), find(j)
            if ri != rj:
                parent[max(ri, rj)] = min(ri, rj)
    orbits: dict[int, list[int]] = {}
    for i in range(n):
        orbits.setdefault(find(i), []).append(i)
    return list(orbits.values()), kept, dropped


def _rep_key(f: HullFacet):
    nnz = sum(1 for v in f.a if v)
    neg = sum(1 for v in f.a if v < 0)
    return (nnz, abs(f.b), neg, f.b, tuple(-abs(v) for v in f.a), tuple(-v for v in f.a))


def _catalog_names(P: Polytope, keyidx: dict) -> dict[int, tuple[str, str]]:
    """Facet index -> (catalog name, source) for catalog entries that are facets here."""
    from .catalog import load_catalog

    out: dict[int, tuple[str, str]] = {}
    sc = P.scenario
    try:
        cat = load_catalog()
    except Exception:  # a broken catalog must not stop a derivation
        return out
    from .symmetry import generators

    perms = [permutation(sc, g.move) for g in generators(sc)]
    for name, entry in cat.items():
        if sorted(entry.parties) != sorted(sc.party_names):
            continue
        try:
            ineq = entry.inequality(sc)
        except Exception:
            continue
        if ineq.marginals and P.frame.kind == "probabilities":
            continue  # a marginal has no single meaning when no-signalling fails
        vec = ineq.vector()
        den = _lcm([v.denominator for v in vec] + [Fraction(ineq.bound).denominator])
        versions = _raw_orbit(np.array([int(v * den) for v in vec], dtype=np.int64), perms)
        for key in P.frame.reduce_many(versions, [int(ineq.bound * den)] * len(versions)):
            i = keyidx.get(key)
            if i is not None and i not in out:
                out[i] = (name, entry.source)
    return out


def _raw_orbit(vec: np.ndarray, perms: list[list[int]], limit: int = 200_000) -> np.ndarray:
    """Every image of an integer coefficient vector under the group the permutations generate."""
    inv = [np.argsort(np.array(p)) for p in perms]  # image[j] = vec[inv[j]]
    seen = {vec.tobytes()}
    found = [vec]
    frontier = vec[None, :]
    while len(frontier) and len(seen) < limit:
        nxt = []
        for ip in inv:
            for row in frontier[:, ip]:
                key = row.tobytes()
                if key not in seen:
                    seen.add(key)
                    nxt.append(row)
        found += nxt
        frontier = np.array(nxt).reshape(len(nxt), len(vec))
    return np.array(found)


def _build(theory_file: str, P: Polytope, gens: list[Generator], seconds: float,
           classes_in: list[dict] | None = None) -> FacetResult:
    """Facets, classes and names from a polytope."""
    k = P.dim
    if classes_in is None and P.classes is not None:
        orbits = [members for _, members in P.classes]
        kept = list(P.group_generators)
        dropped = [g.label for g in gens if g.label not in kept]
    elif classes_in is None:
        orbits, kept, dropped = classify(P, gens)
    else:
        orbits = [c["members"] for c in classes_in]
        kept = dropped = []
    keyidx = {(f.a, f.b): i for i, f in enumerate(P.facets)}
    known = _catalog_names(P, keyidx)
    reps = []
    for members in orbits:
        rep = min(members, key=lambda i: _rep_key(P.facets[i]))
        reps.append(rep)
    order = sorted(range(len(orbits)), key=lambda c: (_rep_key(P.facets[reps[c]]), len(orbits[c])))
    classes: list[FacetClass] = []
    name_of: dict[int, str] = {}
    used: set[str] = set()
    for pos, c in enumerate(order, start=1):
        members = sorted(orbits[c])
        name, src = f"F{pos}", ""
        for i in members:
            if i in known:
                # a catalog inequality whose versions fall into several classes (a pinned
                # read-out setting splits them) names each: CHSH, CHSH:2, ...
                base, src = known[i]
                used_n = sum(1 for u in used if u == base or u.startswith(base + ":"))
                name = base if not used_n else f"{base}:{used_n + 1}"
                used.add(name)
                break
        size = P.class_sizes[c] if classes_in is None and P.class_sizes else len(members)  # listed alone: orbit
        classes.append(FacetClass(name, size, reps[c], members,
                                  f"a version of {name.split(':')[0]}; {src}" if src else ""))
        for i in members:
            name_of[i] = name
    # vertices on each facet (exact integers)
    Y, den = _coords_matrix(P.frame, P.vertices)
    vals = int_matmul([f.a for f in P.facets], Y, k)
    facets = []
    lim = np.array([f.b for f in P.facets], dtype=vals.dtype) * den if P.facets else None
    tight = (vals == lim[:, None]) if P.facets else None
    for i, f in enumerate(P.facets):
        on = tuple(int(j) for j in np.flatnonzero(tight[i]))
        facets.append(Facet(i, None, f.a, f.b, name_of.get(i, ""), on, f.verified, P, f))
    if classes_in is not None:
        kept = classes_in[0].get("_kept", []) if classes_in else []
        dropped = classes_in[0].get("_dropped", []) if classes_in else []
    return FacetResult(theory_file, P.label, P.assumptions, P, facets, classes, list(kept), list(dropped),
                       seconds=seconds, group_order=P.group_order)


# ---------------------------------------------------------------------------
# cache
# ---------------------------------------------------------------------------
def cache_dir() -> Path:
    return Path(os.environ.get("NOGO_CACHE") or Path.cwd() / ".nogo-cache")


def _cache_key(model, frame: str, gens: list[Generator], route: str) -> str:
    h = hashlib.sha256()
    for part in (CACHE_VERSION, fingerprint(model), frame, route, "|".join(g.label for g in gens)):
        h.update(part.encode())
        h.update(b"\0")
    return h.hexdigest()[:24]


def _load(store, key: str, model, gens, theory_file: str) -> tuple[FacetResult | None, str]:
    """A stored result, re-verified (:func:`nogo.polytope.certify.reverify`); (None, reason) when it fails."""
    from .polytope.certify import reverify

    entry = store.get(key)
    if entry is None:
        return None, ""
    if not entry["hash_ok"]:
        return None, "its content hash does not match"
    if entry["fingerprint"] != fingerprint(model):
        return None, "it was derived from another model"
    t0 = time.perf_counter()
    P, why = reverify(entry["payload"], model, gens)
    if P is None:
        return None, why
    r = _build(theory_file, P, gens, time.perf_counter() - t0)
    r.from_cache, r.reverified, r.cache_file = True, True, str(store.path)
    return r, ""


# ---------------------------------------------------------------------------
# the public entry points
# ---------------------------------------------------------------------------
def facets(theory: Theory, bundle, *, frame: str = "auto", cache: bool | str | Path = True,
           time_limit: float | None = None, workers: int | None = None, progress: Progress | None = None,
           seed: int = 1, max_columns: int = 200_000, route: str = "auto") -> FacetResult:
    """Every facet of the set of behaviours that *bundle* allows, in classes.

    Parameters
    ----------
    theory : a loaded theory (:func:`nogo.theory.load_theory`).
    bundle : bundle name or assumption names (as for :meth:`Theory.resolve`).
    frame : "auto", "collins-gisin", "correlators" or "probabilities".
    cache : True (``$NOGO_CACHE`` or ``./.nogo-cache``), a folder, or False.
    time_limit : seconds; a result that ran out is marked ``status == "partial"``.
    workers : processes for the oracle (through :func:`nogo.fanout.fan_out`).
    progress : callback ``(stage, done, total)``.
    route : "auto" (facets up to symmetry when some relabelling is a verified symmetry of the
        model, :func:`nogo.polytope.derive_symmetric`; else the plain hull), "plain" or "symmetric".

    Returns
    -------
    :class:`FacetResult` with ``.facets`` (each with ``.inequality``,
    ``.class_name``, ``.vertices``), ``.classes`` and ``.vertices``.

    Example
    -------
    >>> from nogo.theory import load_theory
    >>> r = facets(load_theory("theories/bell-2x2.yaml"), "Bell-local", cache=False)
    >>> len(r.facets), sorted((c.name, c.size) for c in r.classes)
    (24, [('CHSH', 8), ('positivity', 16)])
    """
    t0 = time.perf_counter()
    model = compile_bundle(theory, bundle, max_columns=max_columns)
    gens = bundle_generators(theory, bundle)
    theory_file = str(theory.file or "")
    store = key = None
    warnings: list[str] = []
    if cache:
        from .store import Store

        store = Store(cache_dir() if cache is True else Path(cache))
        key = _cache_key(model, frame, gens, route)
        r, why = _load(store, key, model, gens, theory_file)
        warnings += store.warnings
        if r is not None:
            r.warnings = warnings
            r.seconds = time.perf_counter() - t0
            return r
        if why:
            warnings.append(f"warning: the stored result failed re-verification ({why}); derived afresh")
    if route == "plain":
        P = derive_polytope(model, frame, moves=[g.move for g in gens], seed=seed, time_limit=time_limit,
                            workers=workers, progress=progress)
    else:
        pieces = None
        if store is not None:
            from .store import RunPieces

            pieces = RunPieces(store, key)
        P = derive_symmetric(model, frame, generators=gens, seed=seed, time_limit=time_limit, workers=workers,
                             progress=progress, store=pieces, force=(route == "symmetric"))
    if progress:
        progress("classes", 0, None)
    r = _build(theory_file, P, gens, 0.0)
    r.seconds = time.perf_counter() - t0
    if store is not None and P.status == "complete":
        from .polytope.certify import to_payload

        if store.put(key, P.fingerprint, "facets", to_payload(P)):
            r.cache_file = str(store.path)
        store.drop_run(key)  # the pieces of the run are no longer needed
        warnings += [w for w in store.warnings if w not in warnings]
    r.warnings = warnings
    return r


# ---------------------------------------------------------------------------
# comparison of two bundles
# ---------------------------------------------------------------------------
@dataclass
class Witness:
    """A vertex of one set outside the other: the facet (or equation) it breaks, by how much."""

    vertex: int  # index into the owning result's vertices
    behaviour: Point
    breaks: str  # the facet's or equation's text
    facet: int | None  # facet index in the other result, None for an equation
    value: Fraction
    bound: Fraction


@dataclass
class Comparison:
    first: FacetResult
    second: FacetResult
    relation: str  # "equal" | "first inside second" | "second inside first" | "neither"
    first_outside: list[Witness]  # vertices of the first set outside the second
    second_outside: list[Witness]
    violated_facets_of_first: dict[int, int]  # facet of first -> a vertex of second that violates it
    violated_facets_of_second: dict[int, int]
    same_hull: bool  # both sets span the same affine space
    first_only_facets: list[int] = field(default_factory=list)  # facets of first that are not facets of second
    second_only_facets: list[int] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def larger(self) -> FacetResult | None:
        return {"first inside second": self.second, "second inside first": self.first}.get(self.relation)

    def new_facets(self) -> list[Facet]:
        """Facets of the larger set that are not facets of the smaller one."""
        if self.relation == "first inside second":
            return [self.second.facets[i] for i in self.second_only_facets]
        if self.relation == "second inside first":
            return [self.first.facets[i] for i in self.first_only_facets]
        return []

    def summary(self) -> str:
        a, b = self.first.bundle, self.second.bundle
        rel = {"equal": f"{a} = {b}", "first inside second": f"{a} ⊂ {b} (strictly)",
               "second inside first": f"{b} ⊂ {a} (strictly)", "neither": f"neither of {a}, {b} contains the other"}
        lines = [rel[self.relation]]
        for res, other, idx, vf in ((self.first, self.second, self.first_only_facets, self.violated_facets_of_first),
                                    (self.second, self.first, self.second_only_facets,
                                     self.violated_facets_of_second)):
            if vf:
                lines.append(f"facets of {res.bundle} that {other.bundle} violates: {len(vf)} "
                             f"({_count_by_class(res, vf)})")
            if idx and self.same_hull:
                lines.append(f"facets of {res.bundle} that are not facets of {other.bundle}: {len(idx)} "
                             f"({_count_by_class(res, idx)})")
        return "\n".join(lines + self.notes)


def _count_by_class(res: FacetResult, idx) -> str:
    counts: dict[str, int] = {}
    for i in idx:
        counts[res.facets[i].class_name] = counts.get(res.facets[i].class_name, 0) + 1
    return ", ".join(f"{n} {c}" for c, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


def _outside(A: FacetResult, B: FacetResult) -> tuple[list[Witness], dict[int, int]]:
    """Vertices of A outside B (exact), and facets of B violated by some vertex of A."""
    wits: list[Witness] = []
    violated: dict[int, int] = {}
    bad_eq: set[int] = set()
    for j, v in enumerate(A.vertices):
        for h, val in B.polytope.equations:
            got = sum((Fraction(x) * y for x, y in zip(h, v) if x), Fraction(0))
            if got != val:
                bad_eq.add(j)
                text = " + ".join(f"{x} p{c}" for x, c in zip(h, B.scenario.coordinates()) if x)
                wits.append(Witness(j, v, f"{text} = {val}", None, got, val))
                break
    if not B.facets:
        return wits, violated
    Y, den = _coords_matrix(B.frame, A.vertices)
    vals = int_matmul([f.a for f in B.facets], Y, B.dim)
    first_break: dict[int, int] = {}
    for i, f in enumerate(B.facets):
        lim = f.b * den
        for j, v in enumerate(vals[i]):
            if j in bad_eq:
                continue
            if v > lim:
                violated.setdefault(i, j)
                first_break.setdefault(j, i)
    for j, i in sorted(first_break.items()):
        f = B.facets[i]
        wits.append(Witness(j, A.vertices[j], B.frame.text(f.a, f.b, flip=False), i,
                            Fraction(int(vals[i][j]), den), Fraction(f.b)))
    # a vertex on B's affine hull but violating B's facet: the value in B's frame is only meaningful there
    return wits, violated


def compare(theory: Theory, b1, b2, **options) -> Comparison:
    """Compare the sets of two bundles of one scenario, exactly.

    Both sets are derived with :func:`facets` (``options`` are passed on).
    A vertex of one set that breaks an equation or a facet of the other is a
    witness that the first is not inside the second; a set is inside another
    exactly when all its vertices satisfy all of the other's equations and
    facets.  When both span the same affine space, the facets of each are
    matched on that space and the facets of one that are not facets of the
    other are listed.

    Example
    -------
    >>> from nogo.theory import load_theory
    >>> c = compare(load_theory("theories/friends-2x2.yaml"), "local-friendliness", "Bell-local", cache=False)
    >>> c.relation
    'equal'
    """
    r1 = facets(theory, b1, **options)
    r2 = facets(theory, b2, **options)
    return compare_results(r1, r2)


def compare_results(r1: FacetResult, r2: FacetResult) -> Comparison:
    if r1.scenario.coordinates() != r2.scenario.coordinates():
        from .errors import InputError

        raise InputError("the two bundles speak of different scenarios")
    notes = []
    if r1.status != "complete" or r2.status != "complete":
        notes.append("at least one description is partial: the comparison covers what was derived")
    out1, viol2 = _outside(r1, r2)  # vertices of 1 outside 2; facets of 2 violated by 1
    out2, viol1 = _outside(r2, r1)
    in12, in21 = not out1, not out2
    relation = ("equal" if in12 and in21 else "first inside second" if in12 else
                "second inside first" if in21 else "neither")
    same = r1.dim == r2.dim and not any(w.facet is None for w in out1 + out2)
    if same and relation == "neither":
        # same dimension but possibly different affine hulls: check the equations both ways
        same = all(_on(r2, v) for v in r1.vertices) and all(_on(r1, v) for v in r2.vertices)
    only1, only2 = [], []
    if same:
        in1 = r1.frame.reduce_many([f.inequality.vector() for f in r2.facets], [f.b for f in r2.facets])
        keys2 = set(in1)
        keys1 = {(f.a, f.b) for f in r1.facets}
        only1 = [f.index for f in r1.facets if (f.a, f.b) not in keys2]
        only2 = [f.index for f, key in zip(r2.facets, in1) if key not in keys1]
    else:
        notes.append("the two sets span different affine spaces: facets are not matched one to one")
    return Comparison(r1, r2, relation, out1, out2, viol1, viol2, same, only1, only2, notes)


def _on(r: FacetResult, v: Point) -> bool:
    return all(sum((Fraction(x) * y for x, y in zip(h, v) if x), Fraction(0)) == val for h, val in r.polytope.equations)


# ---------------------------------------------------------------------------
# exports (our own formats)
# ---------------------------------------------------------------------------
def to_dict(r: FacetResult, with_vertices: bool = True) -> dict[str, Any]:
    P = r.polytope
    out: dict[str, Any] = {
        "theory": r.theory_file,
        "bundle": r.bundle,
        "assumptions": list(r.assumptions),
        "status": P.status,
        "coordinates": {"kind": P.frame.kind, "names": [f.text for f in P.frame.functionals]},
        "dimension": P.dim,
        "counts": {"facets": len(r.facets), "classes": len(r.classes), "vertices": len(P.vertices)},
        "symmetries": {"used": r.symmetries, "not symmetries of this set": r.dropped_symmetries},
        "classes": [{"name": c.name, "size": c.size, "representative": r.facets[c.representative].text,
                     **({"known as": c.known_as} if c.known_as else {})} for c in r.classes],
        "facets": [{"class": f.class_name, "inequality": f.text,
                    "coefficients": list(f.a), "bound": f.b,
                    "vertices on it": len(f.vertices),
                    "checked": ("Farkas bound verified exactly" if f.verified else "not yet checked")}
                   for f in r.facets],
        "equations": [{"coefficients": list(h), "value": q(v)} for h, v in P.equations],
        "evidence": ("every vertex has an exact preimage in the compiled model; every facet has rational "
                     "multipliers of the model's rows checked exactly; each facet is tight on vertices of "
                     f"affine rank {P.dim - 1}" if P.status == "complete" else
                     "partial: see notes"),
        "notes": P.notes,
        "seconds": round(r.seconds, 3),
        "from cache": r.from_cache,
        "re-verified from the store": r.reverified,
        "route": "classes" if P.classes is not None else "plain hull",
        "group order": r.group_order,
        "warnings": list(r.warnings),
    }
    if with_vertices:
        out["vertices"] = [{"coordinates": [q(y) for y in P.frame.coords_of(v)],
                            "behaviour": {f"p({' '.join(a)}|{' '.join(s)})": q(x)
                                          for (s, a), x in zip(P.scenario.coordinates(), v) if x}}
                           for v in P.vertices]
    return out


def export(r: FacetResult, fmt: str, what: str = "facets") -> str:
    """The facet or vertex list as 'json', 'yaml', 'csv' or 'latex' text."""
    if fmt == "json":
        d = to_dict(r, with_vertices=(what == "vertices"))
        if what == "vertices":
            d.pop("facets")
        return json.dumps(d, indent=2, ensure_ascii=False)
    if fmt == "yaml":
        import yaml

        d = to_dict(r, with_vertices=(what == "vertices"))
        if what == "vertices":
            d.pop("facets")
        return yaml.safe_dump(d, sort_keys=False, allow_unicode=True, width=200)
    names = [f.text for f in r.frame.functionals]
    if fmt == "csv":
        buf = io.StringIO()
        w = csv.writer(buf)
        if what == "facets":
            w.writerow(["class"] + names + ["bound"])
            for f in r.facets:
                w.writerow([f.class_name] + list(f.a) + [f.b])
        else:
            w.writerow(["vertex"] + names)
            for i, v in enumerate(r.vertices):
                w.writerow([i + 1] + [q(y) for y in r.frame.coords_of(v)])
        return buf.getvalue()
    if fmt == "latex":
        lines = [f"% {r.bundle}: {len(r.facets)} facets in {len(r.classes)} classes "
                 f"({r.frame.kind} coordinates); generated by nogo"]
        if what == "facets":
            lines.append(r"\begin{align*}")
            body = []
            for c in r.classes:
                rep = r.facets[c.representative]
                body.append(rf"&\text{{{c.name} ({c.size})}}: && {r.frame.text(rep.a, rep.b, latex=True)}")
            lines.append(" \\\\\n".join(body))
            lines.append(r"\end{align*}")
        else:
            lines.append(r"\begin{tabular}{r" + "c" * len(names) + "}")
            lines.append(" & ".join(["\\#"] + [f"${f.latex}$" for f in r.frame.functionals]) + r" \\ \hline")
            for i, v in enumerate(r.vertices):
                lines.append(" & ".join([str(i + 1)] + [_tex_frac(y) for y in r.frame.coords_of(v)]) + r" \\")
            lines.append(r"\end{tabular}")
        return "\n".join(lines) + "\n"
    raise ValueError(f"unknown format {fmt}")


def _tex_frac(x: Fraction) -> str:
    return str(x.numerator) if x.denominator == 1 else rf"$\tfrac{{{x.numerator}}}{{{x.denominator}}}$"


def comparison_to_dict(c: Comparison) -> dict[str, Any]:
    def wit(res: FacetResult, other: FacetResult, w: Witness) -> dict:
        return {"vertex": res.vertex_text(w.vertex), "breaks": w.breaks, "value": q(w.value),
                "bound": q(w.bound), **({"class": other.facets[w.facet].class_name} if w.facet is not None else {})}

    def facet_list(res: FacetResult, idx) -> list:
        return [{"class": res.facets[i].class_name, "inequality": res.facets[i].text} for i in idx]

    return {
        "first": c.first.bundle, "second": c.second.bundle, "relation": c.relation,
        "counts": {c.first.bundle: len(c.first.facets), c.second.bundle: len(c.second.facets)},
        "same affine hull": c.same_hull,
        "vertices of first outside second": [wit(c.first, c.second, w) for w in c.first_outside],
        "vertices of second outside first": [wit(c.second, c.first, w) for w in c.second_outside],
        "facets of first violated by second": [
            {"class": c.first.facets[i].class_name, "inequality": c.first.facets[i].text,
             "violated by": c.second.vertex_text(j)} for i, j in sorted(c.violated_facets_of_first.items())],
        "facets of second violated by first": [
            {"class": c.second.facets[i].class_name, "inequality": c.second.facets[i].text,
             "violated by": c.first.vertex_text(j)} for i, j in sorted(c.violated_facets_of_second.items())],
        "facets of first that are not facets of second": facet_list(c.first, c.first_only_facets),
        "facets of second that are not facets of first": facet_list(c.second, c.second_only_facets),
        "notes": c.notes,
    }
