"""The exact polytope of behaviours a bundle allows: vertices, affine hull, facets.

The set of observed behaviours of a bundle is the image P = O(Q) of the
model polytope Q = {q >= 0 : rows·q = rhs} under the observation map O
(:class:`nogo.model.LinearModel`).  P is described exactly, from the
compiled model alone, by an LP-oracle method:

1. **Points**: maximise directions over Q with HiGHS; the optimum's image is a
   point of P (a vertex for a generic direction).  Each point is made exact
   (rounded to small denominators) and *certified*: a rational q >= 0 with
   rows·q = rhs exactly and O q = the point.
2. **Affine hull**: the points span an affine space; every linear functional h
   vanishing on their differences is checked in both directions with the
   oracle.  A certified Farkas bound max h <= h·v0 and max -h <= -h·v0 proves
   the equation h·p = h·v0 on all of P; a point beyond it enlarges the span.
3. **Coordinates** (:class:`Frame`): an affine coordinate system of aff(P)
   taken greedily from a preferred list of functionals: Collins–Gisin
   marginals and joints when the bundle implies no-signalling (an exact
   check on aff(P)), correlators on request, plain probabilities p(a|s)
   otherwise.  In these coordinates P is full-dimensional.
4. **Vertices** from random directions, then the orbit of every vertex under
   the scenario's relabelling group (each image is tested for membership by
   the oracle and certified like any point; an image outside P means that
   move is no symmetry, and it is simply not added).
5. **Hull and oracle loop**: the exact convex hull of the points (cddlib
   through pycddlib 2.1, rational arithmetic; K. Fukuda and A. Prodon,
   "Double description method revisited", LNCS 1120, 91–111 (1996)).  Every
   hull facet a·y <= b is then asked of the oracle: a rational dual vector
   with rowsᵀy >= Oᵀa and rhs·y <= b (checked in exact integer arithmetic) shows
   the facet valid for P; otherwise the oracle returns a point of P beyond
   it, which is added, and the hull is recomputed.  When every facet is
   valid, hull = P.
6. **Facet check**: each facet is tight on a set of vertices of affine rank
   dim P - 1 (exact integer rank), so it is a facet and not a lower face.

The final description therefore rests only on exact checks: points with
rational witnesses in Q, facets with rational Farkas multipliers.  The LP
oracle and cddlib's hull only *find* them.

The oracle method is the classical "vertex discovery by optimisation"
approach to projections (e.g. C. N. Jones, E. C. Kerrigan, J. M. Maciejowski,
"Equality set projection", CUED/F-INFENG/TR.463 (2004); and the
"convex hull by oracle" of D. Avis and co.), here with exact certificates.

Every oracle call is a pure function of picklable inputs (the model and the
direction) and batches go through :func:`nogo.fanout.fan_out`.
"""
from __future__ import annotations

import time
from fractions import Fraction

import numpy as np

from ..fanout import fan_out
from ..model import LinearModel
from ..scenario import Scenario
from .frame import affine_basis, choose_frame, no_signalling_functionals
from .hull import HullOutOfTime, _coords_matrix, _hull_in, int_matmul
from .ints import Point, PolytopeError, Progress, _zmat
from .oracle import Answer, fingerprint, oracle_batch
from .result import HullFacet, Polytope


def _apply_move(scenario: Scenario, move, p: Point) -> Point:
    coords = scenario.coordinates()
    index = {c: i for i, c in enumerate(coords)}
    out = [Fraction(0)] * len(coords)
    for c, v in zip(coords, p):
        out[index[move(c)]] = v
    return tuple(out)


def _constant_on(functionals, points) -> bool:
    """Exact: every functional takes one value on all the points (integer products over common denominators)."""
    from .group import _integer_points
    from .ints import _lcm

    if not functionals or not points:
        return True
    F = [[Fraction(x) for x in f] for f in functionals]
    L = _lcm(x.denominator for f in F for x in f)
    Fi = np.array([[int(x * L) for x in f] for f in F], dtype=object)
    P = _integer_points(points)
    if Fi.size and P.dtype != object and int(np.max(np.abs(Fi))) * int(np.max(np.abs(P)) or 1) * P.shape[1] < 2**62:
        V = P @ Fi.astype(np.int64).T
    else:
        V = P.astype(object).dot(Fi.T)
    return bool(np.all(V == V[:1]))


