"""Stored descriptions re-verified with the same exact checks as a fresh derivation.

A stored polytope is trusted only after these checks, all exact, in batched
integer matrix arithmetic (int64 numpy where the product bounds rule out
overflow, |a|·|b|·width < 2^62, Python integers otherwise), and free of any
solver when the entry carries its evidence:

1. the fingerprint of the compiled model it was derived from equals the
   current model's (a copied or stale entry fails here);
2. every vertex p has an exact preimage in the model: the stored rational
   q satisfies q >= 0, rows·q = rhs and O q = p, one integer matrix product
   for all vertices (an entry without a stored preimage is asked of the
   membership oracle, whose float answer is again checked exactly);
3. every equation h·p = v of the affine hull holds on the whole model set:
   stored Farkas multipliers y, z of the model's rows prove h·p <= v and
   -h·p <= -v (rowsᵀy >= Oᵀh, rhs·y <= v), checked together with (4);
4. every stored class representative (symmetric route) or facet (plain
   route) has stored multipliers y with rowsᵀy >= Oᵀc and rhs·y <= b,
   one integer matrix product for all of them (the Farkas lemma: then
   c·p <= b on every behaviour the model allows);
5. each relabelling used is lifted to the model again and verified
   (:func:`nogo.symmetry.lift_to_model`), the group is re-enumerated on the
   vertices and every class is expanded again: its size must equal the
   stored orbit size, no two classes may be one orbit, and the class is
   closed under the group;
6. every facet holds on every vertex; every representative is tight on
   vertices of affine rank dim - 1; every stored vertex is a vertex of the
   stored facets.

Checks (2)-(4) are the Farkas lemma and plain membership (e.g. A. Schrijver,
*Theory of Linear and Integer Programming*, Wiley 1986, §7.3): the evidence a
fresh run finds with its LP oracle is stored with the entry, so re-verifying it
costs integer matrix products instead of LP solves.

Anything that fails yields a one-line reason and the caller derives afresh.
"""

from __future__ import annotations

import json
import math
import time
from fractions import Fraction
from types import SimpleNamespace

import flint
import numpy as np


from .frame import Frame, candidate_functionals, choose_frame
from .ints import _SAFE, PolytopeError, _frac, _lcm, _round_vector, _zmat
from .oracle import _DATA, _data_of, _oracle, fingerprint, oracle_batch
from .result import HullFacet, Polytope

FORMAT = "nogo-polytope-3"


# ---------------------------------------------------------------------------
# writing: the polytope with the evidence that makes re-verification cheap
# ---------------------------------------------------------------------------
def to_payload(P: Polytope, model=None) -> str:
    """The polytope as canonical JSON text (what the store hashes).

    With the *model*, the vertex preimages and the equations' Farkas
    multipliers are found (LP oracle) and stored, each checked exactly here
    with the checks of :func:`reverify`; an item whose evidence is not found is
    stored without it and re-verified through the oracle on load.
    """
    if P.classes is not None:
        classes = [{"a": list(P.facets[rep].a), "b": P.facets[rep].b, "orbit": len(members),
                    "certificate": _cert(P.facets[rep].certificate), "method": P.facets[rep].method}
                   for rep, members in P.classes]
        facets = None
    else:
        classes = None
        facets = [{"a": list(f.a), "b": f.b, "certificate": _cert(f.certificate), "method": f.method}
                  for f in P.facets]
    pre = eqc = None
    if model is not None:
        try:
            pre, eqc = _find_evidence(P, model)
        except (PolytopeError, ArithmeticError, ValueError, RuntimeError):
            pre = eqc = None  # the entry is kept without the shortcut; its load asks the oracle instead
    data = {"format": FORMAT, "fingerprint": P.fingerprint, "frame": P.frame.kind,
            "vertices": [[str(v) for v in p] for p in P.vertices],
            "preimages": pre, "equation_certificates": eqc,
            "equations": [[list(h), str(v)] for h, v in P.equations],
            "classes": classes, "facets": facets, "generators": list(P.group_generators),
            "group_order": P.group_order, "status": P.status, "notes": P.notes,
            "stats": {k: v for k, v in P.stats.items() if k != "times"}}
    return json.dumps(data, sort_keys=True, separators=(",", ":"))


