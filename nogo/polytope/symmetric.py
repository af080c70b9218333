"""The symmetric route: facets of a bundle's set up to its symmetry group, with exact evidence.

1. Points, affine hull and coordinates as in the plain route (:mod:`.derive`).
2. Each relabelling of the scenario is *lifted* to the compiled model and
   the lift is checked exactly (:func:`nogo.symmetry.lift_to_model`): the
   moves that pass are symmetries of the model polytope, hence of the set of
   behaviours.  The certified points are closed under them for free.
3. The group they generate is enumerated on the points (its order is
   reported) and the facets of the points' hull are found one class at a
   time by the adjacency decomposition (:mod:`.adjacency`; Christof &
   Reinelt 2001; Bremner, Dutour Sikirić, Schürmann, arXiv:math/0702239).
4. Each class representative is asked of the LP oracle: a Farkas
   certificate from the model shows it valid; otherwise the oracle gives a
   point beyond it, which is added with its orbit, and step 3 is repeated.
   A member g·F of a class is valid because F is and g is a verified
   symmetry of the model (the permuted multipliers certify g·F).
5. Exact checks: every class is expanded by the group's integer action on
   inequalities and its size must equal the orbit size counted on the
   incidence sets; every facet holds on every point; every representative
   is tight on points of affine rank dim - 1.
"""

from __future__ import annotations

import time
from fractions import Fraction

import numpy as np

from ..model import LinearModel
from .adjacency import Decomposition, OutOfTime, orbit_rows
from .adjacency import affine_rank as affine_rank_of
from .derive import _perm_of, _Run, derive_polytope
from .group import enumerate_group, move_matrix
from .hull import _coords_matrix, int_matmul
from .ints import PolytopeError, Progress, _zmat, primitive
from .result import HullFacet, Polytope
from ..unionfind import DisjointSets


_MANY = 12  # points per dimension above which the plain hull is used


def derive_symmetric(model: LinearModel, frame: str = "auto", *, generators: list | None = None, seed: int = 1,
                     time_limit: float | None = None, workers: int | None = None,
                     progress: Progress | None = None, chunk: int = 64, store=None,
                     force: bool = False, classes: str = "auto", explore: bool = False,
                     start: list | None = None, prove: bool = True) -> Polytope:
    """The exact facets of the model's set of behaviours, class by class (see the module docstring).

    ``generators``: :class:`nogo.symmetry.Generator` moves (e.g. from
    :func:`nogo.symmetry.bundle_generators`).  When none of them lifts to a
    verified symmetry of the model, the plain route runs instead.
    ``force``: decompose even when there are many points per dimension.
    ``classes``: how two facets are put in one class: ``"list"`` by the group
    listed on the points (its smallest image), ``"graph"`` by a canonical
    coloured graph (:mod:`.canon`, nauty; the group is never listed), ``"faces"``
    by canonical forms of point sets with a bank of faces (:mod:`.faces`; points
    0/1 in probability coordinates and no *store*, else the graph), ``"auto"`` the
    graph when the group has more than 20,000 elements (listing stops there).
    ``store``: an optional :class:`nogo.store.RunPieces` where each closed
    class is written as it is found and from which an interrupted run resumes.
    ``explore``: classes by faces, where faces with more than 40 points beyond
    a simplex are sampled by rays instead of decomposed (:mod:`.faces`); every
    class found is an exact facet with its certificate, but the result is
    ``"partial"`` when a face was sampled, unless the closure proof
    (:mod:`.closure`; with ``prove``, within the time limit) shows every
    facet of the sampled faces met by a class found: then ``"complete"``.
    ``start``: inequalities ``(a, b)``, ``a·p <= b`` with integer ``a`` over
    ``model.scenario.coordinates()``, that the faces route begins from; those
    that are not facets of the set are left out with a note.

    Example
    -------
    >>> from nogo.theory import load_theory; from nogo.compile import compile_bundle
    >>> from nogo.symmetry import bundle_generators
    >>> th = load_theory("theories/bell-2x2.yaml")
    >>> P = derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"))
    >>> len(P.facets), len(P.classes), P.stats["group order"]
    (24, 2, 64)
    """
    from ..symmetry import lift_to_model

    if classes not in ("auto", "list", "graph", "faces"):
        raise ValueError(f"classes must be 'auto', 'list', 'graph' or 'faces', not {classes!r}")
    if explore or start:
        if classes not in ("auto", "faces") or store is not None:
            raise ValueError("exploring and start inequalities need classes by faces and no run store")
        classes, force = "faces", True
    gens = list(generators or [])
    lifted, unlifted = [], []
    for g in gens:
        (lifted if lift_to_model(model, g) is not None else unlifted).append(g)
    if not lifted:
        P = derive_polytope(model, frame, moves=[g.move for g in gens], seed=seed, time_limit=time_limit,
                            workers=workers, progress=progress, chunk=chunk)
        P.notes.append("no relabelling is a verified symmetry of this model: the plain hull was used")
        return P
    run = _Run(model, seed, time_limit, workers, progress, chunk)
    run.explore, run.start, run.prove = explore, list(start or []), prove
    run.classes_before_restart = 0
    # few random directions: the points are closed under the verified group next, and every class
    # representative is asked of the oracle, which returns any point still missing (step 4)
    run.patience, run.max_tries = 16, 48
    sc = model.scenario
    run.perms = [_perm_of(sc, g.move) for g in lifted]
    run.lifted = True
    run.discover(frame)
    run.close_under(run.perms, lifted=True)
    run.stats["times"]["vertices"] = time.perf_counter() - run.t_vertices
    k = run.fr.dim
    if len(run.points) > _MANY * k and not force:
        # many vertices and (usually) few facets, as for no-signalling sets: one hull is the cheaper route
        run.notes.append(f"{len(run.points)} points in dimension {k}: the plain hull was used "
                         "(the decomposition pays per facet class and face, the hull per vertex)")
        return run.plain_hull()
    if unlifted:
        run.notes.append("relabellings that are not symmetries of this model (exact check): "
                         + ", ".join(g.label for g in unlifted))
    return _classes(run, lifted, store, classes)


