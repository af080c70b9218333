"""Two-dimensional slices through behaviour space: the picture of which set allows what.

The plane through three behaviours P0, P1, P2 is parametrised as
``p(s, t) = P0 + s (P1 - P0) + t (P2 - P0)``.  For a bundle, the cross-section
``{(s, t) : p(s, t) is in the bundle's set}`` is a convex polygon; it is
computed *exactly* from the compiled model, with no facet list:

* the support function in a direction c of the plane is an LP over the
  model's columns plus the free plane coordinates (``rows . q = rhs``,
  ``observe(q) = p(s, t)``), solved in floating point and made exact with
  :func:`nogo.exact.exact_optimum` (checked rational point and checked dual
  multipliers);
* start from the four axis directions, take the exact convex hull of the
  vertices found, and ask the oracle about each edge's outward normal: a
  value above the edge's offset gives a new vertex, an equal one (with its
  dual certificate) confirms the edge.  This ends with every edge certified
  and every vertex a checked rational point of the model (the 2-D case of
  the oracle-and-hull method of DESIGN.md §3, polytopes).

The quantum set's cross-section is bounded from both sides, honestly:

* *outside*: the first NPA level restricted to the plane (M. Navascués,
  S. Pironio, A. Acín, PRL 98, 010401 (2007)): maximise c.(s, t) over moment
  matrices whose behaviour entries lie on the plane.  The dual multipliers
  of the plane rows give a Bell functional F on the whole behaviour space;
  :func:`nogo.quantum.npa.npa_bound` then certifies ``max_Q F <= beta`` from
  its own dual, so ``F(p(s, t)) <= beta`` is a *certified* half-plane
  containing the quantum cross-section;
* *inside*: quantum behaviours found by local search (:mod:`nogo.quantum.optimise`,
  maximising F over settings and state) that lie on the plane to 1e-7, plus
  every vertex of the Bell-local polygon when it is given (local behaviours
  are quantum).  These are floating-point lower bounds and are labelled so.

Only the polygons of bundles are exact; the quantum band is what is known.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction

from .errors import InputError
from .exact import ExactFailure, dual_bound, exact_optimum, point_violation
from .inequality import Coord, Inequality
from .model import Column, LinearModel, RowSource
from .scenario import Scenario

Pt = tuple[Fraction, Fraction]


# -- named behaviours -----------------------------------------------------------------
def uniform(sc: Scenario) -> list[Fraction]:
    n = len(sc.outcome_tuples())
    return [Fraction(1, n)] * len(sc.coordinates())


def deterministic(sc: Scenario, choice: dict[str, str] | None = None) -> list[Fraction]:
    """Each party gives a fixed outcome (default its first) whatever its setting: a local point."""
    choice = choice or {}
    fixed = tuple(choice.get(p.name, p.outcomes[0]) for p in sc.parties)
    return [Fraction(1) if a == fixed else Fraction(0) for _, a in sc.coordinates()]


def pr_box(sc: Scenario) -> list[Fraction]:
    """The PR box (S. Popescu, D. Rohrlich, Found. Phys. 24, 379 (1994)): a XOR b = [x > 1][y > 1]
    with settings and outcomes by position; two parties with two outcomes each."""
    if len(sc.parties) != 2 or any(len(p.outcomes) != 2 for p in sc.parties):
        raise InputError("the PR box is defined here for two parties with two outcomes each")
    A, B = sc.parties
    out = []
    for s, a in sc.coordinates():
        x, y = A.settings.index(s[0]), B.settings.index(s[1])
        i, j = A.outcomes.index(a[0]), B.outcomes.index(a[1])
        out.append(Fraction(1, 2) if (i ^ j) == (min(x, 1) * min(y, 1)) else Fraction(0))
    return out


def named_point(sc: Scenario, spec: str) -> tuple[str, list[Fraction]]:
    """'PR', 'uniform', 'deterministic' or 'deterministic:A=-1,B=+1', or a behaviour YAML file."""
    low = spec.strip().lower()
    if low in ("pr", "pr-box", "prbox"):
        return "PR box", pr_box(sc)
    if low in ("uniform", "white", "noise"):
        return "uniform", uniform(sc)
    if low.startswith("deterministic"):
        choice = {}
        rest = spec.split(":", 1)[1] if ":" in spec else ""
        for item in filter(None, (x.strip() for x in rest.split(","))):
            if "=" not in item:
                raise InputError(f"'{item}': write deterministic:A=+1,B=-1", hint="party=outcome pairs")
            p, o = (t.strip() for t in item.split("=", 1))
            party = sc.party(p)
            from .inequality import _match_outcome

            m = _match_outcome(o, party.outcomes)
            if m is None:
                raise InputError(f"party '{p}' has no outcome '{o}'", hint=f"one of {', '.join(party.outcomes)}")
            choice[p] = m
        label = "deterministic" + (" " + ", ".join(f"{k}={v}" for k, v in choice.items()) if choice else "")
        return label, deterministic(sc, choice)
    return behaviour_file(sc, spec)


def behaviour_file(sc: Scenario, path: str) -> tuple[str, list[Fraction]]:
    """A behaviour in YAML: a list of {settings: [..], outcomes: [..], p: "1/2"}; missing entries are 0.
    An experiment file gives its Born-rule behaviour when it is rational."""
    from pathlib import Path

    from .yamlread import read_yaml_file

    if not Path(path).exists():
        raise InputError(f"'{path}' is neither a named behaviour (PR, uniform, deterministic) nor a file",
                         hint="name a behaviour file or one of PR, uniform, deterministic:A=+1,B=+1")
    data = read_yaml_file(path)
    if isinstance(data, dict) and "measurements" in data:
        from .quantum import exact_behaviour, load_experiment

        exp = load_experiment(path)
        try:
            eb = exact_behaviour(exp)
        except ValueError:
            raise InputError(f"the experiment '{path}' has inexact inputs; a plane needs exact behaviours",
                             hint="give it as a labelled point (--point) instead") from None
        vals = []
        for k in sc.coordinates():
            v = eb[k]
            if not v.is_Rational:
                raise InputError(f"the behaviour of '{path}' is irrational ({k}: {v}); the plane of an exact "
                                 "slice must be rational", hint="use it as a labelled point (--point)")
            vals.append(Fraction(int(v.p), int(v.q)))
        return exp.title or Path(path).stem, vals
    rows = data.get("behaviour") if isinstance(data, dict) else data
    if not isinstance(rows, list):
        raise InputError("a behaviour file is a list of {settings, outcomes, p} (or has a 'behaviour' list)",
                         hint="e.g. - {settings: [1, 1], outcomes: [+1, +1], p: 1/2}")
    from .scenario import outcome_label

    index = {c: i for i, c in enumerate(sc.coordinates())}
    vals = [Fraction(0)] * len(index)
    for r in rows:
        try:
            key = (tuple(str(x) for x in r["settings"]), tuple(outcome_label(x) for x in r["outcomes"]))
            v = Fraction(str(r["p"]))
        except (KeyError, TypeError, ValueError, ZeroDivisionError):
            raise InputError(f"{path}: each entry is {{settings: [...], outcomes: [...], p: number}}") from None
        if key not in index:
            raise InputError(f"{path}: {key} is not a coordinate of the scenario")
        vals[index[key]] = v
    title = data.get("title") if isinstance(data, dict) else None
    return str(title or Path(path).stem), vals


# -- exact cross-sections --------------------------------------------------------------
@dataclass
class Edge:
    normal: Pt  # outward normal (a, b): a s + b t <= offset on the whole cross-section
    offset: Fraction
    certificate: str  # how the edge is shown valid


@dataclass
class Section:
    bundle: str
    vertices: list[Pt]  # counter-clockwise, exact
    edges: list[Edge]
    oracle_calls: int
    empty: bool = False
    notes: list[str] = field(default_factory=list)


class PlaneModel:
    """The bundle's model with the plane coordinates s, t as extra (split, non-negative) columns."""

    def __init__(self, model: LinearModel, P0, D1, D2):
        sc = model.scenario
        ncoord = len(sc.coordinates())
        n = len(model.columns)
        by_coord: list[dict[int, Fraction]] = [dict() for _ in range(ncoord)]
        for j, obs in enumerate(model.observe):
            for i, w in obs.items():
                by_coord[i][j] = w
        rows = list(model.rows)
        rhs = list(model.rhs)
        sources = list(model.sources)
        coords = sc.coordinates()
        for i in range(ncoord):
            row = dict(by_coord[i])
            for k, (d, sign) in enumerate(((D1[i], -1), (D1[i], 1), (D2[i], -1), (D2[i], 1))):
                if d:
                    row[n + k] = sign * d
            rows.append(row)
            rhs.append(P0[i])
            s, a = coords[i]
            sources.append(RowSource("plane", "plane", 0, (), f"p({' '.join(a)}|{' '.join(s)}) lies on the plane"))
        cols = list(model.columns) + [Column(None, (), (), lbl) for lbl in ("s+", "s-", "t+", "t-")]
        self.n = n
        self.model = LinearModel(sc, model.label, model.assumptions, cols, rows, rhs, sources,
                                 list(model.observe) + [{} for _ in range(4)], list(model.notes), model.kind)
        self.calls = 0

    def support(self, c: Pt) -> tuple[Fraction, Pt, str] | None:
        """Exact max of c.(s, t) over the cross-section: (value, a maximiser, evidence) or None if empty."""
        n = self.n
        cost = [Fraction(0)] * n + [c[0], -c[0], c[1], -c[1]]
        self.calls += 1
        try:
            opt = exact_optimum(self.model, cost)
        except ExactFailure as exc:
            if "infeasible" in str(exc).lower():
                return None
            raise
        bad = point_violation(self.model, opt.point)
        if bad is not None:  # exact_optimum checks this; a second look costs little
            raise RuntimeError(f"a slice vertex failed its exact check: {bad}")
        x = opt.point
        pt = (x[n] - x[n + 1], x[n + 2] - x[n + 3])
        if opt.duals is not None and dual_bound(self.model, opt.duals) == opt.value:
            ev = "exact dual multipliers (checked)"
        else:
            ev = opt.method
        return opt.value, pt, ev