def _cert(c):
    return None if c is None else [[str(v) for v in c[0]], str(c[1])]


def _uncert(c):
    return None if c is None else ([int(v) for v in c[0]], int(c[1]))


def _find_evidence(P: Polytope, model):
    """(sparse preimages per vertex, [certificate of h·p <= v, of -h·p <= -v] per equation); None where not found."""
    o = _oracle(model)
    pre = []
    for p in P.vertices:
        x = o.find_preimage(np.array([float(v) for v in p]))
        got = None if x is None else _round_vector(np.where(x > 1e-12, x, 0.0))
        if got is None:
            pre.append(None)
            continue
        X, den = got
        pre.append([str(int(den)), [[int(j), str(int(X[j]))] for j in np.flatnonzero(X)]])
    D = _model_data(model)
    verts = list(P.vertices)
    ok = _check_preimages(D, verts, _parse_preimages(pre, D.n)) if verts else []
    pre = [e if good else None for e, good in zip(pre, ok)]
    eqc = []
    if P.equations:
        qs = []
        for h, v in P.equations:
            qs.append((tuple(Fraction(x) for x in h), Fraction(v), None))
            qs.append((tuple(Fraction(-x) for x in h), -Fraction(v), None))
        answers = oracle_batch((model, "max", qs))
        certs = [_cert(a.certificate) if a.valid and a.certificate is not None else None for a in answers]
        eqc = [[certs[2 * i], certs[2 * i + 1]] for i in range(len(P.equations))]
    return pre, eqc


# ---------------------------------------------------------------------------
# batched exact checks
# ---------------------------------------------------------------------------
def _model_data(model):
    """The model's rows and observation map as integers (shared with :func:`.oracle.check_certificate`)."""
    fp = fingerprint(model)
    D = _DATA.get(fp)
    if D is None:
        if len(_DATA) > 8:
            _DATA.clear()
        D = _DATA[fp] = _data_of(model)
    return D


def _absmax(M) -> int:
    if not M.size:
        return 0
    return int(np.max(np.abs(M))) if M.dtype != object else max(abs(int(v)) for v in M.flat)


def _int_array(rows, width: int) -> np.ndarray:
    """Python integers as an int64 array when they are small enough, else as an object array."""
    M = np.array(rows, dtype=object).reshape(len(rows), width)
    return M.astype(np.int64) if _absmax(M) < 2**62 else M


def _sparse_times(S, smax: int, M: np.ndarray) -> np.ndarray:
    """Exact S @ M for an integer sparse S (entries at most *smax*) and an integer dense M."""
    width = int(np.max(np.diff(S.indptr))) if S.shape[0] else 0
    if M.dtype != object and smax * _absmax(M) * max(width, 1) < _SAFE:
        return np.asarray(S @ M.astype(np.int64))
    return S.toarray().astype(object).dot(M.astype(object))