_LIST_LIMIT = 20_000  # group elements above which classes are told apart by the canonical graph
_EXPAND_LIMIT = 300_000  # facets above which only the class representatives are listed


class _Graph:
    """The group as generators and the canonical graph (:mod:`.canon`), where listing it would not fit."""

    def __init__(self, run: _Run, points, lifted):
        from .canon import GraphClasses
        from .group import _integer_points, move_matrix

        fr = run.fr
        Gfull = _functional_ints(fr)
        self.classes = GraphClasses(run.sc, run.perms, _integer_points(points), Gfull)
        self.order = self.classes.order
        self.generators = [g.label for g in lifted]
        self.moves = [move_matrix(fr, p) for p in run.perms]
        self.perms_on_coords = run.perms

    def point_orbits(self, points) -> np.ndarray:
        """The smallest point of each point's orbit under the generators (union of their cycles)."""
        from .group import _integer_points, point_permutation

        P = _integer_points(points)
        index = {p: i for i, p in enumerate(points)}
        label = np.arange(len(points))
        sets = DisjointSets(len(points))
        for perm in self.perms_on_coords:
            pp = point_permutation(points, index, perm, P)
            if pp is None:
                raise PolytopeError("a verified symmetry does not map the points onto themselves")
            for i, j in enumerate(pp):
                sets.union(i, int(j))
        for i in range(len(points)):
            label[i] = sets.find(i)
        return label


def _functional_ints(fr) -> np.ndarray:
    from .ints import _lcm

    vecs = [[Fraction(v) for v in f.vector] for f in fr.functionals]
    L = _lcm(v.denominator for r in vecs for v in r)
    return np.array([[int(v * L) for v in r] for r in vecs], dtype=object)