def _perm_of(scenario: Scenario, move) -> list[int]:
    coords = scenario.coordinates()
    index = {c: i for i, c in enumerate(coords)}
    return [index[move(c)] for c in coords]


def derive_polytope(model: LinearModel, frame: str = "auto", *, moves: list | None = None, seed: int = 1,
                    time_limit: float | None = None, workers: int | None = None,
                    progress: Progress | None = None, chunk: int = 64) -> Polytope:
    """Derive the exact vertices and facets of the behaviours the model allows.

    Parameters
    ----------
    model : the compiled bundle (:func:`nogo.compile.compile_bundle`).
    frame : "auto" (Collins–Gisin when no-signalling holds on the set, else
        probabilities), "collins-gisin", "correlators" or "probabilities".
    moves : relabelling moves (coordinate maps, :func:`nogo.symmetry.generators`)
        used to propose vertices; each proposed point is certified before use.
    seed : seed of the random directions (the result does not depend on it).
    time_limit : seconds; when exceeded, a result with ``status="partial"``.
    workers : processes for the oracle batches (through :func:`fan_out`).
    progress : callback ``(stage, done, total)``.

    Returns
    -------
    :class:`Polytope`; with status "complete" every facet carries a verified
    Farkas bound and every vertex a certified preimage.

    Example
    -------
    >>> from nogo.theory import load_theory; from nogo.compile import compile_bundle
    >>> P = derive_polytope(compile_bundle(load_theory("theories/bell-2x2.yaml"), "Bell-local"))
    >>> len(P.facets), len(P.vertices)
    (24, 16)

    References: see the module docstring.
    """
    run = _Run(model, seed, time_limit, workers, progress, chunk)
    run.discover(frame)
    perms = [_perm_of(model.scenario, mv) for mv in (moves or [])]
    run.perms, run.lifted = perms, False
    run.close_under(perms, lifted=False)
    run.stats["times"]["vertices"] = time.perf_counter() - run.t_vertices
    return run.plain_hull()