def _dense_times(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    """Exact A @ B for integer arrays (int64 when the bounds rule out overflow)."""
    if A.dtype != object and B.dtype != object and _absmax(A) * _absmax(B) * max(A.shape[1], 1) < _SAFE:
        return A @ B
    return A.astype(object).dot(B.astype(object))


def _scaled(M: np.ndarray, scale) -> np.ndarray:
    """M times a per-column (or scalar) integer scale, exactly."""
    s = np.asarray(scale, dtype=object)
    smax = max(abs(int(v)) for v in np.ravel(s)) if s.size else 0
    if M.dtype != object and _absmax(M) * smax < _SAFE:
        return M.astype(np.int64) * s.astype(np.int64)
    return M.astype(object) * s


def _parse_preimages(pre, n: int):
    """(numerator matrix n × V, denominators, which vertices have one) from the stored sparse form."""
    if pre is None:
        return None
    cols, dens, have = [], [], []
    for e in pre:
        if e is None:
            cols.append({})
            dens.append(1)
            have.append(False)
            continue
        den, entries = int(e[0]), e[1]
        col = {}
        for j, v in entries:
            j = int(j)
            if not 0 <= j < n or j in col:
                raise ValueError("a stored preimage names a column twice or out of range")
            col[j] = int(v)
        cols.append(col)
        dens.append(den)
        have.append(True)
    Q = np.zeros((n, len(cols)), dtype=object)
    for i, col in enumerate(cols):
        for j, v in col.items():
            Q[j, i] = v
    if _absmax(Q) < 2**62:
        Q = Q.astype(np.int64)
    return Q, dens, have


def _check_preimages(D, verts, parsed, pint=None) -> list[bool]:
    """Per vertex: the stored q is >= 0, rows·q = rhs and O q = p (exact; False where none is stored)."""
    if parsed is None:
        return [False] * len(verts)
    Q, dens, have = parsed
    if Q.shape[1] != len(verts):
        raise ValueError("the stored preimages do not match the vertices")
    Pm, pden = pint if pint is not None else vertex_ints(verts)
    Pint = Pm.T  # d × V
    ok = np.array(have, dtype=bool) & np.array([int(x) > 0 for x in dens], dtype=bool)
    ok &= ~np.any(Q < 0, axis=0)
    AQ = _sparse_times(D.A, D.amax, Q)  # m × V
    b = D.b.astype(object) if D.b.dtype == object else D.b
    ok &= np.all(AQ == _scaled(b[:, None], np.array(dens, dtype=object)[None, :]), axis=0)
    OQ = _sparse_times(D.O, D.omax, Q)  # d × V, the image times oden·den_v
    ok &= np.all(_scaled(OQ, pden) == _scaled(Pint, np.array([int(x) * D.oden for x in dens], dtype=object)[None, :]),
                 axis=0)
    return [bool(v) for v in ok]


def check_certificates(model, C: list, betas: list, certs: list) -> list[bool]:
    """:func:`.oracle.check_certificate` for many inequalities c·p <= beta at once, exactly.

    ``C``: full-coordinate coefficient vectors (integers or Fractions);
    ``certs``: (integer multipliers of the model's rows, denominator) or None.
    Each is checked as rowsᵀ(y/den) >= Oᵀc and rhs·(y/den) <= beta.
    """
    D = _model_data(model)
    r = len(C)
    if not r:
        return []
    good = [c is not None and len(c[0]) == D.m and int(c[1]) > 0 for c in certs]
    Y = _int_array([[int(v) for v in c[0]] if g else [0] * D.m for c, g in zip(certs, good)], D.m).T  # m × r
    yden = [int(c[1]) if g else 1 for c, g in zip(certs, good)]
    cden = [_lcm(Fraction(v).denominator for v in c) for c in C]
    Ci = _int_array([[int(Fraction(v) * m) for v in c] for c, m in zip(C, cden)], D.d).T  # d × r
    lhs = _sparse_times(D.AT, D.amax, Y)  # n × r: rowsᵀ y
    rhs = _sparse_times(D.OT, D.omax, Ci)  # n × r: Oᵀ c, over cden·oden
    ok = np.array(good, dtype=bool)
    ok &= np.all(_scaled(lhs, np.array([m * D.oden for m in cden], dtype=object)[None, :])
                 >= _scaled(rhs, np.array(yden, dtype=object)[None, :]), axis=0)
    if D.b.dtype != object and Y.dtype != object and _absmax(D.b) * _absmax(Y) * max(D.m, 1) < _SAFE:
        by = D.b.astype(np.int64) @ Y
    else:
        by = D.b.astype(object).dot(Y.astype(object))
    for j in range(r):  # rhs·y / den <= beta, with beta = num/bden: rhs·y · bden <= num · den
        beta = Fraction(betas[j])
        ok[j] = ok[j] and int(by[j]) * beta.denominator <= beta.numerator * yden[j]
    return [bool(v) for v in ok]


def vertex_ints(verts) -> tuple[np.ndarray, int]:
    """The vertices as integers over their least common denominator (one conversion per distinct value)."""
    values = {v for p in verts for v in p}
    pden = _lcm(Fraction(v).denominator for v in values)
    as_int = {v: int(Fraction(v) * pden) for v in values}
    return _int_array([[as_int[v] for v in p] for p in verts], len(verts[0])), pden


def coords_int(frame, verts, pint=None) -> tuple[np.ndarray, int]:
    """Frame coordinates of the vertices as integers over their least common denominator (exact).

    The same (Y, den) as :func:`.hull._coords_matrix`, by one integer matrix
    product instead of a Fraction per entry.
    """
    k = frame.dim
    Pm, pden = pint if pint is not None else vertex_ints(verts)
    gden = _lcm(Fraction(g).denominator for f in frame.functionals for g in f.vector)
    G = _int_array([[int(Fraction(g) * gden) for g in f.vector] for f in frame.functionals], Pm.shape[1])
    Y = _dense_times(Pm, G.T)
    den = pden * gden
    g = math.gcd(den, *(int(v) for v in np.unique(np.abs(Y)))) if Y.size else den
    Y, den = Y // g, den // g
    return Y.astype(object).reshape(len(verts), k), den


def frame_from_equations(scenario, verts, kind: str, eqs, pint) -> Frame | None:
    """The frame :func:`.frame.choose_frame` picks, built from verified equations instead of a basis of aff(P).

    With H the stored equations (valid on every vertex, exact) and the greedy
    choice of the preferred functionals G that are independent modulo the
    rows of H, aff(vertices) = {H p = v} exactly when the vertices' G
    coordinates have affine rank k = d - rank H; then the choice is the one
    :func:`.frame.choose_frame` makes and λ = c T with T the first k columns
    of [G; H]^{-1}.  None when H does not fit (the caller uses choose_frame).
    """
    Pm, pden = pint
    d = Pm.shape[1]
    H = [[int(x) for x in h] for h, _ in eqs]
    if eqs:  # every equation holds on every vertex (already implied by its Farkas certificates; cheap)
        if any((v * pden).denominator != 1 for _, v in eqs):
            return None
        vals = np.array([int(v * pden) for _, v in eqs], dtype=object)
        if not np.all(_dense_times(_int_array(H, d), Pm.T) == vals[:, None]):
            return None
    rows = list(H)
    rank = _zmat(rows, d).rank() if rows else 0
    if rank != len(H):
        return None
    chosen = []
    for f in candidate_functionals(scenario, kind):
        if any(Fraction(g).denominator != 1 for g in f.vector):
            return None
        trial = rows + [[int(g) for g in f.vector]]
        r = _zmat(trial, d).rank()
        if r > rank:
            rows, rank = trial, r
            chosen.append(f)
            if rank == d:
                break
    k = len(chosen)
    if rank != d:
        return None
    M = _zmat(rows[len(H):] + rows[:len(H)], d)  # [G; H]
    inv = flint.fmpq_mat(M).inv()
    T = [[_frac(inv[i, j]) for j in range(k)] for i in range(d)]
    base = verts[0]
    g0 = [sum((Fraction(g) * Fraction(x) for g, x in zip(f.vector, base) if g and x), Fraction(0)) for f in chosen]
    fr = Frame(kind, chosen, base, T, g0)
    Y, den = coords_int(fr, verts, pint)
    if _zmat([[1] + [int(v) for v in row] for row in Y], k + 1).rank() != k + 1:
        return None
    fr._coords = (Y, den)
    return fr


# ---------------------------------------------------------------------------
# reading
# ---------------------------------------------------------------------------
def reverify(payload: str, model, generators) -> tuple[Polytope | None, str]:
    """(the polytope, "") when every check of the module docstring holds, else (None, the first reason)."""
    try:
        return _reverify(json.loads(payload), model, generators)
    except (ValueError, KeyError, TypeError, IndexError, ZeroDivisionError, RecursionError, PolytopeError,
            AttributeError, OverflowError) as err:
        said = str(err).splitlines()[0][:100] if str(err) else ""
        return None, f"the stored entry is malformed ({type(err).__name__}{': ' + said if said else ''})"


def _fractions(rows) -> list[tuple[Fraction, ...]]:
    memo: dict[str, Fraction] = {}

    def f(s):
        v = memo.get(s)
        if v is None:
            v = memo[s] = Fraction(s)
        return v
    return [tuple(f(str(v)) for v in p) for p in rows]


def _reverify(data: dict, model, generators):
    t0 = time.perf_counter()
    if data.get("format") != FORMAT:
        return None, "the stored entry has another format"
    fp = fingerprint(model)
    if data["fingerprint"] != fp:
        return None, "the stored entry was derived from another model"
    sc = model.scenario
    d = len(sc.coordinates())
    verts = _fractions(data["vertices"])
    if not verts or any(len(p) != d for p in verts) or len(set(verts)) != len(verts):
        return None, "the stored vertices are malformed"
    pint = vertex_ints(verts)
    D = _model_data(model)
    ok = _check_preimages(D, verts, _parse_preimages(data.get("preimages"), D.n), pint)
    ask = [p for p, good in zip(verts, ok) if not good]
    if ask:
        got = oracle_batch((model, "member", ask))
        if any(a.point != p for a, p in zip(got, ask)):
            return None, "a stored vertex has no exact preimage in the model"
    eqs = [(tuple(int(x) for x in h), Fraction(v)) for h, v in data["equations"]]
    if eqs:
        stored = data.get("equation_certificates") or [[None, None]] * len(eqs)
        if len(stored) != len(eqs):
            return None, "the stored equation certificates do not match the equations"
        C, B, certs = [], [], []
        for (h, v), (up, down) in zip(eqs, stored):
            C += [h, tuple(-x for x in h)]
            B += [v, -v]
            certs += [_uncert(up), _uncert(down)]
        good = check_certificates(model, C, B, certs)
        qs = [(tuple(Fraction(x) for x in c), b, None) for c, b, g in zip(C, B, good) if not g]
        if qs and not all(a.valid for a in oracle_batch((model, "max", qs))):
            return None, "a stored equation of the affine hull does not hold on the model"
    fr = frame_from_equations(sc, verts, data["frame"], eqs, pint)
    if fr is None:  # the equations do not describe aff(vertices): the slow way, which then refuses below
        fr = choose_frame(sc, verts, data["frame"])
    k = fr.dim
    if len(eqs) != d - k:
        return None, "the stored equations do not match the dimension of the vertices"
    Y, den = getattr(fr, "_coords", None) or coords_int(fr, verts, pint)
    run = SimpleNamespace(fr=fr, notes=list(data.get("notes", [])), stats=dict(data.get("stats", {}), times={}),
                          sc=sc, model=model, equations=eqs, fp=fp, t_start=t0)
    if data["classes"] is not None:
        P = _symmetric(run, data, verts, Y, den, model, generators)
    else:
        P = _plain(run, data, verts, Y, den, model)
    if isinstance(P, str):
        return None, P
    return P, ""


def _forms_and_certs(fr, items):
    """(frame forms (a, b), full-coordinate vectors, bounds, certificates) of stored inequalities."""
    forms, C, B, certs = [], [], [], []
    for c in items:
        a, b = tuple(int(v) for v in c["a"]), int(c["b"])
        if len(a) != fr.dim:
            raise ValueError("a stored inequality has the wrong length")
        if math.gcd(b, *a) != 1:
            raise ValueError("a stored inequality is not in primitive form (coefficients with a common factor)")
        forms.append((a, b))
        C.append(fr.full(a))
        B.append(Fraction(b))
        certs.append(_uncert(c["certificate"]))
    return forms, C, B, certs


def _symmetric(run, data, verts, Y, den, model, generators):
    from ..symmetry import lift_to_model
    from .derive import _perm_of
    from .group import enumerate_group
    from .symmetric import _expand

    from .symmetric import _LIST_LIMIT

    if int(data.get("group_order") or 0) > _LIST_LIMIT:
        # classes told apart by the canonical graph: listing the group to re-check them would not fit
        return "the stored classes were told apart by the canonical graph, which is not re-checked from storage yet"
    labels = set(data["generators"])
    if not labels <= {g.label for g in generators}:
        return "the stored symmetries are not relabellings of this scenario"
    used = []
    for g in generators:
        if g.label not in labels:
            continue
        if lift_to_model(model, g) is None:
            return f"the stored symmetry '{g.label}' is not a verified symmetry of the model"
        used.append((g.label, _perm_of(model.scenario, g.move)))
    group, refused = enumerate_group(verts, run.fr, used)
    if refused or group.order != data["group_order"]:
        return "the stored symmetry group does not act on the stored vertices as recorded"
    forms, C, B, certs = _forms_and_certs(run.fr, data["classes"])
    if not all(check_certificates(model, C, B, certs)):
        return "a stored class representative has no valid Farkas certificate"
    if len(set(forms)) != len(forms):
        return "two stored classes are the same"
    reps = [SimpleNamespace(orbit=int(c["orbit"])) for c in data["classes"]]
    verified = {ab: SimpleNamespace(method="stored multipliers, re-checked exactly", certificate=cert)
                for ab, cert in zip(forms, certs)}
    Yi = Y.astype(np.int64) if _absmax(Y) < 2**40 else Y
    # the classes must be distinct orbits: no representative is the image of another
    keys = {}
    order = np.argsort(group.perms, axis=1)
    for i, (a, b) in enumerate(forms):
        inc = _tight(Yi, a, b * den)
        key = np.unique(np.packbits(inc[order], axis=1), axis=0)[0].tobytes()
        if key in keys:
            return "two stored classes are one orbit"
        keys[key] = i
    try:
        P = _expand(run, verts, Yi, den, reps, forms, group, verified, data["status"])
    except PolytopeError as err:
        return f"a stored class fails an exact check ({err})"
    if len(P.vertices) != len(verts):
        return "a stored vertex is not a vertex of the stored facets"
    return P


def _tight(Y, a, lim):
    if Y.dtype == object:
        return np.array([sum(int(x) * v for x, v in zip(row, a)) == lim for row in Y], dtype=bool)
    return (Y @ np.array(a, dtype=np.int64)) == lim


def _plain(run, data, verts, Y, den, model):
    from .hull import int_matmul

    fr, k = run.fr, run.fr.dim
    forms, C, B, certs = _forms_and_certs(fr, data["facets"])
    if not all(check_certificates(model, C, B, certs)):
        return "a stored facet has no valid Farkas certificate"
    facets = [HullFacet(a, b, True, 0, Fraction(b), "stored multipliers, re-checked exactly", cert)
              for (a, b), cert in zip(forms, certs)]
    if len(set(forms)) != len(facets):
        return "a stored facet is listed twice"
    vals = int_matmul([f.a for f in facets], Y, k)
    lim = np.array([f.b for f in facets], dtype=object)[:, None] * den
    if facets and np.any(vals > lim):
        return "a stored facet is violated by a stored vertex"
    tight = vals == lim
    for i, f in enumerate(facets):
        on = np.flatnonzero(tight[i])
        f.tight = len(on)
        if _zmat([[1] + [int(v) for v in Y[j]] for j in on], k + 1).rank() != k:
            return "a stored facet is not tight on a facet's worth of vertices"
    return Polytope(run.sc, model.label, model.assumptions, fr, verts, run.equations, facets, data["status"],
                    run.stats, run.notes, run.fp)
