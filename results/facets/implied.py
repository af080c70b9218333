"""Is one bundle's set inside another's?  Decided class by class from a complete facet list, exactly.

    python results/facets/implied.py NAME THEORY OUTER INNER [--cache-dir DIR]

OUTER has a complete facet list (derived, or read from the store and
re-verified).  INNER ⊆ OUTER holds exactly when INNER obeys every facet of
OUTER.  Every relabelling that is a verified symmetry of INNER's model and
permutes OUTER's vertices maps OUTER's facets onto facets and INNER's set
onto itself, so one exact LP per orbit of OUTER's facets under those moves
decides it (:func:`nogo.check.decide`: a Farkas certificate when a facet is
obeyed, a certified point of INNER beyond it otherwise; both re-checked by
:func:`nogo.check.recheck`).  OUTER ⊆ INNER is checked on OUTER's vertices:
each must have an exact preimage in INNER's model.  Both ways = the sets are
equal.  Writes ``results/facets/NAME/inclusion.json`` (per orbit: size,
representative, maximum over INNER, verdict) and prints the relation.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from fractions import Fraction
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent.parent
sys.path.insert(0, str(ROOT))

from nogo.atomic import write_text  # noqa: E402


def inclusion(th, outer: str, inner: str, cache) -> dict:
    from nogo.facets import facets

    t0 = time.perf_counter()
    r = facets(th, outer, cache=cache)
    if r.polytope.status != "complete":
        raise SystemExit(f"the facet list of {outer} is not complete")
    return inclusion_of(r, th, inner, t0)


def inclusion_of(r, th, inner: str, t0: float | None = None) -> dict:
    """The comparison from a complete facet list *r* of the outer bundle (see the module docstring)."""
    from nogo.check import decide, recheck
    from nogo.compile import compile_bundle
    from nogo.facets import classify
    from nogo.polytope.oracle import oracle_batch
    from nogo.report import q
    from nogo.symmetry import bundle_generators, lift_to_model

    t0 = time.perf_counter() if t0 is None else t0
    outer = r.bundle
    model = compile_bundle(th, inner)
    moves = [g for g in bundle_generators(th, inner) if lift_to_model(model, g) is not None]
    orbits, kept, dropped = classify(r.polytope, moves)
    rows, outside = [], 0
    # the equations of OUTER's affine hull first: an INNER point off them is outside OUTER, and then a
    # facet's value on INNER depends on which of its full-coordinate forms is meant (not decided here)
    eqs = r.polytope.equations
    qs = [(tuple(Fraction(s * x) for x in h), s * Fraction(v), None) for h, v in eqs for s in (1, -1)]
    off = [(i // 2, a) for i, a in enumerate(oracle_batch((model, "max", qs))) if not a.valid]
    first = {}
    for i, a in off:
        first.setdefault(i, a)
    broken_eq = [{"equation": _eq_text(r, eqs[i]), "inner point off it": _point_text(r, a.point)}
                 for i, a in list(first.items())[:3]]
    for members in ([] if off else sorted(orbits, key=lambda m: (min(m), len(m)))):
        f = r.facets[min(members)]
        res = decide(model, f.inequality)
        if recheck(model, res) is not None:
            raise SystemExit("an exact re-check failed")
        ok = res.implied
        outside += 0 if ok else len(members)
        rows.append({"class of the outer list": f.class_name, "orbit": len(members), "representative": f.text,
                     "maximum over inner": q(res.maximum), "bound": q(f.b), "verdict": res.verdict,
                     "evidence": res.method})
    got = oracle_batch((model, "member", list(r.vertices)))
    missing = sum(1 for a, p in zip(got, r.vertices) if a.point != p)
    outside = outside or (len(r.facets) if off else 0)
    relation = ("equal" if not outside and not missing else
                "inner inside outer" if not outside else
                "outer inside inner" if not missing else "neither")
    return {"theory": os.path.relpath(Path(th.file).resolve(), ROOT), "outer": outer, "inner": inner,
            "relation": relation,
            "outer facets": len(r.facets), "outer classes": len(r.classes),
            "orbits under the moves shared with the inner model": len(orbits), "moves": kept,
            "moves not symmetries of the outer vertices": dropped,
            "outer facets the inner set breaks": None if off else outside,
            "equations of the outer affine hull the inner set breaks": len({i for i, _ in off}),
            "of them, with a certified inner point": broken_eq,
            "outer vertices not in the inner set": missing, "outer vertices": len(r.vertices),
            "seconds": round(time.perf_counter() - t0, 1),
            "evidence": ("per equation of the outer affine hull: a Farkas certificate both ways over the inner "
                         "model, or a certified inner point off it (then the facets are not asked: their value "
                         "off the hull depends on the full-coordinate form); per orbit: exact LP maximum over the inner model with a Farkas certificate (obeyed) "
                         "or a certified point beyond the facet (broken), re-checked exactly; per outer vertex: "
                         "an exact preimage in the inner model"),
            "orbits": rows}


def _eq_text(r, eq) -> str:
    h, v = eq
    terms = [f"{'+' if c > 0 else '-'} {abs(c) if abs(c) != 1 else ''}p({' '.join(a)}|{' '.join(s)})"
             for c, (s, a) in zip(h, r.scenario.coordinates()) if c]
    return " ".join(terms).lstrip("+ ") + f" = {v}"


def _point_text(r, p) -> str:
    return ", ".join(f"p({' '.join(a)}|{' '.join(s)}) = {x}" for x, (s, a) in zip(p, r.scenario.coordinates()) if x)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("name")
    ap.add_argument("theory")
    ap.add_argument("outer")
    ap.add_argument("inner")
    ap.add_argument("--cache-dir", default=str(ROOT / ".nogo-cache"))
    a = ap.parse_args(argv)
    from nogo.theory import load_theory

    d = inclusion(load_theory(a.theory), a.outer, a.inner, a.cache_dir)
    out = ROOT / "results" / "facets" / a.name
    out.mkdir(parents=True, exist_ok=True)
    write_text(out / "inclusion.json", json.dumps(d, indent=1, ensure_ascii=False) + "\n")
    print(f"{a.inner} vs {a.outer}: {d['relation']} ({d['orbits under the moves shared with the inner model']} orbits, "
          f"{d['outer facets the inner set breaks']} facets broken, "
          f"{d['equations of the outer affine hull the inner set breaks']} equations broken, {d['outer vertices not in the inner set']} "
          f"vertices missing; {d['seconds']} s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