def _cross(o: Pt, a: Pt, b: Pt) -> Fraction:
    return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])


def hull(points: list[Pt]) -> list[Pt]:
    """Exact convex hull, counter-clockwise, without collinear points (monotone chain)."""
    pts = sorted(set(points))
    if len(pts) <= 2:
        return pts
    lower: list[Pt] = []
    for p in pts:
        while len(lower) >= 2 and _cross(lower[-2], lower[-1], p) <= 0:
            lower.pop()
        lower.append(p)
    upper: list[Pt] = []
    for p in reversed(pts):
        while len(upper) >= 2 and _cross(upper[-2], upper[-1], p) <= 0:
            upper.pop()
        upper.append(p)
    return lower[:-1] + upper[:-1]


def _candidate_edges(h: list[Pt]) -> list[tuple[Pt, Fraction]]:
    """(outward normal, offset) of each edge; a segment gets both sides and its two ends."""
    if len(h) == 1:
        p = h[0]
        return [((Fraction(1), Fraction(0)), p[0]), ((Fraction(-1), Fraction(0)), -p[0]),
                ((Fraction(0), Fraction(1)), p[1]), ((Fraction(0), Fraction(-1)), -p[1])]
    if len(h) == 2:
        a, b = h
        n1 = (b[1] - a[1], a[0] - b[0])
        d = (b[0] - a[0], b[1] - a[1])
        out = []
        for nn in (n1, (-n1[0], -n1[1])):
            out.append((nn, nn[0] * a[0] + nn[1] * a[1]))
        out.append((d, d[0] * b[0] + d[1] * b[1]))
        out.append(((-d[0], -d[1]), -(d[0] * a[0] + d[1] * a[1])))
        return out
    out = []
    for a, b in zip(h, h[1:] + h[:1]):
        nn = (b[1] - a[1], a[0] - b[0])
        out.append((nn, nn[0] * a[0] + nn[1] * a[1]))
    return out