class _Run:
    """The state of one derivation: the model, the certified points found, the clock, the counters."""

    def __init__(self, model: LinearModel, seed: int, time_limit, workers, progress, chunk: int):
        self.t_start = time.perf_counter()
        self.deadline = None if time_limit is None else self.t_start + time_limit
        self.model = model
        self.sc = model.scenario
        self.d = len(self.sc.coordinates())
        self.rng = np.random.default_rng(seed)
        self.fp = fingerprint(model)
        self.stats: dict = {"oracle_calls": 0, "hull_rounds": 0, "times": {}}
        self.notes: list[str] = []
        self.report = progress or (lambda stage, done, total: None)
        self.workers = workers
        self.chunk = chunk
        self.points: dict[Point, None] = {}
        self.perms: list[list[int]] = []
        self.lifted = False
        self.max_tries = 0  # at most this many random directions (0: 50·(dim + 10))
        self.patience = 0  # random directions without a new point before stopping (0: the plain route's 40 or 2·dim)

    def out_of_time(self) -> bool:
        return self.deadline is not None and time.perf_counter() > self.deadline

    def ask(self, kind: str, items: list) -> list[Answer]:
        if not items:
            return []
        self.stats["oracle_calls"] += len(items)
        chunk = self.chunk
        chunks = [(self.model, kind, items[i:i + chunk]) for i in range(0, len(items), chunk)]
        res = fan_out(oracle_batch, chunks, self.workers)
        return [a for r in res for a in r]

    def add(self, pts) -> int:
        new = 0
        for p in pts:
            if p is not None and p not in self.points:
                self.points[p] = None
                new += 1
        return new

    def discover(self, frame: str) -> None:
        """Stages 1-4: first points, the proven affine hull, the coordinates, vertices from random directions."""
        sc, d, rng = self.sc, self.d, self.rng
        t0 = time.perf_counter()
        # with verified model symmetries (self.lifted) a few points and their images span as much as d + 8 points
        n_first = 8 if self.lifted and self.perms else d + 8
        first = [tuple(Fraction(int(v)) for v in rng.integers(-1000, 1001, size=d)) for _ in range(n_first)]
        self.add(a.point for a in self.ask("max", [(c, None, None) for c in first]))
        if self.lifted and self.perms:
            self.close_under(self.perms, lifted=True)
        self.report("points", len(self.points), None)
        while True:
            _, ann = affine_basis(list(self.points))
            v0 = next(iter(self.points))
            qs = []
            for h in ann:
                val = sum((Fraction(x) * y for x, y in zip(h, v0)), Fraction(0))
                qs.append((tuple(Fraction(x) for x in h), val, None))
                qs.append((tuple(Fraction(-x) for x in h), -val, None))
            answers = self.ask("max", qs)
            if not self.add(a.point for a in answers if a.valid is False):
                self.equations = [(tuple(h), sum((Fraction(x) * y for x, y in zip(h, v0)), Fraction(0)))
                                  for h in ann]
                break
        self.stats["times"]["affine hull"] = time.perf_counter() - t0
        kind = frame
        ns = _constant_on(no_signalling_functionals(sc), list(self.points))
        if frame == "auto":
            kind = "collins-gisin" if ns else "probabilities"
        elif frame in ("collins-gisin", "correlators") and not ns:
            from ..errors import InputError

            raise InputError(f"bundle '{self.model.label}' does not imply no-signalling, so {frame} coordinates "
                             "are not a faithful description of its behaviours", hint="use the probabilities frame")
        if frame == "correlators" and any(len(p.outcomes) != 2 for p in sc.parties):
            from ..errors import InputError

            raise InputError("correlator coordinates need two outcomes per party")
        self.kind = kind
        self.fr = fr = choose_frame(sc, list(self.points), kind)
        k = fr.dim
        # cddlib's insertion order follows the input coordinates; measured on the local-friendliness
        # polytope (96 points, dimension 15) plain probability coordinates make its hull about twice as
        # fast as Collins–Gisin ones, so the plain hull is taken there and its facets carried over exactly
        self.hull_frame = fr if kind == "probabilities" else choose_frame(sc, list(self.points), "probabilities")
        self.notes.append(f"no-signalling holds on this set (exact check on its affine hull): {'yes' if ns else 'no'}")
        self.t_vertices = t0 = time.perf_counter()
        self.G = G = np.array([[float(v) for v in f.vector] for f in fr.functionals]).reshape(k, d)
        patience, stale, tries = self.patience or max(40, 2 * k), 0, 0
        most = self.max_tries or 50 * (k + 10)
        while stale < patience and tries < most and not self.out_of_time():
            batch = []
            for _ in range(16):
                c = rng.normal(size=k) @ G
                batch.append((tuple(Fraction(float(v)).limit_denominator(10**6) for v in c), None, None))
            got = self.ask("max", batch)
            tries += len(batch)
            new = self.add(a.point for a in got)
            stale = 0 if new else stale + len(batch)
            self.report("vertices", len(self.points), None)
        self.stats["random_directions"] = tries

    def close_under(self, perms: list[list[int]], lifted: bool) -> None:
        """Add every image of the points under the moves: certified by the oracle, or free when *lifted*.

        A lifted move is a verified symmetry of the model itself (:func:`nogo.symmetry.lift_to_model`),
        so the image of a certified point is a certified point (its preimage is the permuted one).
        """
        if not perms:
            return
        d = self.d
        frontier = list(self.points)
        tried: set[Point] = set()
        while frontier and (lifted or not self.out_of_time()):
            cands = []
            for p in frontier:
                for perm in perms:
                    q = [Fraction(0)] * d
                    for i, j in enumerate(perm):
                        q[j] = p[i]
                    q = tuple(q)
                    if q not in self.points and q not in tried:
                        tried.add(q)
                        cands.append(q)
            if lifted:
                frontier = cands
            else:
                got = self.ask("member", cands)
                frontier = [a.point for a in got if a.point is not None and a.point not in self.points]
            self.add(frontier)
            self.report("vertices", len(self.points), None)

    def plain_hull(self) -> Polytope:
        """Stage 5-6 of the plain route: hull, the oracle on every facet until all are valid, exact checks."""
        hull, verified, status = self._hull_until_valid()
        t0 = time.perf_counter()
        plist = list(self.points)
        facets, tight_sets = self._exact_facets(hull, verified, plist, status)
        vertices = plist
        if hull and status == "complete":
            vertices = self._vertices_among(hull, tight_sets, plist)
        stats, notes = self.stats, self.notes
        stats["times"]["exact facet check"] = time.perf_counter() - t0
        stats["times"]["total"] = time.perf_counter() - self.t_start
        stats["points"] = len(plist)
        if status == "partial":
            notes.append("time limit reached: the facet list is the hull of the vertices found so far; facets "
                         "marked unverified were not yet checked against the bundle")
        model = self.model
        return Polytope(self.sc, model.label, model.assumptions, self.fr, vertices, self.equations, facets, status,
                        stats, notes, self.fp)

    def _hull_until_valid(self):
        """Stage 5: hull the points, ask the oracle on every new facet, add the points beyond; repeat.

        Returns (hull, verified answers by facet, "complete" | "partial")."""
        fr, k, G, rng, stats = self.fr, self.fr.dim, self.G, self.rng, self.stats
        batch = self.chunk * max(1, self.workers or 1)
        hull: list[tuple[tuple[int, ...], int]] = []
        verified: dict[tuple[tuple[int, ...], int], Answer] = {}
        status = "complete"
        t_hull = t_check = 0.0
        while True:
            if self.out_of_time():
                status = "partial"
                break
            t0 = time.perf_counter()
            self.report("hull", len(self.points), k)
            try:
                hull = _hull_in(fr, self.hull_frame, list(self.points), self.deadline)
            except HullOutOfTime:
                status = "partial"
                break
            t_hull += time.perf_counter() - t0
            stats["hull_rounds"] += 1
            t0 = time.perf_counter()
            todo = [f for f in hull if f not in verified]
            new_points: list[Point] = []
            for start in range(0, len(todo), batch):
                if self.out_of_time():
                    status = "partial"
                    break
                part = todo[start:start + batch]
                qs = [(tuple(fr.full(a)), Fraction(b), (rng.normal(size=k) * 1e-4) @ G) for a, b in part]
                for f, ans in zip(part, self.ask("max", qs)):
                    if ans.valid:
                        verified[f] = ans
                    else:
                        new_points.append(ans.point)
                self.report("facets checked", len(verified), len(hull))
            t_check += time.perf_counter() - t0
            if status == "partial":
                break
            if not self.add(new_points):
                if new_points:
                    raise PolytopeError("the oracle returned a point beyond a facet that the hull already holds")
                break
            self.close_under(self.perms, self.lifted)
        stats["times"]["hull"] = t_hull
        stats["times"]["facet checks"] = t_check
        return hull, verified, status

    def _exact_facets(self, hull, verified, plist, status) -> tuple[list[HullFacet], list[list[int]]]:
        """Stage 6: every facet valid on every point and tight on dim-1 affinely independent ones (exact)."""
        k = self.fr.dim
        Y, den = _coords_matrix(self.fr, plist)
        facets: list[HullFacet] = []
        tight_sets: list[list[int]] = []
        if not hull:
            return facets, tight_sets
        vals = int_matmul([a for a, _ in hull], Y, k)
        for i, (a, b) in enumerate(hull):
            row = vals[i]
            lim = b * den
            if any(v > lim for v in row):
                raise PolytopeError("a hull facet is violated by a certified point")
            tight = [j for j, v in enumerate(row) if v == lim]
            tight_sets.append(tight)
            ans = verified.get((a, b))
            facets.append(HullFacet(a, b, True if ans else None, len(tight), ans.bound if ans else None,
                                    ans.method if ans else "", ans.certificate if ans else None))
        for tight in tight_sets:
            M = _zmat([[1] + [int(v) for v in Y[j]] for j in tight], k + 1)
            if M.rank() != k:
                raise PolytopeError("a hull inequality is not tight on a facet's worth of vertices")
        if status == "complete":
            for f in facets:
                if f.bound is not None and f.bound != f.b:
                    raise PolytopeError("a certified bound is below a facet's value at its vertices")
        return facets, tight_sets

    def _vertices_among(self, hull, tight_sets, plist) -> list:
        """The points where the tight facets have full rank (the others are noted)."""
        k = self.fr.dim
        on: list[list[int]] = [[] for _ in plist]
        for i, tight in enumerate(tight_sets):
            for j in tight:
                on[j].append(i)
        vertices = []
        for j, p in enumerate(plist):
            M = _zmat([list(hull[i][0]) for i in on[j]], k)
            if len(on[j]) >= k and M.rank() == k:
                vertices.append(p)
        if len(vertices) < len(plist):
            self.notes.append(f"{len(plist) - len(vertices)} certified points found on the way are not vertices")
        return vertices
