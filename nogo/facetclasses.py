"""Symmetry classes and names of a polytope's facets; the facet result built from them.

The relabellings of the scenario (outcomes per party and setting, settings
that play the same role, parties that play the same role;
:func:`nogo.symmetry.bundle_generators`) that map the vertex set onto itself
are the verified symmetries of the set (an exact check); the facets split
into orbits under the group they generate (:func:`classify`), with a
canonical representative per class (fewest terms, then smallest bound).
Catalog entries are recognised when one of their versions is a facet
(:func:`_catalog_names`); the other classes get numbered names ``F<n>``
from the order of their representatives.  :func:`_build` assembles the
:class:`~nogo.facettypes.FacetResult`, with the vertices tight on each facet
in exact integers.

Classification by symmetry follows the practice of D. Collins and N. Gisin,
J. Phys. A 37, 1775 (2004) and C. Śliwa, Phys. Lett. A 317, 165 (2003).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from .facettypes import Facet, FacetClass, FacetResult
from .polytope import Frame, HullFacet, Polytope, _lcm, int_matmul, primitive
from .polytope.certify import coords_int
from .polytope.group import move_matrix
from .symmetry import Generator, permutation
from .unionfind import DisjointSets


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
