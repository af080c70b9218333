"""Stored descriptions re-verified with the same exact checks as a fresh derivation.

A stored polytope is trusted only after these checks, all exact and, except
(2) and (3), free of any solver:

1. the fingerprint of the compiled model it was derived from equals the
   current model's (a copied or stale entry fails here);
2. every vertex has an exact preimage in the model (membership oracle,
   the float only finds it; the rational preimage is checked exactly);
3. every equation of the affine hull is re-proved both ways by a Farkas
   certificate (oracle);
4. every stored class representative (symmetric route) or facet (plain
   route) has stored multipliers y with rowsᵀy >= Oᵀc and rhs·y <= b,
   checked in integer arithmetic (:func:`.oracle.check_certificate`);
5. each relabelling used is lifted to the model again and verified
   (:func:`nogo.symmetry.lift_to_model`), the group is re-enumerated on the
   vertices and every class is expanded again: its size must equal the
   stored orbit size, and the class must be closed under the group;
6. every facet holds on every vertex; every representative is tight on
   vertices of affine rank dim - 1.

Anything that fails yields a one-line reason and the caller derives afresh.
"""

from __future__ import annotations

import json
import time
from fractions import Fraction
from types import SimpleNamespace

import numpy as np

from .frame import choose_frame
from .hull import _coords_matrix, int_matmul
from .ints import PolytopeError, _zmat
from .oracle import check_certificate, fingerprint, oracle_batch
from .result import HullFacet, Polytope

FORMAT = "nogo-polytope-2"


def to_payload(P: Polytope) -> str:
    """The polytope as canonical JSON text (what the store hashes)."""
    if P.classes is not None:
        classes = [{"a": list(P.facets[rep].a), "b": P.facets[rep].b, "orbit": len(members),
                    "certificate": _cert(P.facets[rep].certificate), "method": P.facets[rep].method}
                   for rep, members in P.classes]
        facets = None
    else:
        classes = None
        facets = [{"a": list(f.a), "b": f.b, "certificate": _cert(f.certificate), "method": f.method}
                  for f in P.facets]
    data = {"format": FORMAT, "fingerprint": P.fingerprint, "frame": P.frame.kind,
            "vertices": [[str(v) for v in p] for p in P.vertices],
            "equations": [[list(h), str(v)] for h, v in P.equations],
            "classes": classes, "facets": facets, "generators": list(P.group_generators),
            "group_order": P.group_order, "status": P.status, "notes": P.notes,
            "stats": {k: v for k, v in P.stats.items() if k != "times"}}
    return json.dumps(data, sort_keys=True, separators=(",", ":"))


def _cert(c):
    return None if c is None else [[str(v) for v in c[0]], str(c[1])]


def _uncert(c):
    return None if c is None else ([int(v) for v in c[0]], int(c[1]))


def reverify(payload: str, model, generators) -> tuple[Polytope | None, str]:
    """(the polytope, "") when every check of the module docstring holds, else (None, the first reason)."""
    try:
        return _reverify(json.loads(payload), model, generators)
    except (ValueError, KeyError, TypeError, IndexError, ZeroDivisionError, RecursionError, PolytopeError,
            AttributeError) as err:
        return None, f"the stored entry is malformed ({type(err).__name__})"


def _reverify(data: dict, model, generators):
    t0 = time.perf_counter()
    if data.get("format") != FORMAT:
        return None, "the stored entry has another format"
    fp = fingerprint(model)
    if data["fingerprint"] != fp:
        return None, "the stored entry was derived from another model"
    sc = model.scenario
    d = len(sc.coordinates())
    verts = [tuple(Fraction(v) for v in p) for p in data["vertices"]]
    if not verts or any(len(p) != d for p in verts) or len(set(verts)) != len(verts):
        return None, "the stored vertices are malformed"
    got = oracle_batch((model, "member", verts))
    if any(a.point != p for a, p in zip(got, verts)):
        return None, "a stored vertex has no exact preimage in the model"
    eqs = [(tuple(int(x) for x in h), Fraction(v)) for h, v in data["equations"]]
    qs = []
    for h, v in eqs:
        qs.append((tuple(Fraction(x) for x in h), v, None))
        qs.append((tuple(Fraction(-x) for x in h), -v, None))
    if qs and not all(a.valid for a in oracle_batch((model, "max", qs))):
        return None, "a stored equation of the affine hull does not hold on the model"
    fr = choose_frame(sc, verts, data["frame"])
    k = fr.dim
    if len(eqs) != d - k:
        return None, "the stored equations do not match the dimension of the vertices"
    Y, den = _coords_matrix(fr, verts)
    run = SimpleNamespace(fr=fr, notes=list(data.get("notes", [])), stats=dict(data.get("stats", {}), times={}),
                          sc=sc, model=model, equations=eqs, fp=fp, t_start=t0)
    if data["classes"] is not None:
        P = _symmetric(run, data, verts, Y, den, model, generators)
    else:
        P = _plain(run, data, verts, Y, den, model)
    if isinstance(P, str):
        return None, P
    return P, ""


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
    reps, forms, verified = [], [], {}
    for c in data["classes"]:
        a, b = tuple(int(v) for v in c["a"]), int(c["b"])
        cert = _uncert(c["certificate"])
        if cert is None or not check_certificate(model, run.fr.full(a), Fraction(b), cert):
            return "a stored class representative has no valid Farkas certificate"
        reps.append(SimpleNamespace(orbit=int(c["orbit"])))
        forms.append((a, b))
        verified[(a, b)] = SimpleNamespace(method="stored multipliers, re-checked exactly", certificate=cert)
    if len(set(forms)) != len(forms):
        return "two stored classes are the same"
    Yi = Y.astype(np.int64) if int(np.max(np.abs(Y))) < 2**40 else Y
    # the classes must be distinct orbits: no representative is the image of another
    keys = {}
    for i, (a, b) in enumerate(forms):
        inc = _tight(Yi, a, b * den)
        key = np.unique(np.packbits(inc[np.argsort(group.perms, axis=1)], axis=1), axis=0)[0].tobytes()
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
    return (Y @ np.array(a, dtype=np.int64)) == lim


def _plain(run, data, verts, Y, den, model):
    fr, k = run.fr, run.fr.dim
    facets = []
    for f in data["facets"]:
        a, b = tuple(int(v) for v in f["a"]), int(f["b"])
        cert = _uncert(f["certificate"])
        if cert is None or not check_certificate(model, fr.full(a), Fraction(b), cert):
            return "a stored facet has no valid Farkas certificate"
        facets.append(HullFacet(a, b, True, 0, Fraction(b), "stored multipliers, re-checked exactly", cert))
    if len({(f.a, f.b) for f in facets}) != len(facets):
        return "a stored facet is listed twice"
    vals = int_matmul([f.a for f in facets], Y, k)
    for i, f in enumerate(facets):
        lim = f.b * den
        on = [j for j, v in enumerate(vals[i]) if v == lim]
        if any(v > lim for v in vals[i]):
            return "a stored facet is violated by a stored vertex"
        f.tight = len(on)
        if _zmat([[1] + [int(v) for v in Y[j]] for j in on], k + 1).rank() != k:
            return "a stored facet is not tight on a facet's worth of vertices"
    return Polytope(run.sc, model.label, model.assumptions, fr, verts, run.equations, facets, data["status"],
                    run.stats, run.notes, run.fp)