def cross_section(model: LinearModel, P0, D1, D2, max_calls: int = 400) -> Section:
    """The exact polygon of the bundle's set on the plane (see the module docstring)."""
    pm = PlaneModel(model, P0, D1, D2)
    pts: list[Pt] = []
    for c in ((1, 0), (0, 1), (-1, 0), (0, -1)):
        got = pm.support((Fraction(c[0]), Fraction(c[1])))
        if got is None:
            return Section(model.label, [], [], pm.calls, True, ["the plane misses the bundle's set"])
        pts.append(got[1])
    confirmed: dict[tuple, Edge] = {}
    while True:
        h = hull(pts)
        changed = False
        edges = []
        for nn, off in _candidate_edges(h):
            g = _gcd_norm(nn)
            key = (g, off * _scale(nn, g))
            if key in confirmed:
                edges.append(confirmed[key])
                continue
            value, pt, ev = pm.support(nn)
            if value > off:
                pts.append(pt)
                changed = True
                break
            e = Edge(g, off * _scale(nn, g), ev)
            confirmed[key] = e
            edges.append(e)
        if not changed:
            return Section(model.label, h, edges, pm.calls)
        if pm.calls > max_calls:
            raise RuntimeError(f"the slice polygon of {model.label} did not close after {max_calls} oracle calls")


