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
* keeps the result in the store, keyed by a hash of the compiled model (which
  is a function of the declarations), the coordinates and the group, and on a
  later run re-verifies it with exact checks before calling it exact
  (:mod:`nogo.facetstore`; names are recomputed, never read from the store).

Exports (JSON, YAML, CSV, LaTeX) are in :mod:`nogo.facetexport`.

``compare(theory, b1, b2)`` sets two bundles of one scenario side by side:
equal, one inside the other, or neither, with exact witnesses, and the facets
that are new to the larger set.

Facet classification by symmetry follows the practice of e.g. D. Collins and
N. Gisin, J. Phys. A 37, 1775 (2004) and C. Śliwa, Phys. Lett. A 317, 165
(2003) (classes under relabelling of parties, settings and outcomes).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path

import numpy as np

from . import facetstore
from .facetstore import cache_dir  # noqa: F401 - importable from here as before
from .compile import compile_bundle
from .inequality import Inequality
from .polytope import (Frame, HullFacet, Point, Polytope, Progress, _coords_matrix, _lcm, choose_frame,
                       derive_polytope, derive_symmetric, fingerprint, int_matmul, primitive)
from .polytope.certify import coords_int
from .polytope.group import move_matrix
from .report import q
from .symmetry import Generator, bundle_generators, permutation
from .theory import Theory
from .unionfind import DisjointSets

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
    sets = DisjointSets(n)
    for M in mats:
        img = _apply_matrix(Fi, M)
        for i, row in enumerate(img):
            j = keys.get(tuple(int(v) for v in row))
            if j is None:
                if P.status == "complete":
                    raise RuntimeError("a symmetry of the vertex set maps a facet to a non-facet (a bug)")
                continue
            sets.union(i, j)
    orbits: dict[int, list[int]] = {}
    for i in range(n):
        orbits.setdefault(sets.find(i), []).append(i)
    return list(orbits.values()), kept, dropped


def _rep_key(f: HullFacet):
    nnz = sum(1 for v in f.a if v)
    neg = sum(1 for v in f.a if v < 0)
    return (nnz, abs(f.b), neg, f.b, tuple(-abs(v) for v in f.a), tuple(-v for v in f.a))


def _rep_ranks(facets: list[HullFacet]) -> list:
    """Each facet's place in the order of :func:`_rep_key` (one sort of all facets, int64 when they fit)."""
    if not facets:
        return []
    A = np.array([f.a for f in facets], dtype=object).reshape(len(facets), -1)
    b = np.array([f.b for f in facets], dtype=object)
    if max(abs(int(v)) for v in A.flat) >= 2**62 or max(abs(int(v)) for v in b) >= 2**62:
        return [_rep_key(f) for f in facets]
    A, b = A.astype(np.int64), b.astype(np.int64)
    primary = [np.count_nonzero(A, axis=1), np.abs(b), np.count_nonzero(A < 0, axis=1), b]
    keys = primary + list((-np.abs(A)).T) + list((-A).T)
    order = np.lexsort(keys[::-1])  # the last key given is the primary one
    rank = np.empty(len(facets), dtype=np.int64)
    rank[order] = np.arange(len(facets))
    return rank.tolist()


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
        # same number of parties is enough: read_entry matches other names by position, and the
        # orbit below holds every relabelled version (parties named Ann/Bo/Cy still find Mermin)
        if len(entry.parties) != len(sc.party_names):
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
        for key in _reduce_versions(P.frame, versions, int(ineq.bound * den)):
            i = keyidx.get(key)
            if i is not None and i not in out:
                out[i] = (name, entry.source)
    return out


def _raw_orbit(vec: np.ndarray, perms: list[list[int]], limit: int = 200_000) -> np.ndarray:
    """Every image of an integer coefficient vector under the group the permutations generate.

    Breadth first, one layer at a time: the images of the layer under every
    generator, less those already found; rows are compared exactly as their
    bytes (small entries are shifted into one unsigned byte each).
    """
    inv = [np.argsort(np.array(p)) for p in perms]  # image[j] = vec[inv[j]]
    lo, hi = (int(vec.min()), int(vec.max())) if vec.size else (0, 0)
    small = hi - lo < 256
    base = (vec - lo).astype(np.uint8) if small else vec

    def keys(rows):
        return rows.view(f"S{rows.shape[1]}").ravel().tolist() if small else [r.tobytes() for r in rows]

    found = [base[None, :]]
    seen = set(keys(found[0]))
    frontier = found[0]
    while len(frontier) and len(seen) < limit:
        cand = np.ascontiguousarray(np.concatenate([frontier[:, ip] for ip in inv]))
        fresh: dict = {}
        for i, key in enumerate(keys(cand)):
            if key not in seen and key not in fresh:
                fresh[key] = i
        seen.update(fresh)
        frontier = cand[list(fresh.values())] if fresh else cand[:0]
        found.append(frontier)
    out = np.concatenate(found)
    return out.astype(np.int64) + lo if small else out