def _orbit_bfs(a, b, moves: list[np.ndarray], limit: int) -> np.ndarray:
    """Every image of (a, b) under the group the move matrices generate, breadth first, as primitive rows.

    int64 while |row|·|M|·width stays below 2^62 (rows are primitive, so they stay bounded), else Python integers.
    """
    start = np.array([int(v) for v in list(a) + [b]], dtype=object)
    mmax = max(int(np.max(np.abs(M))) for M in moves) if moves else 0
    seen = {tuple(int(v) for v in start)}
    seen_b = {np.array([int(v) for v in start], dtype=np.int64).tobytes()} if all(
        abs(int(v)) < 2**62 for v in start) else set()
    frontier = start[None, :]
    while len(frontier):
        rmax = int(np.max(np.abs(frontier))) if frontier.size else 0
        small = rmax * mmax * frontier.shape[1] < 2**62
        F = frontier.astype(np.int64) if small else frontier.astype(object)
        nxt = []
        for M in moves:
            imgs = F @ (M.astype(np.int64) if small else M.astype(object))
            if small:
                g = np.gcd.reduce(np.abs(imgs), axis=1)
                g[g == 0] = 1
                red = imgs // g[:, None]
                for r in red:  # int64 rows compared as bytes (exact; the tuple is built for new rows only)
                    key = r.tobytes()
                    if key not in seen_b:
                        seen_b.add(key)
                        t = tuple(int(v) for v in r)
                        if t not in seen:  # (a row first met on the Python-integer path)
                            seen.add(t)
                            nxt.append(t)
                continue
            rows = [primitive([int(v) for v in r]) for r in imgs]
            for t in rows:
                if t not in seen:
                    seen.add(t)
                    nxt.append(t)
        if len(seen) > limit:
            raise PolytopeError(f"a class has more than {limit} facets")
        frontier = np.array(nxt, dtype=object).reshape(len(nxt), len(start))
    return np.array(sorted(seen), dtype=object)


def _group_for(run: _Run, points, lifted, how: str):
    """The listed group (up to _LIST_LIMIT elements) or, above that, the group by generators and nauty."""
    stats = run.stats
    if how in ("auto", "list"):
        try:  # listed up to _LIST_LIMIT elements (the enumeration stops there)
            group, refused = enumerate_group(points, run.fr, [(g.label, p) for g, p in zip(lifted, run.perms)],
                                             limit=_LIST_LIMIT if how == "auto" else 400_000, with_mats=False)
        except RuntimeError:
            pass
        else:
            if refused:
                raise PolytopeError("a verified symmetry of the model does not map the certified points onto "
                                    "themselves")
            stats["classes by"] = "smallest image under the listed group"
            return group
    from .canon import has_nauty

    if not has_nauty():
        raise PolytopeError(f"the symmetry group has more than {_LIST_LIMIT} elements, too many to list; "
                            "telling facet classes apart needs pynauty (pip install pynauty)")
    group = _Graph(run, points, lifted)
    stats["classes by"] = "canonical graph (nauty)"
    stats["graph group order"] = group.classes.graph_order
    return group


def _decompose(run: _Run, Y, den, points, group, store, how: str):
    """One adjacency decomposition: (class representatives, 'complete' or 'partial', counters)."""
    if isinstance(group, _Graph) and how == "faces" and store is None and _zero_one(group.classes.X):
        return _decompose_faces(run, Y, group)
    if run.explore or run.start:
        note = ("exploration and start inequalities need the faces route, whose points are 0/1 in probability "
                "coordinates; these are not: the adjacency decomposition ran instead")
        if note not in run.notes:
            run.notes.append(note)
    dec_args = dict(classes=group.classes, max_depth=4, seeds=16) if isinstance(group, _Graph) else {}
    dec = Decomposition(Y, getattr(group, "perms", None), deadline=run.deadline,
                        seed=int(run.rng.integers(1 << 30)), progress=run.report, **dec_args)
    resumed = store.load(len(points)) if store is not None else None
    if store is not None:
        dec.on_class = lambda F, reps: store.save(len(points), _frame_form(F, den), F.orbit, sorted(
            (_frame_form(r, den), r.orbit) for r in reps.values()))
    try:
        if resumed:
            run.stats["classes resumed"] = len(resumed["closed"])
            reps = dec.run(start=[_int_form(ab, den) for ab, _ in resumed["known"]],
                           done_keys={dec.key_of(*_int_form(ab, den)) for ab in resumed["closed"]})
        else:
            reps = dec.run()
    except OutOfTime:
        return list(getattr(dec, "reps", {}).values()), "partial", dec.stats
    return reps, "complete", dec.stats