def _gcd_norm(nn: Pt) -> Pt:
    """The normal scaled to coprime integers (same direction)."""
    import math

    den = math.lcm(nn[0].denominator, nn[1].denominator)
    a, b = int(nn[0] * den), int(nn[1] * den)
    g = math.gcd(a, b) or 1
    return (Fraction(a // g), Fraction(b // g))


def _scale(nn: Pt, g: Pt) -> Fraction:
    return g[0] / nn[0] if nn[0] else g[1] / nn[1]


def along(vertices: list[Pt], u: Pt) -> Fraction | None:
    """Largest r with r*u in the polygon (the polygon contains the origin), exactly; None if empty."""
    if not vertices:
        return None
    if len(vertices) < 3:
        best = None
        for v in vertices:  # a point or a segment: only points on the ray count
            if v[0] * u[1] == v[1] * u[0] and (v[0] * u[0] + v[1] * u[1]) >= 0:
                r = (v[0] / u[0]) if u[0] else (v[1] / u[1])
                best = r if best is None or r > best else best
        return best
    best = None
    for a, b in zip(vertices, vertices[1:] + vertices[:1]):
        nn = (b[1] - a[1], a[0] - b[0])
        off = nn[0] * a[0] + nn[1] * a[1]
        dot = nn[0] * u[0] + nn[1] * u[1]
        if dot > 0:
            r = off / dot
            best = r if best is None or r < best else best
    return best


# -- the quantum band --------------------------------------------------------------------
@dataclass
class QuantumBand:
    outer: list[tuple[float, float]]  # polygon containing the quantum cross-section
    outer_halfplanes: list[dict]  # certified half-planes a s + b t <= c (NPA), with the functional's bound
    inner: list[tuple[float, float]]  # polygon contained in it (found quantum points, local vertices)
    inner_points: list[dict]
    level: str
    notes: list[str] = field(default_factory=list)


def _cg_map(sc: Scenario):
    """Collins–Gisin coordinates of a no-signalling behaviour: the moments the NPA matrix holds."""
    from .quantum.npa import moment_key

    coords = {c: i for i, c in enumerate(sc.coordinates())}
    n = len(sc.parties)
    out = []
    for k in range(1, n + 1):
        for T in itertools.combinations(range(n), k):
            for xs in itertools.product(*(sc.parties[i].settings for i in T)):
                for os in itertools.product(*(sc.parties[i].outcomes[:-1] for i in T)):
                    word = tuple((i, x, o) for i, x, o in zip(T, xs, os))
                    s_full = [p.settings[0] for p in sc.parties]
                    for i, x in zip(T, xs):
                        s_full[i] = x
                    row = {}
                    for a in sc.outcome_tuples():
                        if all(a[i] == o for i, o in zip(T, os)):
                            row[coords[(tuple(s_full), a)]] = Fraction(1)
                    out.append((moment_key(word, n), word, row))
    return out


def _plane_npa(sc: Scenario, P0, D1, D2, c: tuple[float, float], level: str = "1"):
    """max r with (s, t) = r c over the NPA relaxation on the plane (the boundary along the ray from P0
    in direction c): (value, the plane rows' dual multipliers as a functional on full coordinates)."""
    import cvxpy as cp
    import numpy as np

    from .quantum.npa import level_words, moment_key

    n_par = len(sc.parties)
    words = level_words(sc, level)
    n = len(words)
    classes: dict = {}
    for i in range(n):
        for j in range(i, n):
            key = moment_key(tuple(reversed(words[i])) + words[j], n_par)
            classes.setdefault(key, []).append((i, j))
    G = cp.Variable((n, n), symmetric=True)
    st = cp.Variable(2)
    cons = [G >> 0]
    for key, entries in classes.items():
        i0, j0 = entries[0]
        if key is None:
            cons += [G[i, j] == 0 for i, j in entries]
            continue
        if key == tuple(() for _ in range(n_par)):
            cons.append(G[i0, j0] == 1)
        cons += [G[i, j] == G[i0, j0] for i, j in entries[1:]]
    plane = []
    cg = _cg_map(sc)
    for key, _, row in cg:
        if key not in classes:
            continue
        i0, j0 = classes[key][0]
        p0 = float(sum(P0[i] * w for i, w in row.items()))
        d1 = float(sum(D1[i] * w for i, w in row.items()))
        d2 = float(sum(D2[i] * w for i, w in row.items()))
        con = G[i0, j0] == p0 + d1 * st[0] + d2 * st[1]
        cons.append(con)
        plane.append((con, row))
    r = cp.Variable()
    cons += [st[0] == r * c[0], st[1] == r * c[1]]
    prob = cp.Problem(cp.Maximize(r), cons)
    prob.solve(solver="CLARABEL")
    if prob.status not in ("optimal", "optimal_inaccurate"):
        return None
    coeffs: dict[int, float] = {}
    for con, row in plane:
        y = float(np.asarray(con.dual_value).reshape(-1)[0])
        for i, w in row.items():
            coeffs[i] = coeffs.get(i, 0.0) + y * float(w)
    return float(prob.value), coeffs


def quantum_band(sc: Scenario, P0, D1, D2, experiments=(), directions: int = 16, level: str = "1",
                 inner_seed: list[Pt] = (), starts: int = 2, search: bool = True) -> QuantumBand:
    """Certified outer and found inner bounds of the quantum cross-section (see the module docstring).

    ``experiments``: quantum experiments; each one's behaviour is an inner point when it lies on
    the plane, and the first one's dimensions are used by the local search (``search``)."""
    import math

    from .quantum.npa import npa_bound

    coords = sc.coordinates()
    halfplanes = []
    inner_pts = [dict(s=float(p[0]), t=float(p[1]), source="uniform or deterministic behaviour (a product state gives it)")
                 for p in inner_seed]
    for exp in experiments:
        got = on_plane(exp, P0, D1, D2)
        if got is not None:
            inner_pts.append(dict(s=got[0], t=got[1], source=f"behaviour of {exp.title or exp.file} (float)"))
    experiment = experiments[0] if experiments and search else None
    notes = []
    for k in range(directions):
        ang = 2 * math.pi * k / directions
        c = (round(math.cos(ang), 12), round(math.sin(ang), 12))
        got = _plane_npa(sc, P0, D1, D2, c, level)
        if got is None:
            notes.append(f"the plane SDP failed in direction {k}")
            continue
        value, f = got
        for sign in (1, -1):
            F = {coords[i]: Fraction(sign * v).limit_denominator(10 ** 6) for i, v in f.items() if abs(v) > 1e-9}
            if not F:
                continue
            a = sum((F.get(coords[i], 0) * D1[i] for i in range(len(coords))), Fraction(0))
            b = sum((F.get(coords[i], 0) * D2[i] for i in range(len(coords))), Fraction(0))
            if a * Fraction(c[0]) + b * Fraction(c[1]) <= 0:
                continue
            ineq = Inequality(sc, F, Fraction(0), f"plane functional {k + 1}")
            nb = npa_bound(ineq, level)
            if nb.certified is None:
                notes.append(f"direction {k + 1}: NPA bound not certified")
                break
            f0 = sum((F.get(coords[i], 0) * P0[i] for i in range(len(coords))), Fraction(0))
            halfplanes.append({"a": a, "b": b, "c": Fraction(nb.certified) - f0, "functional": ineq,
                               "certified": Fraction(nb.certified), "sdp": value})
            if experiment is not None:
                inner_pts += _found_points(experiment, ineq, P0, D1, D2, starts)
            break
    outer = _clip_box(halfplanes)
    inner = [(p["s"], p["t"]) for p in inner_pts]
    return QuantumBand(outer, halfplanes, _float_hull(inner), inner_pts, level, notes)


def _found_points(exp, ineq: Inequality, P0, D1, D2, starts: int) -> list[dict]:
    """Quantum behaviours found by local search on F that lie on the plane (float, to 1e-7)."""
    from .quantum.optimise import optimise

    opt = optimise(exp, ineq, starts=starts, seed=0, over_state=True)
    got = on_plane(opt.experiment, P0, D1, D2)
    if got is None:
        return []
    return [dict(s=got[0], t=got[1], source="quantum behaviour found by optimise (float)")]


def on_plane(exp, P0, D1, D2, tol: float = 1e-7) -> tuple[float, float] | None:
    """Plane coordinates of an experiment's behaviour, or None when it is off the plane by more than tol."""
    import numpy as np

    from .quantum import behaviour

    b = behaviour(exp)
    p = np.array([b[k] for k in exp.scenario.coordinates()])
    A = np.array([[float(x) for x in D1], [float(x) for x in D2]]).T
    rhs = p - np.array([float(x) for x in P0])
    st, *_ = np.linalg.lstsq(A, rhs, rcond=None)
    if np.max(np.abs(A @ st - rhs)) > tol:
        return None
    return float(st[0]), float(st[1])


def _clip_box(halfplanes: list[dict]) -> list[tuple[float, float]]:
    poly = [(-1e3, -1e3), (1e3, -1e3), (1e3, 1e3), (-1e3, 1e3)]
    for h in halfplanes:
        a, b, c = float(h["a"]), float(h["b"]), float(h["c"])
        out = []
        for p, q in zip(poly, poly[1:] + poly[:1]):
            fp, fq = a * p[0] + b * p[1] - c, a * q[0] + b * q[1] - c
            if fp <= 0:
                out.append(p)
            if (fp < 0 < fq) or (fq < 0 < fp):
                r = fp / (fp - fq)
                out.append((p[0] + r * (q[0] - p[0]), p[1] + r * (q[1] - p[1])))
        poly = out
        if not poly:
            break
    return poly


def _float_hull(points: list[tuple[float, float]]) -> list[tuple[float, float]]:
    pts = sorted(set(points))
    if len(pts) <= 2:
        return pts

    def cr(o, a, b):
        return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])
    lo, up = [], []
    for p in pts:
        while len(lo) >= 2 and cr(lo[-2], lo[-1], p) <= 1e-15:
            lo.pop()
        lo.append(p)
    for p in reversed(pts):
        while len(up) >= 2 and cr(up[-2], up[-1], p) <= 1e-15:
            up.pop()
        up.append(p)
    return lo[:-1] + up[:-1]