def _reduce_versions(frame: Frame, C: np.ndarray, bound: int) -> list[tuple[tuple[int, ...], int]]:
    """:meth:`Frame.reduce_many` for integer rows c·p <= bound, in int64 when no overflow is possible.

    The same arithmetic: c·p - bound = λ·(G p) - b on the affine hull with
    λ = c T and b = bound - c·base + λ·(G base), made integer and primitive.
    """
    n = len(C)
    if not n:
        return []
    tden = _lcm(v.denominator for r in frame.T for v in r)
    xden = _lcm(Fraction(v).denominator for v in frame.base)
    gden = _lcm(v.denominator for v in frame.g0)
    Ti = np.array([[int(v * tden) for v in r] for r in frame.T], dtype=object).reshape(len(frame.T), frame.dim)
    X0 = np.array([int(Fraction(v) * xden) for v in frame.base], dtype=object)
    G0 = np.array([int(v * gden) for v in frame.g0], dtype=object)
    d, k = Ti.shape
    big = lambda M: max((abs(int(v)) for v in M.flat), default=0)  # noqa: E731
    cmax, tmax, xmax, gmax = int(np.max(np.abs(C))), big(Ti), big(X0), big(G0)
    lam_max = cmax * tmax * d
    L = tden * xden * gden
    terms = (lam_max * xden * gden, abs(bound) * L, cmax * xmax * d * tden * gden, lam_max * gmax * k * xden)
    if C.dtype == object or max(terms) >= 2**60:
        return frame.reduce_many(C, [bound] * n)
    Ci = C.astype(np.int64)
    lam = Ci @ Ti.astype(np.int64)
    out = np.empty((n, k + 1), dtype=np.int64)
    out[:, :k] = lam * (xden * gden)
    out[:, k] = bound * L - (Ci @ X0.astype(np.int64)) * (tden * gden) + (lam @ G0.astype(np.int64)) * xden
    g = np.gcd.reduce(np.abs(out), axis=1)
    g[g == 0] = 1
    out //= g[:, None]
    return [(tuple(r[:-1]), r[-1]) for r in out.tolist()]


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
    rank = _rep_ranks(P.facets)
    reps = [min(members, key=rank.__getitem__) for members in orbits]
    order = sorted(range(len(orbits)), key=lambda c: (rank[reps[c]], len(orbits[c])))
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
    Y, den = coords_int(P.frame, P.vertices)
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
        store = facetstore.open_store(cache)
        key = facetstore.cache_key(model, frame, gens, route)
        t1 = time.perf_counter()
        P, why = facetstore.load(store, key, model, gens)
        warnings += store.warnings
        if P is not None:
            r = _build(theory_file, P, gens, time.perf_counter() - t1)
            r.from_cache, r.reverified, r.cache_file = True, True, str(store.path)
            r.warnings = warnings
            r.seconds = time.perf_counter() - t0
            return r
        if why:
            warnings.append(f"warning: the stored result failed re-verification ({why}); derived afresh")
    if route == "plain":
        P = derive_polytope(model, frame, moves=[g.move for g in gens], seed=seed, time_limit=time_limit,
                            workers=workers, progress=progress)
    else:
        pieces = facetstore.run_pieces(store, key) if store is not None else None
        P = derive_symmetric(model, frame, generators=gens, seed=seed, time_limit=time_limit, workers=workers,
                             progress=progress, store=pieces, force=(route == "symmetric"))
    if progress:
        progress("classes", 0, None)
    r = _build(theory_file, P, gens, 0.0)
    if store is not None and facetstore.keep(store, key, P, model):
        r.cache_file = str(store.path)
    if store is not None:
        warnings += [w for w in store.warnings if w not in warnings]
    r.seconds = time.perf_counter() - t0
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