def _zero_one(X) -> bool:
    X = np.asarray(X)
    return bool(np.all((X == 0) | (X == 1)))


def _decompose_faces(run: _Run, Y, group: "_Graph"):
    """The decomposition on point sets with the bank of faces (:mod:`.faces`); representatives in frame form.

    Status "complete", "partial" (time) or "sampled" (exploration sampled a face: classes may be missing).
    """
    from .adjacency import ClassRep
    from .faces import FaceBank, PointGraph, plane

    gc = group.classes
    run.stats["classes by"] = "canonical form of the point set (nauty), bank of faces"
    opts = dict(leaf_excess=_EXPLORE_EXCESS, sample_above=_EXPLORE_EXCESS) if run.explore else {}
    fb = FaceBank(PointGraph(gc.st, gc.X, gc.order), deadline=run.deadline,
                  seed=int(run.rng.integers(1 << 30)), progress=run.report, **opts)
    before = getattr(run, "explored", None)
    if before is not None and len(before.X) == len(gc.X) and np.array_equal(before.X, gc.X):
        fb.bank, fb.sampled = before.bank, before.sampled  # a restart after a failed closure proof: same points
    Yi = Y.astype(np.int64)
    status = "complete"
    try:
        found = fb.decompose(np.ones(len(gc.X), dtype=bool), start=_start_facets(run, gc.X, Yi) or None)
    except OutOfTime:
        found, status = list(getattr(fb, "reps", {}).values()), "partial"
    reps = []
    for (m, _, _), orbit in found:
        a, b = plane(Yi, m)
        reps.append(ClassRep(tuple(a), int(b), m, orbit, gc.key(a)[0]))
    if fb.stats["skipped orbits"]:
        run.notes.append(f"{fb.stats['skipped orbits']} orbits of faces' facets were left unexpanded by Balinski's "
                         "rules (fewer than dim facets, or all through one point): the list is still complete")
    if fb.unexpanded and status == "complete":
        status, run.explored = "sampled", fb  # proven complete or not after the class checks (_classes)
    return reps, status, fb.stats


def _prove_closed(run: _Run, fb):
    """After an exploration and the class checks: ("complete", None) when the closure proof
    (:mod:`.closure`) goes through within the time limit; ("sampled", facet) when it meets a facet no class
    found accounts for (the list is not complete; the search goes on from it); else ("sampled", None)."""
    from .closure import ClosureProof, NotClosed

    sampled = (f"exploration: {len(fb.unexpanded)} classes were not expanded (their faces have more than "
               f"{_EXPLORE_EXCESS} points beyond a simplex; some of their ridges were found by {fb.rays} random rays)")
    proof = ClosureProof(fb, fb.expansions, _EXPLORE_EXCESS)
    try:
        if not run.prove:
            raise NotClosed("not asked for")
        proof.prove(fb.unexpanded, fb.graph.gens)
    except OutOfTime:
        why = "the time limit was reached before the closure proof ended"
    except NotClosed as err:
        if err.facet is not None:
            return "sampled", err.facet
        why = f"no closure proof ({err})"
    else:
        run.stats.update({f"closure {k}": v for k, v in proof.stats.items()})
        run.notes.append(sampled + "; the list is proven complete all the same: every facet of each of their "
                         f"faces is met by a class found (closure proof, {proof.stats['faces checked']} faces "
                         f"checked, {proof.stats['faces expanded']} expanded by one hull, "
                         f"{proof.stats['deepest level']} levels)")
        return "complete", None
    run.notes.append(sampled + f"; {why}: every class listed is an exact facet, but classes may be missing")
    return "sampled", None


_EXPLORE_EXCESS = 40  # exploration: faces up to this many points beyond a simplex take one hull, larger ones rays