def quantum_along(band: QuantumBand, u: tuple[float, float]) -> tuple[float | None, float | None]:
    """(inner, outer) bounds on the largest r with r*u in the quantum cross-section."""
    outer = None
    for h in band.outer_halfplanes:
        dot = float(h["a"]) * u[0] + float(h["b"]) * u[1]
        if dot > 1e-12:
            r = float(h["c"]) / dot
            outer = r if outer is None or r < outer else outer
    poly = band.inner
    cands = []
    for p in poly:  # points on the ray itself
        if abs(p[0] * u[1] - p[1] * u[0]) < 1e-9 and p[0] * u[0] + p[1] * u[1] > 0:
            cands.append((p[0] * u[0] + p[1] * u[1]) / (u[0] ** 2 + u[1] ** 2))
    if len(poly) >= 3:
        rs, inside = [], True
        for a, b in zip(poly, poly[1:] + poly[:1]):
            nn = (b[1] - a[1], a[0] - b[0])
            off = nn[0] * a[0] + nn[1] * a[1]
            inside = inside and off >= -1e-12  # the origin (P0) is in the polygon
            dot = nn[0] * u[0] + nn[1] * u[1]
            if dot > 1e-15:
                rs.append(off / dot)
        if inside and rs:
            cands.append(min(rs))
    inner = max(cands) if cands else None
    return inner, outer


def coord_value(vec, coords: list[Coord], ineq: Inequality):
    """The inequality's written left side at a behaviour vector (exact)."""
    return ineq.written_value(sum((ineq.coeffs.get(k, 0) * v for k, v in zip(coords, vec)), Fraction(0)))