def _start_facets(run: _Run, X, Yi) -> list:
    """The start inequalities that are facets of conv(points), over the point graph's coordinates."""
    out = []
    for a, b in run.start:
        a = np.asarray([int(v) for v in a], dtype=np.int64)
        if len(a) != X.shape[1]:
            raise PolytopeError(f"a start inequality has {len(a)} coefficients; the coordinates number {X.shape[1]}")
        vals = X @ a
        if np.any(vals > b):
            run.notes.append(f"a start inequality is violated by {int(np.sum(vals > b))} points of the set: not used")
            continue
        on = vals == b
        if not on.any() or affine_rank_of(Yi[on]) != Yi.shape[1] - 1:
            run.notes.append("a start inequality is valid but not a facet of the set: not used")
            continue
        out.append((a, int(b)))
    return out


def _classes(run: _Run, lifted: list, store, how: str = "auto") -> Polytope:
    fr, k = run.fr, run.fr.dim
    stats = run.stats
    stats["route"] = "symmetric"
    t_dec = t_check = 0.0
    verified: dict[tuple, object] = {}
    while True:
        points = list(run.points)
        Y, den = _coords_matrix(fr, points)
        Y = Y.astype(np.int64) if int(np.max(np.abs(Y))) < 2**40 else Y
        t_group = time.perf_counter()
        group = _group_for(run, points, lifted, how)
        stats["group order"] = group.order
        stats["times"]["group"] = stats["times"].get("group", 0.0) + time.perf_counter() - t_group
        t0 = time.perf_counter()
        reps, status, counters = _decompose(run, Y, den, points, group, store, how)
        t_dec += time.perf_counter() - t0
        stats["hull_rounds"] += 1
        for key, v in counters.items():
            stats[key] = stats.get(key, 0) + v
        forms = [_frame_form(r, den) for r in reps]
        if status == "partial":
            break
        t0 = time.perf_counter()
        todo = [ab for ab in forms if ab not in verified]
        qs = [(tuple(fr.full(a)), Fraction(b), (run.rng.normal(size=k) * 1e-4) @ run.G) for a, b in todo]
        answers = run.ask("max", qs) if not run.out_of_time() else None
        t_check += time.perf_counter() - t0
        if answers is None:
            status = "partial"
            break
        new = []
        for ab, ans in zip(todo, answers):
            if ans.valid:
                verified[ab] = ans
            else:
                new.append(ans.point)
        run.report("classes checked", len(verified), len(forms))
        if run.add(new):
            run.close_under(run.perms, lifted=True)
            continue
        if new:
            raise PolytopeError("the oracle returned a point beyond a facet that the hull already holds")
        if status == "sampled":
            status, missing = _prove_closed(run, run.explored)
            if missing is not None and len(reps) > run.classes_before_restart:
                # a facet no class accounts for: explore again from every class and it
                run.classes_before_restart = len(reps)
                stats["closure rounds"] = stats.get("closure rounds", 1) + 1
                fb = run.explored
                run.start = [(c, beta) for (_, c, beta), _ in fb.reps.values()] + [missing[1:]]
                continue
            if missing is not None:  # a restart that found no new class would loop: stop, unproven
                run.notes.append("a closure proof met a facet that the restarted search did not turn into a new "
                                 "class: the list is not complete")
        break
    stats["times"]["classes"] = t_dec
    stats["times"]["class checks"] = t_check
    stats["classes"] = len(reps)
    return _expand(run, points, Y, den, reps, forms, group, verified, status)


def _frame_form(r, den: int) -> tuple[tuple[int, ...], int]:
    ints = primitive([int(v) * den for v in r.a] + [int(r.b)])
    return tuple(ints[:-1]), ints[-1]


def _int_form(ab, den: int) -> tuple[tuple[int, ...], int]:
    a, b = ab
    return tuple(int(v) for v in a), int(b) * den


def _incidence(Y, ab) -> np.ndarray:
    a, b = ab
    return (Y @ np.array(a, dtype=np.int64)) == b


def _expand(run: _Run, points, Y, den, reps, forms, group, verified, status) -> Polytope:
    """Every facet from its class representative; the exact checks of step 5."""
    t0 = time.perf_counter()
    fr, k = run.fr, run.fr.dim
    facets: list[HullFacet] = []
    classes: list[tuple[int, list[int]]] = []
    listed = not isinstance(group, _Graph)
    only_reps = not listed and sum(r.orbit for r in reps) > _EXPAND_LIMIT
    moves = None
    for r, (a, b) in zip(reps, forms):
        if listed and group.mats is not None:
            rows = orbit_rows(a, b, group.mats)
        elif listed:
            if moves is None:
                moves = [move_matrix(fr, p) for p in run.perms]
            rows = _orbit_bfs(a, b, moves, r.orbit)
        elif only_reps:
            rows = [list(a) + [b]]
        else:
            rows = _orbit_bfs(a, b, group.moves, r.orbit)
        if status == "complete" and len(rows) != r.orbit and not only_reps:
            raise PolytopeError(f"a class expands to {len(rows)} inequalities but its orbit has {r.orbit} facets")
        ans = verified.get((a, b))
        start = len(facets)
        rep_at = start
        for row in rows:
            ar, br = tuple(int(v) for v in row[:-1]), int(row[-1])
            if (ar, br) == (a, b):
                rep_at = len(facets)
            is_rep = (ar, br) == (a, b)
            facets.append(HullFacet(ar, br, True if ans else None, 0, Fraction(br) if ans else None,
                                    (ans.method if is_rep else "image of the class representative's certificate "
                                     "under a verified model symmetry") if ans else "",
                                    ans.certificate if (ans and is_rep) else None))
        classes.append((rep_at, list(range(start, len(facets)))))
    # exact: every facet holds on every point; representatives tight on dim - 1 independent points
    if facets:
        vals = int_matmul([f.a for f in facets], Y, k)
        lim = np.array([f.b for f in facets], dtype=vals.dtype) * den
        if np.any(vals > lim[:, None]):
            raise PolytopeError("a facet of the symmetric route is violated by a certified point")
        on_all = vals == lim[:, None]
        for f, t in zip(facets, np.count_nonzero(on_all, axis=1)):
            f.tight = int(t)
        for rep_at, _ in classes:
            on = np.flatnonzero(on_all[rep_at])
            M = _zmat([[1] + [int(v) for v in Y[j]] for j in on], k + 1)
            if M.rank() != k:
                raise PolytopeError("a class representative is not tight on a facet's worth of points")
    vertices = _vertices(points, Y, den, facets, group, "partial" if only_reps else status)
    if only_reps:
        run.notes.append(f"{sum(r.orbit for r in reps):,} facets in {len(reps)} classes: one representative per "
                         "class is listed (class sizes from the stabilisers); every certified point is kept")
    if len(vertices) < len(points):
        run.notes.append(f"{len(points) - len(vertices)} certified points found on the way are not vertices")
    if status == "partial":
        run.notes.append("time limit reached: the classes listed are those found so far; the list is not complete")
    status = "partial" if status == "sampled" else status  # an exploration that sampled a face is not complete
    st = run.stats
    st["times"]["exact facet check"] = time.perf_counter() - t0
    st["times"]["total"] = time.perf_counter() - run.t_start
    st["points"] = len(points)
    P = Polytope(run.sc, run.model.label, run.model.assumptions, fr, vertices, run.equations, facets, status,
                 st, run.notes, run.fp)
    P.classes = classes
    P.class_sizes = [r.orbit for r in reps]
    P.group_order = group.order
    P.group_generators = list(group.generators)
    return P


def _vertices(points, Y, den, facets, group, status):
    """Points where the tight facets have rank dim (one check per orbit of points)."""
    if status != "complete" or not facets:
        return list(points)
    k = Y.shape[1]
    A = np.array([f.a for f in facets], dtype=np.int64)
    b = np.array([f.b for f in facets], dtype=np.int64) * den
    is_vertex = {}
    # the smallest image of each point: one label per orbit (each point its own label without the listed group)
    orbit_of = np.min(group.perms, axis=0) if not isinstance(group, _Graph) else group.point_orbits(points)
    keep = []
    for j in range(len(points)):
        o = int(orbit_of[j])
        if o not in is_vertex:
            on = np.flatnonzero(A @ Y[j].astype(np.int64) == b)
            is_vertex[o] = len(on) >= k and _zmat([[int(v) for v in A[i]] for i in on], k).rank() == k
        if is_vertex[o]:
            keep.append(points[j])
    return keep
